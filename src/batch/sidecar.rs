//! Settings layers: `tracephase.toml` sidecar files, their per-file-name sections, and the
//! command line on top.
//!
//! A sidecar applies to its folder and everything below it. For one capture the layers are
//! applied in this order, each later one overriding the earlier: the sidecars from the batch root
//! down to the capture's own folder (farthest first), within each sidecar its top-level keys and
//! then its `[[files]]` sections whose `pattern` matches the file name (in file order), and last
//! the command line.
//!
//! The keys are the command-line options' long names with `_` for `-` ([`keys::KEYS`]); a value
//! is read as the option reads it and checked where it stands, so a mistake is reported once,
//! with the sidecar and the line, before any capture is analysed.
//!
//! ```toml
//! # tracephase.toml (our own schema; every key optional)
//! voltage = "CH1"              # channel by name, or number: voltage = 2
//! current = "CH2"
//! rate = 10000
//! v_scale = 100                # volts per unit
//! i_scale = 10                 # amperes per unit
//! skew = 2e-6
//! from = 0                     # the span analysed, seconds (here the first 0.1 s)
//! to = 0.1
//! time_zero = "start"          # or "trigger": a COMTRADE record's trigger time
//! harmonics = 50
//! pf_threshold = 0.9
//! expect = "rlc.toml"          # circuit model, relative to this file
//! v_ratio_accuracy = 1
//! i_ratio_accuracy = 2
//! phase_error = 0.5
//! harmonic_accuracy = 5        # ± % of each harmonic's reading (THD)
//! adc_bits = 12                # with v_full_scale and i_full_scale
//! v_full_scale = 400
//! i_full_scale = 20
//! [meter]                      # meter reading checked against each capture
//! reading = "pf=0.87,p=12.4kW"
//! class = "1"
//! pf_sign = "power-flow"
//! rated_current = 5            # A (Ib, or In): low-current limits apply
//! connection = "transformer"   # or "direct": which low-current rows
//! reactive_class = "reactive-2" # Q is judged only against a reactive class
//! [bank]                       # capacitor bank check: this capture has the bank switched in
//! nameplate = "bank.toml"      # relative to this file; its keys may also be given here
//! before = "feeder-bank-off.csv"   # the bank-out capture, beside the capture checked
//! rated_kvar = 50              # over the nameplate file's value
//! [[files]]
//! pattern = "*clamp-b*"        # * any run of characters, ? one character
//! i_scale = 100
//! ```

pub mod keys;
mod read;

use crate::check::bank::NameplateFile;
#[cfg(test)]
use keys::Kind;
use keys::Table;
use serde::Serialize;
use std::path::{Path, PathBuf};

