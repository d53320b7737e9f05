//! IEEE Std C37.111 (COMTRADE, the 1991, 1999 and 2013 revisions; IEC 60255-24:2013) records: a
//! `.cfg` text file that names the channels and their scaling, and a `.dat` file of samples in
//! ASCII, BINARY (16-bit), BINARY32 or FLOAT32.
//!
//! Values are `a·x + b` in the channel's units (from memory of the standard's definitions); a
//! channel whose `PS` flag is `S` holds secondary values and is turned to primary by its
//! `primary/secondary` ratio unless secondary values are asked for. Channel roles come from the
//! units (`V`, `kV`, `A`, `kA`...) and the phase from the `ph` field, then from the names as for
//! text captures. Missing-data markers (0x8000 in BINARY, 0x80000000 in BINARY32, NaN in
//! FLOAT32, an empty ASCII field) are refused with the sample that holds one, never read as
//! numbers. The single-file `.cff` form of 2013 is not read yet and says so.
//!
//! Sample rates: one rate; none, with the rate from the time stamps and `timemult`; or several,
//! each with its last sample (`samp,endsamp`). A record with several rates is a run of
//! [`super::RateSegment`]s; the capture holds the one part a span lies in, or the longest, with
//! its place in the record as its [`super::Span`] ([`super::span::choose_segment`]).
//!
//! Each channel's skew (the time after the time stamp its sample was taken) becomes its trace's
//! delay ([`super::Trace::delay_s`]), which the analysis removes channel by channel.
//!
//! Nothing is allocated from the header's counts alone: the samples read are bounded by what the
//! `.dat` file can hold.

use super::channel::{Channel, Content, Phase, Role, parse_unit};
use super::error::LoadErrorKind;
use super::{Capture, CaptureHead, LoadError, LoadOptions, RecordTimes, SourceFormat};
use crate::warning::Warning;
use std::fs::File;
use std::io::{BufRead, BufReader, Read};
use std::path::{Path, PathBuf};

/// The most channels a record may declare (far above any recorder's count).
const MAX_CHANNELS: usize = 100_000;

/// How the `.dat` file stores its samples.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DataFormat {
    /// One line of comma-separated numbers per sample.
    Ascii,
    /// Little-endian 16-bit two's complement analog values.
    Binary,
    /// Little-endian 32-bit two's complement analog values.
    Binary32,
    /// Little-endian IEEE 754 32-bit floats.
    Float32,
}

impl DataFormat {
    fn name(self) -> &'static str {
        match self {
            DataFormat::Ascii => "ASCII",
            DataFormat::Binary => "BINARY",
            DataFormat::Binary32 => "BINARY32",
            DataFormat::Float32 => "FLOAT32",
        }
    }

    /// Bytes per analog value in a binary record.
    fn width(self) -> usize {
        match self {
            DataFormat::Binary => 2,
            _ => 4,
        }
    }
}

/// One analog channel's line of the `.cfg`.
#[derive(Debug, Clone, PartialEq)]
pub struct AnalogChannel {
    /// The channel's identifier (its name).
    pub id: String,
    /// The phase field (`A`, `B`, `C`, `N`, or anything the recorder wrote).
    pub ph: String,
    /// The circuit component being monitored.
    pub ccbm: String,
    /// The units text (`V`, `kV`, `A`...).
    pub units: String,
    /// Multiplier a.
    pub a: f64,
    /// Offset b.
    pub b: f64,
    /// Time skew of this channel's samples behind the sample instant, seconds.
    pub skew_s: f64,
    /// Primary ratio factor (1 when the revision has none).
    pub primary: f64,
    /// Secondary ratio factor (1 when the revision has none).
    pub secondary: f64,
    /// True when a·x + b gives secondary values (`PS` = `S`).
    pub secondary_values: bool,
}

impl AnalogChannel {
    /// The value of raw sample `x` in the channel's units: a·x + b, on the primary side of the
    /// CT or VT unless `secondary` is asked for (the `PS` flag says which side a·x + b gives).
    pub fn value(&self, x: f64, secondary: bool) -> f64 {
        let ratio = match (self.secondary_values, secondary) {
            (true, false) => self.primary / self.secondary,
            (false, true) => self.secondary / self.primary,
            _ => 1.0,
        };
        (self.a * x + self.b) * ratio
    }
}

