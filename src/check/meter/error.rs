//! The one error of the meter check: something typed about the meter that cannot be understood.

use super::CLASS_NAMES;

/// A failure to understand what was typed about the meter.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum MeterError {
    /// Nothing was given.
    #[error("the reading is empty, expected e.g. pf=0.87,p=12.4kW")]
    EmptyReading,
    /// Two commas with nothing between them.
    #[error("'{reading}': an item between commas is empty")]
    EmptyItem {
        /// The whole reading.
        reading: String,
    },
    /// An item without `=`.
    #[error("'{item}': expected key=value, e.g. pf=0.87")]
    NoEquals {
        /// The item as typed.
        item: String,
    },
    /// An item that looks like the decimals of a number written with a comma.
    #[error("'{item}': expected key=value (write decimals with a point, not a comma)")]
    DecimalComma {
        /// The item as typed.
        item: String,
    },
    /// A key other than pf, p, q, s, v, i.
    #[error("'{item}': unknown key '{key}', expected pf, p, q, s, v or i")]
    UnknownKey {
        /// The item as typed.
        item: String,
        /// The key as typed.
        key: String,
    },
    /// The same key twice.
    #[error("'{item}': {key} is given twice")]
    Repeated {
        /// The item as typed.
        item: String,
        /// The key, lowercase.
        key: &'static str,
    },
    /// `key=` with nothing after it.
    #[error("'{item}': the value is missing")]
    MissingValue {
        /// The item as typed.
        item: String,
    },
    /// The value does not start with a number, or the number is not finite.
    #[error("'{item}': '{value}' is not a number")]
    NotANumber {
        /// The item as typed.
        item: String,
        /// The value as typed.
        value: String,
    },
    /// A number beyond the range of numbers, as written or with its prefix.
    #[error(
        "'{item}': the value is beyond the range of numbers (more than 1.8e308): check the exponent and the prefix"
    )]
    OutOfRange {
        /// The item as typed.
        item: String,
    },
    /// The text after the number is neither a unit nor a prefix.
    #[error("'{item}': '{unit}' is not a unit, expected {expected} with an optional k, M or m")]
    UnknownUnit {
        /// The item as typed.
        item: String,
        /// The text after the number.
        unit: String,
        /// The unit the key takes.
        expected: &'static str,
    },
    /// A unit that belongs to another quantity.
    #[error("'{item}': unit '{unit}' does not fit {quantity}, expected {expected}")]
    WrongUnit {
        /// The item as typed.
        item: String,
        /// The unit as typed (without its prefix).
        unit: String,
        /// The quantity the key stands for, in words.
        quantity: &'static str,
        /// The unit the key takes.
        expected: &'static str,
    },
    /// A power factor with a unit or prefix.
    #[error("'{item}': a power factor is a plain number, without unit or prefix")]
    PfHasUnit {
        /// The item as typed.
        item: String,
    },
    /// A power factor beyond ±1.
    #[error("'{item}': a power factor lies between -1 and 1")]
    PfOutOfRange {
        /// The item as typed.
        item: String,
    },
    /// A negative apparent power, voltage or current.
    #[error("'{item}': {quantity} cannot be negative")]
    Negative {
        /// The item as typed.
        item: String,
        /// The quantity, in words.
        quantity: &'static str,
    },
    /// An accuracy class name we do not know.
    #[error("unknown accuracy class '{text}', expected one of: {}", CLASS_NAMES.join(", "))]
    UnknownClass {
        /// The name as typed.
        text: String,
    },
    /// A PF sign convention name we do not know.
    #[error(
        "unknown power factor sign convention '{text}', expected power-flow, lead-negative, lag-negative or unsigned"
    )]
    UnknownPfSign {
        /// The name as typed.
        text: String,
    },
    /// A meter connection we do not know.
    #[error("unknown meter connection '{text}', expected direct or transformer")]
    UnknownConnection {
        /// The name as typed.
        text: String,
    },
    /// A class that is not reactive named as the meter's reactive class.
    #[error(
        "{class} is not a reactive class, expected one of: reactive-2, reactive-3 (IEC 62053-23), fundamental-0.5s, fundamental-1s, fundamental-1, fundamental-2, fundamental-3 (IEC 62053-24)"
    )]
    NotReactive {
        /// The class's name.
        class: &'static str,
    },
    /// A rated current for a class whose low-current rows depend on the connection, without it.
    #[error(
        "{class} lists different low-current rows for direct-connected (Ib) and transformer-operated (In) meters: give the meter's connection (direct or transformer) with its rated current"
    )]
    NeedsConnection {
        /// The class's name.
        class: &'static str,
    },
    /// A connection the class is not made for.
    #[error("{class} is not made for {connection} connection (it is for {fits} meters)")]
    WrongConnection {
        /// The class's name.
        class: &'static str,
        /// The connection given.
        connection: &'static str,
        /// The connection the class is for.
        fits: &'static str,
    },
}
