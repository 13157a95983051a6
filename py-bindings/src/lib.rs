//! Python bindings for plumbfit: the native module `plumbfit._native`.
//!
//! Every number comes from the core crate; this layer converts arguments,
//! releases the GIL for large inputs and maps errors (see `errors`).

#[macro_use]
mod record;

mod arrays;
mod calib;
mod diag;
mod errors;
mod line;
mod model;
mod persist;

use pyo3::prelude::*;

/// The native extension behind the `plumbfit` package.
#[pymodule]
fn _native(m: &Bound<'_, PyModule>) -> PyResult<()> {
    errors::register(m)?;
    m.add_class::<line::LineAccumulator>()?;
    m.add_class::<line::LineFit>()?;
    m.add_class::<line::Interval>()?;
    m.add_class::<line::AnovaTable>()?;
    m.add_class::<calib::InverseResult>()?;
    m.add_class::<calib::CalibratedValue>()?;
    m.add_class::<calib::SigmaLimits>()?;
    m.add_class::<calib::DecisionLimits>()?;
    m.add_class::<calib::LackOfFitTest>()?;
    m.add_class::<calib::QuadraticCheck>()?;
    m.add_class::<calib::ReplicateLevels>()?;
    m.add_class::<diag::ResidualChecks>()?;
    m.add_class::<diag::ShapiroWilkTest>()?;
    m.add_class::<diag::AndersonDarlingTest>()?;
    m.add_class::<diag::RetainedResiduals>()?;
    m.add_function(wrap_pyfunction!(diag::shapiro_wilk, m)?)?;
    m.add_function(wrap_pyfunction!(diag::anderson_darling, m)?)?;
    m.add("INFLUENCE_FLAGS", diag::influence_flags(m.py())?)?;
    m.add_class::<model::ModelAccumulator>()?;
    m.add_class::<model::ModelFit>()?;
    m.add_function(wrap_pyfunction!(model::fit_polynomial, m)?)?;
    m.add_function(wrap_pyfunction!(persist::load_state, m)?)?;
    m.add_function(wrap_pyfunction!(persist::peek_state, m)?)?;
    m.add_function(wrap_pyfunction!(arrays::_conversion_count, m)?)?;
    m.add("__version__", env!("CARGO_PKG_VERSION"))?;
    // Lets the benchmarks refuse to report figures for an unoptimised build.
    m.add("_debug_build", cfg!(debug_assertions))?;
    m.add("GIL_RELEASE_PAIRS", line::GIL_RELEASE_PAIRS)?;
    Ok(())
}
