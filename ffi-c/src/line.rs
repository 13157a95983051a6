//! The line accumulator (`pf_line`): push, extend, merge, forget, queries
//! and the fit, in library-allocated or caller-provided memory.

use crate::boundary::{self, guard_mut, guard_ref, slice_in, write_out, Head};
use crate::fit::{options_from_bits, pf_fitted_line};
use crate::status::*;
use core::ffi::c_void;
use pf_core::{Full, FullMoments, Lean, LeanMoments, PairMoments, Tier};

/// Tier value for `pf_line_new` / `pf_line_init_in`: second moments only,
/// the smallest and fastest accumulator (everything the line fit needs).
pub const PF_TIER_LEAN: u32 = 0;
/// Tier value: adds co-moments up to order 4, lag-1 difference sums and the
/// x/y extremes (for diagnostics and `pf_line_x_range`).
pub const PF_TIER_FULL: u32 = 1;

/// Size in 8-byte words of `pf_line_lean_storage` (at least the size of a
/// lean accumulator, checked when the library is compiled).
pub const PF_LINE_LEAN_STORAGE_WORDS: usize = 48;
/// Size in 8-byte words of `pf_line_full_storage`.
pub const PF_LINE_FULL_STORAGE_WORDS: usize = 96;

/// A line accumulator (opaque). Create it with `pf_line_new` (library
/// memory, release with `pf_line_free`) or `pf_line_init_in` (your memory).
///
/// Thread-safety: functions taking `const pf_line *` only read and may run
/// concurrently on one handle; all others need exclusive access.
pub struct pf_line {
    _private: [u8; 0],
}

/// Static or stack storage for a lean accumulator, for `pf_line_init_in`
/// without a size query: `static pf_line_lean_storage st;` then
/// `pf_line_init_in(&st, sizeof st, PF_TIER_LEAN, &line)`. The contents are
/// private; do not read or write them. Its size is part of the ABI.
#[repr(C)]
pub struct pf_line_lean_storage {
    /// Private.
    pub _private: [u64; PF_LINE_LEAN_STORAGE_WORDS],
}

/// Static or stack storage for a full-tier accumulator; see
/// `pf_line_lean_storage`.
#[repr(C)]
pub struct pf_line_full_storage {
    /// Private.
    pub _private: [u64; PF_LINE_FULL_STORAGE_WORDS],
}

/// Size and alignment, in bytes, of caller storage for an object.
///
/// Plain data owned by the caller (stack, static or heap); the library
/// keeps no pointer to it and it may be copied and read from any thread.
#[repr(C)]
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct pf_layout {
    /// Bytes needed.
    pub size: usize,
    /// Required alignment of the first byte (a power of two).
    pub align: usize,
}

/// The accumulated moments as plain numbers (pending pairs included).
///
/// Plain data owned by the caller (stack, static or heap); the library
/// keeps no pointer to it and it may be copied and read from any thread.
#[repr(C)]
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct pf_moments {
    /// Number of pairs added (forgetting does not change it).
    pub count: u64,
    /// Sum of the weights (1 per unweighted pair, reduced by forgetting).
    pub weight_sum: f64,
    /// Sum of the squared weights (for the effective sample size).
    pub weight_sq_sum: f64,
    /// Weighted mean of x.
    pub mean_x: f64,
    /// Weighted mean of y.
    pub mean_y: f64,
    /// Weighted sum of squared deviations of x from its mean.
    pub sxx: f64,
    /// Weighted sum of cross deviations of x and y.
    pub sxy: f64,
    /// Weighted sum of squared deviations of y from its mean.
    pub syy: f64,
    /// A weight other than 1 was used.
    pub weighted: bool,
    /// A forgetting factor below 1 was applied.
    pub forgotten: bool,
}

const TAG_LINE: u32 = 0x504c_4e31;

#[repr(C)]
struct LineObj<T: Tier> {
    head: Head,
    acc: PairMoments<T>,
}

