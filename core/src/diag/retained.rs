//! Diagnostics from retained data: influence, plots, exact serial p value.
//!
//! Residuals are recomputed from the data, not taken as `y − fit.fitted(x)`:
//! a residual formed from a rounded slope carries an error of about
//! `ε·range(y)`, which on a near-perfect fit is most of its digits. Instead
//! `v = (y − y₀) − b·(x − x₀)` is formed with exact products and sums
//! (b the fit's slope), and the small line left in `v` is fitted by two
//! passes, so each residual is accurate to a few units of its own size.

use super::serial::{self, EXACT_SERIAL_MAX_N};
use super::{
    anderson_darling, normal, shape_from_sums, shapiro_wilk, AndersonDarling, DiagError,
    ResidualShape, SerialCheck, SerialMethod, ShapiroWilk,
};
use crate::dd::{two_prod, two_sum};
use crate::model::ModelFit;
use crate::LineFit;
use alloc::vec::Vec;

/// The fit re-expressed about the first pair (internal).
#[derive(Clone, Copy, Debug)]
struct Refit {
    n: usize,
    x0: f64,
    y0: f64,
    b0: f64,
    mdx: f64,
    mv: f64,
    d: f64,
    sxx: f64,
}

impl Refit {
    fn check(xs: &[f64], ys: &[f64], fit: &LineFit) -> Result<(), DiagError> {
        if xs.len() != ys.len() {
            return Err(DiagError::LengthMismatch {
                x_len: xs.len(),
                other_len: ys.len(),
            });
        }
        if xs.is_empty() {
            return Err(DiagError::EmptyInput);
        }
        for (i, (x, y)) in xs.iter().zip(ys).enumerate() {
            if !(x.is_finite() && y.is_finite()) {
                return Err(DiagError::NonFinite { index: i });
            }
        }
        if fit.through_origin {
            return Err(DiagError::ThroughOrigin);
        }
        if fit.approximate {
            return Err(DiagError::Forgotten);
        }
        if fit.count != xs.len() as u64 {
            return Err(DiagError::FitMismatch {
                fit_count: fit.count,
                data_len: xs.len(),
            });
        }
        let n = xs.len() as f64;
        if fit.weight_sum != n || (fit.effective_count - n).abs() > 1e-9 * n {
            return Err(DiagError::Weighted);
        }
        Ok(())
    }

    fn new(xs: &[f64], ys: &[f64], fit: &LineFit, min: usize) -> Result<Self, DiagError> {
        Self::check(xs, ys, fit)?;
        let n = xs.len();
        if n < min {
            return Err(DiagError::TooFewPoints {
                needed: min as u64,
                have: n as u64,
            });
        }
        let mut r = Refit {
            n,
            x0: xs[0],
            y0: ys[0],
            b0: fit.slope,
            mdx: 0.0,
            mv: 0.0,
            d: 0.0,
            sxx: 0.0,
        };
        let nf = n as f64;
        let (mut sdx, mut sv) = (0.0, 0.0);
        for (&x, &y) in xs.iter().zip(ys) {
            sdx += r.dx(x);
            sv += r.v(x, y);
        }
        let (mut mdx, mut mv) = (sdx / nf, sv / nf);
        // One correction pass removes the rounding of the first means.
        let (mut cdx, mut cv) = (0.0, 0.0);
        for (&x, &y) in xs.iter().zip(ys) {
            cdx += r.dx(x) - mdx;
            cv += r.v(x, y) - mv;
        }
        mdx += cdx / nf;
        mv += cv / nf;
        r.mdx = mdx;
        r.mv = mv;
        let (mut sxx, mut sxv) = (0.0, 0.0);
        for (&x, &y) in xs.iter().zip(ys) {
            let c = r.dx(x) - mdx;
            sxx += c * c;
            sxv += c * (r.v(x, y) - mv);
        }
        if !(sxx > 0.0) {
            return Err(DiagError::NoSpread);
        }
        r.sxx = sxx;
        r.d = sxv / sxx;
        if !(r.d.is_finite() && mv.is_finite() && sxx.is_finite()) {
            return Err(DiagError::Overflow);
        }
        Ok(r)
    }

    #[inline]
    fn dx(&self, x: f64) -> f64 {
        x - self.x0
    }