/// One layer of settings: every field optional, named as the command-line option.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct Layer {
    /// Voltage channel (name or 1-based number).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub voltage: Option<String>,
    /// Current channel (name or 1-based number).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub current: Option<String>,
    /// Neutral current channel of a 4-wire capture.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub neutral: Option<String>,
    /// How the circuit is connected (`single`, `4-wire`, `3-wire`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub system: Option<String>,
    /// Use the channels chosen even against their unit or name.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub force_channels: Option<bool>,
    /// COMTRADE values on the secondary side.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub secondary: Option<bool>,
    /// Sample rate, Hz.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub rate: Option<f64>,
    /// Volts per unit.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub v_scale: Option<f64>,
    /// Amperes per unit.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub i_scale: Option<f64>,
    /// Current-channel delay, seconds.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub skew: Option<f64>,
    /// Start of the span analysed, seconds after time zero.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub from: Option<f64>,
    /// End of the span analysed, seconds after time zero.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub to: Option<f64>,
    /// Where `from` and `to` count from (`start`, `trigger`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub time_zero: Option<String>,
    /// Highest harmonic order.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub harmonics: Option<usize>,
    /// PF penalty threshold.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub pf_threshold: Option<f64>,
    /// Declared supply voltage Udin, V, for dips and swells.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub declared_voltage: Option<f64>,
    /// Circuit model file (a relative path is relative to the sidecar that names it).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub expect: Option<PathBuf>,
    /// Monte Carlo draws for the model.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub draws: Option<usize>,
    /// Monte Carlo seed.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub seed: Option<u64>,
    /// Monte Carlo distribution of part values (`uniform`, `normal`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub distribution: Option<String>,
    /// Voltage probe ratio accuracy, ± % of reading.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub v_ratio_accuracy: Option<f64>,
    /// Current clamp or shunt ratio accuracy, ± % of reading.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub i_ratio_accuracy: Option<f64>,
    /// Probe pair phase error, ± degrees.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub phase_error: Option<f64>,
    /// Remaining skew uncertainty, ± seconds.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub skew_uncertainty: Option<f64>,
    /// Sample clock accuracy, ± ppm.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub clock_ppm: Option<f64>,
    /// Frequency response for harmonics, ± % of each harmonic's reading.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub harmonic_accuracy: Option<f64>,
    /// Converter bits.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub adc_bits: Option<u32>,
    /// Full-scale peak of the voltage channel, V.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub v_full_scale: Option<f64>,
    /// Full-scale peak of the current channel, A.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub i_full_scale: Option<f64>,
    /// A meter reading to check against the capture.
    #[serde(skip_serializing_if = "MeterLayer::is_empty")]
    pub meter: MeterLayer,
    /// A capacitor bank check: this capture is the bank switched in.
    #[serde(skip_serializing_if = "BankLayer::is_empty")]
    pub bank: BankLayer,
}

/// A capacitor bank check in a layer: the capture it applies to is the one with the bank
/// switched in (or with more steps in), `before` the one with it out.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct BankLayer {
    /// Nameplate file (a relative path is relative to the sidecar that names it).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub nameplate: Option<PathBuf>,
    /// File name of the capture with the bank switched out, in the same folder as the capture
    /// checked (a relative path from there).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub before: Option<PathBuf>,
    /// Nameplate values given here, over the nameplate file's.
    #[serde(flatten)]
    pub values: NameplateFile,
}

impl BankLayer {
    fn is_empty(&self) -> bool {
        *self == BankLayer::default()
    }
}

/// A meter reading in a layer.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct MeterLayer {
    /// What the meter shows, as for `meter --reading`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub reading: Option<String>,
    /// Accuracy class, as for `meter --class`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub class: Option<String>,
    /// PF sign convention, as for `meter --pf-sign`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub pf_sign: Option<String>,
    /// Rated current, A, as for `meter --rated-current`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub rated_current: Option<f64>,
    /// Reactive class, as for `meter --reactive-class`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub reactive_class: Option<String>,
    /// Connection, as for `meter --connection`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub connection: Option<String>,
}

impl MeterLayer {
    fn is_empty(&self) -> bool {
        *self == MeterLayer::default()
    }
}

macro_rules! take {
    ($dst:expr, $src:expr, $($f:ident),+) => {
        $( if $src.$f.is_some() { $dst.$f = $src.$f.clone(); } )+
    };
}

impl Layer {
    /// Lays `over` on top of `self`: every key `over` sets wins.
    pub fn apply(&mut self, over: &Layer) {
        take!(
            self,
            over,
            voltage,
            current,
            neutral,
            system,
            force_channels,
            secondary,
            rate,
            v_scale,
            i_scale,
            skew,
            from,
            to,
            time_zero,
            harmonics
        );
        take!(
            self,
            over,
            pf_threshold,
            declared_voltage,
            expect,
            draws,
            seed,
            distribution
        );
        take!(
            self,
            over,
            v_ratio_accuracy,
            i_ratio_accuracy,
            phase_error,
            skew_uncertainty,
            clock_ppm,
            harmonic_accuracy,
            adc_bits,
            v_full_scale,
            i_full_scale
        );
        take!(
            self.meter,
            over.meter,
            reading,
            class,
            pf_sign,
            rated_current,
            reactive_class,
            connection
        );
        take!(self.bank, over.bank, nameplate, before);
        take!(
            self.bank.values,
            over.bank.values,
            rated_kvar,
            rated_voltage,
            rated_frequency_hz,
            steps,
            step_kvar,
            three_phase,
            standard,
            target_pf,
            supply_mva,
            transformer_kva,
            transformer_z_percent,
            connection
        );
    }

