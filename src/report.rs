//! Plain-text report of an analysis (used by the command line).

use crate::analysis::Analysis;
use crate::scenario::Scenario;
use std::fmt::Write;

fn line(out: &mut String, label: &str, value: f64, unit: &str) {
    let _ = writeln!(out, "  {label:<38} {value:>12.4} {unit}");
}

/// Render a readable report.
pub fn text(s: &Scenario, a: &Analysis) -> String {
    let mut o = String::new();
    let _ = writeln!(o, "Rectifield {} — {}", a.version, s.name);
    let _ = writeln!(
        o,
        "Supply {:.1} V line-to-line RMS, {:.2} Hz; bridge {:?}",
        s.supply.v_ll_rms_v, s.supply.f_hz, s.bridge.kind
    );
    let d = &a.derived;
    let _ = writeln!(o, "\nSource");
    line(&mut o, "source R per phase", d.r_source_ohm * 1e3, "mohm");
    line(&mut o, "source L per phase", d.l_source_h * 1e6, "uH");
    line(&mut o, "reactor L per phase", d.l_reactor_h * 1e6, "uH");
    line(&mut o, "short-circuit current at PCC", d.i_sc_a / 1e3, "kA");
    let t = &a.textbook;
    let _ = writeln!(
        o,
        "\nTextbook closed forms (ripple-free DC current Id = {:.3} A)",
        a.textbook_i_d_a
    );
    line(&mut o, "Vdo (ideal no-load DC)", t.vdo_v, "V");
    line(&mut o, "Vdo cos(alpha)", t.vd_alpha_v, "V");
    line(&mut o, "commutation drop", t.commutation_drop_v, "V");
    line(&mut o, "Vd", t.vd_v, "V");
    match t.overlap_rad {
        Some(mu) => line(&mut o, "overlap angle", mu.to_degrees(), "deg"),
        None => {
            let _ = writeln!(o, "  overlap angle                          (no solution)");
        }
    }
    line(&mut o, "line current RMS", t.line_rms_a, "A");
    line(
        &mut o,
        "line current fundamental RMS",
        t.line_fundamental_a,
        "A",
    );
    line(&mut o, "line current THD", t.thd_pct, "%");
    line(&mut o, "displacement factor", t.displacement_factor, "");
    line(&mut o, "distortion factor", t.distortion_factor, "");
    line(&mut o, "power factor", t.power_factor, "");
    line(&mut o, "device average current", t.device_avg_a, "A");
    line(&mut o, "device RMS current", t.device_rms_a, "A");
    line(&mut o, "device peak current", t.device_peak_a, "A");
    line(&mut o, "device peak reverse voltage", t.device_piv_v, "V");
    line(&mut o, "supply VA / Pdo", t.va_per_pdo, "");
    let _ = writeln!(o, "  harmonics (order: % of fundamental)");
    for h in t.harmonics.iter().filter(|h| h.order > 1).take(12) {
        let _ = writeln!(
            o,
            "    h{:<3} {:>8.3} %  {:>10.3} A",
            h.order, h.pct_of_fundamental, h.rms_a
        );
    }
    let _ = writeln!(o, "  assumes: {}", t.assumptions.join("; "));
    for w in &a.warnings {
        let _ = writeln!(o, "warning: {w}");
    }
    o
}
