//! Plain-text report of an analysis (used by the command line).

use crate::analysis::Analysis;
use crate::scenario::Scenario;
use std::fmt::Write;

fn line(out: &mut String, label: &str, value: f64, unit: &str) {
    let _ = writeln!(out, "  {label:<40} {value:>12.4} {unit}");
}

/// The safety caution printed with every report.
pub const SAFETY: &str = "SAFETY: DC buses and capacitors can kill. Wait at least the discharge time on the \
equipment label, prove the bus below a safe level with a rated meter before touching, lock out and tag out, \
qualified persons only. Local codes, licensed practice and the maker's manual govern.";

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
    line(
        &mut o,
        "rated power (for % impedances)",
        d.rated_power_w / 1e3,
        "kW",
    );

    if let (Some(r), Some(sim)) = (&a.results, &a.sim) {
        let _ = writeln!(
            o,
            "\nExact periodic steady state (switched-circuit simulation)"
        );
        let dc = &r.dc;
        line(&mut o, "DC voltage average", dc.v_avg_v, "V");
        line(&mut o, "DC ripple peak-to-peak", dc.ripple_pp_v, "V");
        line(&mut o, "DC ripple RMS (meter on AC)", dc.ripple_rms_v, "V");
        line(&mut o, "ripple factor", dc.ripple_factor * 100.0, "%");
        line(
            &mut o,
            "dominant ripple frequency",
            dc.ripple_dominant_hz,
            "Hz",
        );
        line(&mut o, "DC current average", dc.i_avg_a, "A");
        line(&mut o, "DC current RMS", dc.i_rms_a, "A");
        let _ = writeln!(o, "  {:<40} {:>12}", "conduction", dc.conduction);
        if let Some(mu) = dc.overlap_deg {
            line(&mut o, "overlap angle (mean)", mu, "deg");
        }
        if let Some(g) = dc.extinction_deg {
            line(&mut o, "extinction angle (180 - alpha - mu)", g, "deg");
        }
        line(&mut o, "DC load power", dc.p_load_w / 1e3, "kW");
        let _ = writeln!(o, "\nLine currents");
        for c in &r.line_currents {
            let _ = writeln!(
                o,
                "  phase {}: RMS {:>9.3} A  fundamental {:>9.3} A  THD {:>7.2} %  TDD {:>7.2} %",
                c.phase, c.rms_a, c.fundamental_a, c.thd_pct, c.tdd_pct
            );
        }
        let _ = writeln!(
            o,
            "  demand current IL for TDD: {:.3} A",
            r.demand_current_a
        );
        let _ = writeln!(
            o,
            "  harmonics of phase a above 0.5 % (order: % of fundamental, A RMS)"
        );
        for h in r.line_currents[0]
            .rows
            .iter()
            .skip(1)
            .filter(|h| h.pct_of_fundamental >= 0.5)
        {
            let _ = writeln!(
                o,
                "    h{:<3} {:>8.3} %  {:>10.3} A",
                h.order, h.pct_of_fundamental, h.rms
            );
        }
        let _ = writeln!(o, "\nPower (at the supply EMF)");
        let _ = writeln!(
            o,
            "  {:<6} {:>11} {:>11} {:>11} {:>11} {:>7} {:>7} {:>7}",
            "phase", "P kW", "S kVA", "Q1 kvar", "D kVA", "PF", "DPF", "DF"
        );
        for p in r.power.iter().chain(std::iter::once(&r.total)) {
            let _ = writeln!(
                o,
                "  {:<6} {:>11.3} {:>11.3} {:>11.3} {:>11.3} {:>7.4} {:>7.4} {:>7.4}",
                p.phase,
                p.p_w / 1e3,
                p.s_va / 1e3,
                p.q1_var / 1e3,
                p.d_va / 1e3,
                p.power_factor,
                p.displacement_factor,
                p.distortion_factor
            );
        }
        let _ = writeln!(o, "\nDevices");
        let _ = writeln!(
            o,
            "  {:<6} {:>9} {:>9} {:>9} {:>10} {:>10} {:>9}",
            "device", "Iavg A", "Irms A", "Ipk A", "Vrev pk V", "Vfwd pk V", "loss W"
        );
        for dv in &r.ratings.devices {
            let _ = writeln!(
                o,
                "  {:<6} {:>9.3} {:>9.3} {:>9.3} {:>10.1} {:>10.1} {:>9.2}{}",
                dv.name,
                dv.i_avg_a,
                dv.i_rms_a,
                dv.i_peak_a,
                dv.v_reverse_peak_v,
                dv.v_forward_block_peak_v,
                dv.conduction_loss_w,
                if dv.open { "  (set open)" } else { "" }
            );
        }
        let rt = &r.ratings;
        let _ = writeln!(
            o,
            "  suggested voltage class {:.0} V ({:.2} x peak line voltage, {:.2} x worst device voltage; {})",
            rt.suggested_voltage_class_v,
            rt.voltage_class_margin,
            rt.voltage_class_over_worst,
            rt.voltage_class_note
        );
        line(&mut o, "line reactor current RMS", rt.reactor_i_rms_a, "A");
        line(
            &mut o,
            "line reactor current peak",
            rt.reactor_i_peak_a,
            "A",
        );
        if let (Some(cr), Some(cp)) = (rt.choke_i_rms_a, rt.choke_i_peak_a) {
            line(&mut o, "DC choke current RMS", cr, "A");
            line(&mut o, "DC choke current peak", cp, "A");
        }
        line(&mut o, "supply-side VA", rt.transformer_va / 1e3, "kVA");
        line(
            &mut o,
            "utilisation factor (P_dc / VA)",
            rt.utilisation_factor,
            "",
        );
        if let Some(c) = &rt.capacitor {
            let _ = writeln!(o, "\nDC-link capacitor");
            line(&mut o, "ripple current RMS", c.i_rms_a, "A");
            for h in c
                .by_order
                .iter()
                .filter(|h| h.rms >= 0.02 * c.i_rms_a)
                .take(8)
            {
                let _ = writeln!(
                    o,
                    "    at {:>7.1} Hz {:>10.3} A",
                    h.order as f64 * s.supply.f_hz,
                    h.rms
                );
            }
            line(&mut o, "ESR loss", c.esr_loss_w, "W");
            line(&mut o, "temperature rise", c.temp_rise_k, "K");
            line(&mut o, "core temperature", c.core_temp_c, "degC");
            line(&mut o, "life estimate", c.life_estimate_h, "h");
            let _ = writeln!(o, "  ({})", c.note);
        }
        let _ = writeln!(o, "\nTextbook beside exact");
        let _ = writeln!(
            o,
            "  {:<32} {:>12} {:>12} {:>9}  assumption",
            "quantity", "textbook", "exact", "diff %"
        );
        for c in &r.comparisons {
            let _ = writeln!(
                o,
                "  {:<32} {:>12.4} {:>12.4} {:>9}  {}",
                format!("{} [{}]", c.quantity, c.unit),
                c.textbook,
                c.exact,
                c.diff_pct
                    .map(|d| format!("{d:.2}"))
                    .unwrap_or_else(|| "n/a".into()),
                c.assumption
            );
        }
        let _ = writeln!(
            o,
            "\n  solver: {} Newton iterations, residual {:.1e}, {} switching events per period, power balance error {:.1e}",
            sim.newton_iterations,
            sim.residual,
            sim.events.len(),
            r.power_balance_error
        );
        if let Some(t) = &sim.transient {
            let _ = writeln!(o, "\nPower-up from a discharged bus");
            line(
                &mut o,
                "peak line current, whole power-up",
                t.inrush_peak_a,
                "A",
            );
            if let Some(x) = t.precharge_peak_a {
                line(&mut o, "  through the precharge resistor", x, "A");
            }
            if let Some(x) = t.bypass_surge_a {
                line(&mut o, "  after the bypass closed", x, "A");
            }
            line(&mut o, "highest bus voltage", t.v_dc_peak_v, "V");
            match t.charge_time_s {
                Some(x) => line(&mut o, "time to 90 % of the steady bus", x * 1e3, "ms"),
                None => {
                    let _ = writeln!(o, "  bus did not reach 90 % in the window");
                }
            }
            if let Some(b) = t.bypass_at_s {
                line(&mut o, "precharge bypass closed at", b * 1e3, "ms");
            }
            if matches!(s.dc.load, crate::scenario::DcLoad::ConstantPower { .. }) {
                let _ = writeln!(
                    o,
                    "{}",
                    if t.inverter_held_off {
                        "  note: the drive's inverter is held off (no load) until the precharge bypass closes, then\n        draws its power as its equivalent resistance at the steady bus voltage"
                    } else {
                        "  note: the constant-power load is its equivalent resistance at the steady bus voltage\n        throughout (no precharge circuit)"
                    }
                );
            }
        }
    }

    if let Some(c) = &a.compliance {
        compliance(&mut o, c);
    }

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
            let _ = writeln!(
                o,
                "  overlap angle                            (no solution)"
            );
        }
    }
    line(&mut o, "line current RMS", t.line_rms_a, "A");
    line(&mut o, "line current THD", t.thd_pct, "%");
    line(&mut o, "power factor", t.power_factor, "");
    line(&mut o, "device peak reverse voltage", t.device_piv_v, "V");
    let _ = writeln!(o, "  assumes: {}", t.assumptions.join("; "));
    for w in &a.warnings {
        let _ = writeln!(o, "warning: {w}");
    }
    let _ = writeln!(o, "\n{SAFETY}");
    o
}

