//! `LineAccumulator` (both tiers of the core's pair-moment accumulator) and
//! `LineFit`, `Interval`, `AnovaTable`.

use crate::arrays::{self, Vector};
use crate::errors::{raise, Failure};
use numpy::{PyArray1, PyUntypedArray};
use plumbfit::line::{Anova, Interval as CoreInterval};
use plumbfit::{
    FitOptions, FullMoments, LeanMoments, LineError, LineFit as CoreFit, WeightMeaning,
};
use pyo3::exceptions::{PyTypeError, PyValueError};
use pyo3::prelude::*;
use pyo3::types::{PyBytes, PyDict, PyFloat, PyList, PyTuple};

/// Pairs at or above this count are added with the GIL released.
///
/// The lean kernel adds about 0.5 ns per pair (benches/python/bench_line.py,
/// 10⁷ pairs in 22 ms), so a call at the threshold holds the GIL for about
/// 8 µs at most, while releasing and re-taking it costs about 0.1 µs (from
/// memory; the bench's below/at-threshold pair of figures could not resolve
/// it on the loaded development machine): about 1 % of such a call.
pub const GIL_RELEASE_PAIRS: usize = 16384;

// Held inline in a heap-allocated Python object: boxing the full tier
// would only add an indirection to every push.
#[allow(clippy::large_enum_variant)]
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) enum Acc {
    Lean(LeanMoments),
    Full(FullMoments),
}

macro_rules! with_acc {
    ($acc:expr, $a:ident => $body:expr) => {
        match $acc {
            Acc::Lean($a) => $body,
            Acc::Full($a) => $body,
        }
    };
}

/// One-pass accumulator for straight-line fits of paired readings.
#[pyclass(module = "plumbfit", name = "LineAccumulator", from_py_object)]
#[derive(Clone)]
pub struct LineAccumulator {
    pub(crate) acc: Acc,
}

fn weight_meaning(s: &str) -> PyResult<WeightMeaning> {
    match s {
        "relative" => Ok(WeightMeaning::Relative),
        "inverse_variance" => Ok(WeightMeaning::InverseVariance),
        other => Err(PyValueError::new_err(format!(
            "weights must be 'relative' or 'inverse_variance', not {other:?}"
        ))),
    }
}

fn weight_name(w: WeightMeaning) -> &'static str {
    match w {
        WeightMeaning::InverseVariance => "inverse_variance",
        _ => "relative",
    }
}

impl LineAccumulator {
    fn same_tier(&self, other: &LineAccumulator) -> PyResult<()> {
        if std::mem::discriminant(&self.acc) == std::mem::discriminant(&other.acc) {
            Ok(())
        } else {
            Err(PyTypeError::new_err(format!(
                "cannot merge a {} accumulator with a {} one",
                self.tier(),
                other.tier()
            )))
        }
    }

    fn merged(&mut self, other: &LineAccumulator) -> PyResult<()> {
        self.same_tier(other)?;
        match (&mut self.acc, &other.acc) {
            (Acc::Lean(a), Acc::Lean(b)) => a.merge(b).map_err(raise),
            (Acc::Full(a), Acc::Full(b)) => a.merge(b).map_err(raise),
            _ => Ok(()),
        }
    }
}

#[pymethods]
impl LineAccumulator {
    /// An empty accumulator. `tier="lean"` keeps second moments only (the
    /// fastest path); `tier="full"` adds third/fourth co-moments, lag-1
    /// difference sums and the x/y ranges, for diagnostics.
    #[new]
    #[pyo3(signature = (tier = "lean"))]
    fn new(tier: &str) -> PyResult<Self> {
        let acc = match tier {
            "lean" => Acc::Lean(LeanMoments::new()),
            "full" => Acc::Full(FullMoments::new()),
            other => {
                return Err(PyValueError::new_err(format!(
                    "tier must be 'lean' or 'full', not {other:?}"
                )))
            }
        };
        Ok(LineAccumulator { acc })
    }

