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
        None => one_pass_unweighted(xs, ys, xc, yc, b0),
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
        sxx,
        sxv,
        svv,
        wmin,
    }
}

type Sums = (f64, f64, f64, f64, f64, f64, f64, f64);

// Four interleaved accumulators per sum keep the adds independent so the
// loop pipelines (and vectorizes) without reassociating one long chain.
fn one_pass_unweighted(xs: &[f64], ys: &[f64], xc: f64, yc: f64, b0: f64) -> Sums {
    let n = xs.len();
    let mut sx = [0.0f64; 4];
    let mut sv = [0.0f64; 4];
    let mut sxx = [0.0f64; 4];
    let mut sxv = [0.0f64; 4];
    let mut svv = [0.0f64; 4];
    let body = n / 4 * 4;
    let (xb, xt) = xs.split_at(body);
    let (yb, yt) = ys.split_at(body);
    for (xq, yq) in xb.chunks_exact(4).zip(yb.chunks_exact(4)) {
        for k in 0..4 {
            let dx = xq[k] - xc;
            let v = (yq[k] - yc) - b0 * dx;
            sx[k] += dx;
            sv[k] += v;
            sxx[k] += dx * dx;
            sxv[k] += dx * v;
            svv[k] += v * v;
        }
    }
    for (x, y) in xt.iter().zip(yt) {
        let dx = x - xc;
        let v = (y - yc) - b0 * dx;
        sx[0] += dx;
        sv[0] += v;
        sxx[0] += dx * dx;
        sxv[0] += dx * v;
        svv[0] += v * v;
    }
    let s4 = |a: [f64; 4]| (a[0] + a[1]) + (a[2] + a[3]);
    let nf = n as f64;
    (nf, nf, s4(sx), s4(sv), s4(sxx), s4(sxv), s4(svv), 1.0)
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
        sxx: sxx - cx * cx / s_w,
        sxv: sxv - cx * cv / s_w,
        svv: svv - cv * cv / s_w,
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
        sxx: m[2][0] - cx * cx / s_w,
        sxv: m[1][1] - cx * cv / s_w,
        svv: m[0][2] - cv * cv / s_w,
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
