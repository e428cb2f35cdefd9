//! Fast Fourier transform of any length whose prime factors are small
//! (mixed-radix decimation in time, iterative: a digit-reversal permutation
//! then one pass of butterflies per radix; Cooley and Tukey 1965; e.g. Press et al.,
//! *Numerical Recipes*, 3rd ed., sec. 12.2 for radix 2 and the general
//! factorisation), used for the harmonic integrals over the uniform part of
//! the grid.  A length with a prime factor above `MAX_RADIX` is summed
//! directly for the bins asked for.  Checked against a direct sum below.

use std::f64::consts::PI;

/// Complex number as (re, im).
pub type C = (f64, f64);

/// Largest prime factor handled by the FFT; beyond it the bins are summed
/// directly (cost N per bin).
pub const MAX_RADIX: usize = 7;

fn smallest_factor(n: usize) -> usize {
    if n % 4 == 0 {
        // Radix 4 halves the number of passes of radix 2.
        return 4;
    }
    let mut p = 2;
    while p * p <= n {
        if n % p == 0 {
            return p;
        }
        p += 1;
    }
    n
}

/// Whether every prime factor of `n` is at most `MAX_RADIX`.
pub fn is_smooth(mut n: usize) -> bool {
    if n == 0 {
        return false;
    }
    for p in 2..=MAX_RADIX {
        while n % p == 0 {
            n /= p;
        }
    }
    n == 1
}

#[inline]
fn cmul(a: C, b: C) -> C {
    (a.0 * b.0 - a.1 * b.1, a.0 * b.1 + a.1 * b.0)
}

/// The factors of `n` in the order the transform splits it (`smallest_factor`
/// at each level: 4 while it divides, then the primes).
fn factors(mut n: usize) -> Vec<usize> {
    let mut f = Vec::new();
    while n > 1 {
        let p = smallest_factor(n);
        f.push(p);
        n /= p;
    }
    f
}

/// Where input `t` sits before the butterfly passes: the splitting of
/// decimation in time (input `j + p t'` of a length `p m` transform feeds
/// the sub-transform `j`, stored at `j m`), digit by digit.
fn digit_reversal(n: usize, f: &[usize]) -> Vec<usize> {
    (0..n)
        .map(|t| {
            let (mut rest, mut len, mut pos) = (t, n, 0);
            for &p in f {
                len /= p;
                pos += (rest % p) * len;
                rest /= p;
            }
            pos
        })
        .collect()
}

/// One pass of butterflies of radix `P` over blocks of `P m` in place:
/// `X[k + m q] = sum_j W_(P m)^(j k) Y_j[k] W_P^(j q)`, with `Y_j` the
/// block's `j`-th run of `m` (decimation in time, Cooley and Tukey 1965).
/// `tw` holds the pass's twiddles `W_(P m)^(j k)`, j = 1..P, for each k in
/// turn; `bfly` is the length-`P` DFT.  The first pass (`m` = 1) has no
/// twiddles.
///
/// Only the outputs `[0, top)` and `(P m - top, P m)` of each block are
/// wanted (see `Plan::two_real_into`; `top` >= the length for all): they
/// need the inputs `k < top` and `k > m - top` of each run, so a butterfly
/// with neither is skipped (in practice only in the last pass).
fn pass<const P: usize>(x: &mut [C], m: usize, tw: &[C], bfly: impl Fn(&mut [C; P]), top: usize) {
    let mut y = [(0.0, 0.0); P];
    if m == 1 {
        for block in x.chunks_exact_mut(P) {
            y.copy_from_slice(block);
            bfly(&mut y);
            block.copy_from_slice(&y);
        }
        return;
    }
    let skip_lo = top.min(m);
    let skip_hi = (m + 1).saturating_sub(top).max(skip_lo);
    for block in x.chunks_exact_mut(P * m) {
        for (k, t) in tw.chunks_exact(P - 1).enumerate() {
            if k >= skip_lo && k < skip_hi {
                continue;
            }
            y[0] = block[k];
            for j in 1..P {
                y[j] = cmul(block[j * m + k], t[j - 1]);
            }
            bfly(&mut y);
            for (q, v) in y.iter().enumerate() {
                block[k + m * q] = *v;
            }
        }
    }
}

