//! Classification metrics from a confusion matrix.
//!
//! `C[t][p]` counts (or weighs) the samples of true label `t` predicted as `p`. From it:
//! accuracy `Σ C[k][k] / N` and error `1 - accuracy`; per class precision `TP/(TP+FP)`, recall
//! `TP/(TP+FN)` and F1 `2TP/(2TP+FP+FN)`; their macro (plain mean over classes), weighted (mean
//! weighted by support) and micro (pooled counts, equal to accuracy for single-label data)
//! averages; the multiclass Matthews correlation (Matthews 1975; Gorodkin 2004)
//! `(c·s - Σ p_k t_k) / sqrt((s² - Σ p_k²)(s² - Σ t_k²))` with `c` the trace, `s` the total,
//! `t_k`/`p_k` the true/predicted totals; and Cohen's kappa (Cohen 1960)
//! `(p_o - p_e) / (1 - p_e)`. A ratio with a zero denominator takes the `zero_division` value,
//! as in scikit-learn; the MCC of a degenerate table is 0.

use crate::error::{TmError, TmResult};

/// The confusion matrix (`n_labels²`, row = true label) of label codes, optionally weighted.
pub fn confusion_matrix(
    y_true: &[u32],
    y_pred: &[u32],
    n_labels: usize,
    weights: Option<&[f64]>,
) -> TmResult<Vec<f64>> {
    if y_true.len() != y_pred.len() {
        return Err(TmError::data(format!(
            "y_true has {} labels and y_pred {}; they must have the same length",
            y_true.len(),
            y_pred.len()
        )));
    }
    if let Some(w) = weights {
        if w.len() != y_true.len() {
            return Err(TmError::data(format!(
                "sample_weight has {} values for {} labels",
                w.len(),
                y_true.len()
            )));
        }
    }
    let mut c = vec![0.0; n_labels * n_labels];
    for (i, (&t, &p)) in y_true.iter().zip(y_pred).enumerate() {
        let (t, p) = (t as usize, p as usize);
        if t >= n_labels || p >= n_labels {
            return Err(TmError::data(format!(
                "label code at row {i} is not below n_labels = {n_labels}"
            )));
        }
        c[t * n_labels + p] += weights.map_or(1.0, |w| w[i]);
    }
    Ok(c)
}

/// Scores derived from a confusion matrix.
#[derive(Debug, Clone, PartialEq)]
pub struct Scores {
    /// Share of correct predictions.
    pub accuracy: f64,
    /// `1 - accuracy`.
    pub error: f64,
    /// Per-class precision.
    pub precision: Vec<f64>,
    /// Per-class recall.
    pub recall: Vec<f64>,
    /// Per-class F1.
    pub f1: Vec<f64>,
    /// Per-class support (true totals).
    pub support: Vec<f64>,
    /// `[macro, micro, weighted]` precision.
    pub precision_avg: [f64; 3],
    /// `[macro, micro, weighted]` recall.
    pub recall_avg: [f64; 3],
    /// `[macro, micro, weighted]` F1.
    pub f1_avg: [f64; 3],
    /// Matthews correlation coefficient.
    pub mcc: f64,
    /// Cohen's kappa.
    pub kappa: f64,
    /// Mean per-class recall.
    pub balanced_accuracy: f64,
}

fn ratio(a: f64, b: f64, zero_division: f64) -> f64 {
    if b == 0.0 {
        zero_division
    } else {
        a / b
    }
}

