//! Calibration through the C door: inverse prediction with the Fieller
//! interval, calibrated values with a known reading uncertainty, detection
//! and quantitation limits, the straight-line-versus-quadratic check, and a
//! replicate-level store (`pf_levels`) for the lack-of-fit test.

use crate::boundary::{self, guard, guard_mut, guard_ref, slice_in, write_out, Head};
use crate::fit::{pf_fitted_line, to_fit};
use crate::status::*;
use core::ffi::c_void;
use pf_core::calib::{CalibError, FiellerSet, FixedLevels, Reading, SigmaSource};
use pf_core::LineFit;

/// `pf_inverse.set_kind`: the Fieller set is the interval
/// [`set_lower`, `set_upper`] (the slope is significant).
pub const PF_SET_BOUNDED: u32 = 0;
/// `pf_inverse.set_kind`: the set is (-infinity, `set_lower`] united with
/// [`set_upper`, +infinity) (the slope is not significant; one end may be
/// infinite).
pub const PF_SET_TWO_HALF_LINES: u32 = 1;
/// `pf_inverse.set_kind`: every x is consistent with the reading;
/// `set_lower` is -infinity and `set_upper` +infinity.
pub const PF_SET_WHOLE_LINE: u32 = 2;

/// `pf_fitted_line_limits` sigma source: the residual standard deviation.
pub const PF_SIGMA_RESIDUAL_SD: u32 = 0;
/// Sigma source: the standard error of the intercept.
pub const PF_SIGMA_INTERCEPT_SE: u32 = 1;
/// Sigma source: the `sigma` argument (e.g. the SD of blank responses).
pub const PF_SIGMA_GIVEN: u32 = 2;

/// Maximum number of distinct levels a `pf_levels` store holds.
pub const PF_LEVELS_CAPACITY: usize = 32;
/// Size in 8-byte words of `pf_levels_storage`.
pub const PF_LEVELS_STORAGE_WORDS: usize = 176;

/// Inverse prediction of one reading (or the mean of replicate readings)
/// through a fitted line: the x that produced it, with its standard error,
/// the exact Fieller confidence set and the symmetric approximate interval.
/// Infinite ends appear only in unbounded Fieller sets; nothing is NaN.
///
/// Plain data owned by the caller (stack, static or heap); the library
/// keeps no pointer to it and it may be copied and read from any thread.
#[repr(C)]
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct pf_inverse {
    /// The calibrated value x0 = (reading - intercept) / slope.
    pub x: f64,
    /// Its delta-method standard error.
    pub std_error: f64,
    /// Confidence level used.
    pub level: f64,
    /// The t (or normal) quantile used.
    pub critical_value: f64,
    /// `g = t^2 s^2 / (b^2 Sxx)`: the set is bounded exactly when g < 1.
    pub g: f64,
    /// One of `PF_SET_BOUNDED`, `PF_SET_TWO_HALF_LINES`, `PF_SET_WHOLE_LINE`.
    pub set_kind: u32,
    /// Lower end of the bounded set, or upper end of the lower half-line.
    pub set_lower: f64,
    /// Upper end of the bounded set, or lower end of the upper half-line.
    pub set_upper: f64,
    /// Lower end of the approximate interval `x - t * std_error`.
    pub approx_lower: f64,
    /// Upper end of the approximate interval `x + t * std_error`.
    pub approx_upper: f64,
}

/// Detection and quantitation limits `3.3 sigma / |slope|` and
/// `10 sigma / |slope|`, in x units.
///
/// Plain data owned by the caller (stack, static or heap); the library
/// keeps no pointer to it and it may be copied and read from any thread.
#[repr(C)]
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct pf_limits {
    /// The sigma used, in y units.
    pub sigma: f64,
    /// The slope used.
    pub slope: f64,
    /// Detection limit.
    pub detection: f64,
    /// Quantitation limit.
    pub quantitation: f64,
}