/// The compliance verdict alone (the `check` command's report).
pub fn compliance_text(s: &Scenario, a: &Analysis) -> String {
    let mut o = String::new();
    let _ = writeln!(o, "Rectifield {} — {} — grid compliance", a.version, s.name);
    match &a.compliance {
        Some(c) => compliance(&mut o, c),
        None => {
            let _ = writeln!(o, "no compliance result: {}", a.warnings.join("; "));
        }
    }
    o
}

/// The "Compliance" section: verdicts, the failing checks (or the closest
/// ones), the fixes found, and the notes on sources.
fn compliance(o: &mut String, c: &crate::compliance::Compliance) {
    use crate::compliance::Check;
    let v = |x: crate::compliance::Verdict| x.as_str().to_string();
    let _ = writeln!(o, "\nCompliance (verdict: {})", v(c.verdict));
    let ie = &c.ieee519;
    let _ = writeln!(
        o,
        "  {}: {}; Isc/IL = {:.1} ({}), IL = {:.2} A",
        ie.edition,
        v(ie.verdict),
        ie.isc_over_il,
        ie.row,
        ie.i_l_a
    );
    // Failing single-order checks are listed, at most `MAX_ORDERS` (the rest
    // are counted; `--json` has them all), or the three closest to their
    // limits when none fails; the whole-waveform checks (TDD, THD, THC, PWHC,
    // dc offset) are always listed, failing or not.
    const MAX_ORDERS: usize = 12;
    let single = |k: &Check| matches!(k.order, Some(h) if h > 0);
    let shown = |o: &mut String, checks: &[Check]| {
        let row = |o: &mut String, k: &Check| {
            let _ = writeln!(
                o,
                "    {:<10} {:>9.3} limit {:>7.3} margin {:>9.3} {} ({}) {}",
                k.name,
                k.value,
                k.limit,
                k.margin,
                k.unit,
                k.phase,
                if k.pass { "pass" } else { "FAIL" }
            );
        };
        let failing: Vec<&Check> = checks.iter().filter(|k| !k.pass && single(k)).collect();
        if failing.is_empty() {
            // No single order fails: the three closest to their limits.
            let mut all: Vec<&Check> = checks
                .iter()
                .filter(|k| k.limit > 0.0 && single(k))
                .collect();
            all.sort_by(|a, b| (a.margin / a.limit).total_cmp(&(b.margin / b.limit)));
            for k in all.into_iter().take(3) {
                row(o, k);
            }
        } else {
            for k in failing.iter().take(MAX_ORDERS) {
                row(o, k);
            }
            if failing.len() > MAX_ORDERS {
                let _ = writeln!(
                    o,
                    "    ... and {} more orders fail (all of them: --json)",
                    failing.len() - MAX_ORDERS
                );
            }
        }
        for k in checks.iter().filter(|k| !single(k)) {
            row(o, k);
        }
    };
    if let Some(p) = &ie.pulse_allowance {
        let why = if p.applied {
            String::new()
        } else if p.blocking_orders.is_empty() {
            " (non-characteristic harmonics above 25 % of their limits)".to_string()
        } else {
            let hs: Vec<String> = p.blocking_orders.iter().map(|h| format!("h{h}")).collect();
            format!(
                " (non-characteristic harmonics above 25 % of their limits: {})",
                hs.join(", ")
            )
        };
        let _ = writeln!(
            o,
            "  pulse number {}: characteristic limits x {:.3} {}{}",
            p.pulse_number,
            p.multiplier,
            if p.applied { "applied" } else { "not applied" },
            why
        );
    }
    let _ = writeln!(
        o,
        "  current ({}): {}",
        ie.current_table,
        v(ie.current_verdict)
    );
    shown(o, &ie.current);
    let _ = writeln!(
        o,
        "  PCC voltage ({}): {}",
        ie.voltage_table,
        v(ie.voltage_verdict)
    );
    shown(o, &ie.voltage);
    for n in &ie.notes {
        let _ = writeln!(o, "  note: {n}");
    }
    let iec = &c.iec61000_3_12;
    let _ = writeln!(
        o,
        "  {}: {}; Rsce = {:.1} ({})",
        iec.edition,
        v(iec.verdict),
        iec.rsce,
        iec.rsce_row
    );
    if iec.applicable {
        shown(o, &iec.checks);
    } else {
        for cond in &iec.conditions {
            let _ = writeln!(o, "    {cond}");
        }
    }
    if let Some(f) = &c.fixes {
        let _ = writeln!(o, "  what would pass:");
        // IEEE 519's TDD limit of this case, beside each step's TDD.
        let tdd_limit = c
            .ieee519
            .current
            .iter()
            .find(|k| k.name == "TDD")
            .map(|k| k.limit);
        for t in &f.tried {
            let tdd = match (t.tdd_pct, tdd_limit) {
                (Some(x), Some(l)) => format!("TDD {x:.1} % against {l:.1} %, "),
                (Some(x), None) => format!("TDD {x:.1} %, "),
                _ => String::new(),
            };
            let _ = writeln!(
                o,
                "    {} {:.1} %: {} ({tdd}mean DC bus {})",
                t.kind,
                t.size_pct,
                match (t.verdict, t.note.is_empty()) {
                    (Some(x), true) => v(x),
                    (Some(x), false) => format!("{}, {}", v(x), t.note),
                    (None, _) => t.note.clone(),
                },
                t.v_dc_change_v
                    .map(|x| format!("{x:+.1} V"))
                    .unwrap_or_else(|| "-".into())
            );
        }
        let _ = writeln!(o, "    method: {}", f.method);
        if f.smallest_reactor.is_none() && f.smallest_choke.is_none() {
            let best = f
                .tried
                .iter()
                .filter_map(|t| t.tdd_pct.map(|x| (x, t)))
                .min_by(|a, b| a.0.total_cmp(&b.0));
            match (best, tdd_limit) {
                (Some((x, t)), Some(l)) if x > l => {
                    let _ = writeln!(
                        o,
                        "    no step of the lists passes: the lowest TDD, {x:.1} % with the {} at {:.1} %, is still above the {l:.1} % limit. Inductance alone may not be enough here; common practice then looks at a multipulse (12- or 18-pulse) front end, an active front end or a harmonic filter",
                        t.kind, t.size_pct
                    );
                }
                _ => {
                    let _ = writeln!(o, "    no step of the lists passes");
                }
            }
        }
    }
    for n in c.notes.iter().chain(&c.from_memory_notes) {
        let _ = writeln!(o, "  note: {n}");
    }
    let _ = writeln!(o, "  {}", c.governing_note);
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fix_search_text_gives_each_steps_tdd_and_says_when_inductance_is_not_enough() {
        // The default drive (six-pulse diode bridge, 3 % reactor) with the
        // fix search on: no reactor or choke step of the lists brings its TDD
        // under IEEE 519's limit (a six-pulse bridge keeps h5 and h7 of tens
        // of percent behind any practical inductance; common practice).
        let mut s = Scenario::default();
        s.compliance.search_fixes = true;
        let a = crate::analysis::analyze(&s).unwrap();
        let f = a.compliance.as_ref().unwrap().fixes.as_ref().unwrap();
        assert!(f.smallest_reactor.is_none() && f.smallest_choke.is_none());
        let t = compliance_text(&s, &a);
        let steps: Vec<&str> = t
            .lines()
            .filter(|l| {
                l.contains(" %: ") && (l.contains("line reactor") || l.contains("DC choke"))
            })
            .collect();
        assert_eq!(steps.len(), f.tried.len(), "{t}");
        for (l, c) in steps.iter().zip(&f.tried) {
            let want = format!("TDD {:.1} % against ", c.tdd_pct.unwrap());
            assert!(l.contains(&want), "{l}");
        }
        assert!(t.contains("Inductance alone may not be enough"), "{t}");
        assert!(t.contains("method: "), "{t}");
    }

    #[test]
    fn check_text_lists_tdd_and_dc_offset_past_many_failing_orders() {
        // The three-pulse heater fails IEEE 519 at some thirty orders; the
        // TDD and dc-offset checks must still be in the text report.
        let s = crate::examples::three_pulse_heater();
        let a = crate::analysis::analyze(&s).unwrap();
        let t = compliance_text(&s, &a);
        let c = a.compliance.as_ref().unwrap();
        let fails = c
            .ieee519
            .current
            .iter()
            .filter(|k| !k.pass && matches!(k.order, Some(h) if h > 0))
            .count();
        assert!(fails > 12, "{fails}");
        assert!(t.contains("more orders fail"), "{t}");
        assert!(t.lines().any(|l| l.trim_start().starts_with("TDD")), "{t}");
        assert!(
            t.lines().any(|l| l.trim_start().starts_with("dc offset")),
            "{t}"
        );
    }
}
