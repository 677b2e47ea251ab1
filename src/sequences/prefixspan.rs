//! PrefixSpan: sequential patterns by prefix-projected pattern growth (Pei, Han,
//! Mortazavi-Asl, Pinto, Chen, Dayal & Hsu 2001, ICDE, 215–224; TKDE 16(11), 2004).
//!
//! A sequence is a list of *elements*, each a non-empty set of items (`⟨a(abc)(ac)d(cf)⟩`); an
//! event log gives one sequence per case with one activity per element. A pattern
//! `α = ⟨A_1 … A_k⟩` is contained in `s = ⟨S_1 … S_m⟩` when there are positions
//! `j_1 < … < j_k` with `A_i ⊆ S_{j_i}`; its support is the number of sequences containing it
//! (each at most once). The *length* of a pattern is its number of items.
//!
//! PrefixSpan grows patterns one item at a time. For a prefix `α` each supporting sequence is
//! *projected* onto the suffix after α's earliest occurrence; frequent items of the projected
//! database extend α either as a new element (*s-extension*, `⟨α x⟩`) or joined to α's last
//! element (*i-extension*, written `_x` in the paper: `⟨α' (A_k ∪ {x})⟩`, only items after
//! those of `A_k`). Projections here are pseudo-projections: per sequence, the element where
//! the prefix without its last element ends and the element of the earliest match of the last
//! element, so nothing is copied. One pass over a projected database counts every extension
//! and builds all child projections (bucketed by item). Top-level items are mined in parallel.
//!
//! **Constraints** (single-item elements with timestamps, i.e. case sequences): a maximum gap
//! between consecutive matched events in positions (`max_gap_events`, 1 = directly following)
//! and in time (`max_gap_time`), and a minimum/maximum *span* (time from the first to the last
//! matched event). With any of these the earliest occurrence no longer suffices, so every
//! occurrence `(start, end)` is tracked per sequence (Pei et al. 2004 §6 discuss pushing such
//! constraints into the projection). `max_gap_*` and `max_span` are prefix-anti-monotone and
//! prune the search; `min_span` is not (a pattern can reach it only when grown), so it filters
//! the output while growth continues.
//!
//! **Closed patterns** (no super-pattern with the same support; Yan, Han & Afshar 2003) are
//! found by checking, for each pattern, the patterns with one item more: if `α ⊏ γ` with equal
//! support, some `β` with `|β| = |α| + 1` between them has that support as well.
//!
//! Pei et al.'s example database (⟨a(abc)(ac)d(cf)⟩, ⟨(ad)c(bc)(ae)⟩, ⟨(ef)(ab)(df)cb⟩,
//! ⟨eg(af)cbc⟩, min support 2) has 53 patterns: 6, 22, 21 and 4 of lengths 1–4 (tests).

use std::sync::atomic::{AtomicUsize, Ordering};

use rayon::prelude::*;

use crate::control::Control;
use crate::error::{TmError, TmResult};
use crate::rules::itemsets::FxMap;
use crate::rules::MinSupport;

/// A database of sequences of itemsets (elements), optionally with one time per element.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct SequenceDb {
    seq_offsets: Vec<usize>,
    elem_offsets: Vec<usize>,
    items: Vec<u32>,
    times: Option<Vec<i64>>,
    n_items: usize,
    max_elem: usize,
}

