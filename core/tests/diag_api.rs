//! Public behaviour of the diagnostics: typed errors with stable codes,
//! refusal of weighted and aged data, the caller-storage forms, the
//! leverage-1 and exact-deletion flags, agreement of the stream, merge and
//! retained paths, and the model accumulator's influence.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests stop loudly

use plumbfit::diag::{self, DiagError, PointInfluence, ResidualSet, SerialMethod};
use plumbfit::{FullMoments, LineFit};

fn data(n: usize) -> (Vec<f64>, Vec<f64>) {
    let x: Vec<f64> = (0..n)
        .map(|i| (i as f64 * 0.731).sin() * 5.0 + i as f64 * 0.1)
        .collect();
    let y: Vec<f64> = x
        .iter()
        .enumerate()
        .map(|(i, v)| 3.0 - 1.5 * v + ((i * 37 % 17) as f64 - 8.0) * 0.05)
        .collect();
    (x, y)
}

fn fit(x: &[f64], y: &[f64]) -> (FullMoments, LineFit) {
    let mut acc = FullMoments::new();
    acc.extend(x, y).unwrap();
    let f = acc.fit().unwrap();
    (acc, f)
}

#[test]
fn codes_are_stable_and_errors_are_plain_values() {
    fn assert_traits<T: Send + Sync + Copy + 'static + std::error::Error>() {}
    assert_traits::<DiagError>();
    let cases = [
        (DiagError::NonFinite { index: 2 }, 1),
        (
            DiagError::LengthMismatch {
                x_len: 1,
                other_len: 2,
            },
            3,
        ),
        (DiagError::EmptyInput, 4),
        (DiagError::OutputTooShort { needed: 3, have: 2 }, 40),
        (DiagError::ThroughOrigin, 41),
        (
            DiagError::FitMismatch {
                fit_count: 3,
                data_len: 4,
            },
            42,
        ),
        (DiagError::ModelMismatch { expected: 2 }, 43),
        (DiagError::Overflow, 100),
        (DiagError::TooFewPoints { needed: 3, have: 2 }, 101),
        (DiagError::NoSpread, 102),
        (DiagError::TooManyPoints { n: 5001, max: 5000 }, 140),
        (DiagError::Weighted, 141),
        (DiagError::Forgotten, 142),
        (DiagError::ZeroResidualVariance, 143),
        (DiagError::NoConvergence, 144),
    ];
    for (e, code) in cases {
        assert_eq!(e.code(), code, "{e:?}");
        assert!(!e.to_string().is_empty());
    }
}

#[test]
fn stream_refuses_weighted_forgotten_small_and_exact() {
    let (x, y) = data(30);
    let (acc, _) = fit(&x, &y);
    let mut w = acc;
    w.push_weighted(1.0, 1.0, 2.0).unwrap();
    assert_eq!(diag::stream_checks(&w), Err(DiagError::Weighted));
    let mut f = acc;
    f.forget(0.9).unwrap();
    assert_eq!(diag::stream_checks(&f), Err(DiagError::Forgotten));
    let mut small = FullMoments::new();
    small.extend(&[1.0, 2.0], &[1.0, 3.0]).unwrap();
    assert_eq!(
        diag::stream_checks(&small),
        Err(DiagError::TooFewPoints { needed: 3, have: 2 })
    );
    let mut flat = FullMoments::new();
    flat.extend(&[2.0; 5], &[1.0, 2.0, 3.0, 4.0, 5.0]).unwrap();
    assert_eq!(diag::stream_checks(&flat), Err(DiagError::NoSpread));
    let mut exact = FullMoments::new();
    exact
        .extend(&[1.0, 2.0, 3.0, 4.0], &[3.0, 5.0, 7.0, 9.0])
        .unwrap();
    assert_eq!(
        diag::stream_checks(&exact),
        Err(DiagError::ZeroResidualVariance)
    );
    // Weight 1 is not "weighted".
    let mut ones = FullMoments::new();
    for (a, b) in x.iter().zip(&y) {
        ones.push_weighted(*a, *b, 1.0).unwrap();
    }
    assert!(diag::stream_checks(&ones).is_ok());
}

