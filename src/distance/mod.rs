//! Pairwise distances between cases, in parallel.
//!
//! Vector metrics on feature rows (`n x d`, row-major):
//!
//! * euclidean `sqrt(sum (x_i - y_i)^2)`, squared euclidean, manhattan `sum |x_i - y_i|`;
//! * cosine `1 - x.y / (|x| |y|)` (two zero vectors are at distance 0, a zero vector and a
//!   non-zero one at 1, where scipy would return NaN);
//! * jaccard on binary profiles (non-zero = present): the share of positions present in exactly
//!   one of the two among those present in at least one (Jaccard 1901; 0 for two empty rows,
//!   as in scipy >= 1.2).
//!
//! and the edit distance between activity sequences in [`levenshtein`].
//!
//! Results come in scipy's **condensed** layout (the upper triangle row by row: the pair
//! `(i, j)`, `i < j`, sits at `n*i - i*(i+1)/2 + j - i - 1`) so that `scipy.spatial.distance.
//! squareform` and `scipy.cluster.hierarchy` accept them, or as a square matrix. An `n x n`
//! result grows as `n^2`, so every builder first checks a memory budget ([`check_budget`]) and
//! refuses with a [`TmError::Limit`] that says how much would be needed. When many cases share
//! a variant, compute between variants and carry the variant counts as weights instead.

pub mod levenshtein;

use rayon::prelude::*;

use crate::control::Control;
use crate::error::{TmError, TmResult};

/// A vector metric.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Metric {
    /// Euclidean (L2) distance.
    Euclidean,
    /// Squared Euclidean distance.
    SqEuclidean,
    /// Manhattan (L1) distance.
    Manhattan,
    /// Cosine distance.
    Cosine,
    /// Jaccard distance on presence (non-zero entries).
    Jaccard,
}

impl Metric {
    /// Parse a metric name (`euclidean`, `sqeuclidean`, `manhattan`, `cosine`, `jaccard`).
    pub fn parse(s: &str) -> TmResult<Metric> {
        Ok(match s {
            "euclidean" => Metric::Euclidean,
            "sqeuclidean" => Metric::SqEuclidean,
            "manhattan" | "cityblock" => Metric::Manhattan,
            "cosine" => Metric::Cosine,
            "jaccard" => Metric::Jaccard,
            _ => {
                return Err(TmError::param(
                    "metric",
                    format!(
                        "metric must be one of 'euclidean', 'sqeuclidean', 'manhattan', \
                         'cosine', 'jaccard'; got '{s}'"
                    ),
                ))
            }
        })
    }

    /// The distance between two rows.
    #[inline]
    pub fn dist(self, a: &[f64], b: &[f64]) -> f64 {
        match self {
            Metric::Euclidean => sqeuclidean(a, b).sqrt(),
            Metric::SqEuclidean => sqeuclidean(a, b),
            Metric::Manhattan => a.iter().zip(b).map(|(x, y)| (x - y).abs()).sum(),
            Metric::Cosine => {
                let (mut ab, mut aa, mut bb) = (0.0, 0.0, 0.0);
                for (x, y) in a.iter().zip(b) {
                    ab += x * y;
                    aa += x * x;
                    bb += y * y;
                }
                if aa == 0.0 && bb == 0.0 {
                    0.0
                } else if aa == 0.0 || bb == 0.0 {
                    1.0
                } else {
                    (1.0 - ab / (aa.sqrt() * bb.sqrt())).max(0.0)
                }
            }
            Metric::Jaccard => {
                let (mut diff, mut any) = (0u32, 0u32);
                for (x, y) in a.iter().zip(b) {
                    let (p, q) = (*x != 0.0, *y != 0.0);
                    diff += u32::from(p != q);
                    any += u32::from(p || q);
                }
                if any == 0 {
                    0.0
                } else {
                    f64::from(diff) / f64::from(any)
                }
            }
        }
    }
}

/// Squared Euclidean distance (four accumulators so that the compiler vectorises the loop).
#[inline(always)]
pub fn sqeuclidean(a: &[f64], b: &[f64]) -> f64 {
    let mut acc = [0.0f64; 4];
    let n4 = a.len() / 4 * 4;
    let (a4, ar) = a.split_at(n4);
    let (b4, br) = b.split_at(n4);
    for (x, y) in a4.chunks_exact(4).zip(b4.chunks_exact(4)) {
        for l in 0..4 {
            let t = x[l] - y[l];
            acc[l] += t * t;
        }
    }
    let mut s = (acc[0] + acc[1]) + (acc[2] + acc[3]);
    for (x, y) in ar.iter().zip(br) {
        let t = x - y;
        s += t * t;
    }
    s
}

