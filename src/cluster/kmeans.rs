//! k-means with k-means++ seeding and Hamerly's bounds.
//!
//! **Objective.** Partition `n` weighted points into `k` groups minimising the inertia
//! `sum_i w_i |x_i - mu_{c(i)}|^2` (Lloyd 1982, IEEE Trans. Inf. Theory 28(2); MacQueen 1967).
//! Lloyd's iteration alternates an assignment step (each point to its closest centre) and an
//! update step (each centre to the weighted mean of its points); inertia never increases.
//!
//! **Seeding.** k-means++ (Arthur and Vassilvitskii 2007, SODA, 1027–1035): the first centre
//! is drawn with probability proportional to the weight, each next one with probability
//! proportional to `w_i D(x_i)^2`, the squared distance to the closest centre so far. As in
//! scikit-learn we use the greedy form: draw `2 + floor(ln k)` candidates and keep the one that
//! lowers the potential most. `n_init` restarts keep the run with the lowest inertia.
//!
//! **Acceleration.** Hamerly (2010, "Making k-means even faster", SIAM SDM, 130–140) keeps per
//! point an upper bound `u` on the distance to its centre and one lower bound `l` on the
//! distance to every other centre. With `s(c) = min_{c' != c} |c - c'| / 2`, a point whose
//! `u <= max(s(c), l)` cannot change centre and is skipped; after the update, `u` grows by its
//! centre's movement and `l` shrinks by the largest movement of another centre (triangle
//! inequality). The labels equal Lloyd's from the same start (up to exact distance ties).
//!
//! **Stopping** follows scikit-learn so the two can be compared run for run: stop when the
//! labels did not change between two assignments ("strict convergence") or when the summed
//! squared centre shift is at most `tol * mean_j var(x_j)`; after a non-strict stop the labels
//! are recomputed for the final centres. An empty cluster takes the point farthest from its
//! centre (scikit-learn's relocation rule).
//!
//! Sparse rows (CSR) use Lloyd's iteration with `|x - c|^2 = |x|^2 - 2 x.c + |c|^2`.
//! Partial sums are reduced per fixed-size chunk in chunk order, so results do not depend on
//! the number of threads.

use rand::{Rng, SeedableRng};
use rand_xoshiro::Xoshiro256PlusPlus;
use rayon::prelude::*;

use crate::control::Control;
use crate::distance::{sqeuclidean, sqeuclidean_many};
use crate::error::{TmError, TmResult};

const CHUNK: usize = 2048;
/// How many unsettled points ahead a pass starts loading rows.
const PREFETCH_AHEAD: usize = 6;

/// The points to cluster.
#[derive(Debug, Clone, Copy)]
pub enum Points<'a> {
    /// Row-major `n x d`.
    Dense {
        /// The values.
        x: &'a [f64],
        /// Rows.
        n: usize,
        /// Columns.
        d: usize,
    },
    /// Compressed sparse rows.
    Sparse {
        /// Row offsets (`n + 1`).
        indptr: &'a [i64],
        /// Column indices.
        indices: &'a [i32],
        /// Values.
        data: &'a [f64],
        /// Rows.
        n: usize,
        /// Columns.
        d: usize,
    },
}

