//! Event-driven exact integration of a piecewise-linear circuit, and the
//! periodic steady state by shooting (Newton on the initial state with the
//! monodromy matrix, saltation included).
//!
//! Within a topology `z(t0 + tau) = expm(F tau) z(t0)` exactly.  The period is
//! marched on a uniform grid with the cached step matrix `expm(F h)`; at each
//! grid step every switch's condition (current of an on device, voltage of an
//! off device) is checked, and a crossing is located by bisection on the
//! dyadic table `expm(F h / 2^i)` (one matrix-vector product per level, to
//! `h / 2^30`).  After a switch flips, the new topology is "settled": any
//! device whose condition is now violated flips too, one at a time.
//!
//! Steady state: the map from the state at t = 0 to the state at t = T is
//! smooth away from grazing events; its Jacobian is the product of the step
//! matrices and, at each state-triggered event, the saltation matrix
//! `I + (F+ z - F- z) c^T / (c^T F- z)` (Aizerman and Gantmacher 1958; see
//! e.g. Leine and Nijmeijer, *Dynamics and Bifurcations of Non-Smooth
//! Mechanical Systems*, Springer 2004, ch. 7).  Newton on `P(x0) - x0 = 0`
//! converges in a few periods whatever the circuit's time constants.

use super::circuit::{Circuit, Element, SwitchKind, Topology};
use super::linalg::{Lu, Mat};
use std::collections::HashMap;
use std::rc::Rc;
use std::sync::Arc;

/// Hasher for topology keys (a `u64` bit set of switch states): one
/// multiply-rotate per key (the "Fx" hash of the Rust compiler, common
/// practice) instead of SipHash, whose flood resistance these internal
/// keys do not need.  Lookups sit in the engine's inner loops.
#[derive(Default, Clone, Copy)]
pub struct KeyHasher(u64);

impl std::hash::Hasher for KeyHasher {
    fn finish(&self) -> u64 {
        self.0
    }
    fn write(&mut self, bytes: &[u8]) {
        for &b in bytes {
            self.write_u64(b as u64);
        }
    }
    fn write_u64(&mut self, x: u64) {
        self.0 = (self.0.rotate_left(5) ^ x).wrapping_mul(0x51_7c_c1_b7_27_22_0a_95);
    }
}

/// A map keyed by topology key.
pub type KeyMap<V> = HashMap<u64, V, std::hash::BuildHasherDefault<KeyHasher>>;

/// Gauss-Legendre nodes and weights on [-1, 1], 4 points (Abramowitz and
/// Stegun, Table 25.4), for pieces cut by a switching instant: within a piece
/// the state is a smooth sum of the circuit's modes (kinks sit at the piece
/// ends), and the rule's error is about `(omega tau)^8 / 3.5e9` of a component
/// at angular frequency omega over a piece of length tau.
pub const GL4_X: [f64; 4] = [
    -0.861_136_311_594_052_6,
    -0.339_981_043_584_856_3,
    0.339_981_043_584_856_3,
    0.861_136_311_594_052_6,
];
pub const GL4_W: [f64; 4] = [
    0.347_854_845_137_453_9,
    0.652_145_154_862_546_1,
    0.652_145_154_862_546_1,
    0.347_854_845_137_453_9,
];

/// Solver error: what failed and a hint.
#[derive(Debug, Clone, PartialEq)]
pub struct SolveError {
    pub reason: String,
    pub hint: String,
}

impl std::fmt::Display for SolveError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{} ({})", self.reason, self.hint)
    }
}

fn fail(reason: &str, hint: &str) -> SolveError {
    SolveError {
        reason: reason.into(),
        hint: hint.into(),
    }
}

/// The dyadic table `E_i = expm(F h / 2^i)`, i = 0..=TABLE_LEVELS.
///
/// Built upward from a fine level in the "minus identity" form
/// `D_i = E_i - I`: the finest level `L >= TABLE_LEVELS` is the first whose
/// scaled norm `theta = |F| h / 2^L` is at most `TAYLOR_THETA`; `D_L` is its
/// Taylor series to degree 6 (truncation below `theta^7 / 7!`, about 2e-25
/// relative); then `D_{i-1} = 2 D_i + D_i^2`, which is `E_{i-1} = E_i^2`
/// written so that the identity never swamps the small entries (the slow
/// modes of a stiff circuit keep their digits; this is the doubling step of
/// `expm1`-style scaling and squaring, e.g. Higham, *Functions of Matrices*,
/// SIAM 2008, sec. 10.3 and problem 10.7).  One matrix product per level.
/// A stiff topology (a leakage path through an inductor) only starts a few
/// levels finer.  Checked against `expm` at every level in the tests below.
pub fn dyadic_table(f: &Mat, h_s: f64) -> Option<Vec<Mat>> {
    let n = f.rows;
    let mut table: Vec<Mat> = Vec::with_capacity(TABLE_LEVELS + 1);
    dyadic_levels(f, h_s, |_, d| {
        let mut e = d.clone();
        for k in 0..n {
            e.data[k * n + k] += 1.0;
        }
        table.push(e);
    })?;
    // Built finest first; the table is indexed coarsest first.
    table.reverse();
    Some(table)
}

/// The levels of `dyadic_table` in the "minus identity" form `D_i = E_i -
/// I`, finest first: `visit(i, D_i)` for i = TABLE_LEVELS down to 0 (so
/// that a caller keeps what it needs of each without a copy per level);
/// `None` when they are not finite.
pub fn dyadic_levels(f: &Mat, h_s: f64, mut visit: impl FnMut(usize, &Mat)) -> Option<()> {
    const TAYLOR_THETA: f64 = 1e-3;
    let n = f.rows;
    if f.data.iter().any(|x| !x.is_finite()) {
        return None;
    }
    let norm = f.norm_1() * h_s;
    let mut finest_level = TABLE_LEVELS;
    while norm / 2f64.powi(finest_level as i32) > TAYLOR_THETA {
        finest_level += 1;
        if finest_level > TABLE_LEVELS + 200 {
            return None;
        }
    }
    let a = f.scale(h_s / 2f64.powi(finest_level as i32));
    // Where the rows of every power of F (and so of every D) can be
    // nonzero, and of I + such a sum (`nonzero_ranges`): the products below
    // skip the rest (the oscillator rows are zero outside their pair, the
    // parameter and constant rows zero), bit for bit the full products.
    let (ranges, ranges_i) = nonzero_ranges(f);
    // D = A + A^2/2! + ... + A^6/6!  (Horner: A (I + A/2 (I + A/3 (... (I + A/6))))).
    let mut d = Mat::identity(n);
    let mut tmp = Mat::zeros(n, n);
    for k in (2..=6).rev() {
        a.mul_into_ranges(&d, &mut tmp, &ranges_i);
        let inv = 1.0 / k as f64;
        for (o, x) in d.data.iter_mut().zip(&tmp.data) {
            *o = x * inv;
        }
        for i in 0..n {
            d.data[i * n + i] += 1.0;
        }
    }
    a.mul_into_ranges(&d, &mut tmp, &ranges_i);
    std::mem::swap(&mut d, &mut tmp);
    let mut level = finest_level;
    // (A level that is not finite leaves every coarser one not finite in
    // the same entry, `2 D + D^2` keeping its `2 D` term: only the last is
    // checked.)
    if level == TABLE_LEVELS {
        visit(level, &d);
    }
    while level > 0 {
        d.mul_into_ranges(&d, &mut tmp, &ranges);
        for (o, x) in tmp.data.iter_mut().zip(&d.data) {
            *o += 2.0 * x;
        }
        std::mem::swap(&mut d, &mut tmp);
        level -= 1;
        if level <= TABLE_LEVELS {
            visit(level, &d);
        }
    }
    // (`E_0 = D_0 + I` is finite where `D_0` is.)
    if !d.data.iter().all(|x| x.is_finite()) {
        return None;
    }
    Some(())
}

/// Columns `lo .. hi` of a row (see `nonzero_ranges`).
pub type ColRange = (usize, usize);

/// For each row `k` of `f`: the columns `lo .. hi` outside which row `k`
/// of every power `f^j`, `j >= 1`, is zero (the hull of the columns reachable
/// from `k` by a path of nonzero entries), and the same with `k` itself
/// added (the rows of `I + ...`).  An empty row is `(0, 0)`.  Exact: an
/// entry outside is a sum of products each with an exact zero factor.
pub fn nonzero_ranges(f: &Mat) -> (Vec<ColRange>, Vec<ColRange>) {
    let n = f.rows;
    // reach[k * n + j]: a path of length >= 1 from k to j.
    let mut reach: Vec<bool> = f.data.iter().map(|x| *x != 0.0).collect();
    for m in 0..n {
        for k in 0..n {
            if reach[k * n + m] {
                for j in 0..n {
                    if reach[m * n + j] {
                        reach[k * n + j] = true;
                    }
                }
            }
        }
    }
    let hull = |k: usize, with_k: bool| -> (usize, usize) {
        let row = &reach[k * n..(k + 1) * n];
        let lo = (0..n).find(|&j| row[j] || (with_k && j == k));
        let hi = (0..n).rev().find(|&j| row[j] || (with_k && j == k));
        match (lo, hi) {
            (Some(l), Some(h)) => (l, h + 1),
            _ => (0, 0),
        }
    };
    (
        (0..n).map(|k| hull(k, false)).collect(),
        (0..n).map(|k| hull(k, true)).collect(),
    )
}

/// Levels of the dyadic table: times are resolved to `h / 2^TABLE_LEVELS`
/// (about 1e-12 of a period at the default grid).
pub const TABLE_LEVELS: usize = 30;

/// Newton periods march in strides of `2^COARSE_LEVELS` grid steps (the
/// integration is exact whatever the step; the step only bounds how short a
/// conduction pulse the event check can miss).  The recording period uses
/// the grid step, and its periodicity is checked.
pub const COARSE_LEVELS: usize = 3;

/// Work bounds of one engine (a solve never hangs): periods marched, and
/// switching events over all of them.
pub const MAX_RUNS: usize = 600;
pub const MAX_TOTAL_EVENTS: usize = 60_000;

/// The reasons of the errors for a run or an engine over its event bound
/// (`Engine::max_events`, `MAX_TOTAL_EVENTS`).
pub const CHATTER_RUN: &str = "too many switching events";
pub const CHATTER_TOTAL: &str =
    "outside what this solver handles: too many switching events in this solve";

/// Whether a solve failed on an event bound (devices that chatter).
pub fn is_chatter(e: &SolveError) -> bool {
    e.reason == CHATTER_RUN || e.reason == CHATTER_TOTAL
}

/// Cached data of one topology.
pub struct TopoData {
    pub topo: Topology,
    /// The topology's key (`Engine::key` of its switch states).
    pub key: u64,
    /// `expm(F h)` for the grid step.
    pub step: Mat,
    /// `table[i] = expm(F h / 2^i)` for i = 0, 1 (the step and the half
    /// step, which the output stage reads as matrices).  Every level (the
    /// table to i = TABLE_LEVELS, and the coarse strides) is in `packed`:
    /// any time in a step, rounded to the finest level, is a product of
    /// these (they commute), so the state anywhere costs at most one
    /// matrix-vector product per level, and bisection for a switching
    /// instant costs one per level.
    pub table: Vec<Mat>,
    /// Condition row of each switch in this topology (current if on, voltage
    /// minus threshold if off).
    pub cond: Vec<Vec<f64>>,
    /// Every level (tick bit `b` = 0 ..= TABLE_LEVELS + COARSE_LEVELS:
    /// `expm(F h 2^(b - TABLE_LEVELS))`, the table's level `TABLE_LEVELS -
    /// b` up to the step, then the step squared `b - TABLE_LEVELS` times)
    /// packed for `apply_level`: the rows of the physical states by columns, then
    /// each oscillator pair's 2 x 2 block (row-major).  The rest of a level
    /// is structural: an oscillator row is zero outside its pair (its
    /// state-matrix rows are the rotation alone) and the parameter and
    /// constant rows are rows of the identity.
    packed: Vec<f64>,
    /// Physical states and oscillator pairs (the packing's shape).
    nx: usize,
    n_osc: usize,
}

