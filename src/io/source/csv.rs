//! CSV text: a header line naming the columns, then one sample per line.
//!
//! * **Time column** (optional): the first column whose name starts with `time`, `t_` or
//!   `t (`, or is `t` (any case). Its unit is the text in trailing brackets (`time (ms)`,
//!   `time [ms]`) or, without them, after the last `_` (`time_ms`): `s` (also `sec`,
//!   `seconds`), `ms`, `us` (also `µs`), `ns`, `min` or `h`; a name with neither (`time`,
//!   `timestamp`) is in seconds. Any other unit is refused, naming the column, rather than
//!   read as seconds. The sample rate is `(k − 1)/(t_{k−1} − t_0)` over the first 4096
//!   rows, once each of their steps is within half of their median step; every later step
//!   must be within half a sample period of `1/rate`, else the file is refused, naming the
//!   line of the step (the samples must be evenly spaced for a density estimate). With
//!   `--rate` the time column only has to increase overall.
//! * **Value columns**: every column that is not the time column, one channel each, in order
//!   (`generate` writes `ch0_value_V`, `ch1_value_V`, … for several channels). A name says
//!   what its column holds, and every value column must hold the same kind, as `generate` writes it: `value_V` / `value_A` physical volts or amperes,
//!   `value_fs` digital values, `code_i16` / `code_i24` / `code_i32` integer codes (read as
//!   digital, code/(2^(b−1)−1)); any other name is [`Values::Unknown`]. A code must be a
//!   whole number a b-bit code can hold, −2^(b−1) to 2^(b−1)−1.
//! * Fields are separated by commas; spaces around fields are ignored; blank lines and lines
//!   starting with `#` are skipped. Every row has exactly the header's columns. A UTF-8
//!   byte-order mark before the header (spreadsheets write one) is not part of the first name.

use std::io::{BufRead, BufReader, Read};

use super::{SampleSource, SourceOptions, StreamInfo, Values, check_rate, echo, short};
use crate::error::{Error, Result, Setting};
use crate::io::sink::{Format, SampleFormat};
use crate::profile::Unit;

/// Rows used to estimate the rate from the time column.
const RATE_ROWS: usize = 4096;

/// Streaming CSV reader; see the module docs.
#[derive(Debug)]
pub struct CsvSource<R: Read> {
    input: BufReader<R>,
    info: StreamInfo,
    name: String,
    line_no: usize,
    line: String,
    time_col: Option<usize>,
    time_scale: f64,
    /// The value columns, one per channel.
    value_cols: Vec<usize>,
    /// The values of the row just read, one per channel.
    row_values: Vec<f64>,
    /// The header's column names, joined by commas (for messages).
    header: String,
    /// Columns in the header.
    columns: usize,
    /// 2^(b−1)−1 for code columns (values are divided by it), 1 otherwise.
    value_div: f64,
    /// For a code column: its bits and the lowest and highest code.
    code: Option<(usize, f64, f64)>,
    /// Values read ahead while estimating the rate, not yet handed out.
    pending: Vec<f64>,
    /// Last time seen (s) and the sample period (s) the steps are checked against.
    last_time: Option<f64>,
    period_s: f64,
    first_time: f64,
    rows: u64,
    /// The rate used came from the time column (so later steps are checked).
    check_steps: bool,
}

/// Time units a time column may name, in seconds per unit (SI: s, ms, µs, ns; min and h
/// are the SI-accepted 60 s and 3600 s, SI Brochure Table 8). `µ` is accepted as U+00B5 or
/// U+03BC, `u` as its plain-text stand-in (common practice).
const TIME_UNITS: [(&str, f64); 10] = [
    ("s", 1.0),
    ("sec", 1.0),
    ("seconds", 1.0),
    ("ms", 1e-3),
    ("us", 1e-6),
    ("\u{b5}s", 1e-6),
    ("\u{3bc}s", 1e-6),
    ("ns", 1e-9),
    ("min", 60.0),
    ("h", 3600.0),
];

