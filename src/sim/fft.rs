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
    if n % 4 == 0 && n > 4 {
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

/// One pass of butterflies of radix `p` over blocks of `p m` in place:
/// `X[k + m q] = sum_j W_(p m)^(j k) Y_j[k] W_p^(j q)`, with `Y_j` the
/// block's `j`-th run of `m` (decimation in time, Cooley and Tukey 1965).
/// `tw[e] = W_N^e` for the whole length `N`.
fn pass(x: &mut [C], p: usize, m: usize, tw: &[C]) {
    let big_n = x.len();
    let s = big_n / (p * m); // W_(p m)^e = tw[e s]
    let sp = big_n / p; // W_p^e = tw[e sp]
    let mut wp = [(0.0, 0.0); MAX_RADIX];
    for (e, w) in wp.iter_mut().enumerate().take(p) {
        *w = tw[e * sp];
    }
    const S3: f64 = 0.866_025_403_784_438_6; // sin(60 deg)
    let mut y = [(0.0, 0.0); MAX_RADIX];
    let mut out = [(0.0, 0.0); MAX_RADIX];
    for block in x.chunks_exact_mut(p * m) {
        for k in 0..m {
            y[0] = block[k];
            for j in 1..p {
                y[j] = if k == 0 {
                    block[j * m]
                } else {
                    cmul(block[j * m + k], tw[j * k * s])
                };
            }
            match p {
                2 => {
                    out[0] = (y[0].0 + y[1].0, y[0].1 + y[1].1);
                    out[1] = (y[0].0 - y[1].0, y[0].1 - y[1].1);
                }
                3 => {
                    let (a, b, c) = (y[0], y[1], y[2]);
                    let (sr, si) = (b.0 + c.0, b.1 + c.1);
                    let (dr, di) = (b.0 - c.0, b.1 - c.1);
                    let (mr, mi) = (a.0 - 0.5 * sr, a.1 - 0.5 * si);
                    // W_3 = -1/2 - i sin60: X1 = a - s/2 - i S3 d, X2 = a - s/2 + i S3 d.
                    out[0] = (a.0 + sr, a.1 + si);
                    out[1] = (mr + S3 * di, mi - S3 * dr);
                    out[2] = (mr - S3 * di, mi + S3 * dr);
                }
                4 => {
                    let (a, b, c, d) = (y[0], y[1], y[2], y[3]);
                    let (t0, t1) = ((a.0 + c.0, a.1 + c.1), (a.0 - c.0, a.1 - c.1));
                    let (t2, t3) = ((b.0 + d.0, b.1 + d.1), (b.0 - d.0, b.1 - d.1));
                    // W_4 = -i: (b - d)(-i) = (t3.1, -t3.0).
                    out[0] = (t0.0 + t2.0, t0.1 + t2.1);
                    out[1] = (t1.0 + t3.1, t1.1 - t3.0);
                    out[2] = (t0.0 - t2.0, t0.1 - t2.1);
                    out[3] = (t1.0 - t3.1, t1.1 + t3.0);
                }
                _ => {
                    for (q, xq) in out.iter_mut().enumerate().take(p) {
                        let mut acc = y[0];
                        let mut e = 0;
                        for yj in y.iter().take(p).skip(1) {
                            e += q;
                            if e >= p {
                                e -= p;
                            }
                            let t = cmul(*yj, wp[e]);
                            acc.0 += t.0;
                            acc.1 += t.1;
                        }
                        *xq = acc;
                    }
                }
            }
            for (q, xq) in out.iter().enumerate().take(p) {
                block[k + m * q] = *xq;
            }
        }
    }
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

/// A transform length with its twiddle factors, reused over many sequences.
pub struct Plan {
    n: usize,
    smooth: bool,
    tw: std::rc::Rc<Vec<C>>,
    scratch: Vec<C>,
    z: Vec<C>,
    /// Bit-reversal permutation, for a power-of-two length (the iterative
    /// radix-2 path; the default grid is 1024).
    rev: Vec<usize>,
    /// Mixed radix (any other smooth length): the radices in splitting order
    /// and the input permutation.
    factors: Vec<usize>,
    perm: Vec<usize>,
}

impl Plan {
    pub fn new(n: usize) -> Plan {
        let smooth = is_smooth(n);
        let tw = if smooth {
            unit_circle(n)
        } else {
            std::rc::Rc::new(Vec::new())
        };
        let rev = if n.is_power_of_two() && n > 1 {
            let bits = n.trailing_zeros();
            (0..n)
                .map(|i| i.reverse_bits() >> (usize::BITS - bits))
                .collect()
        } else {
            Vec::new()
        };
        let (factors, perm) = if smooth && rev.is_empty() && n > 1 {
            let f = factors(n);
            let perm = digit_reversal(n, &f);
            (f, perm)
        } else {
            (Vec::new(), Vec::new())
        };
        Plan {
            n,
            smooth,
            tw,
            scratch: vec![(0.0, 0.0); n],
            z: vec![(0.0, 0.0); n],
            rev,
            factors,
            perm,
        }
    }

    /// Iterative radix-2 decimation in time (Cooley and Tukey 1965; e.g.
    /// Press et al., *Numerical Recipes*, 3rd ed., sec. 12.2.1): bit-reversal
    /// permutation, then log2 N passes of butterflies with the twiddles from
    /// the table.  A power-of-two length only.
    fn fft_pow2(&self, x: &mut [C]) {
        let n = self.n;
        for (i, &j) in self.rev.iter().enumerate() {
            if i < j {
                x.swap(i, j);
            }
        }
        // First pass (len 2): the twiddle is 1.
        for pair in x.chunks_exact_mut(2) {
            let (a, b) = (pair[0], pair[1]);
            pair[0] = (a.0 + b.0, a.1 + b.1);
            pair[1] = (a.0 - b.0, a.1 - b.1);
        }
        let mut len = 4;
        while len <= n {
            let half = len / 2;
            let stride = n / len;
            for block in x.chunks_exact_mut(len) {
                let (lo, hi) = block.split_at_mut(half);
                for (k, (a, b)) in lo.iter_mut().zip(hi.iter_mut()).enumerate() {
                    let w = self.tw[k * stride];
                    let t = cmul(*b, w);
                    let u = *a;
                    *a = (u.0 + t.0, u.1 + t.1);
                    *b = (u.0 - t.0, u.1 - t.1);
                }
            }
            len *= 2;
        }
    }

    /// Forward DFT `X[n] = sum_k x[k] exp(-i 2 pi n k / N)` in place (length
    /// smooth, see `is_smooth`).
    pub fn fft(&mut self, x: &mut [C]) {
        let n = self.n;
        if n <= 1 || x.len() != n || !self.smooth {
            return;
        }
        if !self.rev.is_empty() {
            self.fft_pow2(x);
            return;
        }
        for (t, &pos) in self.perm.iter().enumerate() {
            self.scratch[pos] = x[t];
        }
        // Passes from the innermost split outwards: sub-transform length m.
        let mut m = 1;
        for &p in self.factors.iter().rev() {
            pass(&mut self.scratch, p, m, &self.tw);
            m *= p;
        }
        x.copy_from_slice(&self.scratch);
    }

    /// DFTs of two real sequences of the plan's length, bins 0..=h_max (at
    /// most N - 1): by one complex FFT of the packed sequence when the length
    /// is smooth, else by direct sums of the bins asked for.
    pub fn two_real(&mut self, a: &[f64], b: &[f64], h_max: usize) -> (Bins, Bins) {
        let n = self.n;
        let top = h_max.min(n.saturating_sub(1));
        if !self.smooth {
            let direct = |seq: &[f64]| -> Bins {
                (0..=top)
                    .map(|h| {
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
                        (re, im)
                    })
                    .collect()
            };
            return (direct(a), direct(b));
        }
        let mut z = std::mem::take(&mut self.z);
        for ((zk, &x), &y) in z.iter_mut().zip(a).zip(b) {
            *zk = (x, y);
        }
        self.fft(&mut z);
        let mut xa = Vec::with_capacity(top + 1);
        let mut xb = Vec::with_capacity(top + 1);
        for h in 0..=top {
            let (zr, zi) = z[h];
            let (cr, ci) = z[(n - h) % n];
            // X_a = (Z[h] + conj Z[N-h]) / 2, X_b = (Z[h] - conj Z[N-h]) / (2i).
            xa.push(((zr + cr) / 2.0, (zi - ci) / 2.0));
            xb.push(((zi + ci) / 2.0, -(zr - cr) / 2.0));
        }
        self.z = z;
        (xa, xb)
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
            let h_max = 40.min(n - 1);
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

    #[test]
    fn smoothness() {
        assert!(is_smooth(720) && is_smooth(1024) && is_smooth(7 * 8));
        assert!(!is_smooth(11) && !is_smooth(37) && !is_smooth(2 * 1009) && !is_smooth(0));
    }
}
