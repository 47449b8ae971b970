//! Unsigned integers of any size, just enough for exact re-pairing counts: products of
//! block counts and the alternating sums of inclusion–exclusion. Must not grow into a
//! general-purpose library; the counting code is its only user.

use std::cmp::Ordering;

/// Little-endian base-2^64 limbs without trailing zero limbs.
#[derive(Debug, Clone, PartialEq, Eq)]
pub(super) struct BigUint {
    limbs: Vec<u64>,
}

impl BigUint {
    pub(super) fn zero() -> Self {
        BigUint { limbs: Vec::new() }
    }

    pub(super) fn from_u128(v: u128) -> Self {
        let mut b = BigUint {
            limbs: vec![v as u64, (v >> 64) as u64],
        };
        b.trim();
        b
    }

    fn trim(&mut self) {
        while self.limbs.last() == Some(&0) {
            self.limbs.pop();
        }
    }

    pub(super) fn is_zero(&self) -> bool {
        self.limbs.is_empty()
    }

    #[cfg(test)]
    pub(super) fn to_u128(&self) -> Option<u128> {
        match self.limbs.len() {
            0 => Some(0),
            1 => Some(self.limbs[0] as u128),
            2 => Some(self.limbs[0] as u128 | (self.limbs[1] as u128) << 64),
            _ => None,
        }
    }

    pub(super) fn add(&self, o: &BigUint) -> BigUint {
        let n = self.limbs.len().max(o.limbs.len());
        let mut out = Vec::with_capacity(n + 1);
        let mut carry = 0u128;
        for i in 0..n {
            let s = *self.limbs.get(i).unwrap_or(&0) as u128
                + *o.limbs.get(i).unwrap_or(&0) as u128
                + carry;
            out.push(s as u64);
            carry = s >> 64;
        }
        out.push(carry as u64);
        let mut b = BigUint { limbs: out };
        b.trim();
        b
    }

    /// `self - o`, or `None` when `o > self`.
    pub(super) fn checked_sub(&self, o: &BigUint) -> Option<BigUint> {
        if *self < *o {
            return None;
        }
        let mut out = Vec::with_capacity(self.limbs.len());
        let mut borrow = 0u64;
        for i in 0..self.limbs.len() {
            let (d1, b1) = self.limbs[i].overflowing_sub(*o.limbs.get(i).unwrap_or(&0));
            let (d2, b2) = d1.overflowing_sub(borrow);
            out.push(d2);
            borrow = (b1 || b2) as u64;
        }
        let mut b = BigUint { limbs: out };
        b.trim();
        Some(b)
    }

    pub(super) fn mul(&self, o: &BigUint) -> BigUint {
        if self.is_zero() || o.is_zero() {
            return BigUint::zero();
        }
        let mut out = vec![0u64; self.limbs.len() + o.limbs.len()];
        for (i, &a) in self.limbs.iter().enumerate() {
            let mut carry = 0u128;
            for (j, &b) in o.limbs.iter().enumerate() {
                let t = a as u128 * b as u128 + out[i + j] as u128 + carry;
                out[i + j] = t as u64;
                carry = t >> 64;
            }
            let mut k = i + o.limbs.len();
            while carry > 0 {
                let t = out[k] as u128 + carry;
                out[k] = t as u64;
                carry = t >> 64;
                k += 1;
            }
        }
        let mut b = BigUint { limbs: out };
        b.trim();
        b
    }

    pub(super) fn mul_u64(&self, m: u64) -> BigUint {
        self.mul(&BigUint::from_u128(m as u128))
    }

    /// Divides in place by `d > 0` and returns the remainder.
    fn div_rem_u64(&mut self, d: u64) -> u64 {
        let mut rem = 0u128;
        for limb in self.limbs.iter_mut().rev() {
            let cur = rem << 64 | *limb as u128;
            *limb = (cur / d as u128) as u64;
            rem = cur % d as u128;
        }
        self.trim();
        rem as u64
    }

