//! The line accumulator and the model accumulator (p = 2, rows [1, x])
//! agree on straight lines: estimates, standard errors, ANOVA and intervals.
// Test helpers unwrap: a failure is a failed test with its message.
#![allow(clippy::unwrap_used)]

use plumbfit::model::{InterceptMode, ModelFitOptions, ModelMoments};
use plumbfit::{FitOptions, LeanMoments};
use proptest::prelude::*;

fn rel(a: f64, b: f64) -> f64 {
    if b == 0.0 {
        a.abs()
    } else {
        (a - b).abs() / b.abs()
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(48))]

    #[test]
    fn line_and_model_agree(n in 3usize..400, seed in any::<u64>(), offset in prop_oneof![Just(0.0), Just(1e4), Just(1e7)], weighted in any::<bool>(), origin in any::<bool>()) {
        let mut s = seed | 1;
        let mut next = move || {
            s ^= s << 13;
            s ^= s >> 7;
            s ^= s << 17;
            (s >> 11) as f64 / (1u64 << 53) as f64
        };
        let xs: Vec<f64> = (0..n).map(|_| offset + 10.0 * next()).collect();
        let ys: Vec<f64> = xs.iter().map(|x| 2.0 - 0.75 * x + next() - 0.5).collect();
        let ws: Vec<f64> = (0..n).map(|_| if weighted { 0.5 + 2.0 * next() } else { 1.0 }).collect();
        let mut line = LeanMoments::new();
        line.extend_weighted(&xs, &ys, &ws).unwrap();
        let p = if origin { 1 } else { 2 };
        let mut model = ModelMoments::new(p).unwrap();
        for i in 0..n {
            let row = if origin { vec![xs[i]] } else { vec![1.0, xs[i]] };
            model.push_row_weighted(&row, ys[i], ws[i]).unwrap();
        }
        let (lf, mode) = if origin {
            (line.fit_with(&FitOptions::through_origin()).unwrap(), InterceptMode::None)
        } else {
            (line.fit().unwrap(), InterceptMode::Column0)
        };
        let mf = model.fit(&ModelFitOptions::with_intercept(mode)).unwrap();
        let b = mf.coefficients[p - 1];
        let sb = mf.std_errors[p - 1];
        // Both are accurate to ~1e-13 on these well-conditioned lines; the
        // line accumulator is plain double, so allow 1e-10 for the offset
        // cases where conditioning is (offset/spread)² ≈ 1e12 worse.
        let tol = if offset > 1e5 { 1e-8 } else { 1e-10 };
        prop_assert!(rel(lf.slope, b) <= tol, "slope {} vs {}", lf.slope, b);
        prop_assert!(rel(lf.se_slope, sb) <= tol, "se slope {} vs {}", lf.se_slope, sb);
        if !origin {
            let tol_a = tol * (1.0 + offset);
            prop_assert!(rel(lf.intercept, mf.coefficients[0]) <= tol_a);
            prop_assert!(rel(lf.se_intercept, mf.std_errors[0]) <= tol_a);
        }
        prop_assert!(rel(lf.sse, mf.sse) <= 1e-9, "sse {} vs {}", lf.sse, mf.sse);
        prop_assert!(rel(lf.r_squared, mf.r_squared.unwrap()) <= 1e-10);
        prop_assert_eq!(lf.df_resid, mf.df_resid as f64);
        prop_assert!(rel(lf.f_stat, mf.f_stat.unwrap()) <= 1e-8);
        let x0 = offset + 3.3;
        let row = if origin { vec![x0] } else { vec![1.0, x0] };
        let lp = lf.prediction(x0, 1, 0.95).unwrap();
        let mp = mf.prediction(&row, 1, 0.95).unwrap();
        prop_assert!(rel(lp.center, mp.estimate) <= 1e-10);
        prop_assert!(rel(lp.upper - lp.lower, mp.upper - mp.lower) <= 1e-8);
    }
}
