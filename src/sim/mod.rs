//! The exact switched-circuit simulation: periodic steady state and power-up
//! transient of a scenario's circuit.

pub mod build;
pub mod circuit;
pub mod fft;
pub mod linalg;
pub mod solver;

use crate::params::Derived;
use crate::scenario::{DcLoad, Scenario};
use build::{Basic, Built, Probe};
use circuit::{Element, Topology};
use serde::{Deserialize, Serialize};
use solver::{ContactorRule, Engine, RunSpec, SolveError};
use std::f64::consts::PI;

/// Stable insertion sort by `cmp`, for the engine's short lists (gate times,
/// conduction windows, harmonic lists, signature rankings, reactor steps:
/// tens of entries at most, where its `n^2 / 4` comparisons cost nothing).
/// The same order as `slice::sort_by`; used instead of it because each
/// element type of the standard library's sorts brings 5 to 15 kB of code
/// into the page's WebAssembly (measured 2026-12-04: the stable and
/// unstable sorts were 20 and 15 kB of a 690 kB module), against a few
/// hundred bytes for this.  Checked against `sort_by` in the tests below.
pub fn sort_small_by<T>(v: &mut [T], mut cmp: impl FnMut(&T, &T) -> std::cmp::Ordering) {
    for i in 1..v.len() {
        let mut j = i;
        while j > 0 && cmp(&v[j - 1], &v[j]) == std::cmp::Ordering::Greater {
            v.swap(j - 1, j);
            j -= 1;
        }
    }
}

/// Switching-decision tolerance relative to the rated current and peak voltage.
/// It must exceed the leakage of blocking devices (`g_off`, about 2e-6 of the
/// rated current, see `build`), or devices chatter at leakage level.  Event
/// times are located at the exact zero crossing whatever this value.
pub const TOL_REL: f64 = 2e-5;

/// When the constant-power load's incremental conductance `g = P / Vg^2`,
/// built for a bus voltage `Vg`, is rebuilt about the mean `V` (see
/// `cpl_rebuild`): the slope's relative error is about `2 |V - Vg| / Vg`,
/// and it acts only on the ripple, so the load current's error is about
/// `|V - Vg| / Vg * ripple_pp / V` of the mean current; this bounds it.
const CPL_SLOPE_TOL: f64 = 2e-4;
/// ... and never further than this from `Vg` whatever the ripple.
const CPL_REBUILD_MAX: f64 = 0.05;

/// Whether the constant-power load's incremental conductance, built for the
/// bus voltage `v_g`, must be rebuilt about the mean `v` with the bus
/// spread `ripple_pp` (see `CPL_SLOPE_TOL`).  Measured with a flat 5 %
/// threshold against 2 %: the drive front end at 20 % load (ripple 0.7 %)
/// moved by at most 4e-5 relative; the front end without reactor at full
/// load (ripple 8 %) moved THD by 4e-4 relative and the capacitor life
/// estimate by 1.4 %, which this rule does not allow.
fn cpl_rebuild(v: f64, v_g: f64, ripple_pp: f64) -> bool {
    cpl_off_by(v, v_g, ripple_pp, 1.0)
}

/// Whether a warm start keeps the previous point's slope, built for the bus
/// voltage `v_g` (at this point's power), about the predicted mean `v` with
/// the previous spread `ripple_pp`: only with half of `cpl_rebuild`'s
/// margin left, so that the kept slope seldom needs a rebuild (which costs
/// a second solve).  Keeping it keeps the circuit matrices, and with them
/// the previous point's topologies (`solver::TopoShare`).
fn cpl_keep(v: f64, v_g: f64, ripple_pp: f64) -> bool {
    v_g.is_finite() && v_g > 0.0 && !cpl_off_by(v, v_g, ripple_pp, 0.5)
}

/// `cpl_rebuild` with its thresholds scaled by `k`.
fn cpl_off_by(v: f64, v_g: f64, ripple_pp: f64, k: f64) -> bool {
    let off = (v - v_g).abs() / v_g;
    off >= k * CPL_REBUILD_MAX || off * (ripple_pp / v.abs()).max(1e-3) >= k * CPL_SLOPE_TOL
}

/// One harmonic of a signal.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Harmonic {
    pub order: u32,
    /// RMS magnitude (unit of the signal).
    pub rms: f64,
    /// Phase of `cos(h w t + phase)`, degrees.
    pub phase_deg: f64,
}

/// A computed signal over one period.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Signal {
    pub name: String,
    pub unit: String,
    /// Samples on the uniform grid `t_s` (right-hand limits at switching instants).
    pub samples: Vec<f64>,
    pub mean: f64,
    pub rms: f64,
    pub min: f64,
    pub max: f64,
    /// Harmonics 1..=h_max (only for the signals that need them; else empty).
    pub harmonics: Vec<Harmonic>,
}

/// A switching instant.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct SwitchEvent {
    pub t_s: f64,
    pub device: String,
    pub on: bool,
}

/// The power-up transient from a discharged bus.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Transient {
    pub t_s: Vec<f64>,
    pub v_dc: Vec<f64>,
    pub i_a: Vec<f64>,
    pub i_b: Vec<f64>,
    pub i_c: Vec<f64>,
    /// Largest line-current magnitude, A.
    pub inrush_peak_a: f64,
    /// Time for the bus to first reach 90 % of its steady mean, s (None if it did not).
    pub charge_time_s: Option<f64>,
    /// When the precharge bypass closed, s.
    pub bypass_at_s: Option<f64>,
    /// A constant-power load (a drive's inverter) was held off until the
    /// bypass closed; otherwise any load was on from the start.
    #[serde(default)]
    pub inverter_held_off: bool,
    /// Largest line-current magnitude on the grid while the precharge
    /// resistor was in circuit (before the bypass closed), A: the figure
    /// for sizing the resistor.  None without a precharge resistor.
    #[serde(default)]
    pub precharge_peak_a: Option<f64>,
    /// Largest line-current magnitude on the grid after the bypass closed,
    /// A: the surge for sizing the bypass contactor and the fuses.
    #[serde(default)]
    pub bypass_surge_a: Option<f64>,
    /// Highest bus voltage on the grid during the power-up, V (an overshoot
    /// above the steady bus loads the capacitors and the overvoltage trip).
    #[serde(default)]
    pub v_dc_peak_v: f64,
}

/// Simulation results.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct SimResult {
    pub period_s: f64,
    /// Uniform grid over one period, s.
    pub t_s: Vec<f64>,
    pub signals: Vec<Signal>,
    pub events: Vec<SwitchEvent>,
    pub device_names: Vec<String>,
    /// Index of named roles in `signals`.
    pub roles: RoleIndex,
    /// Mean instantaneous power per phase `mean(v_k i_k)` at the EMF, W.
    pub p_phase_w: [f64; 3],
    /// Mean power into the DC load terminals `mean(v_dc i_load)`, W.
    pub p_load_w: f64,
    /// Mean dissipation in every modelled resistance and device (source and
    /// reactor resistance, ESR, bleed, devices, leakage), W.
    pub p_loss_w: f64,
    pub newton_iterations: usize,
    pub residual: f64,
    /// The largest magnitude of the periodic solution's Floquet multipliers
    /// (the eigenvalues of the monodromy matrix, saltation included: how a
    /// small disturbance of the state grows or decays over one period).
    /// Above 1 the periodic solution is unstable: the circuit would leave it.
    /// `None` when no period was marched with the sensitivity.
    pub largest_multiplier: Option<f64>,
    /// Solver effort: periods marched and topologies built (all engines of this solve).
    pub periods_marched: usize,
    pub topologies_built: usize,
    pub topologies: usize,
    pub warnings: Vec<String>,
    pub transient: Option<Transient>,
    /// The solution as a start for a nearby solve (not serialized).
    #[serde(skip)]
    pub warm_start: Option<WarmStart>,
}

/// Indexes of the signals with a role (the netlist builder's roles).
pub type RoleIndex = build::Roles;

/// What a solved periodic steady state leaves for the next, nearby solve
/// (a sweep's next point): the state and switch states at `t = 0`, the
/// constant-power load's parameter and the bus mean it was solved at.  A
/// solve started from it skips the warm-up periods and most Newton
/// iterations; it is used only when the next circuit has the same netlist
/// shape (same elements, nodes and faults), and if Newton fails from it the
/// solve starts again cold.  It is only made (and a warm-started solution
/// only kept: else the point is solved again cold) for a diode bridge, and with a
/// constant-power load only when the bus ripple is below
/// `WARM_CPL_RIPPLE_MAX` of its mean: a thyristor bridge (its gate windows)
/// and a constant-power load on a rippling bus can have more than one
/// periodic solution, and a warm start then found another one than the cold
/// solve (random circuits of `tests/sweep_warm.rs`: 1.5e-6 to 6 % apart in
/// line RMS), while a sweep must give the single analysis's figures at each
/// point.  Where it is made, the answer is the same periodic solution (to
/// the Newton tolerance, 1e-10 of each state's scale); with a constant-power
/// load its linearisation slope is built about the previous point's bus
/// mean instead of the cold guess, which moves figures by less than the
/// rebuild rule allows (see `cpl_rebuild`; measured in `tests/sweep_warm.rs`).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct WarmStart {
    pub x0: Vec<f64>,
    pub on0: Vec<bool>,
    /// The circuit's parameter entry at the solution.
    pub param: f64,
    /// Mean bus voltage at the solution, V.
    pub v_dc_mean_v: f64,
    /// Solved with the constant-power load as a current constant in the period.
    pub cpl_constant_current: bool,
    /// The constant-power load's incremental conductance at the solution, S
    /// (negative), and the bus spread (max - min) there, V: the next point
    /// keeps this slope when the rebuild rule leaves a wide margin
    /// (`cpl_keep`), so that its topologies can be reused.
    pub cpl_g_s: Option<f64>,
    pub v_dc_spread_v: f64,
    /// The topologies of the solution's engine (reused by the next point's
    /// engine when its matrices are the same; see `solver::TopoShare`).
    pub topos: Option<SharedTopos>,
    shape: Vec<(u8, usize, usize, bool)>,
}

/// A shared [`solver::TopoShare`]; equal when it is the same share.
#[derive(Clone)]
pub struct SharedTopos(pub std::sync::Arc<solver::TopoShare>);

impl PartialEq for SharedTopos {
    fn eq(&self, other: &SharedTopos) -> bool {
        std::sync::Arc::ptr_eq(&self.0, &other.0)
    }
}

impl std::fmt::Debug for SharedTopos {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "SharedTopos({} topologies)", self.0.len())
    }
}

/// The largest bus ripple (peak to peak, relative to the mean) for which a
/// solution with a constant-power load leaves a warm start.  Random circuits
/// with 6 % to 22 % ripple gave warm and cold solutions 1e-3 to 5 % apart;
/// the drive front ends of the cross-check (0.7 % to 3 %) agree within 1e-5.
pub const WARM_CPL_RIPPLE_MAX: f64 = 0.04;

/// The netlist's shape: what must match for a warm start to apply.
fn netlist_shape(c: &circuit::Circuit) -> Vec<(u8, usize, usize, bool)> {
    let mut v = vec![(255u8, c.n_nodes, c.osc_omega.len(), false)];
    v.extend(c.elements.iter().map(|e| match e {
        Element::Conductance { a, b, .. } => (0u8, *a, *b, false),
        Element::Inductor { a, b, .. } => (1, *a, *b, false),
        Element::Capacitor { a, b, .. } => (2, *a, *b, false),
        Element::VoltageSource { a, b, .. } => (3, *a, *b, false),
        Element::CurrentSource { a, b, scaled, .. } => (4, *a, *b, *scaled),
        Element::Switch { a, b, open, .. } => (5, *a, *b, *open),
    }));
    v
}

