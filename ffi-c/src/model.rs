//! The model accumulator (`pf_model`): streaming least squares for linear
//! models with `p` coefficients (multiple and polynomial regression), in
//! library-allocated or caller-provided memory.

use crate::boundary::{self, guard_mut, guard_ref, slice_in, write_out, Head};
use crate::fit::pf_interval;
use crate::status::*;
use core::ffi::c_void;
use pf_core::model::{
    storage_len, InterceptMode, ModelCore, ModelError, ModelFit, ModelFitOptions, MAX_PARAMS,
};

/// Largest number of coefficients a model accumulator holds.
pub const PF_MODEL_MAX_PARAMS: usize = 16;
const _: () = assert!(PF_MODEL_MAX_PARAMS == MAX_PARAMS);

/// Intercept handling for the `pf_model_*` fit functions: column 0 is an
/// intercept when every row had the same nonzero value in it.
pub const PF_INTERCEPT_DETECT: u32 = 0;
/// Column 0 is the intercept column (the caller guarantees it is constant).
pub const PF_INTERCEPT_COLUMN0: u32 = 1;
/// No intercept: R^2 is uncentred and every coefficient counts towards the
/// model degrees of freedom.
pub const PF_INTERCEPT_NONE: u32 = 2;

/// A model accumulator for `p` coefficients (opaque). Create it with
/// `pf_model_new` (library memory, release with `pf_model_free`) or
/// `pf_model_init_in` (your memory; size from `pf_model_layout`).
///
/// Thread-safety: functions taking `const pf_model *` only read and may run
/// concurrently on one handle; all others need exclusive access.
pub struct pf_model {
    _private: [u8; 0],
}

/// Summary of a model fit (coefficients and their standard errors go to
/// caller arrays). Optional quantities come with a `has_` flag; when the
/// flag is false the value is 0 and means nothing. No field is NaN.
///
/// Plain data owned by the caller (stack, static or heap); the library
/// keeps no pointer to it and it may be copied and read from any thread.
#[repr(C)]
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct pf_model_info {
    /// Number of coefficients `p`.
    pub params: u32,
    /// Column 0 was treated as an intercept.
    pub has_intercept: bool,
    /// The residual sum of squares is zero to working precision; standard
    /// errors are then 0 and the F statistic +infinity.
    pub exact_fit: bool,
    /// Forgetting was applied; inference is approximate.
    pub forgetting_applied: bool,
    /// `r_squared` and `r_squared_adj` are defined (total sum of squares
    /// not zero).
    pub has_r_squared: bool,
    /// `model_ms` is defined (model degrees of freedom not zero).
    pub has_model_ms: bool,
    /// `f_stat` is defined.
    pub has_f_stat: bool,
    /// `f_p` is defined.
    pub has_f_p: bool,
    /// Rows accumulated.
    pub rows: u64,
    /// Sum of the row weights (decayed by forgetting).
    pub weight_sum: f64,
    /// Effective number of rows `sum(w)^2 / sum(w^2)`.
    pub effective_rows: f64,
    /// Residual sum of squares.
    pub resid_ss: f64,
    /// Sum of squares explained by the model.
    pub model_ss: f64,
    /// Total sum of squares (`model_ss + resid_ss`).
    pub total_ss: f64,
    /// Residual standard deviation.
    pub resid_sd: f64,
    /// Coefficient of determination (see `has_r_squared`).
    pub r_squared: f64,
    /// R^2 adjusted for degrees of freedom (see `has_r_squared`).
    pub r_squared_adj: f64,
    /// Model degrees of freedom.
    pub model_df: u64,
    /// Residual degrees of freedom.
    pub resid_df: u64,
    /// Model mean square (see `has_model_ms`).
    pub model_ms: f64,
    /// Residual mean square.
    pub resid_ms: f64,
    /// F statistic (see `has_f_stat`).
    pub f_stat: f64,
    /// Upper-tail p value of the F statistic (see `has_f_p`).
    pub f_p: f64,
    /// Estimated condition number of the column-scaled design.
    pub condition_estimate: f64,
}

const TAG_MODEL: u32 = 0x504c_4d31;
/// Bytes before the state: the handle head, padded to 8-byte alignment.
const STATE_OFFSET: usize = core::mem::size_of::<Head>();
const _: () = assert!(STATE_OFFSET.is_multiple_of(8));
const MAX_STATE: usize = storage_len(MAX_PARAMS);

fn model_err(e: ModelError) -> pf_status {
    from_code(e.code())
}