    /// Sets the key `name` of `table` (one of [`keys::KEYS`]) to `v`; false for a key this
    /// layer does not know (a programmer error the unit tests catch).
    fn set(&mut self, table: Table, name: &str, v: Value) -> bool {
        let (m, b) = (&mut self.meter, &mut self.bank);
        match (table, name, v) {
            (Table::Top, "voltage", Value::Text(t)) => self.voltage = Some(t),
            (Table::Top, "current", Value::Text(t)) => self.current = Some(t),
            (Table::Top, "neutral", Value::Text(t)) => self.neutral = Some(t),
            (Table::Top, "system", Value::Text(t)) => self.system = Some(t),
            (Table::Top, "force_channels", Value::Flag(f)) => self.force_channels = Some(f),
            (Table::Top, "secondary", Value::Flag(f)) => self.secondary = Some(f),
            (Table::Top, "rate", Value::Number(x)) => self.rate = Some(x),
            (Table::Top, "v_scale", Value::Number(x)) => self.v_scale = Some(x),
            (Table::Top, "i_scale", Value::Number(x)) => self.i_scale = Some(x),
            (Table::Top, "skew", Value::Number(x)) => self.skew = Some(x),
            (Table::Top, "from", Value::Number(x)) => self.from = Some(x),
            (Table::Top, "to", Value::Number(x)) => self.to = Some(x),
            (Table::Top, "time_zero", Value::Text(t)) => self.time_zero = Some(t),
            (Table::Top, "harmonics", Value::Whole(n)) => self.harmonics = Some(n as usize),
            (Table::Top, "pf_threshold", Value::Number(x)) => self.pf_threshold = Some(x),
            (Table::Top, "declared_voltage", Value::Number(x)) => self.declared_voltage = Some(x),
            (Table::Top, "expect", Value::Text(t)) => self.expect = Some(t.into()),
            (Table::Top, "draws", Value::Whole(n)) => self.draws = Some(n as usize),
            (Table::Top, "seed", Value::Whole(n)) => self.seed = Some(n),
            (Table::Top, "distribution", Value::Text(t)) => self.distribution = Some(t),
            (Table::Top, "v_ratio_accuracy", Value::Number(x)) => self.v_ratio_accuracy = Some(x),
            (Table::Top, "i_ratio_accuracy", Value::Number(x)) => self.i_ratio_accuracy = Some(x),
            (Table::Top, "phase_error", Value::Number(x)) => self.phase_error = Some(x),
            (Table::Top, "skew_uncertainty", Value::Number(x)) => self.skew_uncertainty = Some(x),
            (Table::Top, "clock_ppm", Value::Number(x)) => self.clock_ppm = Some(x),
            (Table::Top, "harmonic_accuracy", Value::Number(x)) => self.harmonic_accuracy = Some(x),
            (Table::Top, "adc_bits", Value::Whole(n)) => self.adc_bits = Some(n as u32),
            (Table::Top, "v_full_scale", Value::Number(x)) => self.v_full_scale = Some(x),
            (Table::Top, "i_full_scale", Value::Number(x)) => self.i_full_scale = Some(x),
            (Table::Meter, "reading", Value::Text(t)) => m.reading = Some(t),
            (Table::Meter, "class", Value::Text(t)) => m.class = Some(t),
            (Table::Meter, "pf_sign", Value::Text(t)) => m.pf_sign = Some(t),
            (Table::Meter, "rated_current", Value::Number(x)) => m.rated_current = Some(x),
            (Table::Meter, "connection", Value::Text(t)) => m.connection = Some(t),
            (Table::Meter, "reactive_class", Value::Text(t)) => m.reactive_class = Some(t),
            (Table::Bank, "nameplate", Value::Text(t)) => b.nameplate = Some(t.into()),
            (Table::Bank, "before", Value::Text(t)) => b.before = Some(t.into()),
            (Table::Bank, "rated_kvar", Value::Number(x)) => b.values.rated_kvar = Some(x),
            (Table::Bank, "rated_voltage", Value::Number(x)) => b.values.rated_voltage = Some(x),
            (Table::Bank, "rated_frequency", Value::Number(x)) => {
                b.values.rated_frequency_hz = Some(x)
            }
            (Table::Bank, "steps", Value::Whole(n)) => b.values.steps = Some(n as usize),
            (Table::Bank, "step_kvar", Value::Numbers(v)) => b.values.step_kvar = Some(v),
            (Table::Bank, "three_phase", Value::Flag(f)) => b.values.three_phase = Some(f),
            (Table::Bank, "standard", Value::Text(t)) => b.values.standard = Some(t),
            (Table::Bank, "connection", Value::Text(t)) => b.values.connection = Some(t),
            (Table::Bank, "target_pf", Value::Number(x)) => b.values.target_pf = Some(x),
            (Table::Bank, "supply_mva", Value::Number(x)) => b.values.supply_mva = Some(x),
            (Table::Bank, "transformer_kva", Value::Number(x)) => {
                b.values.transformer_kva = Some(x)
            }
            (Table::Bank, "transformer_z_percent", Value::Number(x)) => {
                b.values.transformer_z_percent = Some(x)
            }
            _ => return false,
        }
        true
    }
}

