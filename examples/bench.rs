//! Native benchmark of the engine (run by `./build.sh bench` through
//! `bench/run`; by hand: `cargo run --release --example bench -- FILE.json ...`).
//!
//! For each scenario file: the wall time of `rectifield::analyze` and of
//! `rectifield::sim::simulate` over repeated runs (median, quartiles, min,
//! max), the CPU time per call of the whole batch (from
//! /proc/thread-self/schedstat, when readable), and the engine's own effort
//! counters.  Then, on the first scenario, the scaling runs: harmonics
//! computed (h_max), power-up transient cycles and sweep points.
//! Everything measured is printed as one JSON object on stdout; nothing is
//! estimated here but what is labelled so (the events handled).
//!
//! Options: `--budget-ms N` (time spent per timed case, default 1500),
//! `--no-scaling`.
//!
//! Instruction-count mode (`bench/run` runs it under callgrind; nothing is
//! timed and the output is only a check of the work done):
//! * `--instr analyze K FILE`: `rectifield::analyze` of FILE, K times;
//! * `--instr sweep N START K FILE`: points START .. START+K-1 of the load
//!   sweep of the scaling runs with N points (same range and step), through
//!   one `sweep::Sweeper`, so the first point is cold and the later ones
//!   warm, as in the whole sweep.
//!
//! Two runs of different K share the start-up (loading, parsing, process
//! start and exit), so the difference of their counts over the difference of
//! K is the count per analysis or per point.

use rectifield::scenario::{from_json, Scenario};
use rectifield::sweep::{sweep, SweepSpec};
use serde_json::{json, Value};
use std::hint::black_box;
use std::time::{Duration, Instant};

/// CPU time of this thread so far, ns (Linux schedstat), if readable.
fn thread_cpu_ns() -> Option<u64> {
    let s = std::fs::read_to_string("/proc/thread-self/schedstat").ok()?;
    s.split_whitespace().next()?.parse().ok()
}

/// Summary statistics of a sample of durations, in ms.
fn stats(mut v: Vec<f64>) -> Value {
    v.sort_by(|a, b| a.partial_cmp(b).unwrap());
    let n = v.len();
    let q = |p: f64| -> f64 {
        // Linear interpolation between order statistics.
        let x = p * (n - 1) as f64;
        let i = x.floor() as usize;
        let j = (i + 1).min(n - 1);
        v[i] + (v[j] - v[i]) * (x - i as f64)
    };
    json!({
        "n": n,
        "median_ms": q(0.5),
        "q1_ms": q(0.25),
        "q3_ms": q(0.75),
        "min_ms": v[0],
        "max_ms": v[n - 1],
    })
}

/// Time `f` repeatedly: at least `min_reps` runs and until `budget` is spent
/// (at most `max_reps`), after `warm` untimed runs.  Wall time per call from
/// Instant (median, quartiles, min, max).  CPU time from the thread's
/// schedstat, read once before and once after the whole batch, as the mean
/// per call: on the machines this runs on the kernel accounts CPU time in
/// whole scheduler ticks (4 ms steps were seen), so a single call of about
/// 1 ms reads as 0 or 4 ms, while over a batch of a second or more the
/// error is below one tick in the total.
fn time_it<F: FnMut()>(
    mut f: F,
    warm: usize,
    min_reps: usize,
    max_reps: usize,
    budget: Duration,
) -> Value {
    for _ in 0..warm {
        f();
    }
    let mut wall = Vec::new();
    let t_all = Instant::now();
    let c0 = thread_cpu_ns();
    while wall.len() < min_reps || (wall.len() < max_reps && t_all.elapsed() < budget) {
        let t = Instant::now();
        f();
        wall.push(t.elapsed().as_secs_f64() * 1e3);
    }
    let c1 = thread_cpu_ns();
    let n = wall.len();
    let mut out = stats(wall);
    if let (Some(a), Some(b)) = (c0, c1) {
        let total_ms = b.saturating_sub(a) as f64 / 1e6;
        out["cpu"] = json!({
            "n": n,
            "total_ms": total_ms,
            "batch_mean_ms": total_ms / n as f64,
        });
    }
    out
}

