//! Normal and chi-square helpers that need only `libm`, so the diagnostics
//! work without `std` (firmware builds).

use core::f64::consts::{FRAC_1_SQRT_2, PI};

/// Standard normal lower tail `Φ(z)`, from `erfc` so both tails keep their
/// relative accuracy.
pub(crate) fn cdf(z: f64) -> f64 {
    0.5 * libm::erfc(-z * FRAC_1_SQRT_2)
}

/// Standard normal upper tail `1 − Φ(z)`.
pub(crate) fn sf(z: f64) -> f64 {
    0.5 * libm::erfc(z * FRAC_1_SQRT_2)
}

/// `ln Φ(z)`, finite for every finite `z` (Anderson–Darling sums it over
/// standardized residuals, which can lie far in the lower tail).
pub(crate) fn ln_cdf(z: f64) -> f64 {
    if z > -30.0 {
        if z > 0.0 {
            // Φ near 1: ln(1 − tail) without cancellation.
            libm::log1p(-sf(z))
        } else {
            libm::log(cdf(z))
        }
    } else {
        // Asymptotic series of Mills' ratio (Abramowitz & Stegun 26.2.12):
        // Φ(z) = φ(z)/|z| · (1 − 1/z² + 3/z⁴ − 15/z⁶ + …); at |z| ≥ 30 the
        // truncation error is below 105/z⁸ < 2e-10 of the correction term.
        let z2 = z * z;
        let series = 1.0 - 1.0 / z2 + 3.0 / (z2 * z2) - 15.0 / (z2 * z2 * z2);
        -0.5 * z2 - libm::log(-z) - 0.5 * libm::log(2.0 * PI) + libm::log(series)
    }
}

/// Upper tail of χ² with one degree of freedom: `P(Z² > x) = erfc(√(x/2))`.
pub(crate) fn chi2_1_sf(x: f64) -> f64 {
    if x <= 0.0 {
        1.0
    } else {
        libm::erfc(libm::sqrt(0.5 * x))
    }
}

/// Upper tail of χ² with two degrees of freedom: `exp(−x/2)`.
pub(crate) fn chi2_2_sf(x: f64) -> f64 {
    if x <= 0.0 {
        1.0
    } else {
        libm::exp(-0.5 * x)
    }
}

// Coefficients of Wichura (1988), Algorithm AS 241 (PPND16), as published
// (lowest power first); more digits than a double holds, kept verbatim.
#[allow(clippy::excessive_precision)]
mod as241 {
    pub(super) const A: [f64; 8] = [
        3.3871328727963666080e0,
        1.3314166789178437745e+2,
        1.9715909503065514427e+3,
        1.3731693765509461125e+4,
        4.5921953931549871457e+4,
        6.7265770927008700853e+4,
        3.3430575583588128105e+4,
        2.5090809287301226727e+3,
    ];
    pub(super) const B: [f64; 8] = [
        1.0,
        4.2313330701600911252e+1,
        6.8718700749205790830e+2,
        5.3941960214247511077e+3,
        2.1213794301586595867e+4,
        3.9307895800092710610e+4,
        2.8729085735721942674e+4,
        5.2264952788528545610e+3,
    ];
    pub(super) const C: [f64; 8] = [
        1.42343711074968357734e0,
        4.63033784615654529590e0,
        5.76949722146069140550e0,
        3.64784832476320460504e0,
        1.27045825245236838258e0,
        2.41780725177450611770e-1,
        2.27238449892691845833e-2,
        7.74545014278341407640e-4,
    ];
    pub(super) const D: [f64; 8] = [
        1.0,
        2.05319162663775882187e0,
        1.67638483018380384940e0,
        6.89767334985100004550e-1,
        1.48103976427480074590e-1,
        1.51986665636164571966e-2,
        5.47593808499534494600e-4,
        1.05075007164441684324e-9,
    ];
    pub(super) const E: [f64; 8] = [
        6.65790464350110377720e0,
        5.46378491116411436990e0,
        1.78482653991729133580e0,
        2.96560571828504891230e-1,
        2.65321895265761230930e-2,
        1.24266094738807843860e-3,
        2.71155556874348757815e-5,
        2.01033439929228813265e-7,
    ];
    pub(super) const F: [f64; 8] = [
        1.0,
        5.99832206555887937690e-1,
        1.36929880922735805310e-1,
        1.48753612908506148525e-2,
        7.86869131145613259100e-4,
        1.84631831751005468180e-5,
        1.42151175831644588870e-7,
        2.04426310338993978564e-15,
    ];
}

fn poly8(c: &[f64; 8], r: f64) -> f64 {
    c.iter().rev().fold(0.0, |acc, &k| acc * r + k)
}

/// Standard normal quantile: Wichura (1988), Algorithm AS 241 (PPND16),
/// accurate to about 1e-16 relative for `0 < p < 1`. Returns ±∞ at 0 and 1.
pub(crate) fn quantile(p: f64) -> f64 {
    let q = p - 0.5;
    if q.abs() <= 0.425 {
        let r = 0.180625 - q * q;
        return q * poly8(&as241::A, r) / poly8(&as241::B, r);
    }
    let tail = if q < 0.0 { p } else { 1.0 - p };
    if !(tail > 0.0) {
        return if q < 0.0 {
            f64::NEG_INFINITY
        } else {
            f64::INFINITY
        };
    }
    let r = libm::sqrt(-libm::log(tail));
    let val = if r <= 5.0 {
        poly8(&as241::C, r - 1.6) / poly8(&as241::D, r - 1.6)
    } else {
        poly8(&as241::E, r - 5.0) / poly8(&as241::F, r - 5.0)
    };
    if q < 0.0 {
        -val
    } else {
        val
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Φ(quantile(p)) = p is an identity, so this needs no outside value.
    // A relative error δ in z moves p by about z²·δ relative, so the
    // tolerance is a few ε times (1 + z²).
    #[test]
    fn quantile_inverts_cdf() {
        for &p in &[
            1e-300, 1e-20, 1e-5, 0.01, 0.1, 0.3, 0.5, 0.7, 0.975, 0.999_999,
        ] {
            let z = quantile(p);
            let back = cdf(z);
            let tol = 1e-15 * (1.0 + z * z);
            assert!(((back - p) / p).abs() < tol, "p = {p}: {back}");
        }
    }

    // ln Φ continuity across the switch to the asymptotic series at −30
    // (relative 1e-12: the series truncation error there is below 2e-10 of
    // the correction, which itself is ~1e-3 of the total).
    #[test]
    fn ln_cdf_is_continuous_at_switch() {
        let a = libm::log(cdf(-29.999_999));
        let b = ln_cdf(-30.000_001);
        assert!(((a - b) / a).abs() < 1e-6, "{a} {b}");
        assert!((ln_cdf(-30.0) - libm::log(cdf(-30.0))).abs() < 1e-9);
    }
}
