//! Public behaviour of the model accumulator: rank errors, merge and
//! forgetting consistency, bad input leaving the state unchanged, and the
//! inference helpers.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests stop loudly
#![allow(clippy::needless_range_loop)] // indices pair each coefficient with its reference

use plumbfit::model::{
    poly_fit, storage_len, InterceptMode, ModelCore, ModelError, ModelFitOptions, ModelMoments,
    MAX_PARAMS,
};

/// Relative agreement expected between two double-double computations of
/// the same fit on a well-conditioned design (condition < 1e3): both are
/// accurate to ~1e-30 before rounding to double, so they agree to a few
/// ulps of the double result.
const REL_DD: f64 = 1e-14;

fn close(a: f64, b: f64, rel: f64) -> bool {
    (a - b).abs() <= rel * a.abs().max(b.abs()).max(1e-300)
}

fn bits(s: &[f64]) -> Vec<u64> {
    s.iter().map(|v| v.to_bits()).collect()
}

/// Small deterministic design: y = 1 + 2 x1 − 0.5 x2 + noise.
fn design(n: usize) -> (Vec<f64>, Vec<f64>) {
    let mut rows = Vec::new();
    let mut ys = Vec::new();
    for i in 0..n {
        let x1 = i as f64 * 0.37 + 1.0;
        let x2 = ((i * 7919) % 23) as f64 - 11.0;
        let noise = (((i * 104729) % 17) as f64 - 8.0) * 0.01;
        rows.extend_from_slice(&[1.0, x1, x2]);
        ys.push(1.0 + 2.0 * x1 - 0.5 * x2 + noise);
    }
    (rows, ys)
}

#[test]
fn duplicated_column_is_rank_deficient_naming_the_copy() {
    let mut acc = ModelMoments::new(4).unwrap();
    for i in 0..20 {
        let x = i as f64 * 0.5 - 3.0;
        let z = (i * i % 7) as f64;
        // column 2 duplicates column 1
        acc.push_row(&[1.0, x, x, z], 2.0 + x - z).unwrap();
    }
    assert_eq!(
        acc.fit(&ModelFitOptions::default()),
        Err(ModelError::RankDeficient { column: 2 })
    );
    assert_eq!(ModelError::RankDeficient { column: 2 }.code(), 120);
}

#[test]
fn scaled_copy_and_combination_are_rank_deficient_in_large_samples() {
    // 20 000 rows through the block path: accumulated double-double
    // rounding must stay far below the rank tolerance.
    let n = 20_000;
    let mut rows = Vec::new();
    let mut ys = Vec::new();
    for i in 0..n {
        let a = (i % 101) as f64 * 1e3 + 0.25;
        let b = ((i * 31) % 53) as f64 - 26.0;
        rows.extend_from_slice(&[1.0, a, b, 3.0 * a - 7.0 * b + 2.0]);
        ys.push(a + b);
    }
    let mut acc = ModelMoments::new(4).unwrap();
    acc.extend_rows(&rows, &ys).unwrap();
    assert_eq!(
        acc.fit(&ModelFitOptions::default()),
        Err(ModelError::RankDeficient { column: 3 })
    );
}

#[test]
fn too_few_rows_is_reported() {
    let mut acc = ModelMoments::new(3).unwrap();
    acc.push_row(&[1.0, 2.0, 3.0], 1.0).unwrap();
    acc.push_row(&[1.0, 3.0, 5.0], 2.0).unwrap();
    assert_eq!(
        acc.fit(&ModelFitOptions::default()),
        Err(ModelError::TooFewRows { needed: 4, have: 2 })
    );
}