/// All scores of an `n x n` confusion matrix. Macro averages run over the classes given (all
/// rows of the matrix), as scikit-learn does when `labels` is passed.
pub fn scores(c: &[f64], n: usize, zero_division: f64) -> TmResult<Scores> {
    if c.len() != n * n || n == 0 {
        return Err(TmError::data(format!(
            "a confusion matrix of {} values is not square with {n} labels",
            c.len()
        )));
    }
    let t: Vec<f64> = (0..n).map(|k| (0..n).map(|j| c[k * n + j]).sum()).collect();
    let p: Vec<f64> = (0..n).map(|k| (0..n).map(|j| c[j * n + k]).sum()).collect();
    let tp: Vec<f64> = (0..n).map(|k| c[k * n + k]).collect();
    let s: f64 = t.iter().sum();
    let correct: f64 = tp.iter().sum();
    let accuracy = ratio(correct, s, zero_division);
    let precision: Vec<f64> = (0..n).map(|k| ratio(tp[k], p[k], zero_division)).collect();
    let recall: Vec<f64> = (0..n).map(|k| ratio(tp[k], t[k], zero_division)).collect();
    let f1: Vec<f64> = (0..n)
        .map(|k| ratio(2.0 * tp[k], t[k] + p[k], zero_division))
        .collect();
    let mean = |v: &[f64]| v.iter().sum::<f64>() / n as f64;
    let weighted = |v: &[f64]| {
        if s == 0.0 {
            zero_division
        } else {
            v.iter().zip(&t).map(|(a, b)| a * b).sum::<f64>() / s
        }
    };
    let fp: f64 = p.iter().sum::<f64>() - correct;
    let fneg: f64 = s - correct;
    let micro_p = ratio(correct, correct + fp, zero_division);
    let micro_r = ratio(correct, correct + fneg, zero_division);
    let micro_f = ratio(2.0 * correct, 2.0 * correct + fp + fneg, zero_division);
    let tt: f64 = t.iter().map(|v| v * v).sum();
    let pp: f64 = p.iter().map(|v| v * v).sum();
    let tpd: f64 = t.iter().zip(&p).map(|(a, b)| a * b).sum();
    let cov_tp = correct * s - tpd;
    let cov_pp = s * s - pp;
    let cov_tt = s * s - tt;
    let mcc = if cov_pp * cov_tt == 0.0 {
        0.0
    } else {
        cov_tp / (cov_tt * cov_pp).sqrt()
    };
    let po = accuracy;
    let pe = if s > 0.0 { tpd / (s * s) } else { 0.0 };
    let kappa = if pe == 1.0 {
        zero_division
    } else {
        (po - pe) / (1.0 - pe)
    };
    let present: Vec<usize> = (0..n).filter(|&k| t[k] > 0.0).collect();
    let balanced_accuracy = if present.is_empty() {
        zero_division
    } else {
        present.iter().map(|&k| tp[k] / t[k]).sum::<f64>() / present.len() as f64
    };
    Ok(Scores {
        accuracy,
        error: 1.0 - accuracy,
        precision_avg: [mean(&precision), micro_p, weighted(&precision)],
        recall_avg: [mean(&recall), micro_r, weighted(&recall)],
        f1_avg: [mean(&f1), micro_f, weighted(&f1)],
        precision,
        recall,
        f1,
        support: t,
        mcc,
        kappa,
        balanced_accuracy,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn binary_example() {
        // y_true 1111000000, y_pred 1110100000: TN 5, FP 1, FN 1, TP 3; P = R = F1 = 0.75,
        // MCC = kappa = 0.583333, balanced accuracy 0.791667 (REFERENCES.md section F,
        // hand-checked).
        let t = [1, 1, 1, 1, 0, 0, 0, 0, 0, 0];
        let p = [1, 1, 1, 0, 1, 0, 0, 0, 0, 0];
        let c = confusion_matrix(&t, &p, 2, None).unwrap();
        assert_eq!(c, vec![5.0, 1.0, 1.0, 3.0]);
        let s = scores(&c, 2, 0.0).unwrap();
        assert!((s.precision[1] - 0.75).abs() < 1e-12);
        assert!((s.f1[1] - 0.75).abs() < 1e-12);
        assert!((s.mcc - 14.0 / 24.0).abs() < 1e-12);
        assert!((s.kappa - 14.0 / 24.0).abs() < 1e-12);
        assert!((s.balanced_accuracy - 0.791_666_666_666_666_6).abs() < 1e-12);
    }

    #[test]
    fn multiclass_example() {
        // scikit-learn documentation example: y_true [0,1,2,0,1,2], y_pred [0,2,1,0,0,1]:
        // macro P 0.2222, macro F1 0.266667, per-class F1 0.8, 0, 0; MCC 0; kappa 0.
        let c = confusion_matrix(&[0, 1, 2, 0, 1, 2], &[0, 2, 1, 0, 0, 1], 3, None).unwrap();
        let s = scores(&c, 3, 0.0).unwrap();
        assert!((s.precision_avg[0] - 2.0 / 9.0).abs() < 1e-12);
        assert!((s.f1_avg[0] - 0.8 / 3.0).abs() < 1e-12);
        assert!((s.f1_avg[1] - 1.0 / 3.0).abs() < 1e-12);
        assert_eq!(s.f1, vec![0.8, 0.0, 0.0]);
        assert!(s.mcc.abs() < 1e-12);
        assert!(s.kappa.abs() < 1e-12);
        assert!(confusion_matrix(&[0], &[0, 1], 2, None).is_err());
        assert!(confusion_matrix(&[0], &[3], 2, None).is_err());
    }
}
