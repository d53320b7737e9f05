//! The loader's error type: what went wrong, in which file, on which line.

use super::ChannelSel;
use std::fmt;
use std::path::{Path, PathBuf};

/// A capture could not be loaded. Displays as `file: line N: what went wrong`.
#[derive(Debug)]
pub struct LoadError {
    /// The file.
    pub path: PathBuf,
    /// 1-based line of a text file, where known.
    pub line: Option<u64>,
    /// What went wrong.
    pub kind: LoadErrorKind,
}

impl LoadError {
    /// Builds an error for `path`, optionally at a line.
    pub fn new(path: &Path, line: Option<u64>, kind: LoadErrorKind) -> Self {
        LoadError {
            path: path.to_path_buf(),
            line,
            kind,
        }
    }
}

impl fmt::Display for LoadError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}: ", self.path.display())?;
        if let Some(line) = self.line {
            write!(f, "line {line}: ")?;
        }
        write!(f, "{}", self.kind)
    }
}

impl LoadErrorKind {
    /// The file is not a capture at all (text with no table of numbers), rather than a capture
    /// that cannot be read: a batch skips it with a note.
    pub fn is_not_a_capture(&self) -> bool {
        matches!(self, LoadErrorKind::TextOnly)
    }
}

impl std::error::Error for LoadError {
    fn source(&self) -> Option<&(dyn std::error::Error + 'static)> {
        match &self.kind {
            LoadErrorKind::Io(e) => Some(e),
            _ => None,
        }
    }
}

