//! A piecewise-linear circuit: a netlist of linear elements and switches, and
//! the state-space model of each conduction state (topology).
//!
//! ## Formulation
//! The state vector is `z = [x; w; p; 1]`: `x` holds every inductor current and
//! capacitor voltage, `w` holds a (cos, sin) pair per source frequency (so a
//! sinusoidal source is a linear function of the state and the whole circuit in
//! one topology is the autonomous linear system `z' = F z`), and the last entry
//! is the constant 1 that carries DC sources and device threshold voltages; `p`
//! is a constant parameter (the constant-power load's current, set by an outer loop).
//!
//! For a topology (each switch on or off) the resistive network is solved by
//! modified nodal analysis with inductors as current injections (their state),
//! capacitors and voltage sources as voltage constraints.  Solving once with the
//! state columns as right-hand sides gives every node voltage and constraint
//! current as a row vector over `z`; from those rows come `F` (inductor
//! voltages and capacitor currents) and the probe rows (any current or voltage
//! a user asks for).  An "on" switch is a resistance `r_on` in series with its
//! threshold voltage; an "off" switch is a conductance `g_off`; every node has a
//! conductance `g_min` to the reference so that no topology leaves a node
//! floating.  `g_off` and `g_min` are chosen so that their currents are below
//! 1e-5 of the circuit's rated current (see `sim::build`).

use super::linalg::{Lu, Mat};

/// Node index; 0 is the reference (the supply's neutral point).
pub type Node = usize;

/// How a switch decides to turn on.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum SwitchKind {
    /// Turns on when forward biased beyond its threshold.
    Diode,
    /// Turns on when forward biased while its gate window is active.  The
    /// window opens at `fire_s` after the period start and lasts `width_s`.
    Thyristor { fire_s: f64, width_s: f64 },
    /// A contactor: on or off by command only (precharge bypass).
    Contactor,
}

/// A linear element or a switch.
#[derive(Debug, Clone, PartialEq)]
pub enum Element {
    /// Conductance `g_s` between `a` and `b` (may be negative).
    Conductance { a: Node, b: Node, g_s: f64 },
    /// Inductor with series resistance; state = current from `a` to `b`.
    Inductor {
        a: Node,
        b: Node,
        l_h: f64,
        r_ohm: f64,
    },
    /// Capacitor; state = `v_a - v_b`.
    Capacitor { a: Node, b: Node, c_f: f64 },
    /// Voltage source `v_a - v_b = sum of coef x term`, terms in source space:
    /// 0 = the constant 1, `1 + 2i` = cos of oscillator i, `2 + 2i` = its sin.
    VoltageSource {
        a: Node,
        b: Node,
        wave: Vec<(usize, f64)>,
    },
    /// Constant current `i_a` leaving node `a` through the source into node `b`;
    /// when `scaled`, the current is `i_a` times the circuit's parameter entry of `z`
    /// (so an outer loop can change it without rebuilding any topology).
    CurrentSource {
        a: Node,
        b: Node,
        i_a: f64,
        scaled: bool,
    },
    /// A switch from anode `a` to cathode `b`.
    Switch {
        a: Node,
        b: Node,
        kind: SwitchKind,
        v_th_v: f64,
        r_on_ohm: f64,
        /// Permanently open (a fault).
        open: bool,
    },
}

/// The netlist plus everything needed to build topologies.
#[derive(Debug, Clone)]
pub struct Circuit {
    pub n_nodes: usize,
    pub elements: Vec<Element>,
    /// Angular frequencies of the oscillator pairs, rad/s.
    pub osc_omega: Vec<f64>,
    pub g_off_s: f64,
    pub g_min_s: f64,
    /// Element index of each switch, in switch order.
    pub switches: Vec<usize>,
    /// Element index of each state-carrying element (inductors, capacitors), in state order.
    pub state_elems: Vec<usize>,
    /// Value of the parameter entry of `z` (constant in time).
    pub param: f64,
}

/// State-space model of one topology.
#[derive(Debug, Clone)]
pub struct Topology {
    /// `z' = f z`.
    pub f: Mat,
    /// Rows over `z`: node voltages (index = node, row 0 is zero).
    pub node_v: Mat,
    /// Rows over `z`: current through each element from `a` to `b`.
    pub elem_i: Mat,
}

impl Circuit {
    pub fn new(
        n_nodes: usize,
        elements: Vec<Element>,
        osc_omega: Vec<f64>,
        g_off_s: f64,
        g_min_s: f64,
    ) -> Circuit {
        let switches = elements
            .iter()
            .enumerate()
            .filter(|(_, e)| matches!(e, Element::Switch { .. }))
            .map(|(i, _)| i)
            .collect();
        let state_elems = elements
            .iter()
            .enumerate()
            .filter(|(_, e)| matches!(e, Element::Inductor { .. } | Element::Capacitor { .. }))
            .map(|(i, _)| i)
            .collect();
        Circuit {
            n_nodes,
            elements,
            osc_omega,
            g_off_s,
            g_min_s,
            switches,
            state_elems,
            param: 0.0,
        }
    }

