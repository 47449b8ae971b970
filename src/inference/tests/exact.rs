//! Exact enumeration: on tiny hand-built studies every admissible re-pairing is listed, and
//! the p-values, pseudo means and dyad contrasts are recomputed by brute force here,
//! independently of the library.

use super::super::*;
use super::common;
use rand::RngExt;
use statrs::distribution::{Binomial, DiscreteCDF};

/// All permutations of 0..n (recursive, lexicographic).
fn permutations(n: usize) -> Vec<Vec<usize>> {
    fn rec(prefix: &mut Vec<usize>, n: usize, out: &mut Vec<Vec<usize>>) {
        if prefix.len() == n {
            out.push(prefix.clone());
            return;
        }
        for x in 0..n {
            if !prefix.contains(&x) {
                prefix.push(x);
                rec(prefix, n, out);
                prefix.pop();
            }
        }
    }
    let mut out = Vec::new();
    rec(&mut Vec::new(), n, &mut out);
    out
}

/// All perfect matchings of 0..n (n even) as sorted pairs.
fn matchings(members: Vec<usize>) -> Vec<Vec<(usize, usize)>> {
    if members.is_empty() {
        return vec![vec![]];
    }
    let first = members[0];
    let mut out = Vec::new();
    for j in 1..members.len() {
        let partner = members[j];
        let rest: Vec<usize> = members
            .iter()
            .copied()
            .filter(|&m| m != first && m != partner)
            .collect();
        for mut m in matchings(rest) {
            m.insert(0, (first, partner));
            out.push(m);
        }
    }
    out
}

fn mean_present(xs: impl Iterator<Item = f64>) -> f64 {
    let v: Vec<f64> = xs.filter(|x| !x.is_nan()).collect();
    v.iter().sum::<f64>() / v.len() as f64
}

/// Brute-force permutation p: (1 + #{T* >= T}) / (K + 1), one- or two-sided.
fn brute_p(t: f64, null: &[f64], two_sided: bool) -> f64 {
    let m = null.iter().sum::<f64>() / null.len() as f64;
    let count = null
        .iter()
        .filter(|&&x| {
            if two_sided {
                (x - m).abs() >= (t - m).abs() - 1e-12
            } else {
                x >= t - 1e-12
            }
        })
        .count();
    (1 + count) as f64 / (null.len() + 1) as f64
}

fn cell(values: Vec<f64>) -> CellMatrix {
    CellMatrix {
        key: common::key("talk", "theta", "pfc"),
        values: common::square(values),
    }
}

/// Central 99.9 % interval of Binomial(n, q).
fn binomial_interval(n: u64, q: f64) -> (u64, u64) {
    if q <= 0.0 {
        return (0, 0);
    }
    if q >= 1.0 {
        return (n, n);
    }
    let b = Binomial::new(q, n).unwrap();
    (b.inverse_cdf(0.0005), b.inverse_cdf(0.9995))
}

#[test]
fn roles_four_dyads_exact_p_equals_brute_force_and_sampling_agrees() {
    let d = 4;
    let layout = common::roles_layout(d);
    let der: Vec<Vec<usize>> = permutations(d)
        .into_iter()
        .filter(|p| p.iter().enumerate().all(|(i, &x)| i != x))
        .collect();
    assert_eq!(der.len(), 9, "!4 = 9 derangements");
    let pairs: Vec<(u32, u32)> = der
        .iter()
        .flat_map(|p| p.iter().enumerate().map(|(i, &c)| (i as u32, c as u32)))
        .collect();
    let draws = Draws {
        pairs: &pairs,
        n_dyads: d,
        exact: true,
    };
    let mut rng = common::rng(3);
    let mut sampled_checks = 0;
    for trial in 0..300 {
        let coupling = [0.0, 0.3, 0.8][trial % 3];
        let mut v: Vec<f64> = (0..d * d)
            .map(|i| rng.random::<f64>() + if i % (d + 1) == 0 { coupling } else { 0.0 })
            .collect();
        if trial % 7 == 0 {
            v[1] = f64::NAN; // pair (0, 1) missing
        }
        let real: Vec<f64> = (0..d).map(|i| v[i * d + i]).collect();
        let t = mean_present(real.iter().copied());
        let null: Vec<f64> = der
            .iter()
            .map(|p| mean_present(p.iter().enumerate().map(|(i, &c)| v[i * d + c])))
            .collect();
        let surr = mean_present((0..d * d).filter(|i| i % (d + 1) != 0).map(|i| v[i]));
        for alt in [Alternative::Greater, Alternative::TwoSided] {
            let mut cfg = common::config(Correction::None, vec![]);
            cfg.alternative = alt;
            let out = infer(&layout, &[cell(v.clone())], &draws, &cfg);
            let r = &out.results[0];
            let want = brute_p(t, &null, alt == Alternative::TwoSided);
            assert_eq!(r.p, want, "trial {trial} {alt}");
            assert!(
                ((r.p * 10.0).round() - r.p * 10.0).abs() < 1e-12,
                "exact p lies on the 1/10 lattice"
            );
            assert!((r.statistic - t).abs() < 1e-15);
            assert!((r.pseudo_mean - surr).abs() < 1e-15);
            assert_eq!(out.nulls[0].null.len(), 9);

            // 10^5 uniform draws from the same nine re-pairings: #{T* >= T} is
            // Binomial(K, q) with q = (brute-force count) / 9. Checked on the first cells
            // whose q is neither 0 nor 1.
            let q = (want * 10.0 - 1.0).round() / 9.0;
            if sampled_checks < 12 && q > 0.0 && q < 1.0 {
                let k = 100_000usize;
                let sampled: Vec<(u32, u32)> = (0..k)
                    .flat_map(|_| {
                        let j = rng.random_range(0..9);
                        pairs[j * d..(j + 1) * d].to_vec()
                    })
                    .collect();
                let sd = Draws {
                    pairs: &sampled,
                    n_dyads: d,
                    exact: false,
                };
                let s = infer(&layout, &[cell(v.clone())], &sd, &cfg).results[0].p;
                let (lo, hi) = binomial_interval(k as u64, q);
                let x = (s * (k + 1) as f64 - 1.0).round() as u64;
                assert!(
                    lo <= x && x <= hi,
                    "trial {trial} {alt}: {x} outside [{lo}, {hi}] (q = {q})"
                );
                eprintln!(
                    "trial {trial} {alt}: exact p {want:.4}, q {q:.4}, sampled p {s:.5}, count {x} in [{lo}, {hi}]"
                );
                sampled_checks += 1;
            }
        }
    }
    assert_eq!(sampled_checks, 12);
}

