//! The JSON schema of tracephase's output, in one place.
//!
//! The per-trace figures ([`TraceFigures`]), the spectrum lines ([`HarmonicLine`]) and the powers
//! ([`Powers`]) are serialised as the quantity stage defines them; their field names are the keys.
//!
//! Every output format is built from these types: JSON Lines writes them as they are, CSV
//! flattens them with dotted keys (`phase_angle_deg.dft`), the table prints them for people.
//! Keys carry their unit (`_hz`, `_deg`, `_w`, `_var`, `_va`, `_percent`); a value that is not
//! defined (no fundamental, so no angle) is `null`.

use crate::analysis::{Analysis, PhaseAnalysis, Settings, SystemUncertainty, ThreePhaseAnalysis};
use crate::capture::{Channel, ChosenBy, System, UsedChannels};
use crate::check::expected::Expected;
use crate::quantity::events::{DipReference, Event, EventKind};
use crate::quantity::power::Powers;
use crate::quantity::three_phase::{Effective, PositiveSequencePowers, Rotation, Totals};
use crate::quantity::uncertainty::Uncertainty;
use crate::quantity::{HarmonicLine, TraceFigures};
use crate::warning::{Severity, Status};
use serde::Serialize;

pub mod trend;

/// One analysed capture. A single-phase capture's figures sit at the top level (`voltage`,
/// `power`, `phase_angle_deg`...); a three-phase capture's are under `phases.a`, `phases.b`,
/// `phases.c`, with the system's `total`, `effective`, `positive_sequence`, `sequence`,
/// `rotation` and `wiring_hints` beside them.
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
    /// Samples per trace (of the span analysed).
    pub samples: usize,
    /// The part of the record analysed (the whole record unless `--from`/`--to` chose one).
    pub span: SpanRecord,
    /// The start and trigger date-times the file states (COMTRADE records; `null` otherwise).
    pub record_times: TimesRecord,
    /// `single-phase`, `3-phase 4-wire` or `3-phase 3-wire`.
    pub system: System,
    /// The channels used (single-phase): name, 1-based column, unit as understood, how chosen.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub channels: Option<Channels>,
    /// Settings used.
    pub settings: Settings,
    /// Fundamental frequency (three-phase: found on phase a, every phase fitted at it).
    pub frequency_hz: f64,
    /// Cycles in the record.
    pub cycles: f64,
    /// Whole cycles RMS and P were averaged over.
    pub whole_cycles: usize,
    /// Highest harmonic order in THD and spectrum.
    pub harmonic_order: usize,
    /// A single-phase capture's figures.
    #[serde(flatten, skip_serializing_if = "Option::is_none")]
    pub single: Option<PhaseFiguresRecord>,
    /// A three-phase capture's phases, keyed `a`, `b`, `c` in phase order.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub phases: Option<Phases>,
    /// A three-phase capture's system figures.
    #[serde(flatten, skip_serializing_if = "Option::is_none")]
    pub three_phase: Option<ThreePhaseRecord>,
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
    /// No switching was found in the record (its whole-record figures are of one state).
    pub steady: bool,
    /// Events found (switchings, dips, swells).
    pub event_count: usize,
    /// The events, in time order.
    pub events: Vec<Event>,
    /// What dips and swells were measured against, one per phase: `source` (`declared` or
    /// `median of the record`) and `voltage_v`.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub dip_swell_reference: Vec<DipReference>,
    /// Spectrum, orders 1..=harmonic_order (single-phase; each phase's is under `phases`).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub harmonics: Vec<HarmonicLine>,
}

/// The part of a record analysed.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct SpanRecord {
    /// Start, seconds after the record's first sample.
    pub start_s: f64,
    /// End (one sample interval after the last sample kept), seconds after the first sample.
    pub end_s: f64,
    /// Start, seconds after the trigger (negative: before it); `null` without a trigger time.
    pub trigger_start_s: Option<f64>,
    /// End, seconds after the trigger; `null` without a trigger time.
    pub trigger_end_s: Option<f64>,
    /// Index of the first sample kept, from 0.
    pub first_sample: usize,
    /// Samples kept.
    pub samples: usize,
    /// Samples in the whole record.
    pub record_samples: usize,
    /// True when the span is the whole record.
    pub whole_record: bool,
}

impl SpanRecord {
    /// The span `a` was analysed over.
    pub fn new(a: &Analysis) -> Self {
        let (span, rate) = (a.span, a.sample_rate_hz);
        let trigger = a.times.as_ref().and_then(|t| t.trigger_offset_s);
        SpanRecord {
            start_s: span.start_s(),
            end_s: span.end_s(rate),
            trigger_start_s: trigger.map(|t| span.start_s() - t),
            trigger_end_s: trigger.map(|t| span.end_s(rate) - t),
            first_sample: span.first,
            samples: span.len,
            record_samples: span.of,
            whole_record: span.is_whole(),
        }
    }
}

