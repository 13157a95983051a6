//! The AVX-512 (F) kernels: 512-bit registers and lane masks, same lanes
//! and same operations as the AVX kernels (see the lane contract in the
//! crate docs), so the same bits.
//!
//! * `shifted`: one 512-bit register per sum holds its eight lanes.
//! * `full`: every sum has four lanes, so one register holds two sums,
//!   `[sum A lanes 0–3 | sum B lanes 0–3]`, fed by `[term A | term B]` of
//!   the same four pairs: half the vector adds of the AVX kernel. The
//!   products are formed from packed operands (`[u | t]·[u | t] =
//!   [u² | t²]`, …); each lane still computes exactly the product the
//!   scalar mirror lists, up to the order of the two factors, which does not
//!   change a rounded product. The last, partial block is read with a
//!   masked load and its empty lanes become +0 (terms) or leave the
//!   extremes alone, as in the AVX kernel.

use super::{prefetch, shifted_tail, FullSums, ShiftedSums, AHEAD, LEAN_AHEAD};
use std::arch::x86_64::*;

/// Unaligned load of eight values starting at `s[i]`.
#[inline]
#[target_feature(enable = "avx512f")]
fn load(s: &[f64], i: usize) -> __m512d {
    let q = &s[i..i + 8];
    // SAFETY: `q` is eight readable f64 (the slice index above checked the
    // bounds); `loadu` has no alignment requirement.
    unsafe { _mm512_loadu_pd(q.as_ptr()) }
}

/// The values `s[i..]` (at most eight), the lanes past the end of `s` +0,
/// and the mask of the lanes that hold a value.
#[inline]
#[target_feature(enable = "avx512f")]
fn load_part(s: &[f64], i: usize) -> (__m512d, __mmask8) {
    let q = &s[i.min(s.len())..];
    let m = if q.len() >= 8 {
        0xFF
    } else {
        ((1u32 << q.len()) - 1) as __mmask8
    };
    // SAFETY: the mask enables exactly the lanes `0..min(8, q.len())`, all
    // inside `q`; a masked load does not access disabled lanes (they are
    // neither read nor able to fault) and has no alignment requirement.
    (unsafe { _mm512_maskz_loadu_pd(m, q.as_ptr()) }, m)
}

/// `[a lanes 0–3 | b lanes 0–3]`.
#[inline]
#[target_feature(enable = "avx512f")]
fn lows(a: __m512d, b: __m512d) -> __m512d {
    _mm512_shuffle_f64x2::<0b01_00_01_00>(a, b)
}

/// `[a lanes 4–7 | b lanes 4–7]`.
#[inline]
#[target_feature(enable = "avx512f")]
fn highs(a: __m512d, b: __m512d) -> __m512d {
    _mm512_shuffle_f64x2::<0b11_10_11_10>(a, b)
}

/// `(l0+l2) + (l1+l3)` of a four-lane sum (the AVX kernels' reduction).
#[inline]
#[target_feature(enable = "avx512f")]
fn reduce4(a: __m256d) -> f64 {
    let t = _mm_add_pd(_mm256_castpd256_pd128(a), _mm256_extractf128_pd::<1>(a));
    _mm_cvtsd_f64(t) + _mm_cvtsd_f64(_mm_unpackhi_pd(t, t))
}

/// The two four-lane sums `[A | B]` of one register, reduced.
#[inline]
#[target_feature(enable = "avx512f")]
fn reduce_pair(a: __m512d) -> [f64; 2] {
    [
        reduce4(_mm512_castpd512_pd256(a)),
        reduce4(_mm512_extractf64x4_pd::<1>(a)),
    ]
}

/// `((l0+l4)+(l2+l6)) + ((l1+l5)+(l3+l7))` of an eight-lane sum.
#[inline]
#[target_feature(enable = "avx512f")]
fn reduce8(a: __m512d) -> f64 {
    reduce4(_mm256_add_pd(
        _mm512_castpd512_pd256(a),
        _mm512_extractf64x4_pd::<1>(a),
    ))
}

