//! Residual diagnostics as thin wrappers over `plumbfit::diag`: from the
//! full-tier accumulator alone, and from retained data.

use crate::arrays;
use crate::errors::{raise, Failure, Kind};
use crate::line::{Acc, LineAccumulator, LineFit};
use numpy::{PyArray1, PyArrayMethods};
use plumbfit::diag::{self, DiagError, ResidualSet, ResidualShape, SerialCheck, SerialMethod};
use pyo3::exceptions::PyTypeError;
use pyo3::prelude::*;
use pyo3::types::PyDict;

impl From<DiagError> for Failure {
    fn from(e: DiagError) -> Self {
        let code = e.code();
        let msg = e.to_string();
        let (kind, index) = match e {
            DiagError::NonFinite { index } => (Kind::NonFinite, Some(index)),
            DiagError::LengthMismatch { .. } | DiagError::FitMismatch { .. } => {
                (Kind::LengthMismatch, None)
            }
            DiagError::EmptyInput => (Kind::EmptyInput, None),
            DiagError::Overflow => (Kind::StateOverflow, None),
            DiagError::TooFewPoints { .. } => (Kind::TooFewPoints, None),
            DiagError::NoSpread => (Kind::NoSpread, None),
            _ if code < 100 => (Kind::InvalidInput, None),
            _ => (Kind::Numerical, None),
        };
        Failure::new(kind, code, msg, index)
    }
}

record! {
    /// Residual shape, normality and spread statistics, and serial
    /// correlation (Durbin–Watson) of a straight-line fit.
    ResidualChecks {
        count: u64 => "Points.",
        residual_mean: f64 => "Mean residual (0 with an intercept, to rounding).",
        sum_sq: f64 => "Σe².",
        sum_cube: f64 => "Σe³.",
        sum_fourth: f64 => "Σe⁴.",
        sum_sq_dx: f64 => "Σe²·(x − x̄).",
        skewness: f64 => "Skewness m₃/m₂^1.5 (divisor n).",
        kurtosis: f64 => "Kurtosis m₄/m₂² (3 for normal data).",
        jarque_bera: f64 => "Jarque–Bera statistic.",
        jarque_bera_p: f64 => "Its asymptotic χ²(2) p value.",
        spread_lm: f64 => "Breusch–Pagan LM statistic for variance changing with x.",
        spread_lm_p: f64 => "Its χ²(1) p value.",
        spread_lm_studentized: f64 => "Koenker's studentized form (robust to non-normal errors).",
        spread_lm_studentized_p: f64 => "Its χ²(1) p value.",
        durbin_watson: f64 => "Durbin–Watson statistic (2 without serial correlation).",
        lag1_autocorrelation: f64 => "Lag-1 autocorrelation of the residuals.",
        p_positive_low: f64 => "Lower end of the p value for positive autocorrelation.",
        p_positive_high: f64 => "Upper end (use for a conservative test).",
        serial_method: String => "'exact', 'normal', 'exact_bounds', 'normal_bounds' or 'unavailable'.",
    }
}

record! {
    /// Shapiro–Wilk normality test.
    ShapiroWilkTest {
        count: u64 => "Sample size.",
        w: f64 => "W statistic.",
        p_value: f64 => "p value.",
    }
}

record! {
    /// Anderson–Darling normality test (mean and variance estimated).
    AndersonDarlingTest {
        count: u64 => "Sample size.",
        a2: f64 => "A² statistic.",
        a2_modified: f64 => "A² with the small-sample correction.",
        p_value: f64 => "p value.",
    }
}

fn method_name(m: SerialMethod) -> &'static str {
    match m {
        SerialMethod::Exact => "exact",
        SerialMethod::Normal => "normal",
        SerialMethod::ExactBounds => "exact_bounds",
        SerialMethod::NormalBounds => "normal_bounds",
        _ => "unavailable",
    }
}

