//! Selections: new logs made of some of the cases of a log.
//!
//! Dictionaries (activities, case labels, categorical values) are shared with the source log;
//! only the selected events' columns are gathered. Case order is kept.

use std::sync::Arc;

use rand::seq::index::sample;
use rand::SeedableRng;
use rand_xoshiro::Xoshiro256PlusPlus;
use rayon::prelude::*;

use super::{views::Cache, EventLog};
use crate::error::{TmError, TmResult};

/// How a case must relate to a time window `[start, end)`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum WindowRule {
    /// All events of the case lie in the window.
    Contained,
    /// At least one event of the case lies in the window.
    Intersecting,
    /// The first event of the case lies in the window.
    Started,
    /// The last event of the case lies in the window.
    Completed,
}

impl WindowRule {
    /// Parse the rule's name (`contained`, `intersecting`, `started`, `completed`).
    pub fn parse(s: &str) -> TmResult<Self> {
        match s {
            "contained" => Ok(Self::Contained),
            "intersecting" => Ok(Self::Intersecting),
            "started" => Ok(Self::Started),
            "completed" => Ok(Self::Completed),
            _ => Err(TmError::param(
                "rule",
                format!(
                    "the window rule must be one of 'contained', 'intersecting', 'started', 'completed'; got '{s}'"
                ),
            )),
        }
    }
}

impl EventLog {
    /// A new log with the cases at `cases` (indices into this log), in that order.
    pub fn select_cases(&self, cases: &[usize]) -> TmResult<EventLog> {
        if let Some(&bad) = cases.iter().find(|&&c| c >= self.n_cases()) {
            return Err(TmError::param(
                "cases",
                format!(
                    "case index {bad} is out of range for a log of {} cases",
                    self.n_cases()
                ),
            ));
        }
        if cases.is_empty() {
            return Err(TmError::data("the selection is empty: no case matched"));
        }
        let mut offsets = Vec::with_capacity(cases.len() + 1);
        offsets.push(0usize);
        for &c in cases {
            offsets.push(offsets[offsets.len() - 1] + self.case_len(c));
        }
        let mut idx = vec![0usize; offsets[cases.len()]];
        super::par_chunks_by_offsets(&mut idx, &offsets)
            .zip(cases.par_iter())
            .for_each(|(seg, &c)| {
                let s = self.offsets[c];
                for (k, x) in seg.iter_mut().enumerate() {
                    *x = s + k;
                }
            });
        let g32 = |v: &[u32]| -> Vec<u32> { idx.par_iter().map(|&i| v[i]).collect() };
        Ok(EventLog {
            activity_names: Arc::clone(&self.activity_names),
            case_names: Arc::clone(&self.case_names),
            case_key: cases.iter().map(|&c| self.case_key[c]).collect(),
            activity: g32(&self.activity),
            time: idx.par_iter().map(|&i| self.time[i]).collect(),
            row: idx.par_iter().map(|&i| self.row[i]).collect(),
            resource: self.resource.as_ref().map(|c| c.gather(&idx)),
            lifecycle: self.lifecycle.as_ref().map(|c| c.gather(&idx)),
            event_attrs: self.event_attrs.iter().map(|c| c.gather(&idx)).collect(),
            case_attrs: self.case_attrs.iter().map(|c| c.gather(cases)).collect(),
            offsets,
            cache: Cache::default(),
        })
    }

    /// A new log with the events where `mask` (one entry per event) is true. Cases left without
    /// events are dropped; their number is returned beside the log.
    pub fn select_events(&self, mask: &[bool]) -> TmResult<(EventLog, usize)> {
        if mask.len() != self.n_events() {
            return Err(TmError::param(
                "mask",
                format!(
                    "the event mask has {} entries but the log has {} events",
                    mask.len(),
                    self.n_events()
                ),
            ));
        }
        let mut offsets = vec![0usize];
        let mut cases = Vec::new();
        let mut idx = Vec::with_capacity(mask.iter().filter(|&&b| b).count());
        for c in 0..self.n_cases() {
            let before = idx.len();
            idx.extend((self.offsets[c]..self.offsets[c + 1]).filter(|&i| mask[i]));
            if idx.len() > before {
                cases.push(c);
                offsets.push(idx.len());
            }
        }
        if idx.is_empty() {
            return Err(TmError::data("the selection is empty: no event matched"));
        }
        let dropped = self.n_cases() - cases.len();
        Ok((
            EventLog {
                activity_names: Arc::clone(&self.activity_names),
                case_names: Arc::clone(&self.case_names),
                case_key: cases.iter().map(|&c| self.case_key[c]).collect(),
                activity: idx.par_iter().map(|&i| self.activity[i]).collect(),
                time: idx.par_iter().map(|&i| self.time[i]).collect(),
                row: idx.par_iter().map(|&i| self.row[i]).collect(),
                resource: self.resource.as_ref().map(|c| c.gather(&idx)),
                lifecycle: self.lifecycle.as_ref().map(|c| c.gather(&idx)),
                event_attrs: self.event_attrs.iter().map(|c| c.gather(&idx)).collect(),
                case_attrs: self.case_attrs.iter().map(|c| c.gather(&cases)).collect(),
                offsets,
                cache: Cache::default(),
            },
            dropped,
        ))
    }

