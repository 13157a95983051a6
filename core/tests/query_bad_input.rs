//! Bad-input matrix, second half (the first is `state_bad_input.rs`): the
//! replicate-level stores (heap and fixed), the model accumulator in caller
//! storage, huge magnitudes (1e300) in every model update and merge, and
//! the queries on fitted lines and models (levels, replicate counts, NaN,
//! ±∞ and overflowing x). Each bad call returns its typed error with the
//! stable code of DEVELOPERS.md and leaves its object bit for bit as it
//! was. The data are invented.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)]

use plumbfit::calib::{FixedLevels, LevelSet, Reading, SigmaSource};
use plumbfit::diag::{anderson_darling, shapiro_wilk};
use plumbfit::model::{poly_fit, storage_len, InterceptMode, ModelCore, ModelFitOptions};
use plumbfit::model::{ModelError, ModelMoments, MAX_PARAMS};
use plumbfit::{CalibError, FitOptions, Lean, LineError, PairMoments};

const NAN: f64 = f64::NAN;
const INF: f64 = f64::INFINITY;

const XS: [f64; 10] = [0.0, 0.0, 1.0, 1.0, 2.0, 2.0, 3.0, 3.0, 4.0, 4.0];
const YS: [f64; 10] = [0.11, 0.09, 2.05, 1.98, 4.12, 3.93, 6.02, 6.10, 8.21, 7.95];

// ---------------------------------------------------------------------------
// Level stores.

/// The operations both stores share, so one table drives both.
trait Store: Clone + PartialEq + core::fmt::Debug {
    fn empty() -> Self;
    fn push_w(&mut self, x: f64, y: f64, w: f64) -> Result<(), CalibError>;
    fn ext(&mut self, xs: &[f64], ys: &[f64]) -> Result<(), CalibError>;
    fn ext_w(&mut self, xs: &[f64], ys: &[f64], ws: &[f64]) -> Result<(), CalibError>;
    fn merge_in(&mut self, other: &Self) -> Result<(), CalibError>;
    const FIXED: bool;
}

macro_rules! store_impl {
    ($t:ty, $fixed:expr) => {
        impl Store for $t {
            fn empty() -> Self {
                <$t>::new()
            }
            fn push_w(&mut self, x: f64, y: f64, w: f64) -> Result<(), CalibError> {
                self.push_weighted(x, y, w)
            }
            fn ext(&mut self, xs: &[f64], ys: &[f64]) -> Result<(), CalibError> {
                self.extend(xs, ys)
            }
            fn ext_w(&mut self, xs: &[f64], ys: &[f64], ws: &[f64]) -> Result<(), CalibError> {
                self.extend_weighted(xs, ys, ws)
            }
            fn merge_in(&mut self, other: &Self) -> Result<(), CalibError> {
                self.merge(other)
            }
            const FIXED: bool = $fixed;
        }
    };
}
store_impl!(LevelSet, false);
store_impl!(FixedLevels<32>, true);

fn store_states<S: Store>() -> Vec<(&'static str, S)> {
    let mut few = S::empty();
    few.ext(&XS[..4], &YS[..4]).unwrap();
    let mut many = S::empty();
    many.ext(&XS, &YS).unwrap();
    let mut full = S::empty();
    for i in 0..32 {
        full.push_w(0.5 * i as f64, 1.0 + i as f64, 1.0).unwrap();
        full.push_w(0.5 * i as f64, 1.1 + i as f64, 2.0).unwrap();
    }
    vec![
        ("empty", S::empty()),
        ("few", few),
        ("many", many),
        ("32 levels", full),
    ]
}

type StoreOp<S> = fn(&mut S) -> Result<(), CalibError>;