fn checks(s: &ResidualShape, r: &SerialCheck) -> ResidualChecks {
    ResidualChecks {
        count: s.count,
        residual_mean: s.residual_mean,
        sum_sq: s.sum_sq,
        sum_cube: s.sum_cube,
        sum_fourth: s.sum_fourth,
        sum_sq_dx: s.sum_sq_dx,
        skewness: s.skewness,
        kurtosis: s.kurtosis,
        jarque_bera: s.jarque_bera,
        jarque_bera_p: s.jarque_bera_p,
        spread_lm: s.spread_lm,
        spread_lm_p: s.spread_lm_p,
        spread_lm_studentized: s.spread_lm_studentized,
        spread_lm_studentized_p: s.spread_lm_studentized_p,
        durbin_watson: r.durbin_watson,
        lag1_autocorrelation: r.lag1_autocorrelation,
        p_positive_low: r.p_positive_low,
        p_positive_high: r.p_positive_high,
        serial_method: method_name(r.method).into(),
    }
}

#[pymethods]
impl LineAccumulator {
    /// Residual diagnostics of the line fit from the full tier's moments
    /// alone (no stored data): shape, Jarque–Bera, Breusch–Pagan, and
    /// Durbin–Watson with p value bounds. Unweighted, unforgotten data only.
    fn residual_checks(&self) -> PyResult<ResidualChecks> {
        let Acc::Full(a) = &self.acc else {
            return Err(PyTypeError::new_err("residual_checks needs tier='full'"));
        };
        let c = diag::stream_checks(a).map_err(raise)?;
        Ok(checks(&c.shape, &c.serial))
    }
}

/// Residuals of a line fit over data you kept, for influence measures,
/// normality tests and residual plots.
#[pyclass(module = "plumbfit", name = "RetainedResiduals", frozen)]
pub struct RetainedResiduals {
    inner: ResidualSet,
}

fn array<'py>(py: Python<'py>, v: Vec<f64>) -> Bound<'py, PyArray1<f64>> {
    PyArray1::from_vec(py, v)
}

fn pairs<'py>(py: Python<'py>, v: Vec<[f64; 2]>) -> PyResult<Bound<'py, PyAny>> {
    let n = v.len();
    let flat: Vec<f64> = v.into_iter().flatten().collect();
    Ok(PyArray1::from_vec(py, flat).reshape([n, 2])?.into_any())
}

#[pymethods]
impl RetainedResiduals {
    /// Residuals of `fit` (fitted to exactly these pairs) at `x`, `y`.
    #[new]
    fn new(x: &Bound<'_, PyAny>, y: &Bound<'_, PyAny>, fit: &LineFit) -> PyResult<Self> {
        let xv = arrays::vector(x, "x")?;
        let yv = arrays::vector(y, "y")?;
        Ok(RetainedResiduals {
            inner: ResidualSet::new(xv.as_slice()?, yv.as_slice()?, &fit.inner).map_err(raise)?,
        })
    }

    fn __len__(&self) -> usize {
        self.inner.count()
    }

    /// Residuals (NumPy array).
    #[getter]
    fn residuals<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<f64>> {
        PyArray1::from_slice(py, self.inner.residuals())
    }

    /// Fitted values (NumPy array).
    #[getter]
    fn fitted<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<f64>> {
        PyArray1::from_slice(py, self.inner.fitted())
    }

    /// Leverage of every point (NumPy array).
    #[getter]
    fn leverage<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<f64>> {
        array(py, self.inner.leverage())
    }

    /// Shape, spread and serial statistics (exact Durbin–Watson p value).
    fn checks(&self) -> PyResult<ResidualChecks> {
        let s = self.inner.shape().map_err(raise)?;
        let r = self.inner.serial().map_err(raise)?;
        Ok(checks(&s, &r))
    }

