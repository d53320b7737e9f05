//! The bank as rated: the nameplate file, its keys and checks, the capacitor standards' bands and
//! what is known of the supply.

use serde::{Deserialize, Serialize};
use std::path::{Path, PathBuf};

/// Which capacitor standard sets the acceptance band of delivered/rated kvar.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
pub enum CapacitorStandard {
    /// IEEE Std 18: 100 % to 110 % of rated kvar (from memory; older editions allowed 115 %).
    #[default]
    #[serde(rename = "ieee-18")]
    Ieee18,
    /// IEC 60831-1: −5 % to +10 % up to 100 kvar, −5 % to +5 % above (from memory).
    #[serde(rename = "iec-60831")]
    Iec60831,
}

impl CapacitorStandard {
    /// Accepted names on the command line and in a nameplate file.
    pub const NAMES: [&'static str; 2] = ["ieee-18", "iec-60831"];

    /// Reads a name.
    pub fn parse(text: &str) -> Option<Self> {
        match text.trim().to_ascii_lowercase().as_str() {
            "ieee-18" | "ieee18" => Some(CapacitorStandard::Ieee18),
            "iec-60831" | "iec60831" => Some(CapacitorStandard::Iec60831),
            _ => None,
        }
    }

    /// The size above which IEC 60831-1 narrows its band, kvar (from memory).
    pub const IEC_SMALL_UNIT_KVAR: f64 = 100.0;

    /// Lower and upper limit of delivered/rated (at rated voltage and frequency) for a bank rated
    /// `rated_kvar`: IEEE Std 18 100 % to 110 %; IEC 60831-1 −5 % to +10 % up to 100 kvar and
    /// −5 % to +5 % above (both from memory).
    pub fn band(self, rated_kvar: f64) -> (f64, f64) {
        match self {
            CapacitorStandard::Ieee18 => (1.00, 1.10),
            CapacitorStandard::Iec60831 if rated_kvar <= Self::IEC_SMALL_UNIT_KVAR => (0.95, 1.10),
            CapacitorStandard::Iec60831 => (0.95, 1.05),
        }
    }

    /// The standard's name and band in words, for a bank rated `rated_kvar`.
    pub fn describe(self, rated_kvar: f64) -> &'static str {
        match self {
            CapacitorStandard::Ieee18 => "IEEE Std 18: 100 % to 110 % of rated kvar",
            CapacitorStandard::Iec60831 if rated_kvar <= Self::IEC_SMALL_UNIT_KVAR => {
                "IEC 60831-1: -5 % to +10 % of rated kvar (up to 100 kvar)"
            }
            CapacitorStandard::Iec60831 => {
                "IEC 60831-1: -5 % to +5 % of rated kvar (above 100 kvar)"
            }
        }
    }
}

/// How a three-phase bank's capacitors are connected, as the nameplate states it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum BankConnection {
    /// Three capacitors from the lines to a star point: each phase's figures are its own.
    Star,
    /// Three capacitors between the lines (branches a-b, b-c, c-a): each branch is resolved from
    /// the line currents ([`super::branches`]).
    Delta,
}

impl BankConnection {
    /// Accepted names on the command line and in a nameplate file.
    pub const NAMES: [&'static str; 2] = ["star", "delta"];

    /// Reads a name.
    pub fn parse(text: &str) -> Option<Self> {
        match text.trim().to_ascii_lowercase().as_str() {
            "star" => Some(BankConnection::Star),
            "delta" => Some(BankConnection::Delta),
            _ => None,
        }
    }
}

/// What is known of the supply, for the resonance check.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Supply {
    /// Short-circuit power at the bank's bus, MVA.
    ShortCircuitMva(f64),
    /// The supplying transformer: rating in kVA and impedance in percent.
    Transformer {
        /// Rating, kVA.
        kva: f64,
        /// Short-circuit impedance, percent.
        z_percent: f64,
    },
}

/// Written with the keys a nameplate file uses (`supply_mva`, or `transformer_kva` and
/// `transformer_z_percent`), so JSON output reads like the TOML it came from.
impl Serialize for Supply {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        use serde::ser::SerializeMap;
        match *self {
            Supply::ShortCircuitMva(mva) => {
                let mut m = s.serialize_map(Some(1))?;
                m.serialize_entry("supply_mva", &mva)?;
                m.end()
            }
            Supply::Transformer { kva, z_percent } => {
                let mut m = s.serialize_map(Some(2))?;
                m.serialize_entry("transformer_kva", &kva)?;
                m.serialize_entry("transformer_z_percent", &z_percent)?;
                m.end()
            }
        }
    }
}