impl WarmStart {
    /// The linear extrapolation `self + k (self - older)` of the state, the
    /// parameter and the bus mean (a sweep's predictor: `k` is the next
    /// step over the last one); `self` unchanged when the two do not match.
    /// A first-order predictor leaves a residual of the order of the square
    /// of the step, which the Newton solve then removes.
    pub fn extrapolate(&self, older: &WarmStart, k: f64) -> WarmStart {
        if !(k.is_finite() && (0.0..=2.0).contains(&k))
            || older.shape != self.shape
            || older.cpl_constant_current != self.cpl_constant_current
            || older.x0.len() != self.x0.len()
        {
            return self.clone();
        }
        let lin = |a: f64, b: f64| a + k * (a - b);
        let v = lin(self.v_dc_mean_v, older.v_dc_mean_v);
        WarmStart {
            x0: self
                .x0
                .iter()
                .zip(&older.x0)
                .map(|(a, b)| lin(*a, *b))
                .collect(),
            on0: self.on0.clone(),
            param: lin(self.param, older.param),
            v_dc_mean_v: if v > 0.0 { v } else { self.v_dc_mean_v },
            cpl_constant_current: self.cpl_constant_current,
            cpl_g_s: self.cpl_g_s,
            v_dc_spread_v: self.v_dc_spread_v,
            topos: self.topos.clone(),
            shape: self.shape.clone(),
        }
    }

    /// Whether this warm start applies to `c` solved in the given mode.
    fn fits(&self, c: &circuit::Circuit, cpl_constant_current: bool) -> bool {
        self.cpl_constant_current == cpl_constant_current
            && self.x0.len() == c.n_x()
            && self.on0.len() == c.switches.len()
            && self.x0.iter().all(|x| x.is_finite())
            && self.v_dc_mean_v.is_finite()
            && self.shape == netlist_shape(c)
    }
}

/// The outputs of one topology as forms over the state `z`: every probe as a
/// row of `c`, and the instantaneous dissipation as `z^T q z`, with
/// `q = sum r i i^T` over inductor resistances, the symmetric part of
/// `sum i v^T` over conductances and devices (current row `i`, voltage row
/// `v` across the element), and `g_min sum v_n v_n^T` over the nodes' leakage
/// to the reference.
///
/// Both are stacked as one matrix `[c; q]` (see `Columns`), so that one
/// pass over `z` gives every probe and `q z`.  With them the half-step
/// propagator `table[1]` by columns (see `mul_by_columns`), for the middle
/// of whole grid steps.
struct OutputForms {
    /// `[c; q]`.
    at: Columns,
    /// Rows of `c`.
    n_probe: usize,
    /// `table[1]` by columns.
    half: Vec<f64>,
}

impl OutputForms {
    /// (`with_loss` false: `q` is zero, and so the dissipation; a sweep
    /// point does not show the losses.)
    fn new(built: &Built, td: &solver::TopoData, with_loss: bool) -> OutputForms {
        let t = &td.topo;
        let nz = t.f.cols;
        let n_probe = built.probes.len();
        let mut c = linalg::Mat::zeros(n_probe, nz);
        for (i, pr) in built.probes.iter().enumerate() {
            probe_row_into(pr, t, &built.circuit, c.row_mut(i));
        }
        let mut q = linalg::Mat::zeros(nz, nz);
        let mut add_outer = |a: &[f64], b: &[f64], k: f64| {
            for (qi, ai) in q.data.chunks_exact_mut(nz.max(1)).zip(a) {
                if *ai == 0.0 {
                    continue;
                }
                for (qij, bj) in qi.iter_mut().zip(b) {
                    *qij += k * ai * bj;
                }
            }
        };
        let mut vv = vec![0.0; nz];
        let loss_elems = if with_loss {
            &built.loss_elems[..]
        } else {
            &[]
        };
        for &e in loss_elems {
            let iv = t.elem_i.row(e);
            match built.circuit.elements[e] {
                Element::Inductor { r_ohm, .. } => add_outer(iv, iv, r_ohm),
                Element::Conductance { a, b, .. } | Element::Switch { a, b, .. } => {
                    for ((o, x), y) in vv.iter_mut().zip(t.node_v.row(a)).zip(t.node_v.row(b)) {
                        *o = x - y;
                    }
                    add_outer(iv, &vv, 0.5);
                    add_outer(&vv, iv, 0.5);
                }
                _ => {}
            }
        }
        let g_min = built.circuit.g_min_s;
        for nn in (1..built.circuit.n_nodes).filter(|_| with_loss) {
            let r = t.node_v.row(nn);
            add_outer(r, r, g_min);
        }
        OutputForms {
            at: Columns::new(&linalg::Mat {
                rows: n_probe + nz,
                cols: nz,
                data: [c.data, q.data].concat(),
            }),
            n_probe,
            half: by_columns(&td.table[1]),
        }
    }

    /// The probes at the state `z` into `out[..n_probe]` (and `q z` into
    /// `out[n_probe..]`), and the dissipation `z^T q z`.
    fn eval(&self, z: &[f64], out: &mut [f64]) -> f64 {
        self.at.mul_into(z, out);
        dot(&out[self.n_probe..], z)
    }
}

/// `out = m z` with `m` stored column after column (`out.len()` rows): a
/// sum of columns, each scaled by an entry of `z` (entries zero, such as a
/// resting oscillator's, skipped after the first).  Each entry sums its
/// terms in the order of `Mat::mul_vec_into`.
fn mul_by_columns(m: &[f64], z: &[f64], out: &mut [f64]) {
    let rows = out.len();
    if rows == 0 {
        return;
    }
    let mut cols = z.iter().zip(m.chunks_exact(rows));
    match cols.next() {
        Some((z0, col)) => {
            for (o, x) in out.iter_mut().zip(col) {
                *o = z0 * x;
            }
        }
        None => out.fill(0.0),
    }
    for (zj, col) in cols {
        if *zj == 0.0 {
            continue;
        }
        for (o, x) in out.iter_mut().zip(col) {
            *o += zj * x;
        }
    }
}

/// `m` stored column after column.
fn by_columns(m: &linalg::Mat) -> Vec<f64> {
    // (Made at its length: collected from a flat map it grew by doubling.)
    let mut v = Vec::with_capacity(m.rows * m.cols);
    for j in 0..m.cols {
        v.extend((0..m.rows).map(|r| m.at(r, j)));
    }
    v
}

/// A matrix `m` (rows by the entries of `z`) stored for `out = m z` as
/// its columns, each cut to the range of rows in which it is not zero and
/// widened with zeros to a multiple of four rows (columns all zero left
/// out; the first one kept whole, so that it sets every row): `out` is the
/// sum of the columns, each scaled by its entry of `z`, a stream over
/// contiguous rows that vectorises.  Most probes depend on few entries of
/// `z` (a supply voltage on the oscillator pair alone, a DC-side signal not
/// on the oscillators; the constant column is zero with ideal devices): on
/// the drive front end (26 probes and `q`, 8 entries of `z`) 214 of the 272
/// entries are streamed.  Each entry sums its terms in the order of
/// `Mat::mul_vec_into`, the zero ones left out (a zero entry adds a zero
/// product: the same sums, bit for bit).
struct Columns {
    rows: usize,
    /// Per column kept: the entry of `z`, its first row, and its run of
    /// rows in `data` (start, end).
    cols: Vec<(usize, usize, usize, usize)>,
    data: Vec<f64>,
}

impl Columns {
    fn new(m: &linalg::Mat) -> Columns {
        let mut cols = Vec::with_capacity(m.cols);
        let mut data = Vec::new();
        for j in 0..m.cols {
            let nonzero = |r: &usize| m.at(*r, j) != 0.0;
            let (Some(lo), Some(hi)) = ((0..m.rows).find(nonzero), (0..m.rows).rfind(nonzero))
            else {
                continue;
            };
            // The first column kept is kept whole: it sets every row.
            let (mut lo, mut hi) = if cols.is_empty() {
                (0, m.rows - 1)
            } else {
                (lo, hi)
            };
            // Runs of a multiple of four rows (zeros added after, else
            // before, within the matrix): the vectorised loop then leaves
            // no rows to a scalar tail.
            while (hi + 1 - lo) % 4 != 0 && (hi + 1 < m.rows || lo > 0) {
                if hi + 1 < m.rows {
                    hi += 1;
                } else {
                    lo -= 1;
                }
            }
            let start = data.len();
            data.extend((lo..=hi).map(|r| m.at(r, j)));
            cols.push((j, lo, start, data.len()));
        }
        Columns {
            rows: m.rows,
            cols,
            data,
        }
    }

    /// `out[..rows] = m z` (`z` as long as `m` has columns).
    #[inline]
    fn mul_into(&self, z: &[f64], out: &mut [f64]) {
        let out = &mut out[..self.rows];
        let mut cols = self.cols.iter();
        match cols.next() {
            // The first column spans every row (see `new`).
            Some(&(j, _, start, end)) => {
                let zj = z[j];
                for (o, x) in out.iter_mut().zip(&self.data[start..end]) {
                    *o = zj * x;
                }
            }
            None => out.fill(0.0),
        }
        for &(j, lo, start, end) in cols {
            let zj = z[j];
            if zj == 0.0 {
                continue;
            }
            for (o, x) in out[lo..].iter_mut().zip(&self.data[start..end]) {
                *o += zj * x;
            }
        }
    }
}

fn probe_row(p: &Probe, t: &Topology, circuit: &circuit::Circuit) -> Vec<f64> {
    let mut row = vec![0.0; t.f.cols];
    probe_row_into(p, t, circuit, &mut row);
    row
}

/// The probe `p` as a row over `z`, into `row` (zeroed first).
fn probe_row_into(p: &Probe, t: &Topology, circuit: &circuit::Circuit, row: &mut [f64]) {
    row.fill(0.0);
    for &(b, c) in &p.terms {
        let r = match b {
            Basic::Node(n) => t.node_v.row(n),
            Basic::Elem(e) => t.elem_i.row(e),
            Basic::Deriv(e) => match circuit.state_elems.iter().position(|&x| x == e) {
                Some(s) => t.f.row(s),
                None => continue,
            },
        };
        for (o, x) in row.iter_mut().zip(r) {
            *o += c * x;
        }
    }
}