impl TopoData {
    /// Length of one packed level.
    fn packed_len(&self) -> usize {
        packed_len(self.nx, self.n_osc)
    }
}

fn packed_len(nx: usize, n_osc: usize) -> usize {
    nx * (nx + 2 * n_osc + 2) + 4 * n_osc
}

/// Pack a level matrix (see `TopoData::packed`); in debug builds, check
/// that what is left out is the structure it is taken to be.
fn pack_level(m: &Mat, nx: usize, n_osc: usize, out: &mut Vec<f64>) {
    let nz = m.cols;
    debug_assert_eq!(nz, nx + 2 * n_osc + 2);
    let d = &m.data[..nz * nz];
    let start = out.len();
    out.resize(start + nx * nz, 0.0);
    let cols = &mut out[start..];
    for (i, row) in d.chunks_exact(nz).take(nx).enumerate() {
        for (c, &v) in cols.chunks_exact_mut(nx).zip(row) {
            c[i] = v;
        }
    }
    for q in 0..n_osc {
        let c = nx + 2 * q;
        let r0 = &d[c * nz + c..c * nz + c + 2];
        let r1 = &d[(c + 1) * nz + c..(c + 1) * nz + c + 2];
        out.extend([r0[0], r0[1], r1[0], r1[1]]);
    }
    if cfg!(debug_assertions) {
        for i in nx..nz {
            for j in 0..nz {
                let in_pair = i < nz - 2 && j >= nx && (j - nx) / 2 == (i - nx) / 2;
                if !in_pair {
                    let want = if i >= nz - 2 && i == j { 1.0 } else { 0.0 };
                    debug_assert!(m.at(i, j) == want, "level structure at ({i}, {j})");
                }
            }
        }
    }
}

/// Rows `r0 .. r0 + R` of the physical block `xb` (stored by columns of
/// `nx`) times `z`, into `out` (`R` long): each entry's terms in column
/// order, the first one not added to anything (`-0 + x` is `x`).
#[inline(always)]
fn rows_times<const R: usize>(xb: &[f64], nx: usize, r0: usize, z: &[f64], out: &mut [f64]) {
    let mut acc = [0.0f64; R];
    let mut cols = xb.chunks_exact(nx).zip(z);
    if let Some((c, &zj)) = cols.next() {
        for (a, &cv) in acc.iter_mut().zip(&c[r0..r0 + R]) {
            *a = cv * zj;
        }
    }
    for (c, &zj) in cols {
        for (a, &cv) in acc.iter_mut().zip(&c[r0..r0 + R]) {
            *a += cv * zj;
        }
    }
    out.copy_from_slice(&acc);
}

/// `S <- L S` for the sensitivity `S` (rows and columns over the physical
/// states and the parameter, see `Engine::prop_sens`), held transposed
/// (`st` is `S^T`, so a column of `S` is a row of `st`), and the block of
/// the packed level `lv` over the same rows and columns: per column of `S`,
/// the physical rows in blocks of 4, 2 and 1 in registers, column after
/// column of the level.  Each entry sums its terms in the order of
/// `Mat::mul_into` of that block (from +0, the physical columns, then the
/// parameter's; the zero terms `mul_into` skips leave such a sum
/// unchanged), so the result is that product's bit for bit; the parameter
/// row of `S` is kept (that row of the block is `[0 .. 0 1]`).
fn sens_level(lv: &[f64], nx: usize, n_osc: usize, st: &Mat, out: &mut Mat) {
    macro_rules! fixed {
        ($($n:literal)*) => {
            match nx {
                $($n => sens_fixed::<$n>(lv, n_osc, st, out),)*
                _ => sens_any(lv, nx, n_osc, st, out),
            }
        };
    }
    fixed!(1 2 3 4 5 6 7 8 9 10 11 12);
}

/// `sens_level` for `NX` physical states: a column's sums all in registers.
fn sens_fixed<const NX: usize>(lv: &[f64], n_osc: usize, st: &Mat, out: &mut Mat) {
    let na = NX + 1;
    let xcols = &lv[..NX * NX];
    let pcol = &lv[(NX + 2 * n_osc) * NX..(NX + 2 * n_osc + 1) * NX];
    for (s, o) in st.data.chunks_exact(na).zip(out.data.chunks_exact_mut(na)) {
        let mut acc = [0.0f64; NX];
        for (c, &sk) in xcols.chunks_exact(NX).zip(s) {
            for (a, &cv) in acc.iter_mut().zip(c) {
                *a += cv * sk;
            }
        }
        let sp = s[NX];
        for (a, &cv) in acc.iter_mut().zip(pcol) {
            *a += cv * sp;
        }
        o[..NX].copy_from_slice(&acc);
        o[NX] = sp;
    }
}

/// `sens_level` for any number of physical states.
fn sens_any(lv: &[f64], nx: usize, n_osc: usize, st: &Mat, out: &mut Mat) {
    let na = nx + 1;
    debug_assert_eq!((st.rows, st.cols, out.rows, out.cols), (na, na, na, na));
    let xcols = &lv[..nx * nx];
    // The parameter's column of the level: the packed column `nz - 2`.
    let pcol = &lv[(nx + 2 * n_osc) * nx..(nx + 2 * n_osc + 1) * nx];
    for (s, o) in st.data.chunks_exact(na).zip(out.data.chunks_exact_mut(na)) {
        let (o_x, o_p) = o.split_at_mut(nx);
        let mut r0 = 0;
        while r0 + 4 <= nx {
            sens_rows::<4>(xcols, pcol, nx, r0, s, &mut o_x[r0..r0 + 4]);
            r0 += 4;
        }
        if r0 + 2 <= nx {
            sens_rows::<2>(xcols, pcol, nx, r0, s, &mut o_x[r0..r0 + 2]);
            r0 += 2;
        }
        if r0 < nx {
            sens_rows::<1>(xcols, pcol, nx, r0, s, &mut o_x[r0..r0 + 1]);
        }
        o_p[0] = s[nx];
    }
}

/// Rows `r0 .. r0 + R` of `sens_level`'s product for one column `s` of `S`.
#[inline(always)]
fn sens_rows<const R: usize>(
    xcols: &[f64],
    pcol: &[f64],
    nx: usize,
    r0: usize,
    s: &[f64],
    out: &mut [f64],
) {
    let mut acc = [0.0f64; R];
    for (c, &sk) in xcols.chunks_exact(nx).zip(s) {
        for (a, &cv) in acc.iter_mut().zip(&c[r0..r0 + R]) {
            *a += cv * sk;
        }
    }
    let sp = s[nx];
    for (a, &cv) in acc.iter_mut().zip(&pcol[r0..r0 + R]) {
        *a += cv * sp;
    }
    out.copy_from_slice(&acc);
}

/// `out = L z` for a packed level `lv` (see `TopoData::packed`): each entry
/// sums its terms in the order of `Mat::mul_vec_into` with the structural
/// zeros left out, so the value is the full product's (bit for bit, but for
/// the sign of a zero).
/// (One instance per number of physical states up to 12, the sums of all
/// the physical rows in registers; beyond, blocks of 4, 2 and 1 rows.)
#[inline]
fn apply_level(lv: &[f64], nx: usize, z: &[f64], out: &mut [f64]) {
    macro_rules! fixed {
        ($($n:literal)*) => {
            match nx {
                $($n => apply_fixed::<$n>(lv, z, out),)*
                _ => apply_any(lv, nx, z, out),
            }
        };
    }
    fixed!(1 2 3 4 5 6 7 8 9 10 11 12);
}

/// `apply_level` for `NX` physical states.
fn apply_fixed<const NX: usize>(lv: &[f64], z: &[f64], out: &mut [f64]) {
    let nz = z.len();
    let (xb, osc) = lv.split_at(NX * nz);
    let mut acc = [0.0f64; NX];
    let mut cols = xb.chunks_exact(NX).zip(z);
    if let Some((c, &zj)) = cols.next() {
        for (a, &cv) in acc.iter_mut().zip(c) {
            *a = cv * zj;
        }
    }
    for (c, &zj) in cols {
        for (a, &cv) in acc.iter_mut().zip(c) {
            *a += cv * zj;
        }
    }
    out[..NX].copy_from_slice(&acc);
    apply_rest(osc, NX, z, out);
}

/// The oscillator pairs and the parameter and constant rows of `apply_level`.
#[inline(always)]
fn apply_rest(osc: &[f64], nx: usize, z: &[f64], out: &mut [f64]) {
    let nz = z.len();
    let (o_osc, o_pc) = out[nx..nz].split_at_mut(nz - nx - 2);
    let z_osc = &z[nx..nz - 2];
    for ((o, zz), blk) in o_osc
        .chunks_exact_mut(2)
        .zip(z_osc.chunks_exact(2))
        .zip(osc.chunks_exact(4))
    {
        o[0] = blk[0] * zz[0] + blk[1] * zz[1];
        o[1] = blk[2] * zz[0] + blk[3] * zz[1];
    }
    o_pc.copy_from_slice(&z[nz - 2..]);
}

/// `apply_level` for any number of physical states.
fn apply_any(lv: &[f64], nx: usize, z: &[f64], out: &mut [f64]) {
    let nz = z.len();
    let (xb, osc) = lv.split_at(nx * nz);
    // The physical rows in blocks of 4, 2 and 1, each block's sums in
    // registers, column after column.
    let mut r0 = 0;
    while r0 + 4 <= nx {
        rows_times::<4>(xb, nx, r0, z, &mut out[r0..r0 + 4]);
        r0 += 4;
    }
    if r0 + 2 <= nx {
        rows_times::<2>(xb, nx, r0, z, &mut out[r0..r0 + 2]);
        r0 += 2;
    }
    if r0 < nx {
        rows_times::<1>(xb, nx, r0, z, &mut out[r0..r0 + 1]);
    }
    apply_rest(osc, nx, z, out);
}

/// Length of the state `z` held inline by [`ZVec`]; longer states go to the heap.
const ZVEC_INLINE: usize = 16;

/// A copy of the state `z`, held inline when it is short (every circuit but
/// the largest): a recorded period keeps one per piece and per grid knot,
/// about two thousand, and a heap allocation each cost about a tenth of a
/// whole analysis (measured with perf on the drive front end: malloc and
/// free 12 % of the cycles).  Reads as a slice.
#[derive(Clone)]
pub enum ZVec {
    Inline(usize, [f64; ZVEC_INLINE]),
    Heap(Vec<f64>),
}

impl ZVec {
    pub fn from_slice(z: &[f64]) -> ZVec {
        if z.len() <= ZVEC_INLINE {
            let mut a = [0.0; ZVEC_INLINE];
            a[..z.len()].copy_from_slice(z);
            ZVec::Inline(z.len(), a)
        } else {
            ZVec::Heap(z.to_vec())
        }
    }
}

impl std::ops::Deref for ZVec {
    type Target = [f64];
    fn deref(&self) -> &[f64] {
        match self {
            ZVec::Inline(n, a) => &a[..*n],
            ZVec::Heap(v) => v,
        }
    }
}

impl PartialEq for ZVec {
    fn eq(&self, other: &ZVec) -> bool {
        **self == **other
    }
}

impl std::fmt::Debug for ZVec {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        (**self).fmt(f)
    }
}

/// A recorded piece of trajectory: from `t_s` for `dt_s` in topology `key`, starting at `z`.
#[derive(Debug, Clone)]
pub struct Piece {
    pub t_s: f64,
    pub dt_s: f64,
    pub key: u64,
    pub z: ZVec,
}

/// A switching event.
#[derive(Debug, Clone, PartialEq)]
pub struct Event {
    pub t_s: f64,
    pub switch: usize,
    pub on: bool,
}

