//! A dense bit matrix for admissibility look-ups in the inner loops of counting and
//! sampling. Owns storage only; what a set bit means is decided by the plan.

#[derive(Debug, Clone, PartialEq, Eq)]
pub(super) struct BitMatrix {
    n_cols: usize,
    words: usize,
    data: Vec<u64>,
}

impl BitMatrix {
    pub(super) fn new(n_rows: usize, n_cols: usize) -> Self {
        let words = n_cols.div_ceil(64).max(1);
        BitMatrix {
            n_cols,
            words,
            data: vec![0; n_rows * words],
        }
    }

    #[inline]
    pub(super) fn get(&self, r: usize, c: usize) -> bool {
        debug_assert!(c < self.n_cols);
        (self.data[r * self.words + c / 64] >> (c % 64)) & 1 == 1
    }

    pub(super) fn set(&mut self, r: usize, c: usize) {
        self.data[r * self.words + c / 64] |= 1 << (c % 64);
    }

    pub(super) fn row(&self, r: usize) -> &[u64] {
        &self.data[r * self.words..(r + 1) * self.words]
    }

    pub(super) fn words(&self) -> usize {
        self.words
    }

    pub(super) fn row_count(&self, r: usize) -> usize {
        self.row(r).iter().map(|w| w.count_ones() as usize).sum()
    }

    /// Column indices of the set bits of row `r`, ascending.
    pub(super) fn ones(&self, r: usize) -> impl Iterator<Item = usize> + '_ {
        self.row(r).iter().enumerate().flat_map(|(i, &w)| {
            let mut w = w;
            std::iter::from_fn(move || {
                if w == 0 {
                    None
                } else {
                    let b = w.trailing_zeros() as usize;
                    w &= w - 1;
                    Some(i * 64 + b)
                }
            })
        })
    }
}

/// Index of the `k`-th set bit (0-based) of the AND of two equally long bit rows.
pub(super) fn nth_common(a: &[u64], b: &[u64], mut k: usize) -> Option<usize> {
    for (i, (&x, &y)) in a.iter().zip(b).enumerate() {
        let mut w = x & y;
        let n = w.count_ones() as usize;
        if k >= n {
            k -= n;
            continue;
        }
        for _ in 0..k {
            w &= w - 1;
        }
        return Some(i * 64 + w.trailing_zeros() as usize);
    }
    None
}

pub(super) fn count_common(a: &[u64], b: &[u64]) -> usize {
    a.iter()
        .zip(b)
        .map(|(&x, &y)| (x & y).count_ones() as usize)
        .sum()
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: direct comparison with a Vec<bool> reference built alongside.
    #[test]
    fn bits_agree_with_bool_reference() {
        let (nr, nc) = (5, 130);
        let mut m = BitMatrix::new(nr, nc);
        let reference: Vec<Vec<bool>> = (0..nr)
            .map(|r| (0..nc).map(|c| (r * 7 + c * 13) % 5 == 0).collect())
            .collect();
        for (r, row) in reference.iter().enumerate() {
            for (c, &x) in row.iter().enumerate() {
                if x {
                    m.set(r, c);
                }
            }
        }
        for (r, row) in reference.iter().enumerate() {
            let ones: Vec<usize> = (0..nc).filter(|&c| row[c]).collect();
            assert_eq!(m.ones(r).collect::<Vec<_>>(), ones);
            assert_eq!(m.row_count(r), ones.len());
            let all = vec![u64::MAX; m.words()];
            for (k, &c) in ones.iter().enumerate() {
                assert_eq!(nth_common(m.row(r), &all, k), Some(c));
            }
            assert_eq!(nth_common(m.row(r), &all, ones.len()), None);
            assert_eq!(count_common(m.row(r), &all), ones.len());
        }
    }
}
