//! Shared helpers for the calibration tests: the reference-data reader for
//! the load-cell file and exact rational least squares used as the
//! independent computation.
#![allow(dead_code)]
// each test binary uses a different subset
// Test helpers: a malformed reference file should stop the test loudly.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)]
#![allow(clippy::needless_range_loop)] // index loops mirror the elimination

use num_bigint::BigInt;
use num_rational::BigRational;
use num_traits::{One, Signed, ToPrimitive, Zero};
use std::path::{Path, PathBuf};

/// Folder holding `nist-strd/`: `$PLUMBFIT_REFDATA`, else the shared folder
/// beside the repository.
fn refdata_root() -> PathBuf {
    match std::env::var_os("PLUMBFIT_REFDATA") {
        Some(p) => PathBuf::from(p),
        None => Path::new(env!("CARGO_MANIFEST_DIR")).join("../../shared/reference-data"),
    }
}

/// `(x, y)` columns of a NIST StRD file with one predictor, or `None` after
/// a loud skip notice (a failure under `CI=true`).
pub fn strd_xy(name: &str) -> Option<(Vec<f64>, Vec<f64>)> {
    let path = refdata_root().join("nist-strd").join(format!("{name}.dat"));
    let text = match std::fs::read_to_string(&path) {
        Ok(t) => t,
        Err(e) => {
            if std::env::var("CI").map(|v| v == "true").unwrap_or(false) {
                panic!(
                    "reference data not found at {} (CI=true): {e}",
                    path.display()
                );
            }
            eprintln!(
                "SKIPPED: {} not found ({e}); set PLUMBFIT_REFDATA",
                path.display()
            );
            return None;
        }
    };
    let lines: Vec<&str> = text.lines().map(|l| l.trim_end_matches('\r')).collect();
    // "Data (lines a to b)" in the header locates the rows.
    let spec = lines
        .iter()
        .find(|l| l.contains("Data") && l.contains("(lines"))?;
    let nums: Vec<usize> = spec
        .split(|c: char| !c.is_ascii_digit())
        .filter(|s| !s.is_empty())
        .filter_map(|s| s.parse().ok())
        .collect();
    let (a, b) = (nums[0], nums[1]);
    let (mut xs, mut ys) = (Vec::new(), Vec::new());
    for l in &lines[a - 1..b] {
        let v: Vec<f64> = l.split_whitespace().map(|t| t.parse().unwrap()).collect();
        ys.push(v[0]);
        xs.push(v[1]);
    }
    Some((xs, ys))
}

/// Exact rational value of a double.
pub fn q(v: f64) -> BigRational {
    BigRational::from_float(v).unwrap()
}

/// Exact rational value of a decimal string such as "0.11019" or "-3.5e-3".
pub fn qdec(s: &str) -> BigRational {
    let s = s.trim();
    let (mant, exp) = match s.find(['e', 'E']) {
        Some(i) => (&s[..i], s[i + 1..].parse::<i32>().unwrap()),
        None => (s, 0),
    };
    let neg = mant.starts_with('-');
    let mant = mant.trim_start_matches(['-', '+']);
    let (int, frac) = match mant.find('.') {
        Some(i) => (&mant[..i], &mant[i + 1..]),
        None => (mant, ""),
    };
    let all = format!("{int}{frac}");
    let digits: BigInt = if all.is_empty() {
        BigInt::zero()
    } else {
        all.parse().unwrap()
    };
    let scale = exp - frac.len() as i32;
    let ten = BigRational::from_integer(BigInt::from(10));
    let mut r = BigRational::from_integer(digits);
    for _ in 0..scale.unsigned_abs() {
        r = if scale > 0 { r * &ten } else { r / &ten };
    }
    if neg {
        -r
    } else {
        r
    }
}

/// A rational to a double (correct to a few ulps; ample for tolerances of
/// 1e-12 and looser).
pub fn f(r: &BigRational) -> f64 {
    r.to_f64().unwrap()
}