    /// `"lean"` or `"full"`.
    #[getter]
    fn tier(&self) -> &'static str {
        match self.acc {
            Acc::Lean(_) => "lean",
            Acc::Full(_) => "full",
        }
    }

    /// Number of pairs added.
    #[getter]
    fn count(&self) -> u64 {
        with_acc!(&self.acc, a => a.count())
    }

    fn __len__(&self) -> usize {
        self.count() as usize
    }

    /// True when any pair had a weight other than 1.
    #[getter]
    fn is_weighted(&self) -> bool {
        with_acc!(&self.acc, a => a.is_weighted())
    }

    /// True once a forgetting factor below 1 was applied.
    #[getter]
    fn is_forgotten(&self) -> bool {
        with_acc!(&self.acc, a => a.is_forgotten())
    }

    /// Adds one pair (streaming use). Raises `NonFiniteError` for NaN or
    /// infinity; the accumulator is then unchanged.
    fn push(&mut self, x: f64, y: f64) -> PyResult<()> {
        with_acc!(&mut self.acc, a => a.push(x, y)).map_err(raise)
    }

    /// Adds one pair with weight `weight > 0`.
    fn push_weighted(&mut self, x: f64, y: f64, weight: f64) -> PyResult<()> {
        with_acc!(&mut self.acc, a => a.push_weighted(x, y, weight)).map_err(raise)
    }

    /// Adds the pairs `(x[i], y[i])`, optionally weighted.
    ///
    /// 1-D C-contiguous float64 arrays are read in place (no copy); other
    /// array-likes are converted to float64 once. Large inputs are processed
    /// with the GIL released. On error nothing is added.
    #[pyo3(signature = (x, y, weights = None))]
    fn extend(
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
        let acc = &mut self.acc;
        let mut work = move || match ws {
            None => with_acc!(acc, a => a.extend(xs, ys)),
            Some(ws) => with_acc!(acc, a => a.extend_weighted(xs, ys, ws)),
        };
        let r = if xs.len() >= GIL_RELEASE_PAIRS {
            py.detach(work)
        } else {
            work()
        };
        r.map_err(raise)
    }

    /// Folds `other`'s pairs into this accumulator, as if they had been
    /// added after this one's. Both must have the same tier.
    fn merge(&mut self, other: &LineAccumulator) -> PyResult<()> {
        self.merged(other)
    }

    /// A new accumulator holding both operands' pairs (`a + b`).
    fn __add__(&self, other: &Bound<'_, PyAny>) -> PyResult<Py<PyAny>> {
        let py = other.py();
        let Ok(other) = other.cast::<LineAccumulator>() else {
            return Ok(py.NotImplemented());
        };
        let mut out = self.clone();
        out.merged(&other.borrow())?;
        Ok(Py::new(py, out)?.into_any())
    }

    /// In-place merge (`a += b`).
    fn __iadd__(&mut self, other: &LineAccumulator) -> PyResult<()> {
        self.merged(other)
    }

    /// Multiplies every weight so far by `factor` in (0, 1], so that older
    /// pairs count less (exponential forgetting).
    fn forget(&mut self, factor: f64) -> PyResult<()> {
        with_acc!(&mut self.acc, a => a.forget(factor)).map_err(raise)
    }

    /// Fits `y = intercept + slope·x` (or `y = slope·x` with
    /// `through_origin=True`). `weights="inverse_variance"` treats the
    /// weights as known `1/σ²`; the default `"relative"` uses their ratios.
    #[pyo3(signature = (*, through_origin = false, weights = "relative"))]
    fn fit(&self, through_origin: bool, weights: &str) -> PyResult<LineFit> {
        let mut opts = FitOptions::default();
        opts.through_origin = through_origin;
        opts.weights = weight_meaning(weights)?;
        let fit = with_acc!(&self.acc, a => a.fit_with(&opts)).map_err(raise)?;
        Ok(LineFit { inner: fit })
    }

    /// Slope and intercept only (needs two pairs with x spread).
    fn slope_intercept(&self) -> PyResult<(f64, f64)> {
        with_acc!(&self.acc, a => a.slope_intercept()).map_err(raise)
    }

    /// Weighted count, means and centred second moments as a dict:
    /// `count, weight_sum, weight_sq_sum, mean_x, mean_y, sxx, sxy, syy`.
    fn moments<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyDict>> {
        let s = with_acc!(&self.acc, a => a.summary()).map_err(raise)?;
        let d = PyDict::new(py);
        d.set_item("count", s.count)?;
        d.set_item("weight_sum", s.weight_sum)?;
        d.set_item("weight_sq_sum", s.weight_sq_sum)?;
        d.set_item("mean_x", s.mean_x)?;
        d.set_item("mean_y", s.mean_y)?;
        d.set_item("sxx", s.sxx)?;
        d.set_item("sxy", s.sxy)?;
        d.set_item("syy", s.syy)?;
        Ok(d)
    }

    /// `(min, max)` of x, or None when empty (full tier only).
    #[getter]
    fn x_range(&self) -> PyResult<Option<(f64, f64)>> {
        match &self.acc {
            Acc::Full(a) => Ok(a.x_range()),
            Acc::Lean(_) => Err(PyTypeError::new_err("x_range needs tier='full'")),
        }
    }

    /// `(min, max)` of y, or None when empty (full tier only).
    #[getter]
    fn y_range(&self) -> PyResult<Option<(f64, f64)>> {
        match &self.acc {
            Acc::Full(a) => Ok(a.y_range()),
            Acc::Lean(_) => Err(PyTypeError::new_err("y_range needs tier='full'")),
        }
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
        match other.cast::<LineAccumulator>() {
            Ok(o) => self.acc == o.borrow().acc,
            Err(_) => false,
        }
    }

    fn __repr__(&self) -> String {
        format!(
            "LineAccumulator(tier={:?}, count={})",
            self.tier(),
            self.count()
        )
    }

    /// The state in the persisted state format (versioned, checksummed,
    /// little-endian; the same bytes the C and Rust doors write).
    fn to_bytes<'py>(&self, py: Python<'py>) -> Bound<'py, PyBytes> {
        crate::persist::bytes(py, &crate::persist::line_to_bytes(&self.acc))
    }

    /// Rebuilds an accumulator (of the tier the bytes hold) from
    /// `to_bytes()` output or any other door's saved state. Raises
    /// `StateFormatError` for bytes that are not a valid line state.
    #[staticmethod]
    fn from_bytes(data: &[u8]) -> PyResult<Self> {
        Ok(LineAccumulator {
            acc: crate::persist::line_from_bytes(data)?,
        })
    }

    /// Pickles through the persisted state format.
    #[allow(clippy::type_complexity)]
    fn __reduce__<'py>(
        slf: &Bound<'py, Self>,
    ) -> PyResult<(Bound<'py, PyAny>, (Bound<'py, PyBytes>,))> {
        let py = slf.py();
        let ctor = slf.get_type().getattr("from_bytes")?;
        Ok((ctor, (slf.borrow().to_bytes(py),)))
    }
}

