//! Internal cluster-quality indices.
//!
//! * **Silhouette** (Rousseeuw 1987, J. Comput. Appl. Math. 20:53–65): for point `i` in
//!   cluster `A`, `a(i)` is the mean distance to the other points of `A`, `b(i)` the lowest mean
//!   distance to the points of another cluster, and `s(i) = (b - a) / max(a, b)`; `s(i) = 0`
//!   for a point alone in its cluster (scikit-learn's convention). The score is the mean of
//!   `s(i)`. Exact: every pair once per row, rows in parallel.
//! * **Davies–Bouldin** (Davies and Bouldin 1979, IEEE TPAMI 1(2):224–227): with `S_i` the
//!   mean distance of cluster `i`'s points to its centroid and `M_ij` the distance between
//!   centroids, `DB = mean_i max_{j != i} (S_i + S_j) / M_ij` (lower is better).
//! * **Calinski–Harabasz** (Caliński and Harabasz 1974, Comm. in Statistics 3(1):1–27):
//!   `[tr(B) / (k - 1)] / [tr(W) / (n - k)]`, between- over within-cluster dispersion (higher is
//!   better).
//! * **Mean within-cluster distance**: the mean distance over all pairs of points that share a
//!   cluster.
//!
//! Labels are `0..k`; negative labels (DBSCAN noise) are left out of every index.

use rayon::prelude::*;

use crate::control::Control;
use crate::distance::{check_features, sqeuclidean, Metric};
use crate::error::{TmError, TmResult};

/// Points for the distance-based indices.
#[derive(Debug, Clone, Copy)]
pub enum Dist<'a> {
    /// Vectors (`n x d`) with a metric.
    Vectors {
        /// Row-major values.
        x: &'a [f64],
        /// Rows.
        n: usize,
        /// Columns.
        d: usize,
        /// The metric.
        metric: Metric,
    },
    /// A square distance matrix.
    Square {
        /// Row-major distances.
        m: &'a [f64],
        /// Rows.
        n: usize,
    },
}

impl Dist<'_> {
    fn n(&self) -> usize {
        match self {
            Dist::Vectors { n, .. } | Dist::Square { n, .. } => *n,
        }
    }
    #[inline]
    fn get(&self, i: usize, j: usize) -> f64 {
        match *self {
            Dist::Vectors { x, d, metric, .. } => {
                metric.dist(&x[i * d..(i + 1) * d], &x[j * d..(j + 1) * d])
            }
            Dist::Square { m, n } => m[i * n + j],
        }
    }
}

/// Map labels to `0..k` (keeping `-1` for noise) and check that at least 2 clusters exist.
fn compact(labels: &[i64], n: usize, need_two: bool) -> TmResult<(Vec<i64>, usize)> {
    if labels.len() != n {
        return Err(TmError::param(
            "labels",
            format!("{} labels given for {n} points", labels.len()),
        ));
    }
    let mut ids: Vec<i64> = labels.iter().copied().filter(|&l| l >= 0).collect();
    ids.sort_unstable();
    ids.dedup();
    let k = ids.len();
    let n_in = labels.iter().filter(|&&l| l >= 0).count();
    if need_two && (k < 2 || k >= n_in) {
        return Err(TmError::param(
            "labels",
            format!(
                "the index is defined for 2 <= number of clusters <= n_samples - 1; got {k} \
                 clusters for {n_in} points"
            ),
        ));
    }
    let out = labels
        .iter()
        .map(|&l| {
            if l < 0 {
                -1
            } else {
                ids.binary_search(&l).map_or(-1, |p| p as i64)
            }
        })
        .collect();
    Ok((out, k))
}

