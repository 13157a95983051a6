//! Exact rational reference computations for tests: every double input is
//! converted exactly, sums are carried without rounding, and only the final
//! quantity is rounded to f64. This is the independent ground truth the
//! accumulator is compared with.
#![allow(dead_code, clippy::expect_used)]

use num_bigint::BigInt;
use num_rational::BigRational;
use num_traits::{ToPrimitive, Zero};

/// Exact rational value of a finite double.
pub fn q(x: f64) -> BigRational {
    BigRational::from_float(x).expect("finite")
}

/// Nearest double (to within an ulp) of an exact rational.
pub fn f(x: &BigRational) -> f64 {
    // Scale numerator and denominator to keep the conversion accurate.
    let n = x.numer();
    let d = x.denom();
    if n.is_zero() {
        return 0.0;
    }
    let shift = (n.bits() as i64) - (d.bits() as i64) - 60;
    let scaled = if shift > 0 {
        BigRational::new(n.clone(), d.clone() << (shift as usize))
    } else {
        BigRational::new(n.clone() << ((-shift) as usize), d.clone())
    };
    let int: BigInt = scaled.to_integer();
    int.to_f64().expect("fits") * 2f64.powi(shift as i32)
}

/// Exact weighted moments of paired data.
pub struct ExactMoments {
    pub w: BigRational,
    pub mean_x: BigRational,
    pub mean_y: BigRational,
    pub sxx: BigRational,
    pub sxy: BigRational,
    pub syy: BigRational,
}

impl ExactMoments {
    pub fn new(xs: &[f64], ys: &[f64], ws: Option<&[f64]>) -> Self {
        let one = BigRational::from_integer(BigInt::from(1));
        let wq: Vec<BigRational> = match ws {
            Some(w) => w.iter().map(|v| q(*v)).collect(),
            None => vec![one; xs.len()],
        };
        let xq: Vec<BigRational> = xs.iter().map(|v| q(*v)).collect();
        let yq: Vec<BigRational> = ys.iter().map(|v| q(*v)).collect();
        let w: BigRational = wq.iter().cloned().sum();
        let mx: BigRational = xq.iter().zip(&wq).map(|(x, w)| x * w).sum::<BigRational>() / &w;
        let my: BigRational = yq.iter().zip(&wq).map(|(y, w)| y * w).sum::<BigRational>() / &w;
        let mut sxx = BigRational::zero();
        let mut sxy = BigRational::zero();
        let mut syy = BigRational::zero();
        for i in 0..xs.len() {
            let dx = &xq[i] - &mx;
            let dy = &yq[i] - &my;
            sxx += &wq[i] * &dx * &dx;
            sxy += &wq[i] * &dx * &dy;
            syy += &wq[i] * &dy * &dy;
        }
        ExactMoments {
            w,
            mean_x: mx,
            mean_y: my,
            sxx,
            sxy,
            syy,
        }
    }

    pub fn slope(&self) -> BigRational {
        &self.sxy / &self.sxx
    }

    pub fn intercept(&self) -> BigRational {
        &self.mean_y - self.slope() * &self.mean_x
    }

    pub fn sse(&self) -> BigRational {
        &self.syy - &self.sxy * &self.sxy / &self.sxx
    }
}

/// Relative difference `|a − b| / |b|` (absolute when `b == 0`).
pub fn rel(a: f64, b: f64) -> f64 {
    if b == 0.0 {
        a.abs()
    } else {
        (a - b).abs() / b.abs()
    }
}