/// `pass::<4>` with the four runs of each block walked side by side (the
/// commonest radix: every pass of a power of two, the default grid).
fn pass4(x: &mut [C], m: usize, tw: &[C], top: usize) {
    if m == 1 {
        pass::<4>(x, m, tw, bfly4, top);
        return;
    }
    let skip_lo = top.min(m);
    let skip_hi = (m + 1).saturating_sub(top).max(skip_lo);
    for block in x.chunks_exact_mut(4 * m) {
        let (r0, rest) = block.split_at_mut(m);
        let (r1, rest) = rest.split_at_mut(m);
        let (r2, r3) = rest.split_at_mut(m);
        let runs = r0
            .iter_mut()
            .zip(r1.iter_mut())
            .zip(r2.iter_mut())
            .zip(r3.iter_mut());
        for (k, ((((a, b), c), d), t)) in runs.zip(tw.chunks_exact(3)).enumerate() {
            if k >= skip_lo && k < skip_hi {
                continue;
            }
            let mut y = [*a, cmul(*b, t[0]), cmul(*c, t[1]), cmul(*d, t[2])];
            bfly4(&mut y);
            [*a, *b, *c, *d] = y;
        }
    }
}

fn bfly2(y: &mut [C; 2]) {
    let (a, b) = (y[0], y[1]);
    y[0] = (a.0 + b.0, a.1 + b.1);
    y[1] = (a.0 - b.0, a.1 - b.1);
}

fn bfly3(y: &mut [C; 3]) {
    const S3: f64 = 0.866_025_403_784_438_6; // sin(60 deg)
    let (a, b, c) = (y[0], y[1], y[2]);
    let (sr, si) = (b.0 + c.0, b.1 + c.1);
    let (dr, di) = (b.0 - c.0, b.1 - c.1);
    let (mr, mi) = (a.0 - 0.5 * sr, a.1 - 0.5 * si);
    // W_3 = -1/2 - i sin60: X1 = a - s/2 - i S3 d, X2 = a - s/2 + i S3 d.
    y[0] = (a.0 + sr, a.1 + si);
    y[1] = (mr + S3 * di, mi - S3 * dr);
    y[2] = (mr - S3 * di, mi + S3 * dr);
}

fn bfly4(y: &mut [C; 4]) {
    let (a, b, c, d) = (y[0], y[1], y[2], y[3]);
    let (t0, t1) = ((a.0 + c.0, a.1 + c.1), (a.0 - c.0, a.1 - c.1));
    let (t2, t3) = ((b.0 + d.0, b.1 + d.1), (b.0 - d.0, b.1 - d.1));
    // W_4 = -i: (b - d)(-i) = (t3.1, -t3.0).
    y[0] = (t0.0 + t2.0, t0.1 + t2.1);
    y[1] = (t1.0 + t3.1, t1.1 - t3.0);
    y[2] = (t0.0 - t2.0, t0.1 - t2.1);
    y[3] = (t1.0 - t3.1, t1.1 + t3.0);
}

fn bfly5(y: &mut [C; 5]) {
    // W_5^e = c_e - i s_e with c1 = cos 72, c2 = cos 144, s1 = sin 72,
    // s2 = sin 144 (degrees); W_5^(5-e) is the conjugate.  With t1 = b + e,
    // t2 = c + d, t3 = b - e, t4 = c - d:
    // X1, X4 = a + c1 t1 + c2 t2 -/+ i (s1 t3 + s2 t4),
    // X2, X3 = a + c2 t1 + c1 t2 -/+ i (s2 t3 - s1 t4).
    const C1: f64 = 0.309_016_994_374_947_45;
    const C2: f64 = -0.809_016_994_374_947_5;
    const S1: f64 = 0.951_056_516_295_153_5;
    const S2: f64 = 0.587_785_252_292_473_1;
    let (a, b, c, d, e) = (y[0], y[1], y[2], y[3], y[4]);
    let t1 = (b.0 + e.0, b.1 + e.1);
    let t2 = (c.0 + d.0, c.1 + d.1);
    let t3 = (b.0 - e.0, b.1 - e.1);
    let t4 = (c.0 - d.0, c.1 - d.1);
    let r1 = (a.0 + C1 * t1.0 + C2 * t2.0, a.1 + C1 * t1.1 + C2 * t2.1);
    let r2 = (a.0 + C2 * t1.0 + C1 * t2.0, a.1 + C2 * t1.1 + C1 * t2.1);
    let u1 = (S1 * t3.0 + S2 * t4.0, S1 * t3.1 + S2 * t4.1);
    let u2 = (S2 * t3.0 - S1 * t4.0, S2 * t3.1 - S1 * t4.1);
    // -i u = (u.1, -u.0).
    y[0] = (a.0 + t1.0 + t2.0, a.1 + t1.1 + t2.1);
    y[1] = (r1.0 + u1.1, r1.1 - u1.0);
    y[4] = (r1.0 - u1.1, r1.1 + u1.0);
    y[2] = (r2.0 + u2.1, r2.1 - u2.0);
    y[3] = (r2.0 - u2.1, r2.1 + u2.0);
}