#[test]
fn block_row_and_merge_paths_agree() {
    let (rows, ys) = design(500);
    let mut by_row = ModelMoments::new(3).unwrap();
    for (r, y) in rows.chunks_exact(3).zip(&ys) {
        by_row.push_row(r, *y).unwrap();
    }
    let mut by_block = ModelMoments::new(3).unwrap();
    by_block.extend_rows(&rows, &ys).unwrap();
    let mut merged = ModelMoments::new(3).unwrap();
    let mut other = ModelMoments::new(3).unwrap();
    merged.extend_rows(&rows[..3 * 123], &ys[..123]).unwrap();
    other.extend_rows(&rows[3 * 123..], &ys[123..]).unwrap();
    merged.merge(&other).unwrap();
    let opts = ModelFitOptions::default();
    let (a, b, c) = (
        by_row.fit(&opts).unwrap(),
        by_block.fit(&opts).unwrap(),
        merged.fit(&opts).unwrap(),
    );
    assert_eq!(a.rows, 500);
    assert_eq!(b.rows, 500);
    assert_eq!(c.rows, 500);
    for j in 0..3 {
        assert!(
            close(a.coefficients[j], b.coefficients[j], REL_DD),
            "coef {j}"
        );
        assert!(
            close(a.coefficients[j], c.coefficients[j], REL_DD),
            "coef {j}"
        );
        assert!(close(a.std_errors[j], c.std_errors[j], REL_DD), "se {j}");
    }
    assert!(close(a.sse, b.sse, REL_DD) && close(a.sse, c.sse, REL_DD));
    // The fit recovers the generating coefficients to the noise level.
    assert!((a.coefficients[1] - 2.0).abs() < 0.01);
    assert!(a.has_intercept);
}

#[test]
fn caller_storage_and_owned_types_are_the_same_state() {
    let (rows, ys) = design(100);
    let mut owned = ModelMoments::new(3).unwrap();
    owned.extend_rows(&rows, &ys).unwrap();
    let mut buf = vec![0.0; storage_len(3) + 5];
    let mut core = ModelCore::new_in(&mut buf, 3).unwrap();
    core.extend_rows(&rows, &ys).unwrap();
    // Same code path on the same input: identical bits.
    assert_eq!(bits(core.storage()), bits(owned.storage()));
    // Round trip through the flat layout.
    let saved = owned.storage().to_vec();
    let restored = ModelMoments::from_storage(saved).unwrap();
    assert_eq!(restored, owned);
    let mut copy = buf.clone();
    let attached = ModelCore::attach(&mut copy).unwrap();
    assert_eq!(attached.count(), 100);
    assert_eq!(attached.params(), 3);
}

#[test]
fn storage_problems_are_rejected() {
    let mut small = vec![0.0; storage_len(3) - 1];
    assert_eq!(
        ModelCore::new_in(&mut small, 3).err(),
        Some(ModelError::StorageTooSmall {
            needed: storage_len(3),
            have: storage_len(3) - 1
        })
    );
    let mut junk = vec![0.0; 40];
    assert_eq!(
        ModelCore::attach(&mut junk).err(),
        Some(ModelError::InvalidStorage)
    );
    assert_eq!(
        ModelMoments::new(0).err(),
        Some(ModelError::InvalidParamCount { p: 0 })
    );
    assert_eq!(
        ModelMoments::new(MAX_PARAMS + 1).err(),
        Some(ModelError::InvalidParamCount { p: MAX_PARAMS + 1 })
    );
    assert!(ModelMoments::new(MAX_PARAMS).is_ok());
}

