//! The one place where core errors become Python exceptions.
//!
//! The hierarchy is built at import time with `type(name, bases, ns)` so
//! that classes can derive from both the package root and a builtin
//! (`ValueError` or `ArithmeticError`), which `create_exception!` cannot do:
//!
//! ```text
//! PlumbfitError(Exception)
//! ├── InvalidInputError(PlumbfitError, ValueError)      codes 1–99
//! │   ├── NonFiniteError        NaN or infinity in the input
//! │   ├── InvalidWeightError    weight zero, negative or not finite
//! │   ├── LengthMismatchError   input lengths (or dimensions) differ
//! │   ├── EmptyInputError       nothing to add
//! │   └── StateFormatError      bytes that do not hold a valid state
//! └── NumericalError(PlumbfitError, ArithmeticError)    codes 100–199
//!     ├── TooFewPointsError     not enough pairs/rows for the result
//!     ├── NoSpreadError         all x equal, slope undefined
//!     ├── RankDeficientError    a model column depends on earlier ones
//!     └── StateOverflowError    values too large for the state
//! ```
//!
//! Every instance carries `.code` (core's stable `code()`), and `.index`
//! (position of the offending value in the call's input, or `None`).

use plumbfit::model::ModelError;
use plumbfit::state::StateError;
use plumbfit::{LineError, MomentsError};
use pyo3::prelude::*;
use pyo3::sync::PyOnceLock;
use pyo3::types::{PyDict, PyTuple, PyType};

/// Which Python class an error becomes.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Kind {
    InvalidInput,
    NonFinite,
    InvalidWeight,
    LengthMismatch,
    EmptyInput,
    StateFormat,
    Numerical,
    TooFewPoints,
    NoSpread,
    RankDeficient,
    StateOverflow,
}

/// (kind, name, parent kind or builtin base, docstring); parents come first.
const TREE: &[(Kind, &str, Option<Kind>, &str, &str)] = &[
    (
        Kind::InvalidInput,
        "InvalidInputError",
        None,
        "ValueError",
        "The arguments were refused (codes 1-99); the object is unchanged.",
    ),
    (
        Kind::Numerical,
        "NumericalError",
        None,
        "ArithmeticError",
        "The result cannot be computed from these data (codes 100-199).",
    ),
    (
        Kind::NonFinite,
        "NonFiniteError",
        Some(Kind::InvalidInput),
        "",
        "An input value is NaN or infinite; `.index` names its position.",
    ),
    (
        Kind::InvalidWeight,
        "InvalidWeightError",
        Some(Kind::InvalidInput),
        "",
        "A weight is zero, negative or not finite; `.index` names its position.",
    ),
    (
        Kind::LengthMismatch,
        "LengthMismatchError",
        Some(Kind::InvalidInput),
        "",
        "Input lengths, dimensions or accumulator sizes differ.",
    ),
    (
        Kind::EmptyInput,
        "EmptyInputError",
        Some(Kind::InvalidInput),
        "",
        "The input holds no values.",
    ),
    (
        Kind::StateFormat,
        "StateFormatError",
        Some(Kind::InvalidInput),
        "",
        "Bytes or storage that do not hold a valid accumulator state.",
    ),
    (
        Kind::TooFewPoints,
        "TooFewPointsError",
        Some(Kind::Numerical),
        "",
        "Too few pairs or rows for the requested result.",
    ),
    (
        Kind::NoSpread,
        "NoSpreadError",
        Some(Kind::Numerical),
        "",
        "All x values are equal, so no slope is defined.",
    ),
    (
        Kind::RankDeficient,
        "RankDeficientError",
        Some(Kind::Numerical),
        "",
        "A model column is a linear combination of earlier columns.",
    ),
    (
        Kind::StateOverflow,
        "StateOverflowError",
        Some(Kind::Numerical),
        "",
        "Values too large in magnitude for the accumulator state.",
    ),
];

struct Classes {
    root: Py<PyType>,
    by_kind: Vec<(Kind, Py<PyType>)>,
}

static CLASSES: PyOnceLock<Classes> = PyOnceLock::new();

fn make_class<'py>(
    py: Python<'py>,
    name: &str,
    bases: Bound<'py, PyTuple>,
    doc: &str,
) -> PyResult<Bound<'py, PyType>> {
    let ns = PyDict::new(py);
    ns.set_item("__module__", "plumbfit")?;
    ns.set_item("__doc__", doc)?;
    let ty = py
        .import("builtins")?
        .getattr("type")?
        .call1((name, bases, ns))?;
    Ok(ty.cast_into::<PyType>()?)
}

/// Builds the exception classes and adds them to the module.
pub fn register(m: &Bound<'_, PyModule>) -> PyResult<()> {
    let py = m.py();
    let classes = CLASSES.get_or_try_init(py, || -> PyResult<Classes> {
        let builtins = py.import("builtins")?;
        let root = make_class(
            py,
            "PlumbfitError",
            PyTuple::new(py, [builtins.getattr("Exception")?])?,
            "Root of every error raised by plumbfit. `.code` is the stable numeric \
             code shared with the C library; `.index` the offending position or None.",
        )?;
        let mut by_kind: Vec<(Kind, Py<PyType>)> = Vec::new();
        for &(kind, name, parent, builtin, doc) in TREE {
            let bases = match parent {
                None => PyTuple::new(py, [root.clone().into_any(), builtins.getattr(builtin)?])?,
                Some(p) => {
                    let parent = by_kind
                        .iter()
                        .find(|(k, _)| *k == p)
                        .map(|(_, t)| t.bind(py).clone())
                        .ok_or_else(|| {
                            pyo3::exceptions::PyRuntimeError::new_err("exception tree order")
                        })?;
                    PyTuple::new(py, [parent])?
                }
            };
            by_kind.push((kind, make_class(py, name, bases, doc)?.unbind()));
        }
        Ok(Classes {
            root: root.unbind(),
            by_kind,
        })
    })?;
    m.add("PlumbfitError", classes.root.bind(py))?;
    for ((_, ty), &(_, name, _, _, _)) in classes.by_kind.iter().zip(TREE) {
        m.add(name, ty.bind(py))?;
    }
    Ok(())
}

