//! The fitted straight line as a plain C struct (`pf_fitted_line`) and the
//! interval, prediction and ANOVA functions that read it.

use crate::boundary::{guard, write_out};
use crate::status::*;
use pf_core::line::{Anova, Interval};
use pf_core::{FitOptions, LineError, LineFit, WeightMeaning};

/// `pf_line_fit` option bit: fit `y = b*x` (no intercept); R^2 is then
/// uncentred.
pub const PF_FIT_THROUGH_ORIGIN: u32 = 1;
/// `pf_line_fit` option bit: the weights are known inverse variances
/// `1/sigma^2`: the covariance is not rescaled by the residual variance and
/// intervals use the normal distribution.
pub const PF_FIT_KNOWN_VARIANCE: u32 = 2;

/// Options from `PF_FIT_*` bits; `None` for unknown bits.
pub(crate) fn options_from_bits(bits: u32) -> Option<FitOptions> {
    if bits & !(PF_FIT_THROUGH_ORIGIN | PF_FIT_KNOWN_VARIANCE) != 0 {
        return None;
    }
    let mut o = if bits & PF_FIT_THROUGH_ORIGIN != 0 {
        FitOptions::through_origin()
    } else {
        FitOptions::default()
    };
    if bits & PF_FIT_KNOWN_VARIANCE != 0 {
        o = o.with_weights(WeightMeaning::InverseVariance);
    }
    Some(o)
}

/// A fitted straight line `y = intercept + slope*x` with its inference, as
/// filled by `pf_line_fit`. Plain data in caller memory: copy it, keep it,
/// share it between threads freely. The `pf_fitted_line_*` functions read
/// it; pass them a struct filled by `pf_line_fit` and left unmodified. No
/// field is NaN. Sums of squares are weighted sums when weights were used.
#[repr(C)]
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct pf_fitted_line {
    /// The model has no intercept (`PF_FIT_THROUGH_ORIGIN`).
    pub through_origin: bool,
    /// The weights were taken as known inverse variances
    /// (`PF_FIT_KNOWN_VARIANCE`).
    pub known_variance: bool,
    /// A forgetting factor was applied: t and F are then approximations
    /// with degrees of freedom from the effective count.
    pub approximate: bool,
    /// Pairs accumulated.
    pub count: u64,
    /// Sum of the weights.
    pub weight_sum: f64,
    /// Effective number of pairs `sum(w)^2 / sum(w^2)`.
    pub effective_count: f64,
    /// Slope.
    pub slope: f64,
    /// Intercept (0 through the origin).
    pub intercept: f64,
    /// Weighted mean of x.
    pub mean_x: f64,
    /// Weighted mean of y.
    pub mean_y: f64,
    /// Sum of w*(x - mean_x)^2.
    pub sxx: f64,
    /// Sum of w*(x - mean_x)*(y - mean_y).
    pub sxy: f64,
    /// Sum of w*x^2 (uncentred).
    pub x_sq_sum: f64,
    /// Sample standard deviation of x.
    pub x_sd: f64,
    /// Sample standard deviation of y.
    pub y_sd: f64,
    /// Sample covariance of x and y.
    pub xy_cov: f64,
    /// Correlation of x and y (sign of the slope; uncentred through the
    /// origin).
    pub correlation: f64,
    /// Coefficient of determination R^2.
    pub r_squared: f64,
    /// R^2 adjusted for degrees of freedom.
    pub r_squared_adj: f64,
    /// Residual sum of squares.
    pub resid_ss: f64,
    /// Sum of squares explained by the line.
    pub model_ss: f64,
    /// Total sum of squares (uncentred through the origin).
    pub total_ss: f64,
    /// Degrees of freedom of the line (1).
    pub model_df: f64,
    /// Residual degrees of freedom (n - 2, or n - 1 through the origin).
    pub resid_df: f64,
    /// Residual variance `resid_ss / resid_df`.
    pub resid_var: f64,
    /// Residual standard deviation `sqrt(resid_var)`.
    pub resid_sd: f64,
    /// Root mean square residual `sqrt(resid_ss / weight_sum)`.
    pub rms_resid: f64,
    /// Variance scale of the covariance: `resid_var`, or 1 with known
    /// variances.
    pub var_scale: f64,
    /// Standard error of the slope.
    pub slope_se: f64,
    /// Standard error of the intercept (0 through the origin).
    pub intercept_se: f64,
    /// Covariance of the intercept and slope estimates.
    pub slope_intercept_cov: f64,
    /// t statistic of the slope.
    pub slope_t: f64,
    /// t statistic of the intercept (0 through the origin).
    pub intercept_t: f64,
    /// Two-sided p value of `slope_t`.
    pub slope_p: f64,
    /// Two-sided p value of `intercept_t` (1 through the origin).
    pub intercept_p: f64,
    /// F statistic of the line (+infinity for an exact fit).
    pub f_stat: f64,
}