fn check_params(p: usize) -> Result<core::alloc::Layout, pf_status> {
    if p == 0 || p > MAX_PARAMS {
        return Err(model_err(ModelError::InvalidParamCount { p }));
    }
    core::alloc::Layout::from_size_align(STATE_OFFSET + 8 * storage_len(p), 8)
        .map_err(|_| PF_ERR_BAD_ARGUMENT)
}

fn options(intercept: u32) -> Result<ModelFitOptions, pf_status> {
    let mode = match intercept {
        PF_INTERCEPT_DETECT => InterceptMode::Detect,
        PF_INTERCEPT_COLUMN0 => InterceptMode::Column0,
        PF_INTERCEPT_NONE => InterceptMode::None,
        _ => return Err(PF_ERR_BAD_ARGUMENT),
    };
    Ok(ModelFitOptions::with_intercept(mode))
}

/// The state slice of a checked handle.
///
/// # Safety
/// `p` passed `check_head` with `TAG_MODEL`; the object was built by this
/// module for `head.variant` coefficients and is not mutated by others
/// while the slice lives (exclusively ours for the mutable use).
unsafe fn state<'a>(head: Head, p: *mut pf_model) -> Result<&'a mut [f64], pf_status> {
    let params = head.variant as usize;
    if params == 0 || params > MAX_PARAMS {
        return Err(PF_ERR_BAD_HANDLE);
    }
    // SAFETY: the object holds STATE_OFFSET bytes of head then
    // storage_len(params) aligned f64 values (built by `build`).
    Ok(unsafe {
        core::slice::from_raw_parts_mut(
            p.cast::<u8>().add(STATE_OFFSET).cast::<f64>(),
            storage_len(params),
        )
    })
}

/// Runs a mutating body on the attached accumulator.
///
/// # Safety
/// `m` is NULL or a handle from this library, used by nobody else.
unsafe fn with_mut(
    m: *mut pf_model,
    f: impl FnOnce(&mut ModelCore<'_>) -> Result<(), ModelError>,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe {
        guard_mut(m, TAG_MODEL, |h, p| {
            let s = match state(h, p) {
                Ok(s) => s,
                Err(e) => return e,
            };
            match ModelCore::attach(s) {
                Ok(mut core) => match f(&mut core) {
                    Ok(()) => PF_OK,
                    Err(e) => model_err(e),
                },
                Err(e) => model_err(e),
            }
        })
    }
}

/// Runs a read-only body on the state of a handle.
///
/// # Safety
/// `m` is NULL or a handle from this library that nobody mutates during
/// the call.
unsafe fn with_ref(m: *const pf_model, f: impl FnOnce(&ModelCore<'_>) -> pf_status) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe {
        guard_ref(m, TAG_MODEL, |h, p| {
            // `attach` takes a mutable slice; copy the state to the stack
            // so a shared handle is never written (nor borrowed mutably).
            let s = match state(h, p.cast_mut()) {
                Ok(s) => s,
                Err(e) => return e,
            };
            let mut copy = [0.0f64; MAX_STATE];
            let copy = &mut copy[..s.len()];
            copy.copy_from_slice(s);
            match ModelCore::attach(copy) {
                Ok(core) => f(&core),
                Err(e) => model_err(e),
            }
        })
    }
}