/// The date-times a record states.
#[derive(Debug, Clone, Default, Serialize)]
pub struct TimesRecord {
    /// Date and time of the first sample, as written in the file.
    pub start: Option<String>,
    /// Date and time of the trigger, as written in the file.
    pub trigger: Option<String>,
    /// The trigger, seconds after the first sample (`null` when the date-times cannot be read).
    pub trigger_offset_s: Option<f64>,
}

impl TimesRecord {
    fn new(a: &Analysis) -> Self {
        match &a.times {
            None => TimesRecord::default(),
            Some(t) => TimesRecord {
                start: t.start.clone(),
                trigger: t.trigger.clone(),
                trigger_offset_s: t.trigger_offset_s,
            },
        }
    }
}

/// One phase's figures (a single-phase capture's, or one phase of three).
#[derive(Debug, Clone, Serialize)]
pub struct PhaseFiguresRecord {
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
}

/// One phase of a three-phase capture.
#[derive(Debug, Clone, Serialize)]
pub struct PhaseRecord {
    /// The channels this phase's figures come from.
    pub channels: Channels,
    /// Its figures.
    #[serde(flatten)]
    pub figures: PhaseFiguresRecord,
    /// Its spectrum.
    pub harmonics: Vec<HarmonicLine>,
}

/// The three phases, in phase order.
#[derive(Debug, Clone, Serialize)]
pub struct Phases {
    /// Phase a (L1).
    pub a: PhaseRecord,
    /// Phase b (L2).
    pub b: PhaseRecord,
    /// Phase c (L3).
    pub c: PhaseRecord,
}

/// The system figures of a three-phase capture (IEEE Std 1459-2010 §3.2, Fortescue).
#[derive(Debug, Clone, Serialize)]
pub struct ThreePhaseRecord {
    /// What the per-phase voltages refer to: `neutral` (4-wire) or `artificial star point`
    /// (3-wire: the point whose three voltages sum to zero; totals do not depend on it).
    pub phase_voltages_to: &'static str,
    /// P, P1, Q (sum of the phases' Q1), arithmetic and vector apparent power.
    pub total: Totals,
    /// Ve, Ie, Se, Se1, SeN, PFe.
    pub effective: Effective,
    /// P1+, Q1+, S1+ and the unbalance power SU1.
    pub positive_sequence: PositiveSequencePowers,
    /// Symmetrical components of the fundamental voltages and currents.
    pub sequence: SequenceRecord,
    /// The voltages' phase sequence: `abc` or `acb`.
    pub rotation: Rotation,
    /// How our own channels seem to be connected, in plain words (empty when nothing is odd).
    pub wiring_hints: Vec<String>,
    /// Expanded uncertainties (k = 2) of the total P and Q and of PFe.
    pub system_uncertainty: SystemUncertainty,
}

/// Symmetrical components of voltages and currents.
#[derive(Debug, Clone, Serialize)]
pub struct SequenceRecord {
    /// Voltages.
    pub voltage: VoltageSequence,
    /// Currents.
    pub current: CurrentSequence,
}

/// Symmetrical components of the fundamental voltages, V.
#[derive(Debug, Clone, Serialize)]
pub struct VoltageSequence {
    /// Positive sequence (abc sense), V.
    pub positive_v: f64,
    /// Negative sequence, V.
    pub negative_v: f64,
    /// Zero sequence, V.
    pub zero_v: f64,
    /// u2: the smaller rotating sequence over the larger, percent (IEC 61000-4-30).
    pub unbalance_percent: Option<f64>,
}

