//! Every class of bad input, in one table. Each row is a malformed profile, option or capture
//! file; the binary must exit 2 with a message that names the file (or the option), the key
//! or position (TOML key path and line, CSV line, WAV chunk and byte offset, option name) and
//! what is expected, write nothing to standard output, leave every input file as it was, and
//! leave no file behind (no target, no manifest, no `.partial` leftover, no `out/` folder).
//!
//! A bad profile is refused by the profile parser before `generate` opens any file, and the
//! binary prints that error as `noisewright: error: {e}` and exits with `e.exit_code()`. So
//! the profile rows run the parser in-process and check that message and code exactly as
//! the binary's stderr and exit status are checked; a sample of them also runs through the
//! binary to hold the two to the same text, status, silence on stdout and empty folder. The
//! other rows (options, capture files) run the binary. All rows run in parallel, each in its
//! own scratch folder.
//!
//! A new error class gets a row here (see DEVELOPERS.md).

mod common;

use std::sync::Mutex;
use std::sync::atomic::{AtomicUsize, Ordering};

use common::{Scratch, run, text};
use noisewright::profile::parse_profile;

/// The profile most rows start from (volts, 48 kHz, one white floor); lines 1 to 6.
const W: &str = "sample_rate = \"48 kHz\"\n[band]\nlow = \"10 Hz\"\nhigh = \"20 kHz\"\n\
                 [[floor]]\ndensity = \"10 nV/rtHz\"\n";
/// `W` without its floor (lines 1 to 4), for rows that bring their own sources.
const HEAD: &str = "sample_rate = \"48 kHz\"\n[band]\nlow = \"10 Hz\"\nhigh = \"20 kHz\"\n";
/// A non-inverting amplifier stage (lines 5 to 10 after `HEAD`).
const AMP: &str = "[[amplifier]]\ntopology = \"non-inverting\"\nvoltage_density = \"5 nV/rtHz\"\n\
                   current_density = \"1 pA/rtHz\"\nfeedback_resistance = \"9 kOhm\"\n\
                   gain_resistance = \"1 kOhm\"\n";

/// One row: a class of bad input, the files it needs, the command line and what the message
/// must contain.
struct Case {
    class: &'static str,
    files: Vec<(String, Vec<u8>)>,
    args: Vec<String>,
    expect: Vec<String>,
    /// A profile row (see [`profile`]): `generate` on the file `p.toml`, which must be
    /// refused by the profile parser; it runs in-process.
    parser: bool,
    /// Environment variables set for the binary.
    env: Vec<(String, String)>,
}

impl Case {
    fn new(class: &'static str) -> Case {
        Case {
            class,
            files: Vec::new(),
            args: Vec::new(),
            expect: Vec::new(),
            parser: false,
            env: Vec::new(),
        }
    }

    fn env(mut self, name: &str, value: &str) -> Case {
        self.env.push((name.to_string(), value.to_string()));
        self
    }

    fn file(mut self, name: &str, body: impl AsRef<[u8]>) -> Case {
        self.files.push((name.to_string(), body.as_ref().to_vec()));
        self
    }

    fn args(mut self, args: &[&str]) -> Case {
        self.args = args.iter().map(|s| s.to_string()).collect();
        self
    }

    fn expect(mut self, needles: &[&str]) -> Case {
        self.expect = needles.iter().map(|s| s.to_string()).collect();
        self
    }
}

/// The profile file of a profile row, as `generate` names it in its messages.
const PROFILE_FILE: &str = "p.toml";

/// `generate p.toml -o x.wav` on the profile `body`, which the profile parser must refuse:
/// run in-process as `parse_profile(body, "p.toml")` (see [`check_in_process`]).
fn profile(class: &'static str, body: impl AsRef<str>, expect: &[&str]) -> Case {
    let mut case = Case::new(class)
        .file(PROFILE_FILE, body.as_ref())
        .args(&["generate", PROFILE_FILE, "-o", "x.wav", "--samples", "100"])
        .expect(expect);
    case.parser = true;
    case
}

/// `generate w.toml ARGS…` on the profile `W`.
fn generate(class: &'static str, args: &[&str], expect: &[&str]) -> Case {
    let mut all = vec!["generate", "w.toml"];
    all.extend_from_slice(args);
    Case::new(class).file("w.toml", W).args(&all).expect(expect)
}

/// `analyze NAME ARGS…` on a capture file `name` holding `bytes`.
fn capture(
    class: &'static str,
    name: &str,
    bytes: Vec<u8>,
    args: &[&str],
    expect: &[&str],
) -> Case {
    let mut all = vec!["analyze", name];
    all.extend_from_slice(args);
    Case::new(class).file(name, bytes).args(&all).expect(expect)
}

// ---- WAV bytes, field by field (Microsoft RIFF/WAVE layout, REFERENCES §10) ----

/// A chunk: id, the size field as given (it may lie), the body and its pad byte.
fn chunk(id: &[u8; 4], size: u32, body: &[u8]) -> Vec<u8> {
    let mut c = id.to_vec();
    c.extend_from_slice(&size.to_le_bytes());
    c.extend_from_slice(body);
    if body.len() % 2 == 1 {
        c.push(0);
    }
    c
}

/// A chunk whose size field is its body's length.
fn honest(id: &[u8; 4], body: &[u8]) -> Vec<u8> {
    chunk(id, body.len() as u32, body)
}

/// A 16-byte `fmt ` body.
fn fmt(tag: u16, channels: u16, rate: u32, align: u16, bits: u16) -> Vec<u8> {
    let mut b = Vec::new();
    b.extend_from_slice(&tag.to_le_bytes());
    b.extend_from_slice(&channels.to_le_bytes());
    b.extend_from_slice(&rate.to_le_bytes());
    b.extend_from_slice(&(rate * u32::from(align)).to_le_bytes());
    b.extend_from_slice(&align.to_le_bytes());
    b.extend_from_slice(&bits.to_le_bytes());
    b
}

/// A 40-byte WAVE_FORMAT_EXTENSIBLE `fmt ` body, mono, with `valid` bits and the SubFormat
/// GUID `sub`-0000-0010-8000-00AA00389B71 (1 = PCM, 3 = float), its tail spoiled if `!good`.
fn fmt_ext(rate: u32, bits: u16, valid: u16, sub: u8, good: bool) -> Vec<u8> {
    let mut b = fmt(0xFFFE, 1, rate, bits / 8, bits);
    b.extend_from_slice(&22u16.to_le_bytes());
    b.extend_from_slice(&valid.to_le_bytes());
    b.extend_from_slice(&4u32.to_le_bytes());
    b.extend_from_slice(&[
        sub, 0, 0, 0, 0, 0, 0x10, 0, 0x80, 0, 0, 0xAA, 0, 0x38, 0x9B, 0x71,
    ]);
    if !good {
        b[39] = 0x72;
    }
    b
}

/// "RIFF" + size + "WAVE" + the chunks.
fn riff(chunks: &[Vec<u8>]) -> Vec<u8> {
    let body: Vec<u8> = chunks.concat();
    let mut f = b"RIFF".to_vec();
    f.extend_from_slice(&((body.len() + 4) as u32).to_le_bytes());
    f.extend_from_slice(b"WAVE");
    f.extend_from_slice(&body);
    f
}

/// `n` i16 samples of a deterministic ramp.
fn pcm16(n: usize) -> Vec<u8> {
    (0..n)
        .flat_map(|i| (((i * 37) % 200) as i16 - 100).to_le_bytes())
        .collect()
}

/// A valid mono i16 WAV at 1 kHz with `n` samples.
fn good_wav(n: usize) -> Vec<u8> {
    riff(&[
        honest(b"fmt ", &fmt(1, 1, 1000, 2, 16)),
        honest(b"data", &pcm16(n)),
    ])
}

/// An RF64 file whose ds64 chunk has the size field `ds64_size` and body `ds64`, then `rest`.
fn rf64(ds64_size: u32, ds64: &[u8], rest: &[Vec<u8>]) -> Vec<u8> {
    let mut f = b"RF64".to_vec();
    f.extend_from_slice(&u32::MAX.to_le_bytes());
    f.extend_from_slice(b"WAVE");
    f.extend_from_slice(&chunk(b"ds64", ds64_size, ds64));
    f.extend_from_slice(&rest.concat());
    f
}

/// A 28-byte ds64 body: riffSize, dataSize, sampleCount, table length 0.
fn ds64(data: u64) -> Vec<u8> {
    let mut b = Vec::new();
    b.extend_from_slice(&(data + 100).to_le_bytes());
    b.extend_from_slice(&data.to_le_bytes());
    b.extend_from_slice(&(data / 2).to_le_bytes());
    b.extend_from_slice(&0u32.to_le_bytes());
    b
}

/// A valid CSV capture: `n` rows at 1 kHz with a `value_V` column.
fn good_csv(n: usize) -> String {
    let mut s = String::from("time_s,value_V\n");
    for k in 0..n {
        s += &format!("{},{}\n", k as f64 / 1000.0, ((k * 37) % 17) as f64 * 1e-6);
    }
    s
}

