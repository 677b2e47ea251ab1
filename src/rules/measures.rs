//! Interestingness measures of an association rule `X → Y`, from four counts: `n` transactions,
//! `n_x = σ(X)`, `n_y = σ(Y)`, `n_xy = σ(X ∪ Y)`; `s(·)` is the relative support.
//!
//! | measure | formula | source |
//! |---|---|---|
//! | support | `s(XY)` | Agrawal, Imieliński & Swami 1993 |
//! | confidence | `s(XY) / s(X)` | Agrawal, Imieliński & Swami 1993 |
//! | lift (interest) | `s(XY) / (s(X) s(Y))` | Brin, Motwani, Ullman & Tsur 1997 |
//! | leverage | `s(XY) − s(X) s(Y)` | Piatetsky-Shapiro 1991 |
//! | conviction | `(1 − s(Y)) / (1 − conf)`, `∞` when `conf = 1` | Brin et al. 1997 |
//! | jaccard | `s(XY) / (s(X) + s(Y) − s(XY))` | Tan, Kumar & Srivastava 2002 |
//! | cosine | `s(XY) / √(s(X) s(Y))` | Tan, Kumar & Srivastava 2002 |
//! | kulczynski | `½ (conf(X→Y) + conf(Y→X))` | Wu, Chen & Han 2010 |
//! | all_confidence | `s(XY) / max(s(X), s(Y))` | Omiecinski 2003 |
//! | max_confidence | `max(conf(X→Y), conf(Y→X))` | Wu, Chen & Han 2010 |
//! | imbalance_ratio | `|s(X) − s(Y)| / (s(X) + s(Y) − s(XY))` | Wu, Chen & Han 2010 |
//! | certainty | `(conf − s(Y)) / (1 − s(Y))`, 0 when `s(Y) = 1` | Berzal et al. 2002 |
//! | zhang | `(s(XY) − s(X)s(Y)) / max(s(XY)(1 − s(X)), s(X)(s(Y) − s(XY)))` | Zhang 2000 |
//!
//! Lift, leverage and conviction depend on `n` (the number of transactions without `X` or
//! `Y`); jaccard, cosine, kulczynski, all- and max-confidence do not ("null-invariant",
//! Wu, Chen & Han 2010), which makes them safer when most transactions hold neither side.
//! The imbalance ratio complements Kulczynski: a Kulczynski of 0.5 with a high imbalance ratio
//! means one side is much more frequent than the other.
//!
//! ```
//! use tracemill::rules::Measure;
//! // Tan, Steinbach & Kumar: {Milk, Diapers} -> {Beer}, n = 5, n_x = 3, n_y = 3, n_xy = 2.
//! let lift = Measure::Lift.value(5, 3, 3, 2);
//! assert!((lift - 10.0 / 9.0).abs() < 1e-12);
//! ```

use crate::error::{TmError, TmResult};

/// A rule measure; see the module table.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Measure {
    /// `s(XY)`.
    Support,
    /// `s(XY)/s(X)`.
    Confidence,
    /// `s(XY)/(s(X)s(Y))`.
    Lift,
    /// `s(XY) − s(X)s(Y)`.
    Leverage,
    /// `(1 − s(Y))/(1 − conf)`.
    Conviction,
    /// `s(XY)/(s(X)+s(Y)−s(XY))`.
    Jaccard,
    /// `s(XY)/√(s(X)s(Y))`.
    Cosine,
    /// `½(conf(X→Y)+conf(Y→X))`.
    Kulczynski,
    /// `s(XY)/max(s(X),s(Y))`.
    AllConfidence,
    /// `max(conf(X→Y), conf(Y→X))`.
    MaxConfidence,
    /// `|s(X)−s(Y)|/(s(X)+s(Y)−s(XY))`.
    ImbalanceRatio,
    /// `(conf − s(Y))/(1 − s(Y))`.
    Certainty,
    /// Zhang's metric.
    Zhang,
}

impl Measure {
    /// Every measure, in table order.
    pub const ALL: [Measure; 13] = [
        Measure::Support,
        Measure::Confidence,
        Measure::Lift,
        Measure::Leverage,
        Measure::Conviction,
        Measure::Jaccard,
        Measure::Cosine,
        Measure::Kulczynski,
        Measure::AllConfidence,
        Measure::MaxConfidence,
        Measure::ImbalanceRatio,
        Measure::Certainty,
        Measure::Zhang,
    ];

