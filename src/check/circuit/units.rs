//! Part values written with an SI prefix and a unit (`"200 mH"`, `"4.7 kohm"`, `"100 µF"`) and
//! tolerances (`"±5%"`, `"5%"`, `"-5%/+10%"`): parsing, and the display form used by
//! [`Circuit::describe`](super::Circuit::describe).
//!
//! Grammar of a value: a decimal number (optionally with an exponent), optional spaces, an
//! optional SI prefix and a unit. The prefixes are p n u µ m k M G; the units are ohm (also
//! `ohms`, `Ohm`, `Ω`) for resistors, H for inductors and F for capacitors.

use super::{ModelErrorKind, PartKind};

/// SI prefixes and their powers of ten. Both the micro sign (U+00B5) and the Greek mu (U+03BC)
/// are accepted, since keyboards produce either.
const PREFIXES: [(&str, i32); 9] = [
    ("p", -12),
    ("n", -9),
    ("u", -6),
    ("\u{b5}", -6),
    ("\u{3bc}", -6),
    ("m", -3),
    ("k", 3),
    ("M", 6),
    ("G", 9),
];

/// Unit spellings, longest first so that `ohms` is not read as `ohm` plus a stray `s`. Both the
/// ohm sign (U+2126) and the Greek capital omega (U+03A9) are accepted.
const UNITS: [(&str, PartKind); 8] = [
    ("ohms", PartKind::Resistor),
    ("Ohms", PartKind::Resistor),
    ("ohm", PartKind::Resistor),
    ("Ohm", PartKind::Resistor),
    ("\u{3a9}", PartKind::Resistor),
    ("\u{2126}", PartKind::Resistor),
    ("H", PartKind::Inductor),
    ("F", PartKind::Capacitor),
];

/// Reads a part value such as `"200 mH"`: the value in SI units (ohm, henry, farad) and the kind
/// of part its unit implies. The value must be finite and greater than zero.
pub(super) fn parse_value(text: &str) -> Result<(f64, PartKind), ModelErrorKind> {
    let trimmed = text.trim();
    let (number, rest) = split_number(trimmed);
    if number.is_empty() {
        return Err(ModelErrorKind::MissingNumber {
            text: text.to_string(),
        });
    }
    // Spaces are allowed between the number and the unit, none inside the unit.
    let rest = rest.trim_start();
    if rest.starts_with(',') && rest[1..].starts_with(|c: char| c.is_ascii_digit()) {
        return Err(ModelErrorKind::DecimalComma {
            text: text.to_string(),
        });
    }
    if rest.bytes().any(|b| b.is_ascii_digit()) {
        // "4k7" style (or a stray second number): not part of our grammar.
        return Err(ModelErrorKind::NumberWithLetters {
            text: text.to_string(),
        });
    }
    let x: f64 = number.parse().map_err(|_| ModelErrorKind::BadNumber {
        text: text.to_string(),
        number: number.to_string(),
    })?;
    if rest.is_empty() {
        return Err(ModelErrorKind::MissingUnit {
            text: text.to_string(),
        });
    }
    let Some((prefix, kind)) = UNITS
        .iter()
        .find_map(|&(unit, kind)| rest.strip_suffix(unit).map(|p| (p, kind)))
    else {
        return Err(ModelErrorKind::UnknownUnit {
            text: text.to_string(),
            unit: unknown_unit(rest).to_string(),
        });
    };
    let exponent = if prefix.is_empty() {
        0
    } else {
        match PREFIXES.iter().find(|&&(p, _)| p == prefix) {
            Some(&(_, e)) => e,
            None => {
                return Err(ModelErrorKind::UnknownPrefix {
                    text: text.to_string(),
                    prefix: prefix.to_string(),
                });
            }
        }
    };
    // Divide for negative powers: 200 / 1e3 is the correctly rounded 0.2, 200 * 1e-3 is not.
    let value = if exponent < 0 {
        x / 10f64.powi(-exponent)
    } else {
        x * 10f64.powi(exponent)
    };
    if !value.is_finite() {
        // `number` parsed, so only its size (with the prefix) can be out of range
        return Err(ModelErrorKind::ValueOverflows {
            text: text.to_string(),
        });
    }
    if !(value > 0.0) {
        return Err(ModelErrorKind::NotPositive {
            text: text.to_string(),
        });
    }
    Ok((value, kind))
}

