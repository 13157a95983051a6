//! `ModelAccumulator` (the core's streaming least squares for `p`
//! coefficients) and `ModelFit`.

use crate::arrays::{self, Vector};
use crate::errors::{raise, Failure};
use crate::line::{Interval, GIL_RELEASE_PAIRS};
use numpy::{PyArray1, PyArray2, PyArrayMethods, PyUntypedArray, PyUntypedArrayMethods};
use plumbfit::model::{
    self, InterceptMode, ModelError, ModelFit as CoreFit, ModelFitOptions, ModelMoments,
};
use pyo3::exceptions::PyValueError;
use pyo3::prelude::*;
use pyo3::types::{PyBytes, PyDict, PyFloat, PyList};

/// One-pass least-squares accumulator for a linear model with `params`
/// coefficients (multiple or polynomial regression).
#[pyclass(module = "plumbfit", name = "ModelAccumulator", from_py_object)]
#[derive(Clone)]
pub struct ModelAccumulator {
    pub(crate) inner: ModelMoments,
}

fn intercept_mode(s: &str) -> PyResult<InterceptMode> {
    match s {
        "detect" => Ok(InterceptMode::Detect),
        "column0" => Ok(InterceptMode::Column0),
        "none" => Ok(InterceptMode::None),
        other => Err(PyValueError::new_err(format!(
            "intercept must be 'detect', 'column0' or 'none', not {other:?}"
        ))),
    }
}

impl ModelAccumulator {
    fn merged(&mut self, other: &ModelAccumulator) -> PyResult<()> {
        self.inner.merge(&other.inner).map_err(raise)
    }
}

#[pymethods]
impl ModelAccumulator {
    /// An empty accumulator for `params` coefficients (1 to 16).
    #[new]
    fn new(params: usize) -> PyResult<Self> {
        Ok(ModelAccumulator {
            inner: ModelMoments::new(params).map_err(raise)?,
        })
    }

    /// Number of coefficients.
    #[getter]
    fn params(&self) -> usize {
        self.inner.params()
    }

    /// Rows added (not decayed by forgetting).
    #[getter]
    fn count(&self) -> u64 {
        self.inner.count()
    }

    fn __len__(&self) -> usize {
        self.inner.count() as usize
    }

    /// Sum of row weights (decayed by forgetting).
    #[getter]
    fn weight_sum(&self) -> f64 {
        self.inner.weight_sum()
    }

    /// Kish effective number of rows (Σw)²/Σw².
    #[getter]
    fn effective_rows(&self) -> f64 {
        self.inner.effective_rows()
    }

    /// Adds one row of `params` regressor values with response `y`
    /// (streaming use). The row is converted to float64 if needed.
    #[pyo3(signature = (row, y, weight = None))]
    fn push(&mut self, row: &Bound<'_, PyAny>, y: f64, weight: Option<f64>) -> PyResult<()> {
        let r = arrays::vector(row, "row")?;
        let r = r.as_slice()?;
        match weight {
            None => self.inner.push_row(r, y),
            Some(w) => self.inner.push_row_weighted(r, y, w),
        }
        .map_err(raise)
    }

    /// Adds the polynomial row `[1, x, x², …]` (powers formed in
    /// double-double) with response `y`.
    #[pyo3(signature = (x, y, weight = 1.0))]
    fn push_powers(&mut self, x: f64, y: f64, weight: f64) -> PyResult<()> {
        self.inner.push_powers(x, y, weight).map_err(raise)
    }