    pub(super) fn to_decimal(&self) -> String {
        if self.is_zero() {
            return "0".to_owned();
        }
        const CHUNK: u64 = 10_000_000_000_000_000_000; // 10^19
        let mut v = self.clone();
        let mut parts = Vec::new();
        while !v.is_zero() {
            parts.push(v.div_rem_u64(CHUNK));
        }
        let mut s = parts.last().unwrap().to_string();
        for p in parts.iter().rev().skip(1) {
            s.push_str(&format!("{p:019}"));
        }
        s
    }

    /// Nearest double; `inf` beyond the double range.
    pub(super) fn to_f64(&self) -> f64 {
        self.limbs
            .iter()
            .rev()
            .fold(0.0, |acc, &l| acc * 18_446_744_073_709_551_616.0 + l as f64)
    }

    /// `log10(self)`, finite for any size; `-inf` for zero.
    pub(super) fn log10(&self) -> f64 {
        let n = self.limbs.len();
        if n <= 2 {
            return self.to_f64().log10();
        }
        let top =
            self.limbs[n - 1] as f64 * 18_446_744_073_709_551_616.0 + self.limbs[n - 2] as f64;
        top.log10() + (64 * (n - 2)) as f64 * std::f64::consts::LOG10_2
    }
}

impl PartialOrd for BigUint {
    fn partial_cmp(&self, o: &Self) -> Option<Ordering> {
        Some(self.cmp(o))
    }
}

impl Ord for BigUint {
    fn cmp(&self, o: &Self) -> Ordering {
        self.limbs
            .len()
            .cmp(&o.limbs.len())
            .then_with(|| self.limbs.iter().rev().cmp(o.limbs.iter().rev()))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn factorial(n: u64) -> BigUint {
        (1..=n).fold(BigUint::from_u128(1), |a, k| a.mul_u64(k))
    }

    // Source: 30! = 265252859812191058636308480000000 and
    // 40! = 815915283247897734345611269596115894272000000000 (standard factorial
    // tables, e.g. OEIS A000142); 25! fits u128 and is checked against native
    // arithmetic.
    #[test]
    fn factorials_match_tables() {
        assert_eq!(
            factorial(30).to_decimal(),
            "265252859812191058636308480000000"
        );
        assert_eq!(
            factorial(40).to_decimal(),
            "815915283247897734345611269596115894272000000000"
        );
        let f25: u128 = (1..=25u128).product();
        assert_eq!(factorial(25).to_u128(), Some(f25));
        assert!((factorial(40).log10() - 47.911_645_068_155_87).abs() < 1e-9);
        assert!((factorial(40).to_f64() / 8.159_152_832_478_977e47 - 1.0).abs() < 1e-12);
        assert_eq!(BigUint::zero().to_decimal(), "0");
    }

    // Source: native u128 arithmetic on values that fit, as the reference.
    #[test]
    fn add_sub_mul_agree_with_u128() {
        let xs: [u128; 6] = [
            0,
            1,
            7,
            u64::MAX as u128,
            (u64::MAX as u128) * 3 + 5,
            1 << 100,
        ];
        for &a in &xs {
            for &b in &xs {
                let (ba, bb) = (BigUint::from_u128(a), BigUint::from_u128(b));
                if let Some(s) = a.checked_add(b) {
                    assert_eq!(ba.add(&bb).to_u128(), Some(s));
                }
                assert_eq!(
                    ba.checked_sub(&bb).map(|x| x.to_u128().unwrap()),
                    a.checked_sub(b)
                );
                if let Some(p) = a.checked_mul(b) {
                    assert_eq!(ba.mul(&bb).to_u128(), Some(p));
                }
                assert_eq!(ba.cmp(&bb), a.cmp(&b));
            }
        }
        // (2^100)^2 = 2^200: decimal from the standard power-of-two table.
        let big = BigUint::from_u128(1 << 100);
        assert_eq!(
            big.mul(&big).to_decimal(),
            "1606938044258990275541962092341162602522202993782792835301376"
        );
    }
}
