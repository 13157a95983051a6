//! Every refused input returns its typed error and leaves the accumulator
//! bit-for-bit as it was (compared with `PartialEq` on the whole state and
//! with the persisted summary).
// Test helpers unwrap: a failure is a failed test with its message.
#![allow(clippy::unwrap_used)]

use plumbfit::{FitOptions, FullMoments, LeanMoments, LineError, MomentsError, PairMoments, Tier};

fn seeded<T: Tier>(n: usize) -> PairMoments<T> {
    let mut a = PairMoments::<T>::new();
    for i in 0..n {
        let x = i as f64 * 0.5;
        a.push(x, 2.0 * x + (i % 3) as f64 * 0.1).unwrap();
    }
    a
}

/// Runs `op` on a copy of `acc` and checks the error and that nothing moved.
fn refused<T: Tier>(
    acc: &PairMoments<T>,
    want: MomentsError,
    op: impl FnOnce(&mut PairMoments<T>) -> Result<(), MomentsError>,
) {
    let mut t = *acc;
    assert_eq!(op(&mut t), Err(want));
    assert_eq!(&t, acc, "state changed after {want:?}");
}

fn each_state<T: Tier>() -> Vec<PairMoments<T>> {
    // Empty, still staging (fewer pairs than the frame needs), and framed.
    vec![PairMoments::<T>::new(), seeded::<T>(3), seeded::<T>(700)]
}

fn check_tier<T: Tier>() {
    for acc in each_state::<T>() {
        for bad in [f64::NAN, f64::INFINITY, f64::NEG_INFINITY] {
            refused(&acc, MomentsError::NonFinite { index: 0 }, |a| {
                a.push(bad, 1.0)
            });
            refused(&acc, MomentsError::NonFinite { index: 0 }, |a| {
                a.push(1.0, bad)
            });
            refused(&acc, MomentsError::InvalidWeight { index: 0 }, |a| {
                a.push_weighted(1.0, 1.0, bad)
            });
            // The offending index is named inside a long slice, past the first chunk.
            let mut xs: Vec<f64> = (0..1500).map(|i| i as f64).collect();
            let ys = xs.clone();
            xs[1234] = bad;
            refused(&acc, MomentsError::NonFinite { index: 1234 }, |a| {
                a.extend(&xs, &ys)
            });
            let xs: Vec<f64> = (0..5).map(|i| i as f64).collect();
            let mut ys = xs.clone();
            ys[3] = bad;
            refused(&acc, MomentsError::NonFinite { index: 3 }, |a| {
                a.extend(&xs, &ys)
            });
        }
        for w in [0.0, -1.0, -0.0] {
            refused(&acc, MomentsError::InvalidWeight { index: 0 }, |a| {
                a.push_weighted(1.0, 1.0, w)
            });
            let xs: Vec<f64> = (0..2000).map(|i| i as f64).collect();
            let mut ws = vec![1.0; 2000];
            ws[1999] = w;
            refused(&acc, MomentsError::InvalidWeight { index: 1999 }, |a| {
                a.extend_weighted(&xs, &xs, &ws)
            });
        }
        refused(
            &acc,
            MomentsError::LengthMismatch {
                x_len: 3,
                other_len: 2,
            },
            |a| a.extend(&[1.0, 2.0, 3.0], &[1.0, 2.0]),
        );
        refused(
            &acc,
            MomentsError::LengthMismatch {
                x_len: 2,
                other_len: 1,
            },
            |a| a.extend_weighted(&[1.0, 2.0], &[1.0, 2.0], &[1.0]),
        );
        refused(&acc, MomentsError::EmptyInput, |a| a.extend(&[], &[]));
        for l in [0.0, -0.5, 1.5, f64::NAN, f64::INFINITY] {
            refused(&acc, MomentsError::InvalidForgetting, |a| a.forget(l));
        }
        // Huge magnitudes: 1e300 squared overflows the second moments.
        let xs = vec![1e300, -1e300, 3e300, 1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0];
        refused(&acc, MomentsError::Overflow, |a| a.extend(&xs, &xs));
    }
}

#[test]
fn lean_refusals_leave_state_unchanged() {
    check_tier::<plumbfit::Lean>();
}

#[test]
fn full_refusals_leave_state_unchanged() {
    check_tier::<plumbfit::Full>();
}