fn store_cases<S: Store>() -> Vec<(&'static str, StoreOp<S>, u16)> {
    vec![
        ("push nan x", |s| s.push_w(NAN, 1.0, 1.0), 1),
        ("push nan y", |s| s.push_w(1.0, NAN, 1.0), 1),
        ("push -inf x", |s| s.push_w(-INF, 1.0, 1.0), 1),
        ("push inf y", |s| s.push_w(1.0, INF, 1.0), 1),
        ("weight 0", |s| s.push_w(1.0, 1.0, 0.0), 2),
        ("weight -0", |s| s.push_w(1.0, 1.0, -0.0), 2),
        ("weight -3", |s| s.push_w(1.0, 1.0, -3.0), 2),
        ("weight nan", |s| s.push_w(1.0, 1.0, NAN), 2),
        ("weight inf", |s| s.push_w(1.0, 1.0, INF), 2),
        ("extend lengths differ", |s| s.ext(&XS, &YS[..9]), 3),
        ("extend weights short", |s| s.ext_w(&XS, &YS, &[1.0; 3]), 3),
        (
            "extend nan y at 2",
            |s| s.ext(&XS[..3], &[1.0, 2.0, NAN]),
            1,
        ),
        (
            "extend weight 0 at 1",
            |s| s.ext_w(&XS[..3], &YS[..3], &[1.0, 0.0, 1.0]),
            2,
        ),
        (
            // A level holding readings of ±1e300: its sum of squared
            // deviations overflows.
            "readings +-1e300 at one level",
            |s| s.ext(&[1.0, 1.0], &[1e300, -1e300]),
            100,
        ),
    ]
}

fn run_store_matrix<S: Store>() -> usize {
    let mut tried = 0;
    let far = {
        let mut f = S::empty();
        f.push_w(1.0, 1e300, 1.0).unwrap();
        f
    };
    let mut distinct = S::empty();
    for i in 0..32 {
        distinct.push_w(100.0 + i as f64, 1.0, 1.0).unwrap();
    }
    for (sname, s) in store_states::<S>() {
        let mut cases = store_cases::<S>();
        if S::FIXED {
            cases.push((
                "40 new levels",
                |s| {
                    let xs: Vec<f64> = (0..40).map(|i| 500.0 + i as f64).collect();
                    s.ext(&xs, &[1.0; 40])
                },
                34,
            ));
        }
        for (cname, op, code) in cases {
            let mut a = s.clone();
            let err = op(&mut a).expect_err(&format!("{sname} / {cname}: accepted"));
            assert_eq!(err.code(), code, "{sname} / {cname}: {err:?}");
            assert_eq!(a, s, "{sname} / {cname}: store changed");
            tried += 1;
        }
        // Merges: a reading 1e300 away into a level with readings near 1,
        // and (fixed store) more levels than fit.
        if sname == "few" || sname == "many" {
            let mut a = s.clone();
            assert_eq!(a.merge_in(&far).unwrap_err().code(), 100, "{sname}: far");
            assert_eq!(a, s, "{sname}: far merge changed the store");
            tried += 1;
            let mut a = s.clone();
            assert_eq!(a.push_w(1.0, 1e300, 1.0).unwrap_err().code(), 100);
            assert_eq!(a, s, "{sname}: far push changed the store");
            tried += 1;
        }
        if S::FIXED && sname != "empty" {
            let mut a = s.clone();
            assert_eq!(a.merge_in(&distinct).unwrap_err().code(), 34, "{sname}");
            assert_eq!(a, s, "{sname}: full merge changed the store");
            tried += 1;
        }
        // An empty block adds nothing (documented: not an error here).
        let mut a = s.clone();
        a.ext(&[], &[]).unwrap();
        assert_eq!(a, s);
    }
    tried
}

#[test]
fn level_set_bad_input_matrix() {
    assert_eq!(run_store_matrix::<LevelSet>(), 4 * 14 + 2 * 2);
}

#[test]
fn fixed_levels_bad_input_matrix() {
    assert_eq!(run_store_matrix::<FixedLevels<32>>(), 4 * 15 + 2 * 2 + 3);
}

// ---------------------------------------------------------------------------
// Model accumulator: huge magnitudes, caller storage.

