//! Hand-written SIMD chunk kernels behind `plumbfit`'s `extend` and `push`:
//! the per-chunk sums of the pair-moment accumulator, on x86-64 AVX-512 and
//! AVX, selected at run time.
//!
//! `plumbfit` itself forbids `unsafe`; the intrinsics live here. The best
//! [`KernelSet`] the CPU supports is chosen once (AVX-512 F, then AVX, then
//! none) and cached; [`limit_kernels`] and the environment variable
//! [`KERNELS_ENV`] cap that choice so tests and benchmarks can run each
//! path. Every kernel returns `None` when the selected set is
//! [`KernelSet::Scalar`] (no SIMD on this CPU, or the target is not
//! x86-64), and the caller then runs its scalar kernel.
//!
//! # Lane contract (what makes the scalar fallback bit-for-bit equal)
//! The kernels use no fused multiply-add and never reassociate: each sum is
//! kept in a fixed number of lanes and reduced in a fixed order, so a
//! scalar loop that keeps the same lanes gives the same bits, and so does
//! every kernel set (results never depend on which CPU ran them).
//! * [`shifted_sums`]: 8 lanes. Pair `i < 8⌊n/8⌋` goes to lane `i mod 8`;
//!   the lanes reduce as `((l0+l4)+(l2+l6)) + ((l1+l5)+(l3+l7))`; the
//!   remaining pairs are added in order into a separate sum that starts at
//!   0 and is added last. AVX keeps a sum in two 256-bit registers, AVX-512
//!   in one 512-bit register.
//! * [`full_sums`]: 4 lanes in every sum, reduced as `(l0+l2) + (l1+l3)`.
//!   Pair `i` goes to lane `i mod 4`, all the way to the end: the last,
//!   partial block is padded with zeros and its empty lanes masked to +0,
//!   which leaves a lane's sum unchanged (a sum that starts at +0 is never
//!   −0). The lag term of pair 0 (which has no predecessor) is +0 too. The
//!   products are formed as listed in the scalar mirror (`u²·ut` for
//!   `u³t`, and so on; only the order of a product's two factors may
//!   differ, which does not change its rounding). Minima and maxima are
//!   exact in any order (inputs are finite; the caller rejects chunks with
//!   NaN); both sets keep them in the same four lanes too. AVX keeps a sum
//!   in one 256-bit register; AVX-512 packs two sums of the same four pairs
//!   into one register, `[sum A lanes 0–3 | sum B lanes 0–3]`, fed by
//!   `[term A | term B]`, which halves the vector adds.
//!
//! # Why no FMA
//! A fused multiply-add rounds once where the scalar mirror rounds twice,
//! so an FMA kernel would need an FMA in the mirror too; `f64::mul_add` and
//! `libm::fma` are library calls of about 5 ns wherever the build does not
//! target a CPU with FMA (portable x86 builds without the `simd` feature,
//! CPUs without AVX2, no_std builds), which would make the scalar full tier
//! ten to twenty times slower there. On a shared AMD EPYC (Zen 3), a
//! trial with FMA in the full kernel's sums gained 5–25% on data in cache
//! and nothing clear at 10⁷ pairs.
//!
//! # Where AVX-512 helps
//! Measured on an Intel Xeon (KVM, 2 cores) with `speed-report`, which
//! times the AVX path beside the selected one (see `docs/speed.md`): the
//! lean extend gains 19–26% where its data is in cache (10³–10⁵ pairs)
//! and nothing at 10⁶–10⁷, where it reads as fast as the fastest plain
//! read loop; the full extend, bound by its vector operations, gains
//! 10–14% from 10⁴ pairs up. AVX-512 is selected for both everywhere it
//! exists: it is never measurably slower.
//!
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

