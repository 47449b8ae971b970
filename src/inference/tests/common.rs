//! Shared builders for the study-level inference tests: hand-built layouts, a uniform
//! derangement sampler by rejection, and the shared-member null model
//! value(r, c) = a_r + b_c + e_rc.

use super::super::*;
use crate::vocab::{Col, MemberIx, PairGrid, Row};
use ndarray::Array2;
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;

pub fn key(condition: &str, band: &str, roi: &str) -> CellKey {
    CellKey {
        condition: condition.into(),
        chromophore: "hbo".into(),
        band: band.into(),
        roi: roi.into(),
    }
}

/// A grid cell from plain positions.
pub fn rc(r: usize, c: usize) -> (Row, Col) {
    (Row(r), Col(c))
}

/// Roles mode, D dyads, every off-diagonal pair admissible.
pub fn roles_layout(d: usize) -> Layout {
    let grid = PairGrid::roles(
        (0..d).map(MemberIx).collect(),
        (d..2 * d).map(MemberIx).collect(),
    );
    Layout {
        admissible: Array2::from_shape_fn((d, d), |(r, c)| r != c),
        grid,
        dyads: (0..d).map(|i| format!("dy{i:02}")).collect(),
        real: (0..d).map(|i| rc(i, i)).collect(),
        dyad_pseudo: (0..d)
            .map(|i| {
                (0..d)
                    .filter(|&j| j != i)
                    .flat_map(|j| [rc(i, j), rc(j, i)])
                    .collect()
            })
            .collect(),
    }
}

/// Peers mode, D dyads of members (2d, 2d+1), every pair of distinct members admissible
/// except the real ones (which are admissible too but never re-paired).
pub fn peers_layout(d: usize) -> Layout {
    let n = 2 * d;
    let real: Vec<(Row, Col)> = (0..d).map(|i| rc(2 * i, 2 * i + 1)).collect();
    let dyad_pseudo = real
        .iter()
        .map(|&(a, b)| {
            let mut v = Vec::new();
            for m in [a.0, b.0] {
                for o in 0..n {
                    if o != a.0 && o != b.0 {
                        v.push(rc(m.min(o), m.max(o)));
                    }
                }
            }
            v
        })
        .collect();
    Layout {
        grid: PairGrid::peers(n),
        dyads: (0..d).map(|i| format!("pd{i:02}")).collect(),
        real,
        admissible: Array2::from_shape_fn((n, n), |(r, c)| r != c),
        dyad_pseudo,
    }
}

pub fn config(correction: Correction, family: Vec<FamilyAxis>) -> InferenceConfig {
    InferenceConfig {
        alternative: Alternative::Greater,
        alpha: 0.05,
        correction,
        family,
        bootstrap: 0,
        sign_flips: 0,
        seed: 20240611,
        contrasts: vec![],
    }
}

/// Uniform random derangement by rejection: draw uniform permutations (Fisher–Yates) until
/// one has no fixed point.
pub fn derangement(d: usize, rng: &mut ChaCha8Rng) -> Vec<u32> {
    loop {
        let p = permutation(d, rng);
        if p.iter().enumerate().all(|(i, &x)| i as u32 != x) {
            return p;
        }
    }
}

/// K roles-mode re-pairings (row i with column perm(i)) as draw pairs.
pub fn derangement_draws(d: usize, k: usize, rng: &mut ChaCha8Rng) -> Vec<(u32, u32)> {
    let mut out = Vec::with_capacity(d * k);
    for _ in 0..k {
        let p = derangement(d, rng);
        out.extend(p.iter().enumerate().map(|(i, &c)| (i as u32, c)));
    }
    out
}

/// Uniform random permutation (Fisher–Yates), fixed points allowed.
pub fn permutation(d: usize, rng: &mut ChaCha8Rng) -> Vec<u32> {
    let mut p: Vec<u32> = (0..d as u32).collect();
    for i in (1..d).rev() {
        let j = rng.random_range(0..=i);
        p.swap(i, j);
    }
    p
}

/// Standard normal by the Box–Muller transform.
pub fn normal(rng: &mut ChaCha8Rng) -> f64 {
    let u1: f64 = 1.0 - rng.random::<f64>();
    let u2: f64 = rng.random::<f64>();
    (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos()
}

/// Roles-mode matrix value(r, c) = a_r + b_c + e_rc with a, b, e standard normal, plus
/// `coupling` on the real pairs (the diagonal).
pub fn null_matrix(d: usize, coupling: f64, rng: &mut ChaCha8Rng) -> Vec<f64> {
    let a: Vec<f64> = (0..d).map(|_| normal(rng)).collect();
    let b: Vec<f64> = (0..d).map(|_| normal(rng)).collect();
    let mut v = vec![0.0; d * d];
    for r in 0..d {
        for c in 0..d {
            v[r * d + c] = a[r] + b[c] + normal(rng) + if r == c { coupling } else { 0.0 };
        }
    }
    v
}

/// A square matrix from its values in row-major order.
pub fn square(values: Vec<f64>) -> Array2<f64> {
    let n = (values.len() as f64).sqrt().round() as usize;
    Array2::from_shape_vec((n, n), values).expect("a square number of values")
}

pub fn rng(seed: u64) -> ChaCha8Rng {
    ChaCha8Rng::seed_from_u64(seed)
}
