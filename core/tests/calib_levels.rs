//! Replicate levels (streaming, merging, fixed capacity), weighted
//! calibration, polynomial inversion and the moment-based quadratic check,
//! against independent computations (exact rationals, brute force).
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests stop loudly

mod calib_support;

use calib_support::*;
use plumbfit::calib::{
    user_weighted_line, weighted_line, CalibError, FixedLevels, LevelSet, PolyCalibration, Reading,
    VarianceShape,
};
use plumbfit::{FullMoments, LeanMoments, WeightMeaning};

/// Invented readings: 6 levels, 2–4 replicates each, mild curvature.
fn data() -> (Vec<f64>, Vec<f64>) {
    let mut xs = Vec::new();
    let mut ys = Vec::new();
    let levels = [0.5, 1.0, 2.0, 4.0, 6.0, 8.0];
    let noise = [0.013, -0.021, 0.008, 0.017, -0.011, -0.004, 0.019, -0.015];
    let mut k = 0;
    for (j, &x) in levels.iter().enumerate() {
        for _ in 0..(2 + j % 3) {
            xs.push(x);
            ys.push(0.3 + 1.7 * x + 0.01 * x * x + noise[k % noise.len()]);
            k += 1;
        }
    }
    (xs, ys)
}

#[test]
fn push_extend_merge_and_fixed_agree() {
    let (xs, ys) = data();
    let mut pushed = LevelSet::new();
    for (&x, &y) in xs.iter().zip(&ys) {
        pushed.push(x, y).unwrap();
    }
    let mut extended = LevelSet::new();
    extended.extend(&xs, &ys).unwrap();
    // Three parts in a shuffled order, merged.
    let (a, rest) = xs.split_at(5);
    let (b, c) = rest.split_at(4);
    let (ya, yrest) = ys.split_at(5);
    let (yb, yc) = yrest.split_at(4);
    let mut p1 = LevelSet::new();
    p1.extend(c, yc).unwrap();
    let mut p2 = LevelSet::new();
    p2.extend(a, ya).unwrap();
    let mut p3 = LevelSet::new();
    p3.extend(b, yb).unwrap();
    p1.merge(&p2).unwrap();
    p1.merge(&p3).unwrap();
    let mut fixed = FixedLevels::<8>::new();
    fixed.extend(&xs, &ys).unwrap();
    let (ss, df) = pushed.pure_error();
    for other in [extended.pure_error(), p1.pure_error(), fixed.pure_error()] {
        // Same sums in a different order: 1e-13 relative.
        assert!(rel(other.0, ss) < 1e-13 && other.1 == df);
    }
    assert_eq!(p1.level_count(), 6);
    assert_eq!(fixed.levels().len(), 6);
    assert!(pushed.levels().windows(2).all(|w| w[0].x < w[1].x));
    // Exact pure error: per-level sums of squares in rationals.
    let mut exact = num_rational::BigRational::from_integer(0.into());
    for l in pushed.levels() {
        let vals: Vec<_> = xs
            .iter()
            .zip(&ys)
            .filter(|(x, _)| **x == l.x)
            .map(|(_, &y)| q(y))
            .collect();
        let n = q(vals.len() as f64);
        let m: num_rational::BigRational =
            vals.iter().cloned().sum::<num_rational::BigRational>() / n;
        for v in &vals {
            exact += (v - &m) * (v - &m);
        }
    }
    assert!(rel(ss, f(&exact)) < 1e-13);
}

#[test]
fn fixed_store_refuses_overflow_and_stays_unchanged() {
    let (xs, ys) = data();
    let mut fixed = FixedLevels::<4>::new();
    let before = fixed;
    assert_eq!(
        fixed.extend(&xs, &ys),
        Err(CalibError::LevelCapacity { capacity: 4 })
    );
    assert_eq!(fixed, before);
    fixed.push(1.0, 2.0).unwrap();
    let snap = fixed;
    assert_eq!(
        fixed.extend(&[1.0, f64::NAN], &[2.0, 3.0]),
        Err(CalibError::NonFinite { index: 1 })
    );
    assert_eq!(fixed, snap);
    let mut big = FixedLevels::<2>::new();
    big.extend(&[5.0, 6.0], &[1.0, 1.0]).unwrap();
    assert_eq!(fixed.merge(&big), Ok(()));
    let mut tiny = FixedLevels::<2>::new();
    tiny.push(9.0, 1.0).unwrap();
    let snap = big;
    assert_eq!(
        big.merge(&tiny),
        Err(CalibError::LevelCapacity { capacity: 2 })
    );
    assert_eq!(big, snap);
    // −0.0 and 0.0 are one level.
    let mut z = LevelSet::new();
    z.push(0.0, 1.0).unwrap();
    z.push(-0.0, 2.0).unwrap();
    assert_eq!(z.level_count(), 1);
}

