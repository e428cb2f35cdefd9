//! Property tests: random valid scenarios must give finite results that keep
//! the circuit laws; random invalid values must give an error naming the
//! field.  Seeded (SplitMix64, tests/common/rng.rs), so every case can be
//! rerun from its seed: `RF_PROP_SEED=<seed> cargo test --test properties`.
//!
//! The laws checked are physics, not our numbers: energy conservation (AC
//! power in = DC load power + modelled losses) and Kirchhoff's current law at
//! a three-wire bridge (the line currents sum to zero).  PF <= 1 and THD >= 0
//! follow from their definitions (Cauchy-Schwarz; a ratio of RMS values).

mod common;
use common::finite::non_finite_paths;
use common::rng::{random_scenario, Rng};
use rectifield::scenario::{BridgeKind, DcLoad, Scenario};
use rectifield::{analyze, Analysis};
use std::sync::mpsc;
use std::time::{Duration, Instant};

/// Cases per run (the run stays under about a minute in the dev profile).
const VALID_CASES: usize = 200;
const INVALID_CASES: usize = 2000;
/// Time allowed for one analysis in the dev profile before it counts as a hang.
const CASE_LIMIT: Duration = Duration::from_secs(20);

fn seed0() -> u64 {
    std::env::var("RF_PROP_SEED")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(0x5EED_0009)
}

/// Run `analyze` in a thread, failing on a panic or a run past `limit`.
pub fn analyze_bounded(
    s: &Scenario,
    limit: Duration,
) -> Result<Result<Analysis, rectifield::textbook::FieldError>, String> {
    let (tx, rx) = mpsc::channel();
    let sc = s.clone();
    std::thread::spawn(move || {
        let r = std::panic::catch_unwind(|| analyze(&sc));
        let _ = tx.send(r);
    });
    match rx.recv_timeout(limit) {
        Ok(Ok(r)) => Ok(r),
        Ok(Err(p)) => Err(format!(
            "panic: {}",
            p.downcast_ref::<String>()
                .cloned()
                .or_else(|| p.downcast_ref::<&str>().map(|s| s.to_string()))
                .unwrap_or_default()
        )),
        Err(_) => Err(format!("no answer within {limit:?}")),
    }
}

/// Every law the analysis must keep; returns the broken ones.
fn check_laws(s: &Scenario, a: &Analysis) -> Vec<String> {
    let mut bad = Vec::new();
    let three_pulse = matches!(
        s.bridge.kind,
        BridgeKind::ThreePulseDiode | BridgeKind::ThreePulseThyristor
    );
    for p in non_finite_paths(a) {
        // Documented: NaN for the three-pulse bridge, whose neutral carries current.
        if three_pulse && p.starts_with("results.line_current_sum_max_a") {
            continue;
        }
        bad.push(format!("non-finite {p}"));
    }
    let (Some(sim), Some(r)) = (&a.sim, &a.results) else {
        return bad;
    };
    // AC input = DC output + losses within 0.1 % for every bridge (the
    // twelve-pulse delta set once used a plain 30-degree shift, which missed
    // the balance under unbalance and harmonics by up to 2.2e-2; it is now the
    // exact delta transform of the star set).
    let pbe_tol = 1e-3;
    if r.power_balance_error.abs() > pbe_tol {
        bad.push(format!("power balance error {:e}", r.power_balance_error));
    }
    if !three_pulse {
        let peak = sim.roles.line_i[..]
            .iter()
            .map(|&i| sim.signals[i].max.abs().max(sim.signals[i].min.abs()))
            .fold(0.0, f64::max);
        // The engine's node leak (1e6 Z_base to the reference, see
        // DEVELOPERS.md) lets a few 1e-6 of the rated current return outside
        // the lines; random cases showed up to 4e-5 of the peak line
        // current.  Allow 1e-4.
        let tol = 1e-4 * (peak + a.derived.rated_current_a);
        if r.line_current_sum_max_a > tol {
            bad.push(format!(
                "line currents sum to {:e} A (peak {peak:e} A)",
                r.line_current_sum_max_a
            ));
        }
    }
    for p in r.power.iter().chain(std::iter::once(&r.total)) {
        if p.power_factor > 1.0 + 1e-9 {
            bad.push(format!("power factor {} > 1 ({})", p.power_factor, p.phase));
        }
        if p.s_va < 0.0 {
            bad.push(format!("apparent power {} < 0", p.s_va));
        }
    }
    for c in &r.line_currents {
        if c.thd_pct < 0.0 || c.rms_a < 0.0 {
            bad.push(format!(
                "THD {} / RMS {} negative ({})",
                c.thd_pct, c.rms_a, c.phase
            ));
        }
    }
    if r.thd_max_pct < 0.0 {
        bad.push(format!("thd_max_pct {}", r.thd_max_pct));
    }
    bad
}

