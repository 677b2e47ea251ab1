//! Frequent episodes in event streams (Mannila, Toivonen & Verkamo 1997, "Discovery of
//! frequent episodes in event sequences", Data Mining and Knowledge Discovery 1:259–289).
//!
//! An event stream is a list of `(type, time)` events ordered by time; here there may be many
//! streams (one per case, or one per resource), each observed over `[T_s, T_e)` with `T_s` its
//! first time and `T_e` its last time plus one unit. An *episode* is a small pattern of event
//! types: *serial* (`A → B → C`: the events occur in this order, at increasing positions of
//! the stream) or *parallel* (`{A, B}`: a multiset, in any order).
//!
//! **WINEPI.** A window of width `win` is `[t, t + win)`; the windows of a stream are those
//! with `t = T_s − win + 1, …, T_e − 1`, so there are `T_e − T_s + win − 1` of them (integer
//! time). The *frequency* of an episode is the share of windows in which it occurs, over all
//! streams. It is computed without visiting windows: an occurrence spanning `[a, b]`
//! (`b − a < win`) lies in exactly the windows with `t ∈ [b − win + 1, a]`, and every
//! occurrence contains a minimal one, so the number of windows is the length of the union of
//! these intervals over the minimal occurrences.
//!
//! **MINEPI.** A *minimal occurrence* is an interval `[a, b]` that contains an occurrence
//! while no proper sub-interval does. The support of an episode is the number of its minimal
//! occurrences with `b − a < win` (so that each fits in one window).
//!
//! Minimal occurrences of a serial episode: from every event of its first type, match the
//! remaining types greedily at the earliest later positions (a binary search per step in
//! per-type position lists); of a parallel episode: a two-pointer sweep that finds, for each
//! left end, the shortest prefix holding the multiset. Both yield candidate intervals of
//! which the ones containing no other are kept.
//!
//! Episodes are mined level-wise (MTV 1997, Alg. 2 and 3): candidates of size `k + 1` join two
//! frequent episodes of size `k` that overlap in `k − 1` types, and are kept only when all
//! their sub-episodes of size `k` are frequent. WINEPI frequency is anti-monotone, so this
//! finds every frequent episode; MINEPI counts are not for parallel episodes (`B A B` has
//! two minimal occurrences of `{A, B}` and one of `A`), so with MINEPI an episode is reported
//! when it is frequent and so are all its sub-episodes.
//!
//! Episode rules `α ⇒ β` (α a sub-episode of β) have confidence `freq(β) / freq(α)`.
//!
//! The paper's own worked example is not reproduced; the tests use a small stream whose
//! values were computed from the definitions: events (A,1),(B,2),(A,4),(C,5),(B,6),
//! `T_s = 1`, `T_e = 7`, `win = 3`: 8 windows, `A → B` in 3, `{A, B}` in 4, `A → C → B` in 1.

use std::collections::HashSet;

use rayon::prelude::*;

use crate::control::Control;
use crate::error::{TmError, TmResult};
use crate::rules::itemsets::FxMap;

/// Event streams: CSR `offsets`, an event type and a time per event (non-decreasing within
/// a stream).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct EventStreams {
    offsets: Vec<usize>,
    types: Vec<u32>,
    times: Vec<i64>,
    n_types: usize,
    /// Per type: (stream, position) of its events, sorted.
    by_type_off: Vec<usize>,
    by_type: Vec<(u32, u32)>,
}

