//! DBSCAN: density-based clusters with core, border and noise points.
//!
//! Ester, Kriegel, Sander and Xu (1996, "A density-based algorithm for discovering clusters in
//! large spatial databases with noise", KDD-96, 226–231); parameter guidance in Schubert et al.
//! (2017, ACM TODS 42(3)). With a radius `eps` and a count `min_samples`:
//!
//! * a **core** point has at least `min_samples` points (itself included) within `eps`;
//! * a **border** point is not core but lies within `eps` of a core point;
//! * every other point is **noise** (label `-1`).
//!
//! Clusters are the connected components of core points (two cores within `eps` are linked),
//! together with the border points they reach. A border point within reach of two clusters is
//! given to the one that reaches it first: clusters are grown in order of their first core
//! point in input order, and each grows completely before the next starts (the rule of
//! scikit-learn's implementation, so labels agree with it exactly).
//!
//! **Neighbourhoods.** For Euclidean vectors we build a k-d tree (Bentley 1975, CACM 18(9);
//! median splits on the widest dimension, with incremental distance bounds to prune far
//! cells) and query all points in parallel; only core points keep their neighbour lists.
//! The tree keeps a copy of the points in its own order, so a leaf is one contiguous block
//! scanned four points at a time, and queries run in that order too (neighbouring queries
//! walk the same cells while they are in cache).
//! Other metrics scan all points in parallel; a precomputed square matrix is read row by row.

use rayon::prelude::*;

use crate::control::Control;
use crate::distance::{check_features, check_square, sqeuclidean_many, Metric};
use crate::error::{TmError, TmResult};

/// DBSCAN result.
#[derive(Debug, Clone, PartialEq)]
pub struct DbscanFit {
    /// Cluster of each point, `-1` for noise.
    pub labels: Vec<i64>,
    /// Whether each point is a core point.
    pub core: Vec<bool>,
}

/// A k-d tree over `n x d` points (indices permuted, leaves of at most `LEAF` points).
struct KdTree<'a> {
    x: &'a [f64],
    d: usize,
    idx: Vec<u32>,
    nodes: Vec<Node>,
    /// The points in tree order (row `p` is point `idx[p]`), so that a leaf is one contiguous
    /// block.
    xp: Vec<f64>,
}

#[derive(Clone, Copy)]
struct Node {
    start: u32,
    end: u32,
    dim: u32,
    split: f64,
    left: u32,
    right: u32,
}

const LEAF: usize = 24;
const NONE: u32 = u32::MAX;

impl<'a> KdTree<'a> {
    fn new(x: &'a [f64], n: usize, d: usize) -> Self {
        let mut t = KdTree {
            x,
            d,
            idx: (0..n as u32).collect(),
            nodes: Vec::new(),
            xp: Vec::new(),
        };
        t.build(0, n);
        t.xp = t
            .idx
            .iter()
            .flat_map(|&i| &x[i as usize * d..(i as usize + 1) * d])
            .copied()
            .collect();
        t
    }

    fn build(&mut self, start: usize, end: usize) -> u32 {
        let me = self.nodes.len() as u32;
        self.nodes.push(Node {
            start: start as u32,
            end: end as u32,
            dim: 0,
            split: 0.0,
            left: NONE,
            right: NONE,
        });
        if end - start <= LEAF {
            return me;
        }
        let (x, d) = (self.x, self.d);
        let mut best = (f64::NEG_INFINITY, 0usize);
        for j in 0..d {
            let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
            for &i in &self.idx[start..end] {
                let v = x[i as usize * d + j];
                lo = lo.min(v);
                hi = hi.max(v);
            }
            if hi - lo > best.0 {
                best = (hi - lo, j);
            }
        }
        let dim = best.1;
        let mid = (start + end) / 2;
        self.idx[start..end].select_nth_unstable_by(mid - start, |&a, &b| {
            x[a as usize * d + dim].total_cmp(&x[b as usize * d + dim])
        });
        let split = x[self.idx[mid] as usize * d + dim];
        let left = self.build(start, mid);
        let right = self.build(mid, end);
        let nd = &mut self.nodes[me as usize];
        nd.dim = dim as u32;
        nd.split = split;
        nd.left = left;
        nd.right = right;
        me
    }

    /// Push every point within `eps2` (squared) of `q` into `out`.
    fn radius(&self, q: &[f64], eps2: f64, out: &mut Vec<u32>, off: &mut [f64]) {
        self.visit(0, q, eps2, out, off, 0.0);
    }

