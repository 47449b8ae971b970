//! Drawing re-pairings uniformly from the admissible ones, reproducibly: the choice of
//! method (enumeration, rejection, Metropolis chain), the per-draw random streams and
//! the parallel loop.
//!
//! Draw k uses `ChaCha8Rng::seed_from_u64(seed)` on stream k and nothing else, so it is
//! a pure function of (plan, seed, k) whatever the thread count. Method choices use
//! fixed internal seeds, never the user's. Must not decide admissibility or counts: it
//! reads them from the plan.

use std::fmt;

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rayon::prelude::*;

use super::chain::{Chain, moves_text};
use super::count::{log10_factorial, log10_odd_double_factorial};
use super::enumerate::enumerate_all;
use super::error::PairingError;
use super::matching::{bipartite_start, general_start};
use super::plan::PairPlan;
use super::rejection::Proposer;

/// Below this acceptance rate rejection sampling is judged too slow (a rule of thumb:
/// about a thousand proposals per accepted draw).
const MIN_ACCEPTANCE: f64 = 1e-3;
/// Proposals in the acceptance pilot when the count is not exact.
const PILOT_PROPOSALS: usize = 20_000;
/// Fixed seed of the burn-in pilot chain.
const CHAIN_PILOT_SEED: u64 = 0x5eed_c0de_0000_0003;
/// Upper limit on the burn-in, to keep one draw affordable; the mixing check says
/// whether it suffices.
const MAX_BURN_IN: usize = 5_000_000;

/// How re-pairings are drawn.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub enum SamplerMethod {
    /// Every admissible re-pairing, once each, in canonical order.
    Enumerated { count: usize },
    /// Uniform proposals within strata, accepted when admissible (exact uniform draws).
    Rejection { acceptance: f64 },
    /// One independent Metropolis chain per draw, `burn_in` steps from a fixed start.
    Chain { burn_in: usize, moves: String },
}

impl fmt::Display for SamplerMethod {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            SamplerMethod::Enumerated { count } => write!(
                f,
                "complete enumeration of all {count} re-pairings of the reference set"
            ),
            SamplerMethod::Rejection { acceptance } => write!(
                f,
                "rejection sampling of uniform re-pairings within strata (acceptance {})",
                rate(*acceptance)
            ),
            SamplerMethod::Chain { burn_in, moves } => write!(
                f,
                "independent Metropolis chain per draw, {burn_in} steps from a fixed admissible start; moves: {moves}"
            ),
        }
    }
}

fn rate(a: f64) -> String {
    if a >= 0.01 {
        format!("{a:.3}")
    } else {
        format!("{a:.2e}")
    }
}

/// Drawn re-pairings: draw k is `pairs[k * n_dyads..(k + 1) * n_dyads]`, each pair
/// (row position, column position) sorted by row; peers: row < column.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Repairings {
    pub method: SamplerMethod,
    /// True when the draws are the complete reference set of re-pairings (the exact
    /// permutation distribution) rather than a random sample.
    pub exact: bool,
    pub n_dyads: usize,
    pub pairs: Vec<(u32, u32)>,
}

impl Repairings {
    pub fn len(&self) -> usize {
        self.pairs.len().checked_div(self.n_dyads).unwrap_or(0)
    }

    pub fn is_empty(&self) -> bool {
        self.pairs.is_empty()
    }

    pub fn draw(&self, k: usize) -> &[(u32, u32)] {
        &self.pairs[k * self.n_dyads..(k + 1) * self.n_dyads]
    }
}

/// A stratum that cannot be re-paired within itself, if any.
fn strata_error(plan: &PairPlan) -> Option<PairingError> {
    plan.strata.iter().find_map(|s| {
        if plan.peers() && s.rows.len() % 2 == 1 {
            Some(PairingError::OddStratum {
                stratum: s.label.clone(),
                size: s.rows.len(),
            })
        } else if !plan.peers() && s.rows.len() != s.cols.len() {
            Some(PairingError::UnbalancedStratum {
                stratum: s.label.clone(),
                rows: s.rows.len(),
                cols: s.cols.len(),
            })
        } else {
            None
        }
    })
}

