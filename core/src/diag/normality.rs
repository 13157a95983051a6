//! Normality tests that need the ordered sample: Shapiro–Wilk (Royston's
//! approximation) and Anderson–Darling.

use super::{normal, DiagError};
use alloc::vec::Vec;
use core::f64::consts::PI;

/// Largest sample Shapiro–Wilk accepts: Royston's approximation of the
/// coefficients and of the p value is fitted for `3 ≤ n ≤ 5000`.
pub const SHAPIRO_WILK_MAX_N: usize = 5000;

/// Result of the Shapiro–Wilk test.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct ShapiroWilk {
    /// Sample size.
    pub count: u64,
    /// The statistic `W ∈ (0, 1]`; small values indicate non-normality.
    pub w: f64,
    /// p value of normality (Royston 1992/1995). Where Royston's small-sample
    /// transform is undefined (`4 ≤ n ≤ 11` and `W` below its range) it is 0.
    pub p_value: f64,
}

/// Result of the Anderson–Darling test for normality with mean and
/// variance estimated from the sample.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct AndersonDarling {
    /// Sample size.
    pub count: u64,
    /// The statistic `A²`.
    pub a2: f64,
    /// The small-sample modification `A* = A²(1 + 0.75/n + 2.25/n²)`
    /// (D'Agostino & Stephens 1986, ch. 4).
    pub a2_modified: f64,
    /// p value from `A*` by the piecewise formula of D'Agostino & Stephens
    /// (1986); 0 for `A* > 13`, where it is below 5e-31.
    pub p_value: f64,
}

fn check_sample(sample: &[f64], min: usize) -> Result<(), DiagError> {
    if sample.is_empty() {
        return Err(DiagError::EmptyInput);
    }
    if let Some(index) = sample.iter().position(|v| !v.is_finite()) {
        return Err(DiagError::NonFinite { index });
    }
    if sample.len() < min {
        return Err(DiagError::TooFewPoints {
            needed: min as u64,
            have: sample.len() as u64,
        });
    }
    Ok(())
}

/// Sorted copy of the sample. Both statistics are location and scale
/// invariant, so a sample whose largest magnitude lies outside
/// [2⁻⁵⁰⁰, 2⁵⁰⁰] is rescaled by a power of two (exact) to keep its range
/// and squared deviations finite and normal; other samples are untouched.
fn sorted(sample: &[f64]) -> Vec<f64> {
    let mut s = sample.to_vec();
    s.sort_by(|a, b| a.total_cmp(b));
    let big = s.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let (_, e) = libm::frexp(big);
    if big > 0.0 && !(-500..=500).contains(&e) {
        for v in &mut s {
            *v = libm::scalbn(*v, -e);
        }
    }
    s
}

/// Horner evaluation, lowest power first.
fn poly(c: &[f64], x: f64) -> f64 {
    c.iter().rev().fold(0.0, |acc, &k| acc * x + k)
}

