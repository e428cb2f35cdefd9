use rectifield::params::derive;
use rectifield::scenario::*;
fn main() {
    let s = Scenario::default();
    let d = derive(&s).unwrap();
    for _ in 0..5 {
        let r = rectifield::sim::simulate(&s, &d).unwrap();
        std::hint::black_box(r);
    }
}
