//! CSV text: a header line, then `time,value` per sample, `\n` line ends. With more than
//! one channel, one row per frame: `time_s,ch0_…,ch1_…` (see [`CsvSink`]).

use std::io::Write;

use super::{Buffered, Format, SampleFormat, Scaler, Sink, SinkReport, SinkSpec};
use crate::error::{Error, Result};

/// Samples formatted per inner loop (≈ 40 bytes each, so a chunk is ~80 KiB of text).
const CSV_CHUNK: usize = 2048;

/// CSV writer. Columns:
///
/// * `time_s`: sample index `n` divided by the sample rate, in seconds (`n as f64 / fs`);
///   `n` counts from [`SinkSpec::start_frame`], so a segment's times are the whole run's.
/// * The value column, named by what it holds:
///   * no full scale → `value_<unit>`, e.g. `value_V`: the physical value in the unit;
///   * full scale, f32/f64 → `value_fs`: the digital value (physical / full scale), clipped
///     to ±1.0; rounded to f32 first for f32;
///   * full scale, integer format → `code_i16` / `code_i24` / `code_i32`: the integer code
///     (digital ±1.0 ↔ ±(2^(b−1) − 1), see the module docs);
///   * ADC codes ([`SinkSpec::adc`]) → `code_twos_<N>bit` / `code_offset_<N>bit`, e.g.
///     `code_twos_12bit`: the converter's integer code (see [`crate::io::adc`]).
///
/// * With [`CsvSink::with_sources`], one more column per source follows (e.g. `gaussian_V`,
///   `input_trap_V`): the physical value of that source's part of the sample, in the unit,
///   whatever the scale of the value column. Without a full scale, the value column is the
///   f64 sum of these columns taken left to right.
///
/// Floats are printed with Rust's `{}` for f64 (or f32 for f32 values): the shortest decimal
/// that parses back to the same value, never in exponent form. So every value, and every
/// time, round-trips exactly through `str::parse`. [`SinkSpec::frames`] is not needed.
#[derive(Debug)]
pub struct CsvSink<W: Write> {
    out: Buffered<W>,
    scaler: Scaler,
    sample_rate_hz: f64,
    header: Option<String>,
    /// Number of per-source columns after the value column.
    sources: usize,
    /// Channels per row (one value column each).
    channels: usize,
    /// Index of the first row's sample in the whole run ([`SinkSpec::start_frame`]).
    start_frame: u64,
}

impl<W: Write> CsvSink<W> {
    /// Validates `spec` (see [`SinkSpec::validate`]); writes nothing yet (the header goes out
    /// with the first samples or at `finish`).
    pub fn new(spec: &SinkSpec, out: W) -> Result<CsvSink<W>> {
        spec.validate()?;
        if spec.format != Format::Csv {
            return Err(Error::Unsupported(format!(
                "a CSV writer was asked for {} output",
                spec.format
            )));
        }
        Ok(CsvSink {
            out: Buffered::new(out, "writing CSV"),
            scaler: Scaler::new(spec),
            sample_rate_hz: spec.sample_rate_hz,
            header: Some(format!("time_s,{}\n", value_columns(spec))),
            sources: 0,
            channels: usize::from(spec.channels),
            start_frame: spec.start_frame,
        })
    }

    /// A CSV writer with one physical column per source after the value column, named
    /// `<name>_<unit>` from `names` (see [`source_column_names`]). Samples then go in with
    /// [`Sink::write_sources`].
    pub fn with_sources(spec: &SinkSpec, out: W, names: &[String]) -> Result<CsvSink<W>> {
        if spec.channels != 1 {
            return Err(Error::Unsupported(
                "per-source columns are written for one channel only".into(),
            ));
        }
        let mut sink = CsvSink::new(spec, out)?;
        let columns = source_column_names(names, spec.unit);
        sink.header = Some(format!(
            "time_s,{},{}\n",
            value_column(spec),
            columns.join(",")
        ));
        sink.sources = names.len();
        Ok(sink)
    }

