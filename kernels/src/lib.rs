//! Hand-written SIMD chunk kernels behind `plumbfit`'s `extend` and `push`:
//! the per-chunk sums of the pair-moment accumulator, on x86-64 AVX,
//! selected at run time.
//!
//! `plumbfit` itself forbids `unsafe`; the intrinsics live here. Every
//! kernel returns `None` when the CPU lacks the instructions (or the target
//! is not x86-64), and the caller then runs its scalar kernel.
//!
//! # Lane contract (what makes the scalar fallback bit-for-bit equal)
//! The kernels use no fused multiply-add and never reassociate: each sum is
//! kept in a fixed number of lanes and reduced in a fixed order, so a
//! scalar loop that keeps the same lanes gives the same bits.
//! * [`shifted_sums`]: 8 lanes. Pair `i < 8⌊n/8⌋` goes to lane `i mod 8`;
//!   the lanes reduce as `((l0+l4)+(l2+l6)) + ((l1+l5)+(l3+l7))`; the
//!   remaining pairs are added in order into a separate sum that starts at
//!   0 and is added last.
//! * [`centred_sums`] and [`lag_sums`]: 4 lanes, reduced as
//!   `(l0+l2) + (l1+l3)`, same tail rule (for the lag sums the terms are
//!   numbered from the second pair). Minima and maxima are exact in any
//!   order (inputs are finite; the caller rejects chunks with NaN).
//!
//! Why AVX (256-bit) and not AVX-512: the chunk sums are limited by memory
//! bandwidth once data leave the cache; at 4 lanes the arithmetic already
//! runs several times faster than the two arrays can be read, so wider
//! registers would not move the large-n figures, and a path that cannot be
//! run on the machines that test it would be unverified code. Plain AVX
//! (not AVX2/FMA) suffices because no FMA is used.

#![deny(missing_docs)]
#![allow(clippy::too_many_arguments)]

pub mod dispatch;

/// Sums of one chunk about a local shift `(xc, yc)` and slope `b0`, with
/// `dx = x − xc`, `v = (y − yc) − b0·dx`.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct ShiftedSums {
    /// Σdx.
    pub sx: f64,
    /// Σv.
    pub sv: f64,
    /// Σdx².
    pub sxx: f64,
    /// Σdx·v.
    pub sxv: f64,
    /// Σv².
    pub svv: f64,
}

/// Sums of one chunk about given means: `u = dx − mx`, `t = v − mv`.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct CentredSums {
    /// Σu (the rounding left in `mx`; Björck's correction term).
    pub cu: f64,
    /// Σt.
    pub ct: f64,
    /// `m[p][q] = Σ u^p t^q` for `2 <= p + q <= 4`; other entries 0.
    pub m: [[f64; 5]; 5],
    /// Smallest x.
    pub xmin: f64,
    /// Largest x.
    pub xmax: f64,
    /// Smallest y.
    pub ymin: f64,
    /// Largest y.
    pub ymax: f64,
}

/// Which SIMD path the kernels take on this CPU, or `None` for none (the
/// caller's scalar kernels run).
pub fn active() -> Option<&'static str> {
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx") {
            return Some("avx");
        }
    }
    None
}

/// [`ShiftedSums`] of `xs`, `ys` (their common length), or `None` when no
/// SIMD path is available.
#[inline]
pub fn shifted_sums(xs: &[f64], ys: &[f64], xc: f64, yc: f64, b0: f64) -> Option<ShiftedSums> {
    let n = xs.len().min(ys.len());
    let _ = (n, xc, yc, b0);
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx") {
            // SAFETY: AVX is present (checked just above).
            return Some(unsafe { avx::shifted(&xs[..n], &ys[..n], xc, yc, b0) });
        }
    }
    None
}

