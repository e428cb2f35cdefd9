//! Small dense linear algebra for the switched-circuit engine: row-major
//! matrices, LU with partial pivoting, and the matrix exponential.
//!
//! The matrices here are small (the state of a rectifier circuit is 5 to 30
//! numbers), so plain loops beat a general library in size and speed.

/// Row-major dense matrix.
#[derive(Debug, Clone, PartialEq)]
pub struct Mat {
    pub rows: usize,
    pub cols: usize,
    pub data: Vec<f64>,
}

impl Mat {
    pub fn zeros(rows: usize, cols: usize) -> Mat {
        Mat {
            rows,
            cols,
            data: vec![0.0; rows * cols],
        }
    }

    pub fn identity(n: usize) -> Mat {
        let mut m = Mat::zeros(n, n);
        for i in 0..n {
            m.data[i * n + i] = 1.0;
        }
        m
    }

    #[inline]
    pub fn at(&self, r: usize, c: usize) -> f64 {
        self.data[r * self.cols + c]
    }

    #[inline]
    pub fn set(&mut self, r: usize, c: usize, v: f64) {
        self.data[r * self.cols + c] = v;
    }

    #[inline]
    pub fn add_at(&mut self, r: usize, c: usize, v: f64) {
        self.data[r * self.cols + c] += v;
    }

    pub fn row(&self, r: usize) -> &[f64] {
        &self.data[r * self.cols..(r + 1) * self.cols]
    }

    pub fn row_mut(&mut self, r: usize) -> &mut [f64] {
        &mut self.data[r * self.cols..(r + 1) * self.cols]
    }

    /// `self * other`.
    pub fn mul(&self, other: &Mat) -> Mat {
        let mut out = Mat::zeros(self.rows, other.cols);
        self.mul_into(other, &mut out);
        out
    }

    /// `out = self * other`, without allocating (`out` has the right shape).
    /// Each entry sums its terms in the order of the inner index, from +0,
    /// skipping the zero entries of `self` (a skipped term is a signed zero,
    /// which leaves such a sum unchanged: the result is the plain product's,
    /// bit for bit).
    pub fn mul_into(&self, other: &Mat, out: &mut Mat) {
        debug_assert_eq!(self.cols, other.rows);
        debug_assert_eq!((out.rows, out.cols), (self.rows, other.cols));
        mul_kernel(self, other, out, None);
    }

    /// `mul_into` for square matrices where row `k` of `other`, and of
    /// `self`, is zero outside the columns `ranges[k].0 .. ranges[k].1` (the
    /// structure of a state matrix's powers: the oscillator rows are zero
    /// outside their pair, the parameter and constant rows zero): only those
    /// terms are added, so the result is `mul_into`'s bit for bit when the
    /// structure holds.
    pub fn mul_into_ranges(&self, other: &Mat, out: &mut Mat, ranges: &[(usize, usize)]) {
        debug_assert_eq!(self.cols, other.rows);
        debug_assert_eq!(ranges.len(), other.rows);
        debug_assert_eq!(ranges.len(), self.rows);
        debug_assert_eq!((out.rows, out.cols), (self.rows, other.cols));
        mul_kernel(self, other, out, Some(ranges));
    }

    /// `self * v`.
    pub fn mul_vec(&self, v: &[f64]) -> Vec<f64> {
        let mut out = vec![0.0; self.rows];
        self.mul_vec_into(v, &mut out);
        out
    }

    pub fn mul_vec_into(&self, v: &[f64], out: &mut [f64]) {
        let c = self.cols;
        if c == 0 {
            out.iter_mut().take(self.rows).for_each(|o| *o = 0.0);
            return;
        }
        let v = &v[..c.min(v.len())];
        for (o, row) in out.iter_mut().zip(self.data.chunks_exact(c)) {
            *o = row.iter().zip(v).map(|(a, b)| a * b).sum();
        }
    }

    pub fn scale(&self, s: f64) -> Mat {
        Mat {
            rows: self.rows,
            cols: self.cols,
            data: self.data.iter().map(|x| x * s).collect(),
        }
    }

