//! Mixed operation sequences (push, weighted push, extend, merge, forget,
//! save/restore) on the line accumulator against an exact rational
//! reference, and bit-exact save/restore at every step.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)]

#[path = "support/exact.rs"]
mod exact;

use exact::{f, q};
use num_rational::BigRational;
use num_traits::Zero;
use plumbfit::state::StateTier;
use plumbfit::{Full, Lean, PairMoments};
use proptest::prelude::*;

/// Relative tolerance for the means, Sxx, slope and Σw, and for Sxy and
/// Syy relative to √(Sxx·Syy): at most ~200 centred updates, merges and
/// forgetting steps each add a few ulps (≈ 1e-16) times the condition of
/// the data (x spread over ±100, so below 1e3); 1e-10 leaves a margin of
/// more than two orders of magnitude over that bound.
const TOL: f64 = 1e-10;

#[derive(Clone, Debug)]
enum Op {
    Push(f64, f64),
    PushWeighted(f64, f64, f64),
    Extend(Vec<(f64, f64)>),
    /// Merge an accumulator built from these pairs (forgotten once by the
    /// factor if given) after the current ones.
    Merge(Vec<(f64, f64)>, Option<f64>),
    Forget(f64),
    SaveRestore,
}

/// Readings on a 1/64 grid (exact in binary) around a line with noise.
fn reading() -> impl Strategy<Value = (f64, f64)> {
    (-6400i32..6400, -640i32..640).prop_map(|(i, e)| {
        let x = i as f64 / 64.0;
        (x, 2.5 * x - 7.0 + e as f64 / 64.0)
    })
}

fn lambda() -> impl Strategy<Value = f64> {
    prop_oneof![Just(0.5), Just(0.75), Just(0.875), Just(1.0)]
}

fn op() -> impl Strategy<Value = Op> {
    prop_oneof![
        4 => reading().prop_map(|(x, y)| Op::Push(x, y)),
        2 => (reading(), prop_oneof![Just(0.25), Just(0.5), Just(2.0), Just(3.0)])
            .prop_map(|((x, y), w)| Op::PushWeighted(x, y, w)),
        2 => prop::collection::vec(reading(), 1..40).prop_map(Op::Extend),
        1 => (prop::collection::vec(reading(), 1..30), prop::option::of(lambda()))
            .prop_map(|(v, l)| Op::Merge(v, l)),
        1 => lambda().prop_map(Op::Forget),
        1 => Just(Op::SaveRestore),
    ]
}

/// Exact reference: every pair with its exact (rational) weight.
#[derive(Default)]
struct Reference {
    pairs: Vec<(BigRational, BigRational, BigRational)>,
}

impl Reference {
    fn add(&mut self, x: f64, y: f64, w: f64) {
        self.pairs.push((q(x), q(y), q(w)));
    }
    fn forget(&mut self, l: f64) {
        let l = q(l);
        for p in self.pairs.iter_mut() {
            p.2 = &p.2 * &l;
        }
    }
    /// (Σw, mean x, mean y, Sxx, Sxy, Syy), exact then rounded.
    fn moments(&self) -> [f64; 6] {
        let mut w = BigRational::zero();
        let mut sx = BigRational::zero();
        let mut sy = BigRational::zero();
        for (x, y, wi) in &self.pairs {
            w += wi;
            sx += wi * x;
            sy += wi * y;
        }
        let mx = &sx / &w;
        let my = &sy / &w;
        let (mut sxx, mut sxy, mut syy) = (
            BigRational::zero(),
            BigRational::zero(),
            BigRational::zero(),
        );
        for (x, y, wi) in &self.pairs {
            let dx = x - &mx;
            let dy = y - &my;
            sxx += wi * &dx * &dx;
            sxy += wi * &dx * &dy;
            syy += wi * &dy * &dy;
        }
        [f(&w), f(&mx), f(&my), f(&sxx), f(&sxy), f(&syy)]
    }
}

fn rel(a: f64, b: f64, scale: f64) -> f64 {
    (a - b).abs() / scale.max(f64::MIN_POSITIVE)
}

