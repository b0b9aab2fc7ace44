//! CLI tests of the array outputs of `noisewright generate`: `.npy` read back by numpy.load,
//! a C header compiled by the system C compiler, each compared value for value with the raw
//! output of the same run; the manifest's container keys. Bad input is in
//! tests/error_classes.rs.

mod common;

use std::ffi::OsString;
use std::path::{Path, PathBuf};
use std::process::Command;

use common::{Scratch, manifest, run, run_ok, text};

/// Fixed seed of every run in this file (printed in failure messages).
const SEED: u64 = 20_261_206;
/// Samples per run: odd, and not a multiple of the writers' chunk or line lengths.
const SAMPLES: u64 = 3001;

/// Invented demo scenario: a white 10 nV/√Hz floor with a 1/f rise below 100 Hz.
const PROFILE: &str = r#"
name = "formats demo"
unit = "V"
sample_rate = "48 kHz"
[band]
low = "10 Hz"
high = "20 kHz"
order = 2
[[floor]]
density = "10 nV/rtHz"
corner = "100 Hz"
"#;

/// Runs `generate` on the demo profile with the fixed seed and length, writing `out`;
/// panics with stderr unless it succeeds.
fn generate(dir: &Scratch, out: &str, extra: &[&str]) -> PathBuf {
    let profile = dir.file("demo.toml", PROFILE);
    let samples = SAMPLES.to_string();
    let seed = SEED.to_string();
    let mut args = vec![
        "generate",
        profile.to_str().unwrap(),
        "-o",
        out,
        "--samples",
        &samples,
        "--seed",
        &seed,
        "--quiet",
    ];
    args.extend_from_slice(extra);
    let o = run(&args, dir);
    assert!(
        o.status.success(),
        "generate {out} {extra:?}: {} (seed {SEED})",
        text(&o.stderr)
    );
    dir.path(out)
}

/// The manifest's `full_scale` parsed from its text with Rust's correctly rounding parser
/// (serde_json's default float parser may be an ulp off); `None` when it is null.
fn full_scale_exact(path: &Path) -> Option<f64> {
    let mut p = path.as_os_str().to_owned();
    p.push(".json");
    let t = std::fs::read_to_string(PathBuf::from(p)).unwrap();
    let at = t.find("\"full_scale\": ").unwrap() + "\"full_scale\": ".len();
    let v = t[at..].split([',', '\n']).next().unwrap().trim();
    (v != "null").then(|| v.parse().unwrap())
}

/// Raw little-endian samples decoded to (integer codes, float bits): i24 is sign-extended
/// from 3 bytes, so it compares with the 4-byte `<i4` of npy and `int32_t` of C.
#[derive(Debug, PartialEq)]
enum Values {
    Ints(Vec<i64>),
    F32(Vec<u32>),
    F64(Vec<u64>),
}

fn decode(bytes: &[u8], sample_format: &str) -> Values {
    match sample_format {
        "i16" => Values::Ints(
            bytes
                .chunks_exact(2)
                .map(|c| i64::from(i16::from_le_bytes([c[0], c[1]])))
                .collect(),
        ),
        "i24" => Values::Ints(
            bytes
                .chunks_exact(3)
                .map(|c| i64::from(i32::from_le_bytes([0, c[0], c[1], c[2]]) >> 8))
                .collect(),
        ),
        "i32" => Values::Ints(
            bytes
                .chunks_exact(4)
                .map(|c| i64::from(i32::from_le_bytes(c.try_into().unwrap())))
                .collect(),
        ),
        "f32" => Values::F32(
            bytes
                .chunks_exact(4)
                .map(|c| u32::from_le_bytes(c.try_into().unwrap()))
                .collect(),
        ),
        "f64" => Values::F64(
            bytes
                .chunks_exact(8)
                .map(|c| u64::from_le_bytes(c.try_into().unwrap()))
                .collect(),
        ),
        other => panic!("no decoder for {other}"),
    }
}

