//! Chunk kernels behind `extend`: per chunk, sums about a local shift, turned
//! into centred moments that are then merged exactly into the state.
//!
//! The shift is the chunk's first pair and the provisional slope `b0` of the
//! accumulator's frame, so `v = (y - y_c) - b0 (x - x_c)` stays small on
//! offset data and on near-perfect fits. The lean kernel is one pass; when
//! the one-pass result shows cancellation (the first pair is far from the
//! chunk mean) it redoes the chunk in two passes while it is still in cache.
//! The full kernel is always two passes: its fourth powers amplify any
//! cancellation too much for a one-pass form. Its first pass (means, lag
//! sums, extremes) streams the chunk from memory; the second (centred sums
//! of orders 1–4) re-reads it from cache while the next chunk is
//! prefetched, so memory and arithmetic overlap.

/// Pairs per chunk: two `f64` arrays of this length fit in L1 with room.
pub(crate) const CHUNK: usize = 512;

/// Pairs per chunk of the unweighted kernels. The lean kernel reads its
/// chunk once (the two-pass fallback is rare); the full kernel reads it
/// from memory once and then from cache (32 KiB per array stays in L2).
pub(crate) const LONG_CHUNK: usize = 4096;

/// Lost-bits budget of the one-pass lean kernel: a second moment that is
/// smaller than its uncentred sum by more than this factor is recomputed.
const CANCEL_LIMIT: f64 = 16.0;

/// Second-order summary of one chunk, about the chunk's own first pair.
#[derive(Clone, Copy, Debug, Default)]
pub(crate) struct LeanChunk {
    pub n: usize,
    pub w: f64,
    pub w2: f64,
    /// Local shift: the chunk's first pair.
    pub xc: f64,
    pub yc: f64,
    /// Weighted means of `x - xc` and of `v`.
    pub mx: f64,
    pub mv: f64,
    pub sxx: f64,
    pub sxv: f64,
    pub svv: f64,
    /// Smallest weight seen (1 when unweighted); a check for bad weights.
    pub wmin: f64,
}

/// Higher-order summary of one chunk, on top of [`LeanChunk`].
#[derive(Clone, Copy, Debug, Default)]
pub(crate) struct FullChunk {
    pub lean: LeanChunk,
    /// Centred co-moments `m[p][q]` for `3 <= p + q <= 4`.
    pub m: [[f64; 5]; 5],
    /// Lag-1 difference sums within the chunk: Σdx², Σdx·dv, Σdv² (dv in the b0 frame).
    pub lag: [f64; 3],
    pub xmin: f64,
    pub xmax: f64,
    pub ymin: f64,
    pub ymax: f64,
    /// The chunk's last pair (for the next lag-1 boundary term).
    pub last: (f64, f64),
}

#[inline(always)]
fn wt(ws: Option<&[f64]>, i: usize) -> f64 {
    match ws {
        Some(w) => w[i],
        None => 1.0,
    }
}

/// One-pass lean summary with a two-pass fallback. `xs`, `ys` (and `ws`)
/// have equal, non-zero length.
pub(crate) fn lean_chunk(xs: &[f64], ys: &[f64], ws: Option<&[f64]>, b0: f64) -> LeanChunk {
    let xc = xs[0];
    let yc = ys[0];
    let c = match ws {
        None => {
            let s = shifted_sums(xs, ys, xc, yc, b0);
            let nf = xs.len() as f64;
            (nf, nf, s.sx, s.sv, s.sxx, s.sxv, s.svv, 1.0)
        }
        Some(w) => one_pass_weighted(xs, ys, w, xc, yc, b0),
    };
    let (s_w, s_w2, s_x, s_v, s_xx, s_xv, s_vv, wmin) = c;
    let mx = s_x / s_w;
    let mv = s_v / s_w;
    let sxx = s_xx - mx * s_x;
    let svv = s_vv - mv * s_v;
    let sxv = s_xv - mx * s_v;
    let suspect = sxx * CANCEL_LIMIT < s_xx || svv * CANCEL_LIMIT < s_vv;
    // Non-finite sums are left for the caller to diagnose.
    if suspect && sxx.is_finite() && svv.is_finite() {
        return two_pass_lean(xs, ys, ws, xc, yc, b0, s_w, s_w2, wmin);
    }
    LeanChunk {
        n: xs.len(),
        w: s_w,
        w2: s_w2,
        xc,
        yc,
        mx,
        mv,
        // Exact values are non-negative; a negative one is rounding.
        sxx: sxx.max(0.0),
        sxv,
        svv: svv.max(0.0),
        wmin,
    }
}

