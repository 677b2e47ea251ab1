//! Derived views of an [`EventLog`], computed in parallel and cached on the log.
//!
//! * [`EventLog::variants`]: distinct activity sequences, most frequent first, with their cases.
//! * [`EventLog::case_stats`]: per-case start, end, duration and length.
//! * [`EventLog::activity_counts`]: events and cases per activity; start and end activities.
//! * [`EventLog::directly_follows`]: counts of `a` directly followed by `b` within a case, with
//!   the count, mean, median and 90th percentile of the time between the two events.
//! * [`EventLog::rework`]: activities repeated within a case.
//! * [`EventLog::activity_times`]: per activity, the time since the previous event of the case
//!   (waiting) and, where lifecycle start/complete pairs exist, the time between them (service).
//!
//! Percentiles use linear interpolation between closest ranks (the default of numpy and
//! pandas), so they can be checked against `DataFrame.quantile`.

use std::collections::HashMap;
use std::hash::BuildHasher;
use std::sync::{Arc, OnceLock};

use rayon::prelude::*;

use super::{EventLog, Values};

/// Cached views (filled on first use).
#[derive(Debug, Default)]
pub struct Cache {
    variants: OnceLock<Arc<Variants>>,
    case_stats: OnceLock<Arc<CaseStats>>,
}

/// Distinct activity sequences of a log.
#[derive(Debug, Clone, PartialEq)]
pub struct Variants {
    /// CSR offsets into `activities` (`n_variants + 1`).
    pub offsets: Vec<usize>,
    /// Concatenated activity codes of the variants.
    pub activities: Vec<u32>,
    /// Number of cases of each variant (non-increasing).
    pub counts: Vec<u64>,
    /// Variant index of each case.
    pub case_variant: Vec<u32>,
    /// CSR offsets into `cases` (`n_variants + 1`).
    pub case_offsets: Vec<usize>,
    /// Case indices grouped by variant, ascending within a variant.
    pub cases: Vec<u32>,
}

impl Variants {
    /// Number of distinct variants.
    pub fn len(&self) -> usize {
        self.counts.len()
    }
    /// Whether there are none.
    pub fn is_empty(&self) -> bool {
        self.counts.is_empty()
    }
    /// The activity codes of variant `v`.
    pub fn sequence(&self, v: usize) -> &[u32] {
        &self.activities[self.offsets[v]..self.offsets[v + 1]]
    }
    /// The cases of variant `v`.
    pub fn cases_of(&self, v: usize) -> &[u32] {
        &self.cases[self.case_offsets[v]..self.case_offsets[v + 1]]
    }
}

/// Per-case timing and size.
#[derive(Debug, Clone, PartialEq)]
pub struct CaseStats {
    /// Timestamp of the first event.
    pub start: Vec<i64>,
    /// Timestamp of the last event.
    pub end: Vec<i64>,
    /// `end - start` in ns.
    pub duration: Vec<i64>,
    /// Number of events.
    pub length: Vec<u32>,
}

/// Per-activity counts.
#[derive(Debug, Clone, PartialEq)]
pub struct ActivityCounts {
    /// Events per activity.
    pub events: Vec<u64>,
    /// Cases containing the activity at least once.
    pub cases: Vec<u64>,
    /// Cases starting with the activity.
    pub starts: Vec<u64>,
    /// Cases ending with the activity.
    pub ends: Vec<u64>,
}

/// Directly-follows pairs with gap statistics, sorted by (from, to).
#[derive(Debug, Clone, PartialEq)]
pub struct DirectlyFollows {
    /// Source activity code.
    pub from: Vec<u32>,
    /// Target activity code.
    pub to: Vec<u32>,
    /// Number of occurrences.
    pub count: Vec<u64>,
    /// Number of distinct cases with the pair.
    pub cases: Vec<u64>,
    /// Mean gap (ns).
    pub mean: Vec<f64>,
    /// Median gap (ns).
    pub median: Vec<f64>,
    /// 90th percentile of the gap (ns).
    pub p90: Vec<f64>,
}