/// Everything the full tier needs from one unweighted chunk, in two
/// passes over it (see [`full_sums`]).
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct FullSums {
    /// Σdx (pass 1, 4 lanes), with `dx = x − xc`.
    pub sx: f64,
    /// Σv (pass 1, 4 lanes), with `v = (y − yc) − b0·dx`.
    pub sv: f64,
    /// Σu, `u = dx − mx`, `mx = sx / n` (the rounding left in `mx`;
    /// Björck's correction term).
    pub cu: f64,
    /// Σt, `t = v − mv`, `mv = sv / n`.
    pub ct: f64,
    /// `m[p][q] = Σ u^p t^q` for `2 <= p + q <= 4`; other entries 0.
    pub m: [[f64; 5]; 5],
    /// Lag-1 sums `[ΣΔx², ΣΔx·Δv, ΣΔv²]` over consecutive pairs, with
    /// `Δx = x_i − x_(i−1)`, `Δv = (y_i − y_(i−1)) − b0·Δx`.
    pub lag: [f64; 3],
    /// Smallest x.
    pub xmin: f64,
    /// Largest x.
    pub xmax: f64,
    /// Smallest y.
    pub ymin: f64,
    /// Largest y.
    pub ymax: f64,
}

/// A set of chunk kernels: which instructions [`shifted_sums`] and
/// [`full_sums`] use. All sets give the same bits (the lane contract); they
/// differ only in speed.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum KernelSet {
    /// No SIMD path: the kernels return `None` and the caller runs its
    /// scalar mirror.
    Scalar,
    /// 256-bit AVX (no FMA).
    Avx,
    /// 512-bit AVX-512 F (no FMA), with lane masks for the last block.
    Avx512,
}

impl KernelSet {
    /// Every set, slowest first.
    pub const ALL: [KernelSet; 3] = [KernelSet::Scalar, KernelSet::Avx, KernelSet::Avx512];

    /// Short lower-case name: `scalar`, `avx`, `avx512` (the values of
    /// [`KERNELS_ENV`]).
    pub fn name(self) -> &'static str {
        match self {
            KernelSet::Scalar => "scalar",
            KernelSet::Avx => "avx",
            KernelSet::Avx512 => "avx512",
        }
    }

    /// The set called `name` (as [`KernelSet::name`] spells it), if any.
    pub fn from_name(name: &str) -> Option<KernelSet> {
        KernelSet::ALL.into_iter().find(|k| k.name() == name)
    }

    /// True when this CPU executes the set's instructions (always for
    /// [`KernelSet::Scalar`]).
    pub fn supported(self) -> bool {
        match self {
            KernelSet::Scalar => true,
            #[cfg(target_arch = "x86_64")]
            KernelSet::Avx => std::arch::is_x86_feature_detected!("avx"),
            #[cfg(target_arch = "x86_64")]
            KernelSet::Avx512 => std::arch::is_x86_feature_detected!("avx512f"),
            #[cfg(not(target_arch = "x86_64"))]
            _ => false,
        }
    }

    fn code(self) -> u8 {
        self as u8 + 1
    }

    fn from_code(c: u8) -> Option<KernelSet> {
        KernelSet::ALL.get(usize::from(c).checked_sub(1)?).copied()
    }
}

/// Environment variable read once, at the first kernel call, to cap the
/// run-time choice: `scalar`, `avx` or `avx512` (the best supported set up
/// to that one is used); unset or any other value: no cap. For tests and
/// benchmarks of a particular path; [`limit_kernels`] overrides it.
pub const KERNELS_ENV: &str = "PLUMBFIT_KERNELS";

mod choice {
    use super::KernelSet;
    use std::sync::atomic::{AtomicU8, Ordering};

    /// The chosen set's code, 0 before the first choice.
    static CHOSEN: AtomicU8 = AtomicU8::new(0);
    /// The cap's code, 0 for none yet (then [`super::KERNELS_ENV`] is read),
    /// `NO_CAP` for none.
    static CAP: AtomicU8 = AtomicU8::new(0);
    const NO_CAP: u8 = u8::MAX;

    fn best_up_to(cap: KernelSet) -> KernelSet {
        KernelSet::ALL
            .into_iter()
            .rev()
            .find(|k| *k <= cap && k.supported())
            .unwrap_or(KernelSet::Scalar)
    }

    #[inline]
    pub(super) fn chosen() -> KernelSet {
        match KernelSet::from_code(CHOSEN.load(Ordering::Relaxed)) {
            Some(k) => k,
            None => choose(),
        }
    }