/// Shapiro–Wilk test of normality for `3 ≤ n ≤ 5000` values (Shapiro &
/// Wilk 1965; coefficients and p value by Royston 1992, Algorithm AS R94
/// 1995; constants in NUMERICS D1).
///
/// The expected normal order statistics use the full-precision normal
/// quantile (AS 241), not AS R94's 7-digit one, so `W` can differ from
/// AS R94 implementations in the ninth digit.
///
/// # Errors
/// [`DiagError::EmptyInput`], [`DiagError::NonFinite`],
/// [`DiagError::TooFewPoints`] below 3, [`DiagError::TooManyPoints`] above
/// 5000, [`DiagError::ZeroResidualVariance`] when all values are equal.
pub fn shapiro_wilk(sample: &[f64]) -> Result<ShapiroWilk, DiagError> {
    check_sample(sample, 3)?;
    let n = sample.len();
    if n > SHAPIRO_WILK_MAX_N {
        return Err(DiagError::TooManyPoints {
            n,
            max: SHAPIRO_WILK_MAX_N,
        });
    }
    let x = sorted(sample);
    let range = x[n - 1] - x[0];
    if !(range > 0.0) {
        return Err(DiagError::ZeroResidualVariance);
    }
    let half = n / 2;
    // Coefficients for the lower half (a₁ … a_half, negative side first),
    // antisymmetric: the upper half is −a in reverse.
    let mut a = alloc::vec![0.0f64; half];
    if n == 3 {
        a[0] = core::f64::consts::FRAC_1_SQRT_2;
    } else {
        let an25 = n as f64 + 0.25;
        let mut summ2 = 0.0;
        for (i, ai) in a.iter_mut().enumerate() {
            let m = normal::quantile((i as f64 + 1.0 - 0.375) / an25);
            *ai = m;
            summ2 += m * m;
        }
        summ2 *= 2.0;
        let ssumm2 = libm::sqrt(summ2);
        let rsn = 1.0 / libm::sqrt(n as f64);
        const C1: [f64; 6] = [0.0, 0.221157, -0.147981, -2.071190, 4.434685, -2.706056];
        const C2: [f64; 6] = [0.0, 0.042981, -0.293762, -1.752461, 5.682633, -3.582633];
        let a1 = poly(&C1, rsn) - a[0] / ssumm2;
        let (first, fac) = if n > 5 {
            let a2 = -a[1] / ssumm2 + poly(&C2, rsn);
            let fac = libm::sqrt(
                (summ2 - 2.0 * a[0] * a[0] - 2.0 * a[1] * a[1])
                    / (1.0 - 2.0 * a1 * a1 - 2.0 * a2 * a2),
            );
            a[1] = a2;
            (2, fac)
        } else {
            let fac = libm::sqrt((summ2 - 2.0 * a[0] * a[0]) / (1.0 - 2.0 * a1 * a1));
            (1, fac)
        };
        a[0] = a1;
        for ai in a.iter_mut().skip(first) {
            *ai = -*ai / fac;
        }
    }
    // W as the squared correlation of the data with the coefficients,
    // scaled by the range; 1 − W is formed as a product so W near 1 keeps
    // its digits.
    let coef = |i: usize| -> f64 {
        if i < half {
            -a[i]
        } else if n - 1 - i < half {
            a[n - 1 - i]
        } else {
            0.0
        }
    };
    let xs: Vec<f64> = x.iter().map(|v| v / range).collect();
    let (mut sa, mut sx) = (0.0, 0.0);
    for (i, &v) in xs.iter().enumerate() {
        sa += coef(i);
        sx += v;
    }
    sa /= n as f64;
    sx /= n as f64;
    let (mut ssa, mut ssx, mut sax) = (0.0, 0.0, 0.0);
    for (i, &v) in xs.iter().enumerate() {
        let da = coef(i) - sa;
        let dx = v - sx;
        ssa += da * da;
        ssx += dx * dx;
        sax += da * dx;
    }
    let root = libm::sqrt(ssa * ssx);
    let w1 = (root - sax) * (root + sax) / (ssa * ssx);
    let w = 1.0 - w1;
    let p_value = if n == 3 {
        // Exact for n = 3: p = 1 − (6/π)·acos(√W), W ≥ 3/4.
        let w = w.max(0.75);
        (1.0 - 6.0 / PI * libm::acos(libm::sqrt(w))).clamp(0.0, 1.0)
    } else {
        let nf = n as f64;
        let y = libm::log(w1);
        let (y, mu, sigma) = if n <= 11 {
            let gamma = -2.273 + 0.459 * nf;
            if y >= gamma {
                return Ok(ShapiroWilk {
                    count: n as u64,
                    w,
                    p_value: 0.0,
                });
            }
            (
                -libm::log(gamma - y),
                poly(&[0.5440, -0.39978, 0.025054, -6.714e-4], nf),
                libm::exp(poly(&[1.3822, -0.77857, 0.062767, -0.0020322], nf)),
            )
        } else {
            let ln = libm::log(nf);
            (
                y,
                poly(&[-1.5861, -0.31082, -0.083751, 0.0038915], ln),
                libm::exp(poly(&[-0.4803, -0.082676, 0.0030302], ln)),
            )
        };
        normal::sf((y - mu) / sigma)
    };
    Ok(ShapiroWilk {
        count: n as u64,
        w: if n == 3 { w.max(0.75) } else { w },
        p_value,
    })
}

/// Anderson–Darling test of normality with the mean and standard deviation
/// (divisor `n − 1`) estimated from the sample (Anderson & Darling 1952,
/// 1954; case 3 of Stephens 1974), with D'Agostino & Stephens' (1986)
/// small-sample modification and p value (NUMERICS D2).
///
/// Tail probabilities are taken as `ln Φ(z)` and `ln Φ(−z)` directly, so
/// far-out residuals do not round to `ln 0`.
///
/// # Errors
/// [`DiagError::EmptyInput`], [`DiagError::NonFinite`],
/// [`DiagError::TooFewPoints`] below 3, [`DiagError::ZeroResidualVariance`]
/// when all values are equal.
pub fn anderson_darling(sample: &[f64]) -> Result<AndersonDarling, DiagError> {
    check_sample(sample, 3)?;
    let n = sample.len();
    let x = sorted(sample);
    let nf = n as f64;
    let mean = x.iter().sum::<f64>() / nf;
    // Second pass corrects the mean's rounding (compensated two-pass).
    let corr = x.iter().map(|v| v - mean).sum::<f64>() / nf;
    let mean = mean + corr;
    let ss: f64 = x.iter().map(|v| (v - mean) * (v - mean)).sum();
    if !(ss > 0.0) {
        return Err(DiagError::ZeroResidualVariance);
    }
    let sd = libm::sqrt(ss / (nf - 1.0));
    let mut s = 0.0;
    for i in 0..n {
        let lo = (x[i] - mean) / sd;
        let hi = (x[n - 1 - i] - mean) / sd;
        s += (2.0 * i as f64 + 1.0) * (normal::ln_cdf(lo) + normal::ln_cdf(-hi));
    }
    let a2 = -nf - s / nf;
    let a2m = a2 * (1.0 + 0.75 / nf + 2.25 / (nf * nf));
    let p_value = if a2m < 0.2 {
        1.0 - libm::exp(-13.436 + 101.14 * a2m - 223.73 * a2m * a2m)
    } else if a2m < 0.34 {
        1.0 - libm::exp(-8.318 + 42.796 * a2m - 59.938 * a2m * a2m)
    } else if a2m < 0.6 {
        libm::exp(0.9177 - 4.279 * a2m - 1.38 * a2m * a2m)
    } else if a2m <= 13.0 {
        libm::exp(1.2937 - 5.709 * a2m + 0.0186 * a2m * a2m)
    } else {
        0.0
    };
    Ok(AndersonDarling {
        count: n as u64,
        a2,
        a2_modified: a2m,
        p_value: p_value.clamp(0.0, 1.0),
    })
}
