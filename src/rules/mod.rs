//! Frequent itemsets and association rules over transactions (baskets, or one transaction per
//! case of an event log).
//!
//! * [`transactions`]: the transaction database (CSR, presence not frequency) and minimum
//!   support;
//! * [`itemsets`]: parameters, results and the search bound; [`fpgrowth`], [`eclat`] and
//!   [`apriori`] are the three algorithms; [`closed`] filters closed and maximal itemsets;
//! * [`rules`]: association rules with their counts; [`measures`]: interestingness measures.

pub mod apriori;
pub mod closed;
pub mod eclat;
pub mod fpgrowth;
pub mod itemsets;
pub mod measures;
#[allow(clippy::module_inception)]
pub mod rules;
pub mod transactions;

pub use itemsets::{frequent_itemsets, Algorithm, ItemsetParams, Itemsets, OnLimit, Target};
pub use measures::Measure;
pub use rules::{association_rules, RuleParams, Rules};
pub use transactions::{MinSupport, Transactions};
