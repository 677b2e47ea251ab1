//! Association rules `X → Y` from frequent itemsets (Agrawal, Imieliński & Swami 1993;
//! Agrawal & Srikant 1994).
//!
//! For every frequent itemset `Z` with at least two items and every partition of `Z` into a
//! non-empty antecedent `X` and consequent `Y = Z \ X`, the rule `X → Y` has
//! `n_xy = σ(Z)`, `n_x = σ(X)` and `n_y = σ(Y)`. `X` and `Y` are subsets of a frequent itemset,
//! so they are frequent and their counts are looked up in the collection (which must therefore
//! be complete: every frequent itemset, not a truncated or closed-only collection). Rules are
//! kept when `n_xy / n_x >= min_confidence` and, if asked, `lift >= min_lift`; with a
//! `consequent` only the rules whose consequent is exactly that itemset are built (e.g. a
//! label item such as "slow"). The measures of each rule are in [`measures`](super::measures).
//!
//! Han, Kamber & Pei (Example 6.4) list the six rules of {I1, I2, I5}; the tests recompute them.
//! Rules show association in past data, not cause.

use std::sync::atomic::{AtomicUsize, Ordering};

use rayon::prelude::*;

use super::itemsets::{FxMap, Itemsets};
use super::measures::Measure;
use crate::control::Control;
use crate::error::{TmError, TmResult};

/// Parameters of [`association_rules`].
#[derive(Debug, Clone, PartialEq)]
pub struct RuleParams {
    /// Minimum confidence in `[0, 1]` (default 0.5).
    pub min_confidence: f64,
    /// Minimum lift, if any (default none).
    pub min_lift: Option<f64>,
    /// Keep only rules with exactly this consequent (item codes), if given.
    pub consequent: Option<Vec<u32>>,
    /// Bound on the number of rules (default 10 000 000).
    pub max_rules: usize,
}

impl Default for RuleParams {
    fn default() -> Self {
        RuleParams {
            min_confidence: 0.5,
            min_lift: None,
            consequent: None,
            max_rules: 10_000_000,
        }
    }
}

/// Association rules with their counts; antecedent and consequent items are sorted.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct Rules {
    /// CSR offsets of the antecedents.
    pub ante_offsets: Vec<usize>,
    /// Concatenated antecedent items.
    pub ante_items: Vec<u32>,
    /// CSR offsets of the consequents.
    pub cons_offsets: Vec<usize>,
    /// Concatenated consequent items.
    pub cons_items: Vec<u32>,
    /// `σ(X)` of each rule.
    pub n_x: Vec<u64>,
    /// `σ(Y)` of each rule.
    pub n_y: Vec<u64>,
    /// `σ(X ∪ Y)` of each rule.
    pub n_xy: Vec<u64>,
    /// Number of transactions.
    pub n: u64,
}

impl Rules {
    /// Number of rules.
    pub fn len(&self) -> usize {
        self.n_xy.len()
    }
    /// Whether there is none.
    pub fn is_empty(&self) -> bool {
        self.n_xy.is_empty()
    }
    /// Antecedent of rule `r`.
    pub fn antecedent(&self, r: usize) -> &[u32] {
        &self.ante_items[self.ante_offsets[r]..self.ante_offsets[r + 1]]
    }
    /// Consequent of rule `r`.
    pub fn consequent(&self, r: usize) -> &[u32] {
        &self.cons_items[self.cons_offsets[r]..self.cons_offsets[r + 1]]
    }
    /// The values of measure `m` for every rule.
    pub fn measure(&self, m: Measure) -> Vec<f64> {
        (0..self.len())
            .into_par_iter()
            .with_min_len(4096)
            .map(|r| m.value(self.n, self.n_x[r], self.n_y[r], self.n_xy[r]))
            .collect()
    }
}