/// Applies `f` to a float, or elementwise to an array-like (returning a
/// NumPy array); errors name the offending index.
pub(crate) fn elementwise<'py, E: Into<Failure> + Copy>(
    x: &Bound<'py, PyAny>,
    f: impl Fn(f64) -> Result<f64, E>,
) -> PyResult<Bound<'py, PyAny>> {
    let py = x.py();
    let arraylike = x.cast::<PyUntypedArray>().is_ok()
        || x.cast::<PyList>().is_ok()
        || x.cast::<PyTuple>().is_ok();
    if !arraylike {
        let v: f64 = x.extract()?;
        let r = f(v).map_err(raise)?;
        return Ok(PyFloat::new(py, r).into_any());
    }
    let xv = arrays::vector(x, "x")?;
    let xs = xv.as_slice()?;
    let mut out = Vec::with_capacity(xs.len());
    for (i, &v) in xs.iter().enumerate() {
        out.push(f(v).map_err(|e| PyErr::from(e.into().at(i)))?);
    }
    Ok(PyArray1::from_vec(py, out).into_any())
}

/// A fitted value, refused (as in the C door) when `x` is not finite or the
/// value overflows, so no NaN or infinity is handed back.
fn fitted_value(x: f64, y: f64) -> Result<f64, LineError> {
    if x.is_finite() && y.is_finite() {
        Ok(y)
    } else {
        Err(LineError::NonFinite)
    }
}