/// A parsed `.cfg` file.
#[derive(Debug, Clone, PartialEq)]
pub struct Config {
    /// Station name.
    pub station: String,
    /// Recording device id.
    pub device: String,
    /// Revision year (1991 when the file gives none).
    pub revision: u16,
    /// The analog channels, in file order.
    pub analog: Vec<AnalogChannel>,
    /// The digital (status) channels' names.
    pub digital: Vec<String>,
    /// Nominal line frequency, Hz.
    pub line_frequency_hz: f64,
    /// Sample rates and the last sample number each runs to; empty when the time stamps give
    /// the time (`nrates` = 0), with the total sample count in `samples`.
    pub rates: Vec<(f64, u64)>,
    /// Number of samples in the record.
    pub samples: u64,
    /// Date and time of the first sample, as written.
    pub start: String,
    /// Date and time of the trigger, as written.
    pub trigger: String,
    /// The data format.
    pub format: DataFormat,
    /// Multiplier of the time stamps to microseconds.
    pub timemult: f64,
}

/// A line-numbered error in the `.cfg` file.
fn cfg_error(cfg: &Path, line: usize, message: String) -> LoadError {
    LoadError::new(cfg, Some(line as u64), LoadErrorKind::BadRecord(message))
}

/// Whether text looks like a `.cfg`: its second line is `TT,##A,##D`.
pub(crate) fn looks_like_cfg(head: &[u8]) -> bool {
    let text = String::from_utf8_lossy(head);
    let Some(second) = text.lines().nth(1) else {
        return false;
    };
    let f: Vec<&str> = second.split(',').map(str::trim).collect();
    f.len() == 3
        && f[0].parse::<u64>().is_ok()
        && f[1]
            .strip_suffix(['A', 'a'])
            .is_some_and(|n| n.parse::<u64>().is_ok())
        && f[2]
            .strip_suffix(['D', 'd'])
            .is_some_and(|n| n.parse::<u64>().is_ok())
}

fn number(field: Option<&str>, what: &str) -> Result<f64, String> {
    let text = field.map(str::trim).unwrap_or("");
    let x: f64 = text
        .parse()
        .map_err(|_| format!("{what} is '{text}', expected a number"))?;
    if x.is_finite() {
        Ok(x)
    } else {
        Err(format!("{what} is '{text}', not a finite number"))
    }
}

fn count(field: Option<&str>, what: &str, max: u64) -> Result<u64, String> {
    let text = field.map(str::trim).unwrap_or("");
    let n: u64 = text
        .parse()
        .map_err(|_| format!("{what} is '{text}', expected a whole number"))?;
    if n > max {
        return Err(format!("{what} is {n}, more than {max}"));
    }
    Ok(n)
}

