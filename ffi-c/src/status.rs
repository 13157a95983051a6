//! Status numbers returned by every fallible entry point.
//!
//! The numbers are the core errors' stable `code()` values; the C door adds
//! its own argument errors (60–79) and the boundary conditions (900, 901).
//! Ranges: 1–99 caller errors, 100–199 numerical conditions, 900+ internal.
//! Numbers are never reused; a retired number stays reserved.

use core::ffi::c_char;

/// Result of a fallible call: `PF_OK` (0) or one of the `PF_ERR_*` numbers.
///
/// A plain 32-bit number (not a C enum) so that new numbers can be added
/// without changing the type's size; switch on the `PF_ERR_*` macros and
/// treat unknown numbers as failures.
pub type pf_status = u32;

/// Success.
pub const PF_OK: pf_status = 0;
/// A value (x, y, a weight, or an argument such as a prediction point) is
/// NaN or infinite. The accumulator is unchanged.
pub const PF_ERR_NON_FINITE: pf_status = 1;
/// A weight is zero, negative or not finite.
pub const PF_ERR_INVALID_WEIGHT: pf_status = 2;
/// Input lengths differ.
pub const PF_ERR_LENGTH_MISMATCH: pf_status = 3;
/// Input arrays are empty (length 0).
pub const PF_ERR_EMPTY_INPUT: pf_status = 4;
/// A forgetting factor outside (0, 1].
pub const PF_ERR_INVALID_FORGETTING: pf_status = 5;
/// A confidence level outside (0, 1).
pub const PF_ERR_INVALID_LEVEL: pf_status = 6;
/// A replicate count of zero.
pub const PF_ERR_INVALID_COUNT: pf_status = 7;
/// Model: a regressor or response value is NaN or infinite.
pub const PF_ERR_MODEL_NON_FINITE: pf_status = 20;
/// Model: a weight is zero, negative or not finite.
pub const PF_ERR_MODEL_INVALID_WEIGHT: pf_status = 21;
/// Model: an array has the wrong length for p, or two accumulators have
/// different p.
pub const PF_ERR_MODEL_DIMENSION: pf_status = 22;
/// Model: the number of coefficients is 0 or above `PF_MODEL_MAX_PARAMS`.
pub const PF_ERR_MODEL_PARAM_COUNT: pf_status = 23;
/// Model: a forgetting factor outside (0, 1].
pub const PF_ERR_MODEL_FORGETTING: pf_status = 24;
/// Model: a confidence level outside (0, 1).
pub const PF_ERR_MODEL_LEVEL: pf_status = 25;
/// Model: a replicate count of zero.
pub const PF_ERR_MODEL_REPLICATES: pf_status = 26;
/// Model: state storage too small (see `pf_model_layout`).
pub const PF_ERR_MODEL_STORAGE_TOO_SMALL: pf_status = 27;
/// Model: the storage does not hold a valid model state.
pub const PF_ERR_MODEL_INVALID_STORAGE: pf_status = 28;
/// Calibration: a polynomial needs 2 to 9 coefficients.
pub const PF_ERR_COEFFICIENT_COUNT: pf_status = 30;
/// Calibration: the calibrated range must satisfy lower < upper, both
/// finite.
pub const PF_ERR_INVALID_RANGE: pf_status = 31;
/// Calibration: an uncertainty (or sigma) is negative or not finite.
pub const PF_ERR_INVALID_UNCERTAINTY: pf_status = 32;
/// Calibration: a variance function cannot be evaluated at a point.
pub const PF_ERR_VARIANCE_UNDEFINED: pf_status = 33;
/// Calibration: the level store is full (`PF_LEVELS_CAPACITY` levels).
pub const PF_ERR_LEVEL_CAPACITY: pf_status = 34;
/// Calibration: the fit and the level store hold different numbers of
/// readings.
pub const PF_ERR_COUNT_MISMATCH: pf_status = 35;
/// Calibration: degrees of freedom must be positive.
pub const PF_ERR_INVALID_DOF: pf_status = 36;
/// Calibration: the quantity needs an intercept; the line has none.
pub const PF_ERR_NO_INTERCEPT: pf_status = 37;
/// Diagnostics: an output array is shorter than the number of values.
pub const PF_ERR_DIAG_OUTPUT_TOO_SHORT: pf_status = 40;
/// Diagnostics: the fit is through the origin; these checks need an
/// intercept.
pub const PF_ERR_DIAG_THROUGH_ORIGIN: pf_status = 41;
/// Diagnostics: the fit was made from a different number of points.
pub const PF_ERR_DIAG_FIT_MISMATCH: pf_status = 42;
/// Diagnostics: the design rows do not match the model.
pub const PF_ERR_DIAG_MODEL_MISMATCH: pf_status = 43;
/// State bytes: not a saved state (bad magic).
pub const PF_ERR_STATE_BAD_MAGIC: pf_status = 50;
/// State bytes: a format version this library does not read.
pub const PF_ERR_STATE_VERSION: pf_status = 51;
/// State bytes: an unknown accumulator kind.
pub const PF_ERR_STATE_UNKNOWN_KIND: pf_status = 52;
/// State bytes: another kind of accumulator (e.g. the other tier).
pub const PF_ERR_STATE_WRONG_KIND: pf_status = 53;
/// State bytes: fewer bytes than the header declares.
pub const PF_ERR_STATE_TRUNCATED: pf_status = 54;
/// State bytes: the length differs from the one the header declares.
pub const PF_ERR_STATE_LENGTH: pf_status = 55;
/// State bytes: checksum mismatch (corrupted bytes).
pub const PF_ERR_STATE_CHECKSUM: pf_status = 56;
/// State bytes: a field breaks a validation rule.
pub const PF_ERR_STATE_INVALID_FIELD: pf_status = 57;
/// State bytes: the output buffer is too small for the saved state.
pub const PF_ERR_STATE_BUFFER_TOO_SMALL: pf_status = 58;
/// State bytes: storage too small for the saved state (a model's values,
/// or more levels than a `pf_levels` store holds).
pub const PF_ERR_STATE_STORAGE_TOO_SMALL: pf_status = 59;
/// A required pointer argument is NULL.
pub const PF_ERR_NULL_POINTER: pf_status = 60;
/// Caller storage or an output array is too small.
pub const PF_ERR_BUFFER_TOO_SMALL: pf_status = 61;
/// Caller storage or an input array is not aligned as required.
pub const PF_ERR_MISALIGNED: pf_status = 62;
/// The pointer is not a live handle of the expected kind (never
/// initialised, already freed, or a different object).
pub const PF_ERR_BAD_HANDLE: pf_status = 63;
/// The two accumulators have different tiers (lean and full).
pub const PF_ERR_TIER_MISMATCH: pf_status = 64;
/// An argument has a value outside its documented set (unknown tier, unknown
/// option bits, a length too large to address).
pub const PF_ERR_BAD_ARGUMENT: pf_status = 65;
/// The query needs a full-tier accumulator.
pub const PF_ERR_NEEDS_FULL_TIER: pf_status = 66;
/// `_free` was called on a handle that lives in caller storage.
pub const PF_ERR_IN_PLACE_HANDLE: pf_status = 67;
/// Model: a column is numerically a combination of earlier columns.
pub const PF_ERR_RANK_DEFICIENT: pf_status = 120;
/// Model: too few rows for the result (a fit needs p + 1).
pub const PF_ERR_TOO_FEW_ROWS: pf_status = 121;
/// Model: the state or a fit result would overflow (values too large in
/// magnitude, or weights so small that their inverses overflow).
pub const PF_ERR_MODEL_OVERFLOW: pf_status = 122;
/// Calibration: the slope is exactly zero; nothing can be inverted.
pub const PF_ERR_ZERO_SLOPE: pf_status = 130;
/// Calibration: the slope is not significant at the level asked for.
pub const PF_ERR_SLOPE_NOT_SIGNIFICANT: pf_status = 131;
/// Calibration: no root of the calibration function in the range.
pub const PF_ERR_NO_ROOT_IN_RANGE: pf_status = 132;
/// Calibration: several roots in the range; the inverse is ambiguous.
pub const PF_ERR_SEVERAL_ROOTS: pf_status = 133;
/// Calibration: no replicated level; pure error has no degrees of freedom.
pub const PF_ERR_NO_REPLICATES: pf_status = 134;
/// Calibration: too few distinct levels for the model.
pub const PF_ERR_TOO_FEW_LEVELS: pf_status = 135;
/// Calibration: x values do not support a quadratic term.
pub const PF_ERR_NO_CURVATURE_SPREAD: pf_status = 136;
/// Calibration: the residual variance is zero where a ratio is needed.
pub const PF_ERR_ZERO_RESIDUAL: pf_status = 137;
/// Diagnostics: more points than the method is defined for.
pub const PF_ERR_DIAG_TOO_MANY_POINTS: pf_status = 140;
/// Diagnostics: weighted data are not supported by this check.
pub const PF_ERR_DIAG_WEIGHTED: pf_status = 141;
/// Diagnostics: data aged by forgetting are not supported by this check.
pub const PF_ERR_DIAG_FORGOTTEN: pf_status = 142;
/// Diagnostics: all residuals are zero (an exact fit).
pub const PF_ERR_ZERO_RESIDUAL_VARIANCE: pf_status = 143;
/// Diagnostics: the p value integration did not converge.
pub const PF_ERR_NO_CONVERGENCE: pf_status = 144;
/// The library could not allocate memory for a new handle (use caller
/// storage with `_init_in` to avoid the heap).
pub const PF_ERR_OUT_OF_MEMORY: pf_status = 68;
/// A moment or a result would overflow.
pub const PF_ERR_OVERFLOW: pf_status = 100;
/// Too few points (pairs) for the requested quantity.
pub const PF_ERR_TOO_FEW_POINTS: pf_status = 101;
/// All x values are equal; the slope is undefined.
pub const PF_ERR_NO_SPREAD: pf_status = 102;
/// Internal error: a panic inside the library was caught at the boundary.
pub const PF_ERR_PANIC: pf_status = 900;
/// The handle was poisoned by an earlier internal error; free or
/// re-initialise it.
pub const PF_ERR_POISONED: pf_status = 901;

