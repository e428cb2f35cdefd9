//! Radix-2 fast Fourier transform (iterative Cooley-Tukey; e.g. Press et al.,
//! *Numerical Recipes*, 3rd ed., sec. 12.2), used for the harmonic integrals
//! over the uniform part of the grid.  Checked against a direct sum below.

/// In-place forward DFT `X[n] = sum_k x[k] exp(-i 2 pi n k / N)` of complex
/// data given as (re, im) pairs; `N` must be a power of two.
pub fn fft(x: &mut [(f64, f64)]) {
    let n = x.len();
    if n <= 1 {
        return;
    }
    debug_assert!(n.is_power_of_two());
    // Bit-reversal permutation.
    let mut j = 0usize;
    for i in 1..n {
        let mut bit = n >> 1;
        while j & bit != 0 {
            j ^= bit;
            bit >>= 1;
        }
        j |= bit;
        if i < j {
            x.swap(i, j);
        }
    }
    let mut len = 2;
    while len <= n {
        let ang = -2.0 * std::f64::consts::PI / len as f64;
        let (ws, wc) = ang.sin_cos();
        for start in (0..n).step_by(len) {
            let (mut cr, mut ci) = (1.0f64, 0.0f64);
            for k in 0..len / 2 {
                let (ar, ai) = x[start + k];
                let (br, bi) = x[start + k + len / 2];
                let (tr, ti) = (br * cr - bi * ci, br * ci + bi * cr);
                x[start + k] = (ar + tr, ai + ti);
                x[start + k + len / 2] = (ar - tr, ai - ti);
                let nc = cr * wc - ci * ws;
                ci = cr * ws + ci * wc;
                cr = nc;
            }
        }
        len <<= 1;
    }
}

/// Complex spectrum bins as (re, im).
pub type Bins = Vec<(f64, f64)>;

/// DFTs of two real sequences at once (packed as one complex sequence).
/// Returns (X_a, X_b) for bins 0..=h_max.
pub fn fft_two_real(a: &[f64], b: &[f64], h_max: usize) -> (Bins, Bins) {
    let n = a.len();
    let mut z: Vec<(f64, f64)> = a.iter().zip(b).map(|(&x, &y)| (x, y)).collect();
    fft(&mut z);
    let mut xa = Vec::with_capacity(h_max + 1);
    let mut xb = Vec::with_capacity(h_max + 1);
    for h in 0..=h_max.min(n - 1) {
        let (zr, zi) = z[h];
        let (cr, ci) = z[(n - h) % n];
        // X_a = (Z[h] + conj Z[N-h]) / 2, X_b = (Z[h] - conj Z[N-h]) / (2i).
        xa.push(((zr + cr) / 2.0, (zi - ci) / 2.0));
        xb.push(((zi + ci) / 2.0, -(zr - cr) / 2.0));
    }
    (xa, xb)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fft_matches_direct_sum() {
        let n = 64;
        let a: Vec<f64> = (0..n)
            .map(|k| ((k * 7 % 13) as f64).sin() + 0.3 * k as f64)
            .collect();
        let b: Vec<f64> = (0..n).map(|k| ((k * k) as f64 * 0.1).cos()).collect();
        let (xa, xb) = fft_two_real(&a, &b, 20);
        for h in 0..=20 {
            for (seq, x) in [(&a, xa[h]), (&b, xb[h])] {
                let (mut re, mut im) = (0.0, 0.0);
                for (k, v) in seq.iter().enumerate() {
                    let th = -2.0 * std::f64::consts::PI * (h * k) as f64 / n as f64;
                    re += v * th.cos();
                    im += v * th.sin();
                }
                assert!((re - x.0).abs() < 1e-10 && (im - x.1).abs() < 1e-10, "h{h}");
            }
        }
    }
}