/// Parses the text of a `.cfg` file. Errors carry the 1-based line.
pub fn parse_cfg(text: &str, cfg: &Path) -> Result<Config, LoadError> {
    let lines: Vec<&str> = text.lines().collect();
    let mut at = 0usize;
    let mut next = |what: &str| -> Result<(usize, Vec<&str>), LoadError> {
        let line = lines.get(at).ok_or_else(|| {
            cfg_error(
                cfg,
                at + 1,
                format!("the file ends where {what} was expected"),
            )
        })?;
        at += 1;
        Ok((at, line.split(',').collect()))
    };
    let (_, head) = next("the station line")?;
    let station = head.first().unwrap_or(&"").trim().to_string();
    let device = head.get(1).unwrap_or(&"").trim().to_string();
    let revision = match head.get(2).map(|s| s.trim()) {
        None | Some("") => 1991,
        Some(y) => match y.parse::<u16>() {
            Ok(y @ (1991 | 1999 | 2013)) => y,
            _ => {
                return Err(cfg_error(
                    cfg,
                    1,
                    format!("revision year '{y}': expected 1991, 1999 or 2013"),
                ));
            }
        },
    };
    let (ln, counts) = next("the channel counts")?;
    let bad = |m: String| cfg_error(cfg, ln, m);
    let total = count(
        counts.first().copied(),
        "the channel count",
        MAX_CHANNELS as u64,
    )
    .map_err(bad)? as usize;
    let n_analog = count(
        counts.get(1).map(|s| s.trim().trim_end_matches(['A', 'a'])),
        "the analog channel count",
        MAX_CHANNELS as u64,
    )
    .map_err(bad)? as usize;
    let n_digital = count(
        counts.get(2).map(|s| s.trim().trim_end_matches(['D', 'd'])),
        "the digital channel count",
        MAX_CHANNELS as u64,
    )
    .map_err(bad)? as usize;
    if n_analog + n_digital != total {
        return Err(bad(format!(
            "{total} channels but {n_analog} analog and {n_digital} digital"
        )));
    }
    let mut analog = Vec::new();
    for k in 0..n_analog {
        let (ln, f) = next("an analog channel line")?;
        let bad = |m: String| cfg_error(cfg, ln, format!("analog channel {}: {m}", k + 1));
        if f.len() < 10 {
            return Err(bad(format!("{} fields, expected at least 10", f.len())));
        }
        let field = |i: usize| f.get(i).map(|s| s.trim()).unwrap_or("").to_string();
        let (primary, secondary, secondary_values) = if f.len() >= 13 {
            let p = number(f.get(10).copied(), "the primary factor").map_err(bad)?;
            let s = number(f.get(11).copied(), "the secondary factor").map_err(bad)?;
            if !(p > 0.0 && s > 0.0) {
                return Err(bad(format!(
                    "ratio {p}/{s}: both factors must be above zero"
                )));
            }
            let ps = match field(12).to_ascii_uppercase().as_str() {
                "P" => false,
                "S" => true,
                other => return Err(bad(format!("the P/S flag is '{other}', expected P or S"))),
            };
            (p, s, ps)
        } else {
            (1.0, 1.0, false)
        };
        analog.push(AnalogChannel {
            id: field(1),
            ph: field(2),
            ccbm: field(3),
            units: field(4),
            a: number(f.get(5).copied(), "the multiplier a").map_err(bad)?,
            b: number(f.get(6).copied(), "the offset b").map_err(bad)?,
            skew_s: number(f.get(7).copied(), "the skew")
                .or_else(|e| if field(7).is_empty() { Ok(0.0) } else { Err(e) })
                .map_err(bad)?
                * 1e-6,
            primary,
            secondary,
            secondary_values,
        });
    }
    let mut digital = Vec::new();
    for _ in 0..n_digital {
        let (_, f) = next("a digital channel line")?;
        digital.push(f.get(1).map(|s| s.trim()).unwrap_or("").to_string());
    }
    let (ln, f) = next("the line frequency")?;
    let line_frequency_hz =
        number(f.first().copied(), "the line frequency").map_err(|m| cfg_error(cfg, ln, m))?;
    let (ln, f) = next("the number of sample rates")?;
    let nrates = count(f.first().copied(), "the number of sample rates", 1000)
        .map_err(|m| cfg_error(cfg, ln, m))?;
    let mut rates = Vec::new();
    let mut samples = 0;
    for _ in 0..nrates.max(1) {
        let (ln, f) = next("a sample rate line")?;
        let bad = |m: String| cfg_error(cfg, ln, m);
        let rate = number(f.first().copied(), "the sample rate").map_err(bad)?;
        let end = count(f.get(1).copied(), "the last sample number", u64::MAX).map_err(bad)?;
        if nrates > 0 {
            if !(rate > 0.0) {
                return Err(bad(format!("sample rate {rate} Hz: it must be above zero")));
            }
            if end <= samples {
                return Err(bad(format!(
                    "the last sample number {end} does not follow the previous rate's {samples}"
                )));
            }
            rates.push((rate, end));
        }
        samples = end;
    }
    let (_, f) = next("the start time")?;
    let start = f.join(",").trim().to_string();
    let (_, f) = next("the trigger time")?;
    let trigger = f.join(",").trim().to_string();
    let (ln, f) = next("the data file type")?;
    let format = match f.first().map(|s| s.trim().to_ascii_uppercase()).as_deref() {
        Some("ASCII") => DataFormat::Ascii,
        Some("BINARY") => DataFormat::Binary,
        Some("BINARY32") => DataFormat::Binary32,
        Some("FLOAT32") => DataFormat::Float32,
        other => {
            return Err(cfg_error(
                cfg,
                ln,
                format!(
                    "data file type '{}': expected ASCII, BINARY, BINARY32 or FLOAT32",
                    other.unwrap_or("")
                ),
            ));
        }
    };
    let timemult = match lines.get(at) {
        Some(line) if revision >= 1999 && !line.trim().is_empty() => {
            let t = number(
                Some(line.split(',').next().unwrap_or("")),
                "the time multiplier",
            )
            .map_err(|m| cfg_error(cfg, at + 1, m))?;
            if !(t > 0.0) {
                return Err(cfg_error(
                    cfg,
                    at + 1,
                    format!("time multiplier {t}: it must be above zero"),
                ));
            }
            t
        }
        _ => 1.0,
    };
    Ok(Config {
        station,
        device,
        revision,
        analog,
        digital,
        line_frequency_hz,
        rates,
        samples,
        start,
        trigger,
        format,
        timemult,
    })
}