/// Squared Euclidean distances from `a` to each row of `rows` (row-major, `out.len()` rows of
/// `a.len()` values). Four rows are taken at a time so that their sums are independent chains
/// (one chain per row is bound by the latency of the additions); each distance is summed in
/// the same order as [`sqeuclidean`], so the values are bit for bit the same.
#[inline(always)]
pub fn sqeuclidean_many(a: &[f64], rows: &[f64], out: &mut [f64]) {
    let d = a.len();
    if d == 0 {
        out.iter_mut().for_each(|v| *v = 0.0);
        return;
    }
    let n4 = d / 4 * 4;
    let mut quads = out.chunks_exact_mut(4);
    let mut blocks = rows.chunks_exact(4 * d);
    for (o, blk) in (&mut quads).zip(&mut blocks) {
        let r = [
            &blk[..d],
            &blk[d..2 * d],
            &blk[2 * d..3 * d],
            &blk[3 * d..4 * d],
        ];
        let mut acc = [[0.0f64; 4]; 4];
        let mut j = 0;
        while j < n4 {
            let x = &a[j..j + 4];
            for (q, row) in r.iter().enumerate() {
                let y = &row[j..j + 4];
                for l in 0..4 {
                    let t = x[l] - y[l];
                    acc[q][l] += t * t;
                }
            }
            j += 4;
        }
        for (q, row) in r.iter().enumerate() {
            let mut s = (acc[q][0] + acc[q][1]) + (acc[q][2] + acc[q][3]);
            for (x, y) in a[n4..].iter().zip(&row[n4..]) {
                let t = x - y;
                s += t * t;
            }
            o[q] = s;
        }
    }
    for (o, row) in quads
        .into_remainder()
        .iter_mut()
        .zip(blocks.remainder().chunks_exact(d))
    {
        *o = sqeuclidean(a, row);
    }
}

/// Number of pairs `n (n - 1) / 2`.
pub fn n_pairs(n: usize) -> usize {
    n * n.saturating_sub(1) / 2
}

/// Position of the pair `(i, j)`, `i < j < n`, in a condensed vector.
#[inline]
pub fn condensed_index(n: usize, i: usize, j: usize) -> usize {
    n * i - i * (i + 1) / 2 + j - i - 1
}

fn human_bytes(b: f64) -> String {
    if b >= 1e9 {
        format!("{:.1} GB", b / 1e9)
    } else if b >= 1e6 {
        format!("{:.1} MB", b / 1e6)
    } else {
        format!("{b:.0} bytes")
    }
}

/// Refuse an `n x n` (or condensed) result of `f64` above `max_bytes`.
pub fn check_budget(n: usize, square: bool, max_bytes: u64) -> TmResult<()> {
    let cells = if square {
        (n as f64) * (n as f64)
    } else {
        n_pairs(n) as f64
    };
    let need = cells * 8.0;
    if need > max_bytes as f64 {
        return Err(TmError::Limit {
            message: format!(
                "a {} distance matrix of {n} rows needs {} ({} values of 8 bytes), above the \
                 memory budget max_memory={}; compute between variants (weights = counts), \
                 sample the cases, or raise max_memory",
                if square { "square" } else { "condensed" },
                human_bytes(need),
                cells as u64,
                human_bytes(max_bytes as f64)
            ),
        });
    }
    Ok(())
}

/// Check a dense feature matrix: shape and finite values (naming the first bad cell).
pub fn check_features(x: &[f64], n: usize, d: usize) -> TmResult<()> {
    if x.len() != n * d {
        return Err(TmError::param(
            "X",
            format!(
                "the feature matrix has {} values, expected {n} x {d}",
                x.len()
            ),
        ));
    }
    // Blocks of values checked with a branch-free fold (vectorised), then the first bad
    // value located inside the first bad block.
    const BLOCK: usize = 1 << 14;
    let bad_block = x
        .par_chunks(BLOCK)
        .position_first(|b| !b.iter().fold(true, |ok, v| ok & v.is_finite()));
    if let Some(p) = bad_block.and_then(|blk| {
        x[blk * BLOCK..]
            .iter()
            .position(|v| !v.is_finite())
            .map(|q| blk * BLOCK + q)
    }) {
        return Err(TmError::data(format!(
            "feature column {} holds a non-finite value ({}) at row {}; features must be finite",
            p % d.max(1),
            x[p],
            p / d.max(1)
        )));
    }
    Ok(())
}

