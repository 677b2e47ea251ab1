//! Dependency graphs with the heuristic dependency measures.
//!
//! The heuristic approach (Weijters & van der Aalst 2003, Integrated Computer-Aided Engineering
//! 10(2); Weijters & Ribeiro 2011, "Flexible Heuristics Miner", IEEE CIDM) scores how strongly
//! an activity `a` is followed by `b` rather than the other way round, so that noise and
//! concurrency (which show both orders) get low scores:
//!
//! * dependency `a => b = (|a>b| - |b>a|) / (|a>b| + |b>a| + 1)` in (-1, 1);
//! * length-one loop `a => a = |a>a| / (|a>a| + 1)`;
//! * length-two loop `a =>2 b = (|a>>b| + |b>>a|) / (|a>>b| + |b>>a| + 1)`, where `|a>>b|` counts
//!   the pattern `a b a` in the traces;
//! * split type `a => (b ∧ c) = (|b>c| + |c>b|) / (|a>b| + |a>c| + 1)`: high values suggest that
//!   `b` and `c` both follow `a` (parallel), low values that one of them does (choice).
//!
//! An edge `a -> b` is kept when `a => b` reaches `dependency_threshold`, `|a>b|` reaches
//! `min_observations`, and `a => b` is within `relative_to_best` of the best outgoing score of
//! `a` or the best incoming score of `b`. With `all_connected`, every activity also keeps its best
//! outgoing edge (unless it only ever ends cases) and its best incoming edge (unless it only
//! ever starts cases), as in the flexible variant. Length-one and length-two loops are added
//! when their measures reach `loop1_threshold` / `loop2_threshold` (a pair already on a
//! length-one loop is not given a length-two loop).

use crate::discover::dfg::df_counts;
use crate::error::{TmError, TmResult};
use crate::log::EventLog;

/// Thresholds of the dependency graph.
#[derive(Debug, Clone, PartialEq)]
pub struct DependencyParams {
    /// Minimum dependency measure of an edge (default 0.9).
    pub dependency_threshold: f64,
    /// Minimum number of `a>b` observations of an edge (default 1).
    pub min_observations: u64,
    /// Keep edges within this distance of the best score (default 0.05).
    pub relative_to_best: f64,
    /// Minimum length-one loop measure (default 0.9).
    pub loop1_threshold: f64,
    /// Minimum length-two loop measure (default 0.9).
    pub loop2_threshold: f64,
    /// Give every activity its best incoming and outgoing edge (default true).
    pub all_connected: bool,
}

impl Default for DependencyParams {
    fn default() -> Self {
        DependencyParams {
            dependency_threshold: 0.9,
            min_observations: 1,
            relative_to_best: 0.05,
            loop1_threshold: 0.9,
            loop2_threshold: 0.9,
            all_connected: true,
        }
    }
}

/// The dependency measures of a log and the graph they select.
#[derive(Debug, Clone, PartialEq)]
pub struct DependencyGraph {
    /// Activity names.
    pub activities: Vec<String>,
    /// `|a>b|`, row-major `na x na`.
    pub follows: Vec<u64>,
    /// `a => b` (diagonal: the length-one loop measure), row-major.
    pub dependency: Vec<f64>,
    /// `a =>2 b`, row-major (symmetric).
    pub loop2: Vec<f64>,
    /// Selected edges `(a, b)`.
    pub edges: Vec<(u32, u32)>,
    /// Events per activity.
    pub activity_count: Vec<u64>,
    /// Cases starting with each activity.
    pub start: Vec<u64>,
    /// Cases ending with each activity.
    pub end: Vec<u64>,
}

impl DependencyGraph {
    /// `a => (b ∧ c)`: the split-type measure.
    pub fn and_measure(&self, a: usize, b: usize, c: usize) -> f64 {
        let na = self.activities.len();
        let f = |x: usize, y: usize| self.follows[x * na + y] as f64;
        (f(b, c) + f(c, b)) / (f(a, b) + f(a, c) + 1.0)
    }
}

fn check(p: &DependencyParams) -> TmResult<()> {
    for (name, v, lo) in [
        ("dependency_threshold", p.dependency_threshold, -1.0),
        ("relative_to_best", p.relative_to_best, 0.0),
        ("loop1_threshold", p.loop1_threshold, 0.0),
        ("loop2_threshold", p.loop2_threshold, 0.0),
    ] {
        if !(v >= lo && v <= 1.0) {
            return Err(TmError::param(
                name,
                format!("{name} must be in [{lo}, 1]; got {v}"),
            ));
        }
    }
    Ok(())
}