/// A value as read for its key.
#[derive(Debug, Clone, PartialEq)]
pub(super) enum Value {
    Text(String),
    Number(f64),
    Whole(u64),
    Flag(bool),
    Numbers(Vec<f64>),
}

/// A sidecar file: a layer for its folder, and layers for file-name patterns.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Sidecar {
    /// The folder-wide settings.
    pub base: Layer,
    /// Per file-name pattern settings.
    pub files: Vec<PatternLayer>,
    /// A note on old key names found in the file (one line for the whole file), if any.
    pub note: Option<String>,
}

/// Settings for the files whose name matches `pattern`.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct PatternLayer {
    /// Glob on the file name: `*` any run of characters, `?` one character, `[...]` one of a
    /// set ([`check_pattern`]).
    pub pattern: String,
    /// 1-based line of the `pattern` key in the sidecar.
    pub line: usize,
    /// The settings.
    pub layer: Layer,
}

/// The sidecar file name.
pub const SIDECAR: &str = "tracephase.toml";

/// A sidecar file that cannot be used.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{}: {}{message}", .path.display(), .line.map(|l| format!("line {l}: ")).unwrap_or_default())]
pub struct SidecarError {
    /// The sidecar.
    pub path: PathBuf,
    /// 1-based line, where known.
    pub line: Option<usize>,
    /// What is wrong.
    pub message: String,
}

impl Sidecar {
    /// Reads a sidecar; relative `expect` and `nameplate` paths are made relative to its folder.
    pub fn load(path: &Path) -> Result<Sidecar, SidecarError> {
        let text = std::fs::read_to_string(path).map_err(|e| SidecarError {
            path: path.to_path_buf(),
            line: None,
            message: format!("cannot read the file: {e}"),
        })?;
        let mut s = Sidecar::parse(&text, path)?;
        let dir = path.parent().unwrap_or(Path::new("."));
        let anchor = |l: &mut Layer| {
            for p in [&mut l.expect, &mut l.bank.nameplate].into_iter().flatten() {
                if p.is_relative() {
                    *p = dir.join(&*p);
                }
            }
        };
        anchor(&mut s.base);
        for p in &mut s.files {
            anchor(&mut p.layer);
        }
        Ok(s)
    }

    /// Reads sidecar text; `path` is named in messages.
    pub fn parse(text: &str, path: &Path) -> Result<Sidecar, SidecarError> {
        read::parse(text, path)
    }

    /// The layers this sidecar gives a file named `name`, in the order they apply.
    pub fn layers_for<'a>(&'a self, name: &'a str) -> impl Iterator<Item = &'a Layer> {
        std::iter::once(&self.base).chain(self.matching(name).map(|(_, p)| &p.layer))
    }

