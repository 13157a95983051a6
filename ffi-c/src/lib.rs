//! The C library `plumbfit`: a thin C ABI over the `plumbfit` core crate.
//!
//! Every function here converts C arguments into Rust values, checks them,
//! calls the core and maps its errors to `pf_status` numbers. No numbers are
//! computed here. The header `include/plumbfit.h` is generated from this
//! crate by cbindgen (`ffi-c/cbindgen.toml`) and committed.
//!
//! Conventions, stated once for every entry point:
//! * Every fallible function returns a `pf_status`; `PF_OK` (0) is success.
//! * Outputs go through out-pointers that are written only on success.
//! * Every pointer argument is checked for NULL, even when a length is 0.
//! * No panic crosses the boundary: a caught panic returns `PF_ERR_PANIC`
//!   and poisons the handle it was mutating (`PF_ERR_POISONED` afterwards).
//! * A `const` receiver is read-only and may be shared across threads;
//!   mutating calls need exclusive access to their handle.
#![allow(non_camel_case_types)]
#![cfg_attr(
    not(test),
    deny(clippy::unwrap_used, clippy::expect_used, clippy::panic)
)]

mod boundary;
pub mod calib;
pub mod diag;
pub mod fit;
pub mod line;
pub mod model;
pub mod state;
pub mod status;
pub mod version;

pub use calib::{pf_inverse, pf_levels};
pub use fit::{pf_anova, pf_fitted_line, pf_interval};
pub use line::{pf_layout, pf_line, pf_moments};
pub use model::{pf_model, pf_model_info};
pub use status::pf_status;
