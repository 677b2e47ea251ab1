//! Growing a tree depth-first on presorted data, predicting with it, and fitting the folds of a
//! cross-validation from one shared presort.
//!
//! Every node owns the same range `lo..hi` in each feature's sorted block. After the best split
//! is chosen, each block's range is partitioned stably by child, so the children's ranges stay
//! sorted and no sorting happens below the root (SLIQ, Mehta, Agrawal, Rissanen 1996). Large
//! nodes search and partition the features in parallel (rayon); the best split is reduced in
//! feature order with a strict `>`, so the lowest feature index and the lowest threshold win
//! ties and the tree never depends on the number of threads. Nodes are numbered in pre-order
//! (first child first), as scikit-learn numbers them.

use rayon::prelude::*;

use super::data::{check_weights, Features, Presorted, Rec, Target};
use super::params::Criterion;
use super::params::{FeatureKind, MissingPolicy, TreeParams, UnseenPolicy};
use super::prune::prune_in_place;
use super::split::{xlogx_table, Ctx, Found, Rule, NO_SLOT};
use crate::control::Control;
use crate::error::{TmError, TmResult};

/// Below this many samples a node is searched on one thread.
const PAR_MIN: usize = 4096;

/// One node of a fitted tree.
#[derive(Debug, Clone, PartialEq)]
pub struct Node {
    /// The split feature, `None` for a leaf.
    pub feature: Option<usize>,
    /// The rule sending a sample to a child slot.
    pub rule: Option<Rule>,
    /// Child slot of missing values (and of categories not seen in this node).
    pub missing_slot: u8,
    /// Node ids of the children, by slot.
    pub children: Vec<usize>,
    /// Depth (root 0).
    pub depth: usize,
    /// Training samples in the node.
    pub n_samples: usize,
    /// Their total weight.
    pub weighted_n: f64,
    /// Impurity under the tree's criterion.
    pub impurity: f64,
    /// Classification: weighted class totals; regression: `[mean]`.
    pub value: Vec<f64>,
    /// Classification: class counts (unweighted); regression: empty.
    pub counts: Vec<u64>,
}

impl Node {
    /// Whether the node is a leaf.
    pub fn is_leaf(&self) -> bool {
        self.children.is_empty()
    }
}

/// A fitted classification or regression tree.
#[derive(Debug, Clone, PartialEq)]
pub struct Tree {
    /// Nodes in pre-order; node 0 is the root.
    pub nodes: Vec<Node>,
    /// Feature kinds seen in training.
    pub kinds: Vec<FeatureKind>,
    /// Number of classes (0 for a regression tree).
    pub n_classes: usize,
    /// Missing-value policy of training (also applied at predict time).
    pub missing: MissingPolicy,
}

/// Fit a tree. `weights` default to 1. With `ccp_alpha > 0` the tree is pruned afterwards.
pub fn fit(
    x: &Features,
    target: Target<'_>,
    weights: Option<&[f64]>,
    params: &TreeParams,
    ctl: &Control,
) -> TmResult<Tree> {
    params.validate()?;
    let n = x.n_samples();
    if n == 0 {
        return Err(TmError::data("cannot fit a tree on zero samples"));
    }
    target.check(n, None)?;
    check_crit(&target, params)?;
    let ones;
    let w = match weights {
        Some(w) => {
            check_weights(w, n)?;
            w
        }
        None => {
            ones = vec![1.0; n];
            &ones
        }
    };
    let pre = Presorted::new(x, classes_of(&target));
    grow(x, target, w, params, pre, ctl)
}

fn classes_of<'a>(t: &Target<'a>) -> &'a [u32] {
    match t {
        Target::Classes { y, .. } => y,
        Target::Values(_) => &[],
    }
}

/// The `x log x` lookup table for unweighted entropy-based criteria on classes (empty when the
/// criterion or the weights make it useless).
fn entropy_table(weighted: bool, target: &Target<'_>, params: &TreeParams, n: usize) -> Vec<f64> {
    if !weighted
        && n_classes_of(target) > 0
        && matches!(params.criterion, Criterion::Entropy | Criterion::GainRatio)
    {
        xlogx_table(n)
    } else {
        Vec::new()
    }
}