    pub fn add(&self, other: &Mat) -> Mat {
        Mat {
            rows: self.rows,
            cols: self.cols,
            data: self
                .data
                .iter()
                .zip(&other.data)
                .map(|(a, b)| a + b)
                .collect(),
        }
    }

    /// Infinity norm (max absolute row sum).
    pub fn norm_inf(&self) -> f64 {
        (0..self.rows)
            .map(|i| self.row(i).iter().map(|x| x.abs()).sum::<f64>())
            .fold(0.0, f64::max)
    }

    /// 1-norm (max absolute column sum).
    pub fn norm_1(&self) -> f64 {
        let mut best: f64 = 0.0;
        for c in 0..self.cols {
            let s: f64 = (0..self.rows).map(|r| self.at(r, c).abs()).sum();
            best = best.max(s);
        }
        best
    }
}

/// `out = a * b` (see `Mat::mul_into`), with the rows of `b` that `ranges`
/// marks empty skipped.  A row of `out` is summed in registers when it is
/// at most 16 long (`mul_rows`, one instance per width); the other zeros
/// that `ranges` marks are added as they are (a signed zero added to such a
/// sum leaves it unchanged).
fn mul_kernel(a: &Mat, b: &Mat, out: &mut Mat, ranges: Option<&[(usize, usize)]>) {
    let (ac, bc) = (a.cols, b.cols);
    let o = &mut out.data[..a.rows * bc];
    if ac == 0 || bc == 0 {
        o.fill(0.0);
        return;
    }
    let ad = &a.data[..a.rows * ac];
    let bd = &b.data[..ac * bc];
    macro_rules! widths {
        ($($w:literal)*) => {
            match bc {
                $($w => mul_rows::<$w>(ad, ac, bd, o, ranges),)*
                _ => mul_rows_any(ad, ac, bd, bc, o, ranges),
            }
        };
    }
    widths!(1 2 3 4 5 6 7 8 9 10 11 12 13 14 15 16);
}

/// `mul_kernel` for `b` of `W` columns: each row of `out` in registers.
fn mul_rows<const W: usize>(
    ad: &[f64],
    ac: usize,
    bd: &[f64],
    o: &mut [f64],
    ranges: Option<&[(usize, usize)]>,
) {
    for (i, (orow, arow)) in o.chunks_exact_mut(W).zip(ad.chunks_exact(ac)).enumerate() {
        let mut acc = [0.0f64; W];
        let (lo, hi) = ranges.map_or((0, ac), |r| r[i]);
        let terms = arow[lo..hi].iter().zip(bd[lo * W..].chunks_exact(W));
        for (k, (&x, brow)) in terms.enumerate() {
            if x == 0.0 {
                continue;
            }
            if let Some(r) = ranges {
                if r[lo + k].0 >= r[lo + k].1 {
                    continue;
                }
            }
            for (y, &w) in acc.iter_mut().zip(brow) {
                *y += x * w;
            }
        }
        orow.copy_from_slice(&acc);
    }
}

/// `mul_kernel` for any width, summing in `out`.
fn mul_rows_any(
    ad: &[f64],
    ac: usize,
    bd: &[f64],
    bc: usize,
    o: &mut [f64],
    ranges: Option<&[(usize, usize)]>,
) {
    o.fill(0.0);
    for (orow, arow) in o.chunks_exact_mut(bc).zip(ad.chunks_exact(ac)) {
        for (k, (&x, brow)) in arow.iter().zip(bd.chunks_exact(bc)).enumerate() {
            if x == 0.0 {
                continue;
            }
            let (lo, hi) = match ranges {
                Some(r) => r[k],
                None => (0, bc),
            };
            if lo >= hi {
                continue;
            }
            for (y, &w) in orow[lo..hi].iter_mut().zip(&brow[lo..hi]) {
                *y += x * w;
            }
        }
    }
}

/// LU factorisation with partial pivoting of a square matrix.
#[derive(Debug, Clone)]
pub struct Lu {
    n: usize,
    lu: Vec<f64>,
    piv: Vec<usize>,
}

