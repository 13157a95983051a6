//! Streaming least squares for p-parameter linear models (being written).
