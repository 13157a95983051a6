//! (being written)
#![allow(missing_docs)]