/// Repetition of activities within cases.
#[derive(Debug, Clone, PartialEq)]
pub struct Rework {
    /// Per activity: cases in which it occurs more than once.
    pub cases: Vec<u64>,
    /// Per activity: occurrences beyond the first, summed over cases.
    pub repeats: Vec<u64>,
    /// Per case: events that repeat an activity already seen in the case.
    pub case_repeats: Vec<u32>,
}

/// Per-activity time statistics (ns); NaN where no observation exists.
#[derive(Debug, Clone, PartialEq)]
pub struct ActivityTimes {
    /// Observations of the wait before the activity.
    pub wait_count: Vec<u64>,
    /// Mean wait.
    pub wait_mean: Vec<f64>,
    /// Median wait.
    pub wait_median: Vec<f64>,
    /// Total wait.
    pub wait_total: Vec<f64>,
    /// Observations of the service time (start to complete).
    pub service_count: Vec<u64>,
    /// Mean service time.
    pub service_mean: Vec<f64>,
    /// Median service time.
    pub service_median: Vec<f64>,
}

/// Linear-interpolation quantile of an unsorted slice by selection (reorders `v`); equal to
/// [`quantile_sorted`] of the sorted slice.
pub fn quantile_select(v: &mut [i64], q: f64) -> f64 {
    if v.is_empty() {
        return f64::NAN;
    }
    let pos = q * (v.len() - 1) as f64;
    let lo = pos.floor() as usize;
    let frac = pos - lo as f64;
    let (_, a, rest) = v.select_nth_unstable(lo);
    let a = *a as f64;
    match rest.iter().min() {
        Some(&b) if frac > 0.0 => a + (b as f64 - a) * frac,
        _ => a,
    }
}

/// Linear-interpolation quantile of a sorted slice (numpy's default method).
pub fn quantile_sorted(v: &[i64], q: f64) -> f64 {
    if v.is_empty() {
        return f64::NAN;
    }
    let pos = q * (v.len() - 1) as f64;
    let lo = pos.floor() as usize;
    let hi = pos.ceil() as usize;
    let frac = pos - lo as f64;
    let a = v[lo] as f64;
    let b = v[hi] as f64;
    a + (b - a) * frac
}

fn mean_i64(v: &[i64]) -> f64 {
    if v.is_empty() {
        return f64::NAN;
    }
    // Sum in i128 so that long logs of ns gaps cannot overflow.
    let s: i128 = v.iter().map(|&x| i128::from(x)).sum();
    s as f64 / v.len() as f64
}

/// Group `values` by `keys` (each `< n_keys`) with a parallel counting sort; returns CSR offsets
/// and the grouped values, each group in input order.
pub(crate) fn group_by_key<T: Copy + Default + Send + Sync>(
    keys: &[u32],
    values: &[T],
    n_keys: usize,
) -> (Vec<usize>, Vec<T>) {
    let n = keys.len();
    let n_chunks = rayon::current_num_threads().max(1) * 4;
    let chunk = n.div_ceil(n_chunks).max(1 << 16);
    let hists: Vec<Vec<usize>> = keys
        .par_chunks(chunk)
        .map(|ks| {
            let mut h = vec![0usize; n_keys];
            for &k in ks {
                h[k as usize] += 1;
            }
            h
        })
        .collect();
    let mut offsets = vec![0usize; n_keys + 1];
    // start[c][k] = where chunk c writes its first value of key k.
    let mut starts = vec![vec![0usize; n_keys]; hists.len()];
    let mut acc = 0usize;
    for k in 0..n_keys {
        offsets[k] = acc;
        for (c, h) in hists.iter().enumerate() {
            starts[c][k] = acc;
            acc += h[k];
        }
    }
    offsets[n_keys] = acc;
    let mut out = vec![T::default(); n];
    let out_ptr = SyncPtr(out.as_mut_ptr());
    keys.par_chunks(chunk)
        .zip(values.par_chunks(chunk))
        .zip(starts.into_par_iter())
        .for_each(|((ks, vs), mut pos)| {
            let p = &out_ptr;
            for (&k, &v) in ks.iter().zip(vs) {
                // SAFETY: the prefix sums give every (chunk, key) pair a disjoint range of
                // `out`, and `pos[k]` stays inside it, so no two threads write one slot.
                unsafe { *p.0.add(pos[k as usize]) = v };
                pos[k as usize] += 1;
            }
        });
    (offsets, out)
}

