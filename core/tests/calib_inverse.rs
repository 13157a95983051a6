//! Inverse prediction, Fieller sets, the simultaneous band and the
//! detection limits against independent computations: exact rationals,
//! brute-force inversion of the prediction band through the line module's
//! own `prediction` interval, and closed forms of the F distribution.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests stop loudly

mod calib_support;

use calib_support::*;
use num_rational::BigRational;
use plumbfit::calib::{CalibError, FiellerSet, LineCoefficients, Reading, SigmaSource};
use plumbfit::{FitOptions, LeanMoments, LineFit, WeightMeaning};

/// Invented calibration data with a clear slope (5 levels, 3 replicates).
fn strong() -> (Vec<f64>, Vec<f64>) {
    let xs = [
        0.0, 0.0, 0.0, 2.0, 2.0, 2.0, 4.0, 4.0, 4.0, 6.0, 6.0, 6.0, 8.0, 8.0, 8.0,
    ];
    let ys = [
        0.12, 0.08, 0.15, 2.05, 1.96, 2.11, 4.02, 3.91, 4.07, 6.12, 5.95, 6.03, 7.96, 8.09, 8.01,
    ];
    (xs.to_vec(), ys.to_vec())
}

/// Invented data whose slope is not significant at 95 %.
fn weak() -> (Vec<f64>, Vec<f64>) {
    let xs = [1.0, 2.0, 3.0, 4.0, 5.0, 6.0];
    let ys = [1.3, 0.2, 1.9, 0.4, 1.6, 1.1];
    (xs.to_vec(), ys.to_vec())
}

fn fit_of(xs: &[f64], ys: &[f64]) -> LineFit {
    let mut acc = LeanMoments::new();
    acc.extend(xs, ys).unwrap();
    acc.fit().unwrap()
}

/// Whether the two-sided prediction band at `x` contains `y0`, straight
/// from the line module (an independent path to the same set).
fn in_band(fit: &LineFit, x: f64, r: &Reading, level: f64) -> bool {
    let p = fit.prediction(x, r.replicates, level).unwrap();
    p.lower <= r.value && r.value <= p.upper
}

#[test]
fn estimate_and_delta_se_match_exact_rationals() {
    let (xs, ys) = strong();
    let fit = fit_of(&xs, &ys);
    let qx: Vec<_> = xs.iter().map(|&v| q(v)).collect();
    let qy: Vec<_> = ys.iter().map(|&v| q(v)).collect();
    let e = exact_line(&qx, &qy, None);
    for (y0, m) in [(3.3, 1u32), (0.5, 3), (7.9, 2)] {
        let inv = fit.invert(&Reading::mean_of(y0, m)).unwrap();
        let x0 = (q(y0) - &e.intercept) / &e.slope;
        let s2 = &e.sse / (&e.n - q(2.0));
        let d = q(y0) - &e.ybar;
        // s²/b²·(1/m + 1/n + (y0 − ȳ)²/(b²·Sxx)): NUMERICS.md C1 (ISO 8466-1 form).
        let var = &s2 / (&e.slope * &e.slope)
            * (q(1.0) / q(m as f64) + q(1.0) / &e.n + &d * &d / (&e.slope * &e.slope * &e.sxx));
        // Both computed from centred sums of 15 small doubles: 1e-13.
        assert!(rel(inv.x, f(&x0)) < 1e-13, "{} vs {}", inv.x, f(&x0));
        assert!(rel(inv.se, sqrt_f(&var)) < 1e-13);
    }
}