    /// `v = (y − y₀) − b₀·(x − x₀)` with every step exact but the last.
    #[inline]
    fn v(&self, x: f64, y: f64) -> f64 {
        let (dx, dxe) = two_sum(x, -self.x0);
        let (dy, dye) = two_sum(y, -self.y0);
        let (p, pe) = two_prod(self.b0, dx);
        let (s, se) = two_sum(dy, -p);
        s + ((se - pe) + (dye - self.b0 * dxe))
    }

    /// `x − x̄` (accurate to the rounding of `x − x₀`).
    #[inline]
    fn centred(&self, x: f64) -> f64 {
        self.dx(x) - self.mdx
    }

    #[inline]
    fn resid(&self, x: f64, y: f64) -> f64 {
        (self.v(x, y) - self.mv) - self.d * self.centred(x)
    }

    fn sse(&self, xs: &[f64], ys: &[f64]) -> f64 {
        xs.iter()
            .zip(ys)
            .map(|(&x, &y)| {
                let e = self.resid(x, y);
                e * e
            })
            .sum()
    }

    fn leverage(&self, x: f64) -> f64 {
        let c = self.centred(x);
        1.0 / self.n as f64 + c * c / self.sxx
    }
}

fn check_out(needed: usize, have: usize) -> Result<(), DiagError> {
    if have < needed {
        Err(DiagError::OutputTooShort { needed, have })
    } else {
        Ok(())
    }
}

/// Writes the residuals `yᵢ − ŷᵢ` of the full-sample fit into `out`.
///
/// `fit` must be the unweighted fit with intercept of exactly these pairs.
///
/// # Errors
/// [`DiagError::LengthMismatch`], [`DiagError::EmptyInput`],
/// [`DiagError::NonFinite`], [`DiagError::ThroughOrigin`],
/// [`DiagError::Weighted`], [`DiagError::Forgotten`],
/// [`DiagError::FitMismatch`], [`DiagError::NoSpread`],
/// [`DiagError::OutputTooShort`]; `out` is untouched on error.
pub fn residuals_into(
    xs: &[f64],
    ys: &[f64],
    fit: &LineFit,
    out: &mut [f64],
) -> Result<(), DiagError> {
    fill_per_pair(xs, ys, fit, out, |_, _, e| e)
}

/// Refits, checks `out`, and writes `make(x, y, e)` for every pair; `out`
/// is untouched on error.
fn fill_per_pair<O>(
    xs: &[f64],
    ys: &[f64],
    fit: &LineFit,
    out: &mut [O],
    make: impl Fn(f64, f64, f64) -> O,
) -> Result<(), DiagError> {
    let r = Refit::new(xs, ys, fit, 2)?;
    check_out(xs.len(), out.len())?;
    for ((o, &x), &y) in out.iter_mut().zip(xs).zip(ys) {
        *o = make(x, y, r.resid(x, y));
    }
    Ok(())
}

/// Writes the pairs `(xᵢ, eᵢ)` for a residual-against-x plot.
///
/// # Errors
/// As [`residuals_into`].
pub fn versus_x_into(
    xs: &[f64],
    ys: &[f64],
    fit: &LineFit,
    out: &mut [[f64; 2]],
) -> Result<(), DiagError> {
    fill_per_pair(xs, ys, fit, out, |x, _, e| [x, e])
}

/// Writes the pairs `(ŷᵢ, eᵢ)` for a residual-against-fitted plot
/// (`ŷᵢ = yᵢ − eᵢ`).
///
/// # Errors
/// As [`residuals_into`].
pub fn versus_fitted_into(
    xs: &[f64],
    ys: &[f64],
    fit: &LineFit,
    out: &mut [[f64; 2]],
) -> Result<(), DiagError> {
    fill_per_pair(xs, ys, fit, out, |_, y, e| [y - e, e])
}