/// Whether a column name marks the time column.
fn is_time(name: &str) -> bool {
    let n = name.trim().to_ascii_lowercase();
    n.starts_with("time") || n == "t" || n.starts_with("t_") || n.starts_with("t (")
}

/// The unit a time column's name states (see the module docs): in trailing brackets, else
/// after the last `_`; `None` when it states none.
fn time_unit(name: &str) -> Option<String> {
    let n = name.trim().to_ascii_lowercase();
    for (open, close) in [('(', ')'), ('[', ']')] {
        if let Some(inner) = n.strip_suffix(close)
            && let Some(at) = inner.rfind(open)
        {
            return Some(inner[at + open.len_utf8()..].trim().to_string());
        }
    }
    n.rfind('_').map(|at| n[at + 1..].trim().to_string())
}

/// Seconds per unit of the time column `name`, or `None` for a unit not in [`TIME_UNITS`].
fn time_scale(name: &str) -> Option<f64> {
    match time_unit(name) {
        None => Some(1.0),
        Some(u) => TIME_UNITS.iter().find(|(n, _)| *n == u).map(|&(_, s)| s),
    }
}

/// What a value column's name says it holds (`ch<k>_` before it names a channel), and for code
/// columns the integer format.
fn value_meaning(name: &str) -> (Values, Option<SampleFormat>) {
    let n = name.trim();
    // A channel's column, as `generate` names it: `ch<k>_` before the name.
    let n = n
        .strip_prefix("ch")
        .and_then(|r| r.split_once('_'))
        .filter(|(k, _)| !k.is_empty() && k.bytes().all(|b| b.is_ascii_digit()))
        .map_or(n, |(_, rest)| rest);
    match n {
        "value_fs" => (Values::Digital, None),
        _ if n.strip_prefix("value_").and_then(Unit::from_text).is_some() => {
            let unit = n.strip_prefix("value_").and_then(Unit::from_text);
            (Values::Physical(unit.expect("checked")), None)
        }
        _ => match n
            .strip_prefix("code_")
            .and_then(|s| s.parse::<SampleFormat>().ok())
        {
            Some(sf) if sf.is_integer() => (Values::Digital, Some(sf)),
            _ => (Values::Unknown, None),
        },
    }
}

impl<R: Read> CsvSource<R> {
    /// Reads the header and, when the rate comes from the time column, the first rows.
    pub fn new(input: R, options: &SourceOptions) -> Result<CsvSource<R>> {
        let name = options.name.clone();
        let mut src = CsvSource {
            input: BufReader::with_capacity(1 << 16, input),
            info: StreamInfo {
                format: Format::Csv,
                sample_format: None,
                sample_rate_hz: 0.0,
                frames: None,
                channels: 1,
                values: Values::Unknown,
                notes: Vec::new(),
                wav_info: None,
            },
            name,
            line_no: 0,
            line: String::new(),
            time_col: None,
            time_scale: 1.0,
            value_cols: Vec::new(),
            row_values: Vec::new(),
            header: String::new(),
            columns: 0,
            value_div: 1.0,
            code: None,
            pending: Vec::new(),
            last_time: None,
            period_s: 0.0,
            first_time: 0.0,
            rows: 0,
            check_steps: false,
        };
        src.read_header()?;
        let rate = src.given_rate(options)?;
        // Read ahead to estimate the rate (and to compare it with --rate).
        let (times, lines) = src.read_ahead()?;
        if rate.is_none() {
            src.check_steps_ahead(&times, &lines)?;
        }
        let from_times = src.rate_from_times(&times, &lines)?;
        let rate = src.settle_rate(rate, from_times)?;
        src.info.sample_rate_hz = rate;
        src.period_s = 1.0 / rate;
        if src.check_steps {
            for (i, w) in times.windows(2).enumerate() {
                src.check_step(w[0], w[1], lines[i + 1])?;
            }
        }
        src.first_time = times.first().copied().unwrap_or(0.0);
        src.last_time = times.last().copied();
        Ok(src)
    }

