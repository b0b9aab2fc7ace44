//! Whole runs: `render` (what `generate` writes), `analyze` (what `analyze --json` prints)
//! and `budget` (what `budget --json` prints), each one call into the library with the GIL
//! released.

use numpy::{PyArrayMethods, PyUntypedArrayMethods};
use pyo3::exceptions::PyValueError;
use pyo3::prelude::*;

use nw::{Analysis, Render, Setting};

use crate::convert::{Quantity, float64_array, json_to_py, lib, profile_arg, whole, whole_or};

/// Writes `path` (its format from the extension: .wav, .csv, .npy, .h, .f64 and the other raw
/// ones) and its manifest `path.json`, exactly as `noisewright generate PROFILE -o path` does
/// with the same settings, and returns the manifest as a dict (None when `path` is a device or a pipe,
/// which has no manifest).
///
/// `samples` or `seconds` (a number, or a text such as "2 min") give the length, default
/// 10 s; `level_dbfs` (a number or "-20dBFS") or `full_scale` (a number in the profile's unit,
/// or a text such as "10uV") the scale; `sample_format` is "f32", "f64", "i16", "i24" or
/// "i32"; `start` the first frame of a segment. Both files are written or neither; clipping
/// raises ValueError and writes nothing. The GIL is released while the file is written.
#[pyfunction]
#[pyo3(
    signature = (
        profile, path, seed = None, samples = None, seconds = None, level_dbfs = None,
        full_scale = None, sample_format = None, start = None
    ),
    text_signature = "(profile, path, seed=1, samples=None, seconds=None, level_dbfs=None, \
                      full_scale=None, sample_format=None, start=0)"
)]
#[allow(clippy::too_many_arguments)]
pub fn render<'py>(
    py: Python<'py>,
    profile: &Bound<'py, PyAny>,
    path: std::path::PathBuf,
    seed: Option<&Bound<'py, PyAny>>,
    samples: Option<&Bound<'py, PyAny>>,
    seconds: Option<Quantity>,
    level_dbfs: Option<Quantity>,
    full_scale: Option<Quantity>,
    sample_format: Option<String>,
    start: Option<&Bound<'py, PyAny>>,
) -> PyResult<Bound<'py, PyAny>> {
    let profile = profile_arg(profile)?;
    let seed = whole_or(seed, "seed", 1)?;
    let start = whole_or(start, "start", 0)?;
    let samples = samples.map(|s| whole(s, "samples")).transpose()?;
    if samples.is_some() && seconds.is_some() {
        return Err(PyValueError::new_err(
            "arguments samples and seconds: give the length one way, not both",
        ));
    }
    if level_dbfs.is_some() && full_scale.is_some() {
        return Err(PyValueError::new_err(
            "arguments level_dbfs and full_scale: give the scale one way, not both",
        ));
    }
    let report = py.detach(|| {
        let mut r = Render::new(&profile).seed(seed);
        if let Some(n) = samples {
            r = r.samples(n);
        }
        if start > 0 {
            r = r.start_sample(start);
        }
        r = match seconds {
            Some(Quantity::Number(s)) => r.seconds(s),
            Some(Quantity::Text(t)) => r.text(Setting::Duration, &t)?,
            None => r,
        };
        r = match level_dbfs {
            Some(Quantity::Number(db)) => r.level_dbfs(db),
            Some(Quantity::Text(t)) => r.text(Setting::Level, &t)?,
            None => r,
        };
        r = match full_scale {
            Some(Quantity::Number(v)) => r.full_scale(v),
            Some(Quantity::Text(t)) => r.text(Setting::FullScale, &t)?,
            None => r,
        };
        if let Some(f) = &sample_format {
            r = r.text(Setting::SampleFormat, f)?;
        }
        r.to_path(&path)
    });
    match lib(py, report)?.manifest {
        Some(m) => json_to_py(py, &m),
        None => Ok(py.None().into_bound(py)),
    }
}

/// Measures `samples` (one channel, physical units, any array-like of numbers) taken at
/// `sample_rate` Hz, and judges them against `profile` when one is given (a Profile or the
/// path of a profile file): returns the dict `noisewright analyze --json` prints (with a
/// profile, "pass" is True or False). The GIL is released while the samples are measured.
#[pyfunction]
#[pyo3(signature = (samples, sample_rate, profile = None))]
pub fn analyze<'py>(
    py: Python<'py>,
    samples: &Bound<'py, PyAny>,
    sample_rate: f64,
    profile: Option<&Bound<'py, PyAny>>,
) -> PyResult<Bound<'py, PyAny>> {
    let profile = profile.map(profile_arg).transpose()?;
    let array = float64_array(py, "ascontiguousarray", samples)?;
    let array = array
        .try_readonly()
        .map_err(|e| PyValueError::new_err(format!("argument samples: cannot be read now: {e}")))?;
    if array.ndim() != 1 {
        return Err(PyValueError::new_err(format!(
            "argument samples: expected one channel, shape (n,), got {:?} (pass one column, \
             e.g. samples[:, 0])",
            array.shape()
        )));
    }
    let x = array.as_slice().map_err(|_| {
        PyValueError::new_err("argument samples: numpy.ascontiguousarray gave a strided array")
    })?;
    let report = py.detach(|| {
        let mut a = Analysis::of_samples(x, sample_rate);
        if let Some(p) = &profile {
            a = a.profile(p);
        }
        a.run()
    });
    json_to_py(py, &lib(py, report)?.json)
}

/// A band of a budget: a text such as "0.1Hz..10Hz", or a (low, high) pair in Hz.
#[derive(FromPyObject)]
pub enum BandArg {
    /// `"LOW..HIGH"` with units.
    Text(String),
    /// (low, high) in Hz.
    Pair((f64, f64)),
}

/// What each source of `profile` (a Profile or the path of a profile file) contributes in
/// each band: the dict `noisewright budget --json` prints. `bands` is a list of texts
/// ("0.1Hz..10Hz") or (low, high) pairs in Hz, default the profile's band; `order` the
/// Butterworth order of every band's upper edge (0: brick wall), default the profile's.
#[pyfunction]
#[pyo3(signature = (profile, bands = None, order = None))]
pub fn budget<'py>(
    py: Python<'py>,
    profile: &Bound<'py, PyAny>,
    bands: Option<Vec<BandArg>>,
    order: Option<u32>,
) -> PyResult<Bound<'py, PyAny>> {
    let profile = profile_arg(profile)?;
    let texts: Vec<String> = bands
        .unwrap_or_default()
        .into_iter()
        .map(|b| match b {
            BandArg::Text(t) => t,
            BandArg::Pair((lo, hi)) => format!("{lo}Hz..{hi}Hz"),
        })
        .collect();
    let json = py.detach(|| {
        let specs = nw::run::budget::budget_bands(&profile, &texts, order)?;
        let b = nw::run::budget::budget_of(&profile, &specs)?;
        Ok(nw::model::budget::to_json(&b))
    });
    json_to_py(py, &lib(py, json)?)
}
