//! Impurities and the search for the best split of one feature in one node.
//!
//! A node's samples are visited in the presorted order of the feature, so every threshold
//! between two consecutive distinct values is scored in one pass with running left-side
//! statistics (Breiman et al. 1984, ch. 2 and 4; the presorted layout of SLIQ, Mehta, Agrawal,
//! Rissanen 1996). Statistics are weighted class totals for classification and
//! `(w, Σwy, Σwy²)` for regression. Values closer than `1e-7` are treated as equal, as in
//! scikit-learn's splitter, and a threshold is the midpoint of the two values around it.
//!
//! Missing values (NaN, sorted last) are tried on both sides of every threshold, and as a
//! child of their own against all observed values (threshold `+inf`), the same three options
//! scikit-learn offers since version 1.3.

// Statistics vectors are updated in step by index; index loops read clearer here.
#![allow(clippy::needless_range_loop)]

use super::data::Rec;
use super::params::{CategoricalSplit, Criterion, FeatureKind, TreeParams};

/// The table `c log2 c` for `c = 0..=n` (see [`Ctx::xlogx`]).
pub(crate) fn xlogx_table(n: usize) -> Vec<f64> {
    (0..=n)
        .map(|c| {
            if c == 0 {
                0.0
            } else {
                c as f64 * (c as f64).log2()
            }
        })
        .collect()
}

/// Values closer than this are one value (as in scikit-learn).
pub(crate) const FEATURE_THRESHOLD: f64 = 1e-7;
/// Marks a category that did not occur in the node.
pub const NO_SLOT: u8 = u8::MAX;

/// The data a split search reads.
pub(crate) struct Ctx<'a> {
    pub kinds: &'a [FeatureKind],
    /// Class codes (classification) or empty.
    pub yc: &'a [u32],
    /// Centred target values (regression) or empty.
    pub yv: &'a [f64],
    pub w: &'a [f64],
    /// Whether `w` holds weights other than 1.
    pub weighted: bool,
    /// `c log2 c` for integer counts `c = 0..=n`, used for the entropy of unweighted samples
    /// (exact counts make a table lookup equal to the logarithm); empty otherwise.
    pub xlogx: &'a [f64],
    /// Length of a statistics vector: classes, or 3 for regression.
    pub dim: usize,
    pub crit: Criterion,
    pub params: &'a TreeParams,
}

/// The rule of a split.
#[derive(Debug, Clone, PartialEq)]
pub enum Rule {
    /// `x <= threshold` goes to child 0, the rest to child 1.
    Threshold(f64),
    /// The child slot of every category code ([`NO_SLOT`]: not seen in the node).
    Slots(Vec<u8>),
}

/// The best split found for one feature.
#[derive(Debug, Clone)]
pub(crate) struct Found {
    pub feature: usize,
    /// The score splits are ranked by (gain, or gain ratio).
    pub score: f64,
    /// Impurity gain `imp(node) - Σ w_j/w imp(child_j)`.
    pub gain: f64,
    pub rule: Rule,
    /// Child slot of missing values, if the node had any.
    pub missing_slot: Option<u8>,
    pub n_children: usize,
}

