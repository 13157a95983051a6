//! Calibration results (inverse prediction, detection limits, lack of fit,
//! linearity) as thin wrappers over `plumbfit::calib`.

use crate::arrays::{self, Vector};
use crate::errors::{raise, Failure, Kind};
use crate::line::{Acc, LineAccumulator, LineFit};
use plumbfit::calib::{
    self, CalibError, FiellerSet, InverseEstimate, LackOfFit, LevelSet, Reading, SigmaSource,
};
use pyo3::prelude::*;
use pyo3::types::{PyBytes, PyDict};

impl From<CalibError> for Failure {
    fn from(e: CalibError) -> Self {
        let code = e.code();
        let msg = e.to_string();
        let (kind, index) = match e {
            CalibError::NonFinite { index } => (Kind::NonFinite, Some(index)),
            CalibError::InvalidWeight { index } => (Kind::InvalidWeight, Some(index)),
            CalibError::VarianceUndefined { index } => (Kind::InvalidInput, Some(index)),
            CalibError::LengthMismatch { .. } | CalibError::CountMismatch { .. } => {
                (Kind::LengthMismatch, None)
            }
            CalibError::EmptyInput => (Kind::EmptyInput, None),
            CalibError::Overflow => (Kind::StateOverflow, None),
            CalibError::TooFewPoints { .. } | CalibError::TooFewLevels { .. } => {
                (Kind::TooFewPoints, None)
            }
            CalibError::NoSpread => (Kind::NoSpread, None),
            _ if code < 100 => (Kind::InvalidInput, None),
            _ => (Kind::Numerical, None),
        };
        Failure::new(kind, code, msg, index)
    }
}

record! {
    /// Inverse prediction x̂₀ = (ȳ₀ − a)/b of a reading, with its
    /// delta-method standard error and (from `invert_interval`) the exact
    /// Fieller confidence set.
    InverseResult {
        x: f64 => "Estimated x behind the reading.",
        se: f64 => "Delta-method standard error of x.",
        level: Option<f64> => "Confidence level (None from `invert`).",
        kind: String => "Fieller set: 'bounded', 'two_half_lines', 'whole_line', or 'none' from `invert`.",
        lower: Option<f64> => "Lower end of a bounded set, or upper end of the lower half-line.",
        upper: Option<f64> => "Upper end of a bounded set, or lower end of the upper half-line.",
        approx_lower: Option<f64> => "x − t·se (symmetric delta-method interval).",
        approx_upper: Option<f64> => "x + t·se.",
        t: Option<f64> => "t (or normal) quantile used.",
        g: Option<f64> => "Fieller g = t²s²/(b²Sxx); the set is bounded when g < 1.",
    }
}

record! {
    /// A calibrated value with its standard uncertainty (coefficient
    /// covariance and the reading's own uncertainty propagated).
    CalibratedValue {
        x: f64 => "Calibrated value.",
        u: f64 => "Standard uncertainty.",
    }
}

record! {
    /// Detection and quantitation limits 3.3·σ/|S| and 10·σ/|S|.
    SigmaLimits {
        source: String => "Where σ came from: 'residual_sd', 'intercept_se' or 'given'.",
        sigma: f64 => "σ used, in y units.",
        slope: f64 => "Slope S used.",
        detection: f64 => "Detection limit, in x units.",
        quantitation: f64 => "Quantitation limit, in x units.",
    }
}

record! {
    /// Decision level, decision limit and detection limit from the
    /// prediction band (Hubaux & Vos).
    DecisionLimits {
        alpha: f64 => "False-positive probability for a blank.",
        beta: f64 => "False-negative probability at the detection limit.",
        y_critical: f64 => "Decision level in y units.",
        x_critical: f64 => "Decision limit in x units.",
        x_detection: f64 => "Detection limit in x units.",
    }
}

