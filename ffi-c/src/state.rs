//! Saving and restoring accumulator state as bytes (the persisted state
//! format of the core: versioned, checksummed, little-endian; the same bytes
//! from Rust, C and Python), for power cycles and for shipping a device's
//! state to a host that merges it.

use crate::boundary::{self, slice_in_bytes, write_out};
use crate::status::*;
use pf_core::calib::FixedLevels;
use pf_core::model::{storage_len, ModelCore, MAX_PARAMS};
use pf_core::state::{self, StateError, StateKind, StateTier};
use pf_core::PairMoments;

/// Bytes of a saved lean line accumulator.
pub const PF_STATE_LINE_LEAN_LEN: usize = 308;
/// Bytes of a saved full-tier line accumulator.
pub const PF_STATE_LINE_FULL_LEN: usize = 468;
/// Largest saved state of any kind (a model with `PF_MODEL_MAX_PARAMS`
/// coefficients): a buffer of this size holds every state.
pub const PF_STATE_MAX_LEN: usize = 2532;
/// Bytes of the fixed header at the start of every saved state (enough for
/// `pf_state_declared_len`).
pub const PF_STATE_HEADER_LEN: usize = 16;
/// Bytes of a saved `pf_levels` store per level; a store with `c` levels
/// saves `PF_STATE_LEVELS_BASE_LEN + c * PF_STATE_LEVEL_RECORD_LEN` bytes.
pub const PF_STATE_LEVEL_RECORD_LEN: usize = 40;
/// Bytes of a saved `pf_levels` store with no level (header and checksum).
pub const PF_STATE_LEVELS_BASE_LEN: usize = 20;
/// Most levels any saved level state holds (from any door); a state with
/// more than `PF_LEVELS_CAPACITY` levels does not fit a `pf_levels` store.
pub const PF_STATE_MAX_LEVELS: usize = 62;
const _: () = assert!(
    PF_STATE_LINE_LEAN_LEN == state::LEAN_LEN
        && PF_STATE_LINE_FULL_LEN == state::FULL_LEN
        && PF_STATE_MAX_LEN == state::MAX_ENCODED_LEN
        && PF_STATE_HEADER_LEN == state::HEADER_LEN
        && PF_STATE_LEVEL_RECORD_LEN == state::LEVEL_RECORD_LEN
        && PF_STATE_LEVELS_BASE_LEN == state::levels_len(0)
        && PF_STATE_MAX_LEVELS == state::MAX_LEVELS
);

/// `pf_state_info.kind`: a lean line accumulator.
pub const PF_STATE_KIND_LINE_LEAN: u32 = 1;
/// `pf_state_info.kind`: a full-tier line accumulator.
pub const PF_STATE_KIND_LINE_FULL: u32 = 2;
/// `pf_state_info.kind`: a model accumulator.
pub const PF_STATE_KIND_MODEL: u32 = 3;
/// `pf_state_info.kind`: a replicate-level store (`pf_levels`).
pub const PF_STATE_KIND_LEVELS: u32 = 4;

/// What a saved state holds, from `pf_state_peek`.
///
/// Plain data owned by the caller (stack, static or heap); the library
/// keeps no pointer to it and it may be copied and read from any thread.
#[repr(C)]
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct pf_state_info {
    /// One of the `PF_STATE_KIND_*` values.
    pub kind: u32,
    /// Format version of the bytes.
    pub version: u32,
    /// Number of model coefficients, or of levels in a level state (0 for
    /// line states).
    pub params: u32,
    /// Pairs, rows or readings accumulated.
    pub count: u64,
    /// Total length of the state in bytes.
    pub len: usize,
}

pub(crate) fn state_err(e: StateError) -> pf_status {
    from_code(e.code())
}

fn kind_code(k: StateKind) -> u32 {
    match k {
        StateKind::LineLean => PF_STATE_KIND_LINE_LEAN,
        StateKind::LineFull => PF_STATE_KIND_LINE_FULL,
        StateKind::Model => PF_STATE_KIND_MODEL,
        StateKind::Levels => PF_STATE_KIND_LEVELS,
        // A kind added to the core later: report it by its header byte.
        _ => k.code() as u32,
    }
}

/// A state the C door saves: its encoded length and its encoder (the
/// core's, for every accumulator kind).
pub(crate) trait Saves {
    /// Bytes the save writes.
    fn encoded_len(&self) -> usize;
    /// Encodes into `out` (at least `encoded_len` bytes); returns the bytes
    /// written.
    fn save_into(&self, out: &mut [u8]) -> Result<usize, StateError>;
}

/// A state the C door restores in place: `bytes` is checked in full and
/// the state is replaced only on success.
pub(crate) trait Restores {
    /// Replaces the state by the one saved in `bytes`, or returns the error
    /// and leaves it unchanged.
    fn restore_from(&mut self, bytes: &[u8]) -> pf_status;
}