/// log10 of the number of proposals the rejection sampler draws from.
fn log10_proposals(plan: &PairPlan) -> f64 {
    plan.strata
        .iter()
        .map(|s| {
            if plan.peers() {
                log10_odd_double_factorial(s.rows.len() / 2)
            } else {
                log10_factorial(s.rows.len())
            }
        })
        .sum()
}

fn start_state(plan: &PairPlan) -> Result<Vec<u32>, PairingError> {
    if let Some(e) = strata_error(plan) {
        return Err(e);
    }
    if plan.peers() {
        general_start(plan)
    } else {
        bipartite_start(plan)
    }
}

/// Burn-in: at least 50·D·ln D steps (D dyads; a rule of thumb well above the
/// (1/2)·D·ln D mixing time of random transpositions, Diaconis & Shahshahani 1981),
/// divided by the move acceptance rate of a pilot chain so that about that many moves
/// are accepted, at least 1,000 and at most [`MAX_BURN_IN`].
fn chain_burn_in(plan: &PairPlan, start: &[u32]) -> (usize, String) {
    let d = plan.n_dyads() as f64;
    let base = (50.0 * d * d.ln().max(1.0)).ceil() as usize;
    let chain = Chain::new(plan, start);
    let mut st = chain.start();
    let mut rng = ChaCha8Rng::seed_from_u64(CHAIN_PILOT_SEED);
    let accepted = (0..base).filter(|_| chain.step(&mut st, &mut rng)).count();
    let a = accepted as f64 / base as f64;
    let burn = ((base as f64 / a.max(1e-3)).ceil() as usize).clamp(1_000, MAX_BURN_IN);
    let why = format!(
        "burn-in {burn} steps = 50·D·ln D = {base} steps / move acceptance {} of a pilot chain (bounds 1,000..{MAX_BURN_IN})",
        rate(a)
    );
    (burn, why)
}

/// Picks the sampler for `requested` re-pairings and says why.
pub fn choose_method(plan: &PairPlan, requested: usize) -> (SamplerMethod, String) {
    let count = plan.count_repairings();
    if let Some(e) = strata_error(plan) {
        return (
            SamplerMethod::Enumerated { count: 0 },
            format!("no re-pairing: {e}"),
        );
    }
    if let Some(n) = count.exact_at_most(requested) {
        let why = if n == 0 {
            format!("no admissible re-pairing exists ({})", count.method)
        } else {
            format!(
                "the exact count {n} ({}) is no more than the {requested} requested: all are used, giving the exact permutation distribution",
                count.method
            )
        };
        return (SamplerMethod::Enumerated { count: n }, why);
    }
    let (acceptance, source) = if count.exact {
        (
            10f64.powf(count.log10 - log10_proposals(plan)),
            format!(
                "exact: {} in the reference set / all within-stratum proposals",
                count_text(&count)
            ),
        )
    } else {
        (
            Proposer::new(plan).pilot_acceptance(PILOT_PROPOSALS),
            format!("pilot of {PILOT_PROPOSALS} proposals"),
        )
    };
    if acceptance >= MIN_ACCEPTANCE {
        return (
            SamplerMethod::Rejection { acceptance },
            format!(
                "acceptance {} ({source}) is at least {MIN_ACCEPTANCE}: rejection sampling gives exactly uniform draws",
                rate(acceptance)
            ),
        );
    }
    let start = match start_state(plan) {
        Ok(s) => s,
        Err(e) => {
            return (
                SamplerMethod::Enumerated { count: 0 },
                format!("no re-pairing: {e}"),
            );
        }
    };
    let (burn_in, burn_why) = chain_burn_in(plan, &start);
    (
        SamplerMethod::Chain {
            burn_in,
            moves: moves_text(plan.peers()),
        },
        format!(
            "acceptance {} ({source}) is below {MIN_ACCEPTANCE}, so rejection would be too slow; {burn_why}",
            rate(acceptance)
        ),
    )
}