/// Decision level and limits from the prediction band (Hubaux and Vos).
///
/// Plain data owned by the caller (stack, static or heap); the library
/// keeps no pointer to it and it may be copied and read from any thread.
#[repr(C)]
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct pf_decision_limits {
    /// Probability of a false "detected" for a blank.
    pub alpha: f64,
    /// Probability of a false "not detected" at the detection limit.
    pub beta: f64,
    /// Decision level in y units.
    pub y_critical: f64,
    /// Decision limit in x units.
    pub x_critical: f64,
    /// Detection limit in x units.
    pub x_detection: f64,
}

/// The straight line against a quadratic from the same (full-tier) moments
/// (Mandel's test value).
///
/// Plain data owned by the caller (stack, static or heap); the library
/// keeps no pointer to it and it may be copied and read from any thread.
#[repr(C)]
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct pf_quadratic_check {
    /// Readings (effective count under forgetting).
    pub count: f64,
    /// Residual sum of squares of the line.
    pub line_resid_ss: f64,
    /// Residual sum of squares of the quadratic.
    pub quadratic_resid_ss: f64,
    /// Residual SD of the line.
    pub line_resid_sd: f64,
    /// Residual SD of the quadratic.
    pub quadratic_resid_sd: f64,
    /// Coefficient of x^2 in the quadratic.
    pub curvature: f64,
    /// Its standard error.
    pub curvature_se: f64,
    /// Drop in residual sum of squares from line to quadratic.
    pub ss_drop: f64,
    /// Test value `ss_drop / quadratic_resid_sd^2` on (1, count - 3)
    /// degrees of freedom.
    pub test_value: f64,
    /// Upper-tail p value of the test value.
    pub p_value: f64,
}

/// Lack-of-fit F test of a line against replicate levels.
///
/// Plain data owned by the caller (stack, static or heap); the library
/// keeps no pointer to it and it may be copied and read from any thread.
#[repr(C)]
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct pf_lack_of_fit {
    /// Readings.
    pub count: u64,
    /// Distinct levels.
    pub levels: u64,
    /// Model parameters (2, or 1 through the origin).
    pub params: u64,
    /// Lack-of-fit sum of squares.
    pub lack_ss: f64,
    /// Its degrees of freedom (levels - params).
    pub lack_df: u64,
    /// Pure-error sum of squares.
    pub pure_ss: f64,
    /// Its degrees of freedom (count - levels).
    pub pure_df: u64,
    /// F statistic (+infinity when the pure error is exactly zero).
    pub f_stat: f64,
    /// Upper-tail p value of the F statistic.
    pub f_p: f64,
}

/// A store of replicate readings per nominal x level (opaque), up to
/// `PF_LEVELS_CAPACITY` levels, for the lack-of-fit test. Push the same
/// pairs into it as into the line accumulator. Create with `pf_levels_new`
/// or `pf_levels_init_in` (no heap).
///
/// Thread-safety: `const pf_levels *` functions only read; others need
/// exclusive access.
pub struct pf_levels {
    _private: [u8; 0],
}

/// Static or stack storage for a `pf_levels` store, for
/// `pf_levels_init_in`. Contents private; its size is part of the ABI.
#[repr(C)]
pub struct pf_levels_storage {
    /// Private.
    pub _private: [u64; PF_LEVELS_STORAGE_WORDS],
}

type Levels = FixedLevels<PF_LEVELS_CAPACITY>;

#[repr(C)]
struct LevelsObj {
    head: Head,
    levels: Levels,
}

const TAG_LEVELS: u32 = 0x504c_5631;
const _: () = assert!(
    core::mem::size_of::<LevelsObj>() <= PF_LEVELS_STORAGE_WORDS * 8
        && core::mem::align_of::<LevelsObj>() <= 8
);

fn calib_err(e: CalibError) -> pf_status {
    from_code(e.code())
}