#[test]
fn bad_input_is_rejected_and_state_is_bit_for_bit_unchanged() {
    let (rows, ys) = design(80);
    let mut acc = ModelMoments::new(3).unwrap();
    acc.extend_rows(&rows, &ys).unwrap();
    let before = bits(acc.storage());
    let snapshot = acc.clone();

    assert_eq!(
        acc.push_row(&[1.0, f64::NAN, 0.0], 1.0),
        Err(ModelError::NonFinite { row: 0, column: 1 })
    );
    assert_eq!(
        acc.push_row(&[1.0, 2.0, 0.0], f64::INFINITY),
        Err(ModelError::NonFinite { row: 0, column: 3 })
    );
    assert_eq!(
        acc.push_row_weighted(&[1.0, 2.0, 0.0], 1.0, 0.0),
        Err(ModelError::InvalidWeight { row: 0 })
    );
    assert_eq!(
        acc.push_row_weighted(&[1.0, 2.0, 0.0], 1.0, -1.0),
        Err(ModelError::InvalidWeight { row: 0 })
    );
    assert_eq!(
        acc.push_row_weighted(&[1.0, 2.0, 0.0], 1.0, f64::NAN),
        Err(ModelError::InvalidWeight { row: 0 })
    );
    assert_eq!(
        acc.push_row(&[1.0, 2.0], 1.0),
        Err(ModelError::DimensionMismatch {
            expected: 3,
            found: 2
        })
    );

    // A long block (block path) whose row 150 is bad: nothing is added.
    let (mut rows2, ys2) = design(200);
    rows2[150 * 3 + 2] = f64::NEG_INFINITY;
    assert_eq!(
        acc.extend_rows(&rows2, &ys2),
        Err(ModelError::NonFinite {
            row: 150,
            column: 2
        })
    );
    let (rows3, mut ys3) = design(10);
    ys3[7] = f64::NAN;
    assert_eq!(
        acc.extend_rows(&rows3, &ys3),
        Err(ModelError::NonFinite { row: 7, column: 3 })
    );
    let mut ws = vec![1.0; 10];
    ws[4] = 0.0;
    let (rows4, ys4) = design(10);
    assert_eq!(
        acc.extend_rows_weighted(&rows4, &ys4, &ws),
        Err(ModelError::InvalidWeight { row: 4 })
    );
    assert_eq!(
        acc.extend_rows(&rows4[..29], &ys4),
        Err(ModelError::DimensionMismatch {
            expected: 30,
            found: 29
        })
    );
    assert_eq!(
        acc.forget(0.0),
        Err(ModelError::InvalidForgetting {
            bits: 0.0f64.to_bits()
        })
    );
    assert!(matches!(
        acc.forget(1.5),
        Err(ModelError::InvalidForgetting { .. })
    ));
    assert!(matches!(
        acc.forget(f64::NAN),
        Err(ModelError::InvalidForgetting { .. })
    ));
    let other = ModelMoments::new(2).unwrap();
    assert_eq!(
        acc.merge(&other),
        Err(ModelError::DimensionMismatch {
            expected: 3,
            found: 2
        })
    );

    // Values whose squares overflow: rejected as overflow, state kept.
    assert_eq!(
        acc.push_row(&[1.0, 1e200, 0.0], 1.0),
        Err(ModelError::Overflow)
    );
    assert_eq!(
        acc.extend_rows(&[1.0, 1e200, 0.0], &[1.0]),
        Err(ModelError::Overflow)
    );

    assert_eq!(bits(acc.storage()), before);
    assert_eq!(acc, snapshot);
}

#[test]
fn forgetting_equals_explicit_geometric_weights() {
    // forget(λ) before each row == weights λ^(n−1−i) on the same rows.
    let (rows, ys) = design(60);
    let lambda = 0.9;
    let mut forgetful = ModelMoments::new(3).unwrap();
    for (r, y) in rows.chunks_exact(3).zip(&ys) {
        forgetful.forget(lambda).unwrap();
        forgetful.push_row(r, *y).unwrap();
    }
    let n = ys.len();
    let ws: Vec<f64> = (0..n).map(|i| lambda.powi((n - 1 - i) as i32)).collect();
    let mut weighted = ModelMoments::new(3).unwrap();
    weighted.extend_rows_weighted(&rows, &ys, &ws).unwrap();
    let opts = ModelFitOptions::default();
    let (a, b) = (forgetful.fit(&opts).unwrap(), weighted.fit(&opts).unwrap());
    assert!(a.forgetting_applied && !b.forgetting_applied);
    for j in 0..3 {
        // powi and the repeated products round differently (~n ulps).
        assert!(
            close(a.coefficients[j], b.coefficients[j], 1e-12),
            "coef {j}"
        );
        assert!(close(a.std_errors[j], b.std_errors[j], 1e-12), "se {j}");
    }
    assert!(close(a.sse, b.sse, 1e-12));
    assert!(close(a.weight_sum, b.weight_sum, 1e-12));
    // λ = 1 is accepted and changes nothing.
    let before = bits(weighted.storage());
    weighted.forget(1.0).unwrap();
    assert_eq!(bits(weighted.storage()), before);
}

