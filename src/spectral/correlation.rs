//! Pearson product-moment correlation and the Fisher z transform (Fisher 1915, 1921), the
//! time-domain synchrony measure. Owns these formulas only.

use super::check_len;

/// Largest |r| passed to `atanh`, so perfectly (anti)correlated pairs give a large finite z
/// instead of ±∞ that would poison means across pairs.
pub const FISHER_R_LIMIT: f64 = 1.0 - 1e-12;

/// Pearson r by the two-pass formula `Σdx·dy / sqrt(Σdx²·Σdy²)` (deviations from the means),
/// clamped to `[−1, 1]`. NaN if either series is constant or shorter than two samples: r is
/// undefined there and callers must see it.
pub fn pearson(x: &[f64], y: &[f64]) -> f64 {
    check_len("pearson y", x.len(), y.len());
    let n = x.len();
    if n < 2 || x.iter().all(|v| *v == x[0]) || y.iter().all(|v| *v == y[0]) {
        return f64::NAN;
    }
    let mx = x.iter().sum::<f64>() / n as f64;
    let my = y.iter().sum::<f64>() / n as f64;
    let (mut sxy, mut sxx, mut syy) = (0.0, 0.0, 0.0);
    for (a, b) in x.iter().zip(y) {
        let (dx, dy) = (a - mx, b - my);
        sxy += dx * dy;
        sxx += dx * dx;
        syy += dy * dy;
    }
    if sxx == 0.0 || syy == 0.0 {
        return f64::NAN;
    }
    (sxy / (sxx.sqrt() * syy.sqrt())).clamp(-1.0, 1.0)
}

/// `z = atanh(r)` with |r| clamped at [`FISHER_R_LIMIT`]; NaN stays NaN. Evaluated as
/// `sign(r)·atanh(|r|)`: the standard `atanh` loses digits for r near −1, and z must be odd in
/// r so that sign flips of r never bias a mean of z.
pub fn fisher_z(r: f64) -> f64 {
    r.abs().clamp(0.0, FISHER_R_LIMIT).atanh().copysign(r)
}

/// `r = tanh(z)`, the inverse of [`fisher_z`] inside the clamp.
pub fn fisher_z_inv(z: f64) -> f64 {
    z.tanh()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Worked by hand: x = 1..5, y = (2,4,5,4,5): Σdxdy = 6, Σdx² = 10, Σdy² = 6,
    /// r = 6/√60 = 0.774596669241483.
    #[test]
    fn pearson_small_example_by_hand() {
        let r = pearson(&[1.0, 2.0, 3.0, 4.0, 5.0], &[2.0, 4.0, 5.0, 4.0, 5.0]);
        assert!((r - 6.0 / 60f64.sqrt()).abs() < 1e-15, "{r}");
        assert!((r - 0.774_596_669_241_483).abs() < 1e-14);
    }

    /// Definition: r is invariant to affine maps with positive slope and flips sign with
    /// negative slope; a perfect line gives exactly ±1 after clamping.
    #[test]
    fn pearson_affine_and_extremes() {
        let x = [0.3, -1.2, 4.4, 2.0, 0.0, 7.5];
        let y: Vec<f64> = x.iter().map(|v| -3.0 * v + 1.0).collect();
        assert!((pearson(&x, &y) + 1.0).abs() < 1e-15);
        assert!(pearson(&x, &x) <= 1.0);
        assert!(pearson(&[1.0; 4], &[1.0, 2.0, 3.0, 4.0]).is_nan());
        assert!(pearson(&[1.0, 0.0, 3.0], &[0.1; 3]).is_nan());
        assert!(pearson(&[1.0], &[2.0]).is_nan());
    }

    /// atanh(0.5) = ½·ln 3 (closed form); round trip; the clamp keeps z finite at |r| = 1:
    /// ½·ln((1+r)/(1−r)) at the double nearest 1 − 1e−12 is 14.16209520922640 (50-digit
    /// decimal evaluation with Python's `decimal` module); z is odd in r.
    #[test]
    fn fisher_values() {
        assert!((fisher_z(0.5) - 0.5 * 3f64.ln()).abs() < 1e-15);
        assert!((fisher_z_inv(fisher_z(-0.37)) + 0.37).abs() < 1e-15);
        let z1 = fisher_z(1.0);
        assert!((z1 - 14.162_095_209_226_4).abs() < 1e-12, "{z1}");
        assert_eq!(fisher_z(-1.0), -z1);
        assert!(fisher_z(f64::NAN).is_nan());
        assert_eq!(fisher_z(-0.999_9), -fisher_z(0.999_9));
        assert_eq!(fisher_z(0.0), 0.0);
    }

    #[test]
    #[should_panic(expected = "pearson y has length 2, expected 3")]
    fn length_mismatch_panics() {
        let _ = pearson(&[1.0, 2.0, 3.0], &[1.0, 2.0]);
    }
}
