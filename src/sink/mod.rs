//! Writers behind one [`Sink`] trait: WAV, CSV, raw; the manifest.
