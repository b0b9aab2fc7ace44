//! Noise generated from an amplifier profile against its own budget: the Welch density of
//! the output must match the budget's summed density (times the profile's band shaping)
//! within χ² bands, and must not match it with one part left out.

mod common;

use common::check_bands_against;
use noisewright::analysis::welch::Welch;
use noisewright::model::budget::{BandSpec, budget, total_psd};
use noisewright::model::density::band_gain;
use noisewright::profile::{Profile, SourceKind, parse_profile};
use noisewright::synth::Generator;

/// The worked stage of REFERENCES §7 with 1/f corners and a GBW whose closed-loop pole
/// (100 kHz / 10 = 10 kHz) lies inside the band, so every shape the stage adds is tested.
const STAGE: &str = r#"
sample_rate = "48 kHz"
[band]
low = "10 Hz"
high = "20 kHz"
order = 2
[[amplifier]]
name = "stage"
topology = "non-inverting"
voltage_density = "5 nV/rtHz"
voltage_corner = "100 Hz"
current_density = "1 pA/rtHz"
current_corner = "1 kHz"
source_resistance = "1 kOhm"
feedback_resistance = "9 kOhm"
gain_resistance = "1 kOhm"
temperature = "25 C"
gbw = "100 kHz"
"#;

/// Welch density (P. D. Welch 1967; ν from the window's overlap, REFERENCES §3) of 2^22
/// samples against the budget's density, 10 bands per decade from bin 20 (58.6 Hz, where the
/// Hann leakage of the 1/f rise is far below the χ² width) to 18 kHz; total false-failure
/// probability 1e−6 split over the bands (Bonferroni, §11).
#[test]
fn generated_amplifier_noise_matches_its_budget_density() {
    const SEED: u64 = 21;
    let p: Profile = parse_profile(STAGE, "<stage>").unwrap();
    let b = budget(&p, &[]);
    assert_eq!(b.source_names.len(), 6);
    let mut g = Generator::new(&p, SEED).unwrap();
    let seg = 1usize << 14;
    let total = 1usize << 22;
    let mut welch = Welch::new(seg, seg / 2, p.sample_rate_hz);
    let mut buf = vec![0.0; 1 << 16];
    for _ in 0..total / buf.len() {
        g.fill(&mut buf);
        welch.push(&buf);
    }
    let spec = welch.finish();
    let df = spec.bin_width_hz();
    let bands: Vec<_> = spec
        .log_bands(20, 10)
        .into_iter()
        .filter(|band| band.f_hi_hz < 18e3)
        .collect();
    assert!(bands.len() >= 20, "{} bands", bands.len());
    // Mean over a band's bins of a density S(f) (unit²/Hz) shaped by the profile's band.
    let mean_over = |s: &dyn Fn(f64) -> f64, lo: f64, hi: f64| {
        let band = bands
            .iter()
            .find(|x| x.f_lo_hz == lo && x.f_hi_hz == hi)
            .unwrap();
        band.bins
            .clone()
            .map(|k| {
                let f = k as f64 * df;
                s(f) * band_gain(&p.band, p.sample_rate_hz, f)
            })
            .sum::<f64>()
            / band.bins.len() as f64
    };
    let budget_density = |f: f64| total_psd(&p, f);
    check_bands_against(
        &bands,
        &|lo, hi| mean_over(&budget_density, lo, hi),
        1e-6,
        SEED,
    )
    .unwrap();
    // The budget's density is what its per-source rows add up to (the table it prints).
    let row = &b.densities[1];
    let from_rows: f64 = row.sources.iter().map(|d| d * d).sum();
    assert!((from_rows / total_psd(&p, row.frequency_hz) - 1.0).abs() < 1e-12);
    // Negative control: without the R_g thermal part (about a quarter of the power) the same
    // estimate must fail.
    let rg = p
        .sources
        .iter()
        .position(|s| s.name.contains("Rg thermal"))
        .unwrap();
    assert!(matches!(
        p.sources[rg].kind,
        SourceKind::AmplifierPart { .. }
    ));
    let mut short = p.clone();
    short.sources.remove(rg);
    let short_density = |f: f64| total_psd(&short, f);
    assert!(
        check_bands_against(
            &bands,
            &|lo, hi| mean_over(&short_density, lo, hi),
            1e-6,
            SEED
        )
        .is_err(),
        "leaving out a quarter of the power went unnoticed (seed {SEED})"
    );
    // And the budget's power over bins k0..k1 — the band [(k0 − ½)Δf, (k1 − ½)Δf] they tile
    // (midpoint rule) — agrees with the measured power there within the χ² bound of the
    // bins' summed ν.
    let (k0, k1) = ((100.0 / df).ceil() as usize, (1e3 / df).floor() as usize);
    let inside = BandSpec {
        low_hz: (k0 as f64 - 0.5) * df,
        high_hz: (k1 as f64 - 0.5) * df,
        order: 0,
    };
    let expect = budget(&p, &[inside]).bands[0].rms.powi(2);
    let measured: f64 = spec.psd[k0..k1].iter().sum::<f64>() * df;
    let dof = spec.band_dof(k0..k1);
    let (lo, hi) = common::chi2_band(dof, 1e-6);
    let ratio = measured / expect;
    assert!(
        (lo..=hi).contains(&ratio),
        "100 Hz..1 kHz power ratio {ratio} outside [{lo}, {hi}] (ν = {dof}, seed {SEED})"
    );
}