    /// A new log with the cases where `mask` is true.
    pub fn select_mask(&self, mask: &[bool]) -> TmResult<EventLog> {
        if mask.len() != self.n_cases() {
            return Err(TmError::param(
                "mask",
                format!(
                    "the case mask has {} entries but the log has {} cases",
                    mask.len(),
                    self.n_cases()
                ),
            ));
        }
        let cases: Vec<usize> = (0..mask.len()).filter(|&c| mask[c]).collect();
        self.select_cases(&cases)
    }

    /// Cases whose events relate to `[start, end)` as `rule` says.
    pub fn window_mask(&self, start: i64, end: i64, rule: WindowRule) -> Vec<bool> {
        let st = self.case_stats();
        (0..self.n_cases())
            .into_par_iter()
            .map(|c| {
                let inside = |t: i64| t >= start && t < end;
                match rule {
                    WindowRule::Contained => st.start[c] >= start && st.end[c] < end,
                    WindowRule::Intersecting => self.trace_times(c).iter().any(|&t| inside(t)),
                    WindowRule::Started => inside(st.start[c]),
                    WindowRule::Completed => inside(st.end[c]),
                }
            })
            .collect()
    }

    /// Cases of the most frequent variants that together cover at least `share` of the cases
    /// (0 < share <= 1). Variants tied on count are taken in order of first appearance.
    pub fn top_variants_mask(&self, share: f64) -> TmResult<Vec<bool>> {
        if !(share > 0.0 && share <= 1.0) {
            return Err(TmError::param(
                "share",
                format!("the variant coverage must be in (0, 1]; got {share}"),
            ));
        }
        let v = self.variants();
        // Compare the covered fraction (an exactly rounded quotient) with `share` rather than
        // the count with `ceil(share * n)`: 0.28 * 25 is 7.000000000000001 in f64, which would
        // ask for 8 cases where 7 of 25 already make 28 %.
        let n = self.n_cases() as f64;
        let mut keep = 0usize;
        let mut covered = 0u64;
        while (covered as f64) / n < share && keep < v.len() {
            covered += v.counts[keep];
            keep += 1;
        }
        Ok(v.case_variant
            .iter()
            .map(|&x| (x as usize) < keep)
            .collect())
    }

    /// Cases with at least `min` and at most `max` events.
    pub fn length_mask(&self, min: usize, max: usize) -> Vec<bool> {
        (0..self.n_cases())
            .map(|c| {
                let l = self.case_len(c);
                l >= min && l <= max
            })
            .collect()
    }

    /// A uniform random sample of `n` cases without replacement, seeded, in case order.
    pub fn sample_cases(&self, n: usize, seed: u64) -> TmResult<Vec<usize>> {
        if n == 0 || n > self.n_cases() {
            return Err(TmError::param(
                "n",
                format!(
                    "the sample size must be between 1 and the number of cases ({}); got {n}",
                    self.n_cases()
                ),
            ));
        }
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
        let mut idx = sample(&mut rng, self.n_cases(), n).into_vec();
        idx.sort_unstable();
        Ok(idx)
    }

