//! Statistical tests for comparing two windows of cases.
//!
//! * Pearson's chi-square test of independence on an `r x c` table of counts:
//!   `X² = Σ (O - E)² / E`, `E = row total · column total / N`, `dof = (r-1)(c-1)`, and the
//!   G-test (log-likelihood ratio) `G = 2 Σ O ln(O / E)` with the same reference distribution.
//!   No continuity correction is applied. Columns that are empty in every row carry no
//!   information and are left out (the result says how many columns were used).
//! * The chi-square upper tail `P(χ²_k > x) = Q(k/2, x/2)`, the regularised upper incomplete
//!   gamma function, computed by its series below `a + 1` and by a Lentz continued fraction
//!   above (Press et al., *Numerical Recipes*, 3rd ed., §6.2), with `ln Γ` from the Lanczos
//!   approximation (g = 7, 9 terms).
//! * The two-sample Kolmogorov–Smirnov test: `D = sup |F_1 - F_2|`. The exact two-sided
//!   p-value counts lattice paths from `(0,0)` to `(m,n)` that leave the band
//!   `|i/m - j/n| < D` (Hodges 1957), by the recursion
//!   `u(i,j) = i/(i+j) u(i-1,j) + j/(i+j) u(i,j-1)` on the share of paths that stay inside.
//!   Above `exact_limit` cells the Kolmogorov limit
//!   `P(K > λ) = 2 Σ (-1)^(k-1) exp(-2k²λ²)` with `λ = D sqrt(mn/(m+n))` is used.

use crate::error::{TmError, TmResult};

/// `ln Γ(x)` for `x > 0` (Lanczos, g = 7).
pub fn ln_gamma(x: f64) -> f64 {
    const G: [f64; 9] = [
        0.999_999_999_999_809_9,
        676.520_368_121_885_1,
        -1_259.139_216_722_402_8,
        771.323_428_777_653_1,
        -176.615_029_162_140_6,
        12.507_343_278_686_905,
        -0.138_571_095_265_720_12,
        9.984_369_578_019_572e-6,
        1.505_632_735_149_311_6e-7,
    ];
    if x < 0.5 {
        // reflection
        let pi = std::f64::consts::PI;
        return (pi / (pi * x).sin()).ln() - ln_gamma(1.0 - x);
    }
    let x = x - 1.0;
    let mut a = G[0];
    let t = x + 7.5;
    for (i, &g) in G.iter().enumerate().skip(1) {
        a += g / (x + i as f64);
    }
    0.5 * (2.0 * std::f64::consts::PI).ln() + (x + 0.5) * t.ln() - t + a.ln()
}

/// Regularised upper incomplete gamma `Q(a, x)`.
pub fn gamma_q(a: f64, x: f64) -> f64 {
    if x <= 0.0 {
        return 1.0;
    }
    let lg = ln_gamma(a);
    if x < a + 1.0 {
        // series for P
        let mut sum = 1.0 / a;
        let mut del = sum;
        let mut ap = a;
        for _ in 0..10_000 {
            ap += 1.0;
            del *= x / ap;
            sum += del;
            if del.abs() < sum.abs() * 1e-17 {
                break;
            }
        }
        let p = sum * (-x + a * x.ln() - lg).exp();
        (1.0 - p).max(0.0)
    } else {
        // continued fraction for Q (modified Lentz)
        let tiny = 1e-300;
        let mut b = x + 1.0 - a;
        let mut c = 1.0 / tiny;
        let mut d = 1.0 / b;
        let mut h = d;
        for i in 1..10_000 {
            let an = -(i as f64) * (i as f64 - a);
            b += 2.0;
            d = an * d + b;
            if d.abs() < tiny {
                d = tiny;
            }
            c = b + an / c;
            if c.abs() < tiny {
                c = tiny;
            }
            d = 1.0 / d;
            let del = d * c;
            h *= del;
            if (del - 1.0).abs() < 1e-17 {
                break;
            }
        }
        (-x + a * x.ln() - lg).exp() * h
    }
}