#[test]
fn bounded_fieller_interval_is_the_inverted_band() {
    let (xs, ys) = strong();
    let fit = fit_of(&xs, &ys);
    for (y0, m, level) in [(3.3, 1u32, 0.95), (0.2, 3, 0.99), (7.5, 2, 0.90)] {
        let r = Reading::mean_of(y0, m);
        let ii = fit.invert_interval(&r, level).unwrap();
        let FiellerSet::Bounded { lower, upper } = ii.set else {
            panic!("{:?}", ii.set)
        };
        assert!(ii.g < 1.0 && lower < ii.estimate.x && ii.estimate.x < upper);
        // At each end the band's edge passes through the reading (relative
        // 1e-10 of the band half-width; the quadratic's roots are
        // well-conditioned here).
        for x in [lower, upper] {
            let p = fit.prediction(x, m, level).unwrap();
            let edge = if x == lower { p.upper } else { p.lower };
            assert!((edge - y0).abs() < 1e-10 * (p.upper - p.lower), "{x}");
        }
        // Brute force on a grid: membership agrees with the band.
        let span = upper - lower;
        for k in -200..=200 {
            let x = ii.estimate.x + k as f64 * span / 100.0;
            let near = (x - lower).abs().min((x - upper).abs()) < 1e-9 * span;
            if !near {
                assert_eq!(ii.set.contains(x), in_band(&fit, x, &r, level), "x = {x}");
            }
        }
        // The delta-method interval is close but not the same (asymmetry).
        assert!((ii.approx_lower - lower).abs() < 0.05 * span);
    }
    assert_eq!(
        fit.invert_bounded(&Reading::single(3.3), 0.95).unwrap(),
        match fit.fieller_set(&Reading::single(3.3), 0.95).unwrap() {
            FiellerSet::Bounded { lower, upper } => (lower, upper),
            other => panic!("{other:?}"),
        }
    );
}

#[test]
fn unbounded_fieller_sets_are_typed_and_exact() {
    let (xs, ys) = weak();
    let fit = fit_of(&xs, &ys);
    assert!(fit.p_slope() > 0.05);
    // Reading near the mean response: every x is consistent.
    let near = Reading::single(fit.mean_y);
    let ii = fit.invert_interval(&near, 0.95).unwrap();
    assert!(ii.g > 1.0);
    assert_eq!(ii.set, FiellerSet::WholeLine);
    for x in [-1e6, -10.0, 0.0, 3.5, 50.0, 1e6] {
        assert!(in_band(&fit, x, &near, 0.95), "{x}");
    }
    // Reading far from the data: two half-lines, checked by brute force.
    let far = Reading::single(fit.mean_y + 3.0);
    let set = fit.fieller_set(&far, 0.95).unwrap();
    let FiellerSet::TwoHalfLines { below, above } = set else {
        panic!("{set:?}")
    };
    assert!(below < above && below.is_finite() && above.is_finite());
    for x in [below, above] {
        let p = fit.prediction(x, 1, 0.95).unwrap();
        let edge = if (p.upper - far.value).abs() < (p.lower - far.value).abs() {
            p.upper
        } else {
            p.lower
        };
        assert!((edge - far.value).abs() < 1e-9 * (p.upper - p.lower), "{x}");
    }
    let width = above - below;
    for k in -300..=300 {
        let x = below + k as f64 * width / 50.0;
        let close = (x - below).abs().min((x - above).abs()) < 1e-9 * width;
        if !close {
            assert_eq!(set.contains(x), in_band(&fit, x, &far, 0.95), "x = {x}");
        }
    }
    // A bounded answer is refused with a typed error, never NaN.
    assert_eq!(
        fit.invert_bounded(&far, 0.95),
        Err(CalibError::SlopeNotSignificant)
    );
    assert_eq!(
        fit.invert_bounded(&near, 0.95),
        Err(CalibError::SlopeNotSignificant)
    );
    // At a level below 1 − p(slope) the same slope is significant and the
    // set closes; above it, it does not.
    let p = fit.p_slope();
    assert!(fit.fieller_set(&far, 0.9 * (1.0 - p)).unwrap().is_bounded());
    assert!(!fit.fieller_set(&far, 1.0 - 0.9 * p).unwrap().is_bounded());
}

#[test]
fn zero_slope_is_an_error_for_estimates_but_a_set_exists() {
    let xs = [1.0, 2.0, 3.0, 1.0, 2.0, 3.0];
    let ys = [1.0, 2.0, 1.0, 1.0, 0.0, 1.0];
    let fit = fit_of(&xs, &ys);
    assert_eq!(fit.slope, 0.0);
    assert_eq!(
        fit.invert(&Reading::single(1.0)),
        Err(CalibError::ZeroSlope)
    );
    assert_eq!(
        fit.limits_from_sigma(SigmaSource::ResidualSd),
        Err(CalibError::ZeroSlope)
    );
    assert!(!fit
        .fieller_set(&Reading::single(5.0), 0.95)
        .unwrap()
        .is_bounded());
}

