//! Closed-form models: the target density of every source kind and their sum, band shaping
//! and its integrals ([`density`]); the amplifier stage's noise network ([`amplifier`], which
//! the profile schema uses to expand a stage into parts, so it sits below `profile`); the burst
//! chain's occupancy, moments and Lorentzian density ([`burst`]); and what each source
//! contributes in a band ([`budget`]); a tone's SNR and ENOB ([`tone`]); the Allan deviation a
//! density gives ([`allan`]). Nothing here draws a random number.

pub mod allan;
pub mod amplifier;
pub mod budget;
pub mod burst;
pub mod density;
pub mod tone;