/// Read-only access for other modules of the C door.
///
/// # Safety
/// As [`with_ref`].
pub(crate) unsafe fn with_core(
    m: *const pf_model,
    f: impl FnOnce(&ModelCore<'_>) -> pf_status,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { with_ref(m, f) }
}

/// Mutating access to the raw state (with its `p`) for other modules.
///
/// # Safety
/// As [`with_mut`].
pub(crate) unsafe fn with_state_mut(
    m: *mut pf_model,
    f: impl FnOnce(usize, &mut [f64]) -> pf_status,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe {
        guard_mut(m, TAG_MODEL, |h, p| match state(h, p) {
            Ok(s) => f(h.variant as usize, s),
            Err(e) => e,
        })
    }
}

/// Fits and runs `f` on the result.
///
/// # Safety
/// As [`with_ref`].
unsafe fn with_fit(
    m: *const pf_model,
    intercept: u32,
    f: impl FnOnce(&ModelFit) -> pf_status,
) -> pf_status {
    let opts = match options(intercept) {
        Ok(o) => o,
        Err(e) => return e,
    };
    // SAFETY: forwarded contract.
    unsafe {
        with_ref(m, |core| match core.fit(&opts) {
            Ok(fit) => f(&fit),
            Err(e) => model_err(e),
        })
    }
}

/// Fits, then writes `op(fit, row)` to `out`: the shared body of the
/// per-row queries (prediction, leverage, mean-response and prediction
/// intervals).
///
/// # Safety
/// `m` NULL or a live handle; `row` NULL or valid for `row_len` doubles;
/// `out` NULL or valid for one `T`.
unsafe fn row_query<T>(
    m: *const pf_model,
    intercept: u32,
    row: *const f64,
    row_len: usize,
    out: *mut T,
    op: impl FnOnce(&ModelFit, &[f64]) -> Result<T, ModelError>,
) -> pf_status {
    if out.is_null() || m.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    // SAFETY: forwarded contract.
    let row = match unsafe { slice_in(row, row_len) } {
        Ok(r) => r,
        Err(e) => return e,
    };
    // SAFETY: forwarded contract; `out` checked.
    unsafe {
        with_fit(m, intercept, |f| match op(f, row) {
            Ok(v) => {
                write_out(out, v);
                PF_OK
            }
            Err(e) => model_err(e),
        })
    }
}

/// Writes an empty state for `params` coefficients at `buf`.
///
/// # Safety
/// `buf` valid for writes of `check_params(params)` bytes, 8-aligned.
unsafe fn build(buf: *mut u8, params: usize, flags: u32) -> Result<(), ModelError> {
    // SAFETY: the state region follows the head inside the checked size.
    let s = unsafe {
        core::slice::from_raw_parts_mut(buf.add(STATE_OFFSET).cast::<f64>(), storage_len(params))
    };
    ModelCore::new_in(s, params)?;
    let head = Head {
        tag: TAG_MODEL,
        variant: params as u32,
        flags,
        reserved: 0,
    };
    // SAFETY: valid and aligned by the contract.
    unsafe { core::ptr::write(buf.cast::<Head>(), head) };
    Ok(())
}

/// Size and alignment of caller storage for a model accumulator with
/// `params` coefficients (1 to `PF_MODEL_MAX_PARAMS`), stored in `*out`.
///
/// Errors: `PF_ERR_NULL_POINTER`, `PF_ERR_MODEL_PARAM_COUNT`. Thread-safe.
///
/// # Safety
/// `out` must be NULL or valid for writing one `pf_layout`.
#[no_mangle]
pub unsafe extern "C" fn pf_model_layout(params: usize, out: *mut crate::pf_layout) -> pf_status {
    boundary::guard(|| {
        if out.is_null() {
            return PF_ERR_NULL_POINTER;
        }
        match check_params(params) {
            Ok(l) => {
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
            Err(e) => e,
        }
    })
}

/// Builds an empty model accumulator for `params` coefficients in caller
/// storage `buf` of `len` bytes (no heap) and stores its handle in `*out`.
///
/// `buf` needs `pf_model_layout(params).size` bytes aligned to 8. The
/// handle points into `buf` and is valid while `buf` is; never pass it to
/// `pf_model_free`. Calling `pf_model_init_in` again on the same storage
/// starts afresh (and clears poisoning). Nothing is written on error.
///
/// Errors: `PF_ERR_NULL_POINTER` (`buf` or `out` NULL, even with `len` 0),
/// `PF_ERR_MODEL_PARAM_COUNT`, `PF_ERR_BUFFER_TOO_SMALL`,
/// `PF_ERR_MISALIGNED`. Needs exclusive access to `buf`.
///
/// # Safety
/// `buf` NULL or valid for writing `len` bytes; `out` NULL or valid for
/// writing one pointer.
#[no_mangle]
pub unsafe extern "C" fn pf_model_init_in(
    buf: *mut c_void,
    len: usize,
    params: usize,
    out: *mut *mut pf_model,
) -> pf_status {
    boundary::guard(|| {
        if buf.is_null() || out.is_null() {
            return PF_ERR_NULL_POINTER;
        }
        let l = match check_params(params) {
            Ok(l) => l,
            Err(e) => return e,
        };
        if len < l.size() {
            return PF_ERR_BUFFER_TOO_SMALL;
        }
        if !(buf as usize).is_multiple_of(l.align()) {
            return PF_ERR_MISALIGNED;
        }
        // SAFETY: size and alignment checked; writable by the contract.
        match unsafe { build(buf.cast(), params, boundary::FLAG_IN_PLACE) } {
            Ok(()) => {
                // SAFETY: `out` non-NULL, writable.
                unsafe { write_out(out, buf.cast::<pf_model>()) };
                PF_OK
            }
            Err(e) => model_err(e),
        }
    })
}

/// Allocates an empty model accumulator for `params` coefficients and
/// stores its handle in `*out`; release it with `pf_model_free`.
///
/// Errors: `PF_ERR_NULL_POINTER`, `PF_ERR_MODEL_PARAM_COUNT`,
/// `PF_ERR_OUT_OF_MEMORY`. Nothing is written on error.
///
/// # Safety
/// `out` must be NULL or valid for writing one pointer.
#[no_mangle]
pub unsafe extern "C" fn pf_model_new(params: usize, out: *mut *mut pf_model) -> pf_status {
    boundary::guard(|| {
        if out.is_null() {
            return PF_ERR_NULL_POINTER;
        }
        let l = match check_params(params) {
            Ok(l) => l,
            Err(e) => return e,
        };
        // SAFETY: non-zero size.
        let p = unsafe { std::alloc::alloc(l) };
        if p.is_null() {
            return PF_ERR_OUT_OF_MEMORY;
        }
        // SAFETY: fresh allocation of `l`.
        match unsafe { build(p, params, 0) } {
            Ok(()) => {
                // SAFETY: `out` non-NULL, writable.
                unsafe { write_out(out, p.cast::<pf_model>()) };
                PF_OK
            }
            Err(e) => {
                // SAFETY: allocated above with `l`, not handed out.
                unsafe { std::alloc::dealloc(p, l) };
                model_err(e)
            }
        }
    })
}

/// Releases a handle from `pf_model_new`; `pf_model_free(NULL)` does
/// nothing and returns `PF_OK`. Poisoned handles can be freed.
///
/// Errors: `PF_ERR_IN_PLACE_HANDLE` (caller storage; nothing done),
/// `PF_ERR_BAD_HANDLE`. Needs exclusive access.
///
/// # Safety
/// `m` NULL or a handle from this library, not used concurrently and not
/// freed twice.
#[no_mangle]
pub unsafe extern "C" fn pf_model_free(m: *mut pf_model) -> pf_status {
    boundary::guard(|| {
        if m.is_null() {
            return PF_OK;
        }
        if !(m as usize).is_multiple_of(8) {
            return PF_ERR_BAD_HANDLE;
        }
        // SAFETY: non-NULL, aligned; handles start with a Head.
        let head = unsafe { core::ptr::read(m.cast::<Head>()) };
        if head.tag != TAG_MODEL {
            return PF_ERR_BAD_HANDLE;
        }
        if head.flags & boundary::FLAG_IN_PLACE != 0 {
            return PF_ERR_IN_PLACE_HANDLE;
        }
        let Ok(l) = check_params(head.variant as usize) else {
            return PF_ERR_BAD_HANDLE;
        };
        // SAFETY: allocated by `pf_model_new` with this layout.
        unsafe {
            (*m.cast::<Head>()).tag = 0;
            std::alloc::dealloc(m.cast(), l);
        }
        PF_OK
    })
}

/// Empties the accumulator (same number of coefficients).
///
/// Errors: `PF_ERR_NULL_POINTER`, `PF_ERR_BAD_HANDLE`, `PF_ERR_POISONED`.
/// Needs exclusive access.
///
/// # Safety
/// `m` NULL or a live handle from this library.
#[no_mangle]
pub unsafe extern "C" fn pf_model_reset(m: *mut pf_model) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe {
        guard_mut(m, TAG_MODEL, |h, p| match state(h, p) {
            Ok(s) => match ModelCore::new_in(s, h.variant as usize) {
                Ok(_) => PF_OK,
                Err(e) => model_err(e),
            },
            Err(e) => e,
        })
    }
}

/// Stores the number of coefficients `p` in `*out`.
///
/// Errors: `PF_ERR_NULL_POINTER`, handle errors. Read-only.
///
/// # Safety
/// `m` NULL or a live handle; `out` NULL or valid for one `size_t`.
#[no_mangle]
pub unsafe extern "C" fn pf_model_params(m: *const pf_model, out: *mut usize) -> pf_status {
    if out.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    // SAFETY: forwarded contract; `out` checked.
    unsafe {
        with_ref(m, |c| {
            write_out(out, c.params());
            PF_OK
        })
    }
}

/// Stores the number of rows added in `*out`.
///
/// Errors: `PF_ERR_NULL_POINTER`, handle errors. Read-only.
///
/// # Safety
/// `m` NULL or a live handle; `out` NULL or valid for one `uint64_t`.
#[no_mangle]
pub unsafe extern "C" fn pf_model_count(m: *const pf_model, out: *mut u64) -> pf_status {
    if out.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    // SAFETY: forwarded contract; `out` checked.
    unsafe {
        with_ref(m, |c| {
            write_out(out, c.count());
            PF_OK
        })
    }
}

/// Adds one row of `row_len` (= p) regressor values with response `y`.
/// Allocation-free.
///
/// Errors: `PF_ERR_NULL_POINTER` (`row` NULL even with `row_len` 0),
/// `PF_ERR_MISALIGNED`, `PF_ERR_MODEL_DIMENSION` (`row_len` != p),
/// `PF_ERR_MODEL_NON_FINITE`, `PF_ERR_MODEL_OVERFLOW`, handle errors. On
/// error the state is unchanged. Needs exclusive access.
///
/// # Safety
/// `m` NULL or a live handle; `row` NULL or valid for `row_len` doubles.
#[no_mangle]
pub unsafe extern "C" fn pf_model_push(
    m: *mut pf_model,
    row: *const f64,
    row_len: usize,
    y: f64,
) -> pf_status {
    // SAFETY: forwarded contract.
    let row = match unsafe { slice_in(row, row_len) } {
        Ok(r) => r,
        Err(e) => return if m.is_null() { PF_ERR_NULL_POINTER } else { e },
    };
    // SAFETY: forwarded contract.
    unsafe { with_mut(m, |c| c.push_row(row, y)) }
}

/// Adds one row with weight `w > 0` (an inverse-variance weight).
///
/// Errors: as `pf_model_push`, plus `PF_ERR_MODEL_INVALID_WEIGHT`.
///
/// # Safety
/// `m` NULL or a live handle; `row` NULL or valid for `row_len` doubles.
#[no_mangle]
pub unsafe extern "C" fn pf_model_push_weighted(
    m: *mut pf_model,
    row: *const f64,
    row_len: usize,
    y: f64,
    w: f64,
) -> pf_status {
    // SAFETY: forwarded contract.
    let row = match unsafe { slice_in(row, row_len) } {
        Ok(r) => r,
        Err(e) => return if m.is_null() { PF_ERR_NULL_POINTER } else { e },
    };
    // SAFETY: forwarded contract.
    unsafe { with_mut(m, |c| c.push_row_weighted(row, y, w)) }
}

/// Adds the polynomial row `[1, x, x^2, ..., x^(p-1)]` with response `y`
/// and weight `w` (1 for unweighted); the powers are formed in extended
/// precision. Allocation-free.
///
/// Errors: `PF_ERR_NULL_POINTER`, `PF_ERR_MODEL_NON_FINITE`,
/// `PF_ERR_MODEL_INVALID_WEIGHT`, `PF_ERR_MODEL_OVERFLOW`, handle errors.
///
/// # Safety
/// `m` NULL or a live handle from this library.
#[no_mangle]
pub unsafe extern "C" fn pf_model_push_powers(
    m: *mut pf_model,
    x: f64,
    y: f64,
    w: f64,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { with_mut(m, |c| c.push_powers(x, y, w)) }
}

/// The body of the four model extends: checks the handle and the arrays
/// (rows, then responses, then weights, first error returned) and folds
/// the rows on up to `threads` threads (1: the calling thread only; 0: one
/// per core). The result is the same in every bit for any `threads`.
///
/// # Safety
/// `m` NULL or a live handle; `rows` NULL or valid for `rows_len`
/// doubles; `ys` and a `ws` pointer NULL or valid for `n` doubles.
unsafe fn extend_on(
    m: *mut pf_model,
    rows: *const f64,
    rows_len: usize,
    ys: *const f64,
    ws: Option<*const f64>,
    n: usize,
    threads: usize,
) -> pf_status {
    if m.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    // SAFETY: forwarded contract.
    let (rows, ys) = match unsafe { (slice_in(rows, rows_len), slice_in(ys, n)) } {
        (Ok(r), Ok(y)) => (r, y),
        (Err(e), _) | (_, Err(e)) => return e,
    };
    let ws = match ws {
        None => None,
        // SAFETY: forwarded contract.
        Some(w) => match unsafe { slice_in(w, n) } {
            Ok(w) => Some(w),
            Err(e) => return e,
        },
    };
    // SAFETY: forwarded contract.
    unsafe { with_mut(m, |c| c.extend_rows_threads(rows, ys, ws, threads)) }
}

/// Adds `n` rows: `rows` is row-major with `rows_len` = n * p values, `ys`
/// has `n` responses. The block is validated before anything is added.
///
/// Errors: `PF_ERR_NULL_POINTER` (any pointer, even with lengths 0),
/// `PF_ERR_MISALIGNED`, `PF_ERR_BAD_ARGUMENT` (length too large),
/// `PF_ERR_MODEL_DIMENSION` (`rows_len` != n * p), `PF_ERR_EMPTY_INPUT`
/// (n == 0, as for `pf_line_extend`), `PF_ERR_MODEL_NON_FINITE`,
/// `PF_ERR_MODEL_OVERFLOW`, handle errors. Needs exclusive access.
///
/// # Safety
/// `m` NULL or a live handle; `rows` NULL or valid for `rows_len` doubles;
/// `ys` NULL or valid for `n` doubles.
#[no_mangle]
pub unsafe extern "C" fn pf_model_extend(
    m: *mut pf_model,
    rows: *const f64,
    rows_len: usize,
    ys: *const f64,
    n: usize,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { extend_on(m, rows, rows_len, ys, None, n, 1) }
}

/// Adds `n` weighted rows; see `pf_model_extend`. `ws` has `n` weights.
///
/// Errors: as `pf_model_extend`, plus `PF_ERR_MODEL_INVALID_WEIGHT`.
///
/// # Safety
/// As `pf_model_extend`; `ws` NULL or valid for `n` doubles.
#[no_mangle]
pub unsafe extern "C" fn pf_model_extend_weighted(
    m: *mut pf_model,
    rows: *const f64,
    rows_len: usize,
    ys: *const f64,
    ws: *const f64,
    n: usize,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { extend_on(m, rows, rows_len, ys, Some(ws), n, 1) }
}

/// Adds `n` rows as `pf_model_extend` does, with the work shared by up to
/// `threads` threads (0: one per available core; the calling thread is
/// one of them and returns when all are done). Rows are folded in fixed
/// segments of 16 384 whatever the count, so the state is the same in
/// every bit as after `pf_model_extend` on the same rows, for any
/// `threads`; a block of one segment or less runs on the calling thread.
/// Unlike `pf_model_extend`, this call allocates a little (thread handles
/// and one partial factor per segment). The state is committed only at the
/// end: on error it is unchanged.
///
/// A thread the system cannot start leaves its share to the calling
/// thread (same result).
///
/// Errors: as `pf_model_extend`. Needs exclusive access.
///
/// # Safety
/// As `pf_model_extend`.
#[no_mangle]
pub unsafe extern "C" fn pf_model_extend_threads(
    m: *mut pf_model,
    rows: *const f64,
    rows_len: usize,
    ys: *const f64,
    n: usize,
    threads: usize,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { extend_on(m, rows, rows_len, ys, None, n, threads) }
}

/// Adds `n` weighted rows as `pf_model_extend_weighted` does, shared over
/// threads as `pf_model_extend_threads` describes (same bits for any
/// `threads`).
///
/// Errors: as `pf_model_extend_weighted`. Needs exclusive access.
///
/// # Safety
/// As `pf_model_extend_weighted`.
#[no_mangle]
pub unsafe extern "C" fn pf_model_extend_weighted_threads(
    m: *mut pf_model,
    rows: *const f64,
    rows_len: usize,
    ys: *const f64,
    ws: *const f64,
    n: usize,
    threads: usize,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { extend_on(m, rows, rows_len, ys, Some(ws), n, threads) }
}

/// Multiplies the weight of every row so far by `lambda` in (0, 1].
///
/// Errors: `PF_ERR_MODEL_FORGETTING`, `PF_ERR_MODEL_OVERFLOW` if the
/// weight sum or a diagonal weight would underflow to zero, handle errors.
/// On error the state is unchanged. Needs exclusive access.
///
/// # Safety
/// `m` NULL or a live handle from this library.
#[no_mangle]
pub unsafe extern "C" fn pf_model_forget(m: *mut pf_model, lambda: f64) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { with_mut(m, |c| c.forget(lambda)) }
}