impl Points<'_> {
    /// Number of points.
    pub fn n(&self) -> usize {
        match self {
            Points::Dense { n, .. } | Points::Sparse { n, .. } => *n,
        }
    }
    /// Number of features.
    pub fn d(&self) -> usize {
        match self {
            Points::Dense { d, .. } | Points::Sparse { d, .. } => *d,
        }
    }

    /// Check shapes and finiteness; errors name the bad column and row.
    pub fn validate(&self) -> TmResult<()> {
        match *self {
            Points::Dense { x, n, d } => crate::distance::check_features(x, n, d),
            Points::Sparse {
                indptr,
                indices,
                data,
                n,
                d,
            } => {
                if indptr.len() != n + 1
                    || indptr[0] != 0
                    || indptr.windows(2).any(|w| w[1] < w[0])
                    || indptr[n] as usize != indices.len()
                    || indices.len() != data.len()
                {
                    return Err(TmError::param(
                        "X",
                        "the sparse matrix has inconsistent indptr/indices/data arrays",
                    ));
                }
                if let Some(&c) = indices.iter().find(|&&c| c < 0 || c as usize >= d) {
                    return Err(TmError::param(
                        "X",
                        format!("sparse column index {c} is outside 0..{d}"),
                    ));
                }
                if let Some(p) = data.iter().position(|v| !v.is_finite()) {
                    let row = indptr.partition_point(|&o| o as usize <= p) - 1;
                    return Err(TmError::data(format!(
                        "feature column {} holds a non-finite value ({}) at row {row}; \
                         features must be finite",
                        indices[p], data[p]
                    )));
                }
                Ok(())
            }
        }
    }

    /// Row `i` written densely into `out` (length `d`).
    fn row_into(&self, i: usize, out: &mut [f64]) {
        match *self {
            Points::Dense { x, d, .. } => out.copy_from_slice(&x[i * d..(i + 1) * d]),
            Points::Sparse {
                indptr,
                indices,
                data,
                ..
            } => {
                out.iter_mut().for_each(|v| *v = 0.0);
                for p in indptr[i] as usize..indptr[i + 1] as usize {
                    out[indices[p] as usize] = data[p];
                }
            }
        }
    }

    /// Ask the CPU to start loading row `i` (dense rows only; a hint, never a fault).
    #[inline(always)]
    fn prefetch_row(&self, i: usize) {
        #[cfg(target_arch = "x86_64")]
        if let Points::Dense { x, d, .. } = *self {
            use std::arch::x86_64::{_mm_prefetch, _MM_HINT_T0};
            let row = &x[i * d..(i + 1) * d];
            for line in row.chunks(8) {
                // SAFETY: a prefetch of an address inside a live slice; prefetches never
                // fault and change no data.
                unsafe { _mm_prefetch::<_MM_HINT_T0>(line.as_ptr().cast::<i8>()) };
            }
        }
    }

    /// Squared distance of row `i` to `c`, given `|c|^2` (used for sparse rows).
    #[inline(always)]
    fn sqdist(&self, i: usize, c: &[f64], c_sq: f64, x_sq: &[f64]) -> f64 {
        match *self {
            Points::Dense { x, d, .. } => sqeuclidean(&x[i * d..(i + 1) * d], c),
            Points::Sparse {
                indptr,
                indices,
                data,
                ..
            } => {
                let mut dot = 0.0;
                for p in indptr[i] as usize..indptr[i + 1] as usize {
                    dot += data[p] * c[indices[p] as usize];
                }
                (x_sq[i] - 2.0 * dot + c_sq).max(0.0)
            }
        }
    }

    fn row_sq_norms(&self) -> Vec<f64> {
        match *self {
            Points::Dense { .. } => Vec::new(),
            Points::Sparse {
                indptr, data, n, ..
            } => (0..n)
                .into_par_iter()
                .map(|i| {
                    data[indptr[i] as usize..indptr[i + 1] as usize]
                        .iter()
                        .map(|v| v * v)
                        .sum()
                })
                .collect(),
        }
    }

    /// Number of distinct rows, counting up to `stop` (then it returns `stop`).
    pub fn n_distinct(&self, stop: usize) -> usize {
        use std::collections::HashSet;
        let d = self.d();
        let mut seen: HashSet<Vec<u64>> = HashSet::new();
        let mut row = vec![0.0; d];
        for i in 0..self.n() {
            self.row_into(i, &mut row);
            // +0.0 and -0.0 are one point.
            seen.insert(row.iter().map(|v| (v + 0.0).to_bits()).collect());
            if seen.len() >= stop {
                return stop;
            }
        }
        seen.len()
    }

    /// Per-column unweighted variance, averaged over columns (two passes, reduced per
    /// fixed-size chunk in chunk order).
    fn mean_variance(&self) -> f64 {
        let (n, d) = (self.n(), self.d());
        if n == 0 || d == 0 {
            return 0.0;
        }
        let column_sums = |f: &(dyn Fn(&[f64], &mut [f64]) + Sync)| -> Vec<f64> {
            let parts: Vec<Vec<f64>> = (0..n.div_ceil(CHUNK))
                .into_par_iter()
                .map(|ci| {
                    let mut acc = vec![0.0; d];
                    let mut row = vec![0.0; d];
                    for i in ci * CHUNK..((ci + 1) * CHUNK).min(n) {
                        self.row_into(i, &mut row);
                        f(&row, &mut acc);
                    }
                    acc
                })
                .collect();
            let mut total = vec![0.0; d];
            for part in parts {
                total.iter_mut().zip(part).for_each(|(a, b)| *a += b);
            }
            total
        };
        let mean: Vec<f64> = column_sums(&|row, acc| {
            acc.iter_mut().zip(row).for_each(|(a, v)| *a += v);
        })
        .iter()
        .map(|s| s / n as f64)
        .collect();
        let sq = column_sums(&|row, acc| {
            for ((a, v), m) in acc.iter_mut().zip(row).zip(&mean) {
                let t = v - m;
                *a += t * t;
            }
        });
        sq.iter().map(|s| s / n as f64).sum::<f64>() / d as f64
    }
}

/// How the first centres are chosen.
#[derive(Debug, Clone, PartialEq)]
pub enum Init {
    /// Greedy k-means++.
    KMeansPlusPlus,
    /// `k` distinct points drawn uniformly.
    Random,
    /// Given centres, row-major `k x d` (one run).
    Given(Vec<f64>),
}

