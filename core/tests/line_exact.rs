//! Line accumulator against exact rational arithmetic, merges, invariances
//! and the offset case that defeats textbook sum formulas.
// Test helpers unwrap: a failure is a failed test with its message.
#![allow(clippy::unwrap_used, clippy::needless_range_loop)]

#[path = "support/exact.rs"]
mod exact;

use exact::{f, rel, ExactMoments};
use plumbfit::{FullMoments, LeanMoments, PairMoments, Tier};
use proptest::prelude::*;

/// Tolerance for quantities that are well conditioned (slope, means, SSE of a
/// non-degenerate fit): a few hundred ulps covers the accumulated rounding
/// of n ≤ 2000 centred updates and merges.
const TOL_WELL: f64 = 1e-12;

fn push_all<T: Tier>(xs: &[f64], ys: &[f64]) -> PairMoments<T> {
    let mut a = PairMoments::<T>::new();
    for (x, y) in xs.iter().zip(ys) {
        a.push(*x, *y).unwrap();
    }
    a
}

#[test]
fn offset_line_keeps_twelve_digits_of_slope() {
    // x = 2^30 + i/1024 (exactly representable), y = 3.25x + small noise.
    // With raw sums Σx² − (Σx)²/n every digit of Sxx cancels here.
    let n = 4096;
    let mut state = 0x9E37_79B9_7F4A_7C15u64;
    let xs: Vec<f64> = (0..n)
        .map(|i| 1_073_741_824.0 + i as f64 / 1024.0)
        .collect();
    let ys: Vec<f64> = xs
        .iter()
        .map(|x| {
            state = state
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            let u = (state >> 11) as f64 / (1u64 << 53) as f64 - 0.5;
            3.25 * x + 1e-3 * u
        })
        .collect();
    let exact = ExactMoments::new(&xs, &ys, None);
    let want = f(&exact.slope());
    for acc in [push_all::<plumbfit::Lean>(&xs, &ys), {
        let mut a = LeanMoments::new();
        a.extend(&xs, &ys).unwrap();
        a
    }] {
        let (b, _) = acc.slope_intercept().unwrap();
        assert!(
            rel(b, want) <= 1e-12,
            "slope {b} vs exact {want}: rel {}",
            rel(b, want)
        );
    }
    let mut full = FullMoments::new();
    full.extend(&xs, &ys).unwrap();
    let (b, _) = full.slope_intercept().unwrap();
    assert!(
        rel(b, want) <= 1e-12,
        "full tier slope rel {}",
        rel(b, want)
    );
}

#[test]
fn weighted_fit_matches_exact_weighted_moments() {
    let xs = [1.0, 2.0, 3.5, 4.0, 7.25, 9.0, 10.5, 11.0, 12.5, 15.0];
    let ys = [2.2, 4.1, 7.3, 7.9, 14.8, 18.2, 21.3, 21.9, 25.4, 30.1];
    let ws = [1.0, 0.5, 2.0, 1.5, 0.25, 3.0, 1.0, 0.75, 2.5, 1.25];
    let mut acc = LeanMoments::new();
    acc.extend_weighted(&xs, &ys, &ws).unwrap();
    let fit = acc.fit().unwrap();
    let e = ExactMoments::new(&xs, &ys, Some(&ws));
    assert!(rel(fit.slope, f(&e.slope())) <= TOL_WELL);
    assert!(rel(fit.intercept, f(&e.intercept())) <= TOL_WELL);
    assert!(rel(fit.sse, f(&e.sse())) <= 1e-11);
    assert!(acc.is_weighted());
}