#[test]
fn weighted_row_equals_repeated_row() {
    let (rows, ys) = design(30);
    let mut rep = ModelMoments::new(3).unwrap();
    let mut wtd = ModelMoments::new(3).unwrap();
    for (i, (r, y)) in rows.chunks_exact(3).zip(&ys).enumerate() {
        let k = 1 + i % 3;
        for _ in 0..k {
            rep.push_row(r, *y).unwrap();
        }
        wtd.push_row_weighted(r, *y, k as f64).unwrap();
    }
    let opts = ModelFitOptions::default();
    let (a, b) = (rep.fit(&opts).unwrap(), wtd.fit(&opts).unwrap());
    for j in 0..3 {
        assert!(
            close(a.coefficients[j], b.coefficients[j], REL_DD),
            "coef {j}"
        );
    }
    assert!(close(a.sse, b.sse, REL_DD));
}

#[test]
fn straight_line_inference_matches_closed_form() {
    // y = a + b x; closed forms from centred sums (exactly representable
    // data, so the reference values are accurate to rounding).
    let xs = [1.0, 2.0, 3.0, 4.0, 5.0, 6.0];
    let ys = [2.1, 3.9, 6.2, 7.8, 10.1, 12.2];
    let n = xs.len() as f64;
    let xb = xs.iter().sum::<f64>() / n;
    let yb = ys.iter().sum::<f64>() / n;
    let sxx: f64 = xs.iter().map(|x| (x - xb) * (x - xb)).sum();
    let sxy: f64 = xs.iter().zip(&ys).map(|(x, y)| (x - xb) * (y - yb)).sum();
    let syy: f64 = ys.iter().map(|y| (y - yb) * (y - yb)).sum();
    let b = sxy / sxx;
    let a = yb - b * xb;
    let sse = syy - b * sxy;
    let s2 = sse / (n - 2.0);
    let fit = poly_fit(&xs, &ys, 1).unwrap();
    // Reference computed in double from 6 points: ~1e-14 relative.
    let tol = 1e-12;
    assert!(close(fit.coefficients[1], b, tol));
    assert!(close(fit.coefficients[0], a, tol));
    assert!(close(fit.sse, sse, 1e-10)); // sse cancels ~3 digits in the reference
    assert!(close(fit.std_errors[1], (s2 / sxx).sqrt(), 1e-10));
    assert!(close(fit.r_squared.unwrap(), b * sxy / syy, 1e-12));
    assert_eq!((fit.df_model, fit.df_resid), (1, 4));
    let f = (b * sxy) / s2;
    assert!(close(fit.f_stat.unwrap(), f, 1e-10));

    // Leverage h = 1/n + (x−x̄)²/Sxx; intervals use s·√h and s·√(h + 1/m).
    let x0 = 4.5;
    let h = 1.0 / n + (x0 - xb) * (x0 - xb) / sxx;
    assert!(close(fit.leverage(&[1.0, x0]).unwrap(), h, 1e-13));
    let t975_4 = 2.776_445_105_197_8; // Student t, 4 df, 0.975 quantile
    let mr = fit.mean_response(&[1.0, x0], 0.95).unwrap();
    assert!(close(mr.estimate, a + b * x0, 1e-13));
    assert!(close(mr.std_error, (s2 * h).sqrt(), 1e-10));
    // statrs' t quantile is accurate to ~1e-9 relative.
    assert!(close(mr.upper - mr.estimate, t975_4 * mr.std_error, 1e-8));
    let pr = fit.prediction(&[1.0, x0], 2, 0.95).unwrap();
    assert!(close(pr.std_error, (s2 * (h + 0.5)).sqrt(), 1e-10));
    let ci = fit.coef_intervals(0.95).unwrap();
    assert!(close(ci[1].lower, b - t975_4 * fit.std_errors[1], 1e-8));
    let t = fit.t_statistics().unwrap();
    assert!(close(t[1], b / fit.std_errors[1], 1e-13));
    let pv = fit.p_values().unwrap();
    assert!(pv[1] > 0.0 && pv[1] < 1e-5, "slope p value {}", pv[1]);
    assert!(fit.f_p_value().unwrap() < 1e-5);
    assert!(matches!(
        fit.coef_intervals(1.0),
        Err(ModelError::InvalidLevel { .. })
    ));
    assert!(matches!(
        fit.mean_response(&[1.0, 1.0], 0.0),
        Err(ModelError::InvalidLevel { .. })
    ));
    assert_eq!(
        fit.prediction(&[1.0, 1.0], 0, 0.9),
        Err(ModelError::InvalidReplicates)
    );
    assert_eq!(
        fit.leverage(&[1.0]),
        Err(ModelError::DimensionMismatch {
            expected: 2,
            found: 1
        })
    );
    assert!(fit.condition_estimate >= 1.0 && fit.condition_estimate < 100.0);
}