/// A core error, reduced to what the Python side needs.
#[derive(Clone, Debug)]
pub struct Failure {
    kind: Kind,
    code: u16,
    message: String,
    index: Option<usize>,
}

impl Failure {
    pub(crate) fn new(kind: Kind, code: u16, message: String, index: Option<usize>) -> Self {
        Failure {
            kind,
            code,
            message,
            index,
        }
    }

    /// A state-format failure found by the binding itself (code 50–59 range
    /// is core's; the binding uses it only for bytes it cannot read).
    pub fn state_format(code: u16, message: impl Into<String>) -> Self {
        Failure::new(Kind::StateFormat, code, message.into(), None)
    }

    /// Names the position `i` of the offending element of an array argument.
    pub fn at(mut self, i: usize) -> Self {
        self.message = format!("{} (at index {i})", self.message);
        self.index = Some(i);
        self
    }

    fn into_pyerr(self, py: Python<'_>) -> PyErr {
        let build = || -> PyResult<PyErr> {
            let classes = CLASSES
                .get(py)
                .ok_or_else(|| pyo3::exceptions::PyRuntimeError::new_err("module not set up"))?;
            let ty = classes
                .by_kind
                .iter()
                .find(|(k, _)| *k == self.kind)
                .map(|(_, t)| t.bind(py).clone())
                .ok_or_else(|| pyo3::exceptions::PyRuntimeError::new_err("unknown error kind"))?;
            let exc = ty.call1((self.message.as_str(),))?;
            exc.setattr("code", self.code)?;
            exc.setattr("index", self.index)?;
            Ok(PyErr::from_value(exc))
        };
        build().unwrap_or_else(|e| e)
    }
}

impl From<Failure> for PyErr {
    fn from(f: Failure) -> Self {
        Python::attach(|py| f.into_pyerr(py))
    }
}

impl From<MomentsError> for Failure {
    fn from(e: MomentsError) -> Self {
        let code = e.code();
        let msg = e.to_string();
        match e {
            MomentsError::NonFinite { index } => {
                Failure::new(Kind::NonFinite, code, msg, Some(index))
            }
            MomentsError::InvalidWeight { index } => {
                Failure::new(Kind::InvalidWeight, code, msg, Some(index))
            }
            MomentsError::LengthMismatch { .. } => {
                Failure::new(Kind::LengthMismatch, code, msg, None)
            }
            MomentsError::EmptyInput => Failure::new(Kind::EmptyInput, code, msg, None),
            MomentsError::Overflow => Failure::new(Kind::StateOverflow, code, msg, None),
            _ => by_range(code, msg),
        }
    }
}

impl From<LineError> for Failure {
    fn from(e: LineError) -> Self {
        let code = e.code();
        let msg = e.to_string();
        match e {
            LineError::NonFinite => Failure::new(Kind::NonFinite, code, msg, None),
            LineError::TooFewPoints { .. } => Failure::new(Kind::TooFewPoints, code, msg, None),
            LineError::NoSpread => Failure::new(Kind::NoSpread, code, msg, None),
            LineError::Overflow => Failure::new(Kind::StateOverflow, code, msg, None),
            _ => by_range(code, msg),
        }
    }
}

impl From<ModelError> for Failure {
    fn from(e: ModelError) -> Self {
        let code = e.code();
        let msg = e.to_string();
        match e {
            ModelError::NonFinite { row, .. } => {
                Failure::new(Kind::NonFinite, code, msg, Some(row))
            }
            ModelError::InvalidWeight { row } => {
                Failure::new(Kind::InvalidWeight, code, msg, Some(row))
            }
            ModelError::DimensionMismatch { .. } => {
                Failure::new(Kind::LengthMismatch, code, msg, None)
            }
            ModelError::InvalidStorage | ModelError::StorageTooSmall { .. } => {
                Failure::new(Kind::StateFormat, code, msg, None)
            }
            ModelError::RankDeficient { column } => {
                Failure::new(Kind::RankDeficient, code, msg, Some(column))
            }
            ModelError::TooFewRows { .. } => Failure::new(Kind::TooFewPoints, code, msg, None),
            ModelError::Overflow => Failure::new(Kind::StateOverflow, code, msg, None),
            ModelError::EmptyInput => Failure::new(Kind::EmptyInput, code, msg, None),
            _ => by_range(code, msg),
        }
    }
}

impl From<StateError> for Failure {
    fn from(e: StateError) -> Self {
        // Every state error is about the bytes handed in (codes 50-59).
        Failure::new(Kind::StateFormat, e.code(), e.to_string(), None)
    }
}

/// Fallback for variants added to core later: the code range decides.
fn by_range(code: u16, msg: String) -> Failure {
    let kind = if code < 100 {
        Kind::InvalidInput
    } else {
        Kind::Numerical
    };
    Failure::new(kind, code, msg, None)
}

/// Converts any core error straight into a `PyErr`.
pub fn raise<E: Into<Failure>>(e: E) -> PyErr {
    PyErr::from(e.into())
}
