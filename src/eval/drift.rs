//! Concept drift: windowed two-sample tests over cases ordered by start time.
//!
//! Cases are sorted by the time of their first event. At each position `p` (every `step` cases)
//! a reference window (the `w` cases before `p`) is compared with a detection window (the `w`
//! cases from `p` on), following the windowed hypothesis tests of Bose, van der Aalst,
//! Žliobaitė, Pechenizkiy (CAiSE 2011) and the run-based test of Maaradji, Dumas, La Rosa,
//! Ostovar (BPM 2015). Four behaviours are compared:
//!
//! * `variants`: counts of each activity sequence (one per case, as Maaradji et al.'s runs):
//!   chi-square or G-test of independence on the `2 x variants` table;
//! * `activities`: counts of events per activity (same test);
//! * `directly_follows`: counts of directly-follows pairs (same test);
//! * `duration`: case durations, two-sample Kolmogorov–Smirnov test.
//!
//! Events of one case are not independent, so the activity and directly-follows p-values are
//! approximate (too small when cases repeat activities); the variant test counts one item per
//! case. A drift is a run of positions whose p-value stays below the significance level; the
//! Python layer turns the series into change points and explains them.

use std::collections::HashMap;

use rayon::prelude::*;

use super::stats::{ks_2samp, table_test};
use crate::control::Control;
use crate::error::{TmError, TmResult};
use crate::log::EventLog;

/// Names of the compared behaviours, in the column order of [`DriftSeries`].
pub const DRIFT_FEATURES: [&str; 4] = ["variants", "activities", "directly_follows", "duration"];

/// The test series of a drift scan.
#[derive(Debug, Clone, PartialEq)]
pub struct DriftSeries {
    /// Case indices sorted by start time (ties by case index).
    pub order: Vec<usize>,
    /// Positions in `order`: the first case of each detection window.
    pub positions: Vec<usize>,
    /// Statistic per position and behaviour (`positions.len() x 4`, row-major).
    pub statistic: Vec<f64>,
    /// p-value per position and behaviour (same layout).
    pub p_value: Vec<f64>,
}

fn counts_table<K: std::hash::Hash + Eq + Copy>(
    a: impl Iterator<Item = K>,
    b: impl Iterator<Item = K>,
) -> (Vec<f64>, usize) {
    let mut m: HashMap<K, usize> = HashMap::new();
    let mut ra: Vec<f64> = Vec::new();
    let mut rb: Vec<f64> = Vec::new();
    for (k, row) in a.map(|k| (k, 0)).chain(b.map(|k| (k, 1))) {
        let l = m.len();
        let j = *m.entry(k).or_insert(l);
        if j == ra.len() {
            ra.push(0.0);
            rb.push(0.0);
        }
        if row == 0 {
            ra[j] += 1.0;
        } else {
            rb[j] += 1.0;
        }
    }
    let c = ra.len();
    ra.extend(rb);
    (ra, c)
}

/// Scan `log` with windows of `window` cases every `step` cases.
pub fn drift_series(
    log: &EventLog,
    window: usize,
    step: usize,
    g_test: bool,
    ks_exact_limit: u64,
    ctl: &Control,
) -> TmResult<DriftSeries> {
    let n = log.n_cases();
    if window < 2 {
        return Err(TmError::param(
            "window",
            format!("window must be an int in the range [2, inf); got {window}"),
        ));
    }
    if step < 1 {
        return Err(TmError::param(
            "step",
            "step must be an int in the range [1, inf); got 0",
        ));
    }
    if 2 * window > n {
        return Err(TmError::param(
            "window",
            format!(
                "window = {window} cases is larger than the log allows: two adjacent windows \
                 need {} cases and the log has {n}",
                2 * window
            ),
        ));
    }
    let stats = log.case_stats();
    let variants = log.variants();
    let mut order: Vec<usize> = (0..n).collect();
    order.sort_by_key(|&c| (stats.start[c], c));
    let positions: Vec<usize> = (window..=n - window).step_by(step).collect();
    ctl.set_total(positions.len() as u64);
    let na = log.activity_names().len() as u64;
    let rows: Vec<TmResult<[(f64, f64); 4]>> = positions
        .par_iter()
        .map(|&p| {
            ctl.check()?;
            let refw = &order[p - window..p];
            let det = &order[p..p + window];
            let (t, c) = counts_table(
                refw.iter().map(|&k| variants.case_variant[k]),
                det.iter().map(|&k| variants.case_variant[k]),
            );
            let v = table_test(&t, 2, c, g_test)?;
            let acts = |w: &'_ [usize]| {
                w.iter()
                    .flat_map(|&k| log.trace(k).iter().copied())
                    .collect::<Vec<u32>>()
            };
            let (t, c) = counts_table(acts(refw).into_iter(), acts(det).into_iter());
            let a = table_test(&t, 2, c, g_test)?;
            let pairs = |w: &'_ [usize]| {
                w.iter()
                    .flat_map(|&k| {
                        log.trace(k)
                            .windows(2)
                            .map(|x| u64::from(x[0]) * na + u64::from(x[1]))
                    })
                    .collect::<Vec<u64>>()
            };
            let (t, c) = counts_table(pairs(refw).into_iter(), pairs(det).into_iter());
            let d = table_test(&t, 2, c, g_test)?;
            let dur = |w: &'_ [usize]| {
                w.iter()
                    .map(|&k| stats.duration[k] as f64)
                    .collect::<Vec<f64>>()
            };
            let (ks, kp) = ks_2samp(&dur(refw), &dur(det), ks_exact_limit)?;
            ctl.advance(1);
            Ok([
                (v.statistic, v.p_value),
                (a.statistic, a.p_value),
                (d.statistic, d.p_value),
                (ks, kp),
            ])
        })
        .collect();
    let mut statistic = Vec::with_capacity(positions.len() * 4);
    let mut p_value = Vec::with_capacity(positions.len() * 4);
    for r in rows {
        for (s, p) in r? {
            statistic.push(s);
            p_value.push(p);
        }
    }
    Ok(DriftSeries {
        order,
        positions,
        statistic,
        p_value,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::control::no_control;
    use crate::log::LogInput;

    fn log_with_change(n: usize, change: usize) -> EventLog {
        let mut case = Vec::new();
        let mut act = Vec::new();
        let mut time = Vec::new();
        for c in 0..n {
            let seq: &[u32] = if c < change {
                &[0, 1, 3]
            } else if c % 2 == 0 {
                &[0, 2, 3]
            } else {
                &[0, 1, 3]
            };
            for (k, &a) in seq.iter().enumerate() {
                case.push(c as u32);
                act.push(a);
                time.push((c * 100 + k * if c < change { 1 } else { 5 }) as i64);
            }
        }
        let input = LogInput::new(
            case,
            (0..n).map(|c| format!("c{c}")).collect(),
            act,
            vec!["a".into(), "b".into(), "c".into(), "d".into()],
            time,
        );
        EventLog::build(input).unwrap().0
    }

    #[test]
    fn finds_the_change() {
        let log = log_with_change(400, 200);
        let s = drift_series(&log, 50, 10, false, u64::MAX, &no_control()).unwrap();
        let at = s.positions.iter().position(|&p| p == 200).unwrap();
        assert!(s.p_value[at * 4] < 1e-6);
        assert!(s.p_value[at * 4 + 3] < 1e-6);
        assert!(s.p_value[0] > 0.5);
        assert!(drift_series(&log, 300, 10, false, 0, &no_control()).is_err());
    }
}