    /// The column name used in results.
    pub fn name(self) -> &'static str {
        match self {
            Measure::Support => "support",
            Measure::Confidence => "confidence",
            Measure::Lift => "lift",
            Measure::Leverage => "leverage",
            Measure::Conviction => "conviction",
            Measure::Jaccard => "jaccard",
            Measure::Cosine => "cosine",
            Measure::Kulczynski => "kulczynski",
            Measure::AllConfidence => "all_confidence",
            Measure::MaxConfidence => "max_confidence",
            Measure::ImbalanceRatio => "imbalance_ratio",
            Measure::Certainty => "certainty",
            Measure::Zhang => "zhang",
        }
    }

    /// Parse a column name.
    pub fn parse(s: &str) -> TmResult<Measure> {
        Measure::ALL
            .into_iter()
            .find(|m| m.name() == s)
            .ok_or_else(|| {
                let names: Vec<&str> = Measure::ALL.iter().map(|m| m.name()).collect();
                TmError::param(
                    "measure",
                    format!("unknown measure {s:?}; expected one of {names:?}"),
                )
            })
    }

    /// The measure for counts `n`, `n_x`, `n_y`, `n_xy` (all `n_x, n_y >= n_xy >= 1`).
    pub fn value(self, n: u64, n_x: u64, n_y: u64, n_xy: u64) -> f64 {
        let nf = n as f64;
        let (sx, sy, sxy) = (n_x as f64 / nf, n_y as f64 / nf, n_xy as f64 / nf);
        let conf = n_xy as f64 / n_x as f64;
        let conf_rev = n_xy as f64 / n_y as f64;
        match self {
            Measure::Support => sxy,
            Measure::Confidence => conf,
            Measure::Lift => (n_xy as f64 * nf) / (n_x as f64 * n_y as f64),
            Measure::Leverage => sxy - sx * sy,
            Measure::Conviction => {
                if n_xy == n_x {
                    f64::INFINITY
                } else {
                    (1.0 - sy) / (1.0 - conf)
                }
            }
            Measure::Jaccard => n_xy as f64 / (n_x + n_y - n_xy) as f64,
            Measure::Cosine => n_xy as f64 / ((n_x as f64) * (n_y as f64)).sqrt(),
            Measure::Kulczynski => 0.5 * (conf + conf_rev),
            Measure::AllConfidence => n_xy as f64 / n_x.max(n_y) as f64,
            Measure::MaxConfidence => conf.max(conf_rev),
            Measure::ImbalanceRatio => n_x.abs_diff(n_y) as f64 / (n_x + n_y - n_xy) as f64,
            Measure::Certainty => {
                if n_y == n {
                    0.0
                } else {
                    (conf - sy) / (1.0 - sy)
                }
            }
            Measure::Zhang => {
                let num = sxy - sx * sy;
                let den = (sxy * (1.0 - sx)).max(sx * (sy - sxy));
                if den == 0.0 {
                    0.0
                } else {
                    num / den
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    #[test]
    fn tan_steinbach_kumar_milk_diapers_beer() {
        // Tan, Steinbach & Kumar, Introduction to Data Mining, market-basket table: values
        // recomputed from the published definitions (REFERENCES.md section C, item 2).
        let v = |m: Measure| m.value(5, 3, 3, 2);
        assert_abs_diff_eq!(v(Measure::Support), 0.4, epsilon = 1e-12);
        assert_abs_diff_eq!(v(Measure::Confidence), 2.0 / 3.0, epsilon = 1e-12);
        assert_abs_diff_eq!(v(Measure::Lift), 1.111_111_111_111_111, epsilon = 1e-12);
        assert_abs_diff_eq!(v(Measure::Leverage), 0.04, epsilon = 1e-12);
        assert_abs_diff_eq!(v(Measure::Conviction), 1.2, epsilon = 1e-12);
        assert_abs_diff_eq!(v(Measure::Jaccard), 0.5, epsilon = 1e-12);
        assert_abs_diff_eq!(v(Measure::Kulczynski), 2.0 / 3.0, epsilon = 1e-12);
        assert_abs_diff_eq!(v(Measure::Certainty), 1.0 / 6.0, epsilon = 1e-12);
        assert_abs_diff_eq!(v(Measure::Zhang), 0.25, epsilon = 1e-12);
    }

    #[test]
    fn null_invariance_table_d5() {
        // Han, Kamber & Pei null-invariance table, D5: mc=1000, ~mc=100, m~c=10000,
        // ~m~c=100000 (tables from memory; measures recomputed, REFERENCES.md C item 6).
        let (mc, nmc, mnc, nmnc) = (1000u64, 100u64, 10_000u64, 100_000u64);
        let n = mc + nmc + mnc + nmnc;
        let (nx, ny) = (mc + mnc, mc + nmc);
        assert_abs_diff_eq!(
            Measure::AllConfidence.value(n, nx, ny, mc),
            0.0909,
            epsilon = 1e-3
        );
        assert_abs_diff_eq!(
            Measure::MaxConfidence.value(n, nx, ny, mc),
            0.909,
            epsilon = 1e-3
        );
        assert_abs_diff_eq!(
            Measure::Kulczynski.value(n, nx, ny, mc),
            0.50,
            epsilon = 5e-3
        );
        assert_abs_diff_eq!(Measure::Cosine.value(n, nx, ny, mc), 0.29, epsilon = 5e-3);
        assert_abs_diff_eq!(Measure::Lift.value(n, nx, ny, mc), 9.18, epsilon = 5e-3);
        assert_abs_diff_eq!(
            Measure::ImbalanceRatio.value(n, nx, ny, mc),
            0.89,
            epsilon = 5e-3
        );
    }

    #[test]
    fn conviction_infinite_and_parse() {
        assert!(Measure::Conviction.value(10, 4, 5, 4).is_infinite());
        assert_eq!(Measure::parse("lift").unwrap(), Measure::Lift);
        assert!(Measure::parse("interest").is_err());
    }
}