    /// Reads the header line: which column is the time (and its unit), which the value (and
    /// what it holds).
    fn read_header(&mut self) -> Result<()> {
        let src = self;
        if !src.next_line()? {
            return Err(Error::input(
                &src.name,
                "empty: expected a header line naming the columns, e.g. time_s,value_V",
            ));
        }
        // A UTF-8 byte-order mark (U+FEFF, Unicode §23.8) is not part of the first name.
        let line = src.line.strip_prefix('\u{feff}').unwrap_or(&src.line);
        let header: Vec<String> = line.split(',').map(|s| s.trim().to_string()).collect();
        src.header = header.join(",");
        src.columns = header.len();
        if header.iter().all(|h| h.parse::<f64>().is_ok()) {
            return Err(Error::input(
                &src.name,
                format!(
                    "line {}: expected a header line naming the columns (e.g. time_s,value_V), \
                     found numbers",
                    src.line_no
                ),
            ));
        }
        src.time_col = header.iter().position(|h| is_time(h));
        if let Some(c) = src.time_col {
            src.time_scale = time_scale(&header[c]).ok_or_else(|| {
                let units: Vec<&str> = TIME_UNITS.iter().map(|(n, _)| *n).collect();
                Error::input(
                    &src.name,
                    format!(
                        "line {}: the time column {:?} is in {:?}, a unit not read; expected \
                         one of {} (e.g. time_ms or time (ms))",
                        src.line_no,
                        echo(&header[c]),
                        echo(&time_unit(&header[c]).unwrap_or_default()),
                        units.join(", ")
                    ),
                )
            })?;
        }
        src.value_cols = (0..header.len())
            .filter(|&c| Some(c) != src.time_col)
            .collect();
        let first = *src.value_cols.first().ok_or_else(|| {
            Error::input(
                &src.name,
                format!(
                    "line {}: only a time column ({}); expected a value column too",
                    src.line_no,
                    echo(&header[0])
                ),
            )
        })?;
        let (values, code) = value_meaning(&header[first]);
        let kind = |c: usize| value_meaning(&header[c]);
        if let Some(&other) = src.value_cols.iter().find(|&&c| kind(c) != (values, code)) {
            return Err(Error::input(
                &src.name,
                format!(
                    "line {}: the value columns {:?} and {:?} hold different kinds of values; \
                     every channel's column must hold the same (e.g. ch0_value_V,ch1_value_V)",
                    src.line_no,
                    echo(&header[first]),
                    echo(&header[other])
                ),
            ));
        }
        src.info.values = values;
        src.info.channels = u16::try_from(src.value_cols.len()).map_err(|_| {
            Error::input(
                &src.name,
                format!(
                    "line {}: {} value columns; at most {} channels are read",
                    src.line_no,
                    src.value_cols.len(),
                    u16::MAX
                ),
            )
        })?;
        if let Some(sf) = code {
            let max = f64::from(sf.full_scale_code().expect("integer format"));
            src.value_div = max;
            src.code = Some((sf.bytes() * 8, -max - 1.0, max));
        }
        Ok(())
    }

    /// The sample rate in Hz given outside the time column: `--rate`, else, without a time
    /// column, the fallback (which is then required); `None` when the time column gives it.
    fn given_rate(&self, options: &SourceOptions) -> Result<Option<f64>> {
        let src = self;
        Ok(match (options.rate_hz, src.time_col) {
            (Some(r), _) => Some(check_rate(r, "\u{1}rate\u{1}", &src.name)?),
            (None, None) => Some(
                options
                    .fallback_rate_hz
                    .ok_or_else(|| {
                        Error::setting(
                            Setting::Rate,
                            format!(
                                "{} has no time column: give its sample rate, e.g. \u{1}rate\u{1} 48kHz",
                                src.name
                            ),
                        )
                    })
                    .and_then(|r| check_rate(r, "the manifest", &src.name))?,
            ),
            (None, Some(_)) => None,
        })
    }