/// Writes normal quantile pairs `(theoretical quantile, ordered residual)`,
/// ascending, for a normal probability plot. Plotting positions are Blom's
/// `(i − 3/8)/(n + 1/4)` (the same as Shapiro–Wilk's `mᵢ`).
///
/// # Errors
/// As [`residuals_into`].
pub fn normal_pairs_into(
    xs: &[f64],
    ys: &[f64],
    fit: &LineFit,
    out: &mut [[f64; 2]],
) -> Result<(), DiagError> {
    fill_per_pair(xs, ys, fit, out, |_, _, e| [0.0, e])?;
    let n = xs.len();
    let out = &mut out[..n];
    out.sort_unstable_by(|a, b| a[1].total_cmp(&b[1]));
    let an = n as f64 + 0.25;
    for (i, o) in out.iter_mut().enumerate() {
        o[0] = normal::quantile((i as f64 + 1.0 - 0.375) / an);
    }
    Ok(())
}

/// Influence measures of one point, with screening flags.
///
/// Flags use common-practice cut-offs (see the [module docs](super)); a
/// point with leverage 1 has its studentized residuals, Cook's distance and
/// DFFITS set to 0 and [`LEVERAGE_ONE`](Self::LEVERAGE_ONE) set, since they
/// are undefined there (the fit passes through it whatever its y).
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct PointInfluence {
    /// Residual `eᵢ`.
    pub residual: f64,
    /// Leverage `hᵢᵢ` (hat-matrix diagonal).
    pub leverage: f64,
    /// Internally studentized residual `eᵢ / (s·√(1 − hᵢᵢ))`.
    pub studentized: f64,
    /// Externally studentized (deleted) residual `eᵢ / (s₍ᵢ₎·√(1 − hᵢᵢ))`.
    pub deleted_t: f64,
    /// Cook's distance `rᵢ²·hᵢᵢ / (p·(1 − hᵢᵢ))` (Cook 1977).
    pub cooks_distance: f64,
    /// DFFITS `tᵢ·√(hᵢᵢ/(1 − hᵢᵢ))` (Belsley, Kuh & Welsch 1980).
    pub dffits: f64,
    /// Bit set of the `PointInfluence::*` flag constants.
    pub flags: u16,
}

impl PointInfluence {
    /// Leverage above `2p/n`.
    pub const HIGH_LEVERAGE: u16 = 1;
    /// `|deleted_t| > 2`.
    pub const RESIDUAL_OVER_2: u16 = 2;
    /// `|deleted_t| > 3`.
    pub const RESIDUAL_OVER_3: u16 = 4;
    /// Cook's distance above `4/n`.
    pub const COOK_OVER_4_N: u16 = 8;
    /// Cook's distance above 1.
    pub const COOK_OVER_1: u16 = 16;
    /// `|DFFITS| > 2√(p/n)`.
    pub const DFFITS_LARGE: u16 = 32;
    /// Leverage 1 (to rounding): the other measures are undefined and 0.
    pub const LEVERAGE_ONE: u16 = 64;
    /// Deleting the point leaves an exact fit: the deleted residual and
    /// DFFITS are unbounded and reported as 0.
    pub const DELETION_EXACT: u16 = 128;

    /// Whether a flag (or any of several) is set.
    pub fn has(&self, flag: u16) -> bool {
        self.flags & flag != 0
    }
}

/// `1 − h` below this is leverage 1: the hat diagonal is formed from
/// quantities accurate to a few ε, so only a gap of ~1e4 ε means a point
/// the fit does not pass through exactly.
const LEVERAGE_ONE_GAP: f64 = 1e-12;