    /// Influence measures as a dict of NumPy arrays: `residual, leverage,
    /// studentized, deleted_t, cooks_distance, dffits, flags` (bit flags,
    /// see `INFLUENCE_FLAGS`).
    fn influence<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyDict>> {
        let pts = self.inner.influence().map_err(raise)?;
        let d = PyDict::new(py);
        let col = |f: fn(&diag::PointInfluence) -> f64| pts.iter().map(f).collect::<Vec<f64>>();
        d.set_item("residual", array(py, col(|p| p.residual)))?;
        d.set_item("leverage", array(py, col(|p| p.leverage)))?;
        d.set_item("studentized", array(py, col(|p| p.studentized)))?;
        d.set_item("deleted_t", array(py, col(|p| p.deleted_t)))?;
        d.set_item("cooks_distance", array(py, col(|p| p.cooks_distance)))?;
        d.set_item("dffits", array(py, col(|p| p.dffits)))?;
        d.set_item(
            "flags",
            PyArray1::from_vec(py, pts.iter().map(|p| p.flags).collect::<Vec<u16>>()),
        )?;
        Ok(d)
    }

    /// Shapiro–Wilk test of the residuals.
    fn shapiro_wilk(&self) -> PyResult<ShapiroWilkTest> {
        let s = self.inner.shapiro_wilk().map_err(raise)?;
        Ok(ShapiroWilkTest {
            count: s.count,
            w: s.w,
            p_value: s.p_value,
        })
    }

    /// Anderson–Darling test of the residuals.
    fn anderson_darling(&self) -> PyResult<AndersonDarlingTest> {
        let a = self.inner.anderson_darling().map_err(raise)?;
        Ok(AndersonDarlingTest {
            count: a.count,
            a2: a.a2,
            a2_modified: a.a2_modified,
            p_value: a.p_value,
        })
    }

    /// `(x, residual)` pairs, shape `(n, 2)`, for a residual plot.
    fn versus_x<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyAny>> {
        pairs(py, self.inner.versus_x())
    }

    /// `(fitted, residual)` pairs, shape `(n, 2)`.
    fn versus_fitted<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyAny>> {
        pairs(py, self.inner.versus_fitted())
    }

    /// `(normal quantile, sorted residual)` pairs, shape `(n, 2)`, for a
    /// normal probability plot.
    fn normal_pairs<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyAny>> {
        pairs(py, self.inner.normal_pairs())
    }
}

/// Shapiro–Wilk normality test of a sample.
#[pyfunction]
pub fn shapiro_wilk(sample: &Bound<'_, PyAny>) -> PyResult<ShapiroWilkTest> {
    let v = arrays::vector(sample, "sample")?;
    let s = diag::shapiro_wilk(v.as_slice()?).map_err(raise)?;
    Ok(ShapiroWilkTest {
        count: s.count,
        w: s.w,
        p_value: s.p_value,
    })
}

/// Anderson–Darling normality test of a sample.
#[pyfunction]
pub fn anderson_darling(sample: &Bound<'_, PyAny>) -> PyResult<AndersonDarlingTest> {
    let v = arrays::vector(sample, "sample")?;
    let a = diag::anderson_darling(v.as_slice()?).map_err(raise)?;
    Ok(AndersonDarlingTest {
        count: a.count,
        a2: a.a2,
        a2_modified: a.a2_modified,
        p_value: a.p_value,
    })
}

/// Bit values of `RetainedResiduals.influence()["flags"]`.
pub fn influence_flags<'py>(py: Python<'py>) -> PyResult<Bound<'py, PyDict>> {
    use diag::PointInfluence as P;
    let d = PyDict::new(py);
    for (k, v) in [
        ("high_leverage", P::HIGH_LEVERAGE),
        ("residual_over_2", P::RESIDUAL_OVER_2),
        ("residual_over_3", P::RESIDUAL_OVER_3),
        ("cook_over_4_n", P::COOK_OVER_4_N),
        ("cook_over_1", P::COOK_OVER_1),
        ("dffits_large", P::DFFITS_LARGE),
        ("leverage_one", P::LEVERAGE_ONE),
    ] {
        d.set_item(k, v)?;
    }
    Ok(d)
}
