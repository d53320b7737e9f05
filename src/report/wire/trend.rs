//! The JSON schema of `trend`: one object per capture, its windows (or aggregated intervals)
//! under `rows`.

use crate::analysis::phase_letter;
use crate::capture::System;
use crate::quantity::events::{DipReference, Event};
use crate::trend::{LeftOut, PhaseFigures, TotalFigures, Trend, WindowFigures};
use serde::Serialize;

/// One capture's trend.
#[derive(Debug, Clone, Serialize)]
pub struct TrendRecord {
    /// The file as given.
    pub file: String,
    /// Samples per second.
    pub sample_rate_hz: f64,
    /// `single-phase`, `3-phase 4-wire` or `3-phase 3-wire`.
    pub system: System,
    /// Cycles per window.
    pub window_cycles: usize,
    /// How the windows are placed, in words.
    pub alignment: &'static str,
    /// `3s` when the rows are aggregated intervals, else `null`.
    pub aggregate: Option<&'static str>,
    /// The part at the end too short for a row (a window, or with `aggregate` an interval).
    pub left_out: Option<LeftOutRecord>,
    /// Codes of the warnings found while loading (they hold for every row).
    pub warning_codes: Vec<&'static str>,
    /// The windows or intervals, in time order.
    pub rows: Vec<TrendRow>,
    /// The events of the whole capture, as `analyze` finds them (switchings, dips, swells).
    pub events: Vec<Event>,
    /// What dips and swells were measured against, one per phase (as in `analyze`).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub dip_swell_reference: Vec<DipReference>,
}

/// The words of [`TrendRecord::alignment`].
pub const ALIGNMENT: &str = "gapless from the first sample analysed; each window N cycles of \
                             the frequency measured over the one before, rounded to whole \
                             samples";

/// The part left out at the end.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct LeftOutRecord {
    /// Start, s from the record's first sample.
    pub start_s: f64,
    /// End, s.
    pub end_s: f64,
    /// Cycles it holds.
    pub cycles: f64,
}

impl From<LeftOut> for LeftOutRecord {
    fn from(l: LeftOut) -> Self {
        LeftOutRecord {
            start_s: l.start_s,
            end_s: l.end_s,
            cycles: l.cycles,
        }
    }
}

/// One window or interval.
#[derive(Debug, Clone, Serialize)]
pub struct TrendRow {
    /// The file (repeated, so a CSV row stands on its own).
    pub file: String,
    /// Index of the row, from 0.
    pub window: usize,
    /// How many windows of `window_cycles` it covers (1, or 15 for an interval of 3 s).
    pub windows: usize,
    /// Start, s from the record's first sample.
    pub start_s: f64,
    /// End, s (one sample interval after its last sample).
    pub end_s: f64,
    /// Fundamental cycles it covers.
    pub cycles: f64,
    /// Fundamental frequency measured over it, Hz.
    pub frequency_hz: f64,
    /// Why it has no figures (its analysis failed), else absent.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub error: Option<String>,
    /// A single-phase capture's figures.
    #[serde(flatten, skip_serializing_if = "Option::is_none")]
    pub single: Option<TrendFigures>,
    /// A three-phase capture's phases, keyed `a`, `b`, `c`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub phases: Option<std::collections::BTreeMap<&'static str, TrendFigures>>,
    /// A three-phase capture's system figures.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub total: Option<TrendTotal>,
    /// Codes of the warnings the row's own analysis gave.
    pub warning_codes: Vec<&'static str>,
    /// How many of the capture's events are in progress during the row ([`Event::during`]).
    pub event_count: usize,
    /// Those events' codes ([`Event::code`]: `switching:b`, `dip:a`, `polyphase_dip:a+c`), in
    /// time order; a CSV cell joins them with `; `.
    pub event_codes: Vec<String>,
}

/// The figures of one phase in a row (keys as in `analyze`).
#[derive(Debug, Clone, Copy, Serialize)]
pub struct TrendFigures {
    /// V1 angle minus I1 angle, degrees, positive when the current lags.
    pub phase_angle_deg: TrendAngles,
    /// cos θ1.
    pub displacement_pf: Option<f64>,
    /// P/S.
    pub true_pf: Option<f64>,
    /// Voltage.
    pub voltage: TrendTrace,
    /// Current.
    pub current: TrendTrace,
    /// Powers.
    pub power: TrendPower,
}

/// Both angle methods.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct TrendAngles {
    /// Least-squares (DFT) phasors.
    pub dft: Option<f64>,
    /// Zero crossings.
    pub zero_crossing: Option<f64>,
}

/// RMS figures of a trace.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct TrendTrace {
    /// True RMS.
    pub rms: f64,
    /// Fundamental RMS.
    pub fundamental_rms: f64,
    /// THD-F, % of the fundamental.
    pub thd_percent: Option<f64>,
}