/// Merges `src` into `dst` (same number of coefficients). `src` is only
/// read and may be the same handle as `dst`.
///
/// Errors: `PF_ERR_NULL_POINTER`, handle errors (either handle),
/// `PF_ERR_MODEL_DIMENSION` (different p), `PF_ERR_MODEL_OVERFLOW`. On
/// error `dst` is unchanged. Needs exclusive access to `dst`.
///
/// # Safety
/// `dst`, `src` NULL or live handles from this library.
#[no_mangle]
pub unsafe extern "C" fn pf_model_merge(dst: *mut pf_model, src: *const pf_model) -> pf_status {
    // Copy `src` first: `dst` may alias it.
    let mut copy = [0.0f64; MAX_STATE];
    let mut len = 0;
    // SAFETY: forwarded contract.
    let s = unsafe {
        with_ref(src, |c| {
            let st = c.storage();
            copy[..st.len()].copy_from_slice(st);
            len = st.len();
            PF_OK
        })
    };
    if s != PF_OK {
        return s;
    }
    // SAFETY: forwarded contract.
    unsafe { with_mut(dst, |c| c.merge_storage(&copy[..len])) }
}

/// Writes `values` to `out` of capacity `cap` (checked by the caller).
///
/// # Safety
/// `out` valid for `cap` doubles, non-NULL.
unsafe fn copy_out(values: &[f64], out: *mut f64, cap: usize) -> pf_status {
    if cap < values.len() {
        return PF_ERR_BUFFER_TOO_SMALL;
    }
    // SAFETY: `cap >= len` and `out` valid for `cap` values by contract.
    unsafe { core::ptr::copy_nonoverlapping(values.as_ptr(), out, values.len()) };
    PF_OK
}

