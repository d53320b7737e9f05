//! CSV / TSV / TXT loader.
//!
//! The layout is sniffed from the first 64 KiB: UTF-8 BOM, delimiter (`,` `;` or tab), an optional
//! preamble of `key<delim>value` lines (a sample interval or rate is taken from it), an optional
//! header, a decimal comma (only with `;`), and a time column found by name or by evenly
//! increasing values. The rows are then streamed with the `csv` crate's byte records and parsed
//! straight into two `f64` columns (no per-cell `String`); the time column is checked on the fly
//! and never stored.

use super::{Capture, LoadError, LoadErrorKind, LoadOptions, SourceFormat, Trace, pick_channels};
use crate::warning::Warning;
use std::fs::File;
use std::io::{BufReader, Read, Seek, SeekFrom};
use std::path::Path;

const SNIFF_BYTES: usize = 64 * 1024;
/// Relative sample-interval spread above which a warning is given (the issue's 1 %).
const JITTER_WARN: f64 = 0.01;
/// Relative disagreement between `--rate` and the file's time base that earns a warning.
const RATE_MISMATCH: f64 = 1e-3;

/// What sniffing found out about the layout.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Layout {
    delimiter: u8,
    decimal_comma: bool,
    /// Byte offset of the first data row (after the BOM, preamble and header).
    data_offset: u64,
    /// 1-based line number of the first data row.
    data_line: u64,
    /// Column names (from the header, or `column N`).
    names: Vec<String>,
    /// 0-based index of the time column, if any.
    time_col: Option<usize>,
    /// Sample rate from a preamble, if any.
    preamble_rate_hz: Option<f64>,
    /// Average bytes per data row in the sample, to pre-size the columns.
    bytes_per_row: f64,
}

/// Parses one cell, trimming ASCII space; with `decimal_comma` a `,` is read as the decimal point.
pub(crate) fn parse_f64(cell: &[u8], decimal_comma: bool) -> Option<f64> {
    let cell = cell.trim_ascii();
    if cell.is_empty() {
        return None;
    }
    if decimal_comma && cell.contains(&b',') {
        let mut buf = [0u8; 64];
        if cell.len() > buf.len() {
            return None;
        }
        for (d, &s) in buf.iter_mut().zip(cell) {
            *d = if s == b',' { b'.' } else { s };
        }
        return fast_float2::parse(&buf[..cell.len()]).ok();
    }
    fast_float2::parse(cell).ok()
}

fn shorten(cell: &[u8]) -> String {
    let s = String::from_utf8_lossy(cell.trim_ascii());
    if s.chars().count() > 24 {
        format!("{}...", s.chars().take(24).collect::<String>())
    } else {
        s.into_owned()
    }
}

fn split(line: &[u8], d: u8) -> impl Iterator<Item = &[u8]> {
    line.split(move |&b| b == d)
}

fn unquote(cell: &[u8]) -> String {
    let t = cell.trim_ascii();
    let t = t
        .strip_prefix(b"\"")
        .and_then(|t| t.strip_suffix(b"\""))
        .unwrap_or(t);
    String::from_utf8_lossy(t).trim().to_string()
}

fn is_numeric_line(line: &[u8], d: u8, decimal_comma: bool, width: usize) -> bool {
    let mut n = 0;
    for cell in split(line, d) {
        n += 1;
        if parse_f64(cell, decimal_comma).is_none() {
            return false;
        }
    }
    n == width
}

const TIME_NAMES: &[&str] = &["time", "t", "s", "sec", "secs", "second", "seconds", "x"];

