//! Inverse prediction from a straight-line calibration `y = a + b·x` (or
//! `y = b·x`), the uncertainty of a calibrated value, and the
//! Working–Hotelling simultaneous band.
//!
//! # Formulas
//! With `s² ` the fit's variance scale (the residual variance for relative
//! weights, 1 for known inverse variances), `ȳ₀` the mean of `m` new
//! readings each of weight `w₀`, and `h₀ = 1/(m·w₀)`:
//! * estimate `x̂₀ = x̄ + (ȳ₀ − ȳ)/b` (`ȳ₀/b` through the origin);
//! * delta-method standard error
//!   `s/|b| · √(h₀ + 1/W + (ȳ₀ − ȳ)²/(b²·Sxx))` (unweighted: `W = n`,
//!   `w₀ = 1`, the form of ISO 8466-1);
//! * Fieller set: every `x` whose prediction band contains `ȳ₀`,
//!   `(ȳ₀ − ŷ(x))² ≤ t²·s²·(h₀ + 1/W + (x − x̄)²/Sxx)`. This is a quadratic
//!   inequality `A·u² + B·u + C ≤ 0` in `u = x − x̄` with
//!   `A = b² − t²s²/Sxx`. For `A > 0` (the slope is significant at the
//!   level) it is a bounded interval; for `A < 0` it is two half-lines or
//!   the whole line.
//!
//! Sources: Fieller (1954), JRSS B 16:175–185; Eisenhart (1939), Ann. Math.
//! Stat. 10:162–186 (from memory, see NUMERICS.md C1). The uncertainty of a
//! calibrated value follows the NIST/SEMATECH e-Handbook §2.3.6.7 and
//! ISO/TS 28037 (`u²(x₀) = [u²(y₀) + var(a) + x₀²·var(b) + 2x₀·cov(a,b)]/b²`).
//! Working & Hotelling (1929), JASA 24(165A):73–85 (from memory, NUMERICS.md
//! C2).

#[cfg(feature = "std")]
use super::quadratic_roots;
use super::{finite, CalibError};
use crate::line::LineFit;
#[cfg(feature = "std")]
use crate::line::WeightMeaning;

/// A new instrument reading to convert: the mean of `replicates` readings,
/// each with calibration weight `weight` (1 for an unweighted calibration;
/// for a weighted one, the weight the variance function gives at the
/// reading, in the same units as the calibration weights).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Reading {
    /// The reading, or the mean of the replicate readings.
    pub value: f64,
    /// Number of replicate readings averaged (at least 1).
    pub replicates: u32,
    /// Weight of each reading relative to the calibration weights.
    pub weight: f64,
}

impl Reading {
    /// One reading of unit weight.
    pub const fn single(value: f64) -> Self {
        Reading {
            value,
            replicates: 1,
            weight: 1.0,
        }
    }

    /// The mean of `replicates` readings of unit weight.
    pub const fn mean_of(value: f64, replicates: u32) -> Self {
        Reading {
            value,
            replicates,
            weight: 1.0,
        }
    }

    /// The same reading with each replicate carrying `weight`.
    pub const fn with_weight(mut self, weight: f64) -> Self {
        self.weight = weight;
        self
    }

    pub(super) fn check(&self) -> Result<(), CalibError> {
        finite(self.value)?;
        if self.replicates == 0 {
            return Err(CalibError::InvalidReplicates);
        }
        if !(self.weight > 0.0) || !self.weight.is_finite() {
            return Err(CalibError::InvalidWeight { index: 0 });
        }
        Ok(())
    }

    /// `h₀ = 1/(m·w₀)`: the reading's variance in units of the scale.
    pub(super) fn h0(&self) -> f64 {
        1.0 / (self.replicates as f64 * self.weight)
    }
}

/// The line in centred form: `ŷ(x) = cy + b·(x − cx)`,
/// `var ŷ(x) = scale·(k0 + (x − cx)²/q)`.
#[derive(Clone, Copy, Debug)]
struct Geometry {
    cx: f64,
    cy: f64,
    k0: f64,
    q: f64,
    b: f64,
    scale: f64,
}

impl Geometry {
    fn of(fit: &LineFit) -> Self {
        if fit.through_origin {
            Geometry {
                cx: 0.0,
                cy: 0.0,
                k0: 0.0,
                q: fit.sum_x2,
                b: fit.slope,
                scale: fit.scale,
            }
        } else {
            Geometry {
                cx: fit.mean_x,
                cy: fit.mean_y,
                k0: 1.0 / fit.weight_sum,
                q: fit.sxx,
                b: fit.slope,
                scale: fit.scale,
            }
        }
    }
}