impl EventStreams {
    /// Build and validate streams.
    pub fn new(
        offsets: Vec<usize>,
        types: Vec<u32>,
        times: Vec<i64>,
        n_types: usize,
    ) -> TmResult<Self> {
        if offsets.first() != Some(&0)
            || offsets.last() != Some(&types.len())
            || offsets.windows(2).any(|w| w[1] < w[0])
        {
            return Err(TmError::param(
                "offsets",
                "stream offsets must start at 0, not decrease and end at the number of events",
            ));
        }
        if times.len() != types.len() {
            return Err(TmError::param("times", "times and types differ in length"));
        }
        if let Some(p) = types.iter().position(|&t| t as usize >= n_types) {
            return Err(TmError::data(format!(
                "event {p} has type code {} but there are {n_types} types",
                types[p]
            )));
        }
        for s in 0..offsets.len() - 1 {
            let r = &times[offsets[s]..offsets[s + 1]];
            if let Some(k) = r.windows(2).position(|w| w[1] < w[0]) {
                return Err(TmError::data(format!(
                    "the times of stream {s} decrease at its event {}",
                    k + 1
                )));
            }
        }
        let mut by_type_off = vec![0usize; n_types + 1];
        for &t in &types {
            by_type_off[t as usize + 1] += 1;
        }
        for k in 0..n_types {
            by_type_off[k + 1] += by_type_off[k];
        }
        let mut fill = by_type_off.clone();
        let mut by_type = vec![(0u32, 0u32); types.len()];
        for s in 0..offsets.len() - 1 {
            for (k, &ty) in types[offsets[s]..offsets[s + 1]].iter().enumerate() {
                let t = ty as usize;
                by_type[fill[t]] = (s as u32, k as u32);
                fill[t] += 1;
            }
        }
        Ok(EventStreams {
            offsets,
            types,
            times,
            n_types,
            by_type_off,
            by_type,
        })
    }

    /// Number of streams.
    pub fn len(&self) -> usize {
        self.offsets.len() - 1
    }
    /// Whether there is no stream.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }
    fn stream(&self, s: usize) -> (&[u32], &[i64]) {
        let r = self.offsets[s]..self.offsets[s + 1];
        (&self.types[r.clone()], &self.times[r])
    }
    /// Positions of type `t` in stream `s`.
    fn positions(&self, t: u32, s: u32) -> impl Iterator<Item = u32> + '_ {
        let all = &self.by_type[self.by_type_off[t as usize]..self.by_type_off[t as usize + 1]];
        let lo = all.partition_point(|&(x, _)| x < s);
        let hi = all.partition_point(|&(x, _)| x <= s);
        all[lo..hi].iter().map(|&(_, p)| p)
    }
    fn type_slice(&self, t: u32) -> &[(u32, u32)] {
        &self.by_type[self.by_type_off[t as usize]..self.by_type_off[t as usize + 1]]
    }
}

/// Serial or parallel episodes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum EpisodeKind {
    /// Totally ordered.
    Serial,
    /// Unordered (a multiset).
    Parallel,
}

/// Which measure decides frequency.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum EpisodeMeasure {
    /// WINEPI window frequency (fraction of windows).
    Winepi,
    /// MINEPI number of minimal occurrences fitting a window.
    Minepi,
}

/// Parameters of [`frequent_episodes`].
#[derive(Debug, Clone, PartialEq)]
pub struct EpisodeParams {
    /// Serial or parallel.
    pub kind: EpisodeKind,
    /// Window width (time units, > 0).
    pub window: i64,
    /// WINEPI or MINEPI.
    pub measure: EpisodeMeasure,
    /// Threshold: a fraction of windows in (0, 1] (WINEPI) or a count >= 1 (MINEPI).
    pub min_frequency: f64,
    /// Largest episode size (default 4).
    pub max_size: usize,
    /// Bound on the number of frequent episodes (default 1 000 000).
    pub max_episodes: usize,
}

/// Frequent episodes, by size then types.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Episodes {
    /// CSR offsets into `types`.
    pub offsets: Vec<usize>,
    /// Event types of each episode (order matters for serial; sorted for parallel).
    pub types: Vec<u32>,
    /// WINEPI frequency of each episode.
    pub frequency: Vec<f64>,
    /// Number of windows containing it.
    pub windows: Vec<f64>,
    /// MINEPI support: minimal occurrences of span < window.
    pub minimal_occurrences: Vec<u64>,
    /// Total number of windows.
    pub n_windows: f64,
}

impl Episodes {
    /// Number of episodes.
    pub fn len(&self) -> usize {
        self.offsets.len().saturating_sub(1)
    }
    /// Whether there is none.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }
    /// The types of episode `i`.
    pub fn get(&self, i: usize) -> &[u32] {
        &self.types[self.offsets[i]..self.offsets[i + 1]]
    }
}