impl SequenceDb {
    /// Sequences of itemsets: `seq_offsets` (n_seq + 1) index elements, `elem_offsets`
    /// (n_elem + 1) index `items`; items of an element are sorted and repeats dropped; an empty
    /// element is an error. `times` (one per element, non-decreasing within a sequence) is
    /// optional.
    pub fn new(
        seq_offsets: Vec<usize>,
        elem_offsets: Vec<usize>,
        mut items: Vec<u32>,
        times: Option<Vec<i64>>,
        n_items: usize,
    ) -> TmResult<Self> {
        check_csr(
            &seq_offsets,
            elem_offsets.len().saturating_sub(1),
            "sequence offsets",
        )?;
        check_csr(&elem_offsets, items.len(), "element offsets")?;
        if let Some(e) = elem_offsets.windows(2).position(|w| w[0] == w[1]) {
            let s = seq_offsets.partition_point(|&o| o <= e) - 1;
            return Err(TmError::data(format!(
                "element {} of sequence {s} is empty; every element needs at least one item",
                e - seq_offsets[s]
            )));
        }
        if let Some(p) = items.iter().position(|&c| c as usize >= n_items) {
            return Err(TmError::data(format!(
                "item code {} at position {p} is not below the number of items ({n_items})",
                items[p]
            )));
        }
        let n_elem = elem_offsets.len() - 1;
        if let Some(t) = &times {
            if t.len() != n_elem {
                return Err(TmError::param(
                    "times",
                    format!("times has {} values for {n_elem} elements", t.len()),
                ));
            }
            for s in 0..seq_offsets.len() - 1 {
                let r = &t[seq_offsets[s]..seq_offsets[s + 1]];
                if let Some(k) = r.windows(2).position(|w| w[1] < w[0]) {
                    return Err(TmError::data(format!(
                        "the times of sequence {s} decrease at element {}",
                        k + 1
                    )));
                }
            }
        }
        let mut new_off = Vec::with_capacity(elem_offsets.len());
        new_off.push(0);
        let mut out = Vec::with_capacity(items.len());
        let mut max_elem = 0;
        for e in 0..n_elem {
            let el = &mut items[elem_offsets[e]..elem_offsets[e + 1]];
            el.sort_unstable();
            let start = out.len();
            for &x in el.iter() {
                if out.len() == start || out.last() != Some(&x) {
                    out.push(x);
                }
            }
            max_elem = max_elem.max(out.len() - start);
            new_off.push(out.len());
        }
        Ok(SequenceDb {
            seq_offsets,
            elem_offsets: new_off,
            items: out,
            times,
            n_items,
            max_elem,
        })
    }

    /// Sequences of single items (one item per element), e.g. the activities of cases.
    pub fn from_items(
        offsets: Vec<usize>,
        items: Vec<u32>,
        times: Option<Vec<i64>>,
        n_items: usize,
    ) -> TmResult<Self> {
        let elem: Vec<usize> = (0..=items.len()).collect();
        Self::new(offsets, elem, items, times, n_items)
    }

    /// Number of sequences.
    pub fn len(&self) -> usize {
        self.seq_offsets.len() - 1
    }
    /// Whether there is no sequence.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }
    fn n_elems(&self, s: usize) -> usize {
        self.seq_offsets[s + 1] - self.seq_offsets[s]
    }
    /// Items of element `j` of sequence `s`.
    fn elem(&self, s: usize, j: usize) -> &[u32] {
        let e = self.seq_offsets[s] + j;
        &self.items[self.elem_offsets[e]..self.elem_offsets[e + 1]]
    }
    fn time(&self, s: usize, j: usize) -> i64 {
        self.times
            .as_ref()
            .map_or(0, |t| t[self.seq_offsets[s] + j])
    }
}

fn check_csr(off: &[usize], end: usize, what: &str) -> TmResult<()> {
    if off.first() != Some(&0) || off.last() != Some(&end) || off.windows(2).any(|w| w[1] < w[0]) {
        return Err(TmError::param(
            what,
            format!("{what} must start at 0, not decrease and end at {end}"),
        ));
    }
    Ok(())
}

/// Parameters of [`prefixspan`].
#[derive(Debug, Clone, PartialEq)]
pub struct PrefixSpanParams {
    /// Minimum support (fraction of sequences or count).
    pub min_support: MinSupport,
    /// Longest pattern, in items (`None`: no bound).
    pub max_len: Option<usize>,
    /// Max distance in positions between consecutive matched events (1 = adjacent).
    pub max_gap_events: Option<usize>,
    /// Max time between consecutive matched events.
    pub max_gap_time: Option<i64>,
    /// Min time from first to last matched event.
    pub min_span: Option<i64>,
    /// Max time from first to last matched event.
    pub max_span: Option<i64>,
    /// Report closed patterns only.
    pub closed: bool,
    /// Keep the supporting sequences of each pattern.
    pub return_cases: bool,
    /// Bound on the number of patterns (default 10 000 000).
    pub max_patterns: usize,
}

impl PrefixSpanParams {
    /// Defaults: no bounds or constraints, all patterns, cases kept, at most 10 000 000.
    pub fn new(min_support: MinSupport) -> Self {
        PrefixSpanParams {
            min_support,
            max_len: None,
            max_gap_events: None,
            max_gap_time: None,
            min_span: None,
            max_span: None,
            closed: false,
            return_cases: true,
            max_patterns: 10_000_000,
        }
    }
    fn constrained(&self) -> bool {
        self.max_gap_events.is_some()
            || self.max_gap_time.is_some()
            || self.min_span.is_some()
            || self.max_span.is_some()
    }
}