type Sums = (f64, f64, f64, f64, f64, f64, f64, f64);

/// Raw sums of a chunk about `(xc, yc)` with slope `b0` (unweighted).
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub(crate) struct Shifted {
    pub sx: f64,
    pub sv: f64,
    pub sxx: f64,
    pub sxv: f64,
    pub svv: f64,
}

/// Unweighted one-pass sums: the SIMD kernel when available, else the
/// scalar one; both keep the same lanes, so they give the same bits.
#[inline]
pub(crate) fn shifted_sums(xs: &[f64], ys: &[f64], xc: f64, yc: f64, b0: f64) -> Shifted {
    #[cfg(feature = "simd")]
    {
        if let Some(s) = plumbfit_kernels::shifted_sums(xs, ys, xc, yc, b0) {
            return Shifted {
                sx: s.sx,
                sv: s.sv,
                sxx: s.sxx,
                sxv: s.sxv,
                svv: s.svv,
            };
        }
    }
    shifted_scalar(xs, ys, xc, yc, b0)
}

/// `((l0+l4)+(l2+l6)) + ((l1+l5)+(l3+l7))`, the SIMD kernels' reduction.
#[inline(always)]
fn reduce8(l: &[f64; 8]) -> f64 {
    ((l[0] + l[4]) + (l[2] + l[6])) + ((l[1] + l[5]) + (l[3] + l[7]))
}

/// `(l0+l2) + (l1+l3)`.
#[inline(always)]
fn reduce4(l: &[f64; 4]) -> f64 {
    (l[0] + l[2]) + (l[1] + l[3])
}

// Eight lanes (pair i in lane i mod 8) and a separate in-order tail: the
// lane contract of `plumbfit_kernels::shifted_sums`. Independent lanes also
// keep the adds from forming one long dependency chain.
pub(crate) fn shifted_scalar(xs: &[f64], ys: &[f64], xc: f64, yc: f64, b0: f64) -> Shifted {
    let n = xs.len().min(ys.len());
    let body = n / 8 * 8;
    let mut l = [[0.0f64; 8]; 5];
    for (xq, yq) in xs[..body].chunks_exact(8).zip(ys[..body].chunks_exact(8)) {
        for k in 0..8 {
            let dx = xq[k] - xc;
            let v = (yq[k] - yc) - b0 * dx;
            l[0][k] += dx;
            l[1][k] += v;
            l[2][k] += dx * dx;
            l[3][k] += dx * v;
            l[4][k] += v * v;
        }
    }
    let mut t = [0.0f64; 5];
    for (x, y) in xs[body..n].iter().zip(&ys[body..n]) {
        let dx = x - xc;
        let v = (y - yc) - b0 * dx;
        t[0] += dx;
        t[1] += v;
        t[2] += dx * dx;
        t[3] += dx * v;
        t[4] += v * v;
    }
    Shifted {
        sx: reduce8(&l[0]) + t[0],
        sv: reduce8(&l[1]) + t[1],
        sxx: reduce8(&l[2]) + t[2],
        sxv: reduce8(&l[3]) + t[3],
        svv: reduce8(&l[4]) + t[4],
    }
}

/// Everything the full tier takes from one unweighted chunk: pass-1 sums
/// about the shift, centred sums about their means, lag sums, extremes.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) struct FullSums {
    pub sx: f64,
    pub sv: f64,
    pub cu: f64,
    pub ct: f64,
    pub m: [[f64; 5]; 5],
    pub lag: [f64; 3],
    pub xmin: f64,
    pub xmax: f64,
    pub ymin: f64,
    pub ymax: f64,
}

