//! `noisewright.Profile`: a validated profile, read from a file or from TOML text.

use std::path::PathBuf;
use std::sync::Arc;

use pyo3::prelude::*;

use crate::convert::{json_to_py, lib};

/// A validated noise profile (read-only).
///
/// Make one with Profile.from_path(path) or Profile.from_toml(text). A bad profile raises
/// noisewright.ProfileError naming the file, the line, the key and what is expected.
#[pyclass(module = "noisewright", name = "Profile", frozen)]
pub struct Profile {
    pub inner: Arc<nw::Profile>,
}

#[pymethods]
impl Profile {
    /// Reads and validates the profile file (TOML) at `path` (str or os.PathLike).
    #[staticmethod]
    fn from_path(py: Python<'_>, path: PathBuf) -> PyResult<Profile> {
        let p = lib(py, py.detach(|| nw::Profile::from_path(&path)))?;
        Ok(Profile { inner: Arc::new(p) })
    }

    /// Validates a profile given as TOML text; `label` names it in error messages as a
    /// file name would.
    #[staticmethod]
    #[pyo3(signature = (text, label = "<string>"))]
    fn from_toml(py: Python<'_>, text: &str, label: &str) -> PyResult<Profile> {
        let p = lib(py, py.detach(|| nw::Profile::from_toml_str(text, label)))?;
        Ok(Profile { inner: Arc::new(p) })
    }

    /// The sample rate, Hz.
    #[getter]
    fn sample_rate(&self) -> f64 {
        self.inner.sample_rate_hz
    }

    /// The symbol of the samples' unit: "V", "A", or a sensor unit such as "Pa" or "rad/s".
    #[getter]
    fn unit(&self) -> &'static str {
        self.inner.unit.symbol()
    }

    /// The band of interest, (low, high) in Hz.
    #[getter]
    fn band(&self) -> (f64, f64) {
        (self.inner.band.low_hz, self.inner.band.high_hz)
    }

    /// The Butterworth order of the band's upper edge (0: a brick wall).
    #[getter]
    fn band_order(&self) -> u32 {
        self.inner.band.order
    }

    /// The number of channels (1 unless the profile sets `channels`).
    #[getter]
    fn channels(&self) -> usize {
        self.inner.channels
    }

    /// The profile's name, or None.
    #[getter]
    fn name(&self) -> Option<String> {
        self.inner.name.clone()
    }

    /// How errors and manifests name the profile (its file as given, or the label).
    #[getter]
    fn label(&self) -> String {
        self.inner.label().to_string()
    }

    /// The validated profile as a dict, in SI units (the manifest's `profile` object).
    fn to_dict<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyAny>> {
        json_to_py(py, &self.inner.to_json())
    }

    fn __repr__(&self) -> String {
        format!(
            "noisewright.Profile({:?}: {} Hz, {}, band {}..{} Hz, {} channel{})",
            self.inner.label(),
            self.inner.sample_rate_hz,
            self.inner.unit.symbol(),
            self.inner.band.low_hz,
            self.inner.band.high_hz,
            self.inner.channels,
            if self.inner.channels == 1 { "" } else { "s" }
        )
    }
}