    /// With a time column, the first [`RATE_ROWS`] rows: their times in s and line numbers
    /// (their values wait in `pending`); empty without one.
    fn read_ahead(&mut self) -> Result<(Vec<f64>, Vec<usize>)> {
        let src = self;
        let mut times = Vec::new();
        let mut lines = Vec::new();
        if src.time_col.is_some() {
            while times.len() < RATE_ROWS {
                match src.row()? {
                    Some(t) => {
                        times.push(t.expect("time column"));
                        lines.push(src.line_no);
                        src.pending.extend_from_slice(&src.row_values);
                    }
                    None => break,
                }
            }
        }
        Ok((times, lines))
    }

    /// Checks the steps of the rows read ahead (`times` in s, on `lines`) when the rate is to
    /// come from them.
    fn check_steps_ahead(&self, times: &[f64], lines: &[usize]) -> Result<()> {
        let src = self;
        // Steps of the rows read ahead: the first that does not increase, or that is off the
        // median step by more than half of it, is named with its line (a gap would distort a
        // rate taken from the whole span, so the median is the reference here).
        // With --rate the time column only has to increase overall.
        let steps: Vec<f64> = times.windows(2).map(|w| w[1] - w[0]).collect();
        if let Some(i) = steps.iter().position(|d| d.is_nan() || *d <= 0.0) {
            return Err(Error::input(
                &src.name,
                format!(
                    "line {}: the time column does not increase ({} s after {} s): cannot tell \
                     the sample rate; the times must increase by one sample period per row",
                    lines[i + 1],
                    short(times[i + 1]),
                    short(times[i])
                ),
            ));
        }
        if !steps.is_empty() {
            let mut sorted = steps.clone();
            sorted.sort_by(f64::total_cmp);
            let median = sorted[sorted.len() / 2];
            if let Some(i) = steps.iter().position(|d| (d - median).abs() > 0.5 * median) {
                return Err(src.uneven(lines[i + 1], steps[i], median));
            }
        }
        Ok(())
    }

    /// The rate in Hz over the span of the rows read ahead (`times` in s, on `lines`); `None`
    /// with fewer than two rows.
    fn rate_from_times(&self, times: &[f64], lines: &[usize]) -> Result<Option<f64>> {
        let src = self;
        Ok(if times.len() >= 2 {
            let span = times[times.len() - 1] - times[0];
            if span.is_nan() || span <= 0.0 {
                return Err(Error::input(
                    &src.name,
                    format!(
                        "lines {} to {}: the time column does not increase: cannot tell the \
                         sample rate",
                        lines[0],
                        lines[lines.len() - 1]
                    ),
                ));
            }
            Some((times.len() - 1) as f64 / span)
        } else {
            None
        })
    }

    /// The rate in Hz used: the given one (with a note when the time column disagrees), else
    /// the time column's (whose later steps are then checked).
    fn settle_rate(&mut self, rate: Option<f64>, from_times: Option<f64>) -> Result<f64> {
        let src = self;
        Ok(match (rate, from_times) {
            (Some(r), Some(t)) => {
                if ((r - t) / r).abs() > 1e-6 {
                    // A note is printed text, not an error: it keeps its words.
                    src.info.notes.push(format!(
                        "sample rate {} Hz from --rate replaces the time column's {} Hz",
                        short(r),
                        short(t)
                    ));
                }
                r
            }
            (Some(r), None) => r,
            (None, Some(t)) => {
                src.check_steps = true;
                t
            }
            (None, None) => {
                return Err(Error::setting(
                    Setting::Rate,
                    format!(
                        "{} has fewer than two rows: its time column cannot give a sample rate; \
                         give \u{1}rate\u{1}",
                        src.name
                    ),
                ));
            }
        })
    }

    /// The next non-blank, non-comment line into `self.line`; false at the end.
    fn next_line(&mut self) -> Result<bool> {
        loop {
            self.line.clear();
            let n = self.input.read_line(&mut self.line).map_err(|e| {
                if e.kind() == std::io::ErrorKind::InvalidData {
                    Error::input(
                        &self.name,
                        format!(
                            "line {}: not valid UTF-8 text; a CSV capture is text with a header \
                             line such as time_s,value_V (for binary samples use raw or WAV)",
                            self.line_no + 1
                        ),
                    )
                } else {
                    Error::io(format!("reading {}", self.name), e)
                }
            })?;
            if n == 0 {
                return Ok(false);
            }
            self.line_no += 1;
            let t = self.line.trim();
            if !t.is_empty() && !t.starts_with('#') {
                return Ok(true);
            }
        }
    }

