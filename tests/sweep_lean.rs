//! A sweep point computes only what its summary shows (`sweep::Sweeper`:
//! the simulation with `sim::Outputs::Summary`, the summary from the
//! simulation without the results and compliance tables).  That is a fast path; its oracle
//! is the full analysis it replaces, whose figures are checked against
//! closed forms, standards and ngspice elsewhere (`tests/engine_*.rs`,
//! `tests/compliance.rs`, `tests/ngspice/`).  The fast path must give the
//! same figures to the bit, so every comparison here is exact (`f64` bits,
//! error text equal):
//!
//! * `FullSweeper` below is the sweep point as it was computed before (the
//!   scenario set through its JSON, `analysis::analyze_from` warm-started
//!   from the same predictor, then `sweep::summarize`), run side by side
//!   with `Sweeper` over the same points: the summaries, the errors and
//!   the warm-start chain (each one's next start comes from its own
//!   points) must agree at every point;
//! * a single sweep point (`sweep::point`, solved cold) against
//!   `summarize(&analyze(..))` of the scenario at that value.
//!
//! Cases: the 21 scenario files of `docs/examples` and
//! `tests/ngspice/scenarios`, each swept over its supply voltage, one
//! phase's magnitude, its load, its firing angle (thyristor bridges) and
//! `analysis.h_max` (a whole number: set through the JSON), three of them
//! over grids where the harmonics are direct sums, and random
//! valid circuits (the property tests' generator) swept over their supply
//! voltage and load.

mod common;
use common::rng::{random_scenario, Rng};
use rectifield::analysis::{analyze, analyze_from, result_warnings, Analysis};
use rectifield::scenario::{from_json, DcLoad, Scenario};
use rectifield::sim::WarmStart;
use rectifield::sweep::{
    base_scenario, point, summarize, with_value, SweepPoint, Sweeper, SUMMARY_FIELDS,
};

/// The sweep point of `sweep::Sweeper` as it was before the sweep path
/// left out what the summary does not read: each point the full analysis
/// of the scenario set through its JSON, started from the last solved
/// point extrapolated through the one before.
struct FullSweeper {
    base: Scenario,
    path: String,
    solved: Vec<(f64, WarmStart)>,
}

impl FullSweeper {
    fn new(s: &Scenario, path: &str) -> FullSweeper {
        let base = base_scenario(s, path);
        FullSweeper {
            base,
            path: path.into(),
            solved: Vec::new(),
        }
    }

    fn point(&mut self, x: f64) -> SweepPoint {
        let warm = match self.solved.as_slice() {
            [(x0, w0), (x1, w1)] => Some(w1.extrapolate(w0, (x - x1) / (x1 - x0))),
            [(_, w1)] => Some(w1.clone()),
            _ => None,
        };
        let analysed = with_value(&self.base, &self.path, x).and_then(|sc| {
            analyze_from(&sc, warm.as_ref())
                .map(|a| (sc, a))
                .map_err(|e| e.to_string())
        });
        if let Ok((_, a)) = &analysed {
            match a.sim.as_ref().and_then(|r| r.warm_start.clone()) {
                Some(w) => {
                    if self.solved.len() == 2 {
                        self.solved.remove(0);
                    }
                    self.solved.push((x, w));
                }
                None if a.sim.is_some() => self.solved.clear(),
                None => {}
            }
        }
        point_of(x, analysed)
    }
}

/// The sweep point of `x` from its full analysis of the scenario `sc` (or
/// the error), as the sweep made it before the lean path: `summarize`, and
/// the first warning as the error of a point without a summary.
fn point_of(x: f64, analysed: Result<(Scenario, Analysis), String>) -> SweepPoint {
    match analysed {
        Ok((sc, a)) => {
            let summary = summarize(&a);
            let error = if summary.is_none() {
                a.warnings.first().cloned()
            } else {
                None
            };
            // The full analysis's warnings less the results' own, which it
            // lists last: the input checks' and the simulation's.
            let warnings = match (&summary, &a.results) {
                (Some(_), Some(r)) => {
                    let own = result_warnings(&sc, r).len();
                    a.warnings[..a.warnings.len() - own].to_vec()
                }
                _ => Vec::new(),
            };
            SweepPoint {
                x,
                summary,
                error,
                warnings,
            }
        }
        Err(e) => SweepPoint {
            x,
            summary: None,
            error: Some(e),
            warnings: Vec::new(),
        },
    }
}