fn dot(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

/// Simulation settings.
#[derive(Debug, Clone)]
pub struct SimConfig {
    pub h_max: u32,
    pub grid_points: usize,
    pub transient_cycles: u32,
    /// `Engine::leakage_kicks` for the engines of the steady state and the
    /// power-up transient.
    pub leakage_kicks: bool,
}

impl SimConfig {
    pub fn from_scenario(s: &Scenario) -> SimConfig {
        SimConfig {
            h_max: s.analysis.h_max.clamp(1, 100),
            grid_points: s.analysis.grid_points.clamp(60, 20_000),
            transient_cycles: s.analysis.transient_cycles.min(2000),
            leakage_kicks: false,
        }
    }
}

fn err(reason: &str, hint: &str) -> SolveError {
    SolveError {
        reason: reason.into(),
        hint: hint.into(),
    }
}

/// The constant-power load's failure when the mean bus voltage is not positive.
const COLLAPSE: (&str, &str) = (
    "the bus collapses under the constant-power load",
    "the supply cannot deliver this power through its impedance; reduce the power or the impedance",
);

/// Solve the periodic steady state (with the constant-power load's parameter,
/// and its rebuilds) and return the engine positioned at the solution.
fn steady(
    built: &mut Built,
    s: &Scenario,
    cfg: &SimConfig,
    period: f64,
    warm: Option<&WarmStart>,
) -> Result<(Engine, solver::SteadyState, (usize, usize)), SolveError> {
    let warm = warm.filter(|w| w.fits(&built.circuit, built.cpl_constant_current));
    let cold = built.circuit.clone();
    if let Some(w) = warm {
        // From a nearby solution: no warm-up, Newton from its state.  If that
        // fails the solve starts again cold.
        match steady_from(built, s, cfg, period, Some(w), true) {
            Ok(r) => return Ok(r),
            Err(_) => built.circuit = cold.clone(),
        }
    }
    match steady_from(built, s, cfg, period, None, true) {
        Ok(r) => Ok(r),
        Err(_) => {
            // The Newton periods march in coarse strides, which can step over
            // a conduction pulse shorter than a stride (seen: a three-pulse
            // thyristor bridge on a supply with a 23rd harmonic at 256 grid
            // points, 32 strides a period, did not converge; on its grid
            // steps it did, to the figures of 512 and 1024 points).  Before
            // giving up, solve again on the grid step itself.
            built.circuit = cold;
            steady_from(built, s, cfg, period, None, false)
        }
    }
}

/// `steady` from a warm start (already checked to fit) or cold.
fn steady_from(
    built: &mut Built,
    s: &Scenario,
    cfg: &SimConfig,
    period: f64,
    warm: Option<&WarmStart>,
    coarse_newton: bool,
) -> Result<(Engine, solver::SteadyState, (usize, usize)), SolveError> {
    // The precharge bypass is closed in steady state.
    let x_guess = built.x_guess.clone();
    let cpl = match (built.cpl, &s.dc.load) {
        (Some((_ei, eg)), DcLoad::ConstantPower { p_w }) => Some((eg, *p_w)),
        _ => None,
    };
    let cc = built.cpl_constant_current;
    if let (Some(w), Some((eg, p_w))) = (warm, cpl) {
        // The slope and the parameter about the previous bus mean, for this
        // point's power; the previous point's slope is kept while it is close
        // enough for this power (`cpl_keep`), which keeps the matrices.
        let v = w.v_dc_mean_v;
        if v > 0.0 {
            if cc {
                built.circuit.param = p_w / v;
            } else {
                let g = match w.cpl_g_s {
                    Some(g) if g < 0.0 && cpl_keep(v, (p_w / -g).sqrt(), w.v_dc_spread_v) => g,
                    _ => -p_w / (v * v),
                };
                if let Element::Conductance { g_s, .. } = &mut built.circuit.elements[eg] {
                    *g_s = g;
                }
                // a = P / V + (P / Vg^2) V with P / Vg^2 = -g.
                built.circuit.param = p_w / v - g * v;
            }
        }
    }
    let mut eng = Engine::new(
        built.circuit.clone(),
        period,
        cfg.grid_points,
        TOL_REL * built.i_base_a,
        TOL_REL * built.v_base_v,
    );
    eng.coarse_newton = coarse_newton;
    eng.leakage_kicks = cfg.leakage_kicks;
    if let Some(t) = warm.and_then(|w| w.topos.as_ref()) {
        eng.adopt(&t.0);
    }
    let Some((eg, p_w)) = cpl else {
        let st = match warm {
            Some(w) => {
                solver::solve_periodic_from(&mut eng, &w.x0, &w.on0, &built.x_scale, 40, None)?
            }
            None => solver::solve_periodic(&mut eng, &x_guess, &built.x_scale, 2, 40, None)?,
        };
        return Ok((eng, st, (0, 0)));
    };
    // The load is i = a - g v with g = P / Vg^2 fixed at the point Vg the
    // engine was built for, and a = P / V0 + g V0 (its parameter entry, solved
    // with the state: see `solver::ParamRule`), V0 the mean bus voltage.  When
    // V0 ends too far from Vg for the bus ripple (`cpl_rebuild`) the engine is rebuilt with
    // g = P / V0^2 and solved again from there.  As a current constant within
    // the period (`cpl_constant_current`) the parameter is P / V0.
    let mut retired = (0usize, 0usize);
    let v_dc_probe = built.probes[built.roles.v_dc].clone();
    let circuit_for_rows = built.circuit.clone();
    let row = |t: &Topology| probe_row(&v_dc_probe, t, &circuit_for_rows);
    let mut st: Option<solver::SteadyState> = None;
    // Where each solve starts: the warm start, or the previous solve (after a rebuild).
    let mut from: Option<(Vec<f64>, Vec<bool>)> = warm.map(|w| (w.x0.clone(), w.on0.clone()));
    for _ in 0..20 {
        let v_g = match eng.circuit.elements[eg] {
            Element::Conductance { g_s, .. } if g_s < 0.0 => (p_w / -g_s).sqrt(),
            _ => f64::NAN,
        };
        let target = |v: f64| -> f64 {
            if cc {
                p_w / v
            } else {
                p_w / v + p_w / (v_g * v_g) * v
            }
        };
        let rule = solver::ParamRule {
            row: &row,
            target: &target,
            tol_rel: 1e-7,
            not_positive: COLLAPSE,
            restart: &|v: f64, ripple: f64| !cc && cpl_rebuild(v, v_g, ripple),
        };
        let next = match &from {
            None => solver::solve_periodic(&mut eng, &x_guess, &built.x_scale, 2, 40, Some(&rule)),
            Some((x0, on0)) => {
                solver::solve_periodic_from(&mut eng, x0, on0, &built.x_scale, 40, Some(&rule))
            }
        }?;
        from = Some((next.x0.clone(), next.on0.clone()));
        let mean_v = next.mean.unwrap_or(f64::NAN);
        if mean_v.is_nan() || mean_v <= 0.0 {
            return Err(err(COLLAPSE.0, COLLAPSE.1));
        }
        built.circuit.param = eng.circuit.param;
        let ripple = next.spread.unwrap_or(f64::INFINITY);
        let done = !next.restarted && (cc || !cpl_rebuild(mean_v, v_g, ripple));
        st = Some(next);
        if done {
            break;
        }
        // Rebuild the incremental conductance about the new mean.
        let mut c = eng.circuit.clone();
        if let Element::Conductance { g_s, .. } = &mut c.elements[eg] {
            *g_s = -p_w / (mean_v * mean_v);
        }
        c.param = 2.0 * p_w / mean_v;
        built.circuit = c.clone();
        let (it, vt) = (eng.i_tol_a, eng.v_tol_v);
        retired.0 += eng.n_runs;
        retired.1 += eng.n_topologies_built;
        eng = Engine::new(c, period, cfg.grid_points, it, vt);
        eng.leakage_kicks = cfg.leakage_kicks;
    }
    match st {
        Some(st) if !st.restarted => Ok((eng, st, retired)),
        _ => Err(err(
            "the periodic steady state did not converge",
            "the constant-power load's operating point kept moving; check the load power against the supply",
        )),
    }
}

/// Add the physics to a steady-state failure where it is known: a DC-link LC
/// filter feeding a constant-power load is unstable when the load's negative
/// incremental resistance outweighs the filter's damping (R. D. Middlebrook,
/// "Input filter considerations in design and application of switching
/// regulators", IEEE IAS Annual Meeting 1976; the series form of the condition
/// used here, `R_damp > L / (C R_cpl)` with `R_cpl = V^2 / P`, is common practice).
fn explain_failure(s: &Scenario, d: &Derived, e: SolveError) -> SolveError {
    // A six-pulse thyristor bridge whose gates never overlap cannot start a
    // conduction pulse from zero current (a device that has not latched when
    // its gate ends turns off: see `solver`), so every pulse of a capacitor
    // bus is out of reach and the bus collapses under a constant-power load;
    // that, not the filter, is the reason then.
    if s.bridge.kind == crate::scenario::BridgeKind::SixPulseThyristor
        && s.bridge.gate_width_deg <= 60.0
    {
        return SolveError {
            reason: format!(
                "no periodic steady state: with gates {:.0} degrees wide no two thyristors are gated at once, so the bridge cannot start a conduction pulse from zero current",
                s.bridge.gate_width_deg
            ),
            hint: "widen the gate pulse to more than 60 degrees (common practice: 120-degree or double pulses)".into(),
        };
    }
    if let DcLoad::ConstantPower { p_w } = s.dc.load {
        let (l, c) = (
            s.dc.choke_l_h + 2.0 * (d.l_source_h + d.l_reactor_h),
            s.dc.cap_f,
        );
        if l > 0.0 && c > 0.0 && p_w > 0.0 {
            let v = 1.35 * s.supply.v_ll_rms_v;
            let r_cpl = v * v / p_w;
            let r_damp =
                s.dc.choke_r_ohm + s.dc.cap_esr_ohm + 2.0 * (d.r_source_ohm + d.r_reactor_ohm);
            let need = l / (c * r_cpl);
            if r_damp < need {
                let f_res = 1.0 / (2.0 * PI * (l * c).sqrt());
                // (A rule of thumb, not a proof that this is why the solve
                // failed: the solver's own reason is kept beside it.)
                return SolveError {
                    reason: format!(
                        "no periodic steady state: the DC-link filter (resonance near {f_res:.0} Hz) feeding a constant-power load is likely unstable (the solver's own report: {})",
                        e.reason
                    ),
                    hint: format!(
                        "the load's negative incremental resistance needs a series damping of about {need:.3} ohm against {r_damp:.3} ohm present; add damping (a damped choke or an RC across the bus), change the choke or capacitance, or model the load as a resistor"
                    ),
                };
            }
        }
    }
    e
}

/// A periodic solution whose largest Floquet multiplier exceeds this is
/// reported unstable.  Above 1 a disturbance grows each period; the margin
/// keeps a numerically neutral mode (a node held only by the leakage
/// conductances, multiplier 1 less about 1e-6) and the estimate's own error
/// (`linalg::spectral_radius`, about 2e-6) from being called unstable.  At
/// 1 + 1e-4 a disturbance takes 10^4 periods to grow e-fold (our choice).
pub const UNSTABLE_MULTIPLIER: f64 = 1.0 + 1e-4;

/// The warning for an unstable periodic solution (largest multiplier `rho`).
fn unstable_warning(rho: f64) -> String {
    format!(
        "the periodic solution found is unstable: its largest Floquet multiplier is {rho:.3} per period, so a small disturbance grows by {:.1} % each period and the circuit would leave this operating point (the figures describe a state it would not stay in); add damping, or change the load or the DC-link capacitance",
        100.0 * (rho - 1.0)
    )
}

/// Run the simulation for a scenario.
///
/// A constant-power load is first linearised about the mean bus voltage
/// (see `steady`).  That model holds for a modest ripple; when the solution
/// shows a ripple above 25 % of the mean or a bus above the peak of the
/// supply (the linearised negative resistance pumping an LC resonance), or
/// when its periodic solution is unstable (a Floquet multiplier above
/// `UNSTABLE_MULTIPLIER`: Newton's shooting converges to unstable periodic
/// solutions as readily as to stable ones, and the exact constant-power load
/// in ngspice then wanders from period to period instead of settling), or
/// when no periodic solution exists with it, the load is solved again as a
/// current constant within the period (P / V0 on average), with a warning.
pub fn simulate(s: &Scenario, d: &Derived) -> Result<SimResult, SolveError> {
    simulate_from(s, d, None)
}

/// [`simulate`] started from a nearby solution (a sweep's previous point,
/// `SimResult::warm_start`) when it fits the circuit; see [`WarmStart`].
pub fn simulate_from(
    s: &Scenario,
    d: &Derived,
    warm: Option<&WarmStart>,
) -> Result<SimResult, SolveError> {
    simulate_outputs(s, d, warm, Outputs::All)
}

/// Which outputs a simulation computes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Outputs {
    /// Everything: every signal's samples on the grid (`t_s`), and the
    /// harmonics of every signal that has them (an analysis).
    #[default]
    All,
    /// What a sweep point's summary reads (`sweep::Summary`): no samples
    /// (`t_s` and every signal's `samples` empty), no dissipation
    /// (`p_loss_w` zero: no loss form is evaluated), and harmonics only of
    /// the line currents and the DC bus, and the fundamental of the EMF
    /// phase voltages (the FFT takes the harmonic signals two at a time as
    /// one complex sequence, so a signal's bits depend on its partner: a
    /// pair is transformed or left out whole, to the larger order of the
    /// two; every other signal's `harmonics` is empty).  Everything else
    /// (solution, means, RMS, extremes, the phases' and the load's power,
    /// events, warnings, warm start) is computed as with `All`, and is the
    /// same to the bit (`tests/sweep_lean.rs`).  Such a result is for
    /// `sweep`'s summary only: `results::compute`, `compliance` and the
    /// field check read the samples, harmonics and losses it leaves out.
    Summary,
}