#[test]
fn intercept_mode_controls_r_squared() {
    let (rows, ys) = design(40);
    let mut acc = ModelMoments::new(3).unwrap();
    acc.extend_rows(&rows, &ys).unwrap();
    let det = acc.fit(&ModelFitOptions::default()).unwrap();
    let with = acc
        .fit(&ModelFitOptions::with_intercept(InterceptMode::Column0))
        .unwrap();
    let without = acc
        .fit(&ModelFitOptions::with_intercept(InterceptMode::None))
        .unwrap();
    assert!(det.has_intercept && with.has_intercept && !without.has_intercept);
    assert_eq!(det, with);
    assert_eq!((with.df_model, without.df_model), (2, 3));
    // Uncentred R² counts the mean as explained, so it is larger here.
    assert!(without.r_squared.unwrap() > with.r_squared.unwrap());
    assert_eq!(with.coefficients, without.coefficients);
    // Detection: a varying column 0 is not an intercept.
    let mut acc2 = ModelMoments::new(1).unwrap();
    for i in 1..6 {
        acc2.push_row(&[i as f64], 2.0 * i as f64 + 0.1).unwrap();
    }
    assert!(!acc2.fit(&ModelFitOptions::default()).unwrap().has_intercept);
}

#[test]
fn exact_fit_reports_infinite_f_and_zero_errors() {
    let xs: Vec<f64> = (0..10).map(f64::from).collect();
    let ys: Vec<f64> = xs.iter().map(|x| 3.0 - 2.0 * x + 0.5 * x * x).collect();
    let fit = poly_fit(&xs, &ys, 2).unwrap();
    assert!(fit.exact_fit);
    assert_eq!(fit.f_stat, Some(f64::INFINITY));
    assert_eq!(fit.f_p_value(), Some(0.0));
    assert_eq!(fit.sse, 0.0);
    assert_eq!(fit.std_errors, vec![0.0; 3]);
    assert_eq!(fit.t_statistics(), None);
    assert_eq!(fit.r_squared, Some(1.0));
    assert!(close(fit.coefficients[2], 0.5, 1e-15));
}