impl Lu {
    /// Factorise; `None` when the matrix is singular to working precision.
    pub fn new(a: &Mat) -> Option<Lu> {
        let n = a.rows;
        let mut lu = a.data.clone();
        let mut piv: Vec<usize> = (0..n).collect();
        let scale = a.norm_inf().max(f64::MIN_POSITIVE);
        for k in 0..n {
            let mut p = k;
            let mut best = lu[k * n + k].abs();
            for i in k + 1..n {
                let v = lu[i * n + k].abs();
                if v > best {
                    best = v;
                    p = i;
                }
            }
            if best.is_nan() || best <= scale * 1e-300 || !best.is_finite() {
                return None;
            }
            if p != k {
                for j in 0..n {
                    lu.swap(k * n + j, p * n + j);
                }
                piv.swap(k, p);
            }
            let d = lu[k * n + k];
            let (head, tail) = lu.split_at_mut((k + 1) * n);
            let pivot_row = &head[k * n + k + 1..];
            for row in tail.chunks_exact_mut(n) {
                let f = row[k] / d;
                row[k] = f;
                if f != 0.0 {
                    for (x, &p) in row[k + 1..].iter_mut().zip(pivot_row) {
                        *x -= f * p;
                    }
                }
            }
        }
        Some(Lu { n, lu, piv })
    }

    /// Solve `A x = b`.
    pub fn solve(&self, b: &[f64]) -> Vec<f64> {
        let n = self.n;
        let mut x: Vec<f64> = self.piv.iter().map(|&p| b[p]).collect();
        for i in 0..n {
            let mut s = x[i];
            for j in 0..i {
                s -= self.lu[i * n + j] * x[j];
            }
            x[i] = s;
        }
        for i in (0..n).rev() {
            let mut s = x[i];
            for j in i + 1..n {
                s -= self.lu[i * n + j] * x[j];
            }
            x[i] = s / self.lu[i * n + i];
        }
        x
    }

    /// Solve `A X = B`: each column as `solve` would (the same operations
    /// in the same order), all columns at once by row operations.
    pub fn solve_mat(&self, b: &Mat) -> Mat {
        let n = self.n;
        let w = b.cols;
        let mut x = Mat::zeros(n, w);
        if w == 0 {
            return x;
        }
        for (i, &p) in self.piv.iter().enumerate() {
            x.row_mut(i).copy_from_slice(b.row(p));
        }
        for i in 0..n {
            let (done, rest) = x.data.split_at_mut(i * w);
            let xi = &mut rest[..w];
            for (j, xj) in done.chunks_exact(w).enumerate() {
                let l = self.lu[i * n + j];
                if l == 0.0 {
                    continue;
                }
                for (s, v) in xi.iter_mut().zip(xj) {
                    *s -= l * v;
                }
            }
        }
        for i in (0..n).rev() {
            let (head, tail) = x.data.split_at_mut((i + 1) * w);
            let xi = &mut head[i * w..];
            for (j, xj) in tail.chunks_exact(w).enumerate() {
                let u = self.lu[i * n + i + 1 + j];
                if u == 0.0 {
                    continue;
                }
                for (s, v) in xi.iter_mut().zip(xj) {
                    *s -= u * v;
                }
            }
            let d = self.lu[i * n + i];
            for s in xi.iter_mut() {
                *s /= d;
            }
        }
        x
    }
}

/// Squarings in [`spectral_radius`]: the estimate is `|A^k|^(1/k)` at
/// `k = 2^SPECTRAL_SQUARINGS`.
pub const SPECTRAL_SQUARINGS: u32 = 24;

