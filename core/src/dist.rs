//! Distribution functions used for p values and interval half-widths
//! (behind the `std` feature; statrs provides the special functions).

use statrs::distribution::{ChiSquared, ContinuousCDF, FisherSnedecor, Normal, StudentsT};

/// Two-sided p value of a t statistic on `df` degrees of freedom
/// (`df = ∞` gives the normal distribution).
pub fn t_two_sided(t: f64, df: f64) -> f64 {
    if t.is_infinite() {
        return 0.0;
    }
    let tail = if df.is_infinite() {
        match Normal::new(0.0, 1.0) {
            Ok(n) => n.sf(t.abs()),
            Err(_) => return f64::NAN,
        }
    } else {
        match StudentsT::new(0.0, 1.0, df) {
            Ok(d) => d.sf(t.abs()),
            Err(_) => return f64::NAN,
        }
    };
    (2.0 * tail).min(1.0)
}

/// Quantile `q` of Student's t on `df` degrees of freedom (`∞`: normal).
pub fn t_quantile(q: f64, df: f64) -> f64 {
    if df.is_infinite() {
        return Normal::new(0.0, 1.0)
            .map(|n| n.inverse_cdf(q))
            .unwrap_or(f64::NAN);
    }
    StudentsT::new(0.0, 1.0, df)
        .map(|d| d.inverse_cdf(q))
        .unwrap_or(f64::NAN)
}

/// Upper-tail probability of an F statistic on `(d1, d2)` degrees of freedom.
pub fn f_upper(f: f64, d1: f64, d2: f64) -> f64 {
    if f.is_infinite() {
        return 0.0;
    }
    FisherSnedecor::new(d1, d2)
        .map(|d| d.sf(f))
        .unwrap_or(f64::NAN)
}

/// Quantile `q` of the F distribution on `(d1, d2)` degrees of freedom.
pub fn f_quantile(q: f64, d1: f64, d2: f64) -> f64 {
    FisherSnedecor::new(d1, d2)
        .map(|d| d.inverse_cdf(q))
        .unwrap_or(f64::NAN)
}

/// Upper-tail probability of a chi-square statistic on `k` degrees of freedom.
pub fn chi2_upper(x: f64, k: f64) -> f64 {
    if x.is_infinite() {
        return 0.0;
    }
    ChiSquared::new(k).map(|d| d.sf(x)).unwrap_or(f64::NAN)
}

/// Standard normal cumulative distribution function.
pub fn normal_cdf(z: f64) -> f64 {
    Normal::new(0.0, 1.0).map(|n| n.cdf(z)).unwrap_or(f64::NAN)
}

/// Standard normal quantile.
pub fn normal_quantile(q: f64) -> f64 {
    Normal::new(0.0, 1.0)
        .map(|n| n.inverse_cdf(q))
        .unwrap_or(f64::NAN)
}

#[cfg(test)]
mod tests {
    use super::*;

    // Reference values: scipy.stats 1.x, printed to 10 digits (from memory of
    // standard tables; t(0.975, 10) = 2.228138852 is the textbook table value).
    #[test]
    fn t_quantile_matches_table() {
        assert!((t_quantile(0.975, 10.0) - 2.228_138_852).abs() < 1e-8);
        assert!((t_quantile(0.975, f64::INFINITY) - 1.959_963_985).abs() < 1e-8);
    }

    #[test]
    fn two_sided_p_of_zero_is_one() {
        assert!((t_two_sided(0.0, 5.0) - 1.0).abs() < 1e-15);
        assert_eq!(t_two_sided(f64::INFINITY, 5.0), 0.0);
    }
}
