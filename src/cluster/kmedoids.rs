//! k-medoids with FasterPAM.
//!
//! **Objective.** Choose `k` of the points as medoids minimising the total (weighted) distance
//! of every point to its closest medoid, `sum_i w_i d(i, m(i))` (Kaufman and Rousseeuw 1987,
//! "Clustering by means of medoids"; "Finding Groups in Data" 1990). Unlike k-means the centres
//! are real cases, and any dissimilarity works, e.g. the edit distance between traces.
//!
//! **Initialisation.** `Build` is PAM's greedy BUILD (add the point that lowers the loss
//! most, `k` times); `Random` draws `k` distinct points with a seed.
//!
//! **FasterPAM** (Schubert and Rousseeuw 2021, "Fast and eager k-medoids clustering: O(k)
//! runtime improvement of the PAM, CLARA, and CLARANS algorithms", Information Systems
//! 101:101804; FastPAM1 in their SISAP 2019 paper). For every point we keep the distance to
//! its nearest and second-nearest medoid. The change of loss when a non-medoid `j` replaces
//! medoid `m` splits into a part shared by all `m` (points that move to `j`) and a per-medoid
//! part seeded by the *removal loss* of `m`, so all `k` swaps with `j` are evaluated in one
//! pass over the points: `O(n)` per candidate instead of `O(k n)`. FasterPAM then swaps
//! *eagerly*: it walks the candidates in order and performs the first improving swap at once,
//! stopping when a full cycle since the last swap brings no improvement. We follow the order
//! of the authors' reference implementation, so from the same initial medoids the loss is the
//! same. The pass over the points for one candidate runs in parallel chunks with a fixed
//! reduction order.

use rand::SeedableRng;
use rand_xoshiro::Xoshiro256PlusPlus;
use rayon::prelude::*;

use crate::control::Control;
use crate::distance::check_square;
use crate::error::{TmError, TmResult};

/// How the first medoids are chosen.
#[derive(Debug, Clone, PartialEq)]
pub enum MedoidInit {
    /// PAM BUILD (greedy, deterministic).
    Build,
    /// `k` distinct points drawn with the seed.
    Random(u64),
    /// Given medoid indices.
    Given(Vec<usize>),
}

/// The result of [`fasterpam`].
#[derive(Debug, Clone, PartialEq)]
pub struct MedoidsFit {
    /// Medoid point indices (one per cluster).
    pub medoids: Vec<usize>,
    /// Cluster (index into `medoids`) of each point.
    pub labels: Vec<u32>,
    /// Total weighted distance to the closest medoid.
    pub loss: f64,
    /// Passes over the candidates.
    pub n_iter: usize,
    /// Swaps made.
    pub n_swaps: usize,
}

#[derive(Clone, Copy, Debug)]
struct Rec {
    near: (usize, f64),
    seco: (usize, f64),
}

struct Mat<'a> {
    m: &'a [f64],
    n: usize,
}

impl Mat<'_> {
    #[inline]
    fn get(&self, i: usize, j: usize) -> f64 {
        self.m[i * self.n + j]
    }
}

const CHUNK: usize = 4096;

fn initial_assignment(mat: &Mat<'_>, med: &[usize], w: &[f64]) -> (f64, Vec<Rec>) {
    let n = mat.n;
    let data: Vec<Rec> = (0..n)
        .into_par_iter()
        .with_min_len(CHUNK)
        .map(|o| {
            let mut near = (0usize, mat.get(o, med[0]));
            let mut seco = (usize::MAX, f64::INFINITY);
            for (i, &mi) in med.iter().enumerate().skip(1) {
                let d = mat.get(o, mi);
                if d < near.1 || o == mi {
                    seco = near;
                    near = (i, d);
                } else if d < seco.1 {
                    seco = (i, d);
                }
            }
            Rec { near, seco }
        })
        .collect();
    let loss = sum_chunks(n, |o| w[o] * data[o].near.1);
    (loss, data)
}

