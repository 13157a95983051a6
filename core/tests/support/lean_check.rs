//! Shared pieces of the lean per-pair tests (pending block, feed): invented
//! offset data and a comparison of a lean state's moments and line with
//! exact rationals.
#![allow(dead_code, clippy::unwrap_used)]

use super::exact::{f, rel, ExactMoments};
use plumbfit::LeanMoments;

/// Invented offset readings: x near 5e8, y on a line with dyadic noise.
pub fn offset_data(n: usize) -> (Vec<f64>, Vec<f64>) {
    let xs: Vec<f64> = (0..n)
        .map(|i| 5e8 + ((i * 37) % 101) as f64 * 0.25)
        .collect();
    let ys: Vec<f64> = xs
        .iter()
        .enumerate()
        .map(|(i, x)| 1.5 * x - 20.0 + ((i * 13) % 7) as f64 * 0.0625)
        .collect();
    (xs, ys)
}

/// Asserts that `a`, fed `xs`, `ys`, has the exact means, `Sxx`, `Sxy`,
/// `Syy`, slope and intercept within relative `tol`.
pub fn assert_near_exact(a: &LeanMoments, xs: &[f64], ys: &[f64], tol: f64, what: &str) {
    let e = ExactMoments::new(xs, ys, None);
    assert_eq!(a.count(), xs.len() as u64, "{what}");
    let s = a.summary().unwrap();
    let (b, c) = a.slope_intercept().unwrap();
    for (got, want, name) in [
        (s.mean_x, f(&e.mean_x), "mean x"),
        (s.mean_y, f(&e.mean_y), "mean y"),
        (s.sxx, f(&e.sxx), "sxx"),
        (s.sxy, f(&e.sxy), "sxy"),
        (s.syy, f(&e.syy), "syy"),
        (b, f(&e.slope()), "slope"),
        (c, f(&e.intercept()), "intercept"),
    ] {
        let r = rel(got, want);
        assert!(r < tol, "{what}: {name} {got} vs {want}, rel {r:e}");
    }
}
