//! [`Generator`]: a profile's samples pulled into the caller's buffers, one channel or several
//! interleaved, exactly the values `generate` writes as raw f64.

use crate::error::{Error, Result, Setting};
use crate::profile::Profile;
use crate::synth::{self, ChannelGenerator};

/// Samples the engine makes per step when a caller's buffer is larger, as `generate` does
/// (its working buffers, a burst's column among them, are this size, not the caller's).
pub(crate) const BLOCK_SAMPLES: usize = 1 << 16;

/// Refuses a first frame at or past [`synth::MAX_START`], the last the engine can seek to.
pub(crate) fn check_start_sample(n: u64) -> Result<()> {
    let limit = synth::MAX_START;
    if n >= limit {
        return Err(Error::setting(
            Setting::StartSample,
            format!(
                "{n} is beyond the last possible start, sample {}",
                limit - 1
            ),
        ));
    }
    Ok(())
}

/// A profile's noise (with its bursts, tones and offset) as a pull stream in physical units
/// (the profile's unit, V or A): the same values, bit for bit, that a [`crate::Render`] (and
/// `generate --format raw --sample-format f64`) writes for the same profile and seed, however
/// the caller sizes its buffers. Several channels come as interleaved frames.
///
/// ```
/// use noisewright::{Generator, Profile};
///
/// let profile = Profile::from_toml_str(
///     "sample_rate = \"48 kHz\"\n[band]\nlow = \"10 Hz\"\nhigh = \"20 kHz\"\n\
///      [[floor]]\ndensity = \"4 nV/rtHz\"\n",
///     "inline",
/// )?;
/// let mut noise = Generator::new(&profile, 42)?;
/// let mut block = vec![0.0; 4800];
/// noise.fill(&mut block); // the first 0.1 s, volts
///
/// // A generator started at sample 4000 continues the same run.
/// let mut later = Generator::starting_at(&profile, 42, 4000)?;
/// let mut tail = vec![0.0; 800];
/// later.fill(&mut tail);
/// assert_eq!(tail[..], block[4000..]);
/// # Ok::<(), noisewright::Error>(())
/// ```
pub struct Generator {
    inner: Inner,
}

enum Inner {
    One(Box<synth::Generator>),
    Many(Box<ChannelGenerator>),
}

impl Generator {
    /// The run of `profile` from sample 0, with every random number drawn from `seed`.
    pub fn new(profile: &Profile, seed: u64) -> Result<Generator> {
        Generator::starting_at(profile, seed, 0)
    }

    /// The run of `profile` and `seed` from frame `start_sample` on (0-based): its samples
    /// are those the run from 0 makes from there. A start at or past
    /// [`synth::MAX_START`] is refused ([`Setting::StartSample`]).
    pub fn starting_at(profile: &Profile, seed: u64, start_sample: u64) -> Result<Generator> {
        check_start_sample(start_sample)?;
        let inner = if profile.channels > 1 {
            Inner::Many(Box::new(ChannelGenerator::starting_at(
                profile,
                seed,
                start_sample,
            )?))
        } else {
            Inner::One(Box::new(synth::Generator::starting_at(
                profile,
                seed,
                start_sample,
            )?))
        };
        Ok(Generator { inner })
    }

    /// Channels per frame (the profile's `channels`).
    pub fn channels(&self) -> usize {
        match &self.inner {
            Inner::One(_) => 1,
            Inner::Many(m) => m.channels(),
        }
    }

    /// Fills `out` with the next samples, in the profile's unit; with several channels,
    /// `out.len() / channels` interleaved frames.
    ///
    /// # Panics
    /// With several channels, if `out.len()` is not a whole number of frames.
    ///
    /// Called from a thread outside any rayon pool, the call runs on a worker of rayon's
    /// global pool (all cores, or `RAYON_NUM_THREADS`), so the engine's parallel steps share
    /// the cores; the values are the same on any pool.
    pub fn fill(&mut self, out: &mut [f64]) {
        if rayon::current_thread_index().is_none() && rayon::current_num_threads() > 1 {
            // One hand-off per call; the engine's steps then run on the pool's workers (off
            // a worker they would run one after another on this thread).
            rayon::scope(|_| self.fill_here(out));
        } else {
            self.fill_here(out);
        }
    }

    /// [`Generator::fill`] on the calling thread's pool (or alone, off any pool), in blocks
    /// of about [`BLOCK_SAMPLES`] samples: the engine's working buffers stay that size
    /// however large `out` is.
    fn fill_here(&mut self, out: &mut [f64]) {
        let ch = self.channels();
        let block = self
            .engine()
            .design()
            .block_samples((BLOCK_SAMPLES / ch).max(1024))
            * ch;
        for part in out.chunks_mut(block) {
            match &mut self.inner {
                Inner::One(g) => g.fill(part),
                Inner::Many(m) => m.fill_frames(part),
            }
        }
    }

    /// The expected RMS of each channel's output, in the profile's unit (AC + DC: noise,
    /// bursts, tones and offset).
    pub fn expected_rms(&self) -> f64 {
        let g = self.engine();
        (g.variance() + g.mean() * g.mean()).sqrt()
    }

    /// One channel's engine: its designed density ([`synth::Generator::density`], unit²/Hz),
    /// design, bursts and tones.
    pub fn engine(&self) -> &synth::Generator {
        match &self.inner {
            Inner::One(g) => g,
            Inner::Many(m) => m.generator(),
        }
    }
}
