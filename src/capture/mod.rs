//! Loading: a CSV or WAV file becomes a [`Capture`].
//!
//! Input: a path and [`LoadOptions`] (which channels, a sample rate when the file has none).
//! Output: a [`Capture`] holding the voltage and current traces as `f64` in the file's own units
//! (WAV samples normalised to full scale = 1.0), the sample rate and where it all came from.
//!
//! The format is sniffed from the content, never trusted from the file name: a RIFF/WAVE header
//! means WAV, readable text means CSV (also `.tsv` and `.txt`). Scaling, skew and cycle selection
//! are later stages ([`crate::condition`]).

mod channel;
pub mod comtrade;
mod csv;
mod error;
mod pick;
mod room;
mod span;
mod wav;

pub use channel::{Channel, Content, Phase, Role, Unit, parse_unit, split_header};
pub use error::{Ambiguity, LoadError, LoadErrorKind, WrongRole};
pub(crate) use pick::{ChannelSet, pick_set};
pub use pick::{Choice, ChosenBy, Place, Selection, System};
pub use span::{RateSegment, RecordTimes, SpanRequest, TimeZero, select};

use crate::warning::Warning;
use std::fmt;
use std::io::Read;
use std::path::{Path, PathBuf};

/// How a channel is chosen: by 1-based index or by (case-insensitive) name; a comma-separated
/// list chooses the channels of three phases in phase order.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum ChannelSel {
    /// 1-based column of the file (the time column counts) or WAV channel number.
    Index(usize),
    /// A header name; units in brackets are ignored ("Voltage (V)" matches "voltage").
    Name(String),
    /// Several channels, in phase order a, b, c (`Va,Vb,Vc`, `2,3,4`, `Vab,Vcb`).
    List(Vec<ChannelSel>),
}

impl ChannelSel {
    /// Reads what was typed: a whole number is an index, anything else a name; commas separate
    /// the channels of a list (names may hold spaces: `LINE UA,LINE UB,LINE UC`).
    pub fn parse(text: &str) -> Self {
        let one = |t: &str| match t.trim().parse::<usize>() {
            Ok(n) => ChannelSel::Index(n),
            Err(_) => ChannelSel::Name(t.trim().to_string()),
        };
        if text.contains(',') {
            let items: Vec<ChannelSel> = text
                .split(',')
                .filter(|t| !t.trim().is_empty())
                .map(one)
                .collect();
            if items.len() > 1 {
                return ChannelSel::List(items);
            }
            return items.into_iter().next().unwrap_or_else(|| one(text));
        }
        one(text)
    }

    /// The channels chosen: the list's items, or this one.
    pub fn items(&self) -> &[ChannelSel] {
        match self {
            ChannelSel::List(items) => items,
            one => std::slice::from_ref(one),
        }
    }
}

impl fmt::Display for ChannelSel {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ChannelSel::Index(n) => write!(f, "{n}"),
            ChannelSel::Name(s) => write!(f, "'{s}'"),
            ChannelSel::List(items) => {
                let parts: Vec<String> = items.iter().map(|s| s.to_string()).collect();
                f.write_str(&parts.join(","))
            }
        }
    }
}

/// What the loader needs to know beyond the file itself.
#[derive(Debug, Clone, Default)]
pub struct LoadOptions {
    /// The voltage channel; default: the one channel in volts or named like a voltage (see
    /// `pick::pick_channels`).
    pub voltage: Option<ChannelSel>,
    /// The current channel; default: the one channel in amperes or named like a current.
    pub current: Option<ChannelSel>,
    /// The neutral current of a 4-wire capture; default: the one channel named `In`/`I0`.
    pub neutral: Option<ChannelSel>,
    /// The connection; default: what the channels' names say (a complete phase set is
    /// three-phase), else single-phase.
    pub system: Option<System>,
    /// Sample rate in Hz, for files without a time base (or to override it).
    pub rate_hz: Option<f64>,
    /// Use the chosen channels even when their unit or name says the other quantity.
    pub force_channels: bool,
    /// Give a COMTRADE record's values on the secondary side of its CTs and VTs (default: primary).
    pub secondary_values: bool,
    /// The part of the record to keep (default: all of it).
    pub span: Option<SpanRequest>,
}

