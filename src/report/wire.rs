//! The JSON schema of tracephase's output, in one place.
//!
//! The per-trace figures ([`TraceFigures`]), the spectrum lines ([`HarmonicLine`]) and the powers
//! ([`Powers`]) are serialised as the quantity stage defines them; their field names are the keys.
//!
//! Every output format is built from these types: JSON Lines writes them as they are, CSV
//! flattens them with dotted keys (`phase_angle_deg.dft`), the table prints them for people.
//! Keys carry their unit (`_hz`, `_deg`, `_w`, `_var`, `_va`, `_percent`); a value that is not
//! defined (no fundamental, so no angle) is `null`.

use crate::analysis::{Analysis, Settings};
use crate::capture::{Channel, ChosenBy, UsedChannels};
use crate::check::expected::Expected;
use crate::quantity::power::Powers;
use crate::quantity::uncertainty::Uncertainty;
use crate::quantity::{HarmonicLine, TraceFigures};
use crate::warning::{Severity, Status};
use serde::Serialize;

/// One analysed capture.
#[derive(Debug, Clone, Serialize)]
pub struct AnalysisRecord {
    /// The file as given.
    pub file: String,
    /// `warning` when a warning threatens a figure, else `ok` (findings and notes do not count).
    pub status: Status,
    /// Format that was sniffed.
    pub format: String,
    /// Samples per second.
    pub sample_rate_hz: f64,
    /// Samples per trace.
    pub samples: usize,
    /// The channels used: name, 1-based column, unit as understood, how chosen.
    pub channels: Channels,
    /// Settings used.
    pub settings: Settings,
    /// Fundamental frequency.
    pub frequency_hz: f64,
    /// Cycles in the record.
    pub cycles: f64,
    /// Whole cycles RMS and P were averaged over.
    pub whole_cycles: usize,
    /// Highest harmonic order in THD and spectrum.
    pub harmonic_order: usize,
    /// Angle of V1 minus angle of I1, degrees in (−180, 180], positive when current lags.
    pub phase_angle_deg: PhaseAngles,
    /// cos θ1.
    pub displacement_pf: Option<f64>,
    /// P / S.
    pub true_pf: Option<f64>,
    /// "lagging" or "leading".
    pub character: Option<&'static str>,
    /// |true PF| is below `settings.pf_threshold` (a utility penalty); `None` without a PF.
    pub pf_below_threshold: Option<bool>,
    /// Voltage figures.
    pub voltage: TraceFigures,
    /// Current figures.
    pub current: TraceFigures,
    /// IEEE Std 1459-2010 powers.
    pub power: Powers,
    /// Expanded uncertainties (k = 2), keys mirroring the results.
    pub uncertainty: Uncertainty,
    /// Comparison with a circuit model (`--expect`); absent without one.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub expected: Option<Expected>,
    /// What threatens a figure (clipping, too few cycles...), in words.
    pub warnings: Vec<String>,
    /// Their codes, for filtering.
    pub warning_codes: Vec<&'static str>,
    /// Measured facts worth acting on (PF below the threshold), in words.
    pub findings: Vec<String>,
    /// Their codes.
    pub finding_codes: Vec<&'static str>,
    /// Explained observations that threaten nothing, in words.
    pub notes: Vec<String>,
    /// Their codes.
    pub note_codes: Vec<&'static str>,
    /// Spectrum, orders 1..=harmonic_order.
    pub harmonics: Vec<HarmonicLine>,
}

/// The channels used.
#[derive(Debug, Clone, Serialize)]
pub struct Channels {
    /// Voltage channel.
    pub voltage: ChannelRecord,
    /// Current channel.
    pub current: ChannelRecord,
    /// The time column (all keys `null` when the rate came from elsewhere).
    pub time: TimeRecord,
}

/// One channel as the loader understood it.
#[derive(Debug, Clone, Serialize)]
pub struct ChannelRecord {
    /// Its name in the file (`channel N` for WAV).
    pub name: String,
    /// 1-based column of the file, the time column counted (WAV: channel number).
    pub column: usize,
    /// Its unit as read from the header (`V`, `mV`, `A`, `kA`...); `null` when it gives none.
    pub unit: Option<String>,
    /// Volts or amperes per unit of the file, from the header's unit (before the probe ratio).
    pub unit_scale: f64,
    /// How it was chosen: `option`, `unit`, `name`, `phase` or `column order`.
    pub chosen_by: ChosenBy,
}

/// The time column.
#[derive(Debug, Clone, Serialize)]
pub struct TimeRecord {
    /// Its name in the file.
    pub name: Option<String>,
    /// 1-based column.
    pub column: Option<usize>,
    /// Its unit as read from the header (`s`, `ms`, `µs`, `ns`); `null` when none is given
    /// (then read as seconds, see the README).
    pub unit: Option<String>,
}

impl ChannelRecord {
    fn new(c: &Channel, by: ChosenBy) -> Self {
        ChannelRecord {
            name: c.name.clone(),
            column: c.column,
            unit: c.unit_symbol().map(str::to_string),
            unit_scale: c.scale(),
            chosen_by: by,
        }
    }
}