record! {
    /// Lack-of-fit F test from replicated levels.
    LackOfFitTest {
        count: u64 => "Readings.",
        levels: usize => "Distinct x levels.",
        params: usize => "Parameters of the tested model.",
        ss_lack_of_fit: f64 => "Lack-of-fit sum of squares.",
        df_lack_of_fit: u64 => "Its degrees of freedom.",
        ss_pure_error: f64 => "Pure-error sum of squares.",
        df_pure_error: u64 => "Its degrees of freedom.",
        f_stat: f64 => "F statistic.",
        p_value: f64 => "Upper-tail p value.",
    }
}

record! {
    /// Mandel's fitting test of the straight line against a quadratic.
    QuadraticCheck {
        count: f64 => "Points (effective under forgetting).",
        sse_line: f64 => "Residual SS of the line.",
        sse_quadratic: f64 => "Residual SS of the quadratic.",
        sd_line: f64 => "Residual SD of the line.",
        sd_quadratic: f64 => "Residual SD of the quadratic.",
        curvature: f64 => "Quadratic coefficient.",
        curvature_se: f64 => "Its standard error.",
        ds2: f64 => "Difference of the residual variances' numerators.",
        test_value: f64 => "Test statistic (F on 1 and n − 3 df).",
        p_value: f64 => "Upper-tail p value.",
    }
}

fn reading(value: f64, replicates: u32, weight: f64) -> Reading {
    Reading::mean_of(value, replicates).with_weight(weight)
}

fn inverse_plain(e: InverseEstimate) -> InverseResult {
    InverseResult {
        x: e.x,
        se: e.se,
        level: None,
        kind: "none".into(),
        lower: None,
        upper: None,
        approx_lower: None,
        approx_upper: None,
        t: None,
        g: None,
    }
}

#[pymethods]
impl LineFit {
    /// The x behind a reading (or the mean of `replicates` readings, each
    /// of calibration weight `weight`), with its delta-method standard
    /// error.
    #[pyo3(signature = (reading_value, replicates = 1, weight = 1.0))]
    fn invert(&self, reading_value: f64, replicates: u32, weight: f64) -> PyResult<InverseResult> {
        self.inner
            .invert(&reading(reading_value, replicates, weight))
            .map(inverse_plain)
            .map_err(raise)
    }

    /// Inverse prediction with the exact Fieller confidence set at `level`
    /// and the symmetric delta-method interval.
    #[pyo3(signature = (reading_value, replicates = 1, level = 0.95, weight = 1.0))]
    fn invert_interval(
        &self,
        reading_value: f64,
        replicates: u32,
        level: f64,
        weight: f64,
    ) -> PyResult<InverseResult> {
        let r = self
            .inner
            .invert_interval(&reading(reading_value, replicates, weight), level)
            .map_err(raise)?;
        let (kind, lower, upper) = match r.set {
            FiellerSet::Bounded { lower, upper } => ("bounded", Some(lower), Some(upper)),
            FiellerSet::TwoHalfLines { below, above } => {
                ("two_half_lines", Some(below), Some(above))
            }
            _ => ("whole_line", None, None),
        };
        Ok(InverseResult {
            x: r.estimate.x,
            se: r.estimate.se,
            level: Some(r.level),
            kind: kind.into(),
            lower,
            upper,
            approx_lower: Some(r.approx_lower),
            approx_upper: Some(r.approx_upper),
            t: Some(r.t),
            g: Some(r.g),
        })
    }

    /// Calibrated value for a reading `y0` with standard uncertainty `u_y`.
    #[pyo3(signature = (y0, u_y = 0.0))]
    fn calibrated_value(&self, y0: f64, u_y: f64) -> PyResult<CalibratedValue> {
        let c = self.inner.calibrated_value(y0, u_y).map_err(raise)?;
        Ok(CalibratedValue { x: c.x, u: c.u })
    }