/// Result of marching one interval.
pub struct RunOut {
    pub x_end: Vec<f64>,
    pub on_end: Vec<bool>,
    /// d x(T) / d x(0), when asked for.
    pub monodromy: Option<Mat>,
    /// d x(T) / d p (the parameter entry of `z`), when the monodromy is asked for.
    pub dx_dparam: Option<Vec<f64>>,
    pub pieces: Vec<Piece>,
    pub events: Vec<Event>,
    /// Grid knots: (time, key, z) at every grid point (right-hand topology).
    pub knots: Vec<(f64, u64, ZVec)>,
}

/// Marching controls for a run.
pub struct RunSpec {
    pub t0_s: f64,
    pub t1_s: f64,
    pub record: bool,
    pub sensitivity: bool,
    /// Extra condition: close contactors when `probe . z >= level`, or at `time`.
    pub contactor_close: Option<ContactorRule>,
    /// March in strides of `2^COARSE_LEVELS` grid steps (Newton periods).
    pub coarse: bool,
}

/// When a contactor (precharge bypass) closes.
#[derive(Debug, Clone, Copy)]
pub struct ContactorRule {
    /// Close at this time (s), if finite.
    pub at_s: f64,
    /// Node pair whose voltage is compared with `level_v`.
    pub node_a: usize,
    pub node_b: usize,
    pub level_v: f64,
}

/// The grid's unit circle and each oscillator's whole multiple `k` of the
/// supply frequency (see `Engine::osc_grid`).
type OscGrid = (Rc<Vec<(f64, f64)>>, Vec<u64>);

/// The topologies an engine has built, for another engine of the same
/// circuit matrices and grid step (a sweep's next point when the varied
/// field changes no matrix: a source amplitude, or the constant-power load's
/// power with the previous slope kept; see `sim::WarmStart`).  Each
/// `TopoData` is a function of the topology matrices and the step only, so
/// it is reused as it is; `Engine::adopt` checks the match.
pub struct TopoShare {
    circuit: Circuit,
    h_s: f64,
    map: KeyMap<Arc<TopoData>>,
}

impl TopoShare {
    /// Number of topologies held.
    pub fn len(&self) -> usize {
        self.map.len()
    }

    pub fn is_empty(&self) -> bool {
        self.map.is_empty()
    }
}

/// How a switch may change state by itself: a flat copy of its element's
/// kind made at `Engine::new`, so that the checks of every step (`may_switch`,
/// `violation`) read one small entry instead of going through the netlist.
#[derive(Debug, Clone, Copy)]
enum Gate {
    /// Changes only by command (a contactor) or never (an open device).
    Fixed,
    /// Turns off at a current zero, on when forward biased.
    Diode,
    /// Turns on only within its gate window; turns off at its end unless latched.
    Thyristor { fire_s: f64, width_s: f64 },
}

/// `x.rem_euclid(p)`, bit for bit, without the library `fmod` when `x` is
/// within two periods of zero (every gate check of a periodic run): there
/// `x % p` is `x`, `x - p` or `x + p`, each exact (Sterbenz).  Otherwise,
/// and for a `p` that is not positive and finite, the library call.
#[inline(always)]
fn rem_period(x: f64, p: f64) -> f64 {
    let r = if !(p > 0.0 && p < f64::INFINITY) {
        return x.rem_euclid(p);
    } else if x > -p && x < p {
        x
    } else if x >= p && x < 2.0 * p {
        x - p
    } else if x > -2.0 * p && x < -p {
        x + p
    } else {
        x % p
    };
    if r < 0.0 {
        r + p
    } else {
        r
    }
}

/// `x.round().clamp(0.0, top) as u64` for `top` at most 2^52, without the
/// library call in the usual case: for `0 < x < top` the truncation and the
/// fraction are exact, and the rounding is half away from zero.
#[inline]
fn round_ticks(x: f64, top: f64) -> u64 {
    if x > 0.0 && x < top && top <= (1u64 << 52) as f64 {
        let i = x as u64;
        if x - i as f64 >= 0.5 {
            i + 1
        } else {
            i
        }
    } else {
        x.round().clamp(0.0, top) as u64
    }
}

/// The engine for one circuit.
pub struct Engine {
    pub circuit: Circuit,
    pub period_s: f64,
    pub h_s: f64,
    pub i_tol_a: f64,
    pub v_tol_v: f64,
    cache: KeyMap<Arc<TopoData>>,
    pub max_events: usize,
    pub n_events: usize,
    /// Periods (or transient intervals) marched, and topologies built.
    pub n_runs: usize,
    /// Switching events located over all runs of this engine.
    pub total_events: usize,
    /// Newton periods march in coarse strides (see COARSE_LEVELS).
    pub coarse_newton: bool,
    /// The settling at a switching instant leaves off a device whose
    /// forward voltage is a leakage kick (`kick_only`).  Off by default:
    /// set only for a solve that failed without it with chattering devices
    /// (`is_chatter`; see `sim::simulate_with`), so that every case that
    /// solves without it keeps its figures to the bit.  (On for every case,
    /// it moved no figure of the 21 scenario files beyond leakage level in
    /// their own solves, but the lost-phase case's bus ripple in its sweeps
    /// by up to 1.3e-5 relative: kicks in the open phase's line, flipped
    /// or not, change where the Newton iterates go.)
    pub leakage_kicks: bool,
    pub n_topologies_built: usize,
    /// Times (within the period) where the march must stop: gate openings.
    gate_times: Vec<f64>,
    /// Each switch's gate, from its element (the circuit's elements do not
    /// change after `new`: the cached topologies depend on them too).
    gates: Vec<Gate>,
    /// When every oscillator runs at a whole multiple `k` of the supply
    /// frequency: the unit circle of the grid (`fft::unit_circle`) and each
    /// oscillator's `k`, so that at the grid point `i` its (cos, sin) is the
    /// table entry `k i mod N` instead of two library calls per step.
    osc_grid: Option<OscGrid>,
}

impl Engine {
    pub fn new(
        circuit: Circuit,
        period_s: f64,
        steps_per_period: usize,
        i_tol_a: f64,
        v_tol_v: f64,
    ) -> Engine {
        let mut gate_times: Vec<f64> = circuit
            .switches
            .iter()
            .filter_map(|&e| match &circuit.elements[e] {
                Element::Switch {
                    kind: SwitchKind::Thyristor { fire_s, .. },
                    ..
                } => Some(fire_s.rem_euclid(period_s)),
                _ => None,
            })
            .collect();
        // Gate ends are stops too: a thyristor that has not latched by then
        // drops out (`gate_end`).
        gate_times.extend(
            circuit
                .switches
                .iter()
                .filter_map(|&e| match &circuit.elements[e] {
                    Element::Switch {
                        kind: SwitchKind::Thyristor { fire_s, width_s },
                        ..
                    } => Some((fire_s + width_s).rem_euclid(period_s)),
                    _ => None,
                }),
        );
        super::sort_small_by(&mut gate_times, |a, b| a.total_cmp(b));
        gate_times.dedup_by(|a, b| (*a - *b).abs() < 1e-15 * period_s);
        let mults: Option<Vec<u64>> = circuit
            .osc_omega
            .iter()
            .map(|w| {
                let k = w * period_s / (2.0 * std::f64::consts::PI);
                let r = k.round();
                (r >= 1.0 && (k - r).abs() < 1e-9 * r).then_some(r as u64)
            })
            .collect();
        let osc_grid = match mults {
            Some(m) if steps_per_period > 0 => {
                Some((crate::sim::fft::unit_circle(steps_per_period), m))
            }
            _ => None,
        };
        let gates = circuit
            .switches
            .iter()
            .map(|&e| match &circuit.elements[e] {
                Element::Switch { open: true, .. }
                | Element::Switch {
                    kind: SwitchKind::Contactor,
                    ..
                } => Gate::Fixed,
                Element::Switch {
                    kind: SwitchKind::Diode,
                    ..
                } => Gate::Diode,
                Element::Switch {
                    kind: SwitchKind::Thyristor { fire_s, width_s },
                    ..
                } => Gate::Thyristor {
                    fire_s: *fire_s,
                    width_s: *width_s,
                },
                _ => Gate::Fixed,
            })
            .collect();
        Engine {
            gates,
            osc_grid,
            circuit,
            period_s,
            h_s: period_s / steps_per_period as f64,
            i_tol_a,
            v_tol_v,
            cache: KeyMap::default(),
            max_events: 400 * 64,
            n_events: 0,
            n_runs: 0,
            total_events: 0,
            coarse_newton: true,
            leakage_kicks: false,
            n_topologies_built: 0,
            gate_times,
        }
    }

    pub fn key(on: &[bool]) -> u64 {
        on.iter()
            .enumerate()
            .fold(0u64, |k, (i, &b)| k | ((b as u64) << i))
    }

    pub fn on_from_key(&self, key: u64) -> Vec<bool> {
        (0..self.circuit.switches.len())
            .map(|i| key & (1 << i) != 0)
            .collect()
    }

    /// The cached model of a topology.
    pub fn topo(&mut self, on: &[bool]) -> Result<Arc<TopoData>, SolveError> {
        let key = Self::key(on);
        if let Some(t) = self.cache.get(&key) {
            return Ok(t.clone());
        }
        let topo = self.circuit.topology(on).ok_or_else(|| {
            fail(
                "the circuit equations are singular in one conduction state",
                "check for a zero resistance or a capacitor placed directly across a source",
            )
        })?;
        self.n_topologies_built += 1;
        let bad = || fail("state matrix is not finite", "check the element values");
        let (nx, n_osc) = (self.circuit.n_x(), self.circuit.osc_omega.len());
        let mut packed =
            Vec::with_capacity(packed_len(nx, n_osc) * (TABLE_LEVELS + COARSE_LEVELS + 1));
        // Each table level `E_i = D_i + I` (the same sums as `dyadic_table`)
        // in one scratch matrix, packed as it comes (finest first: tick bit
        // `b = TABLE_LEVELS - i`); levels 1 and 0 kept as matrices.
        let n = topo.f.rows;
        let mut e = Mat::zeros(n, n);
        let mut table: Vec<Mat> = Vec::with_capacity(2);
        dyadic_levels(&topo.f, self.h_s, |i, d| {
            e.data.copy_from_slice(&d.data);
            for k in 0..n {
                e.data[k * n + k] += 1.0;
            }
            pack_level(&e, nx, n_osc, &mut packed);
            if i <= 1 {
                table.insert(0, e.clone());
            }
        })
        .ok_or_else(bad)?;
        let step = table[0].clone();
        let cond = (0..on.len())
            .map(|k| self.cond_row(&topo, k, on[k]))
            .collect();
        // The coarse strides: the step squared (tick bits TABLE_LEVELS + 1 ..).
        let mut up = step.clone();
        for _ in 0..COARSE_LEVELS {
            up = up.mul(&up);
            pack_level(&up, nx, n_osc, &mut packed);
        }
        let d = Arc::new(TopoData {
            topo,
            key,
            step,
            table,
            cond,
            packed,
            nx,
            n_osc,
        });
        if self.cache.len() < 4096 {
            self.cache.insert(key, d.clone());
        }
        Ok(d)
    }

    /// The topologies built so far, for a later engine of the same matrices.
    pub fn share(&self) -> TopoShare {
        TopoShare {
            circuit: self.circuit.clone(),
            h_s: self.h_s,
            map: self.cache.clone(),
        }
    }

    /// Take the topologies of `share` when it was made by an engine of the
    /// same circuit matrices and grid step (else nothing).  Topologies taken
    /// are not counted in `n_topologies_built`.
    pub fn adopt(&mut self, share: &TopoShare) {
        if share.h_s != self.h_s || !share.circuit.same_matrices(&self.circuit) {
            return;
        }
        for (k, v) in &share.map {
            if self.cache.len() >= 4096 {
                break;
            }
            self.cache.entry(*k).or_insert_with(|| v.clone());
        }
    }

