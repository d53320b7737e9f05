//! The keys a sidecar accepts: one table, read by the parser, checked against the README.
//!
//! Every key is the long name of the command-line option it mirrors with `_` for `-`
//! (`i_ratio_accuracy` for `--i-ratio-accuracy`), and takes what the option takes: a whole
//! number where the option takes one (`harmonics = 40`), any number where it takes a number
//! (`v_scale = 100` or `100.0`), a channel by name or number (`voltage = "CH1"` or `voltage = 2`),
//! `true`/`false` for a flag. Keys of earlier versions ([`OLD_KEYS`]) are still read, with a note.

use crate::check::bank::MAX_STEPS;
use crate::check::tolerance::MAX_DRAWS;

/// Where a key lives in the file.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Table {
    /// The top level, and each `[[files]]` section.
    Top,
    /// `[meter]` (and `[files.meter]`): a meter reading checked against each capture.
    Meter,
    /// `[bank]` (and `[files.bank]`): a capacitor bank check.
    Bank,
}

impl Table {
    /// The table's name in the file (`""` for the top level).
    pub fn name(self) -> &'static str {
        match self {
            Table::Top => "",
            Table::Meter => "meter",
            Table::Bank => "bank",
        }
    }
}

/// What a number must be.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Bound {
    /// Any finite number.
    Finite,
    /// Finite and not zero (a scale may be negative: a probe connected the other way).
    NonZero,
    /// Above zero.
    Positive,
    /// Zero or above (an accuracy limit).
    NonNegative,
    /// Above 0 and at most 1 (a PF).
    Fraction,
}

/// How a key's value is read.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Kind {
    /// A channel: a header name in quotes, or a number (`2` or `"2"`).
    Channel,
    /// Text in quotes.
    Text,
    /// One of the words listed.
    Choice(&'static [&'static str]),
    /// A file path in quotes.
    Path,
    /// `true` or `false`.
    Flag,
    /// A number (an integer is fine).
    Number(Bound),
    /// A whole number within the limits.
    Whole(u64, u64),
    /// A list of positive numbers.
    Numbers,
    /// How the circuit is connected, as `--system` reads it.
    System,
}

impl Kind {
    /// What the value looks like, for the README and for error messages.
    pub fn looks_like(self) -> String {
        match self {
            Kind::Channel => "a header name in quotes, or a channel number".into(),
            Kind::Text => "text in quotes".into(),
            Kind::Choice(words) => format!(
                "one of {}",
                words
                    .iter()
                    .map(|w| format!("\"{w}\""))
                    .collect::<Vec<_>>()
                    .join(", ")
            ),
            Kind::Path => "a file path in quotes".into(),
            Kind::Flag => "true or false".into(),
            Kind::Number(Bound::Finite) => "a number".into(),
            Kind::Number(Bound::NonZero) => "a number, not zero".into(),
            Kind::Number(Bound::Positive) => "a number above zero".into(),
            Kind::Number(Bound::NonNegative) => "a number, zero or above".into(),
            Kind::Number(Bound::Fraction) => "a number above 0, at most 1".into(),
            Kind::Whole(lo, hi) if hi == u64::MAX => format!("a whole number, {lo} or more"),
            Kind::Whole(lo, hi) => format!("a whole number from {lo} to {hi}"),
            Kind::Numbers => "a list of numbers above zero, like [25, 25, 50]".into(),
            Kind::System => "one of \"single\", \"4-wire\", \"3-wire\"".into(),
        }
    }
}

/// A key a sidecar accepts.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Key {
    /// The table it lives in.
    pub table: Table,
    /// Its name: the option's long name with `_` for `-`.
    pub name: &'static str,
    /// How its value is read.
    pub kind: Kind,
    /// The command-line option it mirrors (`batch`'s, or `meter`'s and `bank`'s in their tables).
    pub option: &'static str,
}

const fn key(table: Table, name: &'static str, kind: Kind, option: &'static str) -> Key {
    Key {
        table,
        name,
        kind,
        option,
    }
}

use Bound::*;
use Kind::*;
use Table::*;

/// Where a span's times count from, as `--time-zero` takes them.
pub const TIME_ZEROS: &[&str] = &["start", "trigger"];

/// Distributions of part values, as `--distribution` takes them.
pub const DISTRIBUTIONS: &[&str] = &["uniform", "normal"];

