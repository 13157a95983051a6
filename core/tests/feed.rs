//! The lean feed (`LeanMoments::feed`): the same moments as pushing one by
//! one up to rounding, against exact rational moments and NIST StRD
//! Norris; refusals that change nothing; pairs outside its bounds, an
//! empty or unframed accumulator and one with an open pending block.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)]

#[path = "support/exact.rs"]
mod exact;
#[path = "support/lean_check.rs"]
mod lean_check;
#[path = "common/nist.rs"]
mod nist;

use exact::{f, rel, ExactMoments};
use lean_check::{assert_near_exact, offset_data};
use plumbfit::{LeanMoments, MomentsError};

/// Pairs per feed block (documented on `PairFeed`).
const BLOCK: usize = 4096;

/// Invented drift: x a time ramp, so every block lies far from the
/// running mean.
fn ramp_data(n: usize) -> (Vec<f64>, Vec<f64>) {
    let xs: Vec<f64> = (0..n).map(|i| 1e4 + i as f64).collect();
    let ys: Vec<f64> = xs
        .iter()
        .enumerate()
        .map(|(i, x)| 0.001 * x + 3.0 + ((i * 7) % 5) as f64 * 0.03125)
        .collect();
    (xs, ys)
}

fn pushed(xs: &[f64], ys: &[f64]) -> LeanMoments {
    let mut a = LeanMoments::new();
    for (&x, &y) in xs.iter().zip(ys) {
        a.push(x, y).unwrap();
    }
    a
}

fn fed(xs: &[f64], ys: &[f64]) -> LeanMoments {
    let mut a = LeanMoments::new();
    let mut feed = a.feed();
    for (&x, &y) in xs.iter().zip(ys) {
        feed.push(x, y).unwrap();
    }
    drop(feed);
    a
}

/// Tolerance against exact rationals, as for the pending block (whose
/// sums the feed's block forms the same way, about the means): rounding
/// relative to what a block adds, a few thousand terms per sum; 1e-11
/// leaves a wide margin.
fn check_exact(xs: &[f64], ys: &[f64], what: &str) {
    assert_near_exact(&fed(xs, ys), xs, ys, 1e-11, what);
}

#[test]
fn offset_data_matches_exact_moments() {
    let (xs, ys) = offset_data(2 * BLOCK + 700);
    check_exact(&xs, &ys, "offset");
}

#[test]
fn drifting_ramp_matches_exact_moments() {
    let (xs, ys) = ramp_data(3 * BLOCK + 5);
    check_exact(&xs, &ys, "ramp");
}

#[test]
fn outliers_at_block_edges_match_exact_moments() {
    // Far outliers as the first pair of the first and second blocks (pairs
    // 9 and 9 + BLOCK) and as a held pair.
    let (mut xs, mut ys) = offset_data(2 * BLOCK + 30);
    for i in [8, 8 + BLOCK, 8 + BLOCK + 101] {
        xs[i] += 2.5e7;
        ys[i] -= 4.0e7;
    }
    check_exact(&xs, &ys, "outliers");
}

#[test]
fn counts_at_and_around_block_edges_agree_with_push() {
    let (xs, ys) = offset_data(2 * BLOCK + 20);
    for n in [
        0,
        1,
        7,
        8,
        9,
        10,
        11,
        300,
        BLOCK + 7,
        BLOCK + 8,
        BLOCK + 9,
        BLOCK + 10,
    ]
    .into_iter()
    .chain([2 * BLOCK + 8, 2 * BLOCK + 9, 2 * BLOCK + 10])
    {
        let (a, b) = (fed(&xs[..n], &ys[..n]), pushed(&xs[..n], &ys[..n]));
        assert_eq!(a.count(), n as u64, "n = {n}");
        if n < 2 {
            continue;
        }
        let (sa, sb) = (a.summary().unwrap(), b.summary().unwrap());
        // Two computations of the same moments: rounding only.
        for (x, y, name) in [
            (sa.mean_x, sb.mean_x, "mean x"),
            (sa.mean_y, sb.mean_y, "mean y"),
            (sa.sxx, sb.sxx, "sxx"),
            (sa.sxy, sb.sxy, "sxy"),
            (sa.syy, sb.syy, "syy"),
        ] {
            let r = rel(x, y);
            assert!(r < 1e-12, "n = {n}: {name} {x} vs {y}, rel {r:e}");
        }
    }
}

#[test]
fn pending_counts_the_open_block() {
    let (xs, ys) = offset_data(BLOCK + 20);
    let mut a = LeanMoments::new();
    let mut feed = a.feed();
    for (i, (&x, &y)) in xs.iter().zip(&ys).enumerate() {
        feed.push(x, y).unwrap();
        // The first 8 pairs fit the frame (no block); then blocks of BLOCK.
        let want = if i < 8 { 0 } else { (i - 8) % BLOCK + 1 };
        assert_eq!(feed.pending(), want, "after pair {}", i + 1);
    }
    drop(feed);
    assert_eq!(a.count(), xs.len() as u64);
}

