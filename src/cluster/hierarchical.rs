//! Agglomerative (hierarchical) clustering with the seven classic linkages.
//!
//! Start with every point as its own cluster and merge the two closest clusters until one is
//! left. The **linkage** says how far apart two clusters are; after merging `i` and `j`, the
//! distance to any other cluster `k` follows the Lance–Williams update (Lance and Williams
//! 1967, Computer Journal 9(4):373–380)
//!
//! ```text
//! d(k, i+j) = a_i d(k,i) + a_j d(k,j) + b d(i,j) + g |d(k,i) - d(k,j)|
//! ```
//!
//! | linkage | a_i | a_j | b | g |
//! |---|---|---|---|---|
//! | single | 1/2 | 1/2 | 0 | -1/2 |
//! | complete | 1/2 | 1/2 | 0 | 1/2 |
//! | average (UPGMA) | n_i/n_ij | n_j/n_ij | 0 | 0 |
//! | weighted (WPGMA) | 1/2 | 1/2 | 0 | 0 |
//! | centroid (UPGMC) | n_i/n_ij | n_j/n_ij | -n_i n_j/n_ij^2 | 0 |
//! | median (WPGMC) | 1/2 | 1/2 | -1/4 | 0 |
//! | ward | (n_i+n_k)/N | (n_j+n_k)/N | -n_k/N | 0 |
//!
//! (centroid, median and Ward on squared Euclidean distances; heights are reported as square
//! roots, Ward's as `sqrt(2 * increase of the within-cluster sum of squares)`, Ward 1963, JASA
//! 58:236–244).
//!
//! **Algorithms** (Müllner 2011, "Modern hierarchical, agglomerative clustering algorithms",
//! arXiv:1109.2378):
//!
//! * from a condensed distance matrix (any metric, `O(n^2)` memory): the minimum spanning tree
//!   for single linkage, the nearest-neighbour chain for the reducible linkages (complete,
//!   average, weighted, Ward) and Müllner's generic algorithm for centroid and median, through
//!   the `kodama` crate (a port of Müllner's fastcluster);
//! * from raw vectors for Ward (`O(n d)` memory): the nearest-neighbour chain over cluster
//!   centroids and sizes. Ward's distance between clusters `A` and `B` is
//!   `d(A,B)^2 = 2 n_A n_B / (n_A + n_B) * ||c_A - c_B||^2`. Grow a chain whose next element is
//!   the nearest neighbour of its top (ties: the chain's previous element, then the smallest
//!   index); when the top and the previous element are reciprocal nearest neighbours, merge
//!   them. Ward is *reducible* (`d(A∪B, C) >= min(d(A,C), d(B,C))`), so merging a reciprocal
//!   pair never invalidates the rest of the chain, and the merges found are those of the
//!   greedy algorithm, only in another order: sorting them by height gives the dendrogram.
//!   Each nearest-neighbour search scans the active centroids, in parallel for many clusters;
//!   `O(n)` searches of `O(n d)` each (Müllner 2011, section 3.2; Murtagh 1983, Computer
//!   Journal 26(4):354–359, for the chain);
//! * from raw vectors for centroid and median (`O(n d)` memory, not reducible): Müllner's generic
//!   algorithm over cluster centroids. Each cluster keeps a candidate nearest neighbour among the
//!   clusters of larger index and a lower bound on that distance; a merge updates candidates
//!   with one parallel pass over the active clusters, and stale candidates are recomputed
//!   lazily when they reach the front. Distances between clusters are computed from centroids
//!   and sizes, never stored.
//!
//! **Output** is scipy's linkage matrix: row `r` is `[id1, id2, height, size]` with
//! `id1 < id2`, ids `< n` the points and `n + r` the cluster made in row `r`, rows in order of
//! non-decreasing height (merge order for centroid and median, which can invert). `scipy.cluster.hierarchy.dendrogram` and `fcluster` accept it. With
//! tied heights the row order may differ from scipy's while the partitions are the same.

use rayon::prelude::*;

use crate::control::Control;
use crate::distance::{check_condensed, sqeuclidean, sqeuclidean_many};
use crate::error::{TmError, TmResult};