impl From<&UsedChannels> for Channels {
    fn from(u: &UsedChannels) -> Self {
        Channels {
            voltage: ChannelRecord::new(&u.voltage, u.voltage_by),
            current: ChannelRecord::new(&u.current, u.current_by),
            time: TimeRecord {
                name: u.time.as_ref().map(|t| t.name.clone()),
                column: u.time.as_ref().map(|t| t.column),
                unit: u
                    .time
                    .as_ref()
                    .and_then(|t| t.unit_symbol().map(str::to_string)),
            },
        }
    }
}

/// The phase angle by both methods.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct PhaseAngles {
    /// Least-squares (DFT) phasor method.
    pub dft: Option<f64>,
    /// Zero-crossing method.
    pub zero_crossing: Option<f64>,
}

impl From<&Analysis> for AnalysisRecord {
    fn from(a: &Analysis) -> Self {
        let q = &a.quantities;
        AnalysisRecord {
            file: a.path.display().to_string(),
            status: a.status(),
            format: a.format.to_string(),
            sample_rate_hz: a.sample_rate_hz,
            samples: a.samples,
            channels: Channels::from(&a.channels),
            settings: a.settings,
            frequency_hz: q.frequency_hz,
            cycles: q.cycles,
            whole_cycles: q.whole_cycles,
            harmonic_order: q.harmonic_order,
            phase_angle_deg: PhaseAngles {
                dft: q.phase_angle_dft_deg,
                zero_crossing: q.phase_angle_zero_crossing_deg,
            },
            displacement_pf: q.displacement_pf,
            true_pf: q.true_pf,
            character: q.character.map(|c| c.as_str()),
            pf_below_threshold: q.true_pf.map(|pf| pf.abs() < a.settings.pf_threshold),
            voltage: q.voltage,
            current: q.current,
            power: q.power,
            uncertainty: a.uncertainty,
            expected: a.expected.clone(),
            warnings: words(a, Severity::Warning),
            warning_codes: codes(a, Severity::Warning),
            findings: words(a, Severity::Finding),
            finding_codes: codes(a, Severity::Finding),
            notes: words(a, Severity::Note),
            note_codes: codes(a, Severity::Note),
            harmonics: q.harmonics.clone(),
        }
    }
}

/// The observations of one severity, in words.
pub fn words(a: &Analysis, severity: Severity) -> Vec<String> {
    a.listed(severity).map(|w| w.to_string()).collect()
}

fn codes(a: &Analysis, severity: Severity) -> Vec<&'static str> {
    a.listed(severity).map(|w| w.code()).collect()
}

/// Flattens a JSON object into `(dotted.key, value)` pairs, leaving out arrays of objects
/// (the spectrum) and joining arrays of strings with "; ".
pub fn flatten(value: &serde_json::Value) -> Vec<(String, String)> {
    fn walk(prefix: &str, v: &serde_json::Value, out: &mut Vec<(String, String)>) {
        use serde_json::Value;
        match v {
            Value::Object(map) => {
                for (k, v) in map {
                    let key = if prefix.is_empty() {
                        k.clone()
                    } else {
                        format!("{prefix}.{k}")
                    };
                    walk(&key, v, out);
                }
            }
            Value::Array(items) if items.iter().all(|x| !x.is_object()) => {
                let joined: Vec<String> = items
                    .iter()
                    .map(|x| {
                        x.as_str()
                            .map(str::to_string)
                            .unwrap_or_else(|| x.to_string())
                    })
                    .collect();
                out.push((prefix.to_string(), joined.join("; ")));
            }
            Value::Array(_) => {}
            Value::Null => out.push((prefix.to_string(), String::new())),
            Value::String(s) => out.push((prefix.to_string(), s.clone())),
            other => out.push((prefix.to_string(), other.to_string())),
        }
    }
    let mut out = Vec::new();
    walk("", value, &mut out);
    out
}

/// The keys of an [`AnalysisRecord`] flattened with dots (the spectrum left out), in order: the
/// CSV columns of `analyze --format csv` and of batch summaries. Taken from the record of a small
/// synthetic capture, so they always match what the records hold.
pub fn analysis_columns() -> Vec<String> {
    use crate::capture::{Capture, SourceFormat, System, Trace};
    use crate::synth::{Spec, Waveform, synthesize};
    let (v, i) = synthesize(&Spec::clean(
        5_000.0,
        50.0,
        1_000,
        Waveform::sine(230.0, 0.0).with(3, 2.0, 0.0),
        Waveform::sine(10.0, -30.0).with(3, 1.0, 0.0),
    ));
    let trace = |name: &str, column, samples| Trace::plain(name, column, samples);
    let capture = Capture {
        path: "synthetic".into(),
        format: SourceFormat::Csv {
            delimiter: b',',
            decimal_comma: false,
        },
        sample_rate_hz: 5_000.0,
        system: System::Single,
        voltages: vec![trace("v", 1, v)],
        currents: vec![trace("i", 2, i)],
        neutral: None,
        time: None,
        skew_s: 0.0,
        warnings: Vec::new(),
    };
    match crate::analysis::analyze(capture, &crate::analysis::Settings::default()) {
        Ok(a) => serde_json::to_value(AnalysisRecord::from(&a))
            .map(|v| flatten(&v).into_iter().map(|(k, _)| k).collect())
            .unwrap_or_default(),
        Err(_) => Vec::new(),
    }
}