/// Point estimate of an inverse prediction with its delta-method standard
/// error.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct InverseEstimate {
    /// `x̂₀`, the calibrated value.
    pub x: f64,
    /// Delta-method standard error of `x̂₀`.
    pub se: f64,
}

/// The exact (Fieller) confidence set for the `x` that produced a reading.
///
/// Never NaN and never a swapped pair: `lower <= upper` and
/// `below < above` always hold.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum FiellerSet {
    /// The closed interval `[lower, upper]` (the slope is significant).
    Bounded {
        /// Lower end.
        lower: f64,
        /// Upper end.
        upper: f64,
    },
    /// The union of two half-lines `(−∞, below] ∪ [above, +∞)`: the slope is
    /// not significant, and the reading lies far enough from the data that
    /// some values of `x` are excluded. In the boundary case `A = 0` the
    /// set is one half-line and the missing end is `−∞` or `+∞`.
    TwoHalfLines {
        /// Upper end of the lower half-line.
        below: f64,
        /// Lower end of the upper half-line.
        above: f64,
    },
    /// Every `x` is consistent with the reading.
    WholeLine,
}

impl FiellerSet {
    /// Whether the set is a bounded interval.
    pub fn is_bounded(&self) -> bool {
        matches!(self, FiellerSet::Bounded { .. })
    }

    /// Whether `x` belongs to the set.
    pub fn contains(&self, x: f64) -> bool {
        match *self {
            FiellerSet::Bounded { lower, upper } => lower <= x && x <= upper,
            FiellerSet::TwoHalfLines { below, above } => x <= below || x >= above,
            FiellerSet::WholeLine => true,
        }
    }
}

/// Inverse prediction with its exact and approximate confidence sets.
#[cfg(feature = "std")]
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct InverseInterval {
    /// `x̂₀` and its delta-method standard error.
    pub estimate: InverseEstimate,
    /// Confidence level used.
    pub level: f64,
    /// The t (or normal, for known variances) quantile used.
    pub t: f64,
    /// `g = t²·s²/(b²·Sxx)`: the set is bounded exactly when `g < 1`.
    pub g: f64,
    /// Exact Fieller set.
    pub set: FiellerSet,
    /// Lower end of the symmetric delta-method interval `x̂₀ − t·se`.
    pub approx_lower: f64,
    /// Upper end of the symmetric delta-method interval `x̂₀ + t·se`.
    pub approx_upper: f64,
}

/// A calibrated value with its standard uncertainty.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CalibratedValue {
    /// The calibrated value `x₀ = (y₀ − a)/b`.
    pub x: f64,
    /// Its standard uncertainty `u(x₀)`.
    pub u: f64,
}

/// A band value of the Working–Hotelling simultaneous band.
#[cfg(feature = "std")]
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SimultaneousBand {
    /// Fitted value `ŷ(x)`.
    pub fitted: f64,
    /// Standard error of the fitted mean response at `x`.
    pub se: f64,
    /// The multiplier `W = √(p·F(level; p, n − p))` (`√χ²_p` for known
    /// variances), `p` the number of line parameters.
    pub multiplier: f64,
    /// Lower edge `ŷ − W·se`.
    pub lower: f64,
    /// Upper edge `ŷ + W·se`.
    pub upper: f64,
}

/// Straight-line coefficients with their covariance, for the uncertainty of
/// calibrated values when only published or stored numbers are at hand.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct LineCoefficients {
    /// Intercept `a`.
    pub intercept: f64,
    /// Slope `b`.
    pub slope: f64,
    /// `var(a)`.
    pub var_intercept: f64,
    /// `var(b)`.
    pub var_slope: f64,
    /// `cov(a, b)`.
    pub cov_intercept_slope: f64,
}

impl LineCoefficients {
    /// The coefficients and covariance of a fitted line.
    pub fn from_fit(fit: &LineFit) -> Self {
        LineCoefficients {
            intercept: fit.intercept,
            slope: fit.slope,
            var_intercept: fit.se_intercept * fit.se_intercept,
            var_slope: fit.se_slope * fit.se_slope,
            cov_intercept_slope: fit.cov_intercept_slope,
        }
    }