#[test]
fn lack_of_fit_errors() {
    let mut acc = LeanMoments::new();
    acc.extend(&[1.0, 2.0, 3.0], &[1.0, 2.1, 2.9]).unwrap();
    let fit = acc.fit().unwrap();
    let mut lv = LevelSet::new();
    lv.extend(&[1.0, 2.0, 3.0], &[1.0, 2.1, 2.9]).unwrap();
    assert_eq!(lv.lack_of_fit_line(&fit), Err(CalibError::NoReplicates));
    lv.push(3.0, 3.0).unwrap();
    assert_eq!(
        lv.lack_of_fit_line(&fit),
        Err(CalibError::CountMismatch { fit: 3, levels: 4 })
    );
    let mut two = LevelSet::new();
    two.extend(&[1.0, 1.0, 2.0, 2.0], &[1.0, 1.1, 2.0, 2.1])
        .unwrap();
    assert_eq!(
        two.lack_of_fit_poly(&[0.0, 1.0]),
        Err(CalibError::TooFewLevels {
            levels: 2,
            params: 2
        })
    );
    assert_eq!(
        two.lack_of_fit_poly(&[]),
        Err(CalibError::InvalidCoefficientCount { found: 0 })
    );
    assert_eq!(
        lv.push_weighted(1.0, 1.0, -1.0),
        Err(CalibError::InvalidWeight { index: 0 })
    );
    assert_eq!(
        lv.extend(&[1.0], &[1.0, 2.0]),
        Err(CalibError::LengthMismatch {
            expected: 1,
            found: 2
        })
    );
}

#[test]
fn quadratic_check_matches_exact_and_merges() {
    let (xs, ys) = data();
    let mut acc = FullMoments::new();
    acc.extend(&xs, &ys).unwrap();
    let chk = acc.quadratic_check().unwrap();
    let qx: Vec<_> = xs.iter().map(|&v| q(v)).collect();
    let qy: Vec<_> = ys.iter().map(|&v| q(v)).collect();
    let sse1 = exact_line(&qx, &qy, None).sse;
    let (coef, sse2) = exact_poly(&qx, &qy, 2);
    // Exact rational fits of the same doubles; moments of order 4 of small
    // numbers: 1e-10 relative.
    assert!(rel(chk.sse_line, f(&sse1)) < 1e-12);
    assert!(rel(chk.sse_quadratic, f(&sse2)) < 1e-10);
    assert!(rel(chk.curvature, f(&coef[2])) < 1e-10);
    let n = xs.len() as f64;
    let mandel = ((n - 2.0) * chk.sd_line.powi(2) - (n - 3.0) * chk.sd_quadratic.powi(2))
        / chk.sd_quadratic.powi(2);
    assert!(rel(chk.test_value, mandel) < 1e-9);
    // Merged halves give the same check.
    let (a, b) = xs.split_at(7);
    let (ya, yb) = ys.split_at(7);
    let mut p = FullMoments::new();
    p.extend(a, ya).unwrap();
    let mut r = FullMoments::new();
    r.extend(b, yb).unwrap();
    p.merge(&r).unwrap();
    let m = p.quadratic_check().unwrap();
    assert!(rel(m.test_value, chk.test_value) < 1e-9);
    // The invented curvature (0.01·x²) is detected.
    assert!(chk.p_value() < 0.01, "{}", chk.p_value());
    // Two distinct x cannot carry a quadratic.
    let mut two = FullMoments::new();
    two.extend(&[1.0, 1.0, 2.0, 2.0, 2.0], &[1.0, 1.2, 2.0, 2.1, 1.9])
        .unwrap();
    assert_eq!(two.quadratic_check(), Err(CalibError::NoCurvatureSpread));
    let mut few = FullMoments::new();
    few.extend(&[1.0, 2.0, 3.0], &[1.0, 2.0, 3.5]).unwrap();
    assert!(matches!(
        few.quadratic_check(),
        Err(CalibError::TooFewPoints { needed: 4, .. })
    ));
}

