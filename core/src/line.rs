//! The straight-line fit `y = a + b·x` (or `y = b·x`) from a pair-moment
//! accumulator, with standard errors, tests, ANOVA and intervals.
//!
//! Everything here is computed from the accumulator's frame (see
//! [`crate::moments`]): the slope as `b0 + Sxv/Sxx`, the residual sum of
//! squares as `Svv − Sxv²/Sxx` (no cancellation when the frame is near the
//! fit) and the intercept with an exact product for `y0 − b0·x0`, so the
//! intercept does not inherit the rounding of the slope times the mean of x.

use crate::dd::{two_prod, two_sum};
use crate::moments::{MomentsError, PairMoments, Tier};

/// Errors from fitting or using a straight line.
#[derive(Clone, Copy, Debug, PartialEq, Eq, thiserror::Error)]
#[non_exhaustive]
pub enum LineError {
    /// Fewer pairs than the requested quantity needs.
    #[error("too few points: {needed} needed, {have} available")]
    TooFewPoints {
        /// Pairs needed (effective pairs under forgetting).
        needed: u64,
        /// Pairs available.
        have: u64,
    },
    /// All x values are equal, so no slope is defined.
    #[error("x has no spread; the slope is undefined")]
    NoSpread,
    /// A confidence level outside `(0, 1)`.
    #[error("confidence level must lie in (0, 1)")]
    InvalidLevel,
    /// A replicate count of zero.
    #[error("replicate count must be at least 1")]
    InvalidCount,
    /// A non-finite argument (for example an x at which to predict).
    #[error("non-finite argument")]
    NonFinite,
    /// The accumulated moments overflow.
    #[error("moment overflow; values too large for this accumulator")]
    Overflow,
}

impl LineError {
    /// Stable numeric code, shared with the C and Python bindings. The same
    /// condition has the same code in every module.
    pub const fn code(&self) -> u16 {
        match self {
            LineError::NonFinite => 1,
            LineError::InvalidLevel => 6,
            LineError::InvalidCount => 7,
            LineError::Overflow => 100,
            LineError::TooFewPoints { .. } => 101,
            LineError::NoSpread => 102,
        }
    }
}

impl From<MomentsError> for LineError {
    fn from(e: MomentsError) -> Self {
        match e {
            MomentsError::NonFinite { .. } => LineError::NonFinite,
            _ => LineError::Overflow,
        }
    }
}

/// What the weights mean.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
#[non_exhaustive]
pub enum WeightMeaning {
    /// Relative weights: only their ratios matter; the covariance is scaled
    /// by the residual variance estimated from the data (the default).
    #[default]
    Relative,
    /// Weights are known inverse variances `1/σ²`: the covariance is not
    /// rescaled, intervals use the normal distribution, and the residual sum
    /// of squares is a chi-square goodness-of-fit statistic.
    InverseVariance,
}

/// Options for [`PairMoments::fit_with`].
#[derive(Clone, Copy, Debug, Default, PartialEq)]
#[non_exhaustive]
pub struct FitOptions {
    /// Fit `y = b·x` (no intercept); R² is then uncentred.
    pub through_origin: bool,
    /// Meaning of the weights.
    pub weights: WeightMeaning,
}

impl FitOptions {
    /// Options for a line through the origin.
    pub fn through_origin() -> Self {
        FitOptions {
            through_origin: true,
            ..Self::default()
        }
    }

    /// Sets the meaning of the weights.
    pub fn with_weights(mut self, w: WeightMeaning) -> Self {
        self.weights = w;
        self
    }
}