impl Ctx<'_> {
    #[inline]
    pub fn add(&self, s: &mut [f64], i: usize) {
        let w = self.w[i];
        if self.yc.is_empty() {
            let y = self.yv[i];
            s[0] += w;
            s[1] += w * y;
            s[2] += w * y * y;
        } else {
            s[self.yc[i] as usize] += w;
        }
    }

    /// Add a presorted entry (reads `w` and `yv` only when needed).
    #[inline]
    pub fn add_rec(&self, s: &mut [f64], r: &Rec) {
        if self.yc.is_empty() {
            let w = self.w[r.i as usize];
            let y = self.yv[r.i as usize];
            s[0] += w;
            s[1] += w * y;
            s[2] += w * y * y;
        } else if self.weighted {
            s[r.c as usize] += self.w[r.i as usize];
        } else {
            s[r.c as usize] += 1.0;
        }
    }

    #[inline]
    pub fn weight(&self, s: &[f64]) -> f64 {
        if self.yc.is_empty() {
            s[0]
        } else {
            s.iter().sum()
        }
    }

    /// Impurity of a node with statistics `s` and weight `w`.
    #[inline]
    pub fn impurity(&self, s: &[f64], w: f64) -> f64 {
        if w <= 0.0 {
            return 0.0;
        }
        match self.crit {
            Criterion::Gini => {
                let mut q = 0.0;
                for &c in s {
                    let p = c / w;
                    q += p * p;
                }
                1.0 - q
            }
            Criterion::Entropy | Criterion::GainRatio if !self.xlogx.is_empty() => {
                // H = log2 w - Σ c log2 c / w for integer counts
                let t = self.xlogx;
                let mut acc = t[w as usize];
                for &c in s {
                    acc -= t[c as usize];
                }
                (acc / w).max(0.0)
            }
            Criterion::Entropy | Criterion::GainRatio => {
                let mut h = 0.0;
                for &c in s {
                    if c > 0.0 {
                        let p = c / w;
                        h -= p * p.log2();
                    }
                }
                h
            }
            Criterion::SquaredError => {
                let m = s[1] / w;
                (s[2] / w - m * m).max(0.0)
            }
        }
    }

    /// `(score, gain)` of a partition given the children's statistics and weights, or `None`
    /// when the split information is zero under the gain ratio.
    #[inline]
    fn score(&self, node_imp: f64, w_node: f64, children: &[(&[f64], f64)]) -> Option<(f64, f64)> {
        let mut child = 0.0;
        for &(s, w) in children {
            child += w * self.impurity(s, w);
        }
        let gain = node_imp - child / w_node;
        if self.crit == Criterion::GainRatio {
            let mut info = 0.0;
            for &(_, w) in children {
                if w > 0.0 {
                    let p = w / w_node;
                    info -= p * p.log2();
                }
            }
            if info <= 1e-12 {
                return None;
            }
            Some((gain / info, gain))
        } else {
            Some((gain, gain))
        }
    }

    /// The best split of feature `f` for a node whose samples, in `f`'s sorted order, are
    /// `idx`; `total` are the node's statistics.
    pub fn best_split(
        &self,
        f: usize,
        idx: &[Rec],
        total: &[f64],
        w_node: f64,
        node_imp: f64,
    ) -> Option<Found> {
        let mut nm = idx.len();
        while nm > 0 && idx[nm - 1].v.is_nan() {
            nm -= 1;
        }
        let mut miss = vec![0.0; self.dim];
        for r in &idx[nm..] {
            self.add_rec(&mut miss, r);
        }
        let n_miss = idx.len() - nm;
        match self.kinds[f] {
            FeatureKind::Numeric => {
                self.numeric(f, &idx[..nm], n_miss, &miss, total, w_node, node_imp)
            }
            FeatureKind::Categorical(m) => {
                let cats = self.category_stats(&idx[..nm]);
                if self.params.categorical_split == CategoricalSplit::Multiway {
                    self.multiway(f, m, &cats, n_miss, &miss, w_node, node_imp)
                } else {
                    self.subsets(f, m, &cats, n_miss, &miss, total, w_node, node_imp)
                }
            }
        }
    }

    #[allow(clippy::too_many_arguments)]
    fn numeric(
        &self,
        f: usize,
        idx: &[Rec],
        n_miss: usize,
        miss: &[f64],
        total: &[f64],
        w_node: f64,
        node_imp: f64,
    ) -> Option<Found> {
        let msl = self.params.min_samples_leaf;
        let n_node = idx.len() + n_miss;
        let dim = self.dim;
        let mut left = vec![0.0; dim];
        let mut right = vec![0.0; dim];
        let mut left_m = vec![0.0; dim];
        let mut best: Option<Found> = None;
        let mut consider = |score: Option<(f64, f64)>, rule: Rule, slot: Option<u8>| {
            if let Some((s, g)) = score {
                if best.as_ref().is_none_or(|b| s > b.score) {
                    best = Some(Found {
                        feature: f,
                        score: s,
                        gain: g,
                        rule,
                        missing_slot: slot,
                        n_children: 2,
                    });
                }
            }
        };
        let nm = idx.len();
        for p in 0..nm {
            self.add_rec(&mut left, &idx[p]);
            if p + 1 >= nm {
                break;
            }
            let v = idx[p].v;
            let vn = idx[p + 1].v;
            if vn <= v + FEATURE_THRESHOLD {
                continue;
            }
            let nl = p + 1;
            let mut thr = v / 2.0 + vn / 2.0;
            if thr == vn || thr.is_infinite() {
                thr = v;
            }
            // Missing values with the right child.
            if nl >= msl && n_node - nl >= msl {
                for k in 0..dim {
                    right[k] = total[k] - left[k];
                }
                let (wl, wr) = (self.weight(&left), self.weight(&right));
                let sc = self.score(node_imp, w_node, &[(&left, wl), (&right, wr)]);
                consider(
                    sc,
                    Rule::Threshold(thr),
                    if n_miss > 0 { Some(1) } else { None },
                );
            }
            // Missing values with the left child.
            if n_miss > 0 && nl + n_miss >= msl && n_node - nl - n_miss >= msl {
                for k in 0..dim {
                    left_m[k] = left[k] + miss[k];
                    right[k] = total[k] - left_m[k];
                }
                let (wl, wr) = (self.weight(&left_m), self.weight(&right));
                let sc = self.score(node_imp, w_node, &[(&left_m, wl), (&right, wr)]);
                consider(sc, Rule::Threshold(thr), Some(0));
            }
        }
        // Observed values against missing values.
        if n_miss > 0 && nm >= msl && n_miss >= msl {
            for k in 0..dim {
                left[k] = total[k] - miss[k];
            }
            let (wl, wr) = (self.weight(&left), self.weight(miss));
            let sc = self.score(node_imp, w_node, &[(&left, wl), (miss, wr)]);
            consider(sc, Rule::Threshold(f64::INFINITY), Some(1));
        }
        best
    }

    /// `(code, stats, count)` of every category present among `idx` (sorted by code).
    fn category_stats(&self, idx: &[Rec]) -> Vec<(u32, Vec<f64>, usize)> {
        let mut out: Vec<(u32, Vec<f64>, usize)> = Vec::new();
        for r in idx {
            let c = r.v as u32;
            match out.last_mut() {
                Some(last) if last.0 == c => {
                    self.add_rec(&mut last.1, r);
                    last.2 += 1;
                }
                _ => {
                    let mut s = vec![0.0; self.dim];
                    self.add_rec(&mut s, r);
                    out.push((c, s, 1));
                }
            }
        }
        out
    }

    #[allow(clippy::too_many_arguments)]
    fn subsets(
        &self,
        f: usize,
        m: u32,
        cats: &[(u32, Vec<f64>, usize)],
        n_miss: usize,
        miss: &[f64],
        total: &[f64],
        w_node: f64,
        node_imp: f64,
    ) -> Option<Found> {
        let msl = self.params.min_samples_leaf;
        let n_node = cats.iter().map(|c| c.2).sum::<usize>() + n_miss;
        let dim = self.dim;
        // Orderings of the categories: by mean (regression), by class-1 share (two classes),
        // by each class share (more classes).
        let keys: Vec<usize> = if self.yc.is_empty() || dim == 2 {
            vec![1]
        } else {
            (0..dim).collect()
        };
        let mut best: Option<Found> = None;
        let mut left = vec![0.0; dim];
        let mut right = vec![0.0; dim];
        let mut left_m = vec![0.0; dim];
        for &k in &keys {
            let mut order: Vec<usize> = (0..cats.len()).collect();
            let key = |j: usize| {
                let s = &cats[j].1;
                let w = self.weight(s);
                if w > 0.0 {
                    s[k] / w
                } else {
                    0.0
                }
            };
            order.sort_by(|&a, &b| key(a).total_cmp(&key(b)).then(a.cmp(&b)));
            left.iter_mut().for_each(|v| *v = 0.0);
            let mut nl = 0;
            for (q, &j) in order.iter().enumerate() {
                if q + 1 >= order.len() {
                    break;
                }
                for d in 0..dim {
                    left[d] += cats[j].1[d];
                }
                nl += cats[j].2;
                let slots = || {
                    let mut sl = vec![NO_SLOT; m as usize];
                    for (qq, &jj) in order.iter().enumerate() {
                        sl[cats[jj].0 as usize] = u8::from(qq > q);
                    }
                    sl
                };
                if nl >= msl && n_node - nl >= msl {
                    for d in 0..dim {
                        right[d] = total[d] - left[d];
                    }
                    let sc = self.score(
                        node_imp,
                        w_node,
                        &[(&left, self.weight(&left)), (&right, self.weight(&right))],
                    );
                    if let Some((s, g)) = sc {
                        if best.as_ref().is_none_or(|b| s > b.score) {
                            best = Some(Found {
                                feature: f,
                                score: s,
                                gain: g,
                                rule: Rule::Slots(slots()),
                                missing_slot: (n_miss > 0).then_some(1),
                                n_children: 2,
                            });
                        }
                    }
                }
                if n_miss > 0 && nl + n_miss >= msl && n_node - nl - n_miss >= msl {
                    for d in 0..dim {
                        left_m[d] = left[d] + miss[d];
                        right[d] = total[d] - left_m[d];
                    }
                    let sc = self.score(
                        node_imp,
                        w_node,
                        &[
                            (&left_m, self.weight(&left_m)),
                            (&right, self.weight(&right)),
                        ],
                    );
                    if let Some((s, g)) = sc {
                        if best.as_ref().is_none_or(|b| s > b.score) {
                            best = Some(Found {
                                feature: f,
                                score: s,
                                gain: g,
                                rule: Rule::Slots(slots()),
                                missing_slot: Some(0),
                                n_children: 2,
                            });
                        }
                    }
                }
            }
        }
        let n_obs = n_node - n_miss;
        if n_miss > 0 && !cats.is_empty() && n_obs >= msl && n_miss >= msl {
            for d in 0..dim {
                left[d] = total[d] - miss[d];
            }
            let sc = self.score(
                node_imp,
                w_node,
                &[(&left, self.weight(&left)), (miss, self.weight(miss))],
            );
            if let Some((s, g)) = sc {
                if best.as_ref().is_none_or(|b| s > b.score) {
                    let mut sl = vec![NO_SLOT; m as usize];
                    for c in cats {
                        sl[c.0 as usize] = 0;
                    }
                    best = Some(Found {
                        feature: f,
                        score: s,
                        gain: g,
                        rule: Rule::Slots(sl),
                        missing_slot: Some(1),
                        n_children: 2,
                    });
                }
            }
        }
        best
    }

    #[allow(clippy::too_many_arguments)]
    fn multiway(
        &self,
        f: usize,
        m: u32,
        cats: &[(u32, Vec<f64>, usize)],
        n_miss: usize,
        miss: &[f64],
        w_node: f64,
        node_imp: f64,
    ) -> Option<Found> {
        if cats.len() < 2 || cats.len() >= usize::from(NO_SLOT) {
            return None;
        }
        let msl = self.params.min_samples_leaf;
        // Missing values join the heaviest child (first on ties).
        let mut heavy = 0;
        for (j, c) in cats.iter().enumerate() {
            if self.weight(&c.1) > self.weight(&cats[heavy].1) {
                heavy = j;
            }
        }
        let mut stats: Vec<Vec<f64>> = cats.iter().map(|c| c.1.clone()).collect();
        let mut counts: Vec<usize> = cats.iter().map(|c| c.2).collect();
        if n_miss > 0 {
            for d in 0..self.dim {
                stats[heavy][d] += miss[d];
            }
            counts[heavy] += n_miss;
        }
        if counts.iter().any(|&c| c < msl) {
            return None;
        }
        let parts: Vec<(&[f64], f64)> = stats
            .iter()
            .map(|s| (s.as_slice(), self.weight(s)))
            .collect();
        let (s, g) = self.score(node_imp, w_node, &parts)?;
        let mut sl = vec![NO_SLOT; m as usize];
        for (j, c) in cats.iter().enumerate() {
            sl[c.0 as usize] = j as u8;
        }
        Some(Found {
            feature: f,
            score: s,
            gain: g,
            rule: Rule::Slots(sl),
            missing_slot: (n_miss > 0).then_some(heavy as u8),
            n_children: cats.len(),
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn recs(x: &[f64], y: &[u32]) -> Vec<Rec> {
        let mut r: Vec<Rec> = x
            .iter()
            .zip(y)
            .enumerate()
            .map(|(i, (&v, &c))| Rec { v, i: i as u32, c })
            .collect();
        r.sort_by(|a, b| a.v.is_nan().cmp(&b.v.is_nan()).then(a.v.total_cmp(&b.v)));
        r
    }

    fn ctx<'a>(
        kinds: &'a [FeatureKind],
        y: &'a [u32],
        w: &'a [f64],
        crit: Criterion,
        params: &'a TreeParams,
    ) -> Ctx<'a> {
        Ctx {
            kinds,
            yc: y,
            yv: &[],
            w,
            weighted: false,
            xlogx: &[],
            dim: 2,
            crit,
            params,
        }
    }

    #[test]
    fn gini_and_entropy_of_known_counts() {
        // PlayTennis (Mitchell 1997, Table 3.2): 9 yes / 5 no; H = 0.940286, Gini = 0.459184
        // (values recomputed from the definitions, REFERENCES.md section E).
        let p = TreeParams::default();
        let c = ctx(&[], &[0], &[1.0], Criterion::Entropy, &p);
        assert!((c.impurity(&[9.0, 5.0], 14.0) - 0.940_285_958_670_631).abs() < 1e-12);
        let c = ctx(&[], &[0], &[1.0], Criterion::Gini, &p);
        assert!((c.impurity(&[9.0, 5.0], 14.0) - 0.459_183_673_469_387_8).abs() < 1e-12);
    }

    #[test]
    fn entropy_table_equals_logarithms() {
        let p = TreeParams::default();
        let t = xlogx_table(20);
        let mut c = ctx(&[], &[0], &[1.0], Criterion::Entropy, &p);
        let direct = c.impurity(&[9.0, 5.0, 3.0], 17.0);
        c.xlogx = &t;
        assert!((c.impurity(&[9.0, 5.0, 3.0], 17.0) - direct).abs() < 1e-14);
    }

    #[test]
    fn numeric_threshold_is_midpoint_and_missing_routes() {
        let x = [1.0, 2.0, 3.0, 4.0, f64::NAN];
        let y = [0u32, 0, 1, 1, 1];
        let w = [1.0; 5];
        let kinds = [FeatureKind::Numeric];
        let p = TreeParams::default();
        let c = ctx(&kinds, &y, &w, Criterion::Gini, &p);
        let idx = recs(&x, &y);
        let total = [2.0, 3.0];
        let imp = c.impurity(&total, 5.0);
        let b = c.best_split(0, &idx, &total, 5.0, imp).unwrap();
        assert_eq!(b.rule, Rule::Threshold(2.5));
        assert_eq!(b.missing_slot, Some(1));
        assert!((b.gain - imp).abs() < 1e-12);
    }

    #[test]
    fn categorical_subset_groups_alike_categories() {
        // categories 0 and 2 are class 0, 1 is class 1
        let x = [0.0, 0.0, 1.0, 1.0, 2.0, 2.0];
        let y = [0u32, 0, 1, 1, 0, 0];
        let w = [1.0; 6];
        let kinds = [FeatureKind::Categorical(3)];
        let p = TreeParams::default();
        let c = ctx(&kinds, &y, &w, Criterion::Gini, &p);
        let idx = recs(&x, &y);
        let total = [4.0, 2.0];
        let imp = c.impurity(&total, 6.0);
        let b = c.best_split(0, &idx, &total, 6.0, imp).unwrap();
        assert_eq!(b.rule, Rule::Slots(vec![0, 1, 0]));
        assert!((b.gain - imp).abs() < 1e-12);
        let p = TreeParams {
            categorical_split: CategoricalSplit::Multiway,
            ..TreeParams::default()
        };
        let c = ctx(&kinds, &y, &w, Criterion::Gini, &p);
        let b = c.best_split(0, &idx, &total, 6.0, imp).unwrap();
        assert_eq!(b.n_children, 3);
        assert_eq!(b.rule, Rule::Slots(vec![0, 1, 2]));
    }
}
