use rectifield::field::*;
fn main() {
    let mut i = FieldInput::default();
    i.nameplate.rating_kw = Some(7.5);
    i.nameplate.load_kw = Some(5.0);
    i.nameplate.line_reactor_z_pct = Some(3.0);
    i.readings.v_ll_rms_v = Some([401.0, 399.0, 400.0]);
    i.readings.dc_bus_mean_v = Some(530.0);
    i.readings.dc_bus_ac_rms_v = Some(3.0);
    i.readings.ripple_hz = Some(300.0);
    i.readings.line_i_rms_a = Some([8.0, 8.1, 7.9]);
    let t = std::time::Instant::now();
    let r = check(&i).unwrap();
    println!("{:?}", t.elapsed());
    for s in &r.signatures {
        match &s.predicted {
            Some(p) => println!(
                "{:?} P {:.0} mean {:.1} rip {:.2} dom {} imb {:.1} vu {:.1} I {:?} D {:?}",
                s.id,
                s.load_p_w,
                p.dc_mean_v,
                p.ripple_rms_v,
                p.ripple_dominant_hz,
                p.current_imbalance_pct,
                p.voltage_unbalance_pct,
                p.line_i_rms_a.map(|x| (x * 10.0).round() / 10.0),
                s.distance
                    .as_ref()
                    .map(|d| (d.value * 100.0).round() / 100.0)
            ),
            None => println!("{:?} failed {:?}", s.id, s.failed),
        }
    }
    println!("{}", r.verdict.summary);
    println!("{:#?}", r.expected);
}