struct SyncPtr<T>(*mut T);
// SAFETY: used only for the disjoint writes described in `group_by_key`.
unsafe impl<T> Sync for SyncPtr<T> {}
// SAFETY: as above.
unsafe impl<T> Send for SyncPtr<T> {}

impl EventLog {
    /// The variants of the log (cached).
    pub fn variants(&self) -> Arc<Variants> {
        Arc::clone(
            self.cache
                .variants
                .get_or_init(|| Arc::new(self.compute_variants())),
        )
    }

    fn compute_variants(&self) -> Variants {
        let n = self.n_cases();
        let state = std::collections::hash_map::RandomState::new();
        let hashes: Vec<u64> = (0..n)
            .into_par_iter()
            .with_min_len(1024)
            .map(|c| state.hash_one(self.trace(c)))
            .collect();
        // Group cases by trace: a hash map from hash to candidate variant ids; equal hashes are
        // confirmed by comparing the sequences, so collisions cannot merge different traces.
        let mut first_case: Vec<usize> = Vec::new();
        let mut case_variant = vec![0u32; n];
        let mut by_hash: HashMap<u64, smallvec_like::Ids> = HashMap::with_capacity(1024);
        for c in 0..n {
            let ids = by_hash.entry(hashes[c]).or_default();
            let found = ids
                .iter()
                .find(|&&v| self.trace(first_case[v as usize]) == self.trace(c));
            let v = match found {
                Some(&v) => v,
                None => {
                    let v = first_case.len() as u32;
                    first_case.push(c);
                    ids.push(v);
                    v
                }
            };
            case_variant[c] = v;
        }
        let nv = first_case.len();
        let mut counts = vec![0u64; nv];
        for &v in &case_variant {
            counts[v as usize] += 1;
        }
        // Order: count descending, then first appearance.
        let mut order: Vec<usize> = (0..nv).collect();
        order.sort_by(|&a, &b| counts[b].cmp(&counts[a]).then(a.cmp(&b)));
        let mut rank = vec![0u32; nv];
        for (r, &v) in order.iter().enumerate() {
            rank[v] = r as u32;
        }
        let case_variant: Vec<u32> = case_variant.par_iter().map(|&v| rank[v as usize]).collect();
        let counts: Vec<u64> = order.iter().map(|&v| counts[v]).collect();
        let mut offsets = Vec::with_capacity(nv + 1);
        let mut activities = Vec::new();
        offsets.push(0);
        for &v in &order {
            activities.extend_from_slice(self.trace(first_case[v]));
            offsets.push(activities.len());
        }
        let mut case_offsets = Vec::with_capacity(nv + 1);
        case_offsets.push(0usize);
        for &k in &counts {
            case_offsets.push(case_offsets.last().copied().unwrap_or(0) + k as usize);
        }
        let mut fill = case_offsets.clone();
        let mut cases = vec![0u32; n];
        for (c, &v) in case_variant.iter().enumerate() {
            cases[fill[v as usize]] = c as u32;
            fill[v as usize] += 1;
        }
        Variants {
            offsets,
            activities,
            counts,
            case_variant,
            case_offsets,
            cases,
        }
    }

    /// Per-case statistics (cached).
    pub fn case_stats(&self) -> Arc<CaseStats> {
        Arc::clone(self.cache.case_stats.get_or_init(|| {
            let n = self.n_cases();
            let o = &self.offsets;
            let t = &self.time;
            let start: Vec<i64> = (0..n).into_par_iter().map(|c| t[o[c]]).collect();
            let end: Vec<i64> = (0..n).into_par_iter().map(|c| t[o[c + 1] - 1]).collect();
            let duration = start.par_iter().zip(&end).map(|(s, e)| e - s).collect();
            let length = (0..n)
                .into_par_iter()
                .map(|c| (o[c + 1] - o[c]) as u32)
                .collect();
            Arc::new(CaseStats {
                start,
                end,
                duration,
                length,
            })
        }))
    }