    fn visit(&self, node: u32, q: &[f64], eps2: f64, out: &mut Vec<u32>, off: &mut [f64], rd: f64) {
        let nd = self.nodes[node as usize];
        if nd.left == NONE {
            let d = self.d;
            let (a, b) = (nd.start as usize, nd.end as usize);
            let mut dist = [0.0f64; LEAF];
            let dist = &mut dist[..b - a];
            sqeuclidean_many(q, &self.xp[a * d..b * d], dist);
            for (p, &dd) in (a..b).zip(dist.iter()) {
                if dd <= eps2 {
                    out.push(self.idx[p]);
                }
            }
            return;
        }
        let dim = nd.dim as usize;
        let diff = q[dim] - nd.split;
        // Points equal to the split value may sit on either side, so the near side is chosen
        // by the sign and the far side is visited whenever its bound allows.
        let (near, far) = if diff < 0.0 {
            (nd.left, nd.right)
        } else {
            (nd.right, nd.left)
        };
        self.visit(near, q, eps2, out, off, rd);
        let old = off[dim];
        let new_rd = rd - old * old + diff * diff;
        if new_rd <= eps2 {
            off[dim] = diff;
            self.visit(far, q, eps2, out, off, new_rd);
            off[dim] = old;
        }
    }
}

/// Where the points come from.
#[derive(Debug, Clone, Copy)]
pub enum DbscanInput<'a> {
    /// Vectors (`n x d`) and a metric.
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
    /// A precomputed square distance matrix (`n x n`).
    Precomputed {
        /// Row-major distances.
        m: &'a [f64],
        /// Rows.
        n: usize,
    },
}

