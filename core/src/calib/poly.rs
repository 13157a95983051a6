//! Inverse use of a polynomial calibration function
//! `y = c₀ + c₁·x + … + c_d·x^d` (quadratic and higher) inside its
//! calibrated range.
//!
//! Inputs are plain numbers — the coefficients in increasing power, their
//! covariance (already scaled, `p × p` row-major), the residual SD and its
//! degrees of freedom — so any least-squares fit can feed it (the model
//! accumulator in [`crate::model`], or stored values on a device).
//!
//! * Root: every real root of `p(x) − ȳ₀` in `[lower, upper]` is found by
//!   splitting the range at the critical points (the roots of `p′`, found
//!   the same way, recursively) into monotone pieces, each holding at most
//!   one root, which bisection brackets to the last bit. Exactly one root is
//!   the answer; none or several is an error.
//! * Standard error (delta method):
//!   `var(x̂) = [s²/(m·w₀) + gᵀ·Σ·g] / p′(x̂)²`, `g = (1, x̂, …, x̂^d)`.
//! * Interval: the connected part around `x̂` of the set of `x` in the range
//!   whose prediction band contains `ȳ₀` (the polynomial analogue of
//!   Fieller's set), found by stepping out from `x̂` in 256 steps per side
//!   and bisecting the first crossing. An end that reaches the range limit
//!   is reported as clipped.

use super::{finite, CalibError, Reading};

/// Largest number of coefficients (degree 8).
pub const MAX_COEFFICIENTS: usize = 9;

/// A polynomial calibration function with its uncertainty and range.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PolyCalibration {
    coefficients: [f64; MAX_COEFFICIENTS],
    covariance: [f64; MAX_COEFFICIENTS * MAX_COEFFICIENTS],
    len: usize,
    residual_sd: f64,
    df_resid: f64,
    lower: f64,
    upper: f64,
}

/// A calibrated value from a polynomial with its delta-method standard
/// error.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PolyInverse {
    /// The calibrated value `x̂₀`.
    pub x: f64,
    /// Delta-method standard error of `x̂₀`.
    pub se: f64,
    /// Slope of the calibration function at `x̂₀`.
    pub slope: f64,
}

/// Inverse prediction interval from a polynomial.
#[cfg(feature = "std")]
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PolyInverseInterval {
    /// Estimate and standard error.
    pub estimate: PolyInverse,
    /// t quantile used.
    pub t: f64,
    /// Lower end of the inverted prediction band.
    pub lower: f64,
    /// Upper end of the inverted prediction band.
    pub upper: f64,
    /// The band had not closed at the lower range limit: `lower` is that
    /// limit, and the true set extends beyond the calibrated range.
    pub lower_clipped: bool,
    /// As `lower_clipped`, at the upper range limit.
    pub upper_clipped: bool,
}

fn horner(c: &[f64], x: f64) -> f64 {
    c.iter().rev().fold(0.0, |acc, v| acc * x + v)
}

/// A zero of `f` between `a` and `b` (either order), given a sign change;
/// plain bisection until the midpoint equals an end (a few thousand steps
/// at most, since the bracket halves each time).
fn bisect(f: impl Fn(f64) -> f64, mut a: f64, mut b: f64) -> f64 {
    let fa0 = f(a);
    for _ in 0..2100 {
        let m = a + 0.5 * (b - a);
        if m == a || m == b {
            break;
        }
        let fm = f(m);
        if fm == 0.0 {
            return m;
        }
        if (fm < 0.0) == (fa0 < 0.0) {
            a = m;
        } else {
            b = m;
        }
    }
    if libm::fabs(f(a)) <= libm::fabs(f(b)) {
        a
    } else {
        b
    }
}

/// Real roots of `Σ c[i]·x^i` in `[lo, hi]`, ascending; returns the count.
fn roots_in(c: &[f64], lo: f64, hi: f64, out: &mut [f64; MAX_COEFFICIENTS]) -> usize {
    let mut deg = c.len() - 1;
    while deg > 0 && c[deg] == 0.0 {
        deg -= 1;
    }
    let c = &c[..=deg];
    if deg == 0 {
        return 0;
    }
    if deg == 1 {
        let r = -c[0] / c[1];
        if r >= lo && r <= hi {
            out[0] = r;
            return 1;
        }
        return 0;
    }
    let mut d = [0.0; MAX_COEFFICIENTS];
    for i in 0..deg {
        d[i] = (i + 1) as f64 * c[i + 1];
    }
    let mut crit = [0.0; MAX_COEFFICIENTS];
    let nc = roots_in(&d[..deg], lo, hi, &mut crit);
    let mut pts = [0.0; MAX_COEFFICIENTS + 2];
    pts[0] = lo;
    pts[1..=nc].copy_from_slice(&crit[..nc]);
    pts[nc + 1] = hi;
    let q = |x: f64| horner(c, x);
    let mut n = 0;
    let push = |r: f64, out: &mut [f64; MAX_COEFFICIENTS], n: &mut usize| {
        if *n == 0 || out[*n - 1] != r {
            out[*n] = r;
            *n += 1;
        }
    };
    for k in 0..=nc {
        let (a, b) = (pts[k], pts[k + 1]);
        let (fa, fb) = (q(a), q(b));
        if fa == 0.0 {
            push(a, out, &mut n);
        } else if fb != 0.0 && (fa < 0.0) != (fb < 0.0) {
            push(bisect(q, a, b), out, &mut n);
        }
    }
    if q(hi) == 0.0 {
        push(hi, out, &mut n);
    }
    n
}