/// Sequential patterns in canonical order (by length, then items).
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct SeqPatterns {
    /// CSR offsets into `items`.
    pub offsets: Vec<usize>,
    /// Concatenated items.
    pub items: Vec<u32>,
    /// For each item, whether it starts a new element.
    pub new_element: Vec<bool>,
    /// Support (number of sequences) of each pattern.
    pub support: Vec<u64>,
    /// CSR offsets into `cases` (empty unless cases were asked for).
    pub case_offsets: Vec<usize>,
    /// Supporting sequences, ascending per pattern.
    pub cases: Vec<u32>,
    /// The minimum count used.
    pub min_count: u64,
}

impl SeqPatterns {
    /// Number of patterns.
    pub fn len(&self) -> usize {
        self.support.len()
    }
    /// Whether there is none.
    pub fn is_empty(&self) -> bool {
        self.support.is_empty()
    }
    /// Pattern `i` as elements (lists of items).
    pub fn elements(&self, i: usize) -> Vec<Vec<u32>> {
        let mut out: Vec<Vec<u32>> = Vec::new();
        for k in self.offsets[i]..self.offsets[i + 1] {
            if self.new_element[k] || out.is_empty() {
                out.push(Vec::new());
            }
            if let Some(last) = out.last_mut() {
                last.push(self.items[k]);
            }
        }
        out
    }
}

const NEW: u32 = 1 << 31;

/// Per-task output.
struct Out<'a> {
    enc: Vec<u32>,
    offsets: Vec<usize>,
    support: Vec<u64>,
    case_offsets: Vec<usize>,
    cases: Vec<u32>,
    total: &'a AtomicUsize,
    max: usize,
    ctl: &'a Control,
    keep_cases: bool,
    ticks: u32,
}

impl Out<'_> {
    fn emit(&mut self, pat: &[u32], support: u64, sids: impl Iterator<Item = u32>) -> TmResult<()> {
        self.ticks += 1;
        if self.ticks >= 512 {
            self.ticks = 0;
            self.ctl.check()?;
        }
        let t = self.total.fetch_add(1, Ordering::Relaxed) + 1;
        if t > self.max {
            return Err(TmError::Limit {
                message: String::new(),
            });
        }
        self.enc.extend_from_slice(pat);
        self.offsets.push(self.enc.len());
        self.support.push(support);
        if self.keep_cases {
            self.cases.extend(sids);
            self.case_offsets.push(self.cases.len());
        }
        Ok(())
    }
}

/// Pseudo-projection of one sequence: the last element must start at `lo`; it was first
/// matched at element `last`.
#[derive(Clone, Copy)]
struct St {
    sid: u32,
    lo: u32,
    last: u32,
}

/// Per-task scratch: a stamp per item (to count each item once per sequence) and a bucket per
/// item collecting the child projections; buckets are emptied before recursing, so one set
/// serves every depth.
struct Scratch {
    stamp_s: Vec<u64>,
    stamp_i: Vec<u64>,
    buckets_s: Vec<Vec<St>>,
    buckets_i: Vec<Vec<St>>,
    clock: u64,
}

fn contains(hay: &[u32], needle: &[u32]) -> bool {
    let mut j = 0;
    for &x in needle {
        while j < hay.len() && hay[j] < x {
            j += 1;
        }
        if j >= hay.len() || hay[j] != x {
            return false;
        }
        j += 1;
    }
    true
}

struct Ctx<'a> {
    db: &'a SequenceDb,
    min: u64,
    max_len: usize,
}