/// Shared body of the functions reading a `pf_fitted_line`.
///
/// # Safety
/// `fit` NULL or valid for reading; `out` NULL or valid for writing a `T`.
unsafe fn on_fit<T>(
    fit: *const pf_fitted_line,
    out: *mut T,
    f: impl FnOnce(&LineFit) -> Result<T, CalibError>,
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
            Err(e) => calib_err(e),
        }
    })
}

/// Inverse prediction: the x that produced `reading` (the mean of
/// `replicates` readings, each of calibration weight `weight`; use 1 and
/// 1.0 for a single unweighted reading), with its standard error, the exact
/// Fieller set and the approximate interval at `level`, stored in `*out`.
///
/// Errors: `PF_ERR_NULL_POINTER`, `PF_ERR_NON_FINITE`,
/// `PF_ERR_INVALID_COUNT` (replicates 0), `PF_ERR_INVALID_WEIGHT`,
/// `PF_ERR_INVALID_LEVEL`, `PF_ERR_ZERO_SLOPE`, `PF_ERR_OVERFLOW`. Reads
/// `*fit` only; thread-safe.
///
/// # Safety
/// `fit` NULL or valid for reading; `out` NULL or valid for one
/// `pf_inverse`.
#[no_mangle]
pub unsafe extern "C" fn pf_fitted_line_invert(
    fit: *const pf_fitted_line,
    reading: f64,
    replicates: u32,
    weight: f64,
    level: f64,
    out: *mut pf_inverse,
) -> pf_status {
    let r = Reading::mean_of(reading, replicates).with_weight(weight);
    // SAFETY: forwarded contract.
    unsafe {
        on_fit(fit, out, |f| {
            let i = f.invert_interval(&r, level)?;
            let (kind, lo, hi) = match i.set {
                FiellerSet::Bounded { lower, upper } => (PF_SET_BOUNDED, lower, upper),
                FiellerSet::TwoHalfLines { below, above } => (PF_SET_TWO_HALF_LINES, below, above),
                FiellerSet::WholeLine => (PF_SET_WHOLE_LINE, f64::NEG_INFINITY, f64::INFINITY),
            };
            Ok(pf_inverse {
                x: i.estimate.x,
                std_error: i.estimate.se,
                level: i.level,
                critical_value: i.t,
                g: i.g,
                set_kind: kind,
                set_lower: lo,
                set_upper: hi,
                approx_lower: i.approx_lower,
                approx_upper: i.approx_upper,
            })
        })
    }
}

/// The calibrated value of one reading `y0` whose own standard uncertainty
/// `u_y` (>= 0, y units) is known, and its standard uncertainty from `u_y`
/// and the coefficient covariance; stored in `*x_out` and `*u_out`.
///
/// Errors: `PF_ERR_NULL_POINTER` (any pointer), `PF_ERR_NON_FINITE`,
/// `PF_ERR_INVALID_UNCERTAINTY`, `PF_ERR_ZERO_SLOPE`, `PF_ERR_OVERFLOW`.
/// Reads `*fit` only; thread-safe.
///
/// # Safety
/// `fit` NULL or valid for reading; outputs NULL or valid for one double.
#[no_mangle]
pub unsafe extern "C" fn pf_fitted_line_calibrated_value(
    fit: *const pf_fitted_line,
    y0: f64,
    u_y: f64,
    x_out: *mut f64,
    u_out: *mut f64,
) -> pf_status {
    if u_out.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    let mut u = 0.0;
    // SAFETY: forwarded contract; `u_out` checked, written after success.
    let s = unsafe {
        on_fit(fit, x_out, |f| {
            let c = f.calibrated_value(y0, u_y)?;
            u = c.u;
            Ok(c.x)
        })
    };
    if s == PF_OK {
        // SAFETY: `u_out` non-NULL and writable by the contract.
        unsafe { write_out(u_out, u) };
    }
    s
}