    /// Events and cases per activity, and start/end activity counts.
    pub fn activity_counts(&self) -> ActivityCounts {
        let na = self.activity_names.len();
        let zero = || ActivityCounts {
            events: vec![0; na],
            cases: vec![0; na],
            starts: vec![0; na],
            ends: vec![0; na],
        };
        (0..self.n_cases())
            .into_par_iter()
            .fold(
                || (zero(), vec![u32::MAX; na]),
                |(mut acc, mut seen), c| {
                    let tr = self.trace(c);
                    for &a in tr {
                        acc.events[a as usize] += 1;
                        if seen[a as usize] != c as u32 {
                            seen[a as usize] = c as u32;
                            acc.cases[a as usize] += 1;
                        }
                    }
                    acc.starts[tr[0] as usize] += 1;
                    acc.ends[tr[tr.len() - 1] as usize] += 1;
                    (acc, seen)
                },
            )
            .map(|(acc, _)| acc)
            .reduce(zero, |mut a, b| {
                for k in 0..na {
                    a.events[k] += b.events[k];
                    a.cases[k] += b.cases[k];
                    a.starts[k] += b.starts[k];
                    a.ends[k] += b.ends[k];
                }
                a
            })
    }

    /// Pair code (`from * n_activities + to`) and second event of every directly-follows
    /// occurrence, in event order.
    fn df_pairs(&self) -> (Vec<u32>, Vec<u32>) {
        let na = self.activity_names.len() as u32;
        let nc = self.n_cases();
        // Case c has len - 1 pairs; they start at offsets[c] - c in the output.
        let pair_off: Vec<usize> = (0..=nc).map(|c| self.offsets[c] - c).collect();
        let total = pair_off[nc];
        let mut keys = vec![0u32; total];
        let mut ev = vec![0u32; total];
        super::par_chunks_by_offsets(&mut keys, &pair_off)
            .zip(super::par_chunks_by_offsets(&mut ev, &pair_off))
            .enumerate()
            .with_min_len(256)
            .for_each(|(c, (k, e))| {
                let s = self.offsets[c];
                for j in 0..k.len() {
                    let i = s + j + 1;
                    k[j] = self.activity[i - 1] * na + self.activity[i];
                    e[j] = i as u32;
                }
            });
        (keys, ev)
    }

    /// Directly-follows pairs with counts and gap statistics.
    pub fn directly_follows(&self) -> DirectlyFollows {
        let na = self.activity_names.len();
        let nk = na * na;
        let (keys, ev) = self.df_pairs();
        // Group the second event of every pair by pair code; events stay in log order within a
        // group, so the gaps and the distinct cases can be read off each group directly.
        let (off, grouped) = group_by_key(&keys, &ev, nk);
        drop(keys);
        let case_of_event = self.case_of_events();
        let present: Vec<usize> = (0..nk).filter(|&k| off[k + 1] > off[k]).collect();
        let stats: Vec<(u64, f64, f64, f64)> = present
            .par_iter()
            .map(|&k| {
                let evs = &grouped[off[k]..off[k + 1]];
                let mut gaps: Vec<i64> = evs
                    .iter()
                    .map(|&i| self.time[i as usize] - self.time[i as usize - 1])
                    .collect();
                let cases = 1 + evs
                    .windows(2)
                    .filter(|w| case_of_event[w[0] as usize] != case_of_event[w[1] as usize])
                    .count() as u64;
                let m = mean_i64(&gaps);
                let med = quantile_select(&mut gaps, 0.5);
                let p90 = quantile_select(&mut gaps, 0.9);
                (cases, m, med, p90)
            })
            .collect();
        DirectlyFollows {
            from: present.iter().map(|&k| (k / na) as u32).collect(),
            to: present.iter().map(|&k| (k % na) as u32).collect(),
            count: present
                .iter()
                .map(|&k| (off[k + 1] - off[k]) as u64)
                .collect(),
            cases: stats.iter().map(|s| s.0).collect(),
            mean: stats.iter().map(|s| s.1).collect(),
            median: stats.iter().map(|s| s.2).collect(),
            p90: stats.iter().map(|s| s.3).collect(),
        }
    }