/// Per-point silhouette values (noise points get NaN). With `sample`, only those rows (and
/// distances among them) are used, as scikit-learn's `sample_size` does.
pub fn silhouette_samples(dist: &Dist<'_>, labels: &[i64], ctl: &Control) -> TmResult<Vec<f64>> {
    let n = dist.n();
    if let Dist::Vectors { x, n, d, .. } = *dist {
        check_features(x, n, d)?;
    }
    let (lab, k) = compact(labels, n, true)?;
    let mut sizes = vec![0usize; k];
    for &l in &lab {
        if l >= 0 {
            sizes[l as usize] += 1;
        }
    }
    ctl.set_total(n as u64);
    (0..n)
        .into_par_iter()
        .map(|i| {
            if i % 512 == 0 {
                ctl.check()?;
            }
            let li = lab[i];
            if li < 0 {
                return Ok(f64::NAN);
            }
            let li = li as usize;
            if sizes[li] == 1 {
                return Ok(0.0);
            }
            let mut sums = vec![0.0; k];
            for j in 0..n {
                if lab[j] >= 0 && j != i {
                    sums[lab[j] as usize] += dist.get(i, j);
                }
            }
            let a = sums[li] / (sizes[li] - 1) as f64;
            let b = (0..k)
                .filter(|&c| c != li)
                .map(|c| sums[c] / sizes[c] as f64)
                .fold(f64::INFINITY, f64::min);
            let m = a.max(b);
            ctl.advance(1);
            Ok(if m > 0.0 { (b - a) / m } else { 0.0 })
        })
        .collect()
}

/// Mean silhouette over the non-noise points.
pub fn silhouette(dist: &Dist<'_>, labels: &[i64], ctl: &Control) -> TmResult<f64> {
    let s = silhouette_samples(dist, labels, ctl)?;
    let v: Vec<f64> = s.into_iter().filter(|v| !v.is_nan()).collect();
    Ok(v.iter().sum::<f64>() / v.len() as f64)
}

fn centroids(x: &[f64], d: usize, lab: &[i64], k: usize) -> (Vec<f64>, Vec<usize>) {
    let mut c = vec![0.0; k * d];
    let mut cnt = vec![0usize; k];
    for (i, &l) in lab.iter().enumerate() {
        if l >= 0 {
            let l = l as usize;
            cnt[l] += 1;
            for j in 0..d {
                c[l * d + j] += x[i * d + j];
            }
        }
    }
    for l in 0..k {
        for j in 0..d {
            c[l * d + j] /= cnt[l] as f64;
        }
    }
    (c, cnt)
}

/// Davies–Bouldin index (Euclidean).
pub fn davies_bouldin(x: &[f64], n: usize, d: usize, labels: &[i64]) -> TmResult<f64> {
    check_features(x, n, d)?;
    let (lab, k) = compact(labels, n, true)?;
    let (c, cnt) = centroids(x, d, &lab, k);
    let mut s = vec![0.0; k];
    for (i, &l) in lab.iter().enumerate() {
        if l >= 0 {
            let l = l as usize;
            s[l] += sqeuclidean(&x[i * d..(i + 1) * d], &c[l * d..(l + 1) * d]).sqrt();
        }
    }
    for l in 0..k {
        s[l] /= cnt[l] as f64;
    }
    let mut total = 0.0;
    for a in 0..k {
        let mut worst: f64 = 0.0;
        for b in 0..k {
            if a != b {
                let m = sqeuclidean(&c[a * d..(a + 1) * d], &c[b * d..(b + 1) * d]).sqrt();
                let r = if m > 0.0 {
                    (s[a] + s[b]) / m
                } else {
                    f64::INFINITY
                };
                worst = worst.max(r);
            }
        }
        total += worst;
    }
    Ok(total / k as f64)
}

/// Calinski–Harabasz index.
pub fn calinski_harabasz(x: &[f64], n: usize, d: usize, labels: &[i64]) -> TmResult<f64> {
    check_features(x, n, d)?;
    let (lab, k) = compact(labels, n, true)?;
    let n_in = lab.iter().filter(|&&l| l >= 0).count();
    let (c, cnt) = centroids(x, d, &lab, k);
    let mut mean = vec![0.0; d];
    for (i, &l) in lab.iter().enumerate() {
        if l >= 0 {
            for j in 0..d {
                mean[j] += x[i * d + j];
            }
        }
    }
    mean.iter_mut().for_each(|v| *v /= n_in as f64);
    let mut within = 0.0;
    for (i, &l) in lab.iter().enumerate() {
        if l >= 0 {
            let l = l as usize;
            within += sqeuclidean(&x[i * d..(i + 1) * d], &c[l * d..(l + 1) * d]);
        }
    }
    let between: f64 = (0..k)
        .map(|l| cnt[l] as f64 * sqeuclidean(&c[l * d..(l + 1) * d], &mean))
        .sum();
    Ok(if within == 0.0 {
        1.0
    } else {
        between * (n_in - k) as f64 / (within * (k - 1) as f64)
    })
}

