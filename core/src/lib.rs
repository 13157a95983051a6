//! plumbfit: one-pass, mergeable straight-line and low-order least-squares
//! fits for measurement data, with honest uncertainties.
//!
//! The crate is the numerical core behind the C library (`plumbfit-ffi`) and
//! the Python package (`plumbfit`); they only convert types and map errors.
//!
//! * [`moments`]: the pair-moment accumulator ([`PairMoments`]) in a lean
//!   tier (second moments) and a full tier (co-moments to order 4, lag-1
//!   difference sums, extremes). Push, extend, merge and forget; no heap.
//!   [`LeanMoments::feed`] borrows a lean accumulator for tight loops of
//!   pushes ([`PairFeed`]).
//! * [`line`](mod@line): the straight-line fit and its inference ([`LineFit`]).
//! * [`model`]: streaming least squares for p-parameter linear and
//!   polynomial models (double-double Givens; caller storage available).
//! * [`calib`]: inverse prediction with Fieller intervals, uncertainty of a
//!   calibrated value, detection and quantitation limits, lack of fit,
//!   Mandel's linearity check, weighted calibration.
//! * [`diag`]: residual diagnostics from the accumulator alone and from
//!   retained data.
//! * [`state`]: the versioned, checksummed byte format for every accumulator.
//! * [`dd`]: double-double arithmetic used where double is not enough.
//!
//! # When not to use it
//! Nonlinear models, large sparse designs and p above
//! [`model::MAX_PARAMS`] are out of scope.
//!
//! # Precision
//! Moments are accumulated about a provisional line fitted to the first few
//! pairs, so neither offset data (means near 1e9) nor near-perfect fits lose
//! digits to cancellation. Textbook sum formulas are never used.
//!
//! # Features
//! | feature | default | what it adds |
//! |---|---|---|
//! | `std` | yes | distribution functions (t, F) for p values and intervals |
//!
//! Without `std` the crate is `no_std` (it needs no allocator for the line
//! accumulator) and still gives estimates and standard errors.
//!
//! # Example
//! ```
//! use plumbfit::LeanMoments;
//! let mut acc = LeanMoments::new();
//! acc.extend(&[1.0, 2.0, 3.0, 4.0], &[2.1, 3.9, 6.2, 7.8]).unwrap();
//! let fit = acc.fit().unwrap();
//! assert!((fit.slope - 1.94).abs() < 1e-12);
//! // Bad input is refused and leaves the accumulator as it was.
//! assert!(acc.push(f64::NAN, 1.0).is_err());
//! assert_eq!(acc.count(), 4);
//! ```
#![cfg_attr(not(feature = "std"), no_std)]
#![forbid(unsafe_code)]
#![deny(missing_docs)]
// `!(a > b)` is used on purpose throughout: it is true for NaN, so a check
// written that way refuses NaN instead of letting it through.
#![allow(clippy::neg_cmp_op_on_partial_ord)]
#![cfg_attr(
    not(test),
    deny(clippy::unwrap_used, clippy::expect_used, clippy::panic)
)]

extern crate alloc;

pub mod calib;
pub mod dd;
pub mod diag;
#[cfg(feature = "std")]
pub mod dist;
mod kernel;
pub mod line;
pub mod model;
pub mod moments;
pub mod state;

pub use calib::CalibError;
pub use diag::DiagError;
pub use line::{FitOptions, LineError, LineFit, WeightMeaning};
pub use model::{ModelError, ModelFit, ModelMoments};
pub use moments::{
    Full, FullMoments, Lean, LeanMoments, MomentsError, PairFeed, PairMoments, Tier,
};

// The README's Rust snippets are compiled and run as doc tests.
#[cfg(doctest)]
#[doc = include_str!("../../README.md")]
struct ReadmeSnippets;