/// Splits `"-1.5e3 kohm"` into `("-1.5e3", " kohm")`: an optional sign, digits and points, and an
/// exponent only when digits follow the `e` (so `"2 H"` and `"1e"` do not swallow letters).
fn split_number(t: &str) -> (&str, &str) {
    let b = t.as_bytes();
    let mut i = 0;
    if i < b.len() && (b[i] == b'+' || b[i] == b'-') {
        i += 1;
    }
    while i < b.len() && (b[i].is_ascii_digit() || b[i] == b'.') {
        i += 1;
    }
    if i > 0 && i < b.len() && (b[i] == b'e' || b[i] == b'E') {
        let mut j = i + 1;
        if j < b.len() && (b[j] == b'+' || b[j] == b'-') {
            j += 1;
        }
        if j < b.len() && b[j].is_ascii_digit() {
            while j < b.len() && b[j].is_ascii_digit() {
                j += 1;
            }
            i = j;
        }
    }
    (&t[..i], &t[i..])
}

/// The unit part of an unrecognised suffix: `"uQ"` -> `"Q"` (a known prefix dropped), `"V"` -> `"V"`.
fn unknown_unit(rest: &str) -> &str {
    for &(p, _) in &PREFIXES {
        if let Some(unit) = rest.strip_prefix(p)
            && !unit.is_empty()
        {
            return unit;
        }
    }
    rest
}

/// Reads a tolerance: `"±5%"`, `"+-5%"`, `"+/-5%"`, `"5%"` (symmetric) or `"-5%/+10%"` (either
/// order), spaces allowed anywhere, the Unicode minus accepted. Returns the lower and upper limits
/// as fractions of the nominal value (`(-0.05, 0.10)`). The lower limit must stay above -100 %,
/// or the part could reach zero.
pub(super) fn parse_tolerance(text: &str) -> Result<(f64, f64), ModelErrorKind> {
    let bad = |reason: &'static str| ModelErrorKind::BadTolerance {
        text: text.to_string(),
        reason,
    };
    const FORMS: &str = "expected a percentage like '±5%', '5%' or '-5%/+10%'";
    let compact: String = text
        .chars()
        .filter(|c| !c.is_whitespace())
        .map(|c| if c == '\u{2212}' { '-' } else { c })
        .collect();
    let symmetric = ["±", "+/-", "+-"]
        .iter()
        .find_map(|s| compact.strip_prefix(s))
        .or_else(|| {
            compact
                .starts_with(|c: char| c.is_ascii_digit() || c == '.')
                .then_some(compact.as_str())
        });
    let (low, high) = if let Some(rest) = symmetric {
        let p = percent(rest).ok_or_else(|| bad(FORMS))?;
        (-p, p)
    } else if let Some((a, b)) = compact.split_once('/') {
        let (sa, pa) = signed_percent(a).ok_or_else(|| bad(FORMS))?;
        let (sb, pb) = signed_percent(b).ok_or_else(|| bad(FORMS))?;
        match (sa, sb) {
            ('-', '+') => (-pa, pb),
            ('+', '-') => (-pb, pa),
            _ => {
                return Err(bad(
                    "give the lower limit with '-' and the upper with '+', like '-5%/+10%'",
                ));
            }
        }
    } else if compact.starts_with('-') || compact.starts_with('+') {
        return Err(bad(
            "a one-sided tolerance needs both limits, like '-0%/+10%', or use '±5%'",
        ));
    } else {
        return Err(bad(FORMS));
    };
    if !(low > -1.0) {
        return Err(bad(
            "the lower limit must be above -100%, or the part could reach zero",
        ));
    }
    Ok((low, high))
}

/// `"5%"` -> 0.05; `None` unless a finite non-negative number followed by `%`.
fn percent(s: &str) -> Option<f64> {
    let number = s.strip_suffix('%')?;
    if !number.starts_with(|c: char| c.is_ascii_digit() || c == '.') {
        return None;
    }
    let x: f64 = number.parse().ok()?;
    (x.is_finite() && x >= 0.0).then_some(x / 100.0)
}

/// `"-5%"` -> ('-', 0.05); the sign is required.
fn signed_percent(s: &str) -> Option<(char, f64)> {
    let sign = s.chars().next().filter(|&c| c == '-' || c == '+')?;
    Some((sign, percent(&s[1..])?))
}