    fn write_rows(&mut self, samples: &[f64], sources: &[&[f64]]) -> Result<()> {
        self.out.ensure_open()?;
        if sources.len() != self.sources || sources.iter().any(|s| s.len() != samples.len()) {
            return Err(Error::Unsupported(format!(
                "this CSV writer has {} source columns, got {} blocks of samples",
                self.sources,
                sources.len()
            )));
        }
        if self.channels > 1 {
            return self.write_frames(samples);
        }
        self.scaler.check_finite(samples)?;
        for part in sources {
            self.scaler.check_finite(part)?;
        }
        self.put_header();
        let fs = self.sample_rate_hz;
        let sf = self.scaler.sample_format;
        let digital = self.scaler.gain.is_some();
        for (c, chunk) in samples.chunks(CSV_CHUNK).enumerate() {
            let mut n = self.scaler.report.samples + self.start_frame;
            let buf = &mut self.out.buf;
            for (k, &x) in chunk.iter().enumerate() {
                let t = n as f64 / fs;
                // Writing into a Vec<u8> cannot fail.
                let r = if self.scaler.adc.is_some() {
                    write!(buf, "{t},{}", self.scaler.adc_code(x))
                } else if sf.is_integer() {
                    write!(buf, "{t},{}", self.scaler.code(x))
                } else if sf == SampleFormat::F32 && digital {
                    write!(buf, "{t},{}", self.scaler.f32_value(x))
                } else {
                    write!(buf, "{t},{}", self.scaler.digital(x))
                };
                r.expect("writing to a Vec");
                for part in sources {
                    write!(buf, ",{}", part[c * CSV_CHUNK + k]).expect("writing to a Vec");
                }
                buf.push(b'\n');
                n += 1;
            }
            self.scaler.report.samples = n - self.start_frame;
            self.out.maybe_flush()?;
        }
        Ok(())
    }

    /// Rows of `time_s` and one value per channel; `samples` holds whole interleaved frames.
    fn write_frames(&mut self, samples: &[f64]) -> Result<()> {
        let ch = self.channels;
        if samples.len() % ch != 0 {
            return Err(Error::Unsupported(format!(
                "a CSV writer of {ch} channels was given {} samples, not whole frames",
                samples.len()
            )));
        }
        self.scaler.check_finite(samples)?;
        self.put_header();
        let fs = self.sample_rate_hz;
        let sf = self.scaler.sample_format;
        let digital = self.scaler.gain.is_some();
        for chunk in samples.chunks(CSV_CHUNK * ch) {
            for frame in chunk.chunks_exact(ch) {
                let t = (self.scaler.report.samples / ch as u64) as f64 / fs;
                let buf = &mut self.out.buf;
                write!(buf, "{t}").expect("writing to a Vec");
                for &x in frame {
                    let r = if sf.is_integer() {
                        write!(buf, ",{}", self.scaler.code(x))
                    } else if sf == SampleFormat::F32 && digital {
                        write!(buf, ",{}", self.scaler.f32_value(x))
                    } else {
                        write!(buf, ",{}", self.scaler.digital(x))
                    };
                    r.expect("writing to a Vec");
                    self.scaler.report.samples += 1;
                }
                buf.push(b'\n');
            }
            self.out.maybe_flush()?;
        }
        Ok(())
    }

    fn put_header(&mut self) {
        if let Some(h) = self.header.take() {
            self.out.buf.extend_from_slice(h.as_bytes());
        }
    }
}

/// Column names for per-source columns: each name lower-cased, every run of characters other
/// than ASCII letters and digits made one `_`, then `_<unit>`; a repeated name gets `_2`, `_3`,
/// … So `["gaussian", "input trap"]` in volts gives `gaussian_V`, `input_trap_V`.
pub fn source_column_names(names: &[String], unit: crate::profile::Unit) -> Vec<String> {
    let mut out: Vec<String> = Vec::with_capacity(names.len());
    for name in names {
        let mut slug = String::new();
        for c in name.chars() {
            if c.is_ascii_alphanumeric() {
                slug.push(c.to_ascii_lowercase());
            } else if !slug.ends_with('_') {
                slug.push('_');
            }
        }
        let slug = slug.trim_matches('_');
        let base = if slug.is_empty() { "source" } else { slug };
        let mut column = format!("{base}_{}", unit.symbol());
        let mut k = 2;
        while out.contains(&column) {
            column = format!("{base}_{k}_{}", unit.symbol());
            k += 1;
        }
        out.push(column);
    }
    out
}

