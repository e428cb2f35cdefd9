//! Sweeps start each point from the previous solved one (`sim::WarmStart`).
//! That is a speed-up only: where warm starts are made (diode bridges, and a
//! constant-power load only on a bus with little ripple) the periodic steady
//! state is unique, so a warm-started point must give the figures of the
//! same point solved cold (`sweep::point`), whose engine is checked against closed forms
//! and ngspice elsewhere (`tests/engine_*.rs`, `tests/ngspice/`).  Checked
//! here: warm and cold agree point by point on every summary figure; the warm
//! start really is used (fewer periods marched); a warm start that does not
//! fit the circuit, or a poor one, still gives the cold answer; none is made
//! where the periodic solution may not be unique (`sim::WarmStart`).
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

mod common;
use common::rng::{random_scenario, Rng};
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
        log: false,
    };
    let warm = sweep(s, &spec).expect("sweep");
    assert_eq!(warm.len(), n);
    let cold: Vec<_> = rectifield::sweep::xs(&spec)
        .into_iter()
        .map(|x| point(s, path, x))
        .collect();
    let mut scale = [0.0f64; SUMMARY_FIELDS.len()];
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

/// A warm start carries its engine's topologies (`solver::TopoShare`).  A
/// nearby point of a constant-power sweep keeps the previous slope
/// (`sim::cpl_keep`), so its circuit matrices are the same and it reuses
/// them: it builds none, and its answer is bit for bit the answer without
/// them (each topology is a function of the matrices and the step alone).
/// A share from other matrices (another bus capacitance) is not taken.
#[test]
fn a_warm_start_reuses_topologies_only_of_the_same_matrices() {
    let s = scenario("drive_reactor_full");
    let s1 = with_value(&s, "dc.load.p_w", 60000.0).unwrap();
    let s2 = with_value(&s, "dc.load.p_w", 60050.0).unwrap();
    let (d1, d2) = (derive(&s1).unwrap(), derive(&s2).unwrap());
    let warm = simulate(&s1, &d1).unwrap().warm_start.expect("warm start");
    assert!(warm.topos.is_some() && warm.cpl_g_s.is_some());
    let mut bare = warm.clone();
    bare.topos = None;
    let shared = simulate_from(&s2, &d2, Some(&warm)).unwrap();
    let unshared = simulate_from(&s2, &d2, Some(&bare)).unwrap();
    assert_eq!(
        shared.warm_start.as_ref().unwrap().cpl_g_s,
        warm.cpl_g_s,
        "a 0.08 % power step keeps the slope"
    );
    assert!(unshared.topologies_built > 0);
    assert_eq!(shared.topologies_built, 0, "every topology reused");
    assert_eq!(shared.signals, unshared.signals);
    assert_eq!(shared.periods_marched, unshared.periods_marched);
    // Another bus capacitance: same netlist shape, other matrices.
    let s3 = with_value(&s2, "dc.cap_f", 0.0048).unwrap();
    let d3 = derive(&s3).unwrap();
    let other = simulate_from(&s3, &d3, Some(&warm)).unwrap();
    let other_bare = simulate_from(&s3, &d3, Some(&bare)).unwrap();
    assert!(other.topologies_built > 0);
    assert_eq!(other.topologies_built, other_bare.topologies_built);
    assert_eq!(other.signals, other_bare.signals);
}