/// `a` and `b` the same to the bit (x, every summary figure, the error),
/// and with the same warnings.
fn same(a: &SweepPoint, b: &SweepPoint) -> Result<(), String> {
    if a.x.to_bits() != b.x.to_bits() {
        return Err(format!("x {} vs {}", a.x, b.x));
    }
    if a.warnings != b.warnings {
        return Err(format!("warnings {:?} vs {:?}", a.warnings, b.warnings));
    }
    if a.error != b.error {
        return Err(format!("error {:?} vs {:?}", a.error, b.error));
    }
    match (&a.summary, &b.summary) {
        (None, None) => Ok(()),
        (Some(p), Some(q)) => {
            for (k, (u, v)) in p.values().iter().zip(q.values()).enumerate() {
                if u.to_bits() != v.to_bits() {
                    return Err(format!("{} {u:e} vs {v:e}", SUMMARY_FIELDS[k]));
                }
            }
            Ok(())
        }
        _ => Err(format!(
            "summary {:?} vs {:?} (errors {:?}, {:?})",
            a.summary.is_some(),
            b.summary.is_some(),
            a.error,
            b.error
        )),
    }
}

/// The cold single point against the analysis of the scenario at `x` with
/// a sweep's settings (no power-up transient, no fix search).
fn cold_point_matches_analysis(s: &Scenario, path: &str, x: f64) -> Result<(), String> {
    let base = base_scenario(s, path);
    let want = point_of(
        x,
        with_value(&base, path, x)
            .and_then(|sc| analyze(&sc).map(|a| (sc, a)).map_err(|e| e.to_string())),
    );
    same(&point(s, path, x), &want)
}

/// Tallies of a check over many sweeps.
#[derive(Default, Debug)]
struct Tally {
    points: usize,
    solved: usize,
    failed: usize,
}

/// Sweep `path` of `s` over `xs` with `Sweeper` and `FullSweeper` side by
/// side, and each point cold against its analysis; every comparison exact.
fn check(s: &Scenario, path: &str, xs: &[f64], what: &str, t: &mut Tally) {
    let mut lean = Sweeper::new(s, path).unwrap_or_else(|e| panic!("{what}: {path}: {e}"));
    let mut full = FullSweeper::new(s, path);
    for &x in xs {
        let (a, b) = (lean.point(x), full.point(x));
        if let Err(e) = same(&a, &b) {
            panic!("{what}: {path} = {x}: sweep path against the full analysis: {e}");
        }
        if let Err(e) = cold_point_matches_analysis(s, path, x) {
            panic!("{what}: {path} = {x}: single point against analyze: {e}");
        }
        t.points += 1;
        if a.summary.is_some() {
            t.solved += 1;
        } else {
            t.failed += 1;
        }
    }
}

/// `n` values from `a` to `b`.
fn range(a: f64, b: f64, n: usize) -> Vec<f64> {
    (0..n)
        .map(|i| a + (b - a) * i as f64 / (n - 1) as f64)
        .collect()
}

/// The load's own field and a range about its value.
fn load_sweep(s: &Scenario) -> (&'static str, f64, f64) {
    match s.dc.load {
        DcLoad::ConstantPower { p_w } => ("dc.load.p_w", 0.2 * p_w, p_w),
        DcLoad::Resistor { r_ohm } => ("dc.load.r_ohm", 0.8 * r_ohm, 2.0 * r_ohm),
        DcLoad::Rle { r_ohm, .. } => ("dc.load.r_ohm", 0.8 * r_ohm, 2.0 * r_ohm),
        DcLoad::ConstantCurrent { i_a } => ("dc.load.i_a", 0.3 * i_a, 1.1 * i_a),
    }
}