    /// One log per distinct label (labels in ascending order), each holding the cases with that
    /// label in case order. `labels` has one entry per case.
    pub fn split(&self, labels: &[i64]) -> TmResult<Vec<(i64, EventLog)>> {
        if labels.len() != self.n_cases() {
            return Err(TmError::param(
                "labels",
                format!(
                    "split needs one label per case: got {} labels for {} cases",
                    labels.len(),
                    self.n_cases()
                ),
            ));
        }
        let mut distinct: Vec<i64> = labels.to_vec();
        distinct.sort_unstable();
        distinct.dedup();
        distinct
            .into_par_iter()
            .map(|lab| {
                let cases: Vec<usize> = (0..labels.len()).filter(|&c| labels[c] == lab).collect();
                self.select_cases(&cases).map(|l| (lab, l))
            })
            .collect()
    }
}

#[cfg(test)]
mod tests {
    use super::super::tests::log_from;
    use super::*;

    fn demo() -> EventLog {
        log_from(&[
            ("1", "a", 0),
            ("1", "b", 10),
            ("2", "a", 5),
            ("2", "c", 20),
            ("3", "a", 30),
            ("3", "b", 40),
            ("3", "b", 41),
            ("4", "a", 1),
            ("4", "b", 2),
        ])
    }

    #[test]
    fn select_keeps_dictionaries_and_order() {
        let log = demo();
        let sub = log.select_cases(&[2, 0]).unwrap();
        assert_eq!(sub.n_cases(), 2);
        assert_eq!(sub.case_name(0), "3");
        assert_eq!(sub.trace(0), log.trace(2));
        assert_eq!(sub.trace_times(1), &[0, 10]);
        assert!(Arc::ptr_eq(&sub.activity_names, &log.activity_names));
        assert!(log.select_cases(&[9]).is_err());
        assert!(log.select_cases(&[]).is_err());
    }

    #[test]
    fn select_events_drops_emptied_cases() {
        let log = demo();
        let mask: Vec<bool> = log
            .activities()
            .iter()
            .map(|&a| log.activity_names()[a as usize] != "a")
            .collect();
        let (sub, dropped) = log.select_events(&mask).unwrap();
        assert_eq!(dropped, 0);
        assert_eq!(sub.n_events(), 5);
        assert_eq!(sub.trace_times(2), &[40, 41]);
        let only_c: Vec<bool> = log
            .activities()
            .iter()
            .map(|&a| log.activity_names()[a as usize] == "c")
            .collect();
        let (sub, dropped) = log.select_events(&only_c).unwrap();
        assert_eq!((sub.n_cases(), dropped), (1, 3));
        assert_eq!(sub.case_name(0), "2");
        assert!(log.select_events(&[false; 9]).is_err());
        assert!(log.select_events(&[true]).is_err());
    }

    #[test]
    fn windows() {
        let log = demo();
        assert_eq!(
            log.window_mask(0, 11, WindowRule::Contained),
            vec![true, false, false, true]
        );
        assert_eq!(
            log.window_mask(8, 11, WindowRule::Intersecting),
            vec![true, false, false, false]
        );
        assert_eq!(
            log.window_mask(5, 31, WindowRule::Started),
            vec![false, true, true, false]
        );
        assert_eq!(
            log.window_mask(15, 25, WindowRule::Completed),
            vec![false, true, false, false]
        );
        assert!(WindowRule::parse("nope").is_err());
    }

    #[test]
    fn coverage_length_sample_split() {
        let log = demo();
        // variants: ab x2, ac x1, abb x1 -> 50 % is covered by ab alone.
        assert_eq!(
            log.top_variants_mask(0.5).unwrap(),
            vec![true, false, false, true]
        );
        assert_eq!(log.top_variants_mask(1.0).unwrap(), vec![true; 4]);
        // 0.75 of 4 cases: exactly 3 cases, the first two variants.
        assert_eq!(
            log.top_variants_mask(0.75).unwrap(),
            vec![true, true, false, true]
        );
        assert!(log.top_variants_mask(0.0).is_err());
        assert_eq!(log.length_mask(3, 10), vec![false, false, true, false]);
        let s1 = log.sample_cases(2, 7).unwrap();
        assert_eq!(s1, log.sample_cases(2, 7).unwrap());
        assert!(log.sample_cases(5, 7).is_err());
        let parts = log.split(&[1, 0, 1, 0]).unwrap();
        assert_eq!(parts.len(), 2);
        assert_eq!(parts[0].0, 0);
        assert_eq!(parts[0].1.case_name(0), "2");
        assert_eq!(parts[1].1.n_events(), 5);
    }
}
