//! Full-tier co-moments (orders 2–4) and lag-1 sums against exact rational
//! two-pass sums, through pushes, chunked extends and merges of
//! accumulators whose provisional frames differ.
// Test helpers unwrap: a failure is a failed test with its message.
#![allow(clippy::unwrap_used, clippy::needless_range_loop)]

#[path = "support/exact.rs"]
mod exact;

use exact::{f, q, rel};
use num_rational::BigRational;
use num_traits::Zero;
use plumbfit::FullMoments;
use proptest::prelude::*;

fn exact_comoments(xs: &[f64], ys: &[f64]) -> [[f64; 5]; 5] {
    let n = BigRational::from_integer(xs.len().into());
    let xq: Vec<_> = xs.iter().map(|v| q(*v)).collect();
    let yq: Vec<_> = ys.iter().map(|v| q(*v)).collect();
    let mx = xq.iter().cloned().sum::<BigRational>() / &n;
    let my = yq.iter().cloned().sum::<BigRational>() / &n;
    let mut out = [[0.0; 5]; 5];
    for p in 0..=4usize {
        for k in 0..=(4 - p) {
            if p + k < 2 {
                continue;
            }
            let mut s = BigRational::zero();
            for i in 0..xs.len() {
                let dx = &xq[i] - &mx;
                let dy = &yq[i] - &my;
                let mut t = BigRational::from_integer(1.into());
                for _ in 0..p {
                    t *= &dx;
                }
                for _ in 0..k {
                    t *= &dy;
                }
                s += t;
            }
            out[p][k] = f(&s);
        }
    }
    out
}

fn exact_lags(xs: &[f64], ys: &[f64]) -> [f64; 3] {
    let mut s = [
        BigRational::zero(),
        BigRational::zero(),
        BigRational::zero(),
    ];
    for i in 1..xs.len() {
        let dx = q(xs[i]) - q(xs[i - 1]);
        let dy = q(ys[i]) - q(ys[i - 1]);
        s[0] += &dx * &dx;
        s[1] += &dx * &dy;
        s[2] += &dy * &dy;
    }
    [f(&s[0]), f(&s[1]), f(&s[2])]
}

/// Compare co-moments against their natural size `n·σx^p·σy^q`, so odd
/// moments that happen to be near zero are not judged relative to ~0.
fn assert_close(got: &[[f64; 5]; 5], want: &[[f64; 5]; 5], n: usize, tol: f64) {
    let nf = n as f64;
    let sx = (want[2][0] / nf).sqrt();
    let sy = (want[0][2] / nf).sqrt();
    for p in 0..=4usize {
        for k in 0..=(4 - p) {
            if p + k < 2 {
                continue;
            }
            let scale = nf * sx.powi(p as i32) * sy.powi(k as i32);
            let err = (got[p][k] - want[p][k]).abs();
            let bound = tol * scale.max(want[p][k].abs());
            assert!(
                err <= bound,
                "M{p}{k}: got {} want {} (err {err:e}, bound {bound:e})",
                got[p][k],
                want[p][k]
            );
        }
    }
}

fn gen(n: usize, seed: u64, offset: f64, slope: f64, noise: f64) -> (Vec<f64>, Vec<f64>) {
    let mut s = seed | 1;
    let mut next = move || {
        s ^= s << 13;
        s ^= s >> 7;
        s ^= s << 17;
        (s >> 11) as f64 / (1u64 << 53) as f64
    };
    let xs: Vec<f64> = (0..n).map(|_| offset + 50.0 * next()).collect();
    // A skewed noise term (cube of a uniform) so odd moments are not ~0.
    let ys: Vec<f64> = xs
        .iter()
        .map(|x| slope * x + noise * (next() - 0.3).powi(3))
        .collect();
    (xs, ys)
}

#[test]
fn pushes_match_exact_comoments_and_lags() {
    let (xs, ys) = gen(400, 7, 1e6, 2.5, 3.0);
    let mut acc = FullMoments::new();
    for (x, y) in xs.iter().zip(&ys) {
        acc.push(*x, *y).unwrap();
    }
    // Per-moment tolerance 1e-9 relative to its natural scale: orders 3–4
    // carry more rounding than order 2 (powers amplify the mean's error).
    assert_close(
        &acc.comoments().unwrap(),
        &exact_comoments(&xs, &ys),
        xs.len(),
        1e-12,
    );
    let lags = acc.lag_sums().unwrap();
    let want = exact_lags(&xs, &ys);
    for k in 0..3 {
        assert!(
            rel(lags[k], want[k]) <= 1e-10,
            "lag {k}: {} vs {}",
            lags[k],
            want[k]
        );
    }
}

proptest! {
    // Exact rational sums of fourth powers are slow in debug builds; a few
    // dozen cases over up to 600 pairs (more than one 512-pair chunk) suffice.
    #![proptest_config(ProptestConfig::with_cases(8))]

    /// Three parts, each started on its own (so with its own provisional
    /// frame), merged, equal the exact co-moments and lag sums of the whole.
    #[test]
    fn merges_across_frames_are_exact(seed in any::<u64>(), n in 30usize..600, cut1 in 0.0f64..1.0, cut2 in 0.0f64..1.0, offset in prop_oneof![Just(0.0), Just(1e4), Just(1e8)]) {
        let (xs, ys) = gen(n, seed, offset, -1.25, 10.0);
        let (a, b) = ((cut1 * n as f64) as usize, (cut2 * n as f64) as usize);
        let (c1, c2) = (a.min(b), a.max(b));
        let mut parts = Vec::new();
        for (lo, hi) in [(0, c1), (c1, c2), (c2, n)] {
            let mut p = FullMoments::new();
            if hi > lo {
                p.extend(&xs[lo..hi], &ys[lo..hi]).unwrap();
            }
            parts.push(p);
        }
        let mut m = parts[0];
        m.merge(&parts[1]).unwrap();
        m.merge(&parts[2]).unwrap();
        prop_assert_eq!(m.count(), n as u64);
        assert_close(&m.comoments().unwrap(), &exact_comoments(&xs, &ys), n, 1e-12);
        let lags = m.lag_sums().unwrap();
        let want = exact_lags(&xs, &ys);
        for k in 0..3 {
            prop_assert!(rel(lags[k], want[k]) <= 1e-9, "lag {}: {} vs {}", k, lags[k], want[k]);
        }
        let ((fx, _), (lx, _)) = m.ends().unwrap();
        prop_assert_eq!(fx, xs[0]);
        prop_assert_eq!(lx, xs[n - 1]);
        prop_assert_eq!(m.x_range().unwrap().0, xs.iter().cloned().fold(f64::INFINITY, f64::min));
    }
}