/// Sum `f(i)` over `0..n` in fixed chunks, reduced in order.
fn sum_chunks(n: usize, f: impl Fn(usize) -> f64 + Sync) -> f64 {
    (0..n.div_ceil(CHUNK))
        .into_par_iter()
        .map(|c| (c * CHUNK..((c + 1) * CHUNK).min(n)).map(&f).sum::<f64>())
        .collect::<Vec<f64>>()
        .iter()
        .sum()
}

fn removal_loss(data: &[Rec], w: &[f64], k: usize) -> Vec<f64> {
    let mut r = vec![0.0; k];
    for (o, rec) in data.iter().enumerate() {
        r[rec.near.0] += w[o] * (rec.seco.1 - rec.near.1);
    }
    r
}

/// For candidate `j`: the best medoid slot to replace and the change of loss.
fn best_swap(mat: &Mat<'_>, rl: &[f64], data: &[Rec], w: &[f64], j: usize) -> (f64, usize) {
    let n = mat.n;
    let k = rl.len();
    // Row `j` rather than column `j`: the matrix is symmetric (checked), and a row is read
    // a cache line at a time where a column costs one line per value.
    let row = &mat.m[j * n..(j + 1) * n];
    let part = |lo: usize, hi: usize| {
        let mut ploss = vec![0.0; k];
        let mut acc = 0.0;
        for o in lo..hi {
            let rec = &data[o];
            let doj = row[o];
            if doj < rec.near.1 {
                acc += w[o] * (doj - rec.near.1);
                ploss[rec.near.0] += w[o] * (rec.near.1 - rec.seco.1);
            } else if doj < rec.seco.1 {
                ploss[rec.near.0] += w[o] * (doj - rec.seco.1);
            }
        }
        (ploss, acc)
    };
    let (ploss, acc) = if n < 2 * CHUNK {
        part(0, n)
    } else {
        let parts: Vec<(Vec<f64>, f64)> = (0..n.div_ceil(CHUNK))
            .into_par_iter()
            .map(|c| part(c * CHUNK, ((c + 1) * CHUNK).min(n)))
            .collect();
        let mut p = vec![0.0; k];
        let mut a = 0.0;
        for (q, b) in parts {
            p.iter_mut().zip(q).for_each(|(x, y)| *x += y);
            a += b;
        }
        (p, a)
    };
    let mut best = (f64::INFINITY, 0usize);
    for (i, (&r, &p)) in rl.iter().zip(&ploss).enumerate() {
        let v = r + p;
        if v < best.0 {
            best = (v, i);
        }
    }
    (best.0 + acc, best.1)
}

fn second_nearest(
    mat: &Mat<'_>,
    med: &[usize],
    near: usize,
    b: usize,
    o: usize,
    djo: f64,
) -> (usize, f64) {
    let mut s = (usize::MAX, f64::INFINITY);
    for (i, &mi) in med.iter().enumerate() {
        if i == near {
            continue;
        }
        let d = if i == b { djo } else { mat.get(o, mi) };
        if d < s.1 {
            s = (i, d);
        }
    }
    s
}

fn do_swap(
    mat: &Mat<'_>,
    med: &mut [usize],
    data: &mut [Rec],
    w: &[f64],
    b: usize,
    j: usize,
) -> f64 {
    med[b] = j;
    let medr: &[usize] = med;
    data.par_iter_mut()
        .enumerate()
        .with_min_len(CHUNK)
        .for_each(|(o, reco)| {
            if o == j {
                if reco.near.0 != b {
                    reco.seco = reco.near;
                }
                reco.near = (b, 0.0);
                return;
            }
            let djo = mat.get(j, o);
            if reco.near.0 == b {
                if djo < reco.seco.1 {
                    reco.near = (b, djo);
                } else {
                    reco.near = reco.seco;
                    reco.seco = second_nearest(mat, medr, reco.near.0, b, o, djo);
                }
            } else if djo < reco.near.1 {
                reco.seco = reco.near;
                reco.near = (b, djo);
            } else if djo < reco.seco.1 {
                reco.seco = (b, djo);
            } else if reco.seco.0 == b {
                reco.seco = second_nearest(mat, medr, reco.near.0, b, o, djo);
            }
        });
    let d: &[Rec] = data;
    sum_chunks(mat.n, |o| w[o] * d[o].near.1)
}

