//! `noisewright.Generator` and `noisewright.generate`: a profile's samples as float64 numpy
//! arrays in its unit, the same values `generate --format raw --sample-format f64` writes.

use std::sync::Mutex;

use numpy::{PyArrayDyn, PyArrayMethods, PyUntypedArrayMethods};
use pyo3::exceptions::{PyRuntimeError, PyValueError};
use pyo3::prelude::*;

use crate::convert::{count, float64_array, lib, profile_arg, whole_or};

/// A profile's noise as a stream of samples in its unit (V, A or a sensor unit), from a seed
/// and a start frame: consecutive fill() and read() calls continue the same run, bit for bit what
/// `noisewright generate --format raw --sample-format f64 --seed SEED --start-sample START`
/// writes. One channel gives arrays of shape (n,), several give (n, channels).
///
/// The GIL is released while samples are computed, so other Python threads run meanwhile;
/// calls on one Generator from several threads take turns.
#[pyclass(module = "noisewright", name = "Generator", frozen)]
pub struct Generator {
    /// The engine and the next frame's index.
    state: Mutex<(nw::Generator, u64)>,
    channels: usize,
    sample_rate_hz: f64,
}

impl Generator {
    /// Writes the next frames into `out` (frames × channels, interleaved), the GIL released.
    fn fill_slice(&self, py: Python<'_>, out: &mut [f64]) -> PyResult<()> {
        let frames = (out.len() / self.channels) as u64;
        py.detach(|| {
            let mut state = self.lock()?;
            state.0.fill(out);
            state.1 += frames;
            Ok(())
        })
    }

    /// The engine and the next frame's index, for this call alone (calls take turns).
    fn lock(&self) -> PyResult<std::sync::MutexGuard<'_, (nw::Generator, u64)>> {
        self.state.lock().map_err(|_| {
            PyRuntimeError::new_err("this Generator failed in an earlier call: make a new one")
        })
    }

    /// The shape of `frames` frames: (frames,) for one channel, (frames, channels) otherwise.
    fn shape(&self, frames: usize) -> Vec<usize> {
        match self.channels {
            1 => vec![frames],
            c => vec![frames, c],
        }
    }
}

