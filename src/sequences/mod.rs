//! Sequential patterns and episodes over the activity sequences of cases (or any sequences).
//!
//! * [`prefixspan`]: PrefixSpan over sequences of itemsets, with gap and span constraints for
//!   single-item (case) sequences and closed patterns;
//! * [`episodes`]: WINEPI / MINEPI serial and parallel episodes in event streams, and episode
//!   rules.

pub mod episodes;
pub mod prefixspan;

pub use episodes::{
    episode_rules, frequent_episodes, EpisodeKind, EpisodeMeasure, EpisodeParams, Episodes,
    EventStreams,
};
pub use prefixspan::{prefixspan, PrefixSpanParams, SeqPatterns, SequenceDb};