/// Unweighted two-pass full sums: SIMD when available, else the scalar
/// mirror (same lanes and order, so the same bits).
#[inline]
pub(crate) fn full_sums(xs: &[f64], ys: &[f64], xc: f64, yc: f64, b0: f64) -> FullSums {
    #[cfg(feature = "simd")]
    {
        // A whole chunk is usually followed by another one in memory: let
        // it stream in during this chunk's second pass.
        let next = xs.len() == LONG_CHUNK;
        if let Some(s) = plumbfit_kernels::full_sums(xs, ys, xc, yc, b0, next) {
            return FullSums {
                sx: s.sx,
                sv: s.sv,
                cu: s.cu,
                ct: s.ct,
                m: s.m,
                lag: s.lag,
                xmin: s.xmin,
                xmax: s.xmax,
                ymin: s.ymin,
                ymax: s.ymax,
            };
        }
    }
    full_scalar(xs, ys, xc, yc, b0)
}

/// The products summed per pair in pass 2, in one fixed evaluation order
/// shared with the SIMD kernel: `[u, t, u², ut, t², u²·u, u²·t, u·t², t²·t,
/// u²·u², u²·ut, u²·t², ut·t², t²·t²]`.
#[inline(always)]
fn centred_terms(u: f64, t: f64) -> [f64; 14] {
    let (u2, w, t2) = (u * u, u * t, t * t);
    [
        u,
        t,
        u2,
        w,
        t2,
        u2 * u,
        u2 * t,
        u * t2,
        t2 * t,
        u2 * u2,
        u2 * w,
        u2 * t2,
        w * t2,
        t2 * t2,
    ]
}

/// Pass-1 terms of pair `i`: `[dx, v, Δx², Δx·Δv, Δv²]` (lag terms 0 for
/// the first pair, which has no predecessor).
#[inline(always)]
fn first_terms(xs: &[f64], ys: &[f64], i: usize, xc: f64, yc: f64, b0: f64) -> [f64; 5] {
    let dx = xs[i] - xc;
    let v = (ys[i] - yc) - b0 * dx;
    if i == 0 {
        return [dx, v, 0.0, 0.0, 0.0];
    }
    let ddx = xs[i] - xs[i - 1];
    let ddv = (ys[i] - ys[i - 1]) - b0 * ddx;
    [dx, v, ddx * ddx, ddx * ddv, ddv * ddv]
}

// Four lanes for both passes: pair i in lane i mod 4, as in
// `plumbfit_kernels::full_sums` (whose padded last block adds exact zeros).
pub(crate) fn full_scalar(xs: &[f64], ys: &[f64], xc: f64, yc: f64, b0: f64) -> FullSums {
    let n = xs.len().min(ys.len());
    let mut l1 = [[0.0f64; 4]; 5];
    let (mut xmin, mut xmax) = (f64::INFINITY, f64::NEG_INFINITY);
    let (mut ymin, mut ymax) = (f64::INFINITY, f64::NEG_INFINITY);
    for i in 0..n {
        let terms = first_terms(xs, ys, i, xc, yc, b0);
        for (lane, term) in l1.iter_mut().zip(terms) {
            lane[i % 4] += term;
        }
        xmin = xmin.min(xs[i]);
        xmax = xmax.max(xs[i]);
        ymin = ymin.min(ys[i]);
        ymax = ymax.max(ys[i]);
    }
    let s1 = l1.map(|lane| reduce4(&lane));
    let nf = n as f64;
    let (mx, mv) = (s1[0] / nf, s1[1] / nf);
    let mut l = [[0.0f64; 4]; 14];
    for i in 0..n {
        let dx = xs[i] - xc;
        let v = (ys[i] - yc) - b0 * dx;
        let terms = centred_terms(dx - mx, v - mv);
        for (lane, term) in l.iter_mut().zip(terms) {
            lane[i % 4] += term;
        }
    }
    let s = l.map(|lane| reduce4(&lane));
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
    FullSums {
        sx: s1[0],
        sv: s1[1],
        cu: s[0],
        ct: s[1],
        m,
        lag: [s1[2], s1[3], s1[4]],
        xmin,
        xmax,
        ymin,
        ymax,
    }
}

