//! Engines that turn a target density into samples.
//!
//! - [`Design`] + [`Shaper`]: the streaming multirate engine (stationary, bounded memory,
//!   any band.low down to about 1e-12 of the sample rate, exact designed density).
//! - [`periodic_buffer`]: the loop buffer, one inverse FFT with random amplitudes and phases.

mod design;
mod periodic;
mod shaper;
mod white;

pub use design::{Design, FFT_LEN, HOP, INTERP_TAPS, Level, RATIO, SHAPER_TAPS};
pub use periodic::{MAX_PERIODIC_SAMPLES, periodic_buffer, periodic_variance};
pub use shaper::Shaper;
pub use white::{Domain, WhiteStreams};
