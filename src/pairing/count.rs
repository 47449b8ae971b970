//! How many admissible re-pairings a plan has: exact where it can be done fast, an
//! estimate with its method stated otherwise.
//!
//! Roles mode counts bipartite perfect matchings (the permanent of the 0/1
//! admissibility matrix); peers mode counts perfect matchings of the admissibility
//! graph. The grid is first split into independent blocks (strata and, within them,
//! connected components) whose counts multiply. Per block, in order of preference:
//! inclusion–exclusion over the excluded cells when those form small clusters (exact for
//! any size, e.g. 140 dyads with only the built-in rules), Ryser's formula / a subset DP
//! for small blocks, sequential importance sampling otherwise. This file must not
//! sample re-pairings; the samplers only read its result.

use std::collections::HashMap;

use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rayon::prelude::*;

use super::bigint::BigUint;
use super::bits::{BitMatrix, count_common, nth_common};
use super::plan::PairPlan;

/// Largest roles block counted by Ryser's formula: on the 2-core development machine
/// a dense 24 × 24 block takes 0.4–0.9 s (2^24 Gray-code steps), 25 × 25 about twice
/// that.
pub(super) const RYSER_MAX: usize = 24;
/// Largest number of DP states kept per step in the subset DPs; bounds memory.
const DP_STATES: usize = 1 << 20;
/// Largest number of DP updates (times polynomial length) before a DP gives up;
/// bounds the time lost on a block that turns out too large (about 0.1–0.3 s).
const DP_BUDGET: usize = 10_000_000;
/// Clusters of excluded cells this small make inclusion–exclusion cheap for any block
/// size (at most 2^16 DP states each), so it is tried first.
const SMALL_CLUSTER: usize = 16;
/// Largest cluster (vertices) the matching-number DP can represent at all.
const CLUSTER_MAX: usize = 64;
/// Seed of the importance-sampling estimate: a count must not depend on the user seed.
const ESTIMATE_SEED: u64 = 0x5eed_c0de_0000_0001;

/// Number of admissible re-pairings.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct RepairingCount {
    /// The count (or estimate); `inf` when beyond the double range, see `log10`.
    pub value: f64,
    pub exact: bool,
    /// The exact count in decimal, when exact.
    pub exact_text: Option<String>,
    /// How the number was obtained.
    pub method: String,
    /// `log10(value)`, finite even when `value` overflows; `-inf` for zero.
    pub log10: f64,
}

impl RepairingCount {
    fn zero(method: String) -> Self {
        RepairingCount {
            value: 0.0,
            exact: true,
            exact_text: Some("0".into()),
            method,
            log10: f64::NEG_INFINITY,
        }
    }

    /// Whether the count is known exactly and is at most `n`.
    pub(super) fn exact_at_most(&self, n: usize) -> Option<usize> {
        let v: u128 = self.exact_text.as_ref()?.parse().ok()?;
        (v <= n as u128).then_some(v as usize)
    }
}

