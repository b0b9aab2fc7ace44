//! Arguments in, results and errors out: whole numbers, quantities given as a number or a
//! text, profiles given as objects or paths, JSON values as Python objects, and the library's
//! errors as Python exceptions.

use std::sync::Arc;

use nw::{Error, Setting};
use pyo3::exceptions::{
    PyKeyboardInterrupt, PyOSError, PyOverflowError, PyRuntimeError, PyTypeError, PyValueError,
};
use pyo3::prelude::*;

use crate::ProfileError;
use crate::profile::Profile;

/// Python's name of a setting: its keyword argument where it has one, else the library's.
fn argument_name(setting: Setting) -> String {
    match setting {
        Setting::Duration => "seconds",
        Setting::Level => "level_dbfs",
        Setting::StartSample | Setting::Start => "start",
        Setting::Rate => "sample_rate",
        Setting::Band => "bands",
        s => s.name(),
    }
    .to_string()
}

/// The library's error as a Python exception: [`ProfileError`] (a `ValueError`) for a
/// profile, `OSError` for reading or writing, `KeyboardInterrupt` for an interrupted run,
/// `ValueError` for everything else that was asked (settings, clipping, unsupported
/// requests).
pub fn to_py(py: Python<'_>, e: Error) -> PyErr {
    let text = e.describe("argument", &argument_name);
    match e {
        Error::Profile {
            file, line, key, ..
        } => {
            let err = ProfileError::new_err(text);
            let value = err.value(py);
            let set = value
                .setattr("file", file)
                .and_then(|()| value.setattr("line", line))
                .and_then(|()| value.setattr("key", key));
            match set {
                Ok(()) => err,
                Err(e) => e,
            }
        }
        Error::Io { .. } => PyOSError::new_err(text),
        Error::Interrupted => PyKeyboardInterrupt::new_err(text),
        _ => PyValueError::new_err(text),
    }
}

/// A library result as a Python one.
pub fn lib<T>(py: Python<'_>, r: nw::Result<T>) -> PyResult<T> {
    r.map_err(|e| to_py(py, e))
}

/// A whole number from 0 to 2^64 − 1 (a Python int or anything with `__index__`): a
/// `TypeError` for another type, a `ValueError` naming `name` for a value out of range.
pub fn whole(obj: &Bound<'_, PyAny>, name: &str) -> PyResult<u64> {
    obj.extract::<u64>().map_err(|e| {
        if e.is_instance_of::<PyOverflowError>(obj.py()) {
            PyValueError::new_err(format!(
                "argument {name}: expected a whole number from 0 to {}, got {obj}",
                u64::MAX
            ))
        } else {
            PyTypeError::new_err(format!(
                "argument {name}: expected an int, got {}",
                type_name(obj)
            ))
        }
    })
}

/// [`whole`] of an argument that may be left out (or given as None): `default` then.
pub fn whole_or(obj: Option<&Bound<'_, PyAny>>, name: &str, default: u64) -> PyResult<u64> {
    match obj {
        Some(o) if !o.is_none() => whole(o, name),
        _ => Ok(default),
    }
}

/// A count that also indexes memory (frames of an array).
pub fn count(obj: &Bound<'_, PyAny>, name: &str) -> PyResult<usize> {
    let n = whole(obj, name)?;
    usize::try_from(n).map_err(|_| {
        PyValueError::new_err(format!(
            "argument {name}: {n} is more than this machine can address"
        ))
    })
}

/// The name of an object's type, for messages.
pub fn type_name(obj: &Bound<'_, PyAny>) -> String {
    obj.get_type()
        .name()
        .map(|n| n.to_string())
        .unwrap_or_else(|_| "an unknown type".into())
}

/// A quantity given as a number (in the stated unit) or as a text with its unit.
#[derive(FromPyObject)]
pub enum Quantity {
    /// A number, e.g. `2.5`.
    Number(f64),
    /// A text, e.g. `"2.5 s"` or `"-20dBFS"`.
    Text(String),
}

/// A profile given as a [`Profile`], or as a path (`str` or `os.PathLike`) to a profile file.
pub fn profile_arg(obj: &Bound<'_, PyAny>) -> PyResult<Arc<nw::Profile>> {
    if let Ok(p) = obj.cast::<Profile>() {
        return Ok(p.get().inner.clone());
    }
    let Ok(path) = obj.extract::<std::path::PathBuf>() else {
        return Err(PyTypeError::new_err(format!(
            "argument profile: expected a noisewright.Profile or the path of a profile file, \
             got {}",
            type_name(obj)
        )));
    };
    let py = obj.py();
    Ok(Arc::new(lib(
        py,
        py.detach(|| nw::Profile::from_path(&path)),
    )?))
}

/// `numpy.<function>(obj, dtype=numpy.float64)` (`asarray`, `ascontiguousarray`, `zeros` …),
/// as a float64 array of any number of dimensions.
pub fn float64_array<'py>(
    py: Python<'py>,
    function: &str,
    obj: impl IntoPyObject<'py>,
) -> PyResult<Bound<'py, numpy::PyArrayDyn<f64>>> {
    let numpy = py.import("numpy")?;
    let kwargs = pyo3::types::PyDict::new(py);
    kwargs.set_item("dtype", numpy.getattr("float64")?)?;
    let a = numpy.call_method(function, (obj,), Some(&kwargs))?;
    Ok(a.cast_into::<numpy::PyArrayDyn<f64>>()?)
}

/// A JSON value as the Python object `json.loads` makes of it (dicts, lists, floats, ints,
/// str, bool, None).
pub fn json_to_py<'py>(py: Python<'py>, value: &serde_json::Value) -> PyResult<Bound<'py, PyAny>> {
    let text = serde_json::to_string(value)
        .map_err(|e| PyRuntimeError::new_err(format!("encoding a JSON result: {e}")))?;
    py.import("json")?.call_method1("loads", (text,))
}