#[pymethods]
impl Generator {
    /// The run of `profile` (a Profile, or the path of a profile file) with every random
    /// number drawn from `seed`, from frame `start` on (0-based).
    #[new]
    #[pyo3(
        signature = (profile, seed = None, start = None),
        text_signature = "(profile, seed=1, start=0)"
    )]
    fn new(
        py: Python<'_>,
        profile: &Bound<'_, PyAny>,
        seed: Option<&Bound<'_, PyAny>>,
        start: Option<&Bound<'_, PyAny>>,
    ) -> PyResult<Generator> {
        let profile = profile_arg(profile)?;
        let (seed, start) = (whole_or(seed, "seed", 1)?, whole_or(start, "start", 0)?);
        let g = lib(
            py,
            py.detach(|| nw::Generator::starting_at(&profile, seed, start)),
        )?;
        Ok(Generator {
            channels: g.channels(),
            sample_rate_hz: g.engine().sample_rate_hz(),
            state: Mutex::new((g, start)),
        })
    }

    /// Writes the next samples into `array` in place: a C-contiguous, writeable float64
    /// array of shape (n,) for one channel or (n, channels) for several. Nothing is
    /// allocated per call.
    fn fill(&self, py: Python<'_>, array: &Bound<'_, PyAny>) -> PyResult<()> {
        let array = array.cast::<PyArrayDyn<f64>>().map_err(|_| {
            pyo3::exceptions::PyTypeError::new_err(format!(
                "argument array: expected a numpy.ndarray of dtype float64, got {}",
                describe_array(array)
            ))
        })?;
        let want = self.shape_text();
        let shape = array.shape().to_vec();
        let fits = match (self.channels, shape.as_slice()) {
            (1, [_]) => true,
            (c, [_, k]) => c > 1 && *k == c,
            _ => false,
        };
        if !fits {
            return Err(PyValueError::new_err(format!(
                "argument array: expected shape {want}, got {shape:?}"
            )));
        }
        let mut rw = array.try_readwrite().map_err(|e| {
            PyValueError::new_err(format!(
                "argument array: expected a writeable array not in use elsewhere: {e}"
            ))
        })?;
        let out = rw.as_slice_mut().map_err(|_| {
            PyValueError::new_err(
                "argument array: expected a C-contiguous array (numpy.ascontiguousarray makes one)",
            )
        })?;
        self.fill_slice(py, out)
    }

    /// The next `n` frames as a new float64 array of shape (n,) or (n, channels).
    fn read<'py>(
        &self,
        py: Python<'py>,
        n: &Bound<'py, PyAny>,
    ) -> PyResult<Bound<'py, PyArrayDyn<f64>>> {
        let frames = count(n, "n")?;
        let array = zeros(py, &self.shape(frames))?;
        {
            let mut rw = array.try_readwrite().map_err(|e| {
                PyRuntimeError::new_err(format!("a new array is not writeable: {e}"))
            })?;
            let out = rw.as_slice_mut().map_err(|_| {
                PyRuntimeError::new_err("numpy.zeros gave an array that is not C-contiguous")
            })?;
            self.fill_slice(py, out)?;
        }
        Ok(array)
    }

    /// The designed one-sided power density, unit²/Hz, at the frequencies `f` (Hz, each in
    /// (0, sample_rate/2]): what the engine actually synthesises (filters, images and bursts
    /// included), for each channel. Returns an array of the shape of `f`.
    fn density<'py>(
        &self,
        py: Python<'py>,
        f: &Bound<'py, PyAny>,
    ) -> PyResult<Bound<'py, PyArrayDyn<f64>>> {
        let f = float64_array(py, "asarray", f)?;
        let f = f
            .try_readonly()
            .map_err(|e| PyValueError::new_err(format!("argument f: cannot be read now: {e}")))?;
        let nyquist = self.sample_rate_hz / 2.0;
        if let Some(bad) = f.as_array().iter().find(|x| !(**x > 0.0 && **x <= nyquist)) {
            return Err(PyValueError::new_err(format!(
                "argument f: expected frequencies in (0, {nyquist}] Hz, got {bad}"
            )));
        }
        let state = self.lock()?;
        let d = f.as_array().mapv(|x| state.0.engine().density(x));
        Ok(numpy::PyArray::from_owned_array(py, d))
    }

    /// Channels per frame.
    #[getter]
    fn channels(&self) -> usize {
        self.channels
    }

    /// The sample rate, Hz.
    #[getter]
    fn sample_rate(&self) -> f64 {
        self.sample_rate_hz
    }

    /// The index of the next frame (start plus the frames made so far).
    #[getter]
    fn position(&self) -> PyResult<u64> {
        Ok(self.lock()?.1)
    }

    /// The expected RMS of each channel, in the profile's unit (AC + DC: noise, bursts,
    /// tones and offset).
    #[getter]
    fn expected_rms(&self) -> PyResult<f64> {
        Ok(self.lock()?.0.expected_rms())
    }

    fn __repr__(&self) -> PyResult<String> {
        Ok(format!(
            "noisewright.Generator({} Hz, {} channel(s), next frame {})",
            self.sample_rate_hz,
            self.channels,
            self.position()?
        ))
    }
}

impl Generator {
    fn shape_text(&self) -> String {
        match self.channels {
            1 => "(n,)".into(),
            c => format!("(n, {c})"),
        }
    }
}

/// A new float64 array of zeros (numpy.zeros: a size numpy cannot allocate raises its
/// MemoryError or ValueError).
fn zeros<'py>(py: Python<'py>, shape: &[usize]) -> PyResult<Bound<'py, PyArrayDyn<f64>>> {
    float64_array(py, "zeros", shape.to_vec())
}

/// An argument's type for messages, with its dtype when it is an array.
fn describe_array(obj: &Bound<'_, PyAny>) -> String {
    match obj.getattr("dtype") {
        Ok(d) => format!("an array of dtype {d}"),
        Err(_) => crate::convert::type_name(obj),
    }
}

/// `samples` frames of `profile` (a Profile or the path of a profile file) from frame
/// `start`, seed `seed`: a new float64 array in the profile's unit, shape (samples,) for one
/// channel and (samples, channels) for several, equal bit for bit to
/// `noisewright generate --format raw --sample-format f64` with the same profile, seed and
/// start. The GIL is released while the samples are computed.
#[pyfunction]
#[pyo3(
    signature = (profile, samples, seed = None, start = None),
    text_signature = "(profile, samples, seed=1, start=0)"
)]
pub fn generate<'py>(
    py: Python<'py>,
    profile: &Bound<'py, PyAny>,
    samples: &Bound<'py, PyAny>,
    seed: Option<&Bound<'py, PyAny>>,
    start: Option<&Bound<'py, PyAny>>,
) -> PyResult<Bound<'py, PyArrayDyn<f64>>> {
    count(samples, "samples")?;
    let g = Generator::new(py, profile, seed, start)?;
    g.read(py, samples)
}
