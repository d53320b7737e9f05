//! Sniffing a CSV file's layout from its first 64 KiB: the delimiter, a preamble and the sample
//! rate it states, the header and what each column holds, a decimal comma, the time column and
//! how finely it is written; and the cell readers the sniffing and the loading share.

use super::super::LoadErrorKind;
use super::super::channel::{Channel, Content, Role, Unit};
use super::datetime::{fraction_digits, parse_datetime};

/// What sniffing found out about the layout.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Layout {
    pub(super) delimiter: u8,
    pub(super) decimal_comma: bool,
    /// Byte offset of the first data row (after the BOM, preamble and header).
    pub(super) data_offset: u64,
    /// 1-based line number of the first data row.
    pub(super) data_line: u64,
    /// 1-based line number of the header, if there is one.
    pub(super) header_line: Option<u64>,
    /// Column names (from the header, or `column N`).
    pub(super) names: Vec<String>,
    /// Every column as understood: unit, role, whether it holds numbers.
    pub(super) channels: Vec<Channel>,
    /// 0-based index of the time column, if any.
    pub(super) time_col: Option<usize>,
    /// How finely the time column is written, as seen in the first rows.
    pub(super) time_digits: Digits,
    /// When the time column holds date-times: the first data row's, in nanoseconds since 1970
    /// (every time is read relative to it, so differences stay exact).
    pub(super) time_base_ns: Option<i128>,
    /// That first date-time as written.
    pub(super) time_base_text: Option<String>,
    /// The sample rate a preamble states, if any.
    pub(super) preamble_rate: PreambleRate,
    /// Average bytes per data row in the sample, to pre-size the columns.
    pub(super) bytes_per_row: f64,
}

/// The sample rate a file's preamble states.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum PreambleRate {
    /// None stated.
    None,
    /// Stated with a unit (`fs,5000 Hz`, `Sample rate,5000,Hz`), or as an interval (read in
    /// seconds when it gives no unit, as scope exports write it); `line` is 1-based.
    Stated { hz: f64, line: u64 },
    /// Stated so that it cannot be taken (a rate without a unit, two rates that differ): why,
    /// with its line, and the rate to show in the advice.
    Unclear { line: u64, why: String, hz: f64 },
}

/// One preamble line's statement of the sample rate: the rate, and whether the line says its
/// unit. `None` for a line that states no rate or interval.
pub(super) fn preamble_statement(cells: &[&[u8]], decimal_comma: bool) -> Option<(f64, bool)> {
    let key = unquote(cells.first()?).to_lowercase();
    let is_interval = key.contains("interval")
        || key.contains("increment")
        || key.contains("period")
        || key == "dt";
    let is_rate = (key.contains("rate") || key.contains("frequency")) && key.contains("sampl")
        || key == "fs"
        || key == "sample rate";
    if !is_interval && !is_rate {
        return None;
    }
    let (value, mut unit) = value_and_unit(cells.get(1)?, decimal_comma)?;
    // the unit in a cell of its own: `Sample rate,5000,Hz`
    if unit.is_empty()
        && let Some(u) = cells.get(2).map(|c| unquote(c))
        && !u.is_empty()
        && u.chars().all(|c| c.is_alphabetic() || c == '/')
    {
        unit = u;
    }
    if !(value.is_finite() && value > 0.0) {
        return None;
    }
    if is_interval {
        // an interval without its unit is in seconds (scope exports write it so)
        let scale = match unit.as_str() {
            "" | "s" | "sec" => 1.0,
            "ms" => 1e-3,
            "us" | "µs" | "μs" => 1e-6,
            "ns" => 1e-9,
            _ => return None,
        };
        return Some((1.0 / (value * scale), true));
    }
    let (scale, rest) = match unit.chars().next() {
        Some('k' | 'K') => (1e3, &unit[1..]),
        Some('M') => (1e6, &unit[1..]),
        _ => (1.0, unit.as_str()),
    };
    match rest.to_lowercase().as_str() {
        "" if unit.is_empty() => Some((value, false)),
        "hz" | "s/s" | "sa/s" | "sps" | "samples/s" | "s/sec" | "sa/sec" => {
            Some((value * scale, true))
        }
        _ => None,
    }
}