/// Detection and quantitation limits `3.3 sigma/|slope|` and
/// `10 sigma/|slope|`, with sigma from `source` (`PF_SIGMA_*`; `sigma` is
/// used only with `PF_SIGMA_GIVEN`), stored in `*out`.
///
/// Errors: `PF_ERR_NULL_POINTER`, `PF_ERR_BAD_ARGUMENT` (unknown source),
/// `PF_ERR_INVALID_UNCERTAINTY` (given sigma negative or not finite),
/// `PF_ERR_NO_INTERCEPT`, `PF_ERR_ZERO_SLOPE`, `PF_ERR_OVERFLOW` (a limit
/// overflows). Reads `*fit` only; thread-safe.
///
/// # Safety
/// `fit` NULL or valid for reading; `out` NULL or valid for one
/// `pf_limits`.
#[no_mangle]
pub unsafe extern "C" fn pf_fitted_line_limits(
    fit: *const pf_fitted_line,
    source: u32,
    sigma: f64,
    out: *mut pf_limits,
) -> pf_status {
    let src = match source {
        PF_SIGMA_RESIDUAL_SD => SigmaSource::ResidualSd,
        PF_SIGMA_INTERCEPT_SE => SigmaSource::InterceptSe,
        PF_SIGMA_GIVEN => SigmaSource::Given(sigma),
        _ => {
            return if fit.is_null() || out.is_null() {
                PF_ERR_NULL_POINTER
            } else {
                PF_ERR_BAD_ARGUMENT
            }
        }
    };
    // SAFETY: forwarded contract.
    unsafe {
        on_fit(fit, out, |f| {
            let l = f.limits_from_sigma(src)?;
            Ok(pf_limits {
                sigma: l.sigma,
                slope: l.slope,
                detection: l.detection,
                quantitation: l.quantitation,
            })
        })
    }
}

/// Decision level, decision limit and detection limit from the prediction
/// band for a future result that is the mean of `replicates` readings of
/// calibration weight `weight`, with one-sided error probabilities `alpha`
/// and `beta` in (0, 0.5); stored in `*out`.
///
/// Errors: `PF_ERR_NULL_POINTER`, `PF_ERR_INVALID_LEVEL`,
/// `PF_ERR_INVALID_COUNT`, `PF_ERR_INVALID_WEIGHT`, `PF_ERR_ZERO_SLOPE`,
/// `PF_ERR_SLOPE_NOT_SIGNIFICANT`, `PF_ERR_OVERFLOW`. Reads `*fit` only;
/// thread-safe.
///
/// # Safety
/// `fit` NULL or valid for reading; `out` NULL or valid for one
/// `pf_decision_limits`.
#[no_mangle]
pub unsafe extern "C" fn pf_fitted_line_decision_limits(
    fit: *const pf_fitted_line,
    alpha: f64,
    beta: f64,
    replicates: u32,
    weight: f64,
    out: *mut pf_decision_limits,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe {
        on_fit(fit, out, |f| {
            let d = f.decision_limits(alpha, beta, replicates, weight)?;
            Ok(pf_decision_limits {
                alpha: d.alpha,
                beta: d.beta,
                y_critical: d.y_critical,
                x_critical: d.x_critical,
                x_detection: d.x_detection,
            })
        })
    }
}