    /// Cached model by key.
    pub fn topo_key(&mut self, key: u64) -> Result<Arc<TopoData>, SolveError> {
        let on = self.on_from_key(key);
        self.topo(&on)
    }

    /// Number of finest-level ticks in `tau` (0 ..= 2^(TABLE_LEVELS + COARSE_LEVELS)).
    fn ticks(&self, tau: f64) -> u64 {
        let full = 1u64 << TABLE_LEVELS;
        let top = (full << COARSE_LEVELS) as f64;
        round_ticks((tau / self.h_s) * full as f64, top)
    }

    /// Time of `m` finest-level ticks.
    fn tick_time(&self, m: u64) -> f64 {
        self.h_s * m as f64 / (1u64 << TABLE_LEVELS) as f64
    }

    /// `expm(F tau) z` via the table (tau rounded to the finest level, at most
    /// one coarse stride).
    pub fn prop_vec(td: &TopoData, m: u64, z: &[f64]) -> Vec<f64> {
        let mut v = vec![0.0; z.len()];
        let mut tmp = vec![0.0; z.len()];
        Self::prop_vec_into(td, m, z, &mut v, &mut tmp);
        v
    }

    /// `prop_vec` into `out`, with `tmp` as scratch (both of `z`'s length).
    pub fn prop_vec_into(td: &TopoData, m: u64, z: &[f64], out: &mut Vec<f64>, tmp: &mut Vec<f64>) {
        out.copy_from_slice(z);
        for b in set_bits_down(m) {
            Self::apply(td, b, out, tmp);
            std::mem::swap(out, tmp);
        }
    }

    /// `out = L_b z` for the level of tick bit `b` (`expm(F h 2^(b -
    /// TABLE_LEVELS))` times `z`, by the packed structure).
    #[inline(always)]
    fn apply(td: &TopoData, b: usize, z: &[f64], out: &mut [f64]) {
        let len = td.packed_len();
        apply_level(&td.packed[b * len..(b + 1) * len], td.nx, z, out);
    }

    /// The sensitivity `S <- expm(F tau) S` via the table (`s` holds `S`
    /// transposed, see `sens_level`), where `S` holds
    /// `d z_i / d theta_j` for `i, j` over `sens_index` (the physical states and the
    /// parameter: the oscillator and constant entries of `z` do not depend on
    /// the initial state or the parameter, so their rows of `S` are zero and
    /// only that block of each level matrix acts; its parameter row is a row
    /// of the identity, so the parameter row of `S` stays as it is).  From
    /// the packed levels (`sens_level`).  `tmp` is scratch of the same shape.
    pub fn prop_sens(td: &TopoData, m: u64, s: &mut Mat, tmp: &mut Mat) {
        let len = td.packed_len();
        for b in set_bits_down(m) {
            sens_level(&td.packed[b * len..(b + 1) * len], td.nx, td.n_osc, s, tmp);
            std::mem::swap(s, tmp);
        }
    }

    /// The entries of `z` the sensitivity follows: the physical states and
    /// the parameter.
    fn sens_index(&self) -> Vec<usize> {
        let mut sub: Vec<usize> = (0..self.circuit.n_x()).collect();
        sub.push(self.circuit.param_idx());
        sub
    }

    /// Is the gate window (from `fire_s`, `width_s` long, every period) open
    /// at `t_s` (a stop at the window's start rounded just before it counts)?
    #[inline(always)]
    fn gate_active(&self, fire_s: f64, width_s: f64, t_s: f64) -> bool {
        let d = rem_period(t_s - fire_s, self.period_s);
        d < width_s || (self.period_s - d) < 1e-12 * self.period_s
    }

    /// Condition row `c` of switch `k` in topology `t`, and whether a positive
    /// value of `c . z` means "on" (true for on devices: current; for off
    /// devices the value is `v_ak - v_th`, positive means it wants to turn on).
    fn cond_row(&self, t: &Topology, k: usize, on: bool) -> Vec<f64> {
        let e = self.circuit.switches[k];
        let ci = self.circuit.const_idx();
        match &self.circuit.elements[e] {
            Element::Switch { a, b, v_th_v, .. } => {
                if on {
                    t.elem_i.row(e).to_vec()
                } else {
                    let mut r: Vec<f64> = t
                        .node_v
                        .row(*a)
                        .iter()
                        .zip(t.node_v.row(*b))
                        .map(|(x, y)| x - y)
                        .collect();
                    r[ci] -= v_th_v;
                    r
                }
            }
            _ => vec![0.0; self.circuit.n_z()],
        }
    }

    /// Is `t_s` the end of the gate window from `fire_s`, `width_s` long
    /// (within 1e-9 of a period, far below a grid step and far above the
    /// rounding of a stop)?
    #[inline(always)]
    fn gate_end(&self, fire_s: f64, width_s: f64, t_s: f64) -> bool {
        let d = rem_period(t_s - fire_s - width_s, self.period_s);
        d.min(self.period_s - d) < 1e-9 * self.period_s
    }

    /// Is switch `k` allowed to change state at time `t` (by its kind)?
    #[inline(always)]
    fn may_switch(&self, k: usize, on: bool, t_s: f64) -> bool {
        match self.gates[k] {
            Gate::Fixed => false,
            _ if on => true, // turning off: natural commutation
            Gate::Diode => true,
            Gate::Thyristor { fire_s, width_s } => {
                self.gate_active(fire_s, width_s, t_s) && !self.gate_end(fire_s, width_s, t_s)
            }
        }
    }

    /// Violation measure of switch `k` (> 1 means it must flip).
    #[inline]
    fn violation(&self, td: &TopoData, k: usize, on: bool, z: &[f64], t_s: f64) -> f64 {
        if !self.may_switch(k, on, t_s) {
            return 0.0;
        }
        self.violation_free(td, k, on, z, t_s)
    }

    /// `violation` of a switch that `may_switch` at `t_s`.
    #[inline(always)]
    fn violation_free(&self, td: &TopoData, k: usize, on: bool, z: &[f64], t_s: f64) -> f64 {
        let v: f64 = dot(&td.cond[k], z);
        if on {
            // Latching: a thyristor whose current has not reached the
            // decision tolerance when its gate ends turns off there (a real
            // one needs its latching current before the gate goes; common
            // practice, from device data sheets).  Without this rule a
            // device fired into a bridge with nothing to conduct stayed on
            // at the leakage level and formed a pair with the next device
            // fired, which no real bridge does: with 30-degree gates
            // 60 degrees apart at alpha = 60 into E = 400 V on 400 V, 1.1 A
            // of DC current.
            if let Gate::Thyristor { fire_s, width_s } = self.gates[k] {
                if self.gate_end(fire_s, width_s, t_s) {
                    // Above 1 (a flip) while the current is below the tolerance.
                    return 2.0 - v / self.i_tol_a;
                }
            }
            -v / self.i_tol_a
        } else {
            v / self.v_tol_v
        }
    }

    /// Whether off device `k`, forward-biased beyond the tolerance at the
    /// switching instant `t_s` in state `z`, is back to reverse bias (its
    /// condition at or below zero) within one grid step in topology `td`
    /// (sampled at 1, 2, 4, ... `2^TABLE_LEVELS` ticks: one matrix-vector
    /// product each).  Such a forward voltage is a leakage kick, not a
    /// turn-on: when a device turns off while the inductor in its path
    /// carries a current at the leakage level (below the decision
    /// tolerance, so taken as zero), that current has nowhere to go but the
    /// blocking devices' leakage `g_off`, and the model puts `i_L / g_off`
    /// across them for a few `L g_off` (below a nanosecond for line
    /// inductances).  At the current tolerance that is 14.8 times the
    /// line voltage (`TOL_REL` of `P / (1.35 V_LL)` over `g_off = 1 / (1e6
    /// Z_base)`, `Z_base = V_LL^2 / P`: 7.1 kV on 480 V), half a million
    /// times the voltage tolerance.  A real device's junction
    /// capacitance would take that charge at a negligible voltage: the
    /// kick belongs to the leakage model, not to the circuit.  Seen
    /// (2026-12-04): the drive front end with phase a's EMF at 0 to 0.2 pu;
    /// in the idle interval around the b-c crossing (every device reverse
    /// biased by 40 V or more), b- turned off with 4.6e-4 A in line b (the
    /// current tolerance is 2.3e-3 A), and b+ read 153.6 V forward, back to
    /// reverse bias within 0.18 ns and at -647 V after 6 ns; flipped on by
    /// the instant's settling, b+ took the residue and passed it to a+ and
    /// b-, and b- to c- and b+, four devices every 5 to 14 ns, until the
    /// run gave up with "too many switching events".  The step
    /// check already judges a condition at the stops (one grid step apart):
    /// a forward voltage gone within a grid step is one it would not have
    /// seen either.  A forward voltage that holds (a thyristor at its gate
    /// opening, a diode that an instant's flips leave forward-biased) is
    /// flipped as before.
    fn kick_only(&self, td: &TopoData, k: usize, z: &[f64], t_s: f64) -> bool {
        let mut cur = vec![0.0; z.len()];
        let mut next = vec![0.0; z.len()];
        // One tick, then doublings: after level b the state is 2^(b + 1) ticks on.
        Self::apply(td, 0, z, &mut cur);
        for b in 0..=TABLE_LEVELS {
            let v = self.violation_free(td, k, false, &cur, t_s);
            if v <= 0.0 {
                return true;
            }
            if !v.is_finite() || b == TABLE_LEVELS {
                return false;
            }
            Self::apply(td, b, &cur, &mut next);
            std::mem::swap(&mut cur, &mut next);
        }
        false
    }

    /// Flip violating switches one at a time until the topology is consistent.
    /// `keep`: a switch that has just flipped at this instant and may not flip
    /// back before time moves on (its condition sits at the leakage level).
    pub fn settle(
        &mut self,
        on: &mut [bool],
        z: &[f64],
        t_s: f64,
        events: &mut Vec<Event>,
        keep: Option<usize>,
    ) -> Result<Arc<TopoData>, SolveError> {
        let n = on.len();
        let mut seen: Vec<(u64, f64)> = Vec::new();
        for _ in 0..(4 * n + 8) {
            let td = self.topo(on)?;
            let mut worst;
            // With `leakage_kicks`, off devices whose forward voltage here
            // is a leakage kick (`kick_only`) are not flipped.  Asked only
            // of the device that would be flipped, and at most once each
            // per topology.
            let mut kicks: Vec<usize> = Vec::new();
            loop {
                worst = (1.0, usize::MAX);
                for k in 0..n {
                    if Some(k) == keep || kicks.contains(&k) {
                        continue;
                    }
                    let v = self.violation(&td, k, on[k], z, t_s);
                    if v > worst.0 {
                        worst = (v, k);
                    }
                }
                if worst.1 == usize::MAX
                    || on[worst.1]
                    || !self.leakage_kicks
                    || !self.kick_only(&td, worst.1, z, t_s)
                {
                    break;
                }
                kicks.push(worst.1);
            }
            if worst.1 == usize::MAX {
                return Ok(td);
            }
            let key = Self::key(on);
            if seen.iter().any(|s| s.0 == key) {
                // A cycle at the leakage level: no state is exactly consistent.
                // Take the visited state with the smallest violation.
                let best = seen
                    .iter()
                    .chain(std::iter::once(&(key, worst.0)))
                    .fold((0u64, f64::INFINITY), |b, s| if s.1 < b.1 { *s } else { b });
                let best_on = self.on_from_key(best.0);
                for k in 0..n {
                    if on[k] != best_on[k] {
                        on[k] = best_on[k];
                        events.push(Event {
                            t_s,
                            switch: k,
                            on: on[k],
                        });
                    }
                }
                return self.topo(on);
            }
            seen.push((key, worst.0));
            on[worst.1] = !on[worst.1];
            events.push(Event {
                t_s,
                switch: worst.1,
                on: on[worst.1],
            });
            self.n_events += 1;
        }
        Err(fail(
            "the devices do not settle into a consistent conduction state",
            "the circuit may be at the edge of conduction; change the load or the firing angle slightly",
        ))
    }