/// The count of one independent block.
enum Part {
    Exact(BigUint, &'static str),
    Estimate {
        log10: f64,
        rel_se: f64,
        samples: usize,
    },
}

pub(super) fn count_repairings(plan: &PairPlan) -> RepairingCount {
    plan.count_cache.get_or_init(|| compute(plan)).clone()
}

fn compute(plan: &PairPlan) -> RepairingCount {
    for s in &plan.strata {
        if !plan.peers && s.rows.len() != s.cols.len() {
            return RepairingCount::zero(format!(
                "zero: stratum {} has {} row and {} column members",
                s.label,
                s.rows.len(),
                s.cols.len()
            ));
        }
        if plan.peers && s.rows.len() % 2 == 1 {
            return RepairingCount::zero(format!(
                "zero: stratum {} has an odd number of members ({})",
                s.label,
                s.rows.len()
            ));
        }
    }
    let blocks = components(plan);
    let mut parts = Vec::with_capacity(blocks.len());
    for (rows, cols) in &blocks {
        if plan.peers && rows.len() % 2 == 1 {
            return RepairingCount::zero(format!(
                "zero: a group of {} members who can only be paired among themselves is odd-sized",
                rows.len()
            ));
        }
        if !plan.peers && rows.len() != cols.len() {
            return RepairingCount::zero(format!(
                "zero: a group of {} row members can only be paired with {} column members",
                rows.len(),
                cols.len()
            ));
        }
        let part = if plan.peers {
            peers_block(plan, rows)
        } else {
            roles_block(plan, rows, cols)
        };
        if let Part::Exact(v, m) = &part
            && v.is_zero()
        {
            return RepairingCount::zero(format!("zero: {m}"));
        }
        parts.push(part);
    }
    combine(parts)
}

fn combine(parts: Vec<Part>) -> RepairingCount {
    let n_blocks = parts.len();
    let mut methods: Vec<String> = Vec::new();
    let mut exact = BigUint::from_u128(1);
    let mut est_log10 = 0.0;
    let mut est_rel_var = 0.0;
    let mut any_estimate = false;
    let mut samples = 0;
    for p in parts {
        match p {
            Part::Exact(v, m) => {
                exact = exact.mul(&v);
                if !methods.iter().any(|x| x == m) {
                    methods.push(m.to_owned());
                }
            }
            Part::Estimate {
                log10,
                rel_se,
                samples: s,
            } => {
                any_estimate = true;
                est_log10 += log10;
                est_rel_var += rel_se * rel_se;
                samples = s;
            }
        }
    }
    if any_estimate {
        methods.insert(
            0,
            format!(
                "estimate: sequential importance sampling (Rasmussen 1994), {samples} samples per block, relative s.e. {:.1}%",
                100.0 * est_rel_var.sqrt()
            ),
        );
    }
    let mut method = methods.join(" + ");
    if n_blocks > 1 {
        method = format!("product over {n_blocks} independent blocks: {method}");
    }
    let log10 = exact.log10() + est_log10;
    if any_estimate {
        RepairingCount {
            value: 10f64.powf(log10),
            exact: false,
            exact_text: None,
            method,
            log10,
        }
    } else {
        RepairingCount {
            value: exact.to_f64(),
            exact: true,
            exact_text: Some(exact.to_decimal()),
            method,
            log10,
        }
    }
}

/// Connected components of the admissibility graph: (row positions, column positions);
/// peers: (member positions, empty).
fn components(plan: &PairPlan) -> Vec<(Vec<usize>, Vec<usize>)> {
    let nr = plan.n_rows();
    let n = if plan.peers { nr } else { nr + plan.n_cols() };
    let mut parent: Vec<usize> = (0..n).collect();
    fn find(p: &mut [usize], mut x: usize) -> usize {
        while p[x] != x {
            p[x] = p[p[x]];
            x = p[x];
        }
        x
    }
    for r in 0..nr {
        for c in plan.adm.ones(r) {
            let other = if plan.peers { c } else { nr + c };
            let (a, b) = (find(&mut parent, r), find(&mut parent, other));
            if a != b {
                parent[a.max(b)] = a.min(b);
            }
        }
    }
    let mut groups: std::collections::BTreeMap<usize, (Vec<usize>, Vec<usize>)> =
        Default::default();
    for x in 0..n {
        let root = find(&mut parent, x);
        let g = groups.entry(root).or_default();
        if x < nr {
            g.0.push(x);
        } else {
            g.1.push(x - nr);
        }
    }
    groups.into_values().collect()
}

fn roles_block(plan: &PairPlan, rows: &[usize], cols: &[usize]) -> Part {
    let n = rows.len();
    let a: Vec<Vec<bool>> = rows
        .iter()
        .map(|&r| cols.iter().map(|&c| plan.adm.get(r, c)).collect())
        .collect();
    const IE: &str = "permanent (inclusion–exclusion over excluded cells)";
    if n > 12
        && let Some(v) = permanent_by_exclusions(&a, SMALL_CLUSTER)
    {
        return Part::Exact(v, IE);
    }
    if n <= RYSER_MAX {
        return Part::Exact(permanent_ryser(&a), "permanent (Ryser)");
    }
    if let Some(v) = permanent_by_exclusions(&a, CLUSTER_MAX) {
        return Part::Exact(v, IE);
    }
    let local = to_bits(&a);
    sis_estimate(n, |rng| sis_roles_sample(&local, n, rng))
}

fn peers_block(plan: &PairPlan, members: &[usize]) -> Part {
    let n = members.len();
    let a: Vec<Vec<bool>> = members
        .iter()
        .map(|&x| members.iter().map(|&y| plan.adm.get(x, y)).collect())
        .collect();
    const IE: &str = "perfect matchings (inclusion–exclusion over excluded pairs)";
    if n > 16
        && let Some(v) = matchings_by_exclusions(&a, SMALL_CLUSTER)
    {
        return Part::Exact(v, IE);
    }
    if let Some(v) = perfect_matchings_dp(&a) {
        return Part::Exact(BigUint::from_u128(v), "perfect matchings (subset DP)");
    }
    if let Some(v) = matchings_by_exclusions(&a, CLUSTER_MAX) {
        return Part::Exact(v, IE);
    }
    let local = to_bits(&a);
    sis_estimate(n, |rng| sis_peers_sample(&local, n, rng))
}

fn to_bits(a: &[Vec<bool>]) -> BitMatrix {
    let n = a.len();
    let mut m = BitMatrix::new(n, n);
    for (i, row) in a.iter().enumerate() {
        for (j, &x) in row.iter().enumerate() {
            if x {
                m.set(i, j);
            }
        }
    }
    m
}

/// Wrapping ring arithmetic: Ryser's alternating sum is computed modulo 2^64 or 2^128,
/// which is exact whenever the permanent itself is below the modulus.
trait Ring: Copy + Send + Sync {
    const ZERO: Self;
    fn add(self, o: Self) -> Self;
    fn sub(self, o: Self) -> Self;
    /// Product of row sums (each at most 34).
    fn product(sums: &[usize]) -> Self;
}

impl Ring for u64 {
    const ZERO: Self = 0;
    fn add(self, o: Self) -> Self {
        self.wrapping_add(o)
    }
    fn sub(self, o: Self) -> Self {
        self.wrapping_sub(o)
    }
    fn product(sums: &[usize]) -> Self {
        sums.iter().fold(1u64, |acc, &s| acc.wrapping_mul(s as u64))
    }
}

impl Ring for u128 {
    const ZERO: Self = 0;
    fn add(self, o: Self) -> Self {
        self.wrapping_add(o)
    }
    fn sub(self, o: Self) -> Self {
        self.wrapping_sub(o)
    }
    fn product(sums: &[usize]) -> Self {
        // Multiply in u64 while it cannot overflow (sums < 64), folding into u128 only
        // when needed: several times faster than a u128 product per row.
        let mut total = 1u128;
        let mut acc = 1u64;
        for &s in sums {
            if acc >= 1 << 57 {
                total = total.wrapping_mul(acc as u128);
                acc = 1;
            }
            acc *= s as u64;
        }
        total.wrapping_mul(acc as u128)
    }
}

/// Permanent of a square 0/1 matrix by Ryser's formula (Ryser 1963),
/// `perm A = (-1)^n Σ_{S ⊆ cols} (-1)^{|S|} Π_i Σ_{j∈S} a_ij`, visiting the subsets in
/// Gray-code order so that each step adds or removes one column. Chunks of the Gray
/// sequence run in parallel; wrapping sums are order-free, so the result does not
/// depend on the thread count. Exact for n ≤ 34 (n! < 2^128).
pub(super) fn permanent_ryser(a: &[Vec<bool>]) -> BigUint {
    let n = a.len();
    assert!(
        n <= 34,
        "Ryser's formula in 128-bit arithmetic needs n <= 34"
    );
    if n == 0 {
        return BigUint::from_u128(1);
    }
    // The product of the row sums bounds the permanent: stay in u64 when it fits.
    let bound = a.iter().try_fold(1u128, |acc, row| {
        acc.checked_mul(row.iter().filter(|&&x| x).count() as u128)
    });
    match bound {
        Some(b) if b < u64::MAX as u128 => BigUint::from_u128(ryser::<u64>(a) as u128),
        _ => BigUint::from_u128(ryser::<u128>(a)),
    }
}

fn ryser<R: Ring>(a: &[Vec<bool>]) -> R {
    let n = a.len();
    let col_rows: Vec<Vec<usize>> = (0..n)
        .map(|j| (0..n).filter(|&i| a[i][j]).collect())
        .collect();
    let chunk_bits = n.min(14);
    let n_chunks = 1u64 << (n - chunk_bits);
    let chunk = |t: u64| -> R {
        let k0 = t << chunk_bits;
        let k1 = (t + 1) << chunk_bits;
        let mut sums = vec![0usize; n];
        let mut g = k0 ^ (k0 >> 1);
        let mut size = g.count_ones() as usize;
        for (j, rows) in col_rows.iter().enumerate() {
            if g >> j & 1 == 1 {
                for &i in rows {
                    sums[i] += 1;
                }
            }
        }
        let mut zeros = sums.iter().filter(|&&s| s == 0).count();
        let mut total = R::ZERO;
        let term = |sums: &[usize], size: usize, total: R| -> R {
            let p = R::product(sums);
            if (n - size) % 2 == 0 {
                total.add(p)
            } else {
                total.sub(p)
            }
        };
        if k0 > 0 && zeros == 0 {
            total = term(&sums, size, total);
        }
        for k in (k0 + 1)..k1 {
            let j = k.trailing_zeros() as usize;
            g ^= 1 << j;
            if g >> j & 1 == 1 {
                size += 1;
                for &i in &col_rows[j] {
                    if sums[i] == 0 {
                        zeros -= 1;
                    }
                    sums[i] += 1;
                }
            } else {
                size -= 1;
                for &i in &col_rows[j] {
                    sums[i] -= 1;
                    if sums[i] == 0 {
                        zeros += 1;
                    }
                }
            }
            if zeros == 0 {
                total = term(&sums, size, total);
            }
        }
        total
    };
    (0..n_chunks)
        .into_par_iter()
        .map(chunk)
        .reduce(|| R::ZERO, |x, y| x.add(y))
}

/// Numbers of k-matchings (k = 0, 1, ...) of a graph of at most [`CLUSTER_MAX`]
/// vertices given by adjacency masks, by a DP over the vertices in breadth-first order
/// whose state is the set of later vertices already matched. `None` when the DP grows
/// past [`DP_STATES`] or a number overflows.
fn matching_numbers(adj: &[u64], budget: &mut usize) -> Option<Vec<u128>> {
    let adj = bfs_relabel(adj);
    let mut states: HashMap<u64, Vec<u128>> = HashMap::from([(0, vec![1])]);
    for (i, &nb) in adj.iter().enumerate() {
        let work = states.len() * (1 + (nb.count_ones() as usize)) * (i / 2 + 1);
        *budget = budget.checked_sub(work)?;
        let bit = 1u64 << i;
        let later = if i == 63 { 0 } else { !0u64 << (i + 1) };
        let mut next: HashMap<u64, Vec<u128>> = HashMap::with_capacity(states.len() * 2);
        let add = |next: &mut HashMap<u64, Vec<u128>>, key: u64, poly: &[u128], shift: usize| {
            let e = next.entry(key).or_default();
            if e.len() < poly.len() + shift {
                e.resize(poly.len() + shift, 0);
            }
            for (k, &v) in poly.iter().enumerate() {
                e[k + shift] = e[k + shift].checked_add(v)?;
            }
            Some(())
        };
        for (mask, poly) in &states {
            if mask & bit != 0 {
                add(&mut next, mask & !bit, poly, 0)?;
                continue;
            }
            add(&mut next, *mask, poly, 0)?;
            let mut cand = nb & !mask & later;
            while cand != 0 {
                let j = cand.trailing_zeros();
                cand &= cand - 1;
                add(&mut next, mask | 1 << j, poly, 1)?;
            }
        }
        if next.len() > DP_STATES {
            return None;
        }
        states = next;
    }
    states.remove(&0)
}

/// Number of perfect matchings of a graph (symmetric 0/1 matrix, at most 64 vertices):
/// the lowest unmatched vertex is paired with each admissible later vertex in turn, the
/// state being the set of later vertices already matched. `None` when too large.
pub(super) fn perfect_matchings_dp(a: &[Vec<bool>]) -> Option<u128> {
    let n = a.len();
    if n > 64 {
        return None;
    }
    let masks: Vec<u64> = a
        .iter()
        .map(|row| {
            row.iter()
                .enumerate()
                .filter(|&(_, &x)| x)
                .fold(0u64, |m, (j, _)| m | 1 << j)
        })
        .collect();
    let adj = bfs_relabel(&masks);
    let mut budget = DP_BUDGET;
    let mut states: HashMap<u64, u128> = HashMap::from([(0, 1)]);
    for (i, &nb) in adj.iter().enumerate() {
        budget = budget.checked_sub(states.len() * (1 + nb.count_ones() as usize))?;
        let bit = 1u64 << i;
        let later = if i == 63 { 0 } else { !0u64 << (i + 1) };
        let mut next: HashMap<u64, u128> = HashMap::with_capacity(states.len() * 2);
        for (&mask, &v) in &states {
            if mask & bit != 0 {
                let e = next.entry(mask & !bit).or_default();
                *e = e.checked_add(v)?;
                continue;
            }
            let mut cand = nb & !mask & later;
            while cand != 0 {
                let j = cand.trailing_zeros();
                cand &= cand - 1;
                let e = next.entry(mask | 1 << j).or_default();
                *e = e.checked_add(v)?;
            }
        }
        if next.len() > DP_STATES {
            return None;
        }
        states = next;
    }
    Some(states.get(&0).copied().unwrap_or(0))
}

/// Relabels vertices in breadth-first order (from the lowest unvisited vertex), which
/// keeps the set of "open" vertices of the DPs small on sparse graphs.
fn bfs_relabel(adj: &[u64]) -> Vec<u64> {
    let n = adj.len();
    let mut order = Vec::with_capacity(n);
    let mut seen = 0u64;
    for s in 0..n {
        if seen >> s & 1 == 1 {
            continue;
        }
        seen |= 1 << s;
        let start = order.len();
        order.push(s);
        let mut q = start;
        while q < order.len() {
            let v = order[q];
            q += 1;
            let mut nb = adj[v] & !seen;
            while nb != 0 {
                let w = nb.trailing_zeros() as usize;
                nb &= nb - 1;
                seen |= 1 << w;
                order.push(w);
            }
        }
    }
    let mut new_of = vec![0usize; n];
    for (new, &old) in order.iter().enumerate() {
        new_of[old] = new;
    }
    order
        .iter()
        .map(|&old| {
            let mut m = 0u64;
            let mut nb = adj[old];
            while nb != 0 {
                let w = nb.trailing_zeros() as usize;
                nb &= nb - 1;
                m |= 1 << new_of[w];
            }
            m
        })
        .collect()
}

/// Matching numbers of a graph on `n` vertices given as an edge list, by splitting it
/// into connected clusters and multiplying their matching polynomials. `None` when a
/// cluster has more than `max_cluster` vertices or the DPs exceed [`DP_BUDGET`].
fn matching_polynomial(
    n: usize,
    edges: &[(usize, usize)],
    max_cluster: usize,
) -> Option<Vec<BigUint>> {
    let mut parent: Vec<usize> = (0..n).collect();
    fn find(p: &mut [usize], mut x: usize) -> usize {
        while p[x] != x {
            p[x] = p[p[x]];
            x = p[x];
        }
        x
    }
    for &(u, v) in edges {
        let (a, b) = (find(&mut parent, u), find(&mut parent, v));
        if a != b {
            parent[a.max(b)] = a.min(b);
        }
    }
    let mut clusters: HashMap<usize, Vec<usize>> = HashMap::new();
    for x in 0..n {
        let r = find(&mut parent, x);
        clusters.entry(r).or_default().push(x);
    }
    let mut local = vec![usize::MAX; n];
    let mut adj_of: HashMap<usize, Vec<u64>> = HashMap::new();
    for (&root, vs) in &clusters {
        if vs.len() < 2 {
            continue;
        }
        if vs.len() > max_cluster.min(CLUSTER_MAX) {
            return None;
        }
        for (i, &v) in vs.iter().enumerate() {
            local[v] = i;
        }
        adj_of.insert(root, vec![0; vs.len()]);
    }
    for &(u, v) in edges {
        let root = find(&mut parent, u);
        let adj = adj_of.get_mut(&root).expect("edge inside a cluster");
        adj[local[u]] |= 1 << local[v];
        adj[local[v]] |= 1 << local[u];
    }
    let mut roots: Vec<usize> = adj_of.keys().copied().collect();
    roots.sort_unstable();
    let mut budget = DP_BUDGET;
    let mut poly = vec![BigUint::from_u128(1)];
    for root in roots {
        let m = matching_numbers(&adj_of[&root], &mut budget)?;
        let mut out = vec![BigUint::zero(); poly.len() + m.len() - 1];
        for (i, p) in poly.iter().enumerate() {
            for (j, &q) in m.iter().enumerate() {
                if q != 0 {
                    out[i + j] = out[i + j].add(&p.mul(&BigUint::from_u128(q)));
                }
            }
        }
        poly = out;
    }
    Some(poly)
}

/// `Σ_k (-1)^k r_k f(k)` for non-negative big terms; the caller guarantees a
/// non-negative total (it is a count).
fn alternating_sum(r: &[BigUint], f: impl Fn(usize) -> BigUint) -> BigUint {
    let (mut pos, mut neg) = (BigUint::zero(), BigUint::zero());
    for (k, rk) in r.iter().enumerate() {
        if rk.is_zero() {
            continue;
        }
        let t = rk.mul(&f(k));
        if k % 2 == 0 {
            pos = pos.add(&t);
        } else {
            neg = neg.add(&t);
        }
    }
    pos.checked_sub(&neg)
        .expect("inclusion–exclusion gave a negative count")
}

/// Permanent of a square 0/1 matrix from the rook numbers `r_k` of its zero cells:
/// `perm A = Σ_k (-1)^k r_k (n-k)!` (inclusion–exclusion over the forbidden cells used;
/// Riordan 1958, ch. 7–8). Fast when the zero cells form small clusters; `None` when a
/// cluster exceeds `max_cluster` vertices or the work budget.
pub(super) fn permanent_by_exclusions(a: &[Vec<bool>], max_cluster: usize) -> Option<BigUint> {
    let n = a.len();
    let mut edges = Vec::new();
    for (i, row) in a.iter().enumerate() {
        for (j, &x) in row.iter().enumerate() {
            if !x {
                edges.push((i, n + j));
            }
        }
    }
    let r = matching_polynomial(2 * n, &edges, max_cluster)?;
    let fact = factorials(n);
    Some(alternating_sum(&r, |k| fact[n - k].clone()))
}

/// Perfect matchings of a graph on 2m vertices (symmetric 0/1 matrix) from the
/// matching numbers `m_k` of its complement: `Σ_k (-1)^k m_k (2m-2k-1)!!`
/// (inclusion–exclusion over the forbidden pairs used). `None` when a cluster of the
/// complement exceeds `max_cluster` vertices or the work budget.
pub(super) fn matchings_by_exclusions(a: &[Vec<bool>], max_cluster: usize) -> Option<BigUint> {
    let n = a.len();
    let mut edges = Vec::new();
    for (i, row) in a.iter().enumerate() {
        for (j, &x) in row.iter().enumerate().skip(i + 1) {
            if !x {
                edges.push((i, j));
            }
        }
    }
    let m = matching_polynomial(n, &edges, max_cluster)?;
    let pairs = n / 2;
    let dfact = odd_double_factorials(pairs);
    Some(alternating_sum(&m, |k| dfact[pairs - k].clone()))
}

fn factorials(n: usize) -> Vec<BigUint> {
    let mut v = vec![BigUint::from_u128(1)];
    for k in 1..=n {
        let next = v[k - 1].mul_u64(k as u64);
        v.push(next);
    }
    v
}

/// `(2m-1)!!` for m = 0..=pairs: the number of perfect matchings of 2m people.
fn odd_double_factorials(pairs: usize) -> Vec<BigUint> {
    let mut v = vec![BigUint::from_u128(1)];
    for m in 1..=pairs {
        let next = v[m - 1].mul_u64((2 * m - 1) as u64);
        v.push(next);
    }
    v
}

/// `log10(n!)`.
pub(super) fn log10_factorial(n: usize) -> f64 {
    (2..=n).map(|k| (k as f64).log10()).sum()
}

/// `log10((2m-1)!!)`.
pub(super) fn log10_odd_double_factorial(m: usize) -> f64 {
    (1..=m).map(|k| ((2 * k - 1) as f64).log10()).sum()
}

/// Sequential importance sampling (Rasmussen 1994): build a matching row by row, each
/// time choosing uniformly among the still-free admissible partners; the product of the
/// numbers of choices is an unbiased estimate of the count. Returns ln(weight).
fn sis_roles_sample(a: &BitMatrix, n: usize, rng: &mut ChaCha8Rng) -> f64 {
    let mut free = full_row(n, a.words());
    let mut lw = 0.0;
    for i in 0..n {
        let c = count_common(a.row(i), &free);
        if c == 0 {
            return f64::NEG_INFINITY;
        }
        let j = nth_common(a.row(i), &free, rng.random_range(0..c)).expect("c > 0");
        free[j / 64] &= !(1 << (j % 64));
        lw += (c as f64).ln();
    }
    lw
}

/// The same for perfect matchings of a graph: the lowest unmatched member picks
/// uniformly among its free admissible partners.
fn sis_peers_sample(a: &BitMatrix, n: usize, rng: &mut ChaCha8Rng) -> f64 {
    let mut free = full_row(n, a.words());
    let mut lw = 0.0;
    for i in 0..n {
        if free[i / 64] >> (i % 64) & 1 == 0 {
            continue;
        }
        free[i / 64] &= !(1 << (i % 64));
        let c = count_common(a.row(i), &free);
        if c == 0 {
            return f64::NEG_INFINITY;
        }
        let j = nth_common(a.row(i), &free, rng.random_range(0..c)).expect("c > 0");
        free[j / 64] &= !(1 << (j % 64));
        lw += (c as f64).ln();
    }
    lw
}

fn full_row(n: usize, words: usize) -> Vec<u64> {
    let mut v = vec![0u64; words];
    for i in 0..n {
        v[i / 64] |= 1 << (i % 64);
    }
    v
}

/// Mean of the importance weights, in log space, with its relative standard error.
/// The number of samples shrinks for very large blocks to bound the time.
fn sis_estimate(n: usize, sample: impl Fn(&mut ChaCha8Rng) -> f64 + Sync) -> Part {
    let samples = (20_000_000 / (n * n.div_ceil(64)).max(1)).clamp(2_000, 20_000);
    const BATCH: usize = 500;
    let lws: Vec<f64> = (0..samples.div_ceil(BATCH))
        .into_par_iter()
        .flat_map_iter(|b| {
            let mut rng = ChaCha8Rng::seed_from_u64(ESTIMATE_SEED);
            rng.set_stream(b as u64);
            let k = BATCH.min(samples - b * BATCH);
            (0..k).map(|_| sample(&mut rng)).collect::<Vec<_>>()
        })
        .collect();
    let max = lws.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    if max == f64::NEG_INFINITY {
        return Part::Estimate {
            log10: f64::NEG_INFINITY,
            rel_se: f64::INFINITY,
            samples,
        };
    }
    let s1: f64 = lws.iter().map(|&l| (l - max).exp()).sum::<f64>() / samples as f64;
    let s2: f64 = lws.iter().map(|&l| (2.0 * (l - max)).exp()).sum::<f64>() / samples as f64;
    let rel_var = ((s2 - s1 * s1) / (s1 * s1)).max(0.0) / samples as f64;
    Part::Estimate {
        log10: (max + s1.ln()) / std::f64::consts::LN_10,
        rel_se: rel_var.sqrt(),
        samples,
    }
}

#[cfg(test)]
mod tests {
    use super::super::plan::tests::{family_scenario, m, roles, unrelated_peers, unrelated_roles};
    use super::super::{Mode, PairPlan, Rules};
    use super::*;

