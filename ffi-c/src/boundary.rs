//! The boundary between C and Rust: handle heads, pointer checks and the
//! panic guard every entry point runs its body in.

use crate::status::*;
use std::panic::{catch_unwind, AssertUnwindSafe};

/// The handle lives in caller storage (never freed by the library).
pub(crate) const FLAG_IN_PLACE: u32 = 1;
/// A panic was caught while the handle was being mutated.
pub(crate) const FLAG_POISONED: u32 = 2;

/// First field of every handle object, so a handle pointer can be checked
/// before its kind is known.
#[repr(C)]
#[derive(Clone, Copy, Debug)]
pub(crate) struct Head {
    /// Object kind and liveness marker (one value per object type).
    pub tag: u32,
    /// Variant within the kind (e.g. the tier of a line accumulator).
    pub variant: u32,
    /// `FLAG_*` bits.
    pub flags: u32,
    pub reserved: u32,
}

/// Runs `f`, turning a panic into `PF_ERR_PANIC`.
pub(crate) fn guard(f: impl FnOnce() -> pf_status) -> pf_status {
    catch_unwind(AssertUnwindSafe(f)).unwrap_or(PF_ERR_PANIC)
}

/// Checks a handle pointer: non-NULL, aligned for `O`, tag `tag`, not
/// poisoned. Returns the head (copied).
///
/// # Safety
/// A non-NULL, aligned `p` must point to readable memory of at least
/// `size_of::<Head>()` bytes (the caller's contract for handle arguments).
pub(crate) unsafe fn check_head<O>(p: *const O, tag: u32) -> Result<Head, pf_status> {
    if p.is_null() {
        return Err(PF_ERR_NULL_POINTER);
    }
    if !(p as usize).is_multiple_of(core::mem::align_of::<O>()) {
        return Err(PF_ERR_BAD_HANDLE);
    }
    // SAFETY: non-NULL and aligned (checked above; O starts with a Head and
    // has at least its alignment); readable by the caller's contract.
    let head = unsafe { core::ptr::read(p.cast::<Head>()) };
    if head.tag != tag {
        return Err(PF_ERR_BAD_HANDLE);
    }
    if head.flags & FLAG_POISONED != 0 {
        return Err(PF_ERR_POISONED);
    }
    Ok(head)
}

/// Runs a mutating body on a checked handle; a panic poisons the handle.
///
/// # Safety
/// As [`check_head`]; in addition `p`, when its tag matches, must be a live
/// object created by this library and not accessed by anyone else during
/// the call (the documented exclusive-access rule for mutating calls).
pub(crate) unsafe fn guard_mut<O>(
    p: *mut O,
    tag: u32,
    f: impl FnOnce(Head, *mut O) -> pf_status,
) -> pf_status {
    // SAFETY: forwarded contract of this function.
    let head = match unsafe { check_head(p.cast_const(), tag) } {
        Ok(h) => h,
        Err(s) => return s,
    };
    match catch_unwind(AssertUnwindSafe(|| f(head, p))) {
        Ok(s) => s,
        Err(_) => {
            // SAFETY: `p` was checked above and the body's borrows ended
            // with the unwind; only the flags word is written.
            unsafe { (*p.cast::<Head>()).flags |= FLAG_POISONED };
            PF_ERR_PANIC
        }
    }
}

/// Runs a read-only body on a checked handle. A panic returns
/// `PF_ERR_PANIC` but does not poison: the body cannot have changed the
/// state, and writing the flag would race with other readers.
///
/// # Safety
/// As [`check_head`]; `p`, when its tag matches, must be a live object
/// created by this library that nobody mutates during the call.
pub(crate) unsafe fn guard_ref<O>(
    p: *const O,
    tag: u32,
    f: impl FnOnce(Head, *const O) -> pf_status,
) -> pf_status {
    // SAFETY: forwarded contract of this function.
    let head = match unsafe { check_head(p, tag) } {
        Ok(h) => h,
        Err(s) => return s,
    };
    guard(|| f(head, p))
}

/// Writes `v` to the out-pointer `out` (already checked non-NULL).
///
/// # Safety
/// `out` must be valid for writing a `T` (it may be unaligned).
pub(crate) unsafe fn write_out<T>(out: *mut T, v: T) {
    // SAFETY: forwarded contract; unaligned write accepts any address.
    unsafe { core::ptr::write_unaligned(out, v) }
}