/// Maps a core error's stable code to a status number.
pub(crate) const fn from_code(code: u16) -> pf_status {
    code as pf_status
}

/// The message for a status number (statically allocated, NUL-terminated).
fn message(status: u32) -> &'static str {
    match status {
        PF_OK => "ok\0",
        PF_ERR_NON_FINITE => "non-finite value\0",
        PF_ERR_INVALID_WEIGHT => "weight is not a positive finite number\0",
        PF_ERR_LENGTH_MISMATCH => "input lengths differ\0",
        PF_ERR_EMPTY_INPUT => "input is empty\0",
        PF_ERR_INVALID_FORGETTING => "forgetting factor must lie in (0, 1]\0",
        PF_ERR_INVALID_LEVEL => "confidence level must lie in (0, 1)\0",
        PF_ERR_INVALID_COUNT => "replicate count must be at least 1\0",
        PF_ERR_MODEL_NON_FINITE => "model: non-finite value\0",
        PF_ERR_MODEL_INVALID_WEIGHT => "model: weight is not a positive finite number\0",
        PF_ERR_MODEL_DIMENSION => "model: length does not match the number of coefficients\0",
        PF_ERR_MODEL_PARAM_COUNT => "model: number of coefficients must be 1 to 16\0",
        PF_ERR_MODEL_FORGETTING => "model: forgetting factor must lie in (0, 1]\0",
        PF_ERR_MODEL_LEVEL => "model: confidence level must lie in (0, 1)\0",
        PF_ERR_MODEL_REPLICATES => "model: replicate count must be at least 1\0",
        PF_ERR_MODEL_STORAGE_TOO_SMALL => "model: state storage too small\0",
        PF_ERR_MODEL_INVALID_STORAGE => "model: storage holds no valid state\0",
        PF_ERR_RANK_DEFICIENT => "model: rank deficient design\0",
        PF_ERR_TOO_FEW_ROWS => "model: too few rows\0",
        PF_ERR_MODEL_OVERFLOW => "model: state or fit result overflow\0",
        PF_ERR_COEFFICIENT_COUNT => "polynomial needs 2 to 9 coefficients\0",
        PF_ERR_INVALID_RANGE => "calibrated range must satisfy lower < upper\0",
        PF_ERR_INVALID_UNCERTAINTY => "uncertainty must be finite and >= 0\0",
        PF_ERR_VARIANCE_UNDEFINED => "variance function undefined at a point\0",
        PF_ERR_LEVEL_CAPACITY => "level store full\0",
        PF_ERR_COUNT_MISMATCH => "fit and level store hold different counts\0",
        PF_ERR_INVALID_DOF => "degrees of freedom must be positive\0",
        PF_ERR_NO_INTERCEPT => "the line has no intercept\0",
        PF_ERR_ZERO_SLOPE => "slope is zero; cannot invert\0",
        PF_ERR_SLOPE_NOT_SIGNIFICANT => "slope not significant; interval unbounded\0",
        PF_ERR_NO_ROOT_IN_RANGE => "no root in the calibrated range\0",
        PF_ERR_SEVERAL_ROOTS => "several roots in the calibrated range\0",
        PF_ERR_NO_REPLICATES => "no replicated level\0",
        PF_ERR_TOO_FEW_LEVELS => "too few levels for the model\0",
        PF_ERR_NO_CURVATURE_SPREAD => "x values do not support a quadratic term\0",
        PF_ERR_ZERO_RESIDUAL => "residual variance is zero\0",
        PF_ERR_DIAG_OUTPUT_TOO_SHORT => "output array too short\0",
        PF_ERR_DIAG_THROUGH_ORIGIN => "fit through the origin; diagnostics need an intercept\0",
        PF_ERR_DIAG_FIT_MISMATCH => "fit made from a different number of points\0",
        PF_ERR_DIAG_MODEL_MISMATCH => "rows do not match the model\0",
        PF_ERR_DIAG_TOO_MANY_POINTS => "too many points for the method\0",
        PF_ERR_DIAG_WEIGHTED => "weighted data not supported by this diagnostic\0",
        PF_ERR_DIAG_FORGOTTEN => "forgotten data not supported by this diagnostic\0",
        PF_ERR_ZERO_RESIDUAL_VARIANCE => "residual variance is zero (exact fit)\0",
        PF_ERR_NO_CONVERGENCE => "p value integration did not converge\0",
        PF_ERR_STATE_BAD_MAGIC => "not a saved state (bad magic)\0",
        PF_ERR_STATE_VERSION => "unsupported state format version\0",
        PF_ERR_STATE_UNKNOWN_KIND => "unknown state kind\0",
        PF_ERR_STATE_WRONG_KIND => "state holds another kind of accumulator\0",
        PF_ERR_STATE_TRUNCATED => "state truncated\0",
        PF_ERR_STATE_LENGTH => "state length mismatch\0",
        PF_ERR_STATE_CHECKSUM => "state checksum mismatch\0",
        PF_ERR_STATE_INVALID_FIELD => "invalid state field\0",
        PF_ERR_STATE_BUFFER_TOO_SMALL => "buffer too small for the state\0",
        PF_ERR_STATE_STORAGE_TOO_SMALL => "storage too small for the state\0",
        PF_ERR_NULL_POINTER => "null pointer argument\0",
        PF_ERR_BUFFER_TOO_SMALL => "buffer too small\0",
        PF_ERR_MISALIGNED => "buffer misaligned\0",
        PF_ERR_BAD_HANDLE => "not a live handle of this kind\0",
        PF_ERR_TIER_MISMATCH => "accumulators have different tiers\0",
        PF_ERR_BAD_ARGUMENT => "argument outside its documented values\0",
        PF_ERR_NEEDS_FULL_TIER => "query needs a full-tier accumulator\0",
        PF_ERR_IN_PLACE_HANDLE => "handle lives in caller storage; it is not freed\0",
        PF_ERR_OUT_OF_MEMORY => "out of memory\0",
        PF_ERR_OVERFLOW => "overflow; values too large\0",
        PF_ERR_TOO_FEW_POINTS => "too few points\0",
        PF_ERR_NO_SPREAD => "x has no spread; slope undefined\0",
        PF_ERR_PANIC => "internal error (caught at the C boundary)\0",
        PF_ERR_POISONED => "handle poisoned by an earlier internal error\0",
        _ => "unknown status\0",
    }
}

