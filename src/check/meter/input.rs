//! What the user tells about the meter: its reading, its accuracy class and how it signs PF.

use super::MeterError;
use serde::Serialize;

/// What the meter shows. Every field is optional; at least one is given.
///
/// Parsed by [`Reading::parse`] from text such as
/// `pf=0.87,p=12.4kW,q=6.1kvar,s=15kVA,v=230V,i=54A`.
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize)]
pub struct Reading {
    /// Power factor as the meter signs it.
    pub pf: Option<f64>,
    /// Active power, W.
    pub p_w: Option<f64>,
    /// Reactive power, var.
    pub q_var: Option<f64>,
    /// Apparent power, VA.
    pub s_va: Option<f64>,
    /// Voltage, V.
    pub v: Option<f64>,
    /// Current, A.
    pub i: Option<f64>,
}

/// The keys of a reading: name, quantity in words, unit.
const KEYS: [(&str, &str, &str); 6] = [
    ("pf", "power factor", ""),
    ("p", "active power", "W"),
    ("q", "reactive power", "var"),
    ("s", "apparent power", "VA"),
    ("v", "voltage", "V"),
    ("i", "current", "A"),
];

/// Units we recognise, longest first so "var" and "va" win over "v" and "a" (matched
/// case-insensitively: "kVAr", "kvar" and "KVAR" all mean kilovar).
const UNITS: [&str; 5] = ["var", "va", "w", "v", "a"];

impl Reading {
    /// Parses `key=value` items separated by commas.
    ///
    /// Keys `pf p q s v i`, in any case. A value is a number (negative allowed) with an optional
    /// SI prefix `k` (or `K`), `M` or `m`, and an optional unit that must fit the key: W, var, VA,
    /// V, A (unit letters in any case). A power factor is a plain number between −1 and 1;
    /// apparent power, voltage and current cannot be negative.
    pub fn parse(text: &str) -> Result<Reading, MeterError> {
        if text.trim().is_empty() {
            return Err(MeterError::EmptyReading);
        }
        let mut reading = Reading::default();
        for raw in text.split(',') {
            let item = raw.trim();
            if item.is_empty() {
                return Err(MeterError::EmptyItem {
                    reading: shown(text.trim()),
                });
            }
            let owned = || shown(item);
            let Some((key_text, value_text)) = item.split_once('=') else {
                return Err(if item.chars().all(|c| c.is_ascii_digit()) {
                    MeterError::DecimalComma { item: owned() }
                } else {
                    MeterError::NoEquals { item: owned() }
                });
            };
            let key_text = key_text.trim();
            let Some(&(key, quantity, unit)) = KEYS
                .iter()
                .find(|(k, _, _)| k.eq_ignore_ascii_case(key_text))
            else {
                return Err(MeterError::UnknownKey {
                    item: owned(),
                    key: shown(key_text),
                });
            };
            let value = parse_value(item, value_text.trim(), key, quantity, unit)?;
            let slot = match key {
                "pf" => &mut reading.pf,
                "p" => &mut reading.p_w,
                "q" => &mut reading.q_var,
                "s" => &mut reading.s_va,
                "v" => &mut reading.v,
                _ => &mut reading.i,
            };
            if slot.is_some() {
                return Err(MeterError::Repeated { item: owned(), key });
            }
            *slot = Some(value);
        }
        Ok(reading)
    }
}