/// Fits the model. Stores the summary in `*info`, the p coefficients in
/// `coefficients` and their standard errors in `std_errors` (each array's
/// capacity, in values, follows it and must be at least p; query p with
/// `pf_model_params`). `intercept` is one of the `PF_INTERCEPT_*` values.
///
/// Uses the heap for temporary work (the accumulating calls do not).
/// Outputs are written only on success.
///
/// Errors: `PF_ERR_NULL_POINTER` (any pointer), `PF_ERR_BAD_ARGUMENT`
/// (unknown intercept value), `PF_ERR_BUFFER_TOO_SMALL`,
/// `PF_ERR_TOO_FEW_ROWS` (fewer than p + 1 rows), `PF_ERR_RANK_DEFICIENT`,
/// `PF_ERR_MODEL_OVERFLOW` (a result would not be finite), handle errors.
/// Read-only.
///
/// # Safety
/// `m` NULL or a live handle; `info` NULL or valid for one
/// `pf_model_info`; each array NULL or valid for its capacity.
#[no_mangle]
pub unsafe extern "C" fn pf_model_fit(
    m: *const pf_model,
    intercept: u32,
    info: *mut pf_model_info,
    coefficients: *mut f64,
    coefficients_cap: usize,
    std_errors: *mut f64,
    std_errors_cap: usize,
) -> pf_status {
    if m.is_null() || info.is_null() || coefficients.is_null() || std_errors.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    // SAFETY: forwarded contract; outputs checked non-NULL.
    unsafe {
        with_fit(m, intercept, |f| {
            let p = f.params();
            if coefficients_cap < p || std_errors_cap < p {
                return PF_ERR_BUFFER_TOO_SMALL;
            }
            let f_p = f.f_p_value();
            let i = pf_model_info {
                params: p as u32,
                has_intercept: f.has_intercept,
                exact_fit: f.exact_fit,
                forgetting_applied: f.forgetting_applied,
                has_r_squared: f.r_squared.is_some(),
                has_model_ms: f.ms_model.is_some(),
                has_f_stat: f.f_stat.is_some(),
                has_f_p: f_p.is_some(),
                rows: f.rows,
                weight_sum: f.weight_sum,
                effective_rows: f.effective_rows,
                resid_ss: f.sse,
                model_ss: f.ss_model,
                total_ss: f.ss_total,
                resid_sd: f.residual_sd,
                r_squared: f.r_squared.unwrap_or(0.0),
                r_squared_adj: f.adj_r_squared.unwrap_or(0.0),
                model_df: f.df_model,
                resid_df: f.df_resid,
                model_ms: f.ms_model.unwrap_or(0.0),
                resid_ms: f.ms_resid,
                f_stat: f.f_stat.unwrap_or(0.0),
                f_p: f_p.unwrap_or(0.0),
                condition_estimate: f.condition_estimate,
            };
            let s = copy_out(&f.coefficients, coefficients, coefficients_cap);
            if s != PF_OK {
                return s;
            }
            let s = copy_out(&f.std_errors, std_errors, std_errors_cap);
            if s != PF_OK {
                return s;
            }
            write_out(info, i);
            PF_OK
        })
    }
}

