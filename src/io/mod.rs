//! Files in and out: the formats and sample formats, the writers behind one sink trait
//! ([`sink`]), the readers of captures ([`source`]), the manifest written beside a file and
//! read back ([`manifest`]), the scale a WAV carries in its INFO comment ([`wav_info`]), and the
//! codes of an ideal converter ([`adc`]).

pub mod adc;
pub mod manifest;
mod quote;
pub mod sink;
pub mod source;
pub mod wav_info;