impl PolyCalibration {
    /// A calibration function from its coefficients (increasing power),
    /// their covariance (`p × p`, row-major, already scaled by the residual
    /// variance), the residual SD `s` of the fit with `df_resid` degrees of
    /// freedom (`+∞` for known variances), and the calibrated range.
    ///
    /// # Errors
    /// [`CalibError::InvalidCoefficientCount`] unless `2 <= p <= 9`;
    /// [`CalibError::LengthMismatch`] if the covariance is not `p²` long;
    /// [`CalibError::NonFinite`] (index into the coefficients, then the
    /// covariance); [`CalibError::InvalidUncertainty`] for a negative `s` or
    /// a negative variance on the diagonal;
    /// [`CalibError::InvalidDegreesOfFreedom`]; [`CalibError::InvalidRange`].
    pub fn new(
        coefficients: &[f64],
        covariance: &[f64],
        residual_sd: f64,
        df_resid: f64,
        range: (f64, f64),
    ) -> Result<Self, CalibError> {
        let p = coefficients.len();
        if !(2..=MAX_COEFFICIENTS).contains(&p) {
            return Err(CalibError::InvalidCoefficientCount { found: p });
        }
        if covariance.len() != p * p {
            return Err(CalibError::LengthMismatch {
                expected: p * p,
                found: covariance.len(),
            });
        }
        for (i, v) in coefficients.iter().chain(covariance).enumerate() {
            if !v.is_finite() {
                return Err(CalibError::NonFinite { index: i });
            }
        }
        if !(residual_sd >= 0.0) || !residual_sd.is_finite() {
            return Err(CalibError::InvalidUncertainty);
        }
        if (0..p).any(|i| covariance[i * p + i] < 0.0) {
            return Err(CalibError::InvalidUncertainty);
        }
        if !(df_resid > 0.0) {
            return Err(CalibError::InvalidDegreesOfFreedom);
        }
        let (lower, upper) = range;
        if !lower.is_finite() || !upper.is_finite() || !(lower < upper) {
            return Err(CalibError::InvalidRange);
        }
        let mut c = [0.0; MAX_COEFFICIENTS];
        c[..p].copy_from_slice(coefficients);
        let mut cov = [0.0; MAX_COEFFICIENTS * MAX_COEFFICIENTS];
        cov[..p * p].copy_from_slice(covariance);
        Ok(PolyCalibration {
            coefficients: c,
            covariance: cov,
            len: p,
            residual_sd,
            df_resid,
            lower,
            upper,
        })
    }

    /// The calibration function of a polynomial fit from the model
    /// accumulator, whose columns are the raw powers `1, x, …, x^d` in that
    /// order (as [`crate::model::poly_fit`] returns them), over the
    /// calibrated `range` (normally the span of the calibration standards).
    ///
    /// # Errors
    /// As [`new`](Self::new).
    pub fn from_model(fit: &crate::model::ModelFit, range: (f64, f64)) -> Result<Self, CalibError> {
        Self::new(
            &fit.coefficients,
            &fit.covariance,
            fit.residual_sd,
            fit.df_resid as f64,
            range,
        )
    }

    /// The coefficients, in increasing power.
    pub fn coefficients(&self) -> &[f64] {
        &self.coefficients[..self.len]
    }

    /// The calibrated range `(lower, upper)`.
    pub fn range(&self) -> (f64, f64) {
        (self.lower, self.upper)
    }

    /// The calibration function at `x`.
    pub fn value(&self, x: f64) -> f64 {
        horner(self.coefficients(), x)
    }

    /// The derivative of the calibration function at `x`.
    pub fn derivative(&self, x: f64) -> f64 {
        let c = self.coefficients();
        let mut acc = 0.0;
        for i in (1..c.len()).rev() {
            acc = acc * x + i as f64 * c[i];
        }
        acc
    }