#[test]
fn a_single_failing_push_of_a_huge_value_changes_nothing() {
    let acc = seeded::<plumbfit::Lean>(20);
    refused(&acc, MomentsError::Overflow, |a| a.push(1e300, 1e300));
    // While staging, the overflow shows when the frame is fitted: the push
    // that fills the stage is refused and the staged pairs stay as they were.
    let staged = seeded::<plumbfit::Lean>(plumbfit::moments::STAGE - 1);
    refused(&staged, MomentsError::Overflow, |a| a.push(1e300, 1e300));
    let acc = seeded::<plumbfit::Full>(20);
    // 1e100⁴ overflows only the fourth-order moments of the full tier.
    refused(&acc, MomentsError::Overflow, |a| a.push(1e100, 1.0));
    let mut lean = seeded::<plumbfit::Lean>(20);
    assert!(lean.push(1e100, 1.0).is_ok(), "the lean tier holds 1e200");
}

#[test]
fn merge_overflow_leaves_state_unchanged() {
    let acc = seeded::<plumbfit::Lean>(30);
    // Each side alone is representable (no x spread); together the spread
    // term W_A·W_B/W·(2e200)² cannot be.
    let mut hi = LeanMoments::new();
    hi.extend(&[1e200; 10], &[1.0; 10]).unwrap();
    let mut lo = LeanMoments::new();
    lo.extend(&[-1e200; 10], &[1.0; 10]).unwrap();
    refused(&hi, MomentsError::Overflow, |a| a.merge(&lo));
    let mut t = acc;
    t.merge(&hi).unwrap_err();
    assert_eq!(t, acc);
}

#[test]
fn fit_errors_name_their_condition() {
    let mut a = LeanMoments::new();
    assert_eq!(a.fit(), Err(LineError::TooFewPoints { needed: 3, have: 0 }));
    a.push(1.0, 2.0).unwrap();
    a.push(2.0, 3.0).unwrap();
    assert_eq!(a.fit(), Err(LineError::TooFewPoints { needed: 3, have: 2 }));
    // Two points are enough for the line itself (no inference).
    assert_eq!(a.slope_intercept(), Ok((1.0, 1.0)));
    // Through the origin, two points leave one residual degree of freedom.
    assert!(a.fit_with(&FitOptions::through_origin()).is_ok());
    let mut c = LeanMoments::new();
    c.extend(
        &[4.0; 12],
        &[
            1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0, 9.0, 10.0, 11.0, 12.0,
        ],
    )
    .unwrap();
    assert_eq!(c.fit(), Err(LineError::NoSpread));
    assert_eq!(c.slope_intercept(), Err(LineError::NoSpread));
    let fit = seeded::<plumbfit::Lean>(10).fit().unwrap();
    assert_eq!(fit.mean_band(1.0, 1.0), Err(LineError::InvalidLevel));
    assert_eq!(fit.mean_band(1.0, 0.0), Err(LineError::InvalidLevel));
    assert_eq!(fit.prediction(1.0, 0, 0.95), Err(LineError::InvalidCount));
    assert_eq!(fit.prediction(f64::NAN, 1, 0.95), Err(LineError::NonFinite));
}

#[test]
fn forgetting_underflow_is_refused() {
    let acc = seeded::<plumbfit::Lean>(50);
    let mut t = acc;
    let mut res = Ok(());
    for _ in 0..2000 {
        res = t.forget(1e-3);
        if res.is_err() {
            break;
        }
    }
    assert_eq!(
        res,
        Err(MomentsError::Overflow),
        "weights must not silently vanish"
    );
    let _ = FullMoments::new();
}

#[test]
fn error_codes_are_stable() {
    // The C and Python doors expose these numbers; they must never change.
    assert_eq!(MomentsError::NonFinite { index: 0 }.code(), 1);
    assert_eq!(MomentsError::InvalidWeight { index: 0 }.code(), 2);
    assert_eq!(
        MomentsError::LengthMismatch {
            x_len: 0,
            other_len: 0
        }
        .code(),
        3
    );
    assert_eq!(MomentsError::EmptyInput.code(), 4);
    assert_eq!(MomentsError::InvalidForgetting.code(), 5);
    assert_eq!(MomentsError::Overflow.code(), 100);
    assert_eq!(LineError::TooFewPoints { needed: 0, have: 0 }.code(), 101);
    assert_eq!(LineError::NoSpread.code(), 102);
    assert_eq!(LineError::InvalidLevel.code(), 6);
    assert_eq!(LineError::InvalidCount.code(), 7);
}

#[test]
fn errors_are_send_sync_static() {
    fn check<E: std::error::Error + Send + Sync + 'static>() {}
    check::<MomentsError>();
    check::<LineError>();
}
