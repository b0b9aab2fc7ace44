//! Low-frequency peak-to-peak the way data sheets quote it: the record band-limited (0.1 Hz to
//! 10 Hz by default), then max − min over consecutive windows (10 s by default), summarised by
//! the median and the largest window (common practice).
//!
//! **The filter** is causal and streaming (bounded memory for any record): a second-order
//! Butterworth high-pass at the band's low edge followed by a fourth-order Butterworth
//! low-pass at its high edge (an order pair commonly used for 0.1–10 Hz noise test filters:
//! common practice, from memory), each made digital by the bilinear transform with its cut-off
//! pre-warped, `ω_a = 2·fs·tan(π·f_c/fs)` (A. V. Oppenheim, R. W. Schafer, *Discrete-Time
//! Signal Processing*, §7.1 [from memory]), run as second-order sections in transposed direct
//! form II. Its state starts as the steady state of the first sample held forever, so a
//! residual offset does not ring through the first window (the construction SciPy's
//! `signal.sosfilt_zi` documents, which the cross-check uses).
//!
//! **The windows** are consecutive, `round(window·fs)` samples each, after a settling time in
//! which the high-pass's start transient (the step from the first sample to the signal that
//! follows) decays to 1/1000: its slowest pole decays at `2π·f_lo·sin(π/(2n))` per second
//! (n = [`HIGH_PASS_ORDER`]), so the first `round(ln(1000)/(2π·f_lo·sin(π/(2n)))·fs)` samples
//! (15.5 s at 0.1 Hz) are filtered but not used ([`settling_s`]). A last window that is not
//! full is not used. Samples are in the capture's unit.

use std::f64::consts::PI;

/// Order of the high-pass at the band's low edge.
pub const HIGH_PASS_ORDER: u32 = 2;
/// Order of the low-pass at the band's high edge.
pub const LOW_PASS_ORDER: u32 = 4;

/// One second-order section: `H(z) = (b0 + b1 z⁻¹ + b2 z⁻²)/(1 + a1 z⁻¹ + a2 z⁻²)`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Section {
    /// Numerator b0, b1, b2.
    pub b: [f64; 3],
    /// Denominator a1, a2 (a0 = 1).
    pub a: [f64; 2],
}

impl Section {
    /// Power gain |H(e^{i2πf/fs})|² at `f_hz` for a rate of `fs` Hz (dimensionless).
    pub fn power_gain(&self, f_hz: f64, fs: f64) -> f64 {
        let w = 2.0 * PI * f_hz / fs;
        let eval = |c0: f64, c1: f64, c2: f64| {
            let re = c0 + c1 * w.cos() + c2 * (2.0 * w).cos();
            let im = -c1 * w.sin() - c2 * (2.0 * w).sin();
            re * re + im * im
        };
        eval(self.b[0], self.b[1], self.b[2]) / eval(1.0, self.a[0], self.a[1])
    }

    /// Gain at DC (z = 1).
    fn dc_gain(&self) -> f64 {
        (self.b[0] + self.b[1] + self.b[2]) / (1.0 + self.a[0] + self.a[1])
    }
}

/// The sections of a Butterworth filter of even `order` with its −3 dB point at `fc_hz`, at a
/// rate of `fs` Hz: low-pass, or high-pass when `high_pass` (see the module docs).
pub fn butterworth(order: u32, fc_hz: f64, fs: f64, high_pass: bool) -> Vec<Section> {
    let k = 2.0 * fs;
    let wc = k * (PI * fc_hz / fs).tan();
    (0..order / 2)
        .map(|i| {
            // Analog pole pair −wc·sin θ ± i·wc·cos θ: s² + 2·wc·sin θ·s + wc².
            let theta = PI * f64::from(2 * i + 1) / f64::from(2 * order);
            let (a1, a0) = (2.0 * wc * theta.sin(), wc * wc);
            let d = [k * k + a1 * k + a0, 2.0 * (a0 - k * k), k * k - a1 * k + a0];
            let n = if high_pass {
                [k * k, -2.0 * k * k, k * k]
            } else {
                [a0, 2.0 * a0, a0]
            };
            Section {
                b: [n[0] / d[0], n[1] / d[0], n[2] / d[0]],
                a: [d[1] / d[0], d[2] / d[0]],
            }
        })
        .collect()
}

/// The band-limiting filter of a band `lo_hz..hi_hz` at `fs` Hz: the high-pass sections, then
/// the low-pass ones.
pub fn band_filter(lo_hz: f64, hi_hz: f64, fs: f64) -> Vec<Section> {
    let mut s = butterworth(HIGH_PASS_ORDER, lo_hz, fs, true);
    s.extend(butterworth(LOW_PASS_ORDER, hi_hz, fs, false));
    s
}

/// The settling time of the band filter with its high-pass at `lo_hz`, s (see the module
/// docs).
pub fn settling_s(lo_hz: f64) -> f64 {
    let decay = 2.0 * PI * lo_hz * (PI / f64::from(2 * HIGH_PASS_ORDER)).sin();
    1000f64.ln() / decay
}

/// Power gain of `sections` at `f_hz`, rate `fs` Hz (dimensionless).
pub fn power_gain(sections: &[Section], f_hz: f64, fs: f64) -> f64 {
    sections.iter().map(|s| s.power_gain(f_hz, fs)).product()
}

/// Streaming max − min over consecutive windows of the band-limited record.
#[derive(Debug, Clone)]
pub struct WindowPeaks {
    sections: Vec<Section>,
    state: Vec<[f64; 2]>,
    window: usize,
    /// Samples still to filter before the first window.
    settle: usize,
    started: bool,
    in_window: usize,
    lo: f64,
    hi: f64,
    peaks: Vec<f64>,
}

