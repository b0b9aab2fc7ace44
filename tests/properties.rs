//! Property tests over random valid profiles.
//!
//! A seeded generator writes random **valid** profile texts (TOML) that cover the schema:
//! sample rates from 4 kHz to 4 MHz, bands with every Butterworth order and the brick wall,
//! white floors with and without corners and slopes, resistors at kelvin and Celsius
//! temperatures, amplifier stages of both topologies, tables, bursts, tones, an offset and
//! correlated channels, each value spelled in one of the ways the parser accepts. Every text
//! goes through the public parser, so the properties exercise parsing too; the parsed values
//! are checked against the ones the generator meant, bit for bit.
//!
//! - **A.** A few seconds generated with the library's engine (`Generator`, or
//!   `ChannelGenerator` for several channels) and measured as `analyze` measures it (Welch
//!   bands, χ² intervals with the false-alarm budget of `run::analyze::FALSE_ALARM`, tones'
//!   leakage left out) pass against the designed density.
//! - **B.** `format_quantity_exact` then `parse_quantity` gives back the same `f64` for any
//!   finite value of every dimension; `format_quantity` (display) comes back within its 6
//!   digits and is stable.
//! - **C.** The target density and the designed density are positive and finite across the
//!   band (edges, corners, Nyquist included), and the design is within 0.1 dB of the target
//!   inside the band, as docs/profiles.md ("Band edges") promises.
//!
//! The generator is hand-rolled over `rand_chacha` (already a dependency) rather than the
//! proptest crate: proptest 1.12 needs rustc 1.88, above the crate's `rust-version` 1.85, it
//! would add a dependency and build time for every contributor, and what it adds — shrinking —
//! matters little here: each case prints its seed and its profile text, and
//! `NOISEWRIGHT_PROPERTY_SEED=<case seed>` re-runs that one case. The master seed is fixed, so
//! the test is deterministic; `NOISEWRIGHT_PROPERTY_CASES=<n>` runs more cases locally.

use std::fmt::Write as _;

use noisewright::analysis::capture::{BANDS_PER_DECADE, FIRST_BIN, segment_length};
use noisewright::analysis::compare::{bands_inside, compare_with_design};
use noisewright::analysis::tones::without_tones;
use noisewright::analysis::welch::Welch;
use noisewright::model::density::{self, target_psd};
use noisewright::profile::{
    Dimension, Profile, SourceKind, format_quantity, format_quantity_exact, parse_profile,
    parse_quantity,
};
use noisewright::run::analyze::{FALSE_ALARM, TONE_LEAKAGE};
use noisewright::synth::{ChannelGenerator, Generator};
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;

/// Fixed master seed: every case seed derives from it.
const MASTER_SEED: u64 = 0x5052_4f50_5345_4544;
/// Random profiles per property (A and C share them).
const CASES: usize = 40;
/// Seconds generated per case in property A (fewer when the sample cap is reached).
const SECONDS: f64 = 3.0;
/// At most this many frames per case in property A (keeps the file fast at MHz rates).
const MAX_FRAMES: usize = 1 << 22;
/// Bursts get dwell times that give at least this many expected jumps in the record, so their
/// realised step power is close to its expectation (see [`burst_tolerance_db`]).
const MIN_BURST_JUMPS: f64 = 2.0e4;
/// The design's stated accuracy inside the band (docs/profiles.md "Band edges"; docs/methods.md), dB.
const DESIGN_ACCURACY_DB: f64 = 0.1;
/// What the design's FIRs cost at a table's kink, in dB per unit change of the log-log
/// slope of the power density there (docs/profiles.md, "Band edges": about 0.01 dB per unit, measured
/// up to 0.0098 at 48 kHz … 4 MHz and kinks at 3 Hz … 7 kHz).
const KINK_DB_PER_SLOPE: f64 = 0.0105;

/// The largest change of log-log slope (power density) at any point of any table of `p`;
/// outside its points a table is flat (slope 0).
fn sharpest_kink(p: &Profile) -> f64 {
    let mut worst: f64 = 0.0;
    for s in &p.sources {
        if let SourceKind::Table { points } = &s.kind {
            let mut slopes = vec![0.0];
            for w in points.windows(2) {
                slopes.push(2.0 * (w[1].1 / w[0].1).ln() / (w[1].0 / w[0].0).ln());
            }
            slopes.push(0.0);
            for w in slopes.windows(2) {
                worst = worst.max((w[1] - w[0]).abs());
            }
        }
    }
    worst
}

