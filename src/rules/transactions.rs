//! Transactions: one set of items per basket (or per case), stored as CSR.
//!
//! A transaction database `D = {T_1, ..., T_n}` is a list of item sets over items `0..n_items`
//! (Agrawal, Imieliński & Swami 1993). An item counts once per transaction: presence, not
//! frequency, so [`Transactions::from_csr`] sorts each transaction and drops repeats. Empty
//! transactions are kept: they count in `n` (and so lower every relative support) but hold no
//! item.
//!
//! The *support count* `σ(X)` of an itemset `X` is the number of transactions that contain it;
//! its relative support is `σ(X) / n`. [`MinSupport`] turns a user threshold (a fraction in
//! `(0, 1]` or a count in `1..=n`) into the smallest count that meets it, with the same
//! comparison as `count / n >= fraction` in floating point.
//!
//! ```
//! use tracemill::rules::{MinSupport, Transactions};
//! let t = Transactions::from_csr(vec![0, 2, 5, 5], vec![1, 0, 2, 1, 1], 3).unwrap();
//! assert_eq!(t.len(), 3);
//! assert_eq!(t.get(1), &[1, 2]); // sorted, repeats dropped
//! assert_eq!(t.item_counts(), vec![1, 2, 1]);
//! assert_eq!(MinSupport::Fraction(0.5).resolve(t.len()).unwrap(), 2);
//! ```

use crate::error::{TmError, TmResult};

/// A transaction database in CSR form; items of a transaction are sorted and distinct.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Transactions {
    offsets: Vec<usize>,
    items: Vec<u32>,
    n_items: usize,
}

impl Transactions {
    /// Build from CSR offsets (`n + 1`, starting at 0, non-decreasing, ending at
    /// `items.len()`) and item codes (each `< n_items`). Each transaction is sorted and
    /// repeated items are dropped (an item counts once per transaction).
    pub fn from_csr(offsets: Vec<usize>, items: Vec<u32>, n_items: usize) -> TmResult<Self> {
        if offsets.first() != Some(&0) {
            return Err(TmError::param(
                "offsets",
                "transaction offsets must start at 0 (one more offset than transactions)",
            ));
        }
        if let Some(i) = offsets.windows(2).position(|w| w[1] < w[0]) {
            return Err(TmError::param(
                "offsets",
                format!(
                    "transaction offsets must not decrease; offset {} is smaller than offset {i}",
                    i + 1
                ),
            ));
        }
        if offsets.last() != Some(&items.len()) {
            return Err(TmError::param(
                "offsets",
                format!(
                    "the last transaction offset must equal the number of items ({}); got {:?}",
                    items.len(),
                    offsets.last()
                ),
            ));
        }
        if let Some(p) = items.iter().position(|&c| c as usize >= n_items) {
            let t = offsets.partition_point(|&o| o <= p) - 1;
            return Err(TmError::data(format!(
                "transaction {t} holds item code {} but there are only {n_items} items",
                items[p]
            )));
        }
        let n = offsets.len() - 1;
        // Sort each transaction in place, then compact away repeats in one pass (no
        // per-transaction allocation).
        let mut items = items;
        let mut new_off = Vec::with_capacity(n + 1);
        new_off.push(0);
        let mut w = 0usize;
        for t in 0..n {
            let (a, b) = (offsets[t], offsets[t + 1]);
            let seg = &mut items[a..b];
            if !seg.is_sorted() {
                seg.sort_unstable();
            }
            let start = w;
            let mut r = a;
            while r < b {
                let x = items[r];
                if w == start || items[w - 1] != x {
                    items[w] = x;
                    w += 1;
                }
                r += 1;
            }
            new_off.push(w);
        }
        items.truncate(w);
        let new_items = items;
        Ok(Transactions {
            offsets: new_off,
            items: new_items,
            n_items,
        })
    }

    /// Build from one list of item codes per transaction.
    pub fn from_lists(lists: &[Vec<u32>], n_items: usize) -> TmResult<Self> {
        let mut offsets = Vec::with_capacity(lists.len() + 1);
        offsets.push(0);
        let mut items = Vec::new();
        for l in lists {
            items.extend_from_slice(l);
            offsets.push(items.len());
        }
        Self::from_csr(offsets, items, n_items)
    }

