//! Residual diagnostics through the C door: the checks computed from a
//! full-tier accumulator alone (shape, normality, spread, serial
//! correlation), and, from retained readings, residuals, influence
//! measures and normality tests.

use crate::boundary::{guard, slice_in, write_out};
use crate::fit::{pf_fitted_line, to_fit};
use crate::status::*;
use pf_core::diag::{self, DiagError, PointInfluence, SerialMethod};

/// `pf_stream_checks.serial_method`: exact p value from the x values.
pub const PF_SERIAL_EXACT: u32 = 0;
/// Normal approximation with the design's exact mean and variance.
pub const PF_SERIAL_NORMAL: u32 = 1;
/// Exact p values of the bounding statistics (no x values kept).
pub const PF_SERIAL_EXACT_BOUNDS: u32 = 2;
/// Normal approximations of the bounding statistics.
pub const PF_SERIAL_NORMAL_BOUNDS: u32 = 3;
/// Too few points for a p value; the range is [0, 1].
pub const PF_SERIAL_UNAVAILABLE: u32 = 4;

/// `pf_point_influence.flags` bit: leverage above 2p/n.
pub const PF_INFLUENCE_HIGH_LEVERAGE: u32 = 1;
/// Flag bit: |deleted t| > 2.
pub const PF_INFLUENCE_RESIDUAL_OVER_2: u32 = 2;
/// Flag bit: |deleted t| > 3.
pub const PF_INFLUENCE_RESIDUAL_OVER_3: u32 = 4;
/// Flag bit: Cook's distance above 4/n.
pub const PF_INFLUENCE_COOK_OVER_4_N: u32 = 8;
/// Flag bit: Cook's distance above 1.
pub const PF_INFLUENCE_COOK_OVER_1: u32 = 16;
/// Flag bit: |DFFITS| > 2 sqrt(p/n).
pub const PF_INFLUENCE_DFFITS_LARGE: u32 = 32;
/// Flag bit: leverage 1; the other measures are undefined and 0.
pub const PF_INFLUENCE_LEVERAGE_ONE: u32 = 64;
/// Flag bit: deleting the point leaves an exact fit (deleted t and DFFITS
/// reported as 0).
pub const PF_INFLUENCE_DELETION_EXACT: u32 = 128;
const _: () = assert!(
    PF_INFLUENCE_HIGH_LEVERAGE == PointInfluence::HIGH_LEVERAGE as u32
        && PF_INFLUENCE_RESIDUAL_OVER_2 == PointInfluence::RESIDUAL_OVER_2 as u32
        && PF_INFLUENCE_RESIDUAL_OVER_3 == PointInfluence::RESIDUAL_OVER_3 as u32
        && PF_INFLUENCE_COOK_OVER_4_N == PointInfluence::COOK_OVER_4_N as u32
        && PF_INFLUENCE_COOK_OVER_1 == PointInfluence::COOK_OVER_1 as u32
        && PF_INFLUENCE_DFFITS_LARGE == PointInfluence::DFFITS_LARGE as u32
        && PF_INFLUENCE_LEVERAGE_ONE == PointInfluence::LEVERAGE_ONE as u32
        && PF_INFLUENCE_DELETION_EXACT == PointInfluence::DELETION_EXACT as u32
);