    fn check(&self) -> Result<(), CalibError> {
        for v in [
            self.intercept,
            self.slope,
            self.var_intercept,
            self.var_slope,
            self.cov_intercept_slope,
        ] {
            finite(v)?;
        }
        if self.var_intercept < 0.0 || self.var_slope < 0.0 {
            return Err(CalibError::InvalidUncertainty);
        }
        if self.slope == 0.0 {
            return Err(CalibError::ZeroSlope);
        }
        Ok(())
    }

    /// Calibrated value `x₀ = (y₀ − a)/b` of a reading with standard
    /// uncertainty `u_y` (the residual SD of the calibration, or a known
    /// measurement uncertainty), and
    /// `u²(x₀) = [u_y² + var(a) + x₀²·var(b) + 2x₀·cov(a,b)]/b²`.
    ///
    /// This raw-coefficient form cancels when `x₀` is far from zero compared
    /// with the spread of the calibration data; from a [`LineFit`] prefer
    /// [`LineFit::calibrated_value`], which uses the centred form.
    ///
    /// # Errors
    /// [`CalibError::NonFinite`], [`CalibError::InvalidUncertainty`] for a
    /// negative `u_y` or variance, [`CalibError::ZeroSlope`].
    pub fn calibrated(&self, y0: f64, u_y: f64) -> Result<CalibratedValue, CalibError> {
        self.check()?;
        finite(y0)?;
        if !(u_y >= 0.0) || !u_y.is_finite() {
            return Err(CalibError::InvalidUncertainty);
        }
        let b = self.slope;
        let x = (y0 - self.intercept) / b;
        let var_fit =
            self.var_intercept + x * x * self.var_slope + 2.0 * x * self.cov_intercept_slope;
        let u2 = (u_y * u_y + var_fit.max(0.0)) / (b * b);
        let u = libm::sqrt(u2);
        if !x.is_finite() || !u.is_finite() {
            return Err(CalibError::Overflow);
        }
        Ok(CalibratedValue { x, u })
    }

    /// Coefficients `[c0, c1, c2]` with `u²(x₀) = c0 + c1·y₀ + c2·y₀²` for a
    /// reading of standard uncertainty `u_y`: three numbers a device can
    /// store to report the uncertainty of every calibrated value.
    ///
    /// # Errors
    /// As [`calibrated`](Self::calibrated).
    pub fn uncertainty_polynomial(&self, u_y: f64) -> Result<[f64; 3], CalibError> {
        self.check()?;
        if !(u_y >= 0.0) || !u_y.is_finite() {
            return Err(CalibError::InvalidUncertainty);
        }
        // x₀ = (y₀ − a)/b substituted into the numerator, then over b².
        let (a, b) = (self.intercept, self.slope);
        let (va, vb, cab) = (self.var_intercept, self.var_slope, self.cov_intercept_slope);
        let b2 = b * b;
        let c2 = vb / (b2 * b2);
        let c1 = (2.0 * cab / b - 2.0 * a * vb / b2) / b2;
        let c0 = (u_y * u_y + va + a * a * vb / b2 - 2.0 * a * cab / b) / b2;
        let out = [c0, c1, c2];
        if out.iter().any(|v| !v.is_finite()) {
            return Err(CalibError::Overflow);
        }
        Ok(out)
    }
}

impl LineFit {
    /// Inverse prediction: the `x` that produced `reading`, with its
    /// delta-method standard error (see the [module docs](self)).
    ///
    /// # Errors
    /// [`CalibError::NonFinite`], [`CalibError::InvalidReplicates`],
    /// [`CalibError::InvalidWeight`] for the reading;
    /// [`CalibError::ZeroSlope`]; [`CalibError::Overflow`].
    pub fn invert(&self, reading: &Reading) -> Result<InverseEstimate, CalibError> {
        reading.check()?;
        let g = Geometry::of(self);
        if g.b == 0.0 {
            return Err(CalibError::ZeroSlope);
        }
        let u = (reading.value - g.cy) / g.b;
        let x = g.cx + u;
        let var = g.scale * (reading.h0() + g.k0 + u * u / g.q) / (g.b * g.b);
        let se = libm::sqrt(var);
        if !x.is_finite() || !se.is_finite() {
            return Err(CalibError::Overflow);
        }
        Ok(InverseEstimate { x, se })
    }