    /// Limits 3.3·σ/|S| and 10·σ/|S|, with σ the residual SD
    /// (`sigma="residual_sd"`), the intercept's standard error
    /// (`"intercept_se"`), or a number you measured (blank SD, y units).
    #[pyo3(signature = (sigma = None))]
    fn limits_from_sigma(&self, sigma: Option<&Bound<'_, PyAny>>) -> PyResult<SigmaLimits> {
        let source = match sigma {
            None => SigmaSource::ResidualSd,
            Some(s) => match s.extract::<String>() {
                Ok(name) if name == "residual_sd" => SigmaSource::ResidualSd,
                Ok(name) if name == "intercept_se" => SigmaSource::InterceptSe,
                Ok(name) => {
                    return Err(pyo3::exceptions::PyValueError::new_err(format!(
                        "sigma must be 'residual_sd', 'intercept_se' or a number, not {name:?}"
                    )))
                }
                Err(_) => SigmaSource::Given(s.extract::<f64>()?),
            },
        };
        let l = self.inner.limits_from_sigma(source).map_err(raise)?;
        let source = match l.source {
            SigmaSource::InterceptSe => "intercept_se",
            SigmaSource::Given(_) => "given",
            _ => "residual_sd",
        };
        Ok(SigmaLimits {
            source: source.into(),
            sigma: l.sigma,
            slope: l.slope,
            detection: l.detection,
            quantitation: l.quantitation,
        })
    }

    /// Decision and detection limits from the prediction band for a future
    /// result that is the mean of `replicates` readings.
    #[pyo3(signature = (alpha = 0.05, beta = 0.05, replicates = 1, weight = 1.0))]
    fn decision_limits(
        &self,
        alpha: f64,
        beta: f64,
        replicates: u32,
        weight: f64,
    ) -> PyResult<DecisionLimits> {
        let d = self
            .inner
            .decision_limits(alpha, beta, replicates, weight)
            .map_err(raise)?;
        Ok(DecisionLimits {
            alpha: d.alpha,
            beta: d.beta,
            y_critical: d.y_critical,
            x_critical: d.x_critical,
            x_detection: d.x_detection,
        })
    }
}

#[pymethods]
impl LineAccumulator {
    /// Mandel's test of the line against a quadratic, computed from the
    /// full tier's moments (needs `tier="full"`).
    fn quadratic_check(&self) -> PyResult<QuadraticCheck> {
        let Acc::Full(a) = &self.acc else {
            return Err(pyo3::exceptions::PyTypeError::new_err(
                "quadratic_check needs tier='full'",
            ));
        };
        let q = a.quadratic_check().map_err(raise)?;
        Ok(QuadraticCheck {
            count: q.count,
            sse_line: q.sse_line,
            sse_quadratic: q.sse_quadratic,
            sd_line: q.sd_line,
            sd_quadratic: q.sd_quadratic,
            curvature: q.curvature,
            curvature_se: q.curvature_se,
            ds2: q.ds2,
            test_value: q.test_value,
            p_value: q.p_value(),
        })
    }
}

fn lack_of_fit(l: LackOfFit) -> LackOfFitTest {
    LackOfFitTest {
        count: l.count,
        levels: l.levels,
        params: l.params,
        ss_lack_of_fit: l.ss_lack_of_fit,
        df_lack_of_fit: l.df_lack_of_fit,
        ss_pure_error: l.ss_pure_error,
        df_pure_error: l.df_pure_error,
        f_stat: l.f_stat,
        p_value: l.p_value(),
    }
}

/// Readings grouped by exact x level (replicates), streaming and
/// mergeable, for the lack-of-fit test.
#[pyclass(module = "plumbfit", name = "ReplicateLevels", from_py_object)]
#[derive(Clone)]
pub struct ReplicateLevels {
    inner: LevelSet,
}

#[pymethods]
impl ReplicateLevels {
    /// An empty store.
    #[new]
    fn new() -> Self {
        ReplicateLevels {
            inner: LevelSet::new(),
        }
    }

    /// Readings stored.
    #[getter]
    fn count(&self) -> u64 {
        self.inner.count()
    }

    /// Distinct x levels.
    #[getter]
    fn level_count(&self) -> usize {
        self.inner.level_count()
    }

    /// Adds one reading.
    #[pyo3(signature = (x, y, weight = 1.0))]
    fn push(&mut self, x: f64, y: f64, weight: f64) -> PyResult<()> {
        self.inner.push_weighted(x, y, weight).map_err(raise)
    }