#[test]
fn refused_pairs_change_nothing() {
    let (xs, ys) = offset_data(BLOCK + 300);
    let clean = fed(&xs, &ys);
    let mut a = LeanMoments::new();
    let mut feed = a.feed();
    let bad = [
        (f64::NAN, 1.0),
        (1.0, f64::NAN),
        (f64::INFINITY, 1.0),
        (5e8, f64::NEG_INFINITY),
    ];
    for (i, (&x, &y)) in xs.iter().zip(&ys).enumerate() {
        // In the stage, a held pair's turn, a lane pair's turn, and right
        // after a full block (the fold's path).
        if [3, 20, 21, 8 + BLOCK].contains(&i) {
            for (bx, by) in bad {
                assert_eq!(feed.push(bx, by), Err(MomentsError::NonFinite { index: 0 }));
            }
        }
        feed.push(x, y).unwrap();
    }
    drop(feed);
    assert_eq!(a, clean);
    assert_eq!(a.save_to_vec(), clean.save_to_vec());
}

#[test]
fn pairs_outside_the_bounds_take_the_slow_way_like_push() {
    let (xs, ys) = offset_data(600);
    // Finite pairs `push` refuses (overflow) or takes only by its checked
    // path; the feed must agree on each, and a refusal changes nothing.
    for (bx, by) in [(1e300, 1.0), (5e8, 1e300), (-1e300, -1e300), (1e95, 2.0)] {
        let mut a = LeanMoments::new();
        let mut b = LeanMoments::new();
        let mut feed = a.feed();
        for i in 0..300 {
            feed.push(xs[i], ys[i]).unwrap();
            b.push(xs[i], ys[i]).unwrap();
        }
        let before = {
            let mut t = b;
            t.push(bx, by).map(|_| t)
        };
        let got = feed.push(bx, by);
        assert_eq!(got.is_ok(), before.is_ok(), "pair ({bx}, {by})");
        if got.is_ok() {
            b.push(bx, by).unwrap();
        }
        for i in 300..600 {
            feed.push(xs[i], ys[i]).unwrap();
            b.push(xs[i], ys[i]).unwrap();
        }
        drop(feed);
        assert_eq!(a.count(), b.count(), "pair ({bx}, {by})");
        let (sa, sb) = (a.summary().unwrap(), b.summary().unwrap());
        let r = rel(sa.sxx, sb.sxx).max(rel(sa.sxy, sb.sxy));
        assert!(r < 1e-9, "pair ({bx}, {by}): rel {r:e}");
        if got.is_err() {
            // As if the pair had never been offered.
            let mut c = LeanMoments::new();
            let mut g = c.feed();
            for i in 0..600 {
                g.push(xs[i], ys[i]).unwrap();
            }
            drop(g);
            assert_eq!(a, c, "pair ({bx}, {by})");
        }
    }
}

#[test]
fn slope_free_start_and_open_pending_block() {
    // All x equal for the first 40 pairs (the frame slope stays free),
    // then a spread: the feed passes pairs to `push` until a block can open.
    let xs: Vec<f64> = (0..5000)
        .map(|i| {
            if i < 40 {
                12.5
            } else {
                12.5 + (i % 50) as f64 * 0.5
            }
        })
        .collect();
    let ys: Vec<f64> = xs
        .iter()
        .enumerate()
        .map(|(i, x)| 4.0 * x + ((i * 3) % 11) as f64 * 0.125)
        .collect();
    check_exact(&xs, &ys, "slope-free start");
    // A feed on an accumulator with an open pending block folds it first.
    let mut a = pushed(&xs[..100], &ys[..100]);
    let mut feed = a.feed();
    for i in 100..5000 {
        feed.push(xs[i], ys[i]).unwrap();
    }
    drop(feed);
    let e = ExactMoments::new(&xs, &ys, None);
    let s = a.summary().unwrap();
    assert_eq!(s.count, 5000);
    assert!(rel(s.sxy, f(&e.sxy)) < 1e-11);
    assert!(rel(s.sxx, f(&e.sxx)) < 1e-11);
}

#[test]
fn norris_through_the_feed_keeps_the_certified_digits() {
    // NIST StRD Norris, certified values from CERTIFIED.json; the same
    // 12-digit floor as the pushed and extended paths' reference checks.
    let Some(dir) = nist::nist_dir_or_skip("feed norris") else {
        return;
    };
    let c = nist::certified(&dir, "Norris").unwrap();
    let rows = nist::read_dat(&dir.join(&c.file)).unwrap();
    let ys: Vec<f64> = rows.iter().map(|r| r[0]).collect();
    let xs: Vec<f64> = rows.iter().map(|r| r[1]).collect();
    let fit = fed(&xs, &ys).fit().unwrap();
    for (got, want, name) in [
        (fit.intercept, c.beta[0], "intercept"),
        (fit.slope, c.beta[1], "slope"),
        (fit.se_intercept, c.sd_beta[0], "sd intercept"),
        (fit.se_slope, c.sd_beta[1], "sd slope"),
        (fit.residual_sd, c.residual_sd, "residual sd"),
        (fit.r_squared, c.r_squared, "r squared"),
    ] {
        let l = nist::lre(got, want);
        assert!(l >= 12.0, "Norris {name}: {got} vs {want}, LRE {l:.1}");
    }
}
