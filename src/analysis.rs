//! The analysis pipeline for one capture: condition -> estimate -> quantities.

mod verdicts;

pub use verdicts::bank_pair;

use crate::capture::{
    Capture, Phase, Place, RecordTimes, SourceFormat, Span, System, UsedChannels,
};
use crate::check::expected::Expected;
use crate::check::wiring;
use crate::condition;
use crate::estimate::{self, Estimate, EstimateError};
use crate::quantity::events::{self, DipReference, Event, EventKind};
use crate::quantity::power::RmsParts;
use crate::quantity::three_phase::{PhaseFigures, ThreePhase, ThreePhaseInput, Wiring};
use crate::quantity::uncertainty::{self, Uncertainty, UncertaintyInputs};
use crate::quantity::{self, Quantities, QuantitySettings};
use crate::warning::{Severity, Status, Trace, Warning};
use rayon::prelude::*;
use rustfft::num_complex::Complex64;
use std::path::PathBuf;

/// Default highest harmonic order reported (IEEE 519-2014 counts to the 50th).
pub const DEFAULT_HARMONICS: usize = 50;

/// Resolved analysis settings (what the command line or a settings file asked for).
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Settings {
    /// Voltage probe ratio: volts per unit of the file.
    pub v_scale: f64,
    /// Current probe or clamp ratio: amperes per unit of the file.
    pub i_scale: f64,
    /// Known delay of the current channel, seconds.
    pub skew_s: f64,
    /// Highest harmonic order to report.
    pub harmonics: usize,
    /// Instrument limits for the Type B uncertainty components.
    pub uncertainty: UncertaintyInputs,
    /// True PF below which a utility penalty is flagged.
    pub pf_threshold: f64,
    /// The declared input voltage Udin, V RMS (IEC 61000-4-30), that dips and swells are
    /// measured against: phase to neutral for single-phase and 4-wire captures, line to line
    /// for a 3-wire one (its phases, referred to the artificial star point, against Udin/√3);
    /// `None`: the record's median one-cycle RMS.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub declared_voltage_v: Option<f64>,
}

/// Default PF penalty threshold (0.90 is a common utility threshold, 0.95 also common: common
/// practice).
pub const DEFAULT_PF_THRESHOLD: f64 = 0.90;

impl Default for Settings {
    fn default() -> Self {
        Settings {
            v_scale: 1.0,
            i_scale: 1.0,
            skew_s: 0.0,
            harmonics: DEFAULT_HARMONICS,
            uncertainty: UncertaintyInputs::default(),
            pf_threshold: DEFAULT_PF_THRESHOLD,
            declared_voltage_v: None,
        }
    }
}

/// Everything known about one analysed capture.
///
/// A capture has one [`PhaseAnalysis`] per phase: one for a single-phase capture, three for a
/// three-phase one, whose system-wide figures are in [`Analysis::three_phase`]. An `Analysis`
/// reads as its first phase (it dereferences to `phases[0]`), so `analysis.quantities` is the
/// single-phase figures; code that handles three phases walks [`Analysis::phases`].
#[derive(Debug, Clone)]
pub struct Analysis {
    /// The file.
    pub path: PathBuf,
    /// Its format.
    pub format: SourceFormat,
    /// Samples per second.
    pub sample_rate_hz: f64,
    /// Samples per trace.
    pub samples: usize,
    /// The part of the record analysed (the whole of it unless a span was chosen).
    pub span: Span,
    /// The start and trigger date-times the file states (COMTRADE).
    pub times: Option<RecordTimes>,
    /// The connection.
    pub system: System,
    /// Settings used.
    pub settings: Settings,
    /// Each phase's figures, in phase order a, b, c (one for a single-phase capture).
    pub phases: Vec<PhaseAnalysis>,
    /// Totals, IEEE 1459 effective and sequence quantities and wiring hints of a three-phase
    /// capture.
    pub three_phase: Option<ThreePhaseAnalysis>,
    /// Everything observed, from loading on: warnings, findings and notes
    /// ([`Warning::severity`] tells them apart; [`Analysis::listed`] picks one kind). On a
    /// three-phase capture, what belongs to one phase says which ([`Warning::OnPhase`]).
    pub warnings: Vec<Warning>,
    /// Comparison with a circuit model, when one was given.
    pub expected: Option<Expected>,
    /// Switchings, dips and swells found in the record, in time order (times from the record's
    /// first sample).
    pub events: Vec<Event>,
    /// What each phase's dips and swells were measured against (declared or the record's
    /// median), in phase order.
    pub dip_references: Vec<DipReference>,
}