/// SplitMix64 step (S. Vigna; common practice for deriving independent seeds).
fn splitmix(x: u64) -> u64 {
    let mut z = x.wrapping_add(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

/// The seeds of the cases to run: the fixed ones from the master seed, or the one in
/// `NOISEWRIGHT_PROPERTY_SEED`.
fn case_seeds() -> Vec<u64> {
    if let Ok(s) = std::env::var("NOISEWRIGHT_PROPERTY_SEED") {
        return vec![
            s.trim()
                .parse()
                .expect("NOISEWRIGHT_PROPERTY_SEED is a u64"),
        ];
    }
    let n = std::env::var("NOISEWRIGHT_PROPERTY_CASES")
        .ok()
        .and_then(|s| s.trim().parse().ok())
        .unwrap_or(CASES);
    (0..n as u64)
        .map(|i| splitmix(MASTER_SEED ^ i.wrapping_mul(0xD1B5_4A32_D192_ED03)))
        .collect()
}

/// What the parser should make of one key: its name, the value meant, and where the parsed
/// profile holds it.
type Expected = (String, f64, Box<dyn Fn(&Profile) -> f64>);

/// A random profile: its text and the values the generator meant, to check the parser with.
struct Case {
    seed: u64,
    text: String,
    /// (what, intended value, parsed value getter) checked after parsing.
    expect: Vec<Expected>,
}

/// Builds profile texts, spelling each value in one of the forms the parser accepts.
struct Gen {
    rng: ChaCha8Rng,
    text: String,
    expect: Vec<Expected>,
}

impl Gen {
    fn uniform(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.rng.random::<f64>()
    }

    fn log_uniform(&mut self, lo: f64, hi: f64) -> f64 {
        (lo.ln() + (hi.ln() - lo.ln()) * self.rng.random::<f64>()).exp()
    }

    fn chance(&mut self, p: f64) -> bool {
        self.rng.random::<f64>() < p
    }

    fn pick<'a>(&mut self, options: &[&'a str]) -> &'a str {
        options[self.rng.random_range(0..options.len())]
    }

    fn count(&mut self, lo: usize, hi: usize) -> usize {
        self.rng.random_range(lo..=hi)
    }

    /// Round to `digits` significant digits half the time (values as people type them), else
    /// keep every bit (values as programs write them).
    fn typed(&mut self, v: f64) -> f64 {
        if self.chance(0.5) {
            let d = self.count(1, 4);
            format!("{v:.*e}", d - 1).parse().expect("a number")
        } else {
            v
        }
    }

    fn typed_log(&mut self, lo: f64, hi: f64) -> f64 {
        let v = self.log_uniform(lo, hi);
        self.typed(v)
    }

    fn typed_uniform(&mut self, lo: f64, hi: f64) -> f64 {
        let v = self.uniform(lo, hi);
        self.typed(v)
    }

    /// TOML for `v` of dimension `dim`: a bare number in SI units, or a string with an SI
    /// prefix and one of the unit's spellings. `unit` is "V" or "A".
    fn value(&mut self, v: f64, dim: Dimension, unit: &str) -> String {
        if self.chance(0.3) {
            // Bare TOML float; `{:?}` is the shortest round-trip form and always has a `.` or
            // an exponent, so TOML reads it as a float.
            return format!("{v:?}");
        }
        let sym = match dim {
            Dimension::Frequency => "Hz".to_string(),
            Dimension::Time => "s".to_string(),
            Dimension::Temperature => "K".to_string(),
            Dimension::Resistance => self.pick(&["Ohm", "ohm", "\u{3a9}", "\u{2126}"]).into(),
            Dimension::Density => {
                format!(
                    "{unit}{}",
                    self.pick(&["/rtHz", "/\u{221a}Hz", "/sqrt(Hz)"])
                )
            }
            Dimension::Amplitude => unit.to_string(),
            Dimension::RateWalk => format!("{unit}/rts"),
        };
        let text = format_quantity_exact(v, &sym);
        // Both spellings of micro, and a space or none before the unit.
        let text = if self.chance(0.5) {
            text.replace('\u{b5}', "u")
        } else {
            text
        };
        let text = if self.chance(0.3) {
            text.replacen(' ', "", 1)
        } else {
            text
        };
        format!("\"{text}\"")
    }

    /// `key = value` for a quantity, and remember to check what the parser makes of it.
    fn key(
        &mut self,
        key: &str,
        v: f64,
        dim: Dimension,
        unit: &str,
        parsed: impl Fn(&Profile) -> f64 + 'static,
    ) {
        let t = self.value(v, dim, unit);
        writeln!(self.text, "{key} = {t}").unwrap();
        self.expect.push((key.to_string(), v, Box::new(parsed)));
    }

    fn line(&mut self, s: &str) {
        self.text.push_str(s);
        self.text.push('\n');
    }
}

/// The source with `name` of a parsed profile.
fn kind<'a>(p: &'a Profile, name: &str) -> &'a SourceKind {
    &p.sources
        .iter()
        .find(|s| s.name == name)
        .unwrap_or_else(|| panic!("no source named {name:?}"))
        .kind
}