/// The npy file of a run, loaded by numpy.load (tests/python/npy_ref.py), holds exactly the
/// values of the raw file of the same run, with the documented dtype and shape (numpy's
/// format docs: i24 codes as '<i4').
#[test]
fn npy_loads_in_numpy_with_the_values_of_the_raw_output() {
    let dir = Scratch::new("npy");
    let cases = [
        ("f32", "<f4", &[][..]),
        ("f64", "<f8", &[][..]),
        ("i16", "<i2", &[][..]),
        ("i24", "<i4", &[][..]),
        ("i32", "<i4", &[][..]),
        // Digital floats (a full scale) as well as physical ones.
        ("f32", "<f4", &["--level", "-12dBFS"][..]),
    ];
    let mut args: Vec<OsString> = Vec::new();
    let mut runs = Vec::new();
    for (i, (sf, descr, extra)) in cases.iter().enumerate() {
        let mut opts = vec!["--sample-format", sf];
        opts.extend_from_slice(extra);
        let npy = generate(&dir, &format!("n{i}.npy"), &opts);
        let raw = generate(&dir, &format!("n{i}.raw"), &opts);
        let m = manifest(&npy);
        assert_eq!(m["format"], "npy");
        assert_eq!(m["extra"]["npy_dtype"], *descr);
        assert_eq!(m["extra"]["npy_shape"], serde_json::json!([SAMPLES]));
        assert_eq!(m["full_scale"], manifest(&raw)["full_scale"]);
        if *sf == "i24" {
            let notes = m["notes"].to_string();
            assert!(notes.contains("'<i4'"), "{notes}");
        }
        let back = dir.path(&format!("n{i}.back"));
        args.push(npy.into());
        args.push(back.clone().into());
        runs.push((sf, descr, raw, back));
    }
    let Some(out) = common::python_script("npy_ref.py", &args, &format!("seed {SEED}")) else {
        return;
    };
    let lines: Vec<serde_json::Value> = out
        .lines()
        .filter(|l| l.starts_with('{'))
        .map(|l| serde_json::from_str(l).unwrap())
        .collect();
    assert_eq!(lines.len(), runs.len(), "{out}");
    for ((sf, descr, raw, back), info) in runs.iter().zip(&lines) {
        assert_eq!(info["dtype"], **descr, "{sf}: {info}");
        assert_eq!(info["shape"], serde_json::json!([SAMPLES]), "{sf}");
        assert_eq!(info["version"], serde_json::json!([1, 0]), "{sf}");
        assert_eq!(info["data_offset"].as_u64().unwrap() % 64, 0, "{sf}");
        let numpy_sf = if **sf == "i24" { "i32" } else { sf };
        let from_numpy = decode(&std::fs::read(back).unwrap(), numpy_sf);
        let from_raw = decode(&std::fs::read(raw).unwrap(), sf);
        assert_eq!(from_numpy, from_raw, "{sf} (seed {SEED})");
    }
}

/// The system C compiler, if there is one: `$CC`, else `cc`.
fn c_compiler() -> Option<String> {
    let cc = std::env::var("CC").unwrap_or_else(|_| "cc".to_string());
    match Command::new(&cc).arg("--version").output() {
        Ok(o) if o.status.success() => Some(cc),
        _ => None,
    }
}