/// k-means parameters (scikit-learn names).
#[derive(Debug, Clone, PartialEq)]
pub struct KMeansParams {
    /// Number of clusters `k` (default 8).
    pub n_clusters: usize,
    /// Seeding (default k-means++).
    pub init: Init,
    /// Number of seeded runs (default 1; ignored with given centres).
    pub n_init: usize,
    /// Iterations per run (default 300).
    pub max_iter: usize,
    /// Relative tolerance on the centre shift (default 1e-4).
    pub tol: f64,
    /// Seed of the random choices (default 0).
    pub seed: u64,
}

impl Default for KMeansParams {
    fn default() -> Self {
        KMeansParams {
            n_clusters: 8,
            init: Init::KMeansPlusPlus,
            n_init: 1,
            max_iter: 300,
            tol: 1e-4,
            seed: 0,
        }
    }
}

/// A fitted k-means model.
#[derive(Debug, Clone, PartialEq)]
pub struct KMeansFit {
    /// Centres, row-major `k x d`.
    pub centers: Vec<f64>,
    /// Cluster of each point.
    pub labels: Vec<u32>,
    /// Weighted sum of squared distances to the assigned centres.
    pub inertia: f64,
    /// Iterations of the kept run.
    pub n_iter: usize,
}

fn check_weights(w: Option<&[f64]>, n: usize) -> TmResult<Vec<f64>> {
    match w {
        None => Ok(vec![1.0; n]),
        Some(w) => {
            if w.len() != n {
                return Err(TmError::param(
                    "sample_weight",
                    format!("sample_weight has {} entries for {n} points", w.len()),
                ));
            }
            if let Some(i) = w.iter().position(|v| !v.is_finite() || *v < 0.0) {
                return Err(TmError::param(
                    "sample_weight",
                    format!(
                        "sample_weight[{i}] = {}; weights must be finite and >= 0",
                        w[i]
                    ),
                ));
            }
            if !w.iter().any(|&v| v > 0.0) {
                return Err(TmError::param(
                    "sample_weight",
                    "all sample weights are zero",
                ));
            }
            Ok(w.to_vec())
        }
    }
}

/// Check `k` against the data: `1 <= k <= distinct points`.
pub fn check_k(p: &Points<'_>, k: usize) -> TmResult<()> {
    if k == 0 {
        return Err(TmError::param(
            "n_clusters",
            "n_clusters must be at least 1; got 0",
        ));
    }
    if p.n() == 0 {
        return Err(TmError::data("there are no points to cluster"));
    }
    let distinct = p.n_distinct(k);
    if distinct < k {
        return Err(TmError::param(
            "n_clusters",
            format!(
                "n_clusters={k} is larger than the number of distinct points ({distinct}{}); \
                 ask for at most {distinct} clusters",
                if distinct == 1 {
                    ": all cases are identical"
                } else {
                    ""
                }
            ),
        ));
    }
    Ok(())
}

/// Greedy k-means++ seeding (weighted).
pub fn kmeans_plusplus(p: &Points<'_>, w: &[f64], k: usize, seed: u64) -> Vec<f64> {
    let (n, d) = (p.n(), p.d());
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let x_sq = p.row_sq_norms();
    let mut centers = vec![0.0; k * d];
    let draw = |rng: &mut Xoshiro256PlusPlus, cum: &[f64]| -> usize {
        let total = cum.last().copied().unwrap_or(0.0);
        let r = rng.random::<f64>() * total;
        cum.partition_point(|&c| c <= r).min(n - 1)
    };
    let mut cum: Vec<f64> = w
        .iter()
        .scan(0.0, |s, &v| {
            *s += v;
            Some(*s)
        })
        .collect();
    let first = draw(&mut rng, &cum);
    p.row_into(first, &mut centers[..d]);
    let dist_to = |c: &[f64]| -> Vec<f64> {
        let c_sq: f64 = c.iter().map(|v| v * v).sum();
        (0..n)
            .into_par_iter()
            .with_min_len(CHUNK)
            .map(|i| p.sqdist(i, c, c_sq, &x_sq))
            .collect()
    };
    let mut closest = dist_to(&centers[..d]);
    let pot = |dd: &[f64]| -> f64 { dd.iter().zip(w).map(|(a, b)| a * b).sum() };
    let mut current = pot(&closest);
    let trials = 2 + (k as f64).ln().floor() as usize;
    let mut cand = vec![0.0; d];
    for c in 1..k {
        let mut acc = 0.0;
        for i in 0..n {
            acc += w[i] * closest[i];
            cum[i] = acc;
        }
        let mut best: Option<(f64, Vec<f64>, usize)> = None;
        for _ in 0..trials {
            let r = rng.random::<f64>() * current;
            let id = cum.partition_point(|&v| v <= r).min(n - 1);
            p.row_into(id, &mut cand);
            let mut dd = dist_to(&cand);
            dd.iter_mut()
                .zip(&closest)
                .for_each(|(a, b)| *a = a.min(*b));
            let pt = pot(&dd);
            if best.as_ref().is_none_or(|b| pt < b.0) {
                best = Some((pt, dd, id));
            }
        }
        if let Some((pt, dd, id)) = best {
            current = pt;
            closest = dd;
            p.row_into(id, &mut centers[c * d..(c + 1) * d]);
        }
    }
    centers
}

