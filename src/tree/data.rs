//! Training data for trees: a column-major feature matrix with feature kinds, the target, and
//! the per-feature presorted sample orders that the builder partitions node by node.

use rayon::prelude::*;

use super::params::{FeatureKind, MissingPolicy};
use crate::error::{TmError, TmResult};

/// A feature matrix stored column by column (`x[f * n_samples + i]`).
///
/// Numeric features hold real values (NaN = missing); categorical features hold integer codes
/// `0..n_categories` as floats (NaN = missing).
#[derive(Debug, Clone)]
pub struct Features {
    n_samples: usize,
    n_features: usize,
    cols: Vec<f64>,
    kinds: Vec<FeatureKind>,
}

impl Features {
    /// Build from a row-major matrix (`x[i * n_features + f]`), as numpy hands it over.
    ///
    /// Checks: the shape, one kind per feature, no infinite values, categorical codes that are
    /// whole numbers in `0..n_categories`, and no NaN when `missing` is [`MissingPolicy::Error`].
    /// Errors name the feature and the row.
    pub fn from_row_major(
        x: &[f64],
        n_samples: usize,
        kinds: Vec<FeatureKind>,
        missing: MissingPolicy,
        names: &[String],
    ) -> TmResult<Self> {
        let n_features = kinds.len();
        if x.len() != n_samples * n_features {
            return Err(TmError::data(format!(
                "the feature matrix has {} values; expected {n_samples} rows x {n_features} \
                 features",
                x.len()
            )));
        }
        let mut cols = vec![0.0; x.len()];
        cols.par_chunks_mut(n_samples.max(1))
            .enumerate()
            .for_each(|(f, col)| {
                for (i, c) in col.iter_mut().enumerate() {
                    *c = x[i * n_features + f];
                }
            });
        let feats = Features {
            n_samples,
            n_features,
            cols,
            kinds,
        };
        feats.check(missing, names)?;
        Ok(feats)
    }

    fn check(&self, missing: MissingPolicy, names: &[String]) -> TmResult<()> {
        let name = |f: usize| {
            names
                .get(f)
                .cloned()
                .unwrap_or_else(|| format!("feature {f}"))
        };
        let bad: Vec<Option<(usize, String)>> = (0..self.n_features)
            .into_par_iter()
            .map(|f| {
                let col = self.column(f);
                for (i, &v) in col.iter().enumerate() {
                    if v.is_nan() {
                        if missing == MissingPolicy::Error {
                            return Some((
                                i,
                                format!(
                                    "feature '{}' has a missing value (NaN) at row {i}; choose \
                                     missing_values='route' to learn where missing values go, or \
                                     fill them",
                                    name(f)
                                ),
                            ));
                        }
                        continue;
                    }
                    if v.is_infinite() {
                        return Some((
                            i,
                            format!("feature '{}' has an infinite value at row {i}", name(f)),
                        ));
                    }
                    if let FeatureKind::Categorical(m) = self.kinds[f] {
                        if v < 0.0 || v.fract() != 0.0 || v >= f64::from(m) {
                            return Some((
                                i,
                                format!(
                                    "categorical feature '{}' has code {v} at row {i}; expected \
                                     a whole number in [0, {m})",
                                    name(f)
                                ),
                            ));
                        }
                    }
                }
                None
            })
            .collect();
        match bad.into_iter().flatten().next() {
            Some((_, msg)) => Err(TmError::data(msg)),
            None => Ok(()),
        }
    }

    /// Number of rows.
    pub fn n_samples(&self) -> usize {
        self.n_samples
    }
    /// Number of features.
    pub fn n_features(&self) -> usize {
        self.n_features
    }
    /// The kinds of the features.
    pub fn kinds(&self) -> &[FeatureKind] {
        &self.kinds
    }
    /// Values of feature `f`, one per sample.
    pub fn column(&self, f: usize) -> &[f64] {
        &self.cols[f * self.n_samples..(f + 1) * self.n_samples]
    }
    /// The whole column-major buffer.
    pub fn cols(&self) -> &[f64] {
        &self.cols
    }
}

