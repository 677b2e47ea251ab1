//! Splitting samples for honest evaluation: k-fold, stratified k-fold, group k-fold and
//! time-ordered splits.
//!
//! * k-fold: consecutive folds, the first `n mod k` one sample larger (optionally after a
//!   seeded shuffle). Kohavi 1995 (IJCAI) recommends stratified 10-fold cross-validation.
//! * Stratified k-fold: classes are numbered in order of first appearance, the labels sorted,
//!   and fold `i` takes the class counts of every `k`-th sorted label starting at `i`; within a
//!   class, samples fill folds in order. This is the allocation scikit-learn's
//!   `StratifiedKFold` uses (since 0.22), so unshuffled folds coincide with it.
//! * Group k-fold: whole groups (e.g. cases, when the rows are events) go to one fold, largest
//!   group first into the currently lightest fold, so no group is on both sides of a split.
//! * Time-ordered: expanding-window splits over samples sorted by time, as in
//!   scikit-learn's `TimeSeriesSplit` (Bergmeir & Benítez 2012 discuss why time order matters).

use rand::seq::SliceRandom;
use rand::SeedableRng;
use rand_xoshiro::Xoshiro256PlusPlus;

use crate::error::{TmError, TmResult};

fn check_k(n: usize, k: usize) -> TmResult<()> {
    if k < 2 {
        return Err(TmError::param(
            "n_splits",
            format!("n_splits must be an int in the range [2, inf); got {k}"),
        ));
    }
    if k > n {
        return Err(TmError::param(
            "n_splits",
            format!("n_splits = {k} is larger than the number of samples ({n})"),
        ));
    }
    Ok(())
}

/// Fold id of each of `n` samples; `seed` shuffles the order first.
pub fn kfold(n: usize, k: usize, seed: Option<u64>) -> TmResult<Vec<u32>> {
    check_k(n, k)?;
    let mut order: Vec<usize> = (0..n).collect();
    if let Some(s) = seed {
        order.shuffle(&mut Xoshiro256PlusPlus::seed_from_u64(s));
    }
    let mut fold = vec![0u32; n];
    let (base, extra) = (n / k, n % k);
    let mut pos = 0;
    for f in 0..k {
        let size = base + usize::from(f < extra);
        for &i in &order[pos..pos + size] {
            fold[i] = f as u32;
        }
        pos += size;
    }
    Ok(fold)
}

/// Stratified fold id of each sample from its class code; `seed` shuffles within classes.
pub fn stratified_kfold(y: &[u32], k: usize, seed: Option<u64>) -> TmResult<Vec<u32>> {
    let n = y.len();
    check_k(n, k)?;
    // classes in order of first appearance
    let mut code: std::collections::HashMap<u32, usize> = std::collections::HashMap::new();
    let enc: Vec<usize> = y
        .iter()
        .map(|v| {
            let l = code.len();
            *code.entry(*v).or_insert(l)
        })
        .collect();
    let nc = code.len();
    let mut counts = vec![0usize; nc];
    for &e in &enc {
        counts[e] += 1;
    }
    if let Some((c, &m)) = counts.iter().enumerate().min_by_key(|(_, &m)| m) {
        if m < k {
            let label = code.iter().find(|(_, &v)| v == c).map_or(0, |(l, _)| *l);
            return Err(TmError::param(
                "n_splits",
                format!(
                    "n_splits = {k} is larger than the {m} samples of the smallest class \
                     (label code {label}); use fewer folds"
                ),
            ));
        }
    }
    let mut sorted = enc.clone();
    sorted.sort_unstable();
    let mut alloc = vec![0usize; k * nc];
    for f in 0..k {
        for &e in sorted.iter().skip(f).step_by(k) {
            alloc[f * nc + e] += 1;
        }
    }
    let mut rng = seed.map(Xoshiro256PlusPlus::seed_from_u64);
    let mut fold = vec![0u32; n];
    for c in 0..nc {
        let mut folds: Vec<u32> = Vec::with_capacity(counts[c]);
        for f in 0..k {
            folds.extend(std::iter::repeat_n(f as u32, alloc[f * nc + c]));
        }
        if let Some(r) = rng.as_mut() {
            folds.shuffle(r);
        }
        let mut it = folds.into_iter();
        for (i, &e) in enc.iter().enumerate() {
            if e == c {
                fold[i] = it.next().unwrap_or(0);
            }
        }
    }
    Ok(fold)
}