/// One value: number, then optional prefix and unit, checked against its key.
fn parse_value(
    item: &str,
    value: &str,
    key: &str,
    quantity: &'static str,
    expected: &'static str,
) -> Result<f64, MeterError> {
    if value.is_empty() {
        return Err(MeterError::MissingValue { item: shown(item) });
    }
    // No unit or prefix starts with 'e', so the number runs up to the first other letter.
    let split = value
        .find(|c: char| !(c.is_ascii_digit() || "+-.eE".contains(c)))
        .unwrap_or(value.len());
    let (number, suffix) = value.split_at(split);
    let x: f64 = match number.parse() {
        Ok(x) if f64::is_finite(x) => x,
        Ok(_) => {
            return Err(MeterError::OutOfRange { item: shown(item) });
        }
        _ => {
            return Err(MeterError::NotANumber {
                item: shown(item),
                value: shown(value),
            });
        }
    };
    let suffix = suffix.trim();
    if key == "pf" {
        if !suffix.is_empty() {
            return Err(MeterError::PfHasUnit { item: shown(item) });
        }
        if x.abs() > 1.0 {
            return Err(MeterError::PfOutOfRange { item: shown(item) });
        }
        return Ok(x);
    }
    let lower = suffix.to_ascii_lowercase();
    let unit_len = UNITS
        .iter()
        .find(|u| lower.ends_with(*u))
        .map_or(0, |u| u.len());
    let (prefix, unit) = suffix.split_at(suffix.len() - unit_len);
    let scale = match prefix {
        "" => 1.0,
        "k" | "K" => 1e3,
        "M" => 1e6,
        "m" => 1e-3,
        _ => {
            return Err(MeterError::UnknownUnit {
                item: shown(item),
                unit: shown(suffix),
                expected,
            });
        }
    };
    if !unit.is_empty() && !unit.eq_ignore_ascii_case(expected) {
        return Err(MeterError::WrongUnit {
            item: shown(item),
            unit: shown(unit),
            quantity,
            expected,
        });
    }
    if x < 0.0 && matches!(key, "s" | "v" | "i") {
        return Err(MeterError::Negative {
            item: shown(item),
            quantity,
        });
    }
    let x = x * scale;
    if !x.is_finite() {
        return Err(MeterError::OutOfRange { item: shown(item) });
    }
    Ok(x)
}

/// Longest text of a reading repeated in a message as it was typed.
const SHOWN_CHARS: usize = 40;

/// Typed text as a message repeats it: control characters escaped, and a long text cut to its
/// start with its length (a 100 KB reading was repeated whole, twice).
fn shown(text: &str) -> String {
    let n = text.chars().count();
    let mut s: String = text
        .chars()
        .take(SHOWN_CHARS)
        .map(|c| {
            if c.is_control() {
                c.escape_default().to_string()
            } else {
                c.to_string()
            }
        })
        .collect();
    if n > SHOWN_CHARS {
        s.push_str(&format!("... ({n} characters)"));
    }
    s
}

/// A meter's accuracy class, with the standard it is defined in.
///
/// Limits are percent errors of the energy (and so of the power) at reference conditions, at the
/// test points and currents the standard lists (the rows in `limits.rs`, each with its source;
/// all from memory): see [`AccuracyClass::limit`].
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum AccuracyClass {
    /// IEC 62053-21 class 1 (active energy). Accepted name `1`.
    Iec1,
    /// IEC 62053-21 class 2 (active energy). Accepted name `2`.
    Iec2,
    /// IEC 62053-22 class 0.2S (active energy). Accepted name `0.2s`.
    Iec02S,
    /// IEC 62053-22 class 0.5S (active energy). Accepted name `0.5s`.
    Iec05S,
    /// ANSI C12.20 class 0.1. Accepted name `ansi-0.1`.
    Ansi01,
    /// ANSI C12.20 class 0.2. Accepted name `ansi-0.2`.
    Ansi02,
    /// ANSI C12.20 class 0.5. Accepted name `ansi-0.5`.
    Ansi05,
    /// IEC 62053-23 class 2 (reactive energy). Accepted name `reactive-2`.
    Reactive2,
    /// IEC 62053-23 class 3 (reactive energy). Accepted name `reactive-3`.
    Reactive3,
    /// IEC 62053-24 class 0.5S (fundamental reactive energy). Accepted name `fundamental-0.5s`.
    Fundamental05S,
    /// IEC 62053-24 class 1S (fundamental reactive energy). Accepted name `fundamental-1s`.
    Fundamental1S,
    /// IEC 62053-24 class 1 (fundamental reactive energy). Accepted name `fundamental-1`.
    Fundamental1,
    /// IEC 62053-24 class 2 (fundamental reactive energy). Accepted name `fundamental-2`.
    Fundamental2,
    /// IEC 62053-24 class 3 (fundamental reactive energy). Accepted name `fundamental-3`.
    Fundamental3,
}

