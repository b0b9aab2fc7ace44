//! Closed forms for tones: the SNR of a tone against noise, and the ENOB it stands for.

/// Signal-to-noise ratio in dB of a tone of mean power `signal_power` (unit², A²/2 for a sine)
/// against `noise_power` (unit²) plus `extra_noise_power` (unit², e.g. an ADC's quantisation
/// noise Q²/12; 0 when there is none): 10·log10(P_s / (P_n + P_extra)).
pub fn snr_db(signal_power: f64, noise_power: f64, extra_noise_power: f64) -> f64 {
    10.0 * (signal_power / (noise_power + extra_noise_power)).log10()
}

/// Effective number of bits from SINAD in dB, ENOB = (SINAD − 1.76)/6.02 (IEEE Std 1241,
/// full-scale sine; the 1.76 dB and 6.02 dB/bit come from the ideal quantiser's
/// 6.02·N + 1.76 dB, W. R. Bennett 1948). No distortion is modelled here, so callers pass the
/// SNR as the SINAD.
pub fn enob(sinad_db: f64) -> f64 {
    (sinad_db - 1.76) / 6.02
}

#[cfg(test)]
mod tests {
    use super::*;

    /// IEEE Std 1241 / Bennett 1948: an ideal N-bit quantiser with a full-scale sine has
    /// SNR = 6.02·N + 1.76 dB, so ENOB = N. Built from the powers: sine A = 2^(N−1)·Q has
    /// power A²/2, the quantisation noise Q²/12.
    #[test]
    fn enob_of_an_ideal_quantiser_is_its_bit_count() {
        for n in [8, 12, 16, 24] {
            let q = 1.0;
            let a = 2f64.powi(n - 1) * q;
            let snr = snr_db(a * a / 2.0, 0.0, q * q / 12.0);
            assert!(
                (snr - (6.0206 * f64::from(n) + 1.7609)).abs() < 1e-3,
                "{n}: {snr}"
            );
            // 6.02 and 1.76 are 6.0206 and 1.7609 rounded: ENOB = N·(1 + 1e−4) + 1.5e−4.
            assert!((enob(snr) - f64::from(n)).abs() < 1.1e-3 * f64::from(n) + 1e-3);
        }
        // Hand value: SINAD 74 dB → (74 − 1.76)/6.02 = 12.0 bits.
        assert!((enob(74.0) - 12.0).abs() < 1e-12);
    }
}
