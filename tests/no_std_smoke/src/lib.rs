//! Proves that `plumbfit` with default features off builds without `std`:
//! this crate defines its own panic handler, which would collide with the
//! one in `std` if anything in the graph pulled `std` in.
#![no_std]

use core::alloc::{GlobalAlloc, Layout};
use plumbfit::LeanMoments;

/// Fits a line over `n` readings from caller memory; returns the slope or
/// NaN on any error. Never allocates.
#[no_mangle]
pub extern "C" fn smoke_slope(xs: *const f64, ys: *const f64, n: usize) -> f64 {
    if xs.is_null() || ys.is_null() {
        return f64::NAN;
    }
    // SAFETY: the caller passes two arrays of `n` readable f64 values.
    let (xs, ys) = unsafe { (core::slice::from_raw_parts(xs, n), core::slice::from_raw_parts(ys, n)) };
    let mut acc = LeanMoments::new();
    match acc.extend(xs, ys).ok().and_then(|_| acc.slope_intercept().ok()) {
        Some((b, _)) => b,
        None => f64::NAN,
    }
}

/// An allocator that always refuses: the line accumulator needs no heap.
struct NoHeap;

// SAFETY: returning null is the documented way to report allocation failure;
// dealloc is never reached because nothing is ever allocated.
unsafe impl GlobalAlloc for NoHeap {
    unsafe fn alloc(&self, _layout: Layout) -> *mut u8 {
        core::ptr::null_mut()
    }
    unsafe fn dealloc(&self, _ptr: *mut u8, _layout: Layout) {}
}

#[global_allocator]
static ALLOC: NoHeap = NoHeap;

#[panic_handler]
fn panic(_: &core::panic::PanicInfo) -> ! {
    loop {}
}
