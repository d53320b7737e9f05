//! CSV / TSV / TXT loader.
//!
//! The layout is sniffed from the first 64 KiB ([`sniff`]): UTF-8 BOM, delimiter (`,` `;` or
//! tab), an optional preamble of `key<delim>value` lines (a sample interval or rate is taken
//! from it), an optional header (each column read into a [`Channel`]: unit, role), which
//! columns hold numbers (blank and text columns are left out unless chosen), a decimal comma
//! (only with `;`), and a time column found by name or by evenly increasing values, with the
//! digits its values are written with.
//! The rows are then streamed with the `csv` crate's byte records and parsed straight into two
//! `f64` columns (no per-cell `String`); the time column is checked on the fly and never stored.
//! The time unit and the timestamps' resolution are applied to the whole record's interval once,
//! after parsing: nothing is added per cell.

use super::channel::{PLAIN_TIME_WORDS, SECONDS_WORDS};
use super::room::reserve;
use super::{Capture, CaptureHead, LoadError, LoadErrorKind, LoadOptions, SourceFormat, pick_set};
use crate::warning::Warning;
use datetime::parse_datetime;
use std::fs::File;
use std::io::{BufReader, Read, Seek, SeekFrom};
use std::path::Path;

const SNIFF_BYTES: usize = 64 * 1024;
/// Relative sample-interval spread above which a warning is given (the issue's 1 %).
const JITTER_WARN: f64 = 0.01;
/// Relative disagreement between `--rate` and the file's time base that earns a warning.
const RATE_MISMATCH: f64 = 1e-3;

/// How the data region is read: into how many parts, from what size on, in what blocks.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Tuning {
    /// Most parts (threads) the data region is cut into.
    pub(crate) max_parts: usize,
    /// Smallest part worth a thread of its own, bytes.
    pub(crate) min_part_bytes: u64,
    /// Read block per part, bytes (grown for a line that does not fit).
    pub(crate) block_bytes: usize,
}

impl Tuning {
    /// One part per core (at most [`MAX_PARTS`]), parts of at least 1 MiB, 512 KiB blocks.
    pub(crate) fn for_this_machine() -> Self {
        Tuning {
            max_parts: std::thread::available_parallelism()
                .map_or(1, |n| n.get())
                .min(MAX_PARTS),
            min_part_bytes: 1 << 20,
            block_bytes: 512 * 1024,
        }
    }
}

/// Most threads one file is parsed with.
const MAX_PARTS: usize = 8;

/// Most data columns one capture reads (an 8-channel scope with a spare, or a power analyser's
/// Va Vb Vc Ia Ib Ic In).
pub(crate) const MAX_COLUMNS: usize = 16;

/// Which columns a row must have and where their values go.
#[derive(Debug, Clone)]
struct RowSpec {
    delimiter: u8,
    decimal_comma: bool,
    /// Fields a row needs (up to the last used column).
    need: usize,
    time_col: Option<usize>,
    /// The data columns wanted, in the order the caller wants them.
    cols: Vec<usize>,
    /// For each of the first `need` columns: `Some(k)` when it is the k-th distinct column used,
    /// `None` when skipped.
    plan: Vec<Option<u8>>,
    /// Which of the used columns holds time (when there is one).
    pick_time: Option<u8>,
    /// The time column holds date-times, read relative to this instant (ns since 1970).
    time_base_ns: Option<i128>,
    /// Which of the used columns holds each wanted data column.
    pick: Vec<u8>,
}

/// The wanted channels and the time-column check, as read from the data region.
#[derive(Debug, PartialEq)]
struct Columns {
    /// One column of samples per wanted channel, in the order asked for.
    data: Vec<Vec<f64>>,
    time: TimeCheck,
}

impl Columns {
    fn rows(&self) -> usize {
        self.data.first().map_or(0, Vec::len)
    }
}

/// What a row must hold, given the layout and the wanted data columns (0-based, at most
/// [`MAX_COLUMNS`]).
fn row_spec(layout: &Layout, cols: &[usize]) -> RowSpec {
    let need = cols
        .iter()
        .copied()
        .chain(layout.time_col)
        .max()
        .unwrap_or(0)
        + 1;
    let mut used: Vec<usize> = cols.iter().copied().chain(layout.time_col).collect();
    used.sort_unstable();
    used.dedup();
    let plan = (0..need)
        .map(|c| used.iter().position(|&u| u == c).map(|k| k as u8))
        .collect();
    let ordinal = |c: usize| used.iter().position(|&u| u == c).unwrap_or(0) as u8;
    RowSpec {
        delimiter: layout.delimiter,
        decimal_comma: layout.decimal_comma,
        need,
        time_col: layout.time_col,
        cols: cols.to_vec(),
        plan,
        pick_time: layout.time_col.map(ordinal),
        time_base_ns: layout.time_base_ns,
        pick: cols.iter().map(|&c| ordinal(c)).collect(),
    }
}

/// Loads a delimited-text capture.
pub(crate) fn load(path: &Path, opts: &LoadOptions) -> Result<Capture, LoadError> {
    load_with(path, opts, Tuning::for_this_machine())
}