fn count_text(c: &super::RepairingCount) -> String {
    match &c.exact_text {
        Some(t) if t.len() <= 15 => t.clone(),
        _ => format!("10^{:.2}", c.log10),
    }
}

/// Draws `requested` re-pairings (or all of them, when there are no more than that)
/// with the method [`choose_method`] picks.
pub fn draw_repairings(
    plan: &PairPlan,
    requested: usize,
    seed: u64,
) -> Result<Repairings, PairingError> {
    let (method, _) = choose_method(plan, requested);
    draw_repairings_with(plan, &method, requested, seed)
}

/// Draws with a given method: for callers that already chose it with [`choose_method`] (so
/// the choice, and any pilot run it needs, happens once), and for tests that force a method.
/// `Enumerated` ignores `requested` and returns every admissible re-pairing.
pub fn draw_repairings_with(
    plan: &PairPlan,
    method: &SamplerMethod,
    requested: usize,
    seed: u64,
) -> Result<Repairings, PairingError> {
    let d = plan.n_dyads();
    let pairs = match method {
        SamplerMethod::Enumerated { .. } => {
            let all = enumerate_all(plan);
            if all.is_empty() {
                // Explain why: a stratum, a Hall or Tutte obstruction.
                start_state(plan)?;
                return Err(PairingError::NoRepairing {
                    stuck: Vec::new(),
                    partners: Vec::new(),
                });
            }
            all
        }
        SamplerMethod::Rejection { acceptance } => {
            if let Some(e) = strata_error(plan) {
                return Err(e);
            }
            let proposer = Proposer::new(plan);
            let cap = ((1e4 / acceptance.max(1e-12)).max(1e7)) as u64;
            let mut pairs = vec![(0u32, 0u32); requested * d];
            pairs.par_chunks_mut(d).enumerate().try_for_each_init(
                Vec::new,
                |scratch, (k, out)| {
                    let mut rng = ChaCha8Rng::seed_from_u64(seed);
                    rng.set_stream(k as u64);
                    for _ in 0..cap {
                        if proposer.propose(&mut rng, out, scratch) {
                            return Ok(());
                        }
                    }
                    Err(PairingError::RejectionExhausted {
                        draw: k,
                        proposals: cap,
                        acceptance: *acceptance,
                    })
                },
            )?;
            pairs
        }
        SamplerMethod::Chain { burn_in, .. } => {
            let start = start_state(plan)?;
            let chain = Chain::new(plan, &start);
            let mut pairs = vec![(0u32, 0u32); requested * d];
            pairs.par_chunks_mut(d).enumerate().for_each(|(k, out)| {
                let mut rng = ChaCha8Rng::seed_from_u64(seed);
                rng.set_stream(k as u64);
                let mut st = chain.start();
                for _ in 0..*burn_in {
                    chain.step(&mut st, &mut rng);
                }
                chain.write(&st, out);
            });
            pairs
        }
    };
    let exact = matches!(method, SamplerMethod::Enumerated { .. });
    let method = match method {
        SamplerMethod::Enumerated { .. } => SamplerMethod::Enumerated {
            count: pairs.len() / d,
        },
        m => m.clone(),
    };
    Ok(Repairings {
        method,
        exact,
        n_dyads: d,
        pairs,
    })
}

/// Result of [`mixing_check`]: the number of pairs that differ from the chain's start
/// state, over independent chains, after `burn_in` and after `2·burn_in` steps. If the
/// chains have mixed, both distributions are the same (the uniform law of that
/// distance), so `z` — the standardised difference of the means — should be small
/// (|z| < 3, say) and the histograms alike.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct MixingCheck {
    pub burn_in: usize,
    pub chains: usize,
    /// Histogram of the distance (index = number of changed pairs) at `burn_in`.
    pub at_burn_in: Vec<usize>,
    /// The same at `2·burn_in`.
    pub at_double: Vec<usize>,
    pub mean_at_burn_in: f64,
    pub mean_at_double: f64,
    pub z: f64,
}