/// Residual checks of the straight line computed from a full-tier
/// accumulator alone (no stored readings). Defined for unweighted data
/// without forgetting.
///
/// Plain data owned by the caller (stack, static or heap); the library
/// keeps no pointer to it and it may be copied and read from any thread.
#[repr(C)]
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct pf_stream_checks {
    /// Number of points.
    pub count: u64,
    /// Mean residual (0 for a fit with intercept).
    pub resid_mean: f64,
    /// Sum of squared residuals.
    pub resid_sq_sum: f64,
    /// Sum of cubed residuals.
    pub resid_cube_sum: f64,
    /// Sum of fourth powers of the residuals.
    pub resid_fourth_sum: f64,
    /// Sum of squared residuals times (x - mean x).
    pub resid_sq_dx_sum: f64,
    /// Skewness of the residuals (moments with divisor n).
    pub skewness: f64,
    /// Kurtosis of the residuals (3 for normal data, not the excess).
    pub kurtosis: f64,
    /// Jarque-Bera normality statistic.
    pub jarque_bera: f64,
    /// Its asymptotic p value (chi-square, 2 degrees of freedom).
    pub jarque_bera_p: f64,
    /// Breusch-Pagan spread statistic (original form).
    pub spread_stat: f64,
    /// Its p value (chi-square, 1 degree of freedom).
    pub spread_p: f64,
    /// Koenker's studentized form of the spread statistic.
    pub spread_stat_studentized: f64,
    /// Its p value.
    pub spread_p_studentized: f64,
    /// Durbin-Watson statistic of the residuals in push order.
    pub durbin_watson: f64,
    /// Lag-1 autocorrelation of the residuals.
    pub lag1_autocorrelation: f64,
    /// Lower end of the p value against positive autocorrelation.
    pub serial_p_low: f64,
    /// Upper end of that p value (use this end for a conservative test).
    pub serial_p_high: f64,
    /// How the serial p value was obtained (`PF_SERIAL_*`).
    pub serial_method: u32,
}

/// Influence measures of one retained point, with screening flags
/// (common-practice cut-offs; screening aids, not verdicts).
///
/// Plain data owned by the caller (stack, static or heap); the library
/// keeps no pointer to it and it may be copied and read from any thread.
#[repr(C)]
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct pf_point_influence {
    /// Residual.
    pub residual: f64,
    /// Leverage (hat-matrix diagonal).
    pub leverage: f64,
    /// Internally studentized residual.
    pub studentized: f64,
    /// Externally studentized (deleted) residual.
    pub deleted_t: f64,
    /// Cook's distance.
    pub cooks_distance: f64,
    /// DFFITS.
    pub dffits: f64,
    /// Bit set of `PF_INFLUENCE_*` flags.
    pub flags: u32,
}

/// A normality test of a sample (e.g. residuals).
///
/// Plain data owned by the caller (stack, static or heap); the library
/// keeps no pointer to it and it may be copied and read from any thread.
#[repr(C)]
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct pf_normality {
    /// Sample size.
    pub count: u64,
    /// Test statistic (Shapiro-Wilk W, or Anderson-Darling A^2).
    pub statistic: f64,
    /// Small-sample modified statistic (Anderson-Darling); equals
    /// `statistic` for Shapiro-Wilk.
    pub statistic_modified: f64,
    /// p value.
    pub p_value: f64,
}

fn diag_err(e: DiagError) -> pf_status {
    from_code(e.code())
}

fn method_code(m: SerialMethod) -> u32 {
    match m {
        SerialMethod::Exact => PF_SERIAL_EXACT,
        SerialMethod::Normal => PF_SERIAL_NORMAL,
        SerialMethod::ExactBounds => PF_SERIAL_EXACT_BOUNDS,
        SerialMethod::NormalBounds => PF_SERIAL_NORMAL_BOUNDS,
        _ => PF_SERIAL_UNAVAILABLE,
    }
}

/// Residual checks of the line from a full-tier accumulator alone, stored
/// in `*out`.
///
/// Errors: `PF_ERR_NULL_POINTER`, `PF_ERR_NEEDS_FULL_TIER`,
/// `PF_ERR_TOO_FEW_POINTS`, `PF_ERR_NO_SPREAD`, `PF_ERR_DIAG_WEIGHTED`,
/// `PF_ERR_DIAG_FORGOTTEN`, `PF_ERR_ZERO_RESIDUAL_VARIANCE`,
/// `PF_ERR_NO_CONVERGENCE`, handle errors. Read-only.
///
/// # Safety
/// `line` NULL or a live handle; `out` NULL or valid for one
/// `pf_stream_checks`.
#[no_mangle]
pub unsafe extern "C" fn pf_line_stream_checks(
    line: *const crate::pf_line,
    out: *mut pf_stream_checks,
) -> pf_status {
    if out.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    // SAFETY: forwarded contract; `out` checked.
    unsafe {
        crate::line::with_full(line, |acc| match diag::stream_checks(acc) {
            Ok(c) => {
                let (s, r) = (c.shape, c.serial);
                write_out(
                    out,
                    pf_stream_checks {
                        count: s.count,
                        resid_mean: s.residual_mean,
                        resid_sq_sum: s.sum_sq,
                        resid_cube_sum: s.sum_cube,
                        resid_fourth_sum: s.sum_fourth,
                        resid_sq_dx_sum: s.sum_sq_dx,
                        skewness: s.skewness,
                        kurtosis: s.kurtosis,
                        jarque_bera: s.jarque_bera,
                        jarque_bera_p: s.jarque_bera_p,
                        spread_stat: s.spread_lm,
                        spread_p: s.spread_lm_p,
                        spread_stat_studentized: s.spread_lm_studentized,
                        spread_p_studentized: s.spread_lm_studentized_p,
                        durbin_watson: r.durbin_watson,
                        lag1_autocorrelation: r.lag1_autocorrelation,
                        serial_p_low: r.p_positive_low,
                        serial_p_high: r.p_positive_high,
                        serial_method: method_code(r.method),
                    },
                );
                PF_OK
            }
            Err(e) => diag_err(e),
        })
    }
}

