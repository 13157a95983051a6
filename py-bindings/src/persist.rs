//! Accumulator state as bytes (the core's persisted state format, see
//! `docs/state-format.md`): `to_bytes`/`from_bytes`, pickling, and
//! `load_state`/`peek_state` for blobs whose kind is not known up front.

use crate::calib::ReplicateLevels;
use crate::errors::raise;
use crate::line::{Acc, LineAccumulator};
use crate::model::ModelAccumulator;
use plumbfit::model::ModelMoments;
use plumbfit::state::{self, StateKind};
use plumbfit::{FullMoments, LeanMoments};
use pyo3::prelude::*;
use pyo3::types::{PyBytes, PyDict};

/// Encodes a line accumulator.
pub(crate) fn line_to_bytes(acc: &Acc) -> Vec<u8> {
    match acc {
        Acc::Lean(a) => a.save_to_vec(),
        Acc::Full(a) => a.save_to_vec(),
    }
}

/// Decodes a line accumulator of either tier.
pub(crate) fn line_from_bytes(data: &[u8]) -> PyResult<Acc> {
    let info = state::peek(data).map_err(raise)?;
    match info.kind {
        StateKind::LineFull => FullMoments::restore(data).map(Acc::Full),
        // Lean, or a model blob: restoring as lean reports the wrong kind.
        _ => LeanMoments::restore(data).map(Acc::Lean),
    }
    .map_err(raise)
}

/// Decodes a model accumulator.
pub(crate) fn model_from_bytes(data: &[u8]) -> PyResult<ModelMoments> {
    ModelMoments::restore(data).map_err(raise)
}

/// Rebuilds whichever accumulator or store a state blob holds
/// (`LineAccumulator`, `ModelAccumulator` or `ReplicateLevels`).
#[pyfunction]
pub fn load_state(py: Python<'_>, data: &[u8]) -> PyResult<Py<PyAny>> {
    let info = state::peek(data).map_err(raise)?;
    Ok(match info.kind {
        StateKind::Levels => Py::new(py, ReplicateLevels::from_bytes(data)?)?.into_any(),
        StateKind::Model => Py::new(
            py,
            ModelAccumulator {
                inner: model_from_bytes(data)?,
            },
        )?
        .into_any(),
        _ => Py::new(
            py,
            LineAccumulator {
                acc: line_from_bytes(data)?,
            },
        )?
        .into_any(),
    })
}

/// Checks a blob's header, length and checksum and says what it holds:
/// `{"kind": "line-lean" | "line-full" | "model" | "levels", "version",
/// "params" (coefficients, or levels), "count", "length"}`.
#[pyfunction]
pub fn peek_state<'py>(py: Python<'py>, data: &[u8]) -> PyResult<Bound<'py, PyDict>> {
    let info = state::peek(data).map_err(raise)?;
    let d = PyDict::new(py);
    d.set_item("kind", info.kind.name())?;
    d.set_item("version", info.version)?;
    d.set_item("params", info.params)?;
    d.set_item("count", info.count)?;
    d.set_item("length", info.len)?;
    Ok(d)
}

/// Bytes object from a vector.
pub(crate) fn bytes<'py>(py: Python<'py>, v: &[u8]) -> Bound<'py, PyBytes> {
    PyBytes::new(py, v)
}
