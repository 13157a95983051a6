//! Linearity check against a quadratic: Mandel's fitting test as ISO 8466-1
//! states it (`DS² = (N − 2)·s₁² − (N − 3)·s₂²`, test value `DS²/s₂²`
//! against `F(1, N − 3)`; Mandel 1964, from memory, NUMERICS.md C5).
//!
//! The quadratic is fitted exactly from a full-tier accumulator, with no
//! stored data: in the accumulator's frame (`dx`, `v`, see
//! [`crate::moments`]) let `u = dx − mean(dx)` and `z = u² − M20/W`. Then
//! `Σuu = M20`, `Σuz = M30`, `Σzz = M40 − M20²/W`, `Σuv = M11`,
//! `Σzv = M21`, and by one step of Gram–Schmidt on `(u, z)`:
//! `SSE₂ = SSE₁ − (Σzv − Σuz·Σuv/Σuu)² / (Σzz − Σuz²/Σuu)`.
//! `v` differs from `y` by a straight line, so the curvature coefficient and
//! both residual sums are those of `y` on `x`. The check therefore streams
//! and merges like the accumulator itself.

use super::CalibError;
use crate::moments::{Full, PairMoments};

/// The straight line against the quadratic from the same moments.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct QuadraticCheck {
    /// Readings `N` (effective count under forgetting).
    pub count: f64,
    /// Residual sum of squares of the straight line, `(N − 2)·s₁²`.
    pub sse_line: f64,
    /// Residual sum of squares of the quadratic, `(N − 3)·s₂²`.
    pub sse_quadratic: f64,
    /// Residual SD of the straight line `s₁`.
    pub sd_line: f64,
    /// Residual SD of the quadratic `s₂`.
    pub sd_quadratic: f64,
    /// Coefficient of `x²` in the quadratic.
    pub curvature: f64,
    /// Standard error of the curvature coefficient.
    pub curvature_se: f64,
    /// `DS² = SSE_line − SSE_quadratic`.
    pub ds2: f64,
    /// Mandel's test value `DS²/s₂²`, on `(1, N − 3)` degrees of freedom.
    pub test_value: f64,
}

impl QuadraticCheck {
    /// Denominator degrees of freedom `N − 3`.
    pub fn df_quadratic(&self) -> f64 {
        self.count - 3.0
    }

    /// Upper-tail p value of the test value on `F(1, N − 3)`.
    #[cfg(feature = "std")]
    pub fn p_value(&self) -> f64 {
        let p = crate::dist::f_upper(self.test_value, 1.0, self.df_quadratic());
        if p.is_nan() {
            1.0
        } else {
            p
        }
    }

    /// Critical value `F(level; 1, N − 3)`; ISO 8466-1 uses `level = 0.99`.
    ///
    /// # Errors
    /// [`CalibError::InvalidLevel`].
    #[cfg(feature = "std")]
    pub fn critical_value(&self, level: f64) -> Result<f64, CalibError> {
        super::check_level(level)?;
        Ok(crate::dist::f_quantile(level, 1.0, self.df_quadratic()))
    }
}

impl PairMoments<Full> {
    /// Fits the straight line and the quadratic from the accumulated
    /// moments and computes Mandel's test value.
    ///
    /// # Errors
    /// [`CalibError::TooFewPoints`] below 4 readings;
    /// [`CalibError::NoSpread`]; [`CalibError::NoCurvatureSpread`] with
    /// fewer than three distinct `x`; [`CalibError::ZeroResidual`] when the
    /// quadratic fits exactly; [`CalibError::Overflow`].
    pub fn quadratic_check(&self) -> Result<QuadraticCheck, CalibError> {
        let f = self.flushed()?;
        let n = if f.forgotten {
            if f.w2 > 0.0 {
                f.w * f.w / f.w2
            } else {
                0.0
            }
        } else {
            f.count as f64
        };
        if f.count < 4 || !(n > 3.0) {
            return Err(CalibError::TooFewPoints {
                needed: 4,
                have: f.count,
            });
        }
        if !(f.sxx > 0.0) {
            return Err(CalibError::NoSpread);
        }
        let suu = f.sxx;
        let suv = f.sxv;
        let svv = f.svv;
        let suz = f.hi.m[3][0];
        let szz = f.hi.m[4][0] - suu * suu / f.w;
        let szv = f.hi.m[2][1];
        let sse1 = (svv - suv * suv / suu).max(0.0);
        let zz = szz - suz * suz / suu;
        // Three distinct x give zz > 0; the relative floor catches the
        // rounding residue of two distinct x (zz is then 0 in exact terms).
        if !(zz > 1e-12 * libm::fabs(szz)) || !(zz > 0.0) {
            return Err(CalibError::NoCurvatureSpread);
        }
        let zv = szv - suz * suv / suu;
        let curvature = zv / zz;
        let drop = zv * curvature;
        let sse2 = (sse1 - drop).max(0.0);
        if !(sse2 > 0.0) {
            return Err(CalibError::ZeroResidual);
        }
        let s2_sq = sse2 / (n - 3.0);
        // DS² = SSE₁ − SSE₂ is exactly the drop: taken directly, no cancellation.
        let ds2 = drop;
        let out = QuadraticCheck {
            count: n,
            sse_line: sse1,
            sse_quadratic: sse2,
            sd_line: libm::sqrt(sse1 / (n - 2.0)),
            sd_quadratic: libm::sqrt(s2_sq),
            curvature,
            curvature_se: libm::sqrt(s2_sq / zz),
            ds2,
            test_value: ds2 / s2_sq,
        };
        let all = [
            out.sse_line,
            out.sse_quadratic,
            out.curvature,
            out.test_value,
        ];
        if all.iter().any(|v| !v.is_finite()) {
            return Err(CalibError::Overflow);
        }
        Ok(out)
    }
}
