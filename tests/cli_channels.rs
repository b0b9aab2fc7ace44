//! CLI tests of multi-channel output: the multi-channel WAV header byte by byte, CSV columns
//! and the manifest's channel keys. Bad `channels`/`correlation` keys are rows of
//! tests/error_classes.rs.

mod common;

use std::process::Output;

use common::{Scratch, manifest, run};

fn profile(channels: &str) -> String {
    format!(
        "sample_rate = \"8 kHz\"\n{channels}\n[band]\nlow = \"10 Hz\"\nhigh = \"3 kHz\"\n\
         [[floor]]\ndensity = \"10 nV/rtHz\"\n"
    )
}

fn generate(dir: &Scratch, keys: &str, out: &str, extra: &[&str]) -> Output {
    let p = dir.file("p.toml", &profile(keys));
    let o = dir.path(out);
    let mut args: Vec<&std::ffi::OsStr> = vec![
        "generate".as_ref(),
        p.as_os_str(),
        "-o".as_ref(),
        o.as_os_str(),
        "--seed".as_ref(),
        "3".as_ref(),
    ];
    args.extend(extra.iter().map(|s| std::ffi::OsStr::new(*s)));
    run(&args, dir)
}

/// The WAVE header of a 3-channel 16-bit file, field by field against WAVEFORMATEXTENSIBLE
/// (Microsoft WAVEFORMATEXTENSIBLE documentation and "Multiple channel audio data and WAVE
/// files"; REFERENCES §10): more than two channels needs tag 0xFFFE, cbSize 22, valid bits,
/// channel mask (0 = no speaker positions) and the PCM SubFormat GUID. The data holds the
/// same interleaved frames as 3-channel raw i16 output.
#[test]
fn three_channel_wav_has_an_extensible_header_byte_by_byte() {
    let dir = Scratch::new("wav");
    let keys = "channels = 3\ncorrelation = 0.5";
    let args = [
        "--samples",
        "5",
        "--sample-format",
        "i16",
        "--full-scale",
        "1uV",
        "--allow-clipping",
    ];
    assert!(generate(&dir, keys, "x.wav", &args).status.success());
    assert!(generate(&dir, keys, "x.i16", &args).status.success());
    let b = std::fs::read(dir.path("x.wav")).unwrap();
    let data = 5 * 3 * 2u32;
    let mut want = Vec::new();
    want.extend_from_slice(b"RIFF");
    want.extend_from_slice(&(68 - 8 + data).to_le_bytes()); // RIFF size, pad-free (30 even)
    want.extend_from_slice(b"WAVE");
    want.extend_from_slice(b"fmt ");
    want.extend_from_slice(&40u32.to_le_bytes());
    want.extend_from_slice(&0xFFFEu16.to_le_bytes()); // wFormatTag EXTENSIBLE
    want.extend_from_slice(&3u16.to_le_bytes()); // nChannels
    want.extend_from_slice(&8000u32.to_le_bytes()); // nSamplesPerSec
    want.extend_from_slice(&(8000u32 * 6).to_le_bytes()); // nAvgBytesPerSec = rate × align
    want.extend_from_slice(&6u16.to_le_bytes()); // nBlockAlign = 3 × 2
    want.extend_from_slice(&16u16.to_le_bytes()); // wBitsPerSample
    want.extend_from_slice(&22u16.to_le_bytes()); // cbSize
    want.extend_from_slice(&16u16.to_le_bytes()); // wValidBitsPerSample
    want.extend_from_slice(&0u32.to_le_bytes()); // dwChannelMask
    want.extend_from_slice(&[
        0x01, 0x00, 0x00, 0x00, 0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xAA, 0x00, 0x38, 0x9B,
        0x71,
    ]); // KSDATAFORMAT_SUBTYPE_PCM
    want.extend_from_slice(b"data");
    want.extend_from_slice(&data.to_le_bytes());
    assert_eq!(&b[..68], &want[..]);
    let raw = std::fs::read(dir.path("x.i16")).unwrap();
    assert_eq!(&b[68..], &raw[..]);
    assert_eq!(b.len(), 68 + data as usize);
}

/// Two 16-bit channels keep the plain PCM header (tag 1): WAVEFORMATEX describes stereo
/// 16-bit PCM exactly (REFERENCES §10).
#[test]
fn two_channel_16_bit_wav_keeps_the_pcm_header() {
    let dir = Scratch::new("wav2");
    let args = ["--samples", "4", "--sample-format", "i16"];
    assert!(
        generate(&dir, "channels = 2", "x.wav", &args)
            .status
            .success()
    );
    let b = std::fs::read(dir.path("x.wav")).unwrap();
    assert_eq!(b.len(), 44 + 4 * 2 * 2);
    assert_eq!(&b[20..22], &1u16.to_le_bytes());
    assert_eq!(&b[22..24], &2u16.to_le_bytes());
    assert_eq!(&b[32..34], &4u16.to_le_bytes());
}

#[test]
fn csv_has_one_column_per_channel_and_the_manifest_names_the_channels() {
    let dir = Scratch::new("csv");
    let out = generate(
        &dir,
        "channels = 2\ncorrelation = 0.25",
        "x.csv",
        &["--samples", "3"],
    );
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = std::fs::read_to_string(dir.path("x.csv")).unwrap();
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(lines[0], "time_s,ch0_value_V,ch1_value_V");
    assert_eq!(lines.len(), 4);
    assert!(lines[2].starts_with("0.000125,"));
    let m = manifest(&dir.path("x.csv"));
    assert_eq!(m["samples"], 3);
    assert_eq!(m["extra"]["channels"], 2);
    assert_eq!(m["extra"]["correlation"][0][1], 0.25);
    assert_eq!(m["profile"]["correlation"][1][0], 0.25);
    assert_eq!(
        m["extra"]["expected_rms_per_channel"]
            .as_array()
            .unwrap()
            .len(),
        2
    );
}