/// A `.cfg` date-time, `dd/mm/yyyy,hh:mm:ss.ssssss` (1999 and 2013; the 1991 revision writes
/// `mm/dd/yy`), as days since 1970 and nanoseconds into the day (read as whole numbers, so two
/// date-times subtract exactly). `None` when it is not one.
fn date_time(text: &str, revision: u16) -> Option<(i64, i64)> {
    let (date, time) = text.split_once(',')?;
    let d: Vec<&str> = date.trim().split('/').collect();
    let t: Vec<&str> = time.trim().split(':').collect();
    if d.len() != 3 || t.len() != 3 {
        return None;
    }
    let whole = |s: &str| -> Option<i64> {
        (!s.is_empty() && s.len() <= 9 && s.bytes().all(|b| b.is_ascii_digit()))
            .then(|| s.parse().ok())
            .flatten()
    };
    let (day, month, year) = if revision == 1991 {
        (whole(d[1])?, whole(d[0])?, whole(d[2])?)
    } else {
        (whole(d[0])?, whole(d[1])?, whole(d[2])?)
    };
    // a two-digit year (1991): 1970-2069, the same for both date-times of a record
    let year = if d[2].len() <= 2 {
        if year >= 70 { 1900 + year } else { 2000 + year }
    } else {
        year
    };
    if !(1..=12).contains(&month)
        || !(1..=super::csv::datetime::days_in_month(year, month)).contains(&day)
    {
        return None;
    }
    let (h, m) = (whole(t[0])?, whole(t[1])?);
    let (sec, frac) = t[2].trim().split_once('.').unwrap_or((t[2].trim(), ""));
    let sec = whole(sec)?;
    let ns = match frac {
        "" => 0,
        f => whole(f)? * 10i64.pow(9 - f.len() as u32),
    };
    if h > 23 || m > 59 || sec > 60 {
        return None;
    }
    let days = super::csv::datetime::days_from_civil(year, month, day);
    Some((days, (h * 3600 + m * 60 + sec) * 1_000_000_000 + ns))
}

/// The start and trigger times of a record, and the trigger's offset from the first sample.
pub fn record_times(cfg: &Config) -> RecordTimes {
    let offset = match (
        date_time(&cfg.start, cfg.revision),
        date_time(&cfg.trigger, cfg.revision),
    ) {
        (Some((d0, n0)), Some((d1, n1))) => {
            Some(((d1 - d0) as f64 * 86_400e9 + (n1 - n0) as f64) / 1e9)
        }
        _ => None,
    };
    let stated = |s: &str| (!s.trim().is_empty()).then(|| s.trim().to_string());
    RecordTimes {
        start: stated(&cfg.start),
        trigger: stated(&cfg.trigger),
        trigger_offset_s: offset,
    }
}

/// The `.dat` file beside a `.cfg`, whatever the case of its extension.
pub(crate) fn dat_beside(cfg: &Path) -> Result<PathBuf, LoadError> {
    for ext in ["dat", "DAT", "Dat"] {
        let p = cfg.with_extension(ext);
        if p.is_file() {
            return Ok(p);
        }
    }
    Err(LoadError::new(
        cfg,
        None,
        LoadErrorKind::BadRecord(format!(
            "no data file beside it: expected {}",
            cfg.with_extension("dat").display()
        )),
    ))
}