/// The file format a capture was read from.
#[derive(Debug, Clone, PartialEq)]
pub enum SourceFormat {
    /// Delimited text.
    Csv {
        /// Field delimiter found in the file.
        delimiter: u8,
        /// Whether numbers use a decimal comma.
        decimal_comma: bool,
    },
    /// IEEE C37.111 (COMTRADE) `.cfg` + `.dat`.
    Comtrade {
        /// Revision year of the configuration.
        revision: u16,
        /// Data file type (ASCII, BINARY, BINARY32, FLOAT32).
        data: &'static str,
        /// Analog channels in the record.
        analog: usize,
        /// Digital (status) channels in the record, read but not analysed.
        digital: usize,
    },
    /// RIFF/WAVE audio-style file.
    Wav {
        /// Bits per sample in the file.
        bits: u16,
        /// Whether samples are IEEE floating point.
        float: bool,
        /// Number of interleaved channels in the file.
        channels: u16,
    },
}

impl fmt::Display for SourceFormat {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            SourceFormat::Csv {
                delimiter,
                decimal_comma,
            } => {
                let d = match delimiter {
                    b'\t' => "tab".to_string(),
                    c => format!("'{}'", *c as char),
                };
                write!(f, "csv, delimiter {d}")?;
                if *decimal_comma {
                    f.write_str(", decimal comma")?;
                }
                Ok(())
            }
            SourceFormat::Comtrade {
                revision,
                data,
                analog,
                digital,
            } => write!(
                f,
                "COMTRADE {revision}, {data}, {analog} analog and {digital} digital channels"
            ),
            SourceFormat::Wav {
                bits,
                float,
                channels,
            } => write!(
                f,
                "wav, {bits}-bit {}, {channels} channels",
                if *float { "float" } else { "integer" }
            ),
        }
    }
}

/// One selected trace.
#[derive(Debug, Clone, PartialEq)]
pub struct Trace {
    /// The channel: name as in the file (WAV: `channel N`), 1-based column, unit, role.
    pub channel: Channel,
    /// How it was chosen.
    pub chosen_by: ChosenBy,
    /// Where it sits in the circuit (the one trace of a single-phase capture, a phase, a line).
    pub place: Place,
    /// Samples, in the file's units (WAV: full scale = 1.0); [`Channel::scale`] turns them into
    /// volts or amperes ([`crate::condition::scale`] applies it).
    pub samples: Vec<f64>,
    /// The instrument's full-scale rails, where the format tells them (WAV: ±1.0), in the file's
    /// units.
    pub full_scale: Option<f64>,
    /// How far the samples lag the signal, seconds: a COMTRADE channel's skew negated (a channel
    /// sampled after the time stamp holds the signal from later); 0 for CSV and WAV. The
    /// analysis removes it per harmonic, never by shifting samples.
    pub delay_s: f64,
}

impl Trace {
    /// The same trace without its samples (to fill with others).
    fn clone_without_samples(&self) -> Trace {
        Trace {
            channel: self.channel.clone(),
            chosen_by: self.chosen_by,
            place: self.place,
            samples: Vec::new(),
            full_scale: self.full_scale,
            delay_s: self.delay_s,
        }
    }

    /// A trace of a channel nothing is known about (synthetic captures, tests).
    pub fn plain(name: &str, column: usize, samples: Vec<f64>) -> Self {
        Trace {
            channel: Channel::unnamed(name.to_string(), column, Content::Numbers),
            chosen_by: ChosenBy::Option,
            place: Place::Single,
            samples,
            full_scale: None,
            delay_s: 0.0,
        }
    }
}

/// The channels an analysis used, as the loader understood them (for every output).
#[derive(Debug, Clone, PartialEq)]
pub struct UsedChannels {
    /// The voltage channel.
    pub voltage: Channel,
    /// How it was chosen.
    pub voltage_by: ChosenBy,
    /// The current channel.
    pub current: Channel,
    /// How it was chosen.
    pub current_by: ChosenBy,
    /// The time column, if the rate came from one.
    pub time: Option<Channel>,
}

