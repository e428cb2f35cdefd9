//! Sweeps start each point from the previous solved one (`sim::WarmStart`).
//! That is a speed-up only: the periodic steady state is unique for these
//! circuits, so a warm-started point must give the figures of the same point
//! solved cold (`sweep::point`), whose engine is checked against closed forms
//! and ngspice elsewhere (`tests/engine_*.rs`, `tests/ngspice/`).  Checked
//! here: warm and cold agree point by point on every summary figure; the warm
//! start really is used (fewer periods marched); a warm start that does not
//! fit the circuit, or a poor one, still gives the cold answer.
//!
//! Tolerances.  Without a constant-power load both solve the same linear
//! model to the Newton tolerance (1e-10 of each state's scale): 1e-6 relative
//! is generous.  With one, the load's slope is linearised about the previous
//! point's bus mean instead of the cold guess, a model difference bounded by
//! the rebuild rule (`sim::cpl_rebuild`: the load current within 2e-4 of its
//! mean); measured on the drive sweep below at most 8e-5 relative (the
//! overlap angle) and 5e-5 (ripple), so 1e-3 relative bounds it, with 1e-5
//! for the DC mean and line RMS, which the slope hardly moves (measured 2e-7
//! and 1.2e-6).

use rectifield::params::derive;
use rectifield::scenario::{from_json, Scenario};
use rectifield::sim::{simulate, simulate_from};
use rectifield::sweep::{point, sweep, with_value, SweepSpec, SUMMARY_FIELDS};

fn scenario(name: &str) -> Scenario {
    let p = format!(
        "{}/tests/ngspice/scenarios/{name}.json",
        env!("CARGO_MANIFEST_DIR")
    );
    from_json(&std::fs::read_to_string(&p).expect("read scenario")).expect("parse scenario")
}

/// Every summary figure of a warm sweep against the same points solved cold.
/// `tol(field)` is the relative tolerance of a field, taken against the
/// larger of the figure and `floor` of its largest value in the sweep.
fn warm_matches_cold(
    s: &Scenario,
    path: &str,
    from: f64,
    to: f64,
    n: usize,
    tol: &dyn Fn(&str) -> f64,
) {
    let spec = SweepSpec {
        path: path.into(),
        from,
        to,
        points: n,
    };
    let warm = sweep(s, &spec).expect("sweep");
    assert_eq!(warm.len(), n);
    let cold: Vec<_> = rectifield::sweep::xs(&spec)
        .into_iter()
        .map(|x| point(s, path, x))
        .collect();
    let mut scale = [0.0f64; 19];
    for p in &cold {
        let c = p
            .summary
            .as_ref()
            .unwrap_or_else(|| panic!("cold point {} failed: {:?}", p.x, p.error));
        for (m, v) in scale.iter_mut().zip(c.values()) {
            *m = m.max(v.abs());
        }
    }
    for (w, c) in warm.iter().zip(&cold) {
        assert_eq!(w.x, c.x);
        let (ws, cs) = (
            w.summary
                .as_ref()
                .unwrap_or_else(|| panic!("warm point {} failed: {:?}", w.x, w.error)),
            c.summary.as_ref().unwrap(),
        );
        for (k, (a, b)) in ws.values().iter().zip(cs.values()).enumerate() {
            let field = SUMMARY_FIELDS[k];
            let den = b.abs().max(1e-3 * scale[k]).max(1e-12);
            let rel = (a - b).abs() / den;
            assert!(
                rel <= tol(field),
                "{path} = {}: {field} warm {a} cold {b} (relative {rel:.2e} > {:.0e})",
                w.x,
                tol(field)
            );
        }
    }
}

#[test]
fn warm_sweep_of_a_thyristor_firing_angle_matches_cold_points() {
    warm_matches_cold(
        &scenario("thyristor_a20"),
        "bridge.alpha_deg",
        10.0,
        60.0,
        11,
        &|_| 1e-6,
    );
}

#[test]
fn warm_sweep_of_a_capacitor_bus_matches_cold_points() {
    // Resistor-loaded capacitor bus (no constant-power load), bus capacitance varied.
    let mut s = scenario("drive_plain_full");
    s.dc.load = rectifield::scenario::DcLoad::Resistor { r_ohm: 3.5 };
    warm_matches_cold(&s, "dc.cap_f", 1e-3, 6e-3, 9, &|_| 1e-6);
}

#[test]
fn warm_sweep_of_a_drive_load_matches_cold_points() {
    let tol = |f: &str| match f {
        "v_dc_avg_v"
        | "i_line_rms_a"
        | "i_line_fundamental_a"
        | "p_in_w"
        | "p_dc_w"
        | "i_dc_avg_a" => 1e-5,
        _ => 1e-3,
    };
    warm_matches_cold(
        &scenario("drive_reactor_full"),
        "dc.load.p_w",
        7500.0,
        75000.0,
        25,
        &tol,
    );
}

#[test]
fn a_warm_start_marches_fewer_periods_and_gives_the_same_solution() {
    let s = scenario("drive_reactor_full");
    let s1 = with_value(&s, "dc.load.p_w", 60000.0).unwrap();
    let s2 = with_value(&s, "dc.load.p_w", 61000.0).unwrap();
    let (d1, d2) = (derive(&s1).unwrap(), derive(&s2).unwrap());
    let r1 = simulate(&s1, &d1).unwrap();
    let warm = r1
        .warm_start
        .clone()
        .expect("a solved point leaves a warm start");
    let cold = simulate(&s2, &d2).unwrap();
    let hot = simulate_from(&s2, &d2, Some(&warm)).unwrap();
    assert!(
        hot.periods_marched < cold.periods_marched,
        "warm {} periods, cold {}",
        hot.periods_marched,
        cold.periods_marched
    );
    let (a, b) = (&hot.signals[hot.roles.v_dc], &cold.signals[cold.roles.v_dc]);
    assert!(
        (a.mean - b.mean).abs() <= 1e-5 * b.mean,
        "{} vs {}",
        a.mean,
        b.mean
    );
}

#[test]
fn a_warm_start_from_another_circuit_or_a_poor_one_gives_the_cold_answer() {
    let s = scenario("thyristor_a20");
    let d = derive(&s).unwrap();
    let cold = simulate(&s, &d).unwrap();
    let mean = |r: &rectifield::sim::SimResult| r.signals[r.roles.v_dc].mean;
    let rms = |r: &rectifield::sim::SimResult| r.signals[r.roles.line_i[0]].rms;
    // Another netlist (a capacitor-bus drive): its warm start does not fit and is ignored.
    let other = scenario("drive_reactor_full");
    let ro = simulate(&other, &derive(&other).unwrap()).unwrap();
    let from_other = simulate_from(&s, &d, ro.warm_start.as_ref()).unwrap();
    assert_eq!(mean(&from_other), mean(&cold));
    assert_eq!(from_other.periods_marched, cold.periods_marched);
    // A poor start (this circuit's solution, every state times 3 and shifted
    // half a period's worth of sign): Newton still finds the one solution.
    let mut poor = cold.warm_start.clone().unwrap();
    for x in poor.x0.iter_mut() {
        *x = -3.0 * *x + 1.0;
    }
    let r = simulate_from(&s, &d, Some(&poor)).unwrap();
    assert!(
        (mean(&r) - mean(&cold)).abs() <= 1e-6 * mean(&cold).abs(),
        "{} vs {}",
        mean(&r),
        mean(&cold)
    );
    assert!(
        (rms(&r) - rms(&cold)).abs() <= 1e-6 * rms(&cold),
        "{} vs {}",
        rms(&r),
        rms(&cold)
    );
}