fn n_classes_of(t: &Target<'_>) -> usize {
    match t {
        Target::Classes { n_classes, .. } => *n_classes,
        Target::Values(_) => 0,
    }
}

fn check_crit(target: &Target<'_>, params: &TreeParams) -> TmResult<()> {
    let cls = matches!(target, Target::Classes { .. });
    if cls != params.criterion.is_classification() {
        return Err(TmError::param(
            "criterion",
            format!(
                "criterion {:?} does not fit a {} target",
                params.criterion,
                if cls { "class" } else { "numeric" }
            ),
        ));
    }
    Ok(())
}

/// Grow a tree on the samples present in `pre` (a presort, possibly a subset).
pub(crate) fn grow(
    x: &Features,
    target: Target<'_>,
    w: &[f64],
    params: &TreeParams,
    mut pre: Presorted,
    ctl: &Control,
) -> TmResult<Tree> {
    let n = x.n_samples();
    let nf = x.n_features();
    let m = pre.m;
    if nf == 0 {
        return Err(TmError::data("a tree needs at least one feature column"));
    }
    let (yc, yv_owned, dim, n_classes, y_mean): (&[u32], Vec<f64>, usize, usize, f64) = match target
    {
        Target::Classes { y, n_classes } => (y, Vec::new(), n_classes, n_classes, 0.0),
        Target::Values(v) => {
            // Centre the target on the mean of the samples used, for numerical stability.
            let mean = if m == 0 {
                0.0
            } else {
                pre.ids(0, 0, m).map(|i| v[i as usize]).sum::<f64>() / m as f64
            };
            (&[], v.iter().map(|y| y - mean).collect(), 3, 0, mean)
        }
    };
    let weighted = w.iter().any(|&v| v != 1.0);
    let table = entropy_table(weighted, &target, params, n);
    let ctx = Ctx {
        kinds: x.kinds(),
        weighted,
        xlogx: &table,
        yc,
        yv: &yv_owned,
        w,
        dim,
        crit: params.criterion,
        params,
    };
    let mut nodes: Vec<Node> = Vec::new();
    let mut side = vec![0u8; n];
    // (lo, hi, depth, parent and slot)
    let mut stack: Vec<(usize, usize, usize, Option<(usize, usize)>)> = vec![(0, m, 0, None)];
    let mut w_root = 0.0;
    ctl.set_total(m as u64);
    while let Some((lo, hi, depth, parent)) = stack.pop() {
        ctl.check()?;
        let id = nodes.len();
        if let Some((p, slot)) = parent {
            nodes[p].children[slot] = id;
        }
        let rows = &pre.recs[lo..hi];
        let mut s = vec![0.0; dim];
        let mut counts = vec![0u64; n_classes];
        for r in rows {
            ctx.add_rec(&mut s, r);
            if n_classes > 0 {
                counts[r.c as usize] += 1;
            }
        }
        let wn = ctx.weight(&s);
        if id == 0 {
            w_root = wn;
        }
        let imp = ctx.impurity(&s, wn);
        let value = if n_classes > 0 {
            s.clone()
        } else if wn > 0.0 {
            vec![s[1] / wn + y_mean]
        } else {
            vec![y_mean]
        };
        let mut node = Node {
            feature: None,
            rule: None,
            missing_slot: 0,
            children: Vec::new(),
            depth,
            n_samples: hi - lo,
            weighted_n: wn,
            impurity: imp,
            value,
            counts,
        };
        let size = hi - lo;
        let can_split = params.max_depth.is_none_or(|d| depth < d)
            && size >= params.min_samples_split
            && size >= 2 * params.min_samples_leaf
            && imp > f64::EPSILON;
        let mut children: Vec<(usize, usize)> = Vec::new();
        if can_split {
            let search =
                |f: usize| ctx.best_split(f, &pre.recs[f * m + lo..f * m + hi], &s, wn, imp);
            let found: Vec<Option<Found>> = if size >= PAR_MIN {
                (0..nf).into_par_iter().map(search).collect()
            } else {
                (0..nf).map(search).collect()
            };
            let mut best: Option<Found> = None;
            for fd in found.into_iter().flatten() {
                if best.as_ref().is_none_or(|b| fd.score > b.score) {
                    best = Some(fd);
                }
            }
            if let Some(b) = best {
                let improvement = wn / w_root * b.gain;
                if improvement + f64::EPSILON >= params.min_impurity_decrease {
                    let k = b.n_children;
                    let f = b.feature;
                    let mslot = b.missing_slot.unwrap_or(0);
                    let mut cw = vec![0.0; k];
                    let mut cn = vec![0usize; k];
                    for r in &pre.recs[f * m + lo..f * m + hi] {
                        let sl = route(&b.rule, r.v, mslot);
                        side[r.i as usize] = sl;
                        cw[sl as usize] += w[r.i as usize];
                        cn[sl as usize] += 1;
                    }
                    let missing_slot = match b.missing_slot {
                        Some(sl) => sl,
                        None => heaviest(&cw),
                    };
                    let mut starts = vec![lo; k + 1];
                    for j in 0..k {
                        starts[j + 1] = starts[j] + cn[j];
                    }
                    partition(&mut pre, lo, hi, &side, &starts, size >= PAR_MIN);
                    node.feature = Some(f);
                    node.rule = Some(b.rule);
                    node.missing_slot = missing_slot;
                    node.children = vec![usize::MAX; k];
                    children = (0..k).map(|j| (starts[j], starts[j + 1])).collect();
                }
            }
        }
        if children.is_empty() {
            ctl.advance(size as u64);
        }
        nodes.push(node);
        for (j, &(clo, chi)) in children.iter().enumerate().rev() {
            stack.push((clo, chi, depth + 1, Some((id, j))));
        }
    }
    let mut tree = Tree {
        nodes,
        kinds: x.kinds().to_vec(),
        n_classes,
        missing: params.missing,
    };
    if params.ccp_alpha > 0.0 {
        prune_in_place(&mut tree, params.ccp_alpha);
    }
    Ok(tree)
}