impl UsedChannels {
    /// `voltage 'CH1(V)' column 2 (V, by unit), current 'CH3(A)' column 4 (A, by unit), time
    /// 'TIME' column 1 (s)`: the line every human-readable output prints.
    pub fn describe(&self) -> String {
        let one = |what: &str, c: &Channel, by: Option<ChosenBy>| {
            let unit = match (c.unit_symbol(), by) {
                (Some(u), _) => u,
                (None, Some(_)) => "no unit",
                (None, None) => "read as s",
            };
            let mut about = vec![unit.to_string()];
            if let Some(by) = by {
                about.push(format!("by {by}"));
            }
            format!(
                "{what} '{}' column {} ({})",
                c.name,
                c.column,
                about.join(", ")
            )
        };
        let mut parts = vec![
            one("voltage", &self.voltage, Some(self.voltage_by)),
            one("current", &self.current, Some(self.current_by)),
        ];
        if let Some(t) = &self.time {
            parts.push(one("time", t, None));
        }
        parts.join(", ")
    }
}

/// A loaded capture: the traces of one circuit on one uniform time base. A single-phase capture
/// has one voltage and one current; a three-phase one the voltages and currents of its phases
/// ([`System`] says which and how they are measured).
#[derive(Debug, Clone, PartialEq)]
pub struct Capture {
    /// The file it came from.
    pub path: PathBuf,
    /// The format that was sniffed.
    pub format: SourceFormat,
    /// Samples per second.
    pub sample_rate_hz: f64,
    /// The connection.
    pub system: System,
    /// The voltage traces: one (single-phase), a, b and c to neutral (4-wire), or two or three
    /// line-to-line voltages (3-wire; each trace's [`Trace::place`] names its line).
    pub voltages: Vec<Trace>,
    /// The current traces: one, or the line currents (3-wire: a and c at least).
    pub currents: Vec<Trace>,
    /// A measured neutral current (4-wire).
    pub neutral: Option<Trace>,
    /// The time column the rate came from (CSV), with its unit.
    pub time: Option<Channel>,
    /// Doubts found while loading (uneven time base, rate mismatch).
    pub warnings: Vec<Warning>,
    /// The part of the record these traces are, when not the whole of it ([`Capture::span`]).
    pub span: Option<Span>,
    /// The start and trigger date-times the file states (COMTRADE).
    pub times: Option<RecordTimes>,
}

/// A part of a record: samples `first .. first + len` of the traces as loaded, and where it lies
/// in time. A record at one sample rate places sample `k` at `k / rate`; a record with several
/// rates ([`RateSegment`]) places each part at the time its earlier parts took, so `start_s` is
/// stated, never worked out from `first` alone.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Span {
    /// Index of the first sample kept, counted from the record's first sample.
    pub first: usize,
    /// Number of samples kept.
    pub len: usize,
    /// Number of samples in the whole record.
    pub of: usize,
    /// Time of the first sample kept, seconds after the record's first sample.
    pub start_s: f64,
    /// Length of the whole record, seconds (its last sample plus one interval at its rate).
    pub record_s: f64,
}

impl Span {
    /// Start of the span, seconds after the record's first sample.
    pub fn start_s(&self) -> f64 {
        self.start_s
    }

    /// End of the span (one sample interval after its last sample), seconds after the record's
    /// first sample; the span's samples are `sample_rate_hz` apart.
    pub fn end_s(&self, sample_rate_hz: f64) -> f64 {
        self.start_s + self.len as f64 / sample_rate_hz
    }
}