/// A fitted straight line with its inference. All fields are plain numbers
/// so the C binding can mirror the struct; none is NaN.
///
/// Sums of squares are weighted sums when weights were used.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct LineFit {
    /// The model has no intercept (`y = b·x`).
    pub through_origin: bool,
    /// Meaning of the weights used for the covariance.
    pub weights: WeightMeaning,
    /// Pairs accumulated.
    pub count: u64,
    /// Σw.
    pub weight_sum: f64,
    /// Kish effective sample size `(Σw)²/Σw²`.
    pub effective_count: f64,
    /// A forgetting factor was applied: the t and F distributions are then
    /// approximations (degrees of freedom from the effective sample size).
    pub approximate: bool,
    /// Slope `b`.
    pub slope: f64,
    /// Intercept `a` (0 for a line through the origin).
    pub intercept: f64,
    /// Weighted mean of x.
    pub mean_x: f64,
    /// Weighted mean of y.
    pub mean_y: f64,
    /// Σw(x − x̄)².
    pub sxx: f64,
    /// Σw(x − x̄)(y − ȳ).
    pub sxy: f64,
    /// Σw x² (uncentred; used by the line through the origin).
    pub sum_x2: f64,
    /// Sample standard deviation of x (reliability-weighted divisor `W − Σw²/W`).
    pub sd_x: f64,
    /// Sample standard deviation of y (same divisor).
    pub sd_y: f64,
    /// Sample covariance of x and y (same divisor).
    pub covariance_xy: f64,
    /// Pearson correlation of x and y (always centred, also for a line
    /// through the origin; 0 when y has no spread).
    pub r: f64,
    /// R²: centred, or uncentred for a line through the origin. When there is
    /// nothing to explain (total sum of squares exactly 0) it is reported as
    /// 1: the line reproduces every reading.
    pub r_squared: f64,
    /// R² adjusted for degrees of freedom.
    pub adj_r_squared: f64,
    /// Residual sum of squares.
    pub sse: f64,
    /// Regression sum of squares.
    pub ssr: f64,
    /// Total sum of squares (centred, or uncentred through the origin).
    pub sst: f64,
    /// Regression degrees of freedom (1).
    pub df_model: f64,
    /// Residual degrees of freedom (`n − 2`, or `n − 1` through the origin;
    /// `n` is the effective count under forgetting).
    pub df_resid: f64,
    /// Residual variance `s² = SSE/df_resid`.
    pub residual_variance: f64,
    /// Residual standard deviation `s = √(SSE/df_resid)`.
    pub residual_sd: f64,
    /// Root mean square of the residuals `√(SSE/Σw)` (divisor n, not n − 2).
    pub rmse: f64,
    /// Variance scale used for the covariance: `s²` for relative weights, 1
    /// for known inverse variances.
    pub scale: f64,
    /// Standard error of the slope.
    pub se_slope: f64,
    /// Standard error of the intercept (0 through the origin).
    pub se_intercept: f64,
    /// Covariance of intercept and slope estimates.
    pub cov_intercept_slope: f64,
    /// t statistic of the slope.
    pub t_slope: f64,
    /// t statistic of the intercept (0 through the origin).
    pub t_intercept: f64,
    /// F statistic of the regression (`+∞` for an exact fit).
    pub f_stat: f64,
}

/// A two-sided interval around an estimate.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Interval {
    /// The estimate.
    pub center: f64,
    /// Its standard error.
    pub se: f64,
    /// Lower end.
    pub lower: f64,
    /// Upper end.
    pub upper: f64,
}

/// Analysis of variance of the line fit.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Anova {
    /// Regression sum of squares.
    pub ss_model: f64,
    /// Regression degrees of freedom.
    pub df_model: f64,
    /// Regression mean square.
    pub ms_model: f64,
    /// Residual sum of squares.
    pub ss_resid: f64,
    /// Residual degrees of freedom.
    pub df_resid: f64,
    /// Residual mean square.
    pub ms_resid: f64,
    /// F statistic.
    pub f_stat: f64,
    /// Upper-tail p value of F (std only; NaN-free: 0 for an exact fit).
    pub p_value: f64,
}

/// `num / den` where `den >= 0`; an exact zero over zero is 0, a positive
/// over zero is infinite (an exact fit), so no NaN escapes.
fn ratio(num: f64, den: f64) -> f64 {
    if den == 0.0 {
        if num == 0.0 {
            0.0
        } else {
            f64::INFINITY.copysign(num)
        }
    } else {
        num / den
    }
}