fn one_pass_weighted(xs: &[f64], ys: &[f64], ws: &[f64], xc: f64, yc: f64, b0: f64) -> Sums {
    let (mut s_w, mut s_w2, mut s_x, mut s_v) = (0.0, 0.0, 0.0, 0.0);
    let (mut s_xx, mut s_xv, mut s_vv) = (0.0, 0.0, 0.0);
    let mut wmin = f64::INFINITY;
    for ((x, y), w) in xs.iter().zip(ys).zip(ws) {
        let dx = x - xc;
        let v = (y - yc) - b0 * dx;
        s_w += w;
        s_w2 += w * w;
        s_x += w * dx;
        s_v += w * v;
        s_xx += w * dx * dx;
        s_xv += w * dx * v;
        s_vv += w * v * v;
        // `!(w >= wmin)` also catches NaN weights.
        if !(*w >= wmin) {
            wmin = *w;
        }
    }
    (s_w, s_w2, s_x, s_v, s_xx, s_xv, s_vv, wmin)
}

#[allow(clippy::too_many_arguments)]
fn two_pass_lean(
    xs: &[f64],
    ys: &[f64],
    ws: Option<&[f64]>,
    xc: f64,
    yc: f64,
    b0: f64,
    s_w: f64,
    s_w2: f64,
    wmin: f64,
) -> LeanChunk {
    let (mx, mv) = local_means(xs, ys, ws, xc, yc, b0, s_w);
    let (mut cx, mut cv, mut sxx, mut sxv, mut svv) = (0.0, 0.0, 0.0, 0.0, 0.0);
    for i in 0..xs.len() {
        let w = wt(ws, i);
        let dx = xs[i] - xc;
        let u = dx - mx;
        let t = ((ys[i] - yc) - b0 * dx) - mv;
        cx += w * u;
        cv += w * t;
        sxx += w * u * u;
        sxv += w * u * t;
        svv += w * t * t;
    }
    // Correct for the rounding left in the means (Björck's corrected two-pass).
    LeanChunk {
        n: xs.len(),
        w: s_w,
        w2: s_w2,
        xc,
        yc,
        mx: mx + cx / s_w,
        mv: mv + cv / s_w,
        sxx: (sxx - cx * cx / s_w).max(0.0),
        sxv: sxv - cx * cv / s_w,
        svv: (svv - cv * cv / s_w).max(0.0),
        wmin,
    }
}

#[allow(clippy::too_many_arguments)]
fn local_means(
    xs: &[f64],
    ys: &[f64],
    ws: Option<&[f64]>,
    xc: f64,
    yc: f64,
    b0: f64,
    s_w: f64,
) -> (f64, f64) {
    let (mut sx, mut sv) = (0.0, 0.0);
    for i in 0..xs.len() {
        let w = wt(ws, i);
        let dx = xs[i] - xc;
        sx += w * dx;
        sv += w * ((ys[i] - yc) - b0 * dx);
    }
    (sx / s_w, sv / s_w)
}