/// Reads the chosen analog channels (0-based among the analog channels) of every sample, as raw
/// values x, and the time stamps. Bounded by the file's size, never by the header's counts.
fn read_dat(
    dat: &Path,
    cfg: &Config,
    chosen: &[usize],
) -> Result<(Vec<Vec<f64>>, Vec<f64>), LoadError> {
    let err = |line: Option<u64>, m: String| LoadError::new(dat, line, LoadErrorKind::BadRecord(m));
    let file = File::open(dat).map_err(|e| LoadError::new(dat, None, LoadErrorKind::Io(e)))?;
    let size = file.metadata().map(|m| m.len()).unwrap_or(0);
    let n_analog = cfg.analog.len();
    let words = cfg.digital.len().div_ceil(16);
    let mut columns: Vec<Vec<f64>> = vec![Vec::new(); chosen.len()];
    let mut stamps = Vec::new();
    let missing = |k: usize, sample: u64| {
        format!(
            "sample {sample} of channel '{}' is marked as missing data",
            cfg.analog[k].id
        )
    };
    match cfg.format {
        DataFormat::Ascii => {
            // at least "1,0," per line: the sample count cannot pass a quarter of the size
            let cap = cfg.samples.min(size / 4) as usize;
            columns.iter_mut().for_each(|c| c.reserve(cap));
            stamps.reserve(cap);
            let reader = BufReader::new(file);
            let mut seen = 0u64;
            for (ln, line) in reader.lines().enumerate() {
                let line = line.map_err(|e| LoadError::new(dat, None, LoadErrorKind::Io(e)))?;
                if line.trim().is_empty() {
                    continue;
                }
                seen += 1;
                if seen > cfg.samples {
                    break;
                }
                let at = Some(ln as u64 + 1);
                let f: Vec<&str> = line.split(',').map(str::trim).collect();
                if f.len() < 2 + n_analog {
                    return Err(err(
                        at,
                        format!(
                            "{} fields, expected {}",
                            f.len(),
                            2 + n_analog + cfg.digital.len()
                        ),
                    ));
                }
                stamps.push(f[1].parse::<f64>().unwrap_or(f64::NAN));
                for (col, &k) in columns.iter_mut().zip(chosen) {
                    let text = f[2 + k];
                    if text.is_empty() {
                        return Err(err(at, missing(k, seen)));
                    }
                    let x: f64 = text.parse().map_err(|_| {
                        err(
                            at,
                            format!(
                                "channel '{}' holds '{text}', expected a number",
                                cfg.analog[k].id
                            ),
                        )
                    })?;
                    if !x.is_finite() {
                        return Err(err(
                            at,
                            format!("channel '{}' holds '{text}'", cfg.analog[k].id),
                        ));
                    }
                    col.push(x);
                }
            }
        }
        format => {
            let width = format.width();
            let record = 8 + n_analog * width + 2 * words;
            let in_file = size / record as u64;
            if in_file < cfg.samples {
                return Err(err(
                    None,
                    format!(
                        "the data file holds {in_file} samples of {record} bytes, the \
                         configuration promises {}: it is cut short or does not belong to it",
                        cfg.samples
                    ),
                ));
            }
            let n = cfg.samples as usize;
            columns.iter_mut().for_each(|c| c.reserve(n));
            stamps.reserve(n);
            let mut reader = BufReader::with_capacity(1 << 16, file);
            let mut buf = vec![0u8; record];
            for s in 0..n {
                reader
                    .read_exact(&mut buf)
                    .map_err(|e| LoadError::new(dat, None, LoadErrorKind::Io(e)))?;
                let stamp = u32::from_le_bytes([buf[4], buf[5], buf[6], buf[7]]);
                stamps.push(if stamp == u32::MAX {
                    f64::NAN
                } else {
                    f64::from(stamp)
                });
                for (col, &k) in columns.iter_mut().zip(chosen) {
                    let at = 8 + k * width;
                    let x = match format {
                        DataFormat::Binary => {
                            let v = i16::from_le_bytes([buf[at], buf[at + 1]]);
                            (v != i16::MIN).then_some(f64::from(v))
                        }
                        DataFormat::Binary32 => {
                            let v = i32::from_le_bytes([
                                buf[at],
                                buf[at + 1],
                                buf[at + 2],
                                buf[at + 3],
                            ]);
                            (v != i32::MIN).then_some(f64::from(v))
                        }
                        _ => {
                            let v = f32::from_le_bytes([
                                buf[at],
                                buf[at + 1],
                                buf[at + 2],
                                buf[at + 3],
                            ]);
                            v.is_finite().then_some(f64::from(v))
                        }
                    };
                    col.push(x.ok_or_else(|| err(None, missing(k, s as u64 + 1)))?);
                }
            }
        }
    }
    let got = columns.first().map_or(stamps.len(), Vec::len) as u64;
    if got < cfg.samples {
        return Err(err(
            None,
            format!(
                "the data file holds {got} samples, the configuration promises {}",
                cfg.samples
            ),
        ));
    }
    Ok((columns, stamps))
}

