//! Metropolis chain over admissible re-pairings with a uniform target, for plans whose
//! admissible set is too small a share of all re-pairings for rejection sampling.
//!
//! A move picks a stratum (with probability proportional to its size, fixed in
//! advance), then k distinct rows (peers: k distinct pairs) uniformly, and rotates their
//! partners along a cycle; it is accepted if every new pair is admissible, otherwise the
//! chain stays. k is 2 or 3 most of the time (a transposition or 3-cycle; peers: the
//! re-pairing (a,b)(c,d) → (a,c)(b,d) or (a,d)(b,c) and its 3-pair analogue); with
//! probability 1/10 it is drawn uniformly from 4..=size. The reverse of every rotation
//! is a rotation of the same size drawn with the same probability, so proposals are
//! symmetric and the stationary law is uniform. The long rotations make the chain
//! irreducible for any rules: two re-pairings differ by disjoint cycles, and applying
//! those one at a time passes only through admissible re-pairings (every row keeps
//! either its old or its new partner). Must not choose burn-in lengths or seeds: the
//! sampler does.

use rand::RngExt;
use rand_chacha::ChaCha8Rng;

use super::plan::PairPlan;

/// One chain's state. Roles: `sigma[r]` is row r's column. Peers: the pairs of each
/// stratum. `slots` holds per-stratum index scratch reused by the partial
/// Fisher–Yates draws (its order never matters for the distribution).
#[derive(Clone)]
pub(super) struct State {
    sigma: Vec<u32>,
    pairs: Vec<Vec<(u32, u32)>>,
    slots: Vec<Vec<u32>>,
}

pub(super) struct Chain<'a> {
    plan: &'a PairPlan,
    /// For each movable unit (a row or pair of a stratum with at least two of them),
    /// its stratum and that stratum's size: a uniform unit picks a stratum with
    /// probability proportional to its size.
    unit: Vec<(u32, u32)>,
    start: State,
}

/// The human description of the move set, shown with the method.
pub(super) fn moves_text(peers: bool) -> String {
    if peers {
        "re-pair 2 pairs (45%), 3 pairs (45%) or 4..m pairs (10%) along an alternating cycle within a stratum".into()
    } else {
        "rotate the partners of 2 rows (45%), 3 rows (45%) or 4..n rows (10%) within a stratum"
            .into()
    }
}

impl<'a> Chain<'a> {
    /// `start`: roles, the column of each row; peers, the partner of each member. It
    /// must be an admissible re-pairing.
    pub(super) fn new(plan: &'a PairPlan, start: &[u32]) -> Self {
        let mut pairs = Vec::new();
        let mut slots = Vec::new();
        let mut movable = Vec::new();
        for (i, s) in plan.strata.iter().enumerate() {
            if plan.peers() {
                let p: Vec<(u32, u32)> = s
                    .rows
                    .iter()
                    .filter(|&&a| (a as u32) < start[a])
                    .map(|&a| (a as u32, start[a]))
                    .collect();
                slots.push((0..p.len() as u32).collect());
                if p.len() >= 2 {
                    movable.push((i, p.len()));
                }
                pairs.push(p);
            } else {
                slots.push(s.rows.iter().map(|&r| r as u32).collect());
                if s.rows.len() >= 2 {
                    movable.push((i, s.rows.len()));
                }
            }
        }
        let unit = movable
            .iter()
            .flat_map(|&(s, size)| std::iter::repeat_n((s as u32, size as u32), size))
            .collect();
        let sigma = if plan.peers() {
            Vec::new()
        } else {
            start.to_vec()
        };
        Chain {
            plan,
            unit,
            start: State {
                sigma,
                pairs,
                slots,
            },
        }
    }

    pub(super) fn start(&self) -> State {
        self.start.clone()
    }

    fn pick_k(size: u32, rng: &mut ChaCha8Rng) -> usize {
        let u = rng.random_range(0..20u32);
        if u < 9 || size == 2 {
            2
        } else if u < 18 || size == 3 {
            3
        } else {
            rng.random_range(4..=size) as usize
        }
    }

    /// One Metropolis step; `true` if the move was accepted.
    pub(super) fn step(&self, st: &mut State, rng: &mut ChaCha8Rng) -> bool {
        if self.unit.is_empty() {
            return false;
        }
        let (s, size) = self.unit[rng.random_range(0..self.unit.len() as u32) as usize];
        let k = Self::pick_k(size, rng);
        let slots = &mut st.slots[s as usize];
        for i in 0..k {
            let j = rng.random_range(i as u32..size) as usize;
            slots.swap(i, j);
        }
        let adm = &self.plan.adm;
        if self.plan.peers() {
            let pairs = &mut st.pairs[s as usize];
            let mut ends = [(0u32, 0u32); 64];
            let mut long = Vec::new();
            let ends: &mut [(u32, u32)] = if k <= 64 {
                &mut ends[..k]
            } else {
                long.resize(k, (0, 0));
                &mut long
            };
            for (i, e) in ends.iter_mut().enumerate() {
                let (a, b) = pairs[slots[i] as usize];
                *e = if rng.random_range(0..2u32) == 0 {
                    (a, b)
                } else {
                    (b, a)
                };
            }
            // Old pairs (x_i, y_i); new pairs (y_i, x_{i+1}).
            for i in 0..k {
                let y = ends[i].1;
                let x = ends[(i + 1) % k].0;
                if !adm.get(y as usize, x as usize) {
                    return false;
                }
            }
            let first_x = ends[0].0;
            for i in 0..k {
                let x = if i + 1 < k { ends[i + 1].0 } else { first_x };
                pairs[slots[i] as usize] = (ends[i].1, x);
            }
            true
        } else {
            let sigma = &mut st.sigma;
            // New partner of row a_i is the old partner of a_{i+1}.
            for i in 0..k {
                let r = slots[i] as usize;
                let c = sigma[slots[(i + 1) % k] as usize] as usize;
                if !adm.get(r, c) {
                    return false;
                }
            }
            let first = sigma[slots[0] as usize];
            for i in 0..k - 1 {
                sigma[slots[i] as usize] = sigma[slots[i + 1] as usize];
            }
            sigma[slots[k - 1] as usize] = first;
            true
        }
    }

    /// The state as `n_dyads` sorted pairs (peers: row < column).
    pub(super) fn write(&self, st: &State, out: &mut [(u32, u32)]) {
        if self.plan.peers() {
            let mut k = 0;
            for p in &st.pairs {
                for &(a, b) in p {
                    out[k] = (a.min(b), a.max(b));
                    k += 1;
                }
            }
            out.sort_unstable();
        } else {
            for (r, &c) in st.sigma.iter().enumerate() {
                out[r] = (r as u32, c);
            }
        }
    }

    /// Number of pairs of `st` that are not pairs of the start state.
    pub(super) fn distance_from_start(&self, st: &State) -> usize {
        if self.plan.peers() {
            let mut mate = vec![0u32; self.plan.n_rows()];
            for p in &self.start.pairs {
                for &(a, b) in p {
                    mate[a as usize] = b;
                    mate[b as usize] = a;
                }
            }
            st.pairs
                .iter()
                .flatten()
                .filter(|&&(a, b)| mate[a as usize] != b)
                .count()
        } else {
            st.sigma
                .iter()
                .zip(&self.start.sigma)
                .filter(|(a, b)| a != b)
                .count()
        }
    }
}