    /// March from `spec.t0_s` to `spec.t1_s` starting with physical state `x0`
    /// and switch states `on0`.
    pub fn run(&mut self, x0: &[f64], on0: &[bool], spec: &RunSpec) -> Result<RunOut, SolveError> {
        self.n_runs += 1;
        if self.n_runs > MAX_RUNS {
            return Err(fail(
                "outside what this solver handles: the steady state needs too many periods",
                "the circuit may have no periodic solution at the supply frequency; check the values for an extreme combination",
            ));
        }
        let nx = self.circuit.n_x();
        let mut z = self.circuit.init_z(x0);
        self.circuit.osc_at(&mut z, spec.t0_s);
        let mut on = on0.to_vec();
        let mut events = Vec::new();
        // A recorded run keeps a piece per step (plus the cut ones) and a
        // knot per grid point: reserve for them once.
        let steps_hint = if spec.record {
            let h = self.h_s
                * if spec.coarse {
                    (1u64 << COARSE_LEVELS) as f64
                } else {
                    1.0
                };
            (((spec.t1_s - spec.t0_s) / h).max(0.0) as usize).saturating_add(2)
        } else {
            0
        };
        let mut pieces = Vec::with_capacity(steps_hint + steps_hint / 8 + 8);
        let mut knots = Vec::with_capacity(steps_hint);
        let mut td = self.settle(&mut on, &z, spec.t0_s, &mut events, None)?;
        // Sensitivity of (x, p) to (x0, p0): rows and columns over `sub`,
        // held transposed (see `sens_level`).
        let sub = self.sens_index();
        let na = sub.len();
        let mut sens = if spec.sensitivity {
            Some(Mat::identity(na))
        } else {
            None
        };
        let mut sens_tmp = Mat::zeros(na, na);
        let mut z_end = vec![0.0; z.len()];
        let mut z_tmp = vec![0.0; z.len()];
        let mut t = spec.t0_s;
        let h = if spec.coarse {
            self.h_s * (1u64 << COARSE_LEVELS) as f64
        } else {
            self.h_s
        };
        let mut grid_index: u64 = ((t / h) + 1e-9).floor() as u64;
        let mut contactor_done = spec.contactor_close.is_none();
        let mut n_ev = 0usize;
        let mut last_flip: Option<(usize, f64)> = None;
        // Topologies visited at the current instant (cycle guard at leakage level).
        let mut visited_now: Vec<u64> = vec![td.key];
        if spec.record {
            knots.push((t, td.key, ZVec::from_slice(&z)));
        }
        let end_tol = 1e-12 * self.period_s;
        // (period start, `lo`, earliest gate stop after `lo`): see below.
        let mut gate_ahead = (f64::NAN, f64::NAN, f64::NAN);
        // Scratch of the crossing search (`locate`) and of an event.
        let mut loc_z = vec![0.0; z.len()];
        let mut loc_tmp = vec![0.0; z.len()];
        let mut first_z = vec![0.0; z.len()];
        let mut on_before: Vec<bool> = Vec::with_capacity(on.len());
        while t < spec.t1_s - end_tol {
            // `td` is always the topology of `on` (its key stands for theirs).
            debug_assert_eq!(td.key, Self::key(&on));
            // Next stop: the next grid point, a gate opening, or the end.
            let mut t_next = ((grid_index + 1) as f64 * h).min(spec.t1_s);
            let mut at_grid = true;
            if !self.gate_times.is_empty() {
                let base = (t / self.period_s).floor() * self.period_s;
                let lo = t + end_tol;
                // The earliest gate stop after `lo`, kept while `base` holds
                // and it is still after `lo` (no stop lies between the `lo`
                // it was found for and a later one, so it is still the
                // earliest).
                if !(gate_ahead.0 == base && lo >= gate_ahead.1 && gate_ahead.2 > lo) {
                    let mut m = f64::INFINITY;
                    for &g in &self.gate_times {
                        for cand in [base + g, base + g + self.period_s] {
                            if cand > lo && cand < m {
                                m = cand;
                            }
                        }
                    }
                    gate_ahead = (base, lo, m);
                }
                // That earliest stop is the one to take when it comes before
                // the grid point.
                if gate_ahead.2 < t_next - end_tol {
                    t_next = gate_ahead.2;
                    at_grid = false;
                }
            }
            if let Some(rule) = &spec.contactor_close {
                if !contactor_done
                    && rule.at_s.is_finite()
                    && rule.at_s > t + end_tol
                    && rule.at_s < t_next - end_tol
                {
                    t_next = rule.at_s;
                    at_grid = false;
                }
            }
            let mut m_dt = self.ticks(t_next - t);
            if m_dt == 0 {
                // A stop closer than one tick: take one tick so time always advances.
                m_dt = 1;
            }
            let dt = self.tick_time(m_dt);
            if at_grid {
                // Land exactly on the grid point (no drift from tick rounding).
                t_next = ((grid_index + 1) as f64 * h).min(spec.t1_s);
            } else {
                t_next = t + dt;
            }
            Self::prop_vec_into(&td, m_dt, &z, &mut z_end, &mut z_tmp);
            // Find the earliest crossing among the switches.
            // (time, switch); its state in `first_z`.
            let mut first: Option<(f64, usize)> = None;
            // Whether any switch ends the step on the wrong side (if none, the
            // settling at the stop has nothing to do).
            let mut any_violation = false;
            for k in 0..on.len() {
                // A switch that may not change at the stop has no violation
                // there (`violation` is 0), so nothing to locate.
                if !self.may_switch(k, on[k], t_next) {
                    continue;
                }
                let v_end = self.violation_free(&td, k, on[k], &z_end, t_next);
                if v_end <= 1.0 {
                    // On the wrong side within the tolerance at the end, after
                    // starting on the right side, and going beyond it on the
                    // wrong side before coming back (`goes_beyond`, however
                    // many steps on: a slow crossing stays inside the band for
                    // many): a later step would flip the device at its start,
                    // late, with up to the tolerance the wrong way (the
                    // 12-pulse parallel case at 16384 grid points: a turn-off
                    // 11.7 ns late with -3.4 mA, forced through the leakage,
                    // which read the bus at 700 V).  The crossing inside this
                    // step is located now instead.  A dip that turns back
                    // within the tolerance flips nothing, as before (taking
                    // it when a step end happens to fall in it made the
                    // period map jump: a light load on an unbalanced supply
                    // stalled Newton at 4e-6).
                    if v_end <= 0.0
                        || self.violation(&td, k, on[k], &z, t) > 0.0
                        || !self.goes_beyond(&td, k, on[k], &z_end, t_next, m_dt)
                    {
                        continue;
                    }
                } else {
                    any_violation = true;
                }
                let tau = self.locate(
                    &td,
                    &td.cond[k],
                    (&z, &z_end),
                    m_dt,
                    on[k],
                    &mut loc_z,
                    &mut loc_tmp,
                );
                // A device that flipped at this very instant and sits at its
                // threshold (leakage-level current) is not flipped back at the
                // same instant; the check at the next stop settles it.
                if tau == 0.0 && (last_flip == Some((k, t)) || visited_now.len() > 2 * on.len() + 2)
                {
                    continue;
                }
                // A gated device may only fire within its window.
                if !self.may_switch(k, on[k], t + tau) {
                    continue;
                }
                if first.as_ref().is_none_or(|f| tau < f.0) {
                    first = Some((tau, k));
                    std::mem::swap(&mut first_z, &mut loc_z);
                }
            }
            // Contactor closing by voltage.
            let mut contactor_now = false;
            if let Some(rule) = &spec.contactor_close {
                if !contactor_done {
                    let row: Vec<f64> = td
                        .topo
                        .node_v
                        .row(rule.node_a)
                        .iter()
                        .zip(td.topo.node_v.row(rule.node_b))
                        .map(|(a, b)| a - b)
                        .collect();
                    let v_end = dot(&row, &z_end);
                    if rule.level_v.is_finite() && v_end >= rule.level_v {
                        let mut c = row.clone();
                        c[self.circuit.const_idx()] -= rule.level_v;
                        let tau = self.locate(
                            &td,
                            &c,
                            (&z, &z_end),
                            m_dt,
                            false,
                            &mut loc_z,
                            &mut loc_tmp,
                        );
                        if first.as_ref().is_none_or(|f| tau < f.0) {
                            first = Some((tau, usize::MAX));
                            std::mem::swap(&mut first_z, &mut loc_z);
                        }
                    } else if rule.at_s.is_finite() && (t_next - rule.at_s).abs() < end_tol {
                        // The stop at the closing time (a grid point too: a
                        // bypass time on the grid once never closed).
                        contactor_now = true;
                    }
                }
            }
            match first {
                Some((tau, k)) if tau < dt - end_tol => {
                    let zr = &first_z;
                    // Event inside the step.
                    if tau > 0.0 {
                        visited_now.clear();
                    }
                    if spec.record {
                        pieces.push(Piece {
                            t_s: t,
                            dt_s: tau,
                            key: td.key,
                            z: ZVec::from_slice(&z),
                        });
                    }
                    if let Some(s) = sens.as_mut() {
                        let m_tau = self.ticks(tau);
                        Self::prop_sens(&td, m_tau, s, &mut sens_tmp);
                    }
                    t += tau;
                    // The topology before the flip (its `F` and the switch's
                    // condition row, for the saltation matrix).
                    let td_old = td.clone();
                    if k == usize::MAX {
                        self.close_contactors(&mut on, t, &mut events);
                        contactor_done = true;
                    } else {
                        on[k] = !on[k];
                        last_flip = Some((k, t));
                        events.push(Event {
                            t_s: t,
                            switch: k,
                            on: on[k],
                        });
                        self.n_events += 1;
                    }
                    td = self.topo(&on)?;
                    if let (Some(s), true) = (sens.as_mut(), k != usize::MAX) {
                        let c = &td_old.cond[k];
                        let f_old = td_old.topo.f.mul_vec(zr);
                        let f_new = td.topo.f.mul_vec(zr);
                        let cf = dot(c, &f_old);
                        if cf.abs() > 1e-300 {
                            // S += (f+ - f-) (c^T S) / (c^T f-), over `sub`
                            // (f+ - f- is zero outside the physical states).
                            // (`s` is `S^T`: `S[k][j]` is `s[j][k]`.)
                            let cs: Vec<f64> = (0..na)
                                .map(|j| (0..na).map(|k| c[sub[k]] * s.at(j, k)).sum())
                                .collect();
                            for (i, &zi) in sub.iter().enumerate() {
                                let d = (f_new[zi] - f_old[zi]) / cf;
                                if d != 0.0 {
                                    for (j, csj) in cs.iter().enumerate() {
                                        s.add_at(j, i, d * csj);
                                    }
                                }
                            }
                        }
                    }
                    drop(td_old);
                    std::mem::swap(&mut z, &mut first_z);
                    visited_now.push(td.key);
                    on_before.clear();
                    on_before.extend_from_slice(&on);
                    td = self.settle(
                        &mut on,
                        &z,
                        t,
                        &mut events,
                        if k == usize::MAX { None } else { Some(k) },
                    )?;
                    td = self.settle_slow(&mut on, &on_before, &z, t, &mut events, td)?;
                    visited_now.push(td.key);
                    n_ev += 1;
                    self.total_events += 1;
                    if self.total_events > MAX_TOTAL_EVENTS {
                        return Err(fail(
                            CHATTER_TOTAL,
                            "the devices chatter or the circuit is at an extreme; check the values (very large voltage with tiny impedances, or the reverse)",
                        ));
                    }
                    if n_ev > self.max_events {
                        return Err(fail(
                            CHATTER_RUN,
                            "the devices chatter; add source or DC inductance, or check the load values",
                        ));
                    }
                }
                _ => {
                    if spec.record {
                        pieces.push(Piece {
                            t_s: t,
                            dt_s: dt,
                            key: td.key,
                            z: ZVec::from_slice(&z),
                        });
                    }
                    if let Some(s) = sens.as_mut() {
                        Self::prop_sens(&td, m_dt, s, &mut sens_tmp);
                    }
                    t = t_next;
                    std::mem::swap(&mut z, &mut z_end);
                    visited_now.clear();
                    // Keep the oscillator exact (no drift over many steps):
                    // on a grid point from the table, else computed.
                    match &self.osc_grid {
                        Some((circle, mults)) if at_grid && t == (grid_index + 1) as f64 * h => {
                            let stride = if spec.coarse {
                                1u64 << COARSE_LEVELS
                            } else {
                                1
                            };
                            let i_fine = (grid_index + 1) * stride;
                            let n = circle.len() as u64;
                            for (k, &mk) in mults.iter().enumerate() {
                                let (c, s_neg) = circle[((mk % n) * (i_fine % n) % n) as usize];
                                let i = self.circuit.osc_idx(k);
                                z[i] = c;
                                z[i + 1] = -s_neg;
                            }
                            let (ci, pi) = (self.circuit.const_idx(), self.circuit.param_idx());
                            z[ci] = 1.0;
                            z[pi] = self.circuit.param;
                        }
                        _ => self.circuit.osc_at(&mut z, t),
                    }
                    if at_grid {
                        grid_index += 1;
                    }
                    if contactor_now {
                        self.close_contactors(&mut on, t, &mut events);
                        contactor_done = true;
                    }
                    // Gate openings and settling at stops.  With no switch on
                    // the wrong side at the stop (every condition that may
                    // change here was just evaluated there), it has nothing
                    // to do.
                    if any_violation || contactor_now {
                        td = self.settle(&mut on, &z, t, &mut events, None)?;
                    }
                    visited_now.push(td.key);
                    if spec.record && at_grid {
                        knots.push((t, td.key, ZVec::from_slice(&z)));
                    }
                }
            }
            if z.iter().any(|v| !v.is_finite()) {
                return Err(fail(
                    "the solution is not finite",
                    "the circuit values are outside what this solver handles",
                ));
            }
        }
        Ok(RunOut {
            x_end: z[..nx].to_vec(),
            on_end: on,
            monodromy: sens.as_ref().map(|s| {
                let mut m = Mat::zeros(nx, nx);
                for i in 0..nx {
                    for j in 0..nx {
                        m.set(i, j, s.at(j, i));
                    }
                }
                m
            }),
            dx_dparam: sens.map(|s| s.row(nx)[..nx].to_vec()),
            pieces,
            events,
            knots,
        })
    }