/// The ways a capture file can be unusable.
#[derive(Debug, thiserror::Error)]
pub enum LoadErrorKind {
    /// The operating system refused (missing file, no permission...).
    #[error("cannot read the file: {0}")]
    Io(#[from] std::io::Error),
    /// A COMTRADE configuration or data file that cannot be read as the standard says.
    #[error("{0}")]
    BadRecord(String),
    /// A directory was given where a file was expected.
    #[error("is a folder, not a capture file")]
    IsDirectory,
    /// Zero bytes, or nothing but blank lines.
    #[error("the file is empty")]
    Empty,
    /// Neither CSV text nor WAV.
    #[error("not a CSV or WAV capture ({0})")]
    NotACapture(String),
    /// A header and perhaps a preamble, but no rows of numbers.
    #[error("no rows of numbers after the header")]
    HeaderOnly,
    /// Lines of text and no table of numbers anywhere: notes, a list, prose.
    #[error("not a capture: lines of text with no table of numbers (notes?)")]
    TextOnly,
    /// Only one data channel in the file.
    #[error("only one data channel: a voltage and a current trace are needed")]
    OneChannel,
    /// A selection names no channel of the file.
    #[error("no {what} channel {sel}; the file has: {}", .available.join(", "))]
    NoSuchChannel {
        /// "voltage" or "current".
        what: &'static str,
        /// What was asked for.
        sel: ChannelSel,
        /// The channel names in the file.
        available: Vec<String>,
    },
    /// A selection points at the time column.
    #[error("{what} channel {index} is the time column")]
    TimeColumnSelected {
        /// "voltage" or "current".
        what: &'static str,
        /// The 1-based index given.
        index: usize,
    },
    /// The channels cannot be told apart: which is the voltage or the current is not said.
    #[error("{0}")]
    Ambiguous(Box<Ambiguity>),
    /// A channel chosen as one quantity is the other by its unit or name.
    #[error("{0}")]
    WrongRole(Box<WrongRole>),
    /// The channel options do not describe a capture (a list for a single-phase capture, a
    /// neutral for a 3-wire one).
    #[error("{0}")]
    BadChannelSet(String),
    /// Two roles point at the same channel.
    #[error("column {index} is chosen twice (as a voltage and a current, or twice in a list)")]
    SameChannel {
        /// The 1-based channel.
        index: usize,
    },
    /// A cell is not a number.
    #[error("column '{column}' holds '{text}', expected a number")]
    NotANumber {
        /// Column name.
        column: String,
        /// The offending text (shortened).
        text: String,
    },
    /// A cell of a date-time time column is not a date-time.
    #[error(
        "column '{column}' holds '{text}', expected a date-time like the rows before it \
         (2020-02-24 18:15:21.5)"
    )]
    NotADateTime {
        /// Column name.
        column: String,
        /// The offending text (shortened).
        text: String,
    },
    /// A cell parses as NaN or infinity.
    #[error("column '{column}' holds '{text}', which is not a finite number")]
    NotFinite {
        /// Column name.
        column: String,
        /// The offending text.
        text: String,
    },
    /// A row has fewer fields than the header.
    #[error("row has {found} fields, expected {expected}")]
    ShortRow {
        /// Fields found.
        found: usize,
        /// Fields expected.
        expected: usize,
    },
    /// Time does not increase from one row to the next.
    #[error("time goes from {previous} to {value}: the time column must increase")]
    NonMonotonicTime {
        /// Time on the previous row.
        previous: f64,
        /// Time on this row.
        value: f64,
    },
    /// Neither a time column, a preamble rate, nor `--rate`.
    #[error("no time column or sample rate in the file: give the sample rate with --rate HZ")]
    NoTimeBase,
    /// A preamble states the sample rate so that it cannot be taken (no unit, or two rates).
    #[error("{why}: say the sample rate with --rate (in Hz), e.g. --rate {suggest}")]
    UnclearRate {
        /// What the preamble says and why it cannot be taken.
        why: String,
        /// The rate to show in the advice, as the preamble wrote it.
        suggest: String,
    },
    /// A sample rate that is zero, negative or not a number.
    #[error("sample rate {0} Hz is not usable")]
    BadRate(f64),
    /// The WAV file ends before its header says it should.
    #[error(
        "truncated: the header promises {expected} samples per channel, the file holds {found}"
    )]
    Truncated {
        /// Samples per channel promised.
        expected: u64,
        /// Samples per channel present.
        found: u64,
    },
    /// A WAV layout we cannot read.
    #[error("unsupported WAV: {0}")]
    UnsupportedWav(String),
    /// A damaged WAV.
    #[error("damaged WAV: {0}")]
    BadWav(String),
    /// Fewer than two samples.
    #[error("only {0} sample(s): too short to analyse")]
    TooShort(usize),
    /// The span asked for is not a usable part of the record.
    #[error("{0}")]
    BadSpan(String),
    /// The memory for the samples could not be had.
    #[error(
        "not enough memory for its samples: {} MB more were refused ({rows} rows of {columns} \
         channel(s) as 8-byte numbers); close other programs, or split the file",
        .bytes.div_ceil(1_000_000)
    )]
    OutOfMemory {
        /// Bytes asked for when the allocation failed.
        bytes: u64,
        /// Rows being held.
        rows: u64,
        /// Channels being held.
        columns: usize,
    },
}

/// Which channel is the voltage or the current is not said (see [`LoadErrorKind::Ambiguous`]).
#[derive(Debug, thiserror::Error)]
#[error("cannot tell which channel is the {what}: {why}: {channels}; say which with {hint}")]
pub struct Ambiguity {
    /// "voltage", "current" or "voltage and the current".
    pub what: &'static str,
    /// Why not.
    pub why: String,
    /// The candidates, each with its column, name, role and unit.
    pub channels: String,
    /// The options that would say it, and what their numbers count.
    pub hint: String,
}

/// A channel chosen against its unit or name (see [`LoadErrorKind::WrongRole`]).
#[derive(Debug, thiserror::Error)]
#[error(
    "the {what} channel chosen, {channel}, is a {is} by {by}: choose a {what} channel, \
     or add --force-channels if the header is wrong"
)]
pub struct WrongRole {
    /// "voltage" or "current".
    pub what: &'static str,
    /// The channel, described.
    pub channel: String,
    /// What it is.
    pub is: &'static str,
    /// "its unit (V)" or "its name".
    pub by: String,
}