/// `P(χ²_dof > x)`.
pub fn chi2_sf(x: f64, dof: f64) -> f64 {
    if dof <= 0.0 {
        return f64::NAN;
    }
    gamma_q(dof / 2.0, x / 2.0)
}

/// The result of a test on a contingency table.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TableTest {
    /// The statistic (X² or G).
    pub statistic: f64,
    /// Degrees of freedom.
    pub dof: usize,
    /// Upper-tail p-value.
    pub p_value: f64,
    /// Columns used (non-empty ones).
    pub n_columns: usize,
}

/// Chi-square (`g = false`) or G-test (`g = true`) of independence on a row-major `r x c`
/// table of counts.
pub fn table_test(t: &[f64], r: usize, c: usize, g: bool) -> TmResult<TableTest> {
    if t.len() != r * c {
        return Err(TmError::data(format!(
            "a table of {} values is not {r} x {c}",
            t.len()
        )));
    }
    if let Some(v) = t.iter().find(|v| !(v.is_finite() && **v >= 0.0)) {
        return Err(TmError::data(format!(
            "a contingency table needs finite counts >= 0; got {v}"
        )));
    }
    let cols: Vec<usize> = (0..c)
        .filter(|&j| (0..r).any(|i| t[i * c + j] > 0.0))
        .collect();
    let rows_tot: Vec<f64> = (0..r)
        .map(|i| cols.iter().map(|&j| t[i * c + j]).sum())
        .collect();
    if rows_tot.contains(&0.0) || cols.len() < 2 || r < 2 {
        return Ok(TableTest {
            statistic: 0.0,
            dof: 0,
            p_value: 1.0,
            n_columns: cols.len(),
        });
    }
    let n: f64 = rows_tot.iter().sum();
    let mut stat = 0.0;
    for &j in &cols {
        let ct: f64 = (0..r).map(|i| t[i * c + j]).sum();
        for (i, &rt) in rows_tot.iter().enumerate() {
            let e = rt * ct / n;
            let o = t[i * c + j];
            if g {
                if o > 0.0 {
                    stat += 2.0 * o * (o / e).ln();
                }
            } else {
                stat += (o - e) * (o - e) / e;
            }
        }
    }
    let dof = (r - 1) * (cols.len() - 1);
    Ok(TableTest {
        statistic: stat,
        dof,
        p_value: chi2_sf(stat, dof as f64),
        n_columns: cols.len(),
    })
}

/// The two-sample Kolmogorov–Smirnov statistic `D` and its integer numerator
/// `max |i n - j m|` (samples need not be sorted; NaN is an error).
fn ks_stat(a: &[f64], b: &[f64]) -> TmResult<(f64, u64)> {
    if a.iter().chain(b).any(|v| v.is_nan()) {
        return Err(TmError::data("the Kolmogorov-Smirnov test got a NaN value"));
    }
    let mut a = a.to_vec();
    let mut b = b.to_vec();
    a.sort_by(f64::total_cmp);
    b.sort_by(f64::total_cmp);
    let (m, n) = (a.len() as i128, b.len() as i128);
    let (mut i, mut j) = (0usize, 0usize);
    let mut best: i128 = 0;
    while i < a.len() || j < b.len() {
        let v = match (a.get(i), b.get(j)) {
            (Some(&x), Some(&y)) => x.min(y),
            (Some(&x), None) => x,
            (None, Some(&y)) => y,
            (None, None) => break,
        };
        while i < a.len() && a[i] <= v {
            i += 1;
        }
        while j < b.len() && b[j] <= v {
            j += 1;
        }
        let d = (i as i128 * n - j as i128 * m).abs();
        best = best.max(d);
    }
    Ok((best as f64 / (m * n) as f64, best as u64))
}

