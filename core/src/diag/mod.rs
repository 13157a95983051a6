//! Residual diagnostics for the straight-line fit: is the line adequate?
//!
//! Two sources, one vocabulary:
//!
//! * **From the full-tier accumulator alone** ([`stream_checks`]): the
//!   residual power sums `Σe²`, `Σe³`, `Σe⁴` and `Σe²·(x − x̄)` are
//!   polynomials in the fitted slope and the centred co-moments up to order
//!   4 (NUMERICS A4), so skewness, kurtosis, Jarque–Bera and Breusch–Pagan
//!   (original and Koenker's studentized form) are *exact* for the
//!   full-sample fit with no stored data. They are evaluated in the
//!   accumulator's frame, where `e = (v − v̄) − d·(dx − dx̄)` with `d` the
//!   small slope left after the provisional one, so near-perfect fits keep
//!   their digits. Durbin–Watson comes from the lag-1 difference sums
//!   (`Σ(Δe)² = ΣΔv² − 2dΣΔxΔv + d²ΣΔx²`; the intercept cancels) and the
//!   first and last pair; merges keep all of it exact.
//! * **From retained data** ([`ResidualSet`] and the slice functions):
//!   leverage, studentized residuals, Cook's distance, DFFITS with flags,
//!   Shapiro–Wilk, Anderson–Darling, the exact Durbin–Watson p value, and
//!   the pairs for residual plots (allocating and `_into` forms).
//!
//! # Durbin–Watson p values
//! The exact null distribution of `d` depends on the x values. With
//! retained x the p value is exact: Imhof (1961) inversion over the
//! eigenvalues of `M·A` for `4 ≤ n ≤` [`EXACT_SERIAL_MAX_N`], the normal
//! approximation with the design's exact mean and variance beyond. The
//! accumulator keeps no x values, so [`stream_checks`] gives *bounds*: the
//! exact p values of Durbin & Watson's bounding statistics `d_L` and `d_U`
//! (eigenvalues `2(1 − cos(πj/n))`) by the same Imhof inversion, or their
//! normal approximations beyond the limit. [`SerialCheck::method`] says
//! which was used.
//!
//! # Weighted and forgotten data
//! These diagnostics are defined for the unweighted least-squares fit. A
//! weighted accumulator (any weight other than 1) or one aged by a
//! forgetting factor is refused with [`DiagError::Weighted`] or
//! [`DiagError::Forgotten`] rather than given a statistic whose reference
//! distribution does not apply; the same holds for a weighted or forgotten
//! [`LineFit`](crate::LineFit) passed with retained data.
//!
//! # Cut-offs
//! The influence flags use common-practice cut-offs (Belsley, Kuh & Welsch
//! 1980; Cook & Weisberg 1982): leverage `> 2p/n`, `|external t| > 2` and
//! `> 3`, Cook's distance `> 4/n` and `> 1`, `|DFFITS| > 2√(p/n)`. They are
//! screening aids, not verdicts: acceptance of a calibration belongs to the
//! user's quality system.

mod normal;
mod normality;
mod retained;
mod serial;
mod stream;

pub use normality::{
    anderson_darling, shapiro_wilk, AndersonDarling, ShapiroWilk, SHAPIRO_WILK_MAX_N,
};
pub use retained::{
    influence_into, model_influence, model_influence_into, normal_pairs_into, residuals_into,
    versus_fitted_into, versus_x_into, PointInfluence, ResidualSet,
};
pub use serial::EXACT_SERIAL_MAX_N;
pub use stream::{stream_checks, stream_statistics};

