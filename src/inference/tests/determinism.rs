//! Determinism and Monte Carlo stability of a full study (12 dyads × 36 cells), and the
//! timing of one call at the size the stage is built for.

use std::time::Instant;

use super::super::*;
use super::common;
use rand::RngExt;

const D: usize = 12;

/// 2 conditions × 2 chromophores × 3 bands × 3 ROIs = 36 cells of the shared-member model,
/// a coupling on the "talk" condition, a few missing values.
fn study(seed: u64) -> Vec<CellMatrix> {
    let mut rng = common::rng(seed);
    let mut cells = Vec::new();
    for condition in ["talk", "rest"] {
        for chromophore in ["hbo", "hbr"] {
            for band in ["low", "mid", "high"] {
                for roi in ["pfc", "tpj", "ifg"] {
                    let coupling = if condition == "talk" && roi == "pfc" {
                        0.8
                    } else {
                        0.0
                    };
                    let mut values = common::null_matrix(D, coupling, &mut rng);
                    if rng.random::<f64>() < 0.3 {
                        let i = rng.random_range(0..D * D);
                        values[i] = f64::NAN;
                    }
                    cells.push(CellMatrix {
                        key: CellKey {
                            condition: condition.into(),
                            chromophore: chromophore.into(),
                            band: band.into(),
                            roi: roi.into(),
                        },
                        values: common::square(values),
                    });
                }
            }
        }
    }
    cells
}

fn cfg(seed: u64, correction: Correction) -> InferenceConfig {
    InferenceConfig {
        alternative: Alternative::Greater,
        alpha: 0.05,
        correction,
        family: vec![FamilyAxis::Band, FamilyAxis::Roi],
        bootstrap: 2000,
        sign_flips: 10_000,
        seed,
        contrasts: vec![ContrastSpec {
            name: "talk-vs-rest".into(),
            condition_a: "talk".into(),
            condition_b: "rest".into(),
        }],
    }
}

fn in_pool<T: Send>(threads: usize, f: impl FnOnce() -> T + Send) -> T {
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .unwrap()
        .install(f)
}

#[test]
fn same_seed_gives_identical_output_on_one_and_two_threads() {
    let layout = common::roles_layout(D);
    let cells = study(1);
    let pairs = common::derangement_draws(D, 5000, &mut common::rng(2));
    let draws = Draws {
        pairs: &pairs,
        n_dyads: D,
        exact: false,
    };
    for correction in [Correction::MaxStat, Correction::Holm] {
        let c = cfg(77, correction);
        let one = in_pool(1, || infer(&layout, &cells, &draws, &c));
        let two = in_pool(2, || infer(&layout, &cells, &draws, &c));
        // Debug prints every float in shortest round-trip form, so equal text is equal bits
        // (NaN aside, which prints alike).
        assert_eq!(format!("{one:?}"), format!("{two:?}"), "{correction}");
        assert_eq!(one.results.len(), 72);
        assert_eq!(one.contrasts.len(), 18);
        assert_eq!(one.dyads.len(), 36 * D);
    }
}

#[test]
fn another_seed_moves_p_values_only_within_monte_carlo_error() {
    let layout = common::roles_layout(D);
    let cells = study(1);
    let k = 5000;
    let pa = common::derangement_draws(D, k, &mut common::rng(2));
    let pb = common::derangement_draws(D, k, &mut common::rng(3));
    let a = infer(
        &layout,
        &cells,
        &Draws {
            pairs: &pa,
            n_dyads: D,
            exact: false,
        },
        &cfg(77, Correction::MaxStat),
    );
    let b = infer(
        &layout,
        &cells,
        &Draws {
            pairs: &pb,
            n_dyads: D,
            exact: false,
        },
        &cfg(78, Correction::MaxStat),
    );
    let mut differs = 0;
    let mut worst = 0.0f64;
    let mut check = |x: f64, y: f64, n: usize, what: &str| {
        if x.is_nan() && y.is_nan() {
            return;
        }
        // Two independent Monte Carlo estimates of the same p: sd of the difference is
        // sqrt(2 p (1 - p) / n); allow 5 sd plus the 1/(n+1) granularity.
        let p = 0.5 * (x + y);
        let tol = 5.0 * (2.0 * p * (1.0 - p) / n as f64).sqrt() + 2.0 / (n as f64 + 1.0);
        worst = worst.max((x - y).abs() / tol);
        assert!((x - y).abs() <= tol, "{what}: {x} vs {y} (tol {tol})");
        if x != y {
            differs += 1;
        }
    };
    for (ra, rb) in a.results.iter().zip(&b.results) {
        assert_eq!(ra.key, rb.key);
        match ra.test {
            TestKind::Repairing => {
                check(ra.p, rb.p, k, "repairing p");
                check(ra.p_adj, rb.p_adj, k, "repairing maxstat p");
                assert_eq!(ra.statistic, rb.statistic, "T does not depend on the draws");
            }
            TestKind::DyadContrast => {
                assert_eq!(ra.p, rb.p, "the t-test p does not depend on the seed");
                check(ra.p_signflip, rb.p_signflip, 10_000, "sign-flip p");
                check(ra.p_adj, rb.p_adj, 10_000, "sign-flip maxstat p");
            }
        }
    }
    for (ca, cb) in a.contrasts.iter().zip(&b.contrasts) {
        check(ca.p_signflip, cb.p_signflip, 10_000, "contrast sign-flip p");
    }
    eprintln!("seed change: {differs} p-values moved, worst |diff| / tolerance = {worst:.3}");
    assert!(
        differs > 0,
        "a new seed must change some Monte Carlo p-value"
    );
}

#[test]
fn twelve_dyads_thirty_six_cells_ten_thousand_draws_complete_and_print_their_time() {
    let layout = common::roles_layout(D);
    let cells = study(4);
    let pairs = common::derangement_draws(D, 10_000, &mut common::rng(5));
    let draws = Draws {
        pairs: &pairs,
        n_dyads: D,
        exact: false,
    };
    for correction in [Correction::MaxStat, Correction::Holm] {
        let c = cfg(9, correction);
        let start = Instant::now();
        let out = infer(&layout, &cells, &draws, &c);
        let secs = start.elapsed().as_secs_f64();
        eprintln!(
            "infer: {D} dyads x {} cells x 10^4 draws, bootstrap 2000, sign flips 10^4, {correction}: {secs:.3} s ({} threads)",
            cells.len(),
            rayon::current_num_threads()
        );
        assert_eq!(out.nulls[0].null.len(), 10_000);
    }
}