    /// Adds readings (array-likes as for `LineAccumulator.extend`).
    #[pyo3(signature = (x, y, weights = None))]
    fn extend(
        &mut self,
        x: &Bound<'_, PyAny>,
        y: &Bound<'_, PyAny>,
        weights: Option<&Bound<'_, PyAny>>,
    ) -> PyResult<()> {
        let xv = arrays::vector(x, "x")?;
        let yv = arrays::vector(y, "y")?;
        let wv: Option<Vector<'_>> = weights.map(|w| arrays::vector(w, "weights")).transpose()?;
        match wv {
            None => self.inner.extend(xv.as_slice()?, yv.as_slice()?),
            Some(w) => self
                .inner
                .extend_weighted(xv.as_slice()?, yv.as_slice()?, w.as_slice()?),
        }
        .map_err(raise)
    }

    /// Folds another store's readings into this one. Raises
    /// `StateOverflowError` (leaving the store unchanged) if a level's sums
    /// would overflow.
    fn merge(&mut self, other: &ReplicateLevels) -> PyResult<()> {
        self.inner.merge(&other.inner).map_err(raise)
    }

    /// Levels as a dict of NumPy arrays: `x, count, weight_sum, mean_y, m2`.
    fn levels<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyDict>> {
        let ls = self.inner.levels();
        let d = PyDict::new(py);
        let col = |f: fn(&calib::Level) -> f64| ls.iter().map(f).collect::<Vec<f64>>();
        d.set_item("x", numpy::PyArray1::from_vec(py, col(|l| l.x)))?;
        d.set_item(
            "count",
            numpy::PyArray1::from_vec(py, ls.iter().map(|l| l.count).collect::<Vec<u64>>()),
        )?;
        d.set_item(
            "weight_sum",
            numpy::PyArray1::from_vec(py, col(|l| l.weight_sum)),
        )?;
        d.set_item("mean_y", numpy::PyArray1::from_vec(py, col(|l| l.mean_y)))?;
        d.set_item("m2", numpy::PyArray1::from_vec(py, col(|l| l.m2)))?;
        Ok(d)
    }

    /// Lack-of-fit F test of a straight line fitted to the same readings.
    fn lack_of_fit(&self, fit: &LineFit) -> PyResult<LackOfFitTest> {
        self.inner
            .lack_of_fit_line(&fit.inner)
            .map(lack_of_fit)
            .map_err(raise)
    }

    /// Lack-of-fit F test of a polynomial (coefficients lowest power first,
    /// e.g. `ModelFit.coefficients` of a polynomial fit).
    fn lack_of_fit_polynomial(&self, coefficients: &Bound<'_, PyAny>) -> PyResult<LackOfFitTest> {
        let c = arrays::vector(coefficients, "coefficients")?;
        self.inner
            .lack_of_fit_poly(c.as_slice()?)
            .map(lack_of_fit)
            .map_err(raise)
    }

    /// The store in the persisted state format (the same bytes the C and
    /// Rust doors write for the same readings). Raises `StateFormatError`
    /// for a store of more than 62 levels, the format's cap.
    fn to_bytes<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyBytes>> {
        let v = self.inner.save_to_vec().map_err(raise)?;
        Ok(crate::persist::bytes(py, &v))
    }

    /// Rebuilds a store from `to_bytes()` output or any other door's saved
    /// level state. Raises `StateFormatError` for bytes that are not a
    /// valid level state.
    #[staticmethod]
    pub(crate) fn from_bytes(data: &[u8]) -> PyResult<Self> {
        Ok(ReplicateLevels {
            inner: LevelSet::restore(data).map_err(raise)?,
        })
    }

    /// Pickles through the persisted state format.
    #[allow(clippy::type_complexity)]
    fn __reduce__<'py>(
        slf: &Bound<'py, Self>,
    ) -> PyResult<(Bound<'py, PyAny>, (Bound<'py, PyBytes>,))> {
        let py = slf.py();
        let ctor = slf.get_type().getattr("from_bytes")?;
        Ok((ctor, (slf.borrow().to_bytes(py)?,)))
    }

    fn __repr__(&self) -> String {
        format!(
            "ReplicateLevels(count={}, levels={})",
            self.inner.count(),
            self.inner.level_count()
        )
    }
}