/// [`simulate_from`] computing only `outputs` (see [`Outputs`]).
pub fn simulate_outputs(
    s: &Scenario,
    d: &Derived,
    warm: Option<&WarmStart>,
    outputs: Outputs,
) -> Result<SimResult, SolveError> {
    let first = simulate_with(s, d, false, warm, outputs);
    if !matches!(s.dc.load, DcLoad::ConstantPower { .. }) {
        return first;
    }
    let peak = peak_supply_v(s);
    // Why the linearised model was not kept (for the warning).
    let why = match &first {
        Ok(r) => {
            let v = &r.signals[r.roles.v_dc];
            if v.max - v.min > 0.25 * v.mean.abs() {
                Some(format!(
                    "with it the bus swung {:.0} V peak to peak, {:.0} % of its mean",
                    v.max - v.min,
                    100.0 * (v.max - v.min) / v.mean.abs()
                ))
            } else if v.max > 1.05 * peak {
                Some(format!(
                    "with it the bus rose to {:.0} V, above the supply's {:.0} V peak",
                    v.max, peak
                ))
            } else {
                r.largest_multiplier
                    .filter(|&x| x > UNSTABLE_MULTIPLIER)
                    .map(|rho| format!(
                        "its periodic solution is unstable (largest Floquet multiplier {rho:.3} per period), so the bus would not settle there"
                    ))
            }
        }
        Err(e) => Some(format!("it had no periodic solution ({})", e.reason)),
    };
    let Some(why) = why else {
        return first;
    };
    match simulate_with(s, d, true, warm, outputs) {
        Ok(mut r) => {
            r.warnings.push(format!(
                "the constant-power load was solved as a current constant within the period (P / V_avg), not with its linearised model: {why}. A load that draws constant power has a negative incremental resistance, which can pump the resonance of the line inductance and the bus capacitance; a drive's control normally damps it (common practice), so this model is the closer one here"
            ));
            Ok(r)
        }
        Err(e) => first.or(Err(e)),
    }
}

/// Largest possible bus voltage from the supply alone (peak line-to-line,
/// with unbalance and background harmonics; doubled for 12-pulse series).
fn peak_supply_v(s: &Scenario) -> f64 {
    let pu = s
        .supply
        .phase_magnitude_pu
        .iter()
        .cloned()
        .fold(0.0, f64::max);
    let h: f64 = s
        .supply
        .harmonics
        .iter()
        .map(|h| h.magnitude_pct.abs() / 100.0)
        .sum();
    let k = if s.bridge.kind == crate::scenario::BridgeKind::TwelvePulseSeries {
        2.0
    } else {
        1.0
    };
    k * 2f64.sqrt() * s.supply.v_ll_rms_v * pu * (1.0 + h)
}

/// Longest settling window after a switching, as a fraction of the period
/// (see `settling_windows`).
const SETTLE_MAX: f64 = 1e-5;
/// Settled: back-extrapolated values agree to this fraction of the rated
/// current (currents) or the peak line voltage (voltages).
const SETTLE_TOL: f64 = 1e-6;
/// Window lengths looked at: this many halvings below the longest.
const SETTLE_HALVINGS: u32 = 20;

/// The output forms of a topology, by key: their index in `forms`, built on first use.
type FormOf<'a> =
    dyn FnMut(u64, &mut Engine, &mut Vec<OutputForms>) -> Result<usize, SolveError> + 'a;

/// Intervals of time `[start, end)` left out of the extremes, sorted and
/// disjoint; `covers` is asked with times that never decrease.
struct Windows {
    iv: Vec<(f64, f64)>,
    i: usize,
}

impl Windows {
    fn covers(&mut self, t: f64) -> bool {
        while self.i < self.iv.len() && self.iv[self.i].1 <= t {
            self.i += 1;
        }
        self.i < self.iv.len() && self.iv[self.i].0 <= t
    }
}

/// The settling windows after the switchings of a recorded period, and the
/// settled values that stand for them in the extremes.
///
/// A blocking device's leakage (`g_off`) and a conducting one's `r_on` give
/// every topology stiff modes (time constants of nanoseconds: an inductance
/// over the leakage resistance, `L g_off`).  Where the ideal waveform jumps
/// at a switching (a device voltage at turn-off, the bus at the end of an
/// overlap) the model's waveform makes the jump through them, with an
/// overshoot (the 12-pulse parallel case: the bus from 515 V to 547.9 V in
/// 3 ns, then 543.6 V after 12 ns).  Min and max take whatever nodes fall in
/// it, so they depended on where the grid put them: at 16384 grid points a
/// piece of 13.7 ns after a switching put a Gauss node at 0.95 ns, 547 V.
///
/// For each switching instant `t_e`, the piece starting there is marched on
/// in its own topology to `W = 2^b` table ticks (one table level each), `W`
/// up to the next switching or `SETTLE_MAX` of the period, and every probe is taken
/// back to `t_e` along its slope there: `v(W) - W v'(W)` (with `v' = row F
/// z`).  Once the stiff modes have died out this is the ideal right-hand
/// limit, to `W^2 v'' / 2` (1e-8 of the bus with a 720 Hz ripple of 28 V at
/// the longest window).  When the longest two agree (to `SETTLE_TOL`), the
/// window is the shortest `W` from which on every one agrees with the
/// longest (tried from the longest down), and that value stands in the
/// extremes for the window; a switching whose right-hand limit already
/// agrees has no window.  A
/// transient not settled when the next switching comes leaves the whole
/// interval out (that switching has its own window); one not settled by
/// `SETTLE_MAX` is kept as it is.
fn settling_windows(
    eng: &mut Engine,
    run: &solver::RunOut,
    period: f64,
    built: &Built,
    forms: &mut Vec<OutputForms>,
    form_of: &mut FormOf,
) -> Result<(Windows, Vec<Vec<f64>>), SolveError> {
    let n_probe = built.probes.len();
    let tol: Vec<f64> = built
        .probes
        .iter()
        .map(|p| {
            SETTLE_TOL
                * if p.unit == "A" {
                    built.i_base_a
                } else {
                    built.v_base_v
                }
        })
        .collect();
    let agree = |a: &[f64], b: &[f64]| {
        a.iter()
            .zip(b)
            .zip(&tol)
            .all(|((x, y), t)| (x - y).abs() <= *t)
    };
    let mut instants: Vec<f64> = run.events.iter().map(|e| e.t_s).collect();
    instants.dedup();
    let tick = eng.h_s / (1u64 << solver::TABLE_LEVELS) as f64;
    let nz = built.circuit.n_z();
    let rows = n_probe + nz;
    let (mut z, mut fz) = (vec![0.0; nz], vec![0.0; nz]);
    let mut scratch = vec![0.0; nz];
    let (mut v, mut dv) = (vec![0.0; rows], vec![0.0; rows]);
    let mut iv: Vec<(f64, f64)> = Vec::new();
    let mut settled = Vec::new();
    let mut piece_i = 0;
    // Per instant: the index of the piece starting there, whether its start
    // left the extremes, and whether the interval after it left them whole.
    let mut out: Vec<(usize, bool, bool)> = Vec::with_capacity(instants.len());
    for (j, &t_e) in instants.iter().enumerate() {
        let next = instants.get(j + 1).copied().unwrap_or(instants[0] + period);
        // The piece starting at t_e, after every flip there.
        while piece_i + 1 < run.pieces.len() && run.pieces[piece_i + 1].t_s <= t_e {
            piece_i += 1;
        }
        let Some(p) = run.pieces.get(piece_i).filter(|p| p.t_s == t_e) else {
            out.push((piece_i, false, false));
            continue;
        };
        let w_max = (next - t_e).min(SETTLE_MAX * period);
        let top = (w_max / tick).log2().floor();
        if !top.is_finite() || top < 1.0 {
            // The next switching within two ticks: nothing settles.
            iv.push((t_e, next));
            out.push((piece_i, true, true));
            continue;
        }
        let top = top as u32;
        let lo = top.saturating_sub(SETTLE_HALVINGS);
        let td = eng.topo_key(p.key)?;
        let fi = form_of(p.key, eng, forms)?;
        let fo = &forms[fi];
        // The probes carried back to t_e from W = 2^b ticks, one table
        // level from the piece's start.
        let mut back_from = |b: u32, out: &mut Vec<f64>| {
            Engine::prop_vec_into(&td, 1u64 << b, &p.z, &mut z, &mut scratch);
            let w = tick * (1u64 << b) as f64;
            fo.eval(&z, &mut v);
            td.topo.f.mul_vec_into(&z, &mut fz);
            fo.eval(&fz, &mut dv);
            out.clear();
            out.extend((0..n_probe).map(|i| v[i] - w * dv[i]));
        };
        let (mut longest, mut shorter) = (Vec::new(), Vec::new());
        back_from(top, &mut longest);
        if top > lo {
            back_from(top - 1, &mut shorter);
        }
        if top == lo || !agree(&shorter, &longest) {
            let cut = next - t_e <= SETTLE_MAX * period;
            if cut {
                iv.push((t_e, next));
            }
            out.push((piece_i, cut, cut));
            continue;
        }
        let mut start = vec![0.0; rows];
        fo.eval(&p.z, &mut start);
        if agree(&start[..n_probe], &longest) {
            out.push((piece_i, false, false));
            continue;
        }
        // The shortest window from which on every one agrees with the longest.
        let mut k = top - 1;
        while k > lo {
            back_from(k - 1, &mut shorter);
            if !agree(&shorter, &longest) {
                break;
            }
            k -= 1;
        }
        iv.push((t_e, t_e + tick * (1u64 << k) as f64));
        settled.push(longest);
        out.push((piece_i, true, false));
    }
    // Where a switching's start left the extremes, its left-hand limit (the
    // state there in the topology before, a point of the waveform that no
    // node of the cut piece before reaches) counts, unless the interval
    // before left them whole.
    for (j, &(pi, start_out, _)) in out.iter().enumerate() {
        let before = out[(j + out.len() - 1) % out.len()];
        if !start_out || before.2 {
            continue;
        }
        // The last piece before the instant (not one of no length at it).
        let t_e = run.pieces[pi].t_s;
        let key = match run.pieces[..pi].iter().rposition(|q| q.t_s < t_e) {
            Some(k) => run.pieces[k].key,
            None => run.pieces[run.pieces.len() - 1].key,
        };
        let fi = form_of(key, eng, forms)?;
        forms[fi].eval(&run.pieces[pi].z, &mut v);
        settled.push(v[..n_probe].to_vec());
    }
    // Windows past the period's end continue at its start.
    let wrapped: Vec<(f64, f64)> = iv
        .iter()
        .filter(|w| w.1 > period)
        .map(|w| (0.0, w.1 - period))
        .collect();
    iv.extend(wrapped);
    sort_small_by(&mut iv, |a, b| a.0.total_cmp(&b.0));
    let mut merged: Vec<(f64, f64)> = Vec::with_capacity(iv.len());
    for w in iv {
        match merged.last_mut() {
            Some(m) if w.0 <= m.1 => m.1 = m.1.max(w.1),
            _ => merged.push(w),
        }
    }
    Ok((Windows { iv: merged, i: 0 }, settled))
}

