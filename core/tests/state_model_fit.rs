//! Model fits on extreme but reachable states (weights forgotten into the
//! subnormal range, sums of squares near the top of the double range):
//! a fit either reports only finite numbers or refuses with
//! `ModelError::Overflow` (code 122); it never returns NaN or infinity.
//! Also the empty block, refused like the line accumulator's (code 4).
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)]

use plumbfit::model::{ModelError, ModelFit, ModelMoments};
use plumbfit::{LeanMoments, MomentsError};

/// Every number a fit reports (the F statistic may be +∞ for an exact fit).
fn all_finite(f: &ModelFit) -> bool {
    let mut v: Vec<f64> = Vec::new();
    v.extend(&f.coefficients);
    v.extend(&f.std_errors);
    v.extend(&f.covariance);
    v.extend([
        f.sse,
        f.ss_model,
        f.ss_total,
        f.residual_sd,
        f.ms_resid,
        f.weight_sum,
        f.effective_rows,
        f.condition_estimate,
    ]);
    v.extend(f.r_squared);
    v.extend(f.adj_r_squared);
    v.extend(f.ms_model);
    v.iter().all(|x| x.is_finite())
        && f.f_stat
            .is_none_or(|s| s.is_finite() || (f.exact_fit && s == f64::INFINITY))
}

fn line_rows(m: &mut ModelMoments, scale: f64) {
    // y = 1 + 2x with a small alternating misfit, x = 0..10 (invented).
    for i in 0..10 {
        let x = i as f64;
        let e = if i % 2 == 0 { 0.25 } else { -0.25 };
        m.push_row(&[1.0, x], (1.0 + 2.0 * x + e) * scale).unwrap();
    }
}

/// Fit of `m`: finite numbers, or the overflow refusal; returns which.
fn fit_outcome(m: &ModelMoments) -> Result<(), ModelError> {
    match m.fit(&Default::default()) {
        Ok(f) => {
            assert!(all_finite(&f), "non-finite fit result\n{f:?}");
            Ok(())
        }
        Err(e) => Err(e),
    }
}

#[test]
fn weights_forgotten_into_the_subnormal_range_refuse_with_overflow() {
    let mut m = ModelMoments::new(2).unwrap();
    line_rows(&mut m, 1.0);
    assert_eq!(fit_outcome(&m), Ok(()));
    // λ = 1e-310 scales the diagonal D and the SSE into the subnormal
    // range; 1/D overflows in the covariance.
    m.forget(1e-310).unwrap();
    let before = m.save_to_vec();
    let e = fit_outcome(&m).unwrap_err();
    assert_eq!(e, ModelError::Overflow);
    assert_eq!(e.code(), 122); // DEVELOPERS.md: 122 model state or fit overflow
    assert_eq!(m.save_to_vec(), before, "a fit changed the state");
}

#[test]
fn sums_of_squares_near_the_double_limit_refuse_with_overflow() {
    // Responses near 1e153: every state value stays finite (the state
    // refuses to overflow on push) but the total sum of squares passes
    // f64::MAX, and so would R² and the F statistic.
    let mut refused = 0;
    for k in [1e150, 5e152, 1e153, 4e153, 1e154] {
        let mut m = ModelMoments::new(2).unwrap();
        let mut pushed = true;
        for i in 0..10 {
            let x = i as f64;
            let e = if i % 2 == 0 { 1.0 } else { -1.0 };
            if m.push_row(&[1.0, x], (x + e) * k).is_err() {
                pushed = false;
                break;
            }
        }
        if !pushed {
            continue;
        }
        if fit_outcome(&m) == Err(ModelError::Overflow) {
            refused += 1;
        }
    }
    assert!(refused >= 1, "no scale reached the overflow refusal");
}

#[test]
fn ordinary_fit_is_unaffected() {
    // Exact values: the data are y = 1 + 2x ± 0.25 alternating, so the
    // least-squares slope is computed independently below (common practice:
    // closed-form simple regression, summed in f64, tolerance 1e-12).
    let mut m = ModelMoments::new(2).unwrap();
    line_rows(&mut m, 1.0);
    let f = m.fit(&Default::default()).unwrap();
    let (xs, ys): (Vec<f64>, Vec<f64>) = (0..10)
        .map(|i| {
            let x = i as f64;
            (x, 1.0 + 2.0 * x + if i % 2 == 0 { 0.25 } else { -0.25 })
        })
        .unzip();
    let mx = xs.iter().sum::<f64>() / 10.0;
    let my = ys.iter().sum::<f64>() / 10.0;
    let sxy: f64 = xs.iter().zip(&ys).map(|(x, y)| (x - mx) * (y - my)).sum();
    let sxx: f64 = xs.iter().map(|x| (x - mx) * (x - mx)).sum();
    let slope = sxy / sxx;
    assert!((f.coefficients[1] - slope).abs() < 1e-12);
    assert!((f.coefficients[0] - (my - slope * mx)).abs() < 1e-12);
    assert!(all_finite(&f));
}

#[test]
fn empty_blocks_are_refused_like_the_line_accumulator() {
    let mut m = ModelMoments::new(2).unwrap();
    m.push_row(&[1.0, 2.0], 3.0).unwrap();
    let before = m.save_to_vec();
    assert_eq!(m.extend_rows(&[], &[]), Err(ModelError::EmptyInput));
    assert_eq!(
        m.extend_rows_weighted(&[], &[], &[]),
        Err(ModelError::EmptyInput)
    );
    assert_eq!(m.extend_powers(&[], &[]), Err(ModelError::EmptyInput));
    assert_eq!(
        m.extend_powers_weighted(&[], &[], &[]),
        Err(ModelError::EmptyInput)
    );
    assert_eq!(m.save_to_vec(), before);
    // A length mismatch is still reported first, as for the line.
    assert!(matches!(
        m.extend_rows(&[1.0, 2.0], &[]),
        Err(ModelError::DimensionMismatch { .. })
    ));
    let mut l = LeanMoments::new();
    let line_code = l.extend(&[], &[]).unwrap_err().code();
    assert_eq!(line_code, MomentsError::EmptyInput.code());
    assert_eq!(ModelError::EmptyInput.code(), line_code); // DEVELOPERS.md: 4 empty input
    assert_eq!(
        plumbfit::model::poly_fit(&[], &[], 1).unwrap_err(),
        ModelError::EmptyInput
    );
}

#[test]
fn merging_row_counts_past_the_double_range_is_refused() {
    // A restored state may hold any finite row count (merges add counts
    // without a cap); one near f64::MAX merged with itself would make the
    // count infinite, which no restore accepts. The merge refuses instead
    // (found by the state_decode fuzz target).
    let mut m = ModelMoments::new(2).unwrap();
    line_rows(&mut m, 1.0);
    let mut b = m.save_to_vec();
    // Rows are the third f64 of the model payload (docs/state-format.md).
    let at = plumbfit::state::HEADER_LEN + 16;
    b[at..at + 8].copy_from_slice(&1.5e308f64.to_le_bytes());
    let body = b.len() - 4;
    let crc = plumbfit::state::crc32(&b[..body]);
    b[body..].copy_from_slice(&crc.to_le_bytes());
    let mut big = ModelMoments::restore(&b).unwrap();
    let copy = big.clone();
    assert_eq!(big.merge(&copy), Err(ModelError::Overflow));
    assert_eq!(big.save_to_vec(), b, "a refused merge changed the state");
    // The same count merged with a small state still fits.
    assert_eq!(big.merge(&m), Ok(()));
    assert!(ModelMoments::restore(&big.save_to_vec()).is_ok());
}