/// A linkage method.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Linkage {
    /// Minimum distance.
    Single,
    /// Maximum distance.
    Complete,
    /// Mean distance (UPGMA).
    Average,
    /// WPGMA.
    Weighted,
    /// Ward's minimum variance.
    Ward,
    /// Distance between centroids (UPGMC).
    Centroid,
    /// Distance between WPGMC centres.
    Median,
}

impl Linkage {
    /// Parse a linkage name.
    pub fn parse(s: &str) -> TmResult<Linkage> {
        Ok(match s {
            "single" => Linkage::Single,
            "complete" => Linkage::Complete,
            "average" => Linkage::Average,
            "weighted" => Linkage::Weighted,
            "ward" => Linkage::Ward,
            "centroid" => Linkage::Centroid,
            "median" => Linkage::Median,
            _ => {
                return Err(TmError::param(
                    "linkage",
                    format!(
                        "linkage must be one of 'single', 'complete', 'average', 'weighted', \
                         'ward', 'centroid', 'median'; got '{s}'"
                    ),
                ))
            }
        })
    }

    /// Whether the method is defined on Euclidean geometry (needs vectors or Euclidean input).
    pub fn is_geometric(self) -> bool {
        matches!(self, Linkage::Ward | Linkage::Centroid | Linkage::Median)
    }

    fn kodama(self) -> kodama::Method {
        match self {
            Linkage::Single => kodama::Method::Single,
            Linkage::Complete => kodama::Method::Complete,
            Linkage::Average => kodama::Method::Average,
            Linkage::Weighted => kodama::Method::Weighted,
            Linkage::Ward => kodama::Method::Ward,
            Linkage::Centroid => kodama::Method::Centroid,
            Linkage::Median => kodama::Method::Median,
        }
    }
}

/// Raw merge steps `(slot_a, slot_b, height, size)` to scipy's layout: stable sort by height,
/// then relabel with a union–find so that the cluster made in row `r` is `n + r`.
fn to_scipy(n: usize, mut steps: Vec<(usize, usize, f64, usize)>, sort: bool) -> Vec<f64> {
    // Centroid and median linkage can produce inversions (a merge lower than an earlier one):
    // their rows stay in merge order, as scipy keeps them.
    if sort {
        steps.sort_by(|a, b| a.2.total_cmp(&b.2));
    }
    let mut parent: Vec<usize> = (0..2 * n).collect();
    let mut label: Vec<usize> = (0..n).collect(); // label of the root of each slot's set
    fn find(p: &mut [usize], mut x: usize) -> usize {
        while p[x] != x {
            p[x] = p[p[x]];
            x = p[x];
        }
        x
    }
    let mut out = Vec::with_capacity(4 * steps.len());
    label.resize(2 * n, 0);
    for (r, (a, b, h, size)) in steps.into_iter().enumerate() {
        let ra = find(&mut parent, a);
        let rb = find(&mut parent, b);
        let (la, lb) = (label[ra], label[rb]);
        out.extend_from_slice(&[la.min(lb) as f64, la.max(lb) as f64, h, size as f64]);
        parent[ra] = rb;
        label[rb] = n + r;
    }
    out
}

/// Linkage from a condensed distance vector of `n` points. Returns the `(n - 1) x 4` matrix
/// (row-major). For Ward, centroid and median the distances must be Euclidean.
pub fn linkage_condensed(
    cond: &[f64],
    n: usize,
    method: Linkage,
    ctl: &Control,
) -> TmResult<Vec<f64>> {
    check_condensed(cond, n)?;
    if n < 2 {
        return Err(TmError::data(format!(
            "hierarchical clustering needs at least 2 points; got {n}"
        )));
    }
    ctl.check()?;
    let mut m = cond.to_vec();
    let dend = kodama::linkage(&mut m, n, method.kodama());
    ctl.check()?;
    let steps: Vec<(usize, usize, f64, usize)> = dend
        .steps()
        .iter()
        .map(|s| (s.cluster1, s.cluster2, s.dissimilarity, s.size))
        .collect();
    // kodama labels clusters like scipy (new cluster = n + step); map them to slots first.
    let mut slot_of = (0..n).collect::<Vec<usize>>();
    let mut raw = Vec::with_capacity(steps.len());
    for (a, b, h, size) in steps {
        let (sa, sb) = (slot_of[a], slot_of[b]);
        raw.push((sa, sb, h, size));
        slot_of.push(sa.max(sb));
    }
    Ok(to_scipy(
        n,
        raw,
        !matches!(method, Linkage::Centroid | Linkage::Median),
    ))
}

