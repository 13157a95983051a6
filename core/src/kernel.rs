//! Chunk kernels behind `extend`: per chunk, sums about a local shift, turned
//! into centred moments that are then merged exactly into the state.
//!
//! The shift is the chunk's first pair and the provisional slope `b0` of the
//! accumulator's frame, so `v = (y - y_c) - b0 (x - x_c)` stays small on
//! offset data and on near-perfect fits. The lean kernel is one pass; when
//! the one-pass result shows cancellation (the first pair is far from the
//! chunk mean) it redoes the chunk in two passes while it is still in cache.
//! The full kernel is always two passes: its fourth powers amplify any
//! cancellation too much for a one-pass form.

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

/// Centred sums of a chunk about the means `(mx, mv)` of `dx`, `v`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) struct Centred {
    pub cu: f64,
    pub ct: f64,
    pub m: [[f64; 5]; 5],
    pub xmin: f64,
    pub xmax: f64,
    pub ymin: f64,
    pub ymax: f64,
}

/// Unweighted centred sums (orders 2–4, extremes): SIMD when available.
#[allow(clippy::too_many_arguments)]
#[inline]
pub(crate) fn centred_sums(
    xs: &[f64],
    ys: &[f64],
    xc: f64,
    yc: f64,
    b0: f64,
    mx: f64,
    mv: f64,
) -> Centred {
    #[cfg(feature = "simd")]
    {
        if let Some(s) = plumbfit_kernels::centred_sums(xs, ys, xc, yc, b0, mx, mv) {
            return Centred {
                cu: s.cu,
                ct: s.ct,
                m: s.m,
                xmin: s.xmin,
                xmax: s.xmax,
                ymin: s.ymin,
                ymax: s.ymax,
            };
        }
    }
    centred_scalar(xs, ys, xc, yc, b0, mx, mv)
}

/// The products summed per pair, in one fixed evaluation order shared with
/// the SIMD kernel: `[u, t, u², ut, t², u³, u²t, ut², t³, u⁴, u³t, u²t², ut³, t⁴]`.
#[inline(always)]
fn centred_terms(u: f64, t: f64) -> [f64; 14] {
    let (u2, t2) = (u * u, t * t);
    let (u3, ut2) = (u2 * u, u * t2);
    [
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
    ]
}