/// [`load`] with explicit parallelism and block sizes (the tests force tiny parts and blocks).
pub(crate) fn load_with(
    path: &Path,
    opts: &LoadOptions,
    tuning: Tuning,
) -> Result<Capture, LoadError> {
    let err = |line, kind| LoadError::new(path, line, kind);
    let mut file = File::open(path).map_err(|e| err(None, e.into()))?;
    let file_len = file.metadata().map(|m| m.len()).unwrap_or(0);
    let mut sample = Vec::with_capacity(SNIFF_BYTES);
    (&mut file)
        .take(SNIFF_BYTES as u64)
        .read_to_end(&mut sample)
        .map_err(|e| err(None, e.into()))?;
    let at_eof = (sample.len() as u64) >= file_len;
    let bom = if sample.starts_with(b"\xEF\xBB\xBF") {
        3
    } else {
        0
    };
    let layout = sniff(&sample[bom..], at_eof).map_err(|k| err(None, k))?;
    drop(sample);

    let set = pick_set(&layout.channels, super::selection(opts))
        .map_err(|k| err(layout.header_line, k))?;
    let wanted = set.wanted();
    if wanted.len() > MAX_COLUMNS {
        return Err(err(
            layout.header_line,
            LoadErrorKind::BadChannelSet(format!(
                "{} channels chosen; at most {MAX_COLUMNS} are read",
                wanted.len()
            )),
        ));
    }
    let spec = row_spec(&layout, &wanted);
    let data_start = bom as u64 + layout.data_offset;

    // The fast reader takes every well-formed file; anything it does not vouch for (a quote, a
    // lone CR, a bad cell, a short row, time going back) sends the whole region through the
    // `csv` crate, which reports the first problem with its line exactly as it always has.
    let cols = match fast::read(
        &mut file, path, data_start, file_len, &spec, &layout, tuning,
    )
    .map_err(|k| err(None, k))?
    {
        Some(cols) => cols,
        None => read_with_csv(file, path, data_start, file_len, &spec, &layout)?,
    };
    if cols.rows() < 2 {
        return Err(err(None, LoadErrorKind::TooShort(cols.rows())));
    }
    let Columns { data, time } = cols;

    let mut warnings = Vec::new();
    let time_channel = layout.time_col.map(|tc| layout.channels[tc].clone());
    let file_rate = if let Some(tc) = &time_channel {
        // Interval jitter is judged beyond the timestamps' own resolution: two roundings to
        // the last written digit move one interval by up to one step.
        let resolution = layout
            .time_digits
            .resolution(time.first.abs().max(time.last.abs()));
        let (interval, jitter) = time.interval_and_jitter(resolution);
        if jitter > JITTER_WARN {
            warnings.push(Warning::TimeJitter {
                percent: jitter * 100.0,
            });
        }
        if tc.unit.is_none() {
            let base = super::channel::split_header(&tc.name).0.to_lowercase();
            let said =
                SECONDS_WORDS.contains(&base.as_str()) || PLAIN_TIME_WORDS.contains(&base.as_str());
            if !said {
                warnings.push(Warning::TimeUnitAssumed {
                    column: format!("'{}' (column {})", tc.name, tc.column),
                });
            }
        }
        Some(1.0 / (interval * tc.scale()))
    } else {
        match &layout.preamble_rate {
            PreambleRate::None => None,
            &PreambleRate::Stated { hz, line } => {
                if opts.rate_hz.is_none() {
                    warnings.push(Warning::RateFromPreamble { rate_hz: hz, line });
                }
                Some(hz)
            }
            PreambleRate::Unclear { line, why, hz } => {
                if opts.rate_hz.is_none() {
                    return Err(err(
                        Some(*line),
                        LoadErrorKind::UnclearRate {
                            why: why.clone(),
                            suggest: short_hz(*hz),
                        },
                    ));
                }
                None
            }
        }
    };
    let sample_rate_hz = match (opts.rate_hz, file_rate) {
        (Some(given), Some(file_hz)) => {
            if ((given - file_hz) / file_hz).abs() > RATE_MISMATCH {
                warnings.push(Warning::RateMismatch {
                    given_hz: given,
                    file_hz,
                });
            }
            given
        }
        (Some(r), None) | (None, Some(r)) => r,
        (None, None) => return Err(err(None, LoadErrorKind::NoTimeBase)),
    };
    if !(sample_rate_hz.is_finite() && sample_rate_hz > 0.0) {
        return Err(err(None, LoadErrorKind::BadRate(sample_rate_hz)));
    }
    let head = CaptureHead {
        path: path.to_path_buf(),
        format: SourceFormat::Csv {
            delimiter: layout.delimiter,
            decimal_comma: layout.decimal_comma,
        },
        sample_rate_hz,
        time: time_channel,
        warnings,
        // a time column of date-times states when the first sample was taken
        times: layout
            .time_base_text
            .clone()
            .map(|start| super::RecordTimes {
                start: Some(start),
                trigger: None,
                trigger_offset_s: None,
            }),
    };
    Ok(Capture::assemble(head, &layout.channels, &set, data, None))
}

/// Rows expected in `bytes` of data, with a little margin, to pre-size the columns.
fn estimated_rows(bytes: u64, layout: &Layout) -> usize {
    ((bytes as f64) / layout.bytes_per_row.max(1.0) * 1.02) as usize + 16
}