/// Running sums of the period integrals (see `simulate_with`).
struct Accum {
    sum: Vec<f64>,
    sum2: Vec<f64>,
    mn: Vec<f64>,
    mx: Vec<f64>,
    /// Per harmonic signal and order h = 0..=h_max, the pair
    /// sum v cos(h w t) dt, sum v sin(h w t) dt (`stride` numbers a signal).
    four: Vec<f64>,
    p_phase: [f64; 3],
    p_load: f64,
    p_loss: f64,
    h_max: usize,
    w: f64,
    /// Scratch: cos(h w t), sin(h w t), h = 1..=h_max, in turn, for each
    /// of four nodes.
    cs: Vec<f64>,
}

impl Accum {
    fn new(n_probe: usize, n_harm: usize, h_max: usize, w: f64) -> Accum {
        Accum {
            sum: vec![0.0; n_probe],
            sum2: vec![0.0; n_probe],
            mn: vec![f64::INFINITY; n_probe],
            mx: vec![f64::NEG_INFINITY; n_probe],
            four: vec![0.0; 2 * (h_max + 1) * n_harm],
            p_phase: [0.0; 3],
            p_load: 0.0,
            p_loss: 0.0,
            h_max,
            w,
            cs: vec![0.0; 8 * h_max],
        }
    }

    /// Numbers per signal in `four`.
    fn stride(&self) -> usize {
        2 * (self.h_max + 1)
    }

    /// Min and max with the values `vals` (written as selects, which
    /// compile to packed min and max; a NaN value is passed over, as by
    /// `f64::min`).
    fn extremes(&mut self, vals: &[f64]) {
        let n = self.mn.len().min(self.mx.len()).min(vals.len());
        let (mn, mx, vals) = (&mut self.mn[..n], &mut self.mx[..n], &vals[..n]);
        for i in 0..n {
            let v = vals[i];
            mn[i] = if v < mn[i] { v } else { mn[i] };
            mx[i] = if v > mx[i] { v } else { mx[i] };
        }
    }

    /// A quadrature node of weight `wt` (s): every probe's value and the
    /// dissipation `q` there.  Every node is a point of the waveform, so it
    /// counts for min and max too, unless `ext` is false (a node in a
    /// settling window, see `settling_windows`).
    fn node(&mut self, wt: f64, vals: &[f64], q: f64, r: &RoleIndex, ext: bool) {
        let n = self.sum.len().min(self.sum2.len()).min(vals.len());
        let (sum, sum2, v) = (&mut self.sum[..n], &mut self.sum2[..n], &vals[..n]);
        for i in 0..n {
            sum[i] += wt * v[i];
            sum2[i] += wt * v[i] * v[i];
        }
        if ext {
            self.extremes(vals);
        }
        for k in 0..3 {
            self.p_phase[k] += wt * vals[r.phase_v[k]] * vals[r.line_i[k]];
        }
        self.p_load += wt * vals[r.v_dc] * vals[r.i_load];
        self.p_loss += wt * q;
    }

    /// The Fourier sums of the harmonic signals at up to four nodes,
    /// directly: node `n` at time `nodes[n].0` with weight `nodes[n].1` and
    /// the probe values `vals[n]`.
    fn direct(&mut self, nodes: &[(f64, f64)], vals: [&[f64]; 4], harm_signals: &[usize]) {
        // cos(h w t), sin(h w t) by recurrence, h = 1..=h_max, per node.
        let len = 2 * self.h_max;
        self.cs.resize(4 * len, 0.0);
        let n_nodes = nodes.len().min(4);
        for (&(t, _), cs) in nodes.iter().zip(self.cs.chunks_exact_mut(len)) {
            let (s1, c1) = (self.w * t).sin_cos();
            let (mut ch, mut sh) = (1.0f64, 0.0f64);
            for pair in cs.chunks_exact_mut(2) {
                let nc = ch * c1 - sh * s1;
                sh = sh * c1 + ch * s1;
                ch = nc;
                pair[0] = ch;
                pair[1] = sh;
            }
        }
        let (c0, rest) = self.cs.split_at(len);
        let (c1, rest) = rest.split_at(len);
        let (c2, c3) = rest.split_at(len);
        let stride = self.stride();
        for (fj, &si) in self.four.chunks_exact_mut(stride).zip(harm_signals) {
            // Weighted values; absent nodes weigh nothing.
            let mut v = [0.0; 4];
            for (n, vn) in v.iter_mut().enumerate().take(n_nodes) {
                *vn = vals[n][si] * nodes[n].1;
            }
            for ((((f, a), b), c), d) in fj[2..].iter_mut().zip(c0).zip(c1).zip(c2).zip(c3) {
                *f += v[0] * a + v[1] * b + v[2] * c + v[3] * d;
            }
        }
    }
}

/// A whole step's terms of the Fourier sequences (see `simulate_with`):
/// per harmonic signal, its knot sequence at `k` and `k1` takes the end
/// weight `w[0]` times the values at the step's start `v[0]` and end
/// `v[2]`, and its midpoint sequence at `k` the weight `w[1]` times the
/// middle values `v[1]`.  A knot entry not written before (`NEW0`,
/// `NEW1`) starts from zero: `0 + x`, the sum from a zeroed buffer.
#[inline(always)]
fn put_step<'a, const NEW0: bool, const NEW1: bool>(
    runs: impl Iterator<Item = (&'a mut [f64], &'a mut [f64])>,
    harm_signals: &[usize],
    k: usize,
    k1: usize,
    w: [f64; 2],
    v: [&[f64]; 3],
) {
    // (Cut to one length, so that one bounds check serves all three.)
    let n = v[0].len().min(v[1].len()).min(v[2].len());
    let (v0, v1, v2) = (&v[0][..n], &v[1][..n], &v[2][..n]);
    for ((kn, md), &si) in runs.zip(harm_signals) {
        let a = if NEW0 { 0.0 } else { kn[k] };
        kn[k] = a + w[0] * v0[si];
        let b = if NEW1 { 0.0 } else { kn[k1] };
        kn[k1] = b + w[0] * v2[si];
        md[k] = w[1] * v1[si];
    }
}

thread_local! {
    /// `simulate_with`'s buffer of Fourier sequences, kept between the
    /// analyses of a thread (a sweep's points), its numbers stale.
    static SEQ: std::cell::RefCell<Vec<f64>> = const { std::cell::RefCell::new(Vec::new()) };
}