const _: () = assert!(
    core::mem::size_of::<LineObj<Lean>>() <= PF_LINE_LEAN_STORAGE_WORDS * 8
        && core::mem::size_of::<LineObj<Full>>() <= PF_LINE_FULL_STORAGE_WORDS * 8
        && core::mem::align_of::<LineObj<Full>>() <= 8
        && core::mem::align_of::<LineObj<Lean>>() <= 8
);

enum AccMut<'a> {
    Lean(&'a mut LeanMoments),
    Full(&'a mut FullMoments),
}

#[derive(Clone, Copy)]
enum AccRef<'a> {
    Lean(&'a LeanMoments),
    Full(&'a FullMoments),
}

macro_rules! on_acc {
    ($acc:expr, $a:ident => $body:expr) => {
        match $acc {
            AccMut::Lean($a) => $body,
            AccMut::Full($a) => $body,
        }
    };
}

macro_rules! on_ref {
    ($acc:expr, $a:ident => $body:expr) => {
        match $acc {
            AccRef::Lean($a) => $body,
            AccRef::Full($a) => $body,
        }
    };
}

/// # Safety
/// `p` passed [`boundary::check_head`] with `TAG_LINE` and is exclusively
/// ours for `'a`.
unsafe fn acc_mut<'a>(head: Head, p: *mut pf_line) -> Result<AccMut<'a>, pf_status> {
    match head.variant {
        // SAFETY: the tag says `p` was built by this module as LineObj of
        // the tier in `variant`; exclusive access by the contract.
        PF_TIER_LEAN => Ok(AccMut::Lean(unsafe {
            &mut (*p.cast::<LineObj<Lean>>()).acc
        })),
        // SAFETY: as above.
        PF_TIER_FULL => Ok(AccMut::Full(unsafe {
            &mut (*p.cast::<LineObj<Full>>()).acc
        })),
        _ => Err(PF_ERR_BAD_HANDLE),
    }
}

/// # Safety
/// `p` passed [`boundary::check_head`] with `TAG_LINE` and nobody mutates
/// it for `'a`.
unsafe fn acc_ref<'a>(head: Head, p: *const pf_line) -> Result<AccRef<'a>, pf_status> {
    match head.variant {
        // SAFETY: the tag says `p` was built by this module as LineObj of
        // the tier in `variant`; shared access by the contract.
        PF_TIER_LEAN => Ok(AccRef::Lean(unsafe { &(*p.cast::<LineObj<Lean>>()).acc })),
        // SAFETY: as above.
        PF_TIER_FULL => Ok(AccRef::Full(unsafe { &(*p.cast::<LineObj<Full>>()).acc })),
        _ => Err(PF_ERR_BAD_HANDLE),
    }
}

fn done<E: CodeOf>(r: Result<(), E>) -> pf_status {
    match r {
        Ok(()) => PF_OK,
        Err(e) => from_code(e.code_of()),
    }
}

/// Core error types that carry a stable code.
pub(crate) trait CodeOf {
    fn code_of(&self) -> u16;
}
impl CodeOf for pf_core::MomentsError {
    fn code_of(&self) -> u16 {
        self.code()
    }
}
impl CodeOf for pf_core::LineError {
    fn code_of(&self) -> u16 {
        self.code()
    }
}

/// Runs a mutating body on a line handle.
///
/// # Safety
/// `line` is NULL or a pointer the caller got from this library (contract
/// of every entry point), not used by anyone else during the call.
unsafe fn with_mut(line: *mut pf_line, f: impl FnOnce(AccMut<'_>) -> pf_status) -> pf_status {
    // SAFETY: forwarded contract; the closure gets the checked handle.
    unsafe {
        guard_mut(line, TAG_LINE, |h, p| match acc_mut(h, p) {
            Ok(a) => f(a),
            Err(s) => s,
        })
    }
}

/// Runs a read-only body on a line handle.
///
/// # Safety
/// `line` is NULL or a pointer the caller got from this library, not
/// mutated by anyone during the call.
unsafe fn with_ref(line: *const pf_line, f: impl FnOnce(AccRef<'_>) -> pf_status) -> pf_status {
    // SAFETY: forwarded contract; the closure gets the checked handle.
    unsafe {
        guard_ref(line, TAG_LINE, |h, p| match acc_ref(h, p) {
            Ok(a) => f(a),
            Err(s) => s,
        })
    }
}

fn layout_of(tier: u32) -> Option<core::alloc::Layout> {
    match tier {
        PF_TIER_LEAN => Some(core::alloc::Layout::new::<LineObj<Lean>>()),
        PF_TIER_FULL => Some(core::alloc::Layout::new::<LineObj<Full>>()),
        _ => None,
    }
}

/// Writes an empty accumulator of `tier` at `p`.
///
/// # Safety
/// `p` is valid for writes of `layout_of(tier)` and aligned for it.
unsafe fn build(p: *mut u8, tier: u32, flags: u32) {
    let head = Head {
        tag: TAG_LINE,
        variant: tier,
        flags,
        reserved: 0,
    };
    if tier == PF_TIER_FULL {
        let obj = LineObj::<Full> {
            head,
            acc: FullMoments::new(),
        };
        // SAFETY: valid and aligned by this function's contract.
        unsafe { core::ptr::write(p.cast::<LineObj<Full>>(), obj) };
    } else {
        let obj = LineObj::<Lean> {
            head,
            acc: LeanMoments::new(),
        };
        // SAFETY: valid and aligned by this function's contract.
        unsafe { core::ptr::write(p.cast::<LineObj<Lean>>(), obj) };
    }
}

/// Size and alignment of caller storage for a line accumulator of `tier`
/// (`PF_TIER_LEAN` or `PF_TIER_FULL`), for `pf_line_init_in`.
///
/// Writes `*out` on success. Errors: `PF_ERR_NULL_POINTER` (`out` NULL),
/// `PF_ERR_BAD_ARGUMENT` (unknown tier). Thread-safe.
///
/// # Safety
/// `out` must be NULL or valid for writing one `pf_layout`.
#[no_mangle]
pub unsafe extern "C" fn pf_line_layout(tier: u32, out: *mut pf_layout) -> pf_status {
    boundary::guard(|| {
        if out.is_null() {
            return PF_ERR_NULL_POINTER;
        }
        let Some(l) = layout_of(tier) else {
            return PF_ERR_BAD_ARGUMENT;
        };
        // SAFETY: `out` non-NULL, writable by the contract.
        unsafe {
            write_out(
                out,
                pf_layout {
                    size: l.size(),
                    align: l.align(),
                },
            )
        };
        PF_OK
    })
}

/// Builds an empty line accumulator of `tier` in caller storage `buf` of
/// `len` bytes (no heap is used) and stores its handle in `*out`.
///
/// `buf` must be at least `pf_line_layout(tier).size` bytes and aligned to
/// its `align` (8); `pf_line_lean_storage` / `pf_line_full_storage` satisfy
/// both. The handle points into `buf` and is valid while `buf` is; do not
/// pass it to `pf_line_free` (it returns `PF_ERR_IN_PLACE_HANDLE`). To reuse
/// the storage, call `pf_line_init_in` again (this also clears poisoning) or
/// `pf_line_reset`. Nothing is written on error.
///
/// Errors: `PF_ERR_NULL_POINTER` (`buf` or `out` NULL, even with `len` 0),
/// `PF_ERR_BAD_ARGUMENT` (unknown tier), `PF_ERR_BUFFER_TOO_SMALL`,
/// `PF_ERR_MISALIGNED`. Needs exclusive access to `buf`.
///
/// # Safety
/// `buf` must be NULL or valid for writing `len` bytes; `out` NULL or valid
/// for writing one pointer.
#[no_mangle]
pub unsafe extern "C" fn pf_line_init_in(
    buf: *mut c_void,
    len: usize,
    tier: u32,
    out: *mut *mut pf_line,
) -> pf_status {
    boundary::guard(|| {
        if buf.is_null() || out.is_null() {
            return PF_ERR_NULL_POINTER;
        }
        let Some(l) = layout_of(tier) else {
            return PF_ERR_BAD_ARGUMENT;
        };
        if len < l.size() {
            return PF_ERR_BUFFER_TOO_SMALL;
        }
        if !(buf as usize).is_multiple_of(l.align()) {
            return PF_ERR_MISALIGNED;
        }
        // SAFETY: `buf` is non-NULL, large enough and aligned (checked);
        // writable by the contract. `out` non-NULL, writable.
        unsafe {
            build(buf.cast(), tier, boundary::FLAG_IN_PLACE);
            write_out(out, buf.cast::<pf_line>());
        }
        PF_OK
    })
}

/// Allocates an empty line accumulator of `tier` and stores its handle in
/// `*out`. Release it with `pf_line_free`. The handle is owned by the
/// caller; it may move between threads but not be used by two at once
/// (except through `const pf_line *` functions).
///
/// Errors: `PF_ERR_NULL_POINTER` (`out` NULL), `PF_ERR_BAD_ARGUMENT`
/// (unknown tier), `PF_ERR_OUT_OF_MEMORY`. Nothing is written on error.
///
/// # Safety
/// `out` must be NULL or valid for writing one pointer.
#[no_mangle]
pub unsafe extern "C" fn pf_line_new(tier: u32, out: *mut *mut pf_line) -> pf_status {
    boundary::guard(|| {
        if out.is_null() {
            return PF_ERR_NULL_POINTER;
        }
        let Some(l) = layout_of(tier) else {
            return PF_ERR_BAD_ARGUMENT;
        };
        // SAFETY: the layout has non-zero size (a Head at least).
        let p = unsafe { std::alloc::alloc(l) };
        if p.is_null() {
            return PF_ERR_OUT_OF_MEMORY;
        }
        // SAFETY: `p` is a fresh allocation of `l`; `out` writable.
        unsafe {
            build(p, tier, 0);
            write_out(out, p.cast::<pf_line>());
        }
        PF_OK
    })
}

/// Releases a handle from `pf_line_new`. `pf_line_free(NULL)` does nothing
/// and returns `PF_OK`. A poisoned handle can (and should) be freed. The
/// handle must not be used afterwards.
///
/// Errors: `PF_ERR_IN_PLACE_HANDLE` (the handle lives in caller storage;
/// nothing is done), `PF_ERR_BAD_HANDLE`. Needs exclusive access.
///
/// # Safety
/// `line` must be NULL or a handle from this library that is not used
/// concurrently and not freed twice.
#[no_mangle]
pub unsafe extern "C" fn pf_line_free(line: *mut pf_line) -> pf_status {
    boundary::guard(|| {
        if line.is_null() {
            return PF_OK;
        }
        if !(line as usize).is_multiple_of(core::mem::align_of::<Head>()) {
            return PF_ERR_BAD_HANDLE;
        }
        // SAFETY: non-NULL and aligned; a handle from us starts with a Head.
        let head = unsafe { core::ptr::read(line.cast::<Head>()) };
        if head.tag != TAG_LINE {
            return PF_ERR_BAD_HANDLE;
        }
        if head.flags & boundary::FLAG_IN_PLACE != 0 {
            return PF_ERR_IN_PLACE_HANDLE;
        }
        let Some(l) = layout_of(head.variant) else {
            return PF_ERR_BAD_HANDLE;
        };
        // SAFETY: a heap handle was allocated by `pf_line_new` with this
        // layout (the tier decides it); clearing the tag first makes a
        // use-after-free more likely to be reported as a bad handle.
        unsafe {
            (*line.cast::<Head>()).tag = 0;
            std::alloc::dealloc(line.cast(), l);
        }
        PF_OK
    })
}

/// Empties the accumulator (as if newly created; the tier is kept).
///
/// Errors: `PF_ERR_NULL_POINTER`, `PF_ERR_BAD_HANDLE`, `PF_ERR_POISONED`.
/// Needs exclusive access.
///
/// # Safety
/// `line` must be NULL or a live handle from this library.
#[no_mangle]
pub unsafe extern "C" fn pf_line_reset(line: *mut pf_line) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe {
        with_mut(line, |a| {
            match a {
                AccMut::Lean(a) => *a = LeanMoments::new(),
                AccMut::Full(a) => *a = FullMoments::new(),
            }
            PF_OK
        })
    }
}

/// Stores the tier of `line` (`PF_TIER_LEAN` or `PF_TIER_FULL`) in `*out`.
///
/// Errors: `PF_ERR_NULL_POINTER`, `PF_ERR_BAD_HANDLE`, `PF_ERR_POISONED`.
/// Read-only.
///
/// # Safety
/// `line` NULL or a live handle; `out` NULL or valid for one `uint32_t`.
#[no_mangle]
pub unsafe extern "C" fn pf_line_tier(line: *const pf_line, out: *mut u32) -> pf_status {
    if out.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    // SAFETY: forwarded contract; `out` checked non-NULL.
    unsafe {
        with_ref(line, |a| {
            let t = match a {
                AccRef::Lean(_) => PF_TIER_LEAN,
                AccRef::Full(_) => PF_TIER_FULL,
            };
            write_out(out, t);
            PF_OK
        })
    }
}

/// Adds one pair `(x, y)` with unit weight. Allocation-free.
///
/// Errors: `PF_ERR_NULL_POINTER`, `PF_ERR_BAD_HANDLE`, `PF_ERR_POISONED`,
/// `PF_ERR_NON_FINITE` (x or y NaN or infinite), `PF_ERR_OVERFLOW`. On error
/// the accumulator is unchanged. Needs exclusive access.
///
/// # Safety
/// `line` must be NULL or a live handle from this library.
#[no_mangle]
pub unsafe extern "C" fn pf_line_push(line: *mut pf_line, x: f64, y: f64) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { with_mut(line, |a| done(on_acc!(a, a => a.push(x, y)))) }
}

/// Adds one pair with weight `w > 0` (relative weight, or a known inverse
/// variance: the meaning is chosen when fitting). Allocation-free.
///
/// Errors: as `pf_line_push`, plus `PF_ERR_INVALID_WEIGHT` (w zero,
/// negative or not finite). On error the accumulator is unchanged.
///
/// # Safety
/// `line` must be NULL or a live handle from this library.
#[no_mangle]
pub unsafe extern "C" fn pf_line_push_weighted(
    line: *mut pf_line,
    x: f64,
    y: f64,
    w: f64,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { with_mut(line, |a| done(on_acc!(a, a => a.push_weighted(x, y, w)))) }
}

/// Adds the `len` pairs `(xs[i], ys[i])` with unit weight (the fast path for
/// blocks of readings). The arrays are only read during the call.
///
/// Errors: `PF_ERR_NULL_POINTER` (any pointer NULL, even with `len` 0),
/// `PF_ERR_MISALIGNED` (an array not aligned for double),
/// `PF_ERR_BAD_ARGUMENT` (`len` too large to address), `PF_ERR_EMPTY_INPUT`
/// (`len` 0), `PF_ERR_NON_FINITE`, `PF_ERR_OVERFLOW`, handle errors. On
/// error nothing is added. Needs exclusive access.
///
/// # Safety
/// `line` NULL or a live handle; `xs`, `ys` NULL or valid for reading `len`
/// doubles each.
#[no_mangle]
pub unsafe extern "C" fn pf_line_extend(
    line: *mut pf_line,
    xs: *const f64,
    ys: *const f64,
    len: usize,
) -> pf_status {
    // SAFETY: forwarded contract; the slices are checked by `slice_in`.
    unsafe {
        with_mut(line, |a| {
            let (xs, ys) = match (slice_in(xs, len), slice_in(ys, len)) {
                (Ok(x), Ok(y)) => (x, y),
                (Err(s), _) | (_, Err(s)) => return s,
            };
            done(on_acc!(a, a => a.extend(xs, ys)))
        })
    }
}

/// Adds `len` weighted pairs `(xs[i], ys[i])` with weights `ws[i] > 0`.
///
/// Errors: as `pf_line_extend`, plus `PF_ERR_INVALID_WEIGHT`. On error
/// nothing is added. Needs exclusive access.
///
/// # Safety
/// `line` NULL or a live handle; `xs`, `ys`, `ws` NULL or valid for reading
/// `len` doubles each.
#[no_mangle]
pub unsafe extern "C" fn pf_line_extend_weighted(
    line: *mut pf_line,
    xs: *const f64,
    ys: *const f64,
    ws: *const f64,
    len: usize,
) -> pf_status {
    // SAFETY: forwarded contract; the slices are checked by `slice_in`.
    unsafe {
        with_mut(line, |a| {
            let (xs, ys, ws) = match (slice_in(xs, len), slice_in(ys, len), slice_in(ws, len)) {
                (Ok(x), Ok(y), Ok(w)) => (x, y, w),
                (Err(s), _, _) | (_, Err(s), _) | (_, _, Err(s)) => return s,
            };
            done(on_acc!(a, a => a.extend_weighted(xs, ys, ws)))
        })
    }
}

/// Merges `src` into `dst`, as if `src`'s pairs had been added after
/// `dst`'s. `src` is only read (it may be the same handle as `dst`, which
/// merges the accumulator with a copy of itself). Both must have the same
/// tier.
///
/// Errors: `PF_ERR_NULL_POINTER`, `PF_ERR_BAD_HANDLE`, `PF_ERR_POISONED`
/// (either handle), `PF_ERR_TIER_MISMATCH`, `PF_ERR_OVERFLOW`. On error
/// `dst` is unchanged. Needs exclusive access to `dst`; `src` must not be
/// mutated during the call.
///
/// # Safety
/// `dst`, `src` NULL or live handles from this library.
#[no_mangle]
pub unsafe extern "C" fn pf_line_merge(dst: *mut pf_line, src: *const pf_line) -> pf_status {
    // A stack copy on purpose: no heap in the C door.
    #[allow(clippy::large_enum_variant)]
    #[derive(Clone, Copy)]
    enum Copied {
        Lean(LeanMoments),
        Full(FullMoments),
    }
    // Copy `src` first: `dst` may alias it, and the copy is a few hundred
    // bytes on the stack.
    let mut copied = None;
    // SAFETY: forwarded contract.
    let s = unsafe {
        with_ref(src, |a| {
            copied = Some(match a {
                AccRef::Lean(a) => Copied::Lean(*a),
                AccRef::Full(a) => Copied::Full(*a),
            });
            PF_OK
        })
    };
    if s != PF_OK {
        return s;
    }
    let Some(other) = copied else {
        return PF_ERR_PANIC;
    };
    // SAFETY: forwarded contract.
    unsafe {
        with_mut(dst, |a| match (a, &other) {
            (AccMut::Lean(a), Copied::Lean(b)) => done(a.merge(b)),
            (AccMut::Full(a), Copied::Full(b)) => done(a.merge(b)),
            _ => PF_ERR_TIER_MISMATCH,
        })
    }
}

/// Multiplies every weight accumulated so far by `lambda` in (0, 1]
/// (exponential forgetting for drift tracking; the fit then weights a pair
/// `lambda^age`). Allocation-free.
///
/// Errors: `PF_ERR_INVALID_FORGETTING` (lambda outside (0, 1] or NaN),
/// `PF_ERR_OVERFLOW` (weights would underflow to zero), handle errors. On
/// error the accumulator is unchanged. Needs exclusive access.
///
/// # Safety
/// `line` must be NULL or a live handle from this library.
#[no_mangle]
pub unsafe extern "C" fn pf_line_forget(line: *mut pf_line, lambda: f64) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { with_mut(line, |a| done(on_acc!(a, a => a.forget(lambda)))) }
}

/// Stores the number of pairs added in `*out`.
///
/// Errors: `PF_ERR_NULL_POINTER`, `PF_ERR_BAD_HANDLE`, `PF_ERR_POISONED`.
/// Read-only.
///
/// # Safety
/// `line` NULL or a live handle; `out` NULL or valid for one `uint64_t`.
#[no_mangle]
pub unsafe extern "C" fn pf_line_count(line: *const pf_line, out: *mut u64) -> pf_status {
    if out.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    // SAFETY: forwarded contract; `out` checked non-NULL.
    unsafe {
        with_ref(line, |a| {
            write_out(out, on_ref!(a, a => a.count()));
            PF_OK
        })
    }
}

/// Copies the accumulated moments into `*out`.
///
/// Errors: `PF_ERR_NULL_POINTER`, handle errors, `PF_ERR_OVERFLOW`.
/// Read-only.
///
/// # Safety
/// `line` NULL or a live handle; `out` NULL or valid for one `pf_moments`.
#[no_mangle]
pub unsafe extern "C" fn pf_line_moments(line: *const pf_line, out: *mut pf_moments) -> pf_status {
    if out.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    // SAFETY: forwarded contract; `out` checked non-NULL.
    unsafe {
        with_ref(line, |a| {
            let (s, weighted, forgotten) =
                on_ref!(a, a => (a.summary(), a.is_weighted(), a.is_forgotten()));
            match s {
                Ok(s) => {
                    write_out(
                        out,
                        pf_moments {
                            count: s.count,
                            weight_sum: s.weight_sum,
                            weight_sq_sum: s.weight_sq_sum,
                            mean_x: s.mean_x,
                            mean_y: s.mean_y,
                            sxx: s.sxx,
                            sxy: s.sxy,
                            syy: s.syy,
                            weighted,
                            forgotten,
                        },
                    );
                    PF_OK
                }
                Err(e) => from_code(e.code()),
            }
        })
    }
}

/// Runs a read-only body on a full-tier line handle
/// (`PF_ERR_NEEDS_FULL_TIER` for a lean one).
///
/// # Safety
/// As [`with_ref`].
pub(crate) unsafe fn with_full(
    line: *const pf_line,
    f: impl FnOnce(&FullMoments) -> pf_status,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe {
        with_ref(line, |a| match a {
            AccRef::Lean(_) => PF_ERR_NEEDS_FULL_TIER,
            AccRef::Full(acc) => f(acc),
        })
    }
}

/// Runs a read-only body on either tier.
///
/// # Safety
/// As [`with_ref`].
pub(crate) unsafe fn with_either(
    line: *const pf_line,
    lean: impl FnOnce(&LeanMoments) -> pf_status,
    full: impl FnOnce(&FullMoments) -> pf_status,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe {
        with_ref(line, |a| match a {
            AccRef::Lean(acc) => lean(acc),
            AccRef::Full(acc) => full(acc),
        })
    }
}

/// Runs a mutating body on either tier.
///
/// # Safety
/// As [`with_mut`].
pub(crate) unsafe fn with_either_mut(
    line: *mut pf_line,
    lean: impl FnOnce(&mut LeanMoments) -> pf_status,
    full: impl FnOnce(&mut FullMoments) -> pf_status,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe {
        with_mut(line, |a| match a {
            AccMut::Lean(acc) => lean(acc),
            AccMut::Full(acc) => full(acc),
        })
    }
}

/// Range query shared by `pf_line_x_range` and `pf_line_y_range`.
///
/// # Safety
/// As those functions.
unsafe fn range(
    line: *const pf_line,
    lo: *mut f64,
    hi: *mut f64,
    pick: fn(&FullMoments) -> Option<(f64, f64)>,
) -> pf_status {
    if lo.is_null() || hi.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    // SAFETY: forwarded contract; outputs checked non-NULL.
    unsafe {
        with_ref(line, |a| match a {
            AccRef::Lean(_) => PF_ERR_NEEDS_FULL_TIER,
            AccRef::Full(f) => match pick(f) {
                Some((l, h)) => {
                    write_out(lo, l);
                    write_out(hi, h);
                    PF_OK
                }
                None => PF_ERR_TOO_FEW_POINTS,
            },
        })
    }
}

/// Stores the smallest and largest x added in `*min_out`, `*max_out`.
///
/// Errors: `PF_ERR_NULL_POINTER` (any pointer), `PF_ERR_NEEDS_FULL_TIER`,
/// `PF_ERR_TOO_FEW_POINTS` (empty), handle errors. Read-only.
///
/// # Safety
/// `line` NULL or a live handle; outputs NULL or valid for one double.
#[no_mangle]
pub unsafe extern "C" fn pf_line_x_range(
    line: *const pf_line,
    min_out: *mut f64,
    max_out: *mut f64,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { range(line, min_out, max_out, |f| f.x_range()) }
}

/// Stores the smallest and largest y added in `*min_out`, `*max_out`.
///
/// Errors: as `pf_line_x_range`. Read-only.
///
/// # Safety
/// `line` NULL or a live handle; outputs NULL or valid for one double.
#[no_mangle]
pub unsafe extern "C" fn pf_line_y_range(
    line: *const pf_line,
    min_out: *mut f64,
    max_out: *mut f64,
) -> pf_status {
    // SAFETY: forwarded contract.
    unsafe { range(line, min_out, max_out, |f| f.y_range()) }
}

/// Slope and intercept only (no inference; needs 2 pairs with x spread).
/// The cheapest way to read the current line.
///
/// Errors: `PF_ERR_NULL_POINTER` (any pointer), `PF_ERR_TOO_FEW_POINTS`,
/// `PF_ERR_NO_SPREAD`, `PF_ERR_OVERFLOW`, handle errors. Read-only.
///
/// # Safety
/// `line` NULL or a live handle; outputs NULL or valid for one double.
#[no_mangle]
pub unsafe extern "C" fn pf_line_slope_intercept(
    line: *const pf_line,
    slope_out: *mut f64,
    intercept_out: *mut f64,
) -> pf_status {
    if slope_out.is_null() || intercept_out.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    // SAFETY: forwarded contract; outputs checked non-NULL.
    unsafe {
        with_ref(line, |a| match on_ref!(a, a => a.slope_intercept()) {
            Ok((b, c)) => {
                write_out(slope_out, b);
                write_out(intercept_out, c);
                PF_OK
            }
            Err(e) => from_code(e.code()),
        })
    }
}

/// Fits the straight line and stores its estimates and inference in `*out`.
///
/// `options` is 0 (line with intercept, relative weights) or a bitwise OR
/// of `PF_FIT_THROUGH_ORIGIN` and `PF_FIT_KNOWN_VARIANCE`.
///
/// Errors: `PF_ERR_NULL_POINTER`, `PF_ERR_BAD_ARGUMENT` (unknown option
/// bits), `PF_ERR_TOO_FEW_POINTS` (below 3 pairs, 2 through the origin),
/// `PF_ERR_NO_SPREAD`, `PF_ERR_OVERFLOW`, handle errors. Read-only.
///
/// # Safety
/// `line` NULL or a live handle; `out` NULL or valid for one
/// `pf_fitted_line`.
#[no_mangle]
pub unsafe extern "C" fn pf_line_fit(
    line: *const pf_line,
    options: u32,
    out: *mut pf_fitted_line,
) -> pf_status {
    if out.is_null() {
        return PF_ERR_NULL_POINTER;
    }
    let Some(opts) = options_from_bits(options) else {
        return PF_ERR_BAD_ARGUMENT;
    };
    // SAFETY: forwarded contract; `out` checked non-NULL.
    unsafe {
        with_ref(line, |a| match on_ref!(a, a => a.fit_with(&opts)) {
            Ok(f) => {
                write_out(out, pf_fitted_line::from_fit(&f));
                PF_OK
            }
            Err(e) => from_code(e.code()),
        })
    }
}
