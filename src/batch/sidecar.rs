//! Settings layers: `tracephase.toml` sidecar files, their per-file-name sections, and the
//! command line on top.
//!
//! A sidecar applies to its folder and everything below it. For one capture the layers are
//! applied in this order, each later one overriding the earlier: the sidecars from the batch root
//! down to the capture's own folder (farthest first), within each sidecar its top-level keys and
//! then its `[[files]]` sections whose `pattern` matches the file name (in file order), and last
//! the command line.
//!
//! ```toml
//! # tracephase.toml (our own schema; every key optional)
//! voltage = "CH1"              # channel by name or 1-based number
//! current = "CH2"
//! rate_hz = 10000
//! v_scale = 100                # volts per unit
//! i_scale = 10                 # amperes per unit
//! skew_s = 2e-6
//! harmonics = 50
//! pf_threshold = 0.9
//! expect = "rlc.toml"          # circuit model, relative to this file
//! [uncertainty]
//! v_ratio_percent = 1
//! i_ratio_percent = 2
//! phase_error_deg = 0.5
//! skew_s = 0
//! clock_ppm = 50
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

use crate::check::bank::NameplateFile;
use serde::{Deserialize, Serialize};
use std::path::{Path, PathBuf};

/// One layer of settings: every field optional.
#[derive(Debug, Clone, Default, PartialEq, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct Layer {
    /// Voltage channel (name or 1-based number).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub voltage: Option<String>,
    /// Current channel (name or 1-based number).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub current: Option<String>,
    /// Sample rate, Hz.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub rate_hz: Option<f64>,
    /// Volts per unit.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub v_scale: Option<f64>,
    /// Amperes per unit.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub i_scale: Option<f64>,
    /// Current-channel delay, seconds.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub skew_s: Option<f64>,
    /// Highest harmonic order.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub harmonics: Option<usize>,
    /// PF penalty threshold.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub pf_threshold: Option<f64>,
    /// Circuit model file (a relative path is relative to the sidecar that names it).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub expect: Option<PathBuf>,
    /// Instrument limits.
    #[serde(default, skip_serializing_if = "UncertaintyLayer::is_empty")]
    pub uncertainty: UncertaintyLayer,
    /// A meter reading to check against the capture.
    #[serde(default, skip_serializing_if = "MeterLayer::is_empty")]
    pub meter: MeterLayer,
    /// A capacitor bank check: this capture is the bank switched in.
    #[serde(default, skip_serializing_if = "BankLayer::is_empty")]
    pub bank: BankLayer,
}

/// A capacitor bank check in a layer: the capture it applies to is the one with the bank
/// switched in (or with more steps in), `before` the one with it out.
#[derive(Debug, Clone, Default, PartialEq, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct BankLayer {
    /// Nameplate file (a relative path is relative to the sidecar that names it).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub nameplate: Option<PathBuf>,
    /// File name of the capture with the bank switched out, in the same folder as the capture
    /// checked (a relative path from there).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub before: Option<PathBuf>,
    /// Nameplate values given here, over the nameplate file's (the same keys).
    #[serde(flatten)]
    pub values: NameplateFile,
}

impl BankLayer {
    fn is_empty(&self) -> bool {
        *self == BankLayer::default()
    }
}

/// Instrument limits in a layer.
#[derive(Debug, Clone, Default, PartialEq, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct UncertaintyLayer {
    /// ± % of reading.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub v_ratio_percent: Option<f64>,
    /// ± % of reading.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub i_ratio_percent: Option<f64>,
    /// ± degrees.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub phase_error_deg: Option<f64>,
    /// ± seconds.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub skew_s: Option<f64>,
    /// ± ppm.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub clock_ppm: Option<f64>,
}

impl UncertaintyLayer {
    fn is_empty(&self) -> bool {
        *self == UncertaintyLayer::default()
    }
}

/// A meter reading in a layer.
#[derive(Debug, Clone, Default, PartialEq, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
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
            self, over, voltage, current, rate_hz, v_scale, i_scale, skew_s, harmonics
        );
        take!(self, over, pf_threshold, expect);
        take!(
            self.uncertainty,
            over.uncertainty,
            v_ratio_percent,
            i_ratio_percent,
            phase_error_deg,
            skew_s,
            clock_ppm
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
            transformer_z_percent
        );
    }
}

/// A sidecar file: a layer for its folder, and layers for file-name patterns.
#[derive(Debug, Clone, Default, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Sidecar {
    /// The folder-wide settings.
    #[serde(flatten)]
    pub base: Layer,
    /// Per file-name pattern settings.
    #[serde(default)]
    pub files: Vec<PatternLayer>,
}

/// Settings for the files whose name matches `pattern`.
#[derive(Debug, Clone, Default, PartialEq, Deserialize)]
pub struct PatternLayer {
    /// Glob on the file name: `*` any run of characters, `?` one character.
    pub pattern: String,
    /// The settings.
    #[serde(flatten)]
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
    /// Reads a sidecar; relative `expect` paths are made relative to its folder.
    pub fn load(path: &Path) -> Result<Sidecar, SidecarError> {
        let err = |line, message| SidecarError {
            path: path.to_path_buf(),
            line,
            message,
        };
        let text = std::fs::read_to_string(path)
            .map_err(|e| err(None, format!("cannot read the file: {e}")))?;
        let mut s: Sidecar = toml::from_str(&text).map_err(|e: toml::de::Error| {
            let message = e.message().trim().to_string();
            // Flattened tables lose the parser's position of an unknown key: find the key.
            let line = unknown_key_line(&text, &message).or_else(|| {
                e.span()
                    .map(|sp| text[..sp.start.min(text.len())].matches('\n').count() + 1)
            });
            err(line, message)
        })?;
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

    /// The layers this sidecar gives a file named `name`, in the order they apply.
    pub fn layers_for<'a>(&'a self, name: &str) -> impl Iterator<Item = &'a Layer> {
        std::iter::once(&self.base).chain(
            self.files
                .iter()
                .filter(move |p| glob_match(&p.pattern, name))
                .map(|p| &p.layer),
        )
    }
}

/// The line of the key named in an "unknown field `x`" message, if it stands at a line start.
fn unknown_key_line(text: &str, message: &str) -> Option<usize> {
    let key = message.split('`').nth(1)?;
    text.lines()
        .position(|l| {
            l.trim_start()
                .strip_prefix(key)
                .is_some_and(|rest| rest.trim_start().starts_with('='))
        })
        .map(|k| k + 1)
}

/// Glob match of a whole file name: `*` any run of characters (also none), `?` one character.
pub fn glob_match(pattern: &str, name: &str) -> bool {
    let p: Vec<char> = pattern.chars().collect();
    let n: Vec<char> = name.chars().collect();
    let (mut pi, mut ni) = (0, 0);
    let (mut star, mut mark) = (None, 0);
    while ni < n.len() {
        if pi < p.len() && (p[pi] == '?' || p[pi] == n[ni]) {
            pi += 1;
            ni += 1;
        } else if pi < p.len() && p[pi] == '*' {
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
    while pi < p.len() && p[pi] == '*' {
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
            uncertainty: UncertaintyLayer {
                phase_error_deg: Some(0.1),
                ..Default::default()
            },
            ..Default::default()
        });
        assert_eq!(resolved.v_scale, Some(100.0));
        assert_eq!(resolved.i_scale, Some(20.0));
        assert_eq!(resolved.uncertainty.phase_error_deg, Some(0.1));
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