#[test]
fn calibrated_value_forms_agree() {
    let (xs, ys) = strong();
    let fit = fit_of(&xs, &ys);
    let c = LineCoefficients::from_fit(&fit);
    for y0 in [0.0, 3.0, 8.0] {
        // With u(y0) = s the uncertainty is the one-reading delta-method SE.
        let a = fit.calibrated_value(y0, fit.residual_sd).unwrap();
        let inv = fit.invert(&Reading::single(y0)).unwrap();
        assert!(rel(a.u, inv.se) < 1e-13);
        // Raw-coefficient form (e-Handbook §2.3.6.7 / ISO/TS 28037) equals
        // the centred form; the data sit near the origin, so 1e-12.
        let b = c.calibrated(y0, 0.07).unwrap();
        let a = fit.calibrated_value(y0, 0.07).unwrap();
        assert!(rel(a.u, b.u) < 1e-12 && rel(a.x, b.x) < 1e-12);
        // Polynomial form: u² = c0 + c1·y + c2·y².
        let p = c.uncertainty_polynomial(0.07).unwrap();
        assert!(rel(p[0] + p[1] * y0 + p[2] * y0 * y0, b.u * b.u) < 1e-12);
    }
    // A larger known measurement uncertainty gives a larger u(x0).
    let small = fit.calibrated_value(4.0, 0.01).unwrap().u;
    let large = fit.calibrated_value(4.0, 0.5).unwrap().u;
    assert!(large > small);
    assert_eq!(
        fit.calibrated_value(4.0, -1.0),
        Err(CalibError::InvalidUncertainty)
    );
    assert_eq!(
        fit.calibrated_value(f64::NAN, 0.1),
        Err(CalibError::NonFinite { index: 0 })
    );
}

#[test]
fn working_hotelling_multiplier_matches_closed_form() {
    let (xs, ys) = strong();
    let fit = fit_of(&xs, &ys);
    let nu = fit.df_resid;
    for level in [0.90, 0.95, 0.99] {
        let band = fit.simultaneous_band(3.0, level).unwrap();
        // F(2, ν) quantile in closed form: (ν/2)((1 − q)^(−2/ν) − 1)
        // (common practice: the F(2, ν) distribution function is
        // 1 − (1 + 2F/ν)^(−ν/2)). W = √(2F). statrs inverts numerically:
        // 1e-9 relative.
        let fq = nu / 2.0 * ((1.0 - level).powf(-2.0 / nu) - 1.0);
        assert!(rel(band.multiplier, (2.0 * fq).sqrt()) < 1e-9, "{level}");
        let mean = fit.mean_band(3.0, level).unwrap();
        assert!(band.upper > mean.upper && band.lower < mean.lower);
        assert!(rel(band.se, mean.se) < 1e-15);
    }
    // Known variances: W² is the χ²₂ quantile −2·ln(1 − level) (exact).
    let mut acc = LeanMoments::new();
    let ws = vec![4.0; xs.len()];
    acc.extend_weighted(&xs, &ys, &ws).unwrap();
    let kv = acc
        .fit_with(&FitOptions::default().with_weights(WeightMeaning::InverseVariance))
        .unwrap();
    let band = kv.simultaneous_band(1.0, 0.95).unwrap();
    assert!(rel(band.multiplier, (-2.0 * (0.05f64).ln()).sqrt()) < 1e-15);
    assert_eq!(
        fit.simultaneous_band(1.0, 1.0),
        Err(CalibError::InvalidLevel)
    );
}

#[test]
fn hubaux_vos_limits_match_brute_force_band_search() {
    let (xs, ys) = strong();
    let fit = fit_of(&xs, &ys);
    for (alpha, beta, m) in [(0.05, 0.05, 1u32), (0.01, 0.05, 3)] {
        let d = fit.decision_limits(alpha, beta, m, 1.0).unwrap();
        // y_C: upper one-sided 1 − α prediction limit at x = 0, i.e. the
        // upper end of the two-sided 1 − 2α interval.
        let yc = fit.prediction(0.0, m, 1.0 - 2.0 * alpha).unwrap().upper;
        assert!(rel(d.y_critical, yc) < 1e-13);
        assert!(rel(fit.fitted(d.x_critical), yc) < 1e-12);
        // x_D: bisection for the x whose lower one-sided 1 − β limit
        // reaches y_C (monotone in x above x_C).
        let lower_at = |x: f64| fit.prediction(x, m, 1.0 - 2.0 * beta).unwrap().lower - yc;
        let (mut a, mut b) = (d.x_critical, 100.0);
        for _ in 0..200 {
            let mid = 0.5 * (a + b);
            if lower_at(mid) < 0.0 {
                a = mid;
            } else {
                b = mid;
            }
        }
        assert!(
            rel(d.x_detection, 0.5 * (a + b)) < 1e-10,
            "{} vs {a}",
            d.x_detection
        );
        assert!(d.x_detection > d.x_critical && d.x_critical > 0.0);
    }
    assert_eq!(
        fit.decision_limits(0.6, 0.05, 1, 1.0),
        Err(CalibError::InvalidLevel)
    );
    assert_eq!(
        fit.decision_limits(0.05, 0.05, 0, 1.0),
        Err(CalibError::InvalidReplicates)
    );
    // A weak slope: the lower band never reaches the decision level.
    let (xw, yw) = weak();
    assert_eq!(
        fit_of(&xw, &yw).decision_limits(0.05, 0.05, 1, 1.0),
        Err(CalibError::SlopeNotSignificant)
    );
}