    /// Whether `self` and `other` have the same topology matrices: every
    /// field but the parameter entry's value (which sits in the state `z`,
    /// not in a matrix) is equal, bit for bit.
    pub fn same_matrices(&self, other: &Circuit) -> bool {
        self.n_nodes == other.n_nodes
            && self.elements == other.elements
            && self.osc_omega == other.osc_omega
            && self.g_off_s == other.g_off_s
            && self.g_min_s == other.g_min_s
            && self.switches == other.switches
            && self.state_elems == other.state_elems
    }

    /// Number of physical states (inductor currents and capacitor voltages).
    pub fn n_x(&self) -> usize {
        self.state_elems.len()
    }

    /// Length of `z`.
    pub fn n_z(&self) -> usize {
        self.n_x() + 2 * self.osc_omega.len() + 2
    }

    /// Index of the parameter entry of `z`.
    pub fn param_idx(&self) -> usize {
        self.n_z() - 2
    }

    /// Index of the constant-1 entry of `z`.
    pub fn const_idx(&self) -> usize {
        self.n_z() - 1
    }

    /// Index of the cos entry of oscillator `k` (sin is the next).
    pub fn osc_idx(&self, k: usize) -> usize {
        self.n_x() + 2 * k
    }

    /// Initial oscillator and constant entries (at t = 0: cos = 1, sin = 0).
    pub fn init_z(&self, x: &[f64]) -> Vec<f64> {
        let mut z = vec![0.0; self.n_z()];
        z[..self.n_x()].copy_from_slice(x);
        for k in 0..self.osc_omega.len() {
            z[self.osc_idx(k)] = 1.0;
        }
        z[self.param_idx()] = self.param;
        z[self.const_idx()] = 1.0;
        z
    }

    /// Oscillator and constant entries at time `t_s`.
    pub fn osc_at(&self, z: &mut [f64], t_s: f64) {
        for (k, w) in self.osc_omega.iter().enumerate() {
            let i = self.osc_idx(k);
            z[i] = (w * t_s).cos();
            z[i + 1] = (w * t_s).sin();
        }
        let c = self.const_idx();
        z[c] = 1.0;
        let p = self.param_idx();
        z[p] = self.param;
    }