/// Borrows a C array of doubles as a slice after checking NULL, alignment
/// and length (an empty array still needs a non-NULL pointer).
///
/// # Safety
/// A non-NULL `p` must point to `len` readable doubles that stay unchanged
/// for the returned lifetime.
pub(crate) unsafe fn slice_in<'a>(p: *const f64, len: usize) -> Result<&'a [f64], pf_status> {
    if p.is_null() {
        return Err(PF_ERR_NULL_POINTER);
    }
    if !(p as usize).is_multiple_of(core::mem::align_of::<f64>()) {
        return Err(PF_ERR_MISALIGNED);
    }
    if len > isize::MAX as usize / core::mem::size_of::<f64>() {
        return Err(PF_ERR_BAD_ARGUMENT);
    }
    // SAFETY: non-NULL, aligned, length addressable (checked above);
    // readable for `len` elements by the caller's contract.
    Ok(unsafe { core::slice::from_raw_parts(p, len) })
}

/// Borrows a C byte array after checking NULL and length (an empty array
/// still needs a non-NULL pointer).
///
/// # Safety
/// A non-NULL `p` must point to `len` readable bytes that stay unchanged
/// for the returned lifetime.
pub(crate) unsafe fn slice_in_bytes<'a>(p: *const u8, len: usize) -> Result<&'a [u8], pf_status> {
    if p.is_null() {
        return Err(PF_ERR_NULL_POINTER);
    }
    if len > isize::MAX as usize {
        return Err(PF_ERR_BAD_ARGUMENT);
    }
    // SAFETY: non-NULL, length addressable (checked above); readable by
    // the caller's contract; bytes need no alignment.
    Ok(unsafe { core::slice::from_raw_parts(p, len) })
}

#[cfg(test)]
#[allow(clippy::unwrap_used, clippy::panic)]
mod tests {
    use super::*;

    #[repr(C)]
    struct Obj {
        head: Head,
        value: u64,
    }

    fn obj(tag: u32) -> Obj {
        Obj {
            head: Head {
                tag,
                variant: 0,
                flags: 0,
                reserved: 0,
            },
            value: 0,
        }
    }

    #[test]
    fn a_panic_in_a_mutating_call_returns_900_then_poisons() {
        let mut o = obj(7);
        let p: *mut Obj = &mut o;
        // SAFETY: `p` points to a live local object.
        let s = unsafe { guard_mut(p, 7, |_, _| panic!("deliberate test panic")) };
        assert_eq!(s, PF_ERR_PANIC);
        // SAFETY: as above.
        let s = unsafe { guard_mut(p, 7, |_, _| PF_OK) };
        assert_eq!(s, PF_ERR_POISONED);
        // SAFETY: as above.
        let s = unsafe { guard_ref(p.cast_const(), 7, |_, _| PF_OK) };
        assert_eq!(s, PF_ERR_POISONED);
    }

    #[test]
    fn a_panic_in_a_read_only_call_returns_900_without_poisoning() {
        let o = obj(7);
        let p: *const Obj = &o;
        // SAFETY: `p` points to a live local object.
        let s = unsafe { guard_ref(p, 7, |_, _| panic!("deliberate test panic")) };
        assert_eq!(s, PF_ERR_PANIC);
        // SAFETY: as above.
        assert_eq!(unsafe { guard_ref(p, 7, |_, _| PF_OK) }, PF_OK);
    }

    #[test]
    fn null_wrong_tag_and_misaligned_handles_are_refused() {
        let o = obj(7);
        // SAFETY: NULL is checked before any read.
        assert_eq!(
            unsafe { check_head(core::ptr::null::<Obj>(), 7) }.err(),
            Some(PF_ERR_NULL_POINTER)
        );
        // SAFETY: `&o` is a live object.
        assert_eq!(
            unsafe { check_head(&o as *const Obj, 8) }.err(),
            Some(PF_ERR_BAD_HANDLE)
        );
        let bad = (&o as *const Obj as usize + 1) as *const Obj;
        // SAFETY: misalignment is checked before any read.
        assert_eq!(unsafe { check_head(bad, 7) }.err(), Some(PF_ERR_BAD_HANDLE));
    }
}
