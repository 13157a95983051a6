//! The run-time AVX2 + FMA path of the model block updates against the
//! portable path, and the block path against exactly known coefficients.
//!
//! Both paths form every product's rounding error exactly (a fused
//! multiply-add, or Dekker's split product), and every other operation is
//! the same IEEE operation in the same order, so the states must agree bit
//! for bit; vector width does not change what each lane computes. On a CPU
//! without AVX2 + FMA (or without the `simd` feature) both runs take the
//! portable path and the comparison holds trivially.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests stop loudly

use plumbfit::model::{set_fma_dispatch, ModelMoments};
use std::sync::Mutex;

/// The dispatch switch is process-wide: tests that flip it take turns.
static SWITCH: Mutex<()> = Mutex::new(());

/// Fixed-seed linear congruential generator in [-0.5, 0.5).
fn lcg(state: &mut u64) -> f64 {
    *state = state
        .wrapping_mul(6364136223846793005)
        .wrapping_add(1442695040888963407);
    (*state >> 11) as f64 / (1u64 << 53) as f64 - 0.5
}

/// `n × p` rows (column 0 constant 1), responses and weights; `scale`
/// spreads the magnitudes of the other columns over `10^±scale`.
fn data(n: usize, p: usize, seed: u64, scale: f64) -> (Vec<f64>, Vec<f64>, Vec<f64>) {
    let mut s = seed;
    let mut rows = Vec::with_capacity(n * p);
    let mut ys = Vec::with_capacity(n);
    let mut ws = Vec::with_capacity(n);
    for _ in 0..n {
        let mut y = 0.0;
        for j in 0..p {
            let v = if j == 0 {
                1.0
            } else {
                lcg(&mut s) * 10f64.powf(scale * 2.0 * lcg(&mut s))
            };
            y += (j as f64 + 0.5) * v;
            rows.push(v);
        }
        ys.push(y + lcg(&mut s));
        ws.push(0.25 + lcg(&mut s) + 0.5);
    }
    (rows, ys, ws)
}

fn bits(s: &[f64]) -> Vec<u64> {
    s.iter().map(|v| v.to_bits()).collect()
}

/// Runs `f` once with the AVX2 + FMA path allowed and once forbidden.
fn both<T>(f: impl Fn() -> T) -> (T, T) {
    let _guard = SWITCH.lock().unwrap_or_else(|e| e.into_inner());
    set_fma_dispatch(true);
    let fast = f();
    set_fma_dispatch(false);
    let portable = f();
    set_fma_dispatch(true);
    (fast, portable)
}

#[test]
fn extend_rows_same_bits_on_both_paths() {
    // Lengths below the lane threshold, at it, and with ragged tails;
    // two earlier blocks so later blocks start from a non-empty factor.
    for p in 1..=16 {
        for (k, n) in [1usize, 7, 63, 64, 65, 1000, 4099].into_iter().enumerate() {
            for scale in [0.0, 6.0] {
                let (rows, ys, ws) = data(n, p, 17 + (p * 31 + k) as u64, scale);
                let (fast, portable) = both(|| {
                    let mut acc = ModelMoments::new(p).unwrap();
                    acc.extend_rows(&rows, &ys).unwrap();
                    acc.extend_rows_weighted(&rows, &ys, &ws).unwrap();
                    for (r, y) in rows.chunks_exact(p).zip(&ys).take(5) {
                        acc.push_row(r, *y).unwrap();
                    }
                    acc.into_storage()
                });
                assert_eq!(
                    bits(&fast),
                    bits(&portable),
                    "p = {p}, n = {n}, scale = {scale}"
                );
            }
        }
    }
}

#[test]
fn extend_powers_same_bits_on_both_paths() {
    for p in 1..=16 {
        for n in [5usize, 64, 777] {
            let mut s = 99 + p as u64;
            let xs: Vec<f64> = (0..n).map(|_| 2.0 * lcg(&mut s) + 1.0).collect();
            let ys: Vec<f64> = xs.iter().map(|x| x * x - 3.0 * x + lcg(&mut s)).collect();
            let ws: Vec<f64> = (0..n).map(|_| 1.0 + lcg(&mut s)).collect();
            let (fast, portable) = both(|| {
                let mut acc = ModelMoments::new(p).unwrap();
                acc.extend_powers(&xs, &ys).unwrap();
                acc.extend_powers_weighted(&xs, &ys, &ws).unwrap();
                acc.into_storage()
            });
            assert_eq!(bits(&fast), bits(&portable), "p = {p}, n = {n}");
        }
    }
}

#[test]
fn block_path_recovers_exact_coefficients() {
    // y = 3 − 2 x1 + 0.5 x2 + 0.125 x3 on small integers: every value and
    // the solution are exact binary numbers (by construction), so both
    // paths must return them to the rounding of the final solve; 1e-13
    // relative leaves a few ulps for the back substitution and merges of a
    // design whose condition number is below 1e3.
    let truth = [3.0, -2.0, 0.5, 0.125];
    let n = 10_007;
    let mut rows = Vec::with_capacity(n * 4);
    let mut ys = Vec::with_capacity(n);
    for i in 0..n {
        let x = [
            1.0,
            (i % 17) as f64 - 8.0,
            (i % 13) as f64,
            ((i * 7) % 11) as f64,
        ];
        ys.push(x.iter().zip(&truth).map(|(a, b)| a * b).sum());
        rows.extend_from_slice(&x);
    }
    let (fast, portable) = both(|| {
        let mut acc = ModelMoments::new(4).unwrap();
        acc.extend_rows(&rows, &ys).unwrap();
        acc.fit(&Default::default()).unwrap().coefficients
    });
    for coefs in [&fast, &portable] {
        for (c, t) in coefs.iter().zip(&truth) {
            assert!((c - t).abs() <= 1e-13 * t.abs(), "{c} vs {t}");
        }
    }
}

#[test]
fn block_path_agrees_with_row_by_row() {
    // Row by row and the eight-lane block path round differently (the
    // lanes are merged at the end), but both are double-double accurate
    // (~1e-30 before the final rounding), so on this well-conditioned
    // design (condition < 1e3) the coefficients agree to 1e-13 relative.
    let p = 8;
    let (rows, ys, _) = data(20_000, p, 5, 0.0);
    let mut block = ModelMoments::new(p).unwrap();
    block.extend_rows(&rows, &ys).unwrap();
    let mut single = ModelMoments::new(p).unwrap();
    for (r, y) in rows.chunks_exact(p).zip(&ys) {
        single.push_row(r, *y).unwrap();
    }
    let a = block.fit(&Default::default()).unwrap();
    let b = single.fit(&Default::default()).unwrap();
    for (x, y) in a.coefficients.iter().zip(&b.coefficients) {
        assert!((x - y).abs() <= 1e-13 * x.abs().max(y.abs()), "{x} vs {y}");
    }
    assert!(
        (a.sse - b.sse).abs() <= 1e-13 * a.sse,
        "{} vs {}",
        a.sse,
        b.sse
    );
}