/// A confidence or prediction interval: `center ± t·se`.
#[pyclass(
    module = "plumbfit",
    name = "Interval",
    frozen,
    get_all,
    from_py_object
)]
#[derive(Clone)]
pub struct Interval {
    /// Point estimate.
    center: f64,
    /// Its standard error.
    se: f64,
    /// Lower limit.
    lower: f64,
    /// Upper limit.
    upper: f64,
}

impl Interval {
    pub(crate) fn new(center: f64, se: f64, lower: f64, upper: f64) -> Self {
        Interval {
            center,
            se,
            lower,
            upper,
        }
    }
}

impl From<CoreInterval> for Interval {
    fn from(i: CoreInterval) -> Self {
        Interval {
            center: i.center,
            se: i.se,
            lower: i.lower,
            upper: i.upper,
        }
    }
}

#[pymethods]
impl Interval {
    /// `{"center", "se", "lower", "upper"}`.
    fn to_dict<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyDict>> {
        let d = PyDict::new(py);
        d.set_item("center", self.center)?;
        d.set_item("se", self.se)?;
        d.set_item("lower", self.lower)?;
        d.set_item("upper", self.upper)?;
        Ok(d)
    }

    fn __repr__(&self) -> String {
        format!(
            "Interval(center={}, se={}, lower={}, upper={})",
            self.center, self.se, self.lower, self.upper
        )
    }
}

/// Analysis of variance of a line fit: the model against the residual.
#[pyclass(
    module = "plumbfit",
    name = "AnovaTable",
    frozen,
    get_all,
    from_py_object
)]
#[derive(Clone)]
pub struct AnovaTable {
    /// Sum of squares explained by the line.
    ss_model: f64,
    /// Its degrees of freedom.
    df_model: f64,
    /// Mean square of the model.
    ms_model: f64,
    /// Residual sum of squares.
    ss_resid: f64,
    /// Residual degrees of freedom.
    df_resid: f64,
    /// Residual mean square.
    ms_resid: f64,
    /// F statistic.
    f_stat: f64,
    /// Upper-tail p value of the F statistic.
    p_value: f64,
}

impl From<Anova> for AnovaTable {
    fn from(a: Anova) -> Self {
        AnovaTable {
            ss_model: a.ss_model,
            df_model: a.df_model,
            ms_model: a.ms_model,
            ss_resid: a.ss_resid,
            df_resid: a.df_resid,
            ms_resid: a.ms_resid,
            f_stat: a.f_stat,
            p_value: a.p_value,
        }
    }
}

#[pymethods]
impl AnovaTable {
    /// All fields as a dict.
    fn to_dict<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyDict>> {
        let d = PyDict::new(py);
        for (k, v) in [
            ("ss_model", self.ss_model),
            ("df_model", self.df_model),
            ("ms_model", self.ms_model),
            ("ss_resid", self.ss_resid),
            ("df_resid", self.df_resid),
            ("ms_resid", self.ms_resid),
            ("f_stat", self.f_stat),
            ("p_value", self.p_value),
        ] {
            d.set_item(k, v)?;
        }
        Ok(d)
    }

    fn __repr__(&self) -> String {
        format!(
            "AnovaTable(f_stat={}, df_model={}, df_resid={}, p_value={})",
            self.f_stat, self.df_model, self.df_resid, self.p_value
        )
    }
}

/// A fitted straight line with its inference (immutable).
#[pyclass(module = "plumbfit", name = "LineFit", frozen, from_py_object)]
#[derive(Clone)]
pub struct LineFit {
    pub(crate) inner: CoreFit,
}