/// Spectral radius `rho(A)` (the largest eigenvalue magnitude) of a square
/// matrix, by Gelfand's formula `rho(A) = lim |A^k|^(1/k)` (any matrix norm;
/// e.g. Horn and Johnson, *Matrix Analysis*, 2nd ed., Cambridge 2013,
/// Corollary 5.6.14), evaluated at `k = 2^24` by repeated squaring with the
/// matrix normalised before each squaring, the scale kept as a logarithm:
/// `A^(2^j) = e^(c_j) B_j`.  `|A^k| = rho^k * C(k)` where `C(k)` grows at most
/// polynomially in `k` (a Jordan block) and is bounded by the eigenvector
/// basis's condition number otherwise, so the relative error of the
/// estimate is about `ln(C) / 2^24`: below 2e-6 for any `C` below 1e12
/// (a Jordan block of size 3 has `C` about `k^2`, `ln C` about 33).
/// Rounding in each squaring perturbs the normalised matrix by about
/// machine epsilon times its conditioning, which moves the estimate by the
/// same relative order, not more (each squaring renormalises).
/// `None` for a non-square or non-finite matrix; `Some(0.0)` when the powers
/// vanish (a nilpotent matrix).  Checked against matrices of known
/// eigenvalues in the tests below (a rotation-scaling pair, a Jordan block,
/// a triangular matrix, a nilpotent one).
pub fn spectral_radius(a: &Mat) -> Option<f64> {
    if a.rows != a.cols || a.data.iter().any(|v| !v.is_finite()) {
        return None;
    }
    let n = a.rows;
    if n == 0 {
        return Some(0.0);
    }
    let mut b = a.clone();
    let mut c = 0.0_f64; // A^(2^j) = e^c B
    let mut tmp = Mat::zeros(n, n);
    for _ in 0..SPECTRAL_SQUARINGS {
        let s = b.norm_inf();
        if s == 0.0 || !s.is_finite() {
            return if s == 0.0 { Some(0.0) } else { None };
        }
        for v in b.data.iter_mut() {
            *v /= s;
        }
        c += s.ln();
        b.mul_into(&b.clone(), &mut tmp);
        std::mem::swap(&mut b, &mut tmp);
        c *= 2.0;
    }
    let s = b.norm_inf();
    if s == 0.0 {
        return Some(0.0);
    }
    let k = 2.0_f64.powi(SPECTRAL_SQUARINGS as i32);
    Some(((c + s.ln()) / k).exp())
}

/// Matrix exponential `exp(A)` by scaling and squaring with the degree-13 Padé
/// approximant (N. J. Higham, "The scaling and squaring method for the matrix
/// exponential revisited", SIAM J. Matrix Anal. Appl. 26(4), 2005, Algorithm
/// 2.3; the degree-13 coefficients and theta_13 = 5.37 are from that paper's
/// Table 2.3 / equation 2.7).  Lower degrees are used for small norms.
///
/// Returns `None` if the matrix contains non-finite values.
pub fn expm(a: &Mat) -> Option<Mat> {
    let n = a.rows;
    if a.data.iter().any(|x| !x.is_finite()) {
        return None;
    }
    let norm = a.norm_1();
    const B13: [f64; 14] = [
        64764752532480000.0,
        32382376266240000.0,
        7771770303897600.0,
        1187353796428800.0,
        129060195264000.0,
        10559470521600.0,
        670442572800.0,
        33522128640.0,
        1323241920.0,
        40840800.0,
        960960.0,
        16380.0,
        182.0,
        1.0,
    ];
    let ident = Mat::identity(n);
    // Low-degree Padé for small norms (theta values from Higham 2005, Table 2.3).
    let low: [(usize, f64); 4] = [
        (3, 1.495585217958292e-2),
        (5, 2.539_398_330_063_23e-1),
        (7, 9.504178996162932e-1),
        (9, 2.097847961257068e0),
    ];
    for (m, theta) in low {
        if norm <= theta {
            return pade_low(a, m, &ident);
        }
    }
    let theta13 = 5.371920351148152;
    let s = if norm > theta13 {
        ((norm / theta13).log2().ceil()).max(0.0) as i32
    } else {
        0
    };
    if s > 1000 {
        return None;
    }
    let a = a.scale(0.5f64.powi(s));
    let a2 = a.mul(&a);
    let a4 = a2.mul(&a2);
    let a6 = a4.mul(&a2);
    let b = &B13;
    let lin = |m: &Mat, c: [f64; 3], mats: [&Mat; 3]| -> Mat {
        let mut out = m.clone();
        for (ci, mi) in c.iter().zip(mats) {
            for (o, x) in out.data.iter_mut().zip(&mi.data) {
                *o += ci * x;
            }
        }
        out
    };
    // U = A [A6 (b13 A6 + b11 A4 + b9 A2) + b7 A6 + b5 A4 + b3 A2 + b1 I]
    let inner_u = lin(&Mat::zeros(n, n), [b[13], b[11], b[9]], [&a6, &a4, &a2]);
    let u1 = a6.mul(&inner_u);
    let u2 = lin(&u1, [b[7], b[5], b[3]], [&a6, &a4, &a2]);
    let u = a.mul(&u2.add(&ident.scale(b[1])));
    // V = A6 (b12 A6 + b10 A4 + b8 A2) + b6 A6 + b4 A4 + b2 A2 + b0 I
    let inner_v = lin(&Mat::zeros(n, n), [b[12], b[10], b[8]], [&a6, &a4, &a2]);
    let v1 = a6.mul(&inner_v);
    let v = lin(&v1, [b[6], b[4], b[2]], [&a6, &a4, &a2]).add(&ident.scale(b[0]));
    let mut r = pade_solve(&u, &v)?;
    for _ in 0..s {
        r = r.mul(&r);
    }
    Some(r)
}