/// Runs `chains` independent chains (stream k of `seed`) for `2·burn_in` steps and
/// compares the distance from the start at `burn_in` and at `2·burn_in`.
pub fn mixing_check(
    plan: &PairPlan,
    burn_in: usize,
    chains: usize,
    seed: u64,
) -> Result<MixingCheck, PairingError> {
    let start = start_state(plan)?;
    let chain = Chain::new(plan, &start);
    let dist: Vec<(usize, usize)> = (0..chains)
        .into_par_iter()
        .map(|k| {
            let mut rng = ChaCha8Rng::seed_from_u64(seed);
            rng.set_stream(k as u64);
            let mut st = chain.start();
            for _ in 0..burn_in {
                chain.step(&mut st, &mut rng);
            }
            let first = chain.distance_from_start(&st);
            for _ in 0..burn_in {
                chain.step(&mut st, &mut rng);
            }
            (first, chain.distance_from_start(&st))
        })
        .collect();
    let d = plan.n_dyads();
    let mut at_burn_in = vec![0; d + 1];
    let mut at_double = vec![0; d + 1];
    for &(a, b) in &dist {
        at_burn_in[a] += 1;
        at_double[b] += 1;
    }
    let n = chains.max(1) as f64;
    let mean =
        |f: &dyn Fn(&(usize, usize)) -> usize| dist.iter().map(|x| f(x) as f64).sum::<f64>() / n;
    let m1 = mean(&|x| x.0);
    let m2 = mean(&|x| x.1);
    let v1 = dist.iter().map(|x| (x.0 as f64 - m1).powi(2)).sum::<f64>() / (n - 1.0).max(1.0);
    let v2 = dist.iter().map(|x| (x.1 as f64 - m2).powi(2)).sum::<f64>() / (n - 1.0).max(1.0);
    let se = ((v1 + v2) / n).sqrt();
    let z = if se > 0.0 { (m2 - m1) / se } else { 0.0 };
    Ok(MixingCheck {
        burn_in,
        chains,
        at_burn_in,
        at_double,
        mean_at_burn_in: m1,
        mean_at_double: m2,
        z,
    })
}

#[cfg(test)]
mod tests {
    use std::collections::HashMap;

    use statrs::distribution::{ChiSquared, ContinuousCDF};

    use super::super::plan::tests::{
        family_scenario, m, roles, unbalanced_site_plan, unrelated_roles,
    };
    use super::super::{Mode, PairPlan, PairingMember, Rules};
    use super::*;

    /// Peers scenario, keep_apart family, pair_within site.
    ///
    /// ```text
    /// dyad members (family)        site
    ///  0   X (F1), Y (F1)          N    siblings
    ///  1   Z (F1), W (F2)          N    Z is their cousin
    ///  2   V (F2), U (F3)          N
    ///  3   T (F4), X (F1)          N    X recorded a second time
    ///  4   R (F5), Q (F6)          S
    ///  5   P (F7), O (F8)          S
    /// ```
    fn peers_scenario() -> (Vec<PairingMember>, Rules) {
        let n = [("site", "N")];
        let mk = |d: usize, p: &str, f: &str, site: &[(&str, &str)]| {
            let mut attrs: Vec<(&str, &str)> = site.to_vec();
            attrs.push(("family", f));
            m(d, p, None, &attrs)
        };
        let s = [("site", "S")];
        let members = vec![
            mk(0, "X", "F1", &n),
            mk(0, "Y", "F1", &n),
            mk(1, "Z", "F1", &n),
            mk(1, "W", "F2", &n),
            mk(2, "V", "F2", &n),
            mk(2, "U", "F3", &n),
            mk(3, "T", "F4", &n),
            mk(3, "X", "F1", &n),
            mk(4, "R", "F5", &s),
            mk(4, "Q", "F6", &s),
            mk(5, "P", "F7", &s),
            mk(5, "O", "F8", &s),
        ];
        let rules = Rules {
            keep_apart: vec!["family".into()],
            pair_within: vec!["site".into()],
        };
        (members, rules)
    }