#[test]
fn random_valid_scenarios_keep_the_laws() {
    let mut rng = Rng(seed0());
    let t0 = Instant::now();
    let (mut ran, mut refused, mut solved, mut sim_failed) = (0, 0, 0, 0);
    let mut failures = Vec::new();
    let mut refusals: std::collections::BTreeMap<String, usize> = Default::default();
    let mut sim_fail_reasons: std::collections::BTreeMap<String, usize> = Default::default();
    let mut slowest = (Duration::ZERO, 0u64);
    // Thyristor cases run by default: their earlier time-outs came from a
    // solver stop closer than one time tick, fixed in the solver (a1b786b).
    let all_kinds = std::env::var("RF_PROP_SKIP_THYRISTOR").is_err();
    let mut skipped_controlled = 0;
    let mut twelve_pbe_max: f64 = 0.0;
    while ran < VALID_CASES {
        let seed = rng.next_u64();
        let s = random_scenario(&mut Rng(seed));
        if s.bridge.kind.is_controlled() && !all_kinds {
            // Skipped only on request (RF_PROP_SKIP_THYRISTOR=1).
            skipped_controlled += 1;
            continue;
        }
        ran += 1;
        let t = Instant::now();
        match analyze_bounded(&s, CASE_LIMIT) {
            Err(e) => failures.push(format!(
                "seed {seed}: {e}\n{}",
                rectifield::scenario::to_json(&s)
            )),
            Ok(Err(fe)) => {
                refused += 1;
                *refusals.entry(fe.field.clone()).or_default() += 1;
            }
            Ok(Ok(a)) => {
                if a.sim.is_some() {
                    solved += 1;
                } else {
                    sim_failed += 1;
                    let w = a
                        .warnings
                        .iter()
                        .find(|w| w.starts_with("simulation:"))
                        .cloned()
                        .unwrap_or_default();
                    *sim_fail_reasons
                        .entry(w.chars().take(90).collect())
                        .or_default() += 1;
                }
                if let Some(r) = &a.results {
                    if matches!(
                        s.bridge.kind,
                        BridgeKind::TwelvePulseSeries | BridgeKind::TwelvePulseParallel
                    ) {
                        twelve_pbe_max = twelve_pbe_max.max(r.power_balance_error.abs());
                    }
                }
                let bad = check_laws(&s, &a);
                if !bad.is_empty() {
                    failures.push(format!(
                        "seed {seed}: {}\n{}",
                        bad.join("; "),
                        rectifield::scenario::to_json(&s)
                    ));
                }
            }
        }
        let dt = t.elapsed();
        if dt > slowest.0 {
            slowest = (dt, seed);
        }
    }
    println!(
        "valid-range cases: {ran} ran in {:?}: {solved} solved, {sim_failed} simulation failures (warning, sim None), {refused} refused by a cross-field check; slowest {:?} (seed {})",
        t0.elapsed(),
        slowest.0,
        slowest.1
    );
    println!("refused by field: {refusals:?}");
    println!(
        "thyristor cases skipped (RF_PROP_SKIP_THYRISTOR set): {skipped_controlled}; largest twelve-pulse power balance error {twelve_pbe_max:.2e}"
    );
    println!("simulation failures: {sim_fail_reasons:?}");
    assert!(
        failures.is_empty(),
        "{} of {ran} cases broke a law:\n{}",
        failures.len(),
        failures.join("\n\n")
    );
    // The generator is meant to produce mostly solvable cases; if most are
    // refused the test would be checking nothing.
    assert!(solved * 2 > ran, "only {solved} of {ran} cases solved");
}