/// What a preamble's lines (1-based line, cells) say of the sample rate, all of them together:
/// one rate stated with its unit (or stated again alike) is taken; a rate without a unit, or two
/// rates that differ, make it [`PreambleRate::Unclear`].
pub(super) fn preamble_rate(lines: &[(u64, Vec<&[u8]>)], decimal_comma: bool) -> PreambleRate {
    let said: Vec<(u64, f64, bool)> = lines
        .iter()
        .filter_map(|(n, cells)| {
            preamble_statement(cells, decimal_comma).map(|(hz, unit)| (*n, hz, unit))
        })
        .collect();
    let Some(&(line, hz, _)) = said.first() else {
        return PreambleRate::None;
    };
    let text = |n: u64| {
        lines
            .iter()
            .find(|(k, _)| *k == n)
            .map(|(_, c)| {
                c.iter()
                    .map(|c| String::from_utf8_lossy(c.trim_ascii()).into_owned())
                    .collect::<Vec<_>>()
                    .join(" ")
            })
            .unwrap_or_default()
    };
    if let Some(&(other, other_hz, _)) = said.iter().find(|(_, h, _)| ((h - hz) / hz).abs() > 1e-9)
    {
        return PreambleRate::Unclear {
            line: other,
            why: format!(
                "the preamble states two sample rates, {} Hz (line {line}: '{}') and {} Hz \
                 (line {other}: '{}')",
                short_hz(hz),
                text(line),
                short_hz(other_hz),
                text(other)
            ),
            hz,
        };
    }
    match said.iter().find(|(_, _, unit)| *unit) {
        Some(&(line, hz, _)) => PreambleRate::Stated { hz, line },
        None => PreambleRate::Unclear {
            line,
            why: format!(
                "the preamble gives the sample rate as '{}' without a unit (Hz or S/s)",
                text(line)
            ),
            hz,
        },
    }
}

