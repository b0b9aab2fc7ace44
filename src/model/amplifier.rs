//! The noise model of a voltage-feedback amplifier stage and its expansion into named,
//! uncorrelated sources.
//!
//! A [`Stage`] holds the amplifier's voltage noise e_n and input current noises i_n+ / i_n−
//! (white densities with optional 1/f corners), the resistors around it and their
//! temperature. [`Stage::parts`] carries every contribution through its own gain to the
//! output (or refers it to the input), following the usual uncorrelated-source model
//! (W. Kester, Analog Devices tutorial MT-049, 2008; C. D. Motchenbacher, J. A. Connelly,
//! *Low-Noise Electronic System Design*, Wiley 1993):
//!
//! - **non-inverting** (R_s in series with the + input, R_f output → −, R_g − → ground),
//!   noise gain G_n = 1 + R_f/R_g = signal gain:
//!   `E_out² = G_n²[e_n² + 4kT·R_s + (i_n+·R_s)²] + (i_n−·R_f)² + 4kT·R_f + (R_f/R_g)²·4kT·R_g`;
//! - **inverting** (signal through R_in = R_s + R_g into −, R_f output → −, the + input to
//!   ground through an optional bias-compensation R_p): the same expression with
//!   R_g → R_s + R_g and R_s → R_p, so G_n = 1 + R_f/R_in while the signal gain is −R_f/R_in.
//!
//! Referred to the input, every part is divided by |signal gain| (for the inverting stage
//! that is not the noise gain). An optional gain–bandwidth product closes the band with one
//! pole at f_cl = GBW/G_n (single-pole closed loop); input-referred parts keep that pole (they
//! are the output noise divided by the mid-band gain), so a budget integrates the same
//! bandwidth either way.

use serde::Serialize;

use crate::units::BOLTZMANN;

/// Where the signal enters the stage.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Topology {
    /// Signal at the + input through R_s; gain 1 + R_f/R_g.
    NonInverting,
    /// Signal at the − input through R_s + R_g; gain −R_f/(R_s + R_g).
    Inverting,
}

/// Whether a stage's parts are given at its output or referred to its input.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Refer {
    /// Densities at the amplifier output (V/√Hz).
    Output,
    /// Output densities divided by |signal gain| (V/√Hz at the signal source).
    Input,
}

/// Which resistor of a stage a thermal part comes from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum StageResistor {
    /// R_s, the signal source's resistance.
    Source,
    /// R_f, output to the − input.
    Feedback,
    /// R_g, the − input to ground (non-inverting) or to the source (inverting).
    Gain,
    /// R_p, the + input to ground of an inverting stage (bias compensation).
    Bias,
}

impl StageResistor {
    /// Short symbol used in source names: `Rs`, `Rf`, `Rg`, `Rp`.
    pub fn symbol(self) -> &'static str {
        match self {
            StageResistor::Source => "Rs",
            StageResistor::Feedback => "Rf",
            StageResistor::Gain => "Rg",
            StageResistor::Bias => "Rp",
        }
    }
}

/// One input of the amplifier.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Input {
    /// The non-inverting (+) input.
    Plus,
    /// The inverting (−) input.
    Minus,
}

/// What one expanded part of a stage is.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(tag = "type", rename_all = "snake_case")]
pub enum StagePart {
    /// The amplifier's input voltage noise e_n times the noise gain.
    VoltageNoise,
    /// An input current noise flowing through `resistance_ohm` Ω (R_s or R_p at the + input,
    /// the feedback network at the − input).
    CurrentNoise {
        /// The input whose current noise this is.
        input: Input,
        /// The resistor it is named after (R_s / R_p at +, R_f at −).
        resistor: StageResistor,
        /// That resistor's value in Ω.
        resistance_ohm: f64,
    },
    /// Thermal noise √(4kTR) of one resistor, carried to the output.
    Thermal {
        /// Which resistor.
        resistor: StageResistor,
        /// Its value in Ω.
        resistance_ohm: f64,
        /// Its temperature in K.
        temperature_k: f64,
    },
}

