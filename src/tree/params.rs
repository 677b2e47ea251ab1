//! Parameters of the tree learner, checked before any work starts.

use crate::error::{TmError, TmResult};

/// The impurity measure that splits minimise.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Criterion {
    /// Gini impurity `1 - Σ p_k²` (CART, Breiman et al. 1984).
    Gini,
    /// Shannon entropy in bits `-Σ p_k log2 p_k` (ID3, Quinlan 1986).
    Entropy,
    /// Information gain divided by the split information (C4.5, Quinlan 1993).
    GainRatio,
    /// Weighted variance of the target (regression trees).
    SquaredError,
}

impl Criterion {
    /// Parse `"gini"`, `"entropy"`, `"gain_ratio"` or `"squared_error"`.
    pub fn parse(s: &str) -> TmResult<Self> {
        match s {
            "gini" => Ok(Criterion::Gini),
            "entropy" => Ok(Criterion::Entropy),
            "gain_ratio" => Ok(Criterion::GainRatio),
            "squared_error" => Ok(Criterion::SquaredError),
            _ => Err(TmError::param(
                "criterion",
                format!(
                    "criterion must be 'gini', 'entropy', 'gain_ratio' or 'squared_error'; \
                     got '{s}'"
                ),
            )),
        }
    }
    /// Whether the criterion is for class labels (all but squared error).
    pub fn is_classification(self) -> bool {
        !matches!(self, Criterion::SquaredError)
    }
}

/// How a categorical feature is split.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum CategoricalSplit {
    /// Two children: a subset of categories goes left (CART). The best subset is found exactly
    /// for two classes and for regression by ordering categories by their class-1 share or mean
    /// (Breiman et al. 1984, Theorem 4.5); with more classes each class share is tried as the
    /// ordering and the best result kept.
    Binary,
    /// One child per category present in the node (ID3 / C4.5).
    Multiway,
}

impl CategoricalSplit {
    /// Parse `"binary"` or `"multiway"`.
    pub fn parse(s: &str) -> TmResult<Self> {
        match s {
            "binary" => Ok(CategoricalSplit::Binary),
            "multiway" => Ok(CategoricalSplit::Multiway),
            _ => Err(TmError::param(
                "categorical_split",
                format!("categorical_split must be 'binary' or 'multiway'; got '{s}'"),
            )),
        }
    }
}

/// What to do with missing values (NaN) in the features.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum MissingPolicy {
    /// A NaN is an error that names the feature and the row.
    Error,
    /// Each split learns the side that missing values go to; nodes that saw none send them to the
    /// child with the larger weight.
    Route,
}

impl MissingPolicy {
    /// Parse `"error"` or `"route"`.
    pub fn parse(s: &str) -> TmResult<Self> {
        match s {
            "error" => Ok(MissingPolicy::Error),
            "route" => Ok(MissingPolicy::Route),
            _ => Err(TmError::param(
                "missing_values",
                format!("missing_values must be 'error' or 'route'; got '{s}'"),
            )),
        }
    }
}

/// What to do at predict time with a category code that the tree never saw in training.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum UnseenPolicy {
    /// Raise an error naming the feature and the row.
    Error,
    /// Send the row where missing values go, and count it.
    Route,
}

impl UnseenPolicy {
    /// Parse `"error"` or `"route"`.
    pub fn parse(s: &str) -> TmResult<Self> {
        match s {
            "error" => Ok(UnseenPolicy::Error),
            "route" => Ok(UnseenPolicy::Route),
            _ => Err(TmError::param(
                "unseen_categories",
                format!("unseen_categories must be 'error' or 'route'; got '{s}'"),
            )),
        }
    }
}

/// The type of a feature column.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FeatureKind {
    /// Real values; splits are thresholds `x <= t`.
    Numeric,
    /// Integer codes `0..n_categories`; splits are category subsets or one child per category.
    Categorical(u32),
}

/// Settings of a tree; defaults follow common CART practice (fully grown, pruned only when
/// `ccp_alpha > 0`).
#[derive(Debug, Clone, PartialEq)]
pub struct TreeParams {
    /// Impurity measure (default Gini).
    pub criterion: Criterion,
    /// Maximum depth, the root having depth 0 (default unlimited).
    pub max_depth: Option<usize>,
    /// A node with fewer samples is not split (default 2).
    pub min_samples_split: usize,
    /// Every child must keep at least this many samples (default 1).
    pub min_samples_leaf: usize,
    /// A split must decrease the weighted impurity `W_node/W_root · gain` by at least this much
    /// (default 0).
    pub min_impurity_decrease: f64,
    /// Binary subsets or one child per category (default binary).
    pub categorical_split: CategoricalSplit,
    /// Missing-value policy (default error).
    pub missing: MissingPolicy,
    /// Complexity parameter of minimal cost-complexity pruning (default 0: no pruning).
    pub ccp_alpha: f64,
}

impl Default for TreeParams {
    fn default() -> Self {
        TreeParams {
            criterion: Criterion::Gini,
            max_depth: None,
            min_samples_split: 2,
            min_samples_leaf: 1,
            min_impurity_decrease: 0.0,
            categorical_split: CategoricalSplit::Binary,
            missing: MissingPolicy::Error,
            ccp_alpha: 0.0,
        }
    }
}

impl TreeParams {
    /// Check every value; the error names the parameter.
    pub fn validate(&self) -> TmResult<()> {
        if self.min_samples_split < 2 {
            return Err(TmError::param(
                "min_samples_split",
                format!(
                    "min_samples_split must be an int in the range [2, inf); got {}",
                    self.min_samples_split
                ),
            ));
        }
        if self.min_samples_leaf < 1 {
            return Err(TmError::param(
                "min_samples_leaf",
                "min_samples_leaf must be an int in the range [1, inf); got 0",
            ));
        }
        if !(self.min_impurity_decrease >= 0.0 && self.min_impurity_decrease.is_finite()) {
            return Err(TmError::param(
                "min_impurity_decrease",
                format!(
                    "min_impurity_decrease must be a finite number >= 0; got {}",
                    self.min_impurity_decrease
                ),
            ));
        }
        if !(self.ccp_alpha >= 0.0 && self.ccp_alpha.is_finite()) {
            return Err(TmError::param(
                "ccp_alpha",
                format!(
                    "ccp_alpha must be a finite number >= 0; got {}",
                    self.ccp_alpha
                ),
            ));
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parse_and_validate() {
        assert_eq!(Criterion::parse("gini"), Ok(Criterion::Gini));
        assert!(matches!(
            Criterion::parse("gain"),
            Err(TmError::Parameter { .. })
        ));
        assert!(CategoricalSplit::parse("multiway").is_ok());
        assert!(MissingPolicy::parse("x").is_err());
        assert!(UnseenPolicy::parse("route").is_ok());
        let p = TreeParams {
            min_samples_split: 1,
            ..TreeParams::default()
        };
        assert!(
            matches!(p.validate(), Err(TmError::Parameter { name, .. }) if name == "min_samples_split")
        );
        let p = TreeParams {
            min_samples_leaf: 0,
            ..TreeParams::default()
        };
        assert!(p.validate().is_err());
        let p = TreeParams {
            ccp_alpha: -1.0,
            ..TreeParams::default()
        };
        assert!(p.validate().is_err());
        assert!(TreeParams::default().validate().is_ok());
    }
}