/// Ward, centroid or median linkage straight from vectors (`n x d`, row-major) in `O(n d)`
/// memory: the nearest-neighbour chain for Ward, Müllner's generic algorithm for centroid and
/// median. See the module documentation.
pub fn linkage_vectors(
    x: &[f64],
    n: usize,
    d: usize,
    method: Linkage,
    ctl: &Control,
) -> TmResult<Vec<f64>> {
    crate::distance::check_features(x, n, d)?;
    if !method.is_geometric() {
        return Err(TmError::param(
            "linkage",
            format!("linkage from vectors without a distance matrix supports 'ward', 'centroid' and 'median'; got {method:?}"),
        ));
    }
    if n < 2 {
        return Err(TmError::data(format!(
            "hierarchical clustering needs at least 2 points; got {n}"
        )));
    }
    if method == Linkage::Ward {
        ward_nn_chain(x, n, d, ctl)
    } else {
        generic_vectors(x, n, d, method, ctl)
    }
}

/// Smaller of two `(distance, index)` candidates: smaller distance, then smaller index.
#[inline]
fn better(p: (f64, usize), q: (f64, usize)) -> (f64, usize) {
    if q.0 < p.0 || (q.0 == p.0 && q.1 < p.1) {
        q
    } else {
        p
    }
}

/// One nearest-neighbour search of the chain: the active cluster closest to the chain's top
/// (at dense position `pt`) by Ward's distance, among dense positions `lo..hi`.
struct WardScan<'a> {
    ct: &'a [f64],
    cen: &'a [f64],
    d: usize,
    wt: &'a [f64],
    iw: &'a [f64],
    slot: &'a [usize],
    wtop: f64,
    iwt: f64,
    pt: usize,
    v_prev: f64,
}

impl WardScan<'_> {
    /// `(distance^2, slot)` of the nearest; compiled for AVX2 when the CPU has it (the
    /// arithmetic is the same either way).
    fn run(&self, lo: usize, hi: usize) -> (f64, usize) {
        #[cfg(target_arch = "x86_64")]
        if std::arch::is_x86_feature_detected!("avx2") {
            // SAFETY: the CPU supports AVX2, checked just above.
            return unsafe { self.run_avx2(lo, hi) };
        }
        self.run_body(lo, hi)
    }

    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2")]
    fn run_avx2(&self, lo: usize, hi: usize) -> (f64, usize) {
        self.run_body(lo, hi)
    }

    #[inline(always)]
    fn run_body(&self, lo: usize, hi: usize) -> (f64, usize) {
        let d = self.d;
        let mut best = (f64::INFINITY, usize::MAX);
        // Ward distance > bound  <=>  ||c_t - c_p||^2 > bound (1/n_t + 1/n_p) / 2; the test
        // is widened by a relative 1e-12 so that rounding never drops a candidate. The bound
        // starts at the chain's previous element (top was pushed as its nearest neighbour).
        let mut half = self.v_prev * (0.5 + 1e-12);
        // Called only for candidates within the bound (few): the test is inlined below.
        let consider = |p: usize, dd: f64, best: &mut (f64, usize), half: &mut f64| {
            if p == self.pt {
                return;
            }
            let w = self.wt[p];
            let v = 2.0 * self.wtop * w / (self.wtop + w) * dd;
            if v < best.0 || (v == best.0 && self.slot[p] < best.1) {
                *best = (v, self.slot[p]);
                *half = half.min(v * (0.5 + 1e-12));
            }
        };
        // Four candidates at a time: independent sums, all of the vector (no early exit,
        // whose branches cost more than the few values they would skip).
        let mut dd4 = [0.0f64; 4];
        let mut p = lo;
        while p + 4 <= hi {
            sqeuclidean_many(self.ct, &self.cen[p * d..(p + 4) * d], &mut dd4);
            for (q, &dd) in dd4.iter().enumerate() {
                if dd <= half * (self.iwt + self.iw[p + q]) {
                    consider(p + q, dd, &mut best, &mut half);
                }
            }
            p += 4;
        }
        for p in p..hi {
            let dd = sqeuclidean(self.ct, &self.cen[p * d..(p + 1) * d]);
            if dd <= half * (self.iwt + self.iw[p]) {
                consider(p, dd, &mut best, &mut half);
            }
        }
        best
    }
}