/// A C program that includes the header and prints the macros, then every value: integers in
/// decimal, floats as their bits in hex (so the comparison is bit-exact).
fn c_program(header: &str, name: &str, c_type: &str) -> String {
    let up = name.to_ascii_uppercase();
    let print =
        match c_type {
            "float" => "uint32_t b; memcpy(&b, &NAME[i], 4); printf(\"%08\" PRIx32 \"\\n\", b);"
                .to_string(),
            "double" => "uint64_t b; memcpy(&b, &NAME[i], 8); printf(\"%016\" PRIx64 \"\\n\", b);"
                .to_string(),
            _ => "printf(\"%ld\\n\", (long)NAME[i]);".to_string(),
        }
        .replace("NAME", name);
    format!(
        r#"#include <inttypes.h>
#include <stdio.h>
#include <string.h>
#include "{header}"

int main(void) {{
    double fs = {up}_FULL_SCALE;
    uint64_t fs_bits;
    memcpy(&fs_bits, &fs, 8);
    printf("%ld %ld %.17g %016" PRIx64 " %zu\n", (long){up}_LENGTH, (long){up}_CHANNELS,
           (double){up}_SAMPLE_RATE_HZ, fs_bits, sizeof {name} / sizeof {name}[0]);
    for (size_t i = 0; i < {up}_LENGTH * {up}_CHANNELS; i++) {{
        {print}
    }}
    return 0;
}}
"#
    )
}

/// The C header of a run compiles without warnings (C99, -Wall -Wextra -pedantic -Werror)
/// and holds exactly the values of the raw output of the same run, with the right element
/// type, length, channel, rate and full-scale macros (the full scale bit for bit equal to
/// the manifest's).
#[test]
fn c_header_compiles_and_holds_the_values_of_the_raw_output() {
    let Some(cc) = c_compiler() else {
        println!("skipped: no C compiler (cc or $CC) was found to compile the header");
        return;
    };
    let dir = Scratch::new("c");
    let cases = [
        ("i16", "int16_t", &[][..]),
        ("i24", "int32_t", &[][..]),
        ("i32", "int32_t", &[][..]),
        ("f32", "float", &[][..]),
        ("f64", "double", &[][..]),
        (
            "f32",
            "float",
            &["--full-scale", "50nV", "--allow-clipping"][..],
        ),
    ];
    for (i, (sf, c_type, extra)) in cases.iter().enumerate() {
        let mut opts = vec!["--sample-format", sf];
        opts.extend_from_slice(extra);
        let name = format!("vec_{i}");
        let mut with_name = opts.clone();
        with_name.extend_from_slice(&["--name", &name]);
        let h = generate(&dir, &format!("h{i}.h"), &with_name);
        let raw = generate(&dir, &format!("h{i}.raw"), &opts);
        let m = manifest(&h);
        assert_eq!(m["format"], "c");
        assert_eq!(m["extra"]["c_type"], *c_type);
        assert_eq!(m["extra"]["c_name"], name);
        let header = std::fs::read_to_string(&h).unwrap();
        assert!(
            header.contains(&format!("static const {c_type} {name}[")),
            "{sf}"
        );
        assert!(header.contains(&format!("seed: {SEED}")), "{sf}");
        assert!(header.contains("profile: formats demo (") && header.contains("demo.toml)"));
        assert!(header.contains(&format!("noisewright {}", env!("CARGO_PKG_VERSION"))));

        let src = dir.file(
            &format!("p{i}.c"),
            &c_program(&format!("h{i}.h"), &name, c_type),
        );
        let exe = dir.path(&format!("p{i}"));
        let o = Command::new(&cc)
            .args(["-std=c99", "-Wall", "-Wextra", "-pedantic", "-Werror", "-o"])
            .arg(&exe)
            .arg(&src)
            .current_dir(&dir.dir)
            .output()
            .unwrap();
        assert!(o.status.success(), "{cc} {sf}: {}", text(&o.stderr));
        let run = Command::new(&exe).output().unwrap();
        assert!(run.status.success());
        let out = text(&run.stdout);
        let mut lines = out.lines();
        let head: Vec<&str> = lines.next().unwrap().split(' ').collect();
        assert_eq!(head[0], SAMPLES.to_string(), "{sf}: LENGTH");
        assert_eq!(head[1], "1", "{sf}: CHANNELS");
        assert_eq!(head[2], "48000", "{sf}: SAMPLE_RATE_HZ");
        let fs = full_scale_exact(&h).unwrap_or(1.0);
        assert_eq!(
            head[3],
            format!("{:016x}", fs.to_bits()),
            "{sf}: FULL_SCALE"
        );
        assert_eq!(head[4], SAMPLES.to_string(), "{sf}: array size");
        let values: Vec<&str> = lines.collect();
        let from_c = match *c_type {
            "float" => Values::F32(
                values
                    .iter()
                    .map(|v| u32::from_str_radix(v, 16).unwrap())
                    .collect(),
            ),
            "double" => Values::F64(
                values
                    .iter()
                    .map(|v| u64::from_str_radix(v, 16).unwrap())
                    .collect(),
            ),
            _ => Values::Ints(values.iter().map(|v| v.parse().unwrap()).collect()),
        };
        let from_raw = decode(&std::fs::read(&raw).unwrap(), sf);
        assert_eq!(from_c, from_raw, "{sf} {extra:?} (seed {SEED})");
        if extra.contains(&"--allow-clipping") {
            // 50 nV full scale clips this noise: ±1.0 appears, and is counted.
            assert!(m["clipped"].as_u64().unwrap() > 0);
            let Values::F32(bits) = &from_c else {
                unreachable!()
            };
            assert!(bits.contains(&1.0f32.to_bits()) && bits.contains(&(-1.0f32).to_bits()));
        }
    }
}