    /// A small roles scenario for the chain, keep_apart family, pair_within site.
    ///
    /// ```text
    /// dyad adult (family)  child (family)  site
    ///  0   A (F1)          B (F1)          N    B and D are twins recorded with
    ///  1   C (F2)          D (F1)          N    different adults (A their mother)
    ///  2   E (F3)          F (F3)          N
    ///  3   G (F1)          H (F4)          N    G is the twins' aunt
    ///  4   I (F5)          J (F5)          N
    ///  5   K (F6)          L (F6)          S
    ///  6   M (F7)          Nn (F7)         S
    ///  7   O (F8)          P (F8)          S
    /// ```
    fn small_roles_scenario() -> (Vec<PairingMember>, Rules) {
        let mk = |d: usize, p: &str, role: &str, f: &str, site: &str| {
            m(d, p, Some(role), &[("family", f), ("site", site)])
        };
        let members = vec![
            mk(0, "A", "adult", "F1", "N"),
            mk(0, "B", "child", "F1", "N"),
            mk(1, "C", "adult", "F2", "N"),
            mk(1, "D", "child", "F1", "N"),
            mk(2, "E", "adult", "F3", "N"),
            mk(2, "F", "child", "F3", "N"),
            mk(3, "G", "adult", "F1", "N"),
            mk(3, "H", "child", "F4", "N"),
            mk(4, "I", "adult", "F5", "N"),
            mk(4, "J", "child", "F5", "N"),
            mk(5, "K", "adult", "F6", "S"),
            mk(5, "L", "child", "F6", "S"),
            mk(6, "M", "adult", "F7", "S"),
            mk(6, "Nn", "child", "F7", "S"),
            mk(7, "O", "adult", "F8", "S"),
            mk(7, "P", "child", "F8", "S"),
        ];
        let rules = Rules {
            keep_apart: vec!["family".into()],
            pair_within: vec!["site".into()],
        };
        (members, rules)
    }

    /// Brute force over all perfect matchings of the members (no pruning, no use of the
    /// module's enumerator): the admissible ones, each as sorted pairs.
    fn brute_peers(plan: &PairPlan) -> Vec<Vec<(u32, u32)>> {
        fn rec(
            plan: &PairPlan,
            free: &mut Vec<bool>,
            cur: &mut Vec<(u32, u32)>,
            out: &mut Vec<Vec<(u32, u32)>>,
        ) {
            let Some(a) = free.iter().position(|&f| f) else {
                if cur
                    .iter()
                    .all(|&(a, b)| plan.is_admissible(a as usize, b as usize))
                {
                    out.push(cur.clone());
                }
                return;
            };
            free[a] = false;
            for b in a + 1..free.len() {
                if free[b] {
                    free[b] = false;
                    cur.push((a as u32, b as u32));
                    rec(plan, free, cur, out);
                    cur.pop();
                    free[b] = true;
                }
            }
            free[a] = true;
        }
        let mut out = Vec::new();
        rec(
            plan,
            &mut vec![true; plan.n_rows()],
            &mut Vec::new(),
            &mut out,
        );
        out
    }

    /// Brute force over all permutations of the columns (Heap's algorithm).
    fn brute_roles(plan: &PairPlan) -> Vec<Vec<(u32, u32)>> {
        let n = plan.n_rows();
        let mut p: Vec<usize> = (0..n).collect();
        let mut c = vec![0usize; n];
        let mut out = Vec::new();
        let mut visit = |p: &[usize]| {
            if p.iter().enumerate().all(|(r, &c)| plan.is_admissible(r, c)) {
                out.push(
                    p.iter()
                        .enumerate()
                        .map(|(r, &c)| (r as u32, c as u32))
                        .collect(),
                );
            }
        };
        visit(&p);
        let mut i = 0;
        while i < n {
            if c[i] < i {
                if i % 2 == 0 {
                    p.swap(0, i);
                } else {
                    p.swap(c[i], i);
                }
                visit(&p);
                c[i] += 1;
                i = 0;
            } else {
                c[i] = 0;
                i += 1;
            }
        }
        out
    }