#[test]
fn negative_slope_is_mirrored() {
    let (xs, ys) = strong();
    let neg: Vec<f64> = ys.iter().map(|y| 10.0 - y).collect();
    let pos = fit_of(&xs, &ys);
    let fit = fit_of(&xs, &neg);
    let (p, n) = (
        pos.decision_limits(0.05, 0.05, 1, 1.0).unwrap(),
        fit.decision_limits(0.05, 0.05, 1, 1.0).unwrap(),
    );
    // Mirroring y leaves the x limits unchanged (1e-12: same sums).
    assert!(rel(n.x_critical, p.x_critical) < 1e-12);
    assert!(rel(n.x_detection, p.x_detection) < 1e-12);
    assert!(rel(10.0 - n.y_critical, p.y_critical) < 1e-12);
    let lim = fit.limits_from_sigma(SigmaSource::ResidualSd).unwrap();
    assert!(lim.detection > 0.0);
    // A reading inverts to the mirrored x.
    let a = pos.invert(&Reading::single(3.0)).unwrap();
    let b = fit.invert(&Reading::single(7.0)).unwrap();
    assert!(rel(a.x, b.x) < 1e-12 && rel(a.se, b.se) < 1e-12);
}

#[test]
fn through_origin_inverse_matches_exact() {
    let xs = [1.0, 2.0, 3.0, 4.0, 5.0];
    let ys = [2.1, 3.9, 6.2, 7.8, 10.1];
    let mut acc = LeanMoments::new();
    acc.extend(&xs, &ys).unwrap();
    let fit = acc.fit_with(&FitOptions::through_origin()).unwrap();
    // Exact: b = Σxy/Σx², s² = Σ(y − bx)²/(n − 1),
    // var(x̂) = s²/b²·(1/m + x̂²/Σx²).
    let qx: Vec<BigRational> = xs.iter().map(|&v| q(v)).collect();
    let qy: Vec<BigRational> = ys.iter().map(|&v| q(v)).collect();
    let sxx: BigRational = qx.iter().map(|x| x * x).sum();
    let sxy: BigRational = qx.iter().zip(&qy).map(|(x, y)| x * y).sum();
    let b = &sxy / &sxx;
    let sse: BigRational = qx
        .iter()
        .zip(&qy)
        .map(|(x, y)| (y - &b * x) * (y - &b * x))
        .sum();
    let s2 = sse / q(4.0);
    let x0 = q(5.0) / &b;
    let var = &s2 / (&b * &b) * (q(1.0) + &x0 * &x0 / &sxx);
    let inv = fit.invert(&Reading::single(5.0)).unwrap();
    assert!(rel(inv.x, f(&x0)) < 1e-14);
    assert!(rel(inv.se, sqrt_f(&var)) < 1e-13);
    assert_eq!(
        fit.limits_from_sigma(SigmaSource::InterceptSe),
        Err(CalibError::NoIntercept)
    );
    let set = fit.fieller_set(&Reading::single(5.0), 0.95).unwrap();
    let FiellerSet::Bounded { lower, upper } = set else {
        panic!("{set:?}")
    };
    for x in [lower, upper] {
        let p = fit.prediction(x, 1, 0.95).unwrap();
        let edge = if x == lower { p.upper } else { p.lower };
        assert!((edge - 5.0).abs() < 1e-10);
    }
}