#[test]
fn error_codes_and_messages_are_stable() {
    let all = [
        (ModelError::NonFinite { row: 1, column: 2 }, 20),
        (ModelError::InvalidWeight { row: 1 }, 21),
        (
            ModelError::DimensionMismatch {
                expected: 1,
                found: 2,
            },
            22,
        ),
        (ModelError::InvalidParamCount { p: 0 }, 23),
        (ModelError::InvalidForgetting { bits: 0 }, 24),
        (ModelError::InvalidLevel { bits: 0 }, 25),
        (ModelError::InvalidReplicates, 26),
        (ModelError::StorageTooSmall { needed: 2, have: 1 }, 27),
        (ModelError::InvalidStorage, 28),
        (ModelError::RankDeficient { column: 1 }, 120),
        (ModelError::TooFewRows { needed: 2, have: 1 }, 121),
        (ModelError::Overflow, 122),
    ];
    for (e, code) in all {
        assert_eq!(e.code(), code, "{e:?}");
        let msg = e.to_string();
        assert!(
            !msg.ends_with('.') && msg.chars().next().unwrap().is_lowercase(),
            "{msg}"
        );
    }
    fn traits<T: Send + Sync + 'static + std::error::Error>() {}
    traits::<ModelError>();
}

#[test]
fn power_rows_block_and_single_agree_and_reject_bad_input() {
    // 1000 rows (lane path) of a cubic in x ∈ [2, 12): block vs row by row.
    let xs: Vec<f64> = (0..1000).map(|i| 2.0 + i as f64 * 0.01).collect();
    let ys: Vec<f64> = xs
        .iter()
        .enumerate()
        .map(|(i, x)| 1.0 - 0.5 * x + 0.25 * x * x * x + ((i * 37) % 11) as f64 * 1e-3)
        .collect();
    let mut block = ModelMoments::new(4).unwrap();
    block.extend_powers(&xs, &ys).unwrap();
    let mut single = ModelMoments::new(4).unwrap();
    for (x, y) in xs.iter().zip(&ys) {
        single.push_powers(*x, *y, 1.0).unwrap();
    }
    let opts = ModelFitOptions::default();
    let (a, b) = (block.fit(&opts).unwrap(), single.fit(&opts).unwrap());
    assert!(a.has_intercept);
    for j in 0..4 {
        // Condition of this cubic design is ~1e4: agreement to ~1e-12.
        assert!(
            close(a.coefficients[j], b.coefficients[j], 1e-12),
            "coef {j}"
        );
    }
    let via_helper = poly_fit(&xs, &ys, 3).unwrap();
    assert_eq!(via_helper.coefficients, a.coefficients);

    let before = bits(block.storage());
    let mut bad = xs.clone();
    bad[700] = f64::NAN;
    assert_eq!(
        block.extend_powers(&bad, &ys),
        Err(ModelError::NonFinite {
            row: 700,
            column: 0
        })
    );
    assert_eq!(
        block.extend_powers_weighted(&xs, &ys, &vec![-1.0; xs.len()]),
        Err(ModelError::InvalidWeight { row: 0 })
    );
    assert_eq!(
        block.extend_powers(&xs[..10], &ys),
        Err(ModelError::DimensionMismatch {
            expected: 1000,
            found: 10
        })
    );
    assert_eq!(
        block.push_powers(1.0, f64::NAN, 1.0),
        Err(ModelError::NonFinite { row: 0, column: 1 })
    );
    assert_eq!(
        poly_fit(&xs, &ys, MAX_PARAMS),
        Err(ModelError::InvalidParamCount { p: MAX_PARAMS + 1 })
    );
    assert_eq!(bits(block.storage()), before);
}

#[test]
fn merging_an_empty_accumulator_changes_nothing() {
    let (rows, ys) = design(50);
    let mut acc = ModelMoments::new(3).unwrap();
    acc.extend_rows(&rows, &ys).unwrap();
    let before = bits(acc.storage());
    acc.merge(&ModelMoments::new(3).unwrap()).unwrap();
    // Empty rows of the other factor are skipped and adding a zero residual
    // sum is exact, so the state keeps every bit.
    assert_eq!(bits(acc.storage()), before);
    let mut buf = vec![0.0; storage_len(3)];
    let empty = ModelCore::new_in(&mut buf, 3).unwrap();
    let mut buf2 = acc.storage().to_vec();
    let mut core = ModelCore::attach(&mut buf2).unwrap();
    core.merge(&empty).unwrap();
    assert_eq!(bits(core.storage()), before);
}

