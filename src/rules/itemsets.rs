//! Frequent itemsets: parameters, the result type, and the search bound shared by the three
//! algorithms ([FP-Growth](super::fpgrowth), [Eclat](super::eclat), [Apriori](super::apriori)).
//!
//! An itemset `X` is *frequent* when its support count `σ(X)` reaches the minimum count
//! (Agrawal & Srikant 1994). Support is anti-monotone (`X ⊆ Y ⇒ σ(X) ≥ σ(Y)`), which every
//! algorithm uses to prune. A frequent itemset is *closed* when no proper superset has the
//! same count (Pasquier et al. 1999) and *maximal* when no proper superset is frequent
//! (Bayardo 1998); both are computed in [`closed`](super::closed).
//!
//! The number of frequent itemsets can grow exponentially as the minimum support falls. The
//! search is therefore bounded by `max_itemsets`: either it stops with a
//! [`TmError::Limit`] that says how many itemsets were found and which parameter to raise, or
//! (with [`OnLimit::Truncate`]) it keeps a deterministic part of the result and sets
//! [`Itemsets::truncated`]. The work is split into one task per frequent item, run in
//! parallel with rayon; results are concatenated in task order and then put in canonical order
//! (by length, then item codes), so they do not depend on the number of threads.
//!
//! ```
//! use tracemill::control::Control;
//! use tracemill::rules::{frequent_itemsets, ItemsetParams, MinSupport, Transactions};
//! let t = Transactions::from_lists(&[vec![0, 1], vec![0, 1, 2], vec![0]], 3).unwrap();
//! let p = ItemsetParams::new(MinSupport::Count(2));
//! let r = frequent_itemsets(&t, &p, &Control::new()).unwrap();
//! assert_eq!(r.len(), 3); // {0}:3, {1}:2, {0,1}:2
//! assert_eq!(r.get(2), &[0, 1]);
//! assert_eq!(r.counts[2], 2);
//! ```

use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};
use std::sync::Mutex;

use rayon::prelude::*;

use super::transactions::{MinSupport, Transactions};
use super::{apriori, closed, eclat, fpgrowth};
use crate::control::Control;
use crate::error::{TmError, TmResult};

/// Which frequent-itemset algorithm to run; all give the same itemsets.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Algorithm {
    /// FP-Growth (Han, Pei & Yin 2000); the default.
    FpGrowth,
    /// Eclat with diffsets (Zaki 2000; Zaki & Gouda 2003).
    Eclat,
    /// Apriori (Agrawal & Srikant 1994), for small inputs and cross-checks.
    Apriori,
}

impl Algorithm {
    /// Parse `"fpgrowth"`, `"eclat"` or `"apriori"`.
    pub fn parse(s: &str) -> TmResult<Self> {
        match s {
            "fpgrowth" => Ok(Algorithm::FpGrowth),
            "eclat" => Ok(Algorithm::Eclat),
            "apriori" => Ok(Algorithm::Apriori),
            _ => Err(TmError::param(
                "algorithm",
                format!("algorithm must be 'fpgrowth', 'eclat' or 'apriori'; got {s:?}"),
            )),
        }
    }
}

/// Which frequent itemsets to report.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Target {
    /// Every frequent itemset.
    All,
    /// Closed itemsets: no proper superset has the same count.
    Closed,
    /// Maximal itemsets: no proper superset is frequent.
    Maximal,
}

impl Target {
    /// Parse `"all"`, `"closed"` or `"maximal"`.
    pub fn parse(s: &str) -> TmResult<Self> {
        match s {
            "all" => Ok(Target::All),
            "closed" => Ok(Target::Closed),
            "maximal" => Ok(Target::Maximal),
            _ => Err(TmError::param(
                "target",
                format!("target must be 'all', 'closed' or 'maximal'; got {s:?}"),
            )),
        }
    }
}

/// What to do when the search finds more than `max_itemsets` itemsets.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum OnLimit {
    /// Stop with [`TmError::Limit`].
    Error,
    /// Keep `max_itemsets` itemsets (a deterministic selection) and flag the result.
    Truncate,
}

/// Parameters of [`frequent_itemsets`].
#[derive(Debug, Clone, PartialEq)]
pub struct ItemsetParams {
    /// Minimum support (fraction or count).
    pub min_support: MinSupport,
    /// Longest itemset to report (`None`: no bound).
    pub max_len: Option<usize>,
    /// All, closed or maximal itemsets.
    pub target: Target,
    /// The algorithm.
    pub algorithm: Algorithm,
    /// Bound on the number of frequent itemsets searched (default 10 000 000).
    pub max_itemsets: usize,
    /// Error or truncate at the bound (default error).
    pub on_limit: OnLimit,
}