/// Influence of one point from its residual and leverage.
///
/// `deleted_sse` gives `SSE₍ᵢ₎` when it was computed directly (a point
/// whose removal leaves a nearly exact fit); otherwise it is formed as
/// `SSE − e²/(1 − h)`.
fn point_influence(
    e: f64,
    h: f64,
    sse: f64,
    n: usize,
    p: usize,
    deleted_sse: Option<f64>,
) -> PointInfluence {
    let (nf, pf) = (n as f64, p as f64);
    let mut out = PointInfluence {
        residual: e,
        leverage: h,
        ..PointInfluence::default()
    };
    if h > 2.0 * pf / nf {
        out.flags |= PointInfluence::HIGH_LEVERAGE;
    }
    let gap = 1.0 - h;
    if !(gap > LEVERAGE_ONE_GAP) {
        out.leverage = h.min(1.0);
        out.flags |= PointInfluence::LEVERAGE_ONE;
        return out;
    }
    let s2 = sse / (nf - pf);
    let r = e / libm::sqrt(s2 * gap);
    out.studentized = r;
    out.cooks_distance = r * r * h / (pf * gap);
    let sse_i = deleted_sse.unwrap_or(sse - e * e / gap);
    // A deleted SSE at the rounding level of the residuals (each carries a
    // few ε of the largest) means the other points are exactly collinear.
    let floor = 1e3 * nf * f64::EPSILON * f64::EPSILON * sse;
    if sse_i > floor {
        let s2_i = sse_i / (nf - pf - 1.0);
        let t = e / libm::sqrt(s2_i * gap);
        out.deleted_t = t;
        out.dffits = t * libm::sqrt(h / gap);
    } else {
        out.flags |= PointInfluence::DELETION_EXACT;
    }
    let at = out.deleted_t.abs();
    if at > 2.0 {
        out.flags |= PointInfluence::RESIDUAL_OVER_2;
    }
    if at > 3.0 {
        out.flags |= PointInfluence::RESIDUAL_OVER_3;
    }
    if out.cooks_distance > 4.0 / nf {
        out.flags |= PointInfluence::COOK_OVER_4_N;
    }
    if out.cooks_distance > 1.0 {
        out.flags |= PointInfluence::COOK_OVER_1;
    }
    if out.dffits.abs() > 2.0 * libm::sqrt(pf / nf) {
        out.flags |= PointInfluence::DFFITS_LARGE;
    }
    out
}

/// `SSE₍ᵢ₎` is `SSE − e²/(1 − h)`; below this share of `SSE` the
/// subtraction has lost over half the digits and the deleted fit is
/// recomputed directly.
const DELETED_SSE_RECOMPUTE: f64 = 1e-6;

/// `SSE` of the line through all points but one, from the pairs
/// `(x − x̄, e)` of the other points: the deleted fit differs from the full
/// one by the small line fitted to those residuals, refitted by two passes
/// with its residuals summed directly (no cancellation).
fn deleted_sse_from<I: Iterator<Item = (f64, f64)>>(it: impl Fn() -> I, m: f64) -> f64 {
    let (sc, se) = it().fold((0.0, 0.0), |(a, b), (c, e)| (a + c, b + e));
    let (mc, me) = (sc / m, se / m);
    let (sxx, sxe) = it().fold((0.0, 0.0), |(a, b), (c, e)| {
        (a + (c - mc) * (c - mc), b + (c - mc) * (e - me))
    });
    if !(sxx > 0.0) {
        return 0.0;
    }
    let g = sxe / sxx;
    it().map(|(c, e)| {
        let t = (e - me) - g * (c - mc);
        t * t
    })
    .sum()
}

fn deleted_sse(r: &Refit, xs: &[f64], ys: &[f64], skip: usize) -> f64 {
    let it = || {
        xs.iter()
            .zip(ys)
            .enumerate()
            .filter(move |(i, _)| *i != skip)
            .map(|(_, (&x, &y))| (r.centred(x), r.resid(x, y)))
    };
    deleted_sse_from(it, (xs.len() - 1) as f64)
}

/// Writes the influence measures of every pair into `out` (no allocation).
///
/// Needs `n ≥ 4` (the deleted residual needs a residual degree of freedom
/// after removing a point).
///
/// # Errors
/// As [`residuals_into`], plus [`DiagError::TooFewPoints`] below 4 and
/// [`DiagError::ZeroResidualVariance`] for an exact fit.
pub fn influence_into(
    xs: &[f64],
    ys: &[f64],
    fit: &LineFit,
    out: &mut [PointInfluence],
) -> Result<(), DiagError> {
    let r = Refit::new(xs, ys, fit, 4)?;
    let n = xs.len();
    check_out(n, out.len())?;
    let sse = r.sse(xs, ys);
    if !(sse > 0.0) {
        return Err(DiagError::ZeroResidualVariance);
    }
    for (i, ((o, &x), &y)) in out.iter_mut().zip(xs).zip(ys).enumerate() {
        let e = r.resid(x, y);
        let h = r.leverage(x);
        let gap = 1.0 - h;
        let direct = if gap > LEVERAGE_ONE_GAP && sse - e * e / gap < DELETED_SSE_RECOMPUTE * sse {
            Some(deleted_sse(&r, xs, ys, i))
        } else {
            None
        };
        *o = point_influence(e, h, sse, n, 2, direct);
    }
    Ok(())
}