/// What a tree learns to predict.
#[derive(Debug, Clone, Copy)]
pub enum Target<'a> {
    /// Class codes `0..n_classes`.
    Classes {
        /// One code per sample.
        y: &'a [u32],
        /// Number of classes (codes are below it).
        n_classes: usize,
    },
    /// Real values (regression).
    Values(&'a [f64]),
}

impl Target<'_> {
    /// Number of samples.
    pub fn len(&self) -> usize {
        match self {
            Target::Classes { y, .. } => y.len(),
            Target::Values(v) => v.len(),
        }
    }
    /// Whether there are no samples.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// Check lengths, codes and values against `n` samples and the given rows.
    pub(crate) fn check(&self, n: usize, rows: Option<&[usize]>) -> TmResult<()> {
        if self.len() != n {
            return Err(TmError::data(format!(
                "the target has {} labels but the features have {n} rows; they must have the \
                 same length",
                self.len()
            )));
        }
        let all: Vec<usize>;
        let rows = match rows {
            Some(r) => r,
            None => {
                all = (0..n).collect();
                &all
            }
        };
        match self {
            Target::Classes { y, n_classes } => {
                if let Some(&i) = rows.iter().find(|&&i| y[i] as usize >= *n_classes) {
                    return Err(TmError::data(format!(
                        "class code {} at row {i} is not below n_classes = {n_classes}",
                        y[i]
                    )));
                }
                let first = rows.first().map(|&i| y[i]);
                if rows.iter().all(|&i| Some(y[i]) == first) {
                    return Err(TmError::data(
                        "the target has one class only; a classification tree needs at least \
                         two classes",
                    ));
                }
            }
            Target::Values(v) => {
                if let Some(&i) = rows.iter().find(|&&i| !v[i].is_finite()) {
                    return Err(TmError::data(format!(
                        "the target has a non-finite value ({}) at row {i}",
                        v[i]
                    )));
                }
            }
        }
        Ok(())
    }
}

/// Check sample weights: one per sample, finite, non-negative, with a positive sum.
pub(crate) fn check_weights(w: &[f64], n: usize) -> TmResult<()> {
    if w.len() != n {
        return Err(TmError::data(format!(
            "sample_weight has {} values but the features have {n} rows",
            w.len()
        )));
    }
    if let Some(i) = w.iter().position(|v| !(v.is_finite() && *v >= 0.0)) {
        return Err(TmError::data(format!(
            "sample_weight must be finite and >= 0; got {} at row {i}",
            w[i]
        )));
    }
    if w.iter().sum::<f64>() <= 0.0 {
        return Err(TmError::data("sample_weight sums to zero"));
    }
    Ok(())
}

/// One entry of a presorted block: the feature value, the sample id and the class code (0 for
/// regression). Carrying value and class in the block keeps the split scan sequential in
/// memory instead of jumping to `x[i]` and `y[i]` for every sample.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Rec {
    /// Feature value.
    pub v: f64,
    /// Sample id.
    pub i: u32,
    /// Class code (classification) or 0.
    pub c: u32,
}

/// A `u64` whose order is the numeric order of `v`, with every NaN last.
#[inline]
fn order_key(v: f64) -> u64 {
    if v.is_nan() {
        return u64::MAX;
    }
    // -0.0 and 0.0 are one value
    let b = (v + 0.0).to_bits();
    if b >> 63 == 1 {
        !b
    } else {
        b | (1 << 63)
    }
}

/// For each feature, the samples sorted by value (NaN last, ties by id): the presorted layout
/// of SLIQ (Mehta, Agrawal, Rissanen 1996). Feature `f` occupies `recs[f * m..(f + 1) * m]`
/// where `m` is the number of samples kept.
#[derive(Debug, Clone)]
pub struct Presorted {
    /// Sorted entries, feature after feature.
    pub recs: Vec<Rec>,
    /// Number of samples per feature block.
    pub m: usize,
}