fn load(path: &str) -> Scenario {
    let text = std::fs::read_to_string(path).unwrap_or_else(|e| panic!("{path}: {e}"));
    from_json(&text).unwrap_or_else(|e| panic!("{path}: {e}"))
}

fn with_setting(s: &Scenario, f: impl Fn(&mut Scenario)) -> Scenario {
    let mut t = s.clone();
    f(&mut t);
    t
}

fn bench_scenario(path: &str, budget: Duration) -> Value {
    let s = load(path);
    let a = rectifield::analyze(&s).expect("analyze");
    let sim = a
        .sim
        .as_ref()
        .expect("the simulation failed on a benchmark scenario");
    let res = a.results.as_ref().expect("results");
    let d = rectifield::params::derive(&s).expect("derive");
    let t_analyze = time_it(
        || drop(black_box(rectifield::analyze(black_box(&s)))),
        2,
        15,
        400,
        budget,
    );
    let t_sim = time_it(
        || drop(black_box(rectifield::sim::simulate(black_box(&s), &d))),
        1,
        15,
        400,
        budget,
    );
    let lc = &res.line_currents[0];
    let events_per_period = sim.events.len();
    let events_est = events_per_period * sim.periods_marched;
    let sim_med = t_sim["median_ms"].as_f64().unwrap();
    json!({
        "file": path,
        "name": s.name,
        "analyze": t_analyze,
        "simulate": t_sim,
        "counters": {
            "periods_marched": sim.periods_marched,
            "topologies_built": sim.topologies_built,
            "topologies": sim.topologies,
            "newton_iterations": sim.newton_iterations,
            "events_per_period": events_per_period,
            "events_handled_estimate": events_est,
        },
        "us_per_event_estimate": if events_est > 0 { sim_med * 1e3 / events_est as f64 } else { f64::NAN },
        "us_per_period_marched": if sim.periods_marched > 0 { sim_med * 1e3 / sim.periods_marched as f64 } else { f64::NAN },
        "figures": {
            "v_dc_avg_v": res.dc.v_avg_v,
            "v_dc_ripple_pp_v": res.dc.ripple_pp_v,
            "i_a_rms_a": lc.rms_a,
            "i_a_thd_pct": lc.thd_pct,
        },
    })
}

/// The sweep of the scaling runs: the load power from 10 % to 100 % of the
/// scenario's value (or the bus capacitance when the load is not constant
/// power).  Path, from, to.
fn load_sweep(s: &Scenario) -> (&'static str, f64, f64) {
    match s.dc.load {
        rectifield::scenario::DcLoad::ConstantPower { p_w } => ("dc.load.p_w", 0.1 * p_w, p_w),
        _ => ("dc.cap_f", 1e-3, 10e-3),
    }
}

/// `--instr ...` (see the top of the file): the work whose instructions are
/// counted, and a small JSON check of it.
fn instr(args: &[String]) -> Value {
    let num = |i: usize, what: &str| -> usize {
        args.get(i)
            .and_then(|x| x.parse().ok())
            .unwrap_or_else(|| panic!("--instr: {what} expected"))
    };
    match args.first().map(String::as_str) {
        Some("analyze") => {
            let k = num(1, "K");
            let path = args.get(2).expect("--instr analyze K FILE");
            let s = load(path);
            let mut failed = 0;
            let mut v_dc = f64::NAN;
            for _ in 0..k {
                let a = rectifield::analyze(black_box(&s)).expect("analyze");
                match a.results.as_ref() {
                    Some(r) => v_dc = r.dc.v_avg_v,
                    None => failed += 1,
                }
                black_box(a);
            }
            json!({"mode": "analyze", "file": path, "k": k, "failed": failed, "v_dc_avg_v": v_dc})
        }
        Some("sweep") => {
            let (n, start, k) = (num(1, "N"), num(2, "START"), num(3, "K"));
            let path = args.get(4).expect("--instr sweep N START K FILE");
            let s = load(path);
            let (spath, from, to) = load_sweep(&s);
            let spec = SweepSpec {
                path: spath.into(),
                from,
                to,
                points: n,
                log: false,
            };
            let xs = rectifield::sweep::xs(&spec);
            assert!(start + k <= n, "--instr sweep: START + K > N");
            let mut run = rectifield::sweep::Sweeper::new(&s, spath).expect("sweep path");
            let mut failed = 0;
            let mut v_dc = f64::NAN;
            for &x in &xs[start..start + k] {
                let p = run.point(black_box(x));
                match p.summary.as_ref() {
                    Some(sm) => v_dc = sm.v_dc_avg_v,
                    None => failed += 1,
                }
                black_box(p);
            }
            json!({"mode": "sweep", "file": path, "path": spath, "from": from, "to": to,
                   "points": n, "start": start, "k": k, "failed": failed,
                   "x_first": xs[start], "x_last": xs[start + k - 1], "v_dc_avg_v_last": v_dc})
        }
        _ => panic!("usage: bench --instr analyze K FILE | --instr sweep N START K FILE"),
    }
}

