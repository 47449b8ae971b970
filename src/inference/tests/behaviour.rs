//! Behaviour of `infer` as a whole on small hand-built studies: row order, untestable
//! cells and their exclusion from families, condition contrasts against brute force, and
//! input errors. Expected values are computed here by hand or by enumeration.

use super::super::*;
use super::common;
use rand::RngExt;

fn cell(condition: &str, roi: &str, values: Vec<f64>) -> CellMatrix {
    CellMatrix {
        key: common::key(condition, "theta", roi),
        values: common::square(values),
    }
}

fn random_cells(d: usize, names: &[(&str, &str)], seed: u64) -> Vec<CellMatrix> {
    let mut rng = common::rng(seed);
    names
        .iter()
        .map(|(c, r)| cell(c, r, common::null_matrix(d, 0.5, &mut rng)))
        .collect()
}

#[test]
fn rows_follow_input_order_repairing_then_dyad_contrast() {
    let d = 5;
    let layout = common::roles_layout(d);
    let cells = random_cells(d, &[("talk", "pfc"), ("talk", "tpj"), ("rest", "pfc")], 1);
    let pairs = common::derangement_draws(d, 200, &mut common::rng(2));
    let mut cfg = common::config(Correction::Holm, vec![FamilyAxis::Roi]);
    cfg.sign_flips = 100;
    let out = infer(
        &layout,
        &cells,
        &Draws {
            pairs: &pairs,
            n_dyads: d,
            exact: false,
        },
        &cfg,
    );
    let order: Vec<(String, TestKind)> = out
        .results
        .iter()
        .map(|r| (r.key.roi.clone() + &r.key.condition, r.test))
        .collect();
    assert_eq!(
        order,
        vec![
            ("pfctalk".into(), TestKind::Repairing),
            ("pfctalk".into(), TestKind::DyadContrast),
            ("tpjtalk".into(), TestKind::Repairing),
            ("tpjtalk".into(), TestKind::DyadContrast),
            ("pfcrest".into(), TestKind::Repairing),
            ("pfcrest".into(), TestKind::DyadContrast),
        ]
    );
    assert_eq!(out.dyads.len(), 3 * d);
    assert_eq!(out.dyads[d].key.roi, "tpj");
    assert_eq!(out.dyads[1].dyad, "dy01");
    assert_eq!(out.nulls.len(), 3);
    assert!(out.warnings.is_empty(), "{:?}", out.warnings);
}

#[test]
fn untestable_cell_is_flagged_and_left_out_of_its_family() {
    let d = 5;
    let layout = common::roles_layout(d);
    let mut cells = random_cells(d, &[("talk", "pfc"), ("talk", "tpj"), ("talk", "ifg")], 3);
    // Only two real values left in the ifg cell.
    for i in 0..3 {
        cells[2].values[[i, i]] = f64::NAN;
    }
    let pairs = common::derangement_draws(d, 300, &mut common::rng(4));
    let draws = Draws {
        pairs: &pairs,
        n_dyads: d,
        exact: false,
    };
    let mut cfg = common::config(Correction::Bonferroni, vec![FamilyAxis::Roi]);
    cfg.sign_flips = 64;
    let out = infer(&layout, &cells, &draws, &cfg);
    let rep: Vec<&ResultRow> = out
        .results
        .iter()
        .filter(|r| r.test == TestKind::Repairing)
        .collect();
    let bad = rep[2];
    assert!(!bad.testable && !bad.significant);
    assert!(bad.p.is_nan() && bad.p_adj.is_nan() && bad.statistic.is_nan() && bad.ci_low.is_nan());
    assert_eq!(bad.n_dyads, 2);
    assert!(
        out.warnings
            .iter()
            .any(|w| w.contains("re-pairing") && w.contains("roi=ifg")),
        "{:?}",
        out.warnings
    );
    assert!(
        out.warnings
            .iter()
            .any(|w| w.contains("dyad contrast") && w.contains("roi=ifg"))
    );
    // Bonferroni over the two testable members only: p_adj = min(1, 2 p).
    for r in &rep[..2] {
        assert_eq!(r.p_adj, (2.0 * r.p).min(1.0));
    }
    let dc: Vec<&ResultRow> = out
        .results
        .iter()
        .filter(|r| r.test == TestKind::DyadContrast)
        .collect();
    for r in &dc[..2] {
        assert_eq!(r.p_adj, (2.0 * r.p).min(1.0));
    }
    assert!(dc[2].p_adj.is_nan() && !dc[2].testable);
}

#[test]
fn maxstat_of_a_singleton_family_is_the_plain_permutation_p() {
    // Westfall & Young single step with one member: the maximum over the family is the
    // member itself, and standardising is monotone, so p_adj = p.
    let d = 6;
    let layout = common::roles_layout(d);
    let cells = random_cells(d, &[("talk", "pfc"), ("talk", "tpj")], 5);
    let pairs = common::derangement_draws(d, 500, &mut common::rng(6));
    let draws = Draws {
        pairs: &pairs,
        n_dyads: d,
        exact: false,
    };
    let single = infer(
        &layout,
        &cells,
        &draws,
        &common::config(Correction::MaxStat, vec![]),
    );
    let pooled = infer(
        &layout,
        &cells,
        &draws,
        &common::config(Correction::MaxStat, vec![FamilyAxis::Roi]),
    );
    for (s, p) in single.results.iter().zip(&pooled.results) {
        if s.test == TestKind::Repairing {
            assert_eq!(s.p_adj, s.p);
            assert!(p.p_adj >= p.p);
        }
    }
}