/// Powers of a row.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct TrendPower {
    /// P, W.
    pub active_w: f64,
    /// P1, W.
    pub fundamental_active_w: f64,
    /// Q1, var.
    pub reactive_var: f64,
    /// S = V·I, VA.
    pub apparent_va: f64,
}

/// System figures of a three-phase row.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct TrendTotal {
    /// Σ P, W.
    pub active_w: f64,
    /// Σ P1, W.
    pub fundamental_active_w: f64,
    /// Σ Q1, var.
    pub reactive_var: f64,
    /// Σ V·I, VA.
    pub arithmetic_apparent_va: f64,
    /// Se, VA.
    pub effective_apparent_va: f64,
    /// PFe = P/Se.
    pub effective_pf: Option<f64>,
}

impl From<&PhaseFigures> for TrendFigures {
    fn from(p: &PhaseFigures) -> Self {
        TrendFigures {
            phase_angle_deg: TrendAngles {
                dft: p.angle_dft_deg,
                zero_crossing: p.angle_zero_crossing_deg,
            },
            displacement_pf: p.displacement_pf,
            true_pf: p.true_pf,
            voltage: TrendTrace {
                rms: p.voltage_rms,
                fundamental_rms: p.voltage_fundamental_rms,
                thd_percent: p.voltage_thd_percent,
            },
            current: TrendTrace {
                rms: p.current_rms,
                fundamental_rms: p.current_fundamental_rms,
                thd_percent: p.current_thd_percent,
            },
            power: TrendPower {
                active_w: p.active_w,
                fundamental_active_w: p.fundamental_active_w,
                reactive_var: p.reactive_var,
                apparent_va: p.apparent_va,
            },
        }
    }
}

impl From<&TotalFigures> for TrendTotal {
    fn from(t: &TotalFigures) -> Self {
        TrendTotal {
            active_w: t.active_w,
            fundamental_active_w: t.fundamental_active_w,
            reactive_var: t.reactive_var,
            arithmetic_apparent_va: t.arithmetic_apparent_va,
            effective_apparent_va: t.effective_apparent_va,
            effective_pf: t.effective_pf,
        }
    }
}

impl TrendRow {
    /// The row of one window or interval of `file`.
    pub fn new(file: &str, w: &WindowFigures) -> Self {
        let (single, phases, error) = match &w.phases {
            Ok(p) if p.len() == 1 => (Some(TrendFigures::from(&p[0].1)), None, None),
            Ok(p) => (
                None,
                Some(
                    p.iter()
                        .map(|(ph, f)| (phase_letter(*ph), TrendFigures::from(f)))
                        .collect(),
                ),
                None,
            ),
            Err(e) => (None, None, Some(e.clone())),
        };
        TrendRow {
            file: file.to_string(),
            window: w.index,
            windows: w.windows,
            start_s: w.start_s,
            end_s: w.end_s,
            cycles: w.cycles,
            frequency_hz: w.frequency_hz,
            error,
            single,
            phases,
            total: w.total.as_ref().map(TrendTotal::from),
            warning_codes: w.warning_codes.clone(),
            event_count: 0,
            event_codes: Vec::new(),
        }
    }
}

impl TrendRecord {
    /// The record with the capture's `events` and dip references, each row told which events
    /// are in progress during it (so a CSV row, which carries no event list, says so too).
    pub fn with_events(mut self, events: Vec<Event>, references: Vec<DipReference>) -> Self {
        for row in &mut self.rows {
            row.event_codes = events
                .iter()
                .filter(|e| e.during(row.start_s, row.end_s))
                .map(Event::code)
                .collect();
            row.event_count = row.event_codes.len();
        }
        self.events = events;
        self.dip_swell_reference = references;
        self
    }

    /// The record of a trend whose rows are `rows` (its windows, or their aggregates with
    /// `aggregate` and the part left out after the last whole interval).
    pub fn new(
        t: &Trend,
        rows: &[WindowFigures],
        aggregate: Option<&'static str>,
        left_out: Option<LeftOut>,
    ) -> Self {
        let file = t.path.display().to_string();
        TrendRecord {
            rows: rows.iter().map(|w| TrendRow::new(&file, w)).collect(),
            file,
            sample_rate_hz: t.sample_rate_hz,
            system: t.system,
            window_cycles: t.window_cycles,
            alignment: ALIGNMENT,
            aggregate,
            left_out: left_out.map(LeftOutRecord::from),
            warning_codes: t.warnings.iter().map(|w| w.code()).collect(),
            events: Vec::new(),
            dip_swell_reference: Vec::new(),
        }
    }
}