    /// Standard uncertainty of the calibrated value of one reading `y0`
    /// whose own standard uncertainty `u_y` is known (instead of taken from
    /// the residual SD): `u²(x₀) = [u_y² + var(ŷ(x₀))]/b²`, with `var(ŷ)`
    /// from the coefficient covariance in centred form (which equals
    /// `var(a) + x₀²·var(b) + 2x₀·cov(a,b)` without its cancellation).
    ///
    /// # Errors
    /// [`CalibError::NonFinite`], [`CalibError::InvalidUncertainty`],
    /// [`CalibError::ZeroSlope`], [`CalibError::Overflow`].
    pub fn calibrated_value(&self, y0: f64, u_y: f64) -> Result<CalibratedValue, CalibError> {
        finite(y0)?;
        if !(u_y >= 0.0) || !u_y.is_finite() {
            return Err(CalibError::InvalidUncertainty);
        }
        let g = Geometry::of(self);
        if g.b == 0.0 {
            return Err(CalibError::ZeroSlope);
        }
        let u = (y0 - g.cy) / g.b;
        let x = g.cx + u;
        let var_fit = g.scale * (g.k0 + u * u / g.q);
        let unc = libm::sqrt((u_y * u_y + var_fit) / (g.b * g.b));
        if !x.is_finite() || !unc.is_finite() {
            return Err(CalibError::Overflow);
        }
        Ok(CalibratedValue { x, u: unc })
    }
}

/// The Fieller set for the reading, given the band multiplier `t`.
#[cfg(feature = "std")]
fn fieller(g: &Geometry, reading: &Reading, t: f64) -> (FiellerSet, f64) {
    let d = reading.value - g.cy;
    let ts2 = t * t * g.scale;
    let h = reading.h0() + g.k0;
    // (d − b·u)² − t²s²(h + u²/q) ≤ 0  ⇔  A u² + B u + C ≤ 0.
    let a = g.b * g.b - ts2 / g.q;
    let bq = -2.0 * g.b * d;
    let c = d * d - ts2 * h;
    let gval = if g.b == 0.0 {
        f64::INFINITY
    } else {
        ts2 / (g.b * g.b * g.q)
    };
    // The discriminant over 4 is t²s²·(d²/q + h·A): formed this way it has
    // no cancellation between b²d² and A·C.
    let disc4 = ts2 * (d * d / g.q + h * a);
    let set = if a > 0.0 {
        let (lo, hi) = quadratic_roots(a, bq, c, 4.0 * disc4);
        FiellerSet::Bounded {
            lower: g.cx + lo,
            upper: g.cx + hi,
        }
    } else if a < 0.0 {
        if disc4 > 0.0 {
            let (lo, hi) = quadratic_roots(a, bq, c, 4.0 * disc4);
            FiellerSet::TwoHalfLines {
                below: g.cx + lo,
                above: g.cx + hi,
            }
        } else {
            FiellerSet::WholeLine
        }
    } else if bq != 0.0 {
        // A = 0: B·u + C ≤ 0 is one half-line.
        let r = g.cx - c / bq;
        if bq > 0.0 {
            FiellerSet::TwoHalfLines {
                below: r,
                above: f64::INFINITY,
            }
        } else {
            FiellerSet::TwoHalfLines {
                below: f64::NEG_INFINITY,
                above: r,
            }
        }
    } else if c <= 0.0 {
        FiellerSet::WholeLine
    } else {
        // A = B = 0 and C > 0 would be the empty set, which cannot happen
        // (C > 0 with d = 0 needs t²s²h < 0); report the whole line.
        FiellerSet::WholeLine
    };
    (set, gval)
}

/// The two-sided critical value at `level`; a level so close to 1 that it
/// is not finite in double precision is refused like any invalid level.
#[cfg(feature = "std")]
fn t_of(fit: &LineFit, level: f64) -> Result<f64, CalibError> {
    let t = match fit.weights {
        WeightMeaning::InverseVariance => crate::dist::normal_quantile(0.5 + level / 2.0),
        _ => crate::dist::t_quantile(0.5 + level / 2.0, fit.df_resid),
    };
    if t.is_finite() {
        Ok(t)
    } else {
        Err(CalibError::InvalidLevel)
    }
}