#[test]
fn peers_four_dyads_exact_p_equals_brute_force() {
    let d = 4;
    let n = 2 * d;
    let layout = common::peers_layout(d);
    let real: Vec<(usize, usize)> = (0..d).map(|i| (2 * i, 2 * i + 1)).collect();
    let re: Vec<Vec<(usize, usize)>> = matchings((0..n).collect())
        .into_iter()
        .filter(|m| m.iter().all(|p| !real.contains(p)))
        .collect();
    // Inclusion-exclusion: Σ_j (-1)^j C(4, j) (7 - 2j)!! = 105 - 60 + 18 - 4 + 1 = 60.
    assert_eq!(re.len(), 60);
    let pairs: Vec<(u32, u32)> = re
        .iter()
        .flat_map(|m| m.iter().map(|&(a, b)| (a as u32, b as u32)))
        .collect();
    let draws = Draws {
        pairs: &pairs,
        n_dyads: d,
        exact: true,
    };
    let mut rng = common::rng(5);
    for trial in 0..100 {
        let mut v = vec![f64::NAN; n * n];
        for a in 0..n {
            for b in a + 1..n {
                let bonus = if real.contains(&(a, b)) {
                    0.2 * (trial % 4) as f64
                } else {
                    0.0
                };
                let x = rng.random::<f64>() + bonus;
                v[a * n + b] = x;
                v[b * n + a] = x;
            }
        }
        let t = mean_present(real.iter().map(|&(a, b)| v[a * n + b]));
        let null: Vec<f64> = re
            .iter()
            .map(|m| mean_present(m.iter().map(|&(a, b)| v[a * n + b])))
            .collect();
        let surr = mean_present(
            (0..n)
                .flat_map(|a| (a + 1..n).map(move |b| (a, b)))
                .filter(|p| !real.contains(p))
                .map(|(a, b)| v[a * n + b]),
        );
        let mut cfg = common::config(Correction::None, vec![]);
        cfg.sign_flips = 1000;
        let out = infer(&layout, &[cell(v.clone())], &draws, &cfg);
        let r = &out.results[0];
        assert_eq!(r.p, brute_p(t, &null, false), "trial {trial}");
        assert!((r.pseudo_mean - surr).abs() < 1e-15);
        assert_eq!(
            r.n_pseudo,
            28 - 4,
            "C(8,2) member pairs minus the 4 real ones"
        );

        // Dyad contrast by brute force: each dyad's real value minus the mean of the
        // pairs joining one of its members to a member of another dyad.
        let dz: Vec<f64> = real
            .iter()
            .map(|&(a, b)| {
                let own: Vec<f64> = [a, b]
                    .iter()
                    .flat_map(|&m| {
                        (0..n)
                            .filter(move |&o| o != a && o != b)
                            .map(move |o| (m, o))
                    })
                    .map(|(m, o)| v[m * n + o])
                    .collect();
                v[a * n + b] - own.iter().sum::<f64>() / own.len() as f64
            })
            .collect();
        let dc = &out.results[1];
        let m = dz.iter().sum::<f64>() / 4.0;
        assert!((dc.excess - m).abs() < 1e-14);
        // Exact sign flips: 2^4 = 16 patterns, identity included.
        let tstat = |x: &[f64]| {
            let mm = x.iter().sum::<f64>() / x.len() as f64;
            let sd =
                (x.iter().map(|y| (y - mm) * (y - mm)).sum::<f64>() / (x.len() - 1) as f64).sqrt();
            mm / (sd / (x.len() as f64).sqrt())
        };
        let t_obs = tstat(&dz);
        assert!((dc.statistic - t_obs).abs() < 1e-9 * t_obs.abs().max(1.0));
        let count = (0..16u32)
            .filter(|s| {
                let x: Vec<f64> = dz
                    .iter()
                    .enumerate()
                    .map(|(i, &y)| if (s >> i) & 1 == 1 { -y } else { y })
                    .collect();
                tstat(&x) >= t_obs - 1e-9
            })
            .count();
        assert_eq!(dc.p_signflip, count as f64 / 16.0, "trial {trial}");
    }
}
