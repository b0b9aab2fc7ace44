//! CLI tests of `noisewright generate --bits N --range LO..HI`: ADC codes in CSV and raw, the
//! manifest's converter record, dither and clipping against the range. Bad ADC options are
//! rows of tests/error_classes.rs.

mod common;

use std::process::{Command, Output};

use common::{Scratch, manifest, read_f64, run, run_ok, text};
use noisewright::io::adc::{Adc, Coding, Dither};

/// White noise of 2 mV/√Hz over 10 Hz – 20 kHz: about 0.3 V RMS, so ±1.65 V holds it (5.6σ)
/// and 12-bit codes are busy (σ ≈ 360 LSB).
const WHITE: &str = r#"
name = "adc white"
unit = "V"
sample_rate = "48 kHz"
[band]
low = "10 Hz"
high = "20 kHz"
order = 0
[[floor]]
density = "2 mV/rtHz"
"#;

const SEED: &str = "7";
const N: usize = 20_000;

/// `generate w.toml --samples N --seed SEED -o OUT` plus `extra`, in a scratch folder.
fn generate(s: &Scratch, out: &str, extra: &[&str]) -> Output {
    let profile = s.file("w.toml", WHITE);
    let n = N.to_string();
    let mut args = vec![
        "generate",
        profile.to_str().unwrap(),
        "--samples",
        &n,
        "--seed",
        SEED,
        "-o",
        out,
    ];
    args.extend_from_slice(extra);
    run(&args, &s.dir)
}

/// The physical samples (V) of the same run, written as f64 raw.
fn physical(s: &Scratch) -> Vec<f64> {
    let o = generate(s, "phys.f64", &[]);
    assert!(o.status.success(), "{}", text(&o.stderr));
    read_f64(&s.path("phys.f64"))
}

fn codes_of(adc: &Adc, x: &[f64]) -> Vec<i64> {
    let mut q = adc.quantiser();
    x.iter().map(|&v| q.code(v).0).collect()
}

/// The CSV codes are the library converter's codes of the very samples a physical run
/// writes, and the manifest states the converter: LSB Q = 3.3 V/4096 and the quantisation
/// noise density Q/√(6·fs) (REFERENCES §9).
#[test]
fn csv_holds_twos_codes_and_the_manifest_records_the_converter() {
    let s = Scratch::new("csv");
    let x = physical(&s);
    let o = generate(&s, "a.csv", &["--bits", "12", "--range", "-1.65V..1.65V"]);
    assert!(o.status.success(), "{}", text(&o.stderr));
    let body = std::fs::read_to_string(s.path("a.csv")).unwrap();
    let mut lines = body.lines();
    assert_eq!(lines.next(), Some("time_s,code_twos_12bit"));
    let got: Vec<i64> = lines
        .map(|l| l.split_once(',').unwrap().1.parse().unwrap())
        .collect();
    let adc = Adc::new(12, -1.65, 1.65, None, Dither::None).unwrap();
    assert_eq!(got, codes_of(&adc, &x), "seed {SEED}");
    assert!(got.iter().all(|c| (-2048..=2047).contains(c)));

    let m = manifest(&s.path("a.csv"));
    let a = &m["extra"]["adc"];
    let q = 3.3 / 4096.0;
    assert_eq!(a["bits"], 12);
    assert_eq!(a["coding"], "twos");
    assert_eq!(a["dither"], "none");
    assert_eq!(a["container"], "i16");
    assert_eq!(a["code_min"], -2048);
    assert_eq!(a["code_max"], 2047);
    assert_eq!(a["range"], serde_json::json!([-1.65, 1.65]));
    assert_eq!(a["lsb"].as_f64().unwrap(), q);
    let density = a["quantisation_noise_density"].as_f64().unwrap();
    assert!((density / (q / (6.0f64 * 48e3).sqrt()) - 1.0).abs() < 1e-12);
    let rms = a["quantisation_noise_rms"].as_f64().unwrap();
    assert!((rms / (q / 12f64.sqrt()) - 1.0).abs() < 1e-12);
    assert_eq!(m["sample_format"], "i16");
    assert!(m["full_scale"].is_null());
    assert_eq!(m["clipped"], 0);
    let summary = text(&o.stdout);
    assert!(summary.contains("LSB 805.664 µV"), "{summary}");
    assert!(summary.contains("0 = 0 V (centre)"), "{summary}");
}

