//! Calibration: turning a fitted calibration function around to read
//! concentrations (loads, temperatures) from new instrument readings, with
//! their uncertainty, and checking that the function is adequate.
//!
//! * [`inverse`]: inverse prediction from a straight line — the estimate
//!   `x̂₀ = (ȳ₀ − a)/b`, its delta-method standard error, the exact Fieller
//!   set ([`FiellerSet`]: a bounded interval, two half-lines or the whole
//!   line), the uncertainty of a calibrated value from the coefficient
//!   covariance, and the Working–Hotelling simultaneous band.
//! * [`limits`]: detection and quantitation limits, from `σ/S` (ICH Q2) and
//!   from the prediction band (Hubaux & Vos 1970).
//! * [`levels`]: per-level replicate accumulators (streaming, mergeable) and
//!   the lack-of-fit F test.
//! * [`linearity`]: Mandel's fitting test of the straight line against a
//!   quadratic, computed exactly from a full-tier accumulator.
//! * [`poly`]: inverse use of a polynomial calibration function (root in the
//!   calibrated range, delta-method error, inverted prediction band).
//! * [`weights`]: variance functions for weighted calibration.
//!
//! Functions that need a t or F quantile sit behind the `std` feature;
//! estimates and standard errors do not. [`LevelSet`] needs an allocator;
//! [`FixedLevels`] does not.
//!
//! # Example
//! ```
//! use plumbfit::calib::{CalibError, FiellerSet, LevelSet, Reading};
//! use plumbfit::LeanMoments;
//! let xs = [0.0, 0.0, 5.0, 5.0, 10.0, 10.0];
//! let ys = [0.11, 0.09, 5.02, 4.95, 10.04, 9.98];
//! let mut acc = LeanMoments::new();
//! let mut levels = LevelSet::new();
//! acc.extend(&xs, &ys)?;
//! levels.extend(&xs, &ys)?;
//! let fit = acc.fit()?;
//! // The concentration behind the mean of 2 new readings of 7.5.
//! let inv = fit.invert_interval(&Reading::mean_of(7.5, 2), 0.95)?;
//! assert!(matches!(inv.set, FiellerSet::Bounded { .. }));
//! assert!((inv.estimate.x - 7.5).abs() < 0.1);
//! // Is the straight line adequate? (replicates at every level)
//! let lof = levels.lack_of_fit_line(&fit)?;
//! assert_eq!((lof.df_lack_of_fit, lof.df_pure_error), (1, 3));
//! // A reading of zero replicates is refused with a typed error.
//! assert_eq!(fit.invert(&Reading::mean_of(7.5, 0)), Err(CalibError::InvalidReplicates));
//! # Ok::<(), Box<dyn std::error::Error>>(())
//! ```
//!
//! The library computes. Whether a calibration is accepted, and what a
//! result means where it protects people (gas detection, clinical
//! analysis), is decided by the user's quality system, local codes and
//! licensed practice.

pub mod inverse;
pub mod levels;
pub mod limits;
pub mod linearity;
pub mod poly;
pub mod weights;

use crate::line::LineError;
use crate::moments::MomentsError;

pub use inverse::{CalibratedValue, FiellerSet, InverseEstimate, LineCoefficients, Reading};
#[cfg(feature = "std")]
pub use inverse::{InverseInterval, SimultaneousBand};
pub use levels::{FixedLevels, LackOfFit, Level, LevelSet};
#[cfg(feature = "std")]
pub use limits::DecisionLimits;
pub use limits::{LimitsFromSigma, SigmaSource};
pub use linearity::QuadraticCheck;
#[cfg(feature = "std")]
pub use poly::PolyInverseInterval;
pub use poly::{PolyCalibration, PolyInverse};
pub use weights::{user_weighted_line, weighted_line, VarianceShape, WeightedCalibration};