/// Influence measures for the rows of a model fit (leverage from the
/// model's triangular factor, [`ModelFit::leverage`]).
///
/// `rows` holds the design row-major, `fit.params()` values per row, in the
/// order of `ys`. The fit must be unweighted and without forgetting.
///
/// # Errors
/// [`DiagError::ModelMismatch`] if `rows.len()` is not `ys.len()·p` or the
/// fit has a different row count; [`DiagError::NonFinite`];
/// [`DiagError::Weighted`], [`DiagError::Forgotten`];
/// [`DiagError::TooFewPoints`] below `p + 2` rows;
/// [`DiagError::ZeroResidualVariance`]; [`DiagError::OutputTooShort`].
pub fn model_influence_into(
    rows: &[f64],
    ys: &[f64],
    fit: &ModelFit,
    out: &mut [PointInfluence],
) -> Result<(), DiagError> {
    let p = fit.params();
    let n = ys.len();
    if rows.len() != n * p || fit.rows != n as u64 {
        return Err(DiagError::ModelMismatch { expected: p });
    }
    if fit.forgetting_applied {
        return Err(DiagError::Forgotten);
    }
    if fit.weight_sum != n as f64 {
        return Err(DiagError::Weighted);
    }
    if n < p + 2 {
        return Err(DiagError::TooFewPoints {
            needed: (p + 2) as u64,
            have: n as u64,
        });
    }
    check_out(n, out.len())?;
    if let Some(index) = ys.iter().position(|v| !v.is_finite()) {
        return Err(DiagError::NonFinite { index });
    }
    if fit.exact_fit || !(fit.sse > 0.0) {
        return Err(DiagError::ZeroResidualVariance);
    }
    let map = |e: crate::model::ModelError| match e {
        crate::model::ModelError::NonFinite { .. } => DiagError::NonFinite { index: 0 },
        _ => DiagError::ModelMismatch { expected: p },
    };
    // Validate every row before writing anything.
    for (i, row) in rows.chunks_exact(p).enumerate() {
        if row.iter().any(|v| !v.is_finite()) {
            return Err(DiagError::NonFinite { index: i });
        }
    }
    for (i, row) in rows.chunks_exact(p).enumerate() {
        let e = ys[i] - fit.predict(row).map_err(map)?;
        let h = fit.leverage(row).map_err(map)?;
        out[i] = point_influence(e, h, fit.sse, n, p, None);
    }
    Ok(())
}

/// Allocating form of [`model_influence_into`].
///
/// # Errors
/// As [`model_influence_into`].
pub fn model_influence(
    rows: &[f64],
    ys: &[f64],
    fit: &ModelFit,
) -> Result<Vec<PointInfluence>, DiagError> {
    let mut out = alloc::vec![PointInfluence::default(); ys.len()];
    model_influence_into(rows, ys, fit, &mut out)?;
    Ok(out)
}

/// Residuals of a line fit kept with their x values, for the diagnostics
/// that need the data: influence, Shapiro–Wilk, Anderson–Darling, the
/// exact Durbin–Watson p value and plot data.
///
/// The pairs must be in time order for the serial checks.
#[derive(Clone, Debug, PartialEq)]
pub struct ResidualSet {
    xs: Vec<f64>,
    residuals: Vec<f64>,
    fitted: Vec<f64>,
    centred_x: Vec<f64>,
    sxx: f64,
}

impl ResidualSet {
    /// Recomputes the residuals of `fit` (the unweighted fit with intercept
    /// of exactly these pairs) from the data.
    ///
    /// # Errors
    /// As [`residuals_into`], plus [`DiagError::TooFewPoints`] below 3.
    ///
    /// # Example
    /// ```
    /// use plumbfit::{diag::ResidualSet, FullMoments};
    /// let x = [1.0, 2.0, 3.0, 4.0, 5.0, 6.0];
    /// let y = [2.1, 3.9, 6.2, 7.8, 10.1, 11.9];
    /// let mut acc = FullMoments::new();
    /// acc.extend(&x, &y).unwrap();
    /// let set = ResidualSet::new(&x, &y, &acc.fit().unwrap()).unwrap();
    /// let sw = set.shapiro_wilk().unwrap();
    /// assert!(sw.w > 0.0 && sw.w <= 1.0);
    /// assert!(ResidualSet::new(&x[..5], &y, &acc.fit().unwrap()).is_err());
    /// ```
    pub fn new(xs: &[f64], ys: &[f64], fit: &LineFit) -> Result<Self, DiagError> {
        let r = Refit::new(xs, ys, fit, 3)?;
        let residuals: Vec<f64> = xs.iter().zip(ys).map(|(&x, &y)| r.resid(x, y)).collect();
        let fitted = ys.iter().zip(&residuals).map(|(y, e)| y - e).collect();
        Ok(ResidualSet {
            xs: xs.to_vec(),
            residuals,
            fitted,
            centred_x: xs.iter().map(|&x| r.centred(x)).collect(),
            sxx: r.sxx,
        })
    }