/// One phase of an analysed capture (the one phase of a single-phase capture).
#[derive(Debug, Clone)]
pub struct PhaseAnalysis {
    /// The phase (`A` for a single-phase capture).
    pub phase: Phase,
    /// The voltage, current and time channels used: name, column, unit, how chosen.
    pub channels: UsedChannels,
    /// Estimator outputs.
    pub estimate: Estimate,
    /// Computed quantities.
    pub quantities: Quantities,
    /// Their expanded uncertainties (k = 2).
    pub uncertainty: Uncertainty,
    /// The current's delay behind the voltage removed from this phase's figures, seconds:
    /// `--skew` plus the difference of the two channels' own delays (a COMTRADE record's skews).
    pub skew_s: f64,
    /// The first cycles of both traces, for plots.
    pub preview: Preview,
    /// This phase's current was not measured but made from the other lines' by Kirchhoff's
    /// current law (a 3-wire capture with two clamps): its errors are theirs.
    pub current_derived: bool,
}

/// What a three-phase capture gives beyond its phases.
#[derive(Debug, Clone, PartialEq)]
pub struct ThreePhaseAnalysis {
    /// Totals, effective values, sequence components, rotation.
    pub figures: ThreePhase,
    /// How our own channels seem to be connected, in plain words (empty when nothing is odd).
    pub wiring_hints: Vec<String>,
    /// For a 3-wire capture: the per-phase figures refer to the artificial star point.
    pub artificial_star: bool,
    /// Expanded uncertainties (k = 2) of the system figures.
    pub uncertainty: SystemUncertainty,
}

/// Expanded uncertainties (k = 2) of a three-phase capture's system figures, from the phases'
/// budgets (our rule, stated in the README): the phases are measured by separate probes, so
/// the U of a sum is the root sum of the phases' U squared; PFe = P/Se takes P's U and Se's,
/// whose relative U is that of the phases' V and I taken as fully correlated (the mean relative
/// U of each, the larger and so the safer choice). For a 3-wire capture the per-phase budgets
/// share their line-to-line channels, so these are estimates.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct SystemUncertainty {
    /// U of the total P, W.
    pub active_w: f64,
    /// U of the total Q (sum of the phases' Q1), var.
    pub reactive_var: f64,
    /// U of PFe = P/Se (`None` without a PFe).
    pub effective_pf: Option<f64>,
}

impl SystemUncertainty {
    fn new(phases: &[PhaseAnalysis], figures: &ThreePhase) -> Self {
        let rss = |f: &dyn Fn(&PhaseAnalysis) -> f64| {
            phases.iter().map(|p| f(p).powi(2)).sum::<f64>().sqrt()
        };
        let active_w = rss(&|p| p.uncertainty.power.active_w);
        let reactive_var = rss(&|p| p.uncertainty.power.reactive_var);
        let rel = |u: f64, x: f64| if x > 0.0 { u / x } else { 0.0 };
        let n = phases.len().max(1) as f64;
        let rel_v = phases
            .iter()
            .map(|p| rel(p.uncertainty.voltage.rms, p.quantities.voltage.rms))
            .sum::<f64>()
            / n;
        let rel_i = phases
            .iter()
            .map(|p| rel(p.uncertainty.current.rms, p.quantities.current.rms))
            .sum::<f64>()
            / n;
        let p = figures.total.active_w;
        let effective_pf = figures.effective.pf.map(|pf| {
            let rel_p = if p != 0.0 { active_w / p.abs() } else { 0.0 };
            pf.abs() * rel_p.hypot(rel_v.hypot(rel_i))
        });
        SystemUncertainty {
            active_w,
            reactive_var,
            effective_pf,
        }
    }
}

impl std::ops::Deref for Analysis {
    type Target = PhaseAnalysis;

    /// The first phase: the single-phase figures of a single-phase capture.
    fn deref(&self) -> &PhaseAnalysis {
        &self.phases[0]
    }
}

/// The first few cycles of both traces (scaled), thinned to at most [`PREVIEW_POINTS`] points,
/// for waveform plots.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Preview {
    /// Time of each point from the first sample, seconds.
    pub time_s: Vec<f64>,
    /// Voltage, V.
    pub voltage: Vec<f64>,
    /// Current, A.
    pub current: Vec<f64>,
    /// Clipping limits seen in the whole capture (lowest, highest sample) of each trace, for
    /// shading flat tops: `(v_min, v_max, i_min, i_max)`.
    pub extremes: (f64, f64, f64, f64),
}

