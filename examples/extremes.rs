//! Benchmark of the extreme but legal circuits (issue #9): runs every corner
//! of tests/common/extremes.rs through `rectifield::analyze`, prints the time
//! of each and the worst case.  Target: every case under 100 ms native.
//! `cargo run --release --example extremes [-- --limit-s N]` (each case is cut
//! off after N seconds, default 10, and then counted as a hang).

#[path = "../tests/common/extremes.rs"]
mod extremes;

use std::sync::mpsc;
use std::time::{Duration, Instant};

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let limit_s: f64 = args
        .iter()
        .position(|a| a == "--limit-s")
        .and_then(|i| args.get(i + 1))
        .and_then(|x| x.parse().ok())
        .unwrap_or(10.0);
    let limit = Duration::from_secs_f64(limit_s);
    let mut worst: Option<(f64, String)> = None;
    let mut over = 0;
    println!("{:<44} {:>10}  outcome", "case", "time ms");
    for (name, s) in extremes::cases() {
        let (tx, rx) = mpsc::channel();
        let t0 = Instant::now();
        std::thread::spawn(move || {
            let r = std::panic::catch_unwind(|| rectifield::analyze(&s));
            let _ = tx.send(r);
        });
        let (ms, outcome) = match rx.recv_timeout(limit) {
            Ok(r) => {
                let ms = t0.elapsed().as_secs_f64() * 1e3;
                let o = match r {
                    Err(_) => "PANIC".to_string(),
                    Ok(Err(e)) => format!("refused: {e}"),
                    Ok(Ok(a)) => match &a.sim {
                        Some(sim) => format!(
                            "answer (Newton {}, periods {}, topologies {})",
                            sim.newton_iterations, sim.periods_marched, sim.topologies
                        ),
                        None => format!(
                            "warning: {}",
                            a.warnings
                                .iter()
                                .find(|w| w.starts_with("simulation:"))
                                .cloned()
                                .unwrap_or_default()
                        ),
                    },
                };
                (ms, o)
            }
            Err(_) => (f64::INFINITY, format!("HANG: no answer within {limit_s} s")),
        };
        if ms > 100.0 {
            over += 1;
        }
        println!(
            "{name:<44} {:>10}  {}",
            if ms.is_finite() {
                format!("{ms:.1}")
            } else {
                "> limit".into()
            },
            outcome.chars().take(160).collect::<String>()
        );
        if worst.as_ref().is_none_or(|w| ms > w.0) {
            worst = Some((ms, name));
        }
    }
    if let Some((ms, name)) = worst {
        println!(
            "worst case: {name}: {} ms; {over} case(s) over the 100 ms target",
            if ms.is_finite() {
                format!("{ms:.1}")
            } else {
                format!("> {}", limit_s * 1e3)
            }
        );
    }
}