/// Residuals `ys[i] - fitted(xs[i])` of `fit` (the unweighted fit with
/// intercept of exactly these `len` pairs), written to `out` of capacity
/// `cap` values (at least `len`). No heap.
///
/// Errors: `PF_ERR_NULL_POINTER` (any pointer, even with `len` 0),
/// `PF_ERR_MISALIGNED`, `PF_ERR_BAD_ARGUMENT`, `PF_ERR_EMPTY_INPUT`,
/// `PF_ERR_NON_FINITE`, `PF_ERR_DIAG_THROUGH_ORIGIN`, `PF_ERR_DIAG_WEIGHTED`,
/// `PF_ERR_DIAG_FORGOTTEN`, `PF_ERR_DIAG_FIT_MISMATCH`,
/// `PF_ERR_DIAG_OUTPUT_TOO_SHORT`. `out` is untouched on error.
/// Thread-safe (reads its inputs only).
///
/// # Safety
/// `fit` NULL or valid for reading; `xs`, `ys` NULL or valid for `len`
/// doubles; `out` NULL or valid for `cap` doubles.
#[no_mangle]
pub unsafe extern "C" fn pf_fitted_line_residuals(
    fit: *const pf_fitted_line,
    xs: *const f64,
    ys: *const f64,
    len: usize,
    out: *mut f64,
    cap: usize,
) -> pf_status {
    if fit.is_null() || out.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    // SAFETY: forwarded contract.
    let (xs, ys) = match unsafe { (slice_in(xs, len), slice_in(ys, len)) } {
        (Ok(x), Ok(y)) => (x, y),
        (Err(e), _) | (_, Err(e)) => return e,
    };
    if !(out as usize).is_multiple_of(core::mem::align_of::<f64>()) {
        return PF_ERR_MISALIGNED;
    }
    if cap > isize::MAX as usize / 8 {
        return PF_ERR_BAD_ARGUMENT;
    }
    guard(|| {
        // SAFETY: `fit` readable; `out` valid for `cap` doubles, aligned.
        let (lf, o) = unsafe { (to_fit(fit), core::slice::from_raw_parts_mut(out, cap)) };
        match diag::residuals_into(xs, ys, &lf, o) {
            Ok(()) => PF_OK,
            Err(e) => diag_err(e),
        }
    })
}