fn random_init(p: &Points<'_>, k: usize, seed: u64) -> Vec<f64> {
    let d = p.d();
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let idx = rand::seq::index::sample(&mut rng, p.n(), k).into_vec();
    let mut c = vec![0.0; k * d];
    for (j, &i) in idx.iter().enumerate() {
        p.row_into(i, &mut c[j * d..(j + 1) * d]);
    }
    c
}

/// Centre movement since the last pass, for Hamerly's bound update.
struct Shift<'s> {
    /// Movement of each centre.
    by: &'s [f64],
    /// Largest movement and the centre that made it.
    m1: f64,
    a1: usize,
    /// Second-largest movement.
    m2: f64,
}

impl<'s> Shift<'s> {
    fn new(by: &'s [f64]) -> Self {
        let (mut m1, mut m2, mut a1) = (0.0f64, 0.0f64, usize::MAX);
        for (c, &s) in by.iter().enumerate() {
            if s > m1 {
                m2 = m1;
                m1 = s;
                a1 = c;
            } else if s > m2 {
                m2 = s;
            }
        }
        Shift { by, m1, a1, m2 }
    }
}

/// What one assignment pass hands back: the change of the per-cluster weighted sums, weights
/// and positive-weight counts, and how many labels changed.
struct PassOut {
    sums: Vec<f64>,
    wsum: Vec<f64>,
    count: Vec<i64>,
    changed: usize,
}

impl PassOut {
    fn zero(k: usize, d: usize) -> Self {
        PassOut {
            sums: vec![0.0; k * d],
            wsum: vec![0.0; k],
            count: vec![0; k],
            changed: 0,
        }
    }
}

/// Add `sign * w * row i` to the sums of cluster `c`.
#[inline(always)]
fn accumulate(p: &Points<'_>, i: usize, wi: f64, c: usize, out: &mut PassOut, sign: f64) {
    let d = p.d();
    let s = &mut out.sums[c * d..(c + 1) * d];
    let f = sign * wi;
    match *p {
        Points::Dense { x, .. } => {
            for (a, b) in s.iter_mut().zip(&x[i * d..(i + 1) * d]) {
                *a += f * b;
            }
        }
        Points::Sparse {
            indptr,
            indices,
            data,
            ..
        } => {
            for q in indptr[i] as usize..indptr[i + 1] as usize {
                s[indices[q] as usize] += f * data[q];
            }
        }
    }
    out.wsum[c] += f;
    if wi > 0.0 {
        out.count[c] += if sign > 0.0 { 1 } else { -1 };
    }
}

/// The read-only inputs of one assignment pass.
struct PassCtx<'a> {
    p: &'a Points<'a>,
    w: &'a [f64],
    centers: &'a [f64],
    k: usize,
    x_sq: &'a [f64],
    c_sq: &'a [f64],
    half: &'a [f64],
    shift: Option<&'a Shift<'a>>,
    fresh: bool,
}