/// A random valid profile for `seed`.
fn random_profile(seed: u64) -> Case {
    let mut g = Gen {
        rng: ChaCha8Rng::seed_from_u64(seed),
        text: String::new(),
        expect: Vec::new(),
    };
    let use_amp = g.chance(0.3);
    let unit = if !use_amp && g.chance(0.2) { "A" } else { "V" };
    writeln!(g.text, "name = \"property case {seed}\"").unwrap();
    if unit == "A" || g.chance(0.5) {
        writeln!(g.text, "unit = \"{unit}\"").unwrap();
    }
    let fs = g.log_uniform(4e3, 4e6);
    let fs = g.typed(fs);
    g.key("sample_rate", fs, Dimension::Frequency, unit, |p| {
        p.sample_rate_hz
    });
    let nyquist = fs / 2.0;
    let high = if g.chance(0.15) {
        nyquist
    } else {
        let h = g.log_uniform(0.02, 0.98) * nyquist;
        g.typed(h).min(nyquist)
    };
    let low = high * g.log_uniform(1e-6, 0.3);
    let low = g.typed(low);
    g.line("[band]");
    g.key("low", low, Dimension::Frequency, unit, |p| p.band.low_hz);
    g.key("high", high, Dimension::Frequency, unit, |p| p.band.high_hz);
    let order = g.count(0, 8);
    if order > 0 || g.chance(0.5) {
        writeln!(g.text, "order = {order}").unwrap();
    }
    // Densities scale: volts around nV/√Hz, amperes around pA/√Hz.
    let d0 = if unit == "V" { 1e-9 } else { 1e-12 };
    let mut gaussian = 0;

    let floors = g.count(0, 3);
    for i in 0..floors {
        g.line("[[floor]]");
        let name = format!("floor {}", i + 1);
        let d = d0 * g.log_uniform(0.1, 100.0);
        let d = g.typed(d);
        let n = name.clone();
        g.key(
            "density",
            d,
            Dimension::Density,
            unit,
            move |p| match kind(p, &n) {
                SourceKind::Floor { density, .. } => *density,
                _ => f64::NAN,
            },
        );
        if g.chance(0.6) {
            let fc = g.log_uniform(low / 100.0, 2.0 * fs);
            let fc = g.typed(fc);
            let n = name.clone();
            g.key(
                "corner",
                fc,
                Dimension::Frequency,
                unit,
                move |p| match kind(p, &n) {
                    SourceKind::Floor { corner_hz, .. } => corner_hz.unwrap_or(f64::NAN),
                    _ => f64::NAN,
                },
            );
            if g.chance(0.6) {
                let slope = if g.chance(0.15) {
                    2.0
                } else {
                    g.typed_uniform(0.05, 2.0)
                };
                writeln!(g.text, "slope = {slope:?}").unwrap();
                let n = name.clone();
                g.expect.push((
                    "slope".into(),
                    slope,
                    Box::new(move |p| match kind(p, &n) {
                        SourceKind::Floor { slope, .. } => *slope,
                        _ => f64::NAN,
                    }),
                ));
            }
        }
        gaussian += 1;
    }

    let resistors = g.count(0, 2);
    for i in 0..resistors {
        g.line("[[resistor]]");
        let name = format!("thermal {i}");
        writeln!(g.text, "name = \"{name}\"").unwrap();
        let r = g.log_uniform(1.0, 1e7);
        let r = g.typed(r);
        let n = name.clone();
        g.key(
            "resistance",
            r,
            Dimension::Resistance,
            unit,
            move |p| match kind(p, &n) {
                SourceKind::Resistor { resistance_ohm, .. } => *resistance_ohm,
                _ => f64::NAN,
            },
        );
        let n = name.clone();
        let temp = move |p: &Profile| match kind(p, &n) {
            SourceKind::Resistor { temperature_k, .. } => *temperature_k,
            _ => f64::NAN,
        };
        match g.count(0, 2) {
            0 => {}
            1 => {
                let t = g.log_uniform(0.1, 1000.0);
                let t = g.typed(t);
                g.key("temperature", t, Dimension::Temperature, unit, temp);
            }
            _ => {
                // Celsius: the parser adds 273.15 to the number, one rounding.
                let c = g.uniform(-200.0, 300.0);
                let c = g.typed(c);
                let spelled = g.pick(&["C", " C", " \u{b0}C", "\u{2103}"]);
                writeln!(g.text, "temperature = \"{c:?}{spelled}\"").unwrap();
                g.expect
                    .push(("temperature".into(), c + 273.15, Box::new(temp)));
            }
        }
        gaussian += 1;
    }

    if g.chance(0.3) {
        g.line("[[table]]");
        let points = g.count(1, 5);
        let mut f = low * g.log_uniform(0.1, 2.0);
        let mut items = Vec::new();
        for _ in 0..points {
            let d = d0 * g.log_uniform(0.3, 30.0);
            let (ft, dt) = (
                g.value(f, Dimension::Frequency, unit),
                g.value(d, Dimension::Density, unit),
            );
            items.push(format!("[{ft}, {dt}]"));
            f *= g.log_uniform(1.5, 1000.0);
        }
        writeln!(g.text, "points = [{}]", items.join(", ")).unwrap();
        gaussian += 1;
    }

    if use_amp {
        g.line("[[amplifier]]");
        let inverting = g.chance(0.5);
        writeln!(
            g.text,
            "topology = \"{}\"",
            if inverting {
                "inverting"
            } else {
                "non-inverting"
            }
        )
        .unwrap();
        let parts = |g: &mut Gen, k: &str, v: f64, dim: Dimension, u: &str| {
            let t = g.value(v, dim, u);
            writeln!(g.text, "{k} = {t}").unwrap();
        };
        let en = g.log_uniform(1e-9, 1e-7);
        let en = g.typed(en);
        parts(&mut g, "voltage_density", en, Dimension::Density, "V");
        if g.chance(0.5) {
            let c = g.log_uniform(low / 10.0, high);
            let c = g.typed(c);
            parts(&mut g, "voltage_corner", c, Dimension::Frequency, "V");
        }
        let both = g.chance(0.6);
        if both || g.chance(0.5) {
            let i = g.log_uniform(1e-15, 1e-11);
            let i = g.typed(i);
            parts(&mut g, "current_density", i, Dimension::Density, "A");
        }
        if !both {
            for k in ["current_density_plus", "current_density_minus"] {
                let i = if g.chance(0.1) {
                    0.0
                } else {
                    g.typed_log(1e-15, 1e-11)
                };
                parts(&mut g, k, i, Dimension::Density, "A");
            }
        }
        if g.chance(0.4) {
            let c = g.log_uniform(low / 10.0, high);
            let c = g.typed(c);
            parts(&mut g, "current_corner", c, Dimension::Frequency, "V");
        }
        if g.chance(0.7) {
            let rs = if g.chance(0.15) {
                0.0
            } else {
                g.typed_log(10.0, 1e6)
            };
            parts(&mut g, "source_resistance", rs, Dimension::Resistance, "V");
        }
        let rf = if !inverting && g.chance(0.15) {
            0.0
        } else {
            g.typed_log(100.0, 1e6)
        };
        parts(
            &mut g,
            "feedback_resistance",
            rf,
            Dimension::Resistance,
            "V",
        );
        if inverting || g.chance(0.8) {
            let rg = g.log_uniform(10.0, 1e5);
            let rg = g.typed(rg);
            parts(&mut g, "gain_resistance", rg, Dimension::Resistance, "V");
        }
        if inverting && g.chance(0.5) {
            let rp = if g.chance(0.2) {
                0.0
            } else {
                g.typed_log(10.0, 1e5)
            };
            parts(&mut g, "bias_resistance", rp, Dimension::Resistance, "V");
        }
        if g.chance(0.3) {
            let t = g.log_uniform(4.0, 500.0);
            let t = g.typed(t);
            parts(&mut g, "temperature", t, Dimension::Temperature, "V");
        }
        if g.chance(0.5) {
            let gbw = g.log_uniform(high / 3.0, 1e9);
            let gbw = g.typed(gbw);
            parts(&mut g, "gbw", gbw, Dimension::Frequency, "V");
        }
        if g.chance(0.5) {
            let r = g.pick(&["output", "input"]);
            writeln!(g.text, "refer = \"{r}\"").unwrap();
        }
        gaussian += 1;
    }

    // Rough RMS of the Gaussian part, to put bursts, tones and the offset at sensible sizes.
    let sigma = d0 * 3.0 * high.sqrt();
    let bursts = if g.chance(0.3) { g.count(1, 2) } else { 0 };
    let bursts = if gaussian == 0 { bursts.max(1) } else { bursts };
    let frames = (SECONDS * fs).min(MAX_FRAMES as f64);
    for _ in 0..bursts {
        g.line("[[burst]]");
        let k = g.count(2, 4);
        let span = sigma * g.log_uniform(0.1, 3.0);
        let levels: Vec<String> = (0..k)
            .map(|_| {
                let v = span * g.uniform(-1.0, 1.0);
                let v = g.typed(v);
                g.value(v, Dimension::Amplitude, unit)
            })
            .collect();
        writeln!(g.text, "levels = [{}]", levels.join(", ")).unwrap();
        // Mean dwell of a visit in samples, so the record holds ≥ MIN_BURST_JUMPS jumps.
        let longest = (frames / MIN_BURST_JUMPS).max(0.2);
        let centre = g.log_uniform(0.1, longest);
        let dwell: Vec<String> = (0..k)
            .map(|_| {
                let t = centre * g.log_uniform(0.3, 1.0) / fs;
                let t = g.typed(t);
                g.value(t, Dimension::Time, unit)
            })
            .collect();
        writeln!(g.text, "dwell = [{}]", dwell.join(", ")).unwrap();
        if k > 2 && g.chance(0.6) {
            // A random jump matrix with a zero diagonal, sometimes a one-way cycle
            // (0 → 1 → … → 0, reachable but not reversible).
            let cycle = g.chance(0.3);
            let rows: Vec<String> = (0..k)
                .map(|i| {
                    let mut r: Vec<f64> = (0..k)
                        .map(|j| {
                            if j == i {
                                0.0
                            } else if cycle {
                                if j == (i + 1) % k { 1.0 } else { 0.0 }
                            } else {
                                g.uniform(0.05, 1.0)
                            }
                        })
                        .collect();
                    let s: f64 = r.iter().sum();
                    r.iter_mut().for_each(|x| *x /= s);
                    format!(
                        "[{}]",
                        r.iter()
                            .map(|x| format!("{x:?}"))
                            .collect::<Vec<_>>()
                            .join(", ")
                    )
                })
                .collect();
            writeln!(g.text, "next = [{}]", rows.join(", ")).unwrap();
        } else if k == 2 && g.chance(0.3) {
            g.line("next = [[0, 1], [1, 0]]");
        }
        match g.count(0, 2) {
            0 => {}
            1 => g.line("sampling = \"instant\""),
            _ => g.line("sampling = \"mean\""),
        }
    }
    let tones = if g.chance(0.35) { g.count(1, 2) } else { 0 };
    for _ in 0..tones {
        g.line("[[tone]]");
        let f = g.typed_log(low, high.min(0.45 * fs)).min(0.45 * fs);
        g.key("frequency", f, Dimension::Frequency, unit, move |p| {
            p.tones
                .iter()
                .map(|t| t.frequency_hz)
                .find(|&x| x == f)
                .unwrap_or(f64::NAN)
        });
        let a = sigma * g.log_uniform(0.03, 300.0);
        let a = g.typed(a);
        let key = if g.chance(0.5) { "peak" } else { "rms" };
        let t = g.value(a, Dimension::Amplitude, unit);
        writeln!(g.text, "{key} = {t}").unwrap();
        match g.count(0, 4) {
            0 => {}
            1 => {
                let deg = g.uniform(-360.0, 360.0);
                let deg = g.typed(deg);
                writeln!(g.text, "phase = {deg:?}").unwrap();
            }
            2 => {
                let deg = g.uniform(-360.0, 360.0);
                let deg = g.typed(deg);
                writeln!(g.text, "phase = \"{deg:?} deg\"").unwrap();
            }
            3 => {
                let deg = g.uniform(0.0, 360.0);
                let deg = g.typed(deg);
                writeln!(g.text, "phase = \"{deg:?}\u{b0}\"").unwrap();
            }
            _ => {
                let rad = g.uniform(-7.0, 7.0);
                let rad = g.typed(rad);
                writeln!(g.text, "phase = \"{rad:?} rad\"").unwrap();
            }
        }
    }

    // Top-level keys after the tables would land in the last table, so they are put in
    // front of the first one.
    let mut top = String::new();
    if g.chance(0.3) {
        let sign = if g.chance(0.5) { -1.0 } else { 1.0 };
        let off = sign * sigma * g.log_uniform(0.1, 1e4);
        let off = g.typed(off);
        let t = g.value(off, Dimension::Amplitude, unit);
        writeln!(top, "offset = {t}").unwrap();
        g.expect
            .push(("offset".into(), off, Box::new(|p: &Profile| p.offset)));
    }
    if g.chance(0.25) {
        let n = g.count(2, 3);
        writeln!(top, "channels = {n}").unwrap();
        match g.count(0, 3) {
            0 => {}
            1 => {
                let lo = -1.0 / (n as f64 - 1.0);
                let rho = if g.chance(0.2) {
                    1.0
                } else {
                    g.typed_uniform(lo * 0.95, 0.99)
                };
                writeln!(top, "correlation = {rho:?}").unwrap();
            }
            _ => {
                // A Gram matrix of random unit vectors is a valid correlation matrix.
                let v: Vec<Vec<f64>> = (0..n)
                    .map(|_| {
                        let x: Vec<f64> = (0..n).map(|_| g.uniform(-1.0, 1.0)).collect();
                        let norm = x.iter().map(|a| a * a).sum::<f64>().sqrt();
                        x.iter().map(|a| a / norm).collect()
                    })
                    .collect();
                let rows: Vec<String> = (0..n)
                    .map(|i| {
                        let r: Vec<String> = (0..n)
                            .map(|j| {
                                let c = if i == j {
                                    1.0
                                } else {
                                    let (a, b) = (i.min(j), i.max(j));
                                    v[a].iter().zip(&v[b]).map(|(x, y)| x * y).sum::<f64>()
                                };
                                format!("{c:?}")
                            })
                            .collect();
                        format!("[{}]", r.join(", "))
                    })
                    .collect();
                writeln!(top, "correlation = [{}]", rows.join(", ")).unwrap();
            }
        }
    }
    let at = g.text.find("\n[").map_or(g.text.len(), |i| i + 1);
    g.text.insert_str(at, &top);
    if gaussian == 0 && bursts == 0 {
        unreachable!("every profile has a source");
    }
    Case {
        seed,
        text: g.text,
        expect: g.expect,
    }
}