/// Two-pass full summary: centred co-moments to order 4, lag sums, extremes.
pub(crate) fn full_chunk(xs: &[f64], ys: &[f64], ws: Option<&[f64]>, b0: f64) -> FullChunk {
    let xc = xs[0];
    let yc = ys[0];
    let n = xs.len();
    if ws.is_none() {
        return full_unweighted(xs, ys, xc, yc, b0);
    }
    let (mut s_w, mut s_w2) = (0.0, 0.0);
    let mut wmin = f64::INFINITY;
    for i in 0..n {
        let w = wt(ws, i);
        s_w += w;
        s_w2 += w * w;
        if !(w >= wmin) {
            wmin = w;
        }
    }
    let (mx, mv) = local_means(xs, ys, ws, xc, yc, b0, s_w);
    let mut cx = 0.0;
    let mut cv = 0.0;
    let mut m = [[0.0f64; 5]; 5];
    let (mut xmin, mut xmax, mut ymin, mut ymax) = (xs[0], xs[0], ys[0], ys[0]);
    for i in 0..n {
        let w = wt(ws, i);
        let dx = xs[i] - xc;
        let u = dx - mx;
        let t = ((ys[i] - yc) - b0 * dx) - mv;
        let (u2, t2) = (u * u, t * t);
        cx += w * u;
        cv += w * t;
        m[2][0] += w * u2;
        m[1][1] += w * u * t;
        m[0][2] += w * t2;
        m[3][0] += w * u2 * u;
        m[2][1] += w * u2 * t;
        m[1][2] += w * u * t2;
        m[0][3] += w * t2 * t;
        m[4][0] += w * u2 * u2;
        m[3][1] += w * u2 * u * t;
        m[2][2] += w * u2 * t2;
        m[1][3] += w * u * t2 * t;
        m[0][4] += w * t2 * t2;
        xmin = xmin.min(xs[i]);
        xmax = xmax.max(xs[i]);
        ymin = ymin.min(ys[i]);
        ymax = ymax.max(ys[i]);
    }
    let mut lag = [0.0f64; 3];
    for i in 1..n {
        let ddx = xs[i] - xs[i - 1];
        let ddv = (ys[i] - ys[i - 1]) - b0 * ddx;
        lag[0] += ddx * ddx;
        lag[1] += ddx * ddv;
        lag[2] += ddv * ddv;
    }
    let lean = LeanChunk {
        n,
        w: s_w,
        w2: s_w2,
        xc,
        yc,
        mx: mx + cx / s_w,
        mv: mv + cv / s_w,
        sxx: (m[2][0] - cx * cx / s_w).max(0.0),
        sxv: m[1][1] - cx * cv / s_w,
        svv: (m[0][2] - cv * cv / s_w).max(0.0),
        wmin,
    };
    FullChunk {
        lean,
        m,
        lag,
        xmin,
        xmax,
        ymin,
        ymax,
        last: (xs[n - 1], ys[n - 1]),
    }
}

