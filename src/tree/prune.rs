//! Minimal cost-complexity pruning (Breiman, Friedman, Olshen, Stone 1984, ch. 3).
//!
//! The cost of a subtree `T` is `R_α(T) = R(T) + α |leaves(T)|`, where `R(t)` is the node's
//! share of the training weight times its impurity. For an internal node `t` with branch `T_t`,
//! the weakest-link value is `g(t) = (R(t) - R(T_t)) / (|leaves(T_t)| - 1)`: the `α` at which
//! collapsing `t` into a leaf stops costing more than keeping the branch. Pruning repeatedly
//! collapses the node with the smallest `g` (the first in pre-order on ties, as scikit-learn
//! does) while `g <= α`. The sequence of `g` values and total leaf impurities is the pruning
//! path, from which `α` can be chosen by cross-validation.

use super::build::Tree;

/// Run weakest-link pruning; stop before the first `g > alpha` (`alpha = inf`: to the root).
/// Returns the kept flags per node and the path `(alphas, impurities)`.
fn weakest_link(tree: &Tree, alpha: f64) -> (Vec<bool>, Vec<f64>, Vec<f64>) {
    let n = tree.nodes.len();
    let w_root = tree.nodes.first().map_or(1.0, |r| r.weighted_n);
    let r_node: Vec<f64> = tree
        .nodes
        .iter()
        .map(|t| t.weighted_n * t.impurity / w_root)
        .collect();
    let mut parent = vec![usize::MAX; n];
    for (i, t) in tree.nodes.iter().enumerate() {
        for &c in &t.children {
            parent[c] = i;
        }
    }
    // Leaves of each branch and R of each branch, bottom-up (children follow parents).
    let mut n_leaves = vec![0usize; n];
    let mut r_branch = vec![0.0; n];
    for i in (0..n).rev() {
        let t = &tree.nodes[i];
        if t.is_leaf() {
            n_leaves[i] = 1;
            r_branch[i] = r_node[i];
        } else {
            n_leaves[i] = t.children.iter().map(|&c| n_leaves[c]).sum();
            r_branch[i] = t.children.iter().map(|&c| r_branch[c]).sum();
        }
    }
    let mut leaf = vec![false; n]; // collapsed into a leaf
    let mut inside = vec![true; n]; // still part of the tree
    for (i, t) in tree.nodes.iter().enumerate() {
        leaf[i] = t.is_leaf();
    }
    let mut alphas = vec![0.0];
    let mut imps = vec![r_branch.first().copied().unwrap_or(0.0)];
    loop {
        let mut best = f64::INFINITY;
        let mut at = usize::MAX;
        for i in 0..n {
            if !inside[i] || leaf[i] {
                continue;
            }
            let g = (r_node[i] - r_branch[i]) / (n_leaves[i] as f64 - 1.0);
            if g < best {
                best = g;
                at = i;
            }
        }
        if at == usize::MAX || best > alpha {
            break;
        }
        // Collapse `at`: remove its descendants, update its ancestors.
        let mut stack: Vec<usize> = tree.nodes[at].children.clone();
        while let Some(d) = stack.pop() {
            inside[d] = false;
            stack.extend(tree.nodes[d].children.iter().copied());
        }
        leaf[at] = true;
        let dl = n_leaves[at] - 1;
        let dr = r_node[at] - r_branch[at];
        n_leaves[at] = 1;
        r_branch[at] = r_node[at];
        let mut p = parent[at];
        while p != usize::MAX {
            n_leaves[p] -= dl;
            r_branch[p] += dr;
            p = parent[p];
        }
        alphas.push(best);
        imps.push(r_branch[0]);
        if at == 0 {
            break;
        }
    }
    // A collapsed node is inside while its children are not.
    (inside, alphas, imps)
}

/// The pruning path: effective alphas (starting with 0 for the full tree) and the total leaf
/// impurity `R(T)` of the tree pruned at each.
pub fn pruning_path(tree: &Tree) -> (Vec<f64>, Vec<f64>) {
    let (_, a, i) = weakest_link(tree, f64::INFINITY);
    (a, i)
}

/// Prune `tree` at complexity `alpha` (nodes are renumbered in pre-order).
pub fn prune(tree: &Tree, alpha: f64) -> Tree {
    let mut t = tree.clone();
    prune_in_place(&mut t, alpha);
    t
}

/// Prune in place at complexity `alpha`.
pub(crate) fn prune_in_place(tree: &mut Tree, alpha: f64) {
    let n = tree.nodes.len();
    if n <= 1 {
        return;
    }
    let (inside, _, _) = weakest_link(tree, alpha);
    // A node that is inside but whose children are not was collapsed.
    let mut new_id = vec![usize::MAX; n];
    let mut order = Vec::new();
    let mut stack = vec![0usize];
    while let Some(i) = stack.pop() {
        new_id[i] = order.len();
        order.push(i);
        let ch = &tree.nodes[i].children;
        if ch.iter().all(|&c| inside[c]) {
            for &c in ch.iter().rev() {
                stack.push(c);
            }
        }
    }
    let mut nodes = Vec::with_capacity(order.len());
    for &i in &order {
        let mut node = tree.nodes[i].clone();
        if node.children.iter().all(|&c| inside[c]) {
            node.children = node.children.iter().map(|&c| new_id[c]).collect();
        } else {
            node.children.clear();
            node.feature = None;
            node.rule = None;
            node.missing_slot = 0;
        }
        nodes.push(node);
    }
    tree.nodes = nodes;
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::control::no_control;
    use crate::tree::build::fit;
    use crate::tree::data::{Features, Target};
    use crate::tree::params::{FeatureKind, MissingPolicy, TreeParams};

    fn noisy() -> (Features, Vec<u32>) {
        // x in 0..40, label 1 above 20 with two flipped labels: a full tree must isolate them.
        let x: Vec<f64> = (0..40).map(f64::from).collect();
        let mut y: Vec<u32> = (0..40).map(|i| u32::from(i >= 20)).collect();
        y[5] = 1;
        y[30] = 0;
        (
            Features::from_row_major(
                &x,
                40,
                vec![FeatureKind::Numeric],
                MissingPolicy::Error,
                &[],
            )
            .unwrap(),
            y,
        )
    }

    #[test]
    fn path_is_increasing_and_ends_at_root() {
        let (f, y) = noisy();
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
        let (a, imp) = pruning_path(&t);
        assert_eq!(a[0], 0.0);
        assert!(a.windows(2).all(|w| w[0] <= w[1] + 1e-15));
        assert!((imp.last().unwrap() - t.nodes[0].impurity).abs() < 1e-12);
        let root_only = prune(&t, *a.last().unwrap());
        assert_eq!(root_only.nodes.len(), 1);
        let mid = prune(&t, a[1]);
        assert!(mid.n_leaves() < t.n_leaves());
        assert!(mid.nodes[0].feature.is_some());
        // the pruned tree's leaf impurity matches the path
        let w = mid.nodes[0].weighted_n;
        let r: f64 = mid
            .nodes
            .iter()
            .filter(|n| n.is_leaf())
            .map(|n| n.weighted_n * n.impurity / w)
            .sum();
        let last = a.iter().rposition(|&v| v == a[1]).unwrap();
        assert!((r - imp[last]).abs() < 1e-12);
    }
}