    /// Adds a block of rows: `rows` is `(n, params)`, `y` is `(n,)`.
    ///
    /// A C-contiguous float64 `rows` matrix and float64 `y` are read in
    /// place; anything else is converted once. Large blocks are processed
    /// with the GIL released. The block is validated before anything is
    /// added; errors name the offending row. `threads` caps the threads
    /// sharing a large block (default: one per core; 1 keeps it on the
    /// calling thread); the state is the same in every bit for any count.
    #[pyo3(signature = (rows, y, weights = None, threads = None))]
    fn extend(
        &mut self,
        py: Python<'_>,
        rows: &Bound<'_, PyAny>,
        y: &Bound<'_, PyAny>,
        weights: Option<&Bound<'_, PyAny>>,
        threads: Option<usize>,
    ) -> PyResult<()> {
        // 0 would mean "one per core" to the core; here that is `None`.
        let threads = match threads {
            Some(0) => {
                return Err(PyValueError::new_err(
                    "threads must be at least 1 (None: one per core)",
                ))
            }
            Some(t) => t,
            None => 0,
        };
        let m = arrays::matrix(rows, "rows")?;
        let shape = m.shape().to_vec();
        if shape[1] != self.inner.params() {
            return Err(raise(ModelError::DimensionMismatch {
                expected: self.inner.params(),
                found: shape[1],
            }));
        }
        let yv = arrays::vector(y, "y")?;
        let wv: Option<Vector<'_>> = weights.map(|w| arrays::vector(w, "weights")).transpose()?;
        let flat = m
            .as_slice()
            .map_err(|e| PyValueError::new_err(format!("rows: {e}")))?;
        let ys = yv.as_slice()?;
        let ws = wv.as_ref().map(|w| w.as_slice()).transpose()?;
        let inner = &mut self.inner;
        let mut work = move || inner.extend_rows_threads(flat, ys, ws, threads);
        let r = if flat.len() >= GIL_RELEASE_PAIRS {
            py.detach(work)
        } else {
            work()
        };
        r.map_err(raise)
    }

    /// Adds polynomial rows `[1, x, …, x^(params−1)]` for every `x[i]`
    /// with response `y[i]` (and weight `weights[i]`). Nothing is added
    /// if any pair is refused.
    #[pyo3(signature = (x, y, weights = None))]
    fn extend_powers(
        &mut self,
        py: Python<'_>,
        x: &Bound<'_, PyAny>,
        y: &Bound<'_, PyAny>,
        weights: Option<&Bound<'_, PyAny>>,
    ) -> PyResult<()> {
        let xv = arrays::vector(x, "x")?;
        let yv = arrays::vector(y, "y")?;
        let wv: Option<Vector<'_>> = weights.map(|w| arrays::vector(w, "weights")).transpose()?;
        let (xs, ys) = (xv.as_slice()?, yv.as_slice()?);
        let ws = wv.as_ref().map(|w| w.as_slice()).transpose()?;
        for len in [Some(ys.len()), ws.map(<[f64]>::len)].into_iter().flatten() {
            if len != xs.len() {
                return Err(raise(ModelError::DimensionMismatch {
                    expected: xs.len(),
                    found: len,
                }));
            }
        }
        if xs.is_empty() {
            // Same refusal as `extend` and the line accumulator (code 4).
            return Err(raise(ModelError::EmptyInput));
        }
        // Work on a copy so that a refused pair leaves the state unchanged.
        let mut t = self.inner.clone();
        let mut work = || -> Result<(), Failure> {
            for i in 0..xs.len() {
                let w = ws.map_or(1.0, |w| w[i]);
                t.push_powers(xs[i], ys[i], w)
                    .map_err(|e| Failure::from(e).at(i))?;
            }
            Ok(())
        };
        let r = if xs.len() >= GIL_RELEASE_PAIRS / 4 {
            py.detach(work)
        } else {
            work()
        };
        r?;
        self.inner = t;
        Ok(())
    }

    /// Multiplies the weight of every row so far by `factor` in (0, 1].
    /// Raises `StateOverflowError` (code 122), the state unchanged, if a
    /// weight would underflow to zero.
    fn forget(&mut self, factor: f64) -> PyResult<()> {
        self.inner.forget(factor).map_err(raise)
    }

    /// Folds `other`'s rows into this accumulator (same `params`).
    fn merge(&mut self, other: &ModelAccumulator) -> PyResult<()> {
        self.merged(other)
    }

    /// A new accumulator holding both operands' rows (`a + b`).
    fn __add__(&self, other: &Bound<'_, PyAny>) -> PyResult<Py<PyAny>> {
        let py = other.py();
        let Ok(other) = other.cast::<ModelAccumulator>() else {
            return Ok(py.NotImplemented());
        };
        let mut out = self.clone();
        out.merged(&other.borrow())?;
        Ok(Py::new(py, out)?.into_any())
    }