/// The reference reader: the `csv` crate's byte records, one row after another. It handles quoted
/// fields and lone-CR line ends, and gives each error its line.
fn read_with_csv(
    mut file: File,
    path: &Path,
    data_start: u64,
    file_len: u64,
    spec: &RowSpec,
    layout: &Layout,
) -> Result<Columns, LoadError> {
    let err = |line, kind| LoadError::new(path, line, kind);
    file.seek(SeekFrom::Start(data_start))
        .map_err(|e| err(None, e.into()))?;
    let mut rdr = ::csv::ReaderBuilder::new()
        .delimiter(spec.delimiter)
        .has_headers(false)
        .flexible(true)
        .buffer_capacity(256 * 1024)
        .from_reader(BufReader::with_capacity(256 * 1024, file));

    let est_rows = estimated_rows(file_len, layout);
    let width = spec.cols.len();
    let mut data: Vec<Vec<f64>> = Vec::with_capacity(width);
    for _ in 0..width {
        let mut col = Vec::new();
        reserve(&mut col, est_rows, width).map_err(|k| err(None, k))?;
        data.push(col);
    }
    let need = spec.need;
    let mut time = TimeCheck::default();
    let mut rec = ::csv::ByteRecord::new();
    let line_of = |rec: &::csv::ByteRecord| rec.position().map(|p| p.line() + layout.data_line - 1);
    loop {
        match rdr.read_byte_record(&mut rec) {
            Ok(true) => {}
            Ok(false) => break,
            Err(e) => {
                let line = e.position().map(|p| p.line() + layout.data_line - 1);
                return Err(err(
                    line,
                    LoadErrorKind::NotACapture(format!("unreadable row: {e}")),
                ));
            }
        }
        if rec.len() < need {
            if rec.len() == 1 && rec[0].trim_ascii().is_empty() {
                continue; // a line of spaces
            }
            return Err(err(
                line_of(&rec),
                LoadErrorKind::ShortRow {
                    found: rec.len(),
                    expected: layout.names.len(),
                },
            ));
        }
        let cell = |c: usize| -> Result<f64, LoadError> {
            let raw = &rec[c];
            // the csv crate takes off quotes that open a field; quotes after spaces stay
            let number = parse_f64(raw, layout.decimal_comma).or_else(|| {
                let b = bare(raw);
                (b.len() != raw.len())
                    .then(|| parse_f64(b, layout.decimal_comma))
                    .flatten()
            });
            match number {
                Some(x) if x.is_finite() => Ok(x),
                Some(_) => Err(err(
                    line_of(&rec),
                    LoadErrorKind::NotFinite {
                        column: layout.names[c].clone(),
                        text: shorten(raw),
                    },
                )),
                None => Err(err(
                    line_of(&rec),
                    LoadErrorKind::NotANumber {
                        column: layout.names[c].clone(),
                        text: shorten(raw),
                    },
                )),
            }
        };
        if let Some(tc) = spec.time_col {
            let t = match spec.time_base_ns {
                None => cell(tc)?,
                Some(base) => match parse_datetime(&rec[tc]) {
                    Some(ns) => (ns - base) as f64 * 1e-9,
                    None => {
                        return Err(err(
                            line_of(&rec),
                            LoadErrorKind::NotADateTime {
                                column: layout.names[tc].clone(),
                                text: shorten(&rec[tc]),
                            },
                        ));
                    }
                },
            };
            time.push(t).map_err(|k| err(line_of(&rec), k))?;
        }
        for (col, &c) in data.iter_mut().zip(&spec.cols) {
            if col.len() == col.capacity() {
                // beyond the estimate: grow by half again, the failure an error, not an abort
                reserve(col, col.len() / 2 + 1024, width).map_err(|k| err(line_of(&rec), k))?;
            }
            col.push(cell(c)?);
        }
    }
    Ok(Columns { data, time })
}

/// Streaming check of a time column: strictly increasing, with its interval spread.
#[derive(Debug, Default, Clone, PartialEq)]
struct TimeCheck {
    first: f64,
    last: f64,
    n: u64,
    min_dt: f64,
    max_dt: f64,
}

impl TimeCheck {
    #[inline]
    fn push(&mut self, t: f64) -> Result<(), LoadErrorKind> {
        if self.n > 0 {
            let dt = t - self.last;
            if dt <= 0.0 {
                return Err(LoadErrorKind::NonMonotonicTime {
                    previous: self.last,
                    value: t,
                });
            }
            if self.n == 1 {
                self.min_dt = dt;
                self.max_dt = dt;
            } else {
                // as `f64::min` and `f64::max` for any dt that passed the check above, in
                // fewer instructions (this runs once a row)
                if dt < self.min_dt {
                    self.min_dt = dt;
                }
                if dt > self.max_dt {
                    self.max_dt = dt;
                }
            }
        } else {
            self.first = t;
        }
        self.last = t;
        self.n += 1;
        Ok(())
    }

    /// Appends the check of the rows that follow (another part of the file): the same state as if
    /// those times had been pushed one by one. `Err` when time does not rise across the seam.
    fn append(&mut self, next: &TimeCheck) -> Result<(), ()> {
        if next.n == 0 {
            return Ok(());
        }
        if self.n == 0 {
            *self = next.clone();
            return Ok(());
        }
        let dt = next.first - self.last;
        if dt <= 0.0 {
            return Err(());
        }
        if self.n == 1 {
            self.min_dt = dt;
            self.max_dt = dt;
        } else {
            self.min_dt = self.min_dt.min(dt);
            self.max_dt = self.max_dt.max(dt);
        }
        if next.n >= 2 {
            self.min_dt = self.min_dt.min(next.min_dt);
            self.max_dt = self.max_dt.max(next.max_dt);
        }
        self.last = next.last;
        self.n += next.n;
        Ok(())
    }

