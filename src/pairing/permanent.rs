//! The permanent of a square 0/1 matrix by Ryser's formula: exact and exponential,
//! for the roles blocks that inclusion–exclusion cannot do. Owns the arithmetic only;
//! which block to count this way is decided by the counting module.

use rayon::prelude::*;

use num_bigint::BigUint;

/// Largest roles block counted by Ryser's formula: on the 2-core development machine
/// a dense 24 × 24 block takes 0.4–0.9 s (2^24 Gray-code steps), 25 × 25 about twice
/// that.
pub(super) const RYSER_MAX: usize = 24;

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
        return BigUint::from(1u32);
    }
    // The product of the row sums bounds the permanent: stay in u64 when it fits.
    let bound = a.iter().try_fold(1u128, |acc, row| {
        acc.checked_mul(row.iter().filter(|&&x| x).count() as u128)
    });
    match bound {
        Some(b) if b < u64::MAX as u128 => BigUint::from(ryser::<u64>(a)),
        _ => BigUint::from(ryser::<u128>(a)),
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
            if (n - size).is_multiple_of(2) {
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
