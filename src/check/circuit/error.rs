//! Errors of the circuit model file: [`ModelError`] (file, line, column) and its
//! [`ModelErrorKind`], whose text is one lowercase line a technician can act on.

use std::fmt;
use std::ops::Range;
use std::path::{Path, PathBuf};

use super::PartKind;

/// A model file that could not be read or is not a valid model.
#[derive(Debug, thiserror::Error)]
#[error("{}", self.render())]
pub struct ModelError {
    /// The model file.
    pub path: PathBuf,
    /// 1-based line in the file, where known.
    pub line: Option<usize>,
    /// 1-based column (in characters) in the file, where known.
    pub column: Option<usize>,
    /// What is wrong.
    pub kind: ModelErrorKind,
}

impl ModelError {
    pub(super) fn new(path: &Path, kind: ModelErrorKind) -> ModelError {
        ModelError {
            path: path.to_path_buf(),
            line: None,
            column: None,
            kind,
        }
    }

    pub(super) fn located(
        path: &Path,
        text: &str,
        span: Option<Range<usize>>,
        kind: ModelErrorKind,
    ) -> ModelError {
        let (line, column) = match span {
            Some(span) => {
                let (l, c) = line_column(text, span.start);
                (Some(l), Some(c))
            }
            None => (None, None),
        };
        ModelError {
            path: path.to_path_buf(),
            line,
            column,
            kind,
        }
    }

    /// Only the line: for network errors, whose message names the column within the expression.
    pub(super) fn on_line_of(
        path: &Path,
        text: &str,
        offset: usize,
        kind: ModelErrorKind,
    ) -> ModelError {
        ModelError {
            path: path.to_path_buf(),
            line: Some(line_column(text, offset).0),
            column: None,
            kind,
        }
    }

    fn render(&self) -> String {
        let path = self.path.display();
        match (self.line, self.column) {
            (Some(l), Some(c)) => format!("{path}: line {l}, column {c}: {}", self.kind),
            (Some(l), None) => format!("{path}: line {l}: {}", self.kind),
            _ => format!("{path}: {}", self.kind),
        }
    }
}

/// 1-based line and character column of a byte offset.
fn line_column(text: &str, offset: usize) -> (usize, usize) {
    let bytes = text.as_bytes();
    let offset = offset.min(bytes.len());
    let line_start = bytes[..offset]
        .iter()
        .rposition(|&b| b == b'\n')
        .map_or(0, |p| p + 1);
    let line = bytes[..offset].iter().filter(|&&b| b == b'\n').count() + 1;
    let column = match std::str::from_utf8(&bytes[line_start..offset]) {
        Ok(s) => s.chars().count() + 1,
        Err(_) => offset - line_start + 1,
    };
    (line, column)
}