/// Square root of a positive rational, taken in double after the exact
/// computation (one rounding; ample for tolerances of 1e-12 and looser).
pub fn sqrt_f(r: &BigRational) -> f64 {
    f(r).sqrt()
}

/// Exact weighted least-squares straight line.
#[derive(Clone, Debug)]
pub struct ExactLine {
    pub n: BigRational,
    pub w: BigRational,
    pub xbar: BigRational,
    pub ybar: BigRational,
    pub sxx: BigRational,
    pub slope: BigRational,
    pub intercept: BigRational,
    pub sse: BigRational,
}

pub fn exact_line(xs: &[BigRational], ys: &[BigRational], ws: Option<&[BigRational]>) -> ExactLine {
    let one = BigRational::one();
    let wt = |i: usize| ws.map_or(one.clone(), |w| w[i].clone());
    let mut w = BigRational::zero();
    let mut sx = BigRational::zero();
    let mut sy = BigRational::zero();
    for i in 0..xs.len() {
        w += wt(i);
        sx += wt(i) * &xs[i];
        sy += wt(i) * &ys[i];
    }
    let xbar = &sx / &w;
    let ybar = &sy / &w;
    let mut sxx = BigRational::zero();
    let mut sxy = BigRational::zero();
    for i in 0..xs.len() {
        let dx = &xs[i] - &xbar;
        sxx += wt(i) * &dx * &dx;
        sxy += wt(i) * &dx * (&ys[i] - &ybar);
    }
    let slope = &sxy / &sxx;
    let intercept = &ybar - &slope * &xbar;
    let mut sse = BigRational::zero();
    for i in 0..xs.len() {
        let r = &ys[i] - &intercept - &slope * &xs[i];
        sse += wt(i) * &r * &r;
    }
    ExactLine {
        n: BigRational::from_integer(BigInt::from(xs.len())),
        w,
        xbar,
        ybar,
        sxx,
        slope,
        intercept,
        sse,
    }
}

/// Exact least-squares polynomial of degree `d` (coefficients in increasing
/// power) by Gaussian elimination on the normal equations, and its SSE.
pub fn exact_poly(
    xs: &[BigRational],
    ys: &[BigRational],
    d: usize,
) -> (Vec<BigRational>, BigRational) {
    let p = d + 1;
    let mut a = vec![vec![BigRational::zero(); p + 1]; p];
    for (x, y) in xs.iter().zip(ys) {
        let mut pw = vec![BigRational::one(); 2 * p];
        for k in 1..2 * p {
            pw[k] = &pw[k - 1] * x;
        }
        for i in 0..p {
            for j in 0..p {
                a[i][j] += &pw[i + j];
            }
            a[i][p] += &pw[i] * y;
        }
    }
    for c in 0..p {
        let piv = (c..p).find(|&r| !a[r][c].is_zero()).unwrap();
        a.swap(c, piv);
        for r in 0..p {
            if r != c && !a[r][c].is_zero() {
                let m = &a[r][c] / &a[c][c];
                for k in c..=p {
                    let t = &m * &a[c][k];
                    a[r][k] -= t;
                }
            }
        }
    }
    let coef: Vec<BigRational> = (0..p).map(|i| &a[i][p] / &a[i][i]).collect();
    let mut sse = BigRational::zero();
    for (x, y) in xs.iter().zip(ys) {
        let mut fit = BigRational::zero();
        let mut pw = BigRational::one();
        for c in &coef {
            fit += c * &pw;
            pw = &pw * x;
        }
        let r = y - fit;
        sse += &r * &r;
    }
    (coef, sse)
}

/// Relative difference `|a − b|/|b|` (absolute when `b = 0`).
pub fn rel(a: f64, b: f64) -> f64 {
    if b == 0.0 {
        a.abs()
    } else {
        ((a - b) / b).abs()
    }
}

/// Absolute value of a rational as a double.
pub fn fabs(r: &BigRational) -> f64 {
    f(&r.abs())
}
