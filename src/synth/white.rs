//! Seeded white Gaussian noise in independent, addressable chunks.
//!
//! Every chunk of samples is drawn from its own ChaCha8 stream (2^64 streams per seed), so any
//! chunk can be drawn without drawing the ones before it: output never depends on the order
//! or the thread in which chunks are drawn.

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;

/// Which part of the engine a stream belongs to (the top byte of a stream id).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Domain {
    /// The streaming shaper's white input, per pyramid level and chunk.
    Shaper = 0,
    /// The periodic (loop) buffer's random spectrum.
    Periodic = 1,
    /// Burst sources: one stream per burst (the stream id's chunk field is the burst's index).
    Burst = 2,
    /// ADC dither: one stream per chunk of 2048 samples of the output (see [`crate::io::adc`]).
    Dither = 3,
}

/// A seeded family of independent standard-normal streams.
#[derive(Clone)]
pub struct WhiteStreams {
    base: ChaCha8Rng,
}

impl WhiteStreams {
    /// The family for `seed`. ChaCha8 is one of rand's documented portable generators: the
    /// same seed gives the same numbers on every platform.
    pub fn new(seed: u64) -> WhiteStreams {
        WhiteStreams {
            base: ChaCha8Rng::seed_from_u64(seed),
        }
    }

    /// Stream id of chunk `chunk` of pyramid level `level` in `domain`.
    pub fn stream_id(domain: Domain, level: usize, chunk: u64) -> u64 {
        debug_assert!(level < 256 && chunk < (1 << 48));
        ((domain as u64) << 56) | ((level as u64) << 48) | chunk
    }

    /// A generator positioned at the start of stream `stream`.
    pub fn generator(&self, stream: u64) -> ChaCha8Rng {
        let mut rng = self.base.clone();
        rng.set_stream(stream);
        rng.set_word_pos(0);
        rng
    }

    /// Fill `out` with independent N(0, 1) samples (dimensionless) from the start of `stream`:
    /// the values `rand_distr`'s `StandardNormal` draws from it, drawn in bulk.
    pub fn fill(&self, stream: u64, out: &mut [f64]) {
        super::ziggurat::fill(self.generator(stream), out);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn chunks_are_reproducible_and_distinct() {
        let w = WhiteStreams::new(7);
        let mut a = vec![0.0; 64];
        let mut b = vec![0.0; 64];
        w.fill(WhiteStreams::stream_id(Domain::Shaper, 0, 3), &mut a);
        // Drawing another stream in between must not change chunk 3.
        w.fill(WhiteStreams::stream_id(Domain::Shaper, 1, 3), &mut b);
        assert_ne!(a, b);
        w.fill(WhiteStreams::stream_id(Domain::Shaper, 0, 3), &mut b);
        assert_eq!(a, b);
    }
}
