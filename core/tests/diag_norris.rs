//! Residual power sums from the full-tier accumulator on NIST StRD Norris
//! (data: NIST StRD, `Norris.dat`), against an exact rational computation
//! from the decimal inputs as doubles.
//!
//! Norris is a near-perfect fit (R² = 0.999994): from raw co-moments Σe⁴
//! keeps about 5 digits (NUMERICS A4); the accumulator's provisional frame
//! must keep at least 12 significant digits of Σe², Σe³ and Σe⁴, whether
//! the pairs are extended, pushed one by one, or merged from three parts.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests stop loudly

#[path = "support/exact.rs"]
mod exact;
#[path = "common/nist.rs"]
mod nist;

use exact::{f, q};
use num_rational::BigRational;
use num_traits::Zero;
use plumbfit::{diag, FullMoments};

/// Required significant digits (log relative error) of each power sum.
const MIN_DIGITS: f64 = 12.0;

fn lre(got: f64, want: f64) -> f64 {
    if got == want {
        return 16.0;
    }
    (-((got - want).abs() / want.abs()).log10()).min(16.0)
}

#[test]
fn norris_residual_power_sums_keep_twelve_digits() {
    let Some(dir) = nist::nist_dir_or_skip("diag_norris") else {
        return;
    };
    let rows = nist::read_dat(&dir.join("Norris.dat")).unwrap();
    let ys: Vec<f64> = rows.iter().map(|r| r[0]).collect();
    let xs: Vec<f64> = rows.iter().map(|r| r[1]).collect();
    assert_eq!(xs.len(), 36);

    // Exact: residuals of the exact least-squares line through the doubles.
    let n = BigRational::from_integer(xs.len().into());
    let (mut sx, mut sy) = (BigRational::zero(), BigRational::zero());
    for (x, y) in xs.iter().zip(&ys) {
        sx += q(*x);
        sy += q(*y);
    }
    let (mx, my) = (&sx / &n, &sy / &n);
    let (mut sxx, mut sxy) = (BigRational::zero(), BigRational::zero());
    for (x, y) in xs.iter().zip(&ys) {
        let dx = q(*x) - &mx;
        sxy += &dx * (q(*y) - &my);
        sxx += &dx * &dx;
    }
    let b = sxy / sxx;
    let (mut s2, mut s3, mut s4) = (
        BigRational::zero(),
        BigRational::zero(),
        BigRational::zero(),
    );
    for (x, y) in xs.iter().zip(&ys) {
        let e = (q(*y) - &my) - &b * (q(*x) - &mx);
        let e2 = &e * &e;
        s3 += &e2 * &e;
        s4 += &e2 * &e2;
        s2 += e2;
    }
    let want = [f(&s2), f(&s3), f(&s4)];

    let mut extended = FullMoments::new();
    extended.extend(&xs, &ys).unwrap();
    let mut pushed = FullMoments::new();
    for (x, y) in xs.iter().zip(&ys) {
        pushed.push(*x, *y).unwrap();
    }
    let mut merged = FullMoments::new();
    for part in [0..12, 12..24, 24..36] {
        let mut p = FullMoments::new();
        p.extend(&xs[part.clone()], &ys[part]).unwrap();
        merged.merge(&p).unwrap();
    }
    for (how, acc) in [("extend", extended), ("push", pushed), ("merge3", merged)] {
        let s = diag::stream_checks(&acc).unwrap().shape;
        let got = [s.sum_sq, s.sum_cube, s.sum_fourth];
        let digits: Vec<f64> = got.iter().zip(&want).map(|(g, w)| lre(*g, *w)).collect();
        println!(
            "Norris {how:<6} LRE Σe² {:.1}  Σe³ {:.1}  Σe⁴ {:.1}",
            digits[0], digits[1], digits[2]
        );
        for (name, d) in ["Σe²", "Σe³", "Σe⁴"].iter().zip(&digits) {
            assert!(*d >= MIN_DIGITS, "Norris {how}: {name} has {d:.1} digits");
        }
    }
}