impl PassCtx<'_> {
    /// One chunk of the pass, starting at point `first`; compiled for AVX2 when the CPU has
    /// it. The arithmetic is the same either way (no fused multiply-add, same accumulation
    /// order), so the results do not depend on the CPU.
    fn chunk(&self, first: usize, lab: &mut [u32], up: &mut [f64], lo: &mut [f64]) -> PassOut {
        #[cfg(target_arch = "x86_64")]
        if std::arch::is_x86_feature_detected!("avx2") {
            // SAFETY: the CPU supports AVX2, checked just above.
            return unsafe { self.chunk_avx2(first, lab, up, lo) };
        }
        self.chunk_body(first, lab, up, lo)
    }

    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2")]
    fn chunk_avx2(&self, first: usize, lab: &mut [u32], up: &mut [f64], lo: &mut [f64]) -> PassOut {
        self.chunk_body(first, lab, up, lo)
    }

    #[inline(always)]
    fn chunk_body(&self, first: usize, lab: &mut [u32], up: &mut [f64], lo: &mut [f64]) -> PassOut {
        let (k, d, centers, c_sq, x_sq, half) = (
            self.k,
            self.p.d(),
            self.centers,
            self.c_sq,
            self.x_sq,
            self.half,
        );
        let mut out = PassOut::zero(k, self.p.d());
        let mut dist = vec![0.0; k];
        // Phase 1: move the bounds and keep the points they cannot settle, with their bound
        // `m`. Phase 2 reads the rows of those points only, fetching a few points ahead: they
        // are scattered, and waiting for each row in turn would leave the core idle.
        let mut todo: Vec<(u32, f64)> = Vec::new();
        match self.shift {
            Some(s) => {
                for t in 0..lab.len() {
                    let old = lab[t] as usize;
                    up[t] += s.by[old];
                    lo[t] -= if old == s.a1 { s.m2 } else { s.m1 };
                    let m = half[old].max(lo[t]);
                    if up[t] > m {
                        todo.push((t as u32, m));
                    } else if self.fresh {
                        accumulate(self.p, first + t, self.w[first + t], old, &mut out, 1.0);
                    }
                }
            }
            None => todo.extend((0..lab.len() as u32).map(|t| (t, f64::NEG_INFINITY))),
        }
        for (q, &(t, m)) in todo.iter().enumerate() {
            if let Some(&(ahead, _)) = todo.get(q + PREFETCH_AHEAD) {
                self.p.prefetch_row(first + ahead as usize);
            }
            let t = t as usize;
            let i = first + t;
            let old = lab[t] as usize;
            if self.shift.is_some() {
                up[t] = self
                    .p
                    .sqdist(i, &centers[old * d..(old + 1) * d], c_sq[old], x_sq)
                    .sqrt();
                if up[t] <= m {
                    if self.fresh {
                        accumulate(self.p, i, self.w[i], old, &mut out, 1.0);
                    }
                    continue;
                }
            }
            match *self.p {
                Points::Dense { x, .. } => {
                    sqeuclidean_many(&x[i * d..(i + 1) * d], centers, &mut dist);
                }
                Points::Sparse { .. } => {
                    for (c, dd) in dist.iter_mut().enumerate() {
                        *dd = self
                            .p
                            .sqdist(i, &centers[c * d..(c + 1) * d], c_sq[c], x_sq);
                    }
                }
            }
            let (mut b1, mut d1, mut d2) = (0usize, f64::INFINITY, f64::INFINITY);
            for (c, &dd) in dist.iter().enumerate() {
                if dd < d1 {
                    d2 = d1;
                    d1 = dd;
                    b1 = c;
                } else if dd < d2 {
                    d2 = dd;
                }
            }
            lab[t] = b1 as u32;
            up[t] = d1.sqrt();
            lo[t] = d2.sqrt();
            if self.fresh {
                accumulate(self.p, i, self.w[i], b1, &mut out, 1.0);
            }
            if b1 != old {
                out.changed += 1;
                if !self.fresh {
                    accumulate(self.p, i, self.w[i], old, &mut out, -1.0);
                    accumulate(self.p, i, self.w[i], b1, &mut out, 1.0);
                }
            }
        }
        out
    }
}

/// One assignment pass against `centers`, in fixed chunks reduced in chunk order.
///
/// With `shift`, Hamerly's bounds are first moved by the last centre update and points whose
/// bounds prove their centre unchanged are skipped without reading their row. With `fresh`,
/// the output holds the full per-cluster sums of the new labels; otherwise only the change
/// caused by points that moved (so skipped points cost a few bytes each).
#[allow(clippy::too_many_arguments)]
fn assign_pass(
    p: &Points<'_>,
    w: &[f64],
    centers: &[f64],
    k: usize,
    x_sq: &[f64],
    labels: &mut [u32],
    upper: &mut [f64],
    lower: &mut [f64],
    shift: Option<&Shift<'_>>,
    fresh: bool,
) -> PassOut {
    let d = p.d();
    let c_sq: Vec<f64> = centers
        .chunks(d.max(1))
        .map(|c| c.iter().map(|v| v * v).sum())
        .collect();
    // s(c): half the distance to the closest other centre.
    let mut half = vec![f64::INFINITY; k];
    if shift.is_some() {
        for a in 0..k {
            for b in a + 1..k {
                let dd = sqeuclidean(&centers[a * d..(a + 1) * d], &centers[b * d..(b + 1) * d])
                    .sqrt()
                    / 2.0;
                half[a] = half[a].min(dd);
                half[b] = half[b].min(dd);
            }
        }
    }
    let ctx = PassCtx {
        p,
        w,
        centers,
        k,
        x_sq,
        c_sq: &c_sq,
        half: &half,
        shift,
        fresh,
    };
    let parts: Vec<PassOut> = labels
        .par_chunks_mut(CHUNK)
        .zip(upper.par_chunks_mut(CHUNK))
        .zip(lower.par_chunks_mut(CHUNK))
        .enumerate()
        .map(|(ci, ((lab, up), lo))| ctx.chunk(ci * CHUNK, lab, up, lo))
        .collect();
    let mut total = PassOut::zero(k, d);
    for part in parts {
        total
            .sums
            .iter_mut()
            .zip(part.sums)
            .for_each(|(a, b)| *a += b);
        total
            .wsum
            .iter_mut()
            .zip(part.wsum)
            .for_each(|(a, b)| *a += b);
        total
            .count
            .iter_mut()
            .zip(part.count)
            .for_each(|(a, b)| *a += b);
        total.changed += part.changed;
    }
    total
}

