//! Eclat with diffsets (Zaki 2000, "Scalable algorithms for association mining", IEEE TKDE
//! 12(3):372–390; Zaki & Gouda 2003, "Fast vertical mining using diffsets", KDD).
//!
//! Eclat works on the *vertical* layout: each item carries its tidset `t(i)`, the sorted ids of
//! the transactions that contain it, and `σ(X) = |t(X)|`. Itemsets sharing a prefix `P` form an
//! *equivalence class* `[P]`; joining two members `PX`, `PY` gives `PXY` with
//! `t(PXY) = t(PX) ∩ t(PY)`. Classes are mined depth-first and independently (here, one
//! rayon task per top-level class).
//!
//! *Diffsets* store what a member loses relative to its prefix instead of what it keeps:
//! `d(PX) = t(P) \ t(PX)`, so `σ(PX) = σ(P) − |d(PX)|`. At the second level
//! `d(XY) = t(X) \ t(Y)`; deeper down `d(PXY) = d(PY) \ d(PX)` and
//! `σ(PXY) = σ(PX) − |d(PXY)|`. On dense data diffsets are far smaller than tidsets; on
//! sparse data it is the other way round, so a class starts with tidsets and switches to
//! diffsets (for good, below it) when their total size is the smaller one.
//! Items are ordered by ascending support, which keeps the classes of rare items small.

use rayon::prelude::*;

use super::itemsets::{frequent_items, run_tasks, ItemsetParams, Itemsets, Sink};
use super::transactions::Transactions;
use crate::control::Control;
use crate::error::TmResult;

/// `a \ b` for sorted slices.
fn difference(a: &[u32], b: &[u32]) -> Vec<u32> {
    let mut out = Vec::with_capacity(a.len());
    let mut j = 0;
    for &x in a {
        while j < b.len() && b[j] < x {
            j += 1;
        }
        if j >= b.len() || b[j] != x {
            out.push(x);
        }
    }
    out
}

/// `a ∩ b` for sorted slices.
fn intersection(a: &[u32], b: &[u32]) -> Vec<u32> {
    let mut out = Vec::with_capacity(a.len().min(b.len()));
    let (mut i, mut j) = (0, 0);
    while i < a.len() && j < b.len() {
        match a[i].cmp(&b[j]) {
            std::cmp::Ordering::Less => i += 1,
            std::cmp::Ordering::Greater => j += 1,
            std::cmp::Ordering::Equal => {
                out.push(a[i]);
                i += 1;
                j += 1;
            }
        }
    }
    out
}

/// A class member: item code, support and its set relative to the class prefix `P`: the
/// tidset `t(PX)`, or, in a class of diffsets, `d(PX) = t(P) \ t(PX)`.
struct Member {
    item: u32,
    support: u64,
    set: Vec<u32>,
}

/// The class of `PX` (`ma`) from the members after it (`rest`), keeping the frequent ones.
/// Returns the members and whether they hold diffsets.
///
/// A class of diffsets has diffset children: `d(PXY) = d(PY) \ d(PX)`. A class of tidsets
/// has tidset children, `t(PXY) = t(PX) ∩ t(PY)`, unless their diffsets relative to `PX`
/// would be smaller in total (dense data): then they are converted,
/// `d(PXY) = t(PX) \ t(PXY)`, and stay diffsets below (Zaki & Gouda 2003 switch the same
/// way; on sparse data the tidsets are the small ones).
fn children(
    ma: &Member,
    rest: &[Member],
    diff: bool,
    min: u64,
    parallel: bool,
    maybe: &(dyn Fn(usize) -> bool + Sync),
) -> (Vec<Member>, bool) {
    // `maybe(k)` is false when `rest[k]` is known to be infrequent with `ma` already.
    let join = |(k, mb): (usize, &Member)| -> Option<Member> {
        if !maybe(k) {
            return None;
        }
        if diff {
            let d = difference(&mb.set, &ma.set);
            let s = ma.support - d.len() as u64;
            (s >= min).then_some(Member {
                item: mb.item,
                support: s,
                set: d,
            })
        } else {
            let t = intersection(&ma.set, &mb.set);
            (t.len() as u64 >= min).then_some(Member {
                item: mb.item,
                support: t.len() as u64,
                set: t,
            })
        }
    };
    let mut next: Vec<Member> = if parallel {
        rest.par_iter()
            .enumerate()
            .with_min_len(64)
            .filter_map(join)
            .collect()
    } else {
        rest.iter().enumerate().filter_map(join).collect()
    };
    if diff {
        return (next, true);
    }
    let kept: u64 = next.iter().map(|m| m.support).sum();
    let lost: u64 = next.iter().map(|m| ma.support - m.support).sum();
    if lost < kept {
        for m in &mut next {
            m.set = difference(&ma.set, &m.set);
        }
        return (next, true);
    }
    (next, false)
}

fn mine_class(
    members: &[Member],
    diff: bool,
    prefix: &mut Vec<u32>,
    min: u64,
    max_len: usize,
    sink: &mut Sink<'_>,
) -> TmResult<bool> {
    for a in 0..members.len() {
        let ma = &members[a];
        prefix.push(ma.item);
        if !sink.emit(prefix, ma.support)? {
            prefix.pop();
            return Ok(false);
        }
        if prefix.len() < max_len {
            let (next, next_diff) = children(ma, &members[a + 1..], diff, min, false, &|_| true);
            if !next.is_empty() && !mine_class(&next, next_diff, prefix, min, max_len, sink)? {
                prefix.pop();
                return Ok(false);
            }
        }
        prefix.pop();
    }
    Ok(true)
}

