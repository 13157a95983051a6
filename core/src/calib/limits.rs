//! Detection and quantitation limits of a straight-line calibration.
//!
//! * From a standard deviation and the slope (ICH Q2(R1), "based on the
//!   standard deviation of the response and the slope"): detection limit
//!   `3.3·σ/S`, quantitation limit `10·σ/S`, with `σ` taken from the
//!   residual SD of the line, the standard error of its intercept, or a
//!   blank's SD supplied by the caller ([`SigmaSource`]).
//! * From the prediction band (Hubaux & Vos 1970, Anal. Chem. 42:849–855,
//!   from memory): the decision level `y_C` is the upper one-sided `1 − α`
//!   prediction limit at `x = 0`; the decision limit `x_C` is the `x` whose
//!   fitted value is `y_C`; the detection limit `x_D` is the smallest `x`
//!   whose lower one-sided `1 − β` prediction limit reaches `y_C`.
//!
//! Limits are in `x` units (concentration) and positive. A negative slope is
//! handled by mirroring the response, so "upper" means "away from the
//! blank" in the direction the signal grows.

#[cfg(feature = "std")]
use super::finite;
use super::CalibError;
use crate::line::LineFit;

/// Where the `σ` of `3.3·σ/S` and `10·σ/S` comes from.
#[derive(Clone, Copy, Debug, PartialEq)]
#[non_exhaustive]
pub enum SigmaSource {
    /// The residual standard deviation of the calibration line.
    ResidualSd,
    /// The standard error of the line's intercept.
    InterceptSe,
    /// A standard deviation measured by the caller (for example of blank
    /// responses), in `y` units.
    Given(f64),
}

/// Limits `3.3·σ/|S|` and `10·σ/|S|`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct LimitsFromSigma {
    /// Where `σ` came from.
    pub source: SigmaSource,
    /// The `σ` used, in `y` units.
    pub sigma: f64,
    /// The slope `S` used.
    pub slope: f64,
    /// Detection limit `3.3·σ/|S|`, in `x` units.
    pub detection: f64,
    /// Quantitation limit `10·σ/|S|`, in `x` units.
    pub quantitation: f64,
}

/// Decision and detection limits from the prediction band.
#[cfg(feature = "std")]
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct DecisionLimits {
    /// Probability of a false "detected" for a blank (α).
    pub alpha: f64,
    /// Probability of a false "not detected" at the detection limit (β).
    pub beta: f64,
    /// Decision level in `y` units: a reading beyond it is declared
    /// detected.
    pub y_critical: f64,
    /// Decision limit `x_C` in `x` units.
    pub x_critical: f64,
    /// Detection limit `x_D` in `x` units.
    pub x_detection: f64,
}

impl LineFit {
    /// Detection and quantitation limits `3.3·σ/|S|` and `10·σ/|S|` (ICH Q2).
    ///
    /// For a weighted fit the residual SD and the intercept's SE are in the
    /// units of a reading of unit weight; state the blank's SD with
    /// [`SigmaSource::Given`] when that is not what is meant.
    ///
    /// # Errors
    /// [`CalibError::ZeroSlope`]; [`CalibError::NoIntercept`] for
    /// [`SigmaSource::InterceptSe`] on a line through the origin;
    /// [`CalibError::InvalidUncertainty`] for a negative or non-finite
    /// given `σ`; [`CalibError::Overflow`] if a limit overflows.
    pub fn limits_from_sigma(&self, source: SigmaSource) -> Result<LimitsFromSigma, CalibError> {
        let sigma = match source {
            SigmaSource::ResidualSd => self.residual_sd,
            SigmaSource::InterceptSe => {
                if self.through_origin {
                    return Err(CalibError::NoIntercept);
                }
                self.se_intercept
            }
            SigmaSource::Given(s) => {
                if !(s >= 0.0) || !s.is_finite() {
                    return Err(CalibError::InvalidUncertainty);
                }
                s
            }
        };
        if self.slope == 0.0 {
            return Err(CalibError::ZeroSlope);
        }
        let sb = libm::fabs(self.slope);
        let quantitation = 10.0 * sigma / sb;
        if !quantitation.is_finite() {
            // The larger limit covers the detection limit too.
            return Err(CalibError::Overflow);
        }
        Ok(LimitsFromSigma {
            source,
            sigma,
            slope: self.slope,
            detection: 3.3 * sigma / sb,
            quantitation,
        })
    }
}

