//! Checks that the layout, cells, draws and configuration fit together, and derives the
//! index tables every test reads: who owns each row/column, the set of pseudo-pairs, the
//! per-dyad pseudo lists and the draws as flat matrix indices. Reads no cell values.

use super::types::{CellMatrix, Draws, InferenceConfig, InferenceError, Layout};

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

/// Maps a (row, col) pair to its flat index; the second argument names the pair for the
/// error message and is only called on failure.
type FlatIndex<'a> = dyn Fn((u32, u32), &dyn Fn() -> String) -> Result<usize, InferenceError> + 'a;

fn layout_err(msg: String) -> InferenceError {
    InferenceError::Layout(msg)
}

/// Validates everything and builds the shared tables.
pub(crate) fn prepare(
    layout: &Layout,
    cells: &[CellMatrix],
    draws: &Draws,
    cfg: &InferenceConfig,
) -> Result<Prepared, InferenceError> {
    let (nr, nc) = (layout.n_rows, layout.n_cols);
    let size = nr
        .checked_mul(nc)
        .filter(|&s| s <= u32::MAX as usize)
        .ok_or_else(|| layout_err(format!("matrix of {nr} x {nc} is too large")))?;
    let d = layout.dyads.len();
    if layout.real.len() != d || layout.dyad_pseudo.len() != d {
        return Err(layout_err(format!(
            "{d} dyad ids but {} real pairs and {} pseudo lists",
            layout.real.len(),
            layout.dyad_pseudo.len()
        )));
    }
    if layout.admissible.len() != size {
        return Err(layout_err(format!(
            "admissible mask has {} entries, expected {nr} x {nc} = {size}",
            layout.admissible.len()
        )));
    }
    if layout.peers && nr != nc {
        return Err(layout_err(format!(
            "peers mode needs a square matrix, got {nr} x {nc}"
        )));
    }
    // `what` is only called to describe a failure, so the happy path formats nothing.
    let flat = |(r, c): (u32, u32), what: &dyn Fn() -> String| -> Result<usize, InferenceError> {
        let (r, c) = (r as usize, c as usize);
        if r >= nr || c >= nc {
            return Err(layout_err(format!(
                "{} ({r}, {c}) lies outside the {nr} x {nc} matrix",
                what()
            )));
        }
        Ok(r * nc + c)
    };
    if layout.peers {
        for r in 0..nr {
            for c in 0..r {
                if layout.admissible[r * nc + c] != layout.admissible[c * nc + r] {
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
        let (a, b) = (a as usize, b as usize);
        real_idx.push(idx);
        is_real[idx] = true;
        let claims: [(bool, usize); 2] = if layout.peers {
            if a == b {
                return Err(layout_err(format!(
                    "dyad {name} pairs member {a} with itself"
                )));
            }
            is_real[b * nc + a] = true;
            [(true, a), (true, b)]
        } else {
            [(true, a), (false, b)]
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
    if layout.peers {
        col_owner.clone_from(&row_owner);
    }
    let unowned = row_owner.iter().filter(|o| o.is_none()).count()
        + if layout.peers {
            0
        } else {
            col_owner.iter().filter(|o| o.is_none()).count()
        };

    let mut pseudo = Vec::new();
    for (r, row) in row_owner.iter().enumerate() {
        let c0 = if layout.peers { r + 1 } else { 0 };
        for (c, col) in col_owner.iter().enumerate().skip(c0) {
            let idx = r * nc + c;
            if !layout.admissible[idx] || is_real[idx] {
                continue;
            }
            if let (Some(dr), Some(dc)) = (row, col) {
                pseudo.push((idx, *dr, *dc));
            }
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
            if !layout.admissible[idx] {
                return Err(layout_err(format!(
                    "pseudo pair ({}, {}) of dyad {} is not admissible",
                    pair.0, pair.1, layout.dyads[dy]
                )));
            }
            if is_real[idx] {
                continue;
            }
            let (r, c) = (pair.0 as usize, pair.1 as usize);
            kept.push(idx);
            canon.push(if layout.peers && c < r {
                c * nc + r
            } else {
                idx
            });
        }
        dyad_pseudo.push(kept);
        dyad_pseudo_canonical.push(canon);
    }

    for cell in cells {
        if cell.values.len() != size {
            return Err(InferenceError::Cell {
                key: cell.key.clone(),
                detail: format!(
                    "matrix has {} values, expected {nr} x {nc} = {size}",
                    cell.values.len()
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

    let (draw_idx, n_draws) = prepare_draws(layout, draws, &flat)?;
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
/// and flattens it.
fn prepare_draws(
    layout: &Layout,
    draws: &Draws,
    flat: &FlatIndex,
) -> Result<(Vec<u32>, usize), InferenceError> {
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
    let mut row_seen = vec![usize::MAX; layout.n_rows];
    let mut col_seen = vec![usize::MAX; layout.n_cols];
    let mut idx = Vec::with_capacity(draws.pairs.len());
    for (k, block) in draws.pairs.chunks_exact(d).enumerate() {
        for &pair in block {
            let i = flat(pair, &|| format!("pair of draw {k}")).map_err(|e| match e {
                InferenceError::Layout(m) => InferenceError::Draws(m),
                other => other,
            })?;
            if !layout.admissible[i] {
                return Err(InferenceError::Draws(format!(
                    "draw {k} uses the inadmissible pair ({}, {})",
                    pair.0, pair.1
                )));
            }
            let (r, c) = (pair.0 as usize, pair.1 as usize);
            let reused = if layout.peers {
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
            idx.push(i as u32);
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
        l.real[1] = (0, 1);
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
            values: vec![0.0; 4],
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