/// Works out the layout from the first bytes of the file (BOM already removed by the caller).
pub(crate) fn sniff(sample: &[u8], at_eof: bool) -> Result<Layout, LoadErrorKind> {
    let controls = sample
        .iter()
        .filter(|&&b| b == 0 || (b < 0x20 && !matches!(b, b'\t' | b'\n' | b'\r')))
        .count();
    if controls > 0 && controls * 100 >= sample.len().max(1) || sample.contains(&0) {
        return Err(LoadErrorKind::NotACapture("binary content".into()));
    }
    // Lines with their byte offsets; an unfinished last line is dropped unless at end of file.
    let mut lines: Vec<(u64, &[u8])> = Vec::new();
    let mut start = 0usize;
    for (k, &b) in sample.iter().enumerate() {
        if b == b'\n' {
            lines.push((start as u64, strip_cr(&sample[start..k])));
            start = k + 1;
        }
    }
    if at_eof && start < sample.len() {
        lines.push((start as u64, strip_cr(&sample[start..])));
    }
    let content: Vec<usize> = (0..lines.len())
        .filter(|&k| !lines[k].1.trim_ascii().is_empty())
        .collect();
    if content.is_empty() {
        return Err(LoadErrorKind::Empty);
    }
    // Delimiter: the first of tab, ';', ',' that splits the last lines into a steady count >= 2.
    let tail: Vec<&[u8]> = content.iter().rev().take(20).map(|&k| lines[k].1).collect();
    // The last line and most of the tail must agree on the count (a preamble may sit in the tail).
    let mut chosen = None;
    for d in [b'\t', b';', b','] {
        let last = split(tail[0], d).count();
        let agree = tail.iter().filter(|l| split(l, d).count() == last).count();
        if last >= 2 && agree * 5 >= tail.len() * 3 {
            chosen = Some((d, last));
            break;
        }
    }
    let Some((delimiter, width)) = chosen else {
        let numeric_single = tail.iter().all(|l| parse_f64(l, false).is_some());
        return Err(if numeric_single {
            LoadErrorKind::OneChannel
        } else {
            LoadErrorKind::NotACapture("no delimited columns of numbers found".into())
        });
    };
    let decimal_comma = delimiter == b';' && tail.iter().any(|l| l.contains(&b','));
    // First data line: it and the next few content lines are all numeric rows of full width.
    let numeric: Vec<bool> = content
        .iter()
        .map(|&k| is_numeric_line(lines[k].1, delimiter, decimal_comma, width))
        .collect();
    let first = (0..content.len()).find(|&c| {
        let upto = (c + 4).min(content.len());
        numeric[c..upto].iter().all(|&x| x)
    });
    let Some(first) = first else {
        // A row that is not numeric within the sample: report it when a header-like line exists
        // and data-like lines follow; otherwise there is no data at all.
        if let Some(c) = (1..content.len()).find(|&c| !numeric[c] && numeric[c - 1]) {
            return Err(bad_cell(lines[content[c]].1, delimiter, decimal_comma, &[]));
        }
        return Err(LoadErrorKind::HeaderOnly);
    };
    let data_idx = content[first];
    // Header: the content line just before the data, of full width, with no numeric field.
    let mut names: Option<Vec<String>> = None;
    let mut preamble_end = first;
    if first > 0 {
        let h = lines[content[first - 1]].1;
        let cells: Vec<&[u8]> = split(h, delimiter).collect();
        if cells.len() == width && cells.iter().all(|c| parse_f64(c, decimal_comma).is_none()) {
            names = Some(cells.iter().map(|c| unquote(c)).collect());
            preamble_end = first - 1;
        }
    }
    let names = names.unwrap_or_else(|| (1..=width).map(|k| format!("column {k}")).collect());
    // Preamble: key<delim>value lines.
    let mut preamble_rate_hz = None;
    for &k in &content[..preamble_end] {
        let mut cells = split(lines[k].1, delimiter);
        let key = cells.next().map(unquote).unwrap_or_default().to_lowercase();
        let Some(value) = cells
            .next()
            .and_then(|v| number_with_unit(v, decimal_comma))
        else {
            continue;
        };
        if value <= 0.0 {
            continue;
        }
        let is_interval = key.contains("interval")
            || key.contains("increment")
            || key.contains("period")
            || key == "dt";
        let is_rate = key.contains("rate") || key.contains("frequency") || key == "fs";
        if is_interval {
            preamble_rate_hz = Some(1.0 / value);
        } else if is_rate && key.contains("sampl") || key == "fs" || key == "sample rate" {
            preamble_rate_hz = Some(value);
        }
    }
    // Time column: by name anywhere, else the first column when its values rise evenly.
    let data_lines: Vec<&[u8]> = content[first..].iter().map(|&k| lines[k].1).collect();
    let time_col = names
        .iter()
        .position(|n| {
            let b = super::base_name(n);
            TIME_NAMES.contains(&b.as_str()) || b.starts_with("time")
        })
        .or_else(|| {
            (width >= 3 && rises_evenly(&data_lines, delimiter, decimal_comma)).then_some(0)
        });
    let data_bytes: usize = data_lines.iter().map(|l| l.len() + 1).sum();
    Ok(Layout {
        delimiter,
        decimal_comma,
        data_offset: lines[data_idx].0,
        data_line: data_idx as u64 + 1,
        names,
        time_col,
        preamble_rate_hz,
        bytes_per_row: data_bytes as f64 / data_lines.len().max(1) as f64,
    })
}

fn strip_cr(line: &[u8]) -> &[u8] {
    line.strip_suffix(b"\r").unwrap_or(line)
}

/// A preamble value such as `1e-5`, `2000 Hz`, `10 kS/s` or `0,5 ms`.
fn number_with_unit(cell: &[u8], decimal_comma: bool) -> Option<f64> {
    let s = unquote(cell);
    let split_at = s
        .find(|c: char| c.is_ascii_alphabetic() && c != 'e' && c != 'E')
        .unwrap_or(s.len());
    let (num, unit) = s.split_at(split_at);
    let v = parse_f64(num.as_bytes(), decimal_comma)?;
    let unit = unit.trim();
    let scale = match unit.chars().next() {
        Some('k') | Some('K') => 1e3,
        Some('M') => 1e6,
        Some('m') => 1e-3,
        Some('u') | Some('µ') => 1e-6,
        Some('n') => 1e-9,
        _ => 1.0,
    };
    Some(v * scale)
}