/// A value in engineering notation with its unit symbol: 0.2 H -> "200 mH", 4700 Ω -> "4.7 kΩ".
pub(super) fn format_value(value: f64, kind: PartKind) -> String {
    let unit = kind.unit_symbol();
    if !(value.is_finite() && value > 0.0) {
        return format!("{value} {unit}");
    }
    let mut exponent = ((value.log10() / 3.0).floor() as i32 * 3).clamp(-12, 9);
    let mut mantissa = rounded(scale(value, exponent));
    // Rounding to 4 significant digits may carry into the next prefix (999.99 -> 1000).
    if mantissa >= 1000.0 && exponent < 9 {
        exponent += 3;
        mantissa = rounded(scale(value, exponent));
    }
    let prefix = match exponent {
        -12 => "p",
        -9 => "n",
        -6 => "\u{b5}",
        -3 => "m",
        3 => "k",
        6 => "M",
        9 => "G",
        _ => "",
    };
    format!(
        "{} {prefix}{unit}",
        trim_zeros(&format!("{mantissa:.*}", decimals(mantissa)))
    )
}

/// Decimals that show 4 significant digits of a mantissa in [1, 1000).
fn decimals(mantissa: f64) -> usize {
    (3 - (mantissa.abs().log10().floor() as i32).clamp(0, 3)) as usize
}

/// A mantissa rounded to 4 significant digits.
fn rounded(mantissa: f64) -> f64 {
    format!("{mantissa:.*}", decimals(mantissa))
        .parse()
        .unwrap_or(mantissa)
}

fn scale(value: f64, exponent: i32) -> f64 {
    if exponent < 0 {
        value * 10f64.powi(-exponent)
    } else {
        value / 10f64.powi(exponent)
    }
}

/// A tolerance as text: "" for none, "±5 %" when symmetric, "−5/+10 %" otherwise.
pub(super) fn format_tolerance(low: f64, high: f64) -> String {
    let lo = trim_zeros(&format!("{:.3}", -low * 100.0));
    let hi = trim_zeros(&format!("{:.3}", high * 100.0));
    if low == 0.0 && high == 0.0 {
        String::new()
    } else if lo == hi {
        format!("±{hi} %")
    } else {
        format!("\u{2212}{lo}/+{hi} %")
    }
}