/// The length-7 DFT by its definition (`w[e] = W_7^e`).
fn bfly7(y: &mut [C; 7], w: &[C; 7]) {
    let mut out = [(0.0, 0.0); 7];
    for (q, xq) in out.iter_mut().enumerate() {
        let mut acc = y[0];
        let mut e = 0;
        for yj in y.iter().skip(1) {
            e += q;
            if e >= 7 {
                e -= 7;
            }
            let t = cmul(*yj, w[e]);
            acc.0 += t.0;
            acc.1 += t.1;
        }
        *xq = acc;
    }
    *y = out;
}

thread_local! {
    /// The unit-circle tables made so far on this thread (a few lengths).
    static CIRCLES: std::cell::RefCell<Vec<std::rc::Rc<Vec<C>>>> =
        const { std::cell::RefCell::new(Vec::new()) };
}

/// `W_n^e = e^(-2 pi i e / n)`, e = 0..n, as (cos, sin) pairs: the FFT's
/// twiddle factors, and the oscillator values on the grid (`solver::Engine`).
/// Made once per length and thread (about a thousand sine-cosine pairs,
/// which per analysis cost about 2 % of it) and shared.
pub fn unit_circle(n: usize) -> std::rc::Rc<Vec<C>> {
    let make = || -> std::rc::Rc<Vec<C>> {
        std::rc::Rc::new(
            (0..n)
                .map(|e| {
                    let (s, c) = (-2.0 * PI * e as f64 / n as f64).sin_cos();
                    (c, s)
                })
                .collect(),
        )
    };
    CIRCLES.with(|cell| match cell.try_borrow_mut() {
        Ok(mut v) => {
            if let Some(t) = v.iter().find(|t| t.len() == n) {
                return t.clone();
            }
            let t = make();
            if v.len() >= 4 {
                v.remove(0);
            }
            v.push(t.clone());
            t
        }
        Err(_) => make(),
    })
}

thread_local! {
    /// The plans made so far on this thread (a few lengths), see `with_plan`.
    static PLANS: std::cell::RefCell<Vec<Plan>> = const { std::cell::RefCell::new(Vec::new()) };
}

/// Run `f` with this thread's plan of length `n`, made on first use and
/// kept (a few lengths): an analysis transforms a dozen sequences of the
/// grid's length, and a sweep runs many analyses of the same length.
pub fn with_plan<R>(n: usize, f: impl FnOnce(&mut Plan) -> R) -> R {
    let taken = PLANS.with(|cell| {
        let mut v = cell.try_borrow_mut().ok()?;
        let i = v.iter().position(|p| p.n == n)?;
        Some(v.swap_remove(i))
    });
    let mut plan = taken.unwrap_or_else(|| Plan::new(n));
    let out = f(&mut plan);
    PLANS.with(|cell| {
        if let Ok(mut v) = cell.try_borrow_mut() {
            if v.len() >= 4 {
                v.remove(0);
            }
            v.push(plan);
        }
    });
    out
}

/// A transform length with its twiddle factors, reused over many sequences.
pub struct Plan {
    n: usize,
    smooth: bool,
    /// The passes from the innermost split outwards: (radix, sub-transform
    /// length m, start of its twiddles in `tw`).
    passes: Vec<(usize, usize, usize)>,
    /// Each pass's twiddles `W_(p m)^(j k)`, j = 1..p, for k = 0..m in turn
    /// (read in order by the butterflies).
    tw: Vec<C>,
    /// `W_7^e`, e = 0..7 (radix 7 only).
    w7: [C; 7],
    /// Where input `t` goes before the passes (see `digit_reversal`).
    perm: Vec<usize>,
    /// The sequence being transformed.
    z: Vec<C>,
}