    /// In-place merge (`a += b`).
    fn __iadd__(&mut self, other: &ModelAccumulator) -> PyResult<()> {
        self.merged(other)
    }

    /// Solves the least-squares problem. `intercept="detect"` treats
    /// column 0 as the intercept when it is constant and nonzero;
    /// `"column0"` asserts it; `"none"` fits without one (uncentred R²).
    #[pyo3(signature = (*, intercept = "detect"))]
    fn fit(&self, intercept: &str) -> PyResult<ModelFit> {
        let opts = ModelFitOptions::with_intercept(intercept_mode(intercept)?);
        Ok(ModelFit {
            inner: self.inner.fit(&opts).map_err(raise)?,
        })
    }

    /// An independent copy.
    fn copy(&self) -> Self {
        self.clone()
    }

    fn __copy__(&self) -> Self {
        self.clone()
    }

    fn __deepcopy__(&self, _memo: &Bound<'_, PyAny>) -> Self {
        self.clone()
    }

    /// Bit-for-bit equality of the accumulated state.
    fn __eq__(&self, other: &Bound<'_, PyAny>) -> bool {
        match other.cast::<ModelAccumulator>() {
            Ok(o) => self.inner == o.borrow().inner,
            Err(_) => false,
        }
    }

    /// The state in the persisted state format (same bytes as the C and
    /// Rust doors).
    fn to_bytes<'py>(&self, py: Python<'py>) -> Bound<'py, PyBytes> {
        crate::persist::bytes(py, &self.inner.save_to_vec())
    }

    /// Rebuilds an accumulator from saved state; `StateFormatError` for
    /// bytes that are not a valid model state.
    #[staticmethod]
    fn from_bytes(data: &[u8]) -> PyResult<Self> {
        Ok(ModelAccumulator {
            inner: crate::persist::model_from_bytes(data)?,
        })
    }

    /// Pickles through the persisted state format.
    fn __reduce__<'py>(
        slf: &Bound<'py, Self>,
    ) -> PyResult<(Bound<'py, PyAny>, (Bound<'py, PyBytes>,))> {
        let py = slf.py();
        let ctor = slf.get_type().getattr("from_bytes")?;
        Ok((ctor, (slf.borrow().to_bytes(py),)))
    }

    fn __repr__(&self) -> String {
        format!(
            "ModelAccumulator(params={}, count={})",
            self.inner.params(),
            self.inner.count()
        )
    }
}

/// Fits a polynomial of `degree` in `x` in one call; coefficient `j`
/// multiplies `x**j`. Powers are formed in double-double, so
/// ill-conditioned designs keep their digits.
#[pyfunction]
pub fn fit_polynomial(
    py: Python<'_>,
    x: &Bound<'_, PyAny>,
    y: &Bound<'_, PyAny>,
    degree: usize,
) -> PyResult<ModelFit> {
    let xv = arrays::vector(x, "x")?;
    let yv = arrays::vector(y, "y")?;
    let (xs, ys) = (xv.as_slice()?, yv.as_slice()?);
    let work = || model::poly_fit(xs, ys, degree);
    let r = if xs.len() >= GIL_RELEASE_PAIRS / 4 {
        py.detach(work)
    } else {
        work()
    };
    Ok(ModelFit {
        inner: r.map_err(raise)?,
    })
}

/// A fitted linear model with its inference (immutable).
#[pyclass(module = "plumbfit", name = "ModelFit", frozen, from_py_object)]
#[derive(Clone)]
pub struct ModelFit {
    inner: CoreFit,
}