impl ItemsetParams {
    /// Defaults: no length bound, all itemsets, FP-Growth, at most 10 000 000 itemsets, error
    /// at the bound.
    pub fn new(min_support: MinSupport) -> Self {
        ItemsetParams {
            min_support,
            max_len: None,
            target: Target::All,
            algorithm: Algorithm::FpGrowth,
            max_itemsets: 10_000_000,
            on_limit: OnLimit::Error,
        }
    }
}

/// Frequent itemsets in CSR form, in canonical order (by length, then item codes); the items of
/// an itemset are sorted ascending.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct Itemsets {
    /// CSR offsets into `items` (`len() + 1`).
    pub offsets: Vec<usize>,
    /// Concatenated item codes.
    pub items: Vec<u32>,
    /// Support count of each itemset.
    pub counts: Vec<u64>,
    /// Number of transactions the counts refer to.
    pub n_transactions: usize,
    /// The minimum count used.
    pub min_count: u64,
    /// Whether the search stopped at `max_itemsets` (only with [`OnLimit::Truncate`]).
    pub truncated: bool,
    /// Whether the itemsets are every frequent itemset (not only closed/maximal ones).
    pub complete: bool,
}

impl Itemsets {
    /// Number of itemsets.
    pub fn len(&self) -> usize {
        self.counts.len()
    }
    /// Whether there is none.
    pub fn is_empty(&self) -> bool {
        self.counts.is_empty()
    }
    /// The items of itemset `i`.
    pub fn get(&self, i: usize) -> &[u32] {
        &self.items[self.offsets[i]..self.offsets[i + 1]]
    }
    /// Keep the itemsets where `keep` is true.
    pub fn filter(&self, keep: &[bool]) -> Itemsets {
        let mut out = Itemsets {
            offsets: vec![0],
            n_transactions: self.n_transactions,
            min_count: self.min_count,
            truncated: self.truncated,
            complete: false,
            ..Default::default()
        };
        for (i, _) in keep.iter().enumerate().filter(|(_, &k)| k) {
            out.items.extend_from_slice(self.get(i));
            out.offsets.push(out.items.len());
            out.counts.push(self.counts[i]);
        }
        out
    }
}

pub(crate) use crate::hash::FxMap;

/// Shared bound on the number of itemsets across parallel tasks.
pub(crate) struct Limiter {
    max: usize,
    truncate: bool,
    total: AtomicUsize,
    stop: AtomicBool,
    done: Mutex<Vec<Option<usize>>>,
    cutoff: AtomicUsize,
}

impl Limiter {
    pub(crate) fn new(max: usize, on_limit: OnLimit, n_tasks: usize) -> Self {
        Limiter {
            max,
            truncate: on_limit == OnLimit::Truncate,
            total: AtomicUsize::new(0),
            stop: AtomicBool::new(false),
            done: Mutex::new(vec![None; n_tasks]),
            cutoff: AtomicUsize::new(usize::MAX),
        }
    }

    /// Record that `task` finished with `n` itemsets; in truncate mode, tasks after a finished
    /// prefix that already holds `max` itemsets need not run.
    fn finish_task(&self, task: usize, n: usize) {
        if !self.truncate {
            return;
        }
        if let Ok(mut d) = self.done.lock() {
            d[task] = Some(n);
            let mut sum = 0usize;
            for (k, x) in d.iter().enumerate() {
                match x {
                    Some(c) => {
                        sum += c;
                        if sum >= self.max {
                            self.cutoff.fetch_min(k, Ordering::Relaxed);
                            break;
                        }
                    }
                    None => break,
                }
            }
        }
    }
}

/// The output of one task, with the bound checks.
pub(crate) struct Sink<'a> {
    lim: &'a Limiter,
    ctl: &'a Control,
    task: usize,
    pub(crate) offsets: Vec<usize>,
    pub(crate) items: Vec<u32>,
    pub(crate) counts: Vec<u64>,
    pub(crate) truncated: bool,
    ticks: u32,
}

impl<'a> Sink<'a> {
    pub(crate) fn new(lim: &'a Limiter, ctl: &'a Control, task: usize) -> Self {
        Sink {
            lim,
            ctl,
            task,
            offsets: vec![0],
            items: Vec::new(),
            counts: Vec::new(),
            truncated: false,
            ticks: 0,
        }
    }

