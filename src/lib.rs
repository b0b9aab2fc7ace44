//! noisewright turns a noise density profile into real, reproducible noise.
//!
//! Data flows one way: a profile file becomes a [`profile::Profile`]; [`density`] gives its
//! one-sided target density S(f) in unit²/Hz (unit = V or A); [`synth`] designs and runs the
//! engine that synthesises noise with that density (and computes the density it actually
//! makes); [`sink`] scales, quantises and writes the samples with a manifest (or, through
//! [`adc`], the integer codes of an ideal N-bit converter over a physical range); [`analysis`]
//! measures samples. [`source`] reads captures (WAV, CSV, raw) back as physical samples, and
//! [`figure`] draws an analysis as SVG and HTML. [`run`] holds whole runs as builders
//! ([`Render`], [`Analysis`]); [`cmd`] holds the subcommands the binary calls, which only turn
//! flags into them.
//!
//! ```
//! use noisewright::profile::parse_profile;
//! use noisewright::synth::Generator;
//!
//! let profile = parse_profile(
//!     "sample_rate = \"48 kHz\"\n[band]\nlow = \"10 Hz\"\nhigh = \"20 kHz\"\n\
//!      [[floor]]\ndensity = \"4 nV/rtHz\"\ncorner = \"100 Hz\"\n",
//!     "inline",
//! )?;
//! let mut noise = Generator::new(&profile, 42)?;
//! let mut block = vec![0.0; 4800];
//! noise.fill(&mut block); // the next 0.1 s, in volts
//! // Designed density at 1 kHz (V²/Hz) and the expected RMS (V) of the output.
//! let d = noise.design().density(1000.0);
//! assert!((d.sqrt() / (4e-9 * 1.1f64.sqrt()) - 1.0).abs() < 1e-3); // 4 nV/√Hz·√(1 + 100/1000)
//! let rms = noise.design().variance().sqrt();
//! assert!(rms > 4e-9 * 20_000f64.sqrt());
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
#![deny(missing_docs)]

pub mod adc;
pub mod amplifier;
pub mod analysis;
pub mod budget;
pub mod burst;
pub mod cmd;
pub mod density;
pub mod error;
pub mod fft;
pub mod figure;
pub mod plot;
pub mod profile;
pub mod run;
pub mod sink;
pub mod source;
pub mod synth;

pub use error::{Error, Result, Setting};
pub use profile::Profile;
pub use run::{Analysis, AnalysisReport, Render, RenderReport, Verdict};
pub use synth::Generator;

/// The README's Rust example, compiled and run as a doctest.
#[doc = include_str!("../README.md")]
#[cfg(doctest)]
pub struct ReadmeDoctests;