    fn close_contactors(&mut self, on: &mut [bool], t_s: f64, events: &mut Vec<Event>) {
        for (k, &e) in self.circuit.switches.iter().enumerate() {
            if let Element::Switch {
                kind: SwitchKind::Contactor,
                ..
            } = self.circuit.elements[e]
            {
                if !on[k] {
                    on[k] = true;
                    events.push(Event {
                        t_s,
                        switch: k,
                        on: true,
                    });
                }
            }
        }
    }

    /// Switch states with every contactor closed and every device off.
    pub fn contactors_closed(&self) -> Vec<bool> {
        self.circuit
            .switches
            .iter()
            .map(|&e| {
                matches!(
                    self.circuit.elements[e],
                    Element::Switch {
                        kind: SwitchKind::Contactor,
                        ..
                    }
                )
            })
            .collect()
    }

    /// Number of topologies built so far.
    pub fn cache_len(&self) -> usize {
        self.cache.len()
    }

    /// After the flips at a switching instant: a device that they put on the
    /// wrong side within the tolerance, and that goes beyond it before coming
    /// back (`goes_beyond`), flips at this instant too, where its condition
    /// crossed zero.  Left to the tolerance it would flip where a later stop
    /// finds it beyond it, late, with up to the tolerance the wrong way: in
    /// an idle interval of a diode bridge the conducting device holds a
    /// leakage-level current, and when the next one turns on at the natural
    /// commutation point the first one's current turns negative from zero,
    /// as the square of the time, with a jump of the order of the device's
    /// forward voltage one tick past the root over its `r_on`.  `before`: the
    /// switch states before this instant (a device that has flipped here
    /// already is left as it is).
    fn settle_slow(
        &mut self,
        on: &mut [bool],
        before: &[bool],
        z: &[f64],
        t_s: f64,
        events: &mut Vec<Event>,
        mut td: Arc<TopoData>,
    ) -> Result<Arc<TopoData>, SolveError> {
        let m_h = 1u64 << TABLE_LEVELS;
        let mut flipped: Vec<usize> = Vec::new();
        loop {
            let mut pick: Option<(f64, usize)> = None;
            for j in 0..on.len() {
                if on[j] != before[j] || flipped.contains(&j) {
                    continue;
                }
                let v = self.violation(&td, j, on[j], z, t_s);
                if v > 0.0
                    && v <= 1.0
                    && pick.is_none_or(|p| v > p.0)
                    && self.goes_beyond(&td, j, on[j], z, t_s, m_h)
                {
                    pick = Some((v, j));
                }
            }
            let Some((_, j)) = pick else {
                return Ok(td);
            };
            on[j] = !on[j];
            flipped.push(j);
            events.push(Event {
                t_s,
                switch: j,
                on: on[j],
            });
            self.n_events += 1;
            td = self.settle(on, z, t_s, events, Some(j))?;
        }
    }

    /// Whether switch `k`'s condition, on the wrong side within the tolerance
    /// in state `z` at time `t_s`, goes beyond the tolerance before it comes
    /// back to the right side, marching on in topology `td` (sixteen steps of
    /// `m_dt` ticks, the step just taken but at least a grid step, then
    /// coarse strides, for at most one period).  A slow crossing (a current
    /// changing by less than the tolerance per grid step, as at a very light
    /// load) stays inside the band for many steps before it gets beyond it.
    fn goes_beyond(
        &self,
        td: &TopoData,
        k: usize,
        on: bool,
        z: &[f64],
        t_s: f64,
        m_dt: u64,
    ) -> bool {
        let top = 1u64 << (TABLE_LEVELS + COARSE_LEVELS);
        let mut m = m_dt.clamp(1 << TABLE_LEVELS, top);
        let mut cur = z.to_vec();
        let mut next = vec![0.0; z.len()];
        let mut tmp = vec![0.0; z.len()];
        let mut t = t_s;
        let t_stop = t_s + self.period_s;
        let mut n = 0;
        while t < t_stop {
            if n == 16 {
                m = top;
            }
            Self::prop_vec_into(td, m, &cur, &mut next, &mut tmp);
            std::mem::swap(&mut cur, &mut next);
            t += self.tick_time(m);
            n += 1;
            let v = self.violation(td, k, on, &cur, t);
            if v > 1.0 {
                return true;
            }
            if v <= 0.0 || !cur.iter().all(|x| x.is_finite()) {
                return false;
            }
        }
        false
    }

    /// Locate a zero of `c . expm(F tau) z` on (0, dt] (dt = `m_dt` ticks), given
    /// that it is on the far side at `dt`: bisection on the dyadic table, one
    /// matrix-vector product per level.  Returns the time just past the root (on
    /// the far side, within one finest tick), and the state there in `out`.
    /// `zs`: `z` and the state at `dt` (`prop_vec_into` of `z` by `m_dt`, which
    /// the caller has: the answer when the root is in the last tick).  `out`
    /// and `tmp` are scratch of `z`'s length.
    #[allow(clippy::too_many_arguments)]
    fn locate(
        &self,
        td: &TopoData,
        c: &[f64],
        zs: (&[f64], &[f64]),
        m_dt: u64,
        on: bool,
        out: &mut Vec<f64>,
        tmp: &mut Vec<f64>,
    ) -> f64 {
        let (z, z_end) = zs;
        // g > 0 on the side the switch is happy with.
        let sgn = if on { 1.0 } else { -1.0 };
        out.copy_from_slice(z);
        if sgn * dot(c, z) <= 0.0 {
            return 0.0;
        }
        // `out` holds the state at `lo`.
        let mut lo: u64 = 0;
        for b in (0..=TABLE_LEVELS + COARSE_LEVELS).rev() {
            let step = 1u64 << b;
            if lo + step >= m_dt {
                continue;
            }
            Self::apply(td, b, out, tmp);
            if sgn * dot(c, tmp) > 0.0 {
                lo += step;
                std::mem::swap(out, tmp);
            }
        }
        // One finest tick past the last good point.
        let hi = (lo + 1).min(m_dt);
        if hi == m_dt {
            out.copy_from_slice(z_end);
        } else {
            Self::apply(td, 0, out, tmp);
            std::mem::swap(out, tmp);
        }
        self.tick_time(hi)
    }

    /// The state at the four Gauss-Legendre nodes of a recorded piece, as
    /// (time, weight, state), into `out` (its vectors are reused).  Used for
    /// pieces cut by a switching instant (whole grid steps take Simpson's
    /// rule, whose middle node is one table level).
    pub fn gauss_states_into(
        &mut self,
        p: &Piece,
        out: &mut Vec<(f64, f64, Vec<f64>)>,
    ) -> Result<(), SolveError> {
        let td = self.topo_key(p.key)?;
        out.resize_with(4, || (0.0, 0.0, Vec::new()));
        let mut scratch = Vec::new();
        for (j, o) in out.iter_mut().enumerate() {
            let m = self.ticks(p.dt_s * (1.0 + GL4_X[j]) / 2.0);
            o.0 = p.t_s + self.tick_time(m);
            o.1 = GL4_W[j] * p.dt_s / 2.0;
            o.2.resize(p.z.len(), 0.0);
            scratch.resize(p.z.len(), 0.0);
            Self::prop_vec_into(&td, m, &p.z, &mut o.2, &mut scratch);
        }
        Ok(())
    }
}

/// The set bits of `m`, highest first.
fn set_bits_down(mut m: u64) -> impl Iterator<Item = usize> {
    std::iter::from_fn(move || {
        if m == 0 {
            return None;
        }
        let b = 63 - m.leading_zeros() as usize;
        m &= !(1u64 << b);
        Some(b)
    })
}

pub fn dot(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

/// Periodic steady state: the initial state `x0`, the initial switch states,
/// and the Newton history.
pub struct SteadyState {
    pub x0: Vec<f64>,
    pub on0: Vec<bool>,
    pub iterations: usize,
    pub residual: f64,
    /// With a `ParamRule`: the period mean of its signal at the solution.
    pub mean: Option<f64>,
    /// With a `ParamRule`: its signal's spread (max - min) over the period,
    /// sampled at the quadrature nodes of the mean.
    pub spread: Option<f64>,
    /// With a `ParamRule`: stopped early because `rule.restart` asked for it
    /// (the state is near periodic, not converged).
    pub restarted: bool,
    /// The converging period itself when it was marched on the fine grid and
    /// recorded (see `solve_periodic_from`): the caller need not march it again.
    pub recorded: Option<RunOut>,
    /// The monodromy matrix `d x(T) / d x(0)` (saltation included) of the
    /// last period marched with the sensitivity, at a state within the
    /// Newton step's tolerance of the solution: its eigenvalues are the
    /// periodic solution's Floquet multipliers (`None` if no period was
    /// marched with the sensitivity).
    pub monodromy: Option<Mat>,
}

/// A parameter (the `p` entry of `z`) that depends on the solution: the
/// constant-power load's current, `p = target(mean of the signal)`.
pub struct ParamRule<'a> {
    /// The averaged signal's row over `z`, per topology.
    pub row: &'a dyn Fn(&Topology) -> Vec<f64>,
    /// The parameter wanted for a period mean `v` of that signal.
    pub target: &'a dyn Fn(f64) -> f64,
    /// Converged when `|target(mean) - p| <= tol_rel |p|`.
    pub tol_rel: f64,
    /// The error (reason, hint) when the mean is not positive: the target
    /// is only defined for a positive mean.
    pub not_positive: (&'a str, &'a str),
    /// Stop early (once the state residual is below 1e-3) when this is true
    /// of the mean and the spread: the caller changes the model and starts
    /// again from there.
    pub restart: &'a dyn Fn(f64, f64) -> bool,
}