/// Split a condensed buffer into its rows (`n - 1 - i` values each).
pub(crate) fn condensed_rows(buf: &mut [f64], n: usize) -> Vec<(usize, &mut [f64])> {
    let mut rows = Vec::with_capacity(n);
    let mut rest = buf;
    for i in 0..n.saturating_sub(1) {
        let (row, tail) = rest.split_at_mut(n - 1 - i);
        rows.push((i, row));
        rest = tail;
    }
    rows
}

/// Condensed pairwise distances of `n` rows of width `d`, after a budget check.
pub fn pdist(
    x: &[f64],
    n: usize,
    d: usize,
    metric: Metric,
    max_bytes: u64,
    ctl: &Control,
) -> TmResult<Vec<f64>> {
    check_features(x, n, d)?;
    check_budget(n, false, max_bytes)?;
    let mut out = vec![0.0; n_pairs(n)];
    ctl.set_total(n as u64);
    condensed_rows(&mut out, n)
        .into_par_iter()
        .try_for_each(|(i, row)| -> TmResult<()> {
            if i % 256 == 0 {
                ctl.check()?;
            }
            let a = &x[i * d..(i + 1) * d];
            for (t, v) in row.iter_mut().enumerate() {
                let j = i + 1 + t;
                *v = metric.dist(a, &x[j * d..(j + 1) * d]);
            }
            ctl.advance(1);
            Ok(())
        })?;
    Ok(out)
}

/// The square form (zero diagonal) of a condensed vector of `n` points.
pub fn squareform(cond: &[f64], n: usize, max_bytes: u64) -> TmResult<Vec<f64>> {
    if cond.len() != n_pairs(n) {
        return Err(TmError::param(
            "distances",
            format!(
                "a condensed vector of {n} points has {} values, got {}",
                n_pairs(n),
                cond.len()
            ),
        ));
    }
    check_budget(n, true, max_bytes)?;
    let mut out = vec![0.0; n * n];
    out.par_chunks_mut(n.max(1))
        .enumerate()
        .for_each(|(i, row)| {
            for (j, v) in row.iter_mut().enumerate() {
                *v = match i.cmp(&j) {
                    std::cmp::Ordering::Less => cond[condensed_index(n, i, j)],
                    std::cmp::Ordering::Greater => cond[condensed_index(n, j, i)],
                    std::cmp::Ordering::Equal => 0.0,
                };
            }
        });
    Ok(out)
}

/// Check a precomputed square matrix: size, finite, non-negative, symmetric (1e-9 relative)
/// with a zero diagonal. Errors name the first bad cell.
pub fn check_square(m: &[f64], n: usize) -> TmResult<()> {
    if m.len() != n * n {
        return Err(TmError::param(
            "X",
            format!(
                "a precomputed distance matrix must be square: got {} values for {n} rows",
                m.len()
            ),
        ));
    }
    // A cell's own fault (not finite, negative) is named before any asymmetry it causes.
    let bad_value = |i: usize, j: usize, v: f64| -> Option<TmError> {
        if !v.is_finite() {
            Some(TmError::data(format!(
                "the precomputed distance at row {i}, column {j} is not finite ({v})"
            )))
        } else if v < 0.0 {
            Some(TmError::data(format!(
                "the precomputed distance at row {i}, column {j} is negative ({v}); \
                 distances must be >= 0"
            )))
        } else {
            None
        }
    };
    // Row blocks in parallel, the first failing block reported; the symmetry test compares
    // tile (I, J) with tile (J, I), so both are read a cache line at a time instead of one
    // column value per line.
    const TILE: usize = 64;
    let check_block = |bi: usize| -> TmResult<()> {
        let rows = bi * TILE..((bi + 1) * TILE).min(n);
        for i in rows.clone() {
            let row = &m[i * n..(i + 1) * n];
            if let Some(j) = row.iter().position(|v| !v.is_finite() || *v < 0.0) {
                return Err(
                    bad_value(i, j, row[j]).unwrap_or_else(|| TmError::Internal {
                        message: "internal error: a bad distance passed its check".into(),
                    }),
                );
            }
            if row[i] != 0.0 {
                return Err(TmError::data(format!(
                    "the precomputed distance matrix has {} on the diagonal at row {i}; a \
                     point is at distance 0 from itself",
                    row[i]
                )));
            }
        }
        for bj in bi..n.div_ceil(TILE) {
            for i in rows.clone() {
                for j in (bj * TILE).max(i + 1)..((bj + 1) * TILE).min(n) {
                    let (v, w) = (m[i * n + j], m[j * n + i]);
                    if (v - w).abs() > 1e-9 * v.abs().max(w.abs()).max(1e-300) {
                        return Err(bad_value(j, i, w).unwrap_or_else(|| {
                            TmError::data(format!(
                                "the precomputed distance matrix is not symmetric: [{i}, {j}] \
                                 = {v} but [{j}, {i}] = {w}"
                            ))
                        }));
                    }
                }
            }
        }
        Ok(())
    };
    (0..n.div_ceil(TILE))
        .into_par_iter()
        .map(check_block)
        .find_first(Result::is_err)
        .unwrap_or(Ok(()))
}