#[test]
fn a_warm_start_from_another_circuit_or_a_poor_one_gives_the_cold_answer() {
    // A resistor-loaded capacitor bus (a diode bridge: warm starts are made).
    let mut s = scenario("drive_plain_full");
    s.dc.load = rectifield::scenario::DcLoad::Resistor { r_ohm: 3.5 };
    let d = derive(&s).unwrap();
    let cold = simulate(&s, &d).unwrap();
    let mean = |r: &rectifield::sim::SimResult| r.signals[r.roles.v_dc].mean;
    let rms = |r: &rectifield::sim::SimResult| r.signals[r.roles.line_i[0]].rms;
    // Another netlist (the drive with a line reactor): its warm start does
    // not fit and is ignored.
    let other = scenario("drive_reactor_full");
    let ro = simulate(&other, &derive(&other).unwrap()).unwrap();
    let from_other = simulate_from(&s, &d, ro.warm_start.as_ref()).unwrap();
    assert!(ro.warm_start.is_some());
    assert_eq!(mean(&from_other), mean(&cold));
    assert_eq!(from_other.periods_marched, cold.periods_marched);
    // A poor start (this circuit's solution with every state times -3, plus
    // 1): Newton still finds the one solution.
    let mut poor = cold
        .warm_start
        .clone()
        .expect("a diode bridge leaves a warm start");
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

/// No warm start where a circuit may have more than one periodic solution:
/// a thyristor bridge, and a constant-power load on a bus rippling more than
/// `WARM_CPL_RIPPLE_MAX` (the drive without a line reactor: about 8 %).
#[test]
fn no_warm_start_where_the_solution_may_not_be_unique() {
    let s = scenario("thyristor_a20");
    let r = simulate(&s, &derive(&s).unwrap()).unwrap();
    assert!(r.warm_start.is_none(), "thyristor bridge");
    let s = scenario("drive_plain_full");
    let r = simulate(&s, &derive(&s).unwrap()).unwrap();
    let v = &r.signals[r.roles.v_dc];
    assert!(
        v.max - v.min > rectifield::sim::WARM_CPL_RIPPLE_MAX * v.mean,
        "this case ripples"
    );
    assert!(
        r.warm_start.is_none(),
        "constant-power load, ripple {}",
        (v.max - v.min) / v.mean
    );
    let s = scenario("drive_reactor_full");
    let r = simulate(&s, &derive(&s).unwrap()).unwrap();
    assert!(
        r.warm_start.is_some(),
        "the drive with a reactor (low ripple) leaves one"
    );
}

/// Random valid circuits (the property tests' generator, seeded), each swept
/// over its supply voltage, 0.9 to 1.1 of its value in 5 points: wherever the
/// cold solve answers, the warm one answers too with the same headline
/// figures.  (This is the check that found thyristor bridges and rippling
/// constant-power buses with more than one periodic solution, where warm
/// starts are now not made; seeds 1 to 30 pass.)  Without a constant-power load the DC mean and line RMS agree to
/// 1e-6 (both solve one linear model to the Newton tolerance); with one, to
/// 1e-3 (the slope point, within the rebuild rule; see the top of this file).
/// A few cases far from any real design may not solve cold; they are
/// counted, not compared, and most cases must compare.
#[test]
fn warm_sweeps_of_random_circuits_match_cold_points() {
    let seed = std::env::var("RF_PROP_SEED")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(0x5EED_0011u64);
    let mut rng = Rng(seed);
    let (mut compared, mut cold_failed) = (0, 0);
    for case in 0..24 {
        let mut s = random_scenario(&mut rng);
        s.analysis.transient_cycles = 0;
        let v = s.supply.v_ll_rms_v;
        let cpl = matches!(
            s.dc.load,
            rectifield::scenario::DcLoad::ConstantPower { .. }
        );
        let spec = SweepSpec {
            path: "supply.v_ll_rms_v".into(),
            from: 0.9 * v,
            to: 1.1 * v,
            points: 5,
            log: false,
        };
        let warm = sweep(&s, &spec).expect("sweep");
        for (w, x) in warm.iter().zip(rectifield::sweep::xs(&spec)) {
            let c = point(&s, "supply.v_ll_rms_v", x);
            let Some(cs) = c.summary.as_ref() else {
                cold_failed += 1;
                continue;
            };
            let ws = w.summary.as_ref().unwrap_or_else(|| {
                panic!(
                    "case {case} (seed {seed}): warm point {x} failed ({:?}) where cold solved",
                    w.error
                )
            });
            let tol = if cpl { 1e-3 } else { 1e-5 };
            // Against the figure or the circuit's own scale, whichever is
            // larger: the line-to-line peak, the rated current.
            let d = derive(&with_value(&s, "supply.v_ll_rms_v", x).unwrap()).unwrap();
            let i_rated = d.rated_power_w / (3f64.sqrt() * x);
            for (name, a, b, base) in [
                ("v_dc_avg_v", ws.v_dc_avg_v, cs.v_dc_avg_v, 2f64.sqrt() * x),
                ("i_line_rms_a", ws.i_line_rms_a, cs.i_line_rms_a, i_rated),
            ] {
                let scale = b.abs().max(base);
                assert!(
                    (a - b).abs() <= tol * scale,
                    "case {case} (seed {seed}), {x} V: {name} warm {a} cold {b}"
                );
            }
            compared += 1;
        }
    }
    assert!(
        compared >= 80,
        "only {compared} of 120 points compared ({cold_failed} cold failures)"
    );
}
