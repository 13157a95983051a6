//! The lean push's pending block: results independent of when queries
//! run, saved and restored mid-block without a trace, refusals that leave
//! an open block untouched, and accuracy against exact rational moments on
//! data that stress the block's shifted sums (offset data, a drifting ramp,
//! an outlier as a block's first pair).
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)]

#[path = "support/exact.rs"]
mod exact;
#[path = "support/lean_check.rs"]
mod lean_check;

use lean_check::{assert_near_exact, offset_data};
use plumbfit::moments::PENDING_BLOCK;
use plumbfit::{FitOptions, LeanMoments, MomentsError};

fn pushed(xs: &[f64], ys: &[f64]) -> LeanMoments {
    let mut a = LeanMoments::new();
    for (&x, &y) in xs.iter().zip(ys) {
        a.push(x, y).unwrap();
    }
    a
}

#[test]
fn queries_do_not_change_later_results() {
    let (xs, ys) = offset_data(3 * PENDING_BLOCK + 41);
    let quiet = pushed(&xs, &ys);
    let mut busy = LeanMoments::new();
    for (i, (&x, &y)) in xs.iter().zip(&ys).enumerate() {
        busy.push(x, y).unwrap();
        if i % 37 == 5 {
            // Every kind of read: each folds on a copy.
            let _ = busy.summary();
            let _ = busy.slope_intercept();
            let _ = busy.fit_with(&FitOptions::default());
            let _ = busy.save_to_vec();
            assert_eq!(busy.count(), i as u64 + 1);
        }
    }
    assert_eq!(busy, quiet);
    assert_eq!(busy.save_to_vec(), quiet.save_to_vec());
}

#[test]
fn restore_mid_block_continues_bit_for_bit() {
    let (xs, ys) = offset_data(2 * PENDING_BLOCK + 30);
    let whole = pushed(&xs, &ys);
    // In the stage, at the block's first pair, inside it, at a full block,
    // just after a fold.
    for cut in [3, 8, 9, 10, 100, 8 + PENDING_BLOCK, 9 + PENDING_BLOCK] {
        let head = pushed(&xs[..cut], &ys[..cut]);
        let mut back = LeanMoments::restore(&head.save_to_vec()).unwrap();
        assert_eq!(back, head, "cut {cut}");
        for (&x, &y) in xs[cut..].iter().zip(&ys[cut..]) {
            back.push(x, y).unwrap();
        }
        assert_eq!(back, whole, "cut {cut}");
    }
}

#[test]
fn refused_pushes_leave_an_open_block_unchanged() {
    let (xs, ys) = offset_data(20);
    let a = pushed(&xs, &ys);
    // 12 pairs pending (the block opened at the 9th).
    assert_eq!(
        u16::from_le_bytes([a.save_to_vec()[26], a.save_to_vec()[27]]),
        12
    );
    for (x, y) in [
        (f64::NAN, 1.0),
        (1.0, f64::NAN),
        (f64::INFINITY, 1.0),
        (5e8, f64::NEG_INFINITY),
    ] {
        let mut b = a;
        assert_eq!(b.push(x, y), Err(MomentsError::NonFinite { index: 0 }));
        assert_eq!(b, a);
        assert_eq!(b.save_to_vec(), a.save_to_vec());
    }
    // A finite pair far outside the block's bounds leaves the block by the
    // checked path: accepted or refused, never a partial update.
    for (x, y) in [(1e300, 1.0), (5e8, 1e300), (-1e300, -1e300)] {
        let mut b = a;
        match b.push(x, y) {
            Ok(()) => assert_eq!(b.count(), 21),
            Err(e) => {
                assert_eq!(e, MomentsError::Overflow);
                assert_eq!(b, a);
            }
        }
    }
}

/// Pushes against exact rationals. Tolerances: the block sums are about the
/// block's first pair, so a block's centred moments can lose up to a factor
/// `PENDING_BLOCK` (2^8) of relative precision to cancellation; with about
/// 2^-52 per rounding and sums of a few thousand terms, 1e-11 relative
/// leaves a margin of 10 over that worst case on every figure below.
fn check_exact(xs: &[f64], ys: &[f64], what: &str) {
    assert_near_exact(&pushed(xs, ys), xs, ys, 1e-11, what);
}

#[test]
fn offset_data_matches_exact_moments() {
    let (xs, ys) = offset_data(2000);
    check_exact(&xs, &ys, "offset");
}

#[test]
fn drifting_ramp_matches_exact_moments() {
    // x a time ramp: every block's pairs lie far from the running mean.
    let xs: Vec<f64> = (0..3000).map(|i| 1e4 + i as f64).collect();
    let ys: Vec<f64> = xs
        .iter()
        .enumerate()
        .map(|(i, x)| 0.001 * x + 3.0 + ((i * 7) % 5) as f64 * 0.03125)
        .collect();
    check_exact(&xs, &ys, "ramp");
}

#[test]
fn outlier_opening_a_block_matches_exact_moments() {
    // The 9th pair opens the first block and lies 1e6 spreads away; the
    // block's sums about it cancel by nearly the full factor 2^8.
    let (mut xs, mut ys) = offset_data(600);
    xs[8] += 2.5e7;
    ys[8] -= 4.0e7;
    check_exact(&xs, &ys, "outlier");
}