/// Smallest and largest of the two four-lane extremes `[A | B]` each,
/// in the AVX kernel's order (`hmin`, `hmax`).
#[inline]
#[target_feature(enable = "avx512f")]
fn extremes(lo: __m512d, hi: __m512d) -> [f64; 4] {
    let min4 = |a: __m256d| {
        let t = _mm_min_pd(_mm256_castpd256_pd128(a), _mm256_extractf128_pd::<1>(a));
        _mm_cvtsd_f64(t).min(_mm_cvtsd_f64(_mm_unpackhi_pd(t, t)))
    };
    let max4 = |a: __m256d| {
        let t = _mm_max_pd(_mm256_castpd256_pd128(a), _mm256_extractf128_pd::<1>(a));
        _mm_cvtsd_f64(t).max(_mm_cvtsd_f64(_mm_unpackhi_pd(t, t)))
    };
    [
        min4(_mm512_castpd512_pd256(lo)),
        max4(_mm512_castpd512_pd256(hi)),
        min4(_mm512_extractf64x4_pd::<1>(lo)),
        max4(_mm512_extractf64x4_pd::<1>(hi)),
    ]
}

#[target_feature(enable = "avx512f")]
pub(super) fn shifted(xs: &[f64], ys: &[f64], xc: f64, yc: f64, b0: f64) -> ShiftedSums {
    let n = xs.len().min(ys.len());
    let body = n / 8 * 8;
    let (vxc, vyc, vb) = (_mm512_set1_pd(xc), _mm512_set1_pd(yc), _mm512_set1_pd(b0));
    let mut s = [_mm512_setzero_pd(); 5];
    let mut i = 0;
    while i < body {
        prefetch(xs, i + LEAN_AHEAD);
        prefetch(ys, i + LEAN_AHEAD);
        let (x, y) = (load(xs, i), load(ys, i));
        let dx = _mm512_sub_pd(x, vxc);
        let v = _mm512_sub_pd(_mm512_sub_pd(y, vyc), _mm512_mul_pd(vb, dx));
        s[0] = _mm512_add_pd(s[0], dx);
        s[1] = _mm512_add_pd(s[1], v);
        s[2] = _mm512_add_pd(s[2], _mm512_mul_pd(dx, dx));
        s[3] = _mm512_add_pd(s[3], _mm512_mul_pd(dx, v));
        s[4] = _mm512_add_pd(s[4], _mm512_mul_pd(v, v));
        i += 8;
    }
    let t = shifted_tail(&xs[body..n], &ys[body..n], xc, yc, b0);
    ShiftedSums {
        sx: reduce8(s[0]) + t[0],
        sv: reduce8(s[1]) + t[1],
        sxx: reduce8(s[2]) + t[2],
        sxv: reduce8(s[3]) + t[3],
        svv: reduce8(s[4]) + t[4],
    }
}

/// Pass-1 sums, in pairs of four-lane sums: `s = [Σdx | Σv]`,
/// `lag = [ΣΔx² | ΣΔv²]`, `cross = ΣΔx·Δv` (four lanes), the extremes
/// `lo = [min x | min y]`, `hi = [max x | max y]`.
struct First {
    s: __m512d,
    lag: __m512d,
    cross: __m256d,
    lo: __m512d,
    hi: __m512d,
}

/// Adds the four-lane halves of two blocks (lanes 0–3, then 4–7) of the
/// terms `a` and `b` to the pair of sums `acc = [A | B]`.
#[inline]
#[target_feature(enable = "avx512f")]
fn add_halves(acc: __m512d, a: __m512d, b: __m512d) -> __m512d {
    _mm512_add_pd(_mm512_add_pd(acc, lows(a, b)), highs(a, b))
}

/// Pass 1 over eight pairs `x`, `y` (two blocks of four) with their
/// predecessors `xp`, `yp`, `k = [xc, yc, b0]`; only the lanes in `m`
/// hold pairs.
#[inline]
#[target_feature(enable = "avx512f")]
fn first_block(a: &mut First, k: [__m512d; 3], [x, y, xp, yp]: [__m512d; 4], m: __mmask8) {
    let [vxc, vyc, vb] = k;
    let dx = _mm512_maskz_sub_pd(m, x, vxc);
    let v = _mm512_maskz_sub_pd(m, _mm512_sub_pd(y, vyc), _mm512_mul_pd(vb, dx));
    a.s = add_halves(a.s, dx, v);
    let ddx = _mm512_maskz_sub_pd(m, x, xp);
    let ddv = _mm512_maskz_sub_pd(m, _mm512_sub_pd(y, yp), _mm512_mul_pd(vb, ddx));
    a.lag = add_halves(a.lag, _mm512_mul_pd(ddx, ddx), _mm512_mul_pd(ddv, ddv));
    let c = _mm512_mul_pd(ddx, ddv);
    a.cross = _mm256_add_pd(a.cross, _mm512_castpd512_pd256(c));
    a.cross = _mm256_add_pd(a.cross, _mm512_extractf64x4_pd::<1>(c));
    // The extremes keep the AVX kernel's four lanes too: block 1 (lanes
    // 0–3 of `m`), then block 2 (lanes 4–7), each as `[x | y]` of its four
    // pairs; a lane without a pair leaves them as they are.
    let (m1, m2) = (m & 0x0F, m >> 4);
    for (xy, q) in [(lows(x, y), m1), (highs(x, y), m2)] {
        let mm = q | (q << 4);
        a.lo = _mm512_mask_min_pd(a.lo, mm, a.lo, xy);
        a.hi = _mm512_mask_max_pd(a.hi, mm, a.hi, xy);
    }
}

