//! Profiling aid: analyse the default scenario a few times (`valgrind --tool=callgrind`).
//! Optional argument: h_max.
use rectifield::params::derive;
use rectifield::scenario::*;
fn main() {
    let mut s = Scenario::default();
    if let Some(h) = std::env::args().nth(1).and_then(|a| a.parse().ok()) {
        s.analysis.h_max = h;
    }
    let d = derive(&s).unwrap();
    for _ in 0..5 {
        let r = rectifield::sim::simulate(&s, &d).unwrap();
        std::hint::black_box(r);
    }
}