/// Fits the line and a quadratic from a full-tier accumulator's moments and
/// compares them (Mandel's test), stored in `*out`.
///
/// Errors: `PF_ERR_NULL_POINTER`, `PF_ERR_NEEDS_FULL_TIER`,
/// `PF_ERR_TOO_FEW_POINTS` (below 4), `PF_ERR_NO_SPREAD`,
/// `PF_ERR_NO_CURVATURE_SPREAD`, `PF_ERR_ZERO_RESIDUAL`, `PF_ERR_OVERFLOW`,
/// handle errors. Read-only.
///
/// # Safety
/// `line` NULL or a live handle; `out` NULL or valid for one
/// `pf_quadratic_check`.
#[no_mangle]
pub unsafe extern "C" fn pf_line_quadratic_check(
    line: *const crate::pf_line,
    out: *mut pf_quadratic_check,
) -> pf_status {
    if out.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    // SAFETY: forwarded contract; `out` checked.
    unsafe {
        crate::line::with_full(line, |acc| match acc.quadratic_check() {
            Ok(q) => {
                write_out(
                    out,
                    pf_quadratic_check {
                        count: q.count,
                        line_resid_ss: q.sse_line,
                        quadratic_resid_ss: q.sse_quadratic,
                        line_resid_sd: q.sd_line,
                        quadratic_resid_sd: q.sd_quadratic,
                        curvature: q.curvature,
                        curvature_se: q.curvature_se,
                        ss_drop: q.ds2,
                        test_value: q.test_value,
                        p_value: q.p_value(),
                    },
                );
                PF_OK
            }
            Err(e) => calib_err(e),
        })
    }
}

// ---- replicate levels -------------------------------------------------

/// # Safety
/// `l` NULL or a handle from this library, used by nobody else.
unsafe fn levels_mut(
    l: *mut pf_levels,
    f: impl FnOnce(&mut Levels) -> Result<(), CalibError>,
) -> pf_status {
    // SAFETY: forwarded contract; the tag proves the object type.
    unsafe {
        guard_mut(l, TAG_LEVELS, |_, p| {
            match f(&mut (*p.cast::<LevelsObj>()).levels) {
                Ok(()) => PF_OK,
                Err(e) => calib_err(e),
            }
        })
    }
}

/// # Safety
/// `l` NULL or a handle from this library that nobody mutates meanwhile.
unsafe fn levels_ref(l: *const pf_levels, f: impl FnOnce(&Levels) -> pf_status) -> pf_status {
    // SAFETY: forwarded contract; the tag proves the object type.
    unsafe { guard_ref(l, TAG_LEVELS, |_, p| f(&(*p.cast::<LevelsObj>()).levels)) }
}

impl crate::state::StateHandle for pf_levels {
    unsafe fn read_state(
        h: *const Self,
        f: &dyn Fn(&dyn crate::state::Saves) -> pf_status,
    ) -> pf_status {
        // SAFETY: forwarded contract.
        unsafe { levels_ref(h, |s| f(s)) }
    }

    unsafe fn write_state(
        h: *mut Self,
        f: &dyn Fn(&mut dyn crate::state::Restores) -> pf_status,
    ) -> pf_status {
        // SAFETY: forwarded contract; the tag proves the object type.
        unsafe {
            guard_mut(
                h,
                TAG_LEVELS,
                |_, p| f(&mut (*p.cast::<LevelsObj>()).levels),
            )
        }
    }
}

/// # Safety
/// `p` valid for writing a `LevelsObj`, aligned.
unsafe fn build_levels(p: *mut u8, flags: u32) {
    let obj = LevelsObj {
        head: Head {
            tag: TAG_LEVELS,
            variant: 0,
            flags,
            reserved: 0,
        },
        levels: Levels::new(),
    };
    // SAFETY: forwarded contract.
    unsafe { core::ptr::write(p.cast::<LevelsObj>(), obj) };
}

/// Size and alignment of caller storage for a `pf_levels` store.
///
/// Errors: `PF_ERR_NULL_POINTER`. Thread-safe.
///
/// # Safety
/// `out` NULL or valid for one `pf_layout`.
#[no_mangle]
pub unsafe extern "C" fn pf_levels_layout(out: *mut crate::pf_layout) -> pf_status {
    if out.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    let l = core::alloc::Layout::new::<LevelsObj>();
    // SAFETY: `out` non-NULL, writable by the contract.
    unsafe {
        write_out(
            out,
            crate::pf_layout {
                size: l.size(),
                align: l.align(),
            },
        )
    };
    PF_OK
}