impl<T: StateTier> Saves for PairMoments<T> {
    fn encoded_len(&self) -> usize {
        PairMoments::encoded_len(self)
    }
    fn save_into(&self, out: &mut [u8]) -> Result<usize, StateError> {
        PairMoments::save_into(self, out)
    }
}

impl<T: StateTier> Restores for PairMoments<T> {
    fn restore_from(&mut self, bytes: &[u8]) -> pf_status {
        replace(self, PairMoments::restore(bytes))
    }
}

impl Saves for ModelCore<'_> {
    fn encoded_len(&self) -> usize {
        ModelCore::encoded_len(self)
    }
    fn save_into(&self, out: &mut [u8]) -> Result<usize, StateError> {
        ModelCore::save_into(self, out)
    }
}

impl<const N: usize> Saves for FixedLevels<N> {
    fn encoded_len(&self) -> usize {
        FixedLevels::encoded_len(self)
    }
    fn save_into(&self, out: &mut [u8]) -> Result<usize, StateError> {
        FixedLevels::save_into(self, out)
    }
}

impl<const N: usize> Restores for FixedLevels<N> {
    fn restore_from(&mut self, bytes: &[u8]) -> pf_status {
        replace(self, FixedLevels::restore(bytes))
    }
}

/// The raw state of a model handle with its `p`, as restored in place.
struct ModelState<'a> {
    params: usize,
    words: &'a mut [f64],
}

impl Restores for ModelState<'_> {
    fn restore_from(&mut self, bytes: &[u8]) -> pf_status {
        let info = match state::peek(bytes) {
            Ok(i) => i,
            Err(e) => return state_err(e),
        };
        if info.kind == StateKind::Model && info.params as usize != self.params {
            return from_code(
                pf_core::model::ModelError::DimensionMismatch {
                    expected: self.params,
                    found: info.params as usize,
                }
                .code(),
            );
        }
        // Restore into a copy: the handle changes only on success.
        let n = self.words.len();
        let mut tmp = [0.0f64; storage_len(MAX_PARAMS)];
        match ModelCore::restore_in(&mut tmp[..n], bytes) {
            Ok(_) => {
                self.words.copy_from_slice(&tmp[..n]);
                PF_OK
            }
            Err(e) => state_err(e),
        }
    }
}

/// `*slot = restored` if the restore succeeded.
fn replace<T>(slot: &mut T, restored: Result<T, StateError>) -> pf_status {
    match restored {
        Ok(v) => {
            *slot = v;
            PF_OK
        }
        Err(e) => state_err(e),
    }
}

/// A handle type of the C door whose state is saved and restored: how to
/// reach that state (shared by `pf_*_state_len`, `pf_*_save` and
/// `pf_*_restore`).
pub(crate) trait StateHandle {
    /// Runs `f` on the state of `h`, read-only; handle errors are returned
    /// without calling `f`.
    ///
    /// # Safety
    /// `h` NULL or a live handle that nobody mutates during the call.
    unsafe fn read_state(h: *const Self, f: &dyn Fn(&dyn Saves) -> pf_status) -> pf_status;

    /// Runs `f` on the state of `h`, exclusively; handle errors are
    /// returned without calling `f`.
    ///
    /// # Safety
    /// `h` NULL or a live handle used by nobody else during the call.
    unsafe fn write_state(h: *mut Self, f: &dyn Fn(&mut dyn Restores) -> pf_status) -> pf_status;
}

impl StateHandle for crate::pf_line {
    unsafe fn read_state(h: *const Self, f: &dyn Fn(&dyn Saves) -> pf_status) -> pf_status {
        // SAFETY: forwarded contract.
        unsafe { crate::line::with_either(h, |a| f(a), |a| f(a)) }
    }

    unsafe fn write_state(h: *mut Self, f: &dyn Fn(&mut dyn Restores) -> pf_status) -> pf_status {
        // SAFETY: forwarded contract.
        unsafe { crate::line::with_either_mut(h, |a| f(a), |a| f(a)) }
    }
}

impl StateHandle for crate::pf_model {
    unsafe fn read_state(h: *const Self, f: &dyn Fn(&dyn Saves) -> pf_status) -> pf_status {
        // SAFETY: forwarded contract.
        unsafe { crate::model::with_core(h, |c| f(c)) }
    }

    unsafe fn write_state(h: *mut Self, f: &dyn Fn(&mut dyn Restores) -> pf_status) -> pf_status {
        // SAFETY: forwarded contract.
        unsafe {
            crate::model::with_state_mut(h, |params, words| f(&mut ModelState { params, words }))
        }
    }
}