fn heaviest(cw: &[f64]) -> u8 {
    let mut h = 0;
    for (j, &v) in cw.iter().enumerate() {
        if v > cw[h] {
            h = j;
        }
    }
    h as u8
}

/// The child slot of value `v` under `rule` (NaN and categories absent from the node go to
/// `missing_slot`).
#[inline]
fn route(rule: &Rule, v: f64, missing_slot: u8) -> u8 {
    if v.is_nan() {
        return missing_slot;
    }
    match rule {
        Rule::Threshold(t) => u8::from(v > *t),
        Rule::Slots(sl) => {
            let c = v as usize;
            match sl.get(c) {
                Some(&s) if s != NO_SLOT => s,
                _ => missing_slot,
            }
        }
    }
}

/// Stable partition of every feature's `lo..hi` by `side`, children starting at `starts`.
fn partition(pre: &mut Presorted, lo: usize, hi: usize, side: &[u8], starts: &[usize], par: bool) {
    let m = pre.m;
    let job = |block: &mut [Rec]| {
        let seg = block[lo..hi].to_vec();
        let mut pos: Vec<usize> = starts[..starts.len() - 1].to_vec();
        for r in seg {
            let s = side[r.i as usize] as usize;
            block[pos[s]] = r;
            pos[s] += 1;
        }
    };
    if m == 0 {
        return;
    }
    if par {
        pre.recs.par_chunks_mut(m).for_each(job);
    } else {
        pre.recs.chunks_mut(m).for_each(job);
    }
}

impl Tree {
    /// Number of leaves.
    pub fn n_leaves(&self) -> usize {
        self.nodes.iter().filter(|n| n.is_leaf()).count()
    }
    /// Depth of the deepest leaf.
    pub fn depth(&self) -> usize {
        self.nodes.iter().map(|n| n.depth).max().unwrap_or(0)
    }
    /// Number of features seen in training.
    pub fn n_features(&self) -> usize {
        self.kinds.len()
    }