impl Plan {
    pub fn new(n: usize) -> Plan {
        let smooth = is_smooth(n) && n > 1;
        let mut plan = Plan {
            n,
            smooth,
            passes: Vec::new(),
            tw: Vec::new(),
            w7: [(1.0, 0.0); 7],
            perm: Vec::new(),
            z: Vec::new(),
        };
        if !smooth {
            return plan;
        }
        let circle = unit_circle(n);
        let f = factors(n);
        let mut m = 1;
        for &p in f.iter().rev() {
            let s = n / (p * m);
            plan.passes.push((p, m, plan.tw.len()));
            if m > 1 {
                for k in 0..m {
                    for j in 1..p {
                        // j k s < p m s = n.
                        plan.tw.push(circle[j * k * s]);
                    }
                }
            }
            m *= p;
        }
        for (e, w) in plan.w7.iter_mut().enumerate() {
            *w = circle[(e * (n / 7)) % n];
        }
        plan.perm = digit_reversal(n, &f);
        plan.z = vec![(0.0, 0.0); n];
        plan
    }

    /// The butterfly passes over `x`, already in digit-reversed order; only
    /// the bins `[0, top)` and `(N - top, N)` are wanted (see `pass`).
    fn run_passes(&self, x: &mut [C], top: usize) {
        for &(p, m, at) in &self.passes {
            let tw = &self.tw[at..at + if m > 1 { m * (p - 1) } else { 0 }];
            match p {
                2 => pass::<2>(x, m, tw, bfly2, top),
                3 => pass::<3>(x, m, tw, bfly3, top),
                4 => pass4(x, m, tw, top),
                5 => pass::<5>(x, m, tw, bfly5, top),
                _ => pass::<7>(x, m, tw, |y| bfly7(y, &self.w7), top),
            }
        }
    }

    /// Forward DFT `X[n] = sum_k x[k] exp(-i 2 pi n k / N)` in place (length
    /// smooth, see `is_smooth`).
    pub fn fft(&mut self, x: &mut [C]) {
        if x.len() != self.n || !self.smooth {
            return;
        }
        let mut z = std::mem::take(&mut self.z);
        for (t, &pos) in self.perm.iter().enumerate() {
            z[pos] = x[t];
        }
        self.run_passes(&mut z, self.n);
        x.copy_from_slice(&z);
        self.z = z;
    }

    /// DFTs of two real sequences of the plan's length, bins 0..=h_max (at
    /// most N - 1): by one complex FFT of the packed sequence when the length
    /// is smooth, else by direct sums of the bins asked for.
    pub fn two_real(&mut self, a: &[f64], b: &[f64], h_max: usize) -> (Bins, Bins) {
        let top = h_max.min(self.n.saturating_sub(1));
        let mut xa = vec![(0.0, 0.0); top + 1];
        let mut xb = vec![(0.0, 0.0); top + 1];
        self.two_real_into(a, b, &mut xa, &mut xb);
        (xa, xb)
    }

    /// As `two_real`, into `xa` and `xb`, bins 0..len (at most N; both of
    /// the same length), without allocating.
    pub fn two_real_into(&mut self, a: &[f64], b: &[f64], xa: &mut [C], xb: &mut [C]) {
        let n = self.n;
        let top = xa.len().min(xb.len()).min(n);
        if !self.smooth {
            let direct = |seq: &[f64], out: &mut [C]| {
                for (h, o) in out.iter_mut().enumerate().take(top) {
                    let (s1, c1) = (-2.0 * PI * h as f64 / n as f64).sin_cos();
                    let (mut c, mut s) = (1.0f64, 0.0f64);
                    let (mut re, mut im) = (0.0, 0.0);
                    for v in seq {
                        re += v * c;
                        im += v * s;
                        let nc = c * c1 - s * s1;
                        s = s * c1 + c * s1;
                        c = nc;
                    }
                    *o = (re, im);
                }
            };
            direct(a, xa);
            direct(b, xb);
            return;
        }
        let mut z = std::mem::take(&mut self.z);
        for ((&pos, &x), &y) in self.perm.iter().zip(a).zip(b) {
            z[pos] = (x, y);
        }
        // Bins h and N - h, h < top.
        self.run_passes(&mut z, top);
        for (h, (oa, ob)) in xa.iter_mut().zip(xb.iter_mut()).enumerate().take(top) {
            let (zr, zi) = z[h];
            let (cr, ci) = z[(n - h) % n];
            // X_a = (Z[h] + conj Z[N-h]) / 2, X_b = (Z[h] - conj Z[N-h]) / (2i).
            *oa = ((zr + cr) / 2.0, (zi - ci) / 2.0);
            *ob = ((zi + ci) / 2.0, -(zr - cr) / 2.0);
        }
        self.z = z;
    }
}

