//! Checks that the layout, cells, draws and configuration fit together, and derives the
//! index tables every test reads: who owns each row/column, the set of pseudo-pairs, the
//! per-dyad pseudo lists and the draws as flat matrix indices. Reads no cell values.

use super::types::{CellMatrix, Draws, InferenceConfig, InferenceError, Layout};
use crate::vocab::{Cell, Col, Row};

/// Index tables derived once per call and shared by every cell.
#[derive(Debug, Clone)]
pub(crate) struct Prepared {
    pub n_dyads: usize,
    /// Flat index of each dyad's real pair.
    pub real_idx: Vec<usize>,
    /// The pseudo-pairs behind `pseudo_mean`: admissible, not the real pair of any dyad,
    /// both members owned by a dyad; in peers mode each unordered pair once (row < col).
    /// Stored as (flat index, owning dyad of the row, owning dyad of the column).
    pub pseudo: Vec<(usize, usize, usize)>,
    /// Per dyad, the flat indices of its listed pseudo pairs with real pairs removed.
    pub dyad_pseudo: Vec<Vec<usize>>,
    /// Per dyad pseudo pair, its canonical flat index (peers: the row < col orientation),
    /// so that a pair listed by both owning dyads is counted once.
    pub dyad_pseudo_canonical: Vec<Vec<usize>>,
    /// Draws as flat indices, K blocks of `n_dyads`.
    pub draw_idx: Vec<u32>,
    pub n_draws: usize,
    /// Rows or columns that no dyad owns (their pairs are left out of `pseudo`).
    pub unowned: usize,
}

fn layout_err(msg: String) -> InferenceError {
    InferenceError::Layout(msg)
}