    /// Number of points.
    pub fn count(&self) -> usize {
        self.xs.len()
    }

    /// The residuals, in input order.
    pub fn residuals(&self) -> &[f64] {
        &self.residuals
    }

    /// The fitted values `ŷᵢ = yᵢ − eᵢ`, in input order.
    pub fn fitted(&self) -> &[f64] {
        &self.fitted
    }

    /// Leverage of each point, `1/n + (xᵢ − x̄)²/Sxx`.
    pub fn leverage(&self) -> Vec<f64> {
        let n = self.count() as f64;
        self.centred_x
            .iter()
            .map(|c| 1.0 / n + c * c / self.sxx)
            .collect()
    }

    /// Shape, normality and spread statistics from the residuals directly
    /// (the retained-data counterpart of [`super::stream_checks`]).
    ///
    /// # Errors
    /// [`DiagError::ZeroResidualVariance`] for an exact fit.
    pub fn shape(&self) -> Result<ResidualShape, DiagError> {
        let n = self.count();
        let mean = self.residuals.iter().sum::<f64>() / n as f64;
        let (mut s2, mut s3, mut s4, mut s2dx) = (0.0, 0.0, 0.0, 0.0);
        for (e, c) in self.residuals.iter().zip(&self.centred_x) {
            let e2 = e * e;
            s2 += e2;
            s3 += e2 * e;
            s4 += e2 * e2;
            s2dx += e2 * c;
        }
        shape_from_sums(n as u64, mean, s2, s3, s4, s2dx, self.sxx)
    }

    /// Durbin–Watson statistic, lag-1 autocorrelation and the exact p value
    /// against positive autocorrelation (Imhof over the eigenvalues of
    /// `M·A`; normal approximation with exact moments above
    /// [`EXACT_SERIAL_MAX_N`]). Pairs must be in time order.
    ///
    /// # Errors
    /// [`DiagError::ZeroResidualVariance`]; [`DiagError::NoConvergence`].
    pub fn serial(&self) -> Result<SerialCheck, DiagError> {
        let e = &self.residuals;
        let n = e.len();
        let s2: f64 = e.iter().map(|v| v * v).sum();
        if !(s2 > 0.0) {
            return Err(DiagError::ZeroResidualVariance);
        }
        let (mut sd, mut sl) = (0.0, 0.0);
        for w in e.windows(2) {
            let d = w[1] - w[0];
            sd += d * d;
            sl += w[1] * w[0];
        }
        let dw = sd / s2;
        let mut out = SerialCheck {
            count: n as u64,
            durbin_watson: dw,
            lag1_autocorrelation: sl / s2,
            p_positive_low: 0.0,
            p_positive_high: 1.0,
            method: SerialMethod::Unavailable,
        };
        if n < 4 {
            return Ok(out);
        }
        let p = if n <= EXACT_SERIAL_MAX_N {
            let nu = serial::design_eigenvalues(&self.centred_x);
            out.method = SerialMethod::Exact;
            serial::imhof_lower(&nu, dw).ok_or(DiagError::NoConvergence)?
        } else {
            // Exact moments: Σν = tr(MA) = 2(n − 1) − qᵀAq and
            // Σν² = tr(A²) − 2‖Aq‖² + (qᵀAq)², q the normalised centred x.
            let c = &self.centred_x;
            let norm2 = self.sxx;
            let mut qaq = 0.0;
            for w in c.windows(2) {
                qaq += (w[1] - w[0]) * (w[1] - w[0]);
            }
            qaq /= norm2;
            let mut aq2 =
                (c[0] - c[1]) * (c[0] - c[1]) + (c[n - 1] - c[n - 2]) * (c[n - 1] - c[n - 2]);
            for w in c.windows(3) {
                let t = 2.0 * w[1] - w[0] - w[2];
                aq2 += t * t;
            }
            aq2 /= norm2;
            let nf = n as f64;
            let sum = 2.0 * (nf - 1.0) - qaq;
            let sum_sq = (6.0 * nf - 8.0) - 2.0 * aq2 + qaq * qaq;
            let (mean, var) = serial::ratio_moments(sum, sum_sq, nf - 2.0);
            out.method = SerialMethod::Normal;
            normal::cdf((dw - mean) / libm::sqrt(var))
        };
        out.p_positive_low = p;
        out.p_positive_high = p;
        Ok(out)
    }