impl Presorted {
    /// Sort every feature (in parallel over features); `classes` gives each sample's class
    /// code (empty for regression).
    pub fn new(x: &Features, classes: &[u32]) -> Self {
        let n = x.n_samples();
        let mut recs = vec![Rec { v: 0.0, i: 0, c: 0 }; n * x.n_features()];
        recs.par_chunks_mut(n.max(1))
            .enumerate()
            .for_each(|(f, block)| {
                let col = x.column(f);
                for (i, r) in block.iter_mut().enumerate() {
                    *r = Rec {
                        v: col[i],
                        i: i as u32,
                        c: classes.get(i).copied().unwrap_or(0),
                    };
                }
                block.sort_unstable_by_key(|r| (order_key(r.v), r.i));
            });
        Presorted { recs, m: n }
    }

    /// The same orders restricted to the samples with `keep[i]` (order preserved).
    pub fn subset(&self, keep: &[bool], n_features: usize) -> Self {
        let m = keep.iter().filter(|&&k| k).count();
        let mut recs = vec![Rec { v: 0.0, i: 0, c: 0 }; m * n_features];
        if m > 0 {
            recs.par_chunks_mut(m)
                .zip(self.recs.par_chunks(self.m.max(1)))
                .for_each(|(dst, src)| {
                    let mut k = 0;
                    for r in src {
                        if keep[r.i as usize] {
                            dst[k] = *r;
                            k += 1;
                        }
                    }
                });
        }
        Presorted { recs, m }
    }

    /// Sample ids of block `f` in `lo..hi`.
    pub fn ids(&self, f: usize, lo: usize, hi: usize) -> impl Iterator<Item = u32> + '_ {
        self.recs[f * self.m + lo..f * self.m + hi]
            .iter()
            .map(|r| r.i)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn transposes_and_checks() {
        let x = [1.0, 10.0, 2.0, 20.0, 3.0, 30.0];
        let f = Features::from_row_major(
            &x,
            3,
            vec![FeatureKind::Numeric, FeatureKind::Numeric],
            MissingPolicy::Error,
            &[],
        )
        .unwrap();
        assert_eq!(f.column(1), &[10.0, 20.0, 30.0]);
        let bad = [1.0, f64::NAN];
        let e = Features::from_row_major(
            &bad,
            2,
            vec![FeatureKind::Numeric],
            MissingPolicy::Error,
            &["age".into()],
        )
        .unwrap_err();
        assert!(e.to_string().contains("'age'") && e.to_string().contains("row 1"));
        assert!(Features::from_row_major(
            &bad,
            2,
            vec![FeatureKind::Numeric],
            MissingPolicy::Route,
            &[]
        )
        .is_ok());
        let e = Features::from_row_major(
            &[0.0, 3.0],
            2,
            vec![FeatureKind::Categorical(3)],
            MissingPolicy::Error,
            &[],
        )
        .unwrap_err();
        assert!(e.to_string().contains("[0, 3)"));
    }

    #[test]
    fn presort_puts_nan_last_and_subsets() {
        let x = [3.0, f64::NAN, 1.0, 2.0];
        let f =
            Features::from_row_major(&x, 4, vec![FeatureKind::Numeric], MissingPolicy::Route, &[])
                .unwrap();
        let p = Presorted::new(&f, &[]);
        assert_eq!(p.ids(0, 0, 4).collect::<Vec<_>>(), vec![2, 3, 0, 1]);
        let s = p.subset(&[true, true, false, true], 1);
        assert_eq!(s.ids(0, 0, 3).collect::<Vec<_>>(), vec![3, 0, 1]);
    }

    #[test]
    fn target_checks() {
        let y = [0u32, 0, 0];
        let t = Target::Classes {
            y: &y,
            n_classes: 2,
        };
        assert!(t
            .check(3, None)
            .unwrap_err()
            .to_string()
            .contains("one class"));
        assert!(t
            .check(2, None)
            .unwrap_err()
            .to_string()
            .contains("same length"));
        assert!(check_weights(&[1.0, -1.0], 2).is_err());
        assert!(check_weights(&[0.0, 0.0], 2).is_err());
    }
}