fn pade_low(a: &Mat, m: usize, ident: &Mat) -> Option<Mat> {
    let c: &[f64] = match m {
        3 => &[120.0, 60.0, 12.0, 1.0],
        5 => &[30240.0, 15120.0, 3360.0, 420.0, 30.0, 1.0],
        7 => &[
            17297280.0, 8648640.0, 1995840.0, 277200.0, 25200.0, 1512.0, 56.0, 1.0,
        ],
        _ => &[
            17643225600.0,
            8821612800.0,
            2075673600.0,
            302702400.0,
            30270240.0,
            2162160.0,
            110880.0,
            3960.0,
            90.0,
            1.0,
        ],
    };
    let n = a.rows;
    let a2 = a.mul(a);
    let mut pw = ident.clone();
    let mut usum = Mat::zeros(n, n);
    let mut vsum = Mat::zeros(n, n);
    let mut k = 0;
    while k <= m {
        // pw = A^(k) for even k
        for (o, x) in vsum.data.iter_mut().zip(&pw.data) {
            *o += c[k] * x;
        }
        if k < m {
            for (o, x) in usum.data.iter_mut().zip(&pw.data) {
                *o += c[k + 1] * x;
            }
        }
        pw = pw.mul(&a2);
        k += 2;
    }
    let u = a.mul(&usum);
    pade_solve(&u, &vsum)
}

