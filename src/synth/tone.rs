//! Sine tones and the DC offset: the deterministic parts of a profile.
//!
//! Tone i at absolute sample index n is `A·sin(2π·c(n) + φ)` with `c(n) = frac(f·n/fs)`, the
//! cycle fraction. `c(n)` is computed from n alone, never accumulated, so a run started at n0
//! gives exactly the same value at every n as a run started at 0, and the precision does not
//! degrade with n: `f·n` is split exactly into `p + e` (an error-free product with one fused
//! multiply-add), `p mod fs` is exact in binary floating point, so
//! `c = ((p mod fs) + e)/fs` has an absolute error of a few 1e−16 cycles for every n below
//! 2^53, instead of the `n·ε` of the naive `f·n/fs`.

use std::f64::consts::TAU;

use crate::profile::Tone;

/// frac(f·n/fs) in [0, 1): the cycle fraction of a tone of `frequency_hz` at sample `n` of a
/// stream at `sample_rate_hz`, exact to a few ulps for every n < 2^53 (see the module docs).
pub fn cycle_fraction(frequency_hz: f64, sample_rate_hz: f64, n: u64) -> f64 {
    let nf = n as f64;
    let p = frequency_hz * nf;
    let e = frequency_hz.mul_add(nf, -p); // f·n = p + e exactly
    let r = (p % sample_rate_hz + e) / sample_rate_hz;
    let c = r - r.floor();
    if c >= 1.0 { 0.0 } else { c }
}

/// The value of `tone` at absolute sample index `n` at `sample_rate_hz`, in the unit.
pub fn tone_value(tone: &Tone, sample_rate_hz: f64, n: u64) -> f64 {
    let c = cycle_fraction(tone.frequency_hz, sample_rate_hz, n);
    tone.peak * (TAU * c + tone.phase_rad).sin()
}

/// Add every tone and then `offset` (unit) to `out`, whose first element is absolute sample
/// `n0`. Each sample gets `out[k] + tone_0 + tone_1 + … + offset`, added in that order in f64.
pub fn add_deterministic(
    tones: &[Tone],
    offset: f64,
    sample_rate_hz: f64,
    n0: u64,
    out: &mut [f64],
) {
    for t in tones {
        for (k, o) in out.iter_mut().enumerate() {
            *o += tone_value(t, sample_rate_hz, n0 + k as u64);
        }
    }
    if offset != 0.0 {
        for o in out.iter_mut() {
            *o += offset;
        }
    }
}

/// Whole cycles of a tone of `frequency_hz` in a loop of `len` samples at `sample_rate_hz`:
/// `Ok(k)` when f·len/fs is within 1e−9 cycles of the integer k ≥ 1 (the loop joins with a
/// phase step below 1e−9 cycles), else `Err(f_near)`: the nearest frequency below fs/2 that
/// completes a whole number (≥ 1) of cycles, k·fs/len.
pub fn loop_cycles(frequency_hz: f64, sample_rate_hz: f64, len: u64) -> Result<u64, f64> {
    let cycles = frequency_hz * len as f64 / sample_rate_hz;
    let k = cycles.round();
    if k >= 1.0 && (cycles - k).abs() <= 1e-9 * k.max(1.0) {
        return Ok(k as u64);
    }
    // Nearest whole count strictly below Nyquist (k < len/2), at least one cycle.
    let k_max = ((len as f64 - 1.0) / 2.0).floor().max(1.0);
    Err(k.clamp(1.0, k_max) * sample_rate_hz / len as f64)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::profile::AmplitudeConvention;

    fn tone(f: f64, peak: f64, phase_deg: f64) -> Tone {
        Tone {
            name: "t".into(),
            frequency_hz: f,
            peak,
            phase_rad: phase_deg.to_radians(),
            convention: AmplitudeConvention::Peak,
        }
    }

    /// The cycle fraction at huge n against exact integer arithmetic (f and fs integers:
    /// frac(f·n/fs) = (f·n mod fs)/fs in u128).
    #[test]
    fn cycle_fraction_is_exact_for_long_runs() {
        for &(f, fs) in &[(1000u64, 48_000u64), (997, 44_100), (12_345, 1_000_000)] {
            for &n in &[
                0u64,
                1,
                12_345,
                1 << 40,
                (1 << 52) + 12_345,
                9_000_000_000_000_001,
            ] {
                let exact = ((f as u128 * n as u128) % fs as u128) as f64 / fs as f64;
                let got = cycle_fraction(f as f64, fs as f64, n);
                let d = (got - exact).abs().min(1.0 - (got - exact).abs());
                assert!(d < 1e-15, "f {f} fs {fs} n {n}: {got} vs {exact}");
            }
        }
    }

    /// Phase at n = 0 is φ: sin φ·A; 90 deg starts at the peak, and a quarter period later a
    /// 0-deg tone is at its peak.
    #[test]
    fn phase_at_sample_zero() {
        assert_eq!(tone_value(&tone(1000.0, 2.0, 0.0), 48e3, 0), 0.0);
        assert!((tone_value(&tone(1000.0, 2.0, 90.0), 48e3, 0) - 2.0).abs() < 1e-15);
        assert!((tone_value(&tone(1000.0, 2.0, 30.0), 48e3, 0) - 1.0).abs() < 1e-15);
        assert!((tone_value(&tone(1000.0, 2.0, 0.0), 48e3, 12) - 2.0).abs() < 1e-15);
    }

    #[test]
    fn a_later_start_gives_the_same_samples() {
        let t = [tone(1234.5, 1.0, 10.0), tone(77.0, 0.5, 0.0)];
        let mut a = vec![0.0; 1000];
        add_deterministic(&t, 0.25, 48e3, 0, &mut a);
        let mut b = vec![0.0; 400];
        add_deterministic(&t, 0.25, 48e3, 600, &mut b);
        assert_eq!(&a[600..], &b[..]);
    }

    #[test]
    fn loop_cycles_names_the_nearest_whole_count() {
        assert_eq!(loop_cycles(1000.0, 48e3, 48_000), Ok(1000));
        assert_eq!(loop_cycles(1000.4, 48e3, 48_000), Err(1000.0));
        assert_eq!(loop_cycles(0.2, 48e3, 48_000), Err(1.0));
        assert_eq!(loop_cycles(23_999.9, 48e3, 48_000), Err(23_999.0));
    }
}