/// Parses a case and checks every value the generator meant came out of the parser
/// unchanged (bit for bit: the parser's conversions are exact, see `profile::quantity`).
fn parse_case(case: &Case) -> Result<Profile, String> {
    let p = parse_profile(&case.text, "property.toml")
        .map_err(|e| format!("the parser refused a valid profile: {e}"))?;
    for (what, want, got) in &case.expect {
        let g = got(&p);
        if g.to_bits() != want.to_bits() {
            return Err(format!("{what}: parsed {g:e}, meant {want:e}"));
        }
    }
    Ok(p)
}

/// The report of a failed case: its seed, the profile text and what went wrong.
fn failure(case: &Case, what: &str) -> String {
    format!(
        "case seed {} (re-run with NOISEWRIGHT_PROPERTY_SEED={}): {what}\n--- profile ---\n{}---",
        case.seed, case.seed, case.text
    )
}

/// Extra tolerance (dB) for the bursts' realised step power.
///
/// Welch's χ² intervals assume Gaussian noise. A burst's density above its corners is set by
/// its steps, and the record's realised sum of squared steps S = Σ Δ² over N jumps scales
/// every such bin together, a fluctuation that averaging over bins does not remove
/// (docs/testing.md, "Testing bursts"). With N̄ the expected jumps, M the largest squared step
/// and E the mean squared step per jump, Var(S)/E[S]² ≤ (M/E + Var(N)/N̄)/N̄ (a renewal-reward
/// sum with Var(Δ²) ≤ M·E; common practice); Var(N) ≤ 2·N̄ holds for an alternating
/// exponential renewal, and the bound below takes 4·N̄ and doubles the whole for correlations
/// between successive steps, so rel. std ≤ √(2(M/E + 4)/N̄). The band ratio moves by the
/// burst's share of the band's density times that; `z` sets the two-sided probability of one
/// such excursion per burst.
fn burst_tolerance_db(g: &Generator, seconds: f64, band: (f64, f64), z: f64) -> f64 {
    let mut x = 0.0;
    for m in g.bursts() {
        let b = m.burst();
        let rate = m.jump_rate_hz();
        let mut e = 0.0;
        let mut big: f64 = 0.0;
        for (i, (row, p_i)) in b.next.iter().zip(m.occupancy()).enumerate() {
            for (j, &p_ij) in row.iter().enumerate() {
                if p_ij > 0.0 {
                    let d2 = (b.levels[i] - b.levels[j]).powi(2);
                    e += p_i / b.dwell_s[i] * p_ij * d2 / rate;
                    big = big.max(d2);
                }
            }
        }
        let n = rate * seconds;
        let rel = if e > 0.0 {
            (2.0 * (big / e + 4.0) / n).sqrt()
        } else {
            0.0
        };
        // The burst's largest share of the total density over the checked band.
        let share = (0..=200)
            .map(|i| band.0 * (band.1 / band.0).powf(f64::from(i) / 200.0))
            .map(|f| m.density(f) / g.density(f))
            .fold(0.0, f64::max);
        x += z * share * rel;
    }
    assert!(x < 0.5, "burst tolerance fraction {x} is too wide to test");
    -10.0 * (1.0 - x).log10()
}