    /// The leaf of every row of a row-major matrix, plus the number of rows that met a category
    /// code not seen in training (routed like missing values under [`UnseenPolicy::Route`]).
    pub fn apply(
        &self,
        x: &[f64],
        n_rows: usize,
        unseen: UnseenPolicy,
        names: &[String],
    ) -> TmResult<(Vec<usize>, u64)> {
        let nf = self.n_features();
        if x.len() != n_rows * nf {
            return Err(TmError::data(format!(
                "the feature matrix has {} values; expected {n_rows} rows x {nf} features (the \
                 tree was fitted on {nf} features)",
                x.len()
            )));
        }
        let name = |f: usize| {
            names
                .get(f)
                .cloned()
                .unwrap_or_else(|| format!("feature {f}"))
        };
        let res: Vec<TmResult<(usize, bool)>> = (0..n_rows)
            .into_par_iter()
            .with_min_len(1024)
            .map(|r| {
                let row = &x[r * nf..(r + 1) * nf];
                let mut id = 0;
                let mut hit_unseen = false;
                loop {
                    let node = &self.nodes[id];
                    let (Some(f), Some(rule)) = (node.feature, node.rule.as_ref()) else {
                        return Ok((id, hit_unseen));
                    };
                    let v = row[f];
                    if v.is_nan() && self.missing == MissingPolicy::Error {
                        return Err(TmError::data(format!(
                            "feature '{}' has a missing value (NaN) at row {r}; the tree was \
                             fitted with missing_values='error'",
                            name(f)
                        )));
                    }
                    if let (FeatureKind::Categorical(mc), false) = (self.kinds[f], v.is_nan()) {
                        if v < 0.0 || v.fract() != 0.0 || v >= f64::from(mc) {
                            if unseen == UnseenPolicy::Error {
                                return Err(TmError::data(format!(
                                    "categorical feature '{}' has a category at row {r} that \
                                     was not seen in training; choose \
                                     unseen_categories='route' to send such rows where missing \
                                     values go",
                                    name(f)
                                )));
                            }
                            hit_unseen = true;
                            id = node.children[node.missing_slot as usize];
                            continue;
                        }
                    }
                    let sl = route(rule, v, node.missing_slot);
                    id = node.children[sl as usize];
                }
            })
            .collect();
        let mut leaves = Vec::with_capacity(n_rows);
        let mut n_unseen = 0;
        for r in res {
            let (l, u) = r?;
            leaves.push(l);
            n_unseen += u64::from(u);
        }
        Ok((leaves, n_unseen))
    }

    /// Normalised impurity decrease per feature (sums to 1 unless the tree is a single leaf).
    pub fn feature_importances(&self) -> Vec<f64> {
        let mut imp = vec![0.0; self.n_features()];
        for node in &self.nodes {
            if let Some(f) = node.feature {
                let mut d = node.weighted_n * node.impurity;
                for &c in &node.children {
                    d -= self.nodes[c].weighted_n * self.nodes[c].impurity;
                }
                imp[f] += d;
            }
        }
        let s: f64 = imp.iter().sum();
        if s > 0.0 {
            imp.iter_mut().for_each(|v| *v /= s);
        }
        imp
    }
}