/// `(V - U)^{-1} (V + U)`.
fn pade_solve(u: &Mat, v: &Mat) -> Option<Mat> {
    let p = v.add(u);
    let q = v.add(&u.scale(-1.0));
    let lu = Lu::new(&q)?;
    let r = lu.solve_mat(&p);
    if r.data.iter().all(|x| x.is_finite()) {
        Some(r)
    } else {
        None
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// `spectral_radius` against matrices whose eigenvalues are known in
    /// closed form: a rotation scaled by r (eigenvalues r e^(+-i theta)),
    /// embedded with a smaller real one; a Jordan block (eigenvalue 0.9,
    /// multiplicity 3, where power iteration converges only as 1/k); an
    /// upper triangular matrix (eigenvalues on its diagonal) with a large
    /// off-diagonal coupling; a nilpotent matrix (radius 0); the identity.
    #[test]
    fn spectral_radius_of_known_matrices() {
        for (r, th) in [(1.07, 0.3), (0.93, 2.9), (1.0, 1.0)] {
            let mut m = Mat::zeros(3, 3);
            m.set(0, 0, r * f64::cos(th));
            m.set(0, 1, -r * f64::sin(th));
            m.set(1, 0, r * f64::sin(th));
            m.set(1, 1, r * f64::cos(th));
            m.set(2, 2, 0.5);
            m.set(2, 0, 3.0);
            let rho = spectral_radius(&m).unwrap();
            assert!((rho - r).abs() < 1e-6 * r, "r {r}: {rho}");
        }
        let mut j = Mat::zeros(3, 3);
        for i in 0..3 {
            j.set(i, i, 0.9);
        }
        j.set(0, 1, 1.0);
        j.set(1, 2, 1.0);
        let rho = spectral_radius(&j).unwrap();
        assert!((rho - 0.9).abs() < 3e-6, "Jordan: {rho}");
        let mut t = Mat::zeros(4, 4);
        for (i, d) in [0.2, -1.3, 0.7, 1.05].iter().enumerate() {
            t.set(i, i, *d);
            for k in i + 1..4 {
                t.set(i, k, 50.0);
            }
        }
        let rho = spectral_radius(&t).unwrap();
        assert!((rho - 1.3).abs() < 3e-6, "triangular: {rho}");
        let mut nil = Mat::zeros(3, 3);
        nil.set(0, 1, 2.0);
        nil.set(1, 2, 5.0);
        assert_eq!(spectral_radius(&nil), Some(0.0));
        let rho = spectral_radius(&Mat::identity(5)).unwrap();
        assert!((rho - 1.0).abs() < 1e-12, "identity: {rho}");
        let mut bad = Mat::identity(2);
        bad.set(0, 1, f64::NAN);
        assert_eq!(spectral_radius(&bad), None);
    }

    #[test]
    fn expm_of_rotation_and_decay() {
        // exp([[0, -w],[w, 0]] t) is a rotation by w t: textbook identity.
        for &t in &[1e-3, 0.3, 2.0, 40.0] {
            let w = 2.0;
            let a = Mat {
                rows: 2,
                cols: 2,
                data: vec![0.0, -w * t, w * t, 0.0],
            };
            let e = expm(&a).unwrap();
            assert!((e.at(0, 0) - (w * t).cos()).abs() < 1e-12 * (1.0 + t));
            assert!((e.at(1, 0) - (w * t).sin()).abs() < 1e-12 * (1.0 + t));
        }
        // Upper-triangular 2x2 with distinct eigenvalues: closed form
        // exp([[a, b],[0, c]]) = [[e^a, b (e^a - e^c)/(a - c)], [0, e^c]].
        let (a, b, c) = (-3.0, 5.0, -0.5);
        let m = Mat {
            rows: 2,
            cols: 2,
            data: vec![a, b, 0.0, c],
        };
        let e = expm(&m).unwrap();
        let off = b * (a.exp() - c.exp()) / (a - c);
        assert!((e.at(0, 1) - off).abs() < 1e-13);
        assert!((e.at(1, 1) - c.exp()).abs() < 1e-14);
    }

    #[test]
    fn expm_stiff_decay_keeps_slow_mode() {
        // A fast mode at -1e9 coupled to a slow one at -1: the slow entry must
        // survive the scaling and squaring (closed form as above).
        let (a, b, c) = (-1e9, 1e9, -1.0);
        let m = Mat {
            rows: 2,
            cols: 2,
            data: vec![c, 0.0, b, a],
        };
        let e = expm(&m.scale(0.01)).unwrap();
        let exact = b * ((c * 0.01).exp() - (a * 0.01).exp()) / (c - a);
        assert!(
            (e.at(1, 0) - exact).abs() < 1e-9,
            "{} vs {exact}",
            e.at(1, 0)
        );
        let d00 = e.at(0, 0) - (-0.01f64).exp();
        assert!(d00.abs() < 1e-9, "{d00}"); // rounding over about 21 squarings
    }

    #[test]
    fn lu_solves() {
        let a = Mat {
            rows: 3,
            cols: 3,
            data: vec![0.0, 2.0, 1.0, 1.0, 1.0, 0.0, 3.0, 0.0, 1.0],
        };
        let lu = Lu::new(&a).unwrap();
        let x = lu.solve(&[5.0, 3.0, 6.0]);
        let b = a.mul_vec(&x);
        for (bi, ei) in b.iter().zip([5.0, 3.0, 6.0]) {
            assert!((bi - ei).abs() < 1e-12);
        }
        let sing = Mat::zeros(2, 2);
        assert!(Lu::new(&sing).is_none());
    }
}