    /// Record an itemset. `Ok(false)` asks the caller to stop this task quietly (truncation);
    /// errors are the limit (error mode) and interruption.
    #[inline]
    pub(crate) fn emit(&mut self, itemset: &[u32], count: u64) -> TmResult<bool> {
        self.ticks += 1;
        if self.ticks >= 1024 {
            self.ticks = 0;
            self.ctl.check()?;
            if self.lim.stop.load(Ordering::Relaxed) {
                return Err(limit_marker());
            }
            if self.task > self.lim.cutoff.load(Ordering::Relaxed) {
                self.truncated = true;
                return Ok(false);
            }
        }
        if self.lim.truncate {
            if self.counts.len() >= self.lim.max {
                self.truncated = true;
                return Ok(false);
            }
        } else if self.lim.max != usize::MAX {
            let t = self.lim.total.fetch_add(1, Ordering::Relaxed) + 1;
            if t > self.lim.max {
                self.lim.stop.store(true, Ordering::Relaxed);
                return Err(limit_marker());
            }
        }
        self.items.extend_from_slice(itemset);
        self.offsets.push(self.items.len());
        self.counts.push(count);
        Ok(true)
    }

    pub(crate) fn len(&self) -> usize {
        self.counts.len()
    }
}

fn limit_marker() -> TmError {
    TmError::Limit {
        message: String::new(),
    }
}

/// The frequent items: `(counts, items, pos)` with the items in order of support
/// (ascending or descending, ties by item code) and `pos[item]` its place in that order, or
/// `u32::MAX` for an infrequent item.
pub(crate) fn frequent_items(
    t: &Transactions,
    min: u64,
    ascending: bool,
) -> (Vec<u64>, Vec<u32>, Vec<u32>) {
    let counts = t.item_counts();
    let mut freq: Vec<u32> = (0..t.n_items() as u32)
        .filter(|&i| counts[i as usize] >= min)
        .collect();
    freq.sort_by(|&a, &b| {
        let by = counts[a as usize].cmp(&counts[b as usize]);
        if ascending { by } else { by.reverse() }.then(a.cmp(&b))
    });
    let mut pos = vec![u32::MAX; t.n_items()];
    for (k, &i) in freq.iter().enumerate() {
        pos[i as usize] = k as u32;
    }
    (counts, freq, pos)
}