/// Every row. Profile rows name `p.toml:LINE` and the key path; option rows the option;
/// capture rows the file and the chunk, byte or line.
fn cases() -> Vec<Case> {
    let f32_nan: Vec<u8> = [0.1f32, 0.2, 0.3, f32::NAN]
        .iter()
        .cycle()
        .take(64)
        .flat_map(|v| v.to_le_bytes())
        .collect();
    let big = good_csv(64);
    vec![
        // ---------------- profile: TOML shape ----------------
        profile(
            "syntax: a value is missing",
            "sample_rate = \n[band]\n",
            &["p.toml:1", "syntax", "not valid TOML", "column 15"],
        ),
        profile(
            "syntax: an unterminated string",
            HEAD.replace("low = \"10 Hz\"", "low = \"10 Hz"),
            &["p.toml:3", "syntax", "not valid TOML"],
        ),
        profile(
            "syntax: a key given twice",
            format!("{W}density = 1e-9\n"),
            &["p.toml:7", "syntax", "duplicate key"],
        ),
        profile(
            "unknown top-level key with a suggestion",
            format!("samplerate = 1\n{W}"),
            &[
                "p.toml:1",
                "samplerate",
                "unknown key",
                "did you mean `sample_rate`",
            ],
        ),
        profile(
            "unknown top-level key without a suggestion",
            format!("colour = 3\n{W}"),
            &[
                "p.toml:1",
                "colour",
                "unknown key",
                "allowed at the top level",
            ],
        ),
        profile(
            "unknown key in [band]",
            format!("{HEAD}ordre = 2\n[[floor]]\ndensity = 1e-9\n"),
            &[
                "p.toml:5",
                "band.ordre",
                "did you mean `order`",
                "low, high, order",
            ],
        ),
        profile(
            "unknown key in [[floor]]",
            format!("{W}slop = 1\n"),
            &["p.toml:7", "floor[0].slop", "did you mean `slope`"],
        ),
        profile(
            "a source as a single [table]",
            format!("{HEAD}[floor]\ndensity = 1e-9\n"),
            &["p.toml:5", "floor", "[[floor]] (double brackets"],
        ),
        profile(
            "[band] that is not a table",
            "sample_rate = 1000\nband = 3\n[[floor]]\ndensity = 1e-9\n",
            &[
                "p.toml:2",
                "band",
                "expected a [band] table",
                "got an integer",
            ],
        ),
        profile(
            "a source list item that is not a table",
            format!("floor = [1]\n{HEAD}"),
            &["p.toml:1", "floor[0]", "expected a [[floor]] table"],
        ),
        profile(
            "wrong type: name",
            format!("name = 3\n{W}"),
            &["p.toml:1", "name", "expected a string"],
        ),
        profile(
            "unit other than V or A",
            format!("unit = \"mV\"\n{W}"),
            &[
                "p.toml:1",
                "unit",
                "\"V\" (volts) or \"A\" (amperes)",
                "\"mV\"",
            ],
        ),
        profile(
            "sensor unit: a density where a level is expected",
            format!(
                "unit = \"deg/s\"\noffset = \"0.2 deg/rth\"\n{HEAD}[[floor]]\ndensity = \"3 mdeg/s/rtHz\"\n"
            ),
            &[
                "p.toml:2",
                "offset",
                "\"0.2 deg/rth\" is a density",
                "expects an amplitude",
            ],
        ),
        profile(
            "sensor unit: a resistor",
            format!("unit = \"Pa\"\n{HEAD}[[resistor]]\nresistance = \"1 kOhm\"\n"),
            &["p.toml:6", "resistor[0]", "unit is Pa", "[[floor]]"],
        ),
        profile(
            "inertial: no term",
            format!("unit = \"deg/s\"\n{HEAD}[[inertial]]\nname = \"gyro\"\n"),
            &["p.toml:6", "inertial[0]", "random_walk (N)"],
        ),
        profile(
            "inertial: a density for the bias instability",
            format!("unit = \"deg/s\"\n{HEAD}[[inertial]]\nbias_instability = \"0.2 deg/rth\"\n"),
            &[
                "p.toml:7",
                "inertial[0].bias_instability",
                "is a density",
                "expects an amplitude",
            ],
        ),
        profile(
            "sensitivity in a volt profile",
            format!("sensitivity = \"20 mV/g\"\n{W}"),
            &["p.toml:1", "sensitivity", "unit is V already"],
        ),
        profile(
            "sensitivity in the wrong unit",
            format!(
                "unit = \"g\"\nsensitivity = \"20 mV/Pa\"\n{HEAD}[[floor]]\ndensity = \"25 ug/rtHz\"\n"
            ),
            &["p.toml:2", "sensitivity", "volts per g", "\"20 mV/Pa\""],
        ),
        profile(
            "no sources",
            HEAD,
            &["p.toml: sources", "at least one [[floor]]"],
        ),
        // ---------------- profile: sample rate and band ----------------
        profile(
            "missing key: sample_rate",
            W.replace("sample_rate = \"48 kHz\"\n", ""),
            &["p.toml: sample_rate", "missing", "sample_rate = \"48 kHz\""],
        ),
        profile(
            "wrong type: sample_rate",
            W.replace("\"48 kHz\"", "true"),
            &[
                "p.toml:1",
                "sample_rate",
                "frequency such as",
                "got a boolean",
            ],
        ),
        profile(
            "bad unit: sample_rate",
            W.replace("\"48 kHz\"", "\"48 kV\""),
            &["p.toml:1", "sample_rate", "frequency such as", "\"48 kV\""],
        ),
        profile(
            "out of range: sample_rate 0",
            W.replace("\"48 kHz\"", "0"),
            &["p.toml:1", "sample_rate", "must be > 0", "0 Hz"],
        ),
        profile(
            "not finite: sample_rate nan",
            W.replace("\"48 kHz\"", "nan"),
            &["p.toml:1", "sample_rate", "frequency such as", "NaN"],
        ),
        profile(
            "overflowing quantity",
            W.replace("\"48 kHz\"", "\"1e999 Hz\""),
            &["p.toml:1", "sample_rate", "out of range"],
        ),
        profile(
            "missing key: band",
            "sample_rate = 1000\n[[floor]]\ndensity = 1e-9\n",
            &["p.toml: band", "missing", "[band] with low"],
        ),
        profile(
            "missing key: band.low",
            W.replace("low = \"10 Hz\"\n", ""),
            &["p.toml:2", "band.low", "missing", "low = \"20 Hz\""],
        ),
        profile(
            "missing key: band.high",
            W.replace("high = \"20 kHz\"\n", ""),
            &["p.toml:2", "band.high", "missing", "high = \"20 kHz\""],
        ),
        profile(
            "out of range: band.low negative",
            W.replace("\"10 Hz\"", "\"-1 Hz\""),
            &["p.toml:3", "band.low", "must be > 0"],
        ),
        profile(
            "band low >= high",
            W.replace("\"10 Hz\"", "\"30 kHz\""),
            &["p.toml:3", "band.low", "must be below band.high (20 kHz)"],
        ),
        profile(
            "band above Nyquist",
            W.replace("\"20 kHz\"", "\"30 kHz\""),
            &[
                "p.toml:4",
                "band.high",
                "Nyquist frequency 24 kHz",
                "raise sample_rate",
            ],
        ),
        profile(
            "band.low below the engine's reach",
            W.replace("\"10 Hz\"", "\"1e-13 Hz\""),
            &["p.toml:3", "band.low", "sample_rate", "at least"],
        ),
        profile(
            "out of range: band.order",
            format!("{HEAD}order = 9\n[[floor]]\ndensity = 1e-9\n"),
            &["p.toml:5", "band.order", "0 (brick wall) to 8", "got 9"],
        ),
        profile(
            "wrong type: band.order",
            format!("{HEAD}order = 1.5\n[[floor]]\ndensity = 1e-9\n"),
            &["p.toml:5", "band.order", "integer", "got 1.5"],
        ),
        // ---------------- profile: floor, resistor, table ----------------
        profile(
            "missing key: floor density",
            format!("{HEAD}[[floor]]\ncorner = \"10 Hz\"\n"),
            &["p.toml:5", "floor[0].density", "missing", "4 nV/rtHz"],
        ),
        profile(
            "negative density",
            W.replace("\"10 nV/rtHz\"", "\"-4 nV/rtHz\""),
            &["p.toml:6", "floor[0].density", "must be > 0", "-4 nV/√Hz"],
        ),
        profile(
            "wrong dimension: an A density in a V profile",
            W.replace("\"10 nV/rtHz\"", "\"4 pA/rtHz\""),
            &[
                "p.toml:6",
                "floor[0].density",
                "this profile's unit is V",
                "unit = \"A\"",
            ],
        ),
        profile(
            "wrong dimension: an amplitude for a density",
            W.replace("\"10 nV/rtHz\"", "\"4 nV\""),
            &[
                "p.toml:6",
                "floor[0].density",
                "density such as",
                "\"4 nV\"",
            ],
        ),
        profile(
            "bad unit: density",
            W.replace("\"10 nV/rtHz\"", "\"4 nV/furlong\""),
            &["p.toml:6", "floor[0].density", "density such as", "furlong"],
        ),
        profile(
            "wrong type: density",
            W.replace("\"10 nV/rtHz\"", "[1]"),
            &[
                "p.toml:6",
                "floor[0].density",
                "density such as",
                "got an array",
            ],
        ),
        profile(
            "corner <= 0",
            format!("{W}corner = \"0 Hz\"\n"),
            &["p.toml:7", "floor[0].corner", "must be > 0"],
        ),
        profile(
            "slope out of range",
            format!("{W}corner = \"100 Hz\"\nslope = 3\n"),
            &["p.toml:8", "floor[0].slope", "0 < slope <= 2", "got 3"],
        ),
        profile(
            "wrong type: slope",
            format!("{W}corner = \"100 Hz\"\nslope = \"1\"\n"),
            &["p.toml:8", "floor[0].slope", "0 < slope <= 2"],
        ),
        profile(
            "slope without a corner",
            format!("{W}slope = 1\n"),
            &[
                "p.toml:7",
                "floor[0].slope",
                "without a corner",
                "corner = \"100 Hz\"",
            ],
        ),
        profile(
            "missing key: resistance",
            format!("{HEAD}[[resistor]]\ntemperature = \"25 C\"\n"),
            &["p.toml:5", "resistor[0].resistance", "missing", "10 kOhm"],
        ),
        profile(
            "negative resistance",
            format!("{HEAD}[[resistor]]\nresistance = \"-10 kOhm\"\n"),
            &["p.toml:6", "resistor[0].resistance", "must be > 0"],
        ),
        profile(
            "wrong dimension: resistance in Hz",
            format!("{HEAD}[[resistor]]\nresistance = \"10 kHz\"\n"),
            &["p.toml:6", "resistor[0].resistance", "resistance such as"],
        ),
        profile(
            "temperature below 0 K",
            format!("{HEAD}[[resistor]]\nresistance = 50\ntemperature = \"-300 C\"\n"),
            &["p.toml:7", "resistor[0].temperature", "must be > 0", "K"],
        ),
        profile(
            "wrong dimension: temperature in Hz",
            format!("{HEAD}[[resistor]]\nresistance = 50\ntemperature = \"300 Hz\"\n"),
            &["p.toml:7", "resistor[0].temperature", "temperature such as"],
        ),
        profile(
            "missing key: table points",
            format!("{HEAD}[[table]]\nname = \"t\"\n"),
            &["p.toml:5", "table[0].points", "missing", "(Hz, unit/√Hz)"],
        ),
        profile(
            "empty table",
            format!("{HEAD}[[table]]\npoints = []\n"),
            &["p.toml:6", "table[0].points", "at least one"],
        ),
        profile(
            "table point that is not a pair",
            format!("{HEAD}[[table]]\npoints = [[1, 2e-9, 3]]\n"),
            &[
                "p.toml:6",
                "table[0].points[0]",
                "[frequency, density] pair",
            ],
        ),
        profile(
            "table frequencies not increasing",
            format!("{HEAD}[[table]]\npoints = [\n  [10, 1e-9],\n  [1, 2e-9],\n]\n"),
            &[
                "p.toml:8",
                "table[0].points[1]",
                "increase strictly",
                "1 Hz follows 10 Hz",
            ],
        ),
        profile(
            "table frequency <= 0",
            format!("{HEAD}[[table]]\npoints = [[0, 1e-9]]\n"),
            &["p.toml:6", "table[0].points[0]", "frequency must be > 0 Hz"],
        ),
        profile(
            "table density <= 0",
            format!("{HEAD}[[table]]\npoints = [[1, 0]]\n"),
            &["p.toml:6", "table[0].points[0]", "density must be > 0"],
        ),
        profile(
            "wrong dimension: table density",
            format!("{HEAD}[[table]]\npoints = [[1, \"1 nV\"]]\n"),
            &["p.toml:6", "table[0].points[0]", "density such as"],
        ),
        // ---------------- profile: bursts ----------------
        profile(
            "burst: missing levels",
            format!("{W}[[burst]]\ndwell = [1, 1]\n"),
            &["p.toml:7", "burst[0].levels", "missing", "levels = ["],
        ),
        profile(
            "burst: missing dwell",
            format!("{W}[[burst]]\nlevels = [0, 1]\n"),
            &[
                "p.toml:7",
                "burst[0].dwell",
                "missing",
                "one mean dwell time per level",
            ],
        ),
        profile(
            "burst: one level",
            format!("{W}[[burst]]\nlevels = [\"1 uV\"]\ndwell = [1]\n"),
            &[
                "p.toml:8",
                "burst[0].levels",
                "at least two levels",
                "got 1",
            ],
        ),
        profile(
            "burst: level in the wrong unit",
            format!("{W}[[burst]]\nlevels = [\"0 uV\", \"1 uA\"]\ndwell = [1, 1]\n"),
            &["p.toml:8", "burst[0].levels[1]", "this profile's unit is V"],
        ),
        profile(
            "burst: level of the wrong type",
            format!("{W}[[burst]]\nlevels = [0, true]\ndwell = [1, 1]\n"),
            &[
                "p.toml:8",
                "burst[0].levels[1]",
                "amplitude such as",
                "got a boolean",
            ],
        ),
        profile(
            "burst: dwell count differs from levels",
            format!("{W}[[burst]]\nlevels = [0, 1, 2]\ndwell = [1, 2]\n"),
            &["p.toml:9", "burst[0].dwell", "3 levels but 2 dwell times"],
        ),
        profile(
            "burst: dwell <= 0",
            format!("{W}[[burst]]\nlevels = [0, 1]\ndwell = [\"0 s\", 1]\n"),
            &["p.toml:9", "burst[0].dwell[0]", "must be > 0"],
        ),
        profile(
            "burst: dwell in the wrong dimension",
            format!("{W}[[burst]]\nlevels = [0, 1]\ndwell = [\"1 Hz\", 1]\n"),
            &["p.toml:9", "burst[0].dwell[0]", "time such as"],
        ),
        profile(
            "burst: next with the wrong number of rows",
            format!(
                "{W}[[burst]]\nlevels = [0, 1]\ndwell = [1, 1]\nnext = [[0, 1], [1, 0], [1, 0]]\n"
            ),
            &["p.toml:10", "burst[0].next", "2 levels but 3 rows"],
        ),
        profile(
            "burst: next row that is not an array",
            format!("{W}[[burst]]\nlevels = [0, 1]\ndwell = [1, 1]\nnext = [1, [1, 0]]\n"),
            &["p.toml:10", "burst[0].next[0]", "row of 2 probabilities"],
        ),
        profile(
            "burst: next row of the wrong length",
            format!("{W}[[burst]]\nlevels = [0, 1]\ndwell = [1, 1]\nnext = [[0, 1, 0], [1, 0]]\n"),
            &[
                "p.toml:10",
                "burst[0].next[0]",
                "expected 2 probabilities",
                "got 3",
            ],
        ),
        profile(
            "burst: next entry outside 0..1",
            format!("{W}[[burst]]\nlevels = [0, 1]\ndwell = [1, 1]\nnext = [[0, 2], [1, 0]]\n"),
            &[
                "p.toml:10",
                "burst[0].next[0]",
                "entry 1 must be a probability from 0 to 1",
            ],
        ),
        profile(
            "burst: a level jumping to itself",
            format!("{W}[[burst]]\nlevels = [0, 1]\ndwell = [1, 1]\nnext = [[0, 1], [0.5, 0.5]]\n"),
            &[
                "p.toml:10",
                "burst[0].next[1]",
                "cannot jump to itself",
                "entry 1 must be 0",
            ],
        ),
        profile(
            "burst: next row not summing to 1",
            format!(
                "{W}[[burst]]\nlevels = [0, 1, 2]\ndwell = [1, 1, 1]\n\
                 next = [[0, 0.5, 0.6], [1, 0, 0], [1, 0, 0]]\n"
            ),
            &["p.toml:10", "burst[0].next[0]", "must sum to 1", "got 1.1"],
        ),
        profile(
            "burst: an unreachable level",
            format!(
                "{W}[[burst]]\nlevels = [0, 1, 2]\ndwell = [1, 1, 1]\n\
                 next = [[0, 1, 0], [1, 0, 0], [0.5, 0.5, 0]]\n"
            ),
            &[
                "p.toml:10",
                "burst[0].next",
                "level 2 can never be reached from level 0",
            ],
        ),
        profile(
            "burst: unknown sampling",
            format!("{W}[[burst]]\nlevels = [0, 1]\ndwell = [1, 1]\nsampling = \"average\"\n"),
            &[
                "p.toml:10",
                "burst[0].sampling",
                "\"instant\"",
                "\"mean\"",
                "average",
            ],
        ),
        profile(
            "burst: unknown key",
            format!("{W}[[burst]]\nlevels = [0, 1]\ndwel = [1, 1]\n"),
            &["p.toml:9", "burst[0].dwel", "did you mean `dwell`"],
        ),
        // ---------------- profile: tones and offset ----------------
        profile(
            "tone: missing frequency",
            format!("{W}[[tone]]\npeak = 1\n"),
            &[
                "p.toml:7",
                "tone[0].frequency",
                "missing",
                "frequency = \"1 kHz\"",
            ],
        ),
        profile(
            "tone: frequency <= 0",
            format!("{W}[[tone]]\nfrequency = 0\npeak = 1\n"),
            &["p.toml:8", "tone[0].frequency", "must be > 0"],
        ),
        profile(
            "tone: frequency at Nyquist",
            format!("{W}[[tone]]\nfrequency = \"24 kHz\"\npeak = 1\n"),
            &[
                "p.toml:8",
                "tone[0].frequency",
                "below half the sample rate (24 kHz)",
            ],
        ),
        profile(
            "tone: both peak and rms",
            format!("{W}[[tone]]\nfrequency = 10\npeak = 1\nrms = 1\n"),
            &["p.toml:10", "tone[0].rms", "exactly one of peak"],
        ),
        profile(
            "tone: neither peak nor rms",
            format!("{W}[[tone]]\nfrequency = 10\n"),
            &["p.toml:7", "tone[0].peak", "missing", "rms = "],
        ),
        profile(
            "tone: peak <= 0",
            format!("{W}[[tone]]\nfrequency = 10\npeak = \"-1 mV\"\n"),
            &["p.toml:9", "tone[0].peak", "must be > 0"],
        ),
        profile(
            "tone: peak in the wrong unit",
            format!("{W}[[tone]]\nfrequency = 10\npeak = \"1 mA\"\n"),
            &["p.toml:9", "tone[0].peak", "this profile's unit is V"],
        ),
        profile(
            "tone: phase without a unit",
            format!("{W}[[tone]]\nfrequency = 10\npeak = 1\nphase = \"90\"\n"),
            &[
                "p.toml:10",
                "tone[0].phase",
                "no unit deg or rad",
                "\"90 deg\"",
            ],
        ),
        profile(
            "tone: phase that is not a number",
            format!("{W}[[tone]]\nfrequency = 10\npeak = 1\nphase = \"x deg\"\n"),
            &["p.toml:10", "tone[0].phase", "phase such as"],
        ),
        profile(
            "tone: phase of the wrong type",
            format!("{W}[[tone]]\nfrequency = 10\npeak = 1\nphase = true\n"),
            &["p.toml:10", "tone[0].phase", "phase such as", "true"],
        ),
        profile(
            "tone: unknown key",
            format!("{W}[[tone]]\nfrequency = 10\namplitude = 1\n"),
            &["p.toml:9", "tone[0].amplitude", "unknown key", "peak, rms"],
        ),
        profile(
            "offset of the wrong type",
            format!("offset = true\n{W}"),
            &["p.toml:1", "offset", "amplitude such as", "got a boolean"],
        ),
        profile(
            "offset in the wrong unit",
            format!("offset = \"1 A\"\n{W}"),
            &["p.toml:1", "offset", "this profile's unit is V"],
        ),
        profile(
            "offset in the wrong dimension",
            format!("offset = \"1 Hz\"\n{W}"),
            &["p.toml:1", "offset", "amplitude such as"],
        ),
        // ---------------- profile: channels and correlation ----------------
        profile(
            "channels = 0",
            format!("channels = 0\n{W}"),
            &["p.toml:1", "channels", "from 1 to 64", "got 0"],
        ),
        profile(
            "channels above the limit",
            format!("channels = 65\n{W}"),
            &["p.toml:1", "channels", "from 1 to 64", "got 65"],
        ),
        profile(
            "channels of the wrong type",
            format!("channels = \"two\"\n{W}"),
            &["p.toml:1", "channels", "whole number of channels"],
        ),
        profile(
            "correlation of the wrong size",
            format!("channels = 3\ncorrelation = [[1, 0.3], [0.3, 1]]\n{W}"),
            &["p.toml:2", "correlation", "3×3 matrix", "got 2 rows"],
        ),
        profile(
            "correlation row that is not an array",
            format!("channels = 2\ncorrelation = [[1, 0.3], 0.3]\n{W}"),
            &["p.toml:2", "correlation[1]", "row of 2 numbers"],
        ),
        profile(
            "correlation row of the wrong length",
            format!("channels = 2\ncorrelation = [[1, 0.3], [0.3, 1, 0]]\n{W}"),
            &["p.toml:2", "correlation[1]", "row 1 has 3 entries"],
        ),
        profile(
            "correlation entry with |rho| > 1",
            format!("channels = 2\ncorrelation = [[1, 1.5], [1.5, 1]]\n{W}"),
            &["p.toml:2", "correlation[0][1]", "from -1 to 1", "got 1.5"],
        ),
        profile(
            "correlation entry of the wrong type",
            format!("channels = 2\ncorrelation = [[1, \"x\"], [0, 1]]\n{W}"),
            &["p.toml:2", "correlation[0][1]", "from -1 to 1"],
        ),
        profile(
            "correlation diagonal not 1",
            format!("channels = 2\ncorrelation = [[0.9, 0.3], [0.3, 1]]\n{W}"),
            &[
                "p.toml:2",
                "correlation[0][0]",
                "diagonal of a correlation matrix is 1",
            ],
        ),
        profile(
            "correlation not symmetric",
            format!("channels = 2\ncorrelation = [[1, 0.3], [0.2, 1]]\n{W}"),
            &["p.toml:2", "correlation[1][0]", "symmetric"],
        ),
        profile(
            "correlation not positive semi-definite",
            format!(
                "channels = 3\ncorrelation = [[1, 0.9, 0.9], [0.9, 1, -0.9], [0.9, -0.9, 1]]\n{W}"
            ),
            &[
                "p.toml:2",
                "correlation",
                "not positive semi-definite",
                "smallest eigenvalue",
            ],
        ),
        profile(
            "one coefficient with |rho| > 1",
            format!("channels = 2\ncorrelation = 1.5\n{W}"),
            &["p.toml:2", "correlation", "from -1 to 1", "got 1.5"],
        ),
        profile(
            "one coefficient below -1/(N-1)",
            format!("channels = 4\ncorrelation = -0.5\n{W}"),
            &["p.toml:2", "correlation", "ρ ≥ −1/(N − 1)"],
        ),
        profile(
            "correlation of the wrong type",
            format!("channels = 2\ncorrelation = \"0.5\"\n{W}"),
            &["p.toml:2", "correlation", "expected a coefficient"],
        ),
        // ---------------- profile: amplifier ----------------
        profile(
            "amplifier in an ampere profile",
            format!("unit = \"A\"\n{HEAD}{AMP}"),
            &["p.toml:6", "amplifier[0]", "unit = \"V\""],
        ),
        profile(
            "amplifier: missing topology",
            format!(
                "{HEAD}{}",
                AMP.replace("topology = \"non-inverting\"\n", "")
            ),
            &[
                "p.toml:5",
                "amplifier[0].topology",
                "missing",
                "\"non-inverting\"",
            ],
        ),
        profile(
            "amplifier: unknown topology",
            format!("{HEAD}{}", AMP.replace("\"non-inverting\"", "\"sideways\"")),
            &[
                "p.toml:6",
                "amplifier[0].topology",
                "\"non-inverting\" or \"inverting\"",
                "sideways",
            ],
        ),
        profile(
            "amplifier: unknown refer",
            format!("{HEAD}{AMP}refer = \"middle\"\n"),
            &[
                "p.toml:11",
                "amplifier[0].refer",
                "\"output\" or \"input\"",
                "middle",
            ],
        ),
        profile(
            "amplifier: missing voltage_density",
            format!(
                "{HEAD}{}",
                AMP.replace("voltage_density = \"5 nV/rtHz\"\n", "")
            ),
            &[
                "p.toml:5",
                "amplifier[0].voltage_density",
                "missing",
                "5 nV/rtHz",
            ],
        ),
        profile(
            "amplifier: voltage_density <= 0",
            format!("{HEAD}{}", AMP.replace("\"5 nV/rtHz\"", "0")),
            &["p.toml:7", "amplifier[0].voltage_density", "must be > 0"],
        ),
        profile(
            "amplifier: missing current_density",
            format!(
                "{HEAD}{}",
                AMP.replace("current_density = \"1 pA/rtHz\"\n", "")
            ),
            &[
                "p.toml:5",
                "amplifier[0].current_density",
                "missing",
                "current_density_plus",
            ],
        ),
        profile(
            "amplifier: negative current_density",
            format!("{HEAD}{}", AMP.replace("\"1 pA/rtHz\"", "\"-1 pA/rtHz\"")),
            &[
                "p.toml:8",
                "amplifier[0].current_density",
                "must be >= 0",
                "-1 pA/√Hz",
            ],
        ),
        profile(
            "amplifier: current_density in V",
            format!("{HEAD}{}", AMP.replace("\"1 pA/rtHz\"", "\"1 pV/rtHz\"")),
            &[
                "p.toml:8",
                "amplifier[0].current_density",
                "current noise density",
                "A/√Hz",
            ],
        ),
        profile(
            "amplifier: missing feedback_resistance",
            format!(
                "{HEAD}{}",
                AMP.replace("feedback_resistance = \"9 kOhm\"\n", "")
            ),
            &[
                "p.toml:5",
                "amplifier[0].feedback_resistance",
                "missing",
                "9 kOhm",
            ],
        ),
        profile(
            "amplifier: inverting stage with feedback_resistance 0",
            format!(
                "{HEAD}{}",
                AMP.replace("\"non-inverting\"", "\"inverting\"")
                    .replace("\"9 kOhm\"", "0")
            ),
            &[
                "p.toml:9",
                "amplifier[0].feedback_resistance",
                "must be > 0",
            ],
        ),
        profile(
            "amplifier: inverting stage without gain_resistance",
            format!(
                "{HEAD}{}",
                AMP.replace("\"non-inverting\"", "\"inverting\"")
                    .replace("gain_resistance = \"1 kOhm\"\n", "")
            ),
            &[
                "p.toml:5",
                "amplifier[0].gain_resistance",
                "missing",
                "input resistor",
            ],
        ),
        profile(
            "amplifier: bias_resistance on a non-inverting stage",
            format!("{HEAD}{AMP}bias_resistance = \"1 kOhm\"\n"),
            &[
                "p.toml:11",
                "amplifier[0].bias_resistance",
                "belongs to an inverting stage",
            ],
        ),
        profile(
            "amplifier: negative source_resistance",
            format!("{HEAD}{AMP}source_resistance = \"-1 kOhm\"\n"),
            &[
                "p.toml:11",
                "amplifier[0].source_resistance",
                "must be >= 0",
            ],
        ),
        profile(
            "amplifier: gbw <= 0",
            format!("{HEAD}{AMP}gbw = \"0 Hz\"\n"),
            &["p.toml:11", "amplifier[0].gbw", "must be > 0"],
        ),
        profile(
            "amplifier: temperature <= 0",
            format!("{HEAD}{AMP}temperature = 0\n"),
            &["p.toml:11", "amplifier[0].temperature", "must be > 0"],
        ),
        profile(
            "amplifier: unknown key",
            format!("{HEAD}{AMP}gain = 10\n"),
            &[
                "p.toml:11",
                "amplifier[0].gain",
                "unknown key",
                "allowed in amplifier[0]",
            ],
        ),
        // ---------------- profile errors reach every command ----------------
        Case::new("bad profile through budget")
            .file("p.toml", W.replace("\"20 kHz\"", "\"30 kHz\""))
            .args(&["budget", "p.toml"])
            .expect(&["p.toml:4", "band.high", "Nyquist"]),
        Case::new("bad profile through analyze --profile")
            .file("p.toml", W.replace("\"20 kHz\"", "\"30 kHz\""))
            .file("c.csv", &big)
            .args(&["analyze", "c.csv", "--profile", "p.toml"])
            .expect(&["p.toml:4", "band.high", "Nyquist"]),
        // ---------------- generate: the profile argument and the length ----------------
        Case::new("generate: profile file missing")
            .args(&["generate", "nope.toml"])
            .expect(&["argument PROFILE", "cannot read nope.toml"]),
        Case::new("generate: a profile that never ends")
            .args(&["generate", "/dev/zero", "-o", "x.raw", "--samples", "10"])
            .expect(&["argument PROFILE", "/dev/zero", "16 MiB"]),
        Case::new("generate: profile not UTF-8")
            .file("p.toml", b"sample_rate = \"48 kHz\"\n\xff\xfe\n")
            .args(&["generate", "p.toml", "-o", "x.wav"])
            .expect(&["argument PROFILE", "cannot read p.toml", "valid UTF-8"]),
        generate(
            "--duration unparseable",
            &["-o", "x.wav", "--duration", "ten"],
            &["option --duration", "time such as", "\"ten\""],
        ),
        generate(
            "--duration 0",
            &["-o", "x.wav", "--duration", "0s"],
            &["option --duration", "positive time", "\"0s\""],
        ),
        generate(
            "--duration shorter than a sample",
            &["-o", "x.wav", "--duration", "1us"],
            &[
                "option --duration",
                "\"1us\" is shorter than one sample at 48 kHz",
            ],
        ),
        generate(
            "--duration inf to a file",
            &["-o", "x.raw", "--duration", "inf"],
            &[
                "option --duration",
                "only possible when streaming to standard output",
            ],
        ),
        generate(
            "--duration inf with --loop",
            &["-o", "-", "--duration", "inf", "--loop"],
            &["option --duration", "without --loop"],
        ),
        generate(
            "--samples 0",
            &["-o", "x.wav", "--samples", "0"],
            &["option --samples", "at least one sample", "got 0"],
        ),
        generate(
            "--samples not a number",
            &["-o", "x.wav", "--samples", "abc"],
            &["'--samples <N>'", "invalid value 'abc'"],
        ),
        generate(
            "--duration with --samples",
            &["-o", "x.wav", "--duration", "1s", "--samples", "5"],
            &[
                "'--duration <TIME>'",
                "cannot be used with",
                "'--samples <N>'",
            ],
        ),
        generate(
            "unknown option",
            &["-o", "x.wav", "--colour", "red"],
            &["unexpected argument '--colour'"],
        ),
        generate(
            "--seed not a number",
            &["-o", "x.wav", "--seed", "x"],
            &["'--seed <SEED>'", "invalid value 'x'"],
        ),
        generate(
            "--threads 0",
            &["-o", "x.wav", "--threads", "0"],
            &["option --threads", "at least 1", "got 0"],
        ),
        // ---------------- generate: segments ----------------
        generate(
            "--start unparseable",
            &["-o", "x.wav", "--samples", "10", "--start", "ten"],
            &["option --start", "time such as"],
        ),
        generate(
            "--start negative",
            &["-o", "x.wav", "--samples", "10", "--start", "-1 s"],
            &[
                "option --start",
                "before the start of the run",
                "0 s or later",
            ],
        ),
        generate(
            "--start off the sample grid",
            &["-o", "x.wav", "--samples", "10", "--start", "1.00001 s"],
            &[
                "option --start",
                "not on a sample at 48 kHz",
                "1 s (sample 48000)",
                "1.0000208333333334 s (sample 48001)",
                "--start-sample",
            ],
        ),
        generate(
            "--start too large",
            &["-o", "x.wav", "--samples", "10", "--start", "1e12 h"],
            &["option --start", "beyond the last possible start"],
        ),
        generate(
            "--start-sample too large",
            &[
                "-o",
                "x.wav",
                "--samples",
                "10",
                "--start-sample",
                "72057594037927936",
            ],
            &["option --start-sample", "beyond the last possible start"],
        ),
        generate(
            "--start with --loop",
            &["-o", "x.wav", "--samples", "10", "--start", "1 s", "--loop"],
            &[
                "option --loop",
                "--start and --start-sample cannot be used with --loop",
            ],
        ),
        generate(
            "--start with --start-sample",
            &["-o", "x.wav", "--start", "1 s", "--start-sample", "3"],
            &[
                "'--start <TIME>'",
                "cannot be used with",
                "'--start-sample <N>'",
            ],
        ),
        // ---------------- generate: shards ----------------
        generate(
            "--shard not K/N",
            &["-o", "x.wav", "--samples", "10", "--shard", "3"],
            &["option --shard", "expected K/N", "\"3\""],
        ),
        generate(
            "--shard index past the last",
            &["-o", "x.wav", "--samples", "10", "--shard", "4/4"],
            &["option --shard", "shard 4/4 does not exist", "0 to 3"],
        ),
        generate(
            "--shard with --start-sample",
            &[
                "-o",
                "x.wav",
                "--samples",
                "10",
                "--shard",
                "1/2",
                "--start-sample",
                "3",
            ],
            &[
                "option --shard",
                "cannot be used with --start or --start-sample",
            ],
        ),
        generate(
            "--shard more shards than samples",
            &["-o", "x.wav", "--samples", "10", "--shard", "1/11"],
            &[
                "option --shard",
                "more than it has samples",
                "at most 10 shards",
            ],
        ),
        // ---------------- generate: rate ----------------
        generate(
            "--rate unparseable",
            &["-o", "x.wav", "--rate", "fast"],
            &["option --rate", "frequency such as", "\"fast\""],
        ),
        generate(
            "--rate below twice band.high",
            &["-o", "x.wav", "--rate", "30 kHz"],
            &[
                "option --rate",
                "band.high = 20 kHz in w.toml",
                "at least 40 kHz",
            ],
        ),
        generate(
            "--rate 0",
            &["-o", "x.raw", "--rate", "0"],
            &["option --rate", "positive sample rate", "\"0\""],
        ),
        Case::new("--rate that puts a tone at Nyquist")
            .file(
                "t.toml",
                format!("{W}[[tone]]\nfrequency = \"23 kHz\"\npeak = 1\n"),
            )
            .args(&["generate", "t.toml", "-o", "x.raw", "--rate", "40 kHz"])
            .expect(&[
                "option --rate",
                "tone 1 at 23 kHz in t.toml",
                "above 46 kHz",
            ]),
        generate(
            "--rate that WAV cannot store",
            &["-o", "x.wav", "--samples", "10", "--rate", "44100.5 Hz"],
            &["--rate", "44100.5 Hz", "whole number"],
        ),
        // ---------------- generate: output, format, sample format ----------------
        generate(
            "--format unknown",
            &["-o", "x.npy", "--format", "mat"],
            &[
                "option --format",
                "unknown format \"mat\"",
                "wav, csv, raw, npy or c",
            ],
        ),
        generate(
            "output extension unknown",
            &["-o", "x.xyz"],
            &["option --output", "x.xyz", "extension", "--format"],
        ),
        generate(
            "--sample-format unknown",
            &["-o", "x.wav", "--sample-format", "i12"],
            &[
                "option --sample-format",
                "\"i12\"",
                "f32, f64, i16, i24 or i32",
            ],
        ),
        generate(
            "--sample-format f64 for WAV",
            &["-o", "x.wav", "--sample-format", "f64"],
            &["option --sample-format", "64-bit float WAV", "raw f64"],
        ),
        generate(
            "--sample-format against a raw extension",
            &["-o", "x.i16", "--samples", "10", "--sample-format", "f32"],
            &["option --sample-format", "x.i16", "i16", "f32"],
        ),
        generate(
            "code extension without --bits",
            &["-o", "x.u16", "--samples", "10"],
            &["option --output", ".u16", "--bits"],
        ),
        generate(
            "--full-scale unparseable",
            &["-o", "x.csv", "--samples", "10", "--full-scale", "ten"],
            &["option --full-scale", "amplitude such as", "\"ten\""],
        ),
        generate(
            "--full-scale in the wrong unit",
            &["-o", "x.csv", "--samples", "10", "--full-scale", "1uA"],
            &["option --full-scale", "this profile's unit is V"],
        ),
        generate(
            "--full-scale 0",
            &["-o", "x.csv", "--samples", "10", "--full-scale", "0V"],
            &["option --full-scale", "positive value", "\"0V\""],
        ),
        generate(
            "--full-scale with --level",
            &["-o", "x.wav", "--full-scale", "1V", "--level", "-3dBFS"],
            &[
                "'--full-scale <Q>'",
                "cannot be used with",
                "'--level <DBFS>'",
            ],
        ),
        generate(
            "--level above full scale",
            &["-o", "x.wav", "--level", "+3dBFS"],
            &["option --level", "above full scale", "0 dBFS or less"],
        ),
        generate(
            "--level unparseable",
            &["-o", "x.wav", "--level", "loud"],
            &["option --level", "level such as -20dBFS", "\"loud\""],
        ),
        generate(
            "WAV past 64-bit sizes",
            &["-o", "x.wav", "--samples", "9223372036854775807"],
            &["RF64", "2^64", "--samples"],
        ),
        generate(
            "WAV of unknown length",
            &["-o", "-", "--format", "wav", "--duration", "inf"],
            &["WAV output needs the total sample count", "--samples"],
        ),
        generate(
            "--columns unknown",
            &["-o", "x.csv", "--columns", "all"],
            &["option --columns", "total", "sources", "\"all\""],
        ),
        generate(
            "--columns sources outside CSV",
            &["-o", "x.wav", "--columns", "sources"],
            &[
                "option --columns",
                "only CSV output can hold",
                "(the output is wav)",
            ],
        ),
        generate(
            "--columns sources with --loop",
            &[
                "-o",
                "x.csv",
                "--columns",
                "sources",
                "--loop",
                "--samples",
                "1000",
            ],
            &["option --columns", "--loop buffer", "--columns total"],
        ),
        Case::new("--columns sources with channels")
            .file("c.toml", format!("channels = 2\n{W}"))
            .args(&["generate", "c.toml", "-o", "x.csv", "--columns", "sources"])
            .expect(&[
                "option --columns",
                "c.toml has channels = 2",
                "--columns total",
            ]),
        // ---------------- generate: array formats ----------------
        generate(
            "npy to standard output",
            &["-o", "-", "--format", "npy", "--samples", "10"],
            &[
                "option --output",
                "npy output is written to a file",
                "-o FILE.npy",
            ],
        ),
        generate(
            "C header to standard output",
            &["-o", "-", "--format", "c", "--samples", "10"],
            &[
                "option --output",
                "c output is written to a file",
                "-o FILE.h",
            ],
        ),
        generate(
            "npy of unknown length",
            &["-o", "x.npy", "--duration", "inf"],
            &["option --duration", "only possible when streaming"],
        ),
        generate(
            "--name starting with a digit",
            &["-o", "x.h", "--samples", "10", "--name", "2fast"],
            &[
                "option --name",
                "\"2fast\"",
                "start with a letter or _",
                "C identifier",
            ],
        ),
        generate(
            "--name a C keyword",
            &["-o", "x.h", "--samples", "10", "--name", "static"],
            &["option --name", "\"static\"", "C keyword"],
        ),
        generate(
            "--name with a hyphen",
            &["-o", "x.h", "--samples", "10", "--name", "a-b"],
            &["option --name", "'-' is not allowed"],
        ),
        generate(
            "--name reserved",
            &["-o", "x.h", "--samples", "10", "--name", "__x"],
            &["option --name", "reserved (C11 §7.1.3)"],
        ),
        generate(
            "--name a stdint name",
            &["-o", "x.h", "--samples", "10", "--name", "size_t"],
            &["option --name", "<stdint.h>"],
        ),
        generate(
            "--name empty",
            &["-o", "x.h", "--samples", "10", "--name", ""],
            &["option --name", "it is empty"],
        ),
        generate(
            "--name for a non-C output",
            &["-o", "x.wav", "--name", "ok_name"],
            &[
                "option --name",
                "names the array of a C header",
                "the output is wav",
            ],
        ),
        // ---------------- generate: loop ----------------
        Case::new("--loop with bursts")
            .file(
                "b.toml",
                format!("{W}[[burst]]\nlevels = [0, 1e-6]\ndwell = [0.01, 0.01]\n"),
            )
            .args(&[
                "generate",
                "b.toml",
                "-o",
                "x.wav",
                "--samples",
                "1000",
                "--loop",
            ])
            .expect(&[
                "option --loop",
                "b.toml has burst sources",
                "without --loop",
            ]),
        Case::new("--loop with channels")
            .file("c.toml", format!("channels = 2\n{W}"))
            .args(&[
                "generate",
                "c.toml",
                "-o",
                "x.wav",
                "--samples",
                "1000",
                "--loop",
            ])
            .expect(&["option --loop", "c.toml has channels = 2"]),
        Case::new("--loop with a tone of no whole cycles")
            .file(
                "t.toml",
                format!("{W}[[tone]]\nname = \"pilot\"\nfrequency = \"1 kHz\"\npeak = 1\n"),
            )
            .args(&[
                "generate",
                "t.toml",
                "-o",
                "x.wav",
                "--samples",
                "10001",
                "--loop",
            ])
            .expect(&[
                "option --loop",
                "pilot at 1 kHz in t.toml",
                "nearest frequency that loops",
            ]),
        generate(
            "--loop too long",
            &["-o", "x.wav", "--loop", "--duration", "1000s"],
            &[
                "option --loop",
                "2 to 16777216 samples",
                "shorter --duration",
            ],
        ),
        // ---------------- generate: ADC codes ----------------
        generate(
            "--bits without --range",
            &["-o", "x.csv", "--bits", "12"],
            &["option --bits", "needs --range", "-1.65V..1.65V"],
        ),
        generate(
            "--range without --bits",
            &["-o", "x.csv", "--range", "-1V..1V"],
            &["option --range", "needs --bits N"],
        ),
        generate(
            "--code without --bits",
            &["-o", "x.csv", "--code", "twos"],
            &["option --code", "needs --bits N"],
        ),
        generate(
            "--dither without --bits",
            &["-o", "x.csv", "--dither", "tpdf"],
            &["option --dither", "needs --bits N"],
        ),
        generate(
            "--bits 0",
            &["-o", "x.csv", "--bits", "0", "--range", "-1V..1V"],
            &["option --bits", "1 to 32 bits", "got 0"],
        ),
        generate(
            "--bits 33",
            &["-o", "x.csv", "--bits", "33", "--range", "-1V..1V"],
            &["option --bits", "1 to 32 bits", "got 33"],
        ),
        generate(
            "--range reversed",
            &["-o", "x.csv", "--bits", "12", "--range", "1V..-1V"],
            &[
                "option --range",
                "low end must be below the high end",
                "1 V .. -1 V",
            ],
        ),
        generate(
            "--range without ..",
            &["-o", "x.csv", "--bits", "12", "--range", "1V"],
            &["option --range", "low..high", "\"1V\""],
        ),
        generate(
            "--range in the wrong dimension",
            &["-o", "x.csv", "--bits", "12", "--range", "1Hz..2Hz"],
            &["option --range", "low end", "amplitude such as"],
        ),
        generate(
            "--range too narrow for an f64 LSB",
            &["-o", "x.csv", "--bits", "32", "--range", "0V..1e-300V"],
            &["option --range", "LSB"],
        ),
        generate(
            "--bits with --full-scale",
            &[
                "-o",
                "x.csv",
                "--bits",
                "12",
                "--range",
                "-1V..1V",
                "--full-scale",
                "1V",
            ],
            &["option --full-scale", "cannot be combined with --bits"],
        ),
        generate(
            "--bits with --level",
            &[
                "-o", "x.csv", "--bits", "12", "--range", "-1V..1V", "--level", "-20dBFS",
            ],
            &["option --level", "cannot be combined with --bits"],
        ),
        generate(
            "--bits with --sample-format",
            &[
                "-o",
                "x.csv",
                "--bits",
                "12",
                "--range",
                "-1V..1V",
                "--sample-format",
                "i16",
            ],
            &["option --sample-format", "cannot be combined with --bits"],
        ),
        generate(
            "--code unknown",
            &[
                "-o", "x.csv", "--bits", "12", "--range", "-1V..1V", "--code", "unsigned",
            ],
            &["option --code", "twos", "offset", "\"unsigned\""],
        ),
        generate(
            "--dither unknown",
            &[
                "-o", "x.csv", "--bits", "12", "--range", "-1V..1V", "--dither", "rect",
            ],
            &["option --dither", "tpdf", "\"rect\""],
        ),
        generate(
            "ADC codes to WAV",
            &["-o", "x.wav", "--bits", "12", "--range", "-1V..1V"],
            &["option --bits", "WAV cannot carry ADC codes", ".csv"],
        ),
        generate(
            "ADC codes under a raw extension of another container",
            &["-o", "x.u16", "--bits", "12", "--range", "-1V..1V"],
            &[
                "option --output",
                "extension .u16",
                "stored as i16",
                "name the file .i16",
            ],
        ),
        generate(
            "ADC codes under a sample-format extension",
            &["-o", "x.i24", "--bits", "12", "--range", "-1V..1V"],
            &["option --output", "extension .i24", "stored as i16"],
        ),
        generate(
            "ADC codes under a float extension",
            &["-o", "x.f32", "--bits", "12", "--range", "-1V..1V"],
            &["option --output", "extension .f32", "stored as i16"],
        ),
        Case::new("--range in volts for an ampere profile")
            .file("a.toml", format!("unit = \"A\"\n{}", W.replace("nV", "pA")))
            .args(&[
                "generate", "a.toml", "-o", "x.csv", "--bits", "12", "--range", "0V..1V",
            ])
            .expect(&["option --range", "low end", "this profile's unit is A"]),
        // ---------------- budget ----------------
        Case::new("budget: profile file missing")
            .args(&["budget", "nope.toml"])
            .expect(&["argument PROFILE", "cannot read nope.toml"]),
        Case::new("budget: a profile that never ends")
            .args(&["budget", "/dev/zero"])
            .expect(&["argument PROFILE", "/dev/zero", "16 MiB"]),
        Case::new("budget: --band without ..")
            .file("w.toml", W)
            .args(&["budget", "w.toml", "--band", "10Hz-20Hz"])
            .expect(&["option --band", "low..high", "\"10Hz-20Hz\""]),
        Case::new("budget: --band reversed")
            .file("w.toml", W)
            .args(&["budget", "w.toml", "--band", "1..0.5"])
            .expect(&["option --band", "0 < low < high", "1 Hz .. 500 mHz"]),
        Case::new("budget: --band in the wrong dimension")
            .file("w.toml", W)
            .args(&["budget", "w.toml", "--band", "1Hz..2kV"])
            .expect(&["option --band", "frequency such as", "\"2kV\""]),
        Case::new("budget: --order above 8")
            .file("w.toml", W)
            .args(&["budget", "w.toml", "--order", "9"])
            .expect(&["option --order", "0 (brick wall) to 8", "got 9"]),
        Case::new("budget: --order not a number")
            .file("w.toml", W)
            .args(&["budget", "w.toml", "--order", "two"])
            .expect(&["'--order <N>'", "invalid value 'two'"]),
        // ---------------- analyze: options ----------------
        Case::new("analyze: --profile missing")
            .file("c.csv", &big)
            .args(&["analyze", "c.csv", "--profile", "nope.toml"])
            .expect(&["option --profile", "cannot read nope.toml"]),
        Case::new("analyze: --rate unparseable")
            .file("c.csv", &big)
            .args(&["analyze", "c.csv", "--rate", "fast"])
            .expect(&["option --rate", "frequency such as", "\"fast\""]),
        Case::new("analyze: --rate 0")
            .file("c.csv", &big)
            .args(&["analyze", "c.csv", "--rate", "0"])
            .expect(&["c.csv", "--rate", "sample rate 0 Hz must be positive"]),
        Case::new("analyze: --full-scale unparseable")
            .file("c.csv", &big)
            .args(&["analyze", "c.csv", "--full-scale", "ten"])
            .expect(&["option --full-scale", "amplitude such as"]),
        Case::new("analyze: --full-scale 0")
            .file("c.csv", &big)
            .args(&["analyze", "c.csv", "--full-scale", "0V"])
            .expect(&["option --full-scale", "positive value", "\"0V\""]),
        Case::new("analyze: --resolution unparseable")
            .file("c.csv", &big)
            .args(&["analyze", "c.csv", "--resolution", "fine"])
            .expect(&["option --resolution", "frequency such as"]),
        Case::new("analyze: --resolution 0")
            .file("c.csv", &big)
            .args(&["analyze", "c.csv", "--resolution", "0Hz"])
            .expect(&["option --resolution", "positive frequency"]),
        Case::new("analyze: --resolution finer than the record")
            .file("c.csv", &big)
            .args(&["analyze", "c.csv", "--resolution", "1Hz"])
            .expect(&["option --resolution", "only 64", "at least"]),
        Case::new("analyze: --tolerance unparseable")
            .file("c.csv", &big)
            .args(&["analyze", "c.csv", "--tolerance", "wide"])
            .expect(&[
                "option --tolerance",
                "non-negative level such as 1dB",
                "\"wide\"",
            ]),
        Case::new("analyze: --tolerance negative")
            .file("c.csv", &big)
            .args(&["analyze", "c.csv", "--tolerance=-1dB"])
            .expect(&["option --tolerance", "non-negative", "\"-1dB\""]),
        Case::new("analyze: --exclude unparseable")
            .file("c.csv", &big)
            .args(&["analyze", "c.csv", "--exclude", "50Hz,hum"])
            .expect(&["option --exclude", "not a frequency", "\"hum\""]),
        Case::new("analyze: --exclude range reversed")
            .file("c.csv", &big)
            .args(&["analyze", "c.csv", "--exclude", "60Hz..40Hz"])
            .expect(&["option --exclude", "positive and increasing"]),
        Case::new("analyze: --pp-band not a range")
            .file("c.csv", &big)
            .args(&["analyze", "c.csv", "--pp-band", "10Hz"])
            .expect(&["option --pp-band", "not a range", "0.1Hz..10Hz"]),
        Case::new("analyze: --pp-band above half the rate")
            .file("c.csv", &big)
            .args(&["analyze", "c.csv", "--pp-band", "1Hz..1MHz"])
            .expect(&["option --pp-band", "not below half the rate"]),
        Case::new("analyze: --pp-window unparseable")
            .file("c.csv", &big)
            .args(&["analyze", "c.csv", "--pp-window", "long"])
            .expect(&["option --pp-window", "time such as"]),
        Case::new("analyze: --pp-window 0")
            .file("c.csv", &big)
            .args(&["analyze", "c.csv", "--pp-window", "0s"])
            .expect(&["option --pp-window", "positive time"]),
        Case::new("analyze: --pp-window longer than the record")
            .file("c.csv", &big)
            .args(&["analyze", "c.csv", "--pp-window", "1h"])
            .expect(&["option --pp-window", "settling time", "holds"]),
        Case::new("analyze: --sample-format unknown")
            .file("c.raw", [0u8; 128])
            .args(&[
                "analyze",
                "c.raw",
                "--sample-format",
                "i12",
                "--rate",
                "1kHz",
            ])
            .expect(&["option --sample-format", "\"i12\""]),
        Case::new("analyze: profile band above the capture's Nyquist")
            .file("w.toml", W)
            .file("c.csv", &big)
            .args(&["analyze", "c.csv", "--profile", "w.toml"])
            .expect(&[
                "option --profile",
                "band.high = 20 kHz in w.toml",
                "c.csv",
                "500 Hz",
            ]),
        Case::new("analyze: capture in V, profile in A")
            .file(
                "a.toml",
                "unit = \"A\"\nsample_rate = 1000\n[band]\nlow = 10\nhigh = 400\n\
                 [[floor]]\ndensity = 1e-12\n",
            )
            .file("c.csv", &big)
            .args(&["analyze", "c.csv", "--profile", "a.toml"])
            .expect(&[
                "option --profile",
                "c.csv",
                "value_V",
                "in V",
                "a.toml",
                "in A",
            ]),
        Case::new("analyze: digital values, a profile and no scale")
            .file(
                "v.toml",
                "sample_rate = 1000\n[band]\nlow = 10\nhigh = 400\n[[floor]]\ndensity = 1e-9\n",
            )
            .file("d.wav", good_wav(64))
            .args(&["analyze", "d.wav", "--profile", "v.toml"])
            .expect(&[
                "option --full-scale",
                "d.wav holds digital values",
                "--full-scale 2V",
            ]),
        Case::new("analyze: --fit with too few bands")
            .file("c.csv", good_csv(16))
            .args(&["analyze", "c.csv", "--fit", "f.toml"])
            .expect(&["option --fit", "c.csv", "needs at least 4"]),
        // ---------------- capture files: WAV ----------------
        Case::new("capture missing")
            .args(&["analyze", "nothere.wav"])
            .expect(&["nothere.wav", "cannot open", "No such file"]),
        capture(
            "WAV empty",
            "e.wav",
            Vec::new(),
            &[],
            &["e.wav", "not a WAV file", "0 bytes", "12-byte RIFF header"],
        ),
        capture(
            "WAV shorter than its RIFF header",
            "s.wav",
            b"RIFF\x04".to_vec(),
            &[],
            &["s.wav", "5 bytes", "12-byte RIFF header"],
        ),
        capture(
            "not a RIFF file",
            "t.wav",
            b"hello, this is not audio".to_vec(),
            &[],
            &["t.wav", "not a WAV file", "\"hell\"", "RIFF....WAVE"],
        ),
        capture(
            "RF64 without ds64",
            "r.wav",
            [
                b"RF64\xff\xff\xff\xffWAVE".to_vec(),
                honest(b"fmt ", &fmt(1, 1, 1000, 2, 16)),
            ]
            .concat(),
            &[],
            &["r.wav", "byte 12", "\"ds64\" chunk", "EBU Tech 3306"],
        ),
        capture(
            "RF64 ds64 chunk too small",
            "r.wav",
            rf64(10, &[0u8; 10], &[]),
            &[],
            &["r.wav", "byte 12", "is 10 bytes", "28 to 1048576"],
        ),
        capture(
            "RF64 ds64 chunk truncated",
            "r.wav",
            [
                b"RF64\xff\xff\xff\xffWAVEds64\x1c\x00\x00\x00".to_vec(),
                vec![0u8; 10],
            ]
            .concat(),
            &[],
            &[
                "r.wav",
                "truncated inside the \"ds64\" chunk",
                "byte 12",
                "ends at byte 30",
            ],
        ),
        capture(
            "RF64 data size not whole frames",
            "r.wav",
            rf64(
                28,
                &ds64(3),
                &[
                    honest(b"fmt ", &fmt(1, 1, 1000, 2, 16)),
                    chunk(b"data", u32::MAX, &[0, 0, 0]),
                ],
            ),
            &[],
            &["r.wav", "\"ds64\" chunk", "3 data bytes", "2-byte frames"],
        ),
        capture(
            "WAV ending before its fmt chunk",
            "h.wav",
            riff(&[]),
            &[],
            &[
                "h.wav",
                "truncated",
                "ends at byte 12",
                "before its \"fmt \" chunk",
            ],
        ),
        capture(
            "WAV fmt chunk of a bad size",
            "f.wav",
            riff(&[honest(b"fmt ", &[0u8; 8]), honest(b"data", &pcm16(64))]),
            &[],
            &[
                "f.wav",
                "\"fmt \" chunk at byte 12",
                "8 bytes",
                "16 to 1024",
            ],
        ),
        capture(
            "WAV truncated inside fmt",
            "f.wav",
            [riff(&[]), b"fmt \x10\x00\x00\x00\x01\x00".to_vec()].concat(),
            &[],
            &[
                "f.wav",
                "truncated inside the \"fmt \" chunk at byte 12",
                "ends at byte 22",
            ],
        ),
        capture(
            "WAV data before fmt",
            "d.wav",
            riff(&[
                honest(b"data", &pcm16(64)),
                honest(b"fmt ", &fmt(1, 1, 1000, 2, 16)),
            ]),
            &[],
            &[
                "d.wav",
                "\"data\" chunk at byte 12",
                "before any \"fmt \" chunk",
            ],
        ),
        capture(
            "WAV ending before its data chunk",
            "n.wav",
            riff(&[honest(b"fmt ", &fmt(1, 1, 1000, 2, 16))]),
            &[],
            &[
                "n.wav",
                "truncated",
                "ends at byte 36",
                "before its \"data\" chunk",
            ],
        ),
        capture(
            "WAV truncated inside another chunk",
            "l.wav",
            [
                riff(&[honest(b"fmt ", &fmt(1, 1, 1000, 2, 16))]),
                b"LIST\x64\x00\x00\x00abc".to_vec(),
            ]
            .concat(),
            &[],
            &["l.wav", "truncated inside the \"LIST\" chunk at byte 36"],
        ),
        capture(
            "WAV data size not whole frames",
            "o.wav",
            riff(&[
                honest(b"fmt ", &fmt(1, 1, 1000, 2, 16)),
                honest(b"data", &[0u8; 129]),
            ]),
            &[],
            &[
                "o.wav",
                "\"data\" chunk at byte 36",
                "129 bytes",
                "2-byte frames",
            ],
        ),
        capture(
            "EXTENSIBLE header too short",
            "x.wav",
            riff(&[
                honest(b"fmt ", &[fmt(0xFFFE, 1, 1000, 2, 16), vec![0, 0]].concat()),
                honest(b"data", &pcm16(64)),
            ]),
            &[],
            &[
                "x.wav",
                "\"fmt \" chunk at byte 12",
                "WAVE_FORMAT_EXTENSIBLE",
                "22-byte extension",
            ],
        ),
        capture(
            "EXTENSIBLE with an unknown GUID",
            "g.wav",
            riff(&[
                honest(b"fmt ", &fmt_ext(1000, 16, 16, 1, false)),
                honest(b"data", &pcm16(64)),
            ]),
            &[],
            &[
                "g.wav",
                "\"fmt \" chunk at byte 12",
                "unknown SubFormat GUID",
                "PCM and IEEE float",
            ],
        ),
        capture(
            "EXTENSIBLE valid bits beyond the container",
            "v.wav",
            riff(&[
                honest(b"fmt ", &fmt_ext(1000, 16, 24, 1, true)),
                honest(b"data", &pcm16(64)),
            ]),
            &[],
            &[
                "v.wav",
                "\"fmt \" chunk at byte 12",
                "24 valid bits do not fit a 16-bit container",
            ],
        ),
        capture(
            "WAV 8-bit PCM",
            "b.wav",
            riff(&[
                honest(b"fmt ", &fmt(1, 1, 1000, 1, 8)),
                honest(b"data", &[0u8; 64]),
            ]),
            &[],
            &[
                "b.wav",
                "\"fmt \" chunk at byte 12",
                "8-bit PCM is not read",
                "16, 24 and 32-bit",
            ],
        ),
        capture(
            "WAV 16-bit float",
            "h.wav",
            riff(&[
                honest(b"fmt ", &fmt(3, 1, 1000, 2, 16)),
                honest(b"data", &pcm16(64)),
            ]),
            &[],
            &[
                "h.wav",
                "\"fmt \" chunk at byte 12",
                "16-bit float is not read",
                "32 and 64-bit",
            ],
        ),
        capture(
            "WAV compressed format tag",
            "c.wav",
            riff(&[
                honest(b"fmt ", &fmt(2, 1, 1000, 2, 16)),
                honest(b"data", &pcm16(64)),
            ]),
            &[],
            &[
                "c.wav",
                "\"fmt \" chunk at byte 12",
                "format tag 0x0002 is not read",
                "PCM (1)",
            ],
        ),
        capture(
            "WAV with 0 channels",
            "z.wav",
            riff(&[
                honest(b"fmt ", &fmt(1, 0, 1000, 0, 16)),
                honest(b"data", &pcm16(64)),
            ]),
            &[],
            &[
                "z.wav",
                "\"fmt \" chunk at byte 12",
                "0 channels",
                "at least 1",
            ],
        ),
        capture(
            "WAV block align mismatch",
            "a.wav",
            riff(&[
                honest(b"fmt ", &fmt(1, 1, 1000, 3, 16)),
                honest(b"data", &pcm16(64)),
            ]),
            &[],
            &[
                "a.wav",
                "\"fmt \" chunk at byte 12",
                "block align 3",
                "1 channel(s) of 2 bytes",
            ],
        ),
        capture(
            "WAV sample rate 0",
            "r.wav",
            riff(&[
                honest(b"fmt ", &fmt(1, 1, 0, 2, 16)),
                honest(b"data", &pcm16(64)),
            ]),
            &[],
            &["r.wav", "\"fmt \" chunk at byte 12", "sample rate of 0 Hz"],
        ),
        capture(
            "WAV data truncated",
            "t.wav",
            good_wav(64)[..44 + 100].to_vec(),
            &[],
            &[
                "t.wav",
                "truncated",
                "\"data\" chunk at byte 36",
                "ends at byte 144",
                "28 missing",
            ],
        ),
        capture(
            "streamed WAV ending inside a frame",
            "s.wav",
            riff(&[
                honest(b"fmt ", &fmt(1, 1, 1000, 2, 16)),
                chunk(b"data", u32::MAX, &pcm16(64)),
                vec![7],
            ]),
            &[],
            &[
                "s.wav",
                "truncated",
                "ends at byte 173",
                "inside a 2-byte sample frame",
            ],
        ),
        capture(
            "non-finite sample",
            "n.wav",
            riff(&[
                honest(b"fmt ", &fmt(3, 1, 1000, 4, 32)),
                honest(b"data", &f32_nan),
            ]),
            &[],
            &["n.wav", "sample 3 is NaN", "only finite samples"],
        ),
        capture(
            "too few samples",
            "few.wav",
            good_wav(8),
            &[],
            &["few.wav", "8 samples", "at least 16"],
        ),
        capture(
            "npy capture cut inside its header",
            "a.npy",
            b"\x93NUMPY".to_vec(),
            &[],
            &["a.npy", "truncated inside its npy header"],
        ),
        capture(
            "C header capture",
            "a.h",
            b"/* */".to_vec(),
            &[],
            &["a.h", "c files are not read by analyze"],
        ),
        Case::new("capture that is a folder")
            .file("d.wav/inner", b"")
            .args(&["analyze", "d.wav"])
            .expect(&["d.wav", "is a folder", "capture file"]),
        // ---------------- capture files: several channels ----------------
        capture(
            "CSV value columns of different kinds",
            "m.csv",
            b"time_s,ch0_value_V,ch1_value_fs\n0,1,0.5\n0.001,2,0.25\n".to_vec(),
            &[],
            &[
                "m.csv",
                "line 1",
                "ch0_value_V",
                "ch1_value_fs",
                "different kinds",
            ],
        ),
        capture(
            "raw ending inside a frame of its channels",
            "f.f64",
            vec![0u8; 8 * (2 * 40 + 1)],
            &["--rate", "1kHz"],
            &[],
        )
        .file("f.f64.json", r#"{"extra": {"channels": 2}}"#)
        .expect(&["f.f64", "inside a frame of 2 channels", "channel count"]),
        Case::new("analyze: --channel beyond the capture's channels")
            .file("c.csv", &big)
            .args(&["analyze", "c.csv", "--channel", "1"])
            .expect(&["option --channel", "channel 1", "c.csv holds 1 channel(s)"]),
        Case::new("analyze: profile of another channel count")
            .file("p.toml", format!("channels = 2\n{W}"))
            .file("c.csv", &big)
            .args(&["analyze", "c.csv", "--profile", "p.toml"])
            .expect(&["option --profile", "describes 2 channels", "c.csv holds 1"]),
        // ---------------- capture files: CSV ----------------
        capture(
            "CSV not UTF-8",
            "u.csv",
            b"time_s,value_V\n0,1\n0.001,\xff\n".to_vec(),
            &[],
            &["u.csv", "line 3", "not valid UTF-8"],
        ),
        capture(
            "CSV empty",
            "e.csv",
            Vec::new(),
            &[],
            &["e.csv", "empty", "header line", "time_s,value_V"],
        ),
        capture(
            "CSV without a header",
            "n.csv",
            b"0,1\n0.001,2\n".to_vec(),
            &[],
            &[
                "n.csv",
                "line 1",
                "header line naming the columns",
                "found numbers",
            ],
        ),
        capture(
            "CSV with only a time column",
            "t.csv",
            b"time_s\n0\n0.001\n".to_vec(),
            &[],
            &["t.csv", "line 1", "only a time column", "value column"],
        ),
        capture(
            "CSV without a time column or --rate",
            "v.csv",
            b"value_V\n1\n2\n".to_vec(),
            &[],
            &["option --rate", "v.csv has no time column", "--rate 48kHz"],
        ),
        capture(
            "CSV with one row",
            "o.csv",
            b"time_s,value_V\n0,1\n".to_vec(),
            &[],
            &["option --rate", "o.csv has fewer than two rows"],
        ),
        capture(
            "CSV time not increasing",
            "f.csv",
            b"time_s,value_V\n0,1\n0,2\n".to_vec(),
            &[],
            &["f.csv", "line 3", "time column does not increase"],
        ),
        capture(
            "CSV bad number",
            "b.csv",
            b"time_s,value_V\n0,1\n0.001,oops\n0.002,3\n".to_vec(),
            &[],
            &[
                "b.csv",
                "line 3",
                "value field \"oops\"",
                "not a finite number",
            ],
        ),
        capture(
            "CSV ragged row",
            "r.csv",
            b"time_s,value_V\n0,1\n0.001\n0.002,3\n".to_vec(),
            &[],
            &[
                "r.csv",
                "line 3",
                "value field is missing",
                "2 columns of the header",
            ],
        ),
        capture(
            "CSV gap in the time column",
            "g.csv",
            b"time_s,value_V\n0,1\n0.001,2\n0.002,3\n0.010,4\n0.011,5\n".to_vec(),
            &[],
            &["g.csv", "line 5", "steps by 0.008 s", "evenly spaced"],
        ),
        capture(
            "CSV gap after the rows that set the rate",
            "g.csv",
            (good_csv(5000) + "9,1\n").into_bytes(),
            &[],
            &["g.csv", "line 5002", "evenly spaced"],
        ),
        // ---------------- capture files: raw ----------------
        capture(
            "raw without a sample format",
            "c.raw",
            vec![0u8; 128],
            &["--rate", "1kHz"],
            &[
                "option --sample-format",
                "c.raw is a raw file",
                "f32, f64, i16, i24 or i32",
            ],
        ),
        capture(
            "raw without a rate",
            "c.f32",
            vec![0u8; 128],
            &[],
            &["option --rate", "c.f32 is a raw file", "--rate 48kHz"],
        ),
        capture(
            "raw ending inside a sample",
            "c.i24",
            vec![0u8; 3 * 100 + 1],
            &["--rate", "1kHz"],
            &[
                "c.i24",
                "truncated",
                "byte 300",
                "3-byte i24 sample",
                "--sample-format",
            ],
        ),
        // ---------------- capture files: the manifest beside them ----------------
        Case::new("manifest not JSON")
            .file("m.wav", good_wav(64))
            .file("m.wav.json", "{ nope")
            .args(&["analyze", "m.wav"])
            .expect(&["m.wav.json", "not valid JSON", "line 1"]),
        Case::new("manifest not UTF-8")
            .file("m.wav", good_wav(64))
            .file("m.wav.json", b"{\"unit\": \"\xff\"}")
            .args(&["analyze", "m.wav"])
            .expect(&["m.wav.json", "not valid UTF-8", "JSON manifest"]),
        Case::new("manifest not an object")
            .file("m.wav", good_wav(64))
            .file("m.wav.json", "[1, 2]")
            .args(&["analyze", "m.wav"])
            .expect(&["m.wav.json", "expected a JSON object"]),
        Case::new("manifest of ADC codes")
            .file("m.i16", vec![0u8; 128])
            .file("m.i16.json", r#"{"extra": {"adc": {"bits": 12}}}"#)
            .args(&["analyze", "m.i16", "--rate", "1kHz"])
            .expect(&["m.i16.json", "extra.adc", "does not read ADC code files"]),
        Case::new("manifest full_scale of the wrong type")
            .file("m.wav", good_wav(64))
            .file("m.wav.json", r#"{"full_scale": "x"}"#)
            .args(&["analyze", "m.wav"])
            .expect(&[
                "m.wav.json",
                "full_scale",
                "positive number or null",
                "\"x\"",
            ]),
        Case::new("manifest unit unknown")
            .file("m.wav", good_wav(64))
            .file("m.wav.json", r#"{"unit": "mV"}"#)
            .args(&["analyze", "m.wav"])
            .expect(&["m.wav.json", "unit", "\"V\" or \"A\"", "\"mV\""]),
        Case::new("manifest sample_rate_hz not positive")
            .file("m.raw", vec![0u8; 128])
            .file(
                "m.raw.json",
                r#"{"sample_rate_hz": -5, "sample_format": "i16"}"#,
            )
            .args(&["analyze", "m.raw"])
            .expect(&["m.raw.json", "sample_rate_hz", "positive number", "-5"]),
        Case::new("manifest sample_format unknown")
            .file("m.raw", vec![0u8; 128])
            .file(
                "m.raw.json",
                r#"{"sample_rate_hz": 1000, "sample_format": "i12"}"#,
            )
            .args(&["analyze", "m.raw"])
            .expect(&[
                "m.raw.json",
                "sample_format",
                "f32, f64, i16, i24 or i32",
                "\"i12\"",
            ]),
        Case::new("manifest sample_format against the extension")
            .file("m.f32", vec![0u8; 128])
            .file(
                "m.f32.json",
                r#"{"sample_rate_hz": 1000, "sample_format": "i16"}"#,
            )
            .args(&["analyze", "m.f32"])
            .expect(&[
                "m.f32.json",
                "sample_format",
                "i16",
                ".f32",
                "--sample-format",
            ]),
        Case::new("manifest unit against the capture's column")
            .file("m.csv", &big)
            .file("m.csv.json", r#"{"unit": "A"}"#)
            .args(&["analyze", "m.csv"])
            .expect(&["m.csv", "value_V", "in V", "m.csv.json", "in A"]),
        // issue 22: compute
        profile(
            "too many noise sources",
            format!(
                "{HEAD}{}",
                "[[floor]]\ndensity = \"1 nV/rtHz\"\n".repeat(257)
            ),
            &[
                "p.toml:517",
                "floor[256]",
                "at most 256 noise sources",
                "got 257",
            ],
        ),
        profile(
            "too many noise sources of several kinds",
            format!(
                "{HEAD}{}{}",
                "[[floor]]\ndensity = \"1 nV/rtHz\"\n".repeat(200),
                "[[resistor]]\nresistance = \"1 kOhm\"\n".repeat(57)
            ),
            &[
                "p.toml:517",
                "resistor[56]",
                "at most 256 noise sources",
                "got 257",
            ],
        ),
        profile(
            "too many table points together",
            format!(
                "{HEAD}[[table]]\npoints = [{}]\n[[table]]\npoints = [{}]\n",
                many_points(60_000),
                many_points(40_001)
            ),
            &[
                "p.toml:8",
                "table[1].points",
                "at most 100000 points",
                "100001",
            ],
        ),
        profile(
            "too many levels in one burst",
            format!(
                "{HEAD}[[burst]]\nlevels = [{}]\ndwell = [{}]\n",
                vec!["0"; 65].join(", "),
                vec!["1"; 65].join(", ")
            ),
            &["p.toml:6", "burst[0].levels", "at most 64 levels", "got 65"],
        ),
        profile(
            "too many burst levels together",
            format!(
                "{HEAD}{}",
                format!(
                    "[[burst]]\nlevels = [{}]\ndwell = [{}]\n",
                    (0..60)
                        .map(|i| i.to_string())
                        .collect::<Vec<_>>()
                        .join(", "),
                    vec!["1"; 60].join(", ")
                )
                .repeat(5)
            ),
            &[
                "p.toml:18",
                "burst[4].levels",
                "at most 256 levels",
                "have 300",
            ],
        ),
        generate(
            "--threads past the limit",
            &["-o", "x.wav", "--threads", "100000"],
            &["option --threads", "from 1 to 1024", "got 100000"],
        ),
        generate("RAYON_NUM_THREADS past the limit", &["-o", "x.wav"], &[])
            .env("RAYON_NUM_THREADS", "100000")
            .expect(&["RAYON_NUM_THREADS", "\"100000\"", "from 1 to 1024"]),
        generate("RAYON_NUM_THREADS not a number", &["-o", "x.wav"], &[])
            .env("RAYON_NUM_THREADS", "four")
            .expect(&["RAYON_NUM_THREADS", "\"four\"", "whole number"]),
        Case::new("RAYON_NUM_THREADS past the limit in analyze")
            .file("c.csv", &big)
            .env("RAYON_NUM_THREADS", "100000")
            .args(&["analyze", "c.csv"])
            .expect(&["RAYON_NUM_THREADS", "\"100000\"", "from 1 to 1024"]),
        // issue 22: outputs
        generate(
            "output: the profile itself",
            &["-o", "w.toml", "--format", "raw", "--samples", "100"],
            &[
                "--output",
                "w.toml",
                "same file as the profile w.toml",
                "destroy",
            ],
        ),
        generate(
            "output: the profile, spelled with ./",
            &["-o", "./w.toml", "--format", "raw", "--samples", "100"],
            &["--output", "./w.toml", "same file as the profile w.toml"],
        ),
        generate(
            "output: the profile, through a folder yet to be made",
            &["-o", "new/../w.toml", "--format", "raw", "--samples", "100"],
            &[
                "--output",
                "new/../w.toml",
                "same file as the profile w.toml",
            ],
        ),
        Case::new("output: its manifest is the profile")
            .file("o.raw.json", W)
            .args(&["generate", "o.raw.json", "-o", "o.raw", "--samples", "100"])
            .expect(&[
                "--output",
                "the manifest beside o.raw, o.raw.json,",
                "same file as the profile o.raw.json",
            ]),
        Case::new("output: budget's plot is the profile")
            .file("w.toml", W)
            .args(&["budget", "w.toml", "--plot", "w.toml"])
            .expect(&["--plot", "same file as the profile w.toml"]),
        capture(
            "output: the fit is the capture",
            "cap.wav",
            good_wav(64),
            &["--fit", "cap.wav"],
            &["--fit", "cap.wav", "same file as the capture cap.wav"],
        ),
        Case::new("output: the plot is the capture's manifest")
            .file("cap.wav", good_wav(64))
            .file("cap.wav.json", "{}")
            .args(&["analyze", "cap.wav", "--plot", "cap.wav.json"])
            .expect(&["--plot", "same file as the capture's manifest cap.wav.json"]),
        Case::new("output: the fit is the profile")
            .file("cap.wav", good_wav(64))
            .file("w.toml", W)
            .args(&[
                "analyze",
                "cap.wav",
                "--profile",
                "w.toml",
                "--fit",
                "./w.toml",
            ])
            .expect(&["--fit", "./w.toml", "same file as the profile w.toml"]),
        Case::new("output: the plot and the report one file")
            .file("cap.wav", good_wav(64))
            .args(&["analyze", "cap.wav", "--plot", "x.svg", "--report", "x.svg"])
            .expect(&["--report", "x.svg", "written for --plot", "its own name"]),
        generate(
            "output: a name ending in a separator",
            &["-o", "name/", "--format", "raw", "--samples", "100"],
            &["--output", "\"name/\"", "names a folder", "name of a file"],
        ),
        Case::new("output: a plot named as a folder")
            .file("cap.wav", good_wav(64))
            .args(&["analyze", "cap.wav", "--plot", "pics/"])
            .expect(&["--plot", "\"pics/\"", "names a folder"]),
        generate(
            "output: a name longer than the file system takes",
            &[
                "-o",
                &format!("{}.raw", "n".repeat(252)),
                "--samples",
                "100",
            ],
            &[
                "--output",
                "has a name of 256 bytes",
                "choose a shorter name",
            ],
        ),
        generate(
            "output: a legal name whose manifest's name is too long",
            &[
                "-o",
                &format!("{}.raw", "n".repeat(247)),
                "--samples",
                "100",
            ],
            &["--output", "the manifest beside", "256 bytes", "\".json\""],
        ),
        // issue 22: readers
        capture(
            "CSV time column in a unit not read",
            "m.csv",
            big.replace("time_s", "time_d").into_bytes(),
            &[],
            &["m.csv", "line 1", "\"time_d\"", "\"d\"", "ms, us", "min, h"],
        ),
        capture(
            "CSV code beyond its width",
            "m.csv",
            format!("code_i16\n1\n40000\n{}", "5\n".repeat(40)).into_bytes(),
            &["--rate", "1kHz"],
            &[
                "m.csv",
                "line 3",
                "\"40000\"",
                "16-bit code",
                "-32768 to 32767",
            ],
        ),
        capture(
            "CSV code not a whole number",
            "m.csv",
            format!("code_i24\n{}1.5\n", "5\n".repeat(40)).into_bytes(),
            &["--rate", "1kHz"],
            &[
                "m.csv",
                "line 42",
                "\"1.5\"",
                "24-bit code",
                "whole numbers",
            ],
        ),
        capture(
            "CSV row with an extra field",
            "m.csv",
            big.replacen("0.004,", "0.004,7,", 1).into_bytes(),
            &[],
            &["m.csv", "line 6", "3 fields", "2 columns (time_s,value_V)"],
        ),
        capture(
            "CSV field of a megabyte, quoted briefly",
            "m.csv",
            format!("{big}0.064,{}\n", "x".repeat(1 << 20)).into_bytes(),
            &[],
            &[
                "m.csv",
                "line 66",
                &format!("\"{}…\" is not a finite", "x".repeat(60)),
            ],
        ),
        capture(
            "CSV steps near 1e-300 s, in exponent form",
            "m.csv",
            b"time_s,value_V\n0,1\n1e-300,1\n2e-300,1\n9e-300,1\n".to_vec(),
            &[],
            &["m.csv", "line 5", "steps by 7e-300 s", "step by 1e-300 s"],
        ),
        capture(
            "WAV data size 0 followed by another chunk",
            "m.wav",
            riff(&[
                honest(b"fmt ", &fmt(1, 1, 1000, 2, 16)),
                chunk(b"data", 0, &[]),
                honest(b"LIST", &pcm16(64)),
            ]),
            &[],
            &[
                "m.wav",
                "\"data\" chunk at byte 36 has size 0",
                "\"LIST\" chunk at byte 44",
                "last chunk",
            ],
        ),
        capture(
            "WAV data size past the end, not whole frames",
            "m.wav",
            riff(&[
                honest(b"fmt ", &fmt(1, 1, 1000, 2, 16)),
                chunk(b"data", 1001, &pcm16(64)),
            ]),
            &[],
            &[
                "m.wav",
                "truncated",
                "\"data\" chunk at byte 36 announces 1001 bytes",
                "ends at byte 172 (873 missing",
            ],
        ),
        capture(
            "WAV f32 with no samples",
            "m.wav",
            riff(&[
                honest(b"fmt ", &fmt(3, 1, 1000, 4, 32)),
                honest(b"data", &[]),
            ]),
            &[],
            &["m.wav", "0 samples: too few", "at least 16"],
        ),
        Case::new("density that underflows: every sample 0")
            .file("u.toml", format!("{HEAD}[[floor]]\ndensity = 1e-320\n"))
            .args(&["generate", "u.toml", "-o", "x.wav", "--samples", "100"])
            .expect(&["PROFILE", "u.toml", "every sample would be 0", "1.5e-154 V"]),
        generate(
            "full scale so large every i16 code is 0",
            &[
                "-o",
                "x.wav",
                "--samples",
                "100",
                "--sample-format",
                "i16",
                "--full-scale",
                "1e30V",
            ],
            &[
                "--full-scale",
                "every stored value would be 0",
                "half a code step of i16",
            ],
        ),
        generate(
            "level so low every i16 code is 0",
            &[
                "-o",
                "x.wav",
                "--samples",
                "100",
                "--sample-format",
                "i16",
                "--level",
                "-300dBFS",
            ],
            &[
                "--level",
                "every stored value would be 0",
                "use a higher level",
            ],
        ),
        generate(
            "full scale so large every f32 value is 0",
            &[
                "-o",
                "x.raw",
                "--samples",
                "100",
                "--sample-format",
                "f32",
                "--full-scale",
                "1e300V",
            ],
            &[
                "--full-scale",
                "every stored value would be 0",
                "the smallest f32",
            ],
        ),
        // issue 22: wording (values refused where they are written, nothing ignored silently)
        profile(
            "a density that overflows its power",
            W.replace("\"10 nV/rtHz\"", "1e308"),
            &[
                "p.toml:6",
                "floor[0].density",
                "at most 1e30 V/√Hz",
                "got 100e306 V/√Hz",
            ],
        ),
        profile(
            "a tone amplitude that overflows",
            format!("{W}[[tone]]\nfrequency = \"1 kHz\"\npeak = 1e308\n"),
            &["p.toml:9", "tone[0].peak", "at most 1e30 V"],
        ),
        profile(
            "a resistance that overflows",
            format!("{HEAD}[[resistor]]\nresistance = \"1e40 Ohm\"\n"),
            &["p.toml:6", "resistor[0].resistance", "at most 1e30 Ω"],
        ),
        profile(
            "a current density that overflows",
            format!("{HEAD}{}", AMP.replace("\"1 pA/rtHz\"", "1e300")),
            &["amplifier[0].current_density", "at most 1e30 A/√Hz"],
        ),
        profile(
            "one correlation coefficient with one channel",
            format!("correlation = 0.3\n{W}"),
            &["p.toml:1", "correlation", "one channel", "channels = 2"],
        ),
        Case::new("analyze: --resolution coarser than 16-sample segments")
            .file("c.csv", &big)
            .args(&["analyze", "c.csv", "--resolution", "10kHz"])
            .expect(&["option --resolution", "at least 16", "at most"]),
        Case::new("analyze: --full-scale in amperes against a manifest in volts")
            .file("m.csv", &big)
            .file("m.csv.json", r#"{"unit": "V"}"#)
            .args(&["analyze", "m.csv", "--full-scale", "1uA"])
            .expect(&[
                "option --full-scale",
                "in A",
                "in V",
                "the capture's manifest",
            ]),
    ]
}

/// `n` table points `[f, 1e-9]` at rising frequencies from 1 Hz.
fn many_points(n: usize) -> String {
    (0..n)
        .map(|i| format!("[{}, 1e-9]", 1.0 + i as f64 * 1e-4))
        .collect::<Vec<_>>()
        .join(", ")
}

/// Every file and folder under `dir`, relative, sorted.
fn listing(dir: &std::path::Path) -> Vec<String> {
    let mut out = Vec::new();
    let mut stack = vec![dir.to_path_buf()];
    while let Some(d) = stack.pop() {
        for e in std::fs::read_dir(&d).unwrap() {
            let p = e.unwrap().path();
            out.push(p.strip_prefix(dir).unwrap().display().to_string());
            if p.is_dir() {
                stack.push(p);
            }
        }
    }
    out.sort();
    out
}

/// What running a row gave.
struct Outcome {
    /// How it ran: the command line, or the parser in-process.
    how: String,
    /// The exit status (in-process: the error's exit code).
    code: Option<i32>,
    /// Its stderr (in-process: what the binary would print).
    stderr: String,
    /// What is wrong; empty when nothing is.
    problems: Vec<String>,
}

/// Runs a row through the binary in a scratch folder holding its files. Problems: exit
/// status other than 2, no `error:` or an expected text missing on stderr, anything on
/// stdout, any file left besides the inputs.
fn check_binary(case: &Case) -> Outcome {
    let s = Scratch::new("row");
    for (name, body) in &case.files {
        let p = s.path(name);
        std::fs::create_dir_all(p.parent().unwrap()).unwrap();
        std::fs::write(p, body).unwrap();
    }
    let o = if case.env.is_empty() {
        run(&case.args, &s)
    } else {
        common::bin()
            .args(&case.args)
            .envs(case.env.iter().map(|(k, v)| (k, v)))
            .current_dir(&s.dir)
            .output()
            .expect("the noisewright binary runs")
    };
    let mut out = Outcome {
        how: format!("`noisewright {}`", case.args.join(" ")),
        code: o.status.code(),
        stderr: text(&o.stderr),
        problems: Vec::new(),
    };
    expect_exit_2_and_texts(case, &mut out);
    if !o.stdout.is_empty() {
        out.problems
            .push(format!("wrote {} bytes to stdout", o.stdout.len()));
    }
    // The inputs and the folders that hold them.
    let mut inputs: Vec<String> = case
        .files
        .iter()
        .flat_map(|(n, _)| {
            std::path::Path::new(n)
                .ancestors()
                .map(|a| a.display().to_string())
                .filter(|a| !a.is_empty())
                .collect::<Vec<_>>()
        })
        .collect();
    inputs.sort();
    inputs.dedup();
    for (name, body) in &case.files {
        if std::fs::read(s.path(name)).ok().as_ref() != Some(body) {
            out.problems.push(format!("changed the input {name}"));
        }
    }
    let left = listing(&s);
    if left != inputs {
        out.problems
            .push(format!("left {left:?} (inputs {inputs:?})"));
    }
    out
}

/// Runs a profile row in-process: `parse_profile` on its `p.toml`, and what the binary
/// prints for the error it returns, `noisewright: error: {e}` on stderr and exit status
/// `e.exit_code()` (src/main.rs). Problems: those of [`check_binary`] that concern the
/// message and status; the parser reads a string, so it writes nothing to stdout and leaves
/// no file (the sample in `profile_rows_in_process_say_what_the_binary_says` checks the
/// binary does neither).
fn check_in_process(case: &Case) -> Outcome {
    let [(name, body)] = &case.files[..] else {
        panic!("{}: a profile row has one file", case.class);
    };
    assert!(case.parser && name == PROFILE_FILE, "{}", case.class);
    let text = std::str::from_utf8(body).expect("profile rows are text");
    let mut out = Outcome {
        how: format!("parse_profile of {PROFILE_FILE} in-process"),
        code: None,
        stderr: String::new(),
        problems: Vec::new(),
    };
    match parse_profile(text, PROFILE_FILE) {
        Ok(_) => out.problems.push("the parser accepted it".to_string()),
        Err(e) => {
            out.stderr = format!("noisewright: error: {e}\n");
            out.code = Some(e.exit_code());
            expect_exit_2_and_texts(case, &mut out);
        }
    }
    out
}

/// Adds the problems of an exit status other than 2, and of a stderr without `error:` or
/// without each expected text.
fn expect_exit_2_and_texts(case: &Case, out: &mut Outcome) {
    if out.code != Some(2) {
        out.problems
            .push(format!("exit {:?}, expected 2", out.code));
    }
    if !out.stderr.contains("error:") {
        out.problems.push("no \"error:\" on stderr".to_string());
    }
    for n in &case.expect {
        if !out.stderr.contains(n.as_str()) {
            out.problems.push(format!("lacks {n:?}"));
        }
    }
}

/// Runs `check` on every row, spread over the machine's threads, and returns one line per
/// row with problems (its class, how it ran, the problems and its stderr), in table order.
fn failures(cases: &[&Case], check: impl Fn(&Case) -> Outcome + Sync) -> Vec<String> {
    let threads = std::thread::available_parallelism().map_or(2, |n| n.get());
    let next = AtomicUsize::new(0);
    let failed = Mutex::new(Vec::new());
    std::thread::scope(|scope| {
        for _ in 0..threads.min(cases.len()) {
            scope.spawn(|| {
                loop {
                    let at = next.fetch_add(1, Ordering::Relaxed);
                    let Some(case) = cases.get(at) else { break };
                    let out = check(case);
                    if !out.problems.is_empty() {
                        let line = format!(
                            "{}: {}: {}\n    stderr: {}",
                            case.class,
                            out.how,
                            out.problems.join("; "),
                            out.stderr.trim()
                        );
                        failed.lock().unwrap().push((at, line));
                    }
                }
            });
        }
    });
    let mut failed = failed.into_inner().unwrap();
    failed.sort();
    failed.into_iter().map(|(_, line)| line).collect()
}

#[test]
fn every_error_class_exits_2_names_file_position_and_expectation_and_leaves_no_file() {
    let cases = cases();
    let mut classes = std::collections::HashSet::new();
    for case in &cases {
        assert!(
            classes.insert(case.class),
            "two rows named {:?}",
            case.class
        );
        assert!(!case.expect.is_empty(), "{}: no expected text", case.class);
    }
    let (profiles, others): (Vec<&Case>, Vec<&Case>) = cases.iter().partition(|c| c.parser);
    // The binary rows wait on processes; the profile rows run alongside them.
    let failed = std::thread::scope(|scope| {
        let in_process = scope.spawn(|| failures(&profiles, check_in_process));
        let mut failed = failures(&others, check_binary);
        failed.splice(0..0, in_process.join().unwrap());
        failed
    });
    assert!(
        failed.is_empty(),
        "{} of {} rows failed:\n{}",
        failed.len(),
        cases.len(),
        failed.join("\n")
    );
    assert!(cases.len() >= 150, "only {} rows", cases.len());
}

/// The in-process profile rows stand for the binary: a sample of them (every 16th) run
/// through the binary on the same file passes every check of a binary row (exit 2, the
/// expected texts, nothing on stdout, no file left), with exactly the stderr and exit status
/// the parser gives in-process.
#[test]
fn profile_rows_in_process_say_what_the_binary_says() {
    let cases = cases();
    let sample: Vec<&Case> = cases.iter().filter(|c| c.parser).step_by(16).collect();
    assert!(
        sample.len() >= 6,
        "only {} sampled profile rows",
        sample.len()
    );
    let failed = failures(&sample, |case| {
        let mut out = check_binary(case);
        let want = check_in_process(case);
        if !want.problems.is_empty() {
            out.problems
                .push(format!("in-process: {}", want.problems.join("; ")));
        }
        if (&want.stderr, want.code) != (&out.stderr, out.code) {
            out.problems.push(format!(
                "in-process: exit {:?}, stderr {:?}",
                want.code, want.stderr
            ));
        }
        out
    });
    assert!(
        failed.is_empty(),
        "{} of {} sampled rows failed:\n{}",
        failed.len(),
        sample.len(),
        failed.join("\n")
    );
}