fn simulate_with(
    s: &Scenario,
    d: &Derived,
    cpl_constant_current: bool,
    warm: Option<&WarmStart>,
    outputs: Outputs,
) -> Result<SimResult, SolveError> {
    let mut cfg = SimConfig::from_scenario(s);
    let period = 1.0 / s.supply.f_hz;
    let make_built = || {
        let mut built = build::build(s, d);
        if cpl_constant_current {
            if let (Some((_, eg)), DcLoad::ConstantPower { p_w }) = (built.cpl, &s.dc.load) {
                if let Element::Conductance { g_s, .. } = &mut built.circuit.elements[eg] {
                    *g_s = 0.0;
                }
                built.circuit.param = p_w / (0.9 * peak_supply_v(s));
                built.cpl_constant_current = true;
            }
        }
        built
    };
    let mut built = make_built();
    let warm_fits = warm.is_some_and(|w| w.fits(&built.circuit, built.cpl_constant_current));
    // Devices that chatter at the leakage level (a solve over its event
    // bound): solved again from the start with leakage kicks left off
    // (`solver::Engine::kick_only`, which says why they are not turn-ons).
    // Seen: a drive front end with one phase's EMF at 0 to 0.2 pu, whose
    // idle bridge handed a leakage-level current between four devices every
    // 5 to 14 ns.  The first error is the one reported if that fails too.
    let (mut eng, mut st, mut stats) = match steady(&mut built, s, &cfg, period, warm) {
        Err(e) if solver::is_chatter(&e) => {
            cfg.leakage_kicks = true;
            built = make_built();
            steady(&mut built, s, &cfg, period, warm).map_err(|_| e)
        }
        r => r,
    }
    .map_err(|e| explain_failure(s, d, e))?;
    // The recording period: the converging Newton period itself when it was
    // marched on the fine grid, else one more period from the solution.
    let record = RunSpec {
        t0_s: 0.0,
        t1_s: period,
        record: true,
        sensitivity: false,
        contactor_close: None,
        coarse: false,
    };
    let run = match st.recorded.take() {
        Some(run) => run,
        None => eng.run(&st.x0, &st.on0, &record)?,
    };
    // The recording period marches the fine grid: confirm it is periodic (a
    // conduction pulse shorter than a coarse stride would show here), else
    // solve again on the fine grid from where it ended.
    let mismatch = run
        .x_end
        .iter()
        .zip(&st.x0)
        .zip(&built.x_scale)
        .map(|((a, b), sc)| ((a - b) / sc).abs())
        .fold(0.0, f64::max);
    let (run, st) = if mismatch > 1e-7 && built.cpl.is_some() {
        // With a constant-power load the parameter is solved with the state
        // (`steady_from`'s rule); a fine-grid solve without the rule would
        // keep the parameter of the coarse solve.  Seen: a three-pulse
        // bridge with a bus ripple nine times its mean, at 256 grid points,
        // delivered 1525.2 kW of the 1528.7 kW asked, and its bus mean moved
        // by 0.1 % against 1024 points.  Solve again on the grid step with
        // the rule.
        let (mut eng2, mut st2, more) = steady_from(&mut built, s, &cfg, period, None, false)
            .map_err(|e| explain_failure(s, d, e))?;
        stats.0 += eng.n_runs + more.0;
        stats.1 += eng.n_topologies_built + more.1;
        let run2 = match st2.recorded.take() {
            Some(run) => run,
            None => eng2.run(&st2.x0, &st2.on0, &record)?,
        };
        eng = eng2;
        (run2, st2)
    } else if mismatch > 1e-7 {
        eng.coarse_newton = false;
        let st2 = solver::solve_periodic_from(
            &mut eng,
            &run.x_end,
            &run.on_end,
            &built.x_scale,
            40,
            None,
        )?;
        let run2 = eng.run(&st2.x0, &st2.on0, &record)?;
        (run2, st2)
    } else {
        (run, st)
    };
    let n_probe = built.probes.len();
    let r = built.roles.clone();
    let mut harm_signals: Vec<usize> = Vec::new();
    harm_signals.extend(r.phase_v);
    harm_signals.extend(r.line_i);
    harm_signals.extend(r.pcc_v);
    harm_signals.push(r.v_dc);
    harm_signals.push(r.i_dc);
    if let Some(c) = r.i_cap {
        harm_signals.push(c);
    }
    for sec in &r.secondary_i {
        harm_signals.extend(sec);
    }
    sort_small_by(&mut harm_signals, |a, b| a.cmp(b));
    harm_signals.dedup();
    let lean = outputs == Outputs::Summary;
    if lean {
        // Whole pairs of the FFT loop below (signals 2j and 2j + 1; an odd
        // last one alone), so that each kept pair is transformed as before.
        let wanted = |i: &usize| r.phase_v.contains(i) || r.line_i.contains(i) || *i == r.v_dc;
        harm_signals = harm_signals
            .chunks(2)
            .filter(|pair| pair.iter().any(wanted))
            .flatten()
            .copied()
            .collect();
    }
    let h_max = cfg.h_max as usize;
    // The orders reported per harmonic signal: 1..=h_max, but with
    // `Outputs::Summary` only the fundamental of the phase voltages and
    // none of a signal kept only as an FFT partner.
    let orders: Vec<usize> = harm_signals
        .iter()
        .map(|i| {
            if !lean || r.line_i.contains(i) || *i == r.v_dc {
                h_max
            } else if r.phase_v.contains(i) {
                1
            } else {
                0
            }
        })
        .collect();
    let w = 2.0 * PI / period;
    let n_harm = harm_signals.len();
    let mut acc = Accum::new(n_probe, n_harm, h_max, w);
    // Integrals over the period.  A whole grid step takes Simpson's rule: its
    // start, middle and end (the middle state is one table level, E(h/2) z;
    // the ends are the pieces' start values, and a knot shared by two whole
    // steps is one node of both end weights).  A piece cut by a switching
    // instant takes four-point Gauss-Legendre.  Over whole steps the Fourier
    // integrals are two uniform sequences, the knots (start and end weights
    // summed) and the midpoints, summed by FFT (see `fft`); cut pieces are
    // summed directly.
    let n_grid = cfg.grid_points;
    let use_fft = n_grid >= 2 * (h_max + 1);
    let h_step = period / n_grid as f64;
    // seq[(s n_harm + j) n_grid + k]: weighted values of harmonic signal j
    // at t_k (s = 0) or at t_k + h/2 (s = 1).
    // The buffer is this thread's, kept from its last analysis (`SEQ`,
    // its numbers stale): each entry is set where it is first written (a
    // knot's `0 + x`, then `+ y`, as from zero), and the entries no whole
    // step writes are zeroed before the transforms (`written`).  Made
    // anew, the allocator zeroed all of it (138 kB on the drive front end)
    // whenever it reused memory, up to 1.2 % of an analysis.
    let mut seq = SEQ
        .with(|c| c.try_borrow_mut().ok().map(|mut v| std::mem::take(&mut *v)))
        .unwrap_or_default();
    seq.resize(if use_fft { 2 * n_harm * n_grid } else { 0 }, 0.0);
    // Per grid point: bit 0 its knot's entries written, bit 1 its midpoint's.
    let mut written = vec![0u8; if use_fft { n_grid } else { 0 }];
    // Per topology met: every probe and the dissipation as forms over z
    // (see `OutputForms`), found by key.
    let mut forms: Vec<OutputForms> = Vec::new();
    let mut key_form: solver::KeyMap<usize> = solver::KeyMap::default();
    let mut form_of =
        |key: u64, eng: &mut Engine, forms: &mut Vec<OutputForms>| -> Result<usize, SolveError> {
            if let Some(&i) = key_form.get(&key) {
                return Ok(i);
            }
            let td = eng.topo_key(key)?;
            forms.push(OutputForms::new(&built, &td, !lean));
            key_form.insert(key, forms.len() - 1);
            Ok(forms.len() - 1)
        };
    let nz = built.circuit.n_z();
    // Evaluated forms: the probes, then `q z`.
    let rows = n_probe + nz;
    // Start values of every piece: its probes, then its dissipation.
    let n_pieces = run.pieces.len();
    let mut piece_form = Vec::with_capacity(n_pieces);
    let mut start_vals = Vec::with_capacity(n_pieces * (n_probe + 1));
    let mut vals = vec![0.0; rows];
    let mut last: Option<(u64, usize)> = None;
    for p in &run.pieces {
        let fi = match last {
            Some((key, fi)) if key == p.key => fi,
            _ => form_of(p.key, &mut eng, &mut forms)?,
        };
        last = Some((p.key, fi));
        piece_form.push(fi);
        let q = forms[fi].eval(&p.z, &mut vals);
        start_vals.extend_from_slice(&vals[..n_probe]);
        start_vals.push(q);
    }
    // Samples on the grid: every probe at every knot.  A knot is where the
    // piece starting there starts (same instant, topology and state), so its
    // values are that piece's start values; others are evaluated on their own
    // (records after the pieces' in `start_vals`; `knot_rec` holds where
    // each knot's record starts).  Each probe's samples are then gathered
    // in one pass (pushed a knot at a time into every probe's vector they
    // cost more).  (None with `Outputs::Summary`.)
    let knots = if lean {
        &run.knots[..0]
    } else {
        &run.knots[..]
    };
    let rec_len = n_probe + 1;
    let mut knot_rec = Vec::with_capacity(knots.len());
    let mut piece_i = 0;
    for k in knots {
        while piece_i < n_pieces && run.pieces[piece_i].t_s < k.0 {
            piece_i += 1;
        }
        match run.pieces.get(piece_i) {
            Some(p) if p.t_s == k.0 && p.key == k.1 && p.z == k.2 => {
                knot_rec.push(piece_i * rec_len)
            }
            _ => {
                let fi = form_of(k.1, &mut eng, &mut forms)?;
                let q = forms[fi].eval(&k.2, &mut vals);
                knot_rec.push(start_vals.len());
                start_vals.extend_from_slice(&vals[..n_probe]);
                start_vals.push(q);
            }
        }
    }
    let samples: Vec<Vec<f64>> = (0..n_probe)
        .map(|j| knot_rec.iter().map(|&at| start_vals[at + j]).collect())
        .collect();
    let start_of = |i: usize| &start_vals[i * rec_len..][..n_probe];
    let start_q = |i: usize| start_vals[i * rec_len + n_probe];
    // Min and max leave out the stiff transients after switchings, with
    // the settled right-hand limits in their place (see `settling_windows`).
    let (mut windows, settled) =
        settling_windows(&mut eng, &run, period, &built, &mut forms, &mut form_of)?;
    for v in &settled {
        acc.extremes(v);
    }
    let mut gs = Vec::new();
    let mut z_mid = vec![0.0; nz];
    let mut z_end = vec![0.0; nz];
    let mut mid = vec![0.0; rows];
    let mut end = vec![0.0; rows];
    let mut gauss_vals: [Vec<f64>; 4] = std::array::from_fn(|_| vec![0.0; rows]);
    let (w_end, w_mid) = (h_step / 6.0, 4.0 * h_step / 6.0);
    // The end weight of a whole step whose end is the next piece's start,
    // added to that start's own (one node for both).
    let mut carry = 0.0;
    for (i, p) in run.pieces.iter().enumerate() {
        let fi = piece_form[i];
        let v_start = start_of(i);
        // Simpson's rule needs the state smooth on the closed step, start
        // included: after a switching at the knot itself a blocking device's
        // leakage leaves a transient far shorter than the step (the stiff
        // mode, see `dyadic_table`), which the start node would weigh by
        // h / 6.  Such a step, like a piece cut by a switching instant, takes
        // the four-point Gauss rule, whose first node is past it.
        let whole = (p.dt_s - h_step).abs() < 1e-9 * h_step;
        let prev = if i == 0 {
            run.pieces.last()
        } else {
            run.pieces.get(i - 1)
        };
        let smooth_start = prev.is_some_and(|q| q.key == p.key && q.dt_s > 0.0);
        let start_ext = !windows.covers(p.t_s);
        // The start counts for min and max whatever the piece (`node`
        // where it is also a node).
        if !whole || !smooth_start {
            if carry != 0.0 {
                acc.node(carry, v_start, start_q(i), &r, start_ext);
                carry = 0.0;
            } else if start_ext {
                acc.extremes(v_start);
            }
            eng.gauss_states_into(p, &mut gs)?;
            let mut tw = [(0.0, 0.0); 4];
            for (((t, wt, z), vals), tw) in gs.iter().zip(gauss_vals.iter_mut()).zip(&mut tw) {
                let q = forms[fi].eval(z, vals);
                // Interior points of the waveform: they count for min and max.
                acc.node(*wt, &vals[..n_probe], q, &r, !windows.covers(*t));
                *tw = (*t, *wt);
            }
            let [g0, g1, g2, g3] = &gauss_vals;
            acc.direct(&tw[..gs.len().min(4)], [g0, g1, g2, g3], &harm_signals);
            continue;
        }
        acc.node(carry + w_end, v_start, start_q(i), &r, start_ext);
        carry = 0.0;
        let fo = &forms[fi];
        mul_by_columns(&fo.half, &p.z, &mut z_mid);
        let q_mid = fo.eval(&z_mid, &mut mid);
        let v_mid = &mid[..n_probe];
        let mid_ext = !windows.covers(p.t_s + h_step / 2.0);
        acc.node(w_mid, v_mid, q_mid, &r, mid_ext);
        // The end: the next piece's start when it starts here in the same
        // topology (its node then takes this end weight too), else this
        // topology's values at the end state.
        let t_end = p.t_s + p.dt_s;
        let next = run.pieces.get(i + 1);
        let v_end: &[f64] = match next {
            Some(nx) if nx.key == p.key && (nx.t_s - t_end).abs() < 1e-9 * h_step => {
                carry = w_end;
                start_of(i + 1)
            }
            _ => {
                match next {
                    Some(nx) if (nx.t_s - t_end).abs() < 1e-9 * h_step => {
                        z_end.copy_from_slice(&nx.z)
                    }
                    _ => eng.topo_key(p.key)?.step.mul_vec_into(&p.z, &mut z_end),
                }
                let q_end = fo.eval(&z_end, &mut end);
                acc.node(w_end, &end[..n_probe], q_end, &r, !windows.covers(t_end));
                &end[..n_probe]
            }
        };
        let k = (p.t_s / h_step).round() as usize;
        if use_fft && k < n_grid && (p.t_s - k as f64 * h_step).abs() < 1e-9 * h_step {
            let k1 = (k + 1) % n_grid;
            let (knots, mids) = seq.split_at_mut(n_harm * n_grid);
            let runs = knots
                .chunks_exact_mut(n_grid)
                .zip(mids.chunks_exact_mut(n_grid));
            // An entry not yet written starts from zero (in time order
            // the step's start knot is written, its end knot not).
            let put = (written[k] & 1 == 0, written[k1] & 1 == 0);
            written[k] |= 3;
            written[k1] |= 1;
            let w = [w_end, w_mid];
            let v = [v_start, v_mid, v_end];
            let hs = &harm_signals;
            match put {
                (false, true) => put_step::<false, true>(runs, hs, k, k1, w, v),
                (false, false) => put_step::<false, false>(runs, hs, k, k1, w, v),
                (true, true) => put_step::<true, true>(runs, hs, k, k1, w, v),
                (true, false) => put_step::<true, false>(runs, hs, k, k1, w, v),
            }
        } else {
            let nodes = [
                (p.t_s, w_end),
                (p.t_s + h_step / 2.0, w_mid),
                (t_end, w_end),
            ];
            acc.direct(&nodes, [v_start, v_mid, v_end, v_end], &harm_signals);
        }
    }
    if use_fft {
        // Entries no whole step wrote are zero.
        let (knots, mids) = seq.split_at_mut(n_harm * n_grid);
        for (k, w) in written.iter().enumerate() {
            if w & 1 == 0 {
                for kn in knots.chunks_exact_mut(n_grid) {
                    kn[k] = 0.0;
                }
            }
            if w & 2 == 0 {
                for md in mids.chunks_exact_mut(n_grid) {
                    md[k] = 0.0;
                }
            }
        }
        // sum v e^{+i h w t} over a sequence offset by `offset` from the
        // knots is e^{i h w offset} conj(X[h]).
        let rot: Vec<(f64, f64)> = (0..=h_max)
            .map(|h| {
                let (sn, cs) = (h as f64 * w * h_step / 2.0).sin_cos();
                (cs, sn)
            })
            .collect();
        let mut xa = vec![(0.0, 0.0); h_max + 1];
        let mut xb = vec![(0.0, 0.0); h_max + 1];
        let stride = acc.stride();
        fft::with_plan(n_grid, |plan| {
            // Sequence 0 sits on the knots, sequence 1 half a step later.
            for sj in 0..2 {
                let seq_of = |j: usize| &seq[(sj * n_harm + j) * n_grid..][..n_grid];
                let mut j = 0;
                while j < n_harm {
                    let j2 = (j + 1).min(n_harm - 1);
                    // The bins wanted (the FFT computes each the same
                    // whatever the number, see `fft::pass`).
                    let top = 1 + orders[j].max(orders[j2]);
                    plan.two_real_into(seq_of(j), seq_of(j2), &mut xa[..top], &mut xb[..top]);
                    for (jj, x) in [(j, &xa), (j2, &xb)].into_iter().take(j2 + 1 - j) {
                        let four = &mut acc.four[jj * stride..(jj + 1) * stride];
                        for (h, f) in four.chunks_exact_mut(2).enumerate().take(top).skip(1) {
                            let (xr, xi) = (x[h].0, -x[h].1);
                            if sj == 0 {
                                f[0] += xr;
                                f[1] += xi;
                            } else {
                                let (cs, sn) = rot[h];
                                f[0] += cs * xr - sn * xi;
                                f[1] += sn * xr + cs * xi;
                            }
                        }
                    }
                    j += 2;
                }
            }
        });
    }
    // Kept for the next analysis on this thread, up to 4 MB.
    if seq.capacity() <= 1 << 19 {
        SEQ.with(|c| {
            if let Ok(mut v) = c.try_borrow_mut() {
                *v = seq;
            }
        });
    }
    let stride = acc.stride();
    let Accum {
        sum,
        sum2,
        mn,
        mx,
        four,
        p_phase,
        p_load,
        p_loss,
        ..
    } = acc;
    let grid_t: Vec<f64> = knots.iter().map(|k| k.0).collect();
    let mut signals = Vec::with_capacity(n_probe);
    for ((i, pr), samples) in built.probes.iter().enumerate().zip(samples) {
        let mean = sum[i] / period;
        let rms = (sum2[i] / period).max(0.0).sqrt();
        let harmonics = match harm_signals.iter().position(|&x| x == i) {
            Some(j) => (1..=orders[j])
                .map(|h| {
                    // a_h = 2/T int v cos, b_h = 2/T int v sin; v = A cos(h w t + phi)
                    // gives a = A cos phi, b = -A sin phi.
                    let a = 2.0 * four[j * stride + 2 * h] / period;
                    let b = 2.0 * four[j * stride + 2 * h + 1] / period;
                    Harmonic {
                        order: h as u32,
                        rms: (a * a + b * b).sqrt() / 2f64.sqrt(),
                        phase_deg: (-b).atan2(a).to_degrees(),
                    }
                })
                .collect(),
            None => Vec::new(),
        };
        signals.push(Signal {
            name: pr.name.clone(),
            unit: pr.unit.to_string(),
            samples,
            mean,
            rms,
            min: mn[i],
            max: mx[i],
            harmonics,
        });
    }
    let events = run
        .events
        .iter()
        .map(|e| SwitchEvent {
            t_s: e.t_s,
            device: built
                .device_names
                .get(e.switch)
                .cloned()
                .unwrap_or_else(|| "precharge bypass".into()),
            on: e.on,
        })
        .collect();
    let mut warnings = Vec::new();
    if let Some(ic) = r.i_choke {
        if signals[ic].min <= 1e-6 * built.i_base_a {
            warnings.push(
                "discontinuous conduction: the DC choke current falls to zero in each period"
                    .into(),
            );
        }
    }
    // A lost phase leaves its bridge terminal on nothing but blocking
    // devices: while its neighbours' devices are idle too, the terminal's
    // voltage is set by which device sits at leakage level, which the grid
    // can change (the lost-phase cross-check case: its RMS 86 V at 1024 grid
    // points, 39 V at 4096, with the bus and the line currents unchanged).
    if s.supply.phase_open.iter().any(|&o| o) {
        warnings.push(
            "lost phase: the open phase's terminal (its PCC voltage trace) floats; its waveform is set by device leakage here and by the drive's input filter and the meter on site, so read it as indicative only"
                .into(),
        );
    }
    // No device conducts in steady state (a firing angle, gate width and
    // back-EMF that leave no device forward biased while it may fire, or a
    // charged bus with no load): the DC side then sits at leakage level, and
    // voltages across idle devices and the bridge output are set by leakage
    // (seen: a thyristor bridge at alpha 127 deg into 10 V of back-EMF, its
    // bus ripple RMS 0.003 V at 1024 grid points and 0.18 V at 8192).
    let i_dc = &signals[r.i_dc];
    if i_dc.max.abs().max(i_dc.min.abs()) <= TOL_REL * built.i_base_a {
        warnings.push(
            "no conduction: no device of the bridge carries current in steady state (at this firing angle, back-EMF or load); the DC-side voltages and the idle devices' voltages are set by device leakage, so read them as indicative only"
                .into(),
        );
    }
    // A warm start is made, and a warm-started solution kept, only where the
    // periodic solution is unique enough that warm and cold land on the same
    // one (see `WarmStart`); a warm-started point outside that region is
    // solved again cold.
    let v_bus = &signals[r.v_dc];
    let cpl = matches!(s.dc.load, DcLoad::ConstantPower { .. });
    let warm_ok = !s.bridge.kind.is_controlled()
        && (!cpl || (v_bus.max - v_bus.min) < WARM_CPL_RIPPLE_MAX * v_bus.mean.abs());
    if warm_fits && !warm_ok {
        return simulate_with(s, d, cpl_constant_current, None, outputs);
    }
    let transient = if cfg.transient_cycles > 0 {
        let n_warn = warnings.len();
        let v_mean = signals[r.v_dc].mean;
        Some(
            match power_up(&built, s, &cfg, period, v_mean, &mut warnings) {
                // Chatter at the leakage level, as in the steady state above.
                Err(e) if solver::is_chatter(&e) && !cfg.leakage_kicks => {
                    warnings.truncate(n_warn);
                    cfg.leakage_kicks = true;
                    power_up(&built, s, &cfg, period, v_mean, &mut warnings).map_err(|_| e)
                }
                r => r,
            }?,
        )
    } else {
        None
    };
    let roles = r.clone();
    let warm_start = warm_ok.then(|| WarmStart {
        x0: st.x0.clone(),
        on0: st.on0.clone(),
        param: eng.circuit.param,
        v_dc_mean_v: signals[r.v_dc].mean,
        cpl_constant_current: built.cpl_constant_current,
        cpl_g_s: built
            .cpl
            .and_then(|(_, eg)| match eng.circuit.elements[eg] {
                Element::Conductance { g_s, .. } if !built.cpl_constant_current => Some(g_s),
                _ => None,
            }),
        v_dc_spread_v: v_bus.max - v_bus.min,
        topos: Some(SharedTopos(std::sync::Arc::new(eng.share()))),
        shape: netlist_shape(&built.circuit),
    });
    let largest_multiplier = st.monodromy.as_ref().and_then(linalg::spectral_radius);
    if let Some(rho) = largest_multiplier.filter(|&r| r > UNSTABLE_MULTIPLIER) {
        warnings.push(unstable_warning(rho));
    }
    Ok(SimResult {
        period_s: period,
        t_s: grid_t,
        signals,
        events,
        device_names: built.device_names.clone(),
        roles,
        p_phase_w: p_phase.map(|x| x / period),
        p_load_w: p_load / period,
        p_loss_w: p_loss / period,
        newton_iterations: st.iterations,
        largest_multiplier,
        periods_marched: eng.n_runs + stats.0,
        topologies_built: eng.n_topologies_built + stats.1,
        residual: st.residual,
        topologies: eng.cache_len(),
        warnings,
        transient,
        warm_start,
    })
}

