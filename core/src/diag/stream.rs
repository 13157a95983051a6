//! Diagnostics from the full-tier accumulator alone.

use super::serial::{self, EXACT_SERIAL_MAX_N};
use super::{normal, shape_from_sums, DiagError, SerialCheck, SerialMethod, StreamChecks};
use crate::moments::FullMoments;

/// Residual shape, normality, spread and serial-correlation checks of the
/// full-sample line fit, from the accumulator alone (no stored data).
///
/// Exact for the fit of all pairs: every statistic is a polynomial in the
/// slope and the centred co-moments held by the accumulator, evaluated in
/// its frame (see the [module docs](super)). Pushing, extending and merging
/// give the same result to rounding. Durbin–Watson gets p value *bounds*
/// (the accumulator keeps no x values); see [`SerialMethod`].
///
/// # Errors
/// [`DiagError::Weighted`] or [`DiagError::Forgotten`] for weighted or aged
/// accumulators; [`DiagError::TooFewPoints`] below 3 pairs;
/// [`DiagError::NoSpread`]; [`DiagError::ZeroResidualVariance`] for an exact
/// fit; [`DiagError::Overflow`]; [`DiagError::NoConvergence`] if a p value
/// integration fails.
///
/// # Example
/// ```
/// use plumbfit::{diag, FullMoments};
/// let mut acc = FullMoments::new();
/// let x: Vec<f64> = (0..40).map(f64::from).collect();
/// let y: Vec<f64> = x.iter().map(|v| 2.0 + 0.5 * v + (v * 1.7).sin()).collect();
/// acc.extend(&x, &y).unwrap();
/// let checks = diag::stream_checks(&acc).unwrap();
/// assert!(checks.shape.residual_mean.abs() < 1e-12);
/// assert!(checks.serial.p_positive_low <= checks.serial.p_positive_high);
/// // Weighted data are refused, not given a misleading statistic.
/// acc.push_weighted(1.0, 2.0, 3.0).unwrap();
/// assert_eq!(diag::stream_checks(&acc), Err(diag::DiagError::Weighted));
/// ```
pub fn stream_checks(acc: &FullMoments) -> Result<StreamChecks, DiagError> {
    let mut out = stream_statistics(acc)?;
    let s = out.serial;
    out.serial = stream_serial(s.count, s.durbin_watson, s.lag1_autocorrelation)?;
    Ok(out)
}

/// The statistics of [`stream_checks`] without the Durbin–Watson p value
/// bounds (constant time, no allocation: for checking after every reading).
/// `serial.method` is [`SerialMethod::Unavailable`] and the p value range
/// is `[0, 1]`; every other field equals [`stream_checks`]'s.
///
/// # Errors
/// As [`stream_checks`], except [`DiagError::NoConvergence`].
pub fn stream_statistics(acc: &FullMoments) -> Result<StreamChecks, DiagError> {
    if acc.is_weighted() {
        return Err(DiagError::Weighted);
    }
    if acc.is_forgotten() {
        return Err(DiagError::Forgotten);
    }
    let f = acc.flushed()?;
    let n = f.count;
    if n < 3 {
        return Err(DiagError::TooFewPoints { needed: 3, have: n });
    }
    if !(f.sxx > 0.0) {
        return Err(DiagError::NoSpread);
    }
    let h = &f.hi;
    let m = &h.m;
    // e = (v − v̄) − d·(dx − dx̄): residual power sums from the frame's
    // centred co-moments m[p][q] = Σ(dx − dx̄)^p (v − v̄)^q (NUMERICS A4).
    let d = f.sxv / f.sxx;
    let (d2, d3, d4) = (d * d, d * d * d, d * d * d * d);
    let s2 = (f.svv - d * f.sxv).max(0.0);
    let s3 = m[0][3] - 3.0 * d * m[1][2] + 3.0 * d2 * m[2][1] - d3 * m[3][0];
    let s4 = m[0][4] - 4.0 * d * m[1][3] + 6.0 * d2 * m[2][2] - 4.0 * d3 * m[3][1] + d4 * m[4][0];
    let s2dx = m[1][2] - 2.0 * d * m[2][1] + d2 * m[3][0];
    // Σe = Σ(v − v̄) − d·Σ(dx − dx̄): the accumulator's moments are centred,
    // so both first moments, and with them the residual mean, are exactly 0.
    let mean = 0.0;
    let shape = shape_from_sums(n, mean, s2, s3, s4.max(0.0), s2dx, f.sxx)?;

    // Durbin–Watson from the lag-1 sums in the b0 frame: Δe = Δv − d·Δx.
    let [lxx, lxv, lvv] = h.lag;
    let sdiff = (lvv - 2.0 * d * lxv + d2 * lxx).max(0.0);
    let dw = sdiff / s2;
    // Σeₜeₜ₋₁ = (2Σe² − e₁² − eₙ² − Σ(Δe)²)/2, with the end residuals from
    // the stored first and last pairs.
    let resid = |(x, y): (f64, f64)| -> f64 {
        let dx = x - f.x0;
        let v = (y - f.y0) - f.b0 * dx;
        (v - f.mv) - d * (dx - f.mx)
    };
    let (e1, en) = (resid(h.first), resid(h.last));
    let lag1 = (2.0 * s2 - e1 * e1 - en * en - sdiff) / (2.0 * s2);
    if !(dw.is_finite() && lag1.is_finite()) {
        return Err(DiagError::Overflow);
    }
    let serial = SerialCheck {
        count: n,
        durbin_watson: dw,
        lag1_autocorrelation: lag1,
        p_positive_low: 0.0,
        p_positive_high: 1.0,
        method: SerialMethod::Unavailable,
    };
    Ok(StreamChecks { shape, serial })
}

/// Bounds on the Durbin–Watson p value from the bounding eigenvalues.
fn stream_serial(n: u64, dw: f64, lag1: f64) -> Result<SerialCheck, DiagError> {
    let mut out = SerialCheck {
        count: n,
        durbin_watson: dw,
        lag1_autocorrelation: lag1,
        p_positive_low: 0.0,
        p_positive_high: 1.0,
        method: SerialMethod::Unavailable,
    };
    if n < 4 {
        return Ok(out);
    }
    let nn = n as usize;
    if nn <= EXACT_SERIAL_MAX_N {
        // P(d_U ≤ d) ≤ P(d ≤ d) ≤ P(d_L ≤ d), since d_L ≤ d ≤ d_U.
        let low = serial::imhof_lower(&serial::bound_eigenvalues(nn, true), dw)
            .ok_or(DiagError::NoConvergence)?;
        let high = serial::imhof_lower(&serial::bound_eigenvalues(nn, false), dw)
            .ok_or(DiagError::NoConvergence)?;
        out.p_positive_low = low.min(high);
        out.p_positive_high = high.max(low);
        out.method = SerialMethod::ExactBounds;
    } else {
        let m = (n - 2) as f64;
        let p = |upper: bool| {
            let (s, s2) = serial::bound_moments(nn, upper);
            let (mean, var) = serial::ratio_moments(s, s2, m);
            normal::cdf((dw - mean) / libm::sqrt(var))
        };
        let (low, high) = (p(true), p(false));
        out.p_positive_low = low.min(high);
        out.p_positive_high = high.max(low);
        out.method = SerialMethod::NormalBounds;
    }
    Ok(out)
}