/// Cycles kept in a [`Preview`].
pub const PREVIEW_CYCLES: f64 = 3.0;
/// Points kept in a [`Preview`] at most.
pub const PREVIEW_POINTS: usize = 2000;

impl Preview {
    /// `ranges`: the traces' smallest and largest samples where already known (as
    /// [`condition::range`] gives them).
    fn new(
        v: &[f64],
        i: &[f64],
        rate_hz: f64,
        frequency_hz: f64,
        ranges: [Option<(f64, f64)>; 2],
    ) -> Self {
        let n = ((PREVIEW_CYCLES * rate_hz / frequency_hz).ceil() as usize).min(v.len());
        let stride = n.div_ceil(PREVIEW_POINTS).max(1);
        let vr = ranges[0].unwrap_or_else(|| condition::range(v));
        let ir = ranges[1].unwrap_or_else(|| condition::range(i));
        Preview {
            time_s: (0..n).step_by(stride).map(|k| k as f64 / rate_hz).collect(),
            voltage: v[..n].iter().step_by(stride).copied().collect(),
            current: i[..n].iter().step_by(stride).copied().collect(),
            extremes: (vr.0, vr.1, ir.0, ir.1),
        }
    }
}

/// A capture that loaded but could not be analysed. Displays as `file: why`, or for a chosen
/// span `file: in the span 0 s to 0.03 s: why`.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{}: {}{source}", .path.display(), .span.map(|(a, b)| format!("in the span {a} s to {b} s: ")).unwrap_or_default())]
pub struct AnalysisError {
    /// The file.
    pub path: PathBuf,
    /// The span analysed, seconds after the record's first sample, when not the whole record.
    pub span: Option<(f64, f64)>,
    /// Why.
    pub source: EstimateError,
}

/// Estimates and computes quantities for two traces already in volts and amperes.
pub fn analyze_traces(
    v: &[f64],
    i: &[f64],
    rate_hz: f64,
    settings: &Settings,
) -> Result<(Estimate, Quantities), EstimateError> {
    let est = estimate::estimate(v, i, rate_hz, settings.harmonics)?;
    let q = quantity::quantities(
        v,
        i,
        rate_hz,
        &est,
        &QuantitySettings {
            skew_s: settings.skew_s,
            harmonics: settings.harmonics,
        },
    );
    Ok((est, q))
}

/// The delays of the voltage and the current trace a phase's samples come from (a 3-wire
/// capture's lines share one delay, as the loader makes sure).
pub(crate) fn phase_delays(capture: &Capture, ps: &condition::PhaseSamples<'_>) -> (f64, f64) {
    let v = match capture.system {
        System::ThreeWire => capture.voltages.first(),
        _ => capture.voltages.get(ps.voltage_trace),
    };
    let i = ps
        .current_trace
        .and_then(|k| capture.currents.get(k))
        .or(capture.currents.first());
    (v.map_or(0.0, |t| t.delay_s), i.map_or(0.0, |t| t.delay_s))
}

/// Bytes an analysis of `capture` asks for beyond the capture itself: a fixed part (FFT plans,
/// tables, the windows' figures) and a share of the capture's own size: 0.8 of it for a single
/// phase, 0.6 for a 4-wire capture, 1.7 for a 3-wire capture (its star-point voltages and third
/// current are made from the lines). tests/memory.rs measures the peak of single-phase, 4-wire
/// and 3-wire analyses at 10 kHz to 1 MHz (a 4-wire peak varied from 8.7 to 19.7 MB between
/// runs with how the phases shared the cores) and holds this at or above it, and at most half
/// the capture's size plus 4 MB above it: it is asked for as a probe
/// ([`crate::memory::headroom`]), so a figure far above the peak would refuse captures that fit,
/// one below it would let an analysis start that cannot end.
pub fn working_memory(capture: &Capture) -> usize {
    const FIXED: usize = 4_000_000;
    let channels: usize = capture
        .voltages
        .iter()
        .chain(&capture.currents)
        .chain(&capture.neutral)
        .map(|t| t.samples.len().saturating_mul(8))
        .fold(0, usize::saturating_add);
    let tenths = match capture.system {
        System::Single => 8,
        System::FourWire => 6,
        System::ThreeWire => 17,
    };
    (channels / 10).saturating_mul(tenths).saturating_add(FIXED)
}