/// Raw codes sit in the smallest container (u16 for 12-bit offset, i16 for twos, u8 for
/// 8 bits), and offset codes are the twos codes plus 2^(N−1), sample for sample.
#[test]
fn raw_codes_use_the_smallest_container_and_offset_is_twos_plus_half() {
    let s = Scratch::new("raw");
    let range = ["--range", "-1.65V..1.65V"];
    let twos = generate(&s, "t.i16", &[&["--bits", "12"][..], &range].concat());
    assert!(twos.status.success(), "{}", text(&twos.stderr));
    let off = generate(
        &s,
        "o.raw",
        &[&["--bits", "12", "--code", "offset"][..], &range].concat(),
    );
    assert!(off.status.success(), "{}", text(&off.stderr));
    let t: Vec<i64> = std::fs::read(s.path("t.i16"))
        .unwrap()
        .chunks_exact(2)
        .map(|c| i64::from(i16::from_le_bytes([c[0], c[1]])))
        .collect();
    let o: Vec<i64> = std::fs::read(s.path("o.raw"))
        .unwrap()
        .chunks_exact(2)
        .map(|c| i64::from(u16::from_le_bytes([c[0], c[1]])))
        .collect();
    assert_eq!(t.len(), N);
    assert_eq!(o.len(), N);
    assert!(t.iter().zip(&o).all(|(a, b)| b - a == 2048));
    assert_eq!(manifest(&s.path("o.raw"))["sample_format"], "u16");
    let b8 = generate(
        &s,
        "e.u8",
        &[&["--bits", "8", "--code", "offset"][..], &range].concat(),
    );
    assert!(b8.status.success(), "{}", text(&b8.stderr));
    let bytes = std::fs::read(s.path("e.u8")).unwrap();
    assert_eq!(bytes.len(), N);
    // The 8-bit codes are the library converter's codes of the physical samples.
    let x = physical(&s);
    let adc = Adc::new(8, -1.65, 1.65, Some(Coding::Offset), Dither::None).unwrap();
    let want: Vec<u8> = codes_of(&adc, &x).iter().map(|&c| c as u8).collect();
    assert_eq!(bytes, want);
}

#[test]
fn without_an_output_name_codes_go_to_a_raw_file_named_after_their_container() {
    let s = Scratch::new("default");
    let p = s.file("bench.toml", WHITE);
    run_ok(
        &[
            "generate",
            p.to_str().unwrap(),
            "--samples",
            "100",
            "--bits",
            "10",
            "--range",
            "0V..3.3V",
            "--allow-clipping",
        ],
        &s.dir,
    );
    // 0 V .. 3.3 V defaults to offset binary: u16.
    assert_eq!(std::fs::read(s.path("out/bench.u16")).unwrap().len(), 200);
    assert_eq!(
        manifest(&s.path("out/bench.u16"))["extra"]["adc"]["coding"],
        "offset-binary"
    );
}

/// TPDF dither: the same seed gives the same bytes, the codes differ from the undithered
/// ones by at most one code either way (±1 LSB peak), and the manifest reports the added
/// noise Q/2 RMS, density Q/√(2·fs) (REFERENCES §9).
#[test]
fn dithered_codes_are_reproducible_and_within_one_code_of_the_plain_ones() {
    let s = Scratch::new("dither");
    let args = ["--bits", "12", "--range", "-1.65V..1.65V"];
    let d = [&args[..], &["--dither", "tpdf"]].concat();
    for (name, extra) in [("a.i16", &d), ("b.i16", &d), ("c.i16", &args.to_vec())] {
        let o = generate(&s, name, extra);
        assert!(o.status.success(), "{}", text(&o.stderr));
    }
    let read = |n: &str| std::fs::read(s.path(n)).unwrap();
    assert_eq!(read("a.i16"), read("b.i16"));
    let codes = |n: &str| -> Vec<i16> {
        read(n)
            .chunks_exact(2)
            .map(|c| i16::from_le_bytes([c[0], c[1]]))
            .collect()
    };
    let (a, c) = (codes("a.i16"), codes("c.i16"));
    assert_ne!(a, c);
    assert!(a.iter().zip(&c).all(|(x, y)| (x - y).abs() <= 1));
    let m = manifest(&s.path("a.i16"));
    let q = 3.3 / 4096.0;
    let adc = &m["extra"]["adc"];
    assert_eq!(adc["dither"], "tpdf");
    assert!((adc["added_noise_rms"].as_f64().unwrap() / (q / 2.0) - 1.0).abs() < 1e-12);
    let want = q / (2.0f64 * 48e3).sqrt();
    assert!((adc["added_noise_density"].as_f64().unwrap() / want - 1.0).abs() < 1e-12);
}