/// A two-sided interval around an estimate.
///
/// Plain data owned by the caller (stack, static or heap); the library
/// keeps no pointer to it and it may be copied and read from any thread.
#[repr(C)]
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct pf_interval {
    /// The estimate.
    pub estimate: f64,
    /// Its standard error.
    pub std_error: f64,
    /// Lower end.
    pub lower: f64,
    /// Upper end.
    pub upper: f64,
}

/// Analysis of variance of a line fit.
///
/// Plain data owned by the caller (stack, static or heap); the library
/// keeps no pointer to it and it may be copied and read from any thread.
#[repr(C)]
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct pf_anova {
    /// Sum of squares explained by the line.
    pub model_ss: f64,
    /// Its degrees of freedom.
    pub model_df: f64,
    /// Its mean square.
    pub model_ms: f64,
    /// Residual sum of squares.
    pub resid_ss: f64,
    /// Residual degrees of freedom.
    pub resid_df: f64,
    /// Residual mean square.
    pub resid_ms: f64,
    /// F statistic.
    pub f_stat: f64,
    /// Upper-tail p value of the F statistic.
    pub f_p: f64,
}

impl pf_fitted_line {
    pub(crate) fn from_fit(f: &LineFit) -> Self {
        pf_fitted_line {
            through_origin: f.through_origin,
            known_variance: f.weights == WeightMeaning::InverseVariance,
            approximate: f.approximate,
            count: f.count,
            weight_sum: f.weight_sum,
            effective_count: f.effective_count,
            slope: f.slope,
            intercept: f.intercept,
            mean_x: f.mean_x,
            mean_y: f.mean_y,
            sxx: f.sxx,
            sxy: f.sxy,
            x_sq_sum: f.sum_x2,
            x_sd: f.sd_x,
            y_sd: f.sd_y,
            xy_cov: f.covariance_xy,
            correlation: f.r,
            r_squared: f.r_squared,
            r_squared_adj: f.adj_r_squared,
            resid_ss: f.sse,
            model_ss: f.ssr,
            total_ss: f.sst,
            model_df: f.df_model,
            resid_df: f.df_resid,
            resid_var: f.residual_variance,
            resid_sd: f.residual_sd,
            rms_resid: f.rmse,
            var_scale: f.scale,
            slope_se: f.se_slope,
            intercept_se: f.se_intercept,
            slope_intercept_cov: f.cov_intercept_slope,
            slope_t: f.t_slope,
            intercept_t: f.t_intercept,
            slope_p: f.p_slope(),
            intercept_p: f.p_intercept(),
            f_stat: f.f_stat,
        }
    }
}

/// Reads a C struct back into the core's `LineFit`. The flags are read as
/// bytes, so a struct with garbage in them is not undefined behaviour.
///
/// # Safety
/// `p` is non-NULL and valid for reading one `pf_fitted_line` (maybe
/// unaligned).
pub(crate) unsafe fn to_fit(p: *const pf_fitted_line) -> LineFit {
    let flag = |b: *const bool| {
        // SAFETY: `b` points into the struct `p` refers to; one byte.
        unsafe { b.cast::<u8>().read_unaligned() != 0 }
    };
    // SAFETY: `p` valid for reads by the contract; the field addresses are
    // taken without creating references.
    let (origin, known, approx) = unsafe {
        (
            flag(core::ptr::addr_of!((*p).through_origin)),
            flag(core::ptr::addr_of!((*p).known_variance)),
            flag(core::ptr::addr_of!((*p).approximate)),
        )
    };
    macro_rules! rd {
        ($f:ident) => {
            // SAFETY: as above; plain-number fields accept any bits.
            unsafe { core::ptr::addr_of!((*p).$f).read_unaligned() }
        };
    }
    LineFit {
        through_origin: origin,
        weights: if known {
            WeightMeaning::InverseVariance
        } else {
            WeightMeaning::Relative
        },
        count: rd!(count),
        weight_sum: rd!(weight_sum),
        effective_count: rd!(effective_count),
        approximate: approx,
        slope: rd!(slope),
        intercept: rd!(intercept),
        mean_x: rd!(mean_x),
        mean_y: rd!(mean_y),
        sxx: rd!(sxx),
        sxy: rd!(sxy),
        sum_x2: rd!(x_sq_sum),
        sd_x: rd!(x_sd),
        sd_y: rd!(y_sd),
        covariance_xy: rd!(xy_cov),
        r: rd!(correlation),
        r_squared: rd!(r_squared),
        adj_r_squared: rd!(r_squared_adj),
        sse: rd!(resid_ss),
        ssr: rd!(model_ss),
        sst: rd!(total_ss),
        df_model: rd!(model_df),
        df_resid: rd!(resid_df),
        residual_variance: rd!(resid_var),
        residual_sd: rd!(resid_sd),
        rmse: rd!(rms_resid),
        scale: rd!(var_scale),
        se_slope: rd!(slope_se),
        se_intercept: rd!(intercept_se),
        cov_intercept_slope: rd!(slope_intercept_cov),
        t_slope: rd!(slope_t),
        t_intercept: rd!(intercept_t),
        f_stat: rd!(f_stat),
    }
}

