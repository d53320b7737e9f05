//! Loading: a CSV or WAV file becomes a [`Capture`].
//!
//! Input: a path and [`LoadOptions`] (which channels, a sample rate when the file has none).
//! Output: a [`Capture`] holding the voltage and current traces as `f64` in the file's own units
//! (WAV samples normalised to full scale = 1.0), the sample rate and where it all came from.
//!
//! The format is sniffed from the content, never trusted from the file name: a RIFF/WAVE header
//! means WAV, readable text means CSV (also `.tsv` and `.txt`). Scaling, skew and cycle selection
//! are later stages ([`crate::condition`]).

mod csv;
mod error;
mod wav;

pub use error::{LoadError, LoadErrorKind};

use crate::warning::Warning;
use std::fmt;
use std::io::Read;
use std::path::{Path, PathBuf};

/// How a channel is chosen: by 1-based index or by (case-insensitive) name.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum ChannelSel {
    /// 1-based column or WAV channel number (the time column counts in a CSV).
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
    /// The voltage channel; default: a column named like a voltage, else the first data channel.
    pub voltage: Option<ChannelSel>,
    /// The current channel; default: a column named like a current, else the second data channel.
    pub current: Option<ChannelSel>,
    /// Sample rate in Hz, for files without a time base (or to override it).
    pub rate_hz: Option<f64>,
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
    /// The channel's name as in the file (WAV: `channel N`).
    pub name: String,
    /// Samples, in the file's units (WAV: full scale = 1.0).
    pub samples: Vec<f64>,
    /// The instrument's full-scale rails, where the format tells them (WAV: ±1.0).
    pub full_scale: Option<f64>,
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
    /// Doubts found while loading (uneven time base, rate mismatch).
    pub warnings: Vec<Warning>,
}

impl Capture {
    /// Number of samples per trace.
    pub fn len(&self) -> usize {
        self.voltage.samples.len()
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
    let mut head = [0u8; 12];
    let got = read_up_to(&mut file, &mut head).map_err(|e| err(LoadErrorKind::Io(e)))?;
    drop(file);
    if got == 0 {
        return Err(err(LoadErrorKind::Empty));
    }
    let head = &head[..got];
    if got >= 12 && (&head[..4] == b"RIFF" || &head[..4] == b"RF64") && &head[8..12] == b"WAVE" {
        wav::load(path, opts)
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

const VOLTAGE_NAMES: &[&str] = &["v", "u", "voltage", "volt", "volts", "vac", "v1", "u1"];
const CURRENT_NAMES: &[&str] = &["i", "current", "amp", "amps", "ampere", "iac", "i1"];

fn looks_like(name: &str, list: &[&str]) -> bool {
    let b = base_name(name);
    list.contains(&b.as_str()) || list.iter().any(|w| w.len() > 2 && b.starts_with(w))
}

/// Picks the voltage and current channels (0-based) among `names`.
///
/// `data` lists the candidate channels in order (a CSV's time column is left out of it);
/// explicit selections may still name any channel except the time column.
pub(crate) fn pick_channels(
    names: &[String],
    data: &[usize],
    opts: &LoadOptions,
) -> Result<(usize, usize), LoadErrorKind> {
    if data.len() < 2 && (opts.voltage.is_none() || opts.current.is_none()) {
        return Err(LoadErrorKind::OneChannel);
    }
    let find = |sel: &ChannelSel, what: &'static str| -> Result<usize, LoadErrorKind> {
        match sel {
            ChannelSel::Index(n) => {
                if *n == 0 || *n > names.len() {
                    Err(LoadErrorKind::NoSuchChannel {
                        what,
                        sel: sel.clone(),
                        available: names.to_vec(),
                    })
                } else if !data.contains(&(n - 1)) {
                    Err(LoadErrorKind::TimeColumnSelected { what, index: *n })
                } else {
                    Ok(n - 1)
                }
            }
            ChannelSel::Name(want) => {
                let w = want.to_ascii_lowercase();
                let wb = base_name(want);
                names
                    .iter()
                    .position(|n| n.to_ascii_lowercase() == w)
                    .or_else(|| names.iter().position(|n| base_name(n) == wb))
                    .ok_or_else(|| LoadErrorKind::NoSuchChannel {
                        what,
                        sel: sel.clone(),
                        available: names.to_vec(),
                    })
            }
        }
    };
    let v = match &opts.voltage {
        Some(sel) => find(sel, "voltage")?,
        None => data
            .iter()
            .copied()
            .find(|&c| looks_like(&names[c], VOLTAGE_NAMES))
            .unwrap_or(data[0]),
    };
    let i = match &opts.current {
        Some(sel) => find(sel, "current")?,
        None => data
            .iter()
            .copied()
            .find(|&c| c != v && looks_like(&names[c], CURRENT_NAMES))
            .or_else(|| data.iter().copied().find(|&c| c != v))
            .ok_or(LoadErrorKind::OneChannel)?,
    };
    if v == i {
        return Err(LoadErrorKind::SameChannel { index: v + 1 });
    }
    Ok((v, i))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn names(v: &[&str]) -> Vec<String> {
        v.iter().map(|s| s.to_string()).collect()
    }

    #[test]
    fn units_in_header_names_are_ignored() {
        assert_eq!(base_name("Voltage (V)"), "voltage");
        assert_eq!(base_name("I [A]"), "i");
        assert_eq!(base_name(" CH1 "), "ch1");
    }

    #[test]
    fn channels_are_found_by_name_whatever_the_order() {
        let n = names(&["Time (s)", "I [A]", "Voltage (V)"]);
        let got = pick_channels(&n, &[1, 2], &LoadOptions::default()).unwrap();
        assert_eq!(got, (2, 1));
    }

    #[test]
    fn unnamed_channels_default_to_first_and_second() {
        let n = names(&["CH1", "CH2", "CH3"]);
        assert_eq!(
            pick_channels(&n, &[0, 1, 2], &LoadOptions::default()).unwrap(),
            (0, 1)
        );
    }

    #[test]
    fn explicit_selection_by_index_and_name() {
        let n = names(&["t", "a", "b", "c"]);
        let opts = LoadOptions {
            voltage: Some(ChannelSel::parse("4")),
            current: Some(ChannelSel::parse("B")),
            rate_hz: None,
        };
        assert_eq!(pick_channels(&n, &[1, 2, 3], &opts).unwrap(), (3, 2));
    }

    #[test]
    fn selecting_a_missing_channel_names_the_choices() {
        let n = names(&["t", "a", "b"]);
        let opts = LoadOptions {
            voltage: Some(ChannelSel::parse("volts")),
            ..Default::default()
        };
        let e = pick_channels(&n, &[1, 2], &opts).unwrap_err();
        assert!(e.to_string().contains("'volts'"), "{e}");
        assert!(e.to_string().contains("t, a, b"), "{e}");
    }
}