/// Exact `P(max |I n - J m| >= g)` over uniformly random lattice paths.
fn ks_exact_p(m: usize, n: usize, g: u64) -> f64 {
    let g = g as i128;
    let (mi, ni) = (m as i128, n as i128);
    let inside = |i: usize, j: usize| (i as i128 * ni - j as i128 * mi).abs() < g;
    // u over j for the current i
    let mut u = vec![0.0f64; n + 1];
    u[0] = 1.0;
    for j in 1..=n {
        u[j] = if inside(0, j) { u[j - 1] } else { 0.0 };
    }
    for i in 1..=m {
        let fi = i as f64;
        u[0] = if inside(i, 0) { u[0] } else { 0.0 };
        for j in 1..=n {
            if inside(i, j) {
                let s = fi + j as f64;
                u[j] = fi / s * u[j] + j as f64 / s * u[j - 1];
            } else {
                u[j] = 0.0;
            }
        }
    }
    (1.0 - u[n]).clamp(0.0, 1.0)
}

/// The Kolmogorov limiting distribution `P(K > λ)`.
pub fn kolmogorov_sf(lambda: f64) -> f64 {
    if lambda <= 0.0 {
        return 1.0;
    }
    let mut s = 0.0;
    for k in 1..=200 {
        let kf = f64::from(k);
        let term = (-2.0 * kf * kf * lambda * lambda).exp();
        s += if k % 2 == 1 { term } else { -term };
        if term < 1e-300 {
            break;
        }
    }
    (2.0 * s).clamp(0.0, 1.0)
}

/// The two-sided two-sample KS test: `(D, p)`; exact when `m · n <= exact_limit`.
pub fn ks_2samp(a: &[f64], b: &[f64], exact_limit: u64) -> TmResult<(f64, f64)> {
    if a.is_empty() || b.is_empty() {
        return Err(TmError::data(
            "the Kolmogorov-Smirnov test needs two non-empty samples",
        ));
    }
    let (d, g) = ks_stat(a, b)?;
    let (m, n) = (a.len(), b.len());
    let p = if (m as u64).saturating_mul(n as u64) <= exact_limit {
        ks_exact_p(m, n, g)
    } else {
        let en = (m * n) as f64 / (m + n) as f64;
        kolmogorov_sf(d * en.sqrt())
    };
    Ok((d, p))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn chi2_tail_known_values() {
        // P(χ²_1 > 3.841459) = 0.05 and P(χ²_2 > x) = exp(-x/2) (textbook identities).
        assert!((chi2_sf(3.841_458_820_694_124, 1.0) - 0.05).abs() < 1e-12);
        for x in [0.1, 1.0, 5.0, 30.0, 80.0] {
            assert!((chi2_sf(x, 2.0) - (-x / 2.0f64).exp()).abs() < 1e-14 * 10.0);
        }
        assert!((ln_gamma(5.0) - 24f64.ln()).abs() < 1e-13);
    }

    #[test]
    fn table_tests_match_reference() {
        // ref (30,20,0) vs det (10,20,20): X² = 30.0, dof 2, p = 3.059e-07; G = 38.1909,
        // p = 5.093e-09 (scipy chi2_contingency, REFERENCES.md section F).
        let t = [30.0, 20.0, 0.0, 10.0, 20.0, 20.0];
        let x = table_test(&t, 2, 3, false).unwrap();
        assert!((x.statistic - 30.0).abs() < 1e-12);
        assert_eq!(x.dof, 2);
        assert!((x.p_value - (-15.0f64).exp()).abs() < 1e-18);
        let g = table_test(&t, 2, 3, true).unwrap();
        assert!((g.statistic - 38.1909).abs() < 1e-4);
        assert!((g.p_value - 5.093e-9).abs() < 1e-11);
        assert!(table_test(&[1.0, -1.0], 1, 2, false).is_err());
    }

    #[test]
    fn ks_matches_reference() {
        // KS [1..10] vs [6..15]: D = 0.5, p = 0.167821 (scipy ks_2samp, REFERENCES.md F).
        let a: Vec<f64> = (1..=10).map(f64::from).collect();
        let b: Vec<f64> = (6..=15).map(f64::from).collect();
        let (d, p) = ks_2samp(&a, &b, u64::MAX).unwrap();
        assert!((d - 0.5).abs() < 1e-15);
        assert!((p - 0.167_821).abs() < 1e-6);
        let (_, pa) = ks_2samp(&a, &b, 0).unwrap();
        assert!(pa > 0.1 && pa < 0.3);
        assert!(ks_2samp(&[], &b, 0).is_err());
    }
}