    /// Variance of the fitted value at `x`, `gᵀΣg`.
    pub fn var_fitted(&self, x: f64) -> f64 {
        let p = self.len;
        let mut g = [0.0; MAX_COEFFICIENTS];
        let mut pw = 1.0;
        for gi in g.iter_mut().take(p) {
            *gi = pw;
            pw *= x;
        }
        let g = &g[..p];
        let mut v = 0.0;
        for (gi, cov_row) in g.iter().zip(self.covariance[..p * p].chunks_exact(p)) {
            let row: f64 = cov_row.iter().zip(g).map(|(c, gj)| c * gj).sum();
            v += gi * row;
        }
        v.max(0.0)
    }

    /// The roots of `p(x) = y0` in the calibrated range, ascending, written
    /// to the front of `out`; returns how many there are.
    ///
    /// # Errors
    /// [`CalibError::NonFinite`].
    pub fn roots_in_range(
        &self,
        y0: f64,
        out: &mut [f64; MAX_COEFFICIENTS],
    ) -> Result<usize, CalibError> {
        finite(y0)?;
        let mut c = self.coefficients;
        c[0] -= y0;
        Ok(roots_in(&c[..self.len], self.lower, self.upper, out))
    }

    /// The calibrated value of a reading with its delta-method standard
    /// error.
    ///
    /// # Errors
    /// The reading's argument errors; [`CalibError::NoRootInRange`];
    /// [`CalibError::SeveralRootsInRange`]; [`CalibError::ZeroSlope`] if the
    /// function is flat at the root.
    pub fn invert(&self, reading: &Reading) -> Result<PolyInverse, CalibError> {
        reading.check()?;
        let mut roots = [0.0; MAX_COEFFICIENTS];
        let n = self.roots_in_range(reading.value, &mut roots)?;
        let x = match n {
            0 => return Err(CalibError::NoRootInRange),
            1 => roots[0],
            count => return Err(CalibError::SeveralRootsInRange { count }),
        };
        let slope = self.derivative(x);
        if slope == 0.0 {
            return Err(CalibError::ZeroSlope);
        }
        let s2 = self.residual_sd * self.residual_sd;
        let var = (s2 * reading.h0() + self.var_fitted(x)) / (slope * slope);
        let se = libm::sqrt(var);
        if !se.is_finite() {
            return Err(CalibError::Overflow);
        }
        Ok(PolyInverse { x, se, slope })
    }

    /// Inverse prediction interval at `level` (see the module docs).
    ///
    /// # Errors
    /// As [`invert`](Self::invert), plus [`CalibError::InvalidLevel`].
    #[cfg(feature = "std")]
    pub fn invert_interval(
        &self,
        reading: &Reading,
        level: f64,
    ) -> Result<PolyInverseInterval, CalibError> {
        super::check_level(level)?;
        let est = self.invert(reading)?;
        let t = if self.df_resid.is_infinite() {
            crate::dist::normal_quantile(0.5 + level / 2.0)
        } else {
            crate::dist::t_quantile(0.5 + level / 2.0, self.df_resid)
        };
        if !t.is_finite() {
            // A level so close to 1 that its quantile is not finite.
            return Err(CalibError::InvalidLevel);
        }
        let s2h = self.residual_sd * self.residual_sd * reading.h0();
        let y0 = reading.value;
        let outside = |x: f64| {
            let d = self.value(x) - y0;
            d * d - t * t * (s2h + self.var_fitted(x))
        };
        let (upper, upper_clipped) = self.step_out(&outside, est.x, self.upper);
        let (lower, lower_clipped) = self.step_out(&outside, est.x, self.lower);
        Ok(PolyInverseInterval {
            estimate: est,
            t,
            lower,
            upper,
            lower_clipped,
            upper_clipped,
        })
    }

    /// First crossing of `outside > 0` walking from `from` to `to`.
    #[cfg(feature = "std")]
    fn step_out(&self, outside: &impl Fn(f64) -> f64, from: f64, to: f64) -> (f64, bool) {
        const STEPS: u32 = 256;
        let h = (to - from) / STEPS as f64;
        let mut prev = from;
        for k in 1..=STEPS {
            let x = if k == STEPS { to } else { from + k as f64 * h };
            if outside(x) > 0.0 {
                return (bisect(outside, prev, x), false);
            }
            prev = x;
        }
        (to, true)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn roots_of_a_cubic_with_three_real_roots() {
        // (x − 1)(x − 2)(x − 5) = x³ − 8x² + 17x − 10.
        let c = [-10.0, 17.0, -8.0, 1.0];
        let mut out = [0.0; MAX_COEFFICIENTS];
        let n = roots_in(&c, 0.0, 10.0, &mut out);
        assert_eq!(n, 3);
        for (r, e) in out[..3].iter().zip([1.0, 2.0, 5.0]) {
            assert!((r - e).abs() < 1e-14, "{r}");
        }
        assert_eq!(roots_in(&c, 2.5, 4.5, &mut out), 0);
        assert_eq!(roots_in(&c, 1.5, 4.5, &mut out), 1);
    }
}