/// Samples beyond the range are clipping: without --allow-clipping the run fails (exit 1),
/// leaves no file and suggests a range; with it, the count (exactly the physical samples
/// outside the range) is in the manifest and the summary.
#[test]
fn samples_outside_the_range_are_counted_and_refused_unless_allowed() {
    let s = Scratch::new("clip");
    let x = physical(&s);
    let outside = x.iter().filter(|v| v.abs() > 0.5).count();
    assert!(outside > 100, "seed {SEED}");
    let args = ["--bits", "8", "--range", "-500mV..500mV"];
    let o = generate(&s, "c.csv", &args);
    assert_eq!(o.status.code(), Some(1), "{}", text(&o.stderr));
    let e = text(&o.stderr);
    assert!(e.contains(&format!("{outside} of {N} samples")), "{e}");
    assert!(e.contains("outside the ADC range -500 mV..500 mV"), "{e}");
    assert!(
        e.contains("a range of") && e.contains("--allow-clipping"),
        "{e}"
    );
    assert!(!s.path("c.csv").exists() && !s.path("c.csv.json").exists());
    let o = generate(&s, "c.csv", &[&args[..], &["--allow-clipping"]].concat());
    assert!(o.status.success(), "{}", text(&o.stderr));
    let m = manifest(&s.path("c.csv"));
    assert_eq!(m["clipped"], outside as u64);
    assert!(
        m["notes"][0]
            .as_str()
            .unwrap()
            .contains("outside the ADC range"),
        "{}",
        m["notes"]
    );
    assert!(text(&o.stdout).contains(&format!("clipped         {outside}")));
    // Clamped to the end codes.
    let body = std::fs::read_to_string(s.path("c.csv")).unwrap();
    let codes: Vec<i64> = body
        .lines()
        .skip(1)
        .map(|l| l.split_once(',').unwrap().1.parse().unwrap())
        .collect();
    assert_eq!(codes.iter().min(), Some(&-128));
    assert_eq!(codes.iter().max(), Some(&127));
}

/// The floor note uses the noise the converter adds: 4 bits over ±1.65 V add Q/√(6·fs) =
/// 384 µV/√Hz undithered (14.3 dB below the 2 mV/√Hz floor: no note) and Q/√(2·fs) =
/// 665 µV/√Hz with TPDF dither (9.6 dB: a note), REFERENCES §9.
#[test]
fn the_floor_note_counts_the_dither() {
    let s = Scratch::new("note");
    let args = ["--bits", "4", "--range", "-1.65V..1.65V"];
    let plain = generate(&s, "p.csv", &args);
    assert!(plain.status.success(), "{}", text(&plain.stderr));
    assert!(
        !text(&plain.stdout).contains("note:"),
        "{}",
        text(&plain.stdout)
    );
    let d = generate(&s, "d.csv", &[&args[..], &["--dither", "tpdf"]].concat());
    assert!(d.status.success(), "{}", text(&d.stderr));
    let m = manifest(&s.path("d.csv"));
    let note = m["notes"][0].as_str().unwrap_or_default();
    assert!(
        note.contains("4-bit ADC's added noise (TPDF dither included)") && note.contains("9.6 dB"),
        "{}",
        m["notes"]
    );
}

/// A quantisation noise above the floor is said to be above it, with a positive number: over
/// a range ten times wider the same 4 bits add ten times the noise, 3.84 mV/√Hz undithered,
/// 20·log10(3.84/2) = 5.7 dB above the 2 mV/√Hz floor (REFERENCES §9).
#[test]
fn the_floor_note_says_above_when_the_quantisation_noise_is_above() {
    let s = Scratch::new("note-above");
    let o = generate(&s, "w.csv", &["--bits", "4", "--range", "-16.5V..16.5V"]);
    assert!(o.status.success(), "{}", text(&o.stderr));
    let m = manifest(&s.path("w.csv"));
    let note = m["notes"][0].as_str().unwrap_or_default();
    assert!(
        note.contains("4-bit ADC's quantisation noise (3.84")
            && note.contains(") is 5.7 dB above the lowest density in the band (2 mV/√Hz)"),
        "{}",
        m["notes"]
    );
    assert!(!note.contains("-5.7"), "{note}");
}