/// The names [`AccuracyClass::parse`] accepts (in any case), in the order of the variants.
pub const CLASS_NAMES: [&str; 14] = [
    "1",
    "2",
    "0.2s",
    "0.5s",
    "ansi-0.1",
    "ansi-0.2",
    "ansi-0.5",
    "reactive-2",
    "reactive-3",
    "fundamental-0.5s",
    "fundamental-1s",
    "fundamental-1",
    "fundamental-2",
    "fundamental-3",
];

impl AccuracyClass {
    pub(super) const ALL: [AccuracyClass; 14] = [
        AccuracyClass::Iec1,
        AccuracyClass::Iec2,
        AccuracyClass::Iec02S,
        AccuracyClass::Iec05S,
        AccuracyClass::Ansi01,
        AccuracyClass::Ansi02,
        AccuracyClass::Ansi05,
        AccuracyClass::Reactive2,
        AccuracyClass::Reactive3,
        AccuracyClass::Fundamental05S,
        AccuracyClass::Fundamental1S,
        AccuracyClass::Fundamental1,
        AccuracyClass::Fundamental2,
        AccuracyClass::Fundamental3,
    ];

    /// Reads one of [`CLASS_NAMES`], ignoring case and surrounding spaces (`0.2S` = `0.2s`).
    pub fn parse(text: &str) -> Result<Self, MeterError> {
        let t = text.trim();
        CLASS_NAMES
            .iter()
            .position(|n| n.eq_ignore_ascii_case(t))
            .map(|k| Self::ALL[k])
            .ok_or_else(|| MeterError::UnknownClass {
                text: t.to_string(),
            })
    }

    /// The class with its standard, e.g. "IEC 62053-21 class 1".
    pub fn name(&self) -> &'static str {
        match self {
            AccuracyClass::Iec1 => "IEC 62053-21 class 1",
            AccuracyClass::Iec2 => "IEC 62053-21 class 2",
            AccuracyClass::Iec02S => "IEC 62053-22 class 0.2S",
            AccuracyClass::Iec05S => "IEC 62053-22 class 0.5S",
            AccuracyClass::Ansi01 => "ANSI C12.20 class 0.1",
            AccuracyClass::Ansi02 => "ANSI C12.20 class 0.2",
            AccuracyClass::Ansi05 => "ANSI C12.20 class 0.5",
            AccuracyClass::Reactive2 => "IEC 62053-23 class 2",
            AccuracyClass::Reactive3 => "IEC 62053-23 class 3",
            AccuracyClass::Fundamental05S => "IEC 62053-24 class 0.5S",
            AccuracyClass::Fundamental1S => "IEC 62053-24 class 1S",
            AccuracyClass::Fundamental1 => "IEC 62053-24 class 1",
            AccuracyClass::Fundamental2 => "IEC 62053-24 class 2",
            AccuracyClass::Fundamental3 => "IEC 62053-24 class 3",
        }
    }

    /// True for the reactive-energy classes (IEC 62053-23 and the fundamental reactive ones of
    /// IEC 62053-24).
    pub fn is_reactive(&self) -> bool {
        matches!(
            self,
            AccuracyClass::Reactive2
                | AccuracyClass::Reactive3
                | AccuracyClass::Fundamental05S
                | AccuracyClass::Fundamental1S
                | AccuracyClass::Fundamental1
                | AccuracyClass::Fundamental2
                | AccuracyClass::Fundamental3
        )
    }
}