/// Influence measures of every pair (`len` pairs, the same ones `fit` was
/// made from), written to `out` of capacity `cap` entries (at least `len`).
/// Needs at least 4 pairs. No heap up to 256 pairs.
///
/// Errors: as `pf_fitted_line_residuals`, plus `PF_ERR_TOO_FEW_POINTS` and
/// `PF_ERR_ZERO_RESIDUAL_VARIANCE`. `out` is untouched on error.
///
/// # Safety
/// `fit` NULL or valid for reading; `xs`, `ys` NULL or valid for `len`
/// doubles; `out` NULL or valid for `cap` entries.
#[no_mangle]
pub unsafe extern "C" fn pf_fitted_line_influence(
    fit: *const pf_fitted_line,
    xs: *const f64,
    ys: *const f64,
    len: usize,
    out: *mut pf_point_influence,
    cap: usize,
) -> pf_status {
    if fit.is_null() || out.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    // SAFETY: forwarded contract.
    let (xs, ys) = match unsafe { (slice_in(xs, len), slice_in(ys, len)) } {
        (Ok(x), Ok(y)) => (x, y),
        (Err(e), _) | (_, Err(e)) => return e,
    };
    if cap < len {
        return from_code(
            DiagError::OutputTooShort {
                needed: len,
                have: cap,
            }
            .code(),
        );
    }
    guard(|| {
        // SAFETY: `fit` non-NULL and readable by the contract.
        let lf = unsafe { to_fit(fit) };
        // Up to BLOCK points on the stack (no heap); more on the heap. The
        // core writes its own layout, copied to `out` only on success.
        const BLOCK: usize = 256;
        let mut stack = [PointInfluence::default(); BLOCK];
        let mut heap = Vec::new();
        let buf: &mut [PointInfluence] = if len <= BLOCK {
            &mut stack[..len]
        } else {
            heap.resize(len, PointInfluence::default());
            &mut heap
        };
        match diag::influence_into(xs, ys, &lf, buf) {
            Ok(()) => {
                for (k, p) in buf.iter().enumerate() {
                    // SAFETY: `k < len <= cap`; `out` valid for `cap`.
                    unsafe { write_out(out.add(k), influence_of(p)) };
                }
                PF_OK
            }
            Err(e) => diag_err(e),
        }
    })
}

fn influence_of(p: &PointInfluence) -> pf_point_influence {
    pf_point_influence {
        residual: p.residual,
        leverage: p.leverage,
        studentized: p.studentized,
        deleted_t: p.deleted_t,
        cooks_distance: p.cooks_distance,
        dffits: p.dffits,
        flags: p.flags as u32,
    }
}

/// Shapiro-Wilk normality test of `len` values (e.g. residuals), stored in
/// `*out`. Uses the heap for a sorted copy.
///
/// Errors: `PF_ERR_NULL_POINTER`, `PF_ERR_MISALIGNED`, `PF_ERR_BAD_ARGUMENT`,
/// `PF_ERR_EMPTY_INPUT`, `PF_ERR_NON_FINITE`, `PF_ERR_TOO_FEW_POINTS`,
/// `PF_ERR_DIAG_TOO_MANY_POINTS`, `PF_ERR_ZERO_RESIDUAL_VARIANCE`.
/// Thread-safe.
///
/// # Safety
/// `values` NULL or valid for `len` doubles; `out` NULL or valid for one
/// `pf_normality`.
#[no_mangle]
pub unsafe extern "C" fn pf_shapiro_wilk(
    values: *const f64,
    len: usize,
    out: *mut pf_normality,
) -> pf_status {
    if out.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    // SAFETY: forwarded contract.
    let v = match unsafe { slice_in(values, len) } {
        Ok(v) => v,
        Err(e) => return e,
    };
    guard(|| match diag::shapiro_wilk(v) {
        Ok(r) => {
            let n = pf_normality {
                count: r.count,
                statistic: r.w,
                statistic_modified: r.w,
                p_value: r.p_value,
            };
            // SAFETY: `out` non-NULL, writable by the contract.
            unsafe { write_out(out, n) };
            PF_OK
        }
        Err(e) => diag_err(e),
    })
}

/// Anderson-Darling normality test of `len` values, stored in `*out`. Uses
/// the heap for a sorted copy.
///
/// Errors: as `pf_shapiro_wilk`. Thread-safe.
///
/// # Safety
/// `values` NULL or valid for `len` doubles; `out` NULL or valid for one
/// `pf_normality`.
#[no_mangle]
pub unsafe extern "C" fn pf_anderson_darling(
    values: *const f64,
    len: usize,
    out: *mut pf_normality,
) -> pf_status {
    if out.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    // SAFETY: forwarded contract.
    let v = match unsafe { slice_in(values, len) } {
        Ok(v) => v,
        Err(e) => return e,
    };
    guard(|| match diag::anderson_darling(v) {
        Ok(r) => {
            let n = pf_normality {
                count: r.count,
                statistic: r.a2,
                statistic_modified: r.a2_modified,
                p_value: r.p_value,
            };
            // SAFETY: `out` non-NULL, writable by the contract.
            unsafe { write_out(out, n) };
            PF_OK
        }
        Err(e) => diag_err(e),
    })
}