#[test]
fn forgetting_then_merging_equals_weighted_rows() {
    // A (old rows) forgotten by λ, then merged with B (new rows), equals one
    // accumulator with A's rows at weight λ and B's at weight 1.
    let (rows, ys) = design(120);
    let lambda = 0.25;
    let (ra, rb) = rows.split_at(3 * 70);
    let (ya, yb) = ys.split_at(70);
    let mut a = ModelMoments::new(3).unwrap();
    a.extend_rows(ra, ya).unwrap();
    a.forget(lambda).unwrap();
    let mut b = ModelMoments::new(3).unwrap();
    b.extend_rows(rb, yb).unwrap();
    a.merge(&b).unwrap();
    let mut ws = vec![lambda; 70];
    ws.extend(std::iter::repeat_n(1.0, 50));
    let mut direct = ModelMoments::new(3).unwrap();
    direct.extend_rows_weighted(&rows, &ys, &ws).unwrap();
    let opts = ModelFitOptions::default();
    let (f, g) = (a.fit(&opts).unwrap(), direct.fit(&opts).unwrap());
    assert!(f.forgetting_applied);
    for j in 0..3 {
        assert!(
            close(f.coefficients[j], g.coefficients[j], REL_DD),
            "coef {j}: {} vs {}",
            f.coefficients[j],
            g.coefficients[j]
        );
        assert!(close(f.std_errors[j], g.std_errors[j], REL_DD), "se {j}");
    }
    assert!(close(f.sse, g.sse, REL_DD));
    // λ is a power of two, so the weight sums agree exactly.
    assert_eq!(f.weight_sum, g.weight_sum);
    assert_eq!(f.rows, 120);
}

#[test]
fn collinear_first_rows_do_not_spoil_the_factor() {
    // Regression: rows 70..72 of this design are exactly collinear in
    // binary, so the third factor row starts as pure rounding noise; the
    // next rotation used to cancel that noise against itself and lost five
    // digits in a merge of rows 0..70 with 70..120. Reference: exact
    // rational least squares of the same doubles.
    let (rows, ys) = design(120);
    let exact = [
        0.995_246_034_506_903_7,
        2.000_178_170_642_541,
        -0.499_800_522_325_231_37,
    ];
    let exact_sse = 0.291_104_706_387_558;
    let mut a = ModelMoments::new(3).unwrap();
    for (r, y) in rows[..210].chunks_exact(3).zip(&ys[..70]) {
        a.push_row(r, *y).unwrap();
    }
    let mut b = ModelMoments::new(3).unwrap();
    for (r, y) in rows[210..].chunks_exact(3).zip(&ys[70..]) {
        b.push_row(r, *y).unwrap();
    }
    a.merge(&b).unwrap();
    let fit = a.fit(&ModelFitOptions::default()).unwrap();
    for j in 0..3 {
        // Condition ~1e2, ~30-digit factor: a few ulps of the double result.
        assert!(
            close(fit.coefficients[j], exact[j], REL_DD),
            "coef {j}: {}",
            fit.coefficients[j]
        );
    }
    assert!(close(fit.sse, exact_sse, REL_DD), "sse {}", fit.sse);
}

#[test]
fn forgetting_into_underflow_is_refused_and_keeps_the_state() {
    // Same rule as the line accumulator: a forgetting that would underflow
    // the weights to zero is refused (the history would vanish silently).
    let mut acc = ModelMoments::new(2).unwrap();
    for i in 0..10 {
        let x = i as f64;
        acc.push_row(&[1.0, x], 1.0 + 2.0 * x).unwrap();
    }
    acc.forget(1e-300).unwrap();
    let before = acc.save_to_vec();
    assert_eq!(acc.forget(1e-300), Err(ModelError::Overflow));
    assert_eq!(ModelError::Overflow.code(), 122); // DEVELOPERS.md: 122
    assert_eq!(acc.save_to_vec(), before);
    // A factor that keeps the weights representable is still taken.
    acc.forget(0.5).unwrap();
}