fn scaling(path: &str, budget: Duration) -> Value {
    let s = load(path);
    let mut h = Vec::new();
    for h_max in [10u32, 50, 100] {
        let t = with_setting(&s, |t| t.analysis.h_max = h_max);
        let st = time_it(
            || drop(black_box(rectifield::analyze(black_box(&t)))),
            1,
            10,
            200,
            budget,
        );
        h.push(json!({"h_max": h_max, "analyze": st}));
    }
    let mut tr = Vec::new();
    for cycles in [0u32, 10, 100, 1000] {
        let t = with_setting(&s, |t| t.analysis.transient_cycles = cycles);
        let (min_reps, b) = if cycles >= 1000 {
            (3, Duration::ZERO)
        } else {
            (5, budget)
        };
        let st = time_it(
            || drop(black_box(rectifield::analyze(black_box(&t)))),
            1,
            min_reps,
            100,
            b,
        );
        tr.push(json!({"transient_cycles": cycles, "analyze": st}));
    }
    let (spath, from, to) = load_sweep(&s);
    let mut sw = Vec::new();
    for points in [10usize, 100, 200, 1000] {
        let spec = SweepSpec {
            path: spath.into(),
            from,
            to,
            points,
            log: false,
        };
        let mut failed = 0;
        let reps = match points {
            10 => 5,
            100 | 200 => 3,
            _ => 1,
        };
        let st = time_it(
            || {
                let r = sweep(black_box(&s), &spec).expect("sweep");
                failed = r.iter().filter(|p| p.summary.is_none()).count();
                black_box(r);
            },
            0,
            reps,
            reps,
            Duration::ZERO,
        );
        // The same points solved independently (cold starts, `sweep::point`).
        let ind = time_it(
            || {
                for x in rectifield::sweep::xs(&spec) {
                    black_box(rectifield::sweep::point(black_box(&s), spath, x));
                }
            },
            0,
            reps,
            reps,
            Duration::ZERO,
        );
        sw.push(
            json!({"points": points, "path": spath, "from": from, "to": to,
                       "failed_points": failed, "sweep": st, "independent": ind}),
        );
    }
    json!({"file": path, "h_max": h, "transient_cycles": tr, "sweep": sw})
}

fn main() {
    let all: Vec<String> = std::env::args().skip(1).collect();
    if all.first().map(String::as_str) == Some("--instr") {
        println!("{}", instr(&all[1..]));
        return;
    }
    let mut budget = Duration::from_millis(1500);
    let mut files = Vec::new();
    let mut do_scaling = true;
    let mut args = std::env::args().skip(1);
    while let Some(a) = args.next() {
        match a.as_str() {
            "--budget-ms" => {
                let v: u64 = args
                    .next()
                    .and_then(|x| x.parse().ok())
                    .expect("--budget-ms N");
                budget = Duration::from_millis(v);
            }
            "--no-scaling" => do_scaling = false,
            _ => files.push(a),
        }
    }
    assert!(
        !files.is_empty(),
        "usage: bench [--budget-ms N] [--no-scaling] FILE.json ..."
    );
    let scenarios: Vec<Value> = files.iter().map(|f| bench_scenario(f, budget)).collect();
    let scal = if do_scaling {
        scaling(&files[0], budget)
    } else {
        Value::Null
    };
    let out = json!({
        "cpu_time_source": "/proc/thread-self/schedstat, read before and after each batch of calls (mean per call)",
        "scenarios": scenarios,
        "scaling": scal,
    });
    println!("{}", serde_json::to_string_pretty(&out).unwrap());
}