fn grow(
    cx: &Ctx<'_>,
    pat: &mut Vec<u32>,
    last_el: &mut Vec<u32>,
    states: &[St],
    sc: &mut Scratch,
    out: &mut Out<'_>,
) -> TmResult<()> {
    out.emit(pat, states.len() as u64, states.iter().map(|s| s.sid))?;
    if pat.len() >= cx.max_len {
        return Ok(());
    }
    let db = cx.db;
    let itemsets = db.max_elem > 1;
    let max_e = last_el.last().copied().unwrap_or(0);
    // One pass: every extension of every projected sequence goes to its item's bucket, once
    // per sequence (stamps), in sequence order; a bucket's length is the extension's support.
    let mut touched_s: Vec<u32> = Vec::new();
    let mut touched_i: Vec<u32> = Vec::new();
    for st in states {
        sc.clock += 1;
        let (sid, n) = (st.sid as usize, db.n_elems(st.sid as usize));
        let mut visit = |x: u32, j: usize| {
            let xu = x as usize;
            if sc.stamp_s[xu] != sc.clock {
                sc.stamp_s[xu] = sc.clock;
                let b = &mut sc.buckets_s[xu];
                if b.is_empty() {
                    touched_s.push(x);
                }
                b.push(St {
                    sid: st.sid,
                    lo: st.last + 1,
                    last: j as u32,
                });
            }
        };
        if itemsets {
            for j in st.last as usize + 1..n {
                for &x in db.elem(sid, j) {
                    visit(x, j);
                }
            }
        } else {
            // Single-item elements: element j of the sequence is item `base + j`.
            let base = db.seq_offsets[sid];
            let suffix = &db.items[base + st.last as usize + 1..base + n];
            for (k, &x) in suffix.iter().enumerate() {
                visit(x, st.last as usize + 1 + k);
            }
        }
        if itemsets {
            for j in st.last as usize..n {
                let el = db.elem(sid, j);
                if j > st.last as usize && !contains(el, last_el) {
                    continue;
                }
                for &x in el.iter().filter(|&&x| x > max_e) {
                    let xu = x as usize;
                    if sc.stamp_i[xu] != sc.clock {
                        sc.stamp_i[xu] = sc.clock;
                        let b = &mut sc.buckets_i[xu];
                        if b.is_empty() {
                            touched_i.push(x);
                        }
                        b.push(St {
                            sid: st.sid,
                            lo: st.lo,
                            last: j as u32,
                        });
                    }
                }
            }
        }
    }
    touched_s.sort_unstable();
    touched_i.sort_unstable();
    let min = cx.min as usize;
    let take = |buckets: &mut Vec<Vec<St>>, touched: &[u32]| -> Vec<(u32, Vec<St>)> {
        touched
            .iter()
            .filter_map(|&x| {
                let b = std::mem::take(&mut buckets[x as usize]);
                (b.len() >= min).then_some((x, b))
            })
            .collect()
    };
    let children_i = take(&mut sc.buckets_i, &touched_i);
    let children_s = take(&mut sc.buckets_s, &touched_s);
    let saved_last = last_el.clone();
    // i-extensions: join x to the last element.
    for (x, child) in children_i {
        pat.push(x);
        last_el.push(x);
        grow(cx, pat, last_el, &child, sc, out)?;
        pat.pop();
        last_el.clone_from(&saved_last);
    }
    // s-extensions: x as a new element.
    for (x, child) in children_s {
        pat.push(x | NEW);
        last_el.clear();
        last_el.push(x);
        grow(cx, pat, last_el, &child, sc, out)?;
        pat.pop();
        last_el.clone_from(&saved_last);
    }
    Ok(())
}

/// Occurrence-tracking growth for constrained mining (single-item elements).
struct CCtx<'a> {
    db: &'a SequenceDb,
    p: &'a PrefixSpanParams,
    min: u64,
    max_len: usize,
}

/// Per sequence: occurrences `(start, end)` of the current pattern.
struct COcc {
    sid: u32,
    occ: Vec<(u32, u32)>,
}

fn span_ok_min(cx: &CCtx<'_>, sid: usize, occ: &[(u32, u32)]) -> bool {
    match cx.p.min_span {
        None => true,
        Some(m) => occ
            .iter()
            .any(|&(s, e)| cx.db.time(sid, e as usize) - cx.db.time(sid, s as usize) >= m),
    }
}

