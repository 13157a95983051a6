//! Run-time choice of an AVX2 + FMA or AVX-512 code path for code written
//! in safe Rust.
//!
//! [`with_avx2_fma`] calls a closure from inside a function compiled with
//! the `avx2` and `fma` target features, so the closure body and everything
//! it calls through `#[inline(always)]` is generated with those
//! instructions (wider vectors, and `f64::mul_add` as one instruction). A
//! portable build thereby gets the speed of an `x86-64-v3` build on CPUs
//! that have the features, without `unsafe` in the caller.
//! [`with_avx512`] does the same with AVX-512 (F, DQ, BW, VL) added, the
//! instructions of an `x86-64-v4` build. Neither changes results of code
//! that does not reassociate: the compiler only widens vectors, and
//! `mul_add` is the same fused operation on every path.

#[cfg(target_arch = "x86_64")]
mod imp {
    use std::sync::atomic::{AtomicU8, Ordering};

    const UNKNOWN: u8 = 0;
    const ABSENT: u8 = 1;
    const PRESENT: u8 = 2;

    /// Cached result of the CPU feature query (the query itself is cheap,
    /// but block entry points may be called for every few hundred rows).
    static STATE: AtomicU8 = AtomicU8::new(UNKNOWN);

    #[inline]
    pub fn available() -> bool {
        match STATE.load(Ordering::Relaxed) {
            PRESENT => true,
            ABSENT => false,
            _ => {
                let yes =
                    std::is_x86_feature_detected!("avx2") && std::is_x86_feature_detected!("fma");
                STATE.store(if yes { PRESENT } else { ABSENT }, Ordering::Relaxed);
                yes
            }
        }
    }

    /// Cached result of the AVX-512 (F, DQ, BW, VL, with AVX2 and FMA)
    /// query.
    static STATE_512: AtomicU8 = AtomicU8::new(UNKNOWN);

    #[inline]
    pub fn available_512() -> bool {
        match STATE_512.load(Ordering::Relaxed) {
            PRESENT => true,
            ABSENT => false,
            _ => {
                let yes = available()
                    && std::is_x86_feature_detected!("avx512f")
                    && std::is_x86_feature_detected!("avx512dq")
                    && std::is_x86_feature_detected!("avx512bw")
                    && std::is_x86_feature_detected!("avx512vl");
                STATE_512.store(if yes { PRESENT } else { ABSENT }, Ordering::Relaxed);
                yes
            }
        }
    }

    /// Calls `f` in a context compiled with AVX-512 F, DQ, BW, VL, AVX2 and
    /// FMA.
    ///
    /// # Safety
    /// The CPU must support all of these.
    #[target_feature(enable = "avx512f,avx512dq,avx512bw,avx512vl,avx2,fma")]
    #[inline(never)]
    pub unsafe fn run_512<R, F: FnOnce() -> R>(f: F) -> R {
        f()
    }

    /// Calls `f` in a context compiled with AVX2 and FMA.
    ///
    /// # Safety
    /// The CPU must support AVX2 and FMA.
    #[target_feature(enable = "avx2,fma")]
    #[inline(never)]
    pub unsafe fn run<R, F: FnOnce() -> R>(f: F) -> R {
        f()
    }
}

/// Runs `f` in a function compiled with AVX2 and FMA enabled when the CPU
/// has them (x86-64 only); `#[inline(always)]` code that `f` calls is
/// compiled with those features too.
///
/// Returns `None` without calling `f` when the features are not available
/// (or the target is not x86-64): the caller then runs its portable path.
/// Code inside `f` must not depend on which path runs for its meaning,
/// only for its speed.
pub fn with_avx2_fma<R>(f: impl FnOnce() -> R) -> Option<R> {
    #[cfg(target_arch = "x86_64")]
    {
        if imp::available() {
            // SAFETY: `available` has just confirmed (via
            // `is_x86_feature_detected!`) that this CPU executes AVX2 and
            // FMA instructions, the only precondition of `run`.
            return Some(unsafe { imp::run(f) });
        }
    }
    #[cfg(not(target_arch = "x86_64"))]
    let _ = f;
    None
}

/// Runs `f` in a function compiled with AVX-512 (F, DQ, BW, VL), AVX2 and
/// FMA enabled when the CPU has them and the chunk kernels' run-time
/// choice ([`crate::selected`], capped by [`crate::limit_kernels`] or
/// [`crate::KERNELS_ENV`]) is [`crate::KernelSet::Avx512`]; x86-64 only.
///
/// Returns `None` without calling `f` otherwise: the caller then tries
/// [`with_avx2_fma`] or its portable path. As there, code inside `f` must
/// not depend on which path runs for its meaning, only for its speed.
pub fn with_avx512<R>(f: impl FnOnce() -> R) -> Option<R> {
    #[cfg(target_arch = "x86_64")]
    {
        if imp::available_512() && crate::selected() == crate::KernelSet::Avx512 {
            // SAFETY: `available_512` has just confirmed (via
            // `is_x86_feature_detected!`) that this CPU executes AVX-512 F,
            // DQ, BW, VL, AVX2 and FMA instructions, the only precondition
            // of `run_512`.
            return Some(unsafe { imp::run_512(f) });
        }
    }
    #[cfg(not(target_arch = "x86_64"))]
    let _ = f;
    None
}

/// True when [`with_avx2_fma`] would run its closure on this CPU.
pub fn avx2_fma_available() -> bool {
    #[cfg(target_arch = "x86_64")]
    {
        imp::available()
    }
    #[cfg(not(target_arch = "x86_64"))]
    {
        false
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn avx512_path_runs_only_when_supported() {
        let mut calls = 0;
        let out = with_avx512(|| {
            calls += 1;
            // The same exact FMA residual as below, on the wider path.
            let a = 1.0 + f64::powi(2.0, -30);
            let p = a * a;
            a.mul_add(a, -p)
        });
        // (Whether the cap allowed the path is not checked here: another
        // test in this crate changes the cap meanwhile.)
        match out {
            Some(e) => {
                assert!(crate::KernelSet::Avx512.supported() && avx2_fma_available());
                assert_eq!(calls, 1);
                assert_eq!(e, f64::powi(2.0, -60));
            }
            None => assert_eq!(calls, 0),
        }
    }

    #[test]
    fn runs_closure_exactly_when_available() {
        let mut calls = 0;
        let out = with_avx2_fma(|| {
            calls += 1;
            // Exact product error by FMA; compared below with the exact
            // value worked out by hand: (1 + 2^-30)^2 = 1 + 2^-29 + 2^-60,
            // whose double rounding drops 2^-60.
            let a = 1.0 + f64::powi(2.0, -30);
            let p = a * a;
            a.mul_add(a, -p)
        });
        match out {
            Some(e) => {
                assert_eq!(calls, 1);
                assert_eq!(e, f64::powi(2.0, -60));
                assert!(avx2_fma_available());
            }
            None => {
                assert_eq!(calls, 0);
                assert!(!avx2_fma_available());
            }
        }
    }
}