/// [`CentredSums`] of `xs`, `ys` about the means `(mx, mv)` of `dx`, `v`,
/// or `None` when no SIMD path is available.
#[inline]
pub fn centred_sums(
    xs: &[f64],
    ys: &[f64],
    xc: f64,
    yc: f64,
    b0: f64,
    mx: f64,
    mv: f64,
) -> Option<CentredSums> {
    let n = xs.len().min(ys.len());
    let _ = (n, xc, yc, b0, mx, mv);
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx") {
            // SAFETY: AVX is present (checked just above).
            return Some(unsafe { avx::centred(&xs[..n], &ys[..n], xc, yc, b0, mx, mv) });
        }
    }
    None
}

/// Lag-1 difference sums `[ΣΔx², ΣΔx·Δv, ΣΔv²]` over consecutive pairs,
/// `Δv = Δy − b0·Δx`, or `None` when no SIMD path is available.
#[inline]
pub fn lag_sums(xs: &[f64], ys: &[f64], b0: f64) -> Option<[f64; 3]> {
    let n = xs.len().min(ys.len());
    let _ = (n, b0);
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx") {
            // SAFETY: AVX is present (checked just above).
            return Some(unsafe { avx::lag(&xs[..n], &ys[..n], b0) });
        }
    }
    None
}

#[cfg(target_arch = "x86_64")]
mod avx {
    use super::{CentredSums, ShiftedSums};
    use std::arch::x86_64::*;

    /// `((l0+l4)+(l2+l6)) + ((l1+l5)+(l3+l7))` of lanes `a[0] ‖ a[1]`.
    #[inline]
    #[target_feature(enable = "avx")]
    fn reduce8(a: [__m256d; 2]) -> f64 {
        reduce4(_mm256_add_pd(a[0], a[1]))
    }

    /// `(l0+l2) + (l1+l3)`.
    #[inline]
    #[target_feature(enable = "avx")]
    fn reduce4(a: __m256d) -> f64 {
        let t = _mm_add_pd(_mm256_castpd256_pd128(a), _mm256_extractf128_pd(a, 1));
        _mm_cvtsd_f64(t) + _mm_cvtsd_f64(_mm_unpackhi_pd(t, t))
    }

    #[inline]
    #[target_feature(enable = "avx")]
    fn hmin(a: __m256d) -> f64 {
        let t = _mm_min_pd(_mm256_castpd256_pd128(a), _mm256_extractf128_pd(a, 1));
        _mm_cvtsd_f64(t).min(_mm_cvtsd_f64(_mm_unpackhi_pd(t, t)))
    }

    #[inline]
    #[target_feature(enable = "avx")]
    fn hmax(a: __m256d) -> f64 {
        let t = _mm_max_pd(_mm256_castpd256_pd128(a), _mm256_extractf128_pd(a, 1));
        _mm_cvtsd_f64(t).max(_mm_cvtsd_f64(_mm_unpackhi_pd(t, t)))
    }

    /// Unaligned load of four values starting at `s[i]`.
    #[inline]
    #[target_feature(enable = "avx")]
    fn load(s: &[f64], i: usize) -> __m256d {
        let q = &s[i..i + 4];
        // SAFETY: `q` is four readable f64 (the slice index above checked
        // the bounds); `loadu` has no alignment requirement.
        unsafe { _mm256_loadu_pd(q.as_ptr()) }
    }

    /// How far ahead (in values) the streaming kernel asks for data: about
    /// 1 KiB per array, enough to cover memory latency at full bandwidth.
    /// The hardware prefetcher alone keeps fewer lines in flight when the
    /// loop has arithmetic between its loads.
    const AHEAD: usize = 128;

    /// Hint that `s[i..]` (or the memory just past `s`) will be read soon.
    #[inline]
    #[target_feature(enable = "avx")]
    fn prefetch(s: &[f64], i: usize) {
        // A prefetch never faults and does not change any result, so an
        // address past the end of `s` is harmless; `wrapping_add` keeps the
        // pointer arithmetic itself defined.
        _mm_prefetch::<_MM_HINT_T0>(s.as_ptr().wrapping_add(i) as *const i8);
    }

