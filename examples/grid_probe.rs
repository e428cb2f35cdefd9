//! Robustness probe (not a test): random valid scenarios
//! (tests/common/rng.rs) analysed at the default grid and at four times as
//! many points; prints the cases whose headline figures move more than the
//! issue's invariant (0.05 %) between the two.
//! `cargo run --release --example grid_probe -- SEED CASES`
#[path = "../tests/common/rng.rs"]
#[allow(dead_code)]
mod rng;
use rectifield::analyze;
use rectifield::sweep::{summarize, SUMMARY_FIELDS};

fn main() {
    let args: Vec<String> = std::env::args().collect();
    if args.get(1).map(String::as_str) == Some("dump") {
        // `dump CASE_SEED`: the case's scenario as JSON
        let cs: u64 = args.get(2).and_then(|x| x.parse().ok()).unwrap_or(0);
        let mut s = rng::random_scenario(&mut rng::Rng(cs));
        s.analysis.transient_cycles = 0;
        s.compliance.search_fixes = false;
        println!("{}", rectifield::scenario::to_json(&s));
        return;
    }
    let seed: u64 = args.get(1).and_then(|x| x.parse().ok()).unwrap_or(1);
    let cases: usize = args.get(2).and_then(|x| x.parse().ok()).unwrap_or(100);
    let mut r = rng::Rng(seed);
    let (mut ran, mut flagged, mut failed) = (0, 0, 0);
    for c in 0..cases {
        let case_seed = r.next_u64();
        let mut cr = rng::Rng(case_seed);
        let mut s = rng::random_scenario(&mut cr);
        s.analysis.transient_cycles = 0;
        s.compliance.search_fixes = false;
        let mut f = s.clone();
        f.analysis.grid_points = s.analysis.grid_points * 4;
        let (a, b) = match (analyze(&s), analyze(&f)) {
            (Ok(a), Ok(b)) => (a, b),
            (Err(_), Err(_)) => continue,
            (x, y) => {
                failed += 1;
                println!(
                    "case {c} seed {case_seed}: one grid failed: {:?} / {:?}",
                    x.err(),
                    y.err()
                );
                continue;
            }
        };
        let (sa, sb) = match (summarize(&a), summarize(&b)) {
            (Some(x), Some(y)) => (x, y),
            (None, None) => continue,
            _ => {
                failed += 1;
                println!("case {c} seed {case_seed}: one grid has no results");
                continue;
            }
        };
        ran += 1;
        let (va, vb) = (sa.values(), sb.values());
        let mut worst = (0.0f64, "");
        for (k, name) in SUMMARY_FIELDS.iter().enumerate() {
            // scale: the figure itself, floored by a related magnitude
            let scale = match *name {
                "v_dc_ripple_pp_v" | "v_dc_ripple_rms_v" => sa.v_dc_avg_v.abs() * 0.01,
                "thd_max_pct" | "tdd_max_pct" => 1.0,
                "ripple_dominant_hz" | "overlap_deg" => 1.0,
                "displacement_factor" | "power_factor" => 1.0,
                "cap_i_rms_a" => sa.i_dc_avg_a.abs() * 0.01,
                _ => 0.0,
            }
            .max(va[k].abs())
            .max(1e-9);
            let d = (va[k] - vb[k]).abs() / scale;
            if d > worst.0 {
                worst = (d, name);
            }
        }
        if worst.0 > 5e-4 {
            flagged += 1;
            println!(
                "case {c} seed {case_seed} {:?} {:?}: worst {} moved {:.2e} ({} -> {})",
                s.bridge.kind,
                s.dc.load,
                worst.1,
                worst.0,
                va[SUMMARY_FIELDS.iter().position(|n| *n == worst.1).unwrap()],
                vb[SUMMARY_FIELDS.iter().position(|n| *n == worst.1).unwrap()]
            );
        }
    }
    println!(
        "seed {seed}: {ran} compared, {flagged} moved > 5e-4, {failed} failed on one grid only"
    );
}
