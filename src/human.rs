//! Numbers printed for people: rounded to what the data supports, never a binary-float tail
//! such as `66.00000000000001`. Machine-readable files keep the raw values; only messages,
//! summaries and the methods paragraph go through here.

/// Decimals needed to write multiples of `step` exactly (0.25 → 2, 0.1 → 1, 1 → 0), at most 3
/// (a millisecond), for a step such as 1/3 s that has no finite decimal form.
pub fn decimals_for(step: f64) -> usize {
    if !(step.is_finite() && step > 0.0) {
        return 3;
    }
    (0..=3)
        .find(|&d| {
            let scaled = step * 10f64.powi(d as i32);
            (scaled - scaled.round()).abs() < 1e-6 * scaled.max(1.0)
        })
        .unwrap_or(3)
}

/// `x` with at most `decimals` decimals and no trailing zeros (`66`, `66.5`, `0.25`).
pub fn trimmed(x: f64, decimals: usize) -> String {
    if !x.is_finite() {
        return format!("{x}");
    }
    let s = format!("{x:.decimals$}");
    let s = if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    };
    if s == "-0" { "0".to_string() } else { s }
}

/// A time or duration in seconds, to the precision of the sampling interval `dt`.
pub fn seconds_at(x: f64, dt: f64) -> String {
    trimmed(x, decimals_for(dt))
}

/// Seconds as a paper writes them: to a hundredth of a second at most (`60`, `28.5`, `31.25`).
pub fn seconds(x: f64) -> String {
    trimmed(x, 2)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sampling_intervals_give_their_decimals() {
        assert_eq!(decimals_for(0.25), 2);
        assert_eq!(decimals_for(0.1), 1);
        assert_eq!(decimals_for(0.5000000000001), 1);
        assert_eq!(decimals_for(1.0), 0);
        assert_eq!(decimals_for(1.0 / 3.0), 3);
        assert_eq!(decimals_for(0.0078125), 3);
    }

    #[test]
    fn float_tails_are_gone() {
        // 0.1 + 0.2 and 22 × 3 at 1/3-second steps are the classic binary-float tails.
        assert_eq!(seconds_at(66.00000000000001, 0.25), "66");
        assert_eq!(seconds_at(0.1 + 0.2, 0.1), "0.3");
        assert_eq!(seconds_at(198.0 * (1.0 / 3.0), 1.0 / 3.0), "66");
        assert_eq!(seconds_at(99.75, 0.25), "99.75");
        assert_eq!(seconds(60.000000000000014), "60");
        assert_eq!(seconds(31.25), "31.25");
        assert_eq!(seconds(28.5), "28.5");
        assert_eq!(seconds(-0.0001), "0");
    }
}