#[test]
fn variance_function_weights_match_exact_wls() {
    let (xs, ys) = data();
    for (shape, wfun) in [
        (
            VarianceShape::InverseX,
            (|x: f64, _y: f64| 1.0 / x) as fn(f64, f64) -> f64,
        ),
        (VarianceShape::InverseX2, |x: f64, _y: f64| 1.0 / (x * x)),
        (VarianceShape::InverseY2, |_x: f64, y: f64| 1.0 / (y * y)),
    ] {
        let wc = weighted_line(&xs, &ys, shape, WeightMeaning::Relative, 1.0).unwrap();
        let qx: Vec<_> = xs.iter().map(|&v| q(v)).collect();
        let qy: Vec<_> = ys.iter().map(|&v| q(v)).collect();
        let qw: Vec<_> = xs.iter().zip(&ys).map(|(&x, &y)| q(wfun(x, y))).collect();
        let e = exact_line(&qx, &qy, Some(&qw));
        // Exact WLS on the same (rounded) weights: 1e-12 relative.
        assert!(rel(wc.fit.slope, f(&e.slope)) < 1e-12, "{shape:?}");
        assert!(rel(wc.fit.intercept, f(&e.intercept)) < 1e-12, "{shape:?}");
        assert!(rel(wc.fit.sse, f(&e.sse)) < 1e-11, "{shape:?}");
        // Relative weights: the unit variance has no effect.
        let other = weighted_line(&xs, &ys, shape, WeightMeaning::Relative, 7.0).unwrap();
        assert!(rel(other.fit.se_slope, wc.fit.se_slope) < 1e-12);
    }
    // Known variances: σ² = 0.0004·x², so the covariance is not rescaled.
    let kv = weighted_line(
        &xs,
        &ys,
        VarianceShape::InverseX2,
        WeightMeaning::InverseVariance,
        4e-4,
    )
    .unwrap();
    assert_eq!(kv.fit.scale, 1.0);
    // A reading at y = 10 carries the weight 1/(σ₀²·x̂²).
    let r = kv.reading(10.0, 2).unwrap();
    let x0 = kv.fit.invert(&Reading::single(10.0)).unwrap().x;
    assert!(rel(r.weight, 1.0 / (4e-4 * x0 * x0)) < 1e-14 && r.replicates == 2);
    let inv = kv.fit.invert(&r).unwrap();
    // var = (1/(m·w0) + 1/W + u²/Sxx)/b² with scale 1 (known variances).
    let u = x0 - kv.fit.mean_x;
    let var = (1.0 / (2.0 * r.weight) + 1.0 / kv.fit.weight_sum + u * u / kv.fit.sxx)
        / (kv.fit.slope * kv.fit.slope);
    assert!(rel(inv.se, var.sqrt()) < 1e-12);
    assert_eq!(
        weighted_line(
            &[0.0, 1.0, 2.0],
            &[0.0, 1.0, 2.0],
            VarianceShape::InverseX,
            WeightMeaning::Relative,
            1.0
        )
        .map(|_| ()),
        Err(CalibError::VarianceUndefined { index: 0 })
    );
    assert_eq!(
        weighted_line(
            &xs,
            &ys,
            VarianceShape::InverseX,
            WeightMeaning::Relative,
            0.0
        )
        .map(|_| ()),
        Err(CalibError::InvalidUncertainty)
    );
}

#[test]
fn mean_power_weights_reach_their_fixed_point() {
    let (xs, ys) = data();
    let wc = weighted_line(
        &xs,
        &ys,
        VarianceShape::MeanPower { power: 2.0 },
        WeightMeaning::Relative,
        1.0,
    )
    .unwrap();
    assert!(wc.passes > 1 && wc.passes < 50);
    // Independent: one exact WLS pass with weights from the final fitted
    // values reproduces the final fit (the fixed point; 1e-11).
    let qx: Vec<_> = xs.iter().map(|&v| q(v)).collect();
    let qy: Vec<_> = ys.iter().map(|&v| q(v)).collect();
    let qw: Vec<_> = xs
        .iter()
        .map(|&x| q(1.0 / wc.fit.fitted(x).powi(2)))
        .collect();
    let e = exact_line(&qx, &qy, Some(&qw));
    assert!(rel(wc.fit.slope, f(&e.slope)) < 1e-11);
    assert!(rel(wc.fit.intercept, f(&e.intercept)) < 1e-11);
}