impl Capture {
    /// Puts a capture together from the channels chosen and their samples, in the order
    /// [`ChannelSet::wanted`] lists them.
    pub(crate) fn assemble(
        head: CaptureHead,
        channels: &[Channel],
        set: &ChannelSet,
        mut columns: Vec<Vec<f64>>,
        full_scale: Option<f64>,
    ) -> Capture {
        columns.truncate(set.wanted().len());
        let mut cols = columns.into_iter();
        let mut trace = |c: &Choice| Trace {
            channel: channels[c.index].clone(),
            chosen_by: c.by,
            place: c.place,
            samples: cols.next().unwrap_or_default(),
            full_scale,
            delay_s: 0.0,
        };
        let voltages = set.voltages.iter().map(&mut trace).collect();
        let currents = set.currents.iter().map(&mut trace).collect();
        let neutral = set.neutral.as_ref().map(&mut trace);
        let mut warnings = set.warnings.clone();
        warnings.extend(head.warnings);
        Capture {
            path: head.path,
            format: head.format,
            sample_rate_hz: head.sample_rate_hz,
            system: set.system,
            voltages,
            currents,
            neutral,
            time: head.time,
            warnings,
            span: None,
            times: head.times,
        }
    }

    /// The samples `range` of every trace (indices into this capture), as a capture of its own
    /// whose [`Capture::span`] places it in the whole record. Copies the samples; a range past
    /// the end is cut to the end.
    pub fn span(&self, range: std::ops::Range<usize>) -> Capture {
        let end = range.end.min(self.len());
        let start = range.start.min(end);
        let cut = |t: &Trace| Trace {
            samples: t.samples[start..end].to_vec(),
            ..t.clone_without_samples()
        };
        let rate = self.sample_rate_hz;
        let base = self.span.unwrap_or(Span::whole(self.len(), rate));
        Capture {
            path: self.path.clone(),
            format: self.format.clone(),
            sample_rate_hz: rate,
            system: self.system,
            voltages: self.voltages.iter().map(cut).collect(),
            currents: self.currents.iter().map(cut).collect(),
            neutral: self.neutral.as_ref().map(cut),
            time: self.time.clone(),
            warnings: self.warnings.clone(),
            times: self.times.clone(),
            span: Some(Span {
                first: base.first + start,
                len: end - start,
                of: base.of,
                start_s: base.start_s + start as f64 / rate,
                record_s: base.record_s,
            }),
        }
    }

    /// Number of samples per trace.
    pub fn len(&self) -> usize {
        self.voltages.first().map_or(0, |t| t.samples.len())
    }

    /// The first (for a single-phase capture: the) voltage trace.
    pub fn voltage(&self) -> &Trace {
        &self.voltages[0]
    }

    /// The first (for a single-phase capture: the) current trace.
    pub fn current(&self) -> &Trace {
        &self.currents[0]
    }

    /// Every trace, voltages first, then currents and the neutral.
    pub fn traces(&self) -> impl Iterator<Item = &Trace> {
        self.voltages
            .iter()
            .chain(&self.currents)
            .chain(&self.neutral)
    }

    /// The channels used, without their samples (single-phase: the pair; three-phase: the first
    /// phase's, see [`crate::analysis::PhaseAnalysis::channels`] for each phase).
    pub fn used_channels(&self) -> UsedChannels {
        UsedChannels {
            voltage: self.voltage().channel.clone(),
            voltage_by: self.voltage().chosen_by,
            current: self.current().channel.clone(),
            current_by: self.current().chosen_by,
            time: self.time.clone(),
        }
    }

    /// True when the capture holds no samples.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }
}

/// What a reader knows of a capture besides its traces.
#[derive(Debug, Clone)]
pub(crate) struct CaptureHead {
    pub path: PathBuf,
    pub format: SourceFormat,
    pub sample_rate_hz: f64,
    pub time: Option<Channel>,
    pub warnings: Vec<Warning>,
    pub times: Option<RecordTimes>,
}

/// The channel options of `opts` as the picker takes them.
pub(crate) fn selection(opts: &LoadOptions) -> Selection<'_> {
    Selection {
        voltage: opts.voltage.as_ref(),
        current: opts.current.as_ref(),
        neutral: opts.neutral.as_ref(),
        system: opts.system,
        force: opts.force_channels,
    }
}

/// Loads a capture, sniffing its format from the first bytes, and keeps the span
/// [`LoadOptions::span`] asks for.
pub fn load(path: &Path, opts: &LoadOptions) -> Result<Capture, LoadError> {
    let _in_hand = crate::memory::in_hand(path);
    let capture = load_whole(path, opts)?;
    match &opts.span {
        None => Ok(capture),
        Some(request) => {
            span::select(&capture, request).map_err(|kind| LoadError::new(path, None, kind))
        }
    }
}