/// One run from `centers`; returns `(centers, labels, inertia, n_iter)`.
///
/// The per-cluster sums are kept from pass to pass and only corrected for the points that
/// changed cluster; they are recomputed in full on the first pass and after an empty cluster
/// was relocated (the relocation moves a centre without moving a label, as scikit-learn does).
fn run_one(
    p: &Points<'_>,
    w: &[f64],
    mut centers: Vec<f64>,
    k: usize,
    max_iter: usize,
    tol: f64,
    ctl: &Control,
) -> TmResult<(Vec<f64>, Vec<u32>, f64, usize)> {
    let (n, d) = (p.n(), p.d());
    let dense = matches!(p, Points::Dense { .. });
    let x_sq = p.row_sq_norms();
    // u32::MAX: no label yet, so the first pass counts every point as changed.
    let mut labels = vec![u32::MAX; n];
    // Hamerly bounds (used for dense rows only): distances, not squared.
    let mut upper = vec![f64::INFINITY; n];
    let mut lower = vec![0.0f64; n];
    let mut sums = vec![0.0; k * d];
    let mut wsum = vec![0.0; k];
    let mut count = vec![0i64; k];
    let mut shift: Vec<f64> = Vec::new();
    let mut fresh = true;
    let mut strict = false;
    let mut it = 0;
    while it < max_iter {
        if it % 4 == 0 {
            ctl.check()?;
        }
        let sh = (dense && it > 0).then(|| Shift::new(&shift));
        let pass = assign_pass(
            p,
            w,
            &centers,
            k,
            &x_sq,
            &mut labels,
            &mut upper,
            &mut lower,
            sh.as_ref(),
            fresh,
        );
        if fresh {
            sums = pass.sums;
            wsum = pass.wsum;
            count = pass.count;
        } else {
            sums.iter_mut().zip(&pass.sums).for_each(|(a, b)| *a += b);
            wsum.iter_mut().zip(&pass.wsum).for_each(|(a, b)| *a += b);
            count.iter_mut().zip(&pass.count).for_each(|(a, b)| *a += b);
        }
        fresh = false;
        // Relocate empty clusters to the points farthest from their centres; the labels stay,
        // so the sums are recomputed on the next pass.
        let empty: Vec<usize> = (0..k).filter(|&c| count[c] == 0).collect();
        let (mut csum, mut cw) = (sums.clone(), wsum.clone());
        for &c in &empty {
            csum[c * d..(c + 1) * d].iter_mut().for_each(|v| *v = 0.0);
            cw[c] = 0.0;
        }
        if !empty.is_empty() {
            fresh = true;
            let c_sq: Vec<f64> = centers
                .chunks(d.max(1))
                .map(|c| c.iter().map(|v| v * v).sum())
                .collect();
            let dist: Vec<f64> = (0..n)
                .into_par_iter()
                .map(|i| {
                    let l = labels[i] as usize;
                    p.sqdist(i, &centers[l * d..(l + 1) * d], c_sq[l], &x_sq)
                })
                .collect();
            let mut order: Vec<usize> = (0..n).collect();
            order.sort_by(|&a, &b| dist[b].total_cmp(&dist[a]).then(a.cmp(&b)));
            let mut row = vec![0.0; d];
            for (t, &c) in empty.iter().enumerate() {
                let far = order[t];
                let old = labels[far] as usize;
                p.row_into(far, &mut row);
                for j in 0..d {
                    csum[old * d + j] -= w[far] * row[j];
                    csum[c * d + j] = w[far] * row[j];
                }
                cw[c] = w[far];
                cw[old] -= w[far];
            }
        }
        let mut new_centers = centers.clone();
        for c in 0..k {
            if cw[c] > 0.0 {
                for j in 0..d {
                    new_centers[c * d + j] = csum[c * d + j] / cw[c];
                }
            }
        }
        shift = (0..k)
            .map(|c| {
                sqeuclidean(
                    &centers[c * d..(c + 1) * d],
                    &new_centers[c * d..(c + 1) * d],
                )
                .sqrt()
            })
            .collect();
        centers = new_centers;
        it += 1;
        if it > 1 && pass.changed == 0 {
            strict = true;
            break;
        }
        let tot: f64 = shift.iter().map(|s| s * s).sum();
        if tot <= tol {
            break;
        }
    }
    if !strict {
        let sh = dense.then(|| Shift::new(&shift));
        assign_pass(
            p,
            w,
            &centers,
            k,
            &x_sq,
            &mut labels,
            &mut upper,
            &mut lower,
            sh.as_ref(),
            false,
        );
    }
    let inertia = inertia_of(p, w, &centers, &labels, &x_sq);
    Ok((centers, labels, inertia, it))
}