    /// Directly-follows counts only, as a dense `n_activities x n_activities` row-major matrix.
    pub fn df_matrix(&self) -> Vec<u64> {
        let na = self.activity_names.len();
        (0..self.n_cases())
            .into_par_iter()
            .fold(
                || vec![0u64; na * na],
                |mut m, c| {
                    for w in self.trace(c).windows(2) {
                        m[w[0] as usize * na + w[1] as usize] += 1;
                    }
                    m
                },
            )
            .reduce(
                || vec![0u64; na * na],
                |mut a, b| {
                    a.iter_mut().zip(b).for_each(|(x, y)| *x += y);
                    a
                },
            )
    }

    /// The case index of every event.
    pub fn case_of_events(&self) -> Vec<u32> {
        let mut out = vec![0u32; self.n_events()];
        super::par_chunks_by_offsets(&mut out, &self.offsets)
            .enumerate()
            .for_each(|(c, seg)| seg.fill(c as u32));
        out
    }

    /// Activities repeated within cases.
    pub fn rework(&self) -> Rework {
        let na = self.activity_names.len();
        let per_case: Vec<(u32, Vec<(u32, u32)>)> = (0..self.n_cases())
            .into_par_iter()
            .map_init(
                || vec![0u32; na],
                |cnt, c| {
                    let tr = self.trace(c);
                    for &a in tr {
                        cnt[a as usize] += 1;
                    }
                    let mut rep = Vec::new();
                    let mut total = 0u32;
                    for &a in tr {
                        let k = cnt[a as usize];
                        if k > 1 {
                            rep.push((a, k - 1));
                            total += k - 1;
                        }
                        cnt[a as usize] = 0;
                    }
                    (total, rep)
                },
            )
            .collect();
        let mut cases = vec![0u64; na];
        let mut repeats = vec![0u64; na];
        let mut case_repeats = Vec::with_capacity(per_case.len());
        for (total, rep) in per_case {
            case_repeats.push(total);
            for (a, k) in rep {
                cases[a as usize] += 1;
                repeats[a as usize] += u64::from(k);
            }
        }
        Rework {
            cases,
            repeats,
            case_repeats,
        }
    }