/// Builds an empty level store in caller storage `buf` of `len` bytes (no
/// heap; `pf_levels_storage` fits) and stores its handle in `*out`. Never
/// pass the handle to `pf_levels_free`; re-initialise to reuse.
///
/// Errors: `PF_ERR_NULL_POINTER` (even with `len` 0),
/// `PF_ERR_BUFFER_TOO_SMALL`, `PF_ERR_MISALIGNED`.
///
/// # Safety
/// `buf` NULL or valid for writing `len` bytes; `out` NULL or valid for one
/// pointer.
#[no_mangle]
pub unsafe extern "C" fn pf_levels_init_in(
    buf: *mut c_void,
    len: usize,
    out: *mut *mut pf_levels,
) -> pf_status {
    boundary::guard(|| {
        if buf.is_null() || out.is_null() {
            return PF_ERR_NULL_POINTER;
        }
        let l = core::alloc::Layout::new::<LevelsObj>();
        if len < l.size() {
            return PF_ERR_BUFFER_TOO_SMALL;
        }
        if !(buf as usize).is_multiple_of(l.align()) {
            return PF_ERR_MISALIGNED;
        }
        // SAFETY: size and alignment checked; writable by the contract.
        unsafe {
            build_levels(buf.cast(), boundary::FLAG_IN_PLACE);
            write_out(out, buf.cast::<pf_levels>());
        }
        PF_OK
    })
}

/// Allocates an empty level store; release it with `pf_levels_free`.
///
/// Errors: `PF_ERR_NULL_POINTER`, `PF_ERR_OUT_OF_MEMORY`.
///
/// # Safety
/// `out` NULL or valid for writing one pointer.
#[no_mangle]
pub unsafe extern "C" fn pf_levels_new(out: *mut *mut pf_levels) -> pf_status {
    boundary::guard(|| {
        if out.is_null() {
            return PF_ERR_NULL_POINTER;
        }
        let l = core::alloc::Layout::new::<LevelsObj>();
        // SAFETY: non-zero size.
        let p = unsafe { std::alloc::alloc(l) };
        if p.is_null() {
            return PF_ERR_OUT_OF_MEMORY;
        }
        // SAFETY: fresh allocation of `l`; `out` writable.
        unsafe {
            build_levels(p, 0);
            write_out(out, p.cast::<pf_levels>());
        }
        PF_OK
    })
}

/// Releases a store from `pf_levels_new`; NULL is a no-op (`PF_OK`).
///
/// Errors: `PF_ERR_IN_PLACE_HANDLE`, `PF_ERR_BAD_HANDLE`.
///
/// # Safety
/// `l` NULL or a handle from this library, not used concurrently, not
/// freed twice.
#[no_mangle]
pub unsafe extern "C" fn pf_levels_free(l: *mut pf_levels) -> pf_status {
    boundary::guard(|| {
        if l.is_null() {
            return PF_OK;
        }
        if !(l as usize).is_multiple_of(8) {
            return PF_ERR_BAD_HANDLE;
        }
        // SAFETY: non-NULL, aligned; handles start with a Head.
        let head = unsafe { core::ptr::read(l.cast::<Head>()) };
        if head.tag != TAG_LEVELS {
            return PF_ERR_BAD_HANDLE;
        }
        if head.flags & boundary::FLAG_IN_PLACE != 0 {
            return PF_ERR_IN_PLACE_HANDLE;
        }
        // SAFETY: allocated by `pf_levels_new` with this layout.
        unsafe {
            (*l.cast::<Head>()).tag = 0;
            std::alloc::dealloc(l.cast(), core::alloc::Layout::new::<LevelsObj>());
        }
        PF_OK
    })
}

/// Adds one reading `y` at nominal level `x` (unit weight).
///
/// Errors: `PF_ERR_NULL_POINTER`, `PF_ERR_NON_FINITE`,
/// `PF_ERR_LEVEL_CAPACITY` (a new level beyond `PF_LEVELS_CAPACITY`),
/// handle errors. Unchanged on error. Needs exclusive access.
///
/// # Safety
/// `l` NULL or a live handle from this library.
#[no_mangle]
pub unsafe extern "C" fn pf_levels_push(l: *mut pf_levels, x: f64, y: f64) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { levels_mut(l, |s| s.push(x, y)) }
}

