//! The pair grid: which member stands on each row and column of the pairing matrix, the flat
//! index of a (row, column) cell, the peers-mode mirror and the candidate cells. Every stage
//! that indexes a matrix of pairs (the pair plan, the engine's matrices, the inference layout,
//! the report's heat maps) goes through this one type, so the layout is written once.
//!
//! Index spaces are typed: a [`MemberIx`] indexes the study's members, a [`Row`] or [`Col`] a
//! line of the grid, a [`Cell`] the row-major flat index of a matrix of `n_rows × n_cols`
//! (the layout of [`PairGrid::matrix`]). Roles mode: row `d` and column `d` are the two
//! members of dyad `d`, so real pairs are the diagonal. Peers mode: rows and columns are all
//! members in member order; the grid is symmetric and a member against itself is no cell of
//! interest.

use ndarray::Array2;

/// Index of a member (one person's recording within one dyad) in the study's member list.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct MemberIx(pub usize);

/// A row of the pair grid (roles mode: the first role; peers mode: a member).
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct Row(pub usize);

/// A column of the pair grid (roles mode: the second role; peers mode: a member).
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct Col(pub usize);

/// The row-major flat index of a (row, column) cell.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct Cell(pub usize);

#[derive(Clone, Debug, PartialEq, Eq)]
pub struct PairGrid {
    rows: Vec<MemberIx>,
    cols: Vec<MemberIx>,
    peers: bool,
}

impl PairGrid {
    /// Roles mode: `rows[d]` and `cols[d]` are the two members of dyad `d`.
    pub fn roles(rows: Vec<MemberIx>, cols: Vec<MemberIx>) -> Self {
        PairGrid {
            rows,
            cols,
            peers: false,
        }
    }

    /// Peers mode: every member is a row and a column, in member order.
    pub fn peers(n_members: usize) -> Self {
        let all: Vec<MemberIx> = (0..n_members).map(MemberIx).collect();
        PairGrid {
            rows: all.clone(),
            cols: all,
            peers: true,
        }
    }

    pub fn is_peers(&self) -> bool {
        self.peers
    }

    pub fn n_rows(&self) -> usize {
        self.rows.len()
    }

    pub fn n_cols(&self) -> usize {
        self.cols.len()
    }

    /// Number of cells, `n_rows × n_cols`.
    pub fn len(&self) -> usize {
        self.rows.len() * self.cols.len()
    }

    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    pub fn rows(&self) -> &[MemberIx] {
        &self.rows
    }

    pub fn cols(&self) -> &[MemberIx] {
        &self.cols
    }

    pub fn row_member(&self, r: Row) -> MemberIx {
        self.rows[r.0]
    }

    pub fn col_member(&self, c: Col) -> MemberIx {
        self.cols[c.0]
    }

    pub fn cell(&self, r: Row, c: Col) -> Cell {
        debug_assert!(r.0 < self.n_rows() && c.0 < self.n_cols());
        Cell(r.0 * self.cols.len() + c.0)
    }

    /// Whether (r, c) lies on the grid.
    pub fn contains(&self, r: Row, c: Col) -> bool {
        r.0 < self.n_rows() && c.0 < self.n_cols()
    }

    pub fn row_col(&self, cell: Cell) -> (Row, Col) {
        (Row(cell.0 / self.cols.len()), Col(cell.0 % self.cols.len()))
    }

    /// Peers mode: the same pair seen from the other member (the transposed cell); roles
    /// mode has no mirror.
    pub fn mirror(&self, cell: Cell) -> Option<Cell> {
        self.peers.then(|| {
            let (r, c) = self.row_col(cell);
            self.cell(Row(c.0), Col(r.0))
        })
    }

    /// The cell of an unordered peers pair in its `row < col` orientation; roles mode: itself.
    pub fn canonical(&self, cell: Cell) -> Cell {
        let (r, c) = self.row_col(cell);
        if self.peers && c.0 < r.0 {
            self.cell(Row(c.0), Col(r.0))
        } else {
            cell
        }
    }

    /// Every candidate once: roles mode every row × column, row-major; peers mode every
    /// `row < col`.
    pub fn candidates(&self) -> impl Iterator<Item = (Row, Col)> + '_ {
        let nc = self.n_cols();
        let peers = self.peers;
        (0..self.n_rows()).flat_map(move |r| {
            let start = if peers { r + 1 } else { 0 };
            (start..nc).map(move |c| (Row(r), Col(c)))
        })
    }

    /// A matrix of the grid's shape, every cell `fill`; its row-major order is [`Cell`]'s.
    pub fn matrix<T: Clone>(&self, fill: T) -> Array2<T> {
        Array2::from_elem((self.n_rows(), self.n_cols()), fill)
    }

    /// A matrix from one value per cell in [`Cell`] order.
    pub fn matrix_from(&self, values: Vec<f64>) -> Array2<f64> {
        Array2::from_shape_vec((self.n_rows(), self.n_cols()), values)
            .expect("one value per cell of the grid")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: the definitions above, by hand on a 3 × 3 peers grid and a 2 × 3 roles grid.
    #[test]
    fn flat_index_mirror_and_candidates() {
        let g = PairGrid::peers(3);
        assert_eq!(g.cell(Row(1), Col(2)), Cell(5));
        assert_eq!(g.row_col(Cell(7)), (Row(2), Col(1)));
        assert_eq!(g.mirror(Cell(5)), Some(Cell(7)));
        assert_eq!(g.canonical(Cell(7)), Cell(5));
        let cands: Vec<(usize, usize)> = g.candidates().map(|(r, c)| (r.0, c.0)).collect();
        assert_eq!(cands, vec![(0, 1), (0, 2), (1, 2)]);
        let roles = PairGrid::roles(
            vec![MemberIx(0), MemberIx(2)],
            vec![MemberIx(1), MemberIx(3), MemberIx(5)],
        );
        assert_eq!(roles.len(), 6);
        assert_eq!(roles.cell(Row(1), Col(0)), Cell(3));
        assert_eq!(roles.mirror(Cell(3)), None);
        assert_eq!(roles.candidates().count(), 6);
        assert_eq!(roles.col_member(Col(2)), MemberIx(5));
        let m = roles.matrix_from((0..6).map(f64::from).collect());
        assert_eq!(m[[1, 0]], 3.0);
        assert_eq!(m.as_slice().unwrap()[roles.cell(Row(0), Col(2)).0], 2.0);
    }
}