    /// Waiting time before each activity (time since the previous event of the case) and, when
    /// a lifecycle column with `start` and `complete` values exists, service time from a start
    /// to the next complete of the same activity in the case (matched first in, first out).
    pub fn activity_times(&self) -> ActivityTimes {
        let na = self.activity_names.len();
        // Lifecycle values are matched ignoring ASCII case, so a column may hold several
        // spellings of one transition ('start', 'START'): classify every dictionary entry.
        let lc = self.lifecycle.as_ref().and_then(|c| match &c.values {
            Values::Cat { codes, dict } => {
                let class: Vec<Transition> = dict
                    .iter()
                    .map(|d| {
                        if d.eq_ignore_ascii_case("start") {
                            Transition::Start
                        } else if d.eq_ignore_ascii_case("complete") {
                            Transition::Complete
                        } else {
                            Transition::Other
                        }
                    })
                    .collect();
                let both =
                    class.contains(&Transition::Start) && class.contains(&Transition::Complete);
                both.then_some((codes, class, c))
            }
            _ => None,
        });
        let mut wait_keys = Vec::new();
        let mut wait_vals = Vec::new();
        let mut serv_keys = Vec::new();
        let mut serv_vals = Vec::new();
        let per_case: Vec<(Vec<(u32, i64)>, Vec<(u32, i64)>)> = (0..self.n_cases())
            .into_par_iter()
            .map(|c| {
                let (s, e) = (self.offsets[c], self.offsets[c + 1]);
                let mut waits = Vec::new();
                let mut servs = Vec::new();
                match &lc {
                    Some((codes, class, col)) => {
                        // Wait: from the previous complete (or case start) to this start.
                        // Service: start -> the next complete of the same activity.
                        let mut last_complete: Option<i64> = None;
                        let mut open: Vec<(u32, i64)> = Vec::new();
                        #[allow(clippy::needless_range_loop)]
                        for i in s..e {
                            if !col.is_valid(i) {
                                continue;
                            }
                            let a = self.activity[i];
                            match class.get(codes[i] as usize) {
                                Some(Transition::Start) => {
                                    if let Some(t) = last_complete {
                                        waits.push((a, self.time[i] - t));
                                    }
                                    open.push((a, self.time[i]));
                                }
                                Some(Transition::Complete) => {
                                    if let Some(p) = open.iter().position(|&(b, _)| b == a) {
                                        let (_, t0) = open.remove(p);
                                        servs.push((a, self.time[i] - t0));
                                    } else if let Some(t) = last_complete {
                                        waits.push((a, self.time[i] - t));
                                    }
                                    last_complete = Some(self.time[i]);
                                }
                                _ => {}
                            }
                        }
                    }
                    _ => {
                        for i in s + 1..e {
                            waits.push((self.activity[i], self.time[i] - self.time[i - 1]));
                        }
                    }
                }
                (waits, servs)
            })
            .collect();
        for (w, s) in per_case {
            for (a, v) in w {
                wait_keys.push(a);
                wait_vals.push(v);
            }
            for (a, v) in s {
                serv_keys.push(a);
                serv_vals.push(v);
            }
        }
        let summarise = |keys: &[u32], vals: &[i64]| {
            let (off, mut g) = group_by_key(keys, vals, na);
            let mut count = vec![0u64; na];
            let mut mean = vec![f64::NAN; na];
            let mut med = vec![f64::NAN; na];
            let mut tot = vec![0f64; na];
            for a in 0..na {
                let s = &mut g[off[a]..off[a + 1]];
                count[a] = s.len() as u64;
                if !s.is_empty() {
                    mean[a] = mean_i64(s);
                    tot[a] = s.iter().map(|&x| x as f64).sum();
                    s.sort_unstable();
                    med[a] = quantile_sorted(s, 0.5);
                }
            }
            (count, mean, med, tot)
        };
        let (wait_count, wait_mean, wait_median, wait_total) = summarise(&wait_keys, &wait_vals);
        let (service_count, service_mean, service_median, _) = summarise(&serv_keys, &serv_vals);
        ActivityTimes {
            wait_count,
            wait_mean,
            wait_median,
            wait_total,
            service_count,
            service_mean,
            service_median,
        }
    }
}

/// A lifecycle value as the service-time computation reads it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Transition {
    Start,
    Complete,
    Other,
}

mod smallvec_like {
    /// Variant ids sharing one hash; almost always a single entry.
    pub type Ids = Vec<u32>;
}

#[cfg(test)]
mod tests {
    use super::super::tests::log_from;
    use super::*;

    fn names(log: &EventLog, seq: &[u32]) -> String {
        seq.iter()
            .map(|&a| log.activity_names()[a as usize].as_str())
            .collect()
    }

    #[test]
    fn variants_are_ordered_by_count() {
        let log = log_from(&[
            ("1", "a", 1),
            ("1", "b", 2),
            ("2", "a", 1),
            ("2", "c", 2),
            ("3", "a", 1),
            ("3", "c", 2),
            ("4", "a", 1),
            ("4", "b", 2),
            ("5", "a", 1),
            ("5", "c", 2),
        ]);
        let v = log.variants();
        assert_eq!(v.len(), 2);
        assert_eq!(v.counts, vec![3, 2]);
        assert_eq!(names(&log, v.sequence(0)), "ac");
        assert_eq!(v.cases_of(0), &[1, 2, 4]);
        assert_eq!(v.case_variant, vec![1, 0, 0, 1, 0]);
    }