/// The body of every `pf_*_state_len`: the bytes a save of `h` writes.
///
/// # Safety
/// `h` NULL or a live handle; `out` NULL or valid for one `size_t`.
pub(crate) unsafe fn state_len<H: StateHandle>(h: *const H, out: *mut usize) -> pf_status {
    if out.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    // SAFETY: forwarded contract; `out` checked non-NULL.
    unsafe {
        H::read_state(h, &|s| {
            write_out(out, s.encoded_len());
            PF_OK
        })
    }
}

/// The body of every `pf_*_save`: encodes the state of `h` into `out`
/// (capacity `cap`) and its length into `*written`, or writes nothing.
///
/// # Safety
/// `h` NULL or a live handle; `out` NULL or valid for `cap` bytes;
/// `written` NULL or valid for one `size_t`.
pub(crate) unsafe fn save<H: StateHandle>(
    h: *const H,
    out: *mut u8,
    cap: usize,
    written: *mut usize,
) -> pf_status {
    if out.is_null() || written.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    // SAFETY: forwarded contract; outputs checked non-NULL.
    unsafe { H::read_state(h, &|s| save_checked(out, cap, written, s)) }
}

/// Writes the encoding of `s` into the caller buffer and its length to
/// `written`.
///
/// # Safety
/// `out` non-NULL and valid for `cap` bytes; `written` non-NULL, writable.
unsafe fn save_checked(out: *mut u8, cap: usize, written: *mut usize, s: &dyn Saves) -> pf_status {
    let len = s.encoded_len();
    if cap < len {
        return PF_ERR_STATE_BUFFER_TOO_SMALL;
    }
    // Encode into a stack buffer first, so `out` is written only on success.
    let mut tmp = [0u8; PF_STATE_MAX_LEN];
    match s.save_into(&mut tmp[..len]) {
        Ok(n) => {
            // SAFETY: `n <= len <= cap`; `out` valid for `cap` bytes.
            unsafe {
                core::ptr::copy_nonoverlapping(tmp.as_ptr(), out, n);
                write_out(written, n);
            }
            PF_OK
        }
        Err(e) => state_err(e),
    }
}

/// The body of every `pf_*_restore`: replaces the state of `h` by the
/// state saved in `bytes` (`len` bytes), or leaves it unchanged.
///
/// # Safety
/// `h` NULL or a live handle; `bytes` NULL or valid for `len` bytes.
pub(crate) unsafe fn restore<H: StateHandle>(h: *mut H, bytes: *const u8, len: usize) -> pf_status {
    if h.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    // SAFETY: forwarded contract.
    let b = match unsafe { slice_in_bytes(bytes, len) } {
        Ok(b) => b,
        Err(e) => return e,
    };
    // SAFETY: forwarded contract.
    unsafe { H::write_state(h, &|s| s.restore_from(b)) }
}

/// Stores the number of bytes `pf_line_save` writes for `line` in `*out`
/// (`PF_STATE_LINE_LEAN_LEN` or `PF_STATE_LINE_FULL_LEN`).
///
/// Errors: `PF_ERR_NULL_POINTER`, handle errors. Read-only.
///
/// # Safety
/// `line` NULL or a live handle; `out` NULL or valid for one `size_t`.
#[no_mangle]
pub unsafe extern "C" fn pf_line_state_len(
    line: *const crate::pf_line,
    out: *mut usize,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { state_len(line, out) }
}

/// Saves the state of `line` into `out` (capacity `cap` bytes) and stores
/// the number of bytes written in `*written`. No heap is used. The bytes
/// are the same on every platform and from every door.
///
/// Errors: `PF_ERR_NULL_POINTER` (any pointer, even with `cap` 0),
/// `PF_ERR_STATE_BUFFER_TOO_SMALL` (query `pf_line_state_len`),
/// `PF_ERR_OVERFLOW`, handle errors. Nothing is written on error.
/// Read-only.
///
/// # Safety
/// `line` NULL or a live handle; `out` NULL or valid for `cap` bytes;
/// `written` NULL or valid for one `size_t`.
#[no_mangle]
pub unsafe extern "C" fn pf_line_save(
    line: *const crate::pf_line,
    out: *mut u8,
    cap: usize,
    written: *mut usize,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { save(line, out, cap, written) }
}

/// Replaces the state of `line` by the state saved in `bytes` (`len`
/// bytes, exactly one saved line state of the same tier). Everything is
/// checked first (format, version, checksum, field rules); on error the
/// accumulator is unchanged. Works for heap and caller-storage handles.
///
/// Errors: `PF_ERR_NULL_POINTER` (even with `len` 0),
/// `PF_ERR_STATE_WRONG_KIND` (other tier or a model), every other
/// `PF_ERR_STATE_*`, handle errors. Needs exclusive access.
///
/// # Safety
/// `line` NULL or a live handle; `bytes` NULL or valid for `len` bytes.
#[no_mangle]
pub unsafe extern "C" fn pf_line_restore(
    line: *mut crate::pf_line,
    bytes: *const u8,
    len: usize,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { restore(line, bytes, len) }
}