macro_rules! line_fit_methods {
    ($($field:ident: $ty:ty => $doc:literal,)* ; $($rest:tt)*) => {
        const LINE_FIT_FIELDS: &[&str] = &[$(stringify!($field)),*];

        #[pymethods]
        impl LineFit {
            $(
                #[doc = $doc]
                #[getter]
                fn $field(&self) -> $ty {
                    self.inner.$field
                }
            )*

            /// Every attribute (and the p values) as a dict of plain numbers.
            fn to_dict<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyDict>> {
                let d = PyDict::new(py);
                $( d.set_item(stringify!($field), self.inner.$field)?; )*
                d.set_item("weights", weight_name(self.inner.weights))?;
                d.set_item("p_slope", self.inner.p_slope())?;
                d.set_item("p_intercept", self.inner.p_intercept())?;
                d.set_item("p_model", self.inner.anova().p_value)?;
                Ok(d)
            }

            $($rest)*
        }
    };
}

line_fit_methods! {
    through_origin: bool => "The line has no intercept (`y = slope·x`).",
    count: u64 => "Pairs accumulated.",
    weight_sum: f64 => "Sum of weights.",
    effective_count: f64 => "Effective sample size (Σw)²/Σw².",
    approximate: bool => "Forgetting was applied: t and F use effective degrees of freedom.",
    slope: f64 => "Slope.",
    intercept: f64 => "Intercept (0 through the origin).",
    mean_x: f64 => "Weighted mean of x.",
    mean_y: f64 => "Weighted mean of y.",
    sxx: f64 => "Σw(x − x̄)².",
    sxy: f64 => "Σw(x − x̄)(y − ȳ).",
    sum_x2: f64 => "Σw·x² (uncentred).",
    sd_x: f64 => "Standard deviation of x.",
    sd_y: f64 => "Standard deviation of y.",
    covariance_xy: f64 => "Sample covariance of x and y.",
    r: f64 => "Pearson correlation coefficient.",
    r_squared: f64 => "Coefficient of determination (uncentred through the origin).",
    adj_r_squared: f64 => "R² adjusted for degrees of freedom.",
    sse: f64 => "Residual sum of squares.",
    ssr: f64 => "Sum of squares explained by the line.",
    sst: f64 => "Total sum of squares (ssr + sse).",
    df_model: f64 => "Model degrees of freedom.",
    df_resid: f64 => "Residual degrees of freedom.",
    residual_variance: f64 => "sse / df_resid.",
    residual_sd: f64 => "√(sse / df_resid).",
    rmse: f64 => "√(sse / n).",
    scale: f64 => "Variance scale of the covariance (residual variance, or 1 with known variances).",
    se_slope: f64 => "Standard error of the slope.",
    se_intercept: f64 => "Standard error of the intercept.",
    cov_intercept_slope: f64 => "Covariance of intercept and slope estimates.",
    t_slope: f64 => "t statistic of the slope.",
    t_intercept: f64 => "t statistic of the intercept.",
    f_stat: f64 => "F statistic of the line against a constant.",
    ;

    /// `"relative"` or `"inverse_variance"`.
    #[getter]
    fn weights(&self) -> &'static str {
        weight_name(self.inner.weights)
    }

    /// Two-sided p value of the slope's t statistic.
    #[getter]
    fn p_slope(&self) -> f64 {
        self.inner.p_slope()
    }

    /// Two-sided p value of the intercept's t statistic.
    #[getter]
    fn p_intercept(&self) -> f64 {
        self.inner.p_intercept()
    }

    /// Upper-tail p value of the F statistic.
    #[getter]
    fn p_model(&self) -> f64 {
        self.inner.anova().p_value
    }

    /// With known inverse-variance weights: the chi-square goodness-of-fit
    /// p value of the residual sum of squares.
    #[getter]
    fn p_chi_square(&self) -> f64 {
        self.inner.p_chi_square()
    }

    /// Fitted value at `x` (a float, or an array-like giving an array);
    /// `NonFiniteError` for a non-finite `x` or a value that overflows.
    fn fitted<'py>(&self, x: &Bound<'py, PyAny>) -> PyResult<Bound<'py, PyAny>> {
        elementwise(x, |v| fitted_value(v, self.inner.fitted(v)))
    }

    /// Standard error of the fitted mean response at `x` (float or array).
    fn se_mean<'py>(&self, x: &Bound<'py, PyAny>) -> PyResult<Bound<'py, PyAny>> {
        elementwise(x, |v| self.inner.se_mean(v))
    }

    /// Standard error for predicting the mean of `replicates` new readings
    /// at `x` (float or array).
    #[pyo3(signature = (x, replicates = 1))]
    fn se_prediction<'py>(&self, x: &Bound<'py, PyAny>, replicates: u32) -> PyResult<Bound<'py, PyAny>> {
        elementwise(x, |v| self.inner.se_prediction(v, replicates))
    }

    /// Two-sided t critical value for confidence `level`.
    #[pyo3(signature = (level = 0.95))]
    fn t_critical(&self, level: f64) -> PyResult<f64> {
        self.inner.t_critical(level).map_err(raise)
    }

    /// Confidence interval of the slope.
    #[pyo3(signature = (level = 0.95))]
    fn slope_interval(&self, level: f64) -> PyResult<Interval> {
        self.inner.slope_interval(level).map(Interval::from).map_err(raise)
    }

    /// Confidence interval of the intercept.
    #[pyo3(signature = (level = 0.95))]
    fn intercept_interval(&self, level: f64) -> PyResult<Interval> {
        self.inner.intercept_interval(level).map(Interval::from).map_err(raise)
    }

    /// Confidence interval of the mean response at `x`.
    #[pyo3(signature = (x, level = 0.95))]
    fn mean_band(&self, x: f64, level: f64) -> PyResult<Interval> {
        self.inner.mean_band(x, level).map(Interval::from).map_err(raise)
    }

    /// Prediction interval for the mean of `replicates` new readings at `x`.
    #[pyo3(signature = (x, replicates = 1, level = 0.95))]
    fn prediction(&self, x: f64, replicates: u32, level: f64) -> PyResult<Interval> {
        self.inner.prediction(x, replicates, level).map(Interval::from).map_err(raise)
    }

    /// Lower and upper limits of the mean-response band and the prediction
    /// band over an array of x, as a dict of NumPy arrays
    /// `{"fitted", "mean_lower", "mean_upper", "pred_lower", "pred_upper"}`.
    #[pyo3(signature = (x, level = 0.95, replicates = 1))]
    fn bands<'py>(&self, x: &Bound<'py, PyAny>, level: f64, replicates: u32) -> PyResult<Bound<'py, PyDict>> {
        let py = x.py();
        let xv = arrays::vector(x, "x")?;
        let xs = xv.as_slice()?;
        let mut cols: [Vec<f64>; 5] = Default::default();
        for (i, &v) in xs.iter().enumerate() {
            let at = |e: LineError| PyErr::from(Failure::from(e).at(i));
            let m = self.inner.mean_band(v, level).map_err(at)?;
            let p = self.inner.prediction(v, replicates, level).map_err(at)?;
            for (c, val) in cols.iter_mut().zip([m.center, m.lower, m.upper, p.lower, p.upper]) {
                c.push(val);
            }
        }
        let d = PyDict::new(py);
        for (k, c) in ["fitted", "mean_lower", "mean_upper", "pred_lower", "pred_upper"].iter().zip(cols) {
            d.set_item(*k, PyArray1::from_vec(py, c))?;
        }
        Ok(d)
    }

    /// The analysis-of-variance table.
    fn anova(&self) -> AnovaTable {
        self.inner.anova().into()
    }

    /// Names of the numeric attributes in `to_dict()` order.
    #[classattr]
    fn fields() -> Vec<&'static str> {
        LINE_FIT_FIELDS.to_vec()
    }

    fn __repr__(&self) -> String {
        format!(
            "LineFit(slope={}, intercept={}, count={}, residual_sd={})",
            self.inner.slope, self.inner.intercept, self.inner.count, self.inner.residual_sd
        )
    }
}