/// Validates everything and builds the shared tables. `try_infer` is a public entry that the
/// tests and benchmarks call with hand-built layouts, so it checks its inputs once here; the
/// pipeline's layouts come from a validated pair plan and pass by construction.
pub(crate) fn prepare(
    layout: &Layout,
    cells: &[CellMatrix],
    draws: &Draws,
    cfg: &InferenceConfig,
) -> Result<Prepared, InferenceError> {
    let grid = &layout.grid;
    let (nr, nc) = (grid.n_rows(), grid.n_cols());
    let size = grid.len();
    if size > u32::MAX as usize {
        return Err(layout_err(format!("matrix of {nr} x {nc} is too large")));
    }
    let d = layout.dyads.len();
    if layout.real.len() != d || layout.dyad_pseudo.len() != d {
        return Err(layout_err(format!(
            "{d} dyad ids but {} real pairs and {} pseudo lists",
            layout.real.len(),
            layout.dyad_pseudo.len()
        )));
    }
    if layout.admissible.dim() != (nr, nc) {
        return Err(layout_err(format!(
            "admissible mask is {:?}, expected {nr} x {nc}",
            layout.admissible.dim()
        )));
    }
    // `what` is only called to describe a failure, so the happy path formats nothing.
    let flat = |(r, c): (Row, Col), what: &dyn Fn() -> String| -> Result<Cell, InferenceError> {
        if !grid.contains(r, c) {
            return Err(layout_err(format!(
                "{} ({}, {}) lies outside the {nr} x {nc} matrix",
                what(),
                r.0,
                c.0
            )));
        }
        Ok(grid.cell(r, c))
    };
    let admissible = |cell: Cell| {
        let (r, c) = grid.row_col(cell);
        layout.admissible[[r.0, c.0]]
    };
    if grid.is_peers() {
        if nr != nc {
            return Err(layout_err(format!(
                "peers mode needs a square matrix, got {nr} x {nc}"
            )));
        }
        for r in 0..nr {
            for c in 0..r {
                if layout.admissible[[r, c]] != layout.admissible[[c, r]] {
                    return Err(layout_err(format!(
                        "peers admissible mask is not symmetric at ({r}, {c})"
                    )));
                }
            }
        }
    }

    // Ownership: roles mode owns row a_d and column b_d; peers mode owns both members.
    let mut row_owner: Vec<Option<usize>> = vec![None; nr];
    let mut col_owner: Vec<Option<usize>> = vec![None; nc];
    let mut is_real = vec![false; size];
    let mut real_idx = Vec::with_capacity(d);
    for (dy, &(a, b)) in layout.real.iter().enumerate() {
        let name = &layout.dyads[dy];
        let idx = flat((a, b), &|| format!("real pair of dyad {name}"))?;
        real_idx.push(idx.0);
        is_real[idx.0] = true;
        let claims: [(bool, usize); 2] = if grid.is_peers() {
            if a.0 == b.0 {
                return Err(layout_err(format!(
                    "dyad {name} pairs member {} with itself",
                    a.0
                )));
            }
            is_real[grid.mirror(idx).expect("peers grids mirror").0] = true;
            [(true, a.0), (true, b.0)]
        } else {
            [(true, a.0), (false, b.0)]
        };
        for (is_row, m) in claims {
            let owners = if is_row {
                &mut row_owner
            } else {
                &mut col_owner
            };
            if let Some(other) = owners[m] {
                return Err(layout_err(format!(
                    "member {m} belongs to both dyad {} and dyad {name}",
                    layout.dyads[other]
                )));
            }
            owners[m] = Some(dy);
        }
    }
    if grid.is_peers() {
        col_owner.clone_from(&row_owner);
    }
    let unowned = row_owner.iter().filter(|o| o.is_none()).count()
        + if grid.is_peers() {
            0
        } else {
            col_owner.iter().filter(|o| o.is_none()).count()
        };

    let mut pseudo = Vec::new();
    for (r, c) in grid.candidates() {
        let idx = grid.cell(r, c);
        if !admissible(idx) || is_real[idx.0] {
            continue;
        }
        if let (Some(dr), Some(dc)) = (row_owner[r.0], col_owner[c.0]) {
            pseudo.push((idx.0, dr, dc));
        }
    }

    let mut dyad_pseudo = Vec::with_capacity(d);
    let mut dyad_pseudo_canonical = Vec::with_capacity(d);
    for (dy, list) in layout.dyad_pseudo.iter().enumerate() {
        let mut kept = Vec::with_capacity(list.len());
        let mut canon = Vec::with_capacity(list.len());
        for &pair in list {
            let idx = flat(pair, &|| {
                format!("pseudo pair of dyad {}", layout.dyads[dy])
            })?;
            if !admissible(idx) {
                return Err(layout_err(format!(
                    "pseudo pair ({}, {}) of dyad {} is not admissible",
                    pair.0.0, pair.1.0, layout.dyads[dy]
                )));
            }
            if is_real[idx.0] {
                continue;
            }
            kept.push(idx.0);
            canon.push(grid.canonical(idx).0);
        }
        dyad_pseudo.push(kept);
        dyad_pseudo_canonical.push(canon);
    }

    for cell in cells {
        if cell.values.dim() != (nr, nc) || cell.values.as_slice().is_none() {
            return Err(InferenceError::Cell {
                key: cell.key.clone(),
                detail: format!(
                    "matrix is {:?}, expected {nr} x {nc} in standard layout",
                    cell.values.dim()
                ),
            });
        }
    }

    if !(cfg.alpha.is_finite() && cfg.alpha > 0.0 && cfg.alpha < 1.0) {
        return Err(InferenceError::Config(format!(
            "alpha must lie strictly between 0 and 1, got {}",
            cfg.alpha
        )));
    }

    let (draw_idx, n_draws) = prepare_draws(layout, draws)?;
    Ok(Prepared {
        n_dyads: d,
        real_idx,
        pseudo,
        dyad_pseudo,
        dyad_pseudo_canonical,
        draw_idx,
        n_draws,
        unowned,
    })
}

