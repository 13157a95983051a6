//! Weighted straight-line calibration with variance functions.
//!
//! When the scatter of the readings grows with the level (common practice
//! in analytical calibration, NUMERICS.md C6), each reading gets the weight
//! `w = 1/(σ₀²·f)` where `f` is the variance function at the point:
//!
//! | shape | `f` (variance ∝) | weight ∝ |
//! |---|---|---|
//! | [`VarianceShape::Constant`] | 1 | 1 |
//! | [`VarianceShape::InverseX`] | `x` | `1/x` |
//! | [`VarianceShape::InverseX2`] | `x²` | `1/x²` |
//! | [`VarianceShape::InverseY2`] | `y²` | `1/y²` |
//! | [`VarianceShape::MeanPower`] | `|ŷ|^k` | `1/|ŷ|^k` |
//!
//! The meaning of the weights is explicit ([`WeightMeaning`]):
//! * `Relative`: only ratios matter; `σ₀²` is estimated by the residual
//!   variance and the given `unit_variance` has no effect on any result.
//! * `InverseVariance`: `σ₀² = unit_variance` is known; covariances are not
//!   rescaled, intervals use the normal distribution, and the residual sum
//!   of squares is a chi-square statistic on `n − 2` degrees of freedom.
//!
//! A power of the mean needs the fitted values, so the fit is repeated
//! (iteratively reweighted least squares, starting unweighted) until the
//! coefficients settle.

use super::{CalibError, Reading};
use crate::line::{FitOptions, LineFit, WeightMeaning};
use crate::moments::LeanMoments;

/// Shape of the variance function (see the [module docs](self)).
#[derive(Clone, Copy, Debug, PartialEq)]
#[non_exhaustive]
pub enum VarianceShape {
    /// Constant variance (unit weights).
    Constant,
    /// Variance proportional to `x`: weights `1/x` (needs `x > 0`).
    InverseX,
    /// Standard deviation proportional to `x`: weights `1/x²` (needs `x ≠ 0`).
    InverseX2,
    /// Standard deviation proportional to the reading: weights `1/y²`
    /// (needs `y ≠ 0`).
    InverseY2,
    /// Variance proportional to `|ŷ|^power`, the fitted mean: weights
    /// `1/|ŷ|^power`, found iteratively.
    MeanPower {
        /// The exponent `k` (finite; 2 gives a constant coefficient of
        /// variation).
        power: f64,
    },
}

impl VarianceShape {
    /// The variance function at `x` with response (or fitted mean) `y`;
    /// `None` where it is not a positive finite number.
    pub fn factor(&self, x: f64, y: f64) -> Option<f64> {
        let f = match *self {
            VarianceShape::Constant => 1.0,
            VarianceShape::InverseX => x,
            VarianceShape::InverseX2 => x * x,
            VarianceShape::InverseY2 => y * y,
            VarianceShape::MeanPower { power } => libm::pow(libm::fabs(y), power),
        };
        if f > 0.0 && f.is_finite() {
            Some(f)
        } else {
            None
        }
    }
}

/// A weighted straight-line calibration and the variance model behind it.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct WeightedCalibration {
    /// The weighted fit.
    pub fit: LineFit,
    /// The accumulator holding the weighted readings.
    pub moments: LeanMoments,
    /// The variance function.
    pub shape: VarianceShape,
    /// `σ₀²`, the variance where the variance function is 1 (only used
    /// with known inverse-variance weights).
    pub unit_variance: f64,
    /// Fits computed: 1, or the number of reweighting passes for a power
    /// of the mean.
    pub passes: u32,
}

/// Most reweighting passes for [`VarianceShape::MeanPower`].
const MAX_PASSES: u32 = 50;

fn accumulate(
    xs: &[f64],
    ys: &[f64],
    weight: impl Fn(usize) -> Result<f64, CalibError>,
) -> Result<LeanMoments, CalibError> {
    let mut acc = LeanMoments::new();
    for i in 0..xs.len() {
        let w = weight(i)?;
        acc.push_weighted(xs[i], ys[i], w).map_err(|e| match e {
            crate::MomentsError::NonFinite { .. } => CalibError::NonFinite { index: i },
            crate::MomentsError::InvalidWeight { .. } => CalibError::VarianceUndefined { index: i },
            other => other.into(),
        })?;
    }
    Ok(acc)
}