#[test]
fn stream_merge_and_retained_agree() {
    // Tolerance 1e-11 relative: the paths differ only in rounding
    // (NUMERICS A4; the reference comparison bounds each at 1e-10).
    let (x, y) = data(200);
    let (acc, lf) = fit(&x, &y);
    let mut merged = FullMoments::new();
    for part in [0..37, 37..38, 38..150, 150..200] {
        let mut p = FullMoments::new();
        p.extend(&x[part.clone()], &y[part]).unwrap();
        merged.merge(&p).unwrap();
    }
    let a = diag::stream_checks(&acc).unwrap();
    let b = diag::stream_checks(&merged).unwrap();
    let set = ResidualSet::new(&x, &y, &lf).unwrap();
    let r = set.shape().unwrap();
    let rs = set.serial().unwrap();
    let close = |p: f64, q: f64| (p - q).abs() <= 1e-11 * q.abs().max(1e-300);
    for s in [a, b] {
        assert!(close(s.shape.sum_sq, r.sum_sq));
        assert!(close(s.shape.skewness, r.skewness));
        assert!(close(s.shape.kurtosis, r.kurtosis));
        assert!(close(s.shape.jarque_bera, r.jarque_bera));
        assert!(close(s.shape.spread_lm, r.spread_lm));
        assert!(close(
            s.shape.spread_lm_studentized,
            r.spread_lm_studentized
        ));
        assert!(close(s.serial.durbin_watson, rs.durbin_watson));
        assert!(close(
            s.serial.lag1_autocorrelation,
            rs.lag1_autocorrelation
        ));
        assert!(s.serial.p_positive_low <= rs.p_positive() + 1e-12);
        assert!(rs.p_positive() <= s.serial.p_positive_high + 1e-12);
    }
}

#[test]
fn retained_checks_validate_fit_and_data() {
    let (x, y) = data(20);
    let (_, lf) = fit(&x, &y);
    assert_eq!(
        ResidualSet::new(&x[..19], &y[..19], &lf).unwrap_err(),
        DiagError::FitMismatch {
            fit_count: 20,
            data_len: 19
        }
    );
    assert_eq!(
        ResidualSet::new(&x, &y[..19], &lf).unwrap_err(),
        DiagError::LengthMismatch {
            x_len: 20,
            other_len: 19
        }
    );
    let mut bad = y.clone();
    bad[7] = f64::NAN;
    assert_eq!(
        ResidualSet::new(&x, &bad, &lf).unwrap_err(),
        DiagError::NonFinite { index: 7 }
    );
    assert_eq!(
        ResidualSet::new(&[], &[], &lf).unwrap_err(),
        DiagError::EmptyInput
    );
    let mut acc = FullMoments::new();
    acc.extend(&x, &y).unwrap();
    let origin = acc
        .fit_with(&plumbfit::FitOptions::through_origin())
        .unwrap();
    assert_eq!(
        ResidualSet::new(&x, &y, &origin).unwrap_err(),
        DiagError::ThroughOrigin
    );
    let mut w = FullMoments::new();
    w.extend_weighted(&x, &y, &[2.0; 20]).unwrap();
    assert_eq!(
        ResidualSet::new(&x, &y, &w.fit().unwrap()).unwrap_err(),
        DiagError::Weighted
    );
    let mut f = acc;
    f.forget(0.99).unwrap();
    assert_eq!(
        ResidualSet::new(&x, &y, &f.fit().unwrap()).unwrap_err(),
        DiagError::Forgotten
    );
}