/// Stores the p x p covariance matrix of the coefficients (row-major) in
/// `out`, of capacity `cap` values (at least p * p).
///
/// Errors: as `pf_model_fit`. Read-only.
///
/// # Safety
/// `m` NULL or a live handle; `out` NULL or valid for `cap` doubles.
#[no_mangle]
pub unsafe extern "C" fn pf_model_covariance(
    m: *const pf_model,
    intercept: u32,
    out: *mut f64,
    cap: usize,
) -> pf_status {
    if out.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    // SAFETY: forwarded contract; `out` checked.
    unsafe { with_fit(m, intercept, |f| copy_out(&f.covariance, out, cap)) }
}

/// Confidence intervals at `level` of the p coefficients, stored in `out`
/// of capacity `cap` intervals (at least p).
///
/// Errors: as `pf_model_fit`, plus `PF_ERR_MODEL_LEVEL`. Read-only.
///
/// # Safety
/// `m` NULL or a live handle; `out` NULL or valid for `cap` intervals.
#[no_mangle]
pub unsafe extern "C" fn pf_model_coef_intervals(
    m: *const pf_model,
    intercept: u32,
    level: f64,
    out: *mut pf_interval,
    cap: usize,
) -> pf_status {
    if out.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    // SAFETY: forwarded contract; `out` checked.
    unsafe {
        with_fit(m, intercept, |f| match f.coef_intervals(level) {
            Ok(v) => {
                if cap < v.len() {
                    return PF_ERR_BUFFER_TOO_SMALL;
                }
                for (k, i) in v.iter().enumerate() {
                    write_out(out.add(k), interval_of(i));
                }
                PF_OK
            }
            Err(e) => model_err(e),
        })
    }
}