    /// Build the model of the topology where switch `k` is on iff `on[k]`.
    /// `None` when the network is singular (for example a loop of voltage
    /// constraints).
    pub fn topology(&self, on: &[bool]) -> Option<Topology> {
        let nz = self.n_z();
        let nv = self.n_nodes - 1; // unknown node voltages (node 0 is reference)
                                   // Voltage-constraint elements get a current unknown.
                                   // Voltage-constraint elements (capacitors, sources, conducting switches)
                                   // get a current unknown.  A conducting switch is `v_a - v_b - r_on j = v_th`:
                                   // its current comes out of the solve directly, accurate even when
                                   // `r_on` is tiny (a difference of node voltages would not be).
        let mut vs_index = vec![usize::MAX; self.elements.len()];
        let mut n_vs = 0;
        let mut sw_k = 0;
        for (i, e) in self.elements.iter().enumerate() {
            let is_vs = match e {
                Element::Capacitor { .. } | Element::VoltageSource { .. } => true,
                Element::Switch { open, .. } => {
                    let r = on[sw_k] && !open;
                    sw_k += 1;
                    r
                }
                _ => false,
            };
            if is_vs {
                vs_index[i] = nv + n_vs;
                n_vs += 1;
            }
        }
        let dim = nv + n_vs;
        let mut m = Mat::zeros(dim, dim);
        let mut rhs = Mat::zeros(dim, nz);
        let ci = self.const_idx();
        let stamp_g = |m: &mut Mat, a: Node, b: Node, g: f64| {
            if a > 0 {
                m.add_at(a - 1, a - 1, g);
            }
            if b > 0 {
                m.add_at(b - 1, b - 1, g);
            }
            if a > 0 && b > 0 {
                m.add_at(a - 1, b - 1, -g);
                m.add_at(b - 1, a - 1, -g);
            }
        };
        // Injection of `coef * z[col]` into node `n` (positive = into the node).
        let inject = |rhs: &mut Mat, n: Node, col: usize, coef: f64| {
            if n > 0 {
                rhs.add_at(n - 1, col, coef);
            }
        };
        for k in 1..self.n_nodes {
            m.add_at(k - 1, k - 1, self.g_min_s);
        }
        let mut sw_k = 0;
        for (i, e) in self.elements.iter().enumerate() {
            match e {
                Element::Conductance { a, b, g_s } => stamp_g(&mut m, *a, *b, *g_s),
                Element::Inductor { a, b, .. } => {
                    let s = self.state_elems.iter().position(|&x| x == i)?;
                    inject(&mut rhs, *a, s, -1.0);
                    inject(&mut rhs, *b, s, 1.0);
                }
                Element::CurrentSource { a, b, i_a, scaled } => {
                    let col = if *scaled { self.param_idx() } else { ci };
                    inject(&mut rhs, *a, col, -i_a);
                    inject(&mut rhs, *b, col, *i_a);
                }
                Element::Switch {
                    a,
                    b,
                    v_th_v,
                    r_on_ohm,
                    open,
                    ..
                } => {
                    let is_on = on[sw_k] && !open;
                    sw_k += 1;
                    if is_on {
                        let j = vs_index[i];
                        if *a > 0 {
                            m.add_at(a - 1, j, 1.0);
                            m.add_at(j, a - 1, 1.0);
                        }
                        if *b > 0 {
                            m.add_at(b - 1, j, -1.0);
                            m.add_at(j, b - 1, -1.0);
                        }
                        m.add_at(j, j, -r_on_ohm);
                        rhs.add_at(j, ci, *v_th_v);
                    } else {
                        stamp_g(&mut m, *a, *b, self.g_off_s);
                    }
                }
                Element::Capacitor { a, b, .. } | Element::VoltageSource { a, b, .. } => {
                    let j = vs_index[i];
                    if *a > 0 {
                        m.add_at(a - 1, j, 1.0);
                        m.add_at(j, a - 1, 1.0);
                    }
                    if *b > 0 {
                        m.add_at(b - 1, j, -1.0);
                        m.add_at(j, b - 1, -1.0);
                    }
                    match e {
                        Element::Capacitor { .. } => {
                            let s = self.state_elems.iter().position(|&x| x == i)?;
                            rhs.add_at(j, s, 1.0);
                        }
                        Element::VoltageSource { wave, .. } => {
                            for &(col, c) in wave {
                                // Source space: 0 = constant, 1 + 2i = cos of oscillator i, 2 + 2i = sin.
                                let zc = if col == 0 { ci } else { self.n_x() + col - 1 };
                                rhs.add_at(j, zc, c);
                            }
                        }
                        _ => {}
                    }
                }
            }
        }
        let lu = Lu::new(&m)?;
        let sol = lu.solve_mat(&rhs); // dim x nz
        let mut node_v = Mat::zeros(self.n_nodes, nz);
        for k in 1..self.n_nodes {
            for c in 0..nz {
                node_v.set(k, c, sol.at(k - 1, c));
            }
        }
        let vdiff = |a: Node, b: Node, c: usize| node_v.at(a, c) - node_v.at(b, c);
        let mut elem_i = Mat::zeros(self.elements.len(), nz);
        let mut f = Mat::zeros(nz, nz);
        let mut sw_k = 0;
        for (i, e) in self.elements.iter().enumerate() {
            match e {
                Element::Conductance { a, b, g_s } => {
                    for c in 0..nz {
                        elem_i.set(i, c, g_s * vdiff(*a, *b, c));
                    }
                }
                Element::Inductor { a, b, l_h, r_ohm } => {
                    let s = self.state_elems.iter().position(|&x| x == i)?;
                    elem_i.set(i, s, 1.0);
                    for c in 0..nz {
                        let mut v = vdiff(*a, *b, c);
                        if c == s {
                            v -= r_ohm;
                        }
                        f.set(s, c, v / l_h);
                    }
                }
                Element::Capacitor { c_f, .. } => {
                    let s = self.state_elems.iter().position(|&x| x == i)?;
                    let j = vs_index[i];
                    for c in 0..nz {
                        let cur = sol.at(j, c);
                        elem_i.set(i, c, cur);
                        f.set(s, c, cur / c_f);
                    }
                }
                Element::VoltageSource { .. } => {
                    let j = vs_index[i];
                    for c in 0..nz {
                        elem_i.set(i, c, sol.at(j, c));
                    }
                }
                Element::CurrentSource { i_a, scaled, .. } => {
                    let col = if *scaled { self.param_idx() } else { ci };
                    elem_i.set(i, col, *i_a);
                }
                Element::Switch {
                    a,
                    b,
                    v_th_v,
                    r_on_ohm,
                    open,
                    ..
                } => {
                    let is_on = on[sw_k] && !open;
                    sw_k += 1;
                    let _ = (v_th_v, r_on_ohm);
                    if is_on {
                        let j = vs_index[i];
                        for c in 0..nz {
                            elem_i.set(i, c, sol.at(j, c));
                        }
                    } else {
                        for c in 0..nz {
                            elem_i.set(i, c, self.g_off_s * vdiff(*a, *b, c));
                        }
                    }
                }
            }
        }
        for (k, w) in self.osc_omega.iter().enumerate() {
            let i = self.osc_idx(k);
            f.set(i, i + 1, -w);
            f.set(i + 1, i, *w);
        }
        Some(Topology { f, node_v, elem_i })
    }
}