fn rises_evenly(rows: &[&[u8]], d: u8, decimal_comma: bool) -> bool {
    let t: Vec<f64> = rows
        .iter()
        .filter_map(|l| split(l, d).next().and_then(|c| parse_f64(c, decimal_comma)))
        .collect();
    if t.len() < 3 {
        return false;
    }
    let steps: Vec<f64> = t.windows(2).map(|w| w[1] - w[0]).collect();
    let mean = (t[t.len() - 1] - t[0]) / (t.len() - 1) as f64;
    mean > 0.0
        && steps
            .iter()
            .all(|s| *s > 0.0 && (s - mean).abs() <= 0.01 * mean)
}

fn bad_cell(line: &[u8], d: u8, decimal_comma: bool, names: &[String]) -> LoadErrorKind {
    for (k, cell) in split(line, d).enumerate() {
        if parse_f64(cell, decimal_comma).is_none() {
            let column = names
                .get(k)
                .cloned()
                .unwrap_or_else(|| format!("column {}", k + 1));
            return LoadErrorKind::NotANumber {
                column,
                text: shorten(cell),
            };
        }
    }
    LoadErrorKind::HeaderOnly
}

/// Loads a delimited-text capture.
pub(crate) fn load(path: &Path, opts: &LoadOptions) -> Result<Capture, LoadError> {
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

    let data: Vec<usize> = (0..layout.names.len())
        .filter(|&c| Some(c) != layout.time_col)
        .collect();
    let (vc, ic) = pick_channels(&layout.names, &data, opts).map_err(|k| err(None, k))?;

    file.seek(SeekFrom::Start(bom as u64 + layout.data_offset))
        .map_err(|e| err(None, e.into()))?;
    let mut rdr = ::csv::ReaderBuilder::new()
        .delimiter(layout.delimiter)
        .has_headers(false)
        .flexible(true)
        .buffer_capacity(256 * 1024)
        .from_reader(BufReader::with_capacity(256 * 1024, file));

    let est_rows = ((file_len as f64) / layout.bytes_per_row.max(1.0) * 1.02) as usize + 16;
    let mut v = Vec::with_capacity(est_rows);
    let mut i = Vec::with_capacity(est_rows);
    let need = vc.max(ic).max(layout.time_col.unwrap_or(0)) + 1;
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
            match parse_f64(raw, layout.decimal_comma) {
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
        if let Some(tc) = layout.time_col {
            let t = cell(tc)?;
            time.push(t).map_err(|k| err(line_of(&rec), k))?;
        }
        v.push(cell(vc)?);
        i.push(cell(ic)?);
    }
    if v.len() < 2 {
        return Err(err(None, LoadErrorKind::TooShort(v.len())));
    }

    let mut warnings = Vec::new();
    let file_rate = if layout.time_col.is_some() {
        let (rate, jitter) = time.rate_and_jitter();
        if jitter > JITTER_WARN {
            warnings.push(Warning::TimeJitter {
                percent: jitter * 100.0,
            });
        }
        Some(rate)
    } else {
        layout.preamble_rate_hz
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
    Ok(Capture {
        path: path.to_path_buf(),
        format: SourceFormat::Csv {
            delimiter: layout.delimiter,
            decimal_comma: layout.decimal_comma,
        },
        sample_rate_hz,
        voltage: Trace {
            name: layout.names[vc].clone(),
            samples: v,
            full_scale: None,
        },
        current: Trace {
            name: layout.names[ic].clone(),
            samples: i,
            full_scale: None,
        },
        warnings,
    })
}

/// Streaming check of a time column: strictly increasing, with its interval spread.
#[derive(Debug, Default)]
struct TimeCheck {
    first: f64,
    last: f64,
    n: u64,
    min_dt: f64,
    max_dt: f64,
}

impl TimeCheck {
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
                self.min_dt = self.min_dt.min(dt);
                self.max_dt = self.max_dt.max(dt);
            }
        } else {
            self.first = t;
        }
        self.last = t;
        self.n += 1;
        Ok(())
    }

    /// Mean rate in Hz and the largest relative deviation of one interval from the mean.
    fn rate_and_jitter(&self) -> (f64, f64) {
        let mean = (self.last - self.first) / (self.n - 1) as f64;
        let jitter = ((self.max_dt - mean).max(mean - self.min_dt)) / mean;
        (1.0 / mean, jitter)
    }
}

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
        let rate = l.preamble_rate_hz.unwrap();
        assert!((rate - 5000.0).abs() < 1e-9, "{rate}");
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
    fn preamble_values_with_units() {
        assert_eq!(number_with_unit(b"10 kS/s", false), Some(10_000.0));
        assert_eq!(number_with_unit(b"0,5 ms", true), Some(0.5e-3));
        assert_eq!(number_with_unit(b"2e-6", false), Some(2e-6));
        assert_eq!(number_with_unit(b"1 MS/s", false), Some(1e6));
    }
}