/// The channel as the rest of tracephase sees it: role and scale from the units, phase from the
/// `ph` field, else both from the name.
fn channel_of(k: usize, c: &AnalogChannel) -> Channel {
    let mut ch = Channel::from_header(&c.id, k + 1, Content::Numbers);
    if let Some(unit) = parse_unit(&c.units).filter(|u| u.role != Role::Time) {
        ch.role = unit.role;
        ch.unit = Some(unit);
        ch.unknown_unit = None;
    } else if !c.units.trim().is_empty() {
        ch.unit = None;
        ch.unknown_unit = Some(c.units.trim().to_string());
        ch.role = Role::Unknown;
    }
    let one = |t: &str| match t {
        "A" | "L1" | "R" => Some(Phase::A),
        "B" | "L2" | "S" => Some(Phase::B),
        "C" | "L3" | "T" => Some(Phase::C),
        "N" => Some(Phase::N),
        _ => None,
    };
    let ph = c.ph.trim().to_ascii_uppercase();
    let phase = one(&ph);
    if phase.is_some() && ch.role != Role::Unknown {
        ch.phase = phase;
        ch.line = None;
    }
    // a line-to-line voltage: `AB`, `BC`, `CA` (or `L1L2`...)
    let line = [(1, 1), (2, 2)].into_iter().find_map(|(x, y)| {
        (ph.len() == x + y && ph.is_char_boundary(x))
            .then(|| Some((one(&ph[..x])?, one(&ph[x..])?)))
            .flatten()
    });
    if let Some((a, b)) = line
        && a != b
        && a != Phase::N
        && b != Phase::N
        && ch.role == Role::Voltage
    {
        ch.line = Some((a, b));
        ch.phase = None;
    }
    ch
}

/// The sample rate of a record at one rate: the one rate, or the time stamps' mean step.
fn record_rate(cfg: &Config, stamps: &[f64]) -> Result<f64, String> {
    match cfg.rates.as_slice() {
        [] => {
            let (first, last) = (stamps.first().copied(), stamps.last().copied());
            match (first, last) {
                (Some(a), Some(b)) if b > a && stamps.len() > 1 => {
                    let step_s = (b - a) * cfg.timemult * 1e-6 / (stamps.len() - 1) as f64;
                    Ok(1.0 / step_s)
                }
                _ => Err("no sample rate and no increasing time stamps to take one from".into()),
            }
        }
        [(rate, _), ..] => Ok(*rate),
    }
}

/// Every analog channel of a record, read as the standard says, without choosing channels.
#[derive(Debug, Clone, PartialEq)]
pub struct Record {
    /// The configuration.
    pub config: Config,
    /// Each analog channel's values in its units (a·x + b, on the primary side unless secondary
    /// values were asked for), in `.cfg` order.
    pub values: Vec<Vec<f64>>,
    /// Each sample's time stamp as written (times `timemult` microseconds; NaN where missing).
    pub stamps: Vec<f64>,
    /// The start and trigger date-times and the trigger's offset from the first sample.
    pub times: RecordTimes,
}

/// Reads every analog channel of the record whose `.cfg` is `cfg_path` (the `.dat` beside it).
pub fn read_record(cfg_path: &Path, secondary: bool) -> Result<Record, LoadError> {
    let text = std::fs::read(cfg_path)
        .map_err(|e| LoadError::new(cfg_path, None, LoadErrorKind::Io(e)))?;
    let config = parse_cfg(&String::from_utf8_lossy(&text), cfg_path)?;
    let dat = dat_beside(cfg_path)?;
    let all: Vec<usize> = (0..config.analog.len()).collect();
    let (raw, stamps) = read_dat(&dat, &config, &all)?;
    let values = raw
        .into_iter()
        .zip(&config.analog)
        .map(|(x, c)| x.into_iter().map(|x| c.value(x, secondary)).collect())
        .collect();
    Ok(Record {
        times: record_times(&config),
        config,
        values,
        stamps,
    })
}

