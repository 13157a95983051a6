//! C ABI for plumbfit (being written).