/// Keep intervals that contain no other; sorted by end.
fn minimal(mut iv: Vec<(i64, i64)>) -> Vec<(i64, i64)> {
    iv.sort_unstable_by(|a, b| a.1.cmp(&b.1).then(b.0.cmp(&a.0)));
    iv.dedup();
    let mut out: Vec<(i64, i64)> = Vec::with_capacity(iv.len());
    let mut best_start = i64::MIN; // latest start among intervals with a smaller or equal end
    for (a, b) in iv {
        if a > best_start {
            out.push((a, b));
            best_start = a;
        }
    }
    // Remove intervals that contain a later one with the same end but a later start (the sort
    // puts the later start first, so `a > best_start` already handles it) — and intervals with
    // an equal start but a later end are caught since best_start == a.
    out
}

/// Minimal occurrences of `ep` in stream `s` with span < win.
fn occurrences(
    st: &EventStreams,
    ep: &[u32],
    kind: EpisodeKind,
    s: u32,
    win: i64,
) -> Vec<(i64, i64)> {
    let (types, times) = st.stream(s as usize);
    let mut cand = Vec::new();
    match kind {
        EpisodeKind::Serial => {
            let lists: Vec<Vec<u32>> = ep.iter().map(|&t| st.positions(t, s).collect()).collect();
            if lists.iter().any(Vec::is_empty) {
                return cand;
            }
            'starts: for &p0 in &lists[0] {
                let t0 = times[p0 as usize];
                let mut pos = p0;
                for l in &lists[1..] {
                    let k = l.partition_point(|&x| x <= pos);
                    if k >= l.len() {
                        break 'starts;
                    }
                    pos = l[k];
                    if times[pos as usize] - t0 >= win {
                        continue 'starts;
                    }
                }
                cand.push((t0, times[pos as usize]));
            }
        }
        EpisodeKind::Parallel => {
            // need[t] = multiplicity of type t in the episode.
            let mut need: Vec<(u32, i64)> = Vec::new();
            for &t in ep {
                match need.iter_mut().find(|x| x.0 == t) {
                    Some(x) => x.1 += 1,
                    None => need.push((t, 1)),
                }
            }
            let idx = |t: u32| need.iter().position(|x| x.0 == t);
            let mut have = vec![0i64; need.len()];
            let mut missing = need.len();
            let n = types.len();
            let mut r = 0usize; // exclusive right end
            for l in 0..n {
                while missing > 0 && r < n {
                    if let Some(k) = idx(types[r]) {
                        have[k] += 1;
                        if have[k] == need[k].1 {
                            missing -= 1;
                        }
                    }
                    r += 1;
                }
                if missing > 0 {
                    break;
                }
                if idx(types[l]).is_some() && times[r - 1] - times[l] < win {
                    cand.push((times[l], times[r - 1]));
                }
                if let Some(k) = idx(types[l]) {
                    if have[k] == need[k].1 {
                        missing += 1;
                    }
                    have[k] -= 1;
                }
            }
        }
    }
    minimal(cand)
}

/// `(windows containing the episode, minimal occurrences)` over all streams.
fn measure(st: &EventStreams, ep: &[u32], kind: EpisodeKind, win: i64) -> (f64, u64) {
    // Streams holding the rarest type of the episode.
    let rare = ep
        .iter()
        .copied()
        .min_by_key(|&t| st.type_slice(t).len())
        .unwrap_or(0);
    let mut streams: Vec<u32> = st.type_slice(rare).iter().map(|x| x.0).collect();
    streams.dedup();
    let mut windows = 0u128;
    let mut mos = 0u64;
    for s in streams {
        let mo = occurrences(st, ep, kind, s, win);
        mos += mo.len() as u64;
        // Union of [b - win + 1, a] over the minimal occurrences (sorted by end and start).
        let mut cur: Option<(i64, i64)> = None;
        for (a, b) in mo {
            let iv = (b - win + 1, a);
            cur = match cur {
                Some((lo, hi)) if iv.0 <= hi + 1 => Some((lo, hi.max(iv.1))),
                Some((lo, hi)) => {
                    windows += (hi - lo + 1) as u128;
                    Some(iv)
                }
                None => Some(iv),
            };
        }
        if let Some((lo, hi)) = cur {
            windows += (hi - lo + 1) as u128;
        }
    }
    (windows as f64, mos)
}