/// "5.000" -> "5", "2.500" -> "2.5".
fn trim_zeros(s: &str) -> String {
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s.to_string()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn value(text: &str) -> f64 {
        parse_value(text).map(|(v, _)| v).unwrap_or(f64::NAN)
    }

    #[test]
    fn si_prefixes_scale_by_their_power_of_ten() {
        // SI brochure prefixes (common practice).
        assert_eq!(value("200 mH"), 0.2);
        assert_eq!(value("100 uF"), 100e-6);
        assert_eq!(value("100 µF"), 100e-6);
        assert_eq!(value("100 \u{3bc}F"), 100e-6);
        assert_eq!(value("47nF"), 47e-9);
        assert_eq!(value("22 pF"), 22e-12);
        assert_eq!(value("4.7 kohm"), 4700.0);
        assert_eq!(value("1 Mohm"), 1e6);
        assert_eq!(value("1 GΩ"), 1e9);
        assert_eq!(value("50 Ω"), 50.0);
        assert_eq!(value("50 \u{2126}"), 50.0);
        assert_eq!(value("2.1 ohms"), 2.1);
        assert_eq!(value("1.5e3 ohm"), 1500.0);
        assert_eq!(value("  0.5 H "), 0.5);
        assert_eq!(value("0.5  H"), 0.5);
    }

    #[test]
    fn the_unit_decides_the_kind_of_part() {
        assert_eq!(parse_value("50 ohm").map(|v| v.1), Ok(PartKind::Resistor));
        assert_eq!(parse_value("1 mH").map(|v| v.1), Ok(PartKind::Inductor));
        assert_eq!(parse_value("1 mF").map(|v| v.1), Ok(PartKind::Capacitor));
    }

    #[test]
    fn bad_values_are_refused_with_a_reason() {
        let msg = |t: &str| {
            parse_value(t)
                .err()
                .map(|e| e.to_string())
                .unwrap_or_default()
        };
        assert_eq!(
            msg("22 uQ"),
            "'22 uQ': unknown unit 'Q', expected ohm, H or F"
        );
        assert_eq!(
            msg("22 V"),
            "'22 V': unknown unit 'V', expected ohm, H or F"
        );
        assert_eq!(msg("50"), "'50': missing unit, expected ohm, H or F");
        assert_eq!(
            msg("2,2 uF"),
            "'2,2 uF': write decimals with a point, like '2.2 uF'"
        );
        assert_eq!(msg("5..0 ohm"), "'5..0 ohm': '5..0' is not a number");
        assert_eq!(
            msg("ohm"),
            "'ohm': expected a number before the unit, like '50 ohm'"
        );
        assert_eq!(
            msg("4k7"),
            "'4k7': write the number in full before the unit, like '4.7 kohm'"
        );
        assert_eq!(
            msg("1 Kohm"),
            "'1 Kohm': unknown prefix 'K', expected p, n, u, µ, m, k, M or G"
        );
        assert_eq!(
            msg("-50 ohm"),
            "'-50 ohm': the value must be greater than zero"
        );
        assert_eq!(msg("0 F"), "'0 F': the value must be greater than zero");
        // a number too large for a double was reported as "not a number"
        assert!(
            msg("1e400 H").starts_with("'1e400 H': the value is beyond the range of numbers"),
            "{}",
            msg("1e400 H")
        );
        assert!(msg("1e300 GF").starts_with("'1e300 GF': the value is beyond the range"));
    }

    #[test]
    fn tolerances_read_as_fractions() {
        assert_eq!(parse_tolerance("±5%"), Ok((-0.05, 0.05)));
        assert_eq!(parse_tolerance("+-5%"), Ok((-0.05, 0.05)));
        assert_eq!(parse_tolerance("+/- 5 %"), Ok((-0.05, 0.05)));
        assert_eq!(parse_tolerance("5%"), Ok((-0.05, 0.05)));
        assert_eq!(parse_tolerance("0%"), Ok((-0.0, 0.0)));
        assert_eq!(parse_tolerance("-5%/+10%"), Ok((-0.05, 0.10)));
        assert_eq!(parse_tolerance("+10% / \u{2212}5%"), Ok((-0.05, 0.10)));
        assert_eq!(parse_tolerance("-20%/+80%"), Ok((-0.20, 0.80)));
    }

    #[test]
    fn bad_tolerances_are_refused_with_a_reason() {
        let msg = |t: &str| {
            parse_tolerance(t)
                .err()
                .map(|e| e.to_string())
                .unwrap_or_default()
        };
        let forms = "expected a percentage like '±5%', '5%' or '-5%/+10%'";
        assert_eq!(msg("5"), format!("'5': bad tolerance, {forms}"));
        assert_eq!(msg("±x%"), format!("'±x%': bad tolerance, {forms}"));
        assert_eq!(
            msg("about 5%"),
            format!("'about 5%': bad tolerance, {forms}")
        );
        assert_eq!(
            msg("-5%/-2%"),
            "'-5%/-2%': bad tolerance, give the lower limit with '-' and the upper with '+', \
             like '-5%/+10%'"
        );
        assert_eq!(
            msg("+10%"),
            "'+10%': bad tolerance, a one-sided tolerance needs both limits, like '-0%/+10%', \
             or use '±5%'"
        );
        assert_eq!(
            msg("±100%"),
            "'±100%': bad tolerance, the lower limit must be above -100%, or the part could \
             reach zero"
        );
    }

    #[test]
    fn values_print_in_engineering_notation() {
        assert_eq!(format_value(0.2, PartKind::Inductor), "200 mH");
        assert_eq!(format_value(100e-6, PartKind::Capacitor), "100 µF");
        assert_eq!(format_value(4700.0, PartKind::Resistor), "4.7 kΩ");
        assert_eq!(format_value(2.1, PartKind::Resistor), "2.1 Ω");
        assert_eq!(format_value(999.99, PartKind::Resistor), "1 kΩ");
        assert_eq!(format_value(33e-9, PartKind::Capacitor), "33 nF");
    }

    #[test]
    fn tolerances_print_as_percent() {
        assert_eq!(format_tolerance(-0.05, 0.05), "±5 %");
        assert_eq!(format_tolerance(-0.05, 0.10), "\u{2212}5/+10 %");
        assert_eq!(format_tolerance(0.0, 0.0), "");
        assert_eq!(format_tolerance(-0.025, 0.025), "±2.5 %");
    }
}
