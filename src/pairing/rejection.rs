//! Exact uniform sampling by rejection: propose a uniformly random re-pairing within
//! the pair_within strata (ignoring the other rules) and accept it if every pair is
//! admissible. The proposal is uniform on a superset of the admissible re-pairings, so
//! an accepted proposal is uniform on the admissible set. Must not choose the method;
//! the sampler decides when the acceptance rate makes this affordable.

use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;

use super::plan::PairPlan;

/// Fixed seed of the acceptance pilot: the choice of method must not depend on the
/// user's seed.
const PILOT_SEED: u64 = 0x5eed_c0de_0000_0002;

pub(super) struct Proposer<'a> {
    plan: &'a PairPlan,
}

impl<'a> Proposer<'a> {
    pub(super) fn new(plan: &'a PairPlan) -> Self {
        Proposer { plan }
    }

    /// One proposal into `out` (`n_dyads` pairs); `true` if every pair is admissible.
    /// Roles: a uniform bijection of each stratum's rows onto its columns, built by
    /// Fisher–Yates and abandoned at the first inadmissible pair (stopping early does
    /// not change which proposals are accepted). Peers: a uniform perfect matching of
    /// each stratum, built by pairing the next unpaired member with a uniformly chosen
    /// other unpaired member (the same distribution as shuffling and pairing
    /// neighbours).
    pub(super) fn propose(
        &self,
        rng: &mut ChaCha8Rng,
        out: &mut [(u32, u32)],
        scratch: &mut Vec<usize>,
    ) -> bool {
        let plan = self.plan;
        let mut k = 0;
        for s in &plan.strata {
            scratch.clear();
            scratch.extend_from_slice(&s.cols);
            if plan.peers() {
                let len = scratch.len();
                let mut i = 0;
                while i + 1 < len {
                    let j = rng.random_range(i + 1..len);
                    scratch.swap(i + 1, j);
                    let (a, b) = (scratch[i], scratch[i + 1]);
                    if !plan.adm.get(a, b) {
                        return false;
                    }
                    out[k] = (a.min(b) as u32, a.max(b) as u32);
                    k += 1;
                    i += 2;
                }
            } else {
                let len = scratch.len();
                for (i, &r) in s.rows.iter().enumerate() {
                    let j = rng.random_range(i..len);
                    scratch.swap(i, j);
                    let c = scratch[i];
                    if !plan.adm.get(r, c) {
                        return false;
                    }
                    out[r] = (r as u32, c as u32);
                }
            }
        }
        if plan.peers() {
            out.sort_unstable();
        }
        true
    }

    /// Accepted share of `n` proposals from the fixed pilot seed.
    pub(super) fn pilot_acceptance(&self, n: usize) -> f64 {
        let mut rng = ChaCha8Rng::seed_from_u64(PILOT_SEED);
        let mut out = vec![(0, 0); self.plan.n_dyads()];
        let mut scratch = Vec::new();
        let accepted = (0..n)
            .filter(|_| self.propose(&mut rng, &mut out, &mut scratch))
            .count();
        accepted as f64 / n as f64
    }
}

#[cfg(test)]
mod tests {
    use super::super::plan::tests::{family_scenario, roles, unrelated_roles};
    use super::super::{PairPlan, Rules};
    use super::*;

    // Source: the acceptance rate of uniform permutations on derangements tends to 1/e
    // (A000166: !n/n! → e^-1; for n = 12, !12/12! = 0.367879...). The pilot of 20,000
    // proposals must be within 4 binomial standard errors.
    #[test]
    fn pilot_acceptance_of_derangements() {
        let plan = PairPlan::build(&unrelated_roles(12), 12, &roles(), &Rules::default()).unwrap();
        let a = Proposer::new(&plan).pilot_acceptance(20_000);
        let p = 176_214_841.0 / 479_001_600.0; // !12 / 12!
        let se = (p * (1.0 - p) / 20_000.0f64).sqrt();
        assert!((a - p).abs() < 4.0 * se, "{a} vs {p}");
    }

    // Source: the family scenario (hand count 576 of 8!·2! = 80,640 stratum-respecting
    // proposals), so the pilot acceptance must be near 576/80640 = 0.00714.
    #[test]
    fn pilot_acceptance_within_strata() {
        let (members, rules) = family_scenario();
        let plan = PairPlan::build(&members, 10, &roles(), &rules).unwrap();
        let a = Proposer::new(&plan).pilot_acceptance(100_000);
        let p = 576.0 / 80_640.0;
        let se = (p * (1.0 - p) / 100_000.0f64).sqrt();
        assert!((a - p).abs() < 4.0 * se, "{a} vs {p}");
    }
}
