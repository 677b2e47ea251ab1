//! Directly-follows graphs with frequency and performance annotations.
//!
//! Activity `b` *directly follows* `a` in a trace when an event of `a` is immediately followed by
//! an event of `b` in the same case; `|a>b|` counts such pairs over the log. The directly-follows
//! graph (DFG) has the activities as nodes, one edge per observed pair, and an artificial *start*
//! and *end* node linked to the first and last activity of each case. It is the common input of
//! the heuristic, alpha and inductive methods (see the sibling modules) and a readable model by
//! itself. Pitfalls of reading DFGs as process models (an edge is not a causal rule, filtered
//! DFGs can show paths no case took) are discussed by Leemans, Poppe & Wynn 2019, ICPM.
//!
//! Annotations per edge: `count` (occurrences), `cases` (distinct cases with the pair) and, when
//! asked, the mean, median and 90th percentile of the time gap between the two events (the gap
//! statistics come from [`EventLog::directly_follows`]).
//!
//! Filters (applied in this order):
//! * `path_coverage` in (0, 1]: keep only the cases of the most frequent variants that together
//!   cover that share of the cases, then build the graph from them;
//! * `min_activity_count`: drop activities with fewer events, with their edges (no re-linking);
//! * `min_edge_count`: drop edges (and start/end links) with fewer occurrences.
//!
//! The frequency-only kernel is one pass over the events: each worker counts pairs of a block of
//! cases into a dense `n_activities²` table with a per-pair "last case" stamp for the
//! distinct-case count, and the tables are summed in a fixed order (thread-count independent).

use rayon::prelude::*;

use crate::control::Control;
use crate::error::{TmError, TmResult};
use crate::log::EventLog;

/// Filters and annotations of a directly-follows graph.
#[derive(Debug, Clone, PartialEq)]
pub struct DfgParams {
    /// Keep only activities with at least this many events (default 0).
    pub min_activity_count: u64,
    /// Keep only edges with at least this many occurrences (default 0).
    pub min_edge_count: u64,
    /// Keep the most frequent variants covering this share of cases (default 1.0 = all).
    pub path_coverage: f64,
    /// Compute gap statistics (default true).
    pub performance: bool,
}

impl Default for DfgParams {
    fn default() -> Self {
        DfgParams {
            min_activity_count: 0,
            min_edge_count: 0,
            path_coverage: 1.0,
            performance: true,
        }
    }
}

/// A directly-follows graph over the activity dictionary of a log.
#[derive(Debug, Clone, PartialEq)]
pub struct Dfg {
    /// Activity names (the log's whole dictionary; see `kept`).
    pub activities: Vec<String>,
    /// Whether each activity is a node of the (filtered) graph.
    pub kept: Vec<bool>,
    /// Events per activity.
    pub activity_count: Vec<u64>,
    /// Cases starting with each activity (edges from the artificial start).
    pub start: Vec<u64>,
    /// Cases ending with each activity (edges to the artificial end).
    pub end: Vec<u64>,
    /// Edge sources (activity codes), sorted by (source, target).
    pub source: Vec<u32>,
    /// Edge targets.
    pub target: Vec<u32>,
    /// Occurrences per edge.
    pub count: Vec<u64>,
    /// Distinct cases per edge.
    pub cases: Vec<u64>,
    /// Mean gap in ns (NaN when performance was not asked for).
    pub mean_gap: Vec<f64>,
    /// Median gap in ns.
    pub median_gap: Vec<f64>,
    /// 90th percentile gap in ns.
    pub p90_gap: Vec<f64>,
    /// Number of cases the graph was built from.
    pub n_cases: u64,
}

/// Dense directly-follows counts: `(count, cases)` tables of `na * na` entries plus per-activity
/// `(events, starts, ends)`.
pub fn df_counts(log: &EventLog) -> (Vec<u64>, Vec<u64>, Vec<u64>, Vec<u64>, Vec<u64>) {
    let na = log.activity_names().len();
    let n = log.n_cases();
    let n_blocks = (rayon::current_num_threads() * 2).clamp(1, n.max(1));
    let block = n.div_ceil(n_blocks).max(1);
    let parts: Vec<(Vec<u64>, Vec<u64>, Vec<u64>, Vec<u64>, Vec<u64>)> = (0..n_blocks)
        .into_par_iter()
        .map(|b| {
            let mut cnt = vec![0u64; na * na];
            let mut cs = vec![0u64; na * na];
            let mut stamp = vec![u32::MAX; na * na];
            let mut ev = vec![0u64; na];
            let mut st = vec![0u64; na];
            let mut en = vec![0u64; na];
            for c in (b * block)..((b + 1) * block).min(n) {
                let tr = log.trace(c);
                if tr.is_empty() {
                    continue;
                }
                st[tr[0] as usize] += 1;
                en[tr[tr.len() - 1] as usize] += 1;
                for &a in tr {
                    ev[a as usize] += 1;
                }
                for w in tr.windows(2) {
                    let k = w[0] as usize * na + w[1] as usize;
                    cnt[k] += 1;
                    if stamp[k] != c as u32 {
                        stamp[k] = c as u32;
                        cs[k] += 1;
                    }
                }
            }
            (cnt, cs, ev, st, en)
        })
        .collect();
    let mut acc = (
        vec![0u64; na * na],
        vec![0u64; na * na],
        vec![0u64; na],
        vec![0u64; na],
        vec![0u64; na],
    );
    for p in parts {
        acc.0.iter_mut().zip(p.0).for_each(|(x, y)| *x += y);
        acc.1.iter_mut().zip(p.1).for_each(|(x, y)| *x += y);
        acc.2.iter_mut().zip(p.2).for_each(|(x, y)| *x += y);
        acc.3.iter_mut().zip(p.3).for_each(|(x, y)| *x += y);
        acc.4.iter_mut().zip(p.4).for_each(|(x, y)| *x += y);
    }
    acc
}