    fn j_minus_i(n: usize) -> Vec<Vec<bool>> {
        (0..n).map(|i| (0..n).map(|j| i != j).collect()).collect()
    }

    /// Brute force: all n! permutations by Heap's algorithm.
    fn permanent_brute(a: &[Vec<bool>]) -> u64 {
        let n = a.len();
        let mut p: Vec<usize> = (0..n).collect();
        let mut c = vec![0usize; n];
        let ok = |p: &[usize]| p.iter().enumerate().all(|(i, &j)| a[i][j]);
        let mut count = ok(&p) as u64;
        let mut i = 0;
        while i < n {
            if c[i] < i {
                if i % 2 == 0 {
                    p.swap(0, i);
                } else {
                    p.swap(c[i], i);
                }
                count += ok(&p) as u64;
                c[i] += 1;
                i = 0;
            } else {
                c[i] = 0;
                i += 1;
            }
        }
        count
    }

    /// Brute force: all perfect matchings by recursion on the lowest free vertex.
    fn matchings_brute(a: &[Vec<bool>], free: &mut Vec<bool>) -> u64 {
        let Some(i) = free.iter().position(|&f| f) else {
            return 1;
        };
        free[i] = false;
        let mut total = 0;
        for j in i + 1..a.len() {
            if free[j] && a[i][j] {
                free[j] = false;
                total += matchings_brute(a, free);
                free[j] = true;
            }
        }
        free[i] = true;
        total
    }