fn build_init(mat: &Mat<'_>, w: &[f64], k: usize, ctl: &Control) -> TmResult<Vec<usize>> {
    let n = mat.n;
    let mut best_d = vec![f64::INFINITY; n];
    let mut med: Vec<usize> = Vec::with_capacity(k);
    for _ in 0..k {
        ctl.check()?;
        let scores: Vec<f64> = (0..n)
            .into_par_iter()
            .map(|c| {
                if med.contains(&c) {
                    return f64::INFINITY;
                }
                let mut s = 0.0;
                for o in 0..n {
                    s += w[o] * mat.get(o, c).min(best_d[o]);
                }
                s
            })
            .collect();
        let mut pick = (f64::INFINITY, 0usize);
        for (c, &s) in scores.iter().enumerate() {
            if s < pick.0 {
                pick = (s, c);
            }
        }
        med.push(pick.1);
        for (o, b) in best_d.iter_mut().enumerate() {
            *b = b.min(mat.get(o, pick.1));
        }
    }
    Ok(med)
}

/// FasterPAM on a square distance matrix `m` (`n x n`); see the module documentation.
pub fn fasterpam(
    m: &[f64],
    n: usize,
    k: usize,
    weights: Option<&[f64]>,
    init: &MedoidInit,
    max_iter: usize,
    ctl: &Control,
) -> TmResult<MedoidsFit> {
    check_square(m, n)?;
    if n == 0 {
        return Err(TmError::data("there are no points to cluster"));
    }
    if k == 0 {
        return Err(TmError::param(
            "n_clusters",
            "n_clusters must be at least 1; got 0",
        ));
    }
    // Distinct points: rows that are all zero distance apart are one point.
    let distinct = {
        let mut reps: Vec<usize> = Vec::new();
        for i in 0..n {
            if !reps.iter().any(|&r| m[r * n + i] == 0.0) {
                reps.push(i);
                if reps.len() >= k {
                    break;
                }
            }
        }
        reps.len()
    };
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
    let w: Vec<f64> = match weights {
        Some(w) if w.len() == n && w.iter().all(|v| v.is_finite() && *v >= 0.0) => w.to_vec(),
        Some(_) => {
            return Err(TmError::param(
                "sample_weight",
                format!("sample_weight must hold {n} finite values >= 0"),
            ))
        }
        None => vec![1.0; n],
    };
    let mat = Mat { m, n };
    let mut med = match init {
        MedoidInit::Build => build_init(&mat, &w, k, ctl)?,
        MedoidInit::Random(seed) => {
            let mut rng = Xoshiro256PlusPlus::seed_from_u64(*seed);
            rand::seq::index::sample(&mut rng, n, k).into_vec()
        }
        MedoidInit::Given(v) => {
            let mut s = v.clone();
            s.sort_unstable();
            s.dedup();
            if v.len() != k || s.len() != k || v.iter().any(|&i| i >= n) {
                return Err(TmError::param(
                    "init",
                    format!("initial medoids must be {k} distinct indices below {n}"),
                ));
            }
            v.clone()
        }
    };
    let (mut loss, mut data) = initial_assignment(&mat, &med, &w);
    if k == 1 {
        // A single medoid: the point with the lowest total distance.
        let scores: Vec<f64> = (0..n)
            .into_par_iter()
            .map(|c| (0..n).map(|o| w[o] * mat.get(o, c)).sum())
            .collect();
        let mut best = (f64::INFINITY, 0usize);
        for (c, &s) in scores.iter().enumerate() {
            if s < best.0 {
                best = (s, c);
            }
        }
        return Ok(MedoidsFit {
            medoids: vec![best.1],
            labels: vec![0; n],
            loss: best.0,
            n_iter: 1,
            n_swaps: usize::from(best.1 != med[0]),
        });
    }
    let mut rl = removal_loss(&data, &w, k);
    let mut lastswap = n;
    let mut n_swaps = 0usize;
    let mut iter = 0usize;
    ctl.set_total(max_iter as u64);
    while iter < max_iter {
        iter += 1;
        let (swaps_before, lastloss) = (n_swaps, loss);
        for j in 0..n {
            if j == lastswap {
                break;
            }
            if j % 256 == 0 {
                ctl.check()?;
            }
            if j == med[data[j].near.0] {
                continue;
            }
            let (change, b) = best_swap(&mat, &rl, &data, &w, j);
            if change >= 0.0 {
                continue;
            }
            n_swaps += 1;
            lastswap = j;
            loss = do_swap(&mat, &mut med, &mut data, &w, b, j);
            rl = removal_loss(&data, &w, k);
        }
        ctl.advance(1);
        if n_swaps == swaps_before || loss >= lastloss {
            break;
        }
    }
    let labels = data.iter().map(|r| r.near.0 as u32).collect();
    Ok(MedoidsFit {
        medoids: med,
        labels,
        loss,
        n_iter: iter,
        n_swaps,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::distance::{pdist, squareform, Metric};

    fn square(x: &[f64], d: usize) -> Vec<f64> {
        let n = x.len() / d;
        let c = pdist(x, n, d, Metric::Euclidean, u64::MAX, &Control::new()).unwrap();
        squareform(&c, n, u64::MAX).unwrap()
    }

    #[test]
    fn finds_two_groups() {
        let x = [0., 0., 0., 1., 1., 0., 10., 10., 10., 11., 11., 10.];
        let m = square(&x, 2);
        let f = fasterpam(&m, 6, 2, None, &MedoidInit::Random(1), 100, &Control::new()).unwrap();
        let mut med = f.medoids.clone();
        med.sort_unstable();
        assert_eq!(med, vec![0, 3]);
        approx::assert_abs_diff_eq!(f.loss, 4.0, epsilon = 1e-12);
        let g = fasterpam(&m, 6, 2, None, &MedoidInit::Build, 100, &Control::new()).unwrap();
        approx::assert_abs_diff_eq!(g.loss, 4.0, epsilon = 1e-12);
    }

    #[test]
    fn loss_is_a_local_optimum_by_brute_force() {
        use rand::{Rng, SeedableRng};
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(11);
        let n = 60;
        let x: Vec<f64> = (0..n * 2).map(|_| rng.random::<f64>()).collect();
        let m = square(&x, 2);
        let f = fasterpam(&m, n, 4, None, &MedoidInit::Random(5), 100, &Control::new()).unwrap();
        let loss = |med: &[usize]| -> f64 {
            (0..n)
                .map(|o| {
                    med.iter()
                        .map(|&c| m[o * n + c])
                        .fold(f64::INFINITY, f64::min)
                })
                .sum()
        };
        approx::assert_abs_diff_eq!(loss(&f.medoids), f.loss, epsilon = 1e-9);
        // no single swap improves (the PAM SWAP optimality condition)
        for b in 0..4 {
            for j in 0..n {
                if f.medoids.contains(&j) {
                    continue;
                }
                let mut t = f.medoids.clone();
                t[b] = j;
                assert!(loss(&t) >= f.loss - 1e-9);
            }
        }
    }

    #[test]
    fn refuses_too_many_clusters() {
        let m = vec![0.0; 9];
        let e = fasterpam(&m, 3, 2, None, &MedoidInit::Build, 10, &Control::new()).unwrap_err();
        assert!(e.to_string().contains("identical"), "{e}");
    }
}