/// Every key a sidecar accepts, in the order the README lists them.
#[rustfmt::skip]
pub const KEYS: &[Key] = &[
    key(Top, "voltage", Channel, "--voltage"),
    key(Top, "current", Channel, "--current"),
    key(Top, "neutral", Channel, "--neutral"),
    key(Top, "system", System, "--system"),
    key(Top, "force_channels", Flag, "--force-channels"),
    key(Top, "secondary", Flag, "--secondary"),
    key(Top, "rate", Number(Positive), "--rate"),
    key(Top, "v_scale", Number(NonZero), "--v-scale"),
    key(Top, "i_scale", Number(NonZero), "--i-scale"),
    key(Top, "skew", Number(Finite), "--skew"),
    key(Top, "from", Number(Finite), "--from"),
    key(Top, "to", Number(Finite), "--to"),
    key(Top, "time_zero", Choice(TIME_ZEROS), "--time-zero"),
    key(Top, "harmonics", Whole(1, u64::MAX), "--harmonics"),
    key(Top, "pf_threshold", Number(Fraction), "--pf-threshold"),
    key(Top, "declared_voltage", Number(Positive), "--declared-voltage"),
    key(Top, "expect", Path, "--expect"),
    key(Top, "draws", Whole(1, MAX_DRAWS as u64), "--draws"),
    key(Top, "seed", Whole(0, u64::MAX), "--seed"),
    key(Top, "distribution", Choice(DISTRIBUTIONS), "--distribution"),
    key(Top, "v_ratio_accuracy", Number(NonNegative), "--v-ratio-accuracy"),
    key(Top, "i_ratio_accuracy", Number(NonNegative), "--i-ratio-accuracy"),
    key(Top, "phase_error", Number(NonNegative), "--phase-error"),
    key(Top, "skew_uncertainty", Number(NonNegative), "--skew-uncertainty"),
    key(Top, "clock_ppm", Number(NonNegative), "--clock-ppm"),
    key(Top, "harmonic_accuracy", Number(NonNegative), "--harmonic-accuracy"),
    key(Top, "adc_bits", Whole(1, 32), "--adc-bits"),
    key(Top, "v_full_scale", Number(Positive), "--v-full-scale"),
    key(Top, "i_full_scale", Number(Positive), "--i-full-scale"),
    key(Meter, "reading", Text, "meter --reading"),
    key(Meter, "class", Text, "meter --class"),
    key(Meter, "pf_sign", Text, "meter --pf-sign"),
    key(Meter, "rated_current", Number(Positive), "meter --rated-current"),
    key(Meter, "connection", Text, "meter --connection"),
    key(Meter, "reactive_class", Text, "meter --reactive-class"),
    key(Bank, "nameplate", Path, "bank --nameplate"),
    key(Bank, "before", Path, "bank --before"),
    key(Bank, "rated_kvar", Number(Positive), "bank --rated-kvar"),
    key(Bank, "rated_voltage", Number(Positive), "bank --rated-voltage"),
    key(Bank, "rated_frequency", Number(Positive), "bank --rated-frequency"),
    key(Bank, "steps", Whole(1, MAX_STEPS as u64), "bank --steps"),
    key(Bank, "step_kvar", Numbers, "bank --step-kvar"),
    key(Bank, "three_phase", Flag, "bank --three-phase"),
    key(Bank, "standard", Text, "bank --standard"),
    key(Bank, "connection", Text, "bank --connection"),
    key(Bank, "target_pf", Number(Fraction), "bank --target-pf"),
    key(Bank, "supply_mva", Number(Positive), "bank --supply-mva"),
    key(Bank, "transformer_kva", Number(Positive), "bank --transformer-kva"),
    key(Bank, "transformer_z_percent", Number(Positive), "bank --transformer-z-percent"),
];

/// A key of an earlier version, still read as the key it became.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct OldKey {
    /// The table it was written in: `""` the top level, or `"uncertainty"`, `"bank"`.
    pub table: &'static str,
    /// Its old name.
    pub name: &'static str,
    /// The key it is read as (in [`KEYS`]).
    pub now: &'static str,
    /// Whether a note asks to rename it. The nameplate file's own spelling in `[bank]` is
    /// accepted without one.
    pub deprecated: bool,
}

const fn old(table: &'static str, name: &'static str, now: &'static str) -> OldKey {
    OldKey {
        table,
        name,
        now,
        deprecated: true,
    }
}

/// Keys of earlier versions: read, with a deprecation note once per sidecar.
pub const OLD_KEYS: &[OldKey] = &[
    old("", "rate_hz", "rate"),
    old("", "skew_s", "skew"),
    old("uncertainty", "v_ratio_percent", "v_ratio_accuracy"),
    old("uncertainty", "i_ratio_percent", "i_ratio_accuracy"),
    old("uncertainty", "phase_error_deg", "phase_error"),
    old("uncertainty", "skew_s", "skew_uncertainty"),
    old("uncertainty", "clock_ppm", "clock_ppm"),
    OldKey {
        table: "bank",
        name: "rated_frequency_hz",
        now: "rated_frequency",
        deprecated: false,
    },
];

/// The key named `name` in `table`.
pub fn find(table: Table, name: &str) -> Option<&'static Key> {
    KEYS.iter().find(|k| k.table == table && k.name == name)
}

/// The README's table of keys, generated from [`KEYS`] and [`OLD_KEYS`]; `tests/sidecar.rs`
/// checks the README holds exactly this text.
pub fn readme_table() -> String {
    let mut out = String::from("| key | mirrors | value |\n| --- | --- | --- |\n");
    for k in KEYS {
        let name = match k.table {
            Top => format!("`{}`", k.name),
            t => format!("`[{}]` `{}`", t.name(), k.name),
        };
        out.push_str(&format!(
            "| {name} | `{}` | {} |\n",
            k.option,
            k.kind.looks_like()
        ));
    }
    out.push_str("\nOlder names still read (a note asks to rename them, once per sidecar):\n\n");
    out.push_str("| old key | read as |\n| --- | --- |\n");
    for o in OLD_KEYS {
        let name = if o.table.is_empty() {
            format!("`{}`", o.name)
        } else {
            format!("`[{}]` `{}`", o.table, o.name)
        };
        let now = match find(Top, o.now) {
            Some(_) => format!("`{}`", o.now),
            None => format!("`[{}]` `{}`", o.table, o.now),
        };
        let note = if o.deprecated {
            ""
        } else {
            " (the nameplate file's spelling; no note)"
        };
        out.push_str(&format!("| {name} | {now}{note} |\n"));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_old_key_becomes_a_key_that_exists() {
        for o in OLD_KEYS {
            let table = if o.table == "bank" { Bank } else { Top };
            assert!(find(table, o.now).is_some(), "{o:?}");
        }
    }

    #[test]
    fn keys_are_options_with_underscores() {
        for k in KEYS {
            let option = k.option.rsplit(' ').next().unwrap();
            assert_eq!(option, format!("--{}", k.name.replace('_', "-")), "{k:?}");
        }
    }
}