/// Compute the dependency measures of `log` and select the graph.
pub fn dependency_graph(log: &EventLog, p: &DependencyParams) -> TmResult<DependencyGraph> {
    check(p)?;
    if log.n_cases() == 0 {
        return Err(TmError::data(
            "the event log is empty: a dependency graph needs at least one case",
        ));
    }
    let na = log.activity_names().len();
    let (cnt, _, ev, st, en) = df_counts(log);
    // |a>>b|: pattern a b a, counted over variants.
    let vars = log.variants();
    let mut aba = vec![0u64; na * na];
    for v in 0..vars.len() {
        let s = vars.sequence(v);
        for w in s.windows(3) {
            if w[0] == w[2] && w[0] != w[1] {
                aba[w[0] as usize * na + w[1] as usize] += vars.counts[v];
            }
        }
    }
    let mut dep = vec![0.0f64; na * na];
    let mut l2 = vec![0.0f64; na * na];
    for a in 0..na {
        for b in 0..na {
            let ab = cnt[a * na + b] as f64;
            if a == b {
                dep[a * na + b] = ab / (ab + 1.0);
            } else {
                let ba = cnt[b * na + a] as f64;
                dep[a * na + b] = (ab - ba) / (ab + ba + 1.0);
                let x = (aba[a * na + b] + aba[b * na + a]) as f64;
                l2[a * na + b] = x / (x + 1.0);
            }
        }
    }
    let mut keep = vec![false; na * na];
    let present = |a: usize| ev[a] > 0;
    let best_out: Vec<f64> = (0..na)
        .map(|a| {
            (0..na)
                .filter(|&b| b != a && cnt[a * na + b] > 0)
                .map(|b| dep[a * na + b])
                .fold(f64::NEG_INFINITY, f64::max)
        })
        .collect();
    let best_in: Vec<f64> = (0..na)
        .map(|b| {
            (0..na)
                .filter(|&a| a != b && cnt[a * na + b] > 0)
                .map(|a| dep[a * na + b])
                .fold(f64::NEG_INFINITY, f64::max)
        })
        .collect();
    let loop1: Vec<bool> = (0..na)
        .map(|a| {
            present(a)
                && dep[a * na + a] >= p.loop1_threshold
                && cnt[a * na + a] >= p.min_observations.max(1)
        })
        .collect();
    for a in 0..na {
        if loop1[a] {
            keep[a * na + a] = true;
        }
        for b in 0..na {
            if a == b || cnt[a * na + b] == 0 {
                continue;
            }
            let d = dep[a * na + b];
            let near_best =
                best_out[a] - d <= p.relative_to_best || best_in[b] - d <= p.relative_to_best;
            if d >= p.dependency_threshold && cnt[a * na + b] >= p.min_observations && near_best {
                keep[a * na + b] = true;
            }
            if !loop1[a]
                && !loop1[b]
                && l2[a * na + b] >= p.loop2_threshold
                && aba[a * na + b] + aba[b * na + a] >= p.min_observations.max(1)
            {
                keep[a * na + b] = true;
                keep[b * na + a] = true;
            }
        }
    }
    if p.all_connected {
        for a in (0..na).filter(|&a| present(a)) {
            let only_ends = ev[a] == en[a];
            if !only_ends && best_out[a].is_finite() {
                if let Some(b) = (0..na)
                    .filter(|&b| b != a && cnt[a * na + b] > 0)
                    .find(|&b| dep[a * na + b] == best_out[a])
                {
                    keep[a * na + b] = true;
                }
            }
            let only_starts = ev[a] == st[a];
            if !only_starts && best_in[a].is_finite() {
                if let Some(x) = (0..na)
                    .filter(|&x| x != a && cnt[x * na + a] > 0)
                    .find(|&x| dep[x * na + a] == best_in[a])
                {
                    keep[x * na + a] = true;
                }
            }
        }
    }
    let edges = (0..na * na)
        .filter(|&k| keep[k])
        .map(|k| ((k / na) as u32, (k % na) as u32))
        .collect();
    Ok(DependencyGraph {
        activities: log.activity_names().to_vec(),
        follows: cnt,
        dependency: dep,
        loop2: l2,
        edges,
        activity_count: ev,
        start: st,
        end: en,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::discover::testlog::{log_of, running_example};
    use approx::assert_relative_eq;

    #[test]
    fn measures_on_running_example() {
        // Values computed from the definitions of Weijters & Ribeiro 2011 on the running
        // example L of REFERENCES section G (our numbers, not printed in the paper).
        let log = running_example();
        let g = dependency_graph(&log, &DependencyParams::default()).unwrap();
        let na = g.activities.len();
        let ix = |s: &str| g.activities.iter().position(|x| x == s).unwrap();
        let d = |a: &str, b: &str| g.dependency[ix(a) * na + ix(b)];
        assert_relative_eq!(d("a", "b"), 6.0 / 7.0, epsilon = 1e-12);
        assert_relative_eq!(d("b", "c"), 2.0 / 11.0, epsilon = 1e-12);
        assert_relative_eq!(d("c", "b"), -2.0 / 11.0, epsilon = 1e-12);
        assert_relative_eq!(d("b", "d"), 0.75, epsilon = 1e-12);
        assert_relative_eq!(d("d", "f"), 0.875, epsilon = 1e-12);
        assert_relative_eq!(g.and_measure(ix("a"), ix("b"), ix("c")), 10.0 / 11.0);
        assert_relative_eq!(g.and_measure(ix("b"), ix("d"), ix("e")), 0.0);
    }

    #[test]
    fn loops_detected() {
        let log = log_of(&[
            (&["a", "b", "b", "b", "c"], 5),
            (&["a", "d", "e", "d", "e", "d", "c"], 5),
        ]);
        let g = dependency_graph(&log, &DependencyParams::default()).unwrap();
        let ix = |s: &str| g.activities.iter().position(|x| x == s).unwrap() as u32;
        assert!(g.edges.contains(&(ix("b"), ix("b"))));
        assert!(g.edges.contains(&(ix("d"), ix("e"))));
        assert!(g.edges.contains(&(ix("e"), ix("d"))));
    }

    #[test]
    fn bad_threshold() {
        let log = running_example();
        let p = DependencyParams {
            dependency_threshold: 1.5,
            ..Default::default()
        };
        assert!(matches!(
            dependency_graph(&log, &p),
            Err(TmError::Parameter { .. })
        ));
    }
}