/// Fold id of each sample such that all samples of a group share a fold.
pub fn group_kfold(groups: &[u32], k: usize) -> TmResult<Vec<u32>> {
    let ng = groups.iter().map(|&g| g as usize + 1).max().unwrap_or(0);
    let mut size = vec![0usize; ng];
    for &g in groups {
        size[g as usize] += 1;
    }
    let present: Vec<usize> = (0..ng).filter(|&g| size[g] > 0).collect();
    if present.len() < k {
        return Err(TmError::param(
            "n_splits",
            format!(
                "n_splits = {k} is larger than the number of groups ({})",
                present.len()
            ),
        ));
    }
    check_k(groups.len(), k)?;
    let mut order = present;
    order.sort_by(|&a, &b| size[b].cmp(&size[a]).then(a.cmp(&b)));
    let mut load = vec![0usize; k];
    let mut gfold = vec![0u32; ng];
    for g in order {
        let f = (0..k).min_by_key(|&f| (load[f], f)).unwrap_or(0);
        load[f] += size[g];
        gfold[g] = f as u32;
    }
    Ok(groups.iter().map(|&g| gfold[g as usize]).collect())
}

/// Expanding-window time splits over `n` samples already sorted by time: `(train, test)` index
/// ranges `(0..a, b..c)` as `(a, b, c)`. `test_size` defaults to `n / (n_splits + 1)`; `gap`
/// samples are left out between train and test; `max_train` caps the training window.
pub fn time_splits(
    n: usize,
    n_splits: usize,
    test_size: Option<usize>,
    gap: usize,
    max_train: Option<usize>,
) -> TmResult<Vec<(usize, usize, usize, usize)>> {
    if n_splits < 1 {
        return Err(TmError::param(
            "n_splits",
            format!("n_splits must be an int in the range [1, inf); got {n_splits}"),
        ));
    }
    let ts = test_size.unwrap_or(n / (n_splits + 1));
    if ts == 0 || n_splits * ts + gap >= n {
        return Err(TmError::param(
            "n_splits",
            format!(
                "cannot make {n_splits} splits with test_size {ts} and gap {gap} from {n} \
                 samples"
            ),
        ));
    }
    let mut out = Vec::with_capacity(n_splits);
    for s in 0..n_splits {
        let test_start = n - (n_splits - s) * ts;
        let train_end = test_start - gap;
        let train_start = max_train.map_or(0, |m| train_end.saturating_sub(m));
        out.push((train_start, train_end, test_start, test_start + ts));
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn kfold_sizes_like_reference() {
        // KFold(3) on 7 items -> test folds [0,1,2],[3,4],[5,6] (REFERENCES.md section F).
        assert_eq!(kfold(7, 3, None).unwrap(), vec![0, 0, 0, 1, 1, 2, 2]);
        assert!(kfold(2, 3, None).is_err());
        let s = kfold(10, 2, Some(3)).unwrap();
        assert_eq!(s.iter().filter(|&&f| f == 0).count(), 5);
    }

    #[test]
    fn stratified_matches_reference() {
        // StratifiedKFold(2) on y = [0,0,1,1] -> tests [0,2],[1,3] (REFERENCES.md section F).
        assert_eq!(
            stratified_kfold(&[0, 0, 1, 1], 2, None).unwrap(),
            vec![0, 1, 0, 1]
        );
        let e = stratified_kfold(&[0, 0, 0, 1], 2, None).unwrap_err();
        assert!(e.to_string().contains("smallest class"));
    }

    #[test]
    fn groups_stay_together() {
        let g = [0, 0, 0, 1, 1, 2, 3, 3];
        let f = group_kfold(&g, 2).unwrap();
        for i in 0..g.len() {
            for j in 0..g.len() {
                if g[i] == g[j] {
                    assert_eq!(f[i], f[j]);
                }
            }
        }
        assert!(group_kfold(&[0, 0], 2).is_err());
    }

    #[test]
    fn time_splits_like_reference() {
        // TimeSeriesSplit, n = 6 (REFERENCES.md section F): n_splits 3 -> train [0,1,2] test
        // [3], ..., train [0..4] test [5]; n_splits 2, gap 1, test_size 2 -> train [0] test
        // [2,3]; train [0,1,2] test [4,5].
        assert_eq!(
            time_splits(6, 3, None, 0, None).unwrap(),
            vec![(0, 3, 3, 4), (0, 4, 4, 5), (0, 5, 5, 6)]
        );
        assert_eq!(
            time_splits(6, 2, Some(2), 1, None).unwrap(),
            vec![(0, 1, 2, 4), (0, 3, 4, 6)]
        );
        assert!(time_splits(3, 5, None, 0, None).is_err());
    }
}