/// Pass 1, streaming from memory, eight pairs (two blocks) at a time:
/// `[Σdx, Σv, min x, max x, min y, max y]` and the lag sums `[ΣΔx²,
/// ΣΔx·Δv, ΣΔv²]`.
#[inline(never)]
#[target_feature(enable = "avx512f")]
fn first_pass(xs: &[f64], ys: &[f64], xc: f64, yc: f64, b0: f64) -> ([f64; 6], [f64; 3]) {
    let n = xs.len();
    let body = n / 8 * 8;
    let k = [_mm512_set1_pd(xc), _mm512_set1_pd(yc), _mm512_set1_pd(b0)];
    let z = _mm512_setzero_pd();
    let mut a = First {
        s: z,
        lag: z,
        cross: _mm256_setzero_pd(),
        lo: _mm512_set1_pd(f64::INFINITY),
        hi: _mm512_set1_pd(f64::NEG_INFINITY),
    };
    // The first eight pairs' predecessors: pair 0 is given itself, which
    // makes its lag terms exactly +0, as if the term were skipped.
    let head = _mm512_setr_epi64(0, 0, 1, 2, 3, 4, 5, 6);
    let ((x, m), (y, _)) = (load_part(xs, 0), load_part(ys, 0));
    let (xp, yp) = (
        _mm512_permutexvar_pd(head, x),
        _mm512_permutexvar_pd(head, y),
    );
    first_block(&mut a, k, [x, y, xp, yp], m);
    let mut i = 8;
    while i < body {
        prefetch(xs, i + AHEAD);
        prefetch(ys, i + AHEAD);
        let q = [load(xs, i), load(ys, i), load(xs, i - 1), load(ys, i - 1)];
        first_block(&mut a, k, q, 0xFF);
        i += 8;
    }
    if i < n {
        let ((x, m), (y, _)) = (load_part(xs, i), load_part(ys, i));
        let (xp, yp) = (
            load_part(&xs[..n - 1], i - 1).0,
            load_part(&ys[..n - 1], i - 1).0,
        );
        first_block(&mut a, k, [x, y, xp, yp], m);
    }
    let [sx, sv] = reduce_pair(a.s);
    let [l0, l2] = reduce_pair(a.lag);
    let [xmin, xmax, ymin, ymax] = extremes(a.lo, a.hi);
    ([sx, sv, xmin, xmax, ymin, ymax], [l0, reduce4(a.cross), l2])
}

/// Pass-2 sums of one block of four pairs, from `ut = [u | t]` and
/// `tu = [t | u]`, into seven pairs of sums: `[cu | ct]`, `[m20 | m02]`,
/// `[m30 | m03]`, `[m21 | m12]`, `[m40 | m04]`, `[m31 | m13]`,
/// `[m11 | m22]`.
#[inline]
#[target_feature(enable = "avx512f")]
fn centred_block(a: &mut [__m512d; 7], ut: __m512d, tu: __m512d) {
    let sq = _mm512_mul_pd(ut, ut); // [u² | t²]
    let w = _mm512_mul_pd(ut, tu); // [ut | tu], tu = ut exactly
                                   // [u²·t² | t²·u²]
    let cross = _mm512_mul_pd(sq, _mm512_shuffle_f64x2::<0b01_00_11_10>(sq, sq));
    a[0] = _mm512_add_pd(a[0], ut);
    a[1] = _mm512_add_pd(a[1], sq);
    a[2] = _mm512_add_pd(a[2], _mm512_mul_pd(sq, ut)); // [u²·u | t²·t]
    a[3] = _mm512_add_pd(a[3], _mm512_mul_pd(sq, tu)); // [u²·t | t²·u]
    a[4] = _mm512_add_pd(a[4], _mm512_mul_pd(sq, sq)); // [u²·u² | t²·t²]
    a[5] = _mm512_add_pd(a[5], _mm512_mul_pd(sq, w)); // [u²·ut | t²·tu]
    a[6] = _mm512_add_pd(a[6], _mm512_mask_blend_pd(0xF0, w, cross)); // [ut | u²t²]
}