/// Ward linkage from vectors with the nearest-neighbour chain (see the module documentation).
/// Active clusters are kept densely packed (centroids, sizes, slot ids) so that each search is
/// one contiguous scan; slots are the ids of `to_scipy`.
fn ward_nn_chain(x: &[f64], n: usize, d: usize, ctl: &Control) -> TmResult<Vec<f64>> {
    // Below this many active clusters a search runs on one thread.
    const PAR_MIN: usize = 2048;
    const CHUNK: usize = 1024;
    let mut cen = x.to_vec(); // centroid of the cluster at dense position p
    let mut wt = vec![1.0f64; n]; // its size
    let mut iw = vec![1.0f64; n]; // 1 / size
    let mut slot: Vec<usize> = (0..n).collect(); // its slot
    let mut pos: Vec<usize> = (0..n).collect(); // dense position of each active slot
    let mut height_of = vec![0.0f64; n]; // height of the latest merge into each slot
    let mut steps = Vec::with_capacity(n - 1);
    let mut chain: Vec<usize> = Vec::with_capacity(n); // slots
    let mut searches = 0usize;
    ctl.set_total((n - 1) as u64);
    while steps.len() < n - 1 {
        let m = slot.len();
        if chain.is_empty() {
            chain.push(slot[0]);
        }
        let top = chain[chain.len() - 1];
        let prev = (chain.len() >= 2).then(|| chain[chain.len() - 2]);
        let pt = pos[top];
        // Nearest neighbour of `top` among the other active clusters: (distance^2, slot).
        let (ct, wtop) = (&cen[pt * d..(pt + 1) * d], wt[pt]);
        let ward = |p: usize| {
            let w = wt[p];
            2.0 * wtop * w / (wtop + w) * sqeuclidean(ct, &cen[p * d..(p + 1) * d])
        };
        // The nearest neighbour is at most as far as the chain's previous element (top was
        // pushed as its nearest neighbour): a bound for the early exit from the start.
        let v_prev = prev.map_or(f64::INFINITY, |pv| ward(pos[pv]));
        let iwt = 1.0 / wtop;
        let scan = |lo: usize, hi: usize| -> (f64, usize) {
            let q = WardScan {
                ct,
                cen: &cen,
                d,
                wt: &wt,
                iw: &iw,
                slot: &slot,
                wtop,
                iwt,
                pt,
                v_prev,
            };
            q.run(lo, hi)
        };
        let mut best = if m < PAR_MIN {
            scan(0, m)
        } else {
            (0..m.div_ceil(CHUNK))
                .into_par_iter()
                .map(|c| scan(c * CHUNK, ((c + 1) * CHUNK).min(m)))
                .reduce(|| (f64::INFINITY, usize::MAX), better)
        };
        if let Some(pv) = prev {
            // Prefer the chain's previous element on ties; the scan saw it, so its distance
            // can only equal the minimum, never undercut it.
            if v_prev <= best.0 {
                best = (v_prev, pv);
            }
        }
        searches += 1;
        if searches % 256 == 0 {
            ctl.check()?;
        }
        if best.1 == usize::MAX || !best.0.is_finite() {
            return Err(TmError::data(
                "Ward linkage met a non-finite distance; the vectors must be finite and not so \
                 large that their squared differences overflow",
            ));
        }
        if Some(best.1) != prev {
            chain.push(best.1);
            continue;
        }
        // Reciprocal nearest neighbours: merge them into the larger slot.
        chain.truncate(chain.len() - 2);
        let (a, b) = (top.min(best.1), top.max(best.1));
        let (pa, pb) = (pos[a], pos[b]);
        let (na, nb) = (wt[pa], wt[pb]);
        for j in 0..d {
            let (ca, cb) = (cen[pa * d + j], cen[pb * d + j]);
            cen[pb * d + j] = (na * ca + nb * cb) / (na + nb);
        }
        wt[pb] = na + nb;
        iw[pb] = 1.0 / (na + nb);
        // Ward heights are monotone; rounding could only make a merge a hair lower than the
        // merges it contains, which would break the sorted layout: keep it at least as high.
        let h = best.0.sqrt().max(height_of[a]).max(height_of[b]);
        height_of[b] = h;
        steps.push((a, b, h, (na + nb) as usize));
        // Remove `a` from the dense arrays (swap with the last one).
        let last = m - 1;
        if pa != last {
            let (head, tail) = cen.split_at_mut(last * d);
            head[pa * d..(pa + 1) * d].copy_from_slice(&tail[..d]);
            wt[pa] = wt[last];
            iw[pa] = iw[last];
            slot[pa] = slot[last];
            pos[slot[pa]] = pa;
        }
        cen.truncate(last * d);
        wt.truncate(last);
        iw.truncate(last);
        slot.truncate(last);
        ctl.advance(1);
    }
    ctl.check()?;
    Ok(to_scipy(n, steps, true))
}