/// numpy as the independent reader and re-implementation (tests/python/adc_ref.py): it reads
/// each code file in the dtype the manifest's container names, finds every code equal to the
/// documented rule applied to the physical samples, and every in-range level within half an
/// LSB of its sample; the error RMS of this busy input (σ ≈ 360 LSB at 12 bits) is Q/√12
/// within the uniform error's 1e−6 bound (REFERENCES §9).
#[test]
fn numpy_reads_the_codes_and_agrees_with_the_documented_rule() {
    let s = Scratch::new("numpy");
    physical(&s);
    for (out, extra) in [
        ("t.i16", &["--bits", "12"][..]),
        ("o.u16", &["--bits", "12", "--code", "offset"][..]),
        ("b.u8", &["--bits", "8", "--code", "offset"][..]),
        ("w.i32", &["--bits", "20"][..]),
    ] {
        let o = generate(&s, out, &[extra, &["--range", "-1.65V..1.65V"]].concat());
        assert!(o.status.success(), "{}", text(&o.stderr));
        let mut m = s.path(out).into_os_string();
        m.push(".json");
        let args = [s.path(out).into_os_string(), m, s.path("phys.f64").into()];
        let Some(r) = common::python_script("adc_ref.py", &args, &format!("seed {SEED}")) else {
            return;
        };
        let r: serde_json::Value = serde_json::from_str(r.lines().next().unwrap()).unwrap();
        assert_eq!(r["n"], N as u64, "{out}");
        assert_eq!(r["equal"], N as u64, "{out}: {r}");
        assert!(
            r["max_abs_error_lsb"].as_f64().unwrap() <= 0.5 + 1e-6,
            "{out}: {r}"
        );
        if out == "t.i16" {
            // Uniform error: var of the mean square is (1/80 − 1/144)/n LSB⁴ (z = 4.89).
            let ms = r["rms_error_lsb"].as_f64().unwrap().powi(2);
            let sd = (1.0 / 180.0 / N as f64).sqrt();
            assert!((ms - 1.0 / 12.0).abs() < 4.8916 * sd, "{out}: {r}");
        }
    }
}

/// The array writers get the same codes through the shared Scaler: the .npy data after its
/// header are the raw file's bytes, its `descr` is the container's dtype, and the C array
/// holds the same numbers with the container's `<stdint.h>` type and the level macros.
#[test]
fn npy_and_c_arrays_hold_the_raw_codes() {
    let s = Scratch::new("arrays");
    for (bits, coding, raw, descr, ctype) in [
        ("12", "twos", "a.i16", "'<i2'", "int16_t"),
        ("8", "offset", "a.u8", "'|u1'", "uint8_t"),
    ] {
        let args = ["--bits", bits, "--code", coding, "--range", "-1.65V..1.65V"];
        for out in [raw, "a.npy", "a.h"] {
            let name: &[&str] = if out == "a.h" {
                &["--name", "codes"]
            } else {
                &[]
            };
            let o = generate(&s, out, &[&args[..], name].concat());
            assert!(o.status.success(), "{out}: {}", text(&o.stderr));
        }
        let raw_bytes = std::fs::read(s.path(raw)).unwrap();
        let npy = std::fs::read(s.path("a.npy")).unwrap();
        let header_len = usize::from(u16::from_le_bytes([npy[8], npy[9]]));
        let header = String::from_utf8_lossy(&npy[10..10 + header_len]).into_owned();
        assert!(header.contains(&format!("'descr': {descr}")), "{header}");
        assert_eq!(&npy[10 + header_len..], &raw_bytes[..], "{bits} {coding}");
        let h = std::fs::read_to_string(s.path("a.h")).unwrap();
        assert!(h.contains(&format!("static const {ctype} codes[")), "{h}");
        assert!(h.contains("#define CODES_LSB ") && h.contains("CODES_CODE_ZERO_LEVEL"));
        let body = &h[h.find('{').unwrap() + 1..h.find("};").unwrap()];
        let values: Vec<i64> = body
            .split(',')
            .map(str::trim)
            .filter(|v| !v.is_empty())
            .map(|v| v.parse().unwrap())
            .collect();
        let want: Vec<i64> = if coding == "twos" {
            raw_bytes
                .chunks_exact(2)
                .map(|c| i64::from(i16::from_le_bytes([c[0], c[1]])))
                .collect()
        } else {
            raw_bytes.iter().map(|&b| i64::from(b)).collect()
        };
        assert_eq!(values, want, "{bits} {coding}");
    }
}

