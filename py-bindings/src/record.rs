//! `record!`: a frozen result class with read-only attributes, `to_dict()`
//! and a `repr`, for the plain result structs of calibration and
//! diagnostics.

/// Defines a frozen result class (see the module docs).
macro_rules! record {
    ($(#[$meta:meta])* $name:ident { $($field:ident: $ty:ty => $doc:literal,)* }) => {
        $(#[$meta])*
        #[pyclass(module = "plumbfit", frozen, from_py_object)]
        #[derive(Clone)]
        pub struct $name {
            $( #[doc = $doc] #[pyo3(get)] pub $field: $ty, )*
        }

        #[pymethods]
        impl $name {
            /// All attributes as a dict.
            fn to_dict<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyDict>> {
                let d = PyDict::new(py);
                $( d.set_item(stringify!($field), self.$field.clone())?; )*
                Ok(d)
            }

            fn __repr__(&self, py: Python<'_>) -> PyResult<String> {
                let parts: Vec<String> = vec![$(format!(
                    "{}={}",
                    stringify!($field),
                    pyo3::IntoPyObjectExt::into_bound_py_any(self.$field.clone(), py)?.repr()?
                )),*];
                Ok(format!("{}({})", stringify!($name), parts.join(", ")))
            }
        }
    };
}