    /// The next row's time in s (its values, one per channel, in `row_values`).
    fn row(&mut self) -> Result<Option<Option<f64>>> {
        if !self.next_line()? {
            return Ok(None);
        }
        let mut time = None;
        let mut fields = 0;
        let mut values = std::mem::take(&mut self.row_values);
        values.clear();
        let line = std::mem::take(&mut self.line);
        let parsed = (|| {
            for (c, field) in line.trim_end().split(',').enumerate() {
                fields = c + 1;
                if Some(c) == self.time_col {
                    time = Some(self.number(field, "time")? * self.time_scale);
                } else if values.len() < self.value_cols.len() {
                    let v = self.number(field, "value")?;
                    self.check_code(v, field, self.value_cols[values.len()])?;
                    values.push(v / self.value_div);
                }
            }
            Ok(())
        })();
        self.line = line;
        let complete = values.len() == self.value_cols.len();
        self.row_values = values;
        parsed?;
        let missing = if !complete {
            Some("value")
        } else if self.time_col.is_some() && time.is_none() {
            Some("time")
        } else {
            None
        };
        if let Some(what) = missing {
            return Err(Error::input(
                &self.name,
                format!(
                    "line {}: the {what} field is missing; every row needs the {} \
                     columns of the header ({})",
                    self.line_no,
                    self.columns,
                    echo(&self.header)
                ),
            ));
        }
        if fields != self.columns {
            return Err(Error::input(
                &self.name,
                format!(
                    "line {}: {fields} fields where the header has {} columns ({}); every row \
                     needs exactly the header's columns",
                    self.line_no,
                    self.columns,
                    echo(&self.header)
                ),
            ));
        }
        self.rows += 1;
        Ok(Some(time))
    }

    fn number(&self, field: &str, what: &str) -> Result<f64> {
        let f = field.trim();
        match f.parse::<f64>() {
            Ok(v) if v.is_finite() => Ok(v),
            _ => Err(Error::input(
                &self.name,
                format!(
                    "line {}: the {what} field {:?} is not a finite number",
                    self.line_no,
                    echo(f)
                ),
            )),
        }
    }

    /// Refuses a value `v` (from `field`, in column `col`) of a code column that no code of its
    /// width is.
    fn check_code(&self, v: f64, field: &str, col: usize) -> Result<()> {
        match self.code {
            Some((bits, lo, hi)) if v.fract() != 0.0 || v < lo || v > hi => Err(Error::input(
                &self.name,
                format!(
                    "line {}: the value field {:?} is not a {bits}-bit code; the column {} \
                     holds whole numbers from {lo} to {hi}",
                    self.line_no,
                    echo(field.trim()),
                    echo(self.header.split(',').nth(col).unwrap_or_default())
                ),
            )),
            _ => Ok(()),
        }
    }

    /// Checks the step from time `a` to time `b` (s), the latter on `line`.
    fn check_step(&self, a: f64, b: f64, line: usize) -> Result<()> {
        let step = b - a;
        if (step - self.period_s).abs() > 0.5 * self.period_s {
            return Err(self.uneven(line, step, self.period_s));
        }
        Ok(())
    }

    fn uneven(&self, line: usize, step: f64, period_s: f64) -> Error {
        Error::input(
            &self.name,
            format!(
                "line {line}: the time column steps by {} s where the first rows step by \
                 {} s; the samples must be evenly spaced (gaps or resets cannot be \
                 analysed)",
                short(step),
                short(period_s)
            ),
        )
    }
}

impl<R: Read> SampleSource for CsvSource<R> {
    fn info(&self) -> &StreamInfo {
        &self.info
    }

