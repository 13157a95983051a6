//! Turning Python arguments into `&[f64]` for the core.
//!
//! * A 1-D, C-contiguous, native-byte-order `float64` ndarray is borrowed:
//!   the core reads NumPy's buffer directly, nothing is copied. Up to
//!   `SMALL_COPY` (256) values are instead copied into a private buffer, which
//!   costs less than registering and releasing the borrow (rust-numpy's
//!   cross-extension borrow tracking); this is not a conversion.
//! * Anything else that NumPy can turn into a 1-D real array (lists,
//!   tuples, integer/bool/float32 arrays, strided views, big-endian or
//!   misaligned data) is converted once into a new contiguous `float64`
//!   buffer.
//! * Complex, object, string and other non-real dtypes raise `TypeError`
//!   naming the dtype; arrays that are not 1-D raise `ValueError` with the
//!   shape.
//!
//! Every conversion (to float64, or to a contiguous aligned layout)
//! increments a counter that the tests read through
//! `_native._conversion_count()`, so they can prove the borrowed path was
//! taken.

use numpy::{
    PyArray1, PyArray2, PyArrayDescrMethods, PyArrayMethods, PyReadonlyArray1, PyReadonlyArray2,
    PyUntypedArray, PyUntypedArrayMethods,
};
use pyo3::exceptions::{PyTypeError, PyValueError};
use pyo3::prelude::*;
use pyo3::sync::PyOnceLock;
use pyo3::types::PyDict;
use std::sync::atomic::{AtomicU64, Ordering};

/// Contiguous float64 inputs up to this many values are copied rather
/// than borrowed. Registering a borrow with rust-numpy and releasing it
/// locks and updates a shared hash map twice, about as long as copying a
/// few kilobytes; at 256 values (2 KiB) the copy is the cheaper of the two, and
/// a one-pair `extend` spends about a third less time than when borrowing
/// (benches/python/bench_line.py, `extend, one pair`).
pub(crate) const SMALL_COPY: usize = 256;

static CONVERSIONS: AtomicU64 = AtomicU64::new(0);

/// Number of inputs converted (copied) since import; test hook.
#[pyfunction]
pub fn _conversion_count() -> u64 {
    CONVERSIONS.load(Ordering::Relaxed)
}

fn numpy_attr<'py>(py: Python<'py>, name: &'static str) -> PyResult<Bound<'py, PyAny>> {
    static NUMPY: PyOnceLock<Py<PyModule>> = PyOnceLock::new();
    let np = NUMPY.get_or_try_init(py, || py.import("numpy").map(Bound::unbind))?;
    np.bind(py).getattr(name)
}

/// A 1-D float64 input, borrowed from NumPy or converted.
pub enum Vector<'py> {
    /// NumPy's own buffer (contiguous float64 input, or our converted copy).
    Array(PyReadonlyArray1<'py, f64>),
    /// A short input copied, or a strided float64 view gathered, into a
    /// vector.
    Gathered(Vec<f64>),
}

impl Vector<'_> {
    /// The values as one slice.
    pub fn as_slice(&self) -> PyResult<&[f64]> {
        match self {
            Vector::Array(a) => a
                .as_slice()
                .map_err(|e| PyValueError::new_err(format!("array is not contiguous: {e}"))),
            Vector::Gathered(v) => Ok(v),
        }
    }
}

fn readonly<'py, D: numpy::ndarray::Dimension>(
    a: &Bound<'py, numpy::PyArray<f64, D>>,
    name: &str,
) -> PyResult<numpy::PyReadonlyArray<'py, f64, D>> {
    a.try_readonly().map_err(|e| {
        PyValueError::new_err(format!(
            "{name}: array is being written elsewhere and cannot be read ({e})"
        ))
    })
}

/// Refuses non-real dtypes and wrong dimensionality, then converts to a
/// fresh C-contiguous float64 array.
fn convert<'py>(obj: &Bound<'py, PyAny>, name: &str, ndim: usize) -> PyResult<Bound<'py, PyAny>> {
    let py = obj.py();
    let arr = if obj.cast::<PyUntypedArray>().is_ok() {
        obj.clone()
    } else {
        numpy_attr(py, "asarray")?.call1((obj,)).map_err(|e| {
            PyTypeError::new_err(format!("{name}: cannot be read as a real array ({e})"))
        })?
    };
    let untyped = arr.cast::<PyUntypedArray>()?;
    let dtype = untyped.dtype();
    let kind = dtype.kind();
    if !matches!(kind, b'f' | b'i' | b'u' | b'b') {
        return Err(PyTypeError::new_err(format!(
            "{name}: dtype {} is not a real number type",
            dtype.str()?
        )));
    }
    if untyped.ndim() != ndim {
        return Err(PyValueError::new_err(format!(
            "{name}: expected a {ndim}-D array, got shape {:?}",
            untyped.shape()
        )));
    }
    CONVERSIONS.fetch_add(1, Ordering::Relaxed);
    // `numpy.array(..., copy=True)` always gives a fresh, aligned,
    // C-contiguous buffer (`ascontiguousarray` may pass a misaligned
    // buffer through, e.g. one deserialized from a network frame).
    let kwargs = PyDict::new(py);
    kwargs.set_item("dtype", numpy::dtype::<f64>(py))?;
    kwargs.set_item("order", "C")?;
    kwargs.set_item("copy", true)?;
    numpy_attr(py, "array")?.call((arr,), Some(&kwargs))
}

/// Reads a 1-D argument; see the module docs for what is copied.
pub fn vector<'py>(obj: &Bound<'py, PyAny>, name: &str) -> PyResult<Vector<'py>> {
    if let Ok(a) = obj.cast::<PyArray1<f64>>() {
        if a.is_aligned() {
            if a.len() <= SMALL_COPY {
                // `to_vec` fails only for a non-contiguous array, which the
                // borrowed path below gathers.
                if let Ok(v) = a.to_vec() {
                    return Ok(Vector::Gathered(v));
                }
            }
            let ro = readonly(a, name)?;
            if a.is_c_contiguous() {
                return Ok(Vector::Array(ro));
            }
            CONVERSIONS.fetch_add(1, Ordering::Relaxed);
            return Ok(Vector::Gathered(ro.as_array().iter().copied().collect()));
        }
        // Misaligned float64 (possible for buffers from byte streams): let
        // NumPy make an aligned copy below.
    }
    let converted = convert(obj, name, 1)?;
    let a = converted.cast::<PyArray1<f64>>()?;
    Ok(Vector::Array(readonly(a, name)?))
}

/// Reads a 2-D argument as a C-contiguous (row-major) float64 matrix,
/// borrowed when it already is one.
pub fn matrix<'py>(obj: &Bound<'py, PyAny>, name: &str) -> PyResult<PyReadonlyArray2<'py, f64>> {
    if let Ok(a) = obj.cast::<PyArray2<f64>>() {
        if a.is_c_contiguous() && a.is_aligned() {
            return readonly(a, name);
        }
    }
    let converted = convert(obj, name, 2)?;
    let a = converted.cast::<PyArray2<f64>>()?;
    readonly(a, name)
}