/// Fit one tree per fold on the other folds and predict the fold's rows, sharing one presort.
///
/// `fold[i]` is the fold of row `i` (`< n_folds`). Folds are fitted in parallel. Returns the
/// leaf value (class totals normalised to probabilities, or the mean) for every row, predicted
/// by the tree that did not see it, flattened row-major (`n x dim_out`).
pub fn fit_predict_folds(
    x: &Features,
    target: Target<'_>,
    weights: Option<&[f64]>,
    params: &TreeParams,
    fold: &[u32],
    n_folds: usize,
    ctl: &Control,
) -> TmResult<Vec<f64>> {
    params.validate()?;
    let n = x.n_samples();
    if fold.len() != n {
        return Err(TmError::data(format!(
            "fold assignment has {} entries for {n} rows",
            fold.len()
        )));
    }
    if let Some(i) = fold.iter().position(|&f| f as usize >= n_folds) {
        return Err(TmError::data(format!(
            "fold id {} at row {i} is not below n_splits = {n_folds}",
            fold[i]
        )));
    }
    target.check(n, None)?;
    check_crit(&target, params)?;
    let ones;
    let w = match weights {
        Some(w) => {
            check_weights(w, n)?;
            w
        }
        None => {
            ones = vec![1.0; n];
            &ones
        }
    };
    let dim_out = match target {
        Target::Classes { n_classes, .. } => n_classes,
        Target::Values(_) => 1,
    };
    let pre = Presorted::new(x, classes_of(&target));
    let per_fold: Vec<TmResult<Vec<(usize, Vec<f64>)>>> = (0..n_folds)
        .into_par_iter()
        .map(|k| {
            let keep: Vec<bool> = fold.iter().map(|&f| f as usize != k).collect();
            let test: Vec<usize> = (0..n).filter(|&i| !keep[i]).collect();
            let train_rows: Vec<usize> = (0..n).filter(|&i| keep[i]).collect();
            if train_rows.is_empty() {
                return Err(TmError::data(format!("fold {k} leaves no training rows")));
            }
            target
                .check(n, Some(&train_rows))
                .map_err(|e| TmError::data(format!("training part of fold {k}: {e}")))?;
            let sub = pre.subset(&keep, x.n_features());
            let tree = grow(x, target, w, params, sub, ctl)?;
            Ok(test
                .into_iter()
                .map(|i| (i, tree.leaf_output(tree.leaf_of_column(x, i))))
                .collect())
        })
        .collect();
    let mut out = vec![0.0; n * dim_out];
    for r in per_fold {
        for (i, v) in r? {
            out[i * dim_out..(i + 1) * dim_out].copy_from_slice(&v);
        }
    }
    Ok(out)
}

/// The best split of every feature at the root: `(gain, score)` per feature (NaN when the
/// feature has no valid split). The score is the gain, or the gain ratio under
/// [`Criterion::GainRatio`](super::params::Criterion::GainRatio). Useful to screen features and
/// to check the criteria against published worked examples.
pub fn root_split_scores(
    x: &Features,
    target: Target<'_>,
    weights: Option<&[f64]>,
    params: &TreeParams,
) -> TmResult<Vec<(f64, f64)>> {
    params.validate()?;
    let n = x.n_samples();
    target.check(n, None)?;
    check_crit(&target, params)?;
    let ones = vec![1.0; n];
    let w = match weights {
        Some(w) => {
            check_weights(w, n)?;
            w
        }
        None => &ones,
    };
    let pre = Presorted::new(x, classes_of(&target));
    let (yc, yv, dim): (&[u32], Vec<f64>, usize) = match target {
        Target::Classes { y, n_classes } => (y, Vec::new(), n_classes),
        Target::Values(v) => {
            let mean = v.iter().sum::<f64>() / n as f64;
            (&[], v.iter().map(|y| y - mean).collect(), 3)
        }
    };
    let weighted = w.iter().any(|&v| v != 1.0);
    let table = entropy_table(weighted, &target, params, n);
    let ctx = Ctx {
        kinds: x.kinds(),
        weighted,
        xlogx: &table,
        yc,
        yv: &yv,
        w,
        dim,
        crit: params.criterion,
        params,
    };
    let mut s = vec![0.0; dim];
    for i in 0..n {
        ctx.add(&mut s, i);
    }
    let wn = ctx.weight(&s);
    let imp = ctx.impurity(&s, wn);
    Ok((0..x.n_features())
        .into_par_iter()
        .map(|f| {
            ctx.best_split(f, &pre.recs[f * n..(f + 1) * n], &s, wn, imp)
                .map_or((f64::NAN, f64::NAN), |b| (b.gain, b.score))
        })
        .collect())
}

impl Tree {
    /// The leaf reached by row `i` of the (column-major) training features.
    fn leaf_of_column(&self, x: &Features, i: usize) -> usize {
        let mut id = 0;
        loop {
            let node = &self.nodes[id];
            let (Some(f), Some(rule)) = (node.feature, node.rule.as_ref()) else {
                return id;
            };
            let v = x.column(f)[i];
            id = node.children[route(rule, v, node.missing_slot) as usize];
        }
    }