/// Errors from calibration functions. Arguments are checked before any work,
/// so a failing call changes nothing.
///
/// Display messages are for people and may change; match on the variant or
/// use [`CalibError::code`].
#[derive(Clone, Copy, Debug, PartialEq, Eq, thiserror::Error)]
#[non_exhaustive]
pub enum CalibError {
    /// A non-finite value (NaN or infinity) in an argument or input slice.
    #[error("non-finite value at index {index}")]
    NonFinite {
        /// Position within the input slice (0 for a scalar argument).
        index: usize,
    },
    /// A weight that is zero, negative or not finite.
    #[error("weight at index {index} is not a positive finite number")]
    InvalidWeight {
        /// Position of the offending weight.
        index: usize,
    },
    /// Input lengths differ.
    #[error("input lengths differ: {expected} expected, {found} found")]
    LengthMismatch {
        /// Length required by the first input.
        expected: usize,
        /// Length of the input that differs.
        found: usize,
    },
    /// The input slices are empty.
    #[error("input is empty")]
    EmptyInput,
    /// A confidence level or error probability outside `(0, 1)`.
    #[error("probability level must lie in (0, 1)")]
    InvalidLevel,
    /// A replicate count of zero.
    #[error("replicate count must be at least 1")]
    InvalidReplicates,
    /// The accumulated moments overflow.
    #[error("overflow; values too large")]
    Overflow,
    /// Fewer points than the quantity needs.
    #[error("too few points: {needed} needed, {have} available")]
    TooFewPoints {
        /// Points needed.
        needed: u64,
        /// Points available.
        have: u64,
    },
    /// All x values are equal.
    #[error("x has no spread")]
    NoSpread,
    /// A polynomial calibration function needs between 2 and
    /// [`poly::MAX_COEFFICIENTS`] coefficients.
    #[error("a polynomial needs 2 to 9 coefficients, {found} given")]
    InvalidCoefficientCount {
        /// Number of coefficients given.
        found: usize,
    },
    /// The calibrated range is empty, reversed or not finite.
    #[error("calibrated range must satisfy lower < upper, both finite")]
    InvalidRange,
    /// A known measurement uncertainty (or variance) that is negative or
    /// not finite.
    #[error("uncertainty must be a finite number >= 0")]
    InvalidUncertainty,
    /// A variance function cannot be evaluated at a point (for example
    /// `1/x` weights at `x <= 0`, or a power of a mean of zero).
    #[error("variance function undefined at index {index}")]
    VarianceUndefined {
        /// Position of the point.
        index: usize,
    },
    /// A fixed-capacity level store is full.
    #[error("level store full: capacity {capacity}")]
    LevelCapacity {
        /// Capacity of the store.
        capacity: usize,
    },
    /// A fit and a level store describe different numbers of points.
    #[error("count mismatch: fit has {fit} points, levels hold {levels}")]
    CountMismatch {
        /// Points in the fit.
        fit: u64,
        /// Points in the level store.
        levels: u64,
    },
    /// A degrees-of-freedom argument that is not positive.
    #[error("degrees of freedom must be positive")]
    InvalidDegreesOfFreedom,
    /// The quantity needs an intercept but the line goes through the origin.
    #[error("the line has no intercept")]
    NoIntercept,
    /// The slope is exactly zero, so no reading can be inverted.
    #[error("slope is zero; the calibration cannot be inverted")]
    ZeroSlope,
    /// A bounded interval was required but the slope is not significant at
    /// the level asked for: the Fieller set is unbounded.
    #[error("slope not significant at this level; the interval is unbounded")]
    SlopeNotSignificant,
    /// The calibration function takes the reading nowhere in the calibrated
    /// range.
    #[error("no root of the calibration function in the calibrated range")]
    NoRootInRange,
    /// The calibration function takes the reading more than once in the
    /// calibrated range (it is not monotone there).
    #[error("{count} roots in the calibrated range; the inverse is ambiguous")]
    SeveralRootsInRange {
        /// Number of roots found.
        count: usize,
    },
    /// No level holds two or more readings, so there is no pure error.
    #[error("no replicated level; pure error has no degrees of freedom")]
    NoReplicates,
    /// Too few distinct levels for the model: lack of fit needs more levels
    /// than parameters.
    #[error("{levels} levels cannot test a model with {params} parameters")]
    TooFewLevels {
        /// Distinct levels.
        levels: usize,
        /// Parameters of the model.
        params: usize,
    },
    /// The x values do not support a quadratic (fewer than three distinct
    /// values), so curvature cannot be tested.
    #[error("x values do not support a quadratic term")]
    NoCurvatureSpread,
    /// The residual variance is zero where a ratio of variances is needed.
    #[error("residual variance is zero; the test statistic is undefined")]
    ZeroResidual,
}

impl CalibError {
    /// Stable numeric code, shared with the C and Python bindings. The same
    /// condition has the same code in every module.
    pub const fn code(&self) -> u16 {
        match self {
            CalibError::NonFinite { .. } => 1,
            CalibError::InvalidWeight { .. } => 2,
            CalibError::LengthMismatch { .. } => 3,
            CalibError::EmptyInput => 4,
            CalibError::InvalidLevel => 6,
            CalibError::InvalidReplicates => 7,
            CalibError::Overflow => 100,
            CalibError::TooFewPoints { .. } => 101,
            CalibError::NoSpread => 102,
            CalibError::InvalidCoefficientCount { .. } => 30,
            CalibError::InvalidRange => 31,
            CalibError::InvalidUncertainty => 32,
            CalibError::VarianceUndefined { .. } => 33,
            CalibError::LevelCapacity { .. } => 34,
            CalibError::CountMismatch { .. } => 35,
            CalibError::InvalidDegreesOfFreedom => 36,
            CalibError::NoIntercept => 37,
            CalibError::ZeroSlope => 130,
            CalibError::SlopeNotSignificant => 131,
            CalibError::NoRootInRange => 132,
            CalibError::SeveralRootsInRange { .. } => 133,
            CalibError::NoReplicates => 134,
            CalibError::TooFewLevels { .. } => 135,
            CalibError::NoCurvatureSpread => 136,
            CalibError::ZeroResidual => 137,
        }
    }
}