// Four lanes (pair i in lane i mod 4) and an in-order tail, as in
// `plumbfit_kernels::centred_sums`.
#[allow(clippy::too_many_arguments)]
pub(crate) fn centred_scalar(
    xs: &[f64],
    ys: &[f64],
    xc: f64,
    yc: f64,
    b0: f64,
    mx: f64,
    mv: f64,
) -> Centred {
    let n = xs.len().min(ys.len());
    let body = n / 4 * 4;
    let mut l = [[0.0f64; 4]; 14];
    let (mut xmin, mut xmax) = (f64::INFINITY, f64::NEG_INFINITY);
    let (mut ymin, mut ymax) = (f64::INFINITY, f64::NEG_INFINITY);
    for (xq, yq) in xs[..body].chunks_exact(4).zip(ys[..body].chunks_exact(4)) {
        for k in 0..4 {
            let dx = xq[k] - xc;
            let v = (yq[k] - yc) - b0 * dx;
            let terms = centred_terms(dx - mx, v - mv);
            for (lane, term) in l.iter_mut().zip(terms) {
                lane[k] += term;
            }
            xmin = xmin.min(xq[k]);
            xmax = xmax.max(xq[k]);
            ymin = ymin.min(yq[k]);
            ymax = ymax.max(yq[k]);
        }
    }
    let mut s = [0.0f64; 14];
    for (sk, lane) in s.iter_mut().zip(&l) {
        *sk = reduce4(lane);
    }
    let mut tail = [0.0f64; 14];
    for (&x, &y) in xs[body..n].iter().zip(&ys[body..n]) {
        let dx = x - xc;
        let v = (y - yc) - b0 * dx;
        let terms = centred_terms(dx - mx, v - mv);
        for (tk, term) in tail.iter_mut().zip(terms) {
            *tk += term;
        }
        xmin = xmin.min(x);
        xmax = xmax.max(x);
        ymin = ymin.min(y);
        ymax = ymax.max(y);
    }
    for (sk, tk) in s.iter_mut().zip(tail) {
        *sk += tk;
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
    Centred {
        cu: s[0],
        ct: s[1],
        m,
        xmin,
        xmax,
        ymin,
        ymax,
    }
}

/// Unweighted lag-1 sums within a chunk: SIMD when available.
#[inline]
pub(crate) fn lag_sums(xs: &[f64], ys: &[f64], b0: f64) -> [f64; 3] {
    #[cfg(feature = "simd")]
    {
        if let Some(s) = plumbfit_kernels::lag_sums(xs, ys, b0) {
            return s;
        }
    }
    lag_scalar(xs, ys, b0)
}

// Four lanes over the terms i = 1..n (term i in lane (i − 1) mod 4), as in
// `plumbfit_kernels::lag_sums`.
pub(crate) fn lag_scalar(xs: &[f64], ys: &[f64], b0: f64) -> [f64; 3] {
    let n = xs.len().min(ys.len());
    if n < 2 {
        return [0.0; 3];
    }
    let body = (n - 1) / 4 * 4;
    let mut l = [[0.0f64; 4]; 3];
    for j in 0..body {
        let i = j + 1;
        let ddx = xs[i] - xs[i - 1];
        let ddv = (ys[i] - ys[i - 1]) - b0 * ddx;
        let k = j % 4;
        l[0][k] += ddx * ddx;
        l[1][k] += ddx * ddv;
        l[2][k] += ddv * ddv;
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
        reduce4(&l[0]) + t[0],
        reduce4(&l[1]) + t[1],
        reduce4(&l[2]) + t[2],
    ]
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

/// Unweighted full summary: means from the one-pass kernel, then the
/// centred pass (with Björck's correction) and the lag sums, all on data
/// still in L1.
fn full_unweighted(xs: &[f64], ys: &[f64], xc: f64, yc: f64, b0: f64) -> FullChunk {
    let n = xs.len();
    let nf = n as f64;
    let s = shifted_sums(xs, ys, xc, yc, b0);
    let (mx, mv) = (s.sx / nf, s.sv / nf);
    let c = centred_sums(xs, ys, xc, yc, b0, mx, mv);
    let lag = lag_sums(xs, ys, b0);
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
        lag,
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
            let mut lag = [0.0f64; 3];
            for i in 0..n {
                let dx = xs[i] - xc;
                let v = (ys[i] - yc) - b0 * dx;
                for (w, t) in want.iter_mut().zip([dx, v, dx * dx, dx * v, v * v]) {
                    *w += t;
                }
                if i > 0 {
                    let ddx = xs[i] - xs[i - 1];
                    let ddv = (ys[i] - ys[i - 1]) - b0 * ddx;
                    lag[0] += ddx * ddx;
                    lag[1] += ddx * ddv;
                    lag[2] += ddv * ddv;
                }
            }
            let s = shifted_scalar(&xs, &ys, xc, yc, b0);
            assert_eq!([s.sx, s.sv, s.sxx, s.sxv, s.svv], want, "n = {n}");
            assert_eq!(lag_scalar(&xs, &ys, b0), lag, "n = {n}");
            let c = centred_scalar(&xs, &ys, xc, yc, b0, 0.0, 0.0);
            assert_eq!(
                [c.cu, c.ct, c.m[2][0], c.m[1][1], c.m[0][2]],
                want,
                "n = {n}"
            );
            let m4: f64 = (0..n).map(|i| (xs[i] - xc).powi(4)).sum();
            assert_eq!(c.m[4][0], m4, "n = {n}");
            let lo = xs.iter().cloned().fold(f64::INFINITY, f64::min);
            assert_eq!(c.xmin, lo);
        }
    }

    #[cfg(feature = "simd")]
    #[test]
    fn simd_kernels_equal_scalar_bit_for_bit() {
        // The lane contract (plumbfit-kernels docs): no FMA, same lanes, same
        // reduction order, so the results must be identical (tolerance 0).
        if plumbfit_kernels::active().is_none() {
            return; // No SIMD path on this CPU: the scalar kernel is all there is.
        }
        for (seed, n) in LENGTHS.iter().enumerate() {
            let (xs, ys) = data(*n, seed as u64 + 1);
            for b0 in [0.0, 2.5, -1e-3] {
                let (xc, yc) = (xs[0], ys[0]);
                let simd = plumbfit_kernels::shifted_sums(&xs, &ys, xc, yc, b0);
                let s = shifted_scalar(&xs, &ys, xc, yc, b0);
                let simd = simd.map(|q| [q.sx, q.sv, q.sxx, q.sxv, q.svv]);
                assert_eq!(simd, Some([s.sx, s.sv, s.sxx, s.sxv, s.svv]), "n = {n}");
                let (mx, mv) = (s.sx / *n as f64, s.sv / *n as f64);
                let c = centred_scalar(&xs, &ys, xc, yc, b0, mx, mv);
                let q = plumbfit_kernels::centred_sums(&xs, &ys, xc, yc, b0, mx, mv);
                let q = q.map(|q| (q.cu, q.ct, q.m, q.xmin, q.xmax, q.ymin, q.ymax));
                assert_eq!(
                    q,
                    Some((c.cu, c.ct, c.m, c.xmin, c.xmax, c.ymin, c.ymax)),
                    "n = {n}"
                );
                assert_eq!(
                    plumbfit_kernels::lag_sums(&xs, &ys, b0),
                    Some(lag_scalar(&xs, &ys, b0)),
                    "n = {n}"
                );
            }
        }
    }
}