/// Mine frequent episodes; see the module documentation.
pub fn frequent_episodes(
    st: &EventStreams,
    p: &EpisodeParams,
    ctl: &Control,
) -> TmResult<Episodes> {
    if p.window <= 0 {
        return Err(TmError::param(
            "window",
            format!("the window must have a positive length; got {}", p.window),
        ));
    }
    if p.max_size == 0 {
        return Err(TmError::param(
            "max_size",
            "max_size must be at least 1; got 0",
        ));
    }
    match p.measure {
        EpisodeMeasure::Winepi if !(p.min_frequency > 0.0 && p.min_frequency <= 1.0) => {
            return Err(TmError::param(
                "min_frequency",
                format!(
                    "with WINEPI min_frequency is a fraction of windows in (0, 1]; got {}",
                    p.min_frequency
                ),
            ))
        }
        EpisodeMeasure::Minepi if p.min_frequency.is_nan() || p.min_frequency < 1.0 => {
            return Err(TmError::param(
                "min_frequency",
                format!(
                    "with MINEPI min_frequency is a count of minimal occurrences >= 1; got {}",
                    p.min_frequency
                ),
            ))
        }
        _ => {}
    }
    let n_windows: f64 = (0..st.len())
        .filter(|&s| st.offsets[s + 1] > st.offsets[s])
        .map(|s| {
            let (_, t) = st.stream(s);
            let (ts, te) = (t[0], t[t.len() - 1] + 1);
            (te - ts + p.window - 1) as f64
        })
        .sum();
    let is_freq = |w: f64, m: u64| match p.measure {
        EpisodeMeasure::Winepi => n_windows > 0.0 && w / n_windows >= p.min_frequency,
        EpisodeMeasure::Minepi => m as f64 >= p.min_frequency,
    };
    let mut out = Episodes {
        offsets: vec![0],
        n_windows,
        ..Default::default()
    };
    let mut level: Vec<Vec<u32>> = (0..st.n_types as u32).map(|t| vec![t]).collect();
    let mut size = 1;
    loop {
        ctl.check()?;
        let measured: Vec<(f64, u64)> = level
            .par_iter()
            .map(|ep| {
                if ctl.is_cancelled() {
                    (0.0, 0)
                } else {
                    measure(st, ep, p.kind, p.window)
                }
            })
            .collect();
        ctl.check()?;
        let frequent: Vec<Vec<u32>> = level
            .into_iter()
            .zip(&measured)
            .filter(|(_, m)| is_freq(m.0, m.1))
            .map(|(ep, m)| {
                out.types.extend_from_slice(&ep);
                out.offsets.push(out.types.len());
                out.windows.push(m.0);
                out.frequency.push(if n_windows > 0.0 {
                    m.0 / n_windows
                } else {
                    0.0
                });
                out.minimal_occurrences.push(m.1);
                ep
            })
            .collect();
        if out.len() > p.max_episodes {
            return Err(TmError::Limit {
                message: format!(
                    "more than max_episodes={} frequent episodes ({} found up to size {size}); \
                     raise max_episodes or min_frequency, or lower max_size",
                    p.max_episodes,
                    out.len()
                ),
            });
        }
        ctl.advance(1);
        if size >= p.max_size || frequent.is_empty() {
            break;
        }
        level = candidates(&frequent, p.kind, size);
        size += 1;
    }
    Ok(out)
}

/// Candidates of size k+1 from frequent episodes of size k (sorted input).
fn candidates(freq: &[Vec<u32>], kind: EpisodeKind, k: usize) -> Vec<Vec<u32>> {
    let known: HashSet<&[u32]> = freq.iter().map(Vec::as_slice).collect();
    let mut out = Vec::new();
    match kind {
        EpisodeKind::Serial => {
            // α + last(β) where α[1..] == β[..k-1].
            let mut by_prefix: FxMap<&[u32], Vec<u32>> = FxMap::default();
            for b in freq {
                by_prefix.entry(&b[..k - 1]).or_default().push(b[k - 1]);
            }
            for a in freq {
                if let Some(lasts) = by_prefix.get(&a[1..]) {
                    for &x in lasts {
                        let mut c = a.clone();
                        c.push(x);
                        if all_subs(&c, &known) {
                            out.push(c);
                        }
                    }
                }
            }
        }
        EpisodeKind::Parallel => {
            // Sorted multisets sharing the first k-1 types; β's last >= α's last.
            for (i, a) in freq.iter().enumerate() {
                for b in &freq[i..] {
                    if a[..k - 1] != b[..k - 1] {
                        if b[..k - 1] > a[..k - 1] {
                            break;
                        }
                        continue;
                    }
                    let mut c = a.clone();
                    c.push(b[k - 1]);
                    if all_subs(&c, &known) {
                        out.push(c);
                    }
                }
            }
        }
    }
    out.sort();
    out.dedup();
    out
}

