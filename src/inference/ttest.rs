//! Student's one-sample and paired t-tests (Student 1908) with the t confidence interval for
//! the mean and Cohen's d_z. Pure functions of a sample; knows nothing of cells or dyads.

use statrs::distribution::{ContinuousCDF, StudentsT};

use super::types::Alternative;

/// Outcome of a one-sample t-test of mean zero.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TTest {
    pub n: usize,
    pub mean: f64,
    pub sd: f64,
    pub t: f64,
    pub df: f64,
    pub p: f64,
    /// Cohen's d_z = mean / sd.
    pub dz: f64,
    /// Two-sided (1 − alpha) t interval for the mean, whatever the alternative: the interval
    /// describes the effect, the alternative only directs the test.
    pub ci_low: f64,
    pub ci_high: f64,
}

impl TTest {
    fn undefined(n: usize) -> Self {
        TTest {
            n,
            mean: f64::NAN,
            sd: f64::NAN,
            t: f64::NAN,
            df: f64::NAN,
            p: f64::NAN,
            dz: f64::NAN,
            ci_low: f64::NAN,
            ci_high: f64::NAN,
        }
    }
}

/// Upper-tail probability of Student's t with `df` degrees of freedom for a statistic that
/// may be infinite (zero-variance samples) or NaN.
pub fn t_sf(t: f64, df: f64) -> f64 {
    if t.is_nan() || df.is_nan() || df <= 0.0 {
        return f64::NAN;
    }
    if t == f64::INFINITY {
        return 0.0;
    }
    if t == f64::NEG_INFINITY {
        return 1.0;
    }
    match StudentsT::new(0.0, 1.0, df) {
        Ok(dist) => dist.sf(t),
        Err(_) => f64::NAN,
    }
}

/// p-value of a t statistic under the alternative.
pub fn t_p(t: f64, df: f64, alternative: Alternative) -> f64 {
    match alternative {
        Alternative::Greater => t_sf(t, df),
        // `f64::min` would turn NaN into 1, so it is applied to finite values only.
        Alternative::TwoSided => {
            let p = 2.0 * t_sf(t.abs(), df);
            if p.is_nan() { p } else { p.min(1.0) }
        }
    }
}

/// One-sample t-test of H0: mean = 0. Needs n ≥ 2; below that every field but `n` is NaN.
pub fn one_sample(x: &[f64], alternative: Alternative, alpha: f64) -> TTest {
    let n = x.len();
    if n < 2 {
        return TTest::undefined(n);
    }
    let mean = super::stats::mean(x);
    let sd = super::stats::sample_sd(x, mean);
    let df = (n - 1) as f64;
    let se = sd / (n as f64).sqrt();
    let t = mean / se;
    let half = match StudentsT::new(0.0, 1.0, df) {
        Ok(dist) if alpha > 0.0 && alpha < 1.0 => dist.inverse_cdf(1.0 - alpha / 2.0) * se,
        _ => f64::NAN,
    };
    TTest {
        n,
        mean,
        sd,
        t,
        df,
        p: t_p(t, df, alternative),
        dz: mean / sd,
        ci_low: mean - half,
        ci_high: mean + half,
    }
}

/// Paired t-test of H0: mean(a − b) = 0, i.e. the one-sample test on the differences.
pub fn paired(a: &[f64], b: &[f64], alternative: Alternative, alpha: f64) -> TTest {
    assert_eq!(
        a.len(),
        b.len(),
        "paired t-test needs samples of equal length"
    );
    let diff: Vec<f64> = a.iter().zip(b).map(|(x, y)| x - y).collect();
    one_sample(&diff, alternative, alpha)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn t_of_a_hand_computed_sample() {
        // x = 1,2,3,4,5: mean 3, sd sqrt(2.5), t = 3 / (sqrt(2.5)/sqrt(5)) = 3 * sqrt(2).
        let r = one_sample(&[1.0, 2.0, 3.0, 4.0, 5.0], Alternative::TwoSided, 0.05);
        assert!((r.t - 3.0 * 2f64.sqrt()).abs() < 1e-12);
        assert_eq!(r.df, 4.0);
        assert!((r.dz - 3.0 / 2.5f64.sqrt()).abs() < 1e-12);
    }

    #[test]
    fn p_matches_printed_t_table() {
        // Printed t tables: t(0.975, 10) = 2.228, t(0.95, 5) = 2.015 (three decimals).
        let two = t_p(2.228, 10.0, Alternative::TwoSided);
        assert!((two - 0.05).abs() < 2e-4, "{two}");
        let one = t_p(2.015, 5.0, Alternative::Greater);
        assert!((one - 0.05).abs() < 2e-4, "{one}");
    }

    #[test]
    fn interval_uses_printed_critical_value() {
        // n = 11 (df 10), sd such that se = 1: the 95 % interval half-width is t(0.975,10).
        let x: Vec<f64> = (0..11).map(|i| i as f64).collect();
        let r = one_sample(&x, Alternative::Greater, 0.05);
        let se = r.sd / 11f64.sqrt();
        let half = (r.ci_high - r.ci_low) / 2.0 / se;
        assert!((half - 2.228).abs() < 1e-3, "{half}");
    }

    #[test]
    fn degenerate_samples_do_not_panic() {
        let r = one_sample(&[1.0], Alternative::Greater, 0.05);
        assert!(r.t.is_nan() && r.p.is_nan());
        let r = one_sample(&[0.5, 0.5, 0.5], Alternative::Greater, 0.05);
        assert_eq!(r.t, f64::INFINITY);
        assert_eq!(r.p, 0.0);
        let r = one_sample(&[0.0, 0.0, 0.0], Alternative::TwoSided, 0.05);
        assert!(r.t.is_nan() && r.p.is_nan());
    }
}