    /// Small deterministic generator for test matrices (not used for sampling).
    fn lcg(state: &mut u64) -> u64 {
        *state = state
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        *state >> 33
    }

    // Source: OEIS A000166 (derangements): perm(J - I) for n = 0..9.
    #[test]
    fn ryser_derangements_a000166() {
        let want = [1u128, 0, 1, 2, 9, 44, 265, 1854, 14833, 133496];
        for (n, &w) in want.iter().enumerate() {
            assert_eq!(permanent_ryser(&j_minus_i(n)).to_u128(), Some(w), "n = {n}");
            if n > 0 {
                assert_eq!(
                    permanent_by_exclusions(&j_minus_i(n), CLUSTER_MAX)
                        .unwrap()
                        .to_u128(),
                    Some(w)
                );
            }
        }
        for n in 2..=9 {
            let plan =
                PairPlan::build(&unrelated_roles(n), n, &roles(), &Rules::default()).unwrap();
            let c = plan.count_repairings();
            assert!(c.exact);
            assert_eq!(c.exact_text.as_deref(), Some(want[n].to_string().as_str()));
            // Two dyads split into two independent swaps; from three on, one block.
            if n >= 3 {
                assert_eq!(c.method, "permanent (Ryser)");
            }
        }
    }

    // Source: exact enumeration of all n! permutations on random 0/1 matrices.
    #[test]
    fn ryser_and_exclusions_agree_with_brute_force() {
        let mut s = 42u64;
        for n in 1..=8 {
            for density in [3u64, 6, 9] {
                let a: Vec<Vec<bool>> = (0..n)
                    .map(|_| (0..n).map(|_| lcg(&mut s) % 10 < density).collect())
                    .collect();
                let want = permanent_brute(&a) as u128;
                assert_eq!(permanent_ryser(&a).to_u128(), Some(want), "n={n} {a:?}");
                assert_eq!(
                    permanent_by_exclusions(&a, CLUSTER_MAX).unwrap().to_u128(),
                    Some(want)
                );
            }
        }
    }

