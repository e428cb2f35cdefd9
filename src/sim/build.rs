//! Netlists of Rectifield's circuits, built from a scenario.  A new topology is
//! a new function here; the solver is the same for all of them.

use super::circuit::{Circuit, Element, Node, SwitchKind};
use crate::params::Derived;
use crate::scenario::{BridgeKind, DcLoad, Scenario};
use std::f64::consts::{PI, SQRT_2};

/// One term of a probe: a node voltage or an element current.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Basic {
    Node(Node),
    Elem(usize),
    /// Time derivative of an inductor's current (element index).
    Deriv(usize),
}

/// A named linear combination of node voltages and element currents.
#[derive(Debug, Clone, PartialEq)]
pub struct Probe {
    pub name: String,
    pub unit: &'static str,
    pub terms: Vec<(Basic, f64)>,
}

/// Which signals play which role (indexes into `probes`, which are also the
/// indexes into `SimResult::signals`).
#[derive(Debug, Clone, Default, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Roles {
    pub phase_v: [usize; 3],
    pub line_i: [usize; 3],
    pub pcc_v: [usize; 3],
    pub v_dc: usize,
    pub i_dc: usize,
    pub v_bridge: usize,
    pub i_cap: Option<usize>,
    pub i_load: usize,
    pub i_choke: Option<usize>,
    /// Per device: (current probe, voltage probe).
    pub devices: Vec<(usize, usize)>,
    /// Line currents of each secondary (12-pulse), per bridge.
    pub secondary_i: Vec<[usize; 3]>,
}

/// A circuit ready to solve.
#[derive(Debug, Clone)]
pub struct Built {
    pub circuit: Circuit,
    pub probes: Vec<Probe>,
    pub roles: Roles,
    pub device_names: Vec<String>,
    /// Initial guess of the physical state.
    pub x_guess: Vec<f64>,
    /// Scale of each state (for convergence tests).
    pub x_scale: Vec<f64>,
    pub i_base_a: f64,
    pub v_base_v: f64,
    /// Constant-power load: index of its current source and conductance elements.
    pub cpl: Option<(usize, usize)>,
    /// Precharge: nodes across the bus for the bypass rule.
    pub bus_nodes: (Node, Node),
    pub has_contactor: bool,
    /// The constant-power load is solved as a constant current (see `sim::simulate`).
    pub cpl_constant_current: bool,
    /// Elements whose dissipation counts as loss (all but sources and the load).
    pub loss_elems: Vec<usize>,
}

struct Net {
    n_nodes: usize,
    el: Vec<Element>,
    guess: Vec<(usize, f64, f64)>, // (element, guess, scale)
    r_min: f64,
}

impl Net {
    fn node(&mut self) -> Node {
        self.n_nodes += 1;
        self.n_nodes - 1
    }
    fn push(&mut self, e: Element) -> usize {
        self.el.push(e);
        self.el.len() - 1
    }
    /// Series R-L from `a` to a new node (or `a` itself when both are zero).
    /// Returns (end node, element index if any).
    fn series(
        &mut self,
        a: Node,
        l_h: f64,
        r_ohm: f64,
        guess_a: f64,
        scale_a: f64,
    ) -> (Node, Option<usize>) {
        if l_h > 0.0 {
            let b = self.node();
            let e = self.push(Element::Inductor { a, b, l_h, r_ohm });
            self.guess.push((e, guess_a, scale_a));
            (b, Some(e))
        } else if r_ohm > 0.0 {
            let b = self.node();
            let e = self.push(Element::Conductance {
                a,
                b,
                g_s: 1.0 / r_ohm,
            });
            (b, Some(e))
        } else {
            (a, None)
        }
    }
}