impl Supply {
    /// Short-circuit power in kVA (a transformer alone: S/z, the source taken as infinite).
    pub fn short_circuit_kva(self) -> f64 {
        match self {
            Supply::ShortCircuitMva(s) => s * 1000.0,
            Supply::Transformer { kva, z_percent } => kva / (z_percent / 100.0),
        }
    }
}

/// The bank as rated.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Nameplate {
    /// Rated reactive power of the whole bank, kvar.
    pub rated_kvar: f64,
    /// Rated voltage, V (line-to-line for a three-phase bank).
    pub rated_voltage: f64,
    /// Rated frequency, Hz.
    pub rated_frequency_hz: f64,
    /// Rated kvar of each step (they add up to `rated_kvar`).
    pub steps_kvar: Vec<f64>,
    /// The captures are of one phase of a balanced three-phase system.
    pub three_phase: bool,
    /// The acceptance band's standard.
    pub standard: CapacitorStandard,
    /// The supply, when known.
    pub supply: Option<Supply>,
    /// Target PF for the correction advice.
    pub target_pf: f64,
    /// How a three-phase bank's capacitors are connected; `None` when the nameplate does not
    /// say (then only the star-equivalent figures per phase are given, never a guess).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub connection: Option<BankConnection>,
}

/// The nameplate as a file may give it (TOML, our own keys); every key optional. Command-line
/// options, or a batch sidecar's `[bank]` table, fill or override them ([`NameplateFile::or`]),
/// and [`Nameplate::resolve`] checks the result.
#[derive(Debug, Clone, Default, PartialEq, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct NameplateFile {
    /// Rated kvar of the whole bank.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub rated_kvar: Option<f64>,
    /// Rated voltage (line-to-line for three-phase), V.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub rated_voltage: Option<f64>,
    /// Rated frequency, Hz.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub rated_frequency_hz: Option<f64>,
    /// Number of equal steps.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub steps: Option<usize>,
    /// Rated kvar of each step, when unequal.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub step_kvar: Option<Vec<f64>>,
    /// One phase of a balanced three-phase bank.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub three_phase: Option<bool>,
    /// "ieee-18" or "iec-60831".
    #[serde(skip_serializing_if = "Option::is_none")]
    pub standard: Option<String>,
    /// Target PF.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub target_pf: Option<f64>,
    /// Supply short-circuit power, MVA.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub supply_mva: Option<f64>,
    /// Supplying transformer rating, kVA.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub transformer_kva: Option<f64>,
    /// Supplying transformer impedance, percent.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub transformer_z_percent: Option<f64>,
    /// "star" or "delta", for a three-phase bank.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub connection: Option<String>,
}

impl NameplateFile {
    /// Every value `self` gives, and `under`'s where `self` gives none.
    pub fn or(self, under: NameplateFile) -> NameplateFile {
        NameplateFile {
            rated_kvar: self.rated_kvar.or(under.rated_kvar),
            rated_voltage: self.rated_voltage.or(under.rated_voltage),
            rated_frequency_hz: self.rated_frequency_hz.or(under.rated_frequency_hz),
            steps: self.steps.or(under.steps),
            step_kvar: self.step_kvar.or(under.step_kvar),
            three_phase: self.three_phase.or(under.three_phase),
            standard: self.standard.or(under.standard),
            target_pf: self.target_pf.or(under.target_pf),
            supply_mva: self.supply_mva.or(under.supply_mva),
            transformer_kva: self.transformer_kva.or(under.transformer_kva),
            transformer_z_percent: self.transformer_z_percent.or(under.transformer_z_percent),
            connection: self.connection.or(under.connection),
        }
    }

    /// True when no value is given.
    pub fn is_empty(&self) -> bool {
        *self == NameplateFile::default()
    }

