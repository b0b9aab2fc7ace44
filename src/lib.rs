//! noisewright turns a noise density profile into real, reproducible noise, and measures
//! captures against it.
//!
//! # The facade
//!
//! - [`Profile`]: a validated profile, from a file ([`Profile::from_path`]) or TOML text
//!   ([`Profile::from_toml_str`]).
//! - [`Generator`]: the profile's samples pulled into your buffers, in its unit (V or A),
//!   the same values `generate --format raw --sample-format f64` writes for the same seed.
//! - [`Render`]: everything `generate` does (formats, sample formats, full scale or dBFS
//!   level, ADC codes, tones, channels, loop buffers, segments, CSV columns, clipping policy,
//!   the manifest), writing to a path or any [`std::io::Write`]; it returns a
//!   [`RenderReport`].
//! - [`Analysis`]: everything `analyze` does, on a capture file or samples in memory, with
//!   or without a profile; it returns an [`AnalysisReport`] holding the object
//!   `analyze --json` prints, the summary and a [`Verdict`] (for a capture of several
//!   channels, each channel's result and their correlation too).
//! - [`Join`]: the shards of one run (`generate --shard K/N`, [`run::shard`]) put back into
//!   one file and its manifest, byte for byte what a single run writes, checked to be every
//!   part of one run once; it returns a [`JoinReport`].
//! - [`budget`]: what each source contributes in a band ([`Budget`]); [`run::budget`] turns
//!   band texts into [`BandSpec`]s and gives the text and chart `budget` prints (its JSON:
//!   [`model::budget::to_json`]).
//! - [`Error`]: the one error type; [`Error::exit_code`] gives the command line's convention
//!   and [`Error::describe`] names settings as a caller wants.
//!
//! ```
//! use noisewright::{Generator, Profile, Render};
//!
//! let profile = Profile::from_toml_str(
//!     "sample_rate = \"48 kHz\"\n[band]\nlow = \"10 Hz\"\nhigh = \"20 kHz\"\n\
//!      [[floor]]\ndensity = \"4 nV/rtHz\"\ncorner = \"100 Hz\"\n",
//!     "inline",
//! )?;
//!
//! // Pull samples (volts) into a buffer.
//! let mut noise = Generator::new(&profile, 42)?;
//! let mut block = vec![0.0; 4800];
//! noise.fill(&mut block); // the next 0.1 s
//! // The designed density at 1 kHz (V²/Hz): 4 nV/√Hz·√(1 + 100/1000).
//! let d = noise.engine().density(1000.0);
//! assert!((d.sqrt() / (4e-9 * 1.1f64.sqrt()) - 1.0).abs() < 1e-3);
//!
//! // Or write a file with its manifest, as `generate` does: seed 7, one second, -20 dBFS.
//! let path = std::env::temp_dir().join(format!("nw-crate-doc-{}.wav", std::process::id()));
//! let report = Render::new(&profile)
//!     .seed(7)
//!     .samples(48_000)
//!     .level_dbfs(-20.0)
//!     .to_path(&path)?;
//! assert_eq!(report.clipped, 0);
//! assert!(report.expected_rms > 4e-9 * 20_000f64.sqrt()); // volts RMS, AC + DC
//! print!("{report}"); // the summary `generate` prints
//! # std::fs::remove_file(&path).unwrap();
//! # std::fs::remove_file(noisewright::run::manifest_path(&path)).unwrap();
//! # Ok::<(), noisewright::Error>(())
//! ```
//!
//! Whole runs are library calls too: [`Render`] does everything `generate` does, and
//! [`Analysis`] everything `analyze` does, on a file or on samples in memory. Here two
//! seconds of a profile's noise are judged against that profile: each band of the Welch
//! estimate must lie within its χ² interval (a total false-alarm probability of
//! [`run::analyze::FALSE_ALARM`] = 10⁻³ over the bands) widened by 1 dB, so a capture that
//! truly follows the profile fails with a probability of at most 10⁻³.
//!
//! ```
//! use noisewright::{Analysis, Generator, Profile};
//!
//! let profile = Profile::from_toml_str(
//!     "sample_rate = \"48 kHz\"\n[band]\nlow = \"10 Hz\"\nhigh = \"20 kHz\"\n\
//!      [[floor]]\ndensity = \"4 nV/rtHz\"\ncorner = \"100 Hz\"\n",
//!     "inline",
//! )?;
//! let mut noise = Generator::new(&profile, 42)?;
//! let mut samples = vec![0.0; 96_000]; // volts
//! noise.fill(&mut samples);
//! let report = Analysis::of_samples(&samples, 48_000.0)
//!     .profile(&profile)
//!     .run()?;
//! assert!(report.verdict.passed(), "{}", report.summary);
//! // The same object `analyze --json` prints.
//! assert_eq!(report.json["pass"], true);
//! assert!(report.json["comparison"]["bands_checked"].as_u64().unwrap() >= 20);
//! # Ok::<(), noisewright::Error>(())
//! ```
//!
//! # The parts behind it
//!
//! Data flows one way: a profile file becomes a [`Profile`] (quantities in [`units`]);
//! [`model`] gives its one-sided target density S(f) in unit²/Hz and the other closed forms;
//! [`synth`] designs and runs the engine that synthesises noise with that density (and
//! computes the density it actually makes); [`io`] scales, quantises and writes the samples
//! with a manifest (or the integer codes of an ideal N-bit converter) and reads captures back
//! as physical samples; [`analysis`] measures samples; [`report`] draws pictures and the HTML
//! report. [`run`] holds whole runs as library calls; the binary only turns flags into
//! them.
#![deny(missing_docs)]

pub mod analysis;

pub mod error;
pub mod fft;
pub mod io;
pub mod model;
pub mod profile;
pub mod report;
pub mod run;
mod stop;
pub mod synth;
pub mod units;
mod wide;

pub use error::{Error, Result, Setting};
pub use model::budget::{BandSpec, Budget, budget};
pub use profile::Profile;
pub use run::{
    Analysis, AnalysisReport, Generator, Join, JoinReport, Render, RenderReport, Verdict,
};

/// The README's Rust example, compiled and run as a doctest.
#[doc = include_str!("../README.md")]
#[cfg(doctest)]
pub struct ReadmeDoctests;