/// z with a two-sided normal tail probability of 1e−3 (|z| > 3.2905 has p = 1e−3).
const Z_1E3: f64 = 3.2905;

/// Property A for one case: generate, measure as `analyze` does, compare with the design.
fn generate_and_measure(case: &Case, p: &Profile) -> Result<Measured, String> {
    let fs = p.sample_rate_hz;
    let frames = ((SECONDS * fs) as usize).min(MAX_FRAMES);
    let seconds = frames as f64 / fs;
    let channels = p.channels;
    // The last channel is the most mixed one; a single channel is the mono engine.
    let mut samples = Vec::with_capacity(frames);
    let g = if channels > 1 {
        let mut cg = ChannelGenerator::new(p, case.seed).map_err(|e| e.to_string())?;
        let mut block = vec![0.0; 8192 * channels];
        while samples.len() < frames {
            let n = (frames - samples.len()).min(8192);
            cg.fill_frames(&mut block[..n * channels]);
            samples.extend(
                block[..n * channels]
                    .chunks(channels)
                    .map(|f| f[channels - 1]),
            );
        }
        Generator::new(p, case.seed).map_err(|e| e.to_string())?
    } else {
        let mut g = Generator::new(p, case.seed).map_err(|e| e.to_string())?;
        samples.resize(frames, 0.0);
        g.fill(&mut samples);
        g
    };
    if let Some(bad) = samples.iter().find(|x| !x.is_finite()) {
        return Err(format!("a generated sample is {bad}"));
    }

    // As `analyze`: segment length from the record and the band's low edge, Welch with
    // 50 % overlap, log bands from FIRST_BIN, tones' leakage split out, bands inside the
    // profile's band compared with the designed density at FALSE_ALARM.
    let seg =
        segment_length(fs, frames as u64, None, Some(p.band.low_hz)).map_err(|e| e.to_string())?;
    let mut welch = Welch::new(seg, seg / 2, fs);
    for chunk in samples.chunks(1 << 16) {
        welch.push(chunk);
    }
    let spectrum = welch.finish();
    let noise = |f: f64| g.density(f);
    let (bands, _) = without_tones(
        spectrum.log_bands(FIRST_BIN, BANDS_PER_DECADE),
        &spectrum,
        &p.tones,
        &noise,
        TONE_LEAKAGE,
    );
    let inside = bands_inside(&bands, &p.band);
    if inside.is_empty() {
        return Ok(Measured {
            bands: 0,
            tightest_db: f64::INFINITY,
        });
    }
    let checked = (
        inside.first().expect("non-empty").f_lo_hz,
        inside.last().expect("non-empty").f_hi_hz,
    );
    let tolerance = if p.bursts.is_empty() {
        0.0
    } else {
        burst_tolerance_db(&g, seconds, checked, Z_1E3)
    };
    let c = compare_with_design(&bands, &spectrum, &p.band, &noise, FALSE_ALARM, tolerance);
    if !c.pass {
        let w = c.worst().expect("a failed band");
        return Err(format!(
            "{} (tolerance {tolerance:.3} dB; the worst band's ν {:.1}), {} frames, segment {seg}",
            c.failure_line().expect("a failed band"),
            w.band.dof,
            frames
        ));
    }
    // Teeth: how tight the tightest band's upper limit is (without the burst tolerance).
    let tightest = c
        .bands
        .iter()
        .map(|b| b.stat_db.1)
        .fold(f64::INFINITY, f64::min);
    Ok(Measured {
        bands: c.bands.len(),
        tightest_db: tightest + tolerance,
    })
}