impl WindowPeaks {
    /// Windows of `window` samples (≥ 1) of the record filtered by `sections`, after the first
    /// `settle` samples.
    pub fn new(sections: Vec<Section>, window: usize, settle: usize) -> WindowPeaks {
        WindowPeaks {
            state: vec![[0.0; 2]; sections.len()],
            sections,
            window: window.max(1),
            settle,
            started: false,
            in_window: 0,
            lo: f64::INFINITY,
            hi: f64::NEG_INFINITY,
            peaks: Vec::new(),
        }
    }

    /// Sets every section's state to its steady state for the input `u` held forever.
    fn settle(&mut self, mut u: f64) {
        for (s, z) in self.sections.iter().zip(&mut self.state) {
            let y = u * s.dc_gain();
            *z = [y - s.b[0] * u, s.b[2] * u - s.a[1] * y];
            u = y;
        }
    }

    /// Adds the next samples (unit).
    pub fn push(&mut self, x: &[f64]) {
        if let (false, Some(&x0)) = (self.started, x.first()) {
            self.settle(x0);
            self.started = true;
        }
        for &v in x {
            let mut u = v;
            for (s, z) in self.sections.iter().zip(&mut self.state) {
                let y = s.b[0] * u + z[0];
                z[0] = s.b[1] * u - s.a[0] * y + z[1];
                z[1] = s.b[2] * u - s.a[1] * y;
                u = y;
            }
            if self.settle > 0 {
                self.settle -= 1;
                continue;
            }
            self.lo = self.lo.min(u);
            self.hi = self.hi.max(u);
            self.in_window += 1;
            if self.in_window == self.window {
                self.peaks.push(self.hi - self.lo);
                self.in_window = 0;
                self.lo = f64::INFINITY;
                self.hi = f64::NEG_INFINITY;
            }
        }
    }

    /// max − min of every full window, in order (unit).
    pub fn peaks(&self) -> &[f64] {
        &self.peaks
    }
}

/// Median of `x` (the mean of the two middle values for an even count); `NaN` when empty.
pub fn median(x: &[f64]) -> f64 {
    if x.is_empty() {
        return f64::NAN;
    }
    let mut v = x.to_vec();
    v.sort_by(f64::total_cmp);
    let m = v.len() / 2;
    if v.len() % 2 == 1 {
        v[m]
    } else {
        0.5 * (v[m - 1] + v[m])
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The sections of a second-order Butterworth low-pass at fs/4 have the closed form of the
    /// bilinear transform at tan(π/4) = 1: b = (1, 2, 1)/(2 + √2), a1 = 0, a2 = (2 − √2)/(2 + √2)
    /// (worked by hand from the module's formulas); −3 dB at the cut-off, the pass band flat,
    /// and a high-pass is 0 at DC.
    #[test]
    fn sections_have_their_closed_forms() {
        let s = butterworth(2, 250.0, 1000.0, false);
        let r2 = std::f64::consts::SQRT_2;
        let g = 1.0 / (2.0 + r2);
        assert!((s[0].b[0] - g).abs() < 1e-15 && (s[0].b[1] - 2.0 * g).abs() < 1e-15);
        assert!(s[0].a[0].abs() < 1e-15 && (s[0].a[1] - (2.0 - r2) * g).abs() < 1e-15);
        let f = band_filter(0.1, 10.0, 1000.0);
        assert_eq!(f.len(), 3);
        let lp = &f[1..];
        assert!((power_gain(lp, 10.0, 1000.0) - 0.5).abs() < 1e-12);
        assert!((power_gain(&f[..1], 0.1, 1000.0) - 0.5).abs() < 1e-9);
        assert!((power_gain(&f, 1.0, 1000.0) - 1.0).abs() < 1e-3);
        assert!(power_gain(&f[..1], 0.0, 1000.0) < 1e-30);
    }

    /// A constant input gives no output and no ringing (steady start); a sine in the pass band
    /// swings 2·A·|H| peak to peak (less what the samples miss of its crests) in each window
    /// once the start is past.
    #[test]
    fn windows_of_a_constant_and_a_sine() {
        let fs = 1000.0;
        let mut w = WindowPeaks::new(band_filter(0.1, 10.0, fs), 10_000, 5000);
        w.push(&vec![3.0; 35_000]);
        assert_eq!(w.peaks().len(), 3);
        assert!((settling_s(0.1) - 15.547).abs() < 1e-3);
        assert!(w.peaks().iter().all(|p| p.abs() < 1e-12), "{:?}", w.peaks());
        let sections = band_filter(0.1, 10.0, fs);
        let gain = power_gain(&sections, 2.0, fs).sqrt();
        let mut w = WindowPeaks::new(sections, 10_000, 0);
        let x: Vec<f64> = (0..100_000)
            .map(|n| 0.5 * (2.0 * PI * 2.0 * n as f64 / fs).sin())
            .collect();
        for c in x.chunks(777) {
            w.push(c);
        }
        // Samples miss the crests by at most a factor cos(π·f/fs) = 1 − 2.0e−5 each.
        let last = w.peaks()[9];
        let swing = 2.0 * 0.5 * gain;
        let miss = 1.0 - (PI * 2.0 / fs).cos();
        assert!(
            last <= swing + 1e-9 && last >= swing * (1.0 - miss),
            "{last} vs {swing}"
        );
        assert_eq!(median(&[3.0, 1.0, 2.0, 10.0]), 2.5);
    }
}