/// How the meter signs its power factor.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum PfSign {
    /// The sign of P (IEC style): negative when exporting active power. Name `power-flow`.
    PowerFlow,
    /// Negative in the capacitive quadrants (II and IV of the four-quadrant metering diagram),
    /// positive in the inductive ones (I and III). Name `lead-negative`.
    LeadNegative,
    /// Negative in the inductive quadrants (I and III), positive in the capacitive ones (II and
    /// IV): meters that show a lagging PF as negative. Name `lag-negative`.
    LagNegative,
    /// No sign: |PF|. Name `unsigned`.
    Unsigned,
}

/// Every PF sign convention, in the order the help lists them.
pub const PF_SIGNS: [PfSign; 4] = [
    PfSign::PowerFlow,
    PfSign::LeadNegative,
    PfSign::LagNegative,
    PfSign::Unsigned,
];

/// True in the capacitive quadrants of the four-quadrant metering diagram (IEC 62053-23 figure,
/// load convention, from memory): II (export P, import Q) and IV (import P, export Q). A zero P
/// or Q counts as positive.
pub fn capacitive(p: f64, q: f64) -> bool {
    (p < 0.0) != (q < 0.0)
}

impl PfSign {
    /// Reads `power-flow`, `lead-negative`, `lag-negative` or `unsigned` (any case).
    pub fn parse(text: &str) -> Result<Self, MeterError> {
        let t = text.trim();
        PF_SIGNS
            .into_iter()
            .find(|s| s.as_str().eq_ignore_ascii_case(t))
            .ok_or_else(|| MeterError::UnknownPfSign {
                text: t.to_string(),
            })
    }