fn all_subs(c: &[u32], known: &HashSet<&[u32]>) -> bool {
    let mut sub = Vec::with_capacity(c.len() - 1);
    (0..c.len()).all(|d| {
        sub.clear();
        sub.extend(
            c.iter()
                .enumerate()
                .filter(|&(j, _)| j != d)
                .map(|(_, &x)| x),
        );
        known.contains(sub.as_slice())
    })
}

/// Episode rules `α ⇒ β` for every frequent `β` of size >= 2 and every proper sub-episode `α`
/// (by deleting types): `(antecedent index, consequent index, confidence)` with confidence
/// `freq(β)/freq(α)` by the chosen measure, kept when at least `min_confidence`.
pub fn episode_rules(
    e: &Episodes,
    measure: EpisodeMeasure,
    min_confidence: f64,
) -> TmResult<Vec<(u32, u32, f64)>> {
    if !(0.0..=1.0).contains(&min_confidence) {
        return Err(TmError::param(
            "min_confidence",
            format!("min_confidence must be in [0, 1]; got {min_confidence}"),
        ));
    }
    let mut index: FxMap<&[u32], u32> = FxMap::default();
    for i in 0..e.len() {
        index.insert(e.get(i), i as u32);
    }
    let val = |i: usize| match measure {
        EpisodeMeasure::Winepi => e.windows[i],
        EpisodeMeasure::Minepi => e.minimal_occurrences[i] as f64,
    };
    let mut out = Vec::new();
    for b in 0..e.len() {
        let z = e.get(b);
        if z.len() < 2 || z.len() > 20 {
            continue;
        }
        let mut seen = HashSet::new();
        for mask in 1u32..(1 << z.len()) - 1 {
            let sub: Vec<u32> = (0..z.len())
                .filter(|j| mask >> j & 1 == 1)
                .map(|j| z[j])
                .collect();
            if !seen.insert(sub.clone()) {
                continue;
            }
            if let Some(&a) = index.get(sub.as_slice()) {
                let va = val(a as usize);
                if va > 0.0 {
                    let c = val(b) / va;
                    if c >= min_confidence {
                        out.push((a, b as u32, c));
                    }
                }
            }
        }
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn example() -> EventStreams {
        // A=0, B=1, C=2: (A,1),(B,2),(A,4),(C,5),(B,6).
        EventStreams::new(vec![0, 5], vec![0, 1, 0, 2, 1], vec![1, 2, 4, 5, 6], 3).unwrap()
    }

    #[test]
    fn worked_example_winepi_minepi() {
        // Values from the definitions of Mannila, Toivonen & Verkamo 1997 (REFERENCES.md D).
        let st = example();
        for (win, nw, ab, par, acb) in [(3i64, 8.0, 3.0, 4.0, 1.0), (4, 9.0, 5.0, 6.0, 2.0)] {
            let p = EpisodeParams {
                kind: EpisodeKind::Serial,
                window: win,
                measure: EpisodeMeasure::Winepi,
                min_frequency: 0.01,
                max_size: 3,
                max_episodes: 1000,
            };
            let e = frequent_episodes(&st, &p, &Control::new()).unwrap();
            assert_eq!(e.n_windows, nw);
            let find = |e: &Episodes, x: &[u32]| (0..e.len()).find(|&i| e.get(i) == x).unwrap();
            assert_eq!(e.windows[find(&e, &[0, 1])], ab);
            assert_eq!(e.windows[find(&e, &[0, 2, 1])], acb);
            let ep = frequent_episodes(
                &st,
                &EpisodeParams {
                    kind: EpisodeKind::Parallel,
                    ..p
                },
                &Control::new(),
            )
            .unwrap();
            assert_eq!(ep.windows[find(&ep, &[0, 1])], par);
        }
        let mo = occurrences(&st, &[0, 1], EpisodeKind::Serial, 0, 100);
        assert_eq!(mo, vec![(1, 2), (4, 6)]);
    }

    /// Brute force: enumerate every integer window and test containment directly.
    fn brute(st: &EventStreams, ep: &[u32], kind: EpisodeKind, win: i64) -> (f64, u64) {
        let mut w = 0u64;
        let mut all_occ: Vec<(i64, i64)> = Vec::new();
        for s in 0..st.len() {
            let (ty, tm) = st.stream(s);
            if ty.is_empty() {
                continue;
            }
            let occurs_in = |lo: i64, hi: i64| -> bool {
                // events with lo <= t <= hi
                let idx: Vec<usize> = (0..ty.len())
                    .filter(|&k| tm[k] >= lo && tm[k] <= hi)
                    .collect();
                match kind {
                    EpisodeKind::Serial => {
                        let mut j = 0;
                        for &k in &idx {
                            if j < ep.len() && ty[k] == ep[j] {
                                j += 1;
                            }
                        }
                        j == ep.len()
                    }
                    EpisodeKind::Parallel => {
                        let mut need: Vec<u32> = ep.to_vec();
                        for &k in &idx {
                            if let Some(p) = need.iter().position(|&x| x == ty[k]) {
                                need.swap_remove(p);
                            }
                        }
                        need.is_empty()
                    }
                }
            };
            let (ts, te) = (tm[0], tm[tm.len() - 1] + 1);
            for t in ts - win + 1..te {
                if occurs_in(t, t + win - 1) {
                    w += 1;
                }
            }
            let mut occ = Vec::new();
            for a in ts..te {
                for b in a..(a + win).min(te) {
                    if occurs_in(a, b) && !occurs_in(a + 1, b) && !occurs_in(a, b - 1) {
                        occ.push((a, b));
                    }
                }
            }
            all_occ.extend(occ);
        }
        (w as f64, all_occ.len() as u64)
    }

    #[test]
    fn agrees_with_brute_force_windows() {
        let mut seed = 12345u64;
        let mut next = || {
            seed = seed
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (seed >> 33) as i64
        };
        for _ in 0..6 {
            let mut off = vec![0];
            let mut ty = Vec::new();
            let mut tm = Vec::new();
            for _ in 0..3 {
                let n = (next() % 9) as usize;
                let mut t = next() % 5;
                for _ in 0..n {
                    t += next() % 3;
                    ty.push((next() % 3) as u32);
                    tm.push(t);
                }
                off.push(ty.len());
            }
            let st = EventStreams::new(off, ty, tm, 3).unwrap();
            for kind in [EpisodeKind::Serial, EpisodeKind::Parallel] {
                for win in [1i64, 2, 4] {
                    for ep in [
                        vec![0u32],
                        vec![0, 1],
                        vec![1, 0],
                        vec![0, 0],
                        vec![2, 0, 1],
                        vec![1, 1, 2],
                    ] {
                        let mut e = ep.clone();
                        if kind == EpisodeKind::Parallel {
                            e.sort_unstable();
                        }
                        assert_eq!(
                            measure(&st, &e, kind, win),
                            brute(&st, &e, kind, win),
                            "{kind:?} {win} {e:?}"
                        );
                    }
                }
            }
        }
    }

    #[test]
    fn rules_and_errors() {
        let st = example();
        let mut p = EpisodeParams {
            kind: EpisodeKind::Serial,
            window: 3,
            measure: EpisodeMeasure::Winepi,
            min_frequency: 0.1,
            max_size: 3,
            max_episodes: 1000,
        };
        let e = frequent_episodes(&st, &p, &Control::new()).unwrap();
        let r = episode_rules(&e, EpisodeMeasure::Winepi, 0.0).unwrap();
        assert!(r.iter().all(|&(_, _, c)| c <= 1.0 + 1e-12));
        p.window = 0;
        assert!(matches!(
            frequent_episodes(&st, &p, &Control::new()),
            Err(TmError::Parameter { .. })
        ));
        p.window = -3;
        assert!(matches!(
            frequent_episodes(&st, &p, &Control::new()),
            Err(TmError::Parameter { .. })
        ));
        assert!(EventStreams::new(vec![0, 2], vec![0, 0], vec![5, 1], 1).is_err());
    }
}