    /// Mean interval (file units) and the largest deviation of one interval from it beyond
    /// `resolution`, relative to the mean.
    fn interval_and_jitter(&self, resolution: f64) -> (f64, f64) {
        let mean = (self.last - self.first) / (self.n - 1) as f64;
        let deviation = (self.max_dt - mean).max(mean - self.min_dt);
        (mean, (deviation - resolution).max(0.0) / mean)
    }
}

/// Powers of ten that an `f64` holds exactly.
const POW10: [f64; 23] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16,
    1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
];

/// A plain decimal at the start of `s` (`[+-]digits[.digits][e[+-]digits]`, at most 15 digits,
/// power of ten within ±22) and the bytes it takes; `None` for anything else, which
/// `fast_float2` then reads. With at most 15 digits the mantissa and the power of ten are both
/// exact in an `f64`, so one IEEE multiplication or division gives the correctly rounded value
/// (Clinger's fast path): the same bits as `fast_float2`, with fewer steps per digit.
#[inline]
pub(crate) fn decimal(s: &[u8]) -> Option<(f64, usize)> {
    let (neg, mut p) = match s.first() {
        Some(b'-') => (true, 1),
        Some(b'+') => (false, 1),
        _ => (false, 0),
    };
    let mut m = 0u64;
    let int_start = p;
    while let Some(d) = s.get(p).map(|b| b.wrapping_sub(b'0')).filter(|&d| d < 10) {
        m = m.wrapping_mul(10).wrapping_add(u64::from(d));
        p += 1;
    }
    let mut digits = p - int_start;
    let mut exp = 0i64;
    if s.get(p) == Some(&b'.') {
        p += 1;
        let frac_start = p;
        while let Some(d) = s.get(p).map(|b| b.wrapping_sub(b'0')).filter(|&d| d < 10) {
            m = m.wrapping_mul(10).wrapping_add(u64::from(d));
            p += 1;
        }
        digits += p - frac_start;
        exp = -((p - frac_start) as i64);
    }
    if digits == 0 || digits > 15 {
        return None;
    }
    if let Some(b'e' | b'E') = s.get(p) {
        let (eneg, mut q) = match s.get(p + 1) {
            Some(b'-') => (true, p + 2),
            Some(b'+') => (false, p + 2),
            _ => (false, p + 1),
        };
        let e_start = q;
        let mut e = 0i64;
        while let Some(d) = s.get(q).map(|b| b.wrapping_sub(b'0')).filter(|&d| d < 10) {
            e = e * 10 + i64::from(d);
            q += 1;
            if q - e_start > 4 {
                return None;
            }
        }
        if q == e_start {
            return None; // "1e": fast_float2 decides what it means
        }
        exp += if eneg { -e } else { e };
        p = q;
    }
    let x = m as f64;
    let x = if exp < 0 {
        x / *POW10.get(exp.unsigned_abs() as usize)?
    } else {
        x * *POW10.get(exp as usize)?
    };
    Some((if neg { -x } else { x }, p))
}

/// The fast reader (see its module note).
pub(crate) mod datetime;
mod digits;
mod fast;
mod sniff;

