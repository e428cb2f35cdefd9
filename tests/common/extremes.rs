//! Corner cases inside the validated ranges (issue #9): L from 1 uH to 10 H,
//! C from 1 uF to 1 F, R from 1 mOhm to 1 MOhm, f from 1 Hz to 1 kHz, alpha
//! from 0 to 179 degrees.  Shared by tests/extremes.rs and
//! examples/extremes.rs (the benchmark).

use rectifield::scenario::*;

/// A small 400 V drive front end: the base every corner changes.
pub fn base() -> Scenario {
    let mut s = Scenario {
        name: "extreme corner".into(),
        ..Scenario::default()
    };
    s.source.impedance = SourceImpedance::Direct {
        r_ohm: 1e-3,
        l_h: 100e-6,
    };
    s.source.reactor = LineReactor::None;
    s.dc.cap_f = 1e-3;
    s.dc.cap_esr_ohm = 0.01;
    s.dc.load = DcLoad::Resistor { r_ohm: 20.0 };
    s.analysis.rated_power_w = 20e3;
    s
}

fn rl(s: &mut Scenario, r_ohm: f64, l_h: f64) {
    s.dc.cap_f = 0.0;
    s.dc.load = DcLoad::Rle {
        r_ohm,
        l_h,
        e_v: 0.0,
    };
}

/// (name, scenario) for every corner.
pub fn cases() -> Vec<(String, Scenario)> {
    let mut v: Vec<(String, Scenario)> = Vec::new();
    let mut add = |name: String, f: &dyn Fn(&mut Scenario)| {
        let mut s = base();
        f(&mut s);
        s.name = name.clone();
        v.push((name, s));
    };
    for l in [1e-6, 1e-3, 10.0] {
        add(format!("source L {l:e} H"), &|s| {
            s.source.impedance = SourceImpedance::Direct {
                r_ohm: 1e-3,
                l_h: l,
            }
        });
    }
    for c in [1e-6, 1e-3, 1.0] {
        add(format!("bus C {c:e} F, R load"), &|s| s.dc.cap_f = c);
        add(format!("bus C {c:e} F, 10 kW CPL"), &|s| {
            s.dc.cap_f = c;
            s.dc.load = DcLoad::ConstantPower { p_w: 10e3 };
        });
    }
    for r in [1e-3, 1.0, 1e6] {
        add(format!("load R {r:e} Ohm, C bus"), &|s| {
            s.dc.load = DcLoad::Resistor { r_ohm: r }
        });
        add(format!("load R {r:e} Ohm, no C"), &|s| {
            s.dc.cap_f = 0.0;
            s.dc.load = DcLoad::Resistor { r_ohm: r }
        });
    }
    for l in [1e-6, 10.0] {
        add(format!("DC choke {l:e} H"), &|s| s.dc.choke_l_h = l);
        add(format!("RL load L {l:e} H"), &|s| rl(s, 10.0, l));
        add(format!("line reactor {l:e} H"), &|s| {
            s.source.reactor = LineReactor::Henry { l_h: l, r_ohm: 0.0 }
        });
    }
    for f in [1.0, 1000.0] {
        add(format!("f {f} Hz, C bus"), &|s| s.supply.f_hz = f);
        add(format!("f {f} Hz, RL load"), &|s| {
            s.supply.f_hz = f;
            rl(s, 10.0, 0.1);
        });
    }
    for alpha in [0.0, 60.0, 90.0, 120.0, 179.0] {
        add(format!("thyristor alpha {alpha} deg, RL"), &|s| {
            s.bridge.kind = BridgeKind::SixPulseThyristor;
            s.bridge.alpha_deg = alpha;
            rl(s, 10.0, 0.1);
        });
    }
    add("thyristor alpha 150 deg, inverting E".into(), &|s| {
        s.bridge.kind = BridgeKind::SixPulseThyristor;
        s.bridge.alpha_deg = 150.0;
        s.dc.cap_f = 0.0;
        s.dc.load = DcLoad::Rle {
            r_ohm: 1.0,
            l_h: 0.5,
            e_v: -400.0,
        };
    });
    add("three-pulse alpha 179 deg, RL".into(), &|s| {
        s.bridge.kind = BridgeKind::ThreePulseThyristor;
        s.bridge.alpha_deg = 179.0;
        rl(s, 10.0, 0.1);
    });
    add("f 1 Hz, C 1 F, L 10 H".into(), &|s| {
        s.supply.f_hz = 1.0;
        s.dc.cap_f = 1.0;
        s.source.impedance = SourceImpedance::Direct {
            r_ohm: 1e-3,
            l_h: 10.0,
        };
    });
    add("f 1 kHz, C 1 uF, L 1 uH".into(), &|s| {
        s.supply.f_hz = 1000.0;
        s.dc.cap_f = 1e-6;
        s.source.impedance = SourceImpedance::Direct {
            r_ohm: 1e-3,
            l_h: 1e-6,
        };
    });
    add("R 1 MOhm on C 1 F (tau 1e6 s)".into(), &|s| {
        s.dc.cap_f = 1.0;
        s.dc.load = DcLoad::Resistor { r_ohm: 1e6 };
    });
    add("R 1 mOhm, L 1 uH source, no C".into(), &|s| {
        s.dc.cap_f = 0.0;
        s.dc.load = DcLoad::Resistor { r_ohm: 1e-3 };
        s.source.impedance = SourceImpedance::Direct {
            r_ohm: 0.0,
            l_h: 1e-6,
        };
    });
    add("twelve-pulse parallel, interphase 1 uH".into(), &|s| {
        s.bridge.kind = BridgeKind::TwelvePulseParallel;
        s.bridge.interphase_l_h = 1e-6;
    });
    add("twelve-pulse series, f 1 kHz".into(), &|s| {
        s.bridge.kind = BridgeKind::TwelvePulseSeries;
        s.supply.f_hz = 1000.0;
    });
    add("V_LL 1 V".into(), &|s| {
        s.supply.v_ll_rms_v = 1.0;
        s.dc.load = DcLoad::Resistor { r_ohm: 1.0 };
        s.analysis.rated_power_w = 1.0;
    });
    add("V_LL 1 MV".into(), &|s| {
        s.supply.v_ll_rms_v = 1e6;
        s.dc.load = DcLoad::Resistor { r_ohm: 1e5 };
        s.analysis.rated_power_w = 1e7;
    });
    add("transient 2000 cycles".into(), &|s| {
        s.analysis.transient_cycles = 2000
    });
    add("grid 20000 points, h_max 100".into(), &|s| {
        s.analysis.grid_points = 20_000;
        s.analysis.h_max = 100;
    });
    v
}