/// The files [`load`] reads for the capture at `path`: the file itself, and for a COMTRADE
/// record's `.cfg` the `.dat` beside it (when there is one).
pub fn content_files(path: &Path) -> Vec<std::path::PathBuf> {
    let mut files = vec![path.to_path_buf()];
    let cfg = path
        .extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("cfg"));
    if cfg && let Ok(dat) = comtrade::dat_beside(path) {
        files.push(dat);
    }
    files
}

/// Loads the whole record.
fn load_whole(path: &Path, opts: &LoadOptions) -> Result<Capture, LoadError> {
    let err = |kind| LoadError::new(path, None, kind);
    let meta = std::fs::metadata(path).map_err(|e| err(LoadErrorKind::Io(e)))?;
    if meta.is_dir() {
        return Err(err(LoadErrorKind::IsDirectory));
    }
    let mut file = std::fs::File::open(path).map_err(|e| err(LoadErrorKind::Io(e)))?;
    let mut head = [0u8; 512];
    let got = read_up_to(&mut file, &mut head).map_err(|e| err(LoadErrorKind::Io(e)))?;
    drop(file);
    if got == 0 {
        return Err(err(LoadErrorKind::Empty));
    }
    let head = &head[..got];
    if got >= 12 && (&head[..4] == b"RIFF" || &head[..4] == b"RF64") && &head[8..12] == b"WAVE" {
        wav::load(path, opts)
    } else if comtrade::looks_like_cff(head) || comtrade::looks_like_cfg(head) {
        comtrade::load(path, opts)
    } else if head.starts_with(b"RIFF") {
        Err(err(LoadErrorKind::NotACapture(
            "a RIFF file that is not WAVE".into(),
        )))
    } else {
        csv::load(path, opts)
    }
}

fn read_up_to(r: &mut impl Read, buf: &mut [u8]) -> std::io::Result<usize> {
    let mut n = 0;
    while n < buf.len() {
        match r.read(&mut buf[n..])? {
            0 => break,
            k => n += k,
        }
    }
    Ok(n)
}

/// Strips units and brackets from a header name and lowercases it: `"Voltage (V)"` -> `"voltage"`.
pub fn base_name(name: &str) -> String {
    let cut = name.find(['(', '[', '{']).unwrap_or(name.len());
    let mut s = name[..cut].trim().to_ascii_lowercase();
    // "V/V" or "I / A" style units after a slash
    if let Some(p) = s.find(" /") {
        s.truncate(p);
    }
    s.trim().to_string()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_span_of_a_span_is_placed_in_the_whole_record() {
        let samples: Vec<f64> = (0..100).map(f64::from).collect();
        let capture = Capture {
            path: PathBuf::from("x.csv"),
            format: SourceFormat::Csv {
                delimiter: b',',
                decimal_comma: false,
            },
            sample_rate_hz: 10.0,
            system: System::Single,
            voltages: vec![Trace::plain("v", 1, samples.clone())],
            currents: vec![Trace::plain("i", 2, samples)],
            neutral: None,
            time: None,
            warnings: Vec::new(),
            span: None,
            times: None,
        };
        let outer = capture.span(10..90);
        let inner = outer.span(5..200);
        assert_eq!(inner.voltage().samples.first(), Some(&15.0));
        assert_eq!(inner.current().samples.last(), Some(&89.0));
        let span = inner.span.unwrap();
        assert_eq!((span.first, span.len, span.of), (15, 75, 100));
        assert_eq!(span.start_s(), 1.5);
        assert_eq!(span.end_s(10.0), 9.0);
        assert_eq!(span.record_s, 10.0);
    }

    #[test]
    fn units_in_header_names_are_ignored() {
        assert_eq!(base_name("Voltage (V)"), "voltage");
        assert_eq!(base_name("I [A]"), "i");
        assert_eq!(base_name(" CH1 "), "ch1");
    }
}
