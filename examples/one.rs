//! Profiling aid: simulate one scenario a few times (`valgrind --tool=callgrind`).
//! Arguments: optional scenario file (default: the built-in default scenario),
//! optional repetition count (default 5).
use rectifield::params::derive;
use rectifield::scenario::*;
fn main() {
    let mut args = std::env::args().skip(1);
    let s = match args.next() {
        Some(p) if p != "-" => {
            from_json(&std::fs::read_to_string(&p).expect("read")).expect("parse")
        }
        _ => Scenario::default(),
    };
    let reps: usize = args.next().and_then(|a| a.parse().ok()).unwrap_or(5);
    let d = derive(&s).unwrap();
    for _ in 0..reps {
        let r = rectifield::sim::simulate(&s, &d).unwrap();
        std::hint::black_box(r);
    }
}