impl<T: Tier> PairMoments<T> {
    /// Slope and intercept of the least-squares line (needs 2 pairs with x
    /// spread; no inference).
    ///
    /// # Errors
    /// [`LineError::TooFewPoints`], [`LineError::NoSpread`], [`LineError::Overflow`].
    pub fn slope_intercept(&self) -> Result<(f64, f64), LineError> {
        let f = self.flushed()?;
        if f.count < 2 {
            return Err(LineError::TooFewPoints {
                needed: 2,
                have: f.count,
            });
        }
        let (b, a, _) = f.line_core()?;
        Ok((b, a))
    }

    /// Slope, intercept (from the exact frame formula) and the residual SS.
    fn line_core(&self) -> Result<(f64, f64, f64), LineError> {
        if !(self.sxx > 0.0) {
            return Err(LineError::NoSpread);
        }
        let d = self.sxv / self.sxx;
        let b = self.b0 + d;
        let sse = (self.svv - d * self.sxv).max(0.0);
        let mean_x = self.x0 + self.mx;
        // a = (y0 − b0·x0) + mv − d·x̄, with y0 − b0·x0 carried exactly.
        let (p, pe) = two_prod(self.b0, self.x0);
        let (s, se) = two_sum(self.y0, -p);
        let a = s + ((se - pe) + (self.mv - d * mean_x));
        Ok((b, a, sse))
    }

    /// Fits `y = a + b·x` with relative weights.
    ///
    /// # Errors
    /// [`LineError::TooFewPoints`] below 3 pairs (inference needs one
    /// residual degree of freedom), [`LineError::NoSpread`],
    /// [`LineError::Overflow`].
    pub fn fit(&self) -> Result<LineFit, LineError> {
        self.fit_with(&FitOptions::default())
    }

    /// Fits a line with the given options.
    ///
    /// # Errors
    /// As [`fit`](Self::fit); a line through the origin needs 2 pairs.
    pub fn fit_with(&self, opts: &FitOptions) -> Result<LineFit, LineError> {
        let f = self.flushed()?;
        let n = f.count;
        let origin = opts.through_origin;
        let params = if origin { 1 } else { 2 };
        let neff = if f.w2 > 0.0 { f.w * f.w / f.w2 } else { 0.0 };
        let n_used = if f.forgotten { neff } else { n as f64 };
        if n < params + 1 || !(n_used > params as f64) {
            return Err(LineError::TooFewPoints {
                needed: params + 1,
                have: if f.forgotten { neff as u64 } else { n },
            });
        }
        let (b1, a1, sse1) = f.line_core()?;
        let w = f.w;
        let mean_x = f.x0 + f.mx;
        let mean_y = f.y0 + f.mv + f.b0 * f.mx;
        let sxx = f.sxx;
        let sum_x2 = sxx + w * mean_x * mean_x;
        let (slope, intercept, sse, ssr) = if origin {
            // Σ(y − b x)² = SSE₁ + a₁²·W·Sxx/Σx²: a sum of positive terms
            // (the intercept fit's residuals are orthogonal to 1 and x).
            let slope = b1 + a1 * w * mean_x / sum_x2;
            let sse = sse1 + a1 * a1 * w * sxx / sum_x2;
            (slope, 0.0, sse, slope * slope * sum_x2)
        } else {
            (b1, a1, sse1, b1 * b1 * sxx)
        };
        let sst = ssr + sse;
        let df_model = 1.0;
        let df_resid = n_used - params as f64;
        let residual_variance = sse / df_resid;
        let scale = match opts.weights {
            WeightMeaning::Relative => residual_variance,
            WeightMeaning::InverseVariance => 1.0,
        };
        let (se_slope, se_intercept, cov_ab) = if origin {
            (libm::sqrt(scale / sum_x2), 0.0, 0.0)
        } else {
            (
                libm::sqrt(scale / sxx),
                libm::sqrt(scale * (1.0 / w + mean_x * mean_x / sxx)),
                -scale * mean_x / sxx,
            )
        };
        let r_squared = if sst > 0.0 { ssr / sst } else { 1.0 };
        let divisor = w - f.w2 / w;
        let (sd_x, sd_y, cov_xy) = if divisor > 0.0 {
            let sxy = b1 * sxx;
            let syy = b1 * sxy + sse1;
            (
                libm::sqrt(sxx / divisor),
                libm::sqrt(syy / divisor),
                sxy / divisor,
            )
        } else {
            (0.0, 0.0, 0.0)
        };
        // Pearson's r describes the data, so it is centred for either model.
        let ssr1 = b1 * b1 * sxx;
        let r = if ssr1 + sse1 > 0.0 {
            libm::sqrt(ssr1 / (ssr1 + sse1)).copysign(b1)
        } else {
            0.0
        };
        let dof_total = if origin { n_used } else { n_used - 1.0 };
        let adj_r_squared = 1.0 - (1.0 - r_squared) * dof_total / df_resid;
        let fit = LineFit {
            through_origin: origin,
            weights: opts.weights,
            count: n,
            weight_sum: w,
            effective_count: neff,
            approximate: f.forgotten,
            slope,
            intercept,
            mean_x,
            mean_y,
            sxx,
            sxy: b1 * sxx,
            sum_x2,
            sd_x,
            sd_y,
            covariance_xy: cov_xy,
            r,
            r_squared,
            adj_r_squared,
            sse,
            ssr,
            sst,
            df_model,
            df_resid,
            residual_variance,
            residual_sd: libm::sqrt(residual_variance),
            rmse: libm::sqrt(sse / w),
            scale,
            se_slope,
            se_intercept,
            cov_intercept_slope: cov_ab,
            t_slope: ratio(slope, se_slope),
            t_intercept: if origin {
                0.0
            } else {
                ratio(intercept, se_intercept)
            },
            f_stat: ratio(ssr / df_model, residual_variance),
        };
        let all = [
            fit.slope,
            fit.intercept,
            fit.sse,
            fit.ssr,
            fit.se_slope,
            fit.se_intercept,
            fit.sd_x,
            fit.sd_y,
            fit.r,
        ];
        if all.iter().any(|v| !v.is_finite()) {
            return Err(LineError::Overflow);
        }
        Ok(fit)
    }
}