    // Source: OEIS A000166 recurrence !n = (n-1)(!(n-1) + !(n-2)) evaluated in u128
    // here, and !20 = 895014631192902121 from the OEIS table; for n = 140 the count must
    // be round(140!/e), whose log10 is Σ log10 k - log10 e, and has 241 digits.
    #[test]
    fn large_derangement_counts_are_exact() {
        let mut d = vec![1u128, 0];
        for n in 2..=34u128 {
            d.push((n - 1) * (d[n as usize - 1] + d[n as usize - 2]));
        }
        assert_eq!(d[20], 895_014_631_192_902_121);
        for n in [20usize, 30, 34] {
            assert_eq!(
                permanent_by_exclusions(&j_minus_i(n), CLUSTER_MAX)
                    .unwrap()
                    .to_u128(),
                Some(d[n]),
                "n = {n}"
            );
        }
        let plan =
            PairPlan::build(&unrelated_roles(140), 140, &roles(), &Rules::default()).unwrap();
        let c = plan.count_repairings();
        assert!(c.exact, "{c:?}");
        let text = c.exact_text.unwrap();
        assert_eq!(text.len(), 241);
        let want = (1..=140).map(|k| (k as f64).log10()).sum::<f64>() - std::f64::consts::E.log10();
        assert!((c.log10 - want).abs() < 1e-9, "{} vs {want}", c.log10);
        assert!(c.method.contains("inclusion–exclusion"), "{}", c.method);
    }