fn inertia_of(p: &Points<'_>, w: &[f64], centers: &[f64], labels: &[u32], x_sq: &[f64]) -> f64 {
    let d = p.d();
    let c_sq: Vec<f64> = centers
        .chunks(d.max(1))
        .map(|c| c.iter().map(|v| v * v).sum())
        .collect();
    let parts: Vec<f64> = (0..p.n().div_ceil(CHUNK))
        .into_par_iter()
        .map(|ci| {
            (ci * CHUNK..((ci + 1) * CHUNK).min(p.n()))
                .map(|i| {
                    let l = labels[i] as usize;
                    w[i] * p.sqdist(i, &centers[l * d..(l + 1) * d], c_sq[l], x_sq)
                })
                .sum::<f64>()
        })
        .collect();
    parts.iter().sum()
}

/// Fit k-means; see the module documentation.
pub fn fit(
    p: &Points<'_>,
    weights: Option<&[f64]>,
    params: &KMeansParams,
    ctl: &Control,
) -> TmResult<KMeansFit> {
    p.validate()?;
    let k = params.n_clusters;
    check_k(p, k)?;
    if params.max_iter == 0 {
        return Err(TmError::param(
            "max_iter",
            "max_iter must be at least 1; got 0",
        ));
    }
    if params.tol.is_nan() || params.tol < 0.0 {
        return Err(TmError::param(
            "tol",
            format!("tol must be >= 0; got {}", params.tol),
        ));
    }
    let w = check_weights(weights, p.n())?;
    let tol = if params.tol > 0.0 {
        params.tol * p.mean_variance()
    } else {
        0.0
    };
    let d = p.d();
    let runs = match &params.init {
        Init::Given(c) => {
            if c.len() != k * d {
                return Err(TmError::param(
                    "init",
                    format!("initial centres must be {k} x {d}; got {} values", c.len()),
                ));
            }
            if c.iter().any(|v| !v.is_finite()) {
                return Err(TmError::param("init", "initial centres must be finite"));
            }
            1
        }
        _ => params.n_init.max(1),
    };
    ctl.set_total(runs as u64);
    let mut seeder = Xoshiro256PlusPlus::seed_from_u64(params.seed);
    let mut best: Option<KMeansFit> = None;
    for _ in 0..runs {
        let s: u64 = seeder.random();
        let init = match &params.init {
            Init::Given(c) => c.clone(),
            Init::KMeansPlusPlus => kmeans_plusplus(p, &w, k, s),
            Init::Random => random_init(p, k, s),
        };
        let (centers, labels, inertia, n_iter) =
            run_one(p, &w, init, k, params.max_iter, tol, ctl)?;
        if best.as_ref().is_none_or(|b| inertia < b.inertia) {
            best = Some(KMeansFit {
                centers,
                labels,
                inertia,
                n_iter,
            });
        }
        ctl.advance(1);
    }
    best.ok_or_else(|| TmError::Internal {
        message: "internal error: no k-means run was made".into(),
    })
}

/// The closest centre of each point and the weighted inertia.
pub fn predict(
    p: &Points<'_>,
    centers: &[f64],
    weights: Option<&[f64]>,
) -> TmResult<(Vec<u32>, f64)> {
    p.validate()?;
    let d = p.d();
    if d == 0 || centers.len() % d != 0 || centers.is_empty() {
        return Err(TmError::param(
            "X",
            format!(
                "the data has {d} features but the centres were fitted on {} values",
                centers.len()
            ),
        ));
    }
    let k = centers.len() / d;
    let w = check_weights(weights, p.n())?;
    let x_sq = p.row_sq_norms();
    let c_sq: Vec<f64> = centers
        .chunks(d)
        .map(|c| c.iter().map(|v| v * v).sum())
        .collect();
    let labels: Vec<u32> = (0..p.n())
        .into_par_iter()
        .with_min_len(CHUNK)
        .map(|i| {
            let mut best = (f64::INFINITY, 0u32);
            for c in 0..k {
                let dd = p.sqdist(i, &centers[c * d..(c + 1) * d], c_sq[c], &x_sq);
                if dd < best.0 {
                    best = (dd, c as u32);
                }
            }
            best.1
        })
        .collect();
    let inertia = inertia_of(p, &w, centers, &labels, &x_sq);
    Ok((labels, inertia))
}

#[cfg(test)]
mod tests {
    use super::*;

    // X6: the toy data of scikit-learn's KMeans documentation (reference notes, section B).
    const X6: [f64; 12] = [1., 2., 1., 4., 1., 0., 10., 2., 10., 4., 10., 0.];

    #[test]
    fn toy_data_two_clusters() {
        let p = Points::Dense { x: &X6, n: 6, d: 2 };
        let f = fit(
            &p,
            None,
            &KMeansParams {
                n_clusters: 2,
                n_init: 4,
                ..Default::default()
            },
            &Control::new(),
        )
        .unwrap();
        // inertia 16.0, centres (1,2) and (10,2) [reference notes, calc]
        approx::assert_abs_diff_eq!(f.inertia, 16.0, epsilon = 1e-12);
        assert_eq!(f.labels[0], f.labels[1]);
        assert_ne!(f.labels[0], f.labels[3]);
    }