fn interval_of(i: Interval) -> pf_interval {
    pf_interval {
        estimate: i.center,
        std_error: i.se,
        lower: i.lower,
        upper: i.upper,
    }
}

fn anova_of(a: Anova) -> pf_anova {
    pf_anova {
        model_ss: a.ss_model,
        model_df: a.df_model,
        model_ms: a.ms_model,
        resid_ss: a.ss_resid,
        resid_df: a.df_resid,
        resid_ms: a.ms_resid,
        f_stat: a.f_stat,
        f_p: a.p_value,
    }
}

/// Shared body: NULL checks, conversion, panic guard, error mapping.
///
/// # Safety
/// `fit` NULL or valid for reading a `pf_fitted_line`; `out` NULL or valid
/// for writing a `T`.
unsafe fn with_fit<T>(
    fit: *const pf_fitted_line,
    out: *mut T,
    f: impl FnOnce(&LineFit) -> Result<T, LineError>,
) -> pf_status {
    if fit.is_null() || out.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    guard(|| {
        // SAFETY: `fit` non-NULL and readable by the contract.
        let lf = unsafe { to_fit(fit) };
        match f(&lf) {
            Ok(v) => {
                // SAFETY: `out` non-NULL and writable by the contract.
                unsafe { write_out(out, v) };
                PF_OK
            }
            Err(e) => from_code(e.code()),
        }
    })
}

/// The fitted value `yhat(x)` of the line at `x`, stored in `*out`.
///
/// Errors: `PF_ERR_NULL_POINTER`, `PF_ERR_NON_FINITE` (x NaN or infinite,
/// or the value overflows). Reads `*fit` only; thread-safe.
///
/// # Safety
/// `fit` NULL or valid for reading; `out` NULL or valid for one double.
#[no_mangle]
pub unsafe extern "C" fn pf_fitted_line_value(
    fit: *const pf_fitted_line,
    x: f64,
    out: *mut f64,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe {
        with_fit(fit, out, |f| {
            let v = f.fitted(x);
            if x.is_finite() && v.is_finite() {
                Ok(v)
            } else {
                Err(LineError::NonFinite)
            }
        })
    }
}

/// Confidence interval, at `level` (e.g. 0.95), for the mean response of
/// the line at `x`, stored in `*out`.
///
/// Errors: `PF_ERR_NULL_POINTER`, `PF_ERR_INVALID_LEVEL`,
/// `PF_ERR_NON_FINITE`. Reads `*fit` only; thread-safe.
///
/// # Safety
/// `fit` NULL or valid for reading; `out` NULL or valid for one
/// `pf_interval`.
#[no_mangle]
pub unsafe extern "C" fn pf_fitted_line_mean_band(
    fit: *const pf_fitted_line,
    x: f64,
    level: f64,
    out: *mut pf_interval,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { with_fit(fit, out, |f| f.mean_band(x, level).map(interval_of)) }
}

