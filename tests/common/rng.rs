//! A small seeded PRNG (SplitMix64, Steele, Lea and Flood, "Fast splittable
//! pseudorandom number generators", OOPSLA 2014) and a generator of random
//! valid scenarios.  No crate: the tests need only uniform draws, and a fixed
//! algorithm keeps every failing case reproducible from its seed.

use rectifield::scenario::*;

pub struct Rng(pub u64);

impl Rng {
    pub fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    /// Uniform in [0, 1).
    pub fn unit(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }
    pub fn uniform(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.unit()
    }
    /// Log-uniform in [lo, hi] (both > 0).
    pub fn log(&mut self, lo: f64, hi: f64) -> f64 {
        (lo.ln() + (hi.ln() - lo.ln()) * self.unit()).exp()
    }
    pub fn below(&mut self, n: usize) -> usize {
        (self.next_u64() % n as u64) as usize
    }
    pub fn chance(&mut self, p: f64) -> bool {
        self.unit() < p
    }
}

pub const KINDS: [BridgeKind; 6] = [
    BridgeKind::SixPulseDiode,
    BridgeKind::SixPulseThyristor,
    BridgeKind::ThreePulseDiode,
    BridgeKind::ThreePulseThyristor,
    BridgeKind::TwelvePulseSeries,
    BridgeKind::TwelvePulseParallel,
];

/// A random scenario inside the validated ranges, with values of the kind a
/// user would type (the corners are in tests/extremes.rs).  It may still be
/// refused by a cross-field check; callers count those.
pub fn random_scenario(r: &mut Rng) -> Scenario {
    let mut s = Scenario {
        name: format!("random {}", r.next_u64()),
        ..Scenario::default()
    };
    let kind = KINDS[r.below(KINDS.len())];
    s.supply.v_ll_rms_v = r.log(100.0, 35e3);
    s.supply.f_hz = if r.chance(0.7) {
        [50.0, 60.0][r.below(2)]
    } else {
        r.log(5.0, 800.0)
    };
    if r.chance(0.3) {
        for k in 0..3 {
            s.supply.phase_magnitude_pu[k] = r.uniform(0.85, 1.1);
            s.supply.phase_angle_offset_deg[k] = r.uniform(-5.0, 5.0);
        }
    }
    if r.chance(0.3) {
        for _ in 0..r.below(3) + 1 {
            s.supply.harmonics.push(VoltageHarmonic {
                order: 2 + r.below(24) as u32,
                magnitude_pct: r.uniform(0.0, 5.0),
                phase_deg: r.uniform(-180.0, 180.0),
            });
        }
    }
    let v = s.supply.v_ll_rms_v;
    // Rated power: roughly what the supply voltage suggests (1 kW .. 10 MW).
    let p_rated = r.log(1e3, 1e7).min(v * v / 0.05);
    s.analysis.rated_power_w = p_rated;
    let z_base = v * v / p_rated;
    s.source.impedance = match r.below(4) {
        0 => SourceImpedance::Direct {
            r_ohm: r.uniform(0.0, 0.01) * z_base,
            l_h: r.log(0.005, 0.1) * z_base / (2.0 * std::f64::consts::PI * s.supply.f_hz),
        },
        1 => SourceImpedance::Transformer {
            s_kva: p_rated / 1e3 * r.log(1.2, 20.0),
            z_pct: r.uniform(3.0, 10.0),
            x_over_r: r.uniform(2.0, 15.0),
        },
        2 => SourceImpedance::ShortCircuitMva {
            s_sc_mva: p_rated / 1e6 * r.log(10.0, 500.0),
            x_over_r: r.uniform(2.0, 15.0),
        },
        _ => SourceImpedance::ShortCircuitKa {
            i_sc_ka: p_rated / (3f64.sqrt() * v) / 1e3 * r.log(10.0, 500.0),
            x_over_r: r.uniform(2.0, 15.0),
        },
    };
    s.source.reactor = match r.below(3) {
        0 => LineReactor::None,
        1 => LineReactor::Percent {
            z_pct: r.uniform(0.5, 8.0),
            x_over_r: r.uniform(10.0, 50.0),
        },
        _ => LineReactor::Henry {
            l_h: (r.log(0.01, 0.08) * z_base / (2.0 * std::f64::consts::PI * s.supply.f_hz))
                .clamp(1e-6, 10.0),
            r_ohm: r.uniform(0.0, 0.002) * z_base,
        },
    };
    s.bridge.kind = kind;
    s.bridge.alpha_deg = r.uniform(0.0, 150.0);
    s.bridge.gate_width_deg = r.uniform(60.0, 170.0);
    if r.chance(0.3) {
        s.bridge.v_threshold_v = r.uniform(0.0, 2.0);
        s.bridge.r_slope_ohm = r.uniform(0.0, 0.01) * z_base.min(1.0);
    }
    s.bridge.interphase_l_h = (r.log(0.05, 0.5) * z_base
        / (2.0 * std::f64::consts::PI * s.supply.f_hz))
        .clamp(1e-6, 10.0);
    let n_dev = rectifield::validate::device_count(kind);
    if r.chance(0.1) {
        s.bridge.open_device = Some(r.below(n_dev));
    } else if r.chance(0.1) {
        let k = r.below(3);
        s.supply.phase_open[k] = true;
    }
    let vdo = 1.35 * v;
    s.dc.choke_l_h = if r.chance(0.3) {
        (r.log(0.02, 1.0) * z_base / (2.0 * std::f64::consts::PI * s.supply.f_hz)).clamp(1e-6, 10.0)
    } else {
        0.0
    };
    s.dc.cap_f = if r.chance(0.6) {
        // 1 .. 20 ms of hold-up at rated power and vdo.
        (p_rated * r.log(1e-3, 2e-2) / (vdo * vdo)).clamp(1e-6, 1.0)
    } else {
        0.0
    };
    s.dc.cap_esr_ohm = r.uniform(0.0, 0.01) * z_base.min(10.0);
    let load_share = r.uniform(0.05, 1.0);
    s.dc.load = match r.below(4) {
        0 => DcLoad::Resistor {
            r_ohm: (vdo * vdo / (p_rated * load_share)).clamp(1e-3, 1e6),
        },
        1 => {
            let e = if r.chance(0.5) {
                0.0
            } else {
                r.uniform(-0.5, 0.8) * vdo
            };
            DcLoad::Rle {
                r_ohm: (vdo * vdo / (p_rated * load_share)).clamp(1e-3, 1e6) * 0.5,
                l_h: if r.chance(0.3) {
                    0.0
                } else {
                    (r.log(0.05, 5.0) * z_base / (2.0 * std::f64::consts::PI * s.supply.f_hz))
                        .clamp(1e-6, 10.0)
                },
                e_v: e,
            }
        }
        2 => DcLoad::ConstantCurrent {
            i_a: p_rated * load_share / vdo,
        },
        _ => {
            if s.dc.cap_f == 0.0 {
                s.dc.cap_f = (p_rated * 5e-3 / (vdo * vdo)).clamp(1e-6, 1.0);
            }
            DcLoad::ConstantPower {
                p_w: p_rated * load_share,
            }
        }
    };
    if r.chance(0.2) {
        s.dc.bleed_r_ohm = (vdo * vdo / (0.01 * p_rated)).clamp(1e-3, 1e6);
    }
    s.analysis.h_max = [25, 40, 50][r.below(3)];
    s.analysis.grid_points = [256, 512, 1024][r.below(3)];
    s
}
