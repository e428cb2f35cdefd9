use rectifield::params::derive;
use rectifield::scenario::*;
use rectifield::sim::simulate;
fn show(name: &str, s: &Scenario) {
    let d = derive(s).unwrap();
    let t0 = std::time::Instant::now();
    let r = simulate(s, &d);
    let el = t0.elapsed();
    match r {
        Ok(r) => {
            let v = &r.signals[r.roles.v_dc];
            let ia = &r.signals[r.roles.line_i[0]];
            let thd = (ia
                .harmonics
                .iter()
                .skip(1)
                .map(|h| h.rms * h.rms)
                .sum::<f64>())
            .sqrt()
                / ia.harmonics[0].rms
                * 100.0;
            let pin: f64 = r.p_phase_w.iter().sum();
            println!("{name:28} {:>8.2?} vdc {:8.2} pp {:7.2} ia {:7.2} {:7.2} {:7.2} thd {:6.2}% h5 {:5.2}% pin {:9.1} pload {:9.1} it {} ev {} topo {} warn {:?}",
                el, v.mean, v.max - v.min, ia.rms, r.signals[r.roles.line_i[1]].rms, r.signals[r.roles.line_i[2]].rms, thd, ia.harmonics[4].rms / ia.harmonics[0].rms * 100.0, pin, r.p_load_w, r.newton_iterations, r.events.len(), r.topologies, (r.periods_marched, r.topologies_built));
            if let Some(t) = &r.transient {
                println!(
                    "   transient: inrush {:.1} A charge {:?} bypass {:?}",
                    t.inrush_peak_a, t.charge_time_s, t.bypass_at_s
                );
            }
        }
        Err(e) => println!("{name:28} {:>8.2?} ERROR {e}", el),
    }
}
fn main() {
    if std::env::args().nth(1).as_deref() == Some("open") {
        let mut s = Scenario::default();
        s.dc.load = DcLoad::Resistor { r_ohm: 20.0 };
        s.bridge.open_device = Some(0);
        events(&s);
        return;
    }
    let base = Scenario::default();
    show("default drive 45kW", &base);
    let mut s = base.clone();
    s.dc.load = DcLoad::ConstantPower { p_w: 5e3 };
    show("light 5kW", &s);
    let mut s = base.clone();
    s.source.reactor = LineReactor::None;
    show("no reactor", &s);
    let mut s = base.clone();
    s.dc.choke_l_h = 2e-3;
    s.source.reactor = LineReactor::None;
    show("dc choke 2mH", &s);
    let mut s = base.clone();
    s.supply.phase_open = [false, false, true];
    show("lost phase c", &s);
    let mut s = base.clone();
    s.bridge.open_device = Some(0);
    show("open a+", &s);
    let mut s = base.clone();
    s.supply.phase_magnitude_pu = [1.0, 0.98, 1.0];
    show("unbalance 2%", &s);
    let mut s = base.clone();
    s.supply.harmonics = vec![VoltageHarmonic {
        order: 5,
        magnitude_pct: 3.0,
        phase_deg: 0.0,
    }];
    show("bg 5th 3%", &s);
    let mut s = base.clone();
    s.bridge.kind = BridgeKind::SixPulseThyristor;
    s.bridge.alpha_deg = 30.0;
    s.dc.cap_f = 0.0;
    s.dc.load = DcLoad::Rle {
        r_ohm: 3.0,
        l_h: 20e-3,
        e_v: 0.0,
    };
    show("thyristor 30 RL", &s);
    let mut s = base.clone();
    s.bridge.kind = BridgeKind::SixPulseThyristor;
    s.bridge.alpha_deg = 150.0;
    s.dc.cap_f = 0.0;
    s.dc.load = DcLoad::Rle {
        r_ohm: 1.0,
        l_h: 50e-3,
        e_v: -400.0,
    };
    show("thyristor 150 inverting", &s);
    let mut s = base.clone();
    s.bridge.kind = BridgeKind::ThreePulseDiode;
    s.dc.cap_f = 0.0;
    s.dc.load = DcLoad::Rle {
        r_ohm: 3.0,
        l_h: 20e-3,
        e_v: 0.0,
    };
    show("3-pulse diode RL", &s);
    let mut s = base.clone();
    s.bridge.kind = BridgeKind::ThreePulseThyristor;
    s.bridge.alpha_deg = 45.0;
    s.dc.cap_f = 0.0;
    s.dc.load = DcLoad::Rle {
        r_ohm: 3.0,
        l_h: 20e-3,
        e_v: 0.0,
    };
    show("3-pulse thy 45 RL", &s);
    let mut s = base.clone();
    s.bridge.kind = BridgeKind::TwelvePulseSeries;
    s.dc.cap_f = 0.0;
    s.dc.load = DcLoad::Rle {
        r_ohm: 10.0,
        l_h: 50e-3,
        e_v: 0.0,
    };
    show("12-pulse series", &s);
    let mut s = base.clone();
    s.bridge.kind = BridgeKind::TwelvePulseParallel;
    s.dc.cap_f = 0.0;
    s.dc.load = DcLoad::Rle {
        r_ohm: 3.0,
        l_h: 50e-3,
        e_v: 0.0,
    };
    show("12-pulse parallel", &s);
    let mut s = base.clone();
    s.dc.load = DcLoad::Resistor { r_ohm: 10.0 };
    s.dc.precharge_r_ohm = 20.0;
    s.dc.precharge_bypass_pu = 0.8;
    s.analysis.transient_cycles = 20;
    show("powerup precharge", &s);
    let mut s = base.clone();
    s.dc.load = DcLoad::ConstantCurrent { i_a: 50.0 };
    show("const current", &s);
    let mut s = base.clone();
    s.bridge.v_threshold_v = 0.8;
    s.bridge.r_slope_ohm = 2e-3;
    show("real diodes", &s);
    let mut s = base.clone();
    s.bridge.kind = BridgeKind::SixPulseDiode;
    s.dc.cap_f = 0.0;
    s.dc.load = DcLoad::Rle {
        r_ohm: 3.0,
        l_h: 1e-3,
        e_v: 450.0,
    };
    show("RLE discontinuous", &s);
}
#[allow(dead_code)]
pub fn events(s: &Scenario) {
    let d = derive(s).unwrap();
    let r = simulate(s, &d).unwrap();
    for e in &r.events {
        println!(
            "  {:8.3} deg {} {}",
            e.t_s / r.period_s * 360.0,
            e.device,
            e.on
        );
    }
    let ia = &r.signals[r.roles.line_i[0]];
    println!("ia min {} max {}", ia.min, ia.max);
    for (i, sig) in r.signals.iter().enumerate() {
        if sig.name.starts_with("v_a") {
            println!("{i} {} min {} max {}", sig.name, sig.min, sig.max);
        }
    }
}