fn run<T: StateTier>(ops: &[Op]) -> Result<(), TestCaseError> {
    let mut acc = PairMoments::<T>::new();
    let mut reference = Reference::default();
    for op in ops {
        match op {
            Op::Push(x, y) => {
                acc.push(*x, *y).unwrap();
                reference.add(*x, *y, 1.0);
            }
            Op::PushWeighted(x, y, w) => {
                acc.push_weighted(*x, *y, *w).unwrap();
                reference.add(*x, *y, *w);
            }
            Op::Extend(v) => {
                let (xs, ys): (Vec<f64>, Vec<f64>) = v.iter().copied().unzip();
                acc.extend(&xs, &ys).unwrap();
                for (x, y) in v {
                    reference.add(*x, *y, 1.0);
                }
            }
            Op::Merge(v, l) => {
                let mut other = PairMoments::<T>::new();
                let mut oref = Reference::default();
                for (x, y) in v {
                    other.push(*x, *y).unwrap();
                    oref.add(*x, *y, 1.0);
                }
                if let Some(l) = l {
                    other.forget(*l).unwrap();
                    oref.forget(*l);
                }
                // The other side travels as bytes, as from another device.
                let other = PairMoments::<T>::restore(&other.save_to_vec()).unwrap();
                acc.merge(&other).unwrap();
                reference.pairs.extend(oref.pairs);
            }
            Op::Forget(l) => {
                acc.forget(*l).unwrap();
                reference.forget(*l);
            }
            Op::SaveRestore => {
                let bytes = acc.save_to_vec();
                let back = PairMoments::<T>::restore(&bytes).unwrap();
                prop_assert!(back == acc);
                prop_assert_eq!(back.save_to_vec(), bytes);
                acc = back;
            }
        }
        prop_assert_eq!(acc.count(), reference.pairs.len() as u64);
    }
    let [w, mx, my, sxx, sxy, syy] = reference.moments();
    let s = acc.summary().unwrap();
    prop_assert!(
        rel(s.weight_sum, w, w) <= TOL,
        "weight sum {} vs {}",
        s.weight_sum,
        w
    );
    let xs = mx.abs().max((sxx / w).sqrt());
    let ys = my.abs().max((syy / w).sqrt());
    prop_assert!(
        rel(s.mean_x, mx, xs) <= TOL,
        "mean x {} vs {}",
        s.mean_x,
        mx
    );
    prop_assert!(
        rel(s.mean_y, my, ys) <= TOL,
        "mean y {} vs {}",
        s.mean_y,
        my
    );
    prop_assert!(rel(s.sxx, sxx, sxx) <= TOL, "sxx {} vs {}", s.sxx, sxx);
    let cross = (sxx * syy).sqrt();
    prop_assert!(rel(s.sxy, sxy, cross) <= TOL, "sxy {} vs {}", s.sxy, sxy);
    prop_assert!(rel(s.syy, syy, syy) <= TOL, "syy {} vs {}", s.syy, syy);
    if sxx / w > 1.0 {
        let (b, _) = acc.slope_intercept().unwrap();
        let want = sxy / sxx;
        prop_assert!(
            rel(b, want, want.abs().max(1.0)) <= TOL,
            "slope {} vs {}",
            b,
            want
        );
    }
    Ok(())
}

/// 64 cases by default; CI raises it with `PROPTEST_CASES`.
fn cases() -> u32 {
    std::env::var("PROPTEST_CASES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(64)
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(cases()))]

    #[test]
    fn lean_sequences_match_exact_moments(
        first in reading(),
        ops in prop::collection::vec(op(), 1..40),
    ) {
        let mut all = vec![Op::Push(first.0, first.1)];
        all.extend(ops);
        run::<Lean>(&all)?;
    }

    #[test]
    fn full_sequences_match_exact_moments(
        first in reading(),
        ops in prop::collection::vec(op(), 1..40),
    ) {
        let mut all = vec![Op::Push(first.0, first.1)];
        all.extend(ops);
        run::<Full>(&all)?;
    }
}