    /// Chi-square goodness of fit of the draws to the uniform law on `all`; the p-value.
    fn uniform_p_value(all: &[Vec<(u32, u32)>], draws: &Repairings) -> f64 {
        let index: HashMap<&[(u32, u32)], usize> = all
            .iter()
            .enumerate()
            .map(|(i, v)| (v.as_slice(), i))
            .collect();
        let mut counts = vec![0usize; all.len()];
        for k in 0..draws.len() {
            let i = index
                .get(draws.draw(k))
                .unwrap_or_else(|| panic!("draw {k} is not an admissible re-pairing"));
            counts[*i] += 1;
        }
        let e = draws.len() as f64 / all.len() as f64;
        let stat: f64 = counts.iter().map(|&o| (o as f64 - e).powi(2) / e).sum();
        let chi = ChiSquared::new((all.len() - 1) as f64).unwrap();
        1.0 - chi.cdf(stat)
    }

    const DRAWS: usize = 100_000;

    // Source: exact enumeration (brute force over all permutations) and the
    // chi-square goodness-of-fit test (statrs ChiSquared CDF), p > 0.001.
    #[test]
    fn rejection_is_uniform_roles_and_peers() {
        let (members, rules) = family_scenario();
        let plan = PairPlan::build(&members, 10, &roles(), &rules).unwrap();
        let all = brute_roles(&plan);
        assert_eq!(all.len(), 576);
        let method = SamplerMethod::Rejection {
            acceptance: 576.0 / 80_640.0,
        };
        let d = draw_repairings_with(&plan, &method, DRAWS, 11).unwrap();
        let p = uniform_p_value(&all, &d);
        assert!(p > 0.001, "roles rejection p = {p}");

        let (members, rules) = peers_scenario();
        let plan = PairPlan::build(&members, 6, &Mode::Peers, &rules).unwrap();
        let all = brute_peers(&plan);
        assert_eq!(
            plan.count_repairings().exact_text,
            Some(all.len().to_string())
        );
        let method = SamplerMethod::Rejection { acceptance: 0.1 };
        let d = draw_repairings_with(&plan, &method, DRAWS, 12).unwrap();
        let p = uniform_p_value(&all, &d);
        assert!(p > 0.001, "peers rejection p = {p}");
    }

    // Source: as above, for the Metropolis chain with the burn-in the sampler chooses.
    #[test]
    fn chain_is_uniform_roles_and_peers() {
        for peers in [false, true] {
            let (plan, all) = if peers {
                let (members, rules) = peers_scenario();
                let plan = PairPlan::build(&members, 6, &Mode::Peers, &rules).unwrap();
                let all = brute_peers(&plan);
                (plan, all)
            } else {
                let (members, rules) = small_roles_scenario();
                let plan = PairPlan::build(&members, 8, &roles(), &rules).unwrap();
                let all = brute_roles(&plan);
                assert_eq!(
                    plan.count_repairings().exact_text,
                    Some(all.len().to_string())
                );
                (plan, all)
            };
            let start = start_state(&plan).unwrap();
            let (burn_in, _) = chain_burn_in(&plan, &start);
            let method = SamplerMethod::Chain {
                burn_in,
                moves: moves_text(peers),
            };
            let d = draw_repairings_with(&plan, &method, DRAWS, 13).unwrap();
            let p = uniform_p_value(&all, &d);
            assert!(p > 0.001, "peers = {peers}: chain p = {p}");
        }
    }