#[cfg(feature = "std")]
impl LineFit {
    /// The exact Fieller confidence set at `level` for the `x` that produced
    /// `reading`: all `x` whose prediction band contains the reading. Works
    /// for a zero slope too (the set is then unbounded).
    ///
    /// # Errors
    /// [`CalibError::InvalidLevel`] and the reading's argument errors.
    pub fn fieller_set(&self, reading: &Reading, level: f64) -> Result<FiellerSet, CalibError> {
        reading.check()?;
        super::check_level(level)?;
        let t = t_of(self, level)?;
        Ok(fieller(&Geometry::of(self), reading, t).0)
    }

    /// Inverse prediction with the exact Fieller set and the delta-method
    /// interval at `level` (e.g. 0.95).
    ///
    /// # Errors
    /// As [`invert`](Self::invert), plus [`CalibError::InvalidLevel`].
    pub fn invert_interval(
        &self,
        reading: &Reading,
        level: f64,
    ) -> Result<InverseInterval, CalibError> {
        super::check_level(level)?;
        let estimate = self.invert(reading)?;
        let t = t_of(self, level)?;
        let (set, g) = fieller(&Geometry::of(self), reading, t);
        Ok(InverseInterval {
            estimate,
            level,
            t,
            g,
            set,
            approx_lower: estimate.x - t * estimate.se,
            approx_upper: estimate.x + t * estimate.se,
        })
    }

    /// The bounded Fieller interval `(lower, upper)` at `level`, or an
    /// error when the set is unbounded.
    ///
    /// # Errors
    /// As [`invert_interval`](Self::invert_interval), plus
    /// [`CalibError::SlopeNotSignificant`] when the set is two half-lines or
    /// the whole line.
    pub fn invert_bounded(&self, reading: &Reading, level: f64) -> Result<(f64, f64), CalibError> {
        match self.invert_interval(reading, level)?.set {
            FiellerSet::Bounded { lower, upper } => Ok((lower, upper)),
            _ => Err(CalibError::SlopeNotSignificant),
        }
    }

    /// The Working–Hotelling band at `x`: simultaneous over every `x` at
    /// confidence `level`, `ŷ(x) ± W·se(ŷ(x))` with
    /// `W = √(p·F(level; p, n − p))` (`p = 2`, or 1 through the origin).
    ///
    /// # Errors
    /// [`CalibError::InvalidLevel`], [`CalibError::NonFinite`].
    pub fn simultaneous_band(&self, x: f64, level: f64) -> Result<SimultaneousBand, CalibError> {
        super::check_level(level)?;
        finite(x)?;
        let se = self.se_mean(x)?;
        let p = if self.through_origin { 1.0 } else { 2.0 };
        let w2 = match self.weights {
            WeightMeaning::InverseVariance => {
                // χ²_p quantiles in closed form: p = 2 is exponential, p = 1
                // is a squared normal quantile.
                if p == 2.0 {
                    -2.0 * libm::log1p(-level)
                } else {
                    let z = crate::dist::normal_quantile(0.5 + level / 2.0);
                    z * z
                }
            }
            _ => p * crate::dist::f_quantile(level, p, self.df_resid),
        };
        let w = libm::sqrt(w2);
        if !w.is_finite() {
            return Err(CalibError::Overflow);
        }
        let fitted = self.fitted(x);
        Ok(SimultaneousBand {
            fitted,
            se,
            multiplier: w,
            lower: fitted - w * se,
            upper: fitted + w * se,
        })
    }
}

#[cfg(all(test, feature = "std"))]
mod tests {
    use super::*;

    fn geom(b: f64, scale: f64) -> Geometry {
        Geometry {
            cx: 2.0,
            cy: 5.0,
            k0: 0.1,
            q: 10.0,
            b,
            scale,
        }
    }

    #[test]
    fn fieller_cases_by_sign_of_a() {
        let r = Reading::single(5.0);
        // Significant slope: bounded and containing the estimate.
        let (s, g) = fieller(&geom(2.0, 1.0), &r, 2.0);
        assert!(g < 1.0);
        assert!(matches!(s, FiellerSet::Bounded { .. }) && s.contains(2.0));
        // Zero slope, reading at the mean: everything fits.
        let (s, _) = fieller(&geom(0.0, 1.0), &r, 2.0);
        assert_eq!(s, FiellerSet::WholeLine);
        // Weak slope, reading far from the data: two half-lines.
        let (s, _) = fieller(&geom(0.5, 1.0), &Reading::single(50.0), 2.0);
        assert!(
            matches!(s, FiellerSet::TwoHalfLines { below, above } if below < above),
            "{s:?}"
        );
    }
}