/// Build the rules; see the module documentation.
pub fn association_rules(s: &Itemsets, p: &RuleParams, ctl: &Control) -> TmResult<Rules> {
    if !(0.0..=1.0).contains(&p.min_confidence) {
        return Err(TmError::param(
            "min_confidence",
            format!("min_confidence must be in [0, 1]; got {}", p.min_confidence),
        ));
    }
    if let Some(l) = p.min_lift {
        if l.is_nan() || l < 0.0 {
            return Err(TmError::param(
                "min_lift",
                format!("min_lift must be a number >= 0; got {l}"),
            ));
        }
    }
    if p.max_rules == 0 {
        return Err(TmError::param(
            "max_rules",
            "max_rules must be at least 1; got 0",
        ));
    }
    if !s.complete || s.truncated {
        return Err(TmError::data(
            "association rules need every frequent itemset (the counts of all subsets); the \
             itemsets given are truncated or only closed/maximal ones: mine them again with \
             target='all' and a larger max_itemsets",
        ));
    }
    let mut cons = p.consequent.clone();
    if let Some(c) = cons.as_mut() {
        c.sort_unstable();
        c.dedup();
        if c.is_empty() {
            return Err(TmError::param(
                "consequent",
                "the consequent filter is empty",
            ));
        }
    }
    let mut index: FxMap<&[u32], u32> = FxMap::default();
    index.reserve(s.len());
    for i in 0..s.len() {
        index.insert(s.get(i), i as u32);
    }
    ctl.check()?;
    let n = s.n_transactions as u64;
    let total = AtomicUsize::new(0);
    let lookup = |x: &[u32]| -> TmResult<u64> {
        index
            .get(x)
            .map(|&i| s.counts[i as usize])
            .ok_or_else(|| TmError::Internal {
                message: format!("internal error: subset {x:?} of a frequent itemset is missing"),
            })
    };
    ctl.set_total(s.len() as u64);
    // Each itemset gives (itemset index, antecedent bit mask, n_x, n_y) records.
    let parts: Vec<TmResult<Vec<(u32, u64, u64, u64)>>> = (0..s.len())
        .into_par_iter()
        .with_min_len(256)
        .map(|i| {
            let z = s.get(i);
            let mut out = Vec::new();
            if z.len() < 2 {
                return Ok(out);
            }
            if i % 4096 == 0 {
                ctl.check()?;
                ctl.advance(4096);
            }
            if z.len() >= 63 {
                return Err(TmError::Limit {
                    message: format!(
                        "an itemset of {} items has more than 2^62 rules; set max_len on the \
                         itemsets",
                        z.len()
                    ),
                });
            }
            let nxy = s.counts[i];
            let full = (1u64 << z.len()) - 1;
            let mut xs = Vec::with_capacity(z.len());
            let mut ys = Vec::with_capacity(z.len());
            let masks: Box<dyn Iterator<Item = u64>> = match &cons {
                Some(c) => {
                    let mut ymask = 0u64;
                    for &y in c {
                        match z.binary_search(&y) {
                            Ok(j) => ymask |= 1 << j,
                            Err(_) => return Ok(out),
                        }
                    }
                    if ymask == full {
                        return Ok(out);
                    }
                    Box::new(std::iter::once(full & !ymask))
                }
                None => Box::new(1..full),
            };
            for mask in masks {
                xs.clear();
                ys.clear();
                for (j, &it) in z.iter().enumerate() {
                    if mask >> j & 1 == 1 {
                        xs.push(it);
                    } else {
                        ys.push(it);
                    }
                }
                let nx = lookup(&xs)?;
                if (nxy as f64) < p.min_confidence * nx as f64 {
                    continue;
                }
                let ny = lookup(&ys)?;
                if let Some(l) = p.min_lift {
                    if Measure::Lift.value(n, nx, ny, nxy) < l {
                        continue;
                    }
                }
                out.push((i as u32, mask, nx, ny));
            }
            let t = total.fetch_add(out.len(), Ordering::Relaxed) + out.len();
            if t > p.max_rules {
                return Err(TmError::Limit {
                    message: format!(
                        "more than max_rules={} rules pass the filters ({t} found before \
                         stopping); raise max_rules, min_confidence, min_lift or the minimum \
                         support, or filter by consequent",
                        p.max_rules
                    ),
                });
            }
            Ok(out)
        })
        .collect();
    let mut r = Rules {
        ante_offsets: vec![0],
        cons_offsets: vec![0],
        n,
        ..Default::default()
    };
    for part in parts {
        for (i, mask, nx, ny) in part? {
            let z = s.get(i as usize);
            for (j, &it) in z.iter().enumerate() {
                if mask >> j & 1 == 1 {
                    r.ante_items.push(it);
                } else {
                    r.cons_items.push(it);
                }
            }
            r.ante_offsets.push(r.ante_items.len());
            r.cons_offsets.push(r.cons_items.len());
            r.n_x.push(nx);
            r.n_y.push(ny);
            r.n_xy.push(s.counts[i as usize]);
        }
    }
    Ok(r)
}