    /// The name used on the command line and in every output.
    pub fn as_str(self) -> &'static str {
        match self {
            PfSign::PowerFlow => "power-flow",
            PfSign::LeadNegative => "lead-negative",
            PfSign::LagNegative => "lag-negative",
            PfSign::Unsigned => "unsigned",
        }
    }

    /// A PF of magnitude `|pf|` signed the way this meter signs it, for a circuit with active
    /// power `p` and reactive power `q` (load convention). A zero P or Q counts as positive.
    pub fn apply(self, pf: f64, p: f64, q: f64) -> f64 {
        let m = pf.abs();
        let negative = match self {
            PfSign::PowerFlow => p < 0.0,
            PfSign::LeadNegative => capacitive(p, q),
            PfSign::LagNegative => !capacitive(p, q),
            PfSign::Unsigned => false,
        };
        if negative { -m } else { m }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn err(text: &str) -> String {
        match Reading::parse(text) {
            Ok(r) => panic!("{text:?} parsed as {r:?}"),
            Err(e) => e.to_string(),
        }
    }

    #[test]
    fn a_full_reading_parses_with_prefixes_and_units() {
        let r = Reading::parse("pf=0.87,p=12.4kW,q=6.1kvar,s=15kVA,v=230V,i=54A").unwrap();
        assert_eq!(r.pf, Some(0.87));
        assert!((r.p_w.unwrap() - 12_400.0).abs() < 1e-9);
        assert!((r.q_var.unwrap() - 6_100.0).abs() < 1e-9);
        assert!((r.s_va.unwrap() - 15_000.0).abs() < 1e-9);
        assert_eq!((r.v, r.i), (Some(230.0), Some(54.0)));
    }

    #[test]
    fn keys_and_units_ignore_case_and_spaces_and_negatives_are_kept() {
        let r = Reading::parse(" PF = -0.87 , P=-12.4 KW, Q=2.5 kVAr, I=850mA, S=1.2MVA ").unwrap();
        assert_eq!(r.pf, Some(-0.87));
        assert!((r.p_w.unwrap() + 12_400.0).abs() < 1e-9);
        assert!((r.q_var.unwrap() - 2_500.0).abs() < 1e-9);
        assert!((r.i.unwrap() - 0.85).abs() < 1e-12);
        assert!((r.s_va.unwrap() - 1.2e6).abs() < 1e-6);
        assert_eq!(r.v, None);
    }

    #[test]
    fn a_bare_number_or_bare_prefix_needs_no_unit() {
        let r = Reading::parse("p=1e3,q=2k,v=0.4k").unwrap();
        assert_eq!((r.p_w, r.q_var), (Some(1000.0), Some(2000.0)));
        assert!((r.v.unwrap() - 400.0).abs() < 1e-9);
    }

    #[test]
    fn every_bad_reading_gets_its_own_message() {
        assert_eq!(
            err("  "),
            "the reading is empty, expected e.g. pf=0.87,p=12.4kW"
        );
        assert_eq!(
            err("pf=0.9,,p=1kW"),
            "'pf=0.9,,p=1kW': an item between commas is empty"
        );
        assert_eq!(err("pf0.87"), "'pf0.87': expected key=value, e.g. pf=0.87");
        assert_eq!(
            err("pf=0,87"),
            "'87': expected key=value (write decimals with a point, not a comma)"
        );
        assert_eq!(
            err("x=3"),
            "'x=3': unknown key 'x', expected pf, p, q, s, v or i"
        );
        assert_eq!(err("p=1kW,P=2kW"), "'P=2kW': p is given twice");
        assert_eq!(err("p="), "'p=': the value is missing");
        assert_eq!(err("p=abc"), "'p=abc': 'abc' is not a number");
        assert_eq!(
            err("p=1e999W"),
            "'p=1e999W': the value is beyond the range of numbers (more than 1.8e308): check \
             the exponent and the prefix"
        );
        assert_eq!(err("p=inf"), "'p=inf': 'inf' is not a number");
        assert_eq!(
            err("p=12kX"),
            "'p=12kX': 'kX' is not a unit, expected W with an optional k, M or m"
        );
        assert_eq!(
            err("q=6.1kW"),
            "'q=6.1kW': unit 'W' does not fit reactive power, expected var"
        );
        assert_eq!(
            err("s=15kvar"),
            "'s=15kvar': unit 'var' does not fit apparent power, expected VA"
        );
        assert_eq!(
            err("pf=0.8W"),
            "'pf=0.8W': a power factor is a plain number, without unit or prefix"
        );
        assert_eq!(
            err("pf=1.2"),
            "'pf=1.2': a power factor lies between -1 and 1"
        );
        assert_eq!(err("v=-230V"), "'v=-230V': voltage cannot be negative");
        assert_eq!(err("i=-5"), "'i=-5': current cannot be negative");
        assert_eq!(
            err("s=-1kVA"),
            "'s=-1kVA': apparent power cannot be negative"
        );
    }

    #[test]
    fn class_names_parse_in_any_case_and_unknown_names_list_the_choices() {
        for (name, class) in CLASS_NAMES.iter().zip(AccuracyClass::ALL) {
            assert_eq!(AccuracyClass::parse(name).unwrap(), class);
            assert_eq!(
                AccuracyClass::parse(&name.to_ascii_uppercase()).unwrap(),
                class
            );
        }
        assert_eq!(
            AccuracyClass::parse("0.2S").unwrap().name(),
            "IEC 62053-22 class 0.2S"
        );
        let e = AccuracyClass::parse("0.3").unwrap_err().to_string();
        assert_eq!(
            e,
            "unknown accuracy class '0.3', expected one of: 1, 2, 0.2s, 0.5s, ansi-0.1, \
             ansi-0.2, ansi-0.5, reactive-2, reactive-3, fundamental-0.5s, fundamental-1s, \
             fundamental-1, fundamental-2, fundamental-3"
        );
    }

    #[test]
    fn pf_sign_conventions_parse_by_name() {
        assert_eq!(PfSign::parse("Power-Flow").unwrap(), PfSign::PowerFlow);
        assert_eq!(
            PfSign::parse("lead-negative").unwrap(),
            PfSign::LeadNegative
        );
        assert_eq!(PfSign::parse("unsigned").unwrap(), PfSign::Unsigned);
        assert_eq!(PfSign::parse("LAG-negative").unwrap(), PfSign::LagNegative);
        assert_eq!(
            PfSign::parse("iec").unwrap_err().to_string(),
            "unknown power factor sign convention 'iec', expected power-flow, lead-negative, \
             lag-negative or unsigned"
        );
    }
}
