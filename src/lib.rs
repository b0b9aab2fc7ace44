//! noisewright turns a noise density profile into real, reproducible noise.
#![deny(missing_docs)]

pub mod analysis;
pub mod cmd;
pub mod density;
pub mod error;
pub mod profile;
pub mod sink;
pub mod synth;

pub use error::{Error, Result};