/// Scale of each state for convergence tests.
pub fn solve_periodic(
    eng: &mut Engine,
    x_guess: &[f64],
    x_scale: &[f64],
    warmup_periods: usize,
    max_iter: usize,
    rule: Option<&ParamRule>,
) -> Result<SteadyState, SolveError> {
    let t_per = eng.period_s;
    let mut x0 = x_guess.to_vec();
    let mut on0 = eng.contactors_closed();
    let plain = RunSpec {
        t0_s: 0.0,
        t1_s: t_per,
        record: false,
        sensitivity: false,
        contactor_close: None,
        coarse: eng.coarse_newton,
    };
    for _ in 0..warmup_periods {
        let r = eng.run(&x0, &on0, &plain)?;
        x0 = r.x_end;
        on0 = r.on_end;
    }
    solve_periodic_from(eng, &x0, &on0, x_scale, max_iter, rule)
}

/// The period mean of `rule`'s signal over a recorded run: Simpson's rule on
/// each piece (error `tau^5 f''''(xi) / 2880`, Abramowitz and Stegun 25.4.5):
/// the end of a piece is the start of the next, and the midpoint of a whole
/// coarse stride is one table level, so with the row times that level kept
/// per topology a whole piece costs three dot products (a cut piece one
/// matrix-vector product per set tick bit).  (Estimated, not measured: over
/// a coarse stride of 8 grid steps the error is of order 1e-8 of the mean
/// for a bus whose ripple is a few percent at 6 f.  The rule assumes the
/// signal does not jump within a piece; the constant-power load's bus,
/// across its capacitor, does not.  The recording period's own figures use
/// the output stage's rules.)
fn run_mean(eng: &mut Engine, run: &RunOut, rule: &ParamRule) -> Result<(f64, f64), SolveError> {
    let mut acc = 0.0;
    let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
    // Per topology: the signal's row, and for a half-step of one table
    // level `b` (every whole grid step or coarse stride) the row times that
    // level, so that the midpoint value is one dot product instead of a
    // matrix-vector product and a dot product (the same value but for
    // rounding: `(r L) z` against `r (L z)`).
    // (Found by key when the topology changes, else the previous piece's.)
    let mut rows: Vec<(u64, Vec<f64>, Vec<LevelRow>)> = Vec::new();
    let n = run.pieces.first().map_or(0, |p| p.z.len());
    let (mut z_mid, mut tmp, mut z_end) = (vec![0.0; n], vec![0.0; n], vec![0.0; n]);
    let mut last: Option<(u64, Arc<TopoData>, usize)> = None;
    // The start value of the next piece when it is in the same topology:
    // the end value just computed (the same row and state).
    let mut carry: Option<f64> = None;
    for (i, p) in run.pieces.iter().enumerate() {
        let (td, e) = match &last {
            Some((k, td, e)) if *k == p.key => (td.clone(), *e),
            _ => {
                let td = eng.topo_key(p.key)?;
                let e = match rows.iter().position(|r| r.0 == p.key) {
                    Some(e) => e,
                    None => {
                        rows.push((p.key, (rule.row)(&td.topo), Vec::new()));
                        rows.len() - 1
                    }
                };
                last = Some((p.key, td.clone(), e));
                (td, e)
            }
        };
        let td = &td;
        let (_, row, at_level) = &mut rows[e];
        let m = eng.ticks(p.dt_s);
        let half = m / 2;
        let v_mid = if half != 0 && half.is_power_of_two() {
            let b = half.trailing_zeros() as usize;
            let pos = match at_level.iter().position(|(lb, _)| *lb == b) {
                Some(k) => k,
                None => {
                    let len = td.packed_len();
                    let lv = &td.packed[b * len..(b + 1) * len];
                    at_level.push((b, row_times(row, lv, td.nx, td.n_osc)));
                    at_level.len() - 1
                }
            };
            dot(&at_level[pos].1, &p.z)
        } else {
            Engine::prop_vec_into(td, half, &p.z, &mut z_mid, &mut tmp);
            dot(row, &z_mid)
        };
        let v_start = match carry.take() {
            Some(v) => v,
            None => dot(row, &p.z),
        };
        let v_end = match run.pieces.get(i + 1) {
            Some(next) => {
                let v = dot(row, &next.z);
                if next.key == p.key {
                    carry = Some(v);
                }
                v
            }
            None => {
                Engine::prop_vec_into(td, m, &p.z, &mut z_end, &mut tmp);
                dot(row, &z_end)
            }
        };
        acc += p.dt_s / 6.0 * (v_start + 4.0 * v_mid + v_end);
        lo = lo.min(v_start).min(v_mid);
        hi = hi.max(v_start).max(v_mid);
    }
    Ok((acc / eng.period_s, (hi - lo).max(0.0)))
}

/// A signal's row times the table level `.0` (see `run_mean`).
type LevelRow = (usize, Vec<f64>);

/// The row vector `r L` for a packed level `lv` (see `TopoData::packed`): each
/// entry the sum of `r_i L_ij` over `i` ascending, from +0, the rows with
/// `r_i = 0` skipped, as the plain product over the full matrix.  Read from
/// the packed level: of the oscillator, parameter and constant rows only
/// the entries the packing keeps (their pair, their diagonal) are added;
/// the rest are exact zeros, whose terms (signed zeros when `r` is finite)
/// leave such a sum unchanged.  A row `r` that is not finite takes the full
/// matrix, unpacked.
fn row_times(r: &[f64], lv: &[f64], nx: usize, n_osc: usize) -> Vec<f64> {
    let nz = nx + 2 * n_osc + 2;
    let (xb, osc) = lv.split_at(nx * nz);
    let mut out = vec![0.0; nz];
    if !r.iter().all(|x| x.is_finite()) {
        let m = unpack_level(lv, nx, n_osc);
        for (i, ri) in r.iter().enumerate().take(m.rows) {
            if *ri == 0.0 {
                continue;
            }
            for (o, x) in out.iter_mut().zip(m.row(i)) {
                *o += ri * x;
            }
        }
        return out;
    }
    for (i, ri) in r.iter().enumerate().take(nz) {
        if *ri == 0.0 {
            continue;
        }
        if i < nx {
            for (o, col) in out.iter_mut().zip(xb.chunks_exact(nx)) {
                *o += ri * col[i];
            }
        } else if i < nz - 2 {
            let (q, h) = ((i - nx) / 2, (i - nx) % 2);
            let c = nx + 2 * q;
            out[c] += ri * osc[4 * q + 2 * h];
            out[c + 1] += ri * osc[4 * q + 2 * h + 1];
        } else {
            out[i] += ri * 1.0;
        }
    }
    out
}

/// The full matrix of a packed level (see `TopoData::packed`): the
/// structural entries exact zeros (+0) and ones.
fn unpack_level(lv: &[f64], nx: usize, n_osc: usize) -> Mat {
    let nz = nx + 2 * n_osc + 2;
    let mut m = Mat::zeros(nz, nz);
    for (j, col) in lv[..nx * nz].chunks_exact(nx).enumerate() {
        for (i, &v) in col.iter().enumerate() {
            m.set(i, j, v);
        }
    }
    for q in 0..n_osc {
        let c = nx + 2 * q;
        let blk = &lv[nx * nz + 4 * q..nx * nz + 4 * q + 4];
        m.set(c, c, blk[0]);
        m.set(c, c + 1, blk[1]);
        m.set(c + 1, c, blk[2]);
        m.set(c + 1, c + 1, blk[3]);
    }
    m.set(nz - 2, nz - 2, 1.0);
    m.set(nz - 1, nz - 1, 1.0);
    m
}

/// Newton shooting from a given initial state and switch states.
///
/// With a `ParamRule` the parameter `p` is solved with the state: each
/// period also gives the mean `V` of the rule's signal, the parameter moves
/// towards `target(V)` (a secant step on `q(p) = target(V) - p` once two
/// points are known, else the fixed-point step `q`), and the state step
/// includes the parameter's effect through `d x(T) / d p`:
/// `(I - M) dx = r + (d x(T) / d p) dp`.  One period per iteration, instead
/// of a whole Newton solve per parameter update.
pub fn solve_periodic_from(
    eng: &mut Engine,
    x_start: &[f64],
    on_start: &[bool],
    x_scale: &[f64],
    max_iter: usize,
    rule: Option<&ParamRule>,
) -> Result<SteadyState, SolveError> {
    let nx = x_start.len();
    let mut x0 = x_start.to_vec();
    let mut on0 = on_start.to_vec();
    let with_sens = RunSpec {
        t0_s: 0.0,
        t1_s: eng.period_s,
        record: rule.is_some(),
        sensitivity: true,
        contactor_close: None,
        coarse: eng.coarse_newton,
    };
    // Once the residual is small, the next Newton period is likely the last:
    // it is marched on the fine grid and recorded, so that when it converges
    // it is also the recording period.
    // (Without the sensitivity, which on the fine grid costs more than a
    // whole coarse period; should that period not converge, the next step
    // marches it again coarse with the sensitivity.)
    let final_spec = RunSpec {
        coarse: false,
        record: true,
        sensitivity: false,
        ..with_sens
    };
    let mut run_recorded = false;
    let norm = |r: &[f64]| -> f64 {
        r.iter()
            .zip(x_scale)
            .map(|(v, s)| (v / s).abs())
            .fold(0.0, f64::max)
    };
    let mut run = eng.run(&x0, &on0, &with_sens)?;
    let mut res: Vec<f64> = run.x_end.iter().zip(&x0).map(|(a, b)| a - b).collect();
    let mut rn = norm(&res);
    // The monodromy of the last period marched with the sensitivity.
    let mut last_m: Option<Mat> = None;
    let (mut mean, mut spread) = match rule {
        Some(rl) => {
            let (m, sp) = run_mean(eng, &run, rl)?;
            (Some(m), Some(sp))
        }
        None => (None, None),
    };
    // Previous (p, q) for the secant step.
    let mut prev_pq: Option<(f64, f64)> = None;
    let mut q_rel = 0.0;
    for it in 0..=max_iter {
        // The parameter's residual.
        let q = match (rule, mean) {
            (Some(rl), Some(v)) => {
                if !v.is_finite() || v <= 0.0 {
                    return Err(fail(rl.not_positive.0, rl.not_positive.1));
                }
                (rl.target)(v) - eng.circuit.param
            }
            _ => 0.0,
        };
        let p_now = eng.circuit.param;
        let q_ok = match rule {
            Some(rl) => q.abs() <= rl.tol_rel * p_now.abs().max(f64::MIN_POSITIVE),
            None => true,
        };
        let restart = match (rule, mean, spread) {
            (Some(rl), Some(v), Some(sp)) => rn < 1e-3 && (rl.restart)(v, sp),
            _ => false,
        };
        if (rn < 1e-10 && q_ok) || restart {
            return Ok(SteadyState {
                monodromy: run.monodromy.take().or(last_m),
                x0,
                on0,
                iterations: it,
                residual: rn,
                mean,
                spread,
                restarted: restart,
                recorded: if run_recorded && !restart {
                    Some(run)
                } else {
                    None
                },
            });
        }
        if it == max_iter {
            q_rel = q.abs() / p_now.abs().max(f64::MIN_POSITIVE);
            break;
        }
        // Parameter step.
        let mut dp = q;
        if let Some((p_prev, q_prev)) = prev_pq {
            let slope = (q - q_prev) / (p_now - p_prev);
            if slope.is_finite() && (-10.0..=-0.1).contains(&slope) {
                dp = -q / slope;
            }
        }
        if rule.is_some() && q != 0.0 {
            prev_pq = Some((p_now, q));
        }
        if run.monodromy.is_none() {
            // A recorded fine period that did not converge carries no
            // sensitivity: march the same period coarse with it.
            run = eng.run(&x0, &on0, &with_sens)?;
            res = run.x_end.iter().zip(&x0).map(|(a, b)| a - b).collect();
            rn = norm(&res);
        }
        let taken = run.monodromy.take();
        let fallback;
        let m: &Mat = match &taken {
            Some(m) => m,
            None => {
                fallback = Mat::identity(nx);
                &fallback
            }
        };
        let dxdp = run.dx_dparam.take().unwrap_or_else(|| vec![0.0; nx]);
        let mut a = Mat::identity(nx);
        for i in 0..nx {
            for j in 0..nx {
                a.add_at(i, j, -m.at(i, j));
            }
        }
        // Kept (moved, not copied) for the solution's stability check.
        if taken.is_some() {
            last_m = taken;
        }
        let rhs: Vec<f64> = res.iter().zip(&dxdp).map(|(r, d)| r + d * dp).collect();
        let delta = match Lu::new(&a) {
            Some(lu) => lu.solve(&rhs),
            None => rhs.clone(),
        };
        eng.circuit.param = p_now + dp;
        // The residual to beat: the present one, or (after a parameter step)
        // its first-order prediction at the old state with the new parameter.
        let rn_ref = rn.max(norm(&rhs));
        // Damped update: accept the largest step (1, 1/2, ...) that reduces the residual.
        let mut lambda = 1.0;
        let mut accepted = None;
        for _ in 0..8 {
            let xt: Vec<f64> = x0.iter().zip(&delta).map(|(x, d)| x + lambda * d).collect();
            let on_start = run.on_end.clone();
            let likely_last =
                lambda == 1.0 && rn < 1e-5 && (rule.is_none() || dp.abs() < 1e-4 * p_now.abs());
            let spec = if likely_last { &final_spec } else { &with_sens };
            if let Ok(rt) = eng.run(&xt, &on_start, spec) {
                let rest: Vec<f64> = rt.x_end.iter().zip(&xt).map(|(a, b)| a - b).collect();
                let rnt = norm(&rest);
                if rnt < rn_ref || lambda < 0.02 {
                    accepted = Some((xt, on_start, rt, rest, rnt, likely_last));
                    break;
                }
            }
            lambda *= 0.5;
        }
        match accepted {
            Some((xt, ot, rt, rest, rnt, recorded)) => {
                x0 = xt;
                on0 = ot;
                run = rt;
                run_recorded = recorded;
                res = rest;
                rn = rnt;
            }
            None => {
                // Fall back to one plain period.
                x0 = run.x_end.clone();
                on0 = run.on_end.clone();
                run = eng.run(&x0, &on0, &with_sens)?;
                run_recorded = false;
                res = run.x_end.iter().zip(&x0).map(|(a, b)| a - b).collect();
                rn = norm(&res);
            }
        }
        if let Some(rl) = rule {
            let (m, sp) = run_mean(eng, &run, rl)?;
            mean = Some(m);
            spread = Some(sp);
        }
    }
    if rn < 1e-7 && q_rel < 1e-6 {
        return Ok(SteadyState {
            monodromy: run.monodromy.take().or(last_m),
            x0,
            on0,
            iterations: max_iter,
            residual: rn,
            mean,
            spread,
            restarted: false,
            recorded: None,
        });
    }
    Err(fail(
        "the periodic steady state did not converge",
        "the circuit may not have a periodic solution at the supply frequency (for example a resonance with little damping); add damping resistance or change the load",
    ))
}
#[cfg(test)]
mod tests {
    use super::*;
    use crate::sim::linalg::expm;