/// Run `task(k, sink)` for `k in 0..n_tasks` in parallel and merge the sinks in task order,
/// applying the bound; `describe` names the search in the limit message.
pub(crate) fn run_tasks<F>(
    n_tasks: usize,
    p: &ItemsetParams,
    min_count: u64,
    n_transactions: usize,
    ctl: &Control,
    task: F,
) -> TmResult<Itemsets>
where
    F: Fn(usize, &mut Sink<'_>) -> TmResult<bool> + Sync,
{
    let lim = Limiter::new(p.max_itemsets, p.on_limit, n_tasks);
    ctl.set_total(n_tasks as u64);
    let parts: Vec<TmResult<(Vec<usize>, Vec<u32>, Vec<u64>, bool)>> = (0..n_tasks)
        .into_par_iter()
        .map(|k| {
            ctl.check()?;
            let mut sink = Sink::new(&lim, ctl, k);
            if k > lim.cutoff.load(Ordering::Relaxed) {
                return Ok((vec![0], Vec::new(), Vec::new(), true));
            }
            task(k, &mut sink)?;
            lim.finish_task(k, sink.len());
            ctl.advance(1);
            Ok((sink.offsets, sink.items, sink.counts, sink.truncated))
        })
        .collect();
    let mut out = Itemsets {
        offsets: vec![0],
        n_transactions,
        min_count,
        complete: true,
        ..Default::default()
    };
    let mut limit_hit = false;
    for part in parts {
        match part {
            Err(TmError::Limit { .. }) => limit_hit = true,
            Err(e) => return Err(e),
            Ok((off, items, counts, trunc)) => {
                if limit_hit {
                    continue;
                }
                out.truncated |= trunc;
                for i in 0..counts.len() {
                    if out.counts.len() >= p.max_itemsets {
                        out.truncated = true;
                        break;
                    }
                    out.items.extend_from_slice(&items[off[i]..off[i + 1]]);
                    out.offsets.push(out.items.len());
                    out.counts.push(counts[i]);
                }
            }
        }
    }
    if limit_hit {
        let found = lim.total.load(Ordering::Relaxed).min(p.max_itemsets);
        return Err(TmError::Limit {
            message: format!(
                "the search found more than max_itemsets={} frequent itemsets at a minimum \
                 count of {min_count} ({found} found before it stopped); raise max_itemsets, \
                 raise min_support, set max_len, or ask for a truncated result",
                p.max_itemsets
            ),
        });
    }
    out.truncated &= out.counts.len() >= p.max_itemsets;
    Ok(out)
}

/// Sort the items of each itemset and the itemsets by (length, items).
pub(crate) fn canonical(mut s: Itemsets) -> Itemsets {
    let n = s.len();
    for i in 0..n {
        s.items[s.offsets[i]..s.offsets[i + 1]].sort_unstable();
    }
    let mut order: Vec<usize> = (0..n).collect();
    {
        let get = |i: usize| &s.items[s.offsets[i]..s.offsets[i + 1]];
        order.par_sort_unstable_by(|&a, &b| {
            let (x, y) = (get(a), get(b));
            x.len().cmp(&y.len()).then_with(|| x.cmp(y))
        });
    }
    let mut out = Itemsets {
        offsets: Vec::with_capacity(n + 1),
        items: Vec::with_capacity(s.items.len()),
        counts: Vec::with_capacity(n),
        ..s.clone_meta()
    };
    out.offsets.push(0);
    for &i in &order {
        out.items
            .extend_from_slice(&s.items[s.offsets[i]..s.offsets[i + 1]]);
        out.offsets.push(out.items.len());
        out.counts.push(s.counts[i]);
    }
    s.items.clear();
    out
}

impl Itemsets {
    fn clone_meta(&self) -> Itemsets {
        Itemsets {
            n_transactions: self.n_transactions,
            min_count: self.min_count,
            truncated: self.truncated,
            complete: self.complete,
            ..Default::default()
        }
    }
}

/// Mine frequent itemsets; see the module documentation.
pub fn frequent_itemsets(t: &Transactions, p: &ItemsetParams, ctl: &Control) -> TmResult<Itemsets> {
    if p.max_len == Some(0) {
        return Err(TmError::param(
            "max_len",
            "max_len must be at least 1 (or None for no bound); got 0",
        ));
    }
    if p.max_itemsets == 0 {
        return Err(TmError::param(
            "max_itemsets",
            "max_itemsets must be at least 1; got 0",
        ));
    }
    if p.on_limit == OnLimit::Truncate && p.target != Target::All {
        return Err(TmError::param(
            "on_limit",
            "a truncated search cannot tell closed or maximal itemsets; use target='all' or \
             on_limit='error'",
        ));
    }
    let min_count = p.min_support.resolve(t.len())?;
    let all = match p.algorithm {
        Algorithm::FpGrowth => fpgrowth::mine(t, p, min_count, ctl)?,
        Algorithm::Eclat => eclat::mine(t, p, min_count, ctl)?,
        Algorithm::Apriori => apriori::mine(t, p, min_count, ctl)?,
    };
    let all = canonical(all);
    Ok(match p.target {
        Target::All => all,
        Target::Closed => {
            let (c, _) = closed::flags(&all, ctl)?;
            all.filter(&c)
        }
        Target::Maximal => {
            let (_, m) = closed::flags(&all, ctl)?;
            all.filter(&m)
        }
    })
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;

    /// Han, Kamber & Pei, Data Mining: Concepts and Techniques (3rd ed.), Table 6.1
    /// (transactions from memory; counts recomputed), items I1..I5 as codes 0..4.
    pub(crate) fn hkp() -> Transactions {
        Transactions::from_lists(
            &[
                vec![0, 1, 4],
                vec![1, 3],
                vec![1, 2],
                vec![0, 1, 3],
                vec![0, 2],
                vec![1, 2],
                vec![0, 2],
                vec![0, 1, 2, 4],
                vec![0, 1, 2],
            ],
            5,
        )
        .unwrap()
    }

    /// Brute force: every subset of the item universe (small universes only).
    pub(crate) fn brute(t: &Transactions, min: u64) -> Vec<(Vec<u32>, u64)> {
        let m = t.n_items();
        let mut out = Vec::new();
        for mask in 1u64..(1 << m) {
            let set: Vec<u32> = (0..m as u32).filter(|i| mask >> i & 1 == 1).collect();
            let c = (0..t.len())
                .filter(|&k| set.iter().all(|x| t.get(k).binary_search(x).is_ok()))
                .count() as u64;
            if c >= min {
                out.push((set, c));
            }
        }
        out.sort_by(|a, b| a.0.len().cmp(&b.0.len()).then_with(|| a.0.cmp(&b.0)));
        out
    }

    pub(crate) fn as_pairs(r: &Itemsets) -> Vec<(Vec<u32>, u64)> {
        (0..r.len())
            .map(|i| (r.get(i).to_vec(), r.counts[i]))
            .collect()
    }

    pub(crate) fn random_db(seed: u64, n: usize, m: u32) -> Transactions {
        // A small LCG keeps this test free of extra dependencies.
        let mut s = seed.wrapping_mul(6364136223846793005).wrapping_add(1);
        let mut next = move || {
            s = s
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (s >> 33) as u32
        };
        let lists: Vec<Vec<u32>> = (0..n)
            .map(|_| {
                let len = next() % (m + 1);
                (0..len).map(|_| (next() % m).min(next() % m)).collect()
            })
            .collect();
        Transactions::from_lists(&lists, m as usize).unwrap()
    }

    #[test]
    fn hkp_13_itemsets_all_algorithms() {
        let t = hkp();
        for alg in [Algorithm::FpGrowth, Algorithm::Eclat, Algorithm::Apriori] {
            let mut p = ItemsetParams::new(MinSupport::Count(2));
            p.algorithm = alg;
            let r = frequent_itemsets(&t, &p, &Control::new()).unwrap();
            assert_eq!(r.len(), 13, "{alg:?}");
            assert_eq!(as_pairs(&r), brute(&t, 2));
            p.target = Target::Closed;
            assert_eq!(frequent_itemsets(&t, &p, &Control::new()).unwrap().len(), 9);
            p.target = Target::Maximal;
            assert_eq!(frequent_itemsets(&t, &p, &Control::new()).unwrap().len(), 3);
        }
    }

    #[test]
    fn random_agree_with_brute_force() {
        for seed in 0..12 {
            let t = random_db(seed, 40, 7);
            for min in [1, 3, 8] {
                let want = brute(&t, min);
                for alg in [Algorithm::FpGrowth, Algorithm::Eclat, Algorithm::Apriori] {
                    let mut p = ItemsetParams::new(MinSupport::Count(min));
                    p.algorithm = alg;
                    let r = frequent_itemsets(&t, &p, &Control::new()).unwrap();
                    assert_eq!(as_pairs(&r), want, "seed {seed} min {min} {alg:?}");
                    p.max_len = Some(2);
                    let r = frequent_itemsets(&t, &p, &Control::new()).unwrap();
                    let w2: Vec<_> = want.iter().filter(|x| x.0.len() <= 2).cloned().collect();
                    assert_eq!(as_pairs(&r), w2);
                }
            }
        }
    }

    #[test]
    fn bound_errors_or_truncates_deterministically() {
        let t = random_db(3, 60, 8);
        let mut p = ItemsetParams::new(MinSupport::Count(1));
        p.max_itemsets = 10;
        let e = frequent_itemsets(&t, &p, &Control::new()).unwrap_err();
        match e {
            TmError::Limit { message } => assert!(message.contains("max_itemsets=10")),
            other => panic!("{other:?}"),
        }
        p.on_limit = OnLimit::Truncate;
        let a = frequent_itemsets(&t, &p, &Control::new()).unwrap();
        assert_eq!(a.len(), 10);
        assert!(a.truncated);
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(1)
            .build()
            .unwrap();
        let b = pool.install(|| frequent_itemsets(&t, &p, &Control::new()).unwrap());
        assert_eq!(a, b);
        p.target = Target::Closed;
        assert!(matches!(
            frequent_itemsets(&t, &p, &Control::new()),
            Err(TmError::Parameter { .. })
        ));
    }

    #[test]
    fn parameter_rules() {
        let t = hkp();
        let mut p = ItemsetParams::new(MinSupport::Count(2));
        p.max_len = Some(0);
        assert!(matches!(
            frequent_itemsets(&t, &p, &Control::new()),
            Err(TmError::Parameter { .. })
        ));
        let p = ItemsetParams::new(MinSupport::Count(10));
        assert!(matches!(
            frequent_itemsets(&t, &p, &Control::new()),
            Err(TmError::Parameter { .. })
        ));
        assert!(Algorithm::parse("fp").is_err());
        assert!(Target::parse("open").is_err());
    }

    #[test]
    fn cancelled_search_stops() {
        let t = random_db(1, 200, 12);
        let ctl = Control::new();
        ctl.cancel();
        let p = ItemsetParams::new(MinSupport::Count(1));
        assert_eq!(frequent_itemsets(&t, &p, &ctl), Err(TmError::Interrupted));
    }

    #[test]
    fn autotraits() {
        fn ok<T: Send + Sync>() {}
        ok::<Itemsets>();
        ok::<ItemsetParams>();
    }
}