    #[target_feature(enable = "avx")]
    pub(super) fn shifted(xs: &[f64], ys: &[f64], xc: f64, yc: f64, b0: f64) -> ShiftedSums {
        let n = xs.len();
        let body = n / 8 * 8;
        let (vxc, vyc, vb) = (_mm256_set1_pd(xc), _mm256_set1_pd(yc), _mm256_set1_pd(b0));
        let z = _mm256_setzero_pd();
        let (mut sx, mut sv, mut sxx, mut sxv, mut svv) = ([z; 2], [z; 2], [z; 2], [z; 2], [z; 2]);
        let mut i = 0;
        while i < body {
            prefetch(xs, i + AHEAD);
            prefetch(ys, i + AHEAD);
            for h in 0..2 {
                let x = load(xs, i + 4 * h);
                let y = load(ys, i + 4 * h);
                let dx = _mm256_sub_pd(x, vxc);
                let v = _mm256_sub_pd(_mm256_sub_pd(y, vyc), _mm256_mul_pd(vb, dx));
                sx[h] = _mm256_add_pd(sx[h], dx);
                sv[h] = _mm256_add_pd(sv[h], v);
                sxx[h] = _mm256_add_pd(sxx[h], _mm256_mul_pd(dx, dx));
                sxv[h] = _mm256_add_pd(sxv[h], _mm256_mul_pd(dx, v));
                svv[h] = _mm256_add_pd(svv[h], _mm256_mul_pd(v, v));
            }
            i += 8;
        }
        let mut t = [0.0f64; 5];
        for (x, y) in xs[body..].iter().zip(&ys[body..]) {
            let dx = x - xc;
            let v = (y - yc) - b0 * dx;
            t[0] += dx;
            t[1] += v;
            t[2] += dx * dx;
            t[3] += dx * v;
            t[4] += v * v;
        }
        ShiftedSums {
            sx: reduce8(sx) + t[0],
            sv: reduce8(sv) + t[1],
            sxx: reduce8(sxx) + t[2],
            sxv: reduce8(sxv) + t[3],
            svv: reduce8(svv) + t[4],
        }
    }