    #[cold]
    fn choose() -> KernelSet {
        let mut cap = CAP.load(Ordering::Relaxed);
        if cap == 0 {
            let env = std::env::var(super::KERNELS_ENV).ok();
            cap = env
                .as_deref()
                .and_then(KernelSet::from_name)
                .map_or(NO_CAP, KernelSet::code);
            // A cap set meanwhile by `limit` wins over the environment.
            cap = match CAP.compare_exchange(0, cap, Ordering::Relaxed, Ordering::Relaxed) {
                Ok(_) => cap,
                Err(now) => now,
            };
        }
        let k = best_up_to(KernelSet::from_code(cap).unwrap_or(KernelSet::Avx512));
        CHOSEN.store(k.code(), Ordering::Relaxed);
        k
    }

    pub(super) fn limit(cap: Option<KernelSet>) -> KernelSet {
        CAP.store(cap.map_or(NO_CAP, KernelSet::code), Ordering::Relaxed);
        CHOSEN.store(0, Ordering::Relaxed);
        chosen()
    }
}

/// The kernel set [`shifted_sums`] and [`full_sums`] use: the best this CPU
/// supports (AVX-512, then AVX, then none), capped by [`limit_kernels`] or
/// [`KERNELS_ENV`]. Chosen once and cached.
#[inline]
pub fn selected() -> KernelSet {
    choice::chosen()
}

/// Caps the run-time choice at `cap` (`None`: no cap, the best supported
/// set), for every thread, and returns the set now selected. Results do
/// not change (every set gives the same bits), only speed: this exists so
/// tests and benchmarks can run each path in one process.
pub fn limit_kernels(cap: Option<KernelSet>) -> KernelSet {
    choice::limit(cap)
}

/// Name of the selected SIMD set (`"avx512"`, `"avx"`), or `None` when the
/// caller's scalar kernels run.
pub fn active() -> Option<&'static str> {
    match selected() {
        KernelSet::Scalar => None,
        k => Some(k.name()),
    }
}

/// [`ShiftedSums`] of `xs`, `ys` (their common length) with the selected
/// set, or `None` when that is [`KernelSet::Scalar`].
#[inline]
pub fn shifted_sums(xs: &[f64], ys: &[f64], xc: f64, yc: f64, b0: f64) -> Option<ShiftedSums> {
    shifted_sums_with(selected(), xs, ys, xc, yc, b0)
}

/// [`shifted_sums`] with the set `k`, or `None` when `k` is
/// [`KernelSet::Scalar`] or this CPU does not support it.
#[inline]
pub fn shifted_sums_with(
    k: KernelSet,
    xs: &[f64],
    ys: &[f64],
    xc: f64,
    yc: f64,
    b0: f64,
) -> Option<ShiftedSums> {
    let n = xs.len().min(ys.len());
    let _ = (n, xc, yc, b0);
    #[cfg(target_arch = "x86_64")]
    match k {
        KernelSet::Avx512 if k.supported() => {
            // SAFETY: AVX-512 F is present (checked just above).
            return Some(unsafe { avx512::shifted(&xs[..n], &ys[..n], xc, yc, b0) });
        }
        KernelSet::Avx if k.supported() => {
            // SAFETY: AVX is present (checked just above).
            return Some(unsafe { avx::shifted(&xs[..n], &ys[..n], xc, yc, b0) });
        }
        _ => {}
    }
    let _ = k;
    None
}

/// [`FullSums`] of `xs`, `ys` (their common length) about the shift
/// `(xc, yc)` and slope `b0` with the selected set, or `None` when that is
/// [`KernelSet::Scalar`].
///
/// Pass 1 reads the chunk once (means, extremes, lag sums); pass 2 reads
/// it again from cache (centred sums of orders 1–4). With `prefetch_next`
/// the second pass also asks for the `xs.len()` values that follow each
/// array in memory (the caller's next chunk), so that chunk streams in
/// while this one is computed. It is only a hint: nothing past the slices
/// is read.
#[inline]
pub fn full_sums(
    xs: &[f64],
    ys: &[f64],
    xc: f64,
    yc: f64,
    b0: f64,
    prefetch_next: bool,
) -> Option<FullSums> {
    full_sums_with(selected(), xs, ys, xc, yc, b0, prefetch_next)
}

