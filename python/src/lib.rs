//! The Python module `noisewright`: the library's facade (profiles, generators, whole runs,
//! analyses and budgets) over numpy arrays and dicts. Every call goes straight to the
//! library; this crate only converts arguments and results, releases the GIL while the
//! engine works, and turns the library's errors into Python exceptions.
//!
//! Python's names of a run's settings are the keyword arguments (`seconds`, `level_dbfs`,
//! `start` …); an error about one names it as `argument NAME`, where the command line writes
//! `option --flag`. Profile errors carry the command line's words unchanged.

mod convert;
mod generate;
mod profile;
mod runs;

use pyo3::prelude::*;

pyo3::create_exception!(
    noisewright,
    ProfileError,
    pyo3::exceptions::PyValueError,
    "A profile that cannot be read or used: its message names the file, the line where known, \
     the key and what is expected, as the command line prints it. Attributes: `file`, `line` \
     (None where unknown), `key`."
);

/// noisewright: a noise density profile made into reproducible noise (numpy arrays in the
/// profile's unit, or files with their manifest), and samples measured against a profile.
///
/// Profile, Generator, generate, render, analyze and budget are the whole interface; the
/// same profile, seed and start give, bit for bit, what `noisewright generate --format raw
/// --sample-format f64` writes.
#[pymodule]
fn noisewright(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add("ProfileError", m.py().get_type::<ProfileError>())?;
    m.add("__version__", env!("CARGO_PKG_VERSION"))?;
    m.add_class::<profile::Profile>()?;
    m.add_class::<generate::Generator>()?;
    m.add_function(wrap_pyfunction!(generate::generate, m)?)?;
    m.add_function(wrap_pyfunction!(runs::render, m)?)?;
    m.add_function(wrap_pyfunction!(runs::analyze, m)?)?;
    m.add_function(wrap_pyfunction!(runs::budget, m)?)?;
    Ok(())
}