fn files() -> Vec<(String, Scenario)> {
    let root = env!("CARGO_MANIFEST_DIR");
    let mut out = Vec::new();
    for dir in ["docs/examples", "tests/ngspice/scenarios"] {
        let mut names: Vec<_> = std::fs::read_dir(format!("{root}/{dir}"))
            .expect("scenario folder")
            .map(|e| e.expect("entry").path())
            .filter(|p| p.extension().is_some_and(|e| e == "json"))
            .collect();
        names.sort();
        for p in names {
            let text = std::fs::read_to_string(&p).expect("read scenario");
            let s = from_json(&text).unwrap_or_else(|e| panic!("{}: {e}", p.display()));
            out.push((p.display().to_string(), s));
        }
    }
    out
}

#[test]
fn sweeps_of_the_scenario_files_match_the_full_analysis_to_the_bit() {
    let files = files();
    assert_eq!(files.len(), 21, "the 21 scenario files");
    let mut t = Tally::default();
    for (name, s) in &files {
        let v = s.supply.v_ll_rms_v;
        check(
            s,
            "supply.v_ll_rms_v",
            &range(0.9 * v, 1.1 * v, 5),
            name,
            &mut t,
        );
        check(
            s,
            "supply.phase_magnitude_pu.1",
            &range(0.93, 1.04, 4),
            name,
            &mut t,
        );
        let (path, a, b) = load_sweep(s);
        check(s, path, &range(a, b, 5), name, &mut t);
        if s.bridge.kind.is_controlled() {
            check(s, "bridge.alpha_deg", &range(5.0, 70.0, 4), name, &mut t);
        }
        check(s, "analysis.h_max", &[20.0, 35.0, 50.0], name, &mut t);
    }
    // The drive's load beyond what the supply delivers: points that fail
    // (the input check, or no periodic solution) among solved ones.
    let drive = &files
        .iter()
        .find(|(n, _)| n.ends_with("drive_reactor_full.json"))
        .expect("drive file")
        .1;
    check(
        drive,
        "dc.load.p_w",
        &range(7500.0, 900_000.0, 13),
        "drive beyond its supply",
        &mut t,
    );
    check(
        drive,
        "supply.v_ll_rms_v",
        &[-100.0, 16.0, 132.0, 480.0],
        "drive from an invalid voltage",
        &mut t,
    );
    // Grids whose length is not a product of small primes (1150, 1625:
    // the harmonic sums by direct sums instead of the FFT) or too short for
    // the FFT of h_max = 50 (60, 90 points: all direct).
    for name in [
        "drive_reactor_full.json",
        "thyristor_a20.json",
        "twelve_series.json",
    ] {
        let s = &files
            .iter()
            .find(|(n, _)| n.ends_with(name))
            .expect("scenario file")
            .1;
        check(
            s,
            "analysis.grid_points",
            &[60.0, 90.0, 1150.0, 1625.0],
            name,
            &mut t,
        );
    }
    eprintln!("scenario files: {t:?}");
    assert!(t.solved >= 300 && t.failed >= 3, "{t:?}");
}

#[test]
fn sweeps_of_random_circuits_match_the_full_analysis_to_the_bit() {
    let seed = std::env::var("RF_PROP_SEED")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(0x5EED_1EA4u64);
    let mut rng = Rng(seed);
    let mut t = Tally::default();
    for case in 0..20 {
        let s = random_scenario(&mut rng);
        let what = format!("random case {case} (seed {seed})");
        let v = s.supply.v_ll_rms_v;
        check(
            &s,
            "supply.v_ll_rms_v",
            &range(0.9 * v, 1.1 * v, 4),
            &what,
            &mut t,
        );
        let (path, a, b) = load_sweep(&s);
        check(&s, path, &range(a, b, 4), &what, &mut t);
    }
    eprintln!("random circuits: {t:?}");
    assert!(t.solved >= 100, "{t:?}");
}