#[test]
fn condition_contrast_matches_brute_force_sign_flips() {
    let d = 5;
    let layout = common::roles_layout(d);
    let cells = random_cells(d, &[("talk", "pfc"), ("rest", "pfc"), ("talk", "tpj")], 7);
    let pairs = common::derangement_draws(d, 100, &mut common::rng(8));
    let mut cfg = common::config(Correction::None, vec![]);
    cfg.sign_flips = 32; // 2^5: exact enumeration
    cfg.contrasts = vec![ContrastSpec {
        name: "talk-rest".into(),
        condition_a: "talk".into(),
        condition_b: "rest".into(),
    }];
    let out = infer(
        &layout,
        &cells,
        &Draws {
            pairs: &pairs,
            n_dyads: d,
            exact: false,
        },
        &cfg,
    );
    // tpj has no "rest" cell: one row and a warning.
    assert_eq!(out.contrasts.len(), 1);
    assert!(
        out.warnings
            .iter()
            .any(|w| w.contains("talk-rest") && w.contains("roi=tpj"))
    );
    let dyad_d = |v: &[f64]| -> Vec<f64> {
        (0..d)
            .map(|i| {
                let own: Vec<f64> = (0..d)
                    .filter(|&j| j != i)
                    .flat_map(|j| [v[i * d + j], v[j * d + i]])
                    .collect();
                v[i * d + i] - own.iter().sum::<f64>() / own.len() as f64
            })
            .collect()
    };
    let a = dyad_d(cells[0].flat());
    let b = dyad_d(cells[1].flat());
    let diff: Vec<f64> = a.iter().zip(&b).map(|(x, y)| x - y).collect();
    let t = |x: &[f64]| {
        let n = x.len() as f64;
        let m = x.iter().sum::<f64>() / n;
        let sd = (x.iter().map(|y| (y - m) * (y - m)).sum::<f64>() / (n - 1.0)).sqrt();
        m / (sd / n.sqrt())
    };
    let t_obs = t(&diff);
    let count = (0..32u32)
        .filter(|s| {
            let x: Vec<f64> = diff
                .iter()
                .enumerate()
                .map(|(i, &y)| if (s >> i) & 1 == 1 { -y } else { y })
                .collect();
            t(&x).abs() >= t_obs.abs() - 1e-9
        })
        .count();
    let row = &out.contrasts[0];
    assert_eq!(row.n_dyads, d);
    assert!((row.statistic - t_obs).abs() < 1e-9 * t_obs.abs().max(1.0));
    assert!((row.mean_difference - diff.iter().sum::<f64>() / d as f64).abs() < 1e-14);
    assert_eq!(row.df, 4.0);
    assert_eq!(row.p_signflip, count as f64 / 32.0);
    assert_eq!(row.p_adj, row.p, "correction none");
}

#[test]
fn peers_dyad_contrast_counts_each_unordered_pair_once() {
    let layout = common::peers_layout(4);
    let n = 8;
    let mut rng = common::rng(9);
    let mut v = vec![f64::NAN; n * n];
    for a in 0..n {
        for b in a + 1..n {
            let x: f64 = rng.random();
            v[a * n + b] = x;
            v[b * n + a] = x;
        }
    }
    let out = infer(
        &layout,
        &[cell("talk", "pfc", v)],
        &Draws {
            pairs: &[],
            n_dyads: 4,
            exact: false,
        },
        &common::config(Correction::None, vec![]),
    );
    // 28 member pairs minus 4 real ones; each dyad's list has 2 x 6 = 12 pairs.
    assert_eq!(out.results[1].n_pseudo, 24);
    assert!(out.dyads.iter().all(|r| r.n_pseudo == 12));
    assert!(!out.results[0].testable, "no re-pairings were supplied");
    assert!(out.warnings.iter().any(|w| w.contains("no re-pairings")));
}

#[test]
fn inconsistent_inputs_are_errors_with_context() {
    let layout = common::roles_layout(4);
    let cells = [cell("talk", "pfc", vec![0.0; 16])];
    let cfg = common::config(Correction::Holm, vec![]);
    let pairs = [(0, 1), (1, 0), (2, 3)];
    let e = try_infer(
        &layout,
        &cells,
        &Draws {
            pairs: &pairs,
            n_dyads: 4,
            exact: false,
        },
        &cfg,
    )
    .unwrap_err();
    assert!(matches!(e, InferenceError::Draws(_)), "{e}");
    let diag = [(0, 0), (1, 2), (2, 3), (3, 1)];
    let e = try_infer(
        &layout,
        &cells,
        &Draws {
            pairs: &diag,
            n_dyads: 4,
            exact: false,
        },
        &cfg,
    )
    .unwrap_err();
    assert!(e.to_string().contains("inadmissible pair (0, 0)"), "{e}");
    let mut bad = cfg.clone();
    bad.alpha = 1.5;
    let e = try_infer(
        &layout,
        &cells,
        &Draws {
            pairs: &[],
            n_dyads: 4,
            exact: false,
        },
        &bad,
    )
    .unwrap_err();
    assert!(e.to_string().contains("alpha"), "{e}");
}