    #[target_feature(enable = "avx")]
    pub(super) fn centred(
        xs: &[f64],
        ys: &[f64],
        xc: f64,
        yc: f64,
        b0: f64,
        mx: f64,
        mv: f64,
    ) -> CentredSums {
        let n = xs.len();
        let body = n / 4 * 4;
        let (vxc, vyc, vb) = (_mm256_set1_pd(xc), _mm256_set1_pd(yc), _mm256_set1_pd(b0));
        let (vmx, vmv) = (_mm256_set1_pd(mx), _mm256_set1_pd(mv));
        // a: [cu, ct, m20, m11, m02, m30, m21, m12, m03, m40, m31, m22, m13, m04]
        let mut a = [_mm256_setzero_pd(); 14];
        let mut xmin = _mm256_set1_pd(f64::INFINITY);
        let mut ymin = xmin;
        let mut xmax = _mm256_set1_pd(f64::NEG_INFINITY);
        let mut ymax = xmax;
        let mut i = 0;
        while i < body {
            let x = load(xs, i);
            let y = load(ys, i);
            let dx = _mm256_sub_pd(x, vxc);
            let v = _mm256_sub_pd(_mm256_sub_pd(y, vyc), _mm256_mul_pd(vb, dx));
            let u = _mm256_sub_pd(dx, vmx);
            let t = _mm256_sub_pd(v, vmv);
            let u2 = _mm256_mul_pd(u, u);
            let t2 = _mm256_mul_pd(t, t);
            let u3 = _mm256_mul_pd(u2, u);
            let ut2 = _mm256_mul_pd(u, t2);
            let terms = [
                u,
                t,
                u2,
                _mm256_mul_pd(u, t),
                t2,
                u3,
                _mm256_mul_pd(u2, t),
                ut2,
                _mm256_mul_pd(t2, t),
                _mm256_mul_pd(u2, u2),
                _mm256_mul_pd(u3, t),
                _mm256_mul_pd(u2, t2),
                _mm256_mul_pd(ut2, t),
                _mm256_mul_pd(t2, t2),
            ];
            for k in 0..14 {
                a[k] = _mm256_add_pd(a[k], terms[k]);
            }
            xmin = _mm256_min_pd(xmin, x);
            xmax = _mm256_max_pd(xmax, x);
            ymin = _mm256_min_pd(ymin, y);
            ymax = _mm256_max_pd(ymax, y);
            i += 4;
        }
        let mut s = [0.0f64; 14];
        for k in 0..14 {
            s[k] = reduce4(a[k]);
        }
        let mut tail = [0.0f64; 14];
        let (mut x_lo, mut x_hi, mut y_lo, mut y_hi) =
            (hmin(xmin), hmax(xmax), hmin(ymin), hmax(ymax));
        for (&x, &y) in xs[body..].iter().zip(&ys[body..]) {
            let dx = x - xc;
            let v = (y - yc) - b0 * dx;
            let (u, t) = (dx - mx, v - mv);
            let (u2, t2) = (u * u, t * t);
            let (u3, ut2) = (u2 * u, u * t2);
            let terms = [
                u,
                t,
                u2,
                u * t,
                t2,
                u3,
                u2 * t,
                ut2,
                t2 * t,
                u2 * u2,
                u3 * t,
                u2 * t2,
                ut2 * t,
                t2 * t2,
            ];
            for k in 0..14 {
                tail[k] += terms[k];
            }
            x_lo = x_lo.min(x);
            x_hi = x_hi.max(x);
            y_lo = y_lo.min(y);
            y_hi = y_hi.max(y);
        }
        for k in 0..14 {
            s[k] += tail[k];
        }
        let mut m = [[0.0f64; 5]; 5];
        m[2][0] = s[2];
        m[1][1] = s[3];
        m[0][2] = s[4];
        m[3][0] = s[5];
        m[2][1] = s[6];
        m[1][2] = s[7];
        m[0][3] = s[8];
        m[4][0] = s[9];
        m[3][1] = s[10];
        m[2][2] = s[11];
        m[1][3] = s[12];
        m[0][4] = s[13];
        CentredSums {
            cu: s[0],
            ct: s[1],
            m,
            xmin: x_lo,
            xmax: x_hi,
            ymin: y_lo,
            ymax: y_hi,
        }
    }

    #[target_feature(enable = "avx")]
    pub(super) fn lag(xs: &[f64], ys: &[f64], b0: f64) -> [f64; 3] {
        let n = xs.len();
        if n < 2 {
            return [0.0; 3];
        }
        let terms = n - 1;
        let body = terms / 4 * 4;
        let vb = _mm256_set1_pd(b0);
        let mut a = [_mm256_setzero_pd(); 3];
        let mut j = 0;
        while j < body {
            let i = j + 1;
            let ddx = _mm256_sub_pd(load(xs, i), load(xs, i - 1));
            let ddy = _mm256_sub_pd(load(ys, i), load(ys, i - 1));
            let ddv = _mm256_sub_pd(ddy, _mm256_mul_pd(vb, ddx));
            a[0] = _mm256_add_pd(a[0], _mm256_mul_pd(ddx, ddx));
            a[1] = _mm256_add_pd(a[1], _mm256_mul_pd(ddx, ddv));
            a[2] = _mm256_add_pd(a[2], _mm256_mul_pd(ddv, ddv));
            j += 4;
        }
        let mut t = [0.0f64; 3];
        for i in body + 1..n {
            let ddx = xs[i] - xs[i - 1];
            let ddv = (ys[i] - ys[i - 1]) - b0 * ddx;
            t[0] += ddx * ddx;
            t[1] += ddx * ddv;
            t[2] += ddv * ddv;
        }
        [
            reduce4(a[0]) + t[0],
            reduce4(a[1]) + t[1],
            reduce4(a[2]) + t[2],
        ]
    }
}