use sniff::*;

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn cells_parse_with_spaces_exponents_and_decimal_commas() {
        assert_eq!(parse_f64(b" 1.5e-3 ", false), Some(1.5e-3));
        assert_eq!(parse_f64(b"-230,25", true), Some(-230.25));
        assert_eq!(parse_f64(b"-230,25", false), None);
        assert_eq!(parse_f64(b"abc", false), None);
        assert_eq!(parse_f64(b"", false), None);
    }

    #[test]
    fn preamble_header_and_semicolon_decimal_comma_are_sniffed() {
        let text = b"Instrument;bench scope\nSample Interval;2,0E-04\n\nTime (s);Voltage (V);I [A]\n0,0000;1,5;0,1\n0,0002;2,5;0,2\n0,0004;3,5;0,3\n0,0006;4,5;0,4\n";
        let l = sniff(text, true).unwrap();
        assert_eq!(l.delimiter, b';');
        assert!(l.decimal_comma);
        assert_eq!(l.names, vec!["Time (s)", "Voltage (V)", "I [A]"]);
        assert_eq!(l.time_col, Some(0));
        assert_eq!(l.data_line, 5);
        let PreambleRate::Stated { hz, line } = l.preamble_rate else {
            panic!("{:?}", l.preamble_rate)
        };
        assert!((hz - 5000.0).abs() < 1e-9, "{hz}");
        assert_eq!(line, 2);
    }

    #[test]
    fn headerless_tab_file_finds_time_by_even_steps() {
        let text = b"0.000\t1.0\t0.5\n0.001\t0.8\t0.2\n0.002\t0.1\t-0.1\n0.003\t-0.5\t-0.4\n0.004\t-0.9\t-0.6\n";
        let l = sniff(text, true).unwrap();
        assert_eq!(l.delimiter, b'\t');
        assert_eq!(l.time_col, Some(0));
        assert_eq!(l.names[1], "column 2");
    }

    #[test]
    fn two_headerless_columns_have_no_time_column() {
        let text = b"0.1,0.2\n0.2,0.3\n0.3,0.4\n0.4,0.5\n";
        let l = sniff(text, true).unwrap();
        assert_eq!(l.time_col, None);
    }

    #[test]
    fn single_column_is_one_channel() {
        assert!(matches!(
            sniff(b"1.0\n2.0\n3.0\n", true),
            Err(LoadErrorKind::OneChannel)
        ));
    }

    #[test]
    fn binary_bytes_are_not_a_capture() {
        let junk: Vec<u8> = (0..2000u32).map(|k| (k * 7919 % 251) as u8).collect();
        assert!(matches!(
            sniff(&junk, true),
            Err(LoadErrorKind::NotACapture(_))
        ));
    }

    #[test]
    fn the_time_columns_resolution_is_its_last_written_digit() {
        let mut d = Digits::default();
        for cell in [&b"0.000039"[..], b"0.000078", b" 0.000117 "] {
            d.see(cell, false);
        }
        assert_eq!(d.resolution(0.2), 1e-6);
        // With an exponent the step grows with the value: 2 mantissa decimals of 1.23e-04 are
        // 1e-6, of 1.23e+01 are 0.1.
        let mut d = Digits::default();
        d.see(b"1.23e-04", false);
        assert!((d.resolution(1.23e-4) - 1e-6).abs() < 1e-18);
        assert!((d.resolution(12.3) - 0.1).abs() < 1e-12);
        // A decimal comma is the point with ';'; the coarsest cell decides.
        let mut d = Digits::default();
        d.see(b"0,0005", true);
        d.see(b"0,001", true);
        assert_eq!(d.resolution(1.0), 1e-3);
    }

    #[test]
    fn a_headerless_time_column_is_read_as_seconds_with_a_note() {
        let mut text = String::new();
        for k in 0..400 {
            let t = k as f64 * 1e-4;
            let w = 2.0 * std::f64::consts::PI * 50.0 * t;
            text.push_str(&format!(
                "{t:.4},{:.3},{:.3}\n",
                325.0 * w.sin(),
                14.0 * w.cos()
            ));
        }
        let f = temp_csv(text.as_bytes());
        let c = load_with(f.path(), &LoadOptions::default(), tiny(1, 1 << 20)).unwrap();
        assert!(
            (c.sample_rate_hz - 1e4).abs() < 1e-6,
            "{}",
            c.sample_rate_hz
        );
        let codes: Vec<&str> = c.warnings.iter().map(|w| w.code()).collect();
        assert_eq!(codes, ["channel-assumed", "time-unit-assumed"]);
        assert_eq!(c.time.as_ref().map(|t| t.column), Some(1));
    }

    #[test]
    fn preamble_values_with_units() {
        let said = |line: &str, dc: bool| {
            let cells: Vec<&[u8]> = split(line.as_bytes(), b',').collect();
            preamble_statement(&cells, dc)
        };
        assert_eq!(said("Sample rate,10 kS/s", false), Some((10_000.0, true)));
        assert_eq!(said("fs,5000 Hz", false), Some((5000.0, true)));
        assert_eq!(said("Sample rate,5000,Hz", false), Some((5000.0, true)));
        assert_eq!(said("Sampling frequency,1 MS/s", false), Some((1e6, true)));
        assert_eq!(said("Sample interval,2e-6", false), Some((5e5, true)));
        assert_eq!(said("Sample interval,500 µs", false), Some((2000.0, true)));
        // a rate without a unit is said, but not how
        assert_eq!(said("fs,5000", false), Some((5000.0, false)));
        // not a sample rate: the line frequency, a record length, an unknown unit
        assert_eq!(said("Frequency,50 Hz", false), None);
        assert_eq!(said("Record Length,2000", false), None);
        assert_eq!(said("Sample rate,5000 pts", false), None);
        let cells = |l: &'static str| -> Vec<&'static [u8]> { split(l.as_bytes(), b';').collect() };
        assert_eq!(
            preamble_statement(&cells("Sample Interval;0,5 ms"), true),
            Some((2000.0, true))
        );
    }

    // ---- the fast reader, checked against the csv-crate reader ----

    use proptest::prelude::*;
    use std::io::Write;

    fn temp_csv(text: &[u8]) -> tempfile::NamedTempFile {
        let mut f = tempfile::Builder::new().suffix(".csv").tempfile().unwrap();
        f.write_all(text).unwrap();
        f.flush().unwrap();
        f
    }

    /// Tiny parts and blocks, so that small files are cut in many places.
    fn tiny(max_parts: usize, block_bytes: usize) -> Tuning {
        Tuning {
            max_parts,
            min_part_bytes: 1,
            block_bytes,
        }
    }

    const TUNINGS: [(usize, usize); 6] = [(1, 1 << 20), (1, 5), (2, 7), (3, 16), (4, 1), (6, 64)];

    /// Sniffs like `load_with`, then runs the fast reader with `tuning` and the reference reader.
    fn both_readers(path: &Path, tuning: Tuning) -> (Option<Columns>, Result<Columns, LoadError>) {
        let mut file = File::open(path).unwrap();
        let len = file.metadata().unwrap().len();
        let mut sample = Vec::new();
        (&mut file)
            .take(SNIFF_BYTES as u64)
            .read_to_end(&mut sample)
            .unwrap();
        let bom = if sample.starts_with(b"\xEF\xBB\xBF") {
            3
        } else {
            0
        };
        let layout = sniff(&sample[bom..], sample.len() as u64 >= len).unwrap();
        let set = pick_set(&layout.channels, Default::default()).unwrap();
        let spec = row_spec(&layout, &set.wanted());
        let start = bom as u64 + layout.data_offset;
        let fast = fast::read(&mut file, path, start, len, &spec, &layout, tuning).unwrap();
        let reference = read_with_csv(File::open(path).unwrap(), path, start, len, &spec, &layout);
        (fast, reference)
    }

    /// A 3-column capture of `rows` rows (1 kHz) in a mix of number spellings.
    fn plain_text(rows: usize, eol: &str) -> String {
        let mut s = format!("Time (s),Voltage (V),I [A]{eol}");
        for k in 0..rows {
            let t = k as f64 * 1e-3;
            let v = 325.0 * (k as f64 * 0.31).sin();
            let i = -14.0 * (k as f64 * 0.31 - 0.5).cos();
            let row = match k % 6 {
                0 => format!("{t:.3},{v:.2},{i:.4}"),
                1 => format!("{t:e},{v:e},{i:E}"),
                2 => format!("{t:.6},+{:.1},{i:.0}.", v.abs()),
                3 => format!("{t:.3}, {v:.3} ,{i:.7}"),
                4 => format!("{t:.3},-0,.{}", (i.abs() * 1e3) as u32),
                _ => format!("{t:.4},{v:.15},{i:.20}"),
            };
            s.push_str(&row);
            s.push_str(eol);
            if k % 17 == 5 {
                s.push_str(eol); // blank line
            }
            if k % 23 == 7 {
                s.push_str("   ");
                s.push_str(eol); // a line of spaces
            }
        }
        s
    }

    #[test]
    fn fast_reader_matches_the_csv_reader_on_plain_files_however_cut() {
        for eol in ["\n", "\r\n"] {
            for trailing in [true, false] {
                let mut text = plain_text(500, eol);
                if !trailing {
                    text.truncate(text.trim_end().len());
                }
                let f = temp_csv(text.as_bytes());
                for (parts, block) in TUNINGS {
                    let (fast, reference) = both_readers(f.path(), tiny(parts, block));
                    let reference = reference.unwrap();
                    assert_eq!(reference.rows(), 500);
                    assert_eq!(
                        fast.as_ref(),
                        Some(&reference),
                        "eol {eol:?}, trailing newline {trailing}, {parts} parts, block {block}"
                    );
                }
            }
        }
    }

    #[test]
    fn unused_columns_and_channels_picked_by_name_are_read_the_same() {
        // Current before voltage, an unused column between them and one at the end.
        let mut text = String::from("t;I [A];note;U;spare\n");
        for k in 0..300 {
            text.push_str(&format!("{k};{}.5;7;{}.25;5\n", k % 10, k * 2));
        }
        // Decimal comma: rewrite the numbers of every other row.
        let text: String = text
            .lines()
            .enumerate()
            .map(|(n, l)| if n % 2 == 0 { l.replace('.', ",") } else { l.to_string() } + "\n")
            .collect();
        let f = temp_csv(text.as_bytes());
        for (parts, block) in TUNINGS {
            let (fast, reference) = both_readers(f.path(), tiny(parts, block));
            let reference = reference.unwrap();
            assert_eq!((reference.data[0][3], reference.data[1][3]), (6.25, 3.5));
            assert_eq!(
                fast.as_ref(),
                Some(&reference),
                "{parts} parts, block {block}"
            );
        }
    }

    /// The line walk reads plain rows eight bytes at a time and sends any other row to the cell
    /// reader: rows of both kinds in one part, a skipped column, columns past the last one
    /// wanted, blank lines and a last line without its newline all come out as the csv crate
    /// reads them.
    #[test]
    fn plain_and_other_rows_mixed_are_read_as_the_csv_reader_reads_them() {
        let mut text = String::from("time,v,note,i,spare,more\n");
        for k in 0..400 {
            let t = format!("{}.25", 100 + k);
            let row = match k % 9 {
                0 => format!("{t},-{k}.25,x,+0.5,1,2"),
                1 => format!("{t},123456789.5,x,-.5,1,2"), // nine digits before the point
                2 => format!("{t},1.5e2,x,7.,1,2"),        // an exponent
                3 => format!("{t},12.5 ,x, 0.125,1,2"),    // a space after, one before
                4 => format!("{t},0.123456789,x,1,1,2"),   // nine after it
                5 => format!("{t},{k},,{k}.0625"),         // ends at the last wanted column
                _ => format!("{t},{k}.5,note {k},-{k},,"),
            };
            text.push_str(&row);
            text.push_str(if k % 50 == 3 { "\n\n" } else { "\n" });
        }
        text.pop(); // no newline after the last row
        let f = temp_csv(text.as_bytes());
        for (parts, block) in TUNINGS {
            let (fast, reference) = both_readers(f.path(), tiny(parts, block));
            let reference = reference.unwrap();
            assert_eq!(reference.rows(), 400);
            assert_eq!(
                (reference.data[0][1], reference.data[1][1]),
                (123456789.5, -0.5)
            );
            assert_eq!(
                fast.as_ref(),
                Some(&reference),
                "{parts} parts, block {block}"
            );
        }
    }

    #[test]
    fn quoted_fields_fall_back_to_the_csv_reader() {
        let mut text = String::from("time,v,i\n");
        for k in 0..200 {
            if k == 150 {
                text.push_str(&format!("\"{k}\",\"{}\",\"-1.5\"\n", k * 2));
            } else {
                text.push_str(&format!("{k},{},-1.5\n", k * 2));
            }
        }
        let f = temp_csv(text.as_bytes());
        for (parts, block) in TUNINGS {
            let (fast, reference) = both_readers(f.path(), tiny(parts, block));
            assert!(
                fast.is_none(),
                "{parts} parts: the fast reader must give up on quotes"
            );
            let reference = reference.unwrap();
            assert_eq!(reference.data[0][150], 300.0);
            let c = load_with(f.path(), &LoadOptions::default(), tiny(parts, block)).unwrap();
            assert_eq!(c.voltage().samples, reference.data[0]);
            assert_eq!(c.current().samples, reference.data[1]);
            assert_eq!(c.sample_rate_hz, 1.0);
        }
    }

    /// Every field quoted, some after a space (`0.5, "2"`: the csv crate keeps those quotes,
    /// RFC 4180 opens a quoted field only at its first character, from memory): the numbers
    /// inside are read all the same, and the quoted time column is the time base.
    #[test]
    fn quoted_fields_after_spaces_are_read_as_numbers() {
        let mut text = String::from("\"time\", \"v\", \"i\"\n");
        for k in 0..200 {
            text.push_str(&format!(
                "\"{}\", \"{}\", \"-1.5\"\n",
                k as f64 * 0.5,
                k * 2
            ));
        }
        let f = temp_csv(text.as_bytes());
        let c = load_with(f.path(), &LoadOptions::default(), tiny(1, 1 << 20)).unwrap();
        let v: Vec<f64> = (0..200).map(|k| (k * 2) as f64).collect();
        assert_eq!(c.voltage().samples, v);
        assert!(c.current().samples.iter().all(|&x| x == -1.5));
        assert_eq!(c.sample_rate_hz, 2.0);
        assert_eq!(c.time.as_ref().map(|t| t.column), Some(1));
    }

    #[test]
    fn a_lone_carriage_return_falls_back_to_the_csv_reader() {
        // The csv crate ends a record at a lone CR: the 4th (unused) column hides it from a
        // reader that only looks at the first three fields.
        let mut text = String::from("time,v,i,x\n");
        for k in 0..100 {
            let end = if k == 60 { "\r" } else { "\n" };
            text.push_str(&format!("{k},{},{},9{end}", k + 1, k + 2));
        }
        let f = temp_csv(text.as_bytes());
        for (parts, block) in TUNINGS {
            let (fast, reference) = both_readers(f.path(), tiny(parts, block));
            assert!(fast.is_none(), "{parts} parts, block {block}");
            assert_eq!(reference.unwrap().rows(), 100);
        }
    }

    /// Loads with every tuning and checks that all give the same error, on `line`.
    fn error_at(text: &str, line: u64) -> LoadErrorKind {
        let f = temp_csv(text.as_bytes());
        let mut kinds = Vec::new();
        for (parts, block) in TUNINGS {
            let e = load_with(f.path(), &LoadOptions::default(), tiny(parts, block)).unwrap_err();
            assert_eq!(e.line, Some(line), "{parts} parts, block {block}: {e}");
            assert!(e.to_string().contains(&format!("line {line}: ")), "{e}");
            kinds.push(e.kind.to_string());
        }
        kinds.dedup();
        assert_eq!(kinds.len(), 1, "{kinds:?}");
        let f2 = temp_csv(text.as_bytes());
        load_with(f2.path(), &LoadOptions::default(), tiny(3, 16))
            .unwrap_err()
            .kind
    }

    fn rows_with(bad_row: usize, bad: &str) -> String {
        let mut text = String::from("time,v,i\n");
        for k in 0..400 {
            if k == bad_row {
                text.push_str(bad);
            } else {
                text.push_str(&format!("{},{},{}\n", k as f64 * 0.5, k % 13, k % 7));
            }
            if k == 10 {
                text.push('\n'); // a blank line shifts the line numbers of what follows
            }
        }
        text
    }

    #[test]
    fn errors_in_the_second_half_name_their_line() {
        // Rows 0..=10 are on lines 2..=12, the blank line is 13, row k > 10 on line k + 3.
        let k = error_at(&rows_with(350, "175,abc,1\n"), 353);
        assert!(
            matches!(&k, LoadErrorKind::NotANumber { column, text } if column == "v" && text == "abc"),
            "{k}"
        );
        let k = error_at(&rows_with(290, "145,1,nan\n"), 293);
        assert!(
            matches!(&k, LoadErrorKind::NotFinite { column, .. } if column == "i"),
            "{k}"
        );
        let k = error_at(&rows_with(333, "166.5,1\n"), 336);
        assert!(
            matches!(
                k,
                LoadErrorKind::ShortRow {
                    found: 2,
                    expected: 3
                }
            ),
            "{k}"
        );
    }

    #[test]
    fn time_going_back_is_reported_at_the_first_offending_line_wherever_the_cuts_fall() {
        // The step back sits at every row in turn, so it meets every seam of every tuning.
        for bad in 12..399 {
            let text = rows_with(bad, &format!("{},1,1\n", (bad - 1) as f64 * 0.5));
            let k = error_at(&text, bad as u64 + 3);
            assert!(matches!(k, LoadErrorKind::NonMonotonicTime { .. }), "{k}");
        }
        // Two problems: the earlier one (time, in the first half) wins over a later bad cell.
        let mut text = rows_with(120, "59.5,1,1\n");
        text = text.replace("\n170,", "\n170,zz");
        let k = error_at(&text, 123);
        assert!(matches!(k, LoadErrorKind::NonMonotonicTime { .. }), "{k}");
    }

    #[test]
    fn time_checks_of_parts_append_to_the_check_of_the_whole() {
        let times = [0.0, 0.1, 0.25, 0.3, 0.45, 0.5, 0.62, 0.7];
        let mut whole = TimeCheck::default();
        for &t in &times {
            whole.push(t).unwrap();
        }
        for cut1 in 0..=times.len() {
            for cut2 in cut1..=times.len() {
                let mut joined = TimeCheck::default();
                for part in [&times[..cut1], &times[cut1..cut2], &times[cut2..]] {
                    let mut c = TimeCheck::default();
                    for &t in part {
                        c.push(t).unwrap();
                    }
                    joined.append(&c).unwrap();
                }
                assert_eq!(joined, whole, "cuts {cut1} {cut2}");
            }
        }
        let mut a = TimeCheck::default();
        a.push(1.0).unwrap();
        let mut b = TimeCheck::default();
        b.push(1.0).unwrap();
        assert!(a.append(&b).is_err(), "equal times across the seam");
    }

    #[test]
    fn rows_beyond_the_estimate_still_arrive_in_order() {
        // Long rows in the sniffed head, short rows after it: the pre-sized shares overflow.
        let mut text = String::from("time,v,i\n");
        let mut k = 0;
        while text.len() < 70_000 {
            text.push_str(&format!(
                "{k}.000000000000,{k}.000000000000,1.000000000000\n"
            ));
            k += 1;
        }
        for _ in 0..30_000 {
            text.push_str(&format!("{k},{k},2\n"));
            k += 1;
        }
        let f = temp_csv(text.as_bytes());
        for (parts, block) in [(1, 4096), (2, 4096), (3, 999), (5, 1 << 16)] {
            let (fast, reference) = both_readers(f.path(), tiny(parts, block));
            let reference = reference.unwrap();
            assert_eq!(reference.rows(), k);
            assert!(
                reference.data[0]
                    .iter()
                    .enumerate()
                    .all(|(n, &x)| x == n as f64)
            );
            assert_eq!(
                fast.as_ref(),
                Some(&reference),
                "{parts} parts, block {block}"
            );
        }
    }

    #[test]
    fn capture_results_do_not_depend_on_the_cuts() {
        let text = plain_text(2000, "\r\n");
        let f = temp_csv(text.as_bytes());
        let opts = LoadOptions {
            rate_hz: Some(1010.0),
            ..Default::default()
        };
        let one = load_with(f.path(), &opts, tiny(1, 1 << 20)).unwrap();
        assert!(!one.warnings.is_empty(), "rate mismatch expected");
        for (parts, block) in TUNINGS {
            let c = load_with(f.path(), &opts, tiny(parts, block)).unwrap();
            assert_eq!(c, one, "{parts} parts, block {block}");
        }
    }

    #[test]
    fn decimal_takes_plain_numbers_and_leaves_the_rest() {
        for (s, x, n) in [
            (&b"340.49,1"[..], 340.49, 6),
            (b"-0.000001", -1e-6, 9),
            (b"+2", 2.0, 2),
            (b".5;", 0.5, 2),
            (b"5.", 5.0, 2),
            (b"1.5e-3\n", 1.5e-3, 6),
            (b"-2.5E+02", -250.0, 8),
        ] {
            assert_eq!(decimal(s), Some((x, n)), "{}", String::from_utf8_lossy(s));
        }
        assert_eq!(
            decimal(b"-0").map(|(x, _)| x.to_bits()),
            Some((-0.0f64).to_bits())
        );
        for s in [
            &b""[..],
            b"-",
            b".",
            b"abc",
            b"1e",
            b"1e+",
            b"nan",
            b"inf",
            b"1234567890123456",
            b"1e-30",
            b"1e123456",
        ] {
            assert_eq!(decimal(s), None, "{}", String::from_utf8_lossy(s));
        }
    }

    proptest! {
        #[test]
        fn decimal_gives_the_bits_fast_float2_gives(
            s in r"[+-]?[0-9]{0,17}(\.[0-9]{0,17})?([eE][+-]?[0-9]{0,5})?[,;\t x]?"
        ) {
            if let Some((x, n)) = decimal(s.as_bytes()) {
                let (y, m) = fast_float2::parse_partial::<f64, _>(s.as_bytes()).unwrap();
                prop_assert_eq!(x.to_bits(), y.to_bits());
                prop_assert_eq!(n, m);
            }
        }
    }
}