/// The value columns for `spec`: the value column alone for one channel, otherwise
/// `ch0_<value column>`, `ch1_<value column>`, … (channels count from 0, like the correlation
/// matrix's indices).
fn value_columns(spec: &SinkSpec) -> String {
    let v = value_column(spec);
    if spec.channels == 1 {
        return v;
    }
    (0..spec.channels)
        .map(|k| format!("ch{k}_{v}"))
        .collect::<Vec<_>>()
        .join(",")
}

/// The value column's name for `spec` (see [`CsvSink`]).
fn value_column(spec: &SinkSpec) -> String {
    if let Some(adc) = &spec.adc {
        return format!("code_{}_{}bit", adc.coding().tag(), adc.bits());
    }
    match spec.full_scale {
        None => format!("value_{}", spec.unit.symbol()),
        Some(_) if spec.sample_format.is_integer() => format!("code_{}", spec.sample_format),
        Some(_) => "value_fs".to_string(),
    }
}

impl<W: Write + Send> Sink for CsvSink<W> {
    fn write(&mut self, samples: &[f64]) -> Result<()> {
        self.write_rows(samples, &[])
    }

    fn write_sources(&mut self, total: &[f64], sources: &[&[f64]]) -> Result<()> {
        self.write_rows(total, sources)
    }

    fn finish(&mut self) -> Result<SinkReport> {
        self.out.ensure_open()?;
        self.put_header();
        self.out.close()?;
        Ok(self.scaler.report)
    }
}

#[cfg(test)]
mod tests {
    use super::super::test_util::*;
    use super::*;
    use crate::profile::Unit;

    fn lines(b: &[u8]) -> Vec<String> {
        String::from_utf8(b.to_vec())
            .unwrap()
            .lines()
            .map(str::to_string)
            .collect()
    }

    /// Parses the body into (time, value text) pairs, checking the times are exactly n/fs.
    fn body(ls: &[String], fs: f64) -> Vec<String> {
        ls[1..]
            .iter()
            .enumerate()
            .map(|(n, l)| {
                let (t, v) = l.split_once(',').unwrap();
                assert_eq!(t.parse::<f64>().unwrap(), n as f64 / fs, "line {n}");
                v.to_string()
            })
            .collect()
    }

    #[test]
    fn physical_values_round_trip_exactly() {
        // Values at the nV scale and a large DC offset, the hard cases for short printing.
        let mut x = gaussian(5_000, 3e-9, SEED);
        x.extend(gaussian(5_000, 1e-3, SEED + 1).iter().map(|v| v + 12.5));
        x.push(-0.0);
        let mut s = spec(Format::Csv, SampleFormat::F64, None, None);
        s.sample_rate_hz = 44_100.0; // 1/44100 is not a short decimal
        let (b, r) = render(&s, &x).unwrap();
        let ls = lines(&b);
        assert_eq!(ls[0], "time_s,value_V");
        assert_eq!(ls.len(), x.len() + 1);
        let vals = body(&ls, s.sample_rate_hz);
        for (v, want) in vals.iter().zip(&x) {
            assert!(!v.contains('e'), "{v}");
            assert_eq!(v.parse::<f64>().unwrap().to_bits(), want.to_bits(), "{v}");
        }
        assert_eq!(r.samples, x.len() as u64);
    }

    #[test]
    fn amperes_name_their_column() {
        let mut s = spec(Format::Csv, SampleFormat::F32, None, None);
        s.unit = Unit::Ampere;
        let (b, _) = render(&s, &[1e-12]).unwrap();
        assert_eq!(lines(&b), ["time_s,value_A", "0,0.000000000001"]);
    }