#[test]
fn cubic_calibration_inverse_matches_brute_force() {
    // Invented cubic response 0.2 + 1.1x + 0.05x² − 0.002x³ on [0, 10]
    // (monotone there) with an invented covariance.
    let c = [0.2, 1.1, 0.05, -0.002];
    let mut cov = [0.0; 16];
    let sd = [0.01, 0.004, 0.0008, 0.00005];
    for i in 0..4 {
        for j in 0..4 {
            // AR(1) correlations (−0.6)^|i−j|: positive definite.
            let rho = (-0.6f64).powi((i as i32 - j as i32).abs());
            cov[i * 4 + j] = rho * sd[i] * sd[j];
        }
    }
    let cal = PolyCalibration::new(&c, &cov, 0.02, 20.0, (0.0, 10.0)).unwrap();
    let y0 = 6.0;
    let r = Reading::mean_of(y0, 2);
    let inv = cal.invert(&r).unwrap();
    // Root: bisection in exact-ish double arithmetic on p(x) − y0.
    let p = |x: f64| c[0] + x * (c[1] + x * (c[2] + x * c[3]));
    let (mut a, mut b) = (0.0, 10.0);
    for _ in 0..200 {
        let m = 0.5 * (a + b);
        if p(m) < y0 {
            a = m
        } else {
            b = m
        }
    }
    assert!((inv.x - a).abs() < 1e-13, "{} vs {a}", inv.x);
    // Delta-method SE by direct formula.
    let g = [1.0, inv.x, inv.x * inv.x, inv.x.powi(3)];
    let mut vf = 0.0;
    for i in 0..4 {
        for j in 0..4 {
            vf += g[i] * cov[i * 4 + j] * g[j];
        }
    }
    let d = c[1] + 2.0 * c[2] * inv.x + 3.0 * c[3] * inv.x * inv.x;
    let se = ((0.02f64.powi(2) / 2.0 + vf) / (d * d)).sqrt();
    assert!(rel(inv.se, se) < 1e-12);
    // Interval ends: the band edge passes through y0 (brute-force check).
    let ii = cal.invert_interval(&r, 0.95).unwrap();
    assert!(!ii.lower_clipped && !ii.upper_clipped);
    for x in [ii.lower, ii.upper] {
        let gx = [1.0, x, x * x, x.powi(3)];
        let mut v = 0.0;
        for i in 0..4 {
            for j in 0..4 {
                v += gx[i] * cov[i * 4 + j] * gx[j];
            }
        }
        let half = ii.t * (0.02f64.powi(2) / 2.0 + v).sqrt();
        assert!(
            ((p(x) - y0).abs() - half).abs() < 1e-10 * half,
            "{x} {} {half} {ii:?}",
            (p(x) - y0).abs()
        );
    }
    assert!(ii.lower < inv.x && inv.x < ii.upper);
    // Near the range end the interval is clipped and says so.
    let edge = cal
        .invert_interval(&Reading::single(p(0.01)), 0.95)
        .unwrap();
    assert!(edge.lower_clipped && edge.lower == 0.0);
    // Argument errors.
    assert_eq!(
        PolyCalibration::new(&[1.0], &[0.0], 0.1, 5.0, (0.0, 1.0)).map(|_| ()),
        Err(CalibError::InvalidCoefficientCount { found: 1 })
    );
    assert_eq!(
        PolyCalibration::new(&c, &cov[..9], 0.1, 5.0, (0.0, 1.0)).map(|_| ()),
        Err(CalibError::LengthMismatch {
            expected: 16,
            found: 9
        })
    );
    assert_eq!(
        PolyCalibration::new(&c, &cov, 0.1, 5.0, (1.0, 1.0)).map(|_| ()),
        Err(CalibError::InvalidRange)
    );
    assert_eq!(
        PolyCalibration::new(&c, &cov, 0.1, 0.0, (0.0, 1.0)).map(|_| ()),
        Err(CalibError::InvalidDegreesOfFreedom)
    );
}

#[test]
fn user_weights_match_exact_wls() {
    let (xs, ys) = data();
    let ws: Vec<f64> = (0..xs.len()).map(|i| 0.5 + (i % 4) as f64).collect();
    let fit = user_weighted_line(&xs, &ys, &ws, WeightMeaning::InverseVariance).unwrap();
    let qx: Vec<_> = xs.iter().map(|&v| q(v)).collect();
    let qy: Vec<_> = ys.iter().map(|&v| q(v)).collect();
    let qw: Vec<_> = ws.iter().map(|&v| q(v)).collect();
    let e = exact_line(&qx, &qy, Some(&qw));
    // Exact WLS on the same doubles: 1e-12 relative.
    assert!(rel(fit.slope, f(&e.slope)) < 1e-12);
    // Known variances: var(b) = 1/Sxx exactly, no rescaling.
    assert!(rel(fit.se_slope, 1.0 / f(&e.sxx).sqrt()) < 1e-12);
    assert_eq!(
        user_weighted_line(&[], &[], &[], WeightMeaning::Relative).map(|_| ()),
        Err(CalibError::EmptyInput)
    );
    assert_eq!(CalibError::EmptyInput.code(), 4);
    let mut bad = ws.clone();
    bad[3] = 0.0;
    assert_eq!(
        user_weighted_line(&xs, &ys, &bad, WeightMeaning::Relative).map(|_| ()),
        Err(CalibError::InvalidWeight { index: 3 })
    );
}