    /// Number of transactions (empty ones included).
    pub fn len(&self) -> usize {
        self.offsets.len() - 1
    }
    /// Whether there is no transaction.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }
    /// Size of the item dictionary.
    pub fn n_items(&self) -> usize {
        self.n_items
    }
    /// The sorted, distinct items of transaction `t`.
    pub fn get(&self, t: usize) -> &[u32] {
        &self.items[self.offsets[t]..self.offsets[t + 1]]
    }
    /// CSR offsets (`len() + 1`).
    pub fn offsets(&self) -> &[usize] {
        &self.offsets
    }
    /// Concatenated items.
    pub fn items(&self) -> &[u32] {
        &self.items
    }
    /// Number of empty transactions.
    pub fn n_empty(&self) -> usize {
        self.offsets.windows(2).filter(|w| w[0] == w[1]).count()
    }
    /// Support count of every item.
    pub fn item_counts(&self) -> Vec<u64> {
        let mut c = vec![0u64; self.n_items];
        for &i in &self.items {
            c[i as usize] += 1;
        }
        c
    }
}

/// A minimum support: a fraction of the transactions or a count.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum MinSupport {
    /// Relative support in `(0, 1]`.
    Fraction(f64),
    /// Absolute support count in `1..=n`.
    Count(u64),
}

impl MinSupport {
    /// The smallest count `c >= 1` that meets the threshold for `n` transactions: for a
    /// fraction `f`, the smallest `c` with `c / n >= f` in floating point.
    pub fn resolve(self, n: usize) -> TmResult<u64> {
        match self {
            MinSupport::Fraction(f) => {
                if !(f > 0.0 && f <= 1.0) {
                    return Err(TmError::param(
                        "min_support",
                        format!("min_support as a fraction must be in (0, 1]; got {f}"),
                    ));
                }
                if n == 0 {
                    return Ok(1);
                }
                let nf = n as f64;
                let mut c = ((f * nf).ceil() as u64).max(1);
                while c > 1 && ((c - 1) as f64) / nf >= f {
                    c -= 1;
                }
                while (c as f64) / nf < f {
                    c += 1;
                }
                Ok(c)
            }
            MinSupport::Count(c) => {
                if c == 0 {
                    return Err(TmError::param(
                        "min_support",
                        "min_support as a count must be at least 1; got 0",
                    ));
                }
                if c as usize > n {
                    return Err(TmError::param(
                        "min_support",
                        format!(
                            "min_support count {c} is above the number of transactions ({n}); \
                             give a count in 1..={n} or a fraction in (0, 1]"
                        ),
                    ));
                }
                Ok(c)
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn csr_is_cleaned_and_validated() {
        let t = Transactions::from_csr(vec![0, 3, 3], vec![2, 2, 0], 3).unwrap();
        assert_eq!(t.get(0), &[0, 2]);
        assert_eq!(t.n_empty(), 1);
        assert!(matches!(
            Transactions::from_csr(vec![1, 2], vec![0, 0], 1),
            Err(TmError::Parameter { .. })
        ));
        assert!(matches!(
            Transactions::from_csr(vec![0, 2, 1], vec![0, 0], 1),
            Err(TmError::Parameter { .. })
        ));
        assert!(matches!(
            Transactions::from_csr(vec![0, 1], vec![5], 2),
            Err(TmError::Data { .. })
        ));
    }

    #[test]
    fn min_support_rules() {
        assert_eq!(MinSupport::Fraction(0.01).resolve(100_000).unwrap(), 1000);
        assert_eq!(MinSupport::Fraction(0.3).resolve(10).unwrap(), 3);
        assert_eq!(MinSupport::Fraction(1.0).resolve(7).unwrap(), 7);
        assert!(MinSupport::Fraction(0.0).resolve(7).is_err());
        assert!(MinSupport::Fraction(1.5).resolve(7).is_err());
        assert!(MinSupport::Fraction(f64::NAN).resolve(7).is_err());
        assert!(MinSupport::Count(8).resolve(7).is_err());
        assert!(MinSupport::Count(0).resolve(7).is_err());
        assert_eq!(MinSupport::Count(7).resolve(7).unwrap(), 7);
    }

    #[test]
    fn autotraits() {
        fn ok<T: Send + Sync>() {}
        ok::<Transactions>();
        ok::<MinSupport>();
    }
}