/// Loads a COMTRADE record given its `.cfg` path.
pub(crate) fn load(cfg_path: &Path, opts: &LoadOptions) -> Result<Capture, LoadError> {
    let text = std::fs::read(cfg_path)
        .map_err(|e| LoadError::new(cfg_path, None, LoadErrorKind::Io(e)))?;
    let cfg = parse_cfg(&String::from_utf8_lossy(&text), cfg_path)?;
    let dat = dat_beside(cfg_path)?;
    let channels: Vec<Channel> = cfg
        .analog
        .iter()
        .enumerate()
        .map(|(k, c)| channel_of(k, c))
        .collect();
    let set = super::pick_set(&channels, super::selection(opts))
        .map_err(|kind| LoadError::new(cfg_path, None, kind))?;
    let wanted = set.wanted();
    let (mut columns, stamps) = read_dat(&dat, &cfg, &wanted)?;
    let times = record_times(&cfg);
    let bad = |m: String| LoadError::new(cfg_path, None, LoadErrorKind::BadRecord(m));
    let mut warnings = Vec::new();
    // a record with several rates is analysed one part at a time: the part a span lies in, or
    // the longest; its samples are cut out here and its place in the record kept
    let mut part = None;
    if cfg.rates.len() > 1 {
        if opts.rate_hz.is_some() {
            return Err(bad(format!(
                "--rate was given, but this record states {} sample rates of its own: leave \
                 --rate out",
                cfg.rates.len()
            )));
        }
        let segments = super::span::segments(&cfg.rates);
        let (k, chosen) = super::span::choose_segment(&segments, opts.span.as_ref(), Some(&times))
            .map_err(|kind| LoadError::new(cfg_path, None, kind))?;
        let seg = segments[k];
        let record_s = segments.last().map_or(0.0, |s| s.end_s());
        let total = columns.first().map_or(0, Vec::len);
        for col in &mut columns {
            col.truncate(seg.first + seg.len);
            col.drain(..seg.first.min(col.len()));
        }
        warnings.extend(chosen);
        part = Some((seg.rate_hz, seg.span(total, record_s)));
    }
    let file_rate = match part {
        Some((rate, _)) => rate,
        None => record_rate(&cfg, &stamps).map_err(bad)?,
    };
    let sample_rate_hz = match opts.rate_hz {
        Some(r) => {
            if (r - file_rate).abs() > 1e-6 * file_rate {
                warnings.push(Warning::RateMismatch {
                    given_hz: r,
                    file_hz: file_rate,
                });
            }
            r
        }
        None => file_rate,
    };
    let columns: Vec<Vec<f64>> = columns
        .into_iter()
        .zip(&wanted)
        .map(|(raw, &k)| {
            let c = &cfg.analog[k];
            raw.into_iter()
                .map(|x| c.value(x, opts.secondary_values))
                .collect()
        })
        .collect();
    if set.system == super::System::ThreeWire {
        // the phases of a 3-wire capture are worked out sample by sample from its lines, which
        // needs the lines (and the currents) sampled at one instant
        for (what, chosen) in [
            ("line-to-line voltages", &set.voltages),
            ("currents", &set.currents),
        ] {
            let skews: Vec<f64> = chosen.iter().map(|c| cfg.analog[c.index].skew_s).collect();
            if skews.iter().any(|&s| s != skews[0]) {
                return Err(LoadError::new(
                    cfg_path,
                    None,
                    LoadErrorKind::BadRecord(format!(
                        "the {what} of this 3-wire record have different skews ({} µs): they \
                         must be sampled together to be combined; analyse one phase with \
                         --system single",
                        skews
                            .iter()
                            .map(|s| format!("{}", s * 1e6))
                            .collect::<Vec<_>>()
                            .join(", ")
                    )),
                ));
            }
        }
    }
    let head = CaptureHead {
        path: cfg_path.to_path_buf(),
        format: SourceFormat::Comtrade {
            revision: cfg.revision,
            data: cfg.format.name(),
            analog: cfg.analog.len(),
            digital: cfg.digital.len(),
        },
        sample_rate_hz,
        time: None,
        warnings,
        times: Some(times),
    };
    let mut capture = Capture::assemble(head, &channels, &set, columns, None);
    capture.span = part.map(|(_, span)| span);
    // a channel's skew is how long after the time stamp its sample was taken: it holds the
    // signal from that much later, a delay of minus the skew
    let traces = capture
        .voltages
        .iter_mut()
        .chain(capture.currents.iter_mut())
        .chain(capture.neutral.as_mut());
    for t in traces {
        if let Some(c) = cfg.analog.get(t.channel.column.wrapping_sub(1)) {
            t.delay_s = -c.skew_s;
        }
    }
    Ok(capture)
}

#[cfg(test)]
mod tests {
    use super::*;

    const CFG: &str = "Quarry Road substation,feeder relay 7,1999
2,2A,0D
1,IA,A,Feeder 3,A,0.0125,0,0,-32767,32767,400,5,S
2,VA,A,Feeder 3,kV,0.001,0,0,-32767,32767,11000,110,P
50
1
1000,2000
01/03/2026,10:15:00.000000
01/03/2026,10:15:00.500000
BINARY
1
";