#[cfg(test)]
mod tests {
    use super::super::itemsets::tests::hkp;
    use super::super::itemsets::{frequent_itemsets, ItemsetParams, Target};
    use super::super::transactions::MinSupport;
    use super::*;
    use approx::assert_abs_diff_eq;

    fn hkp_sets() -> Itemsets {
        frequent_itemsets(
            &hkp(),
            &ItemsetParams::new(MinSupport::Count(2)),
            &Control::new(),
        )
        .unwrap()
    }

    #[test]
    fn hkp_rules_of_i1_i2_i5() {
        // Han, Kamber & Pei, Example 6.4: the six rules from {I1, I2, I5} (codes 0, 1, 4) with
        // confidences 50%, 100%, 100%, 33.3%, 28.6%, 100% (lifts recomputed).
        let p = RuleParams {
            min_confidence: 0.0,
            ..Default::default()
        };
        let r = association_rules(&hkp_sets(), &p, &Control::new()).unwrap();
        assert_eq!(r.len(), 24); // all rules of the 13 itemsets [calc]
        let conf = r.measure(Measure::Confidence);
        let lift = r.measure(Measure::Lift);
        let find = |a: &[u32], c: &[u32]| {
            (0..r.len())
                .find(|&k| r.antecedent(k) == a && r.consequent(k) == c)
                .unwrap()
        };
        let want = [
            (&[0u32, 1][..], &[4u32][..], 0.5, 2.25),
            (&[0, 4], &[1], 1.0, 9.0 / 7.0),
            (&[1, 4], &[0], 1.0, 1.5),
            (&[0], &[1, 4], 1.0 / 3.0, 1.5),
            (&[1], &[0, 4], 2.0 / 7.0, 9.0 / 7.0),
            (&[4], &[0, 1], 1.0, 2.25),
        ];
        for (a, c, cf, lf) in want {
            let k = find(a, c);
            assert_abs_diff_eq!(conf[k], cf, epsilon = 1e-12);
            assert_abs_diff_eq!(lift[k], lf, epsilon = 1e-12);
        }
        let p = RuleParams {
            min_confidence: 0.7,
            ..Default::default()
        };
        assert_eq!(
            association_rules(&hkp_sets(), &p, &Control::new())
                .unwrap()
                .len(),
            6
        );
    }

    #[test]
    fn consequent_filter_and_errors() {
        let s = hkp_sets();
        let p = RuleParams {
            min_confidence: 0.0,
            consequent: Some(vec![4]),
            ..Default::default()
        };
        let r = association_rules(&s, &p, &Control::new()).unwrap();
        assert_eq!(r.len(), 3); // I1→I5, I2→I5, I1I2→I5
        assert!((0..r.len()).all(|k| r.consequent(k) == [4]));
        let p = RuleParams {
            min_confidence: 1.5,
            ..Default::default()
        };
        assert!(matches!(
            association_rules(&s, &p, &Control::new()),
            Err(TmError::Parameter { .. })
        ));
        let p = RuleParams {
            min_confidence: 0.0,
            max_rules: 3,
            ..Default::default()
        };
        assert!(matches!(
            association_rules(&s, &p, &Control::new()),
            Err(TmError::Limit { .. })
        ));
        let mut ip = ItemsetParams::new(MinSupport::Count(2));
        ip.target = Target::Closed;
        let closed = frequent_itemsets(&hkp(), &ip, &Control::new()).unwrap();
        assert!(matches!(
            association_rules(&closed, &RuleParams::default(), &Control::new()),
            Err(TmError::Data { .. })
        ));
    }
}