/// The C header of ADC codes compiles without warnings (C99, -Wall -Wextra -pedantic
/// -Werror), also with the extreme codes of 32-bit containers (clipped input reaches them),
/// and a program reading it sees the raw file's codes and `_BITS`, `_LSB` (bit for bit the
/// manifest's) and `_CODE_ZERO_LEVEL`.
#[test]
fn adc_c_header_compiles_and_holds_the_codes() {
    let cc = std::env::var("CC").unwrap_or_else(|_| "cc".to_string());
    if !Command::new(&cc)
        .arg("--version")
        .output()
        .is_ok_and(|o| o.status.success())
    {
        println!("skipped: no C compiler (cc or $CC) was found to compile the header");
        return;
    }
    let s = Scratch::new("cc");
    for (i, (bits, coding, raw, ctype)) in [
        ("32", "twos", "r.i32", "int32_t"),
        ("32", "offset", "r.u32", "uint32_t"),
        ("6", "offset", "r.u8", "uint8_t"),
        ("8", "twos", "r.i8", "int8_t"),
    ]
    .into_iter()
    .enumerate()
    {
        let args = [
            "--bits",
            bits,
            "--code",
            coding,
            "--range",
            "-0.3V..0.3V",
            "--allow-clipping",
        ];
        let name = format!("adc_{i}");
        let h = format!("h{i}.h");
        let o = generate(&s, &h, &[&args[..], &["--name", &name]].concat());
        assert!(o.status.success(), "{}", text(&o.stderr));
        let o = generate(&s, raw, &args);
        assert!(o.status.success(), "{}", text(&o.stderr));
        let up = name.to_ascii_uppercase();
        let src = s.file(
            &format!("p{i}.c"),
            &format!(
                r#"#include <inttypes.h>
#include <stdio.h>
#include <string.h>
#include "{h}"

int main(void) {{
    double lsb = {up}_LSB, zero = {up}_CODE_ZERO_LEVEL;
    uint64_t b;
    memcpy(&b, &lsb, 8);
    printf("%d %016" PRIx64 " %.17g\n", (int){up}_BITS, b, zero);
    for (size_t i = 0; i < {up}_LENGTH * {up}_CHANNELS; i++) {{
        printf("%lld\n", (long long){name}[i]);
    }}
    return 0;
}}
"#
            ),
        );
        let exe = s.path(&format!("p{i}"));
        let o = Command::new(&cc)
            .args(["-std=c99", "-Wall", "-Wextra", "-pedantic", "-Werror", "-o"])
            .arg(&exe)
            .arg(&src)
            .current_dir(&s.dir)
            .output()
            .unwrap();
        assert!(o.status.success(), "{bits} {coding}: {}", text(&o.stderr));
        let out = text(&Command::new(&exe).output().unwrap().stdout);
        let mut lines = out.lines();
        let head: Vec<&str> = lines.next().unwrap().split(' ').collect();
        let a = &manifest(&s.path(&h))["extra"]["adc"];
        assert_eq!(head[0], bits);
        let lsb = a["lsb"].as_f64().unwrap();
        assert_eq!(
            head[1],
            format!("{:016x}", lsb.to_bits()),
            "{bits} {coding}"
        );
        let zero: f64 = head[2].parse().unwrap();
        let want_zero = if coding == "twos" { 0.0 } else { -0.3 };
        assert!((zero - want_zero).abs() < 1e-15, "{zero}");
        let got: Vec<i64> = lines.map(|l| l.parse().unwrap()).collect();
        let bytes = std::fs::read(s.path(raw)).unwrap();
        let width = bytes.len() / N;
        let want: Vec<i64> = bytes
            .chunks_exact(width)
            .map(|c| {
                let mut w = [0u8; 8];
                w[..width].copy_from_slice(c);
                let u = i64::from_le_bytes(w);
                let sign = 1i64 << (8 * width - 1);
                if coding == "twos" && u & sign != 0 {
                    u - 2 * sign
                } else {
                    u
                }
            })
            .collect();
        assert_eq!(got, want, "{bits} {coding}");
        assert!(
            reaches_both_ends(&got, a),
            "{bits} {coding}: end codes not reached"
        );
        assert!(
            std::fs::read_to_string(s.path(&h))
                .unwrap()
                .contains(&format!("static const {ctype} {name}["))
        );
    }
}

/// True when both end codes of the manifest's converter occur in `codes`.
fn reaches_both_ends(codes: &[i64], adc: &serde_json::Value) -> bool {
    let (lo, hi) = (adc["code_min"].as_i64(), adc["code_max"].as_i64());
    codes.iter().any(|&c| Some(c) == lo) && codes.iter().any(|&c| Some(c) == hi)
}