/// A rate as a person writes it: `5000`, `12.5`, `1e6` for a million.
pub(super) fn short_hz(hz: f64) -> String {
    format!("{}", (hz * 1e6).round() / 1e6)
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

/// A cell without the spaces around it and the quotes around the whole of it (`"0.001"`, as
/// spreadsheets and some loggers write every field); quotes anywhere else stay.
pub(super) fn bare(cell: &[u8]) -> &[u8] {
    let t = cell.trim_ascii();
    match t {
        [b'"', inner @ .., b'"'] => inner.trim_ascii(),
        _ => t,
    }
}

/// [`parse_f64`] of a [`bare`] cell: how the sniffer reads a cell, quoted or not (the row readers
/// see quoted fields only through the `csv` crate, which takes the quotes off).
pub(super) fn sniff_f64(cell: &[u8], decimal_comma: bool) -> Option<f64> {
    parse_f64(bare(cell), decimal_comma)
}

pub(super) fn shorten(cell: &[u8]) -> String {
    let s = String::from_utf8_lossy(cell.trim_ascii());
    if s.chars().count() > 24 {
        format!("{}...", s.chars().take(24).collect::<String>())
    } else {
        s.into_owned()
    }
}

pub(super) fn split(line: &[u8], d: u8) -> impl Iterator<Item = &[u8]> {
    line.split(move |&b| b == d)
}

pub(super) fn unquote(cell: &[u8]) -> String {
    let t = cell.trim_ascii();
    let t = t
        .strip_prefix(b"\"")
        .and_then(|t| t.strip_suffix(b"\""))
        .unwrap_or(t);
    String::from_utf8_lossy(t).trim().to_string()
}

/// A row of full width whose number columns all hold numbers (other columns may hold anything).
pub(super) fn is_numeric_line(line: &[u8], d: u8, decimal_comma: bool, numeric: &[bool]) -> bool {
    let mut n = 0;
    for (k, cell) in split(line, d).enumerate() {
        n += 1;
        if numeric.get(k) == Some(&true) && sniff_f64(cell, decimal_comma).is_none() {
            return false;
        }
    }
    n == numeric.len()
}

/// How many decimals the time column is written with: the coarsest seen among plain numbers
/// (`0.000123`: 6) and among numbers with an exponent (`1.23e-04`: 2 in the mantissa).
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub(super) struct Digits {
    pub(super) fixed: Option<i32>,
    pub(super) scientific: Option<i32>,
}

impl Digits {
    pub(super) fn see(&mut self, cell: &[u8], decimal_comma: bool) {
        let cell = bare(cell);
        let (mantissa, has_exp) = match cell.iter().position(|&b| b == b'e' || b == b'E') {
            Some(e) => (&cell[..e], true),
            None => (cell, false),
        };
        let point = |b: &u8| *b == b'.' || (decimal_comma && *b == b',');
        let decimals = mantissa
            .iter()
            .position(point)
            .map_or(0, |p| (mantissa.len() - p - 1) as i32);
        let slot = if has_exp {
            &mut self.scientific
        } else {
            &mut self.fixed
        };
        *slot = Some(slot.map_or(decimals, |d| d.min(decimals)));
    }

    /// The step of the last written digit for values up to `magnitude`, in the file's unit.
    pub(super) fn resolution(&self, magnitude: f64) -> f64 {
        let fixed = self.fixed.map_or(0.0, |d| 10f64.powi(-d));
        let sci = self.scientific.map_or(0.0, |d| {
            let e = if magnitude > 0.0 {
                magnitude.log10().floor() as i32
            } else {
                0
            };
            10f64.powi(e - d)
        });
        fixed.max(sci)
    }
}

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
    // Text with no line holding two numbers at all (notes, prose): not a capture, rather than a
    // capture in a layout we do not read.
    let text_only = || {
        content.iter().all(|&k| {
            lines[k]
                .1
                .split(|b| matches!(b, b'\t' | b';' | b',' | b' '))
                .filter(|t| sniff_f64(t, false).is_some())
                .nth(1)
                .is_none()
        })
    };
    let Some((delimiter, width)) = chosen else {
        let numeric_single = tail.iter().all(|l| sniff_f64(l, false).is_some());
        return Err(if numeric_single {
            LoadErrorKind::OneChannel
        } else if text_only() {
            LoadErrorKind::TextOnly
        } else {
            LoadErrorKind::NotACapture("no delimited columns of numbers found".into())
        });
    };
    let decimal_comma = delimiter == b';' && tail.iter().any(|l| l.contains(&b','));
    // Which columns hold numbers: those whose cells parse on most full-width lines of the tail
    // (blank, marker and text columns do not; they are left out unless chosen).
    let full: Vec<Vec<&[u8]>> = tail
        .iter()
        .map(|l| split(l, delimiter).collect::<Vec<_>>())
        .filter(|cells| cells.len() == width)
        .collect();
    let col_content: Vec<Content> = (0..width)
        .map(|k| {
            let numbers = full
                .iter()
                .filter(|c| sniff_f64(c[k], decimal_comma).is_some())
                .count();
            if numbers * 2 > full.len() {
                Content::Numbers
            } else if full.iter().all(|c| c[k].trim_ascii().is_empty()) {
                Content::Blank
            } else {
                Content::Text
            }
        })
        .collect();
    let numeric_cols: Vec<bool> = col_content.iter().map(|c| *c == Content::Numbers).collect();
    if !numeric_cols.contains(&true) {
        // one line of names is a capture's header with no rows; more lines of text are notes
        return Err(if content.len() > 1 && text_only() {
            LoadErrorKind::TextOnly
        } else {
            LoadErrorKind::HeaderOnly
        });
    }
    // First data line: the first row of full width with numbers in every number column.
    let numeric: Vec<bool> = content
        .iter()
        .map(|&k| is_numeric_line(lines[k].1, delimiter, decimal_comma, &numeric_cols))
        .collect();
    // A text row after the first numeric row is reported by the row parser with its line
    // number, never taken for preamble.
    let Some(mut first) = (0..content.len()).find(|&c| numeric[c]) else {
        return Err(LoadErrorKind::HeaderOnly);
    };
    let cells_of = |c: usize| -> Vec<&[u8]> { split(lines[content[c]].1, delimiter).collect() };
    let has_number = |cells: &[&[u8]]| cells.iter().any(|c| sniff_f64(c, decimal_comma).is_some());
    // Full-width rows with some numbers just above the first clean row are damaged data rows
    // (the row parser will name them), unless nothing that looks like a header sits above them.
    let mut back = first;
    while back > 0 {
        let cells = cells_of(back - 1);
        // a preamble's `Sample interval,0.00025` is not a damaged row
        if cells.len() == width
            && has_number(&cells)
            && preamble_statement(&cells, decimal_comma).is_none()
        {
            back -= 1;
        } else {
            break;
        }
    }
    if back > 0 && back < first {
        let above = cells_of(back - 1);
        if above.len() == width
            && !has_number(&above)
            && preamble_statement(&above, decimal_comma).is_none()
        {
            first = back;
        }
    }
    let data_idx = content[first];
    // Header: the content line just before the data, of full width, with no numeric field.
    let mut names: Option<Vec<String>> = None;
    let mut header_idx = None;
    let mut preamble_end = first;
    if first > 0 {
        let cells = cells_of(first - 1);
        // `fs,5000 Hz` above two columns of numbers is the rate, not the columns' names
        if cells.len() == width
            && !has_number(&cells)
            && preamble_statement(&cells, decimal_comma).is_none()
        {
            names = Some(cells.iter().map(|c| unquote(c)).collect());
            preamble_end = first - 1;
            header_idx = Some(content[first - 1]);
        }
    }
    let has_header = names.is_some();
    let names = names.unwrap_or_else(|| (1..=width).map(|k| format!("column {k}")).collect());
    let mut channels: Vec<Channel> = names
        .iter()
        .zip(&col_content)
        .enumerate()
        .map(|(k, (n, &c))| {
            if has_header {
                Channel::from_header(n, k + 1, c)
            } else {
                Channel::unnamed(n.clone(), k + 1, c)
            }
        })
        .collect();
    // A column of date-times (a data logger's ISO 8601 time stamps) is the time base: the one
    // named like time, else the first such column.
    let is_datetime_col = |k: usize| {
        col_content[k] == Content::Text
            && !full.is_empty()
            && full.iter().all(|c| parse_datetime(c[k]).is_some())
    };
    let datetime_col = channels
        .iter()
        .position(|c| c.role == Role::Time && is_datetime_col(c.column - 1))
        .or_else(|| (0..width).find(|&k| is_datetime_col(k)));
    if let Some(k) = datetime_col {
        let c = &mut channels[k];
        c.role = Role::Time;
        c.unknown_unit = None;
        c.unit = Some(Unit {
            role: Role::Time,
            symbol: "date-time".into(),
            scale: 1.0,
        });
    }
    // A time-named column without numbers or date-times is not the time base.
    for (k, c) in channels.iter_mut().enumerate() {
        if c.role == Role::Time && c.content != Content::Numbers && Some(k) != datetime_col {
            c.role = Role::Unknown;
        }
    }
    // Preamble: key<delim>value lines.
    let preamble: Vec<(u64, Vec<&[u8]>)> = content[..preamble_end]
        .iter()
        .map(|&k| (k as u64 + 1, split(lines[k].1, delimiter).collect()))
        .collect();
    let preamble_rate = preamble_rate(&preamble, decimal_comma);
    // Time column: by name anywhere, else the first column when its values rise evenly.
    let data_lines: Vec<&[u8]> = content[first..].iter().map(|&k| lines[k].1).collect();
    let number_cols = numeric_cols.iter().filter(|&&n| n).count();
    let time_col = channels
        .iter()
        .position(|c| c.role == Role::Time)
        .or_else(|| {
            (number_cols >= 3
                && channels[0].role == Role::Unknown
                && channels[0].unknown_unit.is_none()
                && channels[0].content == Content::Numbers
                && rises_evenly(&data_lines, delimiter, decimal_comma))
            .then_some(0)
        });
    if let Some(tc) = time_col {
        channels[tc].role = Role::Time;
    }
    let mut time_digits = Digits::default();
    let mut time_base_ns = None;
    let mut time_base_text = None;
    if let Some(tc) = time_col {
        for l in &data_lines {
            if let Some(cell) = split(l, delimiter).nth(tc) {
                if Some(tc) == datetime_col {
                    // the resolution of a time stamp is its last fraction digit
                    if let Some(d) = fraction_digits(cell) {
                        time_digits.fixed = Some(time_digits.fixed.map_or(d, |f| f.min(d)));
                    }
                    if time_base_ns.is_none() {
                        time_base_ns = parse_datetime(cell);
                        time_base_text = time_base_ns.map(|_| {
                            String::from_utf8_lossy(cell)
                                .trim()
                                .trim_matches('"')
                                .to_string()
                        });
                    }
                } else {
                    time_digits.see(cell, decimal_comma);
                }
            }
        }
    }
    let data_bytes: usize = data_lines.iter().map(|l| l.len() + 1).sum();
    Ok(Layout {
        delimiter,
        decimal_comma,
        data_offset: lines[data_idx].0,
        data_line: data_idx as u64 + 1,
        header_line: header_idx.map(|k| k as u64 + 1),
        names,
        channels,
        time_col,
        time_digits,
        time_base_ns,
        time_base_text,
        preamble_rate,
        bytes_per_row: data_bytes as f64 / data_lines.len().max(1) as f64,
    })
}

pub(super) fn strip_cr(line: &[u8]) -> &[u8] {
    line.strip_suffix(b"\r").unwrap_or(line)
}

/// A preamble value such as `1e-5`, `2000 Hz`, `10 kS/s` or `0,5 ms`: the number and its unit
/// as written (empty when none).
pub(super) fn value_and_unit(cell: &[u8], decimal_comma: bool) -> Option<(f64, String)> {
    let s = unquote(cell);
    let split_at = s
        .find(|c: char| c.is_alphabetic() && c != 'e' && c != 'E')
        .unwrap_or(s.len());
    let (num, unit) = s.split_at(split_at);
    let v = parse_f64(num.as_bytes(), decimal_comma)?;
    Some((v, unit.trim().to_string()))
}

pub(super) fn rises_evenly(rows: &[&[u8]], d: u8, decimal_comma: bool) -> bool {
    let t: Vec<f64> = rows
        .iter()
        .filter_map(|l| split(l, d).next().and_then(|c| sniff_f64(c, decimal_comma)))
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