/// Without --name the array is named after the output file's stem, made an identifier.
#[test]
fn c_array_name_defaults_to_the_sanitised_stem() {
    let dir = Scratch::new("cname");
    let h = generate(&dir, "2-mic preamp.h", &[]);
    let m = manifest(&h);
    assert_eq!(m["extra"]["c_name"], "noise_2_mic_preamp");
    assert_eq!(
        m["extra"]["c_macros"],
        serde_json::json!([
            "NOISE_2_MIC_PREAMP_LENGTH",
            "NOISE_2_MIC_PREAMP_CHANNELS",
            "NOISE_2_MIC_PREAMP_SAMPLE_RATE_HZ",
            "NOISE_2_MIC_PREAMP_FULL_SCALE"
        ])
    );
    let header = std::fs::read_to_string(&h).unwrap();
    assert!(header.contains("static const float noise_2_mic_preamp[NOISE_2_MIC_PREAMP_LENGTH"));
}

/// Every WAV's manifest names its container; below 4 GiB it is plain RIFF.
#[test]
fn wav_manifest_names_the_riff_container() {
    let dir = Scratch::new("wav");
    let w = generate(&dir, "w.wav", &[]);
    assert_eq!(manifest(&w)["extra"]["container"], "RIFF");
    assert_eq!(&std::fs::read(&w).unwrap()[..4], b"RIFF");
}