    /// Three families of ten dyads each under keep_apart family: every adult must meet
    /// a child of another family. Rows of family i send a to family i+1 and 10 - a to
    /// i+2 (mod 3), so the count is (10!)^3 · Σ_a C(10,a)^3 = (10!)^3 · 38,165,260
    /// (Franel number, OEIS A000172) = 1,823,716,485,707,433,246,720,000,000, and the
    /// acceptance of uniform permutations is that over 30! ≈ 6.88e-6: chain territory.
    fn three_families() -> (Vec<PairingMember>, Rules) {
        let members = (0..30)
            .flat_map(|d| {
                let f = format!("F{}", d / 10);
                [
                    m(d, &format!("A{d}"), Some("adult"), &[("family", &f)]),
                    m(d, &format!("C{d}"), Some("child"), &[("family", &f)]),
                ]
            })
            .collect();
        let rules = Rules {
            keep_apart: vec!["family".into()],
            pair_within: vec![],
        };
        (members, rules)
    }

    fn assert_valid(plan: &PairPlan, r: &Repairings) {
        for k in 0..r.len() {
            let d = r.draw(k);
            let mut seen_r = vec![false; plan.n_rows()];
            let mut seen_c = vec![false; plan.n_cols()];
            for &(a, b) in d {
                assert!(
                    plan.is_admissible(a as usize, b as usize),
                    "draw {k}: {d:?}"
                );
                if plan.peers() {
                    assert!(a < b);
                    assert!(!seen_r[a as usize] && !seen_r[b as usize]);
                    seen_r[a as usize] = true;
                    seen_r[b as usize] = true;
                } else {
                    assert!(!seen_r[a as usize] && !seen_c[b as usize]);
                    seen_r[a as usize] = true;
                    seen_c[b as usize] = true;
                }
            }
            assert!(d.windows(2).all(|w| w[0].0 < w[1].0));
        }
    }

    // Source: the method rules (enumerate when the exact count is at most the request,
    // rejection when acceptance ≥ 1e-3, otherwise the chain) applied to hand counts:
    // the family scenario's acceptance is 576 / (8!·2!) = 0.00714; the three-family
    // design's count is the Franel-number formula above (acceptance ≈ 6.88e-6).
    #[test]
    fn method_choice_follows_the_rules() {
        let (members, rules) = family_scenario();
        let plan = PairPlan::build(&members, 10, &roles(), &rules).unwrap();
        let (m1, why) = choose_method(&plan, 1000);
        assert_eq!(m1, SamplerMethod::Enumerated { count: 576 }, "{why}");
        let (m2, why) = choose_method(&plan, 100);
        match m2 {
            SamplerMethod::Rejection { acceptance } => {
                assert!((acceptance - 576.0 / 80_640.0).abs() < 1e-12, "{why}")
            }
            other => panic!("{other:?}: {why}"),
        }
        let all = draw_repairings(&plan, 1000, 5).unwrap();
        assert!(all.exact);
        assert_eq!(all.len(), 576);
        assert_eq!(
            all.method.to_string(),
            "complete enumeration of all 576 re-pairings of the reference set"
        );
        assert_valid(&plan, &all);
        let some = draw_repairings(&plan, 100, 5).unwrap();
        assert!(!some.exact);
        assert_eq!(some.len(), 100);
        assert_valid(&plan, &some);

        let (members, rules) = three_families();
        let plan = PairPlan::build(&members, 30, &roles(), &rules).unwrap();
        let count = plan.count_repairings();
        assert_eq!(
            count.exact_text.as_deref(),
            Some("1823716485707433246720000000")
        );
        let (m3, why) = choose_method(&plan, 1000);
        assert!(why.contains("6.88e-6"), "{why}");
        let SamplerMethod::Chain { burn_in, .. } = m3 else {
            panic!("{m3:?}: {why}")
        };
        // At least the stated 50·D·ln D = 50·30·ln 30 = 5102 steps.
        assert!(burn_in >= 5102, "{why}");
        let draws = draw_repairings(&plan, 50, 9).unwrap();
        assert_eq!(draws.len(), 50);
        assert_valid(&plan, &draws);
    }