impl StagePart {
    /// True for resistor thermal noise, false for the amplifier's own voltage and current
    /// noise (a current noise times a resistance counts as the amplifier's).
    pub fn is_resistor_thermal(&self) -> bool {
        matches!(self, StagePart::Thermal { .. })
    }

    /// A short label such as `voltage noise`, `i_n+ × Rs (1 kΩ)` or `Rf thermal (9 kΩ)`.
    pub fn label(&self) -> String {
        let ohms = |r: f64| crate::units::format_quantity(r, "\u{3a9}");
        match self {
            StagePart::VoltageNoise => "voltage noise".into(),
            StagePart::CurrentNoise {
                input,
                resistor,
                resistance_ohm,
            } => format!(
                "i_n{} \u{d7} {} ({})",
                match input {
                    Input::Plus => "+",
                    Input::Minus => "-",
                },
                resistor.symbol(),
                ohms(*resistance_ohm)
            ),
            StagePart::Thermal {
                resistor,
                resistance_ohm,
                ..
            } => format!("{} thermal ({})", resistor.symbol(), ohms(*resistance_ohm)),
        }
    }
}

/// One part of a stage with its white density and shape, ready to become a profile source.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Part {
    /// What the part is.
    pub part: StagePart,
    /// White density in V/√Hz, at the output or referred to the input per the stage's
    /// [`Refer`].
    pub density: f64,
    /// 1/f corner in Hz (power density ∝ 1 + corner/f), if any.
    pub corner_hz: Option<f64>,
    /// Closed-loop pole in Hz (power × 1/(1 + (f/pole)²)), if a GBW was given.
    pub pole_hz: Option<f64>,
}

/// A voltage-feedback amplifier stage with its resistors, all in SI base units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Stage {
    /// Where the signal enters.
    pub topology: Topology,
    /// White input voltage noise e_n in V/√Hz.
    pub voltage_density: f64,
    /// 1/f corner of e_n in Hz, if any.
    pub voltage_corner_hz: Option<f64>,
    /// White current noise of the + input in A/√Hz.
    pub current_plus: f64,
    /// White current noise of the − input in A/√Hz.
    pub current_minus: f64,
    /// 1/f corner of both current noises in Hz, if any.
    pub current_corner_hz: Option<f64>,
    /// R_s in Ω (≥ 0).
    pub source_ohm: f64,
    /// R_f in Ω (≥ 0).
    pub feedback_ohm: f64,
    /// R_g in Ω (> 0), or `None` for none (a non-inverting stage with the − input driven from
    /// the output only: gain 1 + R_f/∞ = 1).
    pub gain_ohm: Option<f64>,
    /// R_p in Ω (≥ 0), inverting stages only.
    pub bias_ohm: f64,
    /// Temperature of every resistor in K.
    pub temperature_k: f64,
    /// Gain–bandwidth product in Hz, if given.
    pub gbw_hz: Option<f64>,
    /// Output- or input-referred parts.
    pub refer: Refer,
}

impl Stage {
    /// The resistance in Ω from the − input to the signal side or ground: R_g for a
    /// non-inverting stage (∞ without R_g), R_s + R_g for an inverting one.
    fn ground_side_ohm(&self) -> f64 {
        match self.topology {
            Topology::NonInverting => self.gain_ohm.unwrap_or(f64::INFINITY),
            Topology::Inverting => self.source_ohm + self.gain_ohm.unwrap_or(0.0),
        }
    }

    /// Noise gain G_n = 1 + R_f/R (dimensionless), R = R_g (non-inverting; ∞ without R_g) or
    /// R_s + R_g (inverting).
    pub fn noise_gain(&self) -> f64 {
        1.0 + self.feedback_ohm / self.ground_side_ohm()
    }