    /// Whether the key (a field name) holds a value.
    pub fn has(&self, key: &str) -> bool {
        match key {
            "rated_kvar" => self.rated_kvar.is_some(),
            "rated_voltage" => self.rated_voltage.is_some(),
            "rated_frequency_hz" => self.rated_frequency_hz.is_some(),
            "steps" => self.steps.is_some(),
            "step_kvar" => self.step_kvar.is_some(),
            "three_phase" => self.three_phase.is_some(),
            "standard" => self.standard.is_some(),
            "target_pf" => self.target_pf.is_some(),
            "supply_mva" => self.supply_mva.is_some(),
            "transformer_kva" => self.transformer_kva.is_some(),
            "transformer_z_percent" => self.transformer_z_percent.is_some(),
            "connection" => self.connection.is_some(),
            _ => false,
        }
    }
}

/// The most steps a bank may have: checked before the steps are listed, so a mistyped count
/// can never ask for memory.
pub const MAX_STEPS: usize = 20;

/// The key names [`Nameplate::resolve`] uses in its messages, and where a missing value may be
/// given.
pub struct KeyNames<'a> {
    /// The name of a key (a `NameplateFile` field name) as the user writes it, where it was
    /// written (an option, or a key of a named file).
    pub name: &'a dyn Fn(&'static str) -> String,
    /// Where a missing value can be given, for the message.
    pub where_given: &'a str,
}

fn plain_key(k: &'static str) -> String {
    k.to_string()
}

impl KeyNames<'static> {
    /// Names as in the nameplate file and a sidecar's `[bank]` table.
    pub const FILE: KeyNames<'static> = KeyNames {
        name: &plain_key,
        where_given: "the nameplate file or the [bank] table",
    };
}

impl Nameplate {
    /// Checks a merged nameplate and fills the defaults: one step, the default standard, target
    /// PF 0.95. Messages name keys through `keys`.
    pub fn resolve(f: &NameplateFile, keys: &KeyNames<'_>) -> Result<Nameplate, String> {
        let name = keys.name;
        let need = |v: Option<f64>, key: &'static str| -> Result<f64, String> {
            match v {
                Some(x) if x.is_finite() && x > 0.0 => Ok(x),
                Some(x) => Err(format!("{} must be a positive number, not {x}", name(key))),
                None => Err(format!(
                    "{} is missing: give it in {}",
                    name(key),
                    keys.where_given
                )),
            }
        };
        let rated_kvar = need(f.rated_kvar, "rated_kvar")?;
        let rated_voltage = need(f.rated_voltage, "rated_voltage")?;
        let rated_frequency_hz = need(f.rated_frequency_hz, "rated_frequency_hz")?;
        let steps_kvar = match (&f.step_kvar, f.steps) {
            (Some(list), _) => {
                if list.len() > MAX_STEPS {
                    return Err(format!(
                        "{} lists {} steps: at most {MAX_STEPS} are supported",
                        name("step_kvar"),
                        list.len()
                    ));
                }
                if list.is_empty() || list.iter().any(|q| !(q.is_finite() && *q > 0.0)) {
                    return Err(format!("{} needs positive kvar values", name("step_kvar")));
                }
                let sum: f64 = list.iter().sum();
                if (sum / rated_kvar - 1.0).abs() > 0.01 {
                    return Err(format!(
                        "the steps add up to {sum} kvar, not the rated {rated_kvar} kvar"
                    ));
                }
                list.clone()
            }
            // the count is checked before the list is made: a mistyped 1e12 asks for no memory
            (None, Some(n)) if !(1..=MAX_STEPS).contains(&n) => {
                return Err(format!(
                    "{} must be from 1 to {MAX_STEPS}, not {n}",
                    name("steps")
                ));
            }
            (None, Some(n)) => vec![rated_kvar / n as f64; n],
            (None, None) => vec![rated_kvar],
        };
        let standard = match f.standard.as_deref() {
            None => CapacitorStandard::default(),
            Some(s) => CapacitorStandard::parse(s).ok_or_else(|| {
                format!(
                    "unknown capacitor standard '{s}': use {}",
                    CapacitorStandard::NAMES.join(" or ")
                )
            })?,
        };
        let supply = match (f.supply_mva, f.transformer_kva, f.transformer_z_percent) {
            (Some(s), _, _) => Some(Supply::ShortCircuitMva(need(Some(s), "supply_mva")?)),
            (None, Some(k), Some(z)) => Some(Supply::Transformer {
                kva: need(Some(k), "transformer_kva")?,
                z_percent: need(Some(z), "transformer_z_percent")?,
            }),
            (None, Some(_), None) | (None, None, Some(_)) => {
                return Err(format!(
                    "a transformer needs both {} and {}",
                    name("transformer_kva"),
                    name("transformer_z_percent")
                ));
            }
            (None, None, None) => None,
        };
        let target_pf = f.target_pf.unwrap_or(0.95);
        if !(target_pf > 0.0 && target_pf <= 1.0) {
            return Err(format!(
                "{} must be above 0 and at most 1, not {target_pf}",
                name("target_pf")
            ));
        }
        let three_phase = f.three_phase.unwrap_or(false);
        let connection = match f.connection.as_deref() {
            None => None,
            Some(s) => Some(BankConnection::parse(s).ok_or_else(|| {
                format!(
                    "unknown bank connection '{s}': use {}",
                    BankConnection::NAMES.join(" or ")
                )
            })?),
        };
        if connection.is_some() && !three_phase {
            return Err(format!(
                "{} applies to a three-phase bank only: set {} as well",
                name("connection"),
                name("three_phase")
            ));
        }
        Ok(Nameplate {
            rated_kvar,
            rated_voltage,
            rated_frequency_hz,
            steps_kvar,
            three_phase,
            standard,
            supply,
            target_pf,
            connection,
        })
    }
}