    /// The `[[files]]` sections whose pattern matches `name`, with their index, in file order.
    pub fn matching<'a>(
        &'a self,
        name: &'a str,
    ) -> impl Iterator<Item = (usize, &'a PatternLayer)> + 'a {
        self.files
            .iter()
            .enumerate()
            .filter(move |(_, p)| glob_match(&p.pattern, name))
    }
}

/// Checks the command line's settings by the rules a sidecar's keys follow (the same kinds and
/// limits), naming the option: `--draws must be a whole number from 1 to 10000000, not 0`.
pub fn check_options(layer: &Layer) -> Result<(), String> {
    let text = toml::to_string(layer).map_err(|e| format!("the options cannot be read: {e}"))?;
    match Sidecar::parse(&text, Path::new("the command line")) {
        Ok(_) => Ok(()),
        Err(e) => {
            let m = e.message;
            Err(match m.split('`').nth(1) {
                Some(key) if m.starts_with('`') => m.replacen(
                    &format!("`{key}`"),
                    &format!("--{}", key.replace('_', "-")),
                    1,
                ),
                _ => m,
            })
        }
    }
}

/// One piece of a file-name pattern.
#[derive(Debug, Clone, PartialEq)]
enum Piece {
    /// `*`: any run of characters, also none.
    Star,
    /// `?`: one character.
    One,
    /// `[abc]`, `[a-z]`, `[!a-c]`: one character of the set (or, with `!`, not of it).
    Set {
        not: bool,
        ranges: Vec<(char, char)>,
    },
    /// Any other character, itself.
    Is(char),
}

/// Checks a file-name pattern: `*` any run of characters, `?` one character, `[...]` one of a
/// set (`[ab]`, `[0-9]`, `[!x]`), every other character itself. `Err` says what is wrong in
/// words: a `[` without its `]`, a range written backwards, a folder separator (patterns match
/// file names, not paths).
pub fn check_pattern(pattern: &str) -> Result<(), String> {
    pieces(pattern).map(|_| ())
}

fn pieces(pattern: &str) -> Result<Vec<Piece>, String> {
    if pattern.contains(['/', '\\']) {
        return Err(format!(
            "pattern \"{pattern}\" holds a folder separator: a pattern matches file names only; \
             put a tracephase.toml in that folder instead"
        ));
    }
    let mut out = Vec::new();
    let mut chars = pattern.chars().peekable();
    while let Some(c) = chars.next() {
        out.push(match c {
            '*' => Piece::Star,
            '?' => Piece::One,
            '[' => {
                let not = chars.next_if_eq(&'!').is_some();
                let mut ranges = Vec::new();
                // a `]` first in the set is itself
                let mut first = true;
                loop {
                    let Some(a) = chars.next() else {
                        return Err(format!(
                            "pattern \"{pattern}\" opens a set with `[` and never closes it with \
                             `]`: write [ab] for one of a or b, or ? for any one character"
                        ));
                    };
                    if a == ']' && !first {
                        break;
                    }
                    first = false;
                    let mut ahead = chars.clone();
                    let b = match (ahead.next(), ahead.next()) {
                        (Some('-'), Some(b)) if b != ']' => {
                            chars.next();
                            chars.next();
                            b
                        }
                        _ => a,
                    };
                    if b < a {
                        return Err(format!(
                            "pattern \"{pattern}\": the range {a}-{b} runs backwards; write {b}-{a}"
                        ));
                    }
                    ranges.push((a, b));
                }
                Piece::Set { not, ranges }
            }
            c => Piece::Is(c),
        });
    }
    Ok(out)
}

impl Piece {
    fn takes(&self, c: char) -> bool {
        match self {
            Piece::Star => false,
            Piece::One => true,
            Piece::Set { not, ranges } => ranges.iter().any(|&(a, b)| (a..=b).contains(&c)) != *not,
            Piece::Is(p) => *p == c,
        }
    }
}