fn data_strategy() -> impl Strategy<Value = (Vec<f64>, Vec<f64>, f64, f64)> {
    (
        3usize..300,
        any::<u64>(),
        prop_oneof![Just(0.0), Just(1e3), Just(1e6), Just(1e9)],
        0.01f64..100.0,
    )
        .prop_map(|(n, seed, offset, noise)| {
            let mut s = seed | 1;
            let mut next = move || {
                s ^= s << 13;
                s ^= s >> 7;
                s ^= s << 17;
                (s >> 11) as f64 / (1u64 << 53) as f64
            };
            let xs: Vec<f64> = (0..n).map(|_| offset + 100.0 * next()).collect();
            let ys: Vec<f64> = xs
                .iter()
                .map(|x| -0.5 * offset + 1.7 * x + noise * (next() - 0.5))
                .collect();
            (xs, ys, offset, noise)
        })
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(64))]

    /// Any split into three parts, extended and merged, equals sequential pushing.
    #[test]
    fn split_and_merge_equals_sequential((xs, ys, _off, _noise) in data_strategy(), a in 0.0f64..1.0, b in 0.0f64..1.0) {
        let n = xs.len();
        let (c1, c2) = {
            let (p, q) = ((a * n as f64) as usize, (b * n as f64) as usize);
            (p.min(q), p.max(q))
        };
        let seq = push_all::<plumbfit::Lean>(&xs, &ys);
        let mut parts = Vec::new();
        for (lo, hi) in [(0, c1), (c1, c2), (c2, n)] {
            let mut p = LeanMoments::new();
            if hi > lo {
                p.extend(&xs[lo..hi], &ys[lo..hi]).unwrap();
            }
            parts.push(p);
        }
        // Merge as a tree in a different grouping: (p1 + (p2 + p3)).
        let mut right = parts[1];
        right.merge(&parts[2]).unwrap();
        let mut merged = parts[0];
        merged.merge(&right).unwrap();
        let s = seq.summary().unwrap();
        let m = merged.summary().unwrap();
        prop_assert_eq!(s.count, m.count);
        prop_assert!(rel(m.mean_x, s.mean_x) <= 1e-14);
        prop_assert!(rel(m.sxx, s.sxx) <= TOL_WELL);
        let (bs, _) = seq.slope_intercept().unwrap();
        let (bm, _) = merged.slope_intercept().unwrap();
        prop_assert!(rel(bm, bs) <= TOL_WELL, "slope {} vs {}", bm, bs);
        let (fs, fm) = (seq.fit().unwrap(), merged.fit().unwrap());
        prop_assert!(rel(fm.sse, fs.sse) <= 1e-10, "sse {} vs {}", fm.sse, fs.sse);
    }

    /// Reversing the order changes nothing beyond rounding; both agree with
    /// the exact rational computation.
    #[test]
    fn order_invariant_and_exact((xs, ys, _off, _noise) in data_strategy()) {
        let fwd = push_all::<plumbfit::Lean>(&xs, &ys);
        let rx: Vec<f64> = xs.iter().rev().copied().collect();
        let ry: Vec<f64> = ys.iter().rev().copied().collect();
        let rev = push_all::<plumbfit::Lean>(&rx, &ry);
        let e = ExactMoments::new(&xs, &ys, None);
        let (want_b, want_sse) = (f(&e.slope()), f(&e.sse()));
        for acc in [fwd, rev] {
            let fit = acc.fit().unwrap();
            prop_assert!(rel(fit.slope, want_b) <= TOL_WELL, "slope {} vs {}", fit.slope, want_b);
            // SSE: relative error grows like ε/(1 − R²); these fits have R² ≤ 1 − 1e-12.
            prop_assert!(rel(fit.sse, want_sse) <= 1e-9, "sse {} vs {}", fit.sse, want_sse);
            prop_assert!(rel(fit.mean_x, f(&e.mean_x)) <= 1e-15);
        }
    }

    /// Slope and intercept are equivariant under x → αx + β, y → γy + δ
    /// (powers of two keep the transformed inputs exact).
    #[test]
    fn shift_and_scale_equivariance((xs, ys, _off, _noise) in data_strategy(), ka in -3i32..4, kc in -3i32..4, beta in -1000i32..1000, delta in -1000i32..1000) {
        let alpha = 2f64.powi(ka);
        let gamma = 2f64.powi(kc);
        let base = push_all::<plumbfit::Lean>(&xs, &ys).fit().unwrap();
        let tx: Vec<f64> = xs.iter().map(|x| alpha * x + beta as f64).collect();
        let ty: Vec<f64> = ys.iter().map(|y| gamma * y + delta as f64).collect();
        let t = push_all::<plumbfit::Lean>(&tx, &ty).fit().unwrap();
        // b' = γb/α; a' = γa + δ − b'β. The shift by β, δ rounds the inputs
        // (offsets up to 1e9), so compare against the exact transformed data.
        let e = ExactMoments::new(&tx, &ty, None);
        prop_assert!(rel(t.slope, f(&e.slope())) <= TOL_WELL);
        prop_assert!(rel(t.slope, gamma * base.slope / alpha) <= 1e-9);
        prop_assert!(rel(t.intercept, f(&e.intercept())) <= 1e-9 || (t.intercept - f(&e.intercept())).abs() <= 1e-9 * (1.0 + t.mean_y.abs()));
    }

    /// SSE = (n − 1)·s_y²·(1 − r²), from the reported SD and correlation.
    #[test]
    fn sse_identity((xs, ys, _off, _noise) in data_strategy()) {
        let fit = push_all::<plumbfit::Full>(&xs, &ys).fit().unwrap();
        let n = fit.count as f64;
        let rhs = (n - 1.0) * fit.sd_y * fit.sd_y * (1.0 - fit.r * fit.r);
        // 1 − r² cancels when r² ≈ 1, so the identity holds to ε·/(1 − r²).
        let tol = 1e-12 / (1.0 - fit.r_squared).max(1e-300);
        prop_assert!(rel(rhs, fit.sse) <= tol.max(1e-10), "{} vs {}", rhs, fit.sse);
    }

    /// Full and lean tiers agree on second moments.
    #[test]
    fn tiers_agree((xs, ys, _off, _noise) in data_strategy()) {
        let mut l = LeanMoments::new();
        l.extend(&xs, &ys).unwrap();
        let mut h = FullMoments::new();
        h.extend(&xs, &ys).unwrap();
        let (fl, fh) = (l.fit().unwrap(), h.fit().unwrap());
        prop_assert!(rel(fl.slope, fh.slope) <= TOL_WELL);
        prop_assert!(rel(fl.sse, fh.sse) <= 1e-10);
    }
}