/// Fits a weighted calibration line with weights from a variance function.
///
/// # Errors
/// [`CalibError::LengthMismatch`]; [`CalibError::NonFinite`] (index named);
/// [`CalibError::InvalidUncertainty`] unless `unit_variance` is positive and
/// finite; [`CalibError::VarianceUndefined`] where the variance function is
/// not positive (index named); the line errors
/// ([`CalibError::TooFewPoints`], [`CalibError::NoSpread`]).
pub fn weighted_line(
    xs: &[f64],
    ys: &[f64],
    shape: VarianceShape,
    meaning: WeightMeaning,
    unit_variance: f64,
) -> Result<WeightedCalibration, CalibError> {
    if xs.len() != ys.len() {
        return Err(CalibError::LengthMismatch {
            expected: xs.len(),
            found: ys.len(),
        });
    }
    for (i, (x, y)) in xs.iter().zip(ys).enumerate() {
        if !x.is_finite() || !y.is_finite() {
            return Err(CalibError::NonFinite { index: i });
        }
    }
    if !(unit_variance > 0.0) || !unit_variance.is_finite() {
        return Err(CalibError::InvalidUncertainty);
    }
    if let VarianceShape::MeanPower { power } = shape {
        if !power.is_finite() {
            return Err(CalibError::NonFinite { index: 0 });
        }
    }
    let opts = FitOptions::default().with_weights(meaning);
    let direct = |i: usize, mean: f64| {
        shape
            .factor(xs[i], mean)
            .map(|f| 1.0 / (unit_variance * f))
            .ok_or(CalibError::VarianceUndefined { index: i })
    };
    match shape {
        VarianceShape::MeanPower { .. } => {
            let mut acc = accumulate(xs, ys, |_| Ok(1.0))?;
            let mut fit = acc.fit_with(&opts)?;
            let mut passes = 1;
            while passes < MAX_PASSES {
                let prev = fit;
                acc = accumulate(xs, ys, |i| direct(i, prev.fitted(xs[i])))?;
                fit = acc.fit_with(&opts)?;
                passes += 1;
                let close = |a: f64, b: f64| libm::fabs(a - b) <= 1e-13 * libm::fabs(b).max(1e-300);
                if close(fit.slope, prev.slope) && close(fit.mean_y, prev.mean_y) {
                    break;
                }
            }
            Ok(WeightedCalibration {
                fit,
                moments: acc,
                shape,
                unit_variance,
                passes,
            })
        }
        _ => {
            let acc = accumulate(xs, ys, |i| direct(i, ys[i]))?;
            let fit = acc.fit_with(&opts)?;
            Ok(WeightedCalibration {
                fit,
                moments: acc,
                shape,
                unit_variance,
                passes: 1,
            })
        }
    }
}

/// Fits a calibration line with weights supplied by the caller (for example
/// `1/u²(yᵢ)` from an uncertainty budget), with their meaning stated.
///
/// # Errors
/// [`CalibError::LengthMismatch`]; [`CalibError::NonFinite`] and
/// [`CalibError::InvalidWeight`] with the offending index; the line errors.
pub fn user_weighted_line(
    xs: &[f64],
    ys: &[f64],
    ws: &[f64],
    meaning: WeightMeaning,
) -> Result<LineFit, CalibError> {
    let mut acc = LeanMoments::new();
    acc.extend_weighted(xs, ys, ws)?;
    Ok(acc.fit_with(&FitOptions::default().with_weights(meaning))?)
}

impl WeightedCalibration {
    /// A [`Reading`] for the mean `y0` of `replicates` new readings, carrying
    /// the weight the variance function gives at the reading (evaluated at
    /// the estimate `x̂₀`, with the mean taken as `y0`).
    ///
    /// With a variance that depends on `x` the exact confidence set is no
    /// longer the root set of a quadratic; fixing the reading's weight at
    /// `x̂₀` is the usual approximation (common practice) and keeps the
    /// Fieller machinery of [`LineFit::invert_interval`] exact otherwise.
    ///
    /// # Errors
    /// [`CalibError::InvalidReplicates`], [`CalibError::NonFinite`],
    /// [`CalibError::ZeroSlope`], [`CalibError::VarianceUndefined`] where the
    /// variance function is not positive at the reading.
    pub fn reading(&self, y0: f64, replicates: u32) -> Result<Reading, CalibError> {
        let x0 = self.fit.invert(&Reading::mean_of(y0, replicates))?.x;
        let f = self
            .shape
            .factor(x0, y0)
            .ok_or(CalibError::VarianceUndefined { index: 0 })?;
        Ok(Reading::mean_of(y0, replicates).with_weight(1.0 / (self.unit_variance * f)))
    }
}