/// What is wrong with a model file; the text is one lowercase line without a trailing period.
#[derive(Debug, Clone, PartialEq)]
pub enum ModelErrorKind {
    /// The file could not be read.
    Read {
        /// Why, in words.
        reason: String,
    },
    /// The file is not UTF-8 text.
    NotUtf8,
    /// The file is not valid TOML.
    Syntax {
        /// The TOML parser's explanation.
        message: String,
    },
    /// A key the schema does not know.
    UnknownKey {
        /// The key.
        key: String,
        /// The part whose table holds it, if any.
        part: Option<String>,
    },
    /// A key holds the wrong type of TOML value.
    WrongType {
        /// Which key.
        what: String,
        /// What it should hold.
        expected: &'static str,
    },
    /// No `network` key.
    MissingNetwork,
    /// No `[parts.NAME]` tables.
    NoParts,
    /// More parts than the tolerance search can handle in reasonable time.
    TooManyParts {
        /// Parts in the file.
        count: usize,
        /// The most a model may hold.
        max: usize,
    },
    /// A value beyond the range of numbers (`1e300 GF`, `1e400 H`).
    ValueOverflows {
        /// The value text.
        text: String,
    },
    /// A part without `value`.
    MissingValue {
        /// The part.
        part: String,
    },
    /// `frequency_hz` is zero, negative or not finite.
    BadFrequency {
        /// The value found.
        found: f64,
    },
    /// A part name that the network expression could not refer to.
    BadPartName {
        /// The name.
        name: String,
    },
    /// A value without a number.
    MissingNumber {
        /// The value text.
        text: String,
    },
    /// A value whose number does not parse.
    BadNumber {
        /// The value text.
        text: String,
        /// The number part.
        number: String,
    },
    /// A value with a decimal comma ("2,2 uF").
    DecimalComma {
        /// The value text.
        text: String,
    },
    /// A value like "4k7".
    NumberWithLetters {
        /// The value text.
        text: String,
    },
    /// A value with a number but no unit.
    MissingUnit {
        /// The value text.
        text: String,
    },
    /// A value with a unit other than ohm, H or F.
    UnknownUnit {
        /// The value text.
        text: String,
        /// The unit found.
        unit: String,
    },
    /// A value with an unknown SI prefix.
    UnknownPrefix {
        /// The value text.
        text: String,
        /// The prefix found.
        prefix: String,
    },
    /// A value of zero or less.
    NotPositive {
        /// The value text.
        text: String,
    },
    /// A tolerance that does not parse or makes no sense.
    BadTolerance {
        /// The tolerance text.
        text: String,
        /// Why, in words.
        reason: &'static str,
    },
    /// A `kind` other than resistor, inductor or capacitor.
    UnknownKind {
        /// The kind text.
        text: String,
    },
    /// A `kind` that disagrees with the unit of the value.
    KindMismatch {
        /// The part.
        part: String,
        /// The kind written in the file.
        declared: PartKind,
        /// The value text.
        text: String,
        /// The kind the unit implies.
        unit_kind: PartKind,
    },
    /// `series_resistance` on a part that is not an inductor.
    NotAnInductor {
        /// The part.
        part: String,
        /// What it is.
        kind: PartKind,
    },
    /// `series_resistance` not in ohms.
    SeriesResistanceUnit {
        /// The text.
        text: String,
    },
    /// The network text holds nothing.
    EmptyNetwork,
    /// A token where it cannot be.
    Unexpected {
        /// The token.
        found: String,
        /// Its column within the network text.
        column: usize,
        /// What was expected there, if that helps.
        hint: Option<&'static str>,
    },
    /// A character that is no part of the network grammar.
    UnexpectedChar {
        /// The character.
        found: char,
        /// Its column within the network text.
        column: usize,
    },
    /// A single `|`.
    SinglePipe {
        /// Its column within the network text.
        column: usize,
    },
    /// The network text ends after an operator.
    EndsEarly {
        /// The operator.
        after: String,
        /// Its column within the network text.
        column: usize,
    },
    /// A `(` never closed.
    UnclosedParen {
        /// Its column within the network text.
        column: usize,
    },
    /// Parentheses nested too deep.
    TooDeep {
        /// The column of the first `(` too many.
        column: usize,
    },
    /// A name in the network with no `[parts.NAME]` table.
    UnknownPart {
        /// The name.
        name: String,
        /// Its column within the network text.
        column: usize,
    },
    /// A part named twice in the network.
    PartUsedTwice {
        /// The name.
        name: String,
        /// The column of its first use.
        first: usize,
        /// The column of its second use.
        second: usize,
    },
    /// A part defined but not in the network (an error, not a warning: it is nearly always a
    /// typing mistake in the network).
    UnusedPart {
        /// The name.
        name: String,
    },
}

