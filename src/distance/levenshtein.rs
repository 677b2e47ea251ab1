//! Edit (Levenshtein) distance between activity sequences.
//!
//! Levenshtein (1966, "Binary codes capable of correcting deletions, insertions and reversals",
//! Soviet Physics Doklady 10(8)) counts the fewest insertions, deletions and substitutions that
//! turn one sequence into another. The dynamic programme (Wagner and Fischer 1974) fills
//!
//! ```text
//! d[i][j] = min(d[i-1][j] + 1, d[i][j-1] + 1, d[i-1][j-1] + sub(a_i, b_j))
//! ```
//!
//! with `sub(a, a) = 0`; we keep two rows, so memory is `O(min(|a|, |b|))`. With unit costs
//! "kitten" to "sitting" is 3. Optional per-activity substitution costs `sub[a * m + b]`
//! (`m` activities) replace the unit cost of a substitution, e.g. to make swapping two related
//! activities cheap; insertions and deletions cost 1. The **normalised** variant divides by the
//! length of the longer sequence, giving a value in `[0, 1]` when substitution costs are at
//! most 2.
//!
//! Between cases of an event log, compute per **variant**: cases of one variant are at
//! distance 0, so an `n_variants x n_variants` matrix with the variant counts as weights holds
//! all the information of the `n_cases x n_cases` one.

use rayon::prelude::*;

use super::{check_budget, condensed_rows, n_pairs};
use crate::control::Control;
use crate::error::{TmError, TmResult};

/// Substitution costs for `m` activities (row-major `m x m`).
#[derive(Debug, Clone, PartialEq)]
pub struct SubCosts {
    /// Number of activities.
    pub m: usize,
    /// `cost[a * m + b]`: the cost of substituting `a` by `b`.
    pub cost: Vec<f64>,
}

impl SubCosts {
    /// Check the table: `m x m`, finite, non-negative, zero diagonal.
    pub fn new(m: usize, cost: Vec<f64>) -> TmResult<SubCosts> {
        if cost.len() != m * m {
            return Err(TmError::param(
                "substitution_cost",
                format!(
                    "the substitution-cost table must be {m} x {m} (one row and column per \
                     activity); got {} values",
                    cost.len()
                ),
            ));
        }
        for a in 0..m {
            for b in 0..m {
                let v = cost[a * m + b];
                if !v.is_finite() || v < 0.0 || (a == b && v != 0.0) {
                    return Err(TmError::param(
                        "substitution_cost",
                        format!(
                            "substitution cost [{a}, {b}] is {v}; costs must be finite, >= 0 and \
                             0 on the diagonal"
                        ),
                    ));
                }
            }
        }
        Ok(SubCosts { m, cost })
    }
}

/// Unit-cost Levenshtein distance.
pub fn levenshtein(a: &[u32], b: &[u32]) -> usize {
    let (a, b) = if a.len() < b.len() { (b, a) } else { (a, b) };
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    let mut cur = vec![0usize; b.len() + 1];
    for (i, &x) in a.iter().enumerate() {
        cur[0] = i + 1;
        for (j, &y) in b.iter().enumerate() {
            let sub = prev[j] + usize::from(x != y);
            cur[j + 1] = sub.min(prev[j + 1] + 1).min(cur[j] + 1);
        }
        std::mem::swap(&mut prev, &mut cur);
    }
    prev[b.len()]
}

/// Levenshtein distance with substitution costs (insertion and deletion cost 1).
pub fn levenshtein_weighted(a: &[u32], b: &[u32], sub: &SubCosts) -> f64 {
    let m = sub.m;
    let mut prev: Vec<f64> = (0..=b.len()).map(|j| j as f64).collect();
    let mut cur = vec![0.0f64; b.len() + 1];
    for (i, &x) in a.iter().enumerate() {
        cur[0] = (i + 1) as f64;
        for (j, &y) in b.iter().enumerate() {
            let s = if x == y {
                0.0
            } else {
                sub.cost[x as usize * m + y as usize]
            };
            cur[j + 1] = (prev[j] + s).min(prev[j + 1] + 1.0).min(cur[j] + 1.0);
        }
        std::mem::swap(&mut prev, &mut cur);
    }
    prev[b.len()]
}