    #[test]
    fn scaling_follows_the_standard_from_raw_to_primary() {
        // IEEE C37.111 value = a·x + b, times primary/secondary for a channel flagged S
        // [standard, from memory]; references §10 [computed]: raw 12 345, a = 0.0125, CT 400/5,
        // secondary values -> 12 345 × 0.0125 × 80 = 12 345 A primary
        let cfg = parse_cfg(CFG, Path::new("relay.cfg")).unwrap();
        let ia = &cfg.analog[0];
        assert_eq!(ia.value(12_345.0, false), 12_345.0);
        assert_eq!(ia.value(12_345.0, true), 12_345.0 * 0.0125);
        // a channel already in primary values gives secondary by the inverse ratio
        let va = &cfg.analog[1];
        assert!((va.value(6_350.0, false) - 6.35).abs() < 1e-12);
        assert!((va.value(6_350.0, true) - 6.35 * 110.0 / 11_000.0).abs() < 1e-12);
        assert_eq!(cfg.samples, 2000);
        assert_eq!(cfg.rates, vec![(1000.0, 2000)]);
        assert_eq!(cfg.format, DataFormat::Binary);
        assert_eq!(cfg.revision, 1999);
    }

    #[test]
    fn the_trigger_is_placed_from_the_two_date_times() {
        let cfg = parse_cfg(CFG, Path::new("relay.cfg")).unwrap();
        let t = record_times(&cfg);
        assert_eq!(t.start.as_deref(), Some("01/03/2026,10:15:00.000000"));
        assert_eq!(t.trigger.as_deref(), Some("01/03/2026,10:15:00.500000"));
        assert_eq!(t.trigger_offset_s, Some(0.5));
        // across midnight at the end of February in a leap year (29/02/2028 exists)
        let over = CFG
            .replace("01/03/2026,10:15:00.000000", "29/02/2028,23:59:59.900000")
            .replace("01/03/2026,10:15:00.500000", "01/03/2028,00:00:00.150000");
        let t = record_times(&parse_cfg(&over, Path::new("r.cfg")).unwrap());
        assert_eq!(t.trigger_offset_s, Some(0.25));
        // the 1991 revision writes the month first and a two-digit year
        let old = CFG
            .replace(",1999\n", "\n")
            .replace("01/03/2026,10:15:00.000000", "12/31/99,23:59:59.000000")
            .replace("01/03/2026,10:15:00.500000", "01/01/00,00:00:01.000000");
        let cfg = parse_cfg(&old, Path::new("r.cfg")).unwrap();
        assert_eq!(cfg.revision, 1991);
        assert_eq!(record_times(&cfg).trigger_offset_s, Some(2.0));
        // a date that does not exist is no date: the offset is unknown, the text kept
        let bad = CFG.replace("01/03/2026,10:15:00.500000", "31/02/2026,10:15:00.5");
        let t = record_times(&parse_cfg(&bad, Path::new("r.cfg")).unwrap());
        assert_eq!(t.trigger_offset_s, None);
        assert_eq!(t.trigger.as_deref(), Some("31/02/2026,10:15:00.5"));
    }

    #[test]
    fn the_configuration_is_recognised_by_its_second_line() {
        assert!(looks_like_cfg(CFG.as_bytes()));
        assert!(!looks_like_cfg(b"time,v,i\n0,1,2\n"));
        assert!(!looks_like_cfg(b"one line only"));
    }

    #[test]
    fn malformed_lines_are_named_by_number() {
        let at = |text: &str| parse_cfg(text, Path::new("r.cfg")).unwrap_err().to_string();
        let e = at(&CFG.replace("0.0125", "x"));
        assert_eq!(
            e,
            "r.cfg: line 3: analog channel 1: the multiplier a is 'x', expected a number"
        );
        let e = at(&CFG.replace("2,2A,0D", "3,2A,0D"));
        assert!(
            e.starts_with("r.cfg: line 2: 3 channels but 2 analog"),
            "{e}"
        );
        let e = at(&CFG.replace("BINARY", "PACKED"));
        assert!(
            e.starts_with("r.cfg: line 10: data file type 'PACKED'"),
            "{e}"
        );
        let e = at(&CFG.replace(",S\n", ",Q\n"));
        assert!(e.contains("line 3") && e.contains("P/S flag is 'Q'"), "{e}");
        let e = at("only a station line\n");
        assert!(
            e.starts_with("r.cfg: line 2: the file ends where the channel counts"),
            "{e}"
        );
        let e = at(&CFG.replace("2,2A,0D", "4000000000,4000000000A,0D"));
        assert!(e.contains("line 2") && e.contains("more than"), "{e}");
    }
}