/// A bad value for one field: (path, setter).
type Mutator = (&'static str, fn(&mut Scenario, f64));

fn mutators() -> Vec<Mutator> {
    vec![
        ("supply.v_ll_rms_v", |s, x| s.supply.v_ll_rms_v = x),
        ("supply.f_hz", |s, x| s.supply.f_hz = x),
        ("supply.phase_magnitude_pu.1", |s, x| {
            s.supply.phase_magnitude_pu[1] = x
        }),
        ("supply.phase_angle_offset_deg.2", |s, x| {
            s.supply.phase_angle_offset_deg[2] = x
        }),
        ("bridge.alpha_deg", |s, x| s.bridge.alpha_deg = x),
        ("bridge.gate_width_deg", |s, x| s.bridge.gate_width_deg = x),
        ("bridge.v_threshold_v", |s, x| s.bridge.v_threshold_v = x),
        ("bridge.r_slope_ohm", |s, x| s.bridge.r_slope_ohm = x),
        ("bridge.interphase_l_h", |s, x| s.bridge.interphase_l_h = x),
        ("dc.choke_l_h", |s, x| s.dc.choke_l_h = x),
        ("dc.choke_r_ohm", |s, x| s.dc.choke_r_ohm = x),
        ("dc.cap_f", |s, x| s.dc.cap_f = x),
        ("dc.cap_esr_ohm", |s, x| s.dc.cap_esr_ohm = x),
        ("dc.bleed_r_ohm", |s, x| s.dc.bleed_r_ohm = x),
        ("dc.precharge_r_ohm", |s, x| s.dc.precharge_r_ohm = x),
        ("dc.precharge_bypass_s", |s, x| s.dc.precharge_bypass_s = x),
        ("dc.cap_rth_k_per_w", |s, x| s.dc.cap_rth_k_per_w = x),
        ("dc.cap_rated_life_h", |s, x| s.dc.cap_rated_life_h = x),
        ("dc.ambient_c", |s, x| s.dc.ambient_c = x),
        ("analysis.rated_power_w", |s, x| {
            s.analysis.rated_power_w = x
        }),
        ("analysis.demand_current_a", |s, x| {
            s.analysis.demand_current_a = x
        }),
        ("dc.load.r_ohm", |s, x| {
            s.dc.load = DcLoad::Resistor { r_ohm: x }
        }),
        ("dc.load.i_a", |s, x| {
            s.dc.load = DcLoad::ConstantCurrent { i_a: x }
        }),
        ("dc.load.p_w", |s, x| {
            s.dc.load = DcLoad::ConstantPower { p_w: x }
        }),
        ("dc.load.l_h", |s, x| {
            s.dc.load = DcLoad::Rle {
                r_ohm: 10.0,
                l_h: x,
                e_v: 0.0,
            }
        }),
        ("source.impedance.l_h", |s, x| {
            s.source.impedance = rectifield::scenario::SourceImpedance::Direct {
                r_ohm: 0.01,
                l_h: x,
            }
        }),
        ("source.impedance.z_pct", |s, x| {
            s.source.impedance = rectifield::scenario::SourceImpedance::Transformer {
                s_kva: 1000.0,
                z_pct: x,
                x_over_r: 6.0,
            }
        }),
        ("source.reactor.l_h", |s, x| {
            s.source.reactor = rectifield::scenario::LineReactor::Henry { l_h: x, r_ohm: 0.0 }
        }),
    ]
}

/// Values outside every range above (for each field at least one of these
/// is out of range; the in-range ones are skipped).
const BAD: [f64; 9] = [
    f64::NAN,
    f64::INFINITY,
    f64::NEG_INFINITY,
    -1.0,
    -1e-300,
    1e300,
    1e7,
    5e-7,
    -180.5,
];

#[test]
fn random_invalid_values_name_their_field() {
    let mut rng = Rng(seed0() ^ 0xBAD);
    let muts = mutators();
    let (mut ran, mut rejected, mut accepted) = (0, 0, 0);
    let mut failures = Vec::new();
    let t0 = Instant::now();
    for _ in 0..INVALID_CASES {
        let base = random_scenario(&mut rng);
        let (path, set) = muts[rng.below(muts.len())];
        let x = if rng.chance(0.5) {
            BAD[rng.below(BAD.len())]
        } else {
            // A random float from its bits: any sign, exponent, NaN payload.
            f64::from_bits(rng.next_u64())
        };
        let mut s = base.clone();
        set(&mut s, x);
        ran += 1;
        // Validation alone: fast, so thousands of cases run.
        let r = std::panic::catch_unwind(|| rectifield::validate::validate(&s));
        match r {
            Err(_) => failures.push(format!("{path} = {x:e}: panic in validate")),
            Ok(Err(fe)) => {
                rejected += 1;
                // The field set must be the one named, unless the base case
                // was already refused for another reason or the value is legal
                // and a cross-field check spoke.
                let base_ok = rectifield::validate::validate(&base).is_ok();
                if base_ok && !x.is_finite() && fe.field != path {
                    failures.push(format!("{path} = {x:e}: error names {fe}"));
                }
                if fe.reason.is_empty() {
                    failures.push(format!("{path} = {x:e}: empty reason"));
                }
            }
            Ok(Ok(_)) => {
                accepted += 1;
                if !x.is_finite() {
                    failures.push(format!("{path} = {x:e}: non-finite value accepted"));
                }
            }
        }
    }
    // A sample through the full analysis (bounded time, no panic).
    let mut full = 0;
    for _ in 0..40 {
        let mut s = random_scenario(&mut rng);
        let (path, set) = muts[rng.below(muts.len())];
        let x = BAD[rng.below(BAD.len())];
        set(&mut s, x);
        full += 1;
        match analyze_bounded(&s, CASE_LIMIT) {
            Err(e) => failures.push(format!("{path} = {x:e}: {e}")),
            Ok(Err(fe)) => assert!(!fe.field.is_empty()),
            Ok(Ok(a)) => {
                if !x.is_finite() {
                    failures.push(format!("{path} = {x:e}: analysis accepted it"));
                }
                let bad = check_laws(&s, &a);
                if !bad.is_empty() {
                    failures.push(format!("{path} = {x:e}: {}", bad.join("; ")));
                }
            }
        }
    }
    println!(
        "invalid-value cases: {ran} through validate ({rejected} rejected, {accepted} in range after all), {full} through analyze, {:?}",
        t0.elapsed()
    );
    assert!(failures.is_empty(), "{}", failures.join("\n"));
    assert!(rejected > ran / 2, "only {rejected} of {ran} rejected");
}

#[test]
fn every_builtin_example_and_the_default_validate() {
    let mut all = rectifield::examples::all();
    all.push(("default", Scenario::default()));
    for (name, s) in all {
        if let Err(e) = rectifield::validate::validate(&s) {
            panic!("{name}: {e}");
        }
    }
}
