//! The simulator against the textbook limits (Mohan, Undeland, Robbins,
//! *Power Electronics*, 3rd ed., Wiley 2003, ch. 5 and 6).

use rectifield::params::derive;
use rectifield::scenario::{BridgeKind, DcLoad, LineReactor, Scenario, SourceImpedance};
use rectifield::sim::simulate;

fn rl_case(kind: BridgeKind, alpha_deg: f64, l_s_h: f64) -> Scenario {
    let mut s = Scenario::default();
    s.supply.v_ll_rms_v = 460.0;
    s.supply.f_hz = 60.0;
    s.source.impedance = SourceImpedance::Direct {
        r_ohm: 0.0,
        l_h: l_s_h,
    };
    s.source.reactor = LineReactor::None;
    s.bridge.kind = kind;
    s.bridge.alpha_deg = alpha_deg;
    s.dc.cap_f = 0.0;
    // A large DC inductance makes the current nearly constant: L/R = 2.5 s.
    s.dc.load = DcLoad::Rle {
        r_ohm: 4.0,
        l_h: 200.0,
        e_v: 0.0,
    };
    s.analysis.rated_power_w = 60e3;
    s
}

#[test]
fn stiff_source_diode_bridge_gives_vdo() {
    let s = rl_case(BridgeKind::SixPulseDiode, 0.0, 0.0);
    let d = derive(&s).unwrap();
    let r = simulate(&s, &d).unwrap();
    let vdc = r.signals[r.roles.v_bridge].mean;
    let id = r.signals[r.roles.i_dc].mean;
    let vdo = 3.0 * 2f64.sqrt() / std::f64::consts::PI * 460.0;
    println!(
        "vdc {vdc} vdo {vdo} id {id} iters {} events {}",
        r.newton_iterations,
        r.events.len()
    );
    assert!((vdc / vdo - 1.0).abs() < 1e-3, "{vdc} vs {vdo}");
    let ia = &r.signals[r.roles.line_i[0]];
    // Line RMS = sqrt(2/3) Id (Mohan 3rd ed., sec. 5-6).
    assert!(
        (ia.rms / ((2.0f64 / 3.0).sqrt() * id) - 1.0).abs() < 1e-3,
        "{} vs {}",
        ia.rms,
        id
    );
    let i1 = ia.harmonics[0].rms;
    for h in [5usize, 7, 11, 13, 17, 19, 23, 25] {
        let ih = ia.harmonics[h - 1].rms;
        assert!(
            (ih * h as f64 / i1 - 1.0).abs() < 1e-3,
            "h{h}: {} vs {}",
            ih,
            i1 / h as f64
        );
    }
}

#[test]
fn overlap_and_commutation_drop_match_closed_form() {
    // Mohan 3rd ed., sec. 6-4: Vd = 1.35 V cos(alpha) - 3 w Ls Id / pi and
    // cos(alpha + mu) = cos(alpha) - 2 w Ls Id / (sqrt2 V).
    for &alpha in &[0.0, 30.0, 60.0] {
        let s = rl_case(
            if alpha == 0.0 {
                BridgeKind::SixPulseDiode
            } else {
                BridgeKind::SixPulseThyristor
            },
            alpha,
            0.6e-3,
        );
        let d = derive(&s).unwrap();
        let r = simulate(&s, &d).unwrap();
        let w = 2.0 * std::f64::consts::PI * 60.0;
        let vdc = r.signals[r.roles.v_bridge].mean;
        let id = r.signals[r.roles.i_dc].mean;
        let a = alpha.to_radians();
        let expect = 3.0 * 2f64.sqrt() / std::f64::consts::PI * 460.0 * a.cos()
            - 3.0 * w * 0.6e-3 * id / std::f64::consts::PI;
        let mu_expect = (a.cos() - 2.0 * w * 0.6e-3 * id / (2f64.sqrt() * 460.0)).acos() - a;
        // Overlap from the events: a+ turns on, c+ turns off.
        let on = r
            .events
            .iter()
            .find(|e| e.device == "a+" && e.on)
            .unwrap()
            .t_s;
        let off = r
            .events
            .iter()
            .find(|e| e.device == "c+" && !e.on)
            .unwrap()
            .t_s;
        let mu = ((off - on) * w).rem_euclid(2.0 * std::f64::consts::PI);
        println!(
            "alpha {alpha}: vdc {vdc} expect {expect} id {id} mu {} expect {} iters {}",
            mu.to_degrees(),
            mu_expect.to_degrees(),
            r.newton_iterations
        );
        assert!((vdc / expect - 1.0).abs() < 5e-3);
        assert!((mu / mu_expect - 1.0).abs() < 5e-3);
    }
}