    /// A state matrix shaped like a circuit's: a stiff leakage mode, a slow RC
    /// mode, an R-L mode coupled to an oscillator (cos, sin) pair and a
    /// constant column.
    fn circuit_like(stiff_rate: f64) -> Mat {
        let w = 2.0 * std::f64::consts::PI * 60.0;
        let mut f = Mat::zeros(6, 6);
        // x0: R-L current driven by the oscillator and the constant.
        f.set(0, 0, -25.0);
        f.set(0, 1, -3000.0);
        f.set(0, 3, 2.0e6);
        f.set(0, 5, -1.5e3);
        // x1: capacitor voltage charged by x0, slow leakage.
        f.set(1, 0, 210.0);
        f.set(1, 1, -0.05);
        // x2: stiff leakage mode fed by x1.
        f.set(2, 1, 40.0);
        f.set(2, 2, -stiff_rate);
        // (x3, x4): oscillator; x5: constant.
        f.set(3, 4, -w);
        f.set(4, 3, w);
        f
    }

    /// Oracles: each level computed directly by Padé scaling and squaring
    /// (`expm`, Higham 2005) where the matrix is not stiff; where it is, the
    /// stiff mode `x2` feeds nothing back, so every other entry must equal
    /// the table of the same matrix without the stiff rate, and the stiff
    /// diagonal entry must be `exp(-rate tau)`.  (Direct Padé itself drifts by
    /// 2e-8 in the slow entries at rate 1e14, which is why it is not the
    /// oracle there.)
    /// `row_times` from the packed levels against the plain row-vector
    /// product with the full level matrices (every term, from +0), bit for
    /// bit, and the same not-a-number pattern for a row that is not finite.
    #[test]
    fn row_times_is_the_plain_product() {
        // `circuit_like` with a parameter entry (5, a load current drawn
        // from the capacitor x1) before the constant (6).
        let c = circuit_like(1e3);
        let mut f = Mat::zeros(7, 7);
        for i in 0..5 {
            for j in 0..5 {
                f.set(i, j, c.at(i, j));
            }
            f.set(i, 6, c.at(i, 5));
        }
        f.set(1, 5, -7.0e3);
        let h = 1.0 / 60.0 / 1024.0;
        let table = dyadic_table(&f, h).expect("finite");
        let (nx, n_osc) = (3, 1);
        let mut packed = Vec::new();
        for b in 0..=TABLE_LEVELS {
            pack_level(&table[TABLE_LEVELS - b], nx, n_osc, &mut packed);
        }
        let len = packed_len(nx, n_osc);
        let plain = |r: &[f64], m: &Mat| -> Vec<f64> {
            (0..m.cols)
                .map(|j| (0..m.rows).fold(0.0, |acc, i| acc + r[i] * m.at(i, j)))
                .collect()
        };
        let rows = [
            vec![0.3, -1.0, 0.0, 2.5, -0.7, 1e-3, 4.0],
            vec![0.0, 1.0, 0.0, 0.0, 0.0, 0.0, -12.0],
            vec![1.0, 0.0, -0.0, 0.0, 1.0, 1.0, 0.0],
            vec![-2.0e-9, 3.0e5, 1.0, -1.0, 1.0e-300, 0.0, 0.0],
        ];
        for b in 0..=TABLE_LEVELS {
            let lv = &packed[b * len..(b + 1) * len];
            let m = &table[TABLE_LEVELS - b];
            for r in &rows {
                let got = row_times(r, lv, nx, n_osc);
                let want = plain(r, m);
                for (g, w) in got.iter().zip(&want) {
                    assert_eq!(g.to_bits(), w.to_bits(), "level {b}, row {r:?}");
                }
            }
            let r = [0.5, f64::INFINITY, 0.0, 1.0, 0.0, 0.0, 1.0];
            let got = row_times(&r, lv, nx, n_osc);
            let want = plain(&r, m);
            for (g, w) in got.iter().zip(&want) {
                assert_eq!(g.is_nan(), w.is_nan(), "level {b}");
                assert!(g.is_nan() || g == w, "level {b}");
            }
        }
    }

    #[test]
    fn dyadic_table_matches_oracles() {
        let h = 1.0 / 60.0 / 1024.0;
        let slow = circuit_like(0.0);
        for stiff in [0.0, 1.0e3, 6.6e6, 1.0e10, 1.0e14] {
            let f = circuit_like(stiff);
            let table = dyadic_table(&f, h).expect("finite");
            assert_eq!(table.len(), TABLE_LEVELS + 1);
            for (i, e) in table.iter().enumerate() {
                let tau = h / (1u64 << i) as f64;
                let direct = expm(&f.scale(tau)).expect("finite");
                let slow_direct = expm(&slow.scale(tau)).expect("finite");
                for r in 0..6 {
                    for c in 0..6 {
                        let a = e.at(r, c);
                        let (b, tol) = if stiff <= 1.0e3 {
                            (direct.at(r, c), 1e-11)
                        } else if r != 2 {
                            (slow_direct.at(r, c), 1e-12)
                        } else if c == 2 {
                            ((-stiff * tau).exp(), 1e-12)
                        } else {
                            continue;
                        };
                        assert!(
                            (a - b).abs() <= tol * (1.0 + b.abs()),
                            "stiff {stiff:e} level {i} entry ({r}, {c}): {a:e} vs {b:e}"
                        );
                    }
                }
            }
        }
    }

    /// `rem_period` is `rem_euclid` to the bit: around every boundary of its
    /// fast paths (0, one and two periods either side, by a few ulps), far
    /// outside them, at signed zeros, non-finite inputs and odd periods.
    #[test]
    fn rem_period_is_rem_euclid() {
        let mut checked = 0;
        for p in [1.0 / 60.0, 0.02, 1.0, 3.0e-7, 7.5e5, f64::MIN_POSITIVE] {
            let mut xs = vec![0.0, -0.0, 1e300, -1e300, f64::INFINITY, f64::NAN];
            for m in [
                -3.0, -2.0, -1.5, -1.0, -0.5, 0.0, 0.5, 1.0, 1.5, 2.0, 3.0, 1e6,
            ] {
                let c: f64 = m * p;
                let mut up = c;
                let mut down = c;
                for _ in 0..4 {
                    xs.push(up);
                    xs.push(down);
                    up = up.next_up();
                    down = down.next_down();
                }
            }
            for i in 0..2000 {
                // A spread of times over six periods, negative ones included.
                xs.push(p * (-3.0 + 6.0 * (i as f64 * 0.618_033_988_749_895).fract()));
            }
            for &x in &xs {
                let (a, b) = (rem_period(x, p), x.rem_euclid(p));
                assert!(
                    a.to_bits() == b.to_bits() || (a.is_nan() && b.is_nan()),
                    "x {x:e} p {p:e}: {a:e} against {b:e}"
                );
                checked += 1;
            }
        }
        for p in [0.0, -1.0, f64::INFINITY, f64::NAN] {
            for x in [0.5, -0.5, 3.0] {
                let (a, b) = (rem_period(x, p), x.rem_euclid(p));
                assert!(a.to_bits() == b.to_bits() || (a.is_nan() && b.is_nan()));
            }
        }
        assert!(checked > 10_000);
    }

    /// `round_ticks` is `x.round().clamp(0.0, top) as u64` on halves, their
    /// neighbours, the ends of the range and beyond.
    #[test]
    fn round_ticks_is_round() {
        let top = (1u64 << (TABLE_LEVELS + COARSE_LEVELS)) as f64;
        let mut xs = vec![
            0.0,
            -0.0,
            -0.5,
            -1.0,
            top,
            top + 0.5,
            1e300,
            f64::NAN,
            f64::INFINITY,
        ];
        for c in [0.5, 1.0, 1.5, 2.5, 1e6 + 0.5, top - 0.5, top - 1.5, 12345.0] {
            let (mut up, mut down) = (c, c);
            for _ in 0..4 {
                xs.push(up);
                xs.push(down);
                up = f64::next_up(up);
                down = f64::next_down(down);
            }
        }
        for i in 0..5000 {
            xs.push(top * (i as f64 * 0.618_033_988_749_895).fract());
        }
        for &x in &xs {
            assert_eq!(
                round_ticks(x, top),
                x.round().clamp(0.0, top) as u64,
                "x {x:e}"
            );
        }
    }
}