/// Runs the whole pipeline on a loaded capture.
///
/// Each trace's own delay ([`crate::capture::Trace::delay_s`]) is removed as a phase correction:
/// within a phase, the current's delay behind its voltage adds to `--skew`; across phases, each
/// phase's fundamental phasors are turned back by its voltage's delay, so the three-phase figures
/// compare phasors of one instant.
pub fn analyze(mut capture: Capture, settings: &Settings) -> Result<Analysis, AnalysisError> {
    let _in_hand = crate::memory::in_hand(&capture.path);
    let cli_skew_s = settings.skew_s;
    let rate = capture.sample_rate_hz;
    let span = capture.span.unwrap_or(Span::whole(capture.len(), rate));
    let span_s = (!span.is_whole()).then(|| (span.start_s(), span.end_s(rate)));
    // the working room asked for at once: a refusal is this file's error, not the end of a run
    if let Err(r) = crate::memory::headroom(working_memory(&capture)) {
        return Err(AnalysisError {
            path: capture.path.clone(),
            span: span_s,
            source: EstimateError::OutOfMemory { bytes: r.bytes },
        });
    }
    condition::scale(&mut capture, settings.v_scale, settings.i_scale);
    let fail = |source| AnalysisError {
        path: capture.path.clone(),
        span: span_s,
        source,
    };
    let mut warnings = std::mem::take(&mut capture.warnings);
    let many = capture.system.is_three_phase();
    let samples = condition::per_phase(&capture);
    let delays: Vec<(f64, f64)> = samples
        .iter()
        .map(|ps| phase_delays(&capture, ps))
        .collect();
    let phase_skew = |k: usize| cli_skew_s + delays[k].1 - delays[k].0;
    // the settings as reported: the skew removed from the first phase
    let settings = &Settings {
        skew_s: phase_skew(0),
        ..*settings
    };
    // clipping and resolution: once per trace as loaded
    let traces: Vec<(&crate::capture::Trace, Trace)> = capture
        .voltages
        .iter()
        .map(|t| (t, Trace::Voltage))
        .chain(capture.currents.iter().map(|t| (t, Trace::Current)))
        .collect();
    // the clipping check's passes (judged once the frequency is known) and the levels
    let scan = |t: &crate::capture::Trace| {
        (
            condition::tops(&t.samples),
            condition::few_levels(&t.samples),
        )
    };
    // The first phase finds the frequency (from its two voltages when phase a carries no
    // current at all) while the traces are scanned for their tops, which need no frequency.
    // Every phase is then fitted at that frequency, so every phasor refers to the same instant
    // and the same frequency.
    let flat = |y: &[f64]| y.first().is_some_and(|&f| y.iter().all(|&x| x == f));
    let no_current_on_a = many && flat(&samples[0].current);
    let (found, checks): (_, Vec<(condition::Tops, Option<usize>)>) = rayon::join(
        || {
            let (x, y) = if no_current_on_a {
                (&samples[0].voltage, &samples[1].voltage)
            } else {
                (&samples[0].voltage, &samples[0].current)
            };
            estimate::frequency(x, y, rate, settings.harmonics)
        },
        || traces.par_iter().map(|(t, _)| scan(t)).collect(),
    );
    let found = found.map_err(fail)?;
    let frequency_hz = found.hz;
    // the range of a phase's trace that is a trace as loaded (not one derived from others):
    // its tops scan's, with no further pass over the samples
    let known_range = |y: &[f64]| {
        traces
            .iter()
            .zip(&checks)
            .find(|((t, _), _)| std::ptr::eq(t.samples.as_slice(), y))
            .map(|(_, (tops, _))| tops.range())
    };
    // phase k's fit: at the frequency found on its own traces (phase a's), or given
    let phase_estimate = |k: usize, found: Option<estimate::Frequency<'_>>| {
        let ps = &samples[k];
        let (v, i) = (&ps.voltage, &ps.current);
        let est = match found {
            Some(found) => estimate::estimate_found(v, i, rate, settings.harmonics, found),
            None => estimate::estimate_at(v, i, rate, settings.harmonics, Some(frequency_hz)),
        }
        .map_err(fail)?;
        // its quantities, uncertainty and preview in the same task: they need nothing of the
        // other phases (the preview beside the other two: two cores when free)
        let ((q, uncertainty), preview) = rayon::join(
            || {
                let q = quantity::quantities(
                    v,
                    i,
                    rate,
                    &est,
                    &QuantitySettings {
                        skew_s: phase_skew(k),
                        harmonics: settings.harmonics,
                    },
                );
                let u =
                    uncertainty::uncertainty(v, i, &est, &q, phase_skew(k), &settings.uncertainty);
                (q, u)
            },
            || {
                let ranges = [known_range(v), known_range(i)];
                Preview::new(v, i, rate, est.frequency_hz, ranges)
            },
        );
        Ok::<_, AnalysisError>((est, q, uncertainty, preview))
    };
    let first_found = (!no_current_on_a).then_some(found);
    // The phases are fitted (with their quantities, uncertainty and preview) side by side, and
    // the events, which need only the samples and the frequency, are looked for alongside (two
    // cores when free), results in phase order.
    let (estimates, (events, dip_references)) = rayon::join(
        || {
            let (first, rest): (_, Vec<_>) = rayon::join(
                || phase_estimate(0, first_found),
                || {
                    (1..samples.len())
                        .into_par_iter()
                        .map(|k| phase_estimate(k, None))
                        .collect()
                },
            );
            std::iter::once(first)
                .chain(rest)
                .collect::<Result<Vec<_>, _>>()
        },
        || {
            record_events(
                &samples,
                rate,
                frequency_hz,
                span.start_s(),
                capture.system,
                settings.declared_voltage_v,
            )
        },
    );
    let estimates = estimates?;
    for ((t, kind), (tops, levels)) in traces.iter().zip(checks) {
        let clip = condition::clipping(&t.samples, &tops, rate / frequency_hz);
        let on = |w: Warning| match (many, t.place) {
            (true, Place::Phase(p)) => Warning::OnPhase {
                phase: phase_letter(p),
                warning: Box::new(w),
            },
            (true, Place::Line(a, b)) => Warning::OnPhase {
                phase: line_letters(a, b),
                warning: Box::new(w),
            },
            _ => w,
        };
        if let Some(percent) = clip {
            warnings.push(on(Warning::Clipping {
                trace: *kind,
                percent,
            }));
        }
        if let Some(levels) = levels {
            warnings.push(on(Warning::LowResolution {
                trace: *kind,
                levels,
            }));
        }
    }
    let mut phases = Vec::with_capacity(samples.len());
    for (k, (ps, (estimate, mut quantities, uncertainty, preview))) in
        samples.iter().zip(estimates).enumerate()
    {
        for w in &quantities.warnings {
            warnings.push(if many {
                Warning::OnPhase {
                    phase: phase_letter(ps.phase),
                    warning: Box::new(w.clone()),
                }
            } else {
                w.clone()
            });
        }
        // to the common instant: this phase's voltage is late by its delay
        let turn = Complex64::from_polar(
            1.0,
            2.0 * std::f64::consts::PI * quantities.frequency_hz * delays[k].0,
        );
        let (v1, i1) = quantities.fundamentals;
        quantities.fundamentals = (v1 * turn, i1 * turn);
        phases.push(PhaseAnalysis {
            phase: ps.phase,
            channels: phase_channels(&capture, ps),
            estimate,
            quantities,
            uncertainty,
            skew_s: phase_skew(k),
            preview,
            current_derived: ps.current_trace.is_none(),
        });
    }
    // the neutral current's own delay, with --skew as for the line currents
    let neutral_delay_s = cli_skew_s + capture.neutral.as_ref().map_or(0.0, |t| t.delay_s);
    let three_phase = many.then(|| three_phase_of(&capture, &samples, &phases, neutral_delay_s));
    // the PF finding: of the system when there is one, else of the phase
    let pf = match &three_phase {
        Some(t) => t.figures.effective.pf,
        None => phases[0].quantities.true_pf,
    };
    if let Some(pf) = pf
        && pf.abs() < settings.pf_threshold
    {
        warnings.push(Warning::PfBelowThreshold {
            pf: pf.abs(),
            threshold: settings.pf_threshold,
        });
    }
    let switchings: Vec<&Event> = events
        .iter()
        .filter(|e| e.kind == EventKind::Switching)
        .collect();
    if let Some(first) = switchings.first() {
        warnings.push(Warning::NotSteady {
            switchings: switchings.len(),
            first_s: first.time_s,
        });
    }
    drop(samples);
    Ok(Analysis {
        samples: capture.len(),
        span,
        times: capture.times,
        path: capture.path,
        format: capture.format,
        sample_rate_hz: capture.sample_rate_hz,
        system: capture.system,
        settings: *settings,
        phases,
        three_phase,
        warnings,
        expected: None,
        events,
        dip_references,
    })
}