/// [`full_sums`] with the set `k`, or `None` when `k` is
/// [`KernelSet::Scalar`] or this CPU does not support it.
#[inline]
pub fn full_sums_with(
    k: KernelSet,
    xs: &[f64],
    ys: &[f64],
    xc: f64,
    yc: f64,
    b0: f64,
    prefetch_next: bool,
) -> Option<FullSums> {
    let n = xs.len().min(ys.len());
    let _ = (n, xc, yc, b0, prefetch_next);
    #[cfg(target_arch = "x86_64")]
    match k {
        KernelSet::Avx512 if k.supported() => {
            // SAFETY: AVX-512 F is present (checked just above).
            return Some(unsafe { avx512::full(&xs[..n], &ys[..n], xc, yc, b0, prefetch_next) });
        }
        KernelSet::Avx if k.supported() => {
            // SAFETY: AVX is present (checked just above).
            return Some(unsafe { avx::full(&xs[..n], &ys[..n], xc, yc, b0, prefetch_next) });
        }
        _ => {}
    }
    let _ = k;
    None
}

#[cfg(target_arch = "x86_64")]
mod avx512;

/// How far ahead (in values) the streaming kernels ask for data: about
/// 1 KiB per array, enough to cover memory latency at full bandwidth. The
/// hardware prefetcher alone keeps fewer lines in flight when the loop has
/// arithmetic between its loads.
#[cfg(target_arch = "x86_64")]
const AHEAD: usize = 128;

/// The lean kernels' prefetch distance (values, 2 KiB per array), chosen
/// by measurement: on an Intel Xeon (KVM) at 10⁷ pairs the kernel alone
/// reached 0.93–0.96 of the read ceiling with 256, 0.83–0.89 with 128 and
/// about 0.90 with 512.
#[cfg(target_arch = "x86_64")]
const LEAN_AHEAD: usize = 256;

/// Hint that `s[i..]` (or the memory just past `s`) will be read soon.
/// (SSE only, so both the AVX and the AVX-512 kernels call it safely.)
#[cfg(target_arch = "x86_64")]
#[inline]
#[target_feature(enable = "sse")]
fn prefetch(s: &[f64], i: usize) {
    use std::arch::x86_64::{_mm_prefetch, _MM_HINT_T0};
    // A prefetch never faults and does not change any result, so an
    // address past the end of `s` is harmless; `wrapping_add` keeps the
    // pointer arithmetic itself defined.
    _mm_prefetch::<_MM_HINT_T0>(s.as_ptr().wrapping_add(i) as *const i8);
}

/// The lean kernels' tail: the pairs after the last full block of eight,
/// added in order into sums that start at 0 (the lane contract).
#[cfg(target_arch = "x86_64")]
#[inline(always)]
fn shifted_tail(xs: &[f64], ys: &[f64], xc: f64, yc: f64, b0: f64) -> [f64; 5] {
    let mut t = [0.0f64; 5];
    for (x, y) in xs.iter().zip(ys) {
        let dx = x - xc;
        let v = (y - yc) - b0 * dx;
        t[0] += dx;
        t[1] += v;
        t[2] += dx * dx;
        t[3] += dx * v;
        t[4] += v * v;
    }
    t
}

#[cfg(target_arch = "x86_64")]
mod avx {
    use super::{prefetch, shifted_tail, FullSums, ShiftedSums, AHEAD, LEAN_AHEAD};
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