    // Source: determinism contract — draw k depends on (seed, k) only, whatever the
    // thread count (rayon pools of 1 and 2 threads).
    #[test]
    fn draws_do_not_depend_on_thread_count() {
        let run = |threads: usize, plan: &PairPlan, method: &SamplerMethod, seed: u64| {
            rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .unwrap()
                .install(|| draw_repairings_with(plan, method, 400, seed).unwrap())
        };
        let plan = PairPlan::build(&unrelated_roles(12), 12, &roles(), &Rules::default()).unwrap();
        let (members, rules) = peers_scenario();
        let peers = PairPlan::build(&members, 6, &Mode::Peers, &rules).unwrap();
        let chain = SamplerMethod::Chain {
            burn_in: 500,
            moves: moves_text(false),
        };
        let cases: Vec<(&PairPlan, SamplerMethod)> = vec![
            (&plan, choose_method(&plan, 400).0),
            (&plan, chain.clone()),
            (&peers, SamplerMethod::Rejection { acceptance: 0.1 }),
            (&peers, chain),
        ];
        for (p, method) in cases {
            let a = run(1, p, &method, 77);
            let b = run(2, p, &method, 77);
            assert_eq!(a, b, "{method}");
            let c = run(2, p, &method, 78);
            assert_ne!(a.pairs, c.pairs, "{method}: another seed gives other draws");
            // Draw k alone equals draw k of the batch.
            let first = run(1, p, &method, 77);
            assert_eq!(first.draw(3), a.draw(3));
            assert_valid(p, &a);
        }
        // The count does not depend on the thread count either (parallel Ryser).
        let (members, rules) = family_scenario();
        let fam = PairPlan::build(&members, 10, &roles(), &rules).unwrap();
        let c1 = rayon::ThreadPoolBuilder::new()
            .num_threads(1)
            .build()
            .unwrap()
            .install(|| fam.clone().count_repairings());
        assert_eq!(c1, fam.count_repairings());
    }

    // Source: Hall's condition worked by hand (site N has two adults but three
    // children), so drawing must fail naming the stratum.
    #[test]
    fn unbalanced_stratum_is_named_when_drawing() {
        let plan = unbalanced_site_plan();
        let err = draw_repairings(&plan, 100, 1).unwrap_err();
        assert_eq!(
            err,
            PairingError::UnbalancedStratum {
                stratum: "site=N".into(),
                rows: 2,
                cols: 3
            }
        );
        assert!(
            err.to_string()
                .contains("stratum site=N has 2 row member(s) but 3 column")
        );
    }

    // Source: mixing check as documented — the distance from the start at burn-in and
    // at twice the burn-in must have the same distribution (chi-square test of
    // homogeneity on the two histograms, statrs CDF, p > 0.001) on a design where the
    // sampler picks the chain.
    #[test]
    fn chain_mixing_check_passes() {
        let (members, rules) = three_families();
        let plan = PairPlan::build(&members, 30, &roles(), &rules).unwrap();
        let (SamplerMethod::Chain { burn_in, .. }, _) = choose_method(&plan, 1000) else {
            panic!("chain expected")
        };
        let chk = mixing_check(&plan, burn_in, 1000, 3).unwrap();
        assert!(chk.z.abs() < 4.0, "{chk:?}");
        // Homogeneity test over distance classes with enough counts.
        let (mut stat, mut df) = (0.0, 0usize);
        for (&a, &b) in chk.at_burn_in.iter().zip(&chk.at_double) {
            let tot = (a + b) as f64;
            if tot < 10.0 {
                continue;
            }
            let e = tot / 2.0;
            stat += (a as f64 - e).powi(2) / e + (b as f64 - e).powi(2) / e;
            df += 1;
        }
        let p = 1.0 - ChiSquared::new((df - 1) as f64).unwrap().cdf(stat);
        assert!(p > 0.001, "p = {p}, {chk:?}");
        // Far from the start: a re-pairing of 30 dyads keeps few pairs of the start.
        assert!(chk.mean_at_burn_in > 25.0, "{chk:?}");
        // The check has power: far too short a burn-in is caught.
        let short = mixing_check(&plan, 20, 1000, 3).unwrap();
        assert!(short.z > 10.0, "{short:?}");
    }
}