/// Mean distance over all pairs that share a cluster (NaN when no cluster has two points).
pub fn mean_within_distance(dist: &Dist<'_>, labels: &[i64], ctl: &Control) -> TmResult<f64> {
    let n = dist.n();
    let (lab, _) = compact(labels, n, false)?;
    let (s, c) = (0..n)
        .into_par_iter()
        .map(|i| {
            let mut s = 0.0;
            let mut c = 0u64;
            if lab[i] >= 0 {
                for j in i + 1..n {
                    if lab[j] == lab[i] {
                        s += dist.get(i, j);
                        c += 1;
                    }
                }
            }
            (s, c)
        })
        .collect::<Vec<_>>()
        .into_iter()
        .fold((0.0, 0u64), |a, b| (a.0 + b.0, a.1 + b.1));
    ctl.check()?;
    Ok(if c == 0 { f64::NAN } else { s / c as f64 })
}

#[cfg(test)]
mod tests {
    use super::*;

    // X6 with labels 000111 and 001111 (reference notes, section A [calc]).
    const X6: [f64; 12] = [1., 2., 1., 4., 1., 0., 10., 2., 10., 4., 10., 0.];

    #[test]
    fn x6_values() {
        let good = [0, 0, 0, 1, 1, 1];
        let poor = [0, 0, 1, 1, 1, 1];
        let dv = Dist::Vectors {
            x: &X6,
            n: 6,
            d: 2,
            metric: Metric::Euclidean,
        };
        let c = Control::new();
        approx::assert_abs_diff_eq!(
            silhouette(&dv, &good, &c).unwrap(),
            0.713348,
            epsilon = 1e-6
        );
        approx::assert_abs_diff_eq!(
            silhouette(&dv, &poor, &c).unwrap(),
            0.368561,
            epsilon = 1e-6
        );
        approx::assert_abs_diff_eq!(
            davies_bouldin(&X6, 6, 2, &good).unwrap(),
            0.296296,
            epsilon = 1e-6
        );
        approx::assert_abs_diff_eq!(
            davies_bouldin(&X6, 6, 2, &poor).unwrap(),
            0.697327,
            epsilon = 1e-6
        );
        approx::assert_abs_diff_eq!(
            calinski_harabasz(&X6, 6, 2, &good).unwrap(),
            30.375,
            epsilon = 1e-9
        );
        approx::assert_abs_diff_eq!(
            calinski_harabasz(&X6, 6, 2, &poor).unwrap(),
            3.457627,
            epsilon = 1e-6
        );
        assert!(silhouette(&dv, &[0; 6], &c).is_err());
    }

    #[test]
    fn toy_log_levenshtein_silhouette() {
        // Toy log T with Levenshtein distances, labels 0000111 (reference notes, section A).
        let rows: [[f64; 7]; 7] = [
            [0., 2., 1., 3., 5., 5., 5.],
            [2., 0., 3., 1., 5., 5., 5.],
            [1., 3., 0., 2., 5., 5., 5.],
            [3., 1., 2., 0., 5., 5., 5.],
            [5., 5., 5., 5., 0., 1., 2.],
            [5., 5., 5., 5., 1., 0., 2.],
            [5., 5., 5., 5., 2., 2., 0.],
        ];
        let m: Vec<f64> = rows.iter().flatten().copied().collect();
        let d = Dist::Square { m: &m, n: 7 };
        let s = silhouette_samples(&d, &[0, 0, 0, 0, 1, 1, 1], &Control::new()).unwrap();
        let want = [0.6, 0.6, 0.6, 0.6, 0.7, 0.7, 0.6];
        for (a, b) in s.iter().zip(want) {
            approx::assert_abs_diff_eq!(*a, b, epsilon = 1e-12);
        }
        let w = mean_within_distance(&d, &[0, 0, 0, 0, 1, 1, 1], &Control::new()).unwrap();
        approx::assert_abs_diff_eq!(w, (2. + 1. + 3. + 3. + 1. + 2. + 1. + 2. + 2.) / 9.0);
    }
}