/// A nameplate file that cannot be used.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{}: {}{message}", .path.display(), .line.map(|l| format!("line {l}: ")).unwrap_or_default())]
pub struct NameplateError {
    /// The file.
    pub path: PathBuf,
    /// 1-based line, where known.
    pub line: Option<usize>,
    /// What is wrong.
    pub message: String,
}

impl NameplateFile {
    /// Reads a nameplate file.
    pub fn load(path: &Path) -> Result<Self, NameplateError> {
        let text = std::fs::read_to_string(path).map_err(|e| NameplateError {
            path: path.to_path_buf(),
            line: None,
            message: format!("cannot read the file: {e}"),
        })?;
        Self::parse(&text, path)
    }

    /// Parses nameplate TOML.
    pub fn parse(text: &str, path: &Path) -> Result<Self, NameplateError> {
        toml::from_str(text).map_err(|e: toml::de::Error| NameplateError {
            path: path.to_path_buf(),
            line: e
                .span()
                .map(|s| text[..s.start.min(text.len())].matches('\n').count() + 1),
            message: e.message().trim().to_string(),
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn nameplate_files_are_read_and_their_mistakes_named() {
        let ok = NameplateFile::parse(
            "rated_kvar = 30\nrated_voltage = 400\nrated_frequency_hz = 50\nsteps = 3\n",
            Path::new("plate.toml"),
        )
        .unwrap();
        assert_eq!(ok.steps, Some(3));
        let e = NameplateFile::parse("rated_kvar = 30\nrated_kvars = 4\n", Path::new("p.toml"))
            .unwrap_err();
        assert!(e.to_string().starts_with("p.toml: line 2: "), "{e}");
        assert!(e.to_string().contains("rated_kvars"), "{e}");
        assert!(!e.to_string().contains('\n'));
    }

    fn three_phase_plate(connection: &str) -> NameplateFile {
        NameplateFile {
            rated_kvar: Some(30.0),
            rated_voltage: Some(400.0),
            rated_frequency_hz: Some(50.0),
            three_phase: Some(true),
            connection: Some(connection.into()),
            ..NameplateFile::default()
        }
    }

    #[test]
    fn the_connection_is_read_and_an_unknown_one_refused_with_the_accepted_ones() {
        let p = Nameplate::resolve(&three_phase_plate("Delta"), &KeyNames::FILE).unwrap();
        assert_eq!(p.connection, Some(BankConnection::Delta));
        let p = Nameplate::resolve(&three_phase_plate("star"), &KeyNames::FILE).unwrap();
        assert_eq!(p.connection, Some(BankConnection::Star));
        let e = Nameplate::resolve(&three_phase_plate("wye-ish"), &KeyNames::FILE).unwrap_err();
        assert_eq!(e, "unknown bank connection 'wye-ish': use star or delta");
        let mut single = three_phase_plate("delta");
        single.three_phase = None;
        let e = Nameplate::resolve(&single, &KeyNames::FILE).unwrap_err();
        assert_eq!(
            e,
            "connection applies to a three-phase bank only: set three_phase as well"
        );
        // not stated: no connection, never a guess
        let mut unstated = three_phase_plate("delta");
        unstated.connection = None;
        let p = Nameplate::resolve(&unstated, &KeyNames::FILE).unwrap();
        assert_eq!(p.connection, None);
    }
}