fn grow_constrained(
    cx: &CCtx<'_>,
    pat: &mut Vec<u32>,
    states: &[COcc],
    out: &mut Out<'_>,
) -> TmResult<()> {
    let db = cx.db;
    let reported: Vec<u32> = states
        .iter()
        .filter(|st| span_ok_min(cx, st.sid as usize, &st.occ))
        .map(|st| st.sid)
        .collect();
    if reported.len() as u64 >= cx.min {
        out.emit(pat, reported.len() as u64, reported.iter().copied())?;
    }
    if pat.len() >= cx.max_len {
        return Ok(());
    }
    let gap_ev = cx.p.max_gap_events.unwrap_or(usize::MAX);
    // (item, state index, start, end) for every way to extend an occurrence.
    let mut ext: Vec<(u32, u32, u32, u32)> = Vec::new();
    for (k, st) in states.iter().enumerate() {
        let sid = st.sid as usize;
        let n = db.n_elems(sid);
        for &(s, e) in &st.occ {
            let te = db.time(sid, e as usize);
            let ts = db.time(sid, s as usize);
            let hi = (e as usize).saturating_add(gap_ev).min(n - 1);
            for j in e as usize + 1..=hi {
                let tj = db.time(sid, j);
                if cx.p.max_gap_time.is_some_and(|g| tj - te > g)
                    || cx.p.max_span.is_some_and(|m| tj - ts > m)
                {
                    break;
                }
                ext.push((db.elem(sid, j)[0], k as u32, s, j as u32));
            }
        }
    }
    ext.sort_unstable();
    ext.dedup();
    let keep_all_starts = cx.p.min_span.is_some();
    for group in ext.chunk_by(|a, b| a.0 == b.0) {
        let n_seq = group.chunk_by(|a, b| a.1 == b.1).count() as u64;
        if n_seq < cx.min {
            continue;
        }
        let x = group[0].0;
        let mut child = Vec::with_capacity(n_seq as usize);
        for per_state in group.chunk_by(|a, b| a.1 == b.1) {
            let mut occ: Vec<(u32, u32)> = per_state.iter().map(|t| (t.2, t.3)).collect();
            if !keep_all_starts {
                // Same end: the latest start has the shortest span, which dominates.
                occ.sort_unstable_by_key(|&(s, e)| (e, std::cmp::Reverse(s)));
                occ.dedup_by_key(|o| o.1);
            }
            child.push(COcc {
                sid: states[per_state[0].1 as usize].sid,
                occ,
            });
        }
        pat.push(x | NEW);
        grow_constrained(cx, pat, &child, out)?;
        pat.pop();
    }
    Ok(())
}