/// Errors from the residual diagnostics. Inputs are never modified.
///
/// Display messages are for people and may change; match on the variant or
/// use [`DiagError::code`].
#[derive(Clone, Copy, Debug, PartialEq, Eq, thiserror::Error)]
#[non_exhaustive]
pub enum DiagError {
    /// An input value is NaN or infinite.
    #[error("non-finite value at index {index}")]
    NonFinite {
        /// Position of the offending value.
        index: usize,
    },
    /// Input slices differ in length.
    #[error("input lengths differ: {x_len} x values, {other_len} other values")]
    LengthMismatch {
        /// Length of the `x` slice.
        x_len: usize,
        /// Length of the first slice that differs from it.
        other_len: usize,
    },
    /// The input is empty.
    #[error("input is empty")]
    EmptyInput,
    /// The moments overflow.
    #[error("moment overflow; values too large for this accumulator")]
    Overflow,
    /// Fewer points than the statistic needs.
    #[error("too few points: {needed} needed, {have} available")]
    TooFewPoints {
        /// Points needed.
        needed: u64,
        /// Points available.
        have: u64,
    },
    /// All x values are equal, so there is no fitted line.
    #[error("x has no spread; the slope is undefined")]
    NoSpread,
    /// An output slice is shorter than the number of values to write.
    #[error("output too short: {needed} needed, {have} given")]
    OutputTooShort {
        /// Entries needed.
        needed: usize,
        /// Entries given.
        have: usize,
    },
    /// The fit has no intercept; these residual checks assume one.
    #[error("the fit is through the origin; diagnostics need an intercept")]
    ThroughOrigin,
    /// The fit was made from a different number of points than given.
    #[error("the fit has {fit_count} points but {data_len} were given")]
    FitMismatch {
        /// Points in the fit.
        fit_count: u64,
        /// Points given with it.
        data_len: usize,
    },
    /// The design does not match the model fit (row length or count).
    #[error("rows do not match the model: {expected} values per row expected")]
    ModelMismatch {
        /// Values per row the model expects.
        expected: usize,
    },
    /// More points than the method is defined for (Shapiro–Wilk: 5000).
    #[error("{n} points exceed the method's limit of {max}")]
    TooManyPoints {
        /// Points given.
        n: usize,
        /// Largest n the method accepts.
        max: usize,
    },
    /// Weighted data: the diagnostics are defined for unweighted fits.
    #[error("weighted data are not supported by this diagnostic")]
    Weighted,
    /// Forgotten (exponentially aged) data: not a plain sample.
    #[error("data aged by a forgetting factor are not supported by this diagnostic")]
    Forgotten,
    /// All residuals are zero (an exact fit), so shape and scale are
    /// undefined.
    #[error("residual variance is zero; the fit is exact")]
    ZeroResidualVariance,
    /// The numerical inversion for a p value did not reach its tolerance.
    #[error("p value integration did not converge")]
    NoConvergence,
}

impl DiagError {
    /// Stable numeric code, shared with the C and Python bindings. The same
    /// condition has the same code in every module.
    pub const fn code(&self) -> u16 {
        match self {
            DiagError::NonFinite { .. } => 1,
            DiagError::LengthMismatch { .. } => 3,
            DiagError::EmptyInput => 4,
            DiagError::OutputTooShort { .. } => 40,
            DiagError::ThroughOrigin => 41,
            DiagError::FitMismatch { .. } => 42,
            DiagError::ModelMismatch { .. } => 43,
            DiagError::Overflow => 100,
            DiagError::TooFewPoints { .. } => 101,
            DiagError::NoSpread => 102,
            DiagError::TooManyPoints { .. } => 140,
            DiagError::Weighted => 141,
            DiagError::Forgotten => 142,
            DiagError::ZeroResidualVariance => 143,
            DiagError::NoConvergence => 144,
        }
    }
}

impl From<crate::MomentsError> for DiagError {
    fn from(e: crate::MomentsError) -> Self {
        match e {
            crate::MomentsError::NonFinite { index } => DiagError::NonFinite { index },
            crate::MomentsError::LengthMismatch { x_len, other_len } => {
                DiagError::LengthMismatch { x_len, other_len }
            }
            crate::MomentsError::EmptyInput => DiagError::EmptyInput,
            _ => DiagError::Overflow,
        }
    }
}

/// Shape and spread of the residuals of the full-sample line fit.
///
/// The same fields come from the accumulator ([`stream_checks`]) and from
/// retained data ([`ResidualSet::shape`]); on the same data they agree to
/// rounding.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct ResidualShape {
    /// Number of points.
    pub count: u64,
    /// Mean residual, as computed (zero for a fit with an intercept: from
    /// the accumulator it is the centred first moment `M₀₁ − d·M₁₀`, which
    /// is exactly 0).
    pub residual_mean: f64,
    /// `Σe²`.
    pub sum_sq: f64,
    /// `Σe³`.
    pub sum_cube: f64,
    /// `Σe⁴`.
    pub sum_fourth: f64,
    /// `Σe²·(x − x̄)`, the term that drives the spread test.
    pub sum_sq_dx: f64,
    /// Skewness `g₁ = m₃ / m₂^{3/2}` (moments with divisor n).
    pub skewness: f64,
    /// Kurtosis `m₄ / m₂²` (3 for normal data; not the excess).
    pub kurtosis: f64,
    /// Jarque–Bera `n/6·[g₁² + (kurtosis − 3)²/4]` (Jarque & Bera 1980).
    pub jarque_bera: f64,
    /// Upper tail of χ²(2) at the Jarque–Bera statistic (asymptotic).
    pub jarque_bera_p: f64,
    /// Breusch–Pagan statistic in the original form, `ESS / (2σ̂⁴)` of the
    /// regression of `e²` on `(1, x)`, `σ̂² = Σe²/n` (Breusch & Pagan 1979).
    pub spread_lm: f64,
    /// Upper tail of χ²(1) at [`spread_lm`](Self::spread_lm).
    pub spread_lm_p: f64,
    /// Koenker's studentized form `n·R²` of the same regression (Koenker
    /// 1981); robust to non-normal errors. 0 when every `e²` is equal (the
    /// auxiliary regression then has nothing to explain).
    pub spread_lm_studentized: f64,
    /// Upper tail of χ²(1) at
    /// [`spread_lm_studentized`](Self::spread_lm_studentized).
    pub spread_lm_studentized_p: f64,
}