/// Checks each draw (in range, admissible, every row/column or member used at most once)
/// and flattens it. Draws are (row, column) positions as the samplers write them.
fn prepare_draws(layout: &Layout, draws: &Draws) -> Result<(Vec<u32>, usize), InferenceError> {
    let grid = &layout.grid;
    let d = layout.dyads.len();
    if draws.pairs.is_empty() {
        return Ok((Vec::new(), 0));
    }
    if draws.n_dyads != d || d == 0 || !draws.pairs.len().is_multiple_of(d) {
        return Err(InferenceError::Draws(format!(
            "{} pairs in blocks of {} do not fit {d} dyads",
            draws.pairs.len(),
            draws.n_dyads
        )));
    }
    let n_draws = draws.pairs.len() / d;
    let mut row_seen = vec![usize::MAX; grid.n_rows()];
    let mut col_seen = vec![usize::MAX; grid.n_cols()];
    let mut idx = Vec::with_capacity(draws.pairs.len());
    for (k, block) in draws.pairs.chunks_exact(d).enumerate() {
        for &(r, c) in block {
            let (r, c) = (r as usize, c as usize);
            if !grid.contains(Row(r), Col(c)) {
                return Err(InferenceError::Draws(format!(
                    "pair of draw {k} ({r}, {c}) lies outside the {} x {} matrix",
                    grid.n_rows(),
                    grid.n_cols()
                )));
            }
            if !layout.admissible[[r, c]] {
                return Err(InferenceError::Draws(format!(
                    "draw {k} uses the inadmissible pair ({r}, {c})"
                )));
            }
            let reused = if grid.is_peers() {
                let twice = row_seen[r] == k || row_seen[c] == k;
                row_seen[r] = k;
                row_seen[c] = k;
                twice
            } else {
                let twice = row_seen[r] == k || col_seen[c] == k;
                row_seen[r] = k;
                col_seen[c] = k;
                twice
            };
            if reused {
                return Err(InferenceError::Draws(format!(
                    "draw {k} uses a member twice (pair ({r}, {c}))"
                )));
            }
            idx.push(grid.cell(Row(r), Col(c)).0 as u32);
        }
    }
    Ok((idx, n_draws))
}

#[cfg(test)]
mod tests {
    use super::super::types::{Alternative, CellKey, Correction};
    use super::*;

    fn cfg() -> InferenceConfig {
        InferenceConfig {
            alternative: Alternative::Greater,
            alpha: 0.05,
            correction: Correction::None,
            family: vec![],
            bootstrap: 0,
            sign_flips: 0,
            seed: 1,
            contrasts: vec![],
        }
    }

    /// Roles mode, every off-diagonal pair admissible (shared with the study-level tests).
    fn roles(d: usize) -> Layout {
        super::super::tests::common::roles_layout(d)
    }

    #[test]
    fn roles_pseudo_set_is_every_off_diagonal_pair() {
        let p = prepare(
            &roles(3),
            &[],
            &Draws {
                pairs: &[],
                n_dyads: 3,
                exact: false,
            },
            &cfg(),
        )
        .unwrap();
        // 3 x 3 minus the diagonal: 6 pseudo pairs; each dyad lists 4.
        assert_eq!(p.pseudo.len(), 6);
        assert!(p.dyad_pseudo.iter().all(|l| l.len() == 4));
        assert_eq!(p.real_idx, vec![0, 4, 8]);
    }

    #[test]
    fn bad_inputs_are_reported_with_context() {
        let mut l = roles(3);
        l.real[1] = (Row(0), Col(1));
        let e = prepare(
            &l,
            &[],
            &Draws {
                pairs: &[],
                n_dyads: 3,
                exact: false,
            },
            &cfg(),
        )
        .unwrap_err();
        assert!(e.to_string().contains("member 0"), "{e}");

        let cell = CellMatrix {
            key: CellKey {
                condition: "c".into(),
                chromophore: "hbo".into(),
                band: "b".into(),
                roi: "r".into(),
            },
            values: ndarray::Array2::zeros((2, 2)),
        };
        let e = prepare(
            &roles(3),
            &[cell],
            &Draws {
                pairs: &[],
                n_dyads: 3,
                exact: false,
            },
            &cfg(),
        )
        .unwrap_err();
        assert!(e.to_string().contains("roi=r"), "{e}");

        let twice = [(0, 1), (1, 2), (2, 1)];
        let e = prepare(
            &roles(3),
            &[],
            &Draws {
                pairs: &twice,
                n_dyads: 3,
                exact: false,
            },
            &cfg(),
        )
        .unwrap_err();
        assert!(e.to_string().contains("draw 0"), "{e}");
    }
}