    fn read_block(&mut self, out: &mut Vec<f64>, max: usize) -> Result<usize> {
        out.clear();
        let c = self.value_cols.len();
        let max = max.max(1) * c;
        if !self.pending.is_empty() {
            let take = max.min(self.pending.len());
            out.extend(self.pending.drain(..take));
            return Ok(take);
        }
        while out.len() < max {
            match self.row()? {
                None => break,
                Some(t) => {
                    if let (Some(t), true) = (t, self.check_steps) {
                        if let Some(prev) = self.last_time {
                            self.check_step(prev, t, self.line_no)?;
                        }
                        self.last_time = Some(t);
                    }
                    out.extend_from_slice(&self.row_values);
                }
            }
        }
        Ok(out.len())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn read(text: &str, rate: Option<f64>) -> Result<(StreamInfo, Vec<f64>)> {
        let o = SourceOptions {
            format: Format::Csv,
            sample_format: None,
            rate_hz: rate,
            fallback_rate_hz: None,
            name: "c.csv".into(),
            length_bytes: Some(text.len() as u64),
            channels: None,
        };
        let mut s = CsvSource::new(text.as_bytes(), &o)?;
        let mut all = Vec::new();
        let mut b = Vec::new();
        while s.read_block(&mut b, 3)? > 0 {
            all.extend_from_slice(&b);
        }
        Ok((s.info().clone(), all))
    }

    #[test]
    fn value_columns_are_channels_read_frame_by_frame() {
        // Five rows, read three frames at a time: whole frames, channel 0 first.
        let text = "time_s,ch0_value_V,ch1_value_V\n0,1,-1\n0.001,2,-2\n0.002,3,-3\n\
                    0.003,4,-4\n0.004,5,-5\n";
        let (info, v) = read(text, None).unwrap();
        assert_eq!(info.channels, 2);
        assert_eq!(info.values, Values::Physical(Unit::Volt));
        assert_eq!(info.sample_rate_hz, 1000.0);
        assert_eq!(v, [1.0, -1.0, 2.0, -2.0, 3.0, -3.0, 4.0, -4.0, 5.0, -5.0]);
        let e = read("time_s,ch0_value_V,ch1_value_V\n0,1,-1\n0.001,2\n", None).unwrap_err();
        assert!(
            e.to_string().contains("line 3: the value field is missing"),
            "{e}"
        );
    }

    #[test]
    fn time_column_gives_the_rate_and_names_give_the_meaning() {
        let (i, v) = read(
            "time_s,value_V\n0,1\n0.001,2\n# note\n\n0.002,3\n0.003,4\n",
            None,
        )
        .unwrap();
        assert!((i.sample_rate_hz - 1000.0).abs() < 1e-9);
        assert_eq!(i.values, Values::Physical(Unit::Volt));
        assert_eq!(v, [1.0, 2.0, 3.0, 4.0]);
        let (i, v) = read("code_i16\n32767\n-32767\n", Some(8.0)).unwrap();
        assert_eq!(i.values, Values::Digital);
        assert_eq!(v, [1.0, -1.0]);
        let (i, _) = read("volts, time (ms)\n1, 0\n2, 0.5\n", None).unwrap();
        assert!((i.sample_rate_hz - 2000.0).abs() < 1e-9);
        assert_eq!(i.values, Values::Unknown);
    }

    #[test]
    fn bad_csv_is_named_with_its_line() {
        let e = read("time_s,value_V\n0,1\n0.001,x\n", None).unwrap_err();
        assert!(e.to_string().contains("line 3"), "{e}");
        let e = read("1,2\n3,4\n", None).unwrap_err();
        assert!(e.to_string().contains("header"), "{e}");
        let e = read("value_V\n1\n2\n", None).unwrap_err();
        assert!(e.cli_text().contains("--rate"), "{e}");
        let e = read("time_s,value_V\n0,1\n0.001,1\n0.002,1\n0.01,1\n", None).unwrap_err();
        assert!(e.to_string().contains("evenly spaced"), "{e}");
        let e = read("", None).unwrap_err();
        assert!(e.to_string().contains("empty"), "{e}");
        let e = read("time_s,value_V\n0,1\n0.001\n", None).unwrap_err();
        assert!(e.to_string().contains("missing"), "{e}");
    }

    /// Every time unit the header may name scales the time column to seconds: 1000 rows a
    /// unit apart give 1/(seconds per unit) Hz (SI Brochure Table 8 for min and h).
    #[test]
    fn time_units_scale_the_rate() {
        for (name, hz) in [
            ("time_s", 1.0),
            ("time (ms)", 1e3),
            ("time [us]", 1e6),
            ("t (\u{b5}s)", 1e6),
            ("time_ns", 1e9),
            ("time_min", 1.0 / 60.0),
            ("Time_H", 1.0 / 3600.0),
            ("time", 1.0),
        ] {
            let text = format!("{name},value_V\n0,1\n1,2\n2,3\n");
            let (i, v) = read(&text, None).unwrap();
            assert!(
                ((i.sample_rate_hz - hz) / hz).abs() < 1e-12,
                "{name}: {}",
                i.sample_rate_hz
            );
            assert_eq!(v, [1.0, 2.0, 3.0]);
        }
    }

    #[test]
    fn a_time_unit_not_known_is_refused_with_the_column() {
        let e = read("time_d,value_V\n0,1\n1,2\n", None).unwrap_err();
        assert_eq!(
            e.to_string(),
            "c.csv: line 1: the time column \"time_d\" is in \"d\", a unit not read; expected \
             one of s, sec, seconds, ms, us, \u{b5}s, \u{3bc}s, ns, min, h (e.g. time_ms or \
             time (ms))"
        );
        assert_eq!(e.exit_code(), 2);
    }

    /// A byte-order mark before the header (U+FEFF) leaves the time column its name.
    #[test]
    fn a_byte_order_mark_keeps_the_time_column() {
        let (i, v) = read("\u{feff}time_ms,value_V\n0,1\n0.5,2\n", None).unwrap();
        assert_eq!(i.sample_rate_hz, 2000.0);
        assert_eq!(i.values, Values::Physical(Unit::Volt));
        assert_eq!(v, [1.0, 2.0]);
    }

    #[test]
    fn codes_outside_their_width_and_extra_fields_are_refused() {
        let (_, v) = read("code_i16\n-32768\n32767\n", Some(8.0)).unwrap();
        assert_eq!(v, [-32768.0 / 32767.0, 1.0]);
        let e = read("code_i16\n1\n40000\n", Some(8.0)).unwrap_err();
        assert_eq!(
            e.to_string(),
            "c.csv: line 3: the value field \"40000\" is not a 16-bit code; the column \
             code_i16 holds whole numbers from -32768 to 32767"
        );
        let e = read("code_i24\n1.5\n", Some(8.0)).unwrap_err();
        assert!(
            e.to_string().contains("\"1.5\" is not a 24-bit code"),
            "{e}"
        );
        let e = read("time_s,value_V\n0,1\n0.001,2,7\n", None).unwrap_err();
        assert_eq!(
            e.to_string(),
            "c.csv: line 3: 3 fields where the header has 2 columns (time_s,value_V); every \
             row needs exactly the header's columns"
        );
    }

    /// A long field is quoted to 60 characters and "…"; tiny numbers print in exponent form.
    #[test]
    fn messages_quote_long_fields_and_tiny_numbers_briefly() {
        let text = format!("time_s,value_V\n0,1\n0.001,{}\n", "x".repeat(100_000));
        let e = read(&text, None).unwrap_err().to_string();
        assert_eq!(
            e,
            format!(
                "c.csv: line 3: the value field \"{}…\" is not a finite number",
                "x".repeat(60)
            )
        );
        let e = read("time_s,value_V\n0,1\n1e-300,1\n2e-300,1\n9e-300,1\n", None).unwrap_err();
        assert_eq!(
            e.to_string(),
            "c.csv: line 5: the time column steps by 7e-300 s where the first rows step by \
             1e-300 s; the samples must be evenly spaced (gaps or resets cannot be analysed)"
        );
    }
}