/// Power-up from a discharged bus: every state zero at t = 0, the precharge
/// bypass open until its rule closes it.
fn power_up(
    built: &Built,
    s: &Scenario,
    cfg: &SimConfig,
    period: f64,
    v_mean: f64,
    warnings: &mut Vec<String>,
) -> Result<Transient, SolveError> {
    // A constant-power load is a drive's inverter.  With a precharge circuit
    // the drive holds it off (no load) until the bypass closes, then draws
    // its power: from the first grid point after the closing (at most one
    // step, 1/720 of a cycle, late) it is its equivalent resistance V0^2 / P
    // at the steady mean.  (Not the steady state's linearisation about V0:
    // a negative resistance that, on a bus still charging, made the
    // transient run away, 1e22 A.)  Without a precharge circuit the load is
    // that resistance from the start.
    let mut circuit = built.circuit.clone();
    let mut circuit_off = None;
    if let (Some((_ei, eg)), DcLoad::ConstantPower { p_w }) = (built.cpl, &s.dc.load) {
        if v_mean > 0.0 {
            if built.has_contactor {
                let mut c = circuit.clone();
                if let Element::Conductance { g_s, .. } = &mut c.elements[eg] {
                    *g_s = 0.0;
                }
                c.param = 0.0;
                circuit_off = Some(c);
            }
            if let Element::Conductance { g_s, .. } = &mut circuit.elements[eg] {
                *g_s = p_w / (v_mean * v_mean);
            }
            circuit.param = 0.0;
        }
    }
    let grid = cfg.grid_points.min(720);
    let new_engine = |c: circuit::Circuit| {
        let mut e = Engine::new(
            c,
            period,
            grid,
            TOL_REL * built.i_base_a,
            TOL_REL * built.v_base_v,
        );
        e.leakage_kicks = cfg.leakage_kicks;
        e
    };
    let mut eng = new_engine(circuit);
    // The engine while the inverter is held off (until the bypass closes).
    let mut eng_off = circuit_off.map(new_engine);
    let nx = eng.circuit.n_x();
    let on0 = vec![false; eng.circuit.switches.len()];
    let rule = if built.has_contactor {
        let peak = 2f64.sqrt() * s.supply.v_ll_rms_v;
        Some(ContactorRule {
            at_s: if s.dc.precharge_bypass_s > 0.0 {
                s.dc.precharge_bypass_s
            } else {
                f64::INFINITY
            },
            node_a: built.bus_nodes.0,
            node_b: built.bus_nodes.1,
            level_v: if s.dc.precharge_bypass_pu > 0.0 {
                s.dc.precharge_bypass_pu * peak
            } else {
                f64::INFINITY
            },
        })
    } else {
        None
    };
    // Marched in chunks of whole cycles so that only one chunk's steps are
    // held at a time (the waveforms keep four numbers per grid point; a
    // 2000-cycle power-up held every step's state at once before).
    const CHUNK_CYCLES: usize = 25;
    let n_cycles = cfg.transient_cycles as usize;
    let mut bypass_at_s = None;
    let h_step = eng.h_s;
    // Rows of the bus voltage and the three line currents, per topology of
    // each engine (0: the load on, 1: the inverter held off).
    let mut rows_by: [solver::KeyMap<[Vec<f64>; 4]>; 2] = Default::default();
    let mut trace = Trace::default();
    let (mut x, mut on) = (vec![0.0; nx], on0);
    let mut c0 = 0;
    while c0 < n_cycles {
        let mut c1 = (c0 + CHUNK_CYCLES).min(n_cycles);
        // A bypass closing at a set time is taken inside a chunk, never on
        // its boundary (the run stops at it only strictly inside).
        if let Some(rl) = rule.filter(|_| bypass_at_s.is_none()) {
            while c1 < n_cycles && (rl.at_s - period * c1 as f64).abs() < 0.25 * period {
                c1 += 1;
            }
        }
        let (t0, t1) = (period * c0 as f64, period * c1 as f64);
        let spec = |t0_s: f64, t1_s: f64, close: Option<ContactorRule>| RunSpec {
            t0_s,
            t1_s,
            record: true,
            sensitivity: false,
            contactor_close: close,
            coarse: false,
        };
        let close = if bypass_at_s.is_none() { rule } else { None };
        let skip = usize::from(c0 > 0);
        let held_off = bypass_at_s.is_none() && eng_off.is_some();
        let (engine, which) = match eng_off.as_mut() {
            Some(e) if held_off => (e, 1),
            _ => (&mut eng, 0),
        };
        let mut run = engine.run(&x, &on, &spec(t0, t1, close))?;
        let closed = run
            .events
            .iter()
            .find(|e| built.device_names.get(e.switch).is_none())
            .map(|e| e.t_s);
        if bypass_at_s.is_none() {
            bypass_at_s = closed;
        }
        match (held_off, closed) {
            (true, Some(tb)) => {
                // The bypass closed in this chunk with the inverter held off:
                // march again to the first grid point after the closing, then
                // on with the load.
                let tg = ((((tb - t0) / h_step) - 1e-9).ceil().max(0.0) * h_step + t0).min(t1);
                let off = eng_off
                    .as_mut()
                    .ok_or_else(|| err("internal", "held-off engine"))?;
                let run_a = off.run(&x, &on, &spec(t0, tg, close))?;
                absorb(
                    off,
                    &run_a,
                    &mut rows_by[1],
                    skip,
                    built,
                    v_mean,
                    &mut trace,
                )?;
                run = run_a;
                if tg < t1 - 1e-9 * h_step {
                    let run_b = eng.run(&run.x_end, &run.on_end, &spec(tg, t1, None))?;
                    absorb(
                        &mut eng,
                        &run_b,
                        &mut rows_by[0],
                        1,
                        built,
                        v_mean,
                        &mut trace,
                    )?;
                    run = run_b;
                }
            }
            _ => absorb(
                engine,
                &run,
                &mut rows_by[which],
                skip,
                built,
                v_mean,
                &mut trace,
            )?,
        }
        x = run.x_end;
        on = run.on_end;
        c0 = c1;
    }
    let Trace {
        t_s,
        v_dc,
        i_abc: [ia, ib, ic],
        peak,
        charge,
    } = trace;
    if charge.is_none() {
        warnings.push(
            "the bus did not reach 90 % of its steady value within the power-up window".into(),
        );
    }
    // Peaks on the grid before and after the bypass closed.
    let i_mag = |k: usize| ia[k].abs().max(ib[k].abs()).max(ic[k].abs());
    let split = bypass_at_s.unwrap_or(f64::INFINITY);
    let (mut before, mut after) = (0.0f64, None::<f64>);
    for (k, &t) in t_s.iter().enumerate() {
        if t < split {
            before = before.max(i_mag(k));
        } else {
            after = Some(after.unwrap_or(0.0).max(i_mag(k)));
        }
    }
    let v_dc_peak_v = v_dc.iter().cloned().fold(0.0, f64::max);
    if let Some(rl) = &rule {
        if rl.at_s.is_infinite() && rl.level_v.is_infinite() {
            warnings.push("precharge: neither a bypass time nor a bus level is set, so the bypass never closes in the power-up; the steady-state figures assume it closed".into());
        } else if bypass_at_s.is_none() {
            warnings.push(format!(
                "precharge: the bypass did not close within the power-up window (the bus reached {:.1} V{}); the steady-state figures assume it closed",
                v_dc_peak_v,
                if rl.level_v.is_finite() {
                    format!(", below the {:.1} V set", rl.level_v)
                } else {
                    String::new()
                }
            ));
        }
    }
    let line_peak = 2f64.sqrt()
        * s.supply.v_ll_rms_v
        * s.supply
            .phase_magnitude_pu
            .iter()
            .cloned()
            .fold(0.0, f64::max);
    // Warned above 1.1 x the highest line-to-line peak: our threshold, past
    // the few percent a bus overshoots on an ordinary charge.
    if line_peak > 0.0 && v_dc_peak_v > 1.1 * line_peak {
        let at = t_s
            .iter()
            .zip(&v_dc)
            .find(|(_, v)| **v >= v_dc_peak_v)
            .map(|(t, _)| *t)
            .unwrap_or(0.0);
        warnings.push(format!(
            "power-up overshoot: the bus peaks at {:.1} V ({:.2} x the line-to-line peak) at {:.1} ms; check the capacitors' voltage rating and the overvoltage trip",
            v_dc_peak_v,
            v_dc_peak_v / line_peak,
            at * 1e3
        ));
    }
    Ok(Transient {
        t_s,
        v_dc,
        i_a: ia,
        i_b: ib,
        i_c: ic,
        inrush_peak_a: peak,
        charge_time_s: charge,
        bypass_at_s,
        inverter_held_off: eng_off.is_some(),
        precharge_peak_a: rule.as_ref().map(|_| before),
        bypass_surge_a: if rule.is_some() { after } else { None },
        v_dc_peak_v,
    })
}