/// The events of every phase ([`events::detect_against`], at the capture's frequency, dips and
/// swells against `declared_v` or each phase's median), `offset_s` added so their times count
/// from the record's first sample, each tagged with its phase on a three-phase capture; and
/// each phase's reference. A 3-wire capture's declared voltage is line to line: its phases,
/// referred to the artificial star point, are held against Udin/√3. A three-phase capture
/// also gets its polyphase dips and swells ([`events::polyphase`]): over the phase-to-neutral
/// voltages of a 4-wire capture, and over the line-to-line voltages of a 3-wire capture (as
/// IEC 61000-4-30 measures a 3-wire system, from memory) against the declared line-to-line
/// voltage itself. A single-phase capture has none: its one channel's dips are the same events.
fn record_events(
    samples: &[condition::PhaseSamples<'_>],
    rate: f64,
    frequency_hz: f64,
    offset_s: f64,
    system: System,
    declared_v: Option<f64>,
) -> (Vec<Event>, Vec<DipReference>) {
    let many = system.is_three_phase();
    let (per_phase, line_to_line) = match (declared_v, system) {
        (Some(u), System::ThreeWire) => (Some(u / 3f64.sqrt()), Some(u)),
        (d, _) => (d, None),
    };
    let mut out = Vec::new();
    let mut references = Vec::new();
    let (found_by_phase, polyphase): (Vec<_>, _) = rayon::join(
        || {
            samples
                .par_iter()
                .map(|ps| {
                    events::detect_against(&ps.voltage, &ps.current, rate, frequency_hz, per_phase)
                })
                .collect()
        },
        || polyphase_events(samples, rate, frequency_hz, system, declared_v),
    );
    for (ps, found) in samples.iter().zip(found_by_phase) {
        let letter = many.then(|| phase_letter(ps.phase));
        for mut e in found.events {
            e.time_s += offset_s;
            e.phase = letter;
            out.push(e);
        }
        if let Some(mut r) = found.reference {
            r.phase = letter;
            r.declared_line_to_line_v = line_to_line;
            references.push(r);
        }
    }
    for mut e in polyphase {
        e.time_s += offset_s;
        out.push(e);
    }
    // stable: at one instant the phases' own events come before the polyphase one
    out.sort_by(|a, b| a.time_s.total_cmp(&b.time_s));
    (out, references)
}

/// The polyphase dips and swells of a three-phase capture (none for any other): the voltages
/// to neutral of a 4-wire capture against `declared_v`; a 3-wire capture's line-to-line
/// voltages (each the difference of two star-point voltages) against `declared_v`, which is
/// line to line.
fn polyphase_events(
    samples: &[condition::PhaseSamples<'_>],
    rate: f64,
    frequency_hz: f64,
    system: System,
    declared_v: Option<f64>,
) -> Vec<Event> {
    use events::Voltage;
    if !system.is_three_phase() || samples.len() != 3 {
        return Vec::new();
    }
    let v = |k: usize| -> &[f64] { &samples[k].voltage };
    let channels: Vec<(&'static str, Voltage<'_>)> = match system {
        System::ThreeWire => vec![
            ("ab", Voltage::Difference(v(0), v(1))),
            ("bc", Voltage::Difference(v(1), v(2))),
            ("ca", Voltage::Difference(v(2), v(0))),
        ],
        _ => samples
            .iter()
            .map(|ps| (phase_letter(ps.phase), Voltage::Samples(&ps.voltage)))
            .collect(),
    };
    events::polyphase(&channels, rate, frequency_hz, declared_v)
}

/// The events of a capture and each phase's dip and swell reference, as [`analyze`] finds them,
/// at `frequency_hz`, without the rest of the analysis (for `trend`, whose windows are analysed
/// on their own).
pub fn capture_events(
    mut capture: Capture,
    settings: &Settings,
    frequency_hz: f64,
) -> (Vec<Event>, Vec<DipReference>) {
    let _in_hand = crate::memory::in_hand(&capture.path);
    condition::scale(&mut capture, settings.v_scale, settings.i_scale);
    let rate = capture.sample_rate_hz;
    let offset_s = capture.span.map_or(0.0, |s| s.start_s());
    let samples = condition::per_phase(&capture);
    record_events(
        &samples,
        rate,
        frequency_hz,
        offset_s,
        capture.system,
        settings.declared_voltage_v,
    )
}

/// `a`, `b`, `c` (`n` for the neutral).
pub fn phase_letter(p: Phase) -> &'static str {
    match p {
        Phase::A => "a",
        Phase::B => "b",
        Phase::C => "c",
        Phase::N => "n",
    }
}

fn line_letters(a: Phase, b: Phase) -> &'static str {
    match (a, b) {
        (Phase::A, Phase::B) => "ab",
        (Phase::B, Phase::A) => "ba",
        (Phase::B, Phase::C) => "bc",
        (Phase::C, Phase::B) => "cb",
        (Phase::C, Phase::A) => "ca",
        (Phase::A, Phase::C) => "ac",
        _ => "?",
    }
}

