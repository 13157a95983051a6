//! Forgetting is weighted least squares with weights λ^age, and the two
//! weight meanings give the covariance they promise.
// Test helpers unwrap: a failure is a failed test with its message.
#![allow(clippy::unwrap_used)]

#[path = "support/exact.rs"]
mod exact;

use exact::{f, rel, ExactMoments};
use plumbfit::{FitOptions, LeanMoments, WeightMeaning};

fn data(n: usize) -> (Vec<f64>, Vec<f64>) {
    let xs: Vec<f64> = (0..n).map(|i| 10.0 + (i as f64 * 0.37) % 7.0).collect();
    let ys: Vec<f64> = xs
        .iter()
        .enumerate()
        .map(|(i, x)| 0.8 * x - 3.0 + ((i * 7919) % 13) as f64 * 0.01)
        .collect();
    (xs, ys)
}

#[test]
fn forgetting_equals_explicit_age_weights() {
    let (xs, ys) = data(200);
    let lambda: f64 = 0.97;
    let mut forgetful = LeanMoments::new();
    for (x, y) in xs.iter().zip(&ys) {
        forgetful.forget(lambda).unwrap();
        forgetful.push(*x, *y).unwrap();
    }
    let n = xs.len();
    let ws: Vec<f64> = (0..n).map(|i| lambda.powi((n - 1 - i) as i32)).collect();
    let exact = ExactMoments::new(&xs, &ys, Some(&ws));
    let fit = forgetful.fit().unwrap();
    // λ^k is rounded once per multiplication in the accumulator and once by
    // powi here: agreement to ~1e-12 covers 200 roundings of each weight.
    assert!(
        rel(fit.slope, f(&exact.slope())) <= 1e-11,
        "{} vs {}",
        fit.slope,
        f(&exact.slope())
    );
    assert!(rel(fit.intercept, f(&exact.intercept())) <= 1e-11);
    assert!(
        fit.approximate,
        "intervals under forgetting are marked approximate"
    );
    // Kish effective size: (Σw)²/Σw² = (1+λ)(1−λ^n)/((1−λ)(1+λ^n)) for geometric weights.
    let ln = lambda.powi(n as i32);
    let kish = (1.0 + lambda) * (1.0 - ln) / ((1.0 - lambda) * (1.0 + ln));
    assert!(
        rel(fit.effective_count, kish) <= 1e-10,
        "{} vs {kish}",
        fit.effective_count
    );
    assert!(rel(fit.df_resid, kish - 2.0) <= 1e-10);
}

#[test]
fn weight_meanings_scale_the_covariance_as_documented() {
    let (xs, ys) = data(50);
    let ws: Vec<f64> = (0..50).map(|i| 1.0 + (i % 5) as f64).collect();
    let mut acc = LeanMoments::new();
    acc.extend_weighted(&xs, &ys, &ws).unwrap();
    let rel_fit = acc.fit().unwrap();
    let known = acc
        .fit_with(&FitOptions::default().with_weights(WeightMeaning::InverseVariance))
        .unwrap();
    let e = ExactMoments::new(&xs, &ys, Some(&ws));
    let sxx = f(&e.sxx);
    // Known inverse variances: var(b) = 1/Σw(x − x̄)² (no residual scaling).
    assert!(rel(known.se_slope, (1.0 / sxx).sqrt()) <= 1e-13);
    // Relative weights: var(b) = s²/Sxx with s² = Σw e²/(n − 2).
    let s2 = f(&e.sse()) / 48.0;
    assert!(rel(rel_fit.se_slope, (s2 / sxx).sqrt()) <= 1e-10);
    // Scaling relative weights by a constant changes nothing but W.
    let ws10: Vec<f64> = ws.iter().map(|w| w * 10.0).collect();
    let mut acc10 = LeanMoments::new();
    acc10.extend_weighted(&xs, &ys, &ws10).unwrap();
    let f10 = acc10.fit().unwrap();
    assert!(rel(f10.se_slope, rel_fit.se_slope) <= 1e-12);
    assert!(rel(f10.slope, rel_fit.slope) <= 1e-13);
}