/// The power-up's samples so far (see `power_up`).
#[derive(Default)]
struct Trace {
    t_s: Vec<f64>,
    v_dc: Vec<f64>,
    i_abc: [Vec<f64>; 3],
    peak: f64,
    charge: Option<f64>,
}

/// Add a recorded run of the power-up to `trace`: the bus voltage and line
/// currents at its grid knots (the first `skip` left out: a chunk's first
/// knot is the last of the one before), the line-current peak over the
/// knots, the step midpoints and the Gauss nodes of cut pieces, and the
/// charge time (the first knot at 90 % of the steady mean `v_mean`).
fn absorb(
    eng: &mut Engine,
    run: &solver::RunOut,
    rows: &mut solver::KeyMap<[Vec<f64>; 4]>,
    skip: usize,
    built: &Built,
    v_mean: f64,
    trace: &mut Trace,
) -> Result<(), SolveError> {
    let r = &built.roles;
    for key in run
        .knots
        .iter()
        .map(|k| k.1)
        .chain(run.pieces.iter().map(|p| p.key))
    {
        if !rows.contains_key(&key) {
            let td = eng.topo_key(key)?;
            let row = |i: usize| probe_row(&built.probes[i], &td.topo, &eng.circuit);
            rows.insert(
                key,
                [
                    row(r.v_dc),
                    row(r.line_i[0]),
                    row(r.line_i[1]),
                    row(r.line_i[2]),
                ],
            );
        }
    }
    for k in run.knots.iter().skip(skip) {
        let rw = &rows[&k.1];
        let v = dot(&rw[0], &k.2);
        trace.t_s.push(k.0);
        trace.v_dc.push(v);
        for (j, series) in trace.i_abc.iter_mut().enumerate() {
            let i = dot(&rw[j + 1], &k.2);
            series.push(i);
            trace.peak = trace.peak.max(i.abs());
        }
        if trace.charge.is_none() && v >= 0.9 * v_mean && v_mean > 0.0 {
            trace.charge = Some(k.0);
        }
    }
    let h_step = eng.h_s;
    let mut gs = Vec::new();
    for p in &run.pieces {
        let rw = &rows[&p.key];
        if (p.dt_s - h_step).abs() < 1e-9 * h_step {
            let td = eng.topo_key(p.key)?;
            let z_mid = td.table[1].mul_vec(&p.z);
            for row in &rw[1..] {
                trace.peak = trace.peak.max(dot(row, &z_mid).abs());
            }
            continue;
        }
        eng.gauss_states_into(p, &mut gs)?;
        for (_, _, z) in &gs {
            for row in &rw[1..] {
                trace.peak = trace.peak.max(dot(row, z).abs());
            }
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// `sort_small_by` against the standard library's stable sort (the
    /// oracle) on lists with many ties: the same order, element by element.
    #[test]
    fn sort_small_by_is_the_stable_sort() {
        let mut seed = 0x2545_f491_4f6c_dd1du64;
        for n in [0usize, 1, 2, 3, 7, 20, 64] {
            for _ in 0..50 {
                let v: Vec<(u64, usize)> = (0..n)
                    .map(|i| {
                        seed ^= seed << 13;
                        seed ^= seed >> 7;
                        seed ^= seed << 17;
                        (seed % 5, i)
                    })
                    .collect();
                let (mut a, mut b) = (v.clone(), v);
                sort_small_by(&mut a, |x, y| x.0.cmp(&y.0));
                b.sort_by_key(|x| x.0);
                assert_eq!(a, b);
            }
        }
    }

    /// `Columns` gives the dense product's sums, bit for bit: each entry is
    /// the same terms in the same order, the zero ones left out (common
    /// practice: adding a zero product leaves a sum unchanged).  The matrix
    /// has an all-zero column, columns zero at the top or bottom, and a
    /// zero entry of `z`.
    #[test]
    fn columns_match_the_dense_product() {
        let (rows, cols) = (7, 5);
        let mut m = linalg::Mat::zeros(rows, cols);
        for r in 0..rows {
            for j in 0..cols {
                let x = ((r * 31 + j * 17) % 13) as f64 / 7.0 - 0.9;
                let keep = match j {
                    0 => true,
                    1 => r >= 3,
                    2 => false,
                    3 => r <= 2 || r == 5,
                    _ => r % 2 == 0,
                };
                if keep {
                    m.set(r, j, x * 1e3f64.powi(j as i32 - 2));
                }
            }
        }
        let k = Columns::new(&m);
        // Column 2 is left out; the others keep their rows from the first
        // to the last entry not zero, widened to four rows or the whole
        // column (column 3: rows 0 to 5, widened to all 7).
        assert_eq!(k.cols.len(), 4);
        assert_eq!(k.data.len(), 7 + 4 + 7 + 7);
        // Rows past the first column's last entry not zero are set too.
        let mut m0 = m.clone();
        for r in 4..rows {
            m0.set(r, 0, 0.0);
        }
        let k0 = Columns::new(&m0);
        assert_eq!(k0.data.len(), 7 + 4 + 7 + 7);
        let zs = [
            [1.5, -2.25, 3.0, 0.125, -7.0],
            [0.0, 1e-3, -1e6, 2.0, 0.0],
            [-3.0, 0.0, 0.0, 0.0, 4.5],
        ];
        for ((mat, kept), z) in [(&m, &k), (&m0, &k0)]
            .into_iter()
            .flat_map(|p| zs.iter().map(move |z| (p, z)))
        {
            let mut dense = vec![0.0; rows];
            mat.mul_vec_into(z, &mut dense);
            let mut out = vec![f64::NAN; rows + 2];
            kept.mul_into(z, &mut out);
            for (a, b) in out[..rows].iter().zip(&dense) {
                assert_eq!(
                    a.to_bits() & !(1 << 63),
                    b.to_bits() & !(1 << 63),
                    "{a} vs {b}"
                );
            }
            // Rows past the matrix are not touched.
            assert!(out[rows..].iter().all(|x| x.is_nan()));
        }
    }
}