/// Mine sequential patterns; see the module documentation.
pub fn prefixspan(db: &SequenceDb, p: &PrefixSpanParams, ctl: &Control) -> TmResult<SeqPatterns> {
    if p.max_len == Some(0) {
        return Err(TmError::param(
            "max_len",
            "max_len must be at least 1 (or None); got 0",
        ));
    }
    if p.max_gap_events == Some(0) {
        return Err(TmError::param(
            "max_gap_events",
            "max_gap_events must be at least 1 (1 = directly following); got 0",
        ));
    }
    for (name, v) in [
        ("max_gap_time", p.max_gap_time),
        ("min_span", p.min_span),
        ("max_span", p.max_span),
    ] {
        if v.is_some_and(|x| x < 0) {
            return Err(TmError::param(name, format!("{name} must not be negative")));
        }
    }
    if let (Some(a), Some(b)) = (p.min_span, p.max_span) {
        if a > b {
            return Err(TmError::param(
                "min_span",
                "min_span must not exceed max_span",
            ));
        }
    }
    if p.max_patterns == 0 {
        return Err(TmError::param(
            "max_patterns",
            "max_patterns must be at least 1; got 0",
        ));
    }
    let constrained = p.constrained();
    if constrained {
        if db.max_elem > 1 {
            return Err(TmError::param(
                "max_gap_events",
                "gap and span constraints apply to sequences of single items (one per \
                 element), such as case sequences",
            ));
        }
        if (p.max_gap_time.is_some() || p.min_span.is_some() || p.max_span.is_some())
            && db.times.is_none()
        {
            return Err(TmError::param(
                "max_gap_time",
                "time constraints need the times of the events",
            ));
        }
        if p.closed {
            return Err(TmError::param(
                "closed",
                "closed patterns are defined without gap or span constraints",
            ));
        }
    }
    let min = p.min_support.resolve(db.len())?;
    let max_len = p.max_len.unwrap_or(usize::MAX);
    // Length-1 projections: first element of each sequence holding the item.
    let mut firsts: Vec<(u32, u32, u32)> = Vec::new(); // (item, sid, element)
    let mut stamp = vec![u32::MAX; db.n_items];
    for s in 0..db.len() {
        for j in 0..db.n_elems(s) {
            for &x in db.elem(s, j) {
                if stamp[x as usize] != s as u32 {
                    stamp[x as usize] = s as u32;
                    firsts.push((x, s as u32, j as u32));
                }
            }
        }
    }
    firsts.sort_by_key(|f| f.0);
    let groups: Vec<&[(u32, u32, u32)]> = firsts
        .chunk_by(|a, b| a.0 == b.0)
        .filter(|g| g.len() as u64 >= min)
        .collect();
    let total = AtomicUsize::new(0);
    ctl.set_total(groups.len() as u64);
    let keep_cases = p.return_cases || p.closed;
    let parts: Vec<TmResult<Out<'_>>> = groups
        .par_iter()
        .map(|g| {
            ctl.check()?;
            let mut out = Out {
                enc: Vec::new(),
                offsets: vec![0],
                support: Vec::new(),
                case_offsets: vec![0],
                cases: Vec::new(),
                total: &total,
                max: p.max_patterns,
                ctl,
                keep_cases,
                ticks: 0,
            };
            let x = g[0].0;
            let mut pat = vec![x | NEW];
            if constrained {
                let states: Vec<COcc> = (0..g.len())
                    .map(|k| {
                        let sid = g[k].1 as usize;
                        let occ = (0..db.n_elems(sid))
                            .filter(|&j| db.elem(sid, j)[0] == x)
                            .map(|j| (j as u32, j as u32))
                            .collect();
                        COcc { sid: g[k].1, occ }
                    })
                    .collect();
                let cx = CCtx {
                    db,
                    p,
                    min,
                    max_len,
                };
                grow_constrained(&cx, &mut pat, &states, &mut out)?;
            } else {
                let states: Vec<St> = g
                    .iter()
                    .map(|&(_, sid, j)| St {
                        sid,
                        lo: 0,
                        last: j,
                    })
                    .collect();
                let mut sc = Scratch {
                    stamp_s: vec![0; db.n_items],
                    stamp_i: vec![0; db.n_items],
                    buckets_s: vec![Vec::new(); db.n_items],
                    buckets_i: if db.max_elem > 1 {
                        vec![Vec::new(); db.n_items]
                    } else {
                        Vec::new()
                    },
                    clock: 0,
                };
                let cx = Ctx { db, min, max_len };
                let mut last_el = vec![x];
                grow(&cx, &mut pat, &mut last_el, &states, &mut sc, &mut out)?;
            }
            ctl.advance(1);
            Ok(out)
        })
        .collect();
    let mut enc_all: Vec<u32> = Vec::new();
    let mut off_all = vec![0usize];
    let mut sup_all = Vec::new();
    let mut coff_all = vec![0usize];
    let mut cases_all = Vec::new();
    let mut limit = false;
    for part in parts {
        match part {
            Err(TmError::Limit { .. }) => limit = true,
            Err(e) => return Err(e),
            Ok(o) => {
                for i in 0..o.support.len() {
                    enc_all.extend_from_slice(&o.enc[o.offsets[i]..o.offsets[i + 1]]);
                    off_all.push(enc_all.len());
                    sup_all.push(o.support[i]);
                    if keep_cases {
                        cases_all
                            .extend_from_slice(&o.cases[o.case_offsets[i]..o.case_offsets[i + 1]]);
                        coff_all.push(cases_all.len());
                    }
                }
            }
        }
    }
    if limit {
        return Err(TmError::Limit {
            message: format!(
                "the search found more than max_patterns={} sequential patterns at a minimum \
                 support of {min} sequences; raise max_patterns, raise min_support or set \
                 max_len",
                p.max_patterns
            ),
        });
    }
    let n = sup_all.len();
    let get = |i: usize| &enc_all[off_all[i]..off_all[i + 1]];
    let mut keep = vec![true; n];
    if p.closed {
        ctl.check()?;
        let mut index: FxMap<&[u32], u32> = FxMap::default();
        for i in 0..n {
            index.insert(get(i), i as u32);
        }
        let marks: Vec<u32> = (0..n)
            .into_par_iter()
            .flat_map_iter(|i| {
                let z = get(i);
                let mut out = Vec::new();
                let mut sub = Vec::with_capacity(z.len());
                for k in 0..z.len() {
                    if z.len() < 2 {
                        break;
                    }
                    sub.clear();
                    sub.extend_from_slice(&z[..k]);
                    sub.extend_from_slice(&z[k + 1..]);
                    if z[k] & NEW != 0 && k + 1 < z.len() && z[k + 1] & NEW == 0 {
                        sub[k] |= NEW;
                    }
                    if let Some(&j) = index.get(sub.as_slice()) {
                        if sup_all[j as usize] == sup_all[i] {
                            out.push(j);
                        }
                    }
                }
                out
            })
            .collect();
        for j in marks {
            keep[j as usize] = false;
        }
    }
    // Canonical order: by length, then encoded items.
    let mut order: Vec<usize> = (0..n).filter(|&i| keep[i]).collect();
    order.par_sort_unstable_by(|&a, &b| {
        let (x, y) = (get(a), get(b));
        x.len().cmp(&y.len()).then_with(|| {
            x.iter()
                .map(|v| (v & !NEW, v & NEW == 0))
                .cmp(y.iter().map(|v| (v & !NEW, v & NEW == 0)))
        })
    });
    let mut res = SeqPatterns {
        offsets: vec![0],
        case_offsets: vec![0],
        min_count: min,
        ..Default::default()
    };
    for &i in &order {
        for (k, &v) in get(i).iter().enumerate() {
            res.items.push(v & !NEW);
            res.new_element.push(v & NEW != 0 || k == 0);
        }
        res.offsets.push(res.items.len());
        res.support.push(sup_all[i]);
        if p.return_cases {
            res.cases
                .extend_from_slice(&cases_all[coff_all[i]..coff_all[i + 1]]);
            res.case_offsets.push(res.cases.len());
        }
    }
    Ok(res)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Pei et al. 2001's example database; items a..g as 0..6.
    fn pei() -> SequenceDb {
        let seqs: Vec<Vec<Vec<u32>>> = vec![
            vec![vec![0], vec![0, 1, 2], vec![0, 2], vec![3], vec![2, 5]],
            vec![vec![0, 3], vec![2], vec![1, 2], vec![0, 4]],
            vec![vec![4, 5], vec![0, 1], vec![3, 5], vec![2], vec![1]],
            vec![vec![4], vec![6], vec![0, 5], vec![2], vec![1], vec![2]],
        ];
        from_nested(&seqs, 7)
    }

    fn from_nested(seqs: &[Vec<Vec<u32>>], n_items: usize) -> SequenceDb {
        let mut so = vec![0];
        let mut eo = vec![0];
        let mut items = Vec::new();
        for s in seqs {
            for e in s {
                items.extend_from_slice(e);
                eo.push(items.len());
            }
            so.push(eo.len() - 1);
        }
        SequenceDb::new(so, eo, items, None, n_items).unwrap()
    }

    /// Brute-force support: does `pat` (elements) occur in sequence s (earliest matching)?
    fn occurs(db: &SequenceDb, s: usize, pat: &[Vec<u32>]) -> bool {
        let mut j = 0;
        for el in pat {
            while j < db.n_elems(s) && !contains(db.elem(s, j), el) {
                j += 1;
            }
            if j >= db.n_elems(s) {
                return false;
            }
            j += 1;
        }
        true
    }

    #[test]
    fn pei_example_has_53_patterns() {
        // Pei et al. 2001 (ICDE), the example sequence database at min_sup = 2: 53 patterns,
        // 6 / 22 / 21 / 4 of lengths 1-4 (REFERENCES.md section D).
        let db = pei();
        let r = prefixspan(
            &db,
            &PrefixSpanParams::new(MinSupport::Count(2)),
            &Control::new(),
        )
        .unwrap();
        assert_eq!(r.len(), 53);
        let mut by_len = [0usize; 5];
        for i in 0..r.len() {
            by_len[r.offsets[i + 1] - r.offsets[i]] += 1;
        }
        assert_eq!(by_len[1..], [6, 22, 21, 4]);
        for i in 0..r.len() {
            let pat = r.elements(i);
            let sup = (0..db.len()).filter(|&s| occurs(&db, s, &pat)).count() as u64;
            assert_eq!(sup, r.support[i], "{pat:?}");
            let cases = &r.cases[r.case_offsets[i]..r.case_offsets[i + 1]];
            let want: Vec<u32> = (0..db.len() as u32)
                .filter(|&s| occurs(&db, s as usize, &pat))
                .collect();
            assert_eq!(cases, want.as_slice());
        }
        // Length-4 patterns: <(ab)dc>, <a(bc)a>, <eacb>, <efcb>.
        let four: Vec<Vec<Vec<u32>>> = (0..r.len())
            .filter(|&i| r.offsets[i + 1] - r.offsets[i] == 4)
            .map(|i| r.elements(i))
            .collect();
        assert!(four.contains(&vec![vec![0, 1], vec![3], vec![2]]));
        assert!(four.contains(&vec![vec![0], vec![1, 2], vec![0]]));
    }

    #[test]
    fn single_items_with_gap_constraints_brute_force() {
        // Single-item sequences with times: compare with a brute force over all patterns of
        // length <= 3 drawn from 3 items.
        let seqs: Vec<Vec<u32>> = vec![
            vec![0, 1, 2, 0, 1],
            vec![1, 0, 0, 2],
            vec![2, 1, 0, 1, 2, 0],
            vec![0, 2],
        ];
        let mut off = vec![0];
        let mut items = Vec::new();
        let mut times = Vec::new();
        for s in &seqs {
            for (k, &x) in s.iter().enumerate() {
                items.push(x);
                times.push((k * k) as i64);
            }
            off.push(items.len());
        }
        let db = SequenceDb::from_items(off, items, Some(times), 3).unwrap();
        for (gap, gapt, minsp, maxsp) in [
            (Some(1), None, None, None),
            (Some(2), None, None, Some(9)),
            (None, Some(5), Some(2), None),
        ] {
            let mut p = PrefixSpanParams::new(MinSupport::Count(2));
            p.max_gap_events = gap;
            p.max_gap_time = gapt;
            p.min_span = minsp;
            p.max_span = maxsp;
            p.max_len = Some(3);
            let r = prefixspan(&db, &p, &Control::new()).unwrap();
            let mut want = Vec::new();
            for len in 1..=3u32 {
                for code in 0..3u32.pow(len) {
                    let pat: Vec<u32> = (0..len).map(|k| code / 3u32.pow(k) % 3).collect();
                    let sup = (0..db.len())
                        .filter(|&s| {
                            let n = db.n_elems(s);
                            // all index tuples
                            fn rec(
                                db: &SequenceDb,
                                s: usize,
                                pat: &[u32],
                                pos: &mut Vec<usize>,
                                n: usize,
                                p: &PrefixSpanParams,
                            ) -> bool {
                                if pos.len() == pat.len() {
                                    let t = |j: usize| db.time(s, j);
                                    let (a, b) = (pos[0], pos[pos.len() - 1]);
                                    return p.min_span.is_none_or(|m| t(b) - t(a) >= m)
                                        && p.max_span.is_none_or(|m| t(b) - t(a) <= m);
                                }
                                let start = pos.last().map_or(0, |&x| x + 1);
                                for j in start..n {
                                    if let Some(&prev) = pos.last() {
                                        if p.max_gap_events.is_some_and(|g| j - prev > g)
                                            || p.max_gap_time.is_some_and(|g| {
                                                db.time(s, j) - db.time(s, prev) > g
                                            })
                                        {
                                            continue;
                                        }
                                    }
                                    if db.elem(s, j)[0] == pat[pos.len()] {
                                        pos.push(j);
                                        if rec(db, s, pat, pos, n, p) {
                                            return true;
                                        }
                                        pos.pop();
                                    }
                                }
                                false
                            }
                            rec(&db, s, &pat, &mut Vec::new(), n, &p)
                        })
                        .count() as u64;
                    if sup >= 2 {
                        want.push((pat, sup));
                    }
                }
            }
            // Growth needs every prefix to be frequent under the max constraints only; with
            // min_span a pattern is reported when its own support reaches the minimum.
            let mut got: Vec<(Vec<u32>, u64)> = (0..r.len())
                .map(|i| {
                    (
                        r.items[r.offsets[i]..r.offsets[i + 1]].to_vec(),
                        r.support[i],
                    )
                })
                .collect();
            got.sort();
            want.sort();
            assert_eq!(got, want, "{gap:?} {gapt:?} {minsp:?} {maxsp:?}");
        }
    }

    #[test]
    fn closed_and_errors() {
        // prefixspan package README database (calc in REFERENCES.md D): 14 patterns at 2,
        // 6 closed.
        let seqs = [
            vec![0u32, 1, 2, 3, 4],
            vec![1, 1, 1, 3, 4],
            vec![2, 1, 2, 2, 0],
            vec![1, 1, 1, 2, 2],
        ];
        let mut off = vec![0];
        let mut items = Vec::new();
        for s in &seqs {
            items.extend_from_slice(s);
            off.push(items.len());
        }
        let db = SequenceDb::from_items(off, items, None, 5).unwrap();
        let mut p = PrefixSpanParams::new(MinSupport::Count(2));
        assert_eq!(prefixspan(&db, &p, &Control::new()).unwrap().len(), 14);
        p.closed = true;
        assert_eq!(prefixspan(&db, &p, &Control::new()).unwrap().len(), 6);
        p.max_gap_events = Some(1);
        assert!(matches!(
            prefixspan(&db, &p, &Control::new()),
            Err(TmError::Parameter { .. })
        ));
        let mut p = PrefixSpanParams::new(MinSupport::Count(1));
        p.max_patterns = 3;
        assert!(matches!(
            prefixspan(&db, &p, &Control::new()),
            Err(TmError::Limit { .. })
        ));
        p.max_patterns = 100;
        p.max_gap_time = Some(3);
        assert!(matches!(
            prefixspan(&db, &p, &Control::new()),
            Err(TmError::Parameter { .. })
        ));
        assert!(SequenceDb::new(vec![0, 1], vec![0, 0], vec![], None, 1).is_err());
    }
}