/// Check DFG parameters.
pub fn check_params(p: &DfgParams) -> TmResult<()> {
    if !(p.path_coverage > 0.0 && p.path_coverage <= 1.0) {
        return Err(TmError::param(
            "path_coverage",
            format!(
                "path_coverage must be a share in (0, 1]; got {}",
                p.path_coverage
            ),
        ));
    }
    Ok(())
}

/// Build the directly-follows graph of `log`.
pub fn directly_follows_graph(log: &EventLog, p: &DfgParams, ctl: &Control) -> TmResult<Dfg> {
    check_params(p)?;
    if log.n_cases() == 0 {
        return Err(TmError::data(
            "the event log is empty: a directly-follows graph needs at least one case",
        ));
    }
    let selected;
    let log = if p.path_coverage < 1.0 {
        let mask = log.top_variants_mask(p.path_coverage)?;
        selected = log.select_mask(&mask)?;
        &selected
    } else {
        log
    };
    ctl.check()?;
    let na = log.activity_names().len();
    let (cnt, cs, ev, st, en) = df_counts(log);
    let kept: Vec<bool> = ev
        .iter()
        .map(|&e| e > 0 && e >= p.min_activity_count)
        .collect();
    let (mut source, mut target, mut count, mut cases) = (vec![], vec![], vec![], vec![]);
    for k in 0..na * na {
        let (a, b) = (k / na, k % na);
        if cnt[k] > 0 && cnt[k] >= p.min_edge_count && kept[a] && kept[b] {
            source.push(a as u32);
            target.push(b as u32);
            count.push(cnt[k]);
            cases.push(cs[k]);
        }
    }
    let ne = source.len();
    let (mut mean_gap, mut median_gap, mut p90_gap) =
        (vec![f64::NAN; ne], vec![f64::NAN; ne], vec![f64::NAN; ne]);
    if p.performance {
        ctl.check()?;
        let df = log.directly_follows();
        // Both lists are sorted by (source, target): merge.
        let mut j = 0usize;
        for i in 0..ne {
            while j < df.from.len() && (df.from[j], df.to[j]) < (source[i], target[i]) {
                j += 1;
            }
            if j < df.from.len() && (df.from[j], df.to[j]) == (source[i], target[i]) {
                mean_gap[i] = df.mean[j];
                median_gap[i] = df.median[j];
                p90_gap[i] = df.p90[j];
            }
        }
    }
    let filt = |v: Vec<u64>| -> Vec<u64> {
        v.into_iter()
            .enumerate()
            .map(|(a, x)| {
                if kept[a] && x >= p.min_edge_count {
                    x
                } else {
                    0
                }
            })
            .collect()
    };
    let start = filt(st);
    let end = filt(en);
    Ok(Dfg {
        activities: log.activity_names().to_vec(),
        activity_count: ev,
        kept,
        start,
        end,
        source,
        target,
        count,
        cases,
        mean_gap,
        median_gap,
        p90_gap,
        n_cases: log.n_cases() as u64,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::discover::testlog::running_example;

    #[test]
    fn counts_of_running_example() {
        // Counts of the running example L derived from the definition (REFERENCES section G).
        let log = running_example();
        let g = directly_follows_graph(&log, &DfgParams::default(), &Control::new()).unwrap();
        let name = |i: u32| g.activities[i as usize].clone();
        let mut edges: Vec<(String, String, u64)> = (0..g.source.len())
            .map(|i| (name(g.source[i]), name(g.target[i]), g.count[i]))
            .collect();
        edges.sort();
        let want = [
            ("a", "b", 6),
            ("a", "c", 4),
            ("b", "c", 6),
            ("b", "d", 3),
            ("b", "e", 1),
            ("c", "b", 4),
            ("c", "d", 4),
            ("c", "e", 2),
            ("d", "f", 7),
            ("e", "f", 3),
        ];
        let want: Vec<(String, String, u64)> = want
            .iter()
            .map(|(a, b, c)| (a.to_string(), b.to_string(), *c))
            .collect();
        assert_eq!(edges, want);
        assert!(g.mean_gap.iter().all(|x| x.is_finite()));
    }

    #[test]
    fn filters_apply() {
        let log = running_example();
        let p = DfgParams {
            min_edge_count: 4,
            ..Default::default()
        };
        let g = directly_follows_graph(&log, &p, &Control::new()).unwrap();
        assert_eq!(g.count.len(), 6);
        let p = DfgParams {
            path_coverage: 0.4,
            ..Default::default()
        };
        let g = directly_follows_graph(&log, &p, &Control::new()).unwrap();
        assert_eq!(g.n_cases, 4);
        assert_eq!(g.count.len(), 4);
        let p = DfgParams {
            path_coverage: 0.0,
            ..Default::default()
        };
        assert!(matches!(
            directly_follows_graph(&log, &p, &Control::new()),
            Err(TmError::Parameter { .. })
        ));
    }
}