/// Rows from a 1-D row (one result, a float) or a 2-D block (an array).
fn per_row<'py>(
    rows: &Bound<'py, PyAny>,
    p: usize,
    f: impl Fn(&[f64]) -> Result<f64, ModelError>,
) -> PyResult<Bound<'py, PyAny>> {
    let py = rows.py();
    let two_d = rows
        .cast::<PyUntypedArray>()
        .map(|a| a.ndim() == 2)
        .unwrap_or(false)
        || rows
            .cast::<PyList>()
            .ok()
            .and_then(|l| l.get_item(0).ok())
            .map(|first| first.cast::<PyList>().is_ok() || first.cast::<PyUntypedArray>().is_ok())
            .unwrap_or(false);
    if !two_d {
        let v = arrays::vector(rows, "row")?;
        let r = f(v.as_slice()?).map_err(raise)?;
        return Ok(PyFloat::new(py, r).into_any());
    }
    let m = arrays::matrix(rows, "rows")?;
    let flat = m
        .as_slice()
        .map_err(|e| PyValueError::new_err(format!("rows: {e}")))?;
    if m.shape()[1] != p {
        return Err(raise(ModelError::DimensionMismatch {
            expected: p,
            found: m.shape()[1],
        }));
    }
    let mut out = Vec::with_capacity(m.shape()[0]);
    for (i, row) in flat.chunks_exact(p).enumerate() {
        out.push(f(row).map_err(|e| PyErr::from(Failure::from(e).at(i)))?);
    }
    Ok(PyArray1::from_vec(py, out).into_any())
}

fn model_interval(i: model::Interval) -> Interval {
    Interval::new(i.estimate, i.std_error, i.lower, i.upper)
}

#[pymethods]
impl ModelFit {
    /// Number of coefficients.
    #[getter]
    fn params(&self) -> usize {
        self.inner.params()
    }

    /// Fitted coefficients (NumPy array; entry j multiplies column j).
    #[getter]
    fn coefficients<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<f64>> {
        PyArray1::from_slice(py, &self.inner.coefficients)
    }

    /// Standard errors of the coefficients (NumPy array).
    #[getter]
    fn std_errors<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<f64>> {
        PyArray1::from_slice(py, &self.inner.std_errors)
    }

    /// Covariance matrix of the coefficients, `(params, params)`.
    #[getter]
    fn covariance<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyArray2<f64>>> {
        let p = self.inner.params();
        PyArray1::from_slice(py, &self.inner.covariance).reshape([p, p])
    }

