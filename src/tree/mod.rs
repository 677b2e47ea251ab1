//! Decision trees for classification and regression (CART, ID3/C4.5 modes).
//!
//! # The method
//!
//! A tree splits the samples recursively. At each node every feature is scanned for the split
//! that most decreases the impurity `I` of the node, weighted by child size:
//! `gain = I(node) - Σ_j w_j / w · I(child_j)`. Impurities are the Gini index `1 - Σ p_k²`
//! (Breiman, Friedman, Olshen, Stone 1984, *Classification and Regression Trees*), the entropy
//! `-Σ p_k log2 p_k` (Quinlan 1986, "Induction of decision trees", *Machine Learning* 1:81–106),
//! the gain ratio `gain / SplitInfo` with `SplitInfo = -Σ_j w_j/w log2(w_j/w)` (Quinlan 1993,
//! *C4.5*), and for regression the weighted variance of the target.
//!
//! * Numeric features split at a threshold `x <= t`, `t` the midpoint of two consecutive
//!   distinct values; the samples are presorted once per feature and kept sorted by stable
//!   partitioning ([`build`]), so no node sorts again.
//! * Categorical features are native: either a binary split on a subset of categories (exact
//!   for two classes and regression by ordering categories by class share or mean, Breiman et
//!   al. 1984 Thm 4.5) or one child per category (the ID3/C4.5 multiway split).
//! * Missing values (NaN) are an error by default; with [`MissingPolicy::Route`] every split
//!   learns which child they go to. A category never seen in training is an error or is routed
//!   like a missing value and counted ([`UnseenPolicy`]).
//! * Stopping: `max_depth`, `min_samples_split`, `min_samples_leaf`, `min_impurity_decrease`
//!   (on `W_node / W_root · gain`), pure nodes. Sample and class weights enter every count.
//! * Minimal cost-complexity pruning ([`prune`]).
//!
//! Results do not depend on the number of threads: ties go to the lowest feature index and the
//! lowest threshold.
//!
//! ```
//! use tracemill::control::no_control;
//! use tracemill::tree::{fit, Features, FeatureKind, MissingPolicy, Target, TreeParams};
//! let x = [1.0, 2.0, 3.0, 4.0];
//! let f = Features::from_row_major(&x, 4, vec![FeatureKind::Numeric], MissingPolicy::Error, &[])
//!     .unwrap();
//! let y = [0, 0, 1, 1];
//! let tree = fit(&f, Target::Classes { y: &y, n_classes: 2 }, None, &TreeParams::default(),
//!                &no_control()).unwrap();
//! assert_eq!(tree.n_leaves(), 2);
//! ```
//!
//! Caution: a tree describes associations in past data, not causes.

pub mod build;
pub mod data;
pub mod params;
pub mod prune;
pub mod split;

pub use build::{fit, fit_predict_folds, Node, Tree};
pub use data::{Features, Presorted, Rec, Target};
pub use params::{
    CategoricalSplit, Criterion, FeatureKind, MissingPolicy, TreeParams, UnseenPolicy,
};
pub use prune::{prune, pruning_path};
pub use split::{Rule, NO_SLOT};