/// Adds one reading with weight `w > 0`.
///
/// Errors: as `pf_levels_push`, plus `PF_ERR_INVALID_WEIGHT`.
///
/// # Safety
/// `l` NULL or a live handle from this library.
#[no_mangle]
pub unsafe extern "C" fn pf_levels_push_weighted(
    l: *mut pf_levels,
    x: f64,
    y: f64,
    w: f64,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { levels_mut(l, |s| s.push_weighted(x, y, w)) }
}

/// Adds `len` readings `(xs[i], ys[i])`; nothing is added on error.
///
/// Errors: `PF_ERR_NULL_POINTER` (even with `len` 0), `PF_ERR_MISALIGNED`,
/// `PF_ERR_BAD_ARGUMENT`, `PF_ERR_NON_FINITE`, `PF_ERR_LEVEL_CAPACITY`,
/// handle errors. Needs exclusive access.
///
/// # Safety
/// `l` NULL or a live handle; arrays NULL or valid for `len` doubles.
#[no_mangle]
pub unsafe extern "C" fn pf_levels_extend(
    l: *mut pf_levels,
    xs: *const f64,
    ys: *const f64,
    len: usize,
) -> pf_status {
    if l.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    // SAFETY: forwarded contract.
    let (xs, ys) = match unsafe { (slice_in(xs, len), slice_in(ys, len)) } {
        (Ok(x), Ok(y)) => (x, y),
        (Err(e), _) | (_, Err(e)) => return e,
    };
    // SAFETY: forwarded contract.
    unsafe { levels_mut(l, |s| s.extend(xs, ys)) }
}

/// Merges `src` into `dst` (`src` may be `dst`).
///
/// Errors: `PF_ERR_NULL_POINTER`, `PF_ERR_LEVEL_CAPACITY`, handle errors.
/// `dst` is unchanged on error. Needs exclusive access to `dst`.
///
/// # Safety
/// `dst`, `src` NULL or live handles from this library.
#[no_mangle]
pub unsafe extern "C" fn pf_levels_merge(dst: *mut pf_levels, src: *const pf_levels) -> pf_status {
    let mut copy = None;
    // SAFETY: forwarded contract.
    let s = unsafe {
        levels_ref(src, |s| {
            copy = Some(*s);
            PF_OK
        })
    };
    if s != PF_OK {
        return s;
    }
    let Some(other) = copy else {
        return PF_ERR_PANIC;
    };
    // SAFETY: forwarded contract.
    unsafe { levels_mut(dst, |s| s.merge(&other)) }
}

/// Stores the number of readings in `*count_out` and of distinct levels in
/// `*levels_out`.
///
/// Errors: `PF_ERR_NULL_POINTER` (any pointer), handle errors. Read-only.
///
/// # Safety
/// `l` NULL or a live handle; outputs NULL or valid for one value each.
#[no_mangle]
pub unsafe extern "C" fn pf_levels_count(
    l: *const pf_levels,
    count_out: *mut u64,
    levels_out: *mut usize,
) -> pf_status {
    if count_out.is_null() || levels_out.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    // SAFETY: forwarded contract; outputs checked.
    unsafe {
        levels_ref(l, |s| {
            write_out(count_out, s.count());
            write_out(levels_out, s.level_count());
            PF_OK
        })
    }
}