#[cfg(feature = "std")]
fn check_level(level: f64) -> Result<(), LineError> {
    if level > 0.0 && level < 1.0 {
        Ok(())
    } else {
        Err(LineError::InvalidLevel)
    }
}

impl LineFit {
    /// Fitted value `ŷ(x)`, evaluated about the means for accuracy.
    pub fn fitted(&self, x: f64) -> f64 {
        if self.through_origin {
            self.slope * x
        } else {
            self.mean_y + self.slope * (x - self.mean_x)
        }
    }

    /// Standard error of the fitted mean response at `x`.
    ///
    /// # Errors
    /// [`LineError::NonFinite`] for a non-finite `x`, or an `x` so far out
    /// that the standard error overflows.
    pub fn se_mean(&self, x: f64) -> Result<f64, LineError> {
        if !x.is_finite() {
            return Err(LineError::NonFinite);
        }
        finite(libm::sqrt(self.var_fitted(x)))
    }

    fn var_fitted(&self, x: f64) -> f64 {
        if self.through_origin {
            self.scale * x * x / self.sum_x2
        } else {
            let d = x - self.mean_x;
            self.scale * (1.0 / self.weight_sum + d * d / self.sxx)
        }
    }

    /// Standard error for predicting the mean of `m` new observations (each
    /// of unit weight) at `x`: `√(scale·(1/m) + var(ŷ(x)))`.
    ///
    /// # Errors
    /// [`LineError::InvalidCount`] for `m = 0`, [`LineError::NonFinite`]
    /// (as [`LineFit::se_mean`]).
    pub fn se_prediction(&self, x: f64, m: u32) -> Result<f64, LineError> {
        if m == 0 {
            return Err(LineError::InvalidCount);
        }
        if !x.is_finite() {
            return Err(LineError::NonFinite);
        }
        finite(libm::sqrt(self.scale / m as f64 + self.var_fitted(x)))
    }
}

/// A result that overflowed is an error, never an infinite or NaN value.
fn finite(v: f64) -> Result<f64, LineError> {
    if v.is_finite() {
        Ok(v)
    } else {
        Err(LineError::NonFinite)
    }
}

