//! IEEE Std C37.111 (COMTRADE, the 1991, 1999 and 2013 revisions; IEC 60255-24:2013) records: a
//! `.cfg` text file that names the channels and their scaling, and a `.dat` file of samples in
//! ASCII, BINARY (16-bit), BINARY32 or FLOAT32; or the 2013 single file (`.cff`) holding both
//! as sections.
//!
//! The parts, by what they do: `.cfg` parsing (`cfg.rs`, every error with its line),
//! sample reading (`dat.rs`, from a whole `.dat` or from a `.cff`'s DAT section in place, one
//! reader for both), the single file's sections (`cff.rs`), and here the model ([`Config`],
//! [`AnalogChannel`]), the channels as tracephase sees them and the loader.
//!
//! Values are `a·x + b` in the channel's units (from memory of the standard's definitions); a
//! channel whose `PS` flag is `S` holds secondary values and is turned to primary by its
//! `primary/secondary` ratio unless secondary values are asked for. Channel roles come from the
//! units (`V`, `kV`, `A`, `kA`...) and the phase from the `ph` field, then from the names as for
//! text captures. Missing-data markers (0x8000 in BINARY, 0x80000000 in BINARY32, NaN in
//! FLOAT32, an empty ASCII field) are refused with the sample that holds one, never read as
//! numbers.
//!
//! A `.cff` is told by its first line (`--- file type: CFG ---`), not its name: its CFG section
//! is parsed as a `.cfg` (errors name the `.cff`'s own lines), its DAT section is read from its
//! offset in the file as the `.dat` would be, and its INF and HDR sections are skipped.
//!
//! Sample rates: one rate; none, with the rate from the time stamps and `timemult`; or several,
//! each with its last sample (`samp,endsamp`). A record with several rates is a run of
//! [`super::RateSegment`]s; the capture holds the one part a span lies in, or the longest, with
//! its place in the record as its [`super::Span`] (`span::choose_segment`).
//!
//! Each channel's skew (the time after the time stamp its sample was taken) becomes its trace's
//! delay ([`super::Trace::delay_s`]), which the analysis removes channel by channel.
//!
//! Nothing is allocated from the header's counts alone: the samples read are bounded by what the
//! `.dat` file (or the `.cff`'s data section, whose byte count is checked against the file's
//! size first) can hold.

mod cff;
mod cfg;
mod dat;

pub(crate) use cff::looks_like_cff;
pub(crate) use cfg::looks_like_cfg;
pub use cfg::{parse_cfg, record_times};

use super::channel::{Channel, Content, Phase, Role, parse_unit};
use super::error::LoadErrorKind;
use super::{Capture, CaptureHead, LoadError, LoadOptions, RecordTimes, SourceFormat};
use crate::warning::Warning;
use dat::{DatSource, read_dat};
use std::path::{Path, PathBuf};

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

/// The configuration of the record at `path` and where its samples are: a `.cfg` with the
/// `.dat` beside it, or a single-file `.cff` (told apart by its first line, not its name).
fn open(path: &Path) -> Result<(Config, DatSource), LoadError> {
    let io = |e| LoadError::new(path, None, LoadErrorKind::Io(e));
    let mut head = Vec::with_capacity(32);
    std::fs::File::open(path)
        .and_then(|f| std::io::Read::read_to_end(&mut std::io::Read::take(f, 32), &mut head))
        .map_err(io)?;
    if looks_like_cff(&head) {
        return cff::split(path);
    }
    let text = std::fs::read(path).map_err(io)?;
    let config = parse_cfg(&String::from_utf8_lossy(&text), path)?;
    let dat = DatSource::file(&dat_beside(path)?)?;
    Ok((config, dat))
}

/// Reads every analog channel of the record at `path` (a `.cfg`, the `.dat` beside it, or a
/// single-file `.cff`).
pub fn read_record(path: &Path, secondary: bool) -> Result<Record, LoadError> {
    let (config, dat) = open(path)?;
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

/// Loads a COMTRADE record given its `.cfg` (or single-file `.cff`) path.
pub(crate) fn load(cfg_path: &Path, opts: &LoadOptions) -> Result<Capture, LoadError> {
    let (cfg, dat) = open(cfg_path)?;
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