/// Largest number of frequent items for which the pair table is built (`n (n - 1) / 2` u32s,
/// one table per thread: 32 MB each at 4096).
const PAIR_TABLE_MAX: usize = 4096;

/// Position of the pair `(a, b)`, `a < b < n`, in the triangular table.
#[inline]
fn tri(a: usize, b: usize, n: usize) -> usize {
    a * (2 * n - a - 1) / 2 + (b - a - 1)
}

/// How many transactions hold each pair of frequent items (by position in ascending-support
/// order), counted in one part of the transactions per thread (one table each).
fn pair_counts(t: &Transactions, pos: &[u32], n: usize) -> Vec<u32> {
    let size = n * (n - 1) / 2;
    let parts = rayon::current_num_threads().clamp(1, t.len().max(1));
    let per = t.len().div_ceil(parts);
    (0..parts)
        .into_par_iter()
        .map(|pi| {
            let mut c = vec![0u32; size];
            let mut row: Vec<usize> = Vec::new();
            for k in pi * per..((pi + 1) * per).min(t.len()) {
                row.clear();
                row.extend(
                    t.get(k)
                        .iter()
                        .map(|&i| pos[i as usize])
                        .filter(|&q| q != u32::MAX)
                        .map(|q| q as usize),
                );
                row.sort_unstable();
                for (x, &a) in row.iter().enumerate() {
                    for &b in &row[x + 1..] {
                        c[tri(a, b, n)] += 1;
                    }
                }
            }
            c
        })
        .reduce(
            || vec![0u32; size],
            |mut a, b| {
                a.iter_mut().zip(b).for_each(|(x, y)| *x += y);
                a
            },
        )
}

/// Frequent itemsets by Eclat, tidsets switching to diffsets where those are smaller (not yet
/// in canonical order).
pub(crate) fn mine(
    t: &Transactions,
    p: &ItemsetParams,
    min: u64,
    ctl: &Control,
) -> TmResult<Itemsets> {
    let (counts, freq, pos) = frequent_items(t, min, true);
    let mut items: Vec<Member> = freq
        .iter()
        .map(|&i| Member {
            item: i,
            support: counts[i as usize],
            set: Vec::with_capacity(counts[i as usize] as usize),
        })
        .collect();
    for k in 0..t.len() {
        for &i in t.get(k) {
            let q = pos[i as usize];
            if q != u32::MAX {
                items[q as usize].set.push(k as u32);
            }
        }
    }
    ctl.check()?;
    let max_len = p.max_len.unwrap_or(usize::MAX);
    let n = items.len();
    // Supports of all pairs from one pass over the transactions (a triangular table), so that
    // the second level intersects only the frequent pairs: on sparse data most of the n^2 / 2
    // pairs are not, and each intersection costs the length of two tidsets.
    let pairs =
        (max_len >= 2 && (2..=PAIR_TABLE_MAX).contains(&n)).then(|| pair_counts(t, &pos, n));
    run_tasks(n, p, min, t.len(), ctl, |a, sink| {
        let mut prefix = vec![items[a].item];
        if !sink.emit(&prefix, items[a].support)? {
            return Ok(false);
        }
        if max_len < 2 {
            return Ok(true);
        }
        let frequent_pair = |k: usize| {
            pairs
                .as_ref()
                .is_none_or(|c| u64::from(c[tri(a, a + 1 + k, n)]) >= min)
        };
        let (members, diff) =
            children(&items[a], &items[a + 1..], false, min, true, &frequent_pair);
        mine_class(&members, diff, &mut prefix, min, max_len, sink)
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn classes_keep_tidsets_when_sparse_and_switch_when_dense() {
        let m = |item, set: Vec<u32>| Member {
            item,
            support: set.len() as u64,
            set,
        };
        let a = m(0, (0..10).collect());
        // Sparse: each child keeps 2 of a's 10 transactions; tidsets (2) beat diffsets (8).
        let rest = [m(1, vec![0, 1, 20]), m(2, vec![5, 6, 30])];
        let (c, diff) = children(&a, &rest, false, 2, false, &|_| true);
        assert!(!diff);
        assert_eq!((c[0].support, &c[0].set), (2, &vec![0, 1]));
        // Dense: each child keeps 9 of 10; diffsets (1) are stored, support still 9.
        let rest = [m(1, (1..10).collect()), m(2, (0..9).collect())];
        let (c, diff) = children(&a, &rest, false, 2, false, &|_| true);
        assert!(diff);
        assert_eq!((c[0].support, &c[0].set), (9, &vec![0]));
        assert_eq!((c[1].support, &c[1].set), (9, &vec![9]));
        // Below a class of diffsets: d(PXY) = d(PY) \ d(PX), support from the parent's.
        let (g, diff) = children(&c[0], &c[1..], true, 2, false, &|_| true);
        assert!(diff);
        assert_eq!((g[0].support, &g[0].set), (8, &vec![9]));
        // A pair known to be infrequent is not joined.
        let (c, _) = children(&a, &rest, false, 2, false, &|k| k == 1);
        assert_eq!(c.iter().map(|x| x.item).collect::<Vec<_>>(), vec![2]);
    }

    #[test]
    fn sorted_intersection() {
        assert_eq!(intersection(&[1, 3, 5, 7], &[3, 4, 7, 9]), vec![3, 7]);
        assert_eq!(intersection(&[], &[1]), Vec::<u32>::new());
    }

    #[test]
    fn sorted_difference() {
        assert_eq!(difference(&[1, 3, 5, 7], &[3, 4, 7]), vec![1, 5]);
        assert_eq!(difference(&[], &[1]), Vec::<u32>::new());
        assert_eq!(difference(&[2], &[]), vec![2]);
    }
}
