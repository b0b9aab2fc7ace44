//! Files in and out: the formats and sample formats, the writers behind one sink trait
//! ([`sink`], with the manifest), the readers of captures ([`source`]), and the codes of an
//! ideal converter ([`adc`]).

pub mod adc;
pub mod sink;
pub mod source;