fn interval_of(i: &pf_core::model::Interval) -> pf_interval {
    pf_interval {
        estimate: i.estimate,
        std_error: i.std_error,
        lower: i.lower,
        upper: i.upper,
    }
}

/// The fitted value at a new row of `row_len` (= p) regressor values,
/// stored in `*out`.
///
/// Errors: as `pf_model_fit`, plus `PF_ERR_MODEL_DIMENSION`,
/// `PF_ERR_MODEL_NON_FINITE`, `PF_ERR_MISALIGNED`, `PF_ERR_MODEL_OVERFLOW`
/// (a row so far out that the result overflows). Read-only.
///
/// # Safety
/// `m` NULL or a live handle; `row` NULL or valid for `row_len` doubles;
/// `out` NULL or valid for one double.
#[no_mangle]
pub unsafe extern "C" fn pf_model_predict(
    m: *const pf_model,
    intercept: u32,
    row: *const f64,
    row_len: usize,
    out: *mut f64,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { row_query(m, intercept, row, row_len, out, ModelFit::predict) }
}

/// Confidence interval at `level` for the mean response at a new row,
/// stored in `*out`.
///
/// Errors: as `pf_model_predict`, plus `PF_ERR_MODEL_LEVEL`. Read-only.
///
/// # Safety
/// As `pf_model_predict`; `out` NULL or valid for one `pf_interval`.
#[no_mangle]
pub unsafe extern "C" fn pf_model_mean_response(
    m: *const pf_model,
    intercept: u32,
    row: *const f64,
    row_len: usize,
    level: f64,
    out: *mut pf_interval,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe {
        row_query(m, intercept, row, row_len, out, |f, r| {
            f.mean_response(r, level).map(|i| interval_of(&i))
        })
    }
}

/// Prediction interval at `level` for the mean of `m_new` new observations
/// at a new row, stored in `*out`.
///
/// Errors: as `pf_model_mean_response`, plus `PF_ERR_MODEL_REPLICATES`
/// (`m_new` = 0). Read-only.
///
/// # Safety
/// As `pf_model_mean_response`.
#[no_mangle]
pub unsafe extern "C" fn pf_model_prediction(
    m: *const pf_model,
    intercept: u32,
    row: *const f64,
    row_len: usize,
    m_new: u32,
    level: f64,
    out: *mut pf_interval,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe {
        row_query(m, intercept, row, row_len, out, |f, r| {
            f.prediction(r, m_new, level).map(|i| interval_of(&i))
        })
    }
}

/// Leverage of a new row (its standardised distance from the design's
/// centre), stored in `*out`.
///
/// Errors: as `pf_model_predict`. Read-only.
///
/// # Safety
/// As `pf_model_predict`.
#[no_mangle]
pub unsafe extern "C" fn pf_model_leverage(
    m: *const pf_model,
    intercept: u32,
    row: *const f64,
    row_len: usize,
    out: *mut f64,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { row_query(m, intercept, row, row_len, out, ModelFit::leverage) }
}