    /// Magnitude of the signal gain (dimensionless): G_n for non-inverting, R_f/(R_s + R_g)
    /// for inverting.
    pub fn signal_gain(&self) -> f64 {
        match self.topology {
            Topology::NonInverting => self.noise_gain(),
            Topology::Inverting => self.feedback_ohm / self.ground_side_ohm(),
        }
    }

    /// Closed-loop pole GBW/G_n in Hz, if a GBW was given.
    pub fn closed_loop_pole_hz(&self) -> Option<f64> {
        self.gbw_hz.map(|g| g / self.noise_gain())
    }

    /// Every part of the stage's noise with its white density (V/√Hz) carried through its
    /// gain, in a fixed order: voltage noise, + input current noise, its resistor's thermal
    /// noise, − input current noise, R_f thermal, R_g thermal, R_s thermal (inverting).
    /// Parts that are exactly zero (a 0 Ω resistor, zero current noise) are left out.
    pub fn parts(&self) -> Vec<Part> {
        let four_kt = 4.0 * BOLTZMANN * self.temperature_k;
        let gn = self.noise_gain();
        let r_ground = self.ground_side_ohm();
        // Feedback divider gain −R_f/R seen by a voltage at the grounded end of R.
        let divider = if r_ground.is_finite() {
            self.feedback_ohm / r_ground
        } else {
            0.0
        };
        let (plus_resistor, r_plus) = match self.topology {
            Topology::NonInverting => (StageResistor::Source, self.source_ohm),
            Topology::Inverting => (StageResistor::Bias, self.bias_ohm),
        };
        let thermal = |resistor, r: f64, gain: f64| {
            (
                StagePart::Thermal {
                    resistor,
                    resistance_ohm: r,
                    temperature_k: self.temperature_k,
                },
                gain * (four_kt * r).sqrt(),
                None,
            )
        };
        let ci = self.current_corner_hz;
        let mut raw: Vec<(StagePart, f64, Option<f64>)> = vec![
            (
                StagePart::VoltageNoise,
                gn * self.voltage_density,
                self.voltage_corner_hz,
            ),
            (
                StagePart::CurrentNoise {
                    input: Input::Plus,
                    resistor: plus_resistor,
                    resistance_ohm: r_plus,
                },
                gn * self.current_plus * r_plus,
                ci,
            ),
            thermal(plus_resistor, r_plus, gn),
            (
                StagePart::CurrentNoise {
                    input: Input::Minus,
                    resistor: StageResistor::Feedback,
                    resistance_ohm: self.feedback_ohm,
                },
                self.current_minus * self.feedback_ohm,
                ci,
            ),
            thermal(StageResistor::Feedback, self.feedback_ohm, 1.0),
        ];
        if let Some(rg) = self.gain_ohm {
            raw.push(thermal(StageResistor::Gain, rg, divider));
        }
        if self.topology == Topology::Inverting {
            raw.push(thermal(StageResistor::Source, self.source_ohm, divider));
        }
        let scale = match self.refer {
            Refer::Output => 1.0,
            Refer::Input => 1.0 / self.signal_gain(),
        };
        let pole_hz = self.closed_loop_pole_hz();
        raw.into_iter()
            .filter(|(_, d, _)| *d > 0.0)
            .map(|(part, density, corner_hz)| Part {
                part,
                density: density * scale,
                corner_hz,
                pole_hz,
            })
            .collect()
    }
}