/// Lack-of-fit F test of `fit` (fitted to the same readings) against the
/// replicate levels, stored in `*out`.
///
/// Errors: `PF_ERR_NULL_POINTER`, `PF_ERR_COUNT_MISMATCH` (the fit holds a
/// different number of readings), `PF_ERR_TOO_FEW_LEVELS`,
/// `PF_ERR_NO_REPLICATES`, `PF_ERR_ZERO_RESIDUAL`, handle errors.
/// Read-only.
///
/// # Safety
/// `l` NULL or a live handle; `fit` NULL or valid for reading; `out` NULL
/// or valid for one `pf_lack_of_fit`.
#[no_mangle]
pub unsafe extern "C" fn pf_levels_lack_of_fit(
    l: *const pf_levels,
    fit: *const pf_fitted_line,
    out: *mut pf_lack_of_fit,
) -> pf_status {
    if fit.is_null() || out.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    // SAFETY: forwarded contract; pointers checked.
    unsafe {
        levels_ref(l, |s| {
            let lf = to_fit(fit);
            match s.lack_of_fit_line(&lf) {
                Ok(r) => {
                    write_out(
                        out,
                        pf_lack_of_fit {
                            count: r.count,
                            levels: r.levels as u64,
                            params: r.params as u64,
                            lack_ss: r.ss_lack_of_fit,
                            lack_df: r.df_lack_of_fit,
                            pure_ss: r.ss_pure_error,
                            pure_df: r.df_pure_error,
                            f_stat: r.f_stat,
                            f_p: r.p_value(),
                        },
                    );
                    PF_OK
                }
                Err(e) => calib_err(e),
            }
        })
    }
}

/// Stores the number of bytes `pf_levels_save` writes for `l` in `*out`:
/// `PF_STATE_LEVELS_BASE_LEN + levels * PF_STATE_LEVEL_RECORD_LEN` (at
/// most `PF_STATE_MAX_LEN`).
///
/// Errors: `PF_ERR_NULL_POINTER`, handle errors. Read-only.
///
/// # Safety
/// `l` NULL or a live handle; `out` NULL or valid for one `size_t`.
#[no_mangle]
pub unsafe extern "C" fn pf_levels_state_len(l: *const pf_levels, out: *mut usize) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { crate::state::state_len(l, out) }
}

/// Saves the level store `l` into `out` (capacity `cap` bytes) and stores
/// the number of bytes written in `*written`. No heap is used. The bytes
/// are the same as from every other door for the same readings.
///
/// Errors: `PF_ERR_NULL_POINTER` (any pointer, even with `cap` 0),
/// `PF_ERR_STATE_BUFFER_TOO_SMALL` (query `pf_levels_state_len`;
/// `PF_STATE_MAX_LEN` always suffices), handle errors. Nothing is written
/// on error. Read-only.
///
/// # Safety
/// `l` NULL or a live handle; `out` NULL or valid for `cap` bytes;
/// `written` NULL or valid for one `size_t`.
#[no_mangle]
pub unsafe extern "C" fn pf_levels_save(
    l: *const pf_levels,
    out: *mut u8,
    cap: usize,
    written: *mut usize,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { crate::state::save(l, out, cap, written) }
}

/// Replaces the contents of `l` by the level state saved in `bytes` (`len`
/// bytes, exactly one saved level state). Everything is checked first
/// (format, version, checksum, sorted unique levels, finite sums); on
/// error the store is unchanged. Works for heap and caller-storage
/// handles.
///
/// Errors: `PF_ERR_NULL_POINTER` (even with `len` 0),
/// `PF_ERR_STATE_WRONG_KIND` (an accumulator state),
/// `PF_ERR_STATE_STORAGE_TOO_SMALL` (more than `PF_LEVELS_CAPACITY`
/// levels, e.g. saved by the Python door), every other `PF_ERR_STATE_*`,
/// handle errors. Needs exclusive access.
///
/// # Safety
/// `l` NULL or a live handle; `bytes` NULL or valid for `len` bytes.
#[no_mangle]
pub unsafe extern "C" fn pf_levels_restore(
    l: *mut pf_levels,
    bytes: *const u8,
    len: usize,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { crate::state::restore(l, bytes, len) }
}