#[test]
fn bad_readings_are_refused() {
    let (xs, ys) = strong();
    let fit = fit_of(&xs, &ys);
    assert_eq!(
        fit.invert(&Reading::mean_of(1.0, 0)),
        Err(CalibError::InvalidReplicates)
    );
    assert_eq!(
        fit.invert(&Reading::single(f64::INFINITY)),
        Err(CalibError::NonFinite { index: 0 })
    );
    assert_eq!(
        fit.invert(&Reading::single(1.0).with_weight(0.0)),
        Err(CalibError::InvalidWeight { index: 0 })
    );
    assert_eq!(
        fit.invert_interval(&Reading::single(1.0), 0.0),
        Err(CalibError::InvalidLevel)
    );
    assert_eq!(
        fit.limits_from_sigma(SigmaSource::Given(-1.0)),
        Err(CalibError::InvalidUncertainty)
    );
    let g = fit.limits_from_sigma(SigmaSource::Given(0.02)).unwrap();
    assert!(rel(g.detection, 3.3 * 0.02 / fit.slope) < 1e-15);
    assert!(rel(g.quantitation, 10.0 * 0.02 / fit.slope) < 1e-15);
}

mod random_sets {
    use super::*;
    use proptest::prelude::*;

    /// Relative distance of `y0` from the band edge nearest to it at `x`,
    /// in units of the band's half-width.
    fn edge_gap(fit: &LineFit, x: f64, r: &Reading, level: f64) -> f64 {
        let p = fit.prediction(x, r.replicates, level).unwrap();
        let half = 0.5 * (p.upper - p.lower);
        (p.upper - r.value).abs().min((p.lower - r.value).abs()) / half
    }

    proptest! {
        // Random invented lines, noise, readings and levels: whatever the
        // case, the set's ends lie on the band edges and membership agrees
        // with the band (brute force through `LineFit::prediction`).
        #[test]
        fn fieller_set_is_the_inverted_band(
            n in 4usize..16,
            slope in prop_oneof![-3.0..-0.01f64, 0.01..3.0f64],
            noise in prop::collection::vec(-1.0..1.0f64, 16),
            scale in 0.01..2.0f64,
            offset in -5.0..5.0f64,
            m in 1u32..4,
            level in 0.5..0.99f64,
        ) {
            let xs: Vec<f64> = (0..n).map(|i| i as f64).collect();
            let ys: Vec<f64> = xs.iter().zip(&noise).map(|(x, e)| 1.0 + slope * x + scale * e).collect();
            let mut acc = LeanMoments::new();
            acc.extend(&xs, &ys).unwrap();
            let Ok(fit) = acc.fit() else { return Ok(()); };
            prop_assume!(fit.residual_sd > 0.0 && fit.slope != 0.0);
            let r = Reading::mean_of(fit.mean_y + offset * fit.residual_sd * 3.0, m);
            let set = fit.fieller_set(&r, level).unwrap();
            // Ends on the band edge to 1e-7 of the half-width (the roots of
            // a possibly ill-conditioned quadratic when g is near 1).
            let probe = |x: f64| {
                let inside = in_band(&fit, x, &r, level);
                let gap = edge_gap(&fit, x, &r, level);
                (inside, gap)
            };
            match set {
                FiellerSet::Bounded { lower, upper } => {
                    prop_assert!(lower <= upper);
                    for x in [lower, upper] {
                        prop_assert!(probe(x).1 < 1e-7, "end {x}: gap {}", probe(x).1);
                    }
                    let mid = 0.5 * (lower + upper);
                    prop_assert!(probe(mid).0);
                    let w = (upper - lower).max(1e-9);
                    prop_assert!(!probe(upper + w).0 && !probe(lower - w).0);
                }
                FiellerSet::TwoHalfLines { below, above } => {
                    prop_assert!(below < above);
                    for x in [below, above] {
                        prop_assert!(probe(x).1 < 1e-7, "end {x}: gap {}", probe(x).1);
                    }
                    let w = above - below;
                    prop_assert!(!probe(0.5 * (below + above)).0);
                    prop_assert!(probe(below - w).0 && probe(above + w).0);
                }
                FiellerSet::WholeLine => {
                    for x in [-1e6, -100.0, 0.0, 7.0, 100.0, 1e6] {
                        prop_assert!(probe(x).0, "x = {x}");
                    }
                }
            }
        }
    }
}
