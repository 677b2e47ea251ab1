//! Apriori (Agrawal & Srikant 1994, "Fast algorithms for mining association rules", VLDB,
//! 487–499).
//!
//! Level-wise search: the frequent `k`-itemsets `L_k` generate the candidates `C_{k+1}` by
//! joining two itemsets that share their first `k − 1` items (*apriori-gen*), and a candidate
//! is dropped unless all its `k`-subsets are in `L_k` (downward closure). Candidates are then
//! counted against the data; here each itemset of the current level keeps the bitset of its
//! transactions, so a candidate's count is the popcount of the AND of its two parents' bitsets.
//! Memory grows with (level size × transactions / 8) bytes: Apriori is offered for small
//! inputs and as an independent cross-check of FP-Growth and Eclat.

use std::collections::HashSet;

use rayon::prelude::*;

use super::itemsets::{ItemsetParams, Itemsets, OnLimit};
use super::transactions::Transactions;
use crate::control::Control;
use crate::error::{TmError, TmResult};

fn and_count(a: &[u64], b: &[u64]) -> (Vec<u64>, u64) {
    let v: Vec<u64> = a.iter().zip(b).map(|(x, y)| x & y).collect();
    let c = v.iter().map(|x| u64::from(x.count_ones())).sum();
    (v, c)
}

/// Frequent itemsets by Apriori (not yet in canonical order).
pub(crate) fn mine(
    t: &Transactions,
    p: &ItemsetParams,
    min: u64,
    ctl: &Control,
) -> TmResult<Itemsets> {
    let words = t.len().div_ceil(64);
    let counts = t.item_counts();
    let max_len = p.max_len.unwrap_or(usize::MAX);
    let mut out = Itemsets {
        offsets: vec![0],
        n_transactions: t.len(),
        min_count: min,
        complete: true,
        ..Default::default()
    };
    // Level 1.
    let freq: Vec<u32> = (0..t.n_items() as u32)
        .filter(|&i| counts[i as usize] >= min)
        .collect();
    let mut col = vec![u32::MAX; t.n_items()];
    for (k, &i) in freq.iter().enumerate() {
        col[i as usize] = k as u32;
    }
    let mut bits = vec![vec![0u64; words]; freq.len()];
    for k in 0..t.len() {
        for &i in t.get(k) {
            let c = col[i as usize];
            if c != u32::MAX {
                bits[c as usize][k / 64] |= 1 << (k % 64);
            }
        }
    }
    let mut level: Vec<(Vec<u32>, Vec<u64>, u64)> = freq
        .iter()
        .zip(bits)
        .map(|(&i, b)| (vec![i], b, counts[i as usize]))
        .collect();
    let budget = |n: usize| -> TmResult<()> {
        if n > p.max_itemsets {
            return Err(TmError::Limit {
                message: format!(
                    "the search found more than max_itemsets={} frequent itemsets at a minimum \
                     count of {min} ({n} found); raise max_itemsets, raise min_support or set \
                     max_len",
                    p.max_itemsets
                ),
            });
        }
        Ok(())
    };
    let mut k = 1;
    while !level.is_empty() {
        ctl.check()?;
        for (set, _, c) in &level {
            if out.counts.len() >= p.max_itemsets {
                if p.on_limit == OnLimit::Truncate {
                    out.truncated = true;
                    break;
                }
                budget(out.counts.len() + 1)?;
            }
            out.items.extend_from_slice(set);
            out.offsets.push(out.items.len());
            out.counts.push(*c);
        }
        if out.truncated || k >= max_len {
            break;
        }
        // apriori-gen: join itemsets with equal (k-1)-prefixes; level is sorted.
        let known: HashSet<&[u32]> = level.iter().map(|x| x.0.as_slice()).collect();
        let mut pairs = Vec::new();
        let mut start = 0;
        while start < level.len() {
            let mut end = start + 1;
            while end < level.len() && level[end].0[..k - 1] == level[start].0[..k - 1] {
                end += 1;
            }
            for a in start..end {
                for b in a + 1..end {
                    let mut cand = level[a].0.clone();
                    cand.push(level[b].0[k - 1]);
                    let all_sub = (0..k - 1).all(|drop| {
                        let sub: Vec<u32> = cand
                            .iter()
                            .enumerate()
                            .filter(|&(j, _)| j != drop)
                            .map(|(_, &x)| x)
                            .collect();
                        known.contains(sub.as_slice())
                    });
                    if all_sub {
                        pairs.push((a, b, cand));
                    }
                }
            }
            start = end;
        }
        let next: Vec<(Vec<u32>, Vec<u64>, u64)> = pairs
            .into_par_iter()
            .filter_map(|(a, b, cand)| {
                let (v, c) = and_count(&level[a].1, &level[b].1);
                (c >= min).then_some((cand, v, c))
            })
            .collect();
        drop(known);
        level = next;
        k += 1;
    }
    Ok(out)
}
