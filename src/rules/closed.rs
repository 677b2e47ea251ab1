//! Closed and maximal itemsets from the complete set of frequent itemsets.
//!
//! A frequent itemset `X` is *closed* when no proper superset has the same support count
//! (Pasquier, Bastide, Taouil & Lakhal 1999, ICDT), and *maximal* when no proper superset is
//! frequent (Bayardo 1998, SIGMOD). Because support is anti-monotone it suffices to look at
//! supersets with one more item: if `X ⊂ Z` with `σ(X) = σ(Z)` then every `Y` between them has
//! the same count, in particular one with `|Y| = |X| + 1`; and a frequent superset of `X`
//! implies a frequent superset of size `|X| + 1`. So each itemset of size `k + 1` marks its `k + 1`
//! subsets of size `k`: "not maximal", and "not closed" when the counts are equal. The input must
//! be every frequent itemset (with a `max_len` bound, closed/maximal are relative to that bound).

use rayon::prelude::*;

use super::itemsets::{FxMap, Itemsets};
use crate::control::Control;
use crate::error::{TmError, TmResult};

/// `(closed, maximal)` flags for every itemset of a complete collection.
pub fn flags(s: &Itemsets, ctl: &Control) -> TmResult<(Vec<bool>, Vec<bool>)> {
    if !s.complete || s.truncated {
        return Err(TmError::data(
            "closed and maximal itemsets need every frequent itemset (not a truncated or \
             already filtered collection)",
        ));
    }
    let mut index: FxMap<&[u32], u32> = FxMap::default();
    index.reserve(s.len());
    for i in 0..s.len() {
        index.insert(s.get(i), i as u32);
    }
    ctl.check()?;
    let marks: Vec<(u32, bool)> = (0..s.len())
        .into_par_iter()
        .with_min_len(1024)
        .flat_map_iter(|i| {
            let z = s.get(i);
            let mut sub = Vec::with_capacity(z.len());
            let mut out = Vec::new();
            if z.len() >= 2 {
                for drop in 0..z.len() {
                    sub.clear();
                    sub.extend(
                        z.iter()
                            .enumerate()
                            .filter(|&(j, _)| j != drop)
                            .map(|(_, &x)| x),
                    );
                    if let Some(&x) = index.get(sub.as_slice()) {
                        out.push((x, s.counts[x as usize] == s.counts[i]));
                    }
                }
            }
            out
        })
        .collect();
    let mut closed = vec![true; s.len()];
    let mut maximal = vec![true; s.len()];
    for (x, equal) in marks {
        maximal[x as usize] = false;
        if equal {
            closed[x as usize] = false;
        }
    }
    Ok((closed, maximal))
}