/// How a Durbin–Watson p value was obtained.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[non_exhaustive]
pub enum SerialMethod {
    /// Exact: Imhof inversion over the eigenvalues of `M·A` from the x values.
    Exact,
    /// Normal approximation with the design's exact mean and variance of `d`
    /// (retained data beyond [`EXACT_SERIAL_MAX_N`]).
    Normal,
    /// Exact p values of the bounding statistics `d_L`, `d_U` (Imhof on the
    /// eigenvalues `2(1 − cos(πj/n))`): the accumulator has no x values.
    ExactBounds,
    /// Normal approximations of the bounding statistics (accumulator beyond
    /// [`EXACT_SERIAL_MAX_N`]).
    NormalBounds,
    /// No p value: too few points (n < 4), or not requested
    /// ([`stream_statistics`]); only the statistic is given and the p value
    /// range is `[0, 1]`.
    Unavailable,
}

/// Serial correlation of time-ordered residuals: the Durbin–Watson
/// statistic, the lag-1 autocorrelation, and the p value for positive
/// autocorrelation.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SerialCheck {
    /// Points.
    pub count: u64,
    /// Durbin–Watson `d = Σ(eₜ − eₜ₋₁)² / Σeₜ²` (Durbin & Watson 1950); near
    /// 2 without serial correlation, small for positive correlation.
    pub durbin_watson: f64,
    /// Lag-1 autocorrelation `Σeₜeₜ₋₁ / Σeₜ²`.
    pub lag1_autocorrelation: f64,
    /// Lower end of `P(d ≤ observed)` under independent normal errors (the
    /// p value against positive autocorrelation). Equal to the upper end
    /// for [`SerialMethod::Exact`] and [`SerialMethod::Normal`].
    pub p_positive_low: f64,
    /// Upper end of that p value; use this end for a conservative test.
    pub p_positive_high: f64,
    /// How the p value was obtained.
    pub method: SerialMethod,
}

impl SerialCheck {
    /// Conservative p value against positive autocorrelation (the upper end).
    pub fn p_positive(&self) -> f64 {
        self.p_positive_high
    }

    /// Conservative p value against negative autocorrelation,
    /// `P(d ≥ observed) ≤ 1 − p_positive_low`.
    pub fn p_negative(&self) -> f64 {
        1.0 - self.p_positive_low
    }
}

/// Everything [`stream_checks`] computes from a full-tier accumulator.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct StreamChecks {
    /// Shape, normality and spread statistics.
    pub shape: ResidualShape,
    /// Serial correlation with p value bounds.
    pub serial: SerialCheck,
}

/// Shape statistics from the residual power sums (shared by both sources).
pub(crate) fn shape_from_sums(
    n: u64,
    mean: f64,
    s2: f64,
    s3: f64,
    s4: f64,
    s2dx: f64,
    sxx: f64,
) -> Result<ResidualShape, DiagError> {
    if !(s2 > 0.0) {
        return Err(DiagError::ZeroResidualVariance);
    }
    let nf = n as f64;
    let m2 = s2 / nf;
    let skewness = (s3 / nf) / (m2 * libm::sqrt(m2));
    let kurtosis = (s4 / nf) / (m2 * m2);
    let ex = kurtosis - 3.0;
    let jarque_bera = nf / 6.0 * (skewness * skewness + 0.25 * ex * ex);
    // Auxiliary regression of e² on (1, x): ESS = (Σe²·dx)²/Sxx.
    let ess = s2dx * s2dx / sxx;
    let tss = s4 - s2 * s2 / nf;
    let spread_lm = ess / (2.0 * m2 * m2);
    let spread_lm_studentized = if tss > 0.0 { nf * ess / tss } else { 0.0 };
    let out = ResidualShape {
        count: n,
        residual_mean: mean,
        sum_sq: s2,
        sum_cube: s3,
        sum_fourth: s4,
        sum_sq_dx: s2dx,
        skewness,
        kurtosis,
        jarque_bera,
        jarque_bera_p: normal::chi2_2_sf(jarque_bera),
        spread_lm,
        spread_lm_p: normal::chi2_1_sf(spread_lm),
        spread_lm_studentized,
        spread_lm_studentized_p: normal::chi2_1_sf(spread_lm_studentized),
    };
    let vals = [
        out.skewness,
        out.kurtosis,
        out.jarque_bera,
        out.spread_lm,
        out.spread_lm_studentized,
    ];
    if vals.iter().all(|v| v.is_finite()) {
        Ok(out)
    } else {
        Err(DiagError::Overflow)
    }
}