/// Run DBSCAN; see the module documentation. `weights` (optional) count each point that many
/// times towards `min_samples` (scikit-learn's `sample_weight`), e.g. variant counts.
pub fn dbscan(
    input: DbscanInput<'_>,
    eps: f64,
    min_samples: f64,
    weights: Option<&[f64]>,
    ctl: &Control,
) -> TmResult<DbscanFit> {
    if eps.is_nan() || eps <= 0.0 || !eps.is_finite() {
        return Err(TmError::param(
            "eps",
            format!("eps must be a finite number > 0; got {eps}"),
        ));
    }
    if min_samples.is_nan() || min_samples < 1.0 {
        return Err(TmError::param(
            "min_samples",
            format!("min_samples must be >= 1; got {min_samples}"),
        ));
    }
    let n = match input {
        DbscanInput::Vectors { x, n, d, .. } => {
            check_features(x, n, d)?;
            n
        }
        DbscanInput::Precomputed { m, n } => {
            check_square(m, n)?;
            n
        }
    };
    if n == 0 {
        return Err(TmError::data("there are no points to cluster"));
    }
    if let Some(w) = weights {
        if w.len() != n || w.iter().any(|v| !v.is_finite() || *v < 0.0) {
            return Err(TmError::param(
                "sample_weight",
                format!("sample_weight must hold {n} finite values >= 0"),
            ));
        }
    }
    ctl.set_total(n as u64);
    let tree = match input {
        DbscanInput::Vectors {
            x,
            n,
            d,
            metric: Metric::Euclidean,
        } => Some(KdTree::new(x, n, d)),
        _ => None,
    };
    let chunk = 1024;
    // Neighbour lists of core points only (others: None).
    let lists: Vec<TmResult<Vec<(u32, bool, Option<Vec<u32>>)>>> = (0..n.div_ceil(chunk))
        .into_par_iter()
        .map(|ci| {
            ctl.check()?;
            let mut res = Vec::with_capacity(chunk);
            let mut buf: Vec<u32> = Vec::new();
            let mut off = vec![
                0.0;
                match input {
                    DbscanInput::Vectors { d, .. } => d,
                    _ => 0,
                }
            ];
            for pos in ci * chunk..((ci + 1) * chunk).min(n) {
                // With a tree, queries go in tree order: neighbouring queries then walk the
                // same nodes and leaves, which stay in cache.
                let i = tree.as_ref().map_or(pos, |t| t.idx[pos] as usize);
                buf.clear();
                match input {
                    DbscanInput::Vectors { x, d, metric, .. } => {
                        if let Some(t) = &tree {
                            t.radius(&t.xp[pos * d..(pos + 1) * d], eps * eps, &mut buf, &mut off);
                        } else {
                            let q = &x[i * d..(i + 1) * d];
                            for j in 0..n {
                                if metric.dist(q, &x[j * d..(j + 1) * d]) <= eps {
                                    buf.push(j as u32);
                                }
                            }
                        }
                    }
                    DbscanInput::Precomputed { m, n } => {
                        for (j, &v) in m[i * n..(i + 1) * n].iter().enumerate() {
                            if v <= eps {
                                buf.push(j as u32);
                            }
                        }
                    }
                }
                let count: f64 = match weights {
                    Some(w) => buf.iter().map(|&j| w[j as usize]).sum(),
                    None => buf.len() as f64,
                };
                let core = count >= min_samples;
                res.push((i as u32, core, core.then(|| buf.clone())));
            }
            ctl.advance(res.len() as u64);
            Ok(res)
        })
        .collect();
    let mut core = vec![false; n];
    let mut nb: Vec<Option<Vec<u32>>> = vec![None; n];
    for part in lists {
        for (i, c, l) in part? {
            core[i as usize] = c;
            nb[i as usize] = l;
        }
    }
    // Grow clusters in input order, depth-first, as scikit-learn's dbscan_inner does.
    let mut labels = vec![-1i64; n];
    let mut next = 0i64;
    let mut stack: Vec<usize> = Vec::new();
    for s in 0..n {
        if labels[s] != -1 || !core[s] {
            continue;
        }
        labels[s] = next;
        stack.push(s);
        while let Some(i) = stack.pop() {
            if let Some(list) = &nb[i] {
                for &v in list {
                    let v = v as usize;
                    if labels[v] == -1 {
                        labels[v] = next;
                        if core[v] {
                            stack.push(v);
                        }
                    }
                }
            }
        }
        next += 1;
    }
    Ok(DbscanFit { labels, core })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn run(x: &[f64], d: usize, eps: f64, min: f64) -> DbscanFit {
        dbscan(
            DbscanInput::Vectors {
                x,
                n: x.len() / d,
                d,
                metric: Metric::Euclidean,
            },
            eps,
            min,
            None,
            &Control::new(),
        )
        .unwrap()
    }

    #[test]
    fn sklearn_doc_example() {
        // scikit-learn DBSCAN documentation example (reference notes, section B [calc]).
        let x = [1., 2., 2., 2., 2., 3., 8., 7., 8., 8., 25., 80.];
        assert_eq!(run(&x, 2, 3.0, 2.0).labels, vec![0, 0, 0, 1, 1, -1]);
    }

    #[test]
    fn border_goes_to_first_cluster_in_input_order() {
        // Reference notes, section B: x = 1.3 is a border point of A and B (eps 1, MinPts 4).
        let a = [0.0, 0.1, 0.2, 0.3];
        let b = [2.3, 2.4, 2.5, 2.6];
        let mut first_a: Vec<f64> = a.to_vec();
        first_a.push(1.3);
        first_a.extend(b);
        let f = run(&first_a, 1, 1.0, 4.0);
        assert_eq!(f.labels[4], f.labels[0]);
        assert!(!f.core[4]);
        let mut first_b: Vec<f64> = b.to_vec();
        first_b.push(1.3);
        first_b.extend(a);
        let f = run(&first_b, 1, 1.0, 4.0);
        assert_eq!(f.labels[4], f.labels[0]);
    }

    #[test]
    fn tree_equals_brute_force() {
        use rand::{Rng, SeedableRng};
        let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(3);
        let (n, d) = (2000, 3);
        let x: Vec<f64> = (0..n * d).map(|_| rng.random::<f64>() * 4.0).collect();
        let a = run(&x, d, 0.3, 5.0);
        let b = dbscan(
            DbscanInput::Vectors {
                x: &x,
                n,
                d,
                metric: Metric::SqEuclidean,
            },
            0.09,
            5.0,
            None,
            &Control::new(),
        )
        .unwrap();
        assert_eq!(a, b);
        assert!(dbscan(
            DbscanInput::Precomputed {
                m: &[0.0, 1.0, 2.0, 0.0],
                n: 2
            },
            1.0,
            1.0,
            None,
            &Control::new()
        )
        .is_err());
        assert!(dbscan(
            DbscanInput::Vectors {
                x: &x,
                n,
                d,
                metric: Metric::Euclidean
            },
            0.0,
            1.0,
            None,
            &Control::new()
        )
        .is_err());
    }
}