/// Unweighted full summary: the two-pass kernel (means, extremes and lag
/// sums, then centred sums with Björck's correction), the second pass on
/// data still in cache.
fn full_unweighted(xs: &[f64], ys: &[f64], xc: f64, yc: f64, b0: f64) -> FullChunk {
    let n = xs.len();
    let nf = n as f64;
    let c = full_sums(xs, ys, xc, yc, b0);
    let (mx, mv) = (c.sx / nf, c.sv / nf);
    let m = c.m;
    let lean = LeanChunk {
        n,
        w: nf,
        w2: nf,
        xc,
        yc,
        mx: mx + c.cu / nf,
        mv: mv + c.ct / nf,
        sxx: (m[2][0] - c.cu * c.cu / nf).max(0.0),
        sxv: m[1][1] - c.cu * c.ct / nf,
        svv: (m[0][2] - c.ct * c.ct / nf).max(0.0),
        wmin: 1.0,
    };
    FullChunk {
        lean,
        m,
        lag: c.lag,
        xmin: c.xmin,
        xmax: c.xmax,
        ymin: c.ymin,
        ymax: c.ymax,
        last: (xs[n - 1], ys[n - 1]),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Deterministic test data: offset readings (x near 1e9) with a
    /// generator of our own (SplitMix64).
    fn data(n: usize, seed: u64) -> (Vec<f64>, Vec<f64>) {
        let mut s = seed;
        let mut next = || {
            s = s.wrapping_add(0x9E37_79B9_7F4A_7C15);
            let mut z = s;
            z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
            z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
            ((z ^ (z >> 31)) >> 11) as f64 / (1u64 << 53) as f64 - 0.5
        };
        let xs: Vec<f64> = (0..n).map(|_| 1e9 + 100.0 * next()).collect();
        let ys: Vec<f64> = xs.iter().map(|x| 7.0 + 2.5 * x + 0.1 * next()).collect();
        (xs, ys)
    }

    const LENGTHS: [usize; 14] = [1, 2, 3, 4, 5, 7, 8, 9, 15, 16, 17, 63, 512, 1027];

    #[test]
    fn scalar_sums_count_every_pair_once() {
        // Small integers: every partial sum is exact, so any lane layout
        // must equal the plain sequential sum exactly (tolerance 0).
        for n in LENGTHS {
            let xs: Vec<f64> = (0..n).map(|i| (i % 13) as f64).collect();
            let ys: Vec<f64> = (0..n).map(|i| (i % 7) as f64 - 3.0).collect();
            let (xc, yc, b0) = (2.0, 1.0, 0.5);
            let mut want = [0.0f64; 5];
            for i in 0..n {
                let dx = xs[i] - xc;
                let v = (ys[i] - yc) - b0 * dx;
                for (w, t) in want.iter_mut().zip([dx, v, dx * dx, dx * v, v * v]) {
                    *w += t;
                }
            }
            let s = shifted_scalar(&xs, &ys, xc, yc, b0);
            assert_eq!([s.sx, s.sv, s.sxx, s.sxv, s.svv], want, "n = {n}");
        }
    }

    /// Integer pairs whose `dx = x − xc` and `v = (y − yc) − b0·dx` (with
    /// `b0 = 0.5`) are integers summing to 0, so the pass-1 means are 0 and
    /// every term and partial sum of the full kernel is an exact integer.
    fn zero_mean_pairs(n: usize, xc: f64, yc: f64) -> (Vec<i64>, Vec<i64>, Vec<f64>, Vec<f64>) {
        let mut dx: Vec<i64> = (0..n).map(|i| (i % 13) as i64 - 6).collect();
        let mut v: Vec<i64> = (0..n).map(|i| (i % 7) as i64 - 3).collect();
        let (sdx, sv): (i64, i64) = (dx.iter().sum(), v.iter().sum());
        dx[n - 1] -= sdx;
        v[n - 1] -= sv;
        let xs = dx.iter().map(|&d| xc + d as f64).collect();
        let ys = (0..n)
            .map(|i| yc + v[i] as f64 + 0.5 * dx[i] as f64)
            .collect();
        (dx, v, xs, ys)
    }

    #[test]
    fn full_scalar_counts_every_pair_once() {
        // Exact integer arithmetic (all values below 2^53), so the kernel
        // must equal sums formed here in i64 exactly (tolerance 0).
        for n in LENGTHS {
            let (xc, yc, b0) = (2.0, 1.0, 0.5);
            let (dx, v, xs, ys) = zero_mean_pairs(n, xc, yc);
            let c = full_scalar(&xs, &ys, xc, yc, b0);
            assert_eq!((c.sx, c.sv, c.cu, c.ct), (0.0, 0.0, 0.0, 0.0), "n = {n}");
            for p in 0..=4u32 {
                for q in 0..=(4 - p) {
                    let want: i64 = (0..n).map(|i| dx[i].pow(p) * v[i].pow(q)).sum::<i64>()
                        * i64::from(p + q >= 2);
                    assert_eq!(c.m[p as usize][q as usize], want as f64, "n = {n} m{p}{q}");
                }
            }
            let mut lag = [0i64; 3];
            for i in 1..n {
                let (ddx, ddv) = (dx[i] - dx[i - 1], v[i] - v[i - 1]);
                lag[0] += ddx * ddx;
                lag[1] += ddx * ddv;
                lag[2] += ddv * ddv;
            }
            assert_eq!(c.lag, lag.map(|l| l as f64), "n = {n}");
            let fold = |s: &[f64], f: fn(f64, f64) -> f64, z: f64| s.iter().cloned().fold(z, f);
            assert_eq!(c.xmin, fold(&xs, f64::min, f64::INFINITY), "n = {n}");
            assert_eq!(c.xmax, fold(&xs, f64::max, f64::NEG_INFINITY), "n = {n}");
            assert_eq!(c.ymin, fold(&ys, f64::min, f64::INFINITY), "n = {n}");
            assert_eq!(c.ymax, fold(&ys, f64::max, f64::NEG_INFINITY), "n = {n}");
        }
    }

    #[cfg(feature = "simd")]
    #[test]
    fn simd_kernels_equal_scalar_bit_for_bit() {
        // The lane contract (plumbfit-kernels docs): same operations, same
        // lanes, same reduction order, so every SIMD set this CPU has must
        // give exactly the scalar mirror's results (tolerance 0).
        use plumbfit_kernels::KernelSet;
        let sets: Vec<KernelSet> = KernelSet::ALL
            .into_iter()
            .filter(|k| *k != KernelSet::Scalar && k.supported())
            .collect();
        // Every length up to 70 (every remainder of the 4-, 8- and
        // 16-pair blocks, several times), lengths around the 512-pair
        // pieces of the AVX second pass, a whole chunk, and lengths past
        // it (where the AVX-512 kernel re-reads the pairs in pass 2
        // instead of keeping pass 1's values).
        let more = [
            127,
            128,
            129,
            511,
            512,
            513,
            1024,
            1027,
            LONG_CHUNK - 1,
            LONG_CHUNK,
            LONG_CHUNK + 1,
            2 * LONG_CHUNK + 5,
        ];
        let lengths: Vec<usize> = (1..=70).chain(more).collect();
        let mut checked = 0;
        for (seed, &n) in lengths.iter().enumerate() {
            let (mut xs, ys) = data(n, seed as u64 + 1);
            if seed % 2 == 1 {
                // Sorted x (a time base): large means far from the first pair.
                xs.sort_by(f64::total_cmp);
            }
            for b0 in [0.0, 2.5, -1e-3, 2.4999999] {
                // The chunk's first pair as the shift (as `extend` does) and
                // a shift far from the data (offsets of 1e9 left in).
                for (xc, yc) in [(xs[0], ys[0]), (0.0, 0.0)] {
                    let s = shifted_scalar(&xs, &ys, xc, yc, b0);
                    let c = full_scalar(&xs, &ys, xc, yc, b0);
                    let want = (c.sx, c.sv, c.cu, c.ct, c.m, c.lag);
                    let lim = (c.xmin, c.xmax, c.ymin, c.ymax);
                    for &k in &sets {
                        let q = plumbfit_kernels::shifted_sums_with(k, &xs, &ys, xc, yc, b0)
                            .map(|q| [q.sx, q.sv, q.sxx, q.sxv, q.svv]);
                        let s = [s.sx, s.sv, s.sxx, s.sxv, s.svv];
                        assert_eq!(q, Some(s), "{k:?} shifted n = {n} b0 = {b0} xc = {xc}");
                        for next in [false, true] {
                            let q = plumbfit_kernels::full_sums_with(k, &xs, &ys, xc, yc, b0, next);
                            let q = q.map(|q| {
                                let lim = (q.xmin, q.xmax, q.ymin, q.ymax);
                                ((q.sx, q.sv, q.cu, q.ct, q.m, q.lag), lim)
                            });
                            assert_eq!(q, Some((want, lim)), "{k:?} full n = {n} b0 = {b0}");
                        }
                        checked += 1;
                    }
                }
            }
        }
        // On a CPU with any SIMD set, the comparison above must have run.
        assert_eq!(checked, sets.len() * lengths.len() * 8);
    }

    #[cfg(feature = "simd")]
    #[test]
    fn every_kernel_set_gives_the_same_accumulator() {
        // Whole `extend` calls (many chunks, the chunk shift and frame
        // slope as in use) with each SIMD set forced in turn: the encoded
        // states must be identical to the scalar kernels' (tolerance 0).
        // Other tests may run meanwhile; results do not depend on the set,
        // so a cap changed under them cannot change what they check.
        use crate::{FullMoments, LeanMoments};
        use plumbfit_kernels::{limit_kernels, KernelSet};
        let (xs, ys) = data(3 * LONG_CHUNK + 77, 99);
        let mut states = Vec::new();
        for k in KernelSet::ALL.into_iter().filter(|k| k.supported()) {
            assert_eq!(limit_kernels(Some(k)), k);
            let mut lean = LeanMoments::new();
            let mut full = FullMoments::new();
            lean.extend(&xs, &ys).expect("finite data");
            full.extend(&xs, &ys).expect("finite data");
            states.push((k, lean.save_to_vec(), full.save_to_vec()));
        }
        limit_kernels(None);
        for (k, lean, full) in &states[1..] {
            assert_eq!(lean, &states[0].1, "{k:?} lean");
            assert_eq!(full, &states[0].2, "{k:?} full");
        }
    }
}