    #[test]
    fn full_scale_writes_codes_or_normalised_values() {
        let x = gaussian(3_000, 0.4, SEED);
        let full_scale = 1.0;
        // Integer codes agree with the raw writer's bytes.
        let s = spec(Format::Csv, SampleFormat::I16, Some(full_scale), None);
        let (b, _) = render(&s, &x).unwrap();
        let ls = lines(&b);
        assert_eq!(ls[0], "time_s,code_i16");
        let codes: Vec<i16> = body(&ls, 48_000.0)
            .iter()
            .map(|v| v.parse().unwrap())
            .collect();
        let raw = spec(Format::Raw, SampleFormat::I16, Some(full_scale), None);
        let (rb, _) = render(&raw, &x).unwrap();
        let raw_codes: Vec<i16> = rb
            .chunks_exact(2)
            .map(|c| i16::from_le_bytes([c[0], c[1]]))
            .collect();
        assert_eq!(codes, raw_codes);
        // f32 normalised values: exactly the f32 of the clipped digital value.
        let s = spec(Format::Csv, SampleFormat::F32, Some(full_scale), None);
        let (b, r) = render(&s, &x).unwrap();
        let ls = lines(&b);
        assert_eq!(ls[0], "time_s,value_fs");
        for (v, want) in body(&ls, 48_000.0).iter().zip(&x) {
            assert_eq!(v.parse::<f32>().unwrap(), want.clamp(-1.0, 1.0) as f32);
        }
        // 1.0 = 2.5σ: ~1.2 % clip (two-sided normal tail); the count of |x| > 1 is what was clipped.
        let over = x.iter().filter(|v| v.abs() > 1.0).count() as u64;
        assert_eq!(r.clipped, over);
        assert!(r.clipped > 0, "seed {SEED}: no sample clipped");
    }

    #[test]
    fn source_columns_hold_the_parts_beside_the_total() {
        let g = gaussian(5_000, 3e-9, SEED);
        let b: Vec<f64> = (0..5_000)
            .map(|i| if i % 7 < 3 { 2e-6 } else { 0.0 })
            .collect();
        let total: Vec<f64> = g.iter().zip(&b).map(|(x, y)| x + y).collect();
        let s = spec(Format::Csv, SampleFormat::F64, None, None);
        let names = ["gaussian".to_string(), "Input trap #1".to_string()];
        let mut bytes = Vec::new();
        {
            let mut sink = CsvSink::with_sources(&s, &mut bytes, &names).unwrap();
            // Uneven blocks, across the formatting chunk.
            for (lo, hi) in [(0, 1), (1, 2500), (2500, 5000)] {
                sink.write_sources(&total[lo..hi], &[&g[lo..hi], &b[lo..hi]])
                    .unwrap();
            }
            assert!(sink.write(&total[..1]).is_err(), "the parts are required");
            sink.finish().unwrap();
        }
        let ls = lines(&bytes);
        assert_eq!(ls[0], "time_s,value_V,gaussian_V,input_trap_1_V");
        for (n, l) in ls[1..].iter().enumerate() {
            let v: Vec<f64> = l.split(',').map(|x| x.parse().unwrap()).collect();
            assert_eq!(v[1].to_bits(), total[n].to_bits());
            assert_eq!(v[2].to_bits(), g[n].to_bits());
            assert_eq!(v[3].to_bits(), b[n].to_bits());
            assert_eq!((v[2] + v[3]).to_bits(), v[1].to_bits(), "line {n}");
        }
        // Other writers have no source columns.
        let raw = spec(Format::Raw, SampleFormat::F32, None, None);
        let mut sink = super::super::open_sink(&raw, Vec::new()).unwrap();
        assert!(sink.write_sources(&total, &[&g, &b]).is_err());
        assert_eq!(
            source_column_names(&["a b".into(), "a-b".into(), "".into()], Unit::Ampere),
            ["a_b_A", "a_b_2_A", "source_A"]
        );
    }

    #[test]
    fn empty_csv_still_has_its_header() {
        let (b, _) = render(&spec(Format::Csv, SampleFormat::F64, None, None), &[]).unwrap();
        assert_eq!(b, b"time_s,value_V\n");
    }
}