    #[test]
    fn directly_follows_counts_and_gaps() {
        // Section G running example style: a->b gaps 1, 3, 10.
        let log = log_from(&[
            ("1", "a", 0),
            ("1", "b", 1),
            ("1", "a", 2),
            ("1", "b", 5),
            ("2", "a", 0),
            ("2", "b", 10),
        ]);
        let df = log.directly_follows();
        let ab = df
            .from
            .iter()
            .zip(&df.to)
            .position(|(&f, &t)| f == 0 && t == 1)
            .unwrap();
        assert_eq!(df.count[ab], 3);
        assert_eq!(df.cases[ab], 2);
        assert!((df.mean[ab] - 14.0 / 3.0).abs() < 1e-12);
        assert_eq!(df.median[ab], 3.0);
        assert!((df.p90[ab] - (3.0 + 0.8 * 7.0)).abs() < 1e-12);
        let m = log.df_matrix();
        assert_eq!(m, vec![0, 3, 1, 0]);
    }

    #[test]
    fn quantile_select_equals_sorted() {
        let mut x: u64 = 7;
        for n in 1..60 {
            let v: Vec<i64> = (0..n)
                .map(|_| {
                    x = x
                        .wrapping_mul(6364136223846793005)
                        .wrapping_add(1442695040888963407);
                    ((x >> 40) % 50) as i64
                })
                .collect();
            let mut sorted = v.clone();
            sorted.sort_unstable();
            for q in [0.0, 0.1, 0.5, 0.9, 1.0] {
                let mut w = v.clone();
                assert_eq!(quantile_select(&mut w, q), quantile_sorted(&sorted, q));
            }
        }
    }

    #[test]
    fn quantile_matches_linear_rule() {
        assert_eq!(quantile_sorted(&[1, 2, 3, 4], 0.5), 2.5);
        assert!((quantile_sorted(&[0, 10], 0.9) - 9.0).abs() < 1e-12);
        assert!(quantile_sorted(&[], 0.5).is_nan());
    }

    #[test]
    fn rework_and_counts() {
        let log = log_from(&[
            ("1", "a", 0),
            ("1", "b", 1),
            ("1", "a", 2),
            ("1", "a", 3),
            ("2", "b", 0),
        ]);
        let r = log.rework();
        assert_eq!(r.cases, vec![1, 0]);
        assert_eq!(r.repeats, vec![2, 0]);
        assert_eq!(r.case_repeats, vec![2, 0]);
        let ac = log.activity_counts();
        assert_eq!(ac.events, vec![3, 2]);
        assert_eq!(ac.cases, vec![1, 2]);
        assert_eq!(ac.starts, vec![1, 1]);
        assert_eq!(ac.ends, vec![1, 1]);
        let cs = log.case_stats();
        assert_eq!(cs.duration, vec![3, 0]);
        let t = log.activity_times();
        assert_eq!(t.wait_count, vec![2, 1]);
        assert_eq!(t.wait_mean[0], 1.0);
    }

    #[test]
    fn lifecycle_spellings_are_matched_ignoring_case() {
        use crate::log::{Column, LogInput};
        let mut input = LogInput::new(
            vec![0; 4],
            vec!["c".into()],
            vec![0, 0, 1, 1],
            vec!["x".into(), "y".into()],
            vec![0, 10, 15, 40],
        );
        input.lifecycle = Some(Column::new(
            "lifecycle",
            Values::Cat {
                codes: vec![0, 1, 2, 3],
                dict: Arc::new(vec![
                    "start".into(),
                    "complete".into(),
                    "START".into(),
                    "Complete".into(),
                ]),
            },
        ));
        let (log, _) = EventLog::build(input).unwrap();
        let t = log.activity_times();
        assert_eq!(t.service_count, vec![1, 1]);
        assert_eq!(t.service_mean, vec![10.0, 25.0]);
        // y starts 5 after x completed
        assert_eq!(t.wait_count, vec![0, 1]);
        assert_eq!(t.wait_mean[1], 5.0);
    }

    #[test]
    fn group_by_key_is_stable() {
        let keys = vec![2u32, 0, 2, 1, 0];
        let vals = vec![10i64, 20, 30, 40, 50];
        let (off, g) = group_by_key(&keys, &vals, 3);
        assert_eq!(off, vec![0, 2, 3, 5]);
        assert_eq!(g, vec![20, 50, 40, 10, 30]);
    }
}