/// What property A measured in one case.
struct Measured {
    /// Bands compared.
    bands: usize,
    /// The smallest upper limit of any band, tolerance included, dB (∞ with no band).
    tightest_db: f64,
}

/// Property A. Each case fails by chance with probability at most FALSE_ALARM = 1e−3 for its
/// Gaussian bands (Bonferroni over the bands, as `analyze`), plus 1e−3 per burst for the
/// step-power bound; over the 40 fixed cases (the generator gives ≈ 0.47 bursts a case, so
/// ≈ 19 bursts) the family-wise probability of a chance failure is at most
/// 40 × 1e−3 + 19 × 1e−3 ≈ 6 %, and since the
/// seeds are fixed a pass is reproducible: only a change of the engine, the generator or
/// the seeds draws new noise.
#[test]
fn random_profiles_generate_noise_that_passes_analysis() {
    let mut failures = Vec::new();
    let (mut cases, mut sharp) = (0, 0);
    for seed in case_seeds() {
        let case = random_profile(seed);
        let result = parse_case(&case).and_then(|p| generate_and_measure(&case, &p));
        match result {
            Ok(m) => {
                cases += 1;
                // A case has teeth when some band would catch a 1 dB error of the density.
                if m.bands > 0 && m.tightest_db < 1.0 {
                    sharp += 1;
                }
            }
            Err(e) => failures.push(failure(&case, &e)),
        }
    }
    assert!(
        failures.is_empty(),
        "{} case(s) failed:\n{}",
        failures.len(),
        failures.join("\n\n")
    );
    // Narrow bands at low rates get only a few coarse bands in a few seconds; most cases
    // must still resolve a 1 dB error, or the property says little.
    assert!(
        4 * sharp >= 3 * cases,
        "only {sharp} of {cases} cases have a band that resolves 1 dB"
    );
}