#[cfg(feature = "std")]
impl LineFit {
    /// Decision level, decision limit and detection limit (Hubaux & Vos)
    /// for a future result that is the mean of `replicates` readings, each
    /// of calibration weight `weight` (1 when unweighted), with one-sided
    /// error probabilities `alpha` and `beta`.
    ///
    /// # Errors
    /// [`CalibError::InvalidLevel`] unless `0 < alpha, beta < 0.5`;
    /// [`CalibError::InvalidReplicates`]; [`CalibError::InvalidWeight`];
    /// [`CalibError::ZeroSlope`]; [`CalibError::SlopeNotSignificant`] when
    /// the lower prediction limit never reaches the decision level (the
    /// slope is too uncertain at `beta`).
    pub fn decision_limits(
        &self,
        alpha: f64,
        beta: f64,
        replicates: u32,
        weight: f64,
    ) -> Result<DecisionLimits, CalibError> {
        for p in [alpha, beta] {
            if !(p > 0.0 && p < 0.5) {
                return Err(CalibError::InvalidLevel);
            }
        }
        if replicates == 0 {
            return Err(CalibError::InvalidReplicates);
        }
        if !(weight > 0.0) || !weight.is_finite() {
            return Err(CalibError::InvalidWeight { index: 0 });
        }
        if self.slope == 0.0 {
            return Err(CalibError::ZeroSlope);
        }
        let quantile = |p: f64| match self.weights {
            crate::line::WeightMeaning::InverseVariance => crate::dist::normal_quantile(1.0 - p),
            _ => crate::dist::t_quantile(1.0 - p, self.df_resid),
        };
        let (ta, tb) = (quantile(alpha), quantile(beta));
        let (cx, k0, q) = if self.through_origin {
            (0.0, 0.0, self.sum_x2)
        } else {
            (self.mean_x, 1.0 / self.weight_sum, self.sxx)
        };
        let s2 = self.scale;
        let h = 1.0 / (replicates as f64 * weight) + k0;
        let sb = libm::fabs(self.slope);
        // Half-width of the one-sided band at x = 0, in y units.
        let l = ta * libm::sqrt(s2 * (h + cx * cx / q));
        let y_critical = self.fitted(0.0) + libm::copysign(l, self.slope);
        let x_critical = l / sb;
        // (|b|·x − L)² = tβ²·s²·(h + (x − x̄)²/q), larger root.
        let tb2s2 = tb * tb * s2;
        let a = sb * sb - tb2s2 / q;
        if !(a > 0.0) {
            return Err(CalibError::SlopeNotSignificant);
        }
        let bq = -2.0 * sb * l + 2.0 * tb2s2 * cx / q;
        let c = l * l - tb2s2 * (h + cx * cx / q);
        // disc/4 = T·(h·A + (|b|·x̄ − L)²/q), T = tβ²s²: no cancellation.
        let disc = 4.0 * tb2s2 * (h * a + (sb * cx - l) * (sb * cx - l) / q);
        let (_, x_detection) = super::quadratic_roots(a, bq, c, disc);
        let out = DecisionLimits {
            alpha,
            beta,
            y_critical,
            x_critical,
            x_detection,
        };
        for v in [out.y_critical, out.x_critical, out.x_detection] {
            finite(v).map_err(|_| CalibError::Overflow)?;
        }
        Ok(out)
    }
}