/// Check a condensed vector: length matches `n`, values finite and non-negative.
pub fn check_condensed(c: &[f64], n: usize) -> TmResult<()> {
    if c.len() != n_pairs(n) {
        return Err(TmError::param(
            "distances",
            format!(
                "a condensed vector of {n} points has {} values, got {}",
                n_pairs(n),
                c.len()
            ),
        ));
    }
    if let Some(p) = c.par_iter().position_first(|v| !v.is_finite() || *v < 0.0) {
        return Err(TmError::data(format!(
            "condensed distance {p} is {}; distances must be finite and >= 0",
            c[p]
        )));
    }
    Ok(())
}

/// Number of points of a condensed vector of length `m` (inverse of [`n_pairs`]).
pub fn points_of_condensed(m: usize) -> TmResult<usize> {
    let n = ((1.0 + (1.0 + 8.0 * m as f64).sqrt()) / 2.0).round() as usize;
    if n_pairs(n) != m {
        return Err(TmError::param(
            "distances",
            format!("{m} is not the length of a condensed distance vector (n (n - 1) / 2)"),
        ));
    }
    Ok(n)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn many_distances_equal_one_at_a_time_bit_for_bit() {
        // Irrational-looking values so that a different summation order would show.
        let val = |i: usize| ((i as f64) * 0.618_033_988_7).sin() * 3.7;
        for d in 0..10 {
            for m in 0..10 {
                let a: Vec<f64> = (0..d).map(val).collect();
                let rows: Vec<f64> = (0..m * d).map(|i| val(i + 101)).collect();
                let mut out = vec![f64::NAN; m];
                sqeuclidean_many(&a, &rows, &mut out);
                for (r, o) in out.iter().enumerate() {
                    let one = sqeuclidean(&a, &rows[r * d..(r + 1) * d]);
                    assert_eq!(o.to_bits(), one.to_bits(), "d={d} m={m} row={r}");
                }
            }
        }
    }

    #[test]
    fn metrics_match_definitions() {
        let a = [1.0, 0.0, 2.0];
        let b = [0.0, 0.0, 4.0];
        assert_eq!(Metric::SqEuclidean.dist(&a, &b), 5.0);
        assert_eq!(Metric::Euclidean.dist(&a, &b), 5f64.sqrt());
        assert_eq!(Metric::Manhattan.dist(&a, &b), 3.0);
        approx::assert_abs_diff_eq!(Metric::Cosine.dist(&a, &b), 1.0 - 8.0 / (5f64.sqrt() * 4.0));
        // present: a = {0, 2}, b = {2}: one differs out of two present
        assert_eq!(Metric::Jaccard.dist(&a, &b), 0.5);
        assert_eq!(Metric::Jaccard.dist(&[0.0], &[0.0]), 0.0);
        assert_eq!(Metric::Cosine.dist(&[0.0], &[1.0]), 1.0);
        assert!(Metric::parse("chebyshev").is_err());
    }

    #[test]
    fn condensed_layout_and_square() {
        let x = [0.0, 1.0, 3.0, 6.0];
        let c = pdist(&x, 4, 1, Metric::Euclidean, u64::MAX, &Control::new()).unwrap();
        assert_eq!(c, vec![1.0, 3.0, 6.0, 2.0, 5.0, 3.0]);
        assert_eq!(c[condensed_index(4, 1, 3)], 5.0);
        let s = squareform(&c, 4, u64::MAX).unwrap();
        assert_eq!(s[3 * 4 + 1], 5.0);
        check_square(&s, 4).unwrap();
        assert_eq!(points_of_condensed(6).unwrap(), 4);
        assert!(points_of_condensed(5).is_err());
    }

    #[test]
    fn budget_and_bad_input() {
        let e = check_budget(100_000, false, 1 << 30).unwrap_err();
        assert!(matches!(e, TmError::Limit { .. }));
        assert!(e.to_string().contains("40.0 GB"), "{e}");
        let e = check_features(&[0.0, f64::NAN], 1, 2).unwrap_err();
        assert!(e.to_string().contains("column 1"), "{e}");
        assert!(check_square(&[0.0, 1.0, 2.0, 0.0], 2).is_err());
        assert!(check_square(&[0.0, -1.0, -1.0, 0.0], 2).is_err());
        assert!(check_square(&[0.0, 1.0, 1.0], 2).is_err());
    }
}