    // Source: OEIS A053871 (perfect matchings of 2n people avoiding n fixed pairs):
    // 0, 2, 8, 60, 544, 6040 for n = 1..6; checked by the DP, by inclusion–exclusion, by
    // brute-force enumeration and through a peers plan.
    #[test]
    fn peers_a053871() {
        let want = [0u128, 2, 8, 60, 544, 6040];
        for n in 1..=6 {
            let a: Vec<Vec<bool>> = (0..2 * n)
                .map(|i| (0..2 * n).map(|j| i != j && i / 2 != j / 2).collect())
                .collect();
            assert_eq!(perfect_matchings_dp(&a), Some(want[n - 1]));
            assert_eq!(
                matchings_by_exclusions(&a, CLUSTER_MAX).unwrap().to_u128(),
                Some(want[n - 1])
            );
            assert_eq!(
                matchings_brute(&a, &mut vec![true; 2 * n]) as u128,
                want[n - 1]
            );
            if n >= 2 {
                let plan = PairPlan::build(&unrelated_peers(n), n, &Mode::Peers, &Rules::default())
                    .unwrap();
                let c = plan.count_repairings();
                assert_eq!(c.exact_text, Some(want[n - 1].to_string()));
                assert_eq!(c.method, "perfect matchings (subset DP)");
            }
        }
    }