/// `u = dx − mx`, `t = v − mv` of eight pairs, `c = [xc, yc, b0, mx, mv]`;
/// lanes outside `m` are +0.
#[inline]
#[target_feature(enable = "avx512f")]
fn centre(c: [__m512d; 5], x: __m512d, y: __m512d, m: __mmask8) -> (__m512d, __m512d) {
    let [vxc, vyc, vb, vmx, vmv] = c;
    let dx = _mm512_sub_pd(x, vxc);
    let v = _mm512_sub_pd(_mm512_sub_pd(y, vyc), _mm512_mul_pd(vb, dx));
    (
        _mm512_maskz_sub_pd(m, dx, vmx),
        _mm512_maskz_sub_pd(m, v, vmv),
    )
}

/// Pass 2, orders 1–4 in one loop (32 registers hold the seven pairs of
/// sums and the operands), from cache, with `c = [xc, yc, b0, mx, mv]`:
/// `[cu, ct, m20, m02, m30, m03, m21, m12, m40, m04, m31, m13, m11, m22]`.
/// With `ahead`, asks for the values at the same place in the next `n`
/// values after each array.
#[inline(never)]
#[target_feature(enable = "avx512f")]
fn second_pass(xs: &[f64], ys: &[f64], c: [f64; 5], ahead: bool) -> [f64; 14] {
    let n = xs.len();
    let body = n / 8 * 8;
    let c = c.map(|v| _mm512_set1_pd(v));
    let mut a = [_mm512_setzero_pd(); 7];
    let mut i = 0;
    while i < body {
        if ahead {
            prefetch(xs, n + i);
            prefetch(ys, n + i);
        }
        let (u, t) = centre(c, load(xs, i), load(ys, i), 0xFF);
        centred_block(&mut a, lows(u, t), lows(t, u));
        centred_block(&mut a, highs(u, t), highs(t, u));
        i += 8;
    }
    if body < n {
        let ((x, m), (y, _)) = (load_part(xs, body), load_part(ys, body));
        let (u, t) = centre(c, x, y, m);
        centred_block(&mut a, lows(u, t), lows(t, u));
        centred_block(&mut a, highs(u, t), highs(t, u));
    }
    let mut out = [0.0f64; 14];
    for (o, v) in out.chunks_exact_mut(2).zip(a) {
        o.copy_from_slice(&reduce_pair(v));
    }
    out
}

#[target_feature(enable = "avx512f")]
pub(super) fn full(
    xs: &[f64],
    ys: &[f64],
    xc: f64,
    yc: f64,
    b0: f64,
    prefetch_next: bool,
) -> FullSums {
    let n = xs.len().min(ys.len());
    let (xs, ys) = (&xs[..n], &ys[..n]);
    if n == 0 {
        return FullSums::default();
    }
    let ([sx, sv, xmin, xmax, ymin, ymax], lag) = first_pass(xs, ys, xc, yc, b0);
    let nf = n as f64;
    let s = second_pass(xs, ys, [xc, yc, b0, sx / nf, sv / nf], prefetch_next);
    let [cu, ct, m20, m02, m30, m03, m21, m12, m40, m04, m31, m13, m11, m22] = s;
    let mut m = [[0.0f64; 5]; 5];
    m[2][0] = m20;
    m[1][1] = m11;
    m[0][2] = m02;
    m[3][0] = m30;
    m[2][1] = m21;
    m[1][2] = m12;
    m[0][3] = m03;
    m[4][0] = m40;
    m[3][1] = m31;
    m[2][2] = m22;
    m[1][3] = m13;
    m[0][4] = m04;
    FullSums {
        sx,
        sv,
        cu,
        ct,
        m,
        lag,
        xmin,
        xmax,
        ymin,
        ymax,
    }
}