/// Glob match of a whole file name by the pattern rules of [`check_pattern`]; an invalid
/// pattern matches nothing (a sidecar never holds one: it is refused where it is read).
pub fn glob_match(pattern: &str, name: &str) -> bool {
    let Ok(p) = pieces(pattern) else {
        return false;
    };
    let n: Vec<char> = name.chars().collect();
    let (mut pi, mut ni) = (0, 0);
    let (mut star, mut mark) = (None, 0);
    while ni < n.len() {
        if pi < p.len() && p[pi] != Piece::Star && p[pi].takes(n[ni]) {
            pi += 1;
            ni += 1;
        } else if pi < p.len() && p[pi] == Piece::Star {
            star = Some(pi);
            mark = ni;
            pi += 1;
        } else if let Some(s) = star {
            pi = s + 1;
            mark += 1;
            ni = mark;
        } else {
            return false;
        }
    }
    while pi < p.len() && p[pi] == Piece::Star {
        pi += 1;
    }
    pi == p.len()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn globs_match_whole_names() {
        assert!(glob_match("*.csv", "feeder-1.csv"));
        assert!(!glob_match("*.csv", "feeder-1.wav"));
        assert!(glob_match("bank-step?-*", "bank-step2-after.csv"));
        assert!(!glob_match("bank-step?-*", "bank-step12-after.csv"));
        assert!(glob_match("*", ""));
        assert!(glob_match("a*b*c", "aXXbYYc"));
        assert!(!glob_match("a*b*c", "aXXbYY"));
        // sets as POSIX shell globs have them (common practice)
        assert!(glob_match("feeder-[ab].csv", "feeder-b.csv"));
        assert!(!glob_match("feeder-[ab].csv", "feeder-c.csv"));
        assert!(glob_match("step[0-9]*", "step7-after.csv"));
        assert!(!glob_match("step[!0-9]*", "step7-after.csv"));
        assert!(glob_match("x[]]y", "x]y"));
        assert!(glob_match("a-[x-]", "a--"));
    }

    /// The issue's invalid globs: a set never closed, a range backwards, a path.
    #[test]
    fn invalid_patterns_say_what_is_wrong() {
        for (p, says) in [
            ("feeder-[ab.csv", "never closes it with `]`"),
            ("step[9-0].csv", "runs backwards"),
            ("motors/*.csv", "folder separator"),
        ] {
            let e = check_pattern(p).unwrap_err();
            assert!(e.contains(says), "{p}: {e}");
            assert!(!glob_match(p, "feeder-a.csv"));
        }
        assert_eq!(check_pattern("*clamp-b*"), Ok(()));
    }

    #[test]
    fn nearer_layers_override_farther_ones_key_by_key() {
        let mut resolved = Layer {
            v_scale: Some(100.0),
            i_scale: Some(10.0),
            ..Default::default()
        };
        resolved.apply(&Layer {
            i_scale: Some(20.0),
            phase_error: Some(0.1),
            ..Default::default()
        });
        assert_eq!(resolved.v_scale, Some(100.0));
        assert_eq!(resolved.i_scale, Some(20.0));
        assert_eq!(resolved.phase_error, Some(0.1));
    }

    #[test]
    fn sidecars_parse_with_patterns_and_name_their_mistakes() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join(SIDECAR);
        std::fs::write(
            &p,
            "i_scale = 10\nexpect = \"m.toml\"\n[[files]]\npattern = \"*-b.csv\"\ni_scale = 100\n",
        )
        .unwrap();
        let s = Sidecar::load(&p).unwrap();
        assert_eq!(s.base.expect, Some(dir.path().join("m.toml")));
        let scales: Vec<_> = s.layers_for("x-b.csv").map(|l| l.i_scale).collect();
        assert_eq!(scales, vec![Some(10.0), Some(100.0)]);
        assert_eq!(s.layers_for("x-a.csv").count(), 1);
        std::fs::write(&p, "i_scale = 10\ni_scael = 100\n").unwrap();
        let e = Sidecar::load(&p).unwrap_err().to_string();
        assert!(e.contains("line 2: ") && e.contains("i_scael"), "{e}");
    }

    /// Every key of the table lands in a field of the layer (a key added to the table without
    /// its field would be read and then lost).
    #[test]
    fn every_key_sets_a_field() {
        for k in keys::KEYS {
            let v = match k.kind {
                Kind::Channel | Kind::Text | Kind::Path | Kind::Choice(_) | Kind::System => {
                    Value::Text("x".into())
                }
                Kind::Flag => Value::Flag(true),
                Kind::Number(_) => Value::Number(1.0),
                Kind::Whole(..) => Value::Whole(1),
                Kind::Numbers => Value::Numbers(vec![1.0]),
            };
            let mut l = Layer::default();
            assert!(l.set(k.table, k.name, v), "{k:?}");
            assert_ne!(l, Layer::default(), "{k:?}");
        }
    }

    /// Every mistake names its line: a TOML syntax error, a value of the wrong kind in a
    /// `[[files]]` section, a key of the wrong table, a section without its pattern.
    #[test]
    fn mistakes_name_their_line_wherever_they_stand() {
        let line_of = |text: &str| {
            let e = Sidecar::parse(text, Path::new("t.toml")).unwrap_err();
            (e.line, e.message)
        };
        let (line, m) = line_of("i_scale = 10\nv_scale = = 3\n");
        assert_eq!(line, Some(2), "{m}");
        let (line, m) = line_of("i_scale = 10\n[[files]]\npattern = \"*-b*\"\nadc_bits = 40\n");
        assert_eq!(line, Some(4), "{m}");
        assert!(m.contains("whole number from 1 to 32, not 40"), "{m}");
        let (line, m) = line_of("[meter]\nclass = \"1\"\nharmonics = 40\n");
        assert_eq!(line, Some(3), "{m}");
        assert!(m.contains("unknown key `harmonics` in [meter]"), "{m}");
        let (line, m) = line_of("v_scale = 2\n\n[[files]]\ni_scale = 3\n");
        assert_eq!(line, Some(3), "{m}");
        assert!(m.contains("needs a `pattern`"), "{m}");
        let (line, m) = line_of("voltage = 0\n");
        assert_eq!(line, Some(1), "{m}");
        let (line, m) = line_of("voltage = \"Va,Vb,Vc\"\nsystem = \"two-phase\"\n");
        assert_eq!(line, Some(2), "{m}");
        assert!(m.contains(r#"one of "single", "4-wire", "3-wire""#), "{m}");
        // numbers where the option takes them: an integer for a float, a channel by number
        let s = Sidecar::parse(
            "v_scale = 100\nvoltage = 2\nrate = 1e4\nsystem = \"delta\"\n",
            Path::new("t"),
        )
        .unwrap();
        assert_eq!(
            (s.base.v_scale, s.base.voltage.as_deref(), s.base.rate),
            (Some(100.0), Some("2"), Some(1e4))
        );
        assert_eq!(s.base.system.as_deref(), Some("delta"));
        assert_eq!(s.note, None);
    }

    /// A `[bank]` table: the nameplate path is anchored to the sidecar, nameplate keys sit beside
    /// it, a pattern's table overrides key by key, and a misspelt key is named with its line.
    #[test]
    fn bank_tables_take_nameplate_keys_and_name_their_mistakes() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join(SIDECAR);
        std::fs::write(
            &p,
            "[bank]\nnameplate = \"plate.toml\"\nbefore = \"off.csv\"\nrated_kvar = 75\n\
             [[files]]\npattern = \"*-two.csv\"\n[files.bank]\nrated_kvar = 50\nsteps = 2\n",
        )
        .unwrap();
        let s = Sidecar::load(&p).unwrap();
        let mut l = Layer::default();
        s.layers_for("step-two.csv").for_each(|x| l.apply(x));
        assert_eq!(l.bank.nameplate, Some(dir.path().join("plate.toml")));
        assert_eq!(l.bank.before, Some(PathBuf::from("off.csv")));
        assert_eq!(
            (l.bank.values.rated_kvar, l.bank.values.steps),
            (Some(50.0), Some(2))
        );
        std::fs::write(&p, "[bank]\nbefore = \"off.csv\"\nrated_kvr = 5\n").unwrap();
        let e = Sidecar::load(&p).unwrap_err().to_string();
        assert!(e.contains("line 3: ") && e.contains("rated_kvr"), "{e}");
    }
}