/// Symmetrical components of the fundamental currents, A.
#[derive(Debug, Clone, Serialize)]
pub struct CurrentSequence {
    /// Positive sequence (abc sense), A.
    pub positive_a: f64,
    /// Negative sequence, A.
    pub negative_a: f64,
    /// Zero sequence, A.
    pub zero_a: f64,
    /// The sequence against the voltages' rotation over the one with it, percent.
    pub unbalance_percent: Option<f64>,
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

impl PhaseFiguresRecord {
    fn new(p: &PhaseAnalysis, settings: &Settings) -> Self {
        let q = &p.quantities;
        PhaseFiguresRecord {
            phase_angle_deg: PhaseAngles {
                dft: q.phase_angle_dft_deg,
                zero_crossing: q.phase_angle_zero_crossing_deg,
            },
            displacement_pf: q.displacement_pf,
            true_pf: q.true_pf,
            character: q.character.map(|c| c.as_str()),
            pf_below_threshold: q.true_pf.map(|pf| pf.abs() < settings.pf_threshold),
            voltage: q.voltage,
            current: q.current,
            power: q.power,
            uncertainty: p.uncertainty,
        }
    }
}

impl ThreePhaseRecord {
    fn new(t: &ThreePhaseAnalysis) -> Self {
        let f = &t.figures;
        ThreePhaseRecord {
            phase_voltages_to: if t.artificial_star {
                "artificial star point"
            } else {
                "neutral"
            },
            total: f.total,
            effective: f.effective,
            positive_sequence: f.positive_sequence,
            sequence: SequenceRecord {
                voltage: VoltageSequence {
                    positive_v: f.voltage_sequence.positive,
                    negative_v: f.voltage_sequence.negative,
                    zero_v: f.voltage_sequence.zero,
                    unbalance_percent: f.voltage_sequence.unbalance_percent,
                },
                current: CurrentSequence {
                    positive_a: f.current_sequence.positive,
                    negative_a: f.current_sequence.negative,
                    zero_a: f.current_sequence.zero,
                    unbalance_percent: f.current_sequence.unbalance_percent,
                },
            },
            rotation: f.rotation,
            wiring_hints: t.wiring_hints.clone(),
            system_uncertainty: t.uncertainty,
        }
    }
}

impl From<&Analysis> for AnalysisRecord {
    fn from(a: &Analysis) -> Self {
        let q = &a.quantities;
        let three = a.three_phase.as_ref().filter(|_| a.phases.len() == 3);
        let phase = |k: usize| PhaseRecord {
            channels: Channels::from(&a.phases[k].channels),
            figures: PhaseFiguresRecord::new(&a.phases[k], &a.settings),
            harmonics: a.phases[k].quantities.harmonics.clone(),
        };
        AnalysisRecord {
            file: a.path.display().to_string(),
            status: a.status(),
            format: a.format.to_string(),
            sample_rate_hz: a.sample_rate_hz,
            samples: a.samples,
            span: SpanRecord::new(a),
            record_times: TimesRecord::new(a),
            system: a.system,
            channels: three.is_none().then(|| Channels::from(&a.channels)),
            settings: a.settings,
            frequency_hz: q.frequency_hz,
            cycles: q.cycles,
            whole_cycles: q.whole_cycles,
            harmonic_order: q.harmonic_order,
            single: three
                .is_none()
                .then(|| PhaseFiguresRecord::new(&a.phases[0], &a.settings)),
            phases: three.map(|_| Phases {
                a: phase(0),
                b: phase(1),
                c: phase(2),
            }),
            three_phase: three.map(ThreePhaseRecord::new),
            expected: a.expected.clone(),
            warnings: words(a, Severity::Warning),
            warning_codes: codes(a, Severity::Warning),
            findings: words(a, Severity::Finding),
            finding_codes: codes(a, Severity::Finding),
            notes: words(a, Severity::Note),
            note_codes: codes(a, Severity::Note),
            steady: !a.events.iter().any(|e| e.kind == EventKind::Switching),
            event_count: a.events.len(),
            events: a.events.clone(),
            dip_swell_reference: a.dip_references.clone(),
            harmonics: if three.is_none() {
                q.harmonics.clone()
            } else {
                Vec::new()
            },
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
/// CSV columns of `analyze --format csv` and of batch summaries. Taken from the records of small
/// synthetic captures, so they always match what the records hold: a single-phase capture's
/// keys, then a three-phase capture's system keys (`total.*`, `effective.*`, `sequence.*`,
/// `rotation`...; its per-phase figures are in JSON only).
pub fn analysis_columns() -> Vec<String> {
    use crate::capture::{Capture, SourceFormat, Trace};
    use crate::synth::{Spec, Waveform, synthesize};
    let record_keys = |system: System, pairs: &[(f64, f64)]| -> Vec<String> {
        let (mut voltages, mut currents) = (Vec::new(), Vec::new());
        for (k, &(shift, lag)) in pairs.iter().enumerate() {
            let (v, i) = synthesize(&Spec::clean(
                5_000.0,
                50.0,
                1_000,
                Waveform::sine(230.0, shift).with(3, 2.0, 0.0),
                Waveform::sine(10.0, shift - lag).with(3, 1.0, 0.0),
            ));
            voltages.push(Trace::plain("v", k + 1, v));
            currents.push(Trace::plain("i", k + 4, i));
        }
        let capture = Capture {
            path: "synthetic".into(),
            format: SourceFormat::Csv {
                delimiter: b',',
                decimal_comma: false,
            },
            sample_rate_hz: 5_000.0,
            system,
            voltages,
            currents,
            neutral: None,
            time: None,
            warnings: Vec::new(),
            span: None,
            times: None,
        };
        match crate::analysis::analyze(capture, &crate::analysis::Settings::default()) {
            Ok(a) => serde_json::to_value(AnalysisRecord::from(&a))
                .map(|v| flatten(&v).into_iter().map(|(k, _)| k).collect())
                .unwrap_or_default(),
            Err(_) => Vec::new(),
        }
    };
    let mut keys = record_keys(System::Single, &[(0.0, 30.0)]);
    let three = record_keys(
        System::FourWire,
        &[(0.0, 30.0), (-120.0, 30.0), (120.0, 30.0)],
    );
    for k in three {
        if !k.starts_with("phases.") && !keys.contains(&k) {
            keys.push(k);
        }
    }
    keys
}