/// The distance between two sequences with the given options.
pub fn edit_distance(a: &[u32], b: &[u32], sub: Option<&SubCosts>, normalised: bool) -> f64 {
    let d = match sub {
        Some(s) => levenshtein_weighted(a, b, s),
        None => levenshtein(a, b) as f64,
    };
    if normalised {
        let l = a.len().max(b.len());
        if l == 0 {
            0.0
        } else {
            d / l as f64
        }
    } else {
        d
    }
}

/// Condensed edit distances between `n = offsets.len() - 1` sequences given in CSR form.
pub fn edit_pdist(
    offsets: &[usize],
    codes: &[u32],
    sub: Option<&SubCosts>,
    normalised: bool,
    max_bytes: u64,
    ctl: &Control,
) -> TmResult<Vec<f64>> {
    let n = offsets.len().saturating_sub(1);
    check_budget(n, false, max_bytes)?;
    if let Some(s) = sub {
        if let Some(&bad) = codes.iter().find(|&&c| c as usize >= s.m) {
            return Err(TmError::param(
                "substitution_cost",
                format!(
                    "activity code {bad} has no row in the {0} x {0} cost table",
                    s.m
                ),
            ));
        }
    }
    let seq = |i: usize| &codes[offsets[i]..offsets[i + 1]];
    let mut out = vec![0.0; n_pairs(n)];
    ctl.set_total(n as u64);
    condensed_rows(&mut out, n)
        .into_par_iter()
        .try_for_each(|(i, row)| -> TmResult<()> {
            if i % 64 == 0 {
                ctl.check()?;
            }
            let a = seq(i);
            for (t, v) in row.iter_mut().enumerate() {
                *v = edit_distance(a, seq(i + 1 + t), sub, normalised);
            }
            ctl.advance(1);
            Ok(())
        })?;
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn codes(s: &str) -> Vec<u32> {
        s.bytes().map(u32::from).collect()
    }

    #[test]
    fn kitten_sitting_is_three() {
        // Levenshtein 1966; common textbook example (check value from memory, recomputed).
        assert_eq!(levenshtein(&codes("kitten"), &codes("sitting")), 3);
        assert_eq!(levenshtein(&codes("flaw"), &codes("lawn")), 2);
        assert_eq!(levenshtein(&codes(""), &codes("abc")), 3);
        // reference notes: abcd vs acbd is 2 (no transpositions)
        assert_eq!(levenshtein(&codes("abcd"), &codes("acbd")), 2);
    }

    #[test]
    fn weighted_matches_unit_and_discounts() {
        let m = 256;
        let mut cost = vec![1.0; m * m];
        for a in 0..m {
            cost[a * m + a] = 0.0;
        }
        let s = SubCosts::new(m, cost.clone()).unwrap();
        assert_eq!(
            levenshtein_weighted(&codes("kitten"), &codes("sitting"), &s),
            3.0
        );
        // substitution at cost 2 equals delete + insert: kitten/sitting becomes 5
        let two: Vec<f64> = cost.iter().map(|&c| c * 2.0).collect();
        let s2 = SubCosts::new(m, two).unwrap();
        assert_eq!(
            levenshtein_weighted(&codes("kitten"), &codes("sitting"), &s2),
            5.0
        );
        assert!(SubCosts::new(2, vec![0.0, -1.0, 1.0, 0.0]).is_err());
        assert_eq!(edit_distance(&codes("ab"), &codes("abcd"), None, true), 0.5);
    }

    #[test]
    fn condensed_over_sequences() {
        let seqs = ["abcdf", "acbdf", "xyz"];
        let mut off = vec![0];
        let mut all = Vec::new();
        for s in seqs {
            all.extend(codes(s));
            off.push(all.len());
        }
        let c = edit_pdist(&off, &all, None, false, u64::MAX, &Control::new()).unwrap();
        // reference notes, toy log T: abcdf-acbdf 2, abcdf-xyz 5, acbdf-xyz 5
        assert_eq!(c, vec![2.0, 5.0, 5.0]);
    }
}