    // Source: exact enumeration of all perfect matchings on random graphs.
    #[test]
    fn matching_counts_agree_with_brute_force() {
        let mut s = 7u64;
        for n in [2usize, 4, 6, 8, 10, 12] {
            for density in [4u64, 7, 9] {
                let mut a = vec![vec![false; n]; n];
                for i in 0..n {
                    for j in i + 1..n {
                        let x = lcg(&mut s) % 10 < density;
                        a[i][j] = x;
                        a[j][i] = x;
                    }
                }
                let want = matchings_brute(&a, &mut vec![true; n]) as u128;
                assert_eq!(perfect_matchings_dp(&a), Some(want));
                assert_eq!(
                    matchings_by_exclusions(&a, CLUSTER_MAX).unwrap().to_u128(),
                    Some(want)
                );
            }
        }
    }

    // Source: the family scenario of the plan tests, counted by hand: at site N the four
    // adults P, P, P, U may only meet T1, T2, B8, B9 (4! ways) and then M, Q, A8, A9 must
    // take S1, S2, S3, K, all of which they admit (4! ways); site S has one swap, whose
    // two pairs V–Y and W–R are separate blocks. 24 × 24 × 1 = 576, three blocks.
    #[test]
    fn family_scenario_count_by_hand() {
        let (members, rules) = family_scenario();
        let plan = PairPlan::build(&members, 10, &roles(), &rules).unwrap();
        let c = plan.count_repairings();
        assert_eq!(c.exact_text.as_deref(), Some("576"));
        assert!(
            c.method.starts_with("product over 3 independent blocks"),
            "{}",
            c.method
        );
    }