/// Centroid or median linkage (also Ward, for checks) from vectors with Müllner's generic
/// algorithm. See the module documentation.
#[allow(clippy::too_many_lines)]
fn generic_vectors(
    x: &[f64],
    n: usize,
    d: usize,
    method: Linkage,
    ctl: &Control,
) -> TmResult<Vec<f64>> {
    let mut cen = x.to_vec();
    let mut size = vec![1usize; n];
    let mut active = vec![true; n];
    // Dissimilarity on the method's scale (squared for centroid/median, Ward's increase * 2).
    let dis = |cen: &[f64], size: &[usize], a: usize, b: usize| -> f64 {
        let dd = sqeuclidean(&cen[a * d..(a + 1) * d], &cen[b * d..(b + 1) * d]);
        match method {
            Linkage::Ward => {
                let (na, nb) = (size[a] as f64, size[b] as f64);
                2.0 * na * nb / (na + nb) * dd
            }
            _ => dd,
        }
    };
    // Candidate nearest neighbour among larger indices: (mindist, nghbr).
    let nearest_above = |cen: &[f64], size: &[usize], active: &[bool], a: usize| -> (f64, usize) {
        let scan = |lo: usize, hi: usize| {
            let mut best = (f64::INFINITY, usize::MAX);
            for (b, _) in active.iter().enumerate().take(hi).skip(lo).filter(|p| *p.1) {
                let v = dis(cen, size, a, b);
                if v < best.0 {
                    best = (v, b);
                }
            }
            best
        };
        let len = n - a - 1;
        if len < 4096 {
            scan(a + 1, n)
        } else {
            let step = 2048;
            (a + 1..n)
                .step_by(step)
                .collect::<Vec<_>>()
                .into_par_iter()
                .map(|lo| scan(lo, (lo + step).min(n)))
                .reduce(
                    || (f64::INFINITY, usize::MAX),
                    |p, q| {
                        if q.0 < p.0 || (q.0 == p.0 && q.1 < p.1) {
                            q
                        } else {
                            p
                        }
                    },
                )
        }
    };
    let init: Vec<(f64, usize)> = (0..n - 1)
        .into_par_iter()
        .map(|a| {
            let mut best = (f64::INFINITY, usize::MAX);
            for b in a + 1..n {
                let v = sqeuclidean(&x[a * d..(a + 1) * d], &x[b * d..(b + 1) * d]);
                if v < best.0 {
                    best = (v, b);
                }
            }
            best
        })
        .collect();
    let mut mindist: Vec<f64> = init.iter().map(|p| p.0).collect();
    let mut nghbr: Vec<usize> = init.iter().map(|p| p.1).collect();
    mindist.push(f64::INFINITY);
    nghbr.push(usize::MAX);
    let mut steps = Vec::with_capacity(n - 1);
    ctl.set_total((n - 1) as u64);
    for step in 0..n - 1 {
        if step % 64 == 0 {
            ctl.check()?;
        }
        // Front of the queue: smallest mindist among active clusters (ties: smallest index).
        let (mut a, mut b, mut delta);
        loop {
            let (da, ia) = mindist
                .par_iter()
                .enumerate()
                .with_min_len(4096)
                .filter(|(i, _)| active[*i])
                .map(|(i, &v)| (v, i))
                .reduce(
                    || (f64::INFINITY, usize::MAX),
                    |p, q| {
                        if q.0 < p.0 || (q.0 == p.0 && q.1 < p.1) {
                            q
                        } else {
                            p
                        }
                    },
                );
            a = ia;
            b = nghbr[a];
            delta = da;
            if b != usize::MAX && active[b] && dis(&cen, &size, a, b) == delta {
                break;
            }
            let (v, nb) = nearest_above(&cen, &size, &active, a);
            mindist[a] = v;
            nghbr[a] = nb;
        }
        let height = delta.sqrt();
        let (na, nb) = (size[a] as f64, size[b] as f64);
        // New cluster lives in slot b (> a).
        for j in 0..d {
            let (ca, cb) = (cen[a * d + j], cen[b * d + j]);
            cen[b * d + j] = match method {
                Linkage::Median => 0.5 * (ca + cb),
                _ => (na * ca + nb * cb) / (na + nb),
            };
        }
        size[b] += size[a];
        active[a] = false;
        mindist[a] = f64::INFINITY;
        steps.push((a, b, height, size[b]));
        // Update candidates of the clusters below b.
        let upd: Vec<(usize, f64)> = (0..b)
            .into_par_iter()
            .with_min_len(1024)
            .filter(|&x| active[x])
            .filter_map(|x| {
                let v = dis(&cen, &size, x, b);
                if v < mindist[x] || nghbr[x] == b {
                    Some((x, v))
                } else {
                    None
                }
            })
            .collect();
        for (x, v) in upd {
            if v < mindist[x] {
                mindist[x] = v;
                nghbr[x] = b;
            } else if nghbr[x] == b && v > mindist[x] {
                // Distance grew: mindist stays a lower bound, refreshed lazily.
            }
        }
        // Clusters whose candidate was a now point at b (a lower bound remains valid only
        // lazily; the check at the front recomputes it).
        for x in 0..a {
            if active[x] && nghbr[x] == a {
                nghbr[x] = b;
            }
        }
        if b < n - 1 {
            let (v, nbb) = nearest_above(&cen, &size, &active, b);
            mindist[b] = v;
            nghbr[b] = nbb;
        } else {
            mindist[b] = f64::INFINITY;
            nghbr[b] = usize::MAX;
        }
        ctl.advance(1);
    }
    Ok(to_scipy(n, steps, method == Linkage::Ward))
}