/// The channels one phase's figures come from; a 3-wire phase's voltage is derived from the
/// line-to-line channels and says so.
fn phase_channels(capture: &Capture, ps: &condition::PhaseSamples<'_>) -> UsedChannels {
    let voltage = if capture.system == System::ThreeWire {
        let first = &capture.voltages[0].channel;
        let from: Vec<String> = capture
            .voltages
            .iter()
            .map(|t| format!("'{}'", t.channel.name))
            .collect();
        let mut c = first.clone();
        c.name = format!(
            "{} to the artificial star point, from {}",
            phase_letter(ps.phase),
            from.join(" and ")
        );
        c
    } else {
        capture.voltages[ps.voltage_trace].channel.clone()
    };
    let (current, current_by) = match ps.current_trace {
        Some(k) => (
            capture.currents[k].channel.clone(),
            capture.currents[k].chosen_by,
        ),
        None => {
            let from: Vec<String> = capture
                .currents
                .iter()
                .map(|t| format!("'{}'", t.channel.name))
                .collect();
            let mut c = capture.currents[0].channel.clone();
            c.name = format!(
                "{}: minus the sum of {}",
                phase_letter(ps.phase),
                from.join(" and ")
            );
            (c, capture.currents[0].chosen_by)
        }
    };
    UsedChannels {
        voltage,
        voltage_by: capture.voltages[ps.voltage_trace.min(capture.voltages.len() - 1)].chosen_by,
        current,
        current_by,
        time: capture.time.clone(),
    }
}

