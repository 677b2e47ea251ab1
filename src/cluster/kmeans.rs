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
use crate::distance::sqeuclidean;
use crate::error::{TmError, TmResult};

const CHUNK: usize = 2048;

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

    /// Squared distance of row `i` to `c`, given `|c|^2` (used for sparse rows).
    #[inline]
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

    /// Per-column unweighted variance, averaged over columns.
    fn mean_variance(&self) -> f64 {
        let (n, d) = (self.n(), self.d());
        if n == 0 || d == 0 {
            return 0.0;
        }
        let mut sum = vec![0.0; d];
        let mut sq = vec![0.0; d];
        let mut row = vec![0.0; d];
        for i in 0..n {
            self.row_into(i, &mut row);
            for j in 0..d {
                sum[j] += row[j];
            }
        }
        let mean: Vec<f64> = sum.iter().map(|s| s / n as f64).collect();
        for i in 0..n {
            self.row_into(i, &mut row);
            for j in 0..d {
                let t = row[j] - mean[j];
                sq[j] += t * t;
            }
        }
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

/// Weighted sums and weights per cluster, reduced chunk by chunk in order.
fn cluster_sums(p: &Points<'_>, w: &[f64], labels: &[u32], k: usize) -> (Vec<f64>, Vec<f64>) {
    let (n, d) = (p.n(), p.d());
    let parts: Vec<(Vec<f64>, Vec<f64>)> = (0..n.div_ceil(CHUNK))
        .into_par_iter()
        .map(|ci| {
            let mut s = vec![0.0; k * d];
            let mut ws = vec![0.0; k];
            for i in ci * CHUNK..((ci + 1) * CHUNK).min(n) {
                let l = labels[i] as usize;
                ws[l] += w[i];
                match *p {
                    Points::Dense { x, .. } => {
                        let row = &x[i * d..(i + 1) * d];
                        for (a, b) in s[l * d..(l + 1) * d].iter_mut().zip(row) {
                            *a += w[i] * b;
                        }
                    }
                    Points::Sparse {
                        indptr,
                        indices,
                        data,
                        ..
                    } => {
                        for q in indptr[i] as usize..indptr[i + 1] as usize {
                            s[l * d + indices[q] as usize] += w[i] * data[q];
                        }
                    }
                }
            }
            (s, ws)
        })
        .collect();
    let mut s = vec![0.0; k * d];
    let mut ws = vec![0.0; k];
    for (ps, pw) in parts {
        s.iter_mut().zip(ps).for_each(|(a, b)| *a += b);
        ws.iter_mut().zip(pw).for_each(|(a, b)| *a += b);
    }
    (s, ws)
}

/// One run from `centers`; returns `(centers, labels, inertia, n_iter)`.
#[allow(clippy::too_many_lines)]
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
    let mut labels = vec![0u32; n];
    let mut labels_old = vec![u32::MAX; n];
    // Hamerly bounds (dense only): distances, not squared.
    let mut upper = vec![f64::INFINITY; n];
    let mut lower = vec![0.0f64; n];
    let mut strict = false;
    let mut it = 0;

    // One assignment step against `centers`; returns nothing, updates labels (and bounds).
    let assign = |centers: &[f64],
                  labels: &mut [u32],
                  upper: &mut [f64],
                  lower: &mut [f64],
                  use_bounds: bool| {
        let c_sq: Vec<f64> = centers
            .chunks(d.max(1))
            .map(|c| c.iter().map(|v| v * v).sum())
            .collect();
        // s(c): half the distance to the closest other centre.
        let mut half = vec![f64::INFINITY; k];
        if use_bounds {
            for a in 0..k {
                for b in 0..k {
                    if a != b {
                        let dd =
                            sqeuclidean(&centers[a * d..(a + 1) * d], &centers[b * d..(b + 1) * d])
                                .sqrt();
                        half[a] = half[a].min(dd / 2.0);
                    }
                }
            }
        }
        labels
            .par_chunks_mut(CHUNK)
            .zip(upper.par_chunks_mut(CHUNK))
            .zip(lower.par_chunks_mut(CHUNK))
            .enumerate()
            .for_each(|(ci, ((lab, up), lo))| {
                for t in 0..lab.len() {
                    let i = ci * CHUNK + t;
                    if use_bounds {
                        let a = lab[t] as usize;
                        let m = half[a].max(lo[t]);
                        if up[t] <= m {
                            continue;
                        }
                        up[t] = p
                            .sqdist(i, &centers[a * d..(a + 1) * d], c_sq[a], &x_sq)
                            .sqrt();
                        if up[t] <= m {
                            continue;
                        }
                    }
                    let (mut b1, mut d1, mut d2) = (0usize, f64::INFINITY, f64::INFINITY);
                    for c in 0..k {
                        let dd = p.sqdist(i, &centers[c * d..(c + 1) * d], c_sq[c], &x_sq);
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
                }
            });
    };

    while it < max_iter {
        if it % 4 == 0 {
            ctl.check()?;
        }
        assign(
            &centers,
            &mut labels,
            &mut upper,
            &mut lower,
            dense && it > 0,
        );
        let (mut sums, mut wsum) = cluster_sums(p, w, &labels, k);
        // Relocate empty clusters to the points farthest from their centres.
        let empty: Vec<usize> = (0..k).filter(|&c| wsum[c] == 0.0).collect();
        if !empty.is_empty() {
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
                    sums[old * d + j] -= w[far] * row[j];
                    sums[c * d + j] = w[far] * row[j];
                }
                wsum[c] = w[far];
                wsum[old] -= w[far];
            }
        }
        let mut new_centers = centers.clone();
        for c in 0..k {
            if wsum[c] > 0.0 {
                for j in 0..d {
                    new_centers[c * d + j] = sums[c * d + j] / wsum[c];
                }
            }
        }
        let shift: Vec<f64> = (0..k)
            .map(|c| {
                sqeuclidean(
                    &centers[c * d..(c + 1) * d],
                    &new_centers[c * d..(c + 1) * d],
                )
                .sqrt()
            })
            .collect();
        if dense {
            // Largest and second-largest shift, so each point subtracts the largest shift of
            // a centre other than its own.
            let (mut m1, mut m2, mut a1) = (0.0f64, 0.0f64, usize::MAX);
            for (c, &s) in shift.iter().enumerate() {
                if s > m1 {
                    m2 = m1;
                    m1 = s;
                    a1 = c;
                } else if s > m2 {
                    m2 = s;
                }
            }
            upper
                .par_iter_mut()
                .zip(lower.par_iter_mut())
                .zip(labels.par_iter())
                .with_min_len(CHUNK)
                .for_each(|((u, l), &lab)| {
                    let lab = lab as usize;
                    *u += shift[lab];
                    *l -= if lab == a1 { m2 } else { m1 };
                });
        }
        centers = new_centers;
        it += 1;
        if labels == labels_old {
            strict = true;
            break;
        }
        let tot: f64 = shift.iter().map(|s| s * s).sum();
        if tot <= tol {
            break;
        }
        labels_old.copy_from_slice(&labels);
    }
    if !strict {
        assign(
            &centers,
            &mut labels,
            &mut upper,
            &mut lower,
            dense && it > 0,
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
    let tol = params.tol * p.mean_variance();
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