/// Flat clusters from a scipy-layout linkage matrix: either exactly `n_clusters` groups (undo
/// the last merges) or all merges with height `<= threshold`. Labels are `0..k` in order of
/// the first point of each group.
pub fn cut(
    z: &[f64],
    n: usize,
    n_clusters: Option<usize>,
    threshold: Option<f64>,
) -> TmResult<Vec<i64>> {
    if z.len() != 4 * n.saturating_sub(1) {
        return Err(TmError::param(
            "linkage",
            format!(
                "a linkage matrix of {n} points has {} rows; got {} values",
                n - 1,
                z.len()
            ),
        ));
    }
    let n_merges = match (n_clusters, threshold) {
        (Some(k), None) => {
            if k == 0 || k > n {
                return Err(TmError::param(
                    "n_clusters",
                    format!("n_clusters must be in 1..={n}; got {k}"),
                ));
            }
            n - k
        }
        (None, Some(t)) => (0..n - 1).take_while(|&r| z[4 * r + 2] <= t).count(),
        _ => {
            return Err(TmError::param(
                "n_clusters",
                "give exactly one of n_clusters and distance_threshold",
            ))
        }
    };
    let mut parent: Vec<usize> = (0..2 * n - 1).collect();
    fn find(p: &mut [usize], mut x: usize) -> usize {
        while p[x] != x {
            p[x] = p[p[x]];
            x = p[x];
        }
        x
    }
    for r in 0..n_merges {
        let (a, b) = (z[4 * r] as usize, z[4 * r + 1] as usize);
        if a >= n + r || b >= n + r {
            return Err(TmError::param(
                "linkage",
                format!("linkage row {r} refers to cluster {} made later", a.max(b)),
            ));
        }
        let (ra, rb) = (find(&mut parent, a), find(&mut parent, b));
        parent[ra] = n + r;
        parent[rb] = n + r;
    }
    let mut lab = vec![-1i64; 2 * n - 1];
    let mut next = 0i64;
    let mut out = Vec::with_capacity(n);
    for i in 0..n {
        let r = find(&mut parent, i);
        if lab[r] < 0 {
            lab[r] = next;
            next += 1;
        }
        out.push(lab[r]);
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::distance::{pdist, Metric};

    // P5 of the reference notes: (0,0),(0,1),(4,0),(4,2),(10,0); scipy linkage values [calc].
    const P5: [f64; 10] = [0., 0., 0., 1., 4., 0., 4., 2., 10., 0.];

    fn heights(z: &[f64]) -> Vec<f64> {
        z.chunks(4).map(|r| r[2]).collect()
    }

    #[test]
    fn p5_all_methods_from_condensed() {
        let c = pdist(&P5, 5, 2, Metric::Euclidean, u64::MAX, &Control::new()).unwrap();
        let cases = [
            ("single", [1.0, 2.0, 4.0, 6.0]),
            ("complete", [1.0, 2.0, 4.472136, 10.049876]),
            ("average", [1.0, 2.0, 4.179587, 8.093608]),
            ("weighted", [1.0, 2.0, 4.179587, 8.093608]),
            ("centroid", [1.0, 2.0, 4.031129, 8.035079]),
            ("median", [1.0, 2.0, 4.031129, 8.035079]),
            ("ward", [1.0, 2.0, 5.700877, 10.163661]),
        ];
        for (m, want) in cases {
            let z = linkage_condensed(&c, 5, Linkage::parse(m).unwrap(), &Control::new()).unwrap();
            for (h, w) in heights(&z).iter().zip(want) {
                approx::assert_abs_diff_eq!(*h, w, epsilon = 1e-6);
            }
            assert_eq!(&z[..4], &[0.0, 1.0, 1.0, 2.0], "{m}");
            assert_eq!(&z[12..], &[4.0, 7.0, z[14], 5.0], "{m}");
        }
    }

    #[test]
    fn p5_vectors_match_condensed() {
        for m in ["ward", "centroid", "median"] {
            let z =
                linkage_vectors(&P5, 5, 2, Linkage::parse(m).unwrap(), &Control::new()).unwrap();
            let c = pdist(&P5, 5, 2, Metric::Euclidean, u64::MAX, &Control::new()).unwrap();
            let y = linkage_condensed(&c, 5, Linkage::parse(m).unwrap(), &Control::new()).unwrap();
            for (a, b) in z.iter().zip(&y) {
                approx::assert_abs_diff_eq!(*a, *b, epsilon = 1e-9);
            }
        }
        let z = linkage_vectors(&P5, 5, 2, Linkage::Ward, &Control::new()).unwrap();
        // ward fcluster(maxclust=2) = 1,1,1,1,2 (reference notes, P5)
        assert_eq!(cut(&z, 5, Some(2), None).unwrap(), vec![0, 0, 0, 0, 1]);
        assert_eq!(cut(&z, 5, None, Some(1.5)).unwrap(), vec![0, 0, 1, 2, 3]);
        assert!(linkage_vectors(&P5, 5, 2, Linkage::Single, &Control::new()).is_err());
        assert!(cut(&z, 5, Some(9), None).is_err());
    }

    /// Partition after each merge, as a canonical label vector.
    fn partitions(z: &[f64], n: usize) -> Vec<Vec<i64>> {
        (1..=n).map(|k| cut(z, n, Some(k), None).unwrap()).collect()
    }

    #[test]
    fn ward_nn_chain_matches_generic_on_random_data() {
        use rand::SeedableRng;
        use rand_distr::{Distribution, Normal};
        use rand_xoshiro::Xoshiro256PlusPlus;
        // Small sets run one thread per search; 2500 points exercise the parallel scan.
        for (seed, n, d) in [(1u64, 40usize, 2usize), (2, 300, 5), (3, 2500, 3)] {
            let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
            let norm = Normal::new(0.0, 1.0).unwrap();
            let x: Vec<f64> = (0..n * d).map(|_| norm.sample(&mut rng)).collect();
            let ctl = Control::new();
            let chain = ward_nn_chain(&x, n, d, &ctl).unwrap();
            let generic = generic_vectors(&x, n, d, Linkage::Ward, &ctl).unwrap();
            for (a, b) in heights(&chain).iter().zip(heights(&generic)) {
                approx::assert_relative_eq!(*a, b, max_relative = 1e-12);
            }
            assert_eq!(partitions(&chain, n), partitions(&generic, n), "n = {n}");
            // Sizes agree and every row merges clusters made earlier.
            for (r, (p, q)) in chain.chunks(4).zip(generic.chunks(4)).enumerate() {
                assert_eq!(p[3], q[3]);
                assert!(p[0] < p[1] && p[1] < (n + r) as f64);
            }
        }
    }
}