#[test]
fn into_forms_refuse_short_output_and_leave_it_untouched() {
    let (x, y) = data(10);
    let (_, lf) = fit(&x, &y);
    let mut short = [7.0; 9];
    assert_eq!(
        diag::residuals_into(&x, &y, &lf, &mut short),
        Err(DiagError::OutputTooShort {
            needed: 10,
            have: 9
        })
    );
    assert!(short.iter().all(|v| *v == 7.0));
    let mut pairs = [[7.0; 2]; 9];
    assert!(diag::normal_pairs_into(&x, &y, &lf, &mut pairs).is_err());
    assert!(diag::versus_x_into(&x, &y, &lf, &mut pairs).is_err());
    assert!(diag::versus_fitted_into(&x, &y, &lf, &mut pairs).is_err());
    assert!(pairs.iter().flatten().all(|v| *v == 7.0));
    let mut inf = [PointInfluence::default(); 9];
    assert!(diag::influence_into(&x, &y, &lf, &mut inf).is_err());

    // The slice forms equal the allocating ones exactly (same arithmetic).
    let set = ResidualSet::new(&x, &y, &lf).unwrap();
    let mut e = [0.0; 10];
    diag::residuals_into(&x, &y, &lf, &mut e).unwrap();
    assert_eq!(&e[..], set.residuals());
    let mut p = [[0.0; 2]; 10];
    diag::normal_pairs_into(&x, &y, &lf, &mut p).unwrap();
    assert_eq!(p.to_vec(), set.normal_pairs());
    diag::versus_x_into(&x, &y, &lf, &mut p).unwrap();
    assert_eq!(p.to_vec(), set.versus_x());
    diag::versus_fitted_into(&x, &y, &lf, &mut p).unwrap();
    assert_eq!(p.to_vec(), set.versus_fitted());
    let mut inf = [PointInfluence::default(); 10];
    diag::influence_into(&x, &y, &lf, &mut inf).unwrap();
    assert_eq!(inf.to_vec(), set.influence().unwrap());
    // Residuals of a fit with intercept sum to zero (to rounding).
    let scale: f64 = e.iter().map(|v| v.abs()).sum();
    assert!(e.iter().sum::<f64>().abs() <= 1e-14 * scale);
}

#[test]
fn leverage_one_is_flagged_not_infinite() {
    // All x but one equal: the fit passes through the odd point whatever
    // its y, so its leverage is 1 (common practice: flag it).
    let x = [0.0, 0.0, 0.0, 0.0, 5.0];
    let y = [1.0, 1.2, 0.9, 1.1, 4.0];
    let (_, lf) = fit(&x, &y);
    let inf = ResidualSet::new(&x, &y, &lf).unwrap().influence().unwrap();
    let odd = inf[4];
    assert!(odd.has(PointInfluence::LEVERAGE_ONE));
    assert!((odd.leverage - 1.0).abs() < 1e-12);
    for v in [
        odd.studentized,
        odd.deleted_t,
        odd.cooks_distance,
        odd.dffits,
    ] {
        assert_eq!(v, 0.0);
    }
    for p in &inf[..4] {
        assert!(!p.has(PointInfluence::LEVERAGE_ONE));
        assert!(p.studentized.is_finite() && p.deleted_t.is_finite());
    }
}

#[test]
fn deletion_leaving_exact_line_is_flagged() {
    // Without point 2 the others lie exactly on y = 1 + 2x.
    let x = [0.0, 1.0, 2.0, 3.0, 4.0, 5.0];
    let y = [1.0, 3.0, 9.0, 7.0, 9.0, 11.0];
    let (_, lf) = fit(&x, &y);
    let inf = ResidualSet::new(&x, &y, &lf).unwrap().influence().unwrap();
    assert!(inf[2].has(PointInfluence::DELETION_EXACT));
    assert_eq!(inf[2].deleted_t, 0.0);
    assert!(inf[2].studentized.abs() > 1.0);
    assert!(!inf[0].has(PointInfluence::DELETION_EXACT));
}