    #[test]
    fn sparse_equals_dense_and_weights_replicate() {
        let p = Points::Dense { x: &X6, n: 6, d: 2 };
        let init = Init::Given(vec![1., 2., 1., 4.]);
        let params = KMeansParams {
            n_clusters: 2,
            init: init.clone(),
            ..Default::default()
        };
        let a = fit(&p, None, &params, &Control::new()).unwrap();
        let mut indptr = vec![0i64];
        let (mut idx, mut dat) = (vec![], vec![]);
        for r in 0..6 {
            for c in 0..2 {
                if X6[r * 2 + c] != 0.0 {
                    idx.push(c as i32);
                    dat.push(X6[r * 2 + c]);
                }
            }
            indptr.push(idx.len() as i64);
        }
        let s = Points::Sparse {
            indptr: &indptr,
            indices: &idx,
            data: &dat,
            n: 6,
            d: 2,
        };
        let b = fit(&s, None, &params, &Control::new()).unwrap();
        assert_eq!(a.labels, b.labels);
        approx::assert_abs_diff_eq!(a.inertia, b.inertia, epsilon = 1e-9);
        // Weight 2 on a point equals that point twice.
        let w = [2.0, 1., 1., 1., 1., 1.];
        let c = fit(&p, Some(&w), &params, &Control::new()).unwrap();
        let mut x7 = X6.to_vec();
        x7.extend_from_slice(&[1., 2.]);
        let p7 = Points::Dense { x: &x7, n: 7, d: 2 };
        let e = fit(&p7, None, &params, &Control::new()).unwrap();
        approx::assert_abs_diff_eq!(c.inertia, e.inertia, epsilon = 1e-9);
    }

    #[test]
    fn bad_input_is_refused() {
        let x = [1.0, 1.0, 1.0, 1.0];
        let p = Points::Dense { x: &x, n: 2, d: 2 };
        let e = fit(
            &p,
            None,
            &KMeansParams {
                n_clusters: 2,
                ..Default::default()
            },
            &Control::new(),
        )
        .unwrap_err();
        assert!(e.to_string().contains("distinct points (1"), "{e}");
        let x = [1.0, f64::INFINITY];
        let p = Points::Dense { x: &x, n: 1, d: 2 };
        let e = fit(
            &p,
            None,
            &KMeansParams {
                n_clusters: 1,
                ..Default::default()
            },
            &Control::new(),
        )
        .unwrap_err();
        assert!(e.to_string().contains("column 1"), "{e}");
    }

    #[test]
    fn hamerly_equals_lloyd() {
        // Lloyd by brute force on a seeded random data set; Hamerly's bounds must not change
        // the labels (Hamerly 2010: exact acceleration).
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(7);
        let (n, d, k) = (3000, 5, 6);
        let x: Vec<f64> = (0..n * d).map(|_| rng.random::<f64>()).collect();
        let p = Points::Dense { x: &x, n, d };
        let init = x[..k * d].to_vec();
        let f = fit(
            &p,
            None,
            &KMeansParams {
                n_clusters: k,
                init: Init::Given(init.clone()),
                tol: 0.0,
                max_iter: 50,
                ..Default::default()
            },
            &Control::new(),
        )
        .unwrap();
        let mut c = init;
        let mut lab = vec![0usize; n];
        for _ in 0..f.n_iter {
            for i in 0..n {
                lab[i] = (0..k)
                    .min_by(|&a, &b| {
                        sqeuclidean(&x[i * d..(i + 1) * d], &c[a * d..(a + 1) * d])
                            .total_cmp(&sqeuclidean(&x[i * d..(i + 1) * d], &c[b * d..(b + 1) * d]))
                    })
                    .unwrap();
            }
            let mut s = vec![0.0; k * d];
            let mut m = vec![0.0; k];
            for i in 0..n {
                m[lab[i]] += 1.0;
                for j in 0..d {
                    s[lab[i] * d + j] += x[i * d + j];
                }
            }
            for a in 0..k {
                for j in 0..d {
                    c[a * d + j] = s[a * d + j] / m[a];
                }
            }
        }
        // Labels for the final centres (equal to the last ones after strict convergence).
        for i in 0..n {
            lab[i] = (0..k)
                .min_by(|&a, &b| {
                    sqeuclidean(&x[i * d..(i + 1) * d], &c[a * d..(a + 1) * d])
                        .total_cmp(&sqeuclidean(&x[i * d..(i + 1) * d], &c[b * d..(b + 1) * d]))
                })
                .unwrap();
        }
        let lab32: Vec<u32> = lab.iter().map(|&v| v as u32).collect();
        let same = f.labels.iter().zip(&lab32).filter(|(a, b)| a == b).count();
        assert_eq!(same, n, "Hamerly and Lloyd labels differ");
    }
}