/// Stores the number of bytes `pf_model_save` writes for `m` in `*out`.
///
/// Errors: `PF_ERR_NULL_POINTER`, handle errors. Read-only.
///
/// # Safety
/// `m` NULL or a live handle; `out` NULL or valid for one `size_t`.
#[no_mangle]
pub unsafe extern "C" fn pf_model_state_len(
    m: *const crate::pf_model,
    out: *mut usize,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { state_len(m, out) }
}

/// Saves the state of `m` into `out` (capacity `cap` bytes) and stores the
/// number of bytes written in `*written`. No heap is used.
///
/// Errors: `PF_ERR_NULL_POINTER` (any pointer), `PF_ERR_STATE_BUFFER_TOO_SMALL`
/// (query `pf_model_state_len`; `PF_STATE_MAX_LEN` always suffices), handle
/// errors. Nothing is written on error. Read-only.
///
/// # Safety
/// `m` NULL or a live handle; `out` NULL or valid for `cap` bytes;
/// `written` NULL or valid for one `size_t`.
#[no_mangle]
pub unsafe extern "C" fn pf_model_save(
    m: *const crate::pf_model,
    out: *mut u8,
    cap: usize,
    written: *mut usize,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { save(m, out, cap, written) }
}

/// Replaces the state of `m` by a saved model state with the same number
/// of coefficients. Everything is checked first; on error the accumulator
/// is unchanged. Works for heap and caller-storage handles.
///
/// Errors: `PF_ERR_NULL_POINTER` (even with `len` 0),
/// `PF_ERR_MODEL_DIMENSION` (the state has a different p),
/// `PF_ERR_STATE_WRONG_KIND` (a line state), every other `PF_ERR_STATE_*`,
/// handle errors. Needs exclusive access.
///
/// # Safety
/// `m` NULL or a live handle; `bytes` NULL or valid for `len` bytes.
#[no_mangle]
pub unsafe extern "C" fn pf_model_restore(
    m: *mut crate::pf_model,
    bytes: *const u8,
    len: usize,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { restore(m, bytes, len) }
}

/// Checks the header, exact length and checksum of a saved state of `len`
/// bytes and stores what it holds in `*out` (the field rules are checked
/// only by a restore).
///
/// Errors: `PF_ERR_NULL_POINTER` (even with `len` 0), the
/// `PF_ERR_STATE_*` format errors. Thread-safe.
///
/// # Safety
/// `bytes` NULL or valid for `len` bytes; `out` NULL or valid for one
/// `pf_state_info`.
#[no_mangle]
pub unsafe extern "C" fn pf_state_peek(
    bytes: *const u8,
    len: usize,
    out: *mut pf_state_info,
) -> pf_status {
    if out.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    // SAFETY: forwarded contract.
    let b = match unsafe { slice_in_bytes(bytes, len) } {
        Ok(b) => b,
        Err(e) => return e,
    };
    boundary::guard(|| match state::peek(b) {
        Ok(i) => {
            let info = pf_state_info {
                kind: kind_code(i.kind),
                version: i.version as u32,
                params: i.params as u32,
                count: i.count,
                len: i.len,
            };
            // SAFETY: `out` non-NULL, writable by the contract.
            unsafe { write_out(out, info) };
            PF_OK
        }
        Err(e) => state_err(e),
    })
}

/// Reads only the first `PF_STATE_HEADER_LEN` bytes of a saved state (e.g.
/// from a stream) and stores the state's total length in `*out`. Checks
/// magic, version, kind and length, not the checksum.
///
/// Errors: `PF_ERR_NULL_POINTER`, `PF_ERR_STATE_TRUNCATED` (`len` below
/// the header length), the other header errors. Thread-safe.
///
/// # Safety
/// `header` NULL or valid for `len` bytes; `out` NULL or valid for one
/// `size_t`.
#[no_mangle]
pub unsafe extern "C" fn pf_state_declared_len(
    header: *const u8,
    len: usize,
    out: *mut usize,
) -> pf_status {
    if out.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    // SAFETY: forwarded contract.
    let b = match unsafe { slice_in_bytes(header, len) } {
        Ok(b) => b,
        Err(e) => return e,
    };
    boundary::guard(|| match state::declared_len(b) {
        Ok(n) => {
            // SAFETY: `out` non-NULL, writable by the contract.
            unsafe { write_out(out, n) };
            PF_OK
        }
        Err(e) => state_err(e),
    })
}