    #[target_feature(enable = "avx")]
    pub(super) fn shifted(xs: &[f64], ys: &[f64], xc: f64, yc: f64, b0: f64) -> ShiftedSums {
        let n = xs.len();
        let body = n / 8 * 8;
        let (vxc, vyc, vb) = (_mm256_set1_pd(xc), _mm256_set1_pd(yc), _mm256_set1_pd(b0));
        let z = _mm256_setzero_pd();
        let (mut sx, mut sv, mut sxx, mut sxv, mut svv) = ([z; 2], [z; 2], [z; 2], [z; 2], [z; 2]);
        let mut i = 0;
        while i < body {
            prefetch(xs, i + LEAN_AHEAD);
            prefetch(ys, i + LEAN_AHEAD);
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
        let t = shifted_tail(&xs[body..], &ys[body..], xc, yc, b0);
        ShiftedSums {
            sx: reduce8(sx) + t[0],
            sv: reduce8(sv) + t[1],
            sxx: reduce8(sxx) + t[2],
            sxv: reduce8(sxv) + t[3],
            svv: reduce8(svv) + t[4],
        }
    }

    /// `acc + a·b` (a rounded product, then a rounded sum: no FMA).
    #[inline]
    #[target_feature(enable = "avx")]
    fn madd(acc: __m256d, a: __m256d, b: __m256d) -> __m256d {
        _mm256_add_pd(acc, _mm256_mul_pd(a, b))
    }

    /// `v` keeps the lanes of `m` that are all ones; the others become +0,
    /// which added to a sum leaves it unchanged (a sum that starts at +0
    /// is never −0).
    #[inline]
    #[target_feature(enable = "avx")]
    fn keep(m: Option<__m256d>, v: __m256d) -> __m256d {
        match m {
            Some(m) => _mm256_and_pd(v, m),
            None => v,
        }
    }

    /// Lane mask with lanes `0..r` all ones.
    #[inline]
    #[target_feature(enable = "avx")]
    fn lanes_below(r: usize) -> __m256d {
        let on = |k: usize| if k < r { -1i64 } else { 0 };
        _mm256_castsi256_pd(_mm256_set_epi64x(on(3), on(2), on(1), on(0)))
    }

    /// `[s[i], s[i+1], s[i+2], s[i+3]]` with the values past the end of `s`
    /// taken as 0 (for the last, partial block).
    #[inline]
    #[target_feature(enable = "avx")]
    fn padded(s: &[f64], i: usize) -> __m256d {
        let mut q = [0.0f64; 4];
        for (k, v) in q.iter_mut().enumerate() {
            *v = s.get(i + k).copied().unwrap_or(0.0);
        }
        _mm256_setr_pd(q[0], q[1], q[2], q[3])
    }

    /// Means and extremes of one block of four pairs, `k = [xc, yc, b0]`:
    /// `a = [Σdx, Σv, min x, max x, min y, max y]`; `m` masks the lanes
    /// that hold pairs in a partial block.
    #[inline]
    #[target_feature(enable = "avx")]
    fn mean_block(
        a: &mut [__m256d; 6],
        k: [__m256d; 3],
        x: __m256d,
        y: __m256d,
        m: Option<__m256d>,
    ) {
        let [vxc, vyc, vb] = k;
        let dx = _mm256_sub_pd(x, vxc);
        let v = _mm256_sub_pd(_mm256_sub_pd(y, vyc), _mm256_mul_pd(vb, dx));
        a[0] = _mm256_add_pd(a[0], keep(m, dx));
        a[1] = _mm256_add_pd(a[1], keep(m, v));
        let (x_lo, x_hi, y_lo, y_hi) = match m {
            // Lanes without a pair take the identity of min and max.
            Some(m) => {
                let (inf, ninf) = (
                    _mm256_set1_pd(f64::INFINITY),
                    _mm256_set1_pd(f64::NEG_INFINITY),
                );
                (
                    _mm256_blendv_pd(inf, x, m),
                    _mm256_blendv_pd(ninf, x, m),
                    _mm256_blendv_pd(inf, y, m),
                    _mm256_blendv_pd(ninf, y, m),
                )
            }
            None => (x, x, y, y),
        };
        a[2] = _mm256_min_pd(a[2], x_lo);
        a[3] = _mm256_max_pd(a[3], x_hi);
        a[4] = _mm256_min_pd(a[4], y_lo);
        a[5] = _mm256_max_pd(a[5], y_hi);
    }

    /// Lag terms of one block of four pairs `x`, `y` whose predecessors are
    /// `xp`, `yp` (lane by lane): `a = [ΣΔx², ΣΔx·Δv, ΣΔv²]`.
    #[inline]
    #[target_feature(enable = "avx")]
    fn lag_block(
        a: &mut [__m256d; 3],
        vb: __m256d,
        [x, y, xp, yp]: [__m256d; 4],
        m: Option<__m256d>,
    ) {
        let ddx = _mm256_sub_pd(x, xp);
        let ddv = _mm256_sub_pd(_mm256_sub_pd(y, yp), _mm256_mul_pd(vb, ddx));
        a[0] = _mm256_add_pd(a[0], keep(m, _mm256_mul_pd(ddx, ddx)));
        a[1] = _mm256_add_pd(a[1], keep(m, _mm256_mul_pd(ddx, ddv)));
        a[2] = _mm256_add_pd(a[2], keep(m, _mm256_mul_pd(ddv, ddv)));
    }

    /// The first block's predecessors: pair 0 is given itself, which makes
    /// its lag terms exactly +0, as if the term were skipped.
    #[inline]
    #[target_feature(enable = "avx")]
    fn head(s: &[f64]) -> __m256d {
        let at = |k: usize| s.get(k).copied().unwrap_or(0.0);
        _mm256_setr_pd(at(0), at(0), at(1), at(2))
    }

    /// `(u, t)` of four pairs: `dx = x − xc`, `v = (y − yc) − b0·dx`,
    /// `u = dx − mx`, `t = v − mv`, with `c = [xc, yc, b0, mx, mv]`.
    #[inline]
    #[target_feature(enable = "avx")]
    fn centre(c: [__m256d; 5], x: __m256d, y: __m256d) -> (__m256d, __m256d) {
        let [vxc, vyc, vb, vmx, vmv] = c;
        let dx = _mm256_sub_pd(x, vxc);
        let v = _mm256_sub_pd(_mm256_sub_pd(y, vyc), _mm256_mul_pd(vb, dx));
        (_mm256_sub_pd(dx, vmx), _mm256_sub_pd(v, vmv))
    }

    /// Orders 1–3 of one block: `a = [cu, ct, m20, m11, m02, m30, m21,
    /// m12, m03]`. Returns the block's `(u, t)` (0 in masked lanes).
    #[inline]
    #[target_feature(enable = "avx")]
    fn low_block(
        a: &mut [__m256d; 9],
        c: [__m256d; 5],
        x: __m256d,
        y: __m256d,
        m: Option<__m256d>,
    ) -> [__m256d; 2] {
        let (u, t) = centre(c, x, y);
        let (u, t) = (keep(m, u), keep(m, t));
        let u2 = _mm256_mul_pd(u, u);
        let t2 = _mm256_mul_pd(t, t);
        a[0] = _mm256_add_pd(a[0], u);
        a[1] = _mm256_add_pd(a[1], t);
        a[2] = _mm256_add_pd(a[2], u2);
        a[3] = madd(a[3], u, t);
        a[4] = _mm256_add_pd(a[4], t2);
        a[5] = madd(a[5], u2, u);
        a[6] = madd(a[6], u2, t);
        a[7] = madd(a[7], u, t2);
        a[8] = madd(a[8], t2, t);
        [u, t]
    }

    /// Order 4 of one block from its `(u, t)`, as products of the
    /// second-order terms `u², ut, t²`: `a = [m40, m31, m22, m13, m04]`.
    #[inline]
    #[target_feature(enable = "avx")]
    fn high_block(a: &mut [__m256d; 5], [u, t]: [__m256d; 2]) {
        let u2 = _mm256_mul_pd(u, u);
        let w = _mm256_mul_pd(u, t);
        let t2 = _mm256_mul_pd(t, t);
        a[0] = madd(a[0], u2, u2);
        a[1] = madd(a[1], u2, w);
        a[2] = madd(a[2], u2, t2);
        a[3] = madd(a[3], w, t2);
        a[4] = madd(a[4], t2, t2);
    }

    /// Pairs per piece of pass 2: the piece's `(u, t)` (8 KiB) stay in L1
    /// between the two loops.
    const PIECE: usize = 512;

    // Pair i goes to lane i mod 4 in every loop below; the last block is
    // padded and masked. Each loop is its own (not inlined) function that
    // keeps few enough sums and operands for the sixteen vector registers:
    // a sum kept in memory puts a store and a reload on its dependency
    // chain every iteration, and values live across a loop (results of
    // the loops before) would otherwise crowd the sums out.

    /// Pass 1, streaming from memory: `[Σdx, Σv, min x, max x, min y,
    /// max y]` and the lag sums `[ΣΔx², ΣΔx·Δv, ΣΔv²]`.
    #[inline(never)]
    #[target_feature(enable = "avx")]
    fn first_pass(xs: &[f64], ys: &[f64], xc: f64, yc: f64, b0: f64) -> ([f64; 6], [f64; 3]) {
        let (n, body) = (xs.len(), xs.len() / 4 * 4);
        let k = [_mm256_set1_pd(xc), _mm256_set1_pd(yc), _mm256_set1_pd(b0)];
        let z = _mm256_setzero_pd();
        let (inf, ninf) = (
            _mm256_set1_pd(f64::INFINITY),
            _mm256_set1_pd(f64::NEG_INFINITY),
        );
        let mut a = [z, z, inf, ninf, inf, ninf];
        let mut l = [z; 3];
        if body > 0 {
            let (x, y) = (load(xs, 0), load(ys, 0));
            mean_block(&mut a, k, x, y, None);
            lag_block(&mut l, k[2], [x, y, head(xs), head(ys)], None);
        }
        let mut i = 4;
        while i < body {
            prefetch(xs, i + AHEAD);
            prefetch(ys, i + AHEAD);
            let (x, y) = (load(xs, i), load(ys, i));
            mean_block(&mut a, k, x, y, None);
            lag_block(&mut l, k[2], [x, y, load(xs, i - 1), load(ys, i - 1)], None);
            i += 4;
        }
        if body < n {
            let m = Some(lanes_below(n - body));
            let (x, y) = (padded(xs, body), padded(ys, body));
            mean_block(&mut a, k, x, y, m);
            let (xp, yp) = if body == 0 {
                (head(xs), head(ys))
            } else {
                (
                    padded(&xs[..n - 1], body - 1),
                    padded(&ys[..n - 1], body - 1),
                )
            };
            lag_block(&mut l, k[2], [x, y, xp, yp], m);
        }
        (
            [
                reduce4(a[0]),
                reduce4(a[1]),
                hmin(a[2]),
                hmax(a[3]),
                hmin(a[4]),
                hmax(a[5]),
            ],
            [reduce4(l[0]), reduce4(l[1]), reduce4(l[2])],
        )
    }

    /// Pass 2, orders 1–3, over pairs `from..to` of the chunk (`from` a
    /// multiple of 4; a partial block only at the chunk's end), from cache,
    /// with `c = [xc, yc, b0, mx, mv]`; each block's `(u, t)` goes to `ut`.
    /// With `ahead`, asks for the values at the same place in the next
    /// `n` values after each array.
    #[inline(never)]
    #[target_feature(enable = "avx")]
    fn low_pass(
        (xs, ys): (&[f64], &[f64]),
        (from, to): (usize, usize),
        c: [f64; 5],
        ahead: bool,
        acc: &mut [__m256d; 9],
        ut: &mut [[__m256d; 2]],
    ) {
        let n = xs.len();
        let body = from + (to - from) / 4 * 4;
        let c = c.map(|v| _mm256_set1_pd(v));
        let mut a = *acc;
        let mut i = from;
        let mut slots = ut.iter_mut();
        while i < body {
            if ahead {
                prefetch(xs, n + i);
                prefetch(ys, n + i);
            }
            let q = low_block(&mut a, c, load(xs, i), load(ys, i), None);
            if let Some(slot) = slots.next() {
                *slot = q;
            }
            i += 4;
        }
        if body < to {
            let m = Some(lanes_below(to - body));
            let q = low_block(&mut a, c, padded(xs, body), padded(ys, body), m);
            if let Some(slot) = slots.next() {
                *slot = q;
            }
        }
        *acc = a;
    }

    /// Pass 2, order 4, over the `(u, t)` of one piece.
    #[inline(never)]
    #[target_feature(enable = "avx")]
    fn high_pass(ut: &[[__m256d; 2]], acc: &mut [__m256d; 5]) {
        let mut a = *acc;
        for &q in ut {
            high_block(&mut a, q);
        }
        *acc = a;
    }

    #[target_feature(enable = "avx")]
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
        let c = [xc, yc, b0, sx / nf, sv / nf];
        // Pass 2, from cache, piece by piece: orders 1–3 (keeping each
        // block's u and t), then order 4 from the kept u and t.
        let z = _mm256_setzero_pd();
        let (mut a_lo, mut a_hi) = ([z; 9], [z; 5]);
        let mut ut = [[z; 2]; PIECE / 4];
        let mut from = 0;
        while from < n {
            let to = (from + PIECE).min(n);
            low_pass((xs, ys), (from, to), c, prefetch_next, &mut a_lo, &mut ut);
            high_pass(&ut[..(to - from).div_ceil(4)], &mut a_hi);
            from = to;
        }
        let lo = a_lo.map(|v| reduce4(v));
        let hi = a_hi.map(|v| reduce4(v));
        let mut m = [[0.0f64; 5]; 5];
        let low = [(2, 0), (1, 1), (0, 2), (3, 0), (2, 1), (1, 2), (0, 3)];
        for (k, (p, q)) in low.into_iter().enumerate() {
            m[p][q] = lo[k + 2];
        }
        let high = [(4, 0), (3, 1), (2, 2), (1, 3), (0, 4)];
        for (k, (p, q)) in high.into_iter().enumerate() {
            m[p][q] = hi[k];
        }
        FullSums {
            sx,
            sv,
            cu: lo[0],
            ct: lo[1],
            m,
            lag,
            xmin,
            xmax,
            ymin,
            ymax,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_round_trip() {
        for k in KernelSet::ALL {
            assert_eq!(KernelSet::from_name(k.name()), Some(k));
        }
        assert_eq!(KernelSet::from_name("AVX"), None);
        assert_eq!(KernelSet::from_name(""), None);
    }

    #[test]
    fn cap_selects_the_best_supported_set_up_to_it() {
        // The only test in this crate that changes the cap.
        let (xs, ys) = ([1.0, 2.0, 4.0], [3.0, 5.0, 9.0]);
        for cap in KernelSet::ALL {
            let want = KernelSet::ALL
                .into_iter()
                .rev()
                .find(|k| *k <= cap && k.supported())
                .unwrap_or(KernelSet::Scalar);
            assert_eq!(limit_kernels(Some(cap)), want);
            assert_eq!(selected(), want);
            let simd = shifted_sums(&xs, &ys, 1.0, 3.0, 2.0).is_some();
            assert_eq!(simd, want != KernelSet::Scalar, "{cap:?}");
            assert_eq!(active(), simd.then(|| want.name()));
        }
        let best = limit_kernels(None);
        assert!(best.supported());
        assert!(KernelSet::ALL.iter().all(|k| !k.supported() || *k <= best));
    }

    #[test]
    fn unsupported_or_scalar_sets_return_none() {
        let (xs, ys) = ([1.0; 9], [2.0; 9]);
        for k in KernelSet::ALL {
            let on = k != KernelSet::Scalar && k.supported();
            assert_eq!(shifted_sums_with(k, &xs, &ys, 0.0, 0.0, 1.0).is_some(), on);
            assert_eq!(
                full_sums_with(k, &xs, &ys, 0.0, 0.0, 1.0, false).is_some(),
                on
            );
        }
    }

    #[test]
    fn simd_sets_agree_bit_for_bit() {
        // AVX and AVX-512 against each other on offset data (the scalar
        // mirror lives in `plumbfit`, whose kernel tests compare every set
        // with it); tolerance 0.
        let sets: Vec<KernelSet> = KernelSet::ALL
            .into_iter()
            .filter(|k| *k != KernelSet::Scalar && k.supported())
            .collect();
        if sets.len() < 2 {
            return; // Nothing to compare on this CPU.
        }
        let mut s = 5u64;
        let mut next = move || {
            s = s.wrapping_mul(6364136223846793005).wrapping_add(1);
            (s >> 11) as f64 / (1u64 << 53) as f64 - 0.5
        };
        let xs: Vec<f64> = (0..5000).map(|_| 1e9 + 100.0 * next()).collect();
        let ys: Vec<f64> = xs.iter().map(|x| 2.5 * x + 0.1 * next()).collect();
        for n in (1..=40).chain([255, 256, 257, 4095, 4096, 4097, 5000]) {
            let (x, y) = (&xs[..n], &ys[..n]);
            for b0 in [0.0, 2.5, -0.75] {
                // Debug text tells −0 from +0, which `==` does not.
                let f = |k| {
                    format!(
                        "{:?}",
                        (
                            shifted_sums_with(k, x, y, x[0], y[0], b0),
                            full_sums_with(k, x, y, x[0], y[0], b0, n == 4096),
                        )
                    )
                };
                let first = f(sets[0]);
                for &k in &sets[1..] {
                    assert_eq!(f(k), first, "{k:?} n = {n} b0 = {b0}");
                }
            }
        }
    }
}