/// Prediction interval, at `level`, for the mean of `m` new observations
/// (`m` = 1 for a single new reading) at `x`, stored in `*out`.
///
/// Errors: `PF_ERR_NULL_POINTER`, `PF_ERR_INVALID_LEVEL`,
/// `PF_ERR_INVALID_COUNT` (m = 0), `PF_ERR_NON_FINITE`. Reads `*fit` only;
/// thread-safe.
///
/// # Safety
/// `fit` NULL or valid for reading; `out` NULL or valid for one
/// `pf_interval`.
#[no_mangle]
pub unsafe extern "C" fn pf_fitted_line_prediction(
    fit: *const pf_fitted_line,
    x: f64,
    m: u32,
    level: f64,
    out: *mut pf_interval,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { with_fit(fit, out, |f| f.prediction(x, m, level).map(interval_of)) }
}

/// Confidence interval of the slope at `level`, stored in `*out`.
///
/// Errors: `PF_ERR_NULL_POINTER`, `PF_ERR_INVALID_LEVEL`. Reads `*fit`
/// only; thread-safe.
///
/// # Safety
/// `fit` NULL or valid for reading; `out` NULL or valid for one
/// `pf_interval`.
#[no_mangle]
pub unsafe extern "C" fn pf_fitted_line_slope_interval(
    fit: *const pf_fitted_line,
    level: f64,
    out: *mut pf_interval,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { with_fit(fit, out, |f| f.slope_interval(level).map(interval_of)) }
}

/// Confidence interval of the intercept at `level`, stored in `*out`.
///
/// Errors: `PF_ERR_NULL_POINTER`, `PF_ERR_INVALID_LEVEL`. Reads `*fit`
/// only; thread-safe.
///
/// # Safety
/// `fit` NULL or valid for reading; `out` NULL or valid for one
/// `pf_interval`.
#[no_mangle]
pub unsafe extern "C" fn pf_fitted_line_intercept_interval(
    fit: *const pf_fitted_line,
    level: f64,
    out: *mut pf_interval,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { with_fit(fit, out, |f| f.intercept_interval(level).map(interval_of)) }
}

/// Two-sided critical value (t, or normal with known variances) for
/// `level`, as used by the interval functions, stored in `*out`.
///
/// Errors: `PF_ERR_NULL_POINTER`, `PF_ERR_INVALID_LEVEL`. Reads `*fit`
/// only; thread-safe.
///
/// # Safety
/// `fit` NULL or valid for reading; `out` NULL or valid for one double.
#[no_mangle]
pub unsafe extern "C" fn pf_fitted_line_critical_value(
    fit: *const pf_fitted_line,
    level: f64,
    out: *mut f64,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { with_fit(fit, out, |f| f.t_critical(level)) }
}

/// The analysis-of-variance table of the fit, stored in `*out`.
///
/// Errors: `PF_ERR_NULL_POINTER`. Reads `*fit` only; thread-safe.
///
/// # Safety
/// `fit` NULL or valid for reading; `out` NULL or valid for one `pf_anova`.
#[no_mangle]
pub unsafe extern "C" fn pf_fitted_line_anova(
    fit: *const pf_fitted_line,
    out: *mut pf_anova,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { with_fit(fit, out, |f| Ok(anova_of(f.anova()))) }
}

/// With known inverse-variance weights: the upper-tail p value of the
/// residual sum of squares as a chi-square on `resid_df` degrees of freedom
/// (a goodness-of-fit check), stored in `*out`.
///
/// Errors: `PF_ERR_NULL_POINTER`. Reads `*fit` only; thread-safe.
///
/// # Safety
/// `fit` NULL or valid for reading; `out` NULL or valid for one double.
#[no_mangle]
pub unsafe extern "C" fn pf_fitted_line_chi_square_p(
    fit: *const pf_fitted_line,
    out: *mut f64,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { with_fit(fit, out, |f| Ok(f.p_chi_square())) }
}

#[cfg(test)]
#[allow(clippy::unwrap_used, clippy::panic)]
mod tests {
    use super::*;
    use pf_core::LeanMoments;

    #[test]
    fn the_c_struct_round_trips_to_the_core_fit_exactly() {
        let mut acc = LeanMoments::new();
        acc.extend(&[1.0, 2.0, 3.0, 4.5, 7.0], &[2.0, 4.1, 5.9, 9.2, 13.8])
            .unwrap();
        for opts in [0, 1, 2, 3] {
            let f = acc.fit_with(&options_from_bits(opts).unwrap()).unwrap();
            let c = pf_fitted_line::from_fit(&f);
            // SAFETY: `&c` is a valid struct.
            assert_eq!(unsafe { to_fit(&c) }, f);
        }
        assert!(options_from_bits(4).is_none());
    }
}