type MomentsOp = fn(&mut ModelMoments) -> Result<(), ModelError>;
type CoreOp = fn(&mut ModelCore<'_>) -> Result<(), ModelError>;

fn model_many() -> ModelMoments {
    let mut m = ModelMoments::new(3).unwrap();
    for i in 0..20 {
        let x = i as f64 * 0.3;
        m.push_powers(x, 0.5 * x * x - x + 2.0 + 0.01 * (7.0 * x).sin(), 1.0)
            .unwrap();
    }
    m
}

/// A valid state far from the origin: rows near 1e150, squares near 1e300.
fn model_far() -> ModelMoments {
    let mut m = ModelMoments::new(3).unwrap();
    for i in 0..5 {
        let i = i as f64;
        m.push_row(
            &[1.0, 1e150 * (1.0 + 0.1 * i), 1e150 * (1.0 + 0.05 * i * i)],
            1e153,
        )
        .unwrap();
    }
    m
}

#[test]
fn model_huge_magnitudes_overflow_and_change_nothing() {
    let far = model_far();
    let mut small = ModelMoments::new(3).unwrap();
    small.push_row(&[1.0, 2.0, 4.0], 1.0).unwrap();
    small.push_row(&[1.0, 3.0, 9.0], 2.0).unwrap();
    for (sname, s) in [
        ("empty", ModelMoments::new(3).unwrap()),
        ("two rows", small),
        ("twenty rows", model_many()),
    ] {
        let cases: Vec<(&str, MomentsOp)> = vec![
            ("powers x 1e300", |m| m.push_powers(1e300, 1.0, 1.0)),
            ("powers y 1e300", |m| m.push_powers(1.0, 1e300, 1.0)),
            ("powers x -1e300 weighted", |m| {
                m.push_powers(-1e300, 1.0, 2.0)
            }),
            ("extend_powers x 1e300 at 1", |m| {
                m.extend_powers(&[1.0, 1e300], &[1.0, 2.0])
            }),
            ("block row 1 of 1e300", |m| {
                m.extend_rows(&[1.0, 2.0, 4.0, 1.0, 1e300, -1e300], &[1.0, 2.0])
            }),
            ("weighted block row 1 of 1e300", |m| {
                m.extend_rows_weighted(
                    &[1.0, 2.0, 4.0, 1.0, 1e300, 1e300],
                    &[1.0, 2.0],
                    &[1.0, 3.0],
                )
            }),
        ];
        for (cname, op) in cases {
            let mut a = s.clone();
            let before = a.save_to_vec();
            let err = op(&mut a).expect_err(&format!("{sname} / {cname}: accepted"));
            assert_eq!(err.code(), 122, "{sname} / {cname}: {err:?}");
            assert_eq!(a.save_to_vec(), before, "{sname} / {cname}: state changed");
        }
        if sname == "twenty rows" {
            let mut a = s.clone();
            let before = a.save_to_vec();
            assert_eq!(a.merge(&far).unwrap_err().code(), 122, "merge far");
            assert_eq!(a.save_to_vec(), before, "merge far changed the state");
        }
    }
}

#[test]
fn model_empty_blocks_are_refused() {
    // Code 4 (DEVELOPERS.md: empty input), as for the line accumulator.
    for s in [ModelMoments::new(3).unwrap(), model_many()] {
        let mut a = s.clone();
        let before = a.save_to_vec();
        assert_eq!(a.extend_rows(&[], &[]).unwrap_err().code(), 4);
        assert_eq!(a.extend_rows_weighted(&[], &[], &[]).unwrap_err().code(), 4);
        assert_eq!(a.extend_powers(&[], &[]).unwrap_err().code(), 4);
        assert_eq!(a.save_to_vec(), before);
    }
    assert_eq!(poly_fit(&[], &[], 2).unwrap_err().code(), 4);
}

#[test]
fn model_in_caller_storage_refuses_and_keeps_the_buffer() {
    // The same refusals through ModelCore on a caller buffer: the buffer is
    // compared value by value (bit patterns) before and after.
    let src = model_many();
    let len = storage_len(3);
    let cases: Vec<(&str, CoreOp, u16)> = vec![
        ("row too short", |m| m.push_row(&[1.0, 2.0], 1.0), 22),
        ("row nan", |m| m.push_row(&[1.0, NAN, 1.0], 1.0), 20),
        ("response inf", |m| m.push_row(&[1.0, 2.0, 4.0], INF), 20),
        (
            "weight 0",
            |m| m.push_row_weighted(&[1.0, 2.0, 4.0], 1.0, 0.0),
            21,
        ),
        (
            "weight nan",
            |m| m.push_row_weighted(&[1.0, 2.0, 4.0], 1.0, NAN),
            21,
        ),
        ("powers nan", |m| m.push_powers(NAN, 1.0, 1.0), 20),
        ("powers 1e300", |m| m.push_powers(1e300, 1.0, 1.0), 122),
        (
            "row 1e300",
            |m| m.push_row(&[1.0, 1e300, 1e300], 1e300),
            122,
        ),
        (
            "block mismatch",
            |m| m.extend_rows(&[1.0, 2.0, 4.0, 1.0], &[1.0, 2.0]),
            22,
        ),
        (
            "block nan row 1",
            |m| m.extend_rows(&[1.0, 2.0, 4.0, 1.0, NAN, 9.0], &[1.0, 2.0]),
            20,
        ),
        ("forget 0", |m| m.forget(0.0), 24),
        ("forget -0.5", |m| m.forget(-0.5), 24),
        ("forget 1.5", |m| m.forget(1.5), 24),
        ("forget nan", |m| m.forget(NAN), 24),
        ("forget inf", |m| m.forget(INF), 24),
        (
            "merge bad storage",
            |m| m.merge_storage(&[1.0, 2.0, 3.0]),
            28,
        ),
    ];
    for (cname, op, code) in &cases {
        let mut buf = src.clone().into_storage();
        assert_eq!(buf.len(), len);
        let before: Vec<u64> = buf.iter().map(|v| v.to_bits()).collect();
        {
            let mut core = ModelCore::attach(&mut buf).unwrap();
            let err = op(&mut core).expect_err(&format!("{cname}: accepted"));
            assert_eq!(err.code(), *code, "{cname}: {err:?}");
        }
        let after: Vec<u64> = buf.iter().map(|v| v.to_bits()).collect();
        assert_eq!(after, before, "{cname}: caller buffer changed");
    }
    // Parameter counts outside 1..=MAX_PARAMS in caller storage and in the
    // polynomial helper (degree + 1 coefficients).
    let mut big = vec![0.0; storage_len(MAX_PARAMS) + 8];
    for p in [0, MAX_PARAMS + 1, usize::MAX] {
        let before = big.clone();
        assert_eq!(
            ModelCore::new_in(&mut big, p).unwrap_err().code(),
            23,
            "p = {p}"
        );
        assert_eq!(big, before);
    }
    assert_eq!(poly_fit(&XS, &YS, MAX_PARAMS).unwrap_err().code(), 23);
}

// ---------------------------------------------------------------------------
// Queries on fitted lines and models.

fn line_fit(origin: bool) -> plumbfit::LineFit {
    let mut a = PairMoments::<Lean>::new();
    a.extend(&XS, &YS).unwrap();
    let opts = if origin {
        FitOptions::through_origin()
    } else {
        FitOptions::default()
    };
    a.fit_with(&opts).unwrap()
}

#[test]
fn line_fit_queries_refuse_bad_arguments() {
    // The largest double below 1 is refused too: 0.5 + level/2 rounds to
    // 1, whose quantile is infinite.
    let below_one = 1.0 - f64::EPSILON / 2.0;
    let bad_levels = [0.0, 1.0, -0.5, 1.5, NAN, INF, -INF, below_one];
    for origin in [false, true] {
        let f = line_fit(origin);
        let copy = f;
        for l in bad_levels {
            let want = Err(LineError::InvalidLevel);
            assert_eq!(f.t_critical(l), want, "t_critical({l})");
            assert_eq!(
                f.slope_interval(l).map(|_| ()),
                Err(LineError::InvalidLevel)
            );
            assert_eq!(
                f.intercept_interval(l).map(|_| ()),
                Err(LineError::InvalidLevel)
            );
            assert_eq!(
                f.mean_band(1.0, l).map(|_| ()),
                Err(LineError::InvalidLevel)
            );
            assert_eq!(
                f.prediction(1.0, 1, l).map(|_| ()),
                Err(LineError::InvalidLevel)
            );
        }
        // Non-finite x, and x so far out that the band overflows (its
        // squared distance from the mean is above the double range).
        for x in [NAN, INF, -INF, 1e300, -1e300, 1.7e308] {
            assert_eq!(f.se_mean(x), Err(LineError::NonFinite), "se_mean({x})");
            assert_eq!(f.se_prediction(x, 1), Err(LineError::NonFinite));
            assert_eq!(f.mean_band(x, 0.95).map(|_| ()), Err(LineError::NonFinite));
            assert_eq!(
                f.prediction(x, 3, 0.95).map(|_| ()),
                Err(LineError::NonFinite)
            );
        }
        assert_eq!(f.se_prediction(1.0, 0), Err(LineError::InvalidCount));
        assert_eq!(
            f.prediction(1.0, 0, 0.95).map(|_| ()),
            Err(LineError::InvalidCount)
        );
        assert_eq!(LineError::InvalidCount.code(), 7);
        assert_eq!(LineError::InvalidLevel.code(), 6);
        assert_eq!(LineError::NonFinite.code(), 1);
        // Calibration queries on the same fit.
        let code = |r: Result<(), CalibError>| r.unwrap_err().code();
        for v in [NAN, INF] {
            assert_eq!(code(f.invert(&Reading::single(v)).map(|_| ())), 1);
            assert_eq!(code(f.calibrated_value(v, 0.1).map(|_| ())), 1);
        }
        assert_eq!(code(f.invert(&Reading::mean_of(3.0, 0)).map(|_| ())), 7);
        for w in [0.0, -1.0, NAN, INF] {
            let r = Reading {
                value: 3.0,
                replicates: 1,
                weight: w,
            };
            assert_eq!(code(f.invert(&r).map(|_| ())), 2, "weight {w}");
        }
        for l in bad_levels {
            assert_eq!(
                code(f.invert_interval(&Reading::single(3.0), l).map(|_| ())),
                6
            );
        }
        for u in [-0.1, NAN, INF] {
            assert_eq!(code(f.calibrated_value(3.0, u).map(|_| ())), 32, "u {u}");
            assert_eq!(
                code(f.limits_from_sigma(SigmaSource::Given(u)).map(|_| ())),
                32
            );
        }
        for (a, b) in [
            (0.0, 0.05),
            (0.5, 0.05),
            (NAN, 0.05),
            (0.05, -0.05),
            (0.05, INF),
        ] {
            assert_eq!(
                code(f.decision_limits(a, b, 1, 1.0).map(|_| ())),
                6,
                "{a} {b}"
            );
        }
        assert_eq!(code(f.decision_limits(0.05, 0.05, 0, 1.0).map(|_| ())), 7);
        assert_eq!(code(f.decision_limits(0.05, 0.05, 1, 0.0).map(|_| ())), 2);
        // A given sigma so large that the limits overflow.
        assert_eq!(
            code(f.limits_from_sigma(SigmaSource::Given(1e308)).map(|_| ())),
            100
        );
        if origin {
            assert_eq!(
                code(f.limits_from_sigma(SigmaSource::InterceptSe).map(|_| ())),
                37
            );
        }
        assert_eq!(f, copy, "a query changed the fit");
    }
}

#[test]
fn model_fit_queries_refuse_bad_arguments() {
    let f = model_many()
        .fit(&ModelFitOptions::with_intercept(InterceptMode::Detect))
        .unwrap();
    let row = [1.0, 2.0, 4.0];
    let code = |r: Result<(), ModelError>| r.unwrap_err().code();
    for l in [0.0, 1.0, -0.5, 1.5, NAN, INF, 1.0 - f64::EPSILON / 2.0] {
        assert_eq!(code(f.coef_intervals(l).map(|_| ())), 25, "level {l}");
        assert_eq!(code(f.mean_response(&row, l).map(|_| ())), 25);
        assert_eq!(code(f.prediction(&row, 1, l).map(|_| ())), 25);
    }
    assert_eq!(code(f.prediction(&row, 0, 0.95).map(|_| ())), 26);
    for bad in [[1.0, NAN, 4.0], [1.0, 2.0, INF], [-INF, 2.0, 4.0]] {
        assert_eq!(code(f.predict(&bad).map(|_| ())), 20);
        assert_eq!(code(f.leverage(&bad).map(|_| ())), 20);
        assert_eq!(code(f.mean_response(&bad, 0.95).map(|_| ())), 20);
    }
    // Rows so far out that the result overflows (code 122).
    let far = [1.0, 1e300, 1.0];
    assert_eq!(code(f.leverage(&far).map(|_| ())), 122);
    assert_eq!(code(f.mean_response(&far, 0.95).map(|_| ())), 122);
    assert_eq!(
        code(f.prediction(&[1.0, 1e160, 1.0], 1, 0.95).map(|_| ())),
        122
    );
    assert_eq!(code(f.predict(&[1e308, 1e308, 1e308]).map(|_| ())), 122);
    for short in [&[1.0, 2.0][..], &[][..], &[1.0, 2.0, 3.0, 4.0][..]] {
        assert_eq!(code(f.predict(short).map(|_| ())), 22, "{short:?}");
        assert_eq!(code(f.leverage(short).map(|_| ())), 22);
    }
}

// ---------------------------------------------------------------------------
// Normality tests at the ends of the double range.

#[test]
fn normality_tests_are_exact_under_power_of_two_scaling() {
    // Both statistics are location and scale invariant by definition and
    // scaling by a power of two is exact, so a sample scaled by 2^1022
    // (its range and squares overflow) or 2^-1000 (squares underflow; the
    // values stay normal numbers) gives the same bits as the sample itself.
    let base = [-1.3, -0.4, 0.1, 0.2, 0.9, 1.4, 2.2, -0.7, 0.35];
    let sw = shapiro_wilk(&base).unwrap();
    let ad = anderson_darling(&base).unwrap();
    for k in [1022, 600, -600, -1000] {
        let v: Vec<f64> = base.iter().map(|&b| libm_ldexp(b, k)).collect();
        let s2 = shapiro_wilk(&v).unwrap();
        let a2 = anderson_darling(&v).unwrap();
        assert_eq!(
            (s2.w.to_bits(), s2.p_value.to_bits()),
            (sw.w.to_bits(), sw.p_value.to_bits()),
            "2^{k}"
        );
        assert_eq!(
            (a2.a2.to_bits(), a2.p_value.to_bits()),
            (ad.a2.to_bits(), ad.p_value.to_bits()),
            "2^{k}"
        );
    }
}

/// `b · 2^k` by repeated exact halving or doubling (no libm dependency in
/// the test).
fn libm_ldexp(b: f64, k: i32) -> f64 {
    let mut v = b;
    let step = if k > 0 { 2.0 } else { 0.5 };
    for _ in 0..k.unsigned_abs() {
        v *= step;
    }
    v
}

// ---------------------------------------------------------------------------
// Polynomial and weighted calibration, retained-data diagnostics.

#[test]
fn polynomial_calibration_refuses_bad_arguments() {
    use plumbfit::calib::PolyCalibration;
    let c3 = [0.1, 2.0, 0.05];
    let cov3 = [1e-4, 0.0, 0.0, 0.0, 1e-4, 0.0, 0.0, 0.0, 1e-6];
    let code = |r: Result<PolyCalibration, CalibError>| r.unwrap_err().code();
    // Coefficient count outside 2..=9 (one coefficient has no slope).
    assert_eq!(
        code(PolyCalibration::new(&[1.0], &[1.0], 0.1, 5.0, (0.0, 4.0))),
        30
    );
    assert_eq!(
        code(PolyCalibration::new(
            &[1.0; 10],
            &[0.0; 100],
            0.1,
            5.0,
            (0.0, 4.0)
        )),
        30
    );
    assert_eq!(
        code(PolyCalibration::new(&[], &[], 0.1, 5.0, (0.0, 4.0))),
        30
    );
    assert_eq!(
        code(PolyCalibration::new(&c3, &cov3[..8], 0.1, 5.0, (0.0, 4.0))),
        3
    );
    assert_eq!(
        code(PolyCalibration::new(
            &[0.1, NAN, 0.05],
            &cov3,
            0.1,
            5.0,
            (0.0, 4.0)
        )),
        1
    );
    let mut cov_inf = cov3;
    cov_inf[4] = INF;
    assert_eq!(
        code(PolyCalibration::new(&c3, &cov_inf, 0.1, 5.0, (0.0, 4.0))),
        1
    );
    for s in [-0.1, NAN, INF] {
        assert_eq!(
            code(PolyCalibration::new(&c3, &cov3, s, 5.0, (0.0, 4.0))),
            32,
            "s {s}"
        );
    }
    let mut cov_neg = cov3;
    cov_neg[0] = -1e-4;
    assert_eq!(
        code(PolyCalibration::new(&c3, &cov_neg, 0.1, 5.0, (0.0, 4.0))),
        32
    );
    for df in [0.0, -1.0, NAN] {
        assert_eq!(
            code(PolyCalibration::new(&c3, &cov3, 0.1, df, (0.0, 4.0))),
            36,
            "df {df}"
        );
    }
    for r in [(4.0, 0.0), (1.0, 1.0), (NAN, 4.0), (0.0, INF), (-INF, 1.0)] {
        assert_eq!(
            code(PolyCalibration::new(&c3, &cov3, 0.1, 5.0, r)),
            31,
            "range {r:?}"
        );
    }
    let cal = PolyCalibration::new(&c3, &cov3, 0.1, 5.0, (0.0, 4.0)).unwrap();
    let copy = cal;
    let inv = |r: Reading| cal.invert(&r).map(|_| ()).unwrap_err().code();
    assert_eq!(inv(Reading::single(NAN)), 1);
    assert_eq!(inv(Reading::single(-INF)), 1);
    assert_eq!(inv(Reading::mean_of(3.0, 0)), 7);
    assert_eq!(inv(Reading::single(3.0).with_weight(0.0)), 2);
    assert_eq!(inv(Reading::single(3.0).with_weight(NAN)), 2);
    assert_eq!(inv(Reading::single(1e300)), 132); // no root in [0, 4]
    for l in [0.0, 1.0, NAN, -0.5, 1.0 - f64::EPSILON / 2.0] {
        let e = cal.invert_interval(&Reading::single(3.0), l).map(|_| ());
        assert_eq!(e.unwrap_err().code(), 6, "level {l}");
    }
    assert_eq!(cal, copy);
}

#[test]
fn weighted_calibration_refuses_bad_arguments() {
    use plumbfit::calib::{user_weighted_line, weighted_line, VarianceShape};
    use plumbfit::WeightMeaning;
    let xs = [1.0, 2.0, 3.0, 4.0, 5.0];
    let ys = [2.1, 3.9, 6.2, 7.8, 10.1];
    let rel = WeightMeaning::Relative;
    let code = |e: CalibError| e.code();
    let wl = |x: &[f64], y: &[f64], s: VarianceShape, u: f64| weighted_line(x, y, s, rel, u);
    assert_eq!(
        code(wl(&xs, &ys[..4], VarianceShape::InverseX, 1.0).unwrap_err()),
        3
    );
    // No pairs: too few points for a line (as documented; not code 4 here).
    assert_eq!(
        code(wl(&[], &[], VarianceShape::InverseX, 1.0).unwrap_err()),
        101
    );
    assert_eq!(
        code(wl(&[1.0, NAN, 3.0], &ys[..3], VarianceShape::InverseX, 1.0).unwrap_err()),
        1
    );
    for u in [0.0, -1.0, NAN, INF] {
        assert_eq!(
            code(wl(&xs, &ys, VarianceShape::InverseX, u).unwrap_err()),
            32,
            "u {u}"
        );
    }
    // 1/x weights are undefined at x = 0 and below.
    let bad_x = [0.0, 1.0, 2.0, 3.0, 4.0];
    assert_eq!(
        code(wl(&bad_x, &ys, VarianceShape::InverseX, 1.0).unwrap_err()),
        33
    );
    let bad_y = [2.1, 0.0, 6.2, 7.8, 10.1];
    assert_eq!(
        code(wl(&xs, &bad_y, VarianceShape::InverseY2, 1.0).unwrap_err()),
        33
    );
    let mp = VarianceShape::MeanPower { power: NAN };
    assert!(wl(&xs, &ys, mp, 1.0).is_err(), "a NaN power is refused");
    let uw = |ws: &[f64]| user_weighted_line(&xs, &ys, ws, rel).unwrap_err().code();
    assert_eq!(uw(&[1.0, 1.0, 0.0, 1.0, 1.0]), 2);
    assert_eq!(uw(&[1.0, -2.0, 1.0, 1.0, 1.0]), 2);
    assert_eq!(uw(&[1.0, 1.0, 1.0, 1.0, NAN]), 2);
    assert_eq!(uw(&[1.0; 4]), 3);
    let cal = wl(&xs, &ys, VarianceShape::InverseX, 1.0).unwrap();
    assert_eq!(code(cal.reading(NAN, 1).unwrap_err()), 1);
    assert_eq!(code(cal.reading(3.0, 0).unwrap_err()), 7);
}

#[test]
fn retained_residual_writers_refuse_and_write_nothing() {
    use plumbfit::diag::{influence_into, residuals_into, PointInfluence, ResidualSet};
    let f = line_fit(false);
    let sentinel = -12345.5;
    let mut out = [sentinel; 12];
    let mut check = |xs: &[f64], ys: &[f64], fit: &plumbfit::LineFit, cap: usize, want: u16| {
        let e = residuals_into(xs, ys, fit, &mut out[..cap]).unwrap_err();
        assert_eq!(e.code(), want, "{e:?}");
        assert!(out.iter().all(|&v| v == sentinel), "out written on error");
    };
    check(&XS, &YS[..9], &f, 12, 3);
    check(&[], &[], &f, 12, 4);
    let mut nan_x = XS;
    nan_x[7] = NAN;
    check(&nan_x, &YS, &f, 12, 1);
    let mut inf_y = YS;
    inf_y[0] = -INF;
    check(&XS, &inf_y, &f, 12, 1);
    check(&XS[..9], &YS[..9], &f, 12, 42);
    check(&XS, &YS, &f, 9, 40);
    check(&XS, &YS, &line_fit(true), 12, 41);
    let mut w = PairMoments::<Lean>::new();
    w.extend_weighted(
        &XS,
        &YS,
        &[1.0, 2.0, 1.0, 2.0, 1.0, 2.0, 1.0, 2.0, 1.0, 2.0],
    )
    .unwrap();
    check(&XS, &YS, &w.fit().unwrap(), 12, 141);
    let mut g = PairMoments::<Lean>::new();
    g.extend(&XS, &YS).unwrap();
    g.forget(0.5).unwrap();
    check(&XS, &YS, &g.fit().unwrap(), 12, 142);
    let mut infl = [PointInfluence::default(); 12];
    let before = infl;
    assert_eq!(
        influence_into(&XS, &YS, &f, &mut infl[..9])
            .unwrap_err()
            .code(),
        40
    );
    assert_eq!(infl, before);
    assert_eq!(ResidualSet::new(&XS, &YS[..9], &f).unwrap_err().code(), 3);
    assert_eq!(ResidualSet::new(&nan_x, &YS, &f).unwrap_err().code(), 1);
}
