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
//! `σ(PXY) = σ(PX) − |d(PXY)|`. On dense data diffsets are far smaller than tidsets.
//! Items are ordered by ascending support, which keeps the classes of rare items small.

use rayon::prelude::*;

use super::itemsets::{run_tasks, ItemsetParams, Itemsets, Sink};
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

/// A class member: item code, support and diffset relative to the class prefix.
struct Member {
    item: u32,
    support: u64,
    diff: Vec<u32>,
}

fn mine_class(
    members: &[Member],
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
            let next: Vec<Member> = members[a + 1..]
                .iter()
                .filter_map(|mb| {
                    let d = difference(&mb.diff, &ma.diff);
                    let s = ma.support - d.len() as u64;
                    (s >= min).then_some(Member {
                        item: mb.item,
                        support: s,
                        diff: d,
                    })
                })
                .collect();
            if !next.is_empty() && !mine_class(&next, prefix, min, max_len, sink)? {
                prefix.pop();
                return Ok(false);
            }
        }
        prefix.pop();
    }
    Ok(true)
}

/// Frequent itemsets by Eclat with diffsets (not yet in canonical order).
pub(crate) fn mine(
    t: &Transactions,
    p: &ItemsetParams,
    min: u64,
    ctl: &Control,
) -> TmResult<Itemsets> {
    let counts = t.item_counts();
    let mut freq: Vec<u32> = (0..t.n_items() as u32)
        .filter(|&i| counts[i as usize] >= min)
        .collect();
    freq.sort_by(|&a, &b| counts[a as usize].cmp(&counts[b as usize]).then(a.cmp(&b)));
    let mut pos = vec![u32::MAX; t.n_items()];
    for (k, &i) in freq.iter().enumerate() {
        pos[i as usize] = k as u32;
    }
    let mut tids: Vec<Vec<u32>> = freq
        .iter()
        .map(|&i| Vec::with_capacity(counts[i as usize] as usize))
        .collect();
    for k in 0..t.len() {
        for &i in t.get(k) {
            let q = pos[i as usize];
            if q != u32::MAX {
                tids[q as usize].push(k as u32);
            }
        }
    }
    ctl.check()?;
    let max_len = p.max_len.unwrap_or(usize::MAX);
    let n = freq.len();
    run_tasks(n, p, min, t.len(), ctl, |a, sink| {
        let mut prefix = vec![freq[a]];
        if !sink.emit(&prefix, tids[a].len() as u64)? {
            return Ok(false);
        }
        if max_len < 2 {
            return Ok(true);
        }
        // Second level: diffsets from tidsets, d(ab) = t(a) \ t(b).
        let sa = tids[a].len() as u64;
        let members: Vec<Member> = (a + 1..n)
            .into_par_iter()
            .with_min_len(64)
            .filter_map(|b| {
                let d = difference(&tids[a], &tids[b]);
                let s = sa - d.len() as u64;
                (s >= min).then_some(Member {
                    item: freq[b],
                    support: s,
                    diff: d,
                })
            })
            .collect();
        mine_class(&members, &mut prefix, min, max_len, sink)
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sorted_difference() {
        assert_eq!(difference(&[1, 3, 5, 7], &[3, 4, 7]), vec![1, 5]);
        assert_eq!(difference(&[], &[1]), Vec::<u32>::new());
        assert_eq!(difference(&[2], &[]), vec![2]);
    }
}