    // Source: Hall's condition — a stratum with unequal row and column counts has no
    // re-pairing. Worked by hand: site N has adults A0, A1 but children C0, C2, C3.
    #[test]
    fn unbalanced_stratum_counts_zero() {
        let a = Some("adult");
        let c = Some("child");
        let ms = vec![
            m(0, "A0", a, &[("site", "N")]),
            m(0, "C0", c, &[("site", "N")]),
            m(1, "A1", a, &[("site", "N")]),
            m(1, "C1", c, &[("site", "S")]),
            m(2, "A2", a, &[("site", "S")]),
            m(2, "C2", c, &[("site", "N")]),
            m(3, "A3", a, &[("site", "S")]),
            m(3, "C3", c, &[("site", "N")]),
        ];
        let rules = Rules {
            keep_apart: vec![],
            pair_within: vec!["site".into()],
        };
        let plan = PairPlan::build(&ms, 4, &roles(), &rules).unwrap();
        let cnt = plan.count_repairings();
        assert_eq!(cnt.exact_text.as_deref(), Some("0"));
        assert_eq!(
            cnt.method,
            "zero: stratum site=N has 2 row and 3 column members"
        );
    }

    // Source: timing check of the stated Ryser cap (prints nothing; fails if the largest
    // exact Ryser block takes more than 3 s in a release build on this machine).
    #[test]
    fn ryser_cap_is_fast_enough() {
        let a: Vec<Vec<bool>> = (0..RYSER_MAX)
            .map(|i| (0..RYSER_MAX).map(|j| (i * 7 + j * 3) % 5 != 0).collect())
            .collect();
        let t = std::time::Instant::now();
        let _ = permanent_ryser(&a);
        assert!(t.elapsed().as_secs_f64() < 3.0, "{:?}", t.elapsed());
    }

    // Source: sequential importance sampling is unbiased; on J - I with n = 30 (exact
    // !30 from the A000166 recurrence) the estimate must lie within 5 standard errors.
    #[test]
    fn sis_estimate_brackets_exact_value() {
        let n = 30;
        let bits = to_bits(&j_minus_i(n));
        let Part::Estimate { log10, rel_se, .. } =
            sis_estimate(n, |rng| sis_roles_sample(&bits, n, rng))
        else {
            panic!("estimate expected")
        };
        let exact = 97_581_073_836_835_777_732_377_428_235_481f64;
        let ratio = 10f64.powf(log10) / exact;
        assert!(
            (ratio - 1.0).abs() < 5.0 * rel_se + 1e-12,
            "{ratio} ± {rel_se}"
        );
        let a: Vec<Vec<bool>> = (0..2 * n)
            .map(|i| (0..2 * n).map(|j| i != j && i / 2 != j / 2).collect())
            .collect();
        let bits = to_bits(&a);
        let Part::Estimate { log10, rel_se, .. } =
            sis_estimate(2 * n, |rng| sis_peers_sample(&bits, 2 * n, rng))
        else {
            panic!("estimate expected")
        };
        let exact = matchings_by_exclusions(&a, CLUSTER_MAX).unwrap().to_f64();
        let ratio = 10f64.powf(log10) / exact;
        assert!(
            (ratio - 1.0).abs() < 5.0 * rel_se + 1e-12,
            "{ratio} ± {rel_se}"
        );
    }
}