/// `analyze` reads an RF64 file: our RIFF output rewritten by hand into the EBU Tech 3306
/// layout (ds64 chunk first, 0xFFFFFFFF size markers) gives the same statistics and
/// density as the RIFF file itself.
#[test]
fn analyze_reads_rf64_like_the_same_riff_file() {
    let dir = Scratch::new("rf64");
    let riff = generate(&dir, "r.wav", &["--sample-format", "i16"]);
    let b = std::fs::read(&riff).unwrap();
    assert_eq!(&b[..4], b"RIFF");
    // i16 RIFF: 12-byte RIFF header, fmt chunk (8 + 16) at 12, the INFO comment's LIST
    // chunk at 36, then the data chunk's header.
    assert_eq!(&b[36..40], b"LIST");
    let d = common::wav_data_chunk_at(&b);
    let data_len = u32::from_le_bytes(b[d + 4..d + 8].try_into().unwrap()) as u64;
    let mut r = Vec::new();
    r.extend_from_slice(b"RF64");
    r.extend_from_slice(&u32::MAX.to_le_bytes());
    r.extend_from_slice(b"WAVE");
    r.extend_from_slice(b"ds64");
    r.extend_from_slice(&28u32.to_le_bytes());
    r.extend_from_slice(&(b.len() as u64 + 36 - 8).to_le_bytes()); // riffSize
    r.extend_from_slice(&data_len.to_le_bytes()); // dataSize
    r.extend_from_slice(&SAMPLES.to_le_bytes()); // sampleCount
    r.extend_from_slice(&0u32.to_le_bytes()); // table length
    r.extend_from_slice(&b[12..d + 4]); // fmt and LIST chunks, and "data"
    r.extend_from_slice(&u32::MAX.to_le_bytes());
    r.extend_from_slice(&b[d + 8..]);
    let rf64 = dir.path("r64.wav");
    std::fs::write(&rf64, &r).unwrap();
    std::fs::copy(dir.path("r.wav.json"), dir.path("r64.wav.json")).unwrap();
    let json = |p: &Path| -> serde_json::Value {
        let o = run_ok(&["analyze", p.to_str().unwrap(), "--json"], &dir);
        serde_json::from_slice(&o.stdout).unwrap()
    };
    let (a, b) = (json(&riff), json(&rf64));
    assert_eq!(b["samples"], SAMPLES);
    for key in ["samples", "mean", "rms", "std", "min", "max", "density"] {
        assert_eq!(a[key], b[key], "{key}");
    }
}

/// Text from the user inside the header's comment cannot end it, open a nested one or form a
/// trigraph: a profile named with `/*`, `*/` and `??/`, read from a path holding `/*`, gives
/// a header that compiles under -Wall -Wextra -pedantic -Werror (C99 §6.4.9 comments,
/// §5.2.1.1 trigraphs) and still shows the name, with a space in each opener and closer.
#[test]
fn c_header_comment_survives_comment_markers_in_the_name_and_path() {
    let Some(cc) = c_compiler() else {
        println!("skipped: no C compiler (cc or $CC) was found to compile the header");
        return;
    };
    let dir = Scratch::new("c-comment");
    std::fs::create_dir_all(dir.path("p")).unwrap();
    let body = PROFILE.replace(
        "name = \"formats demo\"",
        "name = \"a /* b */ c /*/ d ??/\"",
    );
    let profile = dir.file("p/*odd.toml", &body);
    let o = run(
        &[
            "generate",
            profile.to_str().unwrap(),
            "-o",
            "m.h",
            "--samples",
            "64",
            "--seed",
            "5",
            "--quiet",
        ],
        &dir,
    );
    assert!(o.status.success(), "{}", text(&o.stderr));
    let header = std::fs::read_to_string(dir.path("m.h")).unwrap();
    assert!(
        header.contains(" * profile: a / * b * / c / * / d ? ?/ ("),
        "{header}"
    );
    assert!(header.contains("p/ *odd.toml)\n"), "{header}");
    // The header's own comments: the block, and one per macro line that carries a unit.
    assert_eq!(header.matches("/*").count(), 3, "{header}");
    assert_eq!(header.matches("*/").count(), 3, "{header}");
    let src = dir.file(
        "m.c",
        "#include <stdio.h>\n#include \"m.h\"\nint main(void) { printf(\"%d %f\\n\", \
         (int)M_LENGTH, (double)m[0]); return 0; }\n",
    );
    let o = Command::new(&cc)
        .args(["-std=c99", "-Wall", "-Wextra", "-pedantic", "-Werror", "-o"])
        .arg(dir.path("m"))
        .arg(&src)
        .current_dir(&dir.dir)
        .output()
        .unwrap();
    assert!(o.status.success(), "{cc}: {}", text(&o.stderr));
    let out = Command::new(dir.path("m")).output().unwrap();
    assert!(
        text(&out.stdout).starts_with("64 "),
        "{}",
        text(&out.stdout)
    );
}