impl From<LineError> for CalibError {
    fn from(e: LineError) -> Self {
        match e {
            LineError::TooFewPoints { needed, have } => CalibError::TooFewPoints { needed, have },
            LineError::NoSpread => CalibError::NoSpread,
            LineError::InvalidLevel => CalibError::InvalidLevel,
            LineError::InvalidCount => CalibError::InvalidReplicates,
            LineError::NonFinite => CalibError::NonFinite { index: 0 },
            _ => CalibError::Overflow,
        }
    }
}

impl From<MomentsError> for CalibError {
    fn from(e: MomentsError) -> Self {
        match e {
            MomentsError::NonFinite { index } => CalibError::NonFinite { index },
            MomentsError::InvalidWeight { index } => CalibError::InvalidWeight { index },
            MomentsError::LengthMismatch { x_len, other_len } => CalibError::LengthMismatch {
                expected: x_len,
                found: other_len,
            },
            MomentsError::EmptyInput => CalibError::EmptyInput,
            _ => CalibError::Overflow,
        }
    }
}

/// Checks that a scalar argument is finite.
fn finite(v: f64) -> Result<f64, CalibError> {
    if v.is_finite() {
        Ok(v)
    } else {
        Err(CalibError::NonFinite { index: 0 })
    }
}

/// Checks a probability level in `(0, 1)`.
#[cfg(feature = "std")]
fn check_level(level: f64) -> Result<(), CalibError> {
    if level > 0.0 && level < 1.0 {
        Ok(())
    } else {
        Err(CalibError::InvalidLevel)
    }
}

/// Roots of `a·u² + b·u + c = 0` (a ≠ 0, discriminant ≥ 0), ascending,
/// computed without the cancellation of the schoolbook formula: the larger
/// root in magnitude from `q = −(b + sign(b)·√D)/2`, the other as `c/q`.
#[cfg(feature = "std")]
fn quadratic_roots(a: f64, b: f64, c: f64, disc: f64) -> (f64, f64) {
    let sq = libm::sqrt(disc.max(0.0));
    let (r1, r2) = if b == 0.0 {
        let r = libm::sqrt((-c / a).max(0.0));
        (-r, r)
    } else {
        let q = -0.5 * (b + libm::copysign(sq, b));
        let r1 = q / a;
        let r2 = if q != 0.0 { c / q } else { r1 };
        (r1, r2)
    };
    if r1 <= r2 {
        (r1, r2)
    } else {
        (r2, r1)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn codes_are_in_their_ranges() {
        let args = [
            CalibError::InvalidCoefficientCount { found: 1 },
            CalibError::InvalidRange,
            CalibError::InvalidUncertainty,
            CalibError::VarianceUndefined { index: 0 },
            CalibError::LevelCapacity { capacity: 1 },
            CalibError::CountMismatch { fit: 1, levels: 2 },
            CalibError::InvalidDegreesOfFreedom,
            CalibError::NoIntercept,
        ];
        for e in args {
            assert!((30..40).contains(&e.code()), "{e:?}");
        }
        let num = [
            CalibError::ZeroSlope,
            CalibError::SlopeNotSignificant,
            CalibError::NoRootInRange,
            CalibError::SeveralRootsInRange { count: 2 },
            CalibError::NoReplicates,
            CalibError::TooFewLevels {
                levels: 2,
                params: 2,
            },
            CalibError::NoCurvatureSpread,
            CalibError::ZeroResidual,
        ];
        for e in num {
            assert!((130..140).contains(&e.code()), "{e:?}");
        }
    }

    #[test]
    fn error_is_send_sync_static() {
        fn check<T: Send + Sync + 'static>() {}
        check::<CalibError>();
    }

    #[test]
    #[cfg(feature = "std")]
    fn quadratic_roots_are_ordered_and_stable() {
        // (u − 1e-8)(u − 1e8) = u² − (1e8 + 1e-8)u + 1: the schoolbook
        // formula loses the small root entirely.
        let (lo, hi) = quadratic_roots(1.0, -(1e8 + 1e-8), 1.0, (1e8 + 1e-8f64).powi(2) - 4.0);
        assert!((lo - 1e-8).abs() < 1e-22, "{lo}");
        assert!((hi - 1e8).abs() < 1e-6, "{hi}");
        let (lo, hi) = quadratic_roots(-2.0, 0.0, 8.0, 64.0);
        assert_eq!((lo, hi), (-2.0, 2.0));
    }
}