/// Frequencies (Hz) to probe a profile's densities at: the band edges, a log grid across the
/// band, around every corner, pole and table point, the taper below band.low, the edge
/// region above band.high and Nyquist.
fn probe_frequencies(p: &Profile, g: &Generator) -> Vec<f64> {
    let (lo, hi) = (p.band.low_hz, p.band.high_hz);
    let nyquist = p.sample_rate_hz / 2.0;
    let mut f: Vec<f64> = (0..=300)
        .map(|i| lo * (hi / lo).powf(f64::from(i) / 300.0))
        .collect();
    f.extend([
        lo,
        hi,
        lo / 2f64.sqrt(),
        lo * 0.75,
        nyquist,
        nyquist * (1.0 - 1e-9),
    ]);
    f.extend([hi * 1.05, hi * 1.2, hi * 2.0]);
    let mut kinks: Vec<f64> = p.sources.iter().flat_map(density::source_kinks).collect();
    for m in g.bursts() {
        kinks.extend(m.corners_hz());
    }
    for k in kinks {
        f.extend([k * 0.99, k, k * 1.01]);
    }
    f.retain(|&x| x > 0.0 && x <= nyquist);
    f.sort_by(f64::total_cmp);
    f.dedup();
    f
}

/// Property C for one case.
/// Returns the largest in-band deviation of the design from the target, dB.
fn densities_are_sound(p: &Profile) -> Result<f64, String> {
    let g = Generator::new(p, 0).map_err(|e| format!("the engine refused the profile: {e}"))?;
    let d = g.design();
    let (lo, hi) = (p.band.low_hz, p.band.high_hz);
    let v = d.variance();
    if !(v.is_finite() && v >= 0.0) || (!p.sources.is_empty() && v <= 0.0) {
        return Err(format!("designed variance {v:e}"));
    }
    let mut worst = (0.0f64, 0.0f64);
    for f in probe_frequencies(p, &g) {
        let target = target_psd(p, f);
        let design = d.density(f);
        let total = g.density(f);
        let in_band = f >= lo && f <= hi;
        for (what, x) in [("target", target), ("designed", design), ("total", total)] {
            if !x.is_finite() || x < 0.0 {
                return Err(format!("{what} density at {f} Hz is {x:e}"));
            }
        }
        for m in g.bursts() {
            // A burst whose levels are all equal has no density; any other has some at
            // every frequency (a sum of Lorentzians).
            let flat = m.burst().levels.iter().all(|&l| l == m.burst().levels[0]);
            let b = m.density(f);
            if !(b.is_finite() && (b > 0.0 || (flat && b == 0.0))) {
                return Err(format!(
                    "burst {:?} density at {f} Hz is {b:e}",
                    m.burst().name
                ));
            }
        }
        if in_band && !p.sources.is_empty() {
            if !(target > 0.0 && design > 0.0) {
                return Err(format!(
                    "in the band at {f} Hz: target {target:e}, designed {design:e} (must be > 0)"
                ));
            }
            let err = (10.0 * (design / target).log10()).abs();
            if err > worst.0 {
                worst = (err, f);
            }
        }
        if in_band && total.partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater) {
            return Err(format!("total density at {f} Hz is {total:e}"));
        }
    }
    let allowed = DESIGN_ACCURACY_DB.max(KINK_DB_PER_SLOPE * sharpest_kink(p));
    if worst.0 > allowed {
        return Err(format!(
            "designed density is {:.4} dB from the target at {} Hz, beyond the stated \
             {allowed:.4} dB",
            worst.0, worst.1
        ));
    }
    Ok(worst.0)
}

/// Property C: positive, finite densities across the band and the design within its stated
/// accuracy of the target. Deterministic (no noise is drawn).
#[test]
fn random_profiles_have_sound_densities() {
    let failures: Vec<String> = case_seeds()
        .into_iter()
        .map(random_profile)
        .filter_map(|case| {
            parse_case(&case)
                .and_then(|p| densities_are_sound(&p))
                .err()
                .map(|e| failure(&case, &e))
        })
        .collect();
    assert!(
        failures.is_empty(),
        "{} case(s) failed:\n{}",
        failures.len(),
        failures.join("\n\n")
    );
}

