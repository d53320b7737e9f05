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
mod comtrade;
mod csv;
mod error;
mod wav;

pub(crate) use channel::pick_channels;
pub use channel::{Channel, ChosenBy, Content, Phase, Role, Unit, parse_unit, split_header};
pub use error::{Ambiguity, LoadError, LoadErrorKind, WrongRole};

use crate::warning::Warning;
use std::fmt;
use std::io::Read;
use std::path::{Path, PathBuf};

/// How a channel is chosen: by 1-based index or by (case-insensitive) name.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum ChannelSel {
    /// 1-based column of the file (the time column counts) or WAV channel number.
    Index(usize),
    /// A header name; units in brackets are ignored ("Voltage (V)" matches "voltage").
    Name(String),
}

impl ChannelSel {
    /// Reads what was typed: a whole number is an index, anything else a name.
    pub fn parse(text: &str) -> Self {
        match text.trim().parse::<usize>() {
            Ok(n) => ChannelSel::Index(n),
            Err(_) => ChannelSel::Name(text.trim().to_string()),
        }
    }
}

impl fmt::Display for ChannelSel {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ChannelSel::Index(n) => write!(f, "{n}"),
            ChannelSel::Name(s) => write!(f, "'{s}'"),
        }
    }
}

/// What the loader needs to know beyond the file itself.
#[derive(Debug, Clone, Default)]
pub struct LoadOptions {
    /// The voltage channel; default: the one channel in volts or named like a voltage (see
    /// [`pick_channels`]).
    pub voltage: Option<ChannelSel>,
    /// The current channel; default: the one channel in amperes or named like a current.
    pub current: Option<ChannelSel>,
    /// Sample rate in Hz, for files without a time base (or to override it).
    pub rate_hz: Option<f64>,
    /// Use the chosen channels even when their unit or name says the other quantity.
    pub force_channels: bool,
    /// Give a COMTRADE record's values on the secondary side of its CTs and VTs (default: primary).
    pub secondary_values: bool,
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
    /// Samples, in the file's units (WAV: full scale = 1.0); [`Channel::scale`] turns them into
    /// volts or amperes ([`crate::condition::scale`] applies it).
    pub samples: Vec<f64>,
    /// The instrument's full-scale rails, where the format tells them (WAV: ±1.0), in the file's
    /// units.
    pub full_scale: Option<f64>,
}

impl Trace {
    /// A trace of a channel nothing is known about (synthetic captures, tests).
    pub fn plain(name: &str, column: usize, samples: Vec<f64>) -> Self {
        Trace {
            channel: Channel::unnamed(name.to_string(), column, Content::Numbers),
            chosen_by: ChosenBy::Option,
            samples,
            full_scale: None,
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

/// A loaded capture: two traces on one uniform time base.
#[derive(Debug, Clone, PartialEq)]
pub struct Capture {
    /// The file it came from.
    pub path: PathBuf,
    /// The format that was sniffed.
    pub format: SourceFormat,
    /// Samples per second.
    pub sample_rate_hz: f64,
    /// The voltage trace.
    pub voltage: Trace,
    /// The current trace.
    pub current: Trace,
    /// Delay of the current channel's samples behind the voltage channel's that the file itself
    /// declares (a COMTRADE record's per-channel skews), seconds; added to `--skew`.
    pub skew_s: f64,
    /// The time column the rate came from (CSV), with its unit.
    pub time: Option<Channel>,
    /// Doubts found while loading (uneven time base, rate mismatch).
    pub warnings: Vec<Warning>,
}

impl Capture {
    /// Number of samples per trace.
    pub fn len(&self) -> usize {
        self.voltage.samples.len()
    }

    /// The channels used, without their samples.
    pub fn used_channels(&self) -> UsedChannels {
        UsedChannels {
            voltage: self.voltage.channel.clone(),
            voltage_by: self.voltage.chosen_by,
            current: self.current.channel.clone(),
            current_by: self.current.chosen_by,
            time: self.time.clone(),
        }
    }

    /// True when the capture holds no samples.
    pub fn is_empty(&self) -> bool {
        self.voltage.samples.is_empty()
    }
}

/// Loads a capture, sniffing its format from the first bytes.
pub fn load(path: &Path, opts: &LoadOptions) -> Result<Capture, LoadError> {
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
    } else if head.len() >= 14 && head[..14].eq_ignore_ascii_case(b"--- file type:") {
        Err(err(LoadErrorKind::NotACapture(
            "a COMTRADE single-file record (.cff), not supported yet: export the .cfg and .dat \
             pair"
                .into(),
        )))
    } else if comtrade::looks_like_cfg(head) {
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
    fn units_in_header_names_are_ignored() {
        assert_eq!(base_name("Voltage (V)"), "voltage");
        assert_eq!(base_name("I [A]"), "i");
        assert_eq!(base_name(" CH1 "), "ch1");
    }
}