/// A short English description of `status` (any number, known or not).
///
/// Returns a static NUL-terminated string owned by the library; never NULL,
/// never to be freed. Unknown numbers give "unknown status". The wording is
/// for people and may change; switch on the numbers. Thread-safe.
#[no_mangle]
pub extern "C" fn pf_status_str(status: u32) -> *const c_char {
    message(status).as_ptr().cast()
}

#[cfg(test)]
#[allow(clippy::unwrap_used, clippy::panic)]
mod tests {
    use super::*;

    #[test]
    fn every_message_is_nul_terminated_and_known_codes_differ_from_unknown() {
        for s in (0..1000).chain([u32::MAX]) {
            let m = message(s);
            assert!(m.ends_with('\0'));
            assert_eq!(m.find('\0'), Some(m.len() - 1));
        }
        assert_eq!(message(12345), "unknown status\0");
        assert_ne!(message(PF_ERR_POISONED), "unknown status\0");
    }

    #[test]
    fn core_codes_map_to_the_named_statuses() {
        use pf_core::{LineError, MomentsError};
        // The mapping is the identity on the documented table (DEVELOPERS.md).
        assert_eq!(
            from_code(MomentsError::NonFinite { index: 3 }.code()),
            PF_ERR_NON_FINITE
        );
        assert_eq!(
            from_code(MomentsError::InvalidWeight { index: 0 }.code()),
            PF_ERR_INVALID_WEIGHT
        );
        assert_eq!(
            from_code(MomentsError::EmptyInput.code()),
            PF_ERR_EMPTY_INPUT
        );
        assert_eq!(
            from_code(MomentsError::InvalidForgetting.code()),
            PF_ERR_INVALID_FORGETTING
        );
        assert_eq!(from_code(MomentsError::Overflow.code()), PF_ERR_OVERFLOW);
        assert_eq!(
            from_code(LineError::InvalidLevel.code()),
            PF_ERR_INVALID_LEVEL
        );
        assert_eq!(
            from_code(LineError::InvalidCount.code()),
            PF_ERR_INVALID_COUNT
        );
        assert_eq!(from_code(LineError::NoSpread.code()), PF_ERR_NO_SPREAD);
        assert_eq!(
            from_code(LineError::TooFewPoints { needed: 3, have: 1 }.code()),
            PF_ERR_TOO_FEW_POINTS
        );
    }
}