#[cfg(feature = "std")]
impl LineFit {
    /// Degrees of freedom for t and F (infinite with known variances).
    fn t_df(&self) -> f64 {
        match self.weights {
            WeightMeaning::Relative => self.df_resid,
            WeightMeaning::InverseVariance => f64::INFINITY,
        }
    }

    /// Two-sided t quantile for `level`, e.g. 0.95.
    ///
    /// # Errors
    /// [`LineError::InvalidLevel`], also for a level so close to 1 that
    /// the quantile is not finite in double precision.
    pub fn t_critical(&self, level: f64) -> Result<f64, LineError> {
        check_level(level)?;
        let t = crate::dist::t_quantile(0.5 + level / 2.0, self.t_df());
        if t.is_finite() {
            Ok(t)
        } else {
            Err(LineError::InvalidLevel)
        }
    }

    fn interval(&self, center: f64, se: f64, level: f64) -> Result<Interval, LineError> {
        let t = self.t_critical(level)?;
        Ok(Interval {
            center,
            se,
            lower: center - t * se,
            upper: center + t * se,
        })
    }

    /// Two-sided p value of the slope's t statistic.
    pub fn p_slope(&self) -> f64 {
        crate::dist::t_two_sided(self.t_slope, self.t_df())
    }

    /// Two-sided p value of the intercept's t statistic (1 through the origin).
    pub fn p_intercept(&self) -> f64 {
        if self.through_origin {
            return 1.0;
        }
        crate::dist::t_two_sided(self.t_intercept, self.t_df())
    }

    /// Confidence interval of the slope.
    ///
    /// # Errors
    /// [`LineError::InvalidLevel`].
    pub fn slope_interval(&self, level: f64) -> Result<Interval, LineError> {
        self.interval(self.slope, self.se_slope, level)
    }

    /// Confidence interval of the intercept.
    ///
    /// # Errors
    /// [`LineError::InvalidLevel`].
    pub fn intercept_interval(&self, level: f64) -> Result<Interval, LineError> {
        self.interval(self.intercept, self.se_intercept, level)
    }

    /// Confidence band for the mean response at `x`.
    ///
    /// # Errors
    /// [`LineError::InvalidLevel`], [`LineError::NonFinite`].
    pub fn mean_band(&self, x: f64, level: f64) -> Result<Interval, LineError> {
        let se = self.se_mean(x)?;
        self.band(self.fitted(x), se, level)
    }

    /// An interval around a fitted value; ends that overflow are an error.
    fn band(&self, center: f64, se: f64, level: f64) -> Result<Interval, LineError> {
        let iv = self.interval(center, se, level)?;
        finite(iv.center)?;
        finite(iv.lower)?;
        finite(iv.upper)?;
        Ok(iv)
    }

    /// Prediction interval for the mean of `m` new observations at `x`.
    ///
    /// # Errors
    /// [`LineError::InvalidLevel`], [`LineError::InvalidCount`],
    /// [`LineError::NonFinite`].
    pub fn prediction(&self, x: f64, m: u32, level: f64) -> Result<Interval, LineError> {
        let se = self.se_prediction(x, m)?;
        self.band(self.fitted(x), se, level)
    }

    /// The analysis-of-variance table.
    pub fn anova(&self) -> Anova {
        let p_value = crate::dist::f_upper(self.f_stat, self.df_model, self.df_resid);
        Anova {
            ss_model: self.ssr,
            df_model: self.df_model,
            ms_model: self.ssr / self.df_model,
            ss_resid: self.sse,
            df_resid: self.df_resid,
            ms_resid: self.residual_variance,
            f_stat: self.f_stat,
            p_value: if p_value.is_nan() { 1.0 } else { p_value },
        }
    }

    /// With known inverse-variance weights: upper-tail p value of the
    /// residual sum of squares as a chi-square on `df_resid` (goodness of fit).
    pub fn p_chi_square(&self) -> f64 {
        crate::dist::chi2_upper(self.sse, self.df_resid)
    }
}