    /// t statistics of the coefficients, or None for an exact fit.
    #[getter]
    fn t_statistics<'py>(&self, py: Python<'py>) -> Option<Bound<'py, PyArray1<f64>>> {
        self.inner.t_statistics().map(|v| PyArray1::from_vec(py, v))
    }

    /// Two-sided p values of the t statistics, or None for an exact fit.
    #[getter]
    fn p_values<'py>(&self, py: Python<'py>) -> Option<Bound<'py, PyArray1<f64>>> {
        self.inner.p_values().map(|v| PyArray1::from_vec(py, v))
    }

    /// p value of the F statistic, or None without one.
    #[getter]
    fn f_p_value(&self) -> Option<f64> {
        self.inner.f_p_value()
    }

    /// Rows accumulated.
    #[getter]
    fn rows(&self) -> u64 {
        self.inner.rows
    }

    /// Sum of weights (decayed by forgetting).
    #[getter]
    fn weight_sum(&self) -> f64 {
        self.inner.weight_sum
    }

    /// Kish effective number of rows.
    #[getter]
    fn effective_rows(&self) -> f64 {
        self.inner.effective_rows
    }

    /// Column 0 was treated as the intercept.
    #[getter]
    fn has_intercept(&self) -> bool {
        self.inner.has_intercept
    }

    /// The residual sum of squares is zero to working precision.
    #[getter]
    fn exact_fit(&self) -> bool {
        self.inner.exact_fit
    }

    /// Forgetting was applied; inference is approximate.
    #[getter]
    fn forgetting_applied(&self) -> bool {
        self.inner.forgetting_applied
    }

    /// Residual (weighted) sum of squares.
    #[getter]
    fn sse(&self) -> f64 {
        self.inner.sse
    }

    /// Sum of squares explained by the model.
    #[getter]
    fn ss_model(&self) -> f64 {
        self.inner.ss_model
    }

    /// Total sum of squares.
    #[getter]
    fn ss_total(&self) -> f64 {
        self.inner.ss_total
    }

    /// Residual standard deviation.
    #[getter]
    fn residual_sd(&self) -> f64 {
        self.inner.residual_sd
    }

    /// R² (centred with an intercept), or None when the total SS is 0.
    #[getter]
    fn r_squared(&self) -> Option<f64> {
        self.inner.r_squared
    }

    /// Adjusted R², or None.
    #[getter]
    fn adj_r_squared(&self) -> Option<f64> {
        self.inner.adj_r_squared
    }

    /// Model degrees of freedom.
    #[getter]
    fn df_model(&self) -> u64 {
        self.inner.df_model
    }

    /// Residual degrees of freedom.
    #[getter]
    fn df_resid(&self) -> u64 {
        self.inner.df_resid
    }

    /// Model mean square, or None when df_model is 0.
    #[getter]
    fn ms_model(&self) -> Option<f64> {
        self.inner.ms_model
    }

    /// Residual mean square (residual variance).
    #[getter]
    fn ms_resid(&self) -> f64 {
        self.inner.ms_resid
    }

    /// F statistic, or None.
    #[getter]
    fn f_stat(&self) -> Option<f64> {
        self.inner.f_stat
    }

    /// Estimated condition number of the column-scaled design.
    #[getter]
    fn condition_estimate(&self) -> f64 {
        self.inner.condition_estimate
    }

    /// Fitted value at a row (float), or at each row of a 2-D block (array).
    fn predict<'py>(&self, rows: &Bound<'py, PyAny>) -> PyResult<Bound<'py, PyAny>> {
        per_row(rows, self.inner.params(), |r| self.inner.predict(r))
    }

    /// Leverage xᵀ(XᵀWX)⁻¹x of a row (float) or of each row of a block.
    fn leverage<'py>(&self, rows: &Bound<'py, PyAny>) -> PyResult<Bound<'py, PyAny>> {
        per_row(rows, self.inner.params(), |r| self.inner.leverage(r))
    }

    /// Confidence intervals of every coefficient.
    #[pyo3(signature = (level = 0.95))]
    fn coef_intervals(&self, level: f64) -> PyResult<Vec<Interval>> {
        Ok(self
            .inner
            .coef_intervals(level)
            .map_err(raise)?
            .into_iter()
            .map(model_interval)
            .collect())
    }

    /// Confidence interval of the mean response at a row.
    #[pyo3(signature = (row, level = 0.95))]
    fn mean_response(&self, row: &Bound<'_, PyAny>, level: f64) -> PyResult<Interval> {
        let v = arrays::vector(row, "row")?;
        self.inner
            .mean_response(v.as_slice()?, level)
            .map(model_interval)
            .map_err(raise)
    }

    /// Prediction interval for the mean of `replicates` new readings at a row.
    #[pyo3(signature = (row, replicates = 1, level = 0.95))]
    fn prediction(
        &self,
        row: &Bound<'_, PyAny>,
        replicates: u32,
        level: f64,
    ) -> PyResult<Interval> {
        let v = arrays::vector(row, "row")?;
        self.inner
            .prediction(v.as_slice()?, replicates, level)
            .map(model_interval)
            .map_err(raise)
    }

    /// Every attribute as a dict; vectors and the covariance as NumPy arrays.
    fn to_dict<'py>(slf: &Bound<'py, Self>) -> PyResult<Bound<'py, PyDict>> {
        let py = slf.py();
        let d = PyDict::new(py);
        for name in MODEL_FIT_FIELDS {
            d.set_item(*name, slf.getattr(*name)?)?;
        }
        Ok(d)
    }

    /// Names of the attributes in `to_dict()`.
    #[classattr]
    fn fields() -> Vec<&'static str> {
        MODEL_FIT_FIELDS.to_vec()
    }

    fn __repr__(&self) -> String {
        format!(
            "ModelFit(params={}, rows={}, residual_sd={})",
            self.inner.params(),
            self.inner.rows,
            self.inner.residual_sd
        )
    }
}

const MODEL_FIT_FIELDS: &[&str] = &[
    "params",
    "coefficients",
    "std_errors",
    "covariance",
    "t_statistics",
    "p_values",
    "f_p_value",
    "rows",
    "weight_sum",
    "effective_rows",
    "has_intercept",
    "exact_fit",
    "forgetting_applied",
    "sse",
    "ss_model",
    "ss_total",
    "residual_sd",
    "r_squared",
    "adj_r_squared",
    "df_model",
    "df_resid",
    "ms_model",
    "ms_resid",
    "f_stat",
    "condition_estimate",
];