/// The parser's dimensions with every unit symbol `format_quantity_exact` can be asked to
/// write for them, and the profile unit.
const SPELLINGS: &[(Dimension, &str, &str)] = &[
    (Dimension::Frequency, "Hz", "V"),
    (Dimension::Time, "s", "V"),
    (Dimension::Temperature, "K", "V"),
    (Dimension::Resistance, "\u{3a9}", "V"),
    (Dimension::Resistance, "Ohm", "V"),
    (Dimension::Resistance, "\u{2126}", "A"),
    (Dimension::Density, "V/\u{221a}Hz", "V"),
    (Dimension::Density, "V/rtHz", "V"),
    (Dimension::Density, "A/sqrt(Hz)", "A"),
    (Dimension::Amplitude, "V", "V"),
    (Dimension::Amplitude, "A", "A"),
];

/// Property B: for random finite values over every decade of f64 (subnormals included) and
/// both signs, `format_quantity_exact` parses back bit for bit in every dimension, and
/// `format_quantity` (display, 6 digits) within 5e−6 relative and to the same text again.
#[test]
fn formatted_quantities_parse_back_exactly() {
    let mut rng = ChaCha8Rng::seed_from_u64(MASTER_SEED ^ 0xB);
    let mut values: Vec<f64> = vec![
        0.0,
        -0.0,
        f64::MIN_POSITIVE,
        5e-324,
        f64::MAX,
        -f64::MAX,
        0.1 + 0.2,
        999.9999995,
        999_999.5,
        1e-15,
        1e12,
        1e15,
    ];
    for _ in 0..20_000 {
        // Log-uniform over the whole f64 range, both signs.
        let e = rng.random_range(-323.0..308.0f64);
        let m = rng.random_range(1.0..10.0f64);
        let sign = if rng.random::<bool>() { -1.0 } else { 1.0 };
        let v = sign * m * 10f64.powf(e);
        if v.is_finite() {
            values.push(v);
        }
        // Any bit pattern that is a finite number.
        let bits = f64::from_bits(rng.random::<u64>());
        if bits.is_finite() {
            values.push(bits);
        }
        // Values as people type them: a few digits.
        let d = rng.random_range(1..=6usize);
        let typed: f64 = format!("{:.*e}", d - 1, m * 10f64.powi(rng.random_range(-18..16)))
            .parse()
            .unwrap();
        values.push(sign * typed);
    }
    let mut failures = Vec::new();
    for &v in &values {
        for &(dim, sym, unit) in SPELLINGS {
            let exact = format_quantity_exact(v, sym);
            match parse_quantity(&exact, dim, unit) {
                Ok(back) if back.to_bits() == v.to_bits() => {}
                other => failures.push(format!("{v:e} ({dim:?}) -> {exact:?} -> {other:?}")),
            }
            if v == 0.0 {
                continue;
            }
            let shown = format_quantity(v, sym);
            match parse_quantity(&shown, dim, unit) {
                Ok(back) if back.is_finite() && ((back - v) / v).abs() <= 5e-6 => {
                    if format_quantity(back, sym) != shown {
                        failures.push(format!("{v:e}: display {shown:?} is not stable"));
                    }
                }
                other => failures.push(format!("{v:e} ({dim:?}) display {shown:?} -> {other:?}")),
            }
            // A value with at most 6 significant digits reads the same in both forms.
            // (Normal numbers only: a subnormal has several short decimals that round to it.)
            let short = format!("{:.5e}", v.abs()).parse::<f64>().ok() == Some(v.abs());
            if short && v.abs() >= f64::MIN_POSITIVE && exact != shown {
                failures.push(format!("{v:e}: exact {exact:?} but display {shown:?}"));
            }
        }
        if failures.len() > 20 {
            break;
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}

/// Regression (found by property C, case seed 805330897720388065): a table whose log-log
/// slope (power) turns from −9.0 to +2.5 at 2.94 Hz, the point of a V. Engine version 1
/// rounded the corner over a few of its FIR's bins, 0.109 dB off the target there, above the plain 0.1 dB
/// the docs promised; docs/profiles.md ("Band edges") now states the kink term (≈ 0.01 dB per unit of slope
/// change) and this case pins both sides of it.
#[test]
fn a_sharp_table_kink_costs_what_the_readme_states() {
    let text = r#"unit = "A"
sample_rate = 604575.4392928156
[band]
low = "40mHz"
high = 12956.637929396176
order = 5
[[resistor]]
resistance = 535190.8809477718
temperature = "-152.53367716467451℃"
[[table]]
points = [["16.21398592595674mHz", "346.5871455453561 fA/√Hz"], ["81.63018332835202 mHz", 4.625753065907078e-13], [1.4743728485421748, 1.2465075846221464e-11], ["2.942114380785872 Hz", 5.496320167287679e-13], ["47.80478990129747 Hz", "17.697488702895028 pA/√Hz"]]
"#;
    let p = parse_profile(text, "kink.toml").unwrap();
    let kink = sharpest_kink(&p);
    assert!((kink - 11.5).abs() < 0.05, "sharpest kink {kink}");
    let worst = densities_are_sound(&p).unwrap_or_else(|e| panic!("{e}"));
    // Engine version 2 gives the level holding the kink a longer FIR (its share must be
    // within 0.005 dB wherever a shorter one would do), so the kink now costs less than the
    // plain promise, well inside the stated kink term.
    assert!(
        worst <= DESIGN_ACCURACY_DB && worst <= KINK_DB_PER_SLOPE * kink,
        "worst deviation {worst} dB at a kink of {kink}"
    );
}