/// One-sided power density in V²/Hz at `f` Hz of a part with white density `density` V/√Hz,
/// optional 1/f corner and closed-loop pole: density²·(1 + corner/f)/(1 + (f/pole)²).
/// Returns 0 for f ≤ 0.
pub fn part_psd(density: f64, corner_hz: Option<f64>, pole_hz: Option<f64>, f: f64) -> f64 {
    if f.is_nan() || f <= 0.0 {
        return 0.0;
    }
    let rise = corner_hz.map_or(1.0, |fc| 1.0 + fc / f);
    let pole = pole_hz.map_or(1.0, |p| 1.0 / (1.0 + (f / p) * (f / p)));
    density * density * rise * pole
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The worked stage of REFERENCES §7: 5 nV/√Hz, 1 pA/√Hz on both inputs, R_s = 1 kΩ,
    /// R_f = 9 kΩ, R_g = 1 kΩ, 25 °C.
    fn worked(topology: Topology, refer: Refer) -> Stage {
        Stage {
            topology,
            voltage_density: 5e-9,
            voltage_corner_hz: None,
            current_plus: 1e-12,
            current_minus: 1e-12,
            current_corner_hz: None,
            source_ohm: 1e3,
            feedback_ohm: 9e3,
            gain_ohm: Some(1e3),
            bias_ohm: 0.0,
            temperature_k: 298.15,
            gbw_hz: None,
            refer,
        }
    }

    fn total(parts: &[Part]) -> f64 {
        parts
            .iter()
            .map(|p| p.density * p.density)
            .sum::<f64>()
            .sqrt()
    }

    // REFERENCES §7 [V] (W. Kester, ADI MT-049, 2008 — from memory of the tutorial): output
    // contributions 50.00, 40.58, 10.00, 9.00, 12.17, 36.52 nV/√Hz; total 76.22 out,
    // 7.622 RTI. Quoted to 4 significant figures: within half a unit of the last digit.
    #[test]
    fn worked_non_inverting_stage_matches_the_reference_table() {
        let parts = worked(Topology::NonInverting, Refer::Output).parts();
        let want: [(&str, f64); 6] = [
            ("voltage noise", 50.00),
            ("Rs thermal (1 k\u{3a9})", 40.58),
            ("i_n+ \u{d7} Rs (1 k\u{3a9})", 10.00),
            ("i_n- \u{d7} Rf (9 k\u{3a9})", 9.00),
            ("Rf thermal (9 k\u{3a9})", 12.17),
            ("Rg thermal (1 k\u{3a9})", 36.52),
        ];
        assert_eq!(parts.len(), want.len());
        for (label, nv) in want {
            let p = parts
                .iter()
                .find(|p| p.part.label() == label)
                .unwrap_or_else(|| panic!("no part {label}"));
            assert!(
                (p.density * 1e9 - nv).abs() <= 0.005,
                "{label}: {}",
                p.density
            );
        }
        assert!((total(&parts) * 1e9 - 76.22).abs() <= 0.005);
        let rti = worked(Topology::NonInverting, Refer::Input).parts();
        assert!((total(&rti) * 1e9 - 7.622).abs() <= 0.0005);
        let s = worked(Topology::NonInverting, Refer::Output);
        assert_eq!((s.noise_gain(), s.signal_gain()), (10.0, 10.0));
    }

    // REFERENCES §7 [V] identities: 4kT·R_f + (R_f/R_g)²·4kT·R_g = G_n²·4kT·(R_f‖R_g) and
    // (i_n−·R_f)² = G_n²·(i_n−·R_f‖R_g)² (exact math).
    #[test]
    fn feedback_network_terms_equal_the_parallel_resistance_through_the_noise_gain() {
        let s = worked(Topology::NonInverting, Refer::Output);
        let parts = s.parts();
        let power = |label: &str| {
            let d = parts
                .iter()
                .find(|p| p.part.label() == label)
                .unwrap()
                .density;
            d * d
        };
        let par = 9e3 * 1e3 / 10e3;
        let four_kt = 4.0 * BOLTZMANN * 298.15;
        let gn2 = s.noise_gain().powi(2);
        let net = power("Rf thermal (9 k\u{3a9})") + power("Rg thermal (1 k\u{3a9})");
        assert!((net / (gn2 * four_kt * par) - 1.0).abs() < 1e-14);
        let cur = power("i_n- \u{d7} Rf (9 k\u{3a9})");
        assert!((cur / (gn2 * (1e-12 * par).powi(2)) - 1.0).abs() < 1e-14);
    }

    // REFERENCES §7: the inverting stage is the same expression with R_g → R_g + R_s and
    // R_s → R_p; G_n = 1 + R_f/(R_g + R_s), signal gain −R_f/(R_g + R_s); input-referred =
    // output / |signal gain|. Hand-derived values for R_s = 1 kΩ, R_g = 1 kΩ, R_f = 9 kΩ,
    // R_p = 500 Ω: G_n = 5.5, |signal gain| = 4.5.
    #[test]
    fn inverting_stage_uses_the_noise_gain_for_the_amplifier_and_refers_by_the_signal_gain() {
        let mut s = worked(Topology::Inverting, Refer::Output);
        s.bias_ohm = 500.0;
        assert_eq!(s.noise_gain(), 5.5);
        assert_eq!(s.signal_gain(), 4.5);
        let four_kt = 4.0 * BOLTZMANN * 298.15;
        let parts = s.parts();
        let get = |label: &str| {
            parts
                .iter()
                .find(|p| p.part.label() == label)
                .unwrap()
                .density
        };
        let rel = |a: f64, b: f64| ((a - b) / b).abs();
        assert!(rel(get("voltage noise"), 5.5 * 5e-9) < 1e-15);
        assert!(rel(get("i_n+ \u{d7} Rp (500 \u{3a9})"), 5.5 * 1e-12 * 500.0) < 1e-15);
        assert!(
            rel(
                get("Rp thermal (500 \u{3a9})"),
                5.5 * (four_kt * 500.0).sqrt()
            ) < 1e-15
        );
        assert!(rel(get("i_n- \u{d7} Rf (9 k\u{3a9})"), 9e-9) < 1e-15);
        assert!(rel(get("Rf thermal (9 k\u{3a9})"), (four_kt * 9e3).sqrt()) < 1e-15);
        assert!(rel(get("Rg thermal (1 k\u{3a9})"), 4.5 * (four_kt * 1e3).sqrt()) < 1e-15);
        assert!(rel(get("Rs thermal (1 k\u{3a9})"), 4.5 * (four_kt * 1e3).sqrt()) < 1e-15);
        assert_eq!(parts.len(), 7);
        // The whole output equals the non-inverting formula with R_g → R_g + R_s, R_s → R_p.
        let mut same = worked(Topology::NonInverting, Refer::Output);
        same.source_ohm = 500.0;
        same.gain_ohm = Some(2e3);
        assert!(rel(total(&parts), total(&same.parts())) < 1e-14);
        // Referred to the input: divided by 4.5, not by the noise gain 5.5.
        s.refer = Refer::Input;
        assert!(rel(total(&s.parts()), total(&parts) / 4.5) < 1e-14);
    }

    #[test]
    fn follower_without_gain_resistor_has_unity_gain_and_no_rg_part() {
        let mut s = worked(Topology::NonInverting, Refer::Output);
        s.gain_ohm = None;
        assert_eq!(s.noise_gain(), 1.0);
        let parts = s.parts();
        assert!(parts.iter().all(|p| !p.part.label().starts_with("Rg")));
        // Exact: G_n = 1, so e_n passes unchanged.
        assert_eq!(parts[0].density, 5e-9);
    }

    #[test]
    fn gbw_sets_one_pole_at_gbw_over_noise_gain() {
        let mut s = worked(Topology::NonInverting, Refer::Output);
        s.gbw_hz = Some(10e6);
        s.voltage_corner_hz = Some(10.0);
        let parts = s.parts();
        assert!(parts.iter().all(|p| p.pole_hz == Some(1e6)));
        // Exact math: half power at the pole; the 1/f part doubles the white at the corner.
        let p = parts[0];
        let d2 = p.density * p.density;
        let at = |f: f64| part_psd(p.density, p.corner_hz, p.pole_hz, f);
        assert!((at(1e6) / (d2 * (1.0 + 1e-5) * 0.5) - 1.0).abs() < 1e-15);
        assert!((at(10.0) / (2.0 * d2 / (1.0 + 1e-10)) - 1.0).abs() < 1e-15);
        assert_eq!(at(0.0), 0.0);
    }
}