impl fmt::Display for ModelErrorKind {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        use ModelErrorKind as K;
        const UNITS: &str = "expected ohm, H or F";
        match self {
            K::Read { reason } => write!(f, "cannot read the model file: {reason}"),
            K::NotUtf8 => write!(f, "the model file is not UTF-8 text"),
            K::Syntax { message } => write!(f, "not a valid TOML file: {message}"),
            K::UnknownKey { key, part: None } => write!(
                f,
                "unknown key '{key}', expected name, frequency_hz, network or parts"
            ),
            K::UnknownKey {
                key,
                part: Some(part),
            } => write!(
                f,
                "unknown key '{key}' in part '{part}', expected value, tolerance, \
                 series_resistance or kind"
            ),
            K::WrongType { what, expected } => write!(f, "{what} must be {expected}"),
            K::MissingNetwork => {
                write!(f, "no network given, add a line like network = \"R1 + L1\"")
            }
            K::NoParts => write!(
                f,
                "no parts defined, add a table like [parts.R1] with value = \"50 ohm\""
            ),
            K::MissingValue { part } => write!(
                f,
                "part '{part}' has no value, add a line like value = \"50 ohm\""
            ),
            K::BadFrequency { found } => {
                write!(f, "frequency_hz must be greater than zero, found {found}")
            }
            K::BadPartName { name } => write!(
                f,
                "part name '{name}' may hold only letters, digits, '_' and '-'"
            ),
            K::MissingNumber { text } => {
                write!(
                    f,
                    "'{text}': expected a number before the unit, like '50 ohm'"
                )
            }
            K::BadNumber { text, number } => write!(f, "'{text}': '{number}' is not a number"),
            K::ValueOverflows { text } => write!(
                f,
                "'{text}': the value is beyond the range of numbers (more than 1.8e308 in \
                 ohms, henries or farads); check the exponent and the prefix"
            ),
            K::TooManyParts { count, max } => write!(
                f,
                "{count} parts: a circuit model may hold at most {max} (the tolerance band's \
                 search grows with the square of the part count); model the network the \
                 measurement sees, merging parts in series or parallel"
            ),
            K::DecimalComma { text } => {
                write!(f, "'{text}': write decimals with a point, like '2.2 uF'")
            }
            K::NumberWithLetters { text } => write!(
                f,
                "'{text}': write the number in full before the unit, like '4.7 kohm'"
            ),
            K::MissingUnit { text } => write!(f, "'{text}': missing unit, {UNITS}"),
            K::UnknownUnit { text, unit } => write!(f, "'{text}': unknown unit '{unit}', {UNITS}"),
            K::UnknownPrefix { text, prefix } => write!(
                f,
                "'{text}': unknown prefix '{prefix}', expected p, n, u, µ, m, k, M or G"
            ),
            K::NotPositive { text } => write!(f, "'{text}': the value must be greater than zero"),
            K::BadTolerance { text, reason } => write!(f, "'{text}': bad tolerance, {reason}"),
            K::UnknownKind { text } => write!(
                f,
                "'{text}': unknown kind, expected resistor, inductor or capacitor"
            ),
            K::KindMismatch {
                part,
                declared,
                text,
                unit_kind,
            } => write!(
                f,
                "part '{part}' is declared {} but its value '{text}' is for {}",
                declared.with_article(),
                unit_kind.with_article()
            ),
            K::NotAnInductor { part, kind } => write!(
                f,
                "part '{part}' is {}: series_resistance is only for inductors",
                kind.with_article()
            ),
            K::SeriesResistanceUnit { text } => {
                write!(f, "'{text}': series_resistance must be in ohm")
            }
            K::EmptyNetwork => write!(f, "empty network"),
            K::Unexpected {
                found,
                column,
                hint,
            } => {
                write!(f, "unexpected '{found}' at column {column}")?;
                match hint {
                    Some(h) => write!(f, ", {h}"),
                    None => Ok(()),
                }
            }
            K::UnexpectedChar { found, column } => write!(
                f,
                "unexpected character '{found}' at column {column}, expected a part name, \
                 '+', '||', '(' or ')'"
            ),
            K::SinglePipe { column } => {
                write!(f, "'|' at column {column}: write '||' for parallel")
            }
            K::EndsEarly { after, column } => write!(
                f,
                "network ends after '{after}' at column {column}, expected a part name or '('"
            ),
            K::UnclosedParen { column } => write!(f, "missing ')' opened at column {column}"),
            K::TooDeep { column } => {
                write!(f, "parentheses nested more than 64 deep at column {column}")
            }
            K::UnknownPart { name, column } => {
                write!(f, "unknown part '{name}' in network at column {column}")
            }
            K::PartUsedTwice {
                name,
                first,
                second,
            } => write!(
                f,
                "part '{name}' appears twice in network, at columns {first} and {second}"
            ),
            K::UnusedPart { name } => write!(f, "part '{name}' is defined but not used in network"),
        }
    }
}