#[test]
fn shapiro_wilk_range_and_known_values() {
    assert_eq!(
        diag::shapiro_wilk(&[1.0, 2.0]).unwrap_err(),
        DiagError::TooFewPoints { needed: 3, have: 2 }
    );
    let big: Vec<f64> = (0..5001).map(|i| (i as f64 * 0.37).sin()).collect();
    assert_eq!(
        diag::shapiro_wilk(&big).unwrap_err(),
        DiagError::TooManyPoints { n: 5001, max: 5000 }
    );
    assert!(diag::shapiro_wilk(&big[..5000]).is_ok());
    assert_eq!(
        diag::shapiro_wilk(&[2.0; 4]).unwrap_err(),
        DiagError::ZeroResidualVariance
    );
    assert_eq!(
        diag::shapiro_wilk(&[1.0, f64::INFINITY, 2.0]).unwrap_err(),
        DiagError::NonFinite { index: 1 }
    );
    // Three equally spaced values are as normal as three values can be:
    // W = 1 and the exact n = 3 p value 1 − (6/π)·acos(√W) = 1.
    let s = diag::shapiro_wilk(&[1.0, 2.0, 3.0]).unwrap();
    assert!((s.w - 1.0).abs() < 1e-15 && (s.p_value - 1.0).abs() < 1e-12);
    // The smallest W for n = 3 is 3/4, with p = 0.
    let s = diag::shapiro_wilk(&[0.0, 0.0, 1.0]).unwrap();
    assert!((s.w - 0.75).abs() < 1e-12 && s.p_value.abs() < 1e-6);
    let ad = diag::anderson_darling(&[1.0, 2.0, 3.0, 4.0, 5.0]).unwrap();
    assert!(ad.a2 > 0.0 && ad.p_value > 0.5);
}

#[test]
fn serial_needs_four_points_for_a_p_value() {
    let x = [1.0, 2.0, 3.0];
    let y = [1.0, 3.0, 2.0];
    let (acc, lf) = fit(&x, &y);
    let s = ResidualSet::new(&x, &y, &lf).unwrap().serial().unwrap();
    assert_eq!(s.method, SerialMethod::Unavailable);
    assert_eq!((s.p_positive_low, s.p_positive_high), (0.0, 1.0));
    let b = diag::stream_checks(&acc).unwrap().serial;
    assert_eq!(b.method, SerialMethod::Unavailable);
    assert!((b.durbin_watson - s.durbin_watson).abs() < 1e-12);
}

#[test]
fn model_influence_matches_line_influence() {
    // Leverage from the model's triangular factor equals the line's
    // 1/n + (x − x̄)²/Sxx; tolerance 1e-10 relative (both near full double
    // accuracy on this well-conditioned design).
    let (x, y) = data(25);
    let (_, lf) = fit(&x, &y);
    let line = ResidualSet::new(&x, &y, &lf).unwrap().influence().unwrap();
    let mf = plumbfit::model::poly_fit(&x, &y, 1).unwrap();
    let rows: Vec<f64> = x.iter().flat_map(|v| [1.0, *v]).collect();
    let model = diag::model_influence(&rows, &y, &mf).unwrap();
    let close = |a: f64, b: f64| (a - b).abs() <= 1e-10 * b.abs() + 1e-13;
    for (m, l) in model.iter().zip(&line) {
        assert!(close(m.leverage, l.leverage));
        assert!(close(m.studentized, l.studentized));
        assert!(close(m.deleted_t, l.deleted_t));
        assert!(close(m.cooks_distance, l.cooks_distance));
        assert!(close(m.dffits, l.dffits));
        assert_eq!(m.flags, l.flags);
    }
    assert_eq!(
        diag::model_influence(&rows[..49], &y, &mf).unwrap_err(),
        DiagError::ModelMismatch { expected: 2 }
    );
}

#[test]
fn statistics_without_p_equal_the_full_checks() {
    let (x, y) = data(40);
    let (acc, _) = fit(&x, &y);
    let full = diag::stream_checks(&acc).unwrap();
    let quick = diag::stream_statistics(&acc).unwrap();
    assert_eq!(quick.shape, full.shape);
    assert_eq!(quick.serial.durbin_watson, full.serial.durbin_watson);
    assert_eq!(
        quick.serial.lag1_autocorrelation,
        full.serial.lag1_autocorrelation
    );
    assert_eq!(quick.serial.method, SerialMethod::Unavailable);
    assert_eq!(full.serial.method, SerialMethod::ExactBounds);
}