/// Complex spectrum bins as (re, im).
pub type Bins = Vec<C>;

#[cfg(test)]
mod tests {
    use super::*;

    /// The oracle: the defining sum, term by term with fresh cos and sin.
    fn direct(seq: &[f64], h: usize) -> C {
        let n = seq.len();
        let (mut re, mut im) = (0.0, 0.0);
        for (k, v) in seq.iter().enumerate() {
            let th = -2.0 * PI * ((h * k) % n) as f64 / n as f64;
            re += v * th.cos();
            im += v * th.sin();
        }
        (re, im)
    }

    fn fft_two_real(a: &[f64], b: &[f64], h_max: usize) -> (Bins, Bins) {
        Plan::new(a.len()).two_real(a, b, h_max)
    }

    #[test]
    fn fft_matches_direct_sum() {
        // Powers of two, mixed radices (720 = 2^4 3^2 5, 1000, 60 * 7),
        // lengths with a prime factor beyond MAX_RADIX (direct path).
        for n in [64usize, 1024, 720, 1000, 420, 62, 97, 1009, 2, 3, 5, 7, 14] {
            let a: Vec<f64> = (0..n)
                .map(|k| ((k * 7 % 13) as f64).sin() + 0.3 * k as f64)
                .collect();
            let b: Vec<f64> = (0..n).map(|k| ((k * k) as f64 * 0.1).cos()).collect();
            // Few bins asked for: the last passes skip most butterflies.
            for h_max in [40.min(n - 1), 3.min(n - 1)] {
                let (xa, xb) = fft_two_real(&a, &b, h_max);
                assert_eq!(xa.len(), h_max + 1);
                for h in 0..=h_max {
                    for (seq, x) in [(&a, xa[h]), (&b, xb[h])] {
                        let d = direct(seq, h);
                        let tol = 1e-9 * n as f64;
                        assert!(
                            (d.0 - x.0).abs() < tol && (d.1 - x.1).abs() < tol,
                            "n {n} h {h}: {d:?} vs {x:?}"
                        );
                    }
                }
            }
        }
    }

    #[test]
    fn cached_plans_match_fresh_ones() {
        // A plan taken from the thread's cache, one made while it is out
        // (nested use), and a fresh plan give the same bins; several
        // lengths in turn (the cache keeps four).
        for n in [720usize, 1024, 60, 97, 720, 1000, 1024] {
            let a: Vec<f64> = (0..n).map(|k| (k as f64 * 0.37).sin()).collect();
            let b: Vec<f64> = (0..n).map(|k| (k as f64 * 0.11).cos() + 0.5).collect();
            let fresh = Plan::new(n).two_real(&a, &b, 25);
            let (outer, inner) = with_plan(n, |p| {
                let inner = with_plan(n, |q| q.two_real(&a, &b, 25));
                (p.two_real(&a, &b, 25), inner)
            });
            assert_eq!(outer, fresh, "n {n}");
            assert_eq!(inner, fresh, "n {n}");
            let again = with_plan(n, |p| p.two_real(&a, &b, 25));
            assert_eq!(again, fresh, "n {n}");
        }
    }

    #[test]
    fn smoothness() {
        assert!(is_smooth(720) && is_smooth(1024) && is_smooth(7 * 8));
        assert!(!is_smooth(11) && !is_smooth(37) && !is_smooth(2 * 1009) && !is_smooth(0));
    }
}