/// Supply EMF of phase `k` as (oscillator index, cos coef, sin coef) terms.
fn phase_wave(
    s: &Scenario,
    k: usize,
    shift_rad: f64,
    orders: &[u32],
    scale: f64,
) -> Vec<(usize, f64, f64)> {
    let v_ph_peak = s.supply.v_ll_rms_v / 3f64.sqrt() * SQRT_2 * scale;
    let base = -2.0 * PI / 3.0 * k as f64 + shift_rad;
    let mut out = Vec::new();
    let mag = s.supply.phase_magnitude_pu[k] * v_ph_peak;
    let ang = base + s.supply.phase_angle_offset_deg[k].to_radians();
    out.push((0, mag * ang.cos(), -mag * ang.sin()));
    for h in &s.supply.harmonics {
        if let Some(i) = orders.iter().position(|&o| o == h.order) {
            let m = h.magnitude_pct / 100.0 * v_ph_peak;
            let a = h.order as f64 * base + h.phase_deg.to_radians();
            out.push((i, m * a.cos(), -m * a.sin()));
        }
    }
    out
}

/// Build the netlist for a scenario.
pub fn build(s: &Scenario, d: &Derived) -> Built {
    let v_ll = s.supply.v_ll_rms_v;
    let w = d.omega_rad_s;
    let p_rated = d.rated_power_w.max(1e-3);
    let z_base = v_ll * v_ll / p_rated;
    let i_base = p_rated / (1.35 * v_ll);
    let v_base = SQRT_2 * v_ll;
    let r_min = 1e-7 * z_base;
    let mut orders: Vec<u32> = vec![1];
    for h in &s.supply.harmonics {
        if !orders.contains(&h.order) {
            orders.push(h.order);
        }
    }
    let osc: Vec<f64> = orders.iter().map(|&o| o as f64 * w).collect();
    // Room for the usual netlists from the start (the drive front end has
    // 26 probes): grown by doubling, these vectors cost 0.4 % of its
    // analysis.
    let mut net = Net {
        n_nodes: 1,
        el: Vec::with_capacity(64),
        guess: Vec::with_capacity(16),
        r_min,
    };
    let mut probes: Vec<Probe> = Vec::with_capacity(64);
    let mut roles = Roles::default();
    let mut device_names = Vec::with_capacity(12);
    let add_probe =
        |probes: &mut Vec<Probe>, name: &str, unit: &'static str, terms: Vec<(Basic, f64)>| {
            probes.push(Probe {
                name: name.into(),
                unit,
                terms,
            });
            probes.len() - 1
        };
    let r_on = if s.bridge.r_slope_ohm > 0.0 {
        s.bridge.r_slope_ohm
    } else {
        1e-6 * z_base
    };
    let v_th = s.bridge.v_threshold_v.max(0.0);
    let alpha = crate::analysis::alpha_rad(s);
    let gate_w = s.bridge.gate_width_deg.clamp(1.0, 179.0).to_radians() / w;
    let controlled = s.bridge.kind.is_controlled();
    let three_pulse = matches!(
        s.bridge.kind,
        BridgeKind::ThreePulseDiode | BridgeKind::ThreePulseThyristor
    );
    let twelve = matches!(
        s.bridge.kind,
        BridgeKind::TwelvePulseSeries | BridgeKind::TwelvePulseParallel
    );
    let names = ["a", "b", "c"];
    // Inductor currents start at zero: a consistent state whatever the
    // conduction pattern (inductor cut sets through blocking devices would
    // otherwise start off the slow manifold).  Newton brings them up.
    let id_guess = 0.0 * i_base;
    let has_cap = s.dc.cap_f > 0.0;

    // One three-phase set: EMFs behind source impedance and reactor.  Returns
    // the bridge AC nodes and the source elements.
    struct SetOut {
        bridge_nodes: [Node; 3],
        src: [usize; 3],
        pcc: [Vec<(Basic, f64)>; 3],
    }
    let make_set = |net: &mut Net,
                    neutral: Node,
                    shift: f64,
                    line_guess: [f64; 3],
                    probes: &mut Vec<Probe>|
     -> SetOut {
        let mut bridge_nodes = [0; 3];
        let mut src = [0; 3];
        let mut pcc: [Vec<(Basic, f64)>; 3] = Default::default();
        for k in 0..3 {
            let sn = net.node();
            let terms = |k: usize| -> Vec<(usize, f64)> {
                phase_wave(s, k, 0.0, &orders, 1.0)
                    .iter()
                    .flat_map(|&(i, c, sn_)| [(1 + 2 * i, c), (2 + 2 * i, sn_)])
                    .collect()
            };
            let wave: Vec<(usize, f64)> = if shift != 0.0 {
                // The delta secondary of an ideal Yd transformer with unit
                // line-to-line ratio: v_k2 = (v_k - v_(k-1)) / sqrt3 of the star
                // set (v_a2 = (v_a - v_c)/sqrt3 lags v_a by 30 degrees for the
                // positive sequence).  Exact for unbalance and harmonics, and
                // consistent with the primary current i_A = i_a1 + (i_a2 - i_b2)/sqrt3.
                let mut w = terms(k);
                for (col, c) in terms((k + 2) % 3) {
                    w.push((col, -c));
                }
                w.iter().map(|&(col, c)| (col, c / 3f64.sqrt())).collect()
            } else {
                terms(k)
            };
            src[k] = net.push(Element::VoltageSource {
                a: sn,
                b: neutral,
                wave,
            });
            if s.supply.phase_open[k] {
                // Lost phase: the line is open right at the source.
                let b = net.node();
                bridge_nodes[k] = b;
                pcc[k] = vec![(Basic::Node(b), 1.0)];
                continue;
            }
            if d.l_source_h > 0.0 && d.l_reactor_h > 0.0 {
                // Source and reactor in series: one inductor (one state), the
                // PCC voltage between them recovered as v_s - Ls di/dt - Rs i.
                let b = net.node();
                let e = net.push(Element::Inductor {
                    a: sn,
                    b,
                    l_h: d.l_source_h + d.l_reactor_h,
                    r_ohm: d.r_source_ohm + d.r_reactor_ohm,
                });
                net.guess.push((e, line_guess[k], id_guess));
                bridge_nodes[k] = b;
                pcc[k] = vec![
                    (Basic::Node(sn), 1.0),
                    (Basic::Deriv(e), -d.l_source_h),
                    (Basic::Elem(e), -d.r_source_ohm),
                ];
                continue;
            }
            let (x, _) = net.series(
                sn,
                d.l_source_h,
                d.r_source_ohm
                    .max(if d.l_source_h > 0.0 { 0.0 } else { net.r_min }),
                line_guess[k],
                id_guess,
            );
            pcc[k] = vec![(Basic::Node(x), 1.0)];
            let (b, _) = net.series(x, d.l_reactor_h, d.r_reactor_ohm, line_guess[k], id_guess);
            bridge_nodes[k] = b;
            let _ = &probes;
        }
        SetOut {
            bridge_nodes,
            src,
            pcc,
        }
    };

    let fire = |k_nat_deg: f64| -> SwitchKind {
        if controlled {
            SwitchKind::Thyristor {
                fire_s: (k_nat_deg.to_radians() + alpha) / w,
                width_s: gate_w,
            }
        } else {
            SwitchKind::Diode
        }
    };
    let open_dev = s.bridge.open_device;
    let mut dev_count = 0usize;
    let mut add_dev = |net: &mut Net,
                       a: Node,
                       b: Node,
                       kind: SwitchKind,
                       name: String,
                       device_names: &mut Vec<String>|
     -> usize {
        let open = open_dev == Some(dev_count);
        dev_count += 1;
        device_names.push(name);
        net.push(Element::Switch {
            a,
            b,
            kind,
            v_th_v: v_th,
            r_on_ohm: r_on,
            open,
        })
    };

    // Bridges.
    let mut sets = Vec::new();
    let mut dev_elems: Vec<usize> = Vec::new();
    let (p, n);
    if three_pulse {
        let g = if has_cap {
            [0.0; 3]
        } else {
            [id_guess, 0.0, 0.0]
        };
        let set = make_set(&mut net, 0, 0.0, g, &mut probes);
        p = net.node();
        n = 0;
        for k in 0..3 {
            let nat = [-60.0, 60.0, 180.0][k];
            let kind = fire(nat);
            let e = add_dev(
                &mut net,
                set.bridge_nodes[k],
                p,
                kind,
                format!("{}+", names[k]),
                &mut device_names,
            );
            dev_elems.push(e);
        }
        sets.push(set);
    } else {
        let n_bridges = if twelve { 2 } else { 1 };
        let mut rails = Vec::new();
        for bi in 0..n_bridges {
            let shift = if bi == 1 { -PI / 6.0 } else { 0.0 };
            let neutral = if bi == 0 { 0 } else { net.node() };
            let share = if s.bridge.kind == BridgeKind::TwelvePulseParallel {
                0.5
            } else {
                1.0
            };
            let pattern = if bi == 0 {
                [1.0, -0.5, -0.5]
            } else {
                [1.0, -1.0, 0.0]
            };
            let g = if has_cap {
                [0.0; 3]
            } else {
                pattern.map(|p| p * id_guess * share)
            };
            let set = make_set(&mut net, neutral, shift, g, &mut probes);
            let bp = net.node();
            let bn = net.node();
            let shift_deg = if bi == 1 { 30.0 } else { 0.0 };
            let suffix = if twelve { ["1", "2"][bi] } else { "" };
            // Upper devices a+, b+, c+ then lower a-, b-, c- (natural points in degrees).
            for k in 0..3 {
                let nat = [-60.0, 60.0, 180.0][k] + shift_deg;
                let kind = fire(nat);
                let e = add_dev(
                    &mut net,
                    set.bridge_nodes[k],
                    bp,
                    kind,
                    format!("{}{}+", names[k], suffix),
                    &mut device_names,
                );
                dev_elems.push(e);
            }
            for k in 0..3 {
                let nat = [120.0, 240.0, 0.0][k] + shift_deg;
                let kind = fire(nat);
                let e = add_dev(
                    &mut net,
                    bn,
                    set.bridge_nodes[k],
                    kind,
                    format!("{}{}-", names[k], suffix),
                    &mut device_names,
                );
                dev_elems.push(e);
            }
            rails.push((bp, bn));
            sets.push(set);
        }
        if !twelve {
            p = rails[0].0;
            n = rails[0].1;
        } else if s.bridge.kind == BridgeKind::TwelvePulseSeries {
            // Bridge 1 on top of bridge 2: n1 joined to p2.
            let mid_r = net.r_min;
            net.push(Element::Conductance {
                a: rails[0].1,
                b: rails[1].0,
                g_s: 1.0 / mid_r,
            });
            p = rails[0].0;
            n = rails[1].1;
        } else {
            // Parallel through an interphase reactor (two uncoupled halves).
            let l_half = (s.bridge.interphase_l_h / 2.0).max(1e-9);
            let pj = net.node();
            for (bp, _) in rails.iter() {
                let e = net.push(Element::Inductor {
                    a: *bp,
                    b: pj,
                    l_h: l_half,
                    r_ohm: 1e-4 * z_base,
                });
                net.guess.push((e, id_guess / 2.0, id_guess));
            }
            net.push(Element::Conductance {
                a: rails[0].1,
                b: rails[1].1,
                g_s: 1.0 / net.r_min,
            });
            p = pj;
            n = rails[0].1;
        }
    }

    // DC side.
    let (m, choke) = net.series(p, s.dc.choke_l_h, s.dc.choke_r_ohm, id_guess, id_guess);
    let mut has_contactor = false;
    let q = if s.dc.precharge_r_ohm > 0.0 {
        let q = net.node();
        net.push(Element::Conductance {
            a: m,
            b: q,
            g_s: 1.0 / s.dc.precharge_r_ohm,
        });
        // A stuck bypass never closes: then the resistor stays in circuit.
        if !s.dc.precharge_stuck {
            net.push(Element::Switch {
                a: m,
                b: q,
                kind: SwitchKind::Contactor,
                v_th_v: 0.0,
                r_on_ohm: net.r_min.max(1e-9),
                open: false,
            });
            has_contactor = true;
        }
        q
    } else {
        m
    };
    let v_bus_guess = if s.dc.cap_f > 0.0 {
        if three_pulse {
            SQRT_2 * v_ll / 3f64.sqrt() * 0.97
        } else if s.bridge.kind == BridgeKind::TwelvePulseSeries {
            2.0 * SQRT_2 * v_ll * 0.97
        } else {
            SQRT_2 * v_ll * 0.97
        }
    } else {
        0.0
    };
    let mut i_cap = None;
    if s.dc.cap_f > 0.0 {
        let c_top = net.node();
        net.push(Element::Conductance {
            a: q,
            b: c_top,
            g_s: 1.0 / s.dc.cap_esr_ohm.max(net.r_min),
        });
        let e = net.push(Element::Capacitor {
            a: c_top,
            b: n,
            c_f: s.dc.cap_f,
        });
        net.guess.push((e, v_bus_guess, v_base));
        i_cap = Some(e);
    }
    if s.dc.bleed_r_ohm > 0.0 {
        net.push(Element::Conductance {
            a: q,
            b: n,
            g_s: 1.0 / s.dc.bleed_r_ohm,
        });
    }
    let mut cpl = None;
    let mut net_param = 0.0;
    let mut load_extra: Option<usize> = None;
    let (load_elem, load_sign) = match &s.dc.load {
        DcLoad::Resistor { r_ohm } => (
            net.push(Element::Conductance {
                a: q,
                b: n,
                g_s: 1.0 / r_ohm.max(net.r_min),
            }),
            1.0,
        ),
        DcLoad::Rle { r_ohm, l_h, e_v } => {
            let (e1, el) = net.series(q, *l_h, r_ohm.max(net.r_min), id_guess, id_guess);
            load_extra = el;
            let e = net.push(Element::VoltageSource {
                a: e1,
                b: n,
                wave: vec![(0, *e_v)],
            });
            (e, 1.0)
        }
        DcLoad::ConstantCurrent { i_a } => {
            let e = net.push(Element::CurrentSource {
                a: q,
                b: n,
                i_a: *i_a,
                scaled: false,
            });
            // Keeps the node defined when every device blocks.
            net.push(Element::Conductance {
                a: q,
                b: n,
                g_s: 1e-6 / z_base,
            });
            (e, 1.0)
        }
        DcLoad::ConstantPower { p_w } => {
            // Linearised about the mean bus voltage V0 (updated by the caller):
            // i = 2 P / V0 - (P / V0^2) v.
            // Typical drive buses settle near 0.93 of the peak line voltage.
            let v0 = if v_bus_guess > 0.0 {
                v_bus_guess * 0.935 / 0.97
            } else {
                1.35 * v_ll
            };
            let e = net.push(Element::CurrentSource {
                a: q,
                b: n,
                i_a: 1.0,
                scaled: true,
            });
            net_param = 2.0 * p_w / v0;
            let g = net.push(Element::Conductance {
                a: q,
                b: n,
                g_s: -p_w / (v0 * v0),
            });
            cpl = Some((e, g));
            (e, 1.0)
        }
    };

    let n_x = net
        .el
        .iter()
        .filter(|e| matches!(e, Element::Inductor { .. } | Element::Capacitor { .. }))
        .count();
    let z_base_g = 1.0 / (1e6 * z_base);
    let mut load_set: Vec<usize> = match cpl {
        Some((e, g)) => vec![e, g],
        None => vec![load_elem],
    };
    load_set.extend(load_extra);
    let loss_elems: Vec<usize> = net
        .el
        .iter()
        .enumerate()
        .filter(|(i, e)| {
            !load_set.contains(i)
                && matches!(
                    e,
                    Element::Conductance { .. } | Element::Inductor { .. } | Element::Switch { .. }
                )
        })
        .map(|(i, _)| i)
        .collect();
    let mut circuit = Circuit::new(net.n_nodes, net.el.clone(), osc, z_base_g, z_base_g);
    circuit.param = net_param;
    let mut x_guess = vec![0.0; n_x];
    let mut x_scale = vec![i_base; n_x];
    for (pos, &e) in circuit.state_elems.iter().enumerate() {
        if let Some(g) = net.guess.iter().find(|g| g.0 == e) {
            x_guess[pos] = g.1;
            x_scale[pos] = g.2.max(i_base);
        }
        if let Element::Capacitor { .. } = circuit.elements[e] {
            x_scale[pos] = v_base;
        }
    }

    // Probes.
    for k in 0..3 {
        roles.phase_v[k] = add_probe(
            &mut probes,
            &format!("v_{}n", names[k]),
            "V",
            vec![(Basic::Node(node_a(&circuit, sets[0].src[k])), 1.0)],
        );
    }
    if twelve {
        // Primary current (referred to the secondary line-to-line voltage):
        // i_A = i_a1 + (i_a2 - i_b2) / sqrt3 (ideal Yd transformer, unit ratio).
        for k in 0..3 {
            let k2 = (k + 1) % 3;
            roles.line_i[k] = add_probe(
                &mut probes,
                &format!("i_{}", names[k]),
                "A",
                vec![
                    (Basic::Elem(sets[0].src[k]), -1.0),
                    (Basic::Elem(sets[1].src[k]), -1.0 / 3f64.sqrt()),
                    (Basic::Elem(sets[1].src[k2]), 1.0 / 3f64.sqrt()),
                ],
            );
        }
        for (bi, set) in sets.iter().enumerate() {
            let mut arr = [0; 3];
            for k in 0..3 {
                arr[k] = add_probe(
                    &mut probes,
                    &format!("i_{}{}", names[k], bi + 1),
                    "A",
                    vec![(Basic::Elem(set.src[k]), -1.0)],
                );
            }
            roles.secondary_i.push(arr);
        }
    } else {
        for k in 0..3 {
            roles.line_i[k] = add_probe(
                &mut probes,
                &format!("i_{}", names[k]),
                "A",
                vec![(Basic::Elem(sets[0].src[k]), -1.0)],
            );
        }
    }
    for k in 0..3 {
        roles.pcc_v[k] = add_probe(
            &mut probes,
            &format!("v_pcc_{}n", names[k]),
            "V",
            sets[0].pcc[k].clone(),
        );
    }
    roles.v_dc = add_probe(
        &mut probes,
        "v_dc",
        "V",
        vec![(Basic::Node(q), 1.0), (Basic::Node(n), -1.0)],
    );
    roles.v_bridge = add_probe(
        &mut probes,
        "v_bridge",
        "V",
        vec![(Basic::Node(p), 1.0), (Basic::Node(n), -1.0)],
    );
    // DC current out of the bridge: sum of the upper devices' currents (first bridge for 12-pulse series).
    let upper: Vec<(Basic, f64)> = if three_pulse {
        dev_elems.iter().map(|&e| (Basic::Elem(e), 1.0)).collect()
    } else if s.bridge.kind == BridgeKind::TwelvePulseParallel {
        dev_elems
            .iter()
            .enumerate()
            .filter(|(i, _)| i % 6 < 3)
            .map(|(_, &e)| (Basic::Elem(e), 1.0))
            .collect()
    } else {
        dev_elems
            .iter()
            .take(3)
            .map(|&e| (Basic::Elem(e), 1.0))
            .collect()
    };
    roles.i_dc = add_probe(&mut probes, "i_dc", "A", upper);
    roles.i_cap = i_cap.map(|e| add_probe(&mut probes, "i_cap", "A", vec![(Basic::Elem(e), 1.0)]));
    roles.i_choke = choke
        .filter(|&e| matches!(circuit.elements[e], Element::Inductor { .. }))
        .map(|e| add_probe(&mut probes, "i_choke", "A", vec![(Basic::Elem(e), 1.0)]));
    let load_terms = match cpl {
        Some((e, g)) => vec![(Basic::Elem(e), 1.0), (Basic::Elem(g), 1.0)],
        None => vec![(Basic::Elem(load_elem), load_sign)],
    };
    roles.i_load = add_probe(&mut probes, "i_load", "A", load_terms);
    for (i, &e) in dev_elems.iter().enumerate() {
        let (a, b) = match circuit.elements[e] {
            Element::Switch { a, b, .. } => (a, b),
            _ => (0, 0),
        };
        let ip = add_probe(
            &mut probes,
            &format!("i_{}", device_names[i]),
            "A",
            vec![(Basic::Elem(e), 1.0)],
        );
        let vp = add_probe(
            &mut probes,
            &format!("v_{}", device_names[i]),
            "V",
            vec![(Basic::Node(a), 1.0), (Basic::Node(b), -1.0)],
        );
        roles.devices.push((ip, vp));
    }
    Built {
        circuit,
        probes,
        roles,
        device_names,
        x_guess,
        x_scale,
        i_base_a: i_base,
        v_base_v: v_base,
        cpl,
        bus_nodes: (q, n),
        has_contactor,
        cpl_constant_current: false,
        loss_elems,
    }
}

fn node_a(c: &Circuit, e: usize) -> Node {
    match c.elements[e] {
        Element::VoltageSource { a, .. } => a,
        _ => 0,
    }
}