    /// Influence measures of every point (see [`influence_into`]).
    ///
    /// # Errors
    /// [`DiagError::TooFewPoints`] below 4; [`DiagError::ZeroResidualVariance`].
    pub fn influence(&self) -> Result<Vec<PointInfluence>, DiagError> {
        let n = self.count();
        if n < 4 {
            return Err(DiagError::TooFewPoints {
                needed: 4,
                have: n as u64,
            });
        }
        let sse: f64 = self.residuals.iter().map(|e| e * e).sum();
        if !(sse > 0.0) {
            return Err(DiagError::ZeroResidualVariance);
        }
        let lev = self.leverage();
        let mut out = Vec::with_capacity(n);
        for (i, (&e, &h)) in self.residuals.iter().zip(&lev).enumerate() {
            let gap = 1.0 - h;
            let direct =
                if gap > LEVERAGE_ONE_GAP && sse - e * e / gap < DELETED_SSE_RECOMPUTE * sse {
                    Some(self.deleted_sse(i))
                } else {
                    None
                };
            out.push(point_influence(e, h, sse, n, 2, direct));
        }
        Ok(out)
    }

    /// `SSE` without point `skip` (see [`deleted_sse_from`]).
    fn deleted_sse(&self, skip: usize) -> f64 {
        let it = || {
            self.centred_x
                .iter()
                .zip(&self.residuals)
                .enumerate()
                .filter(move |(i, _)| *i != skip)
                .map(|(_, (&c, &e))| (c, e))
        };
        deleted_sse_from(it, (self.count() - 1) as f64)
    }

    /// Shapiro–Wilk test of the residuals ([`shapiro_wilk`]).
    ///
    /// # Errors
    /// As [`shapiro_wilk`].
    pub fn shapiro_wilk(&self) -> Result<ShapiroWilk, DiagError> {
        shapiro_wilk(&self.residuals)
    }

    /// Anderson–Darling test of the residuals ([`anderson_darling`]).
    ///
    /// # Errors
    /// As [`anderson_darling`].
    pub fn anderson_darling(&self) -> Result<AndersonDarling, DiagError> {
        anderson_darling(&self.residuals)
    }

    /// Pairs `(xᵢ, eᵢ)` for a residual-against-x plot.
    pub fn versus_x(&self) -> Vec<[f64; 2]> {
        self.xs
            .iter()
            .zip(&self.residuals)
            .map(|(&x, &e)| [x, e])
            .collect()
    }

    /// Pairs `(ŷᵢ, eᵢ)` for a residual-against-fitted plot.
    pub fn versus_fitted(&self) -> Vec<[f64; 2]> {
        self.fitted
            .iter()
            .zip(&self.residuals)
            .map(|(&f, &e)| [f, e])
            .collect()
    }

    /// Normal quantile pairs `(theoretical quantile, ordered residual)`,
    /// ascending, with Blom's plotting positions (see [`normal_pairs_into`]).
    pub fn normal_pairs(&self) -> Vec<[f64; 2]> {
        let mut out: Vec<[f64; 2]> = self.residuals.iter().map(|&e| [0.0, e]).collect();
        out.sort_unstable_by(|a, b| a[1].total_cmp(&b[1]));
        let an = out.len() as f64 + 0.25;
        for (i, o) in out.iter_mut().enumerate() {
            o[0] = normal::quantile((i as f64 + 1.0 - 0.375) / an);
        }
        out
    }
}