/// The system-wide figures of a three-phase capture from its phases.
fn three_phase_of(
    capture: &Capture,
    samples: &[condition::PhaseSamples<'_>],
    phases: &[PhaseAnalysis],
    neutral_delay_s: f64,
) -> ThreePhaseAnalysis {
    let quantities = [0, 1, 2].map(|k| &phases[k].quantities);
    let (figures, neutral_phasor) = system_figures(
        capture,
        samples,
        quantities,
        phases[0].estimate.order,
        neutral_delay_s,
    );
    let figures3 = quantities.map(phase_figures);
    let v = figures3.map(|f| f.voltage);
    let i = figures3.map(|f| f.current);
    let names = [0, 1, 2].map(|k| phases[k].channels.current.name.clone());
    let mut wiring_hints = wiring::diagnose(&v, &i, &names);
    if let (Some(n), Some(channel)) = (neutral_phasor, capture.neutral.as_ref()) {
        wiring_hints.extend(wiring::neutral_hint(&i, n, &channel.channel.name));
    }
    ThreePhaseAnalysis {
        uncertainty: SystemUncertainty::new(phases, &figures),
        figures,
        wiring_hints,
        artificial_star: capture.system == System::ThreeWire,
    }
}

fn phase_figures(q: &Quantities) -> PhaseFigures {
    let (v1, i1) = q.fundamentals;
    PhaseFigures {
        voltage: v1,
        current: i1,
        voltage_rms: q.voltage.rms,
        current_rms: q.current.rms,
        active_w: q.power.active_w,
    }
}

/// The system figures of a three-phase capture (scaled) from its phases' quantities, `order`
/// the harmonics fitted; and a measured neutral's fundamental phasor (its delay
/// `neutral_delay_s` removed).
pub(crate) fn system_figures(
    capture: &Capture,
    samples: &[condition::PhaseSamples<'_>],
    quantities: [&Quantities; 3],
    order: usize,
    neutral_delay_s: f64,
) -> (ThreePhase, Option<Complex64>) {
    let wiring = if capture.system == System::ThreeWire {
        Wiring::ThreeWire
    } else {
        Wiring::FourWire
    };
    let figures3 = quantities.map(phase_figures);
    // line-to-line true RMS from the samples, over the same whole cycles as the phases' RMS
    let per_cycle = capture.sample_rate_hz / quantities[0].frequency_hz;
    let span = condition::whole_cycles(capture.len(), per_cycle).1.max(1);
    let rms_diff = |x: &[f64], y: &[f64]| {
        (x[..span]
            .iter()
            .zip(&y[..span])
            .map(|(a, b)| (a - b) * (a - b))
            .sum::<f64>()
            / span as f64)
            .sqrt()
    };
    let (va, vb, vc) = (
        &samples[0].voltage,
        &samples[1].voltage,
        &samples[2].voltage,
    );
    // the three pairs side by side (each sum as it would be alone)
    let pairs = [(va, vb), (vb, vc), (vc, va)];
    let line: Vec<f64> = pairs.par_iter().map(|(x, y)| rms_diff(x, y)).collect();
    let line_rms = [line[0], line[1], line[2]];
    // a measured neutral: its own true RMS and fundamental phasor, fitted at the phases'
    // frequency on their time reference, its own delay removed as the phases' are
    let f1 = quantities[0].frequency_hz;
    let mut neutral_phasor = None;
    let neutral = capture.neutral.as_ref().map(|n| {
        let rms = (n.samples[..span].iter().map(|x| x * x).sum::<f64>() / span as f64).sqrt();
        let turn = Complex64::from_polar(1.0, 2.0 * std::f64::consts::PI * f1 * neutral_delay_s);
        neutral_phasor = estimate::estimate_at(
            &samples[0].voltage,
            &n.samples,
            capture.sample_rate_hz,
            order,
            Some(f1),
        )
        .ok()
        .map(|e| e.current.fundamental() * turn);
        RmsParts {
            total: rms,
            fundamental: neutral_phasor.map_or(rms, |x| x.norm()),
        }
    });
    let figures = ThreePhase::new(&ThreePhaseInput {
        wiring,
        phases: figures3,
        line_rms,
        neutral,
    });
    (figures, neutral_phasor)
}

impl Analysis {
    /// The observations of one severity (warnings, findings or notes), in the order found.
    pub fn listed(&self, severity: Severity) -> impl Iterator<Item = &Warning> {
        self.warnings
            .iter()
            .filter(move |w| w.severity() == severity)
    }

    /// `Err` with the reason when `what` (a check built for one voltage and one current) is asked
    /// of a three-phase capture, which it would judge on phase a alone.
    pub fn single_phase_only(&self, what: &str) -> Result<(), String> {
        if self.three_phase.is_none() {
            return Ok(());
        }
        Err(format!(
            "{}: a {} capture: {what} takes single-phase captures so far; to check one phase, \
             choose it with --system single --voltage COL --current COL",
            self.path.display(),
            self.system
        ))
    }

    /// Phase `k` of a three-phase capture seen as a single-phase one (its figures alone, the
    /// warnings on that phase unwrapped and those on other phases left out, no system figures):
    /// what the plots drawn for one pair draw for each phase. `None` past the last phase.
    pub fn phase_view(&self, k: usize) -> Option<Analysis> {
        let phase = self.phases.get(k)?;
        let letter = phase_letter(phase.phase);
        let warnings = self
            .warnings
            .iter()
            .filter_map(|w| match w {
                Warning::OnPhase { phase, warning } if *phase == letter => {
                    Some((**warning).clone())
                }
                Warning::OnPhase { .. } => None,
                other => Some(other.clone()),
            })
            .collect();
        Some(Analysis {
            path: self.path.clone(),
            format: self.format.clone(),
            sample_rate_hz: self.sample_rate_hz,
            samples: self.samples,
            span: self.span,
            times: self.times.clone(),
            system: System::Single,
            settings: self.settings,
            phases: vec![phase.clone()],
            three_phase: None,
            warnings,
            expected: None,
            // this phase's events, as a single-phase capture's
            events: self
                .events
                .iter()
                .filter(|e| !e.kind.is_polyphase() && e.phase.is_none_or(|p| p == letter))
                .map(|e| Event { phase: None, ..*e })
                .collect(),
            dip_references: self
                .dip_references
                .iter()
                .filter(|r| r.phase.is_none_or(|p| p == letter))
                .map(|r| DipReference { phase: None, ..*r })
                .collect(),
        })
    }

    /// `warning` when something threatens a figure, else `ok`; findings and notes do not count.
    pub fn status(&self) -> Status {
        Status::of(&self.warnings)
    }

    /// Why a verdict resting on this capture cannot be signed (clipping, too few cycles, no
    /// fundamental), one reason per warning; empty when it can.
    pub fn verdict_doubts(&self) -> Vec<String> {
        self.warnings
            .iter()
            .filter_map(Warning::undermines_verdict)
            .collect()
    }
}