    /// Class probabilities (classification) or `[mean]` (regression) of a leaf.
    pub fn leaf_output(&self, id: usize) -> Vec<f64> {
        let v = &self.nodes[id].value;
        if self.n_classes == 0 {
            return v.clone();
        }
        let s: f64 = v.iter().sum();
        if s > 0.0 {
            v.iter().map(|c| c / s).collect()
        } else {
            vec![1.0 / v.len() as f64; v.len()]
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::control::no_control;
    use crate::tree::params::{CategoricalSplit, Criterion};

    /// PlayTennis (Mitchell 1997, Table 3.2) with codes: Outlook Sunny 0 Overcast 1 Rain 2;
    /// Temperature Hot 0 Mild 1 Cool 2; Humidity High 0 Normal 1; Wind Weak 0 Strong 1;
    /// PlayTennis No 0 Yes 1.
    pub(crate) fn play_tennis() -> (Vec<f64>, Vec<u32>) {
        let rows: [[u8; 5]; 14] = [
            [0, 0, 0, 0, 0],
            [0, 0, 0, 1, 0],
            [1, 0, 0, 0, 1],
            [2, 1, 0, 0, 1],
            [2, 2, 1, 0, 1],
            [2, 2, 1, 1, 0],
            [1, 2, 1, 1, 1],
            [0, 1, 0, 0, 0],
            [0, 2, 1, 0, 1],
            [2, 1, 1, 0, 1],
            [0, 1, 1, 1, 1],
            [1, 1, 0, 1, 1],
            [1, 0, 1, 0, 1],
            [2, 1, 0, 1, 0],
        ];
        let x = rows
            .iter()
            .flat_map(|r| r[..4].iter().map(|&v| f64::from(v)))
            .collect();
        let y = rows.iter().map(|r| u32::from(r[4])).collect();
        (x, y)
    }

    fn tennis_features() -> (Features, Vec<u32>) {
        let (x, y) = play_tennis();
        let kinds = vec![
            FeatureKind::Categorical(3),
            FeatureKind::Categorical(3),
            FeatureKind::Categorical(2),
            FeatureKind::Categorical(2),
        ];
        (
            Features::from_row_major(&x, 14, kinds, MissingPolicy::Error, &[]).unwrap(),
            y,
        )
    }

    #[test]
    fn id3_tree_of_mitchell() {
        // Mitchell 1997, Figure 3.1: Outlook at the root; Overcast -> Yes; Sunny -> Humidity;
        // Rain -> Wind; five leaves.
        let (f, y) = tennis_features();
        let p = TreeParams {
            criterion: Criterion::Entropy,
            categorical_split: CategoricalSplit::Multiway,
            ..TreeParams::default()
        };
        let t = fit(
            &f,
            Target::Classes {
                y: &y,
                n_classes: 2,
            },
            None,
            &p,
            &no_control(),
        )
        .unwrap();
        assert_eq!(t.nodes[0].feature, Some(0));
        assert!((t.nodes[0].impurity - 0.940_285_958_670_631).abs() < 1e-12);
        assert_eq!(t.n_leaves(), 5);
        assert_eq!(t.depth(), 2);
        let sunny = t.nodes[0].children[0];
        let rain = t.nodes[0].children[2];
        assert_eq!(t.nodes[sunny].feature, Some(2));
        assert_eq!(t.nodes[rain].feature, Some(3));
        let (leaves, _) = t
            .apply(&play_tennis().0, 14, UnseenPolicy::Error, &[])
            .unwrap();
        for (i, &l) in leaves.iter().enumerate() {
            let out = t.leaf_output(l);
            assert_eq!(u32::from(out[1] > 0.5), y[i]);
        }
    }

    #[test]
    fn mitchell_gains_and_gain_ratios() {
        // Mitchell 1997, ch. 3 (book prints 0.246, 0.029, 0.151, 0.048 from rounded
        // intermediates); exact values and gain ratios recomputed (REFERENCES.md section E).
        let (f, y) = tennis_features();
        let t = Target::Classes {
            y: &y,
            n_classes: 2,
        };
        let p = TreeParams {
            criterion: Criterion::Entropy,
            categorical_split: CategoricalSplit::Multiway,
            ..TreeParams::default()
        };
        let g = root_split_scores(&f, t, None, &p).unwrap();
        let want = [0.246_750, 0.029_223, 0.151_836, 0.048_127];
        for (got, w) in g.iter().zip(want) {
            assert!((got.0 - w).abs() < 1e-6, "{got:?} vs {w}");
        }
        let p = TreeParams {
            criterion: Criterion::GainRatio,
            ..p
        };
        let g = root_split_scores(&f, t, None, &p).unwrap();
        let want = [0.156_428, 0.018_773, 0.151_836, 0.048_849];
        for (got, w) in g.iter().zip(want) {
            assert!((got.1 - w).abs() < 1e-6, "{got:?} vs {w}");
        }
    }

    #[test]
    fn regression_tree_splits_on_the_step() {
        let x: Vec<f64> = (0..20).map(f64::from).collect();
        let y: Vec<f64> = (0..20).map(|i| if i < 10 { 1.0 } else { 5.0 }).collect();
        let f = Features::from_row_major(
            &x,
            20,
            vec![FeatureKind::Numeric],
            MissingPolicy::Error,
            &[],
        )
        .unwrap();
        let p = TreeParams {
            criterion: Criterion::SquaredError,
            ..TreeParams::default()
        };
        let t = fit(&f, Target::Values(&y), None, &p, &no_control()).unwrap();
        assert_eq!(t.nodes[0].rule, Some(Rule::Threshold(9.5)));
        assert!((t.nodes[0].impurity - 4.0).abs() < 1e-12);
        assert_eq!(t.n_leaves(), 2);
        assert!((t.nodes[1].value[0] - 1.0).abs() < 1e-12);
    }

    #[test]
    fn unseen_and_missing_at_predict() {
        let (f, y) = tennis_features();
        let t = fit(
            &f,
            Target::Classes {
                y: &y,
                n_classes: 2,
            },
            None,
            &TreeParams::default(),
            &no_control(),
        )
        .unwrap();
        let row = [5.0, 0.0, 0.0, 0.0];
        assert!(t.apply(&row, 1, UnseenPolicy::Error, &[]).is_err());
        let (_, n) = t.apply(&row, 1, UnseenPolicy::Route, &[]).unwrap();
        assert_eq!(n, 1);
        let nan = [f64::NAN, 0.0, 0.0, 0.0];
        assert!(t.apply(&nan, 1, UnseenPolicy::Route, &[]).is_err());
    }

    #[test]
    fn folds_match_separate_fits() {
        let (f, y) = tennis_features();
        let fold: Vec<u32> = (0..14).map(|i| i % 2).collect();
        let p = TreeParams::default();
        let t = Target::Classes {
            y: &y,
            n_classes: 2,
        };
        let out = fit_predict_folds(&f, t, None, &p, &fold, 2, &no_control()).unwrap();
        assert_eq!(out.len(), 28);
        // fold 0 test rows predicted by a tree on fold-1 rows only
        let keep: Vec<bool> = fold.iter().map(|&k| k != 0).collect();
        let sub = Presorted::new(&f, &y).subset(&keep, 4);
        let tree = grow(&f, t, &[1.0; 14], &p, sub, &no_control()).unwrap();
        let (x, _) = play_tennis();
        let (leaves, _) = tree.apply(&x, 14, UnseenPolicy::Route, &[]).unwrap();
        for i in (0..14).filter(|i| i % 2 == 0) {
            assert_eq!(tree.leaf_output(leaves[i]), out[i * 2..i * 2 + 2].to_vec());
        }
    }

    #[test]
    fn bad_input_is_an_error() {
        let (f, _) = tennis_features();
        let y = vec![1u32; 14];
        let e = fit(
            &f,
            Target::Classes {
                y: &y,
                n_classes: 2,
            },
            None,
            &TreeParams::default(),
            &no_control(),
        )
        .unwrap_err();
        assert!(e.to_string().contains("one class"));
        let y = vec![1u32; 3];
        assert!(fit(
            &f,
            Target::Classes {
                y: &y,
                n_classes: 2
            },
            None,
            &TreeParams::default(),
            &no_control()
        )
        .is_err());
    }
}
