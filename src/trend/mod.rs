//! Over time: a capture cut into consecutive windows of whole cycles, each analysed on its own.
//!
//! Input: a loaded [`Capture`], the analysis [`Settings`] and [`TrendSettings`]. Output: a
//! [`Trend`], one [`WindowFigures`] per window, and the part at the end too short for a window.
//!
//! The windows are those of IEC 61000-4-30 class A (from memory): 10 cycles of a 50 Hz system or
//! 12 of a 60 Hz one, about 200 ms, consecutive and without gaps, their length following the
//! measured frequency. How ours are aligned ([`windows`]):
//! - the first window starts at the first sample analysed (the record's, or the first of the
//!   span `--from/--to` chose); each next one starts at the sample after the last one's end, so
//!   no sample is left out or counted twice;
//! - a window's length is N cycles of the frequency measured over the window before it (the
//!   first window: of the frequency found on the record's first second), rounded to whole
//!   samples;
//! - each window's own frequency is measured by the phase slope of the fundamental between its
//!   two halves (the method of [`crate::estimate::frequency()`]), and the window is fitted at it.
//!
//! The standard re-synchronises the windows to each 10-minute clock tick; a capture carries no
//! clock we could trust to that, so ours run from the first sample to the end. A last part
//! shorter than a window is left out and reported ([`Trend::left_out`]).
//!
//! Each window is fitted at its own frequency (no frequency search per window) by the estimator
//! and quantity stages `analyze` uses, so its figures are the same IEEE 1459 figures as a whole
//! capture's; the uncertainty budget is left to `analyze` of a span.

pub mod aggregate;
mod window;

use crate::analysis::{AnalysisError, Settings};
use crate::capture::{Capture, Phase, System};
use crate::estimate::{self, EstimateError, frequency::wrap};
use crate::quantity::Quantities;
use crate::warning::Warning;
use rayon::prelude::*;
use rustfft::num_complex::Complex64;
use std::f64::consts::PI;
use std::path::PathBuf;

/// Cycles per window for a 50 Hz system (IEC 61000-4-30, from memory).
pub const CYCLES_50HZ: usize = 10;
/// Cycles per window for a 60 Hz system (IEC 61000-4-30, from memory).
pub const CYCLES_60HZ: usize = 12;
/// Seconds of the record's start searched for the first window's frequency.
const START_SECONDS: f64 = 1.0;

/// What `trend` was asked for.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct TrendSettings {
    /// Cycles per window; `None`: 10 below 55 Hz, 12 from 55 to 70 Hz, else about 200 ms.
    pub window_cycles: Option<usize>,
}

/// The default cycles per window at a frequency: 10 for a 50 Hz system, 12 for a 60 Hz one
/// (the split at 55 Hz, halfway), and about 200 ms of other fundamentals (the IEC 61000-4-7
/// window length).
pub fn default_cycles(frequency_hz: f64) -> usize {
    if frequency_hz < 55.0 {
        CYCLES_50HZ
    } else if frequency_hz < 70.0 {
        CYCLES_60HZ
    } else {
        ((0.2 * frequency_hz).round() as usize).max(1)
    }
}

/// One window: where it lies in the capture and the frequency measured over it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Window {
    /// First sample.
    pub first: usize,
    /// Samples.
    pub len: usize,
    /// The fundamental frequency measured over the window, Hz.
    pub frequency_hz: f64,
}

/// The figures of one phase in one window (or one aggregated interval).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct PhaseFigures {
    /// V1 angle minus I1 angle by the DFT method, degrees (`None` without fundamentals).
    pub angle_dft_deg: Option<f64>,
    /// The same by zero crossings.
    pub angle_zero_crossing_deg: Option<f64>,
    /// cos θ1.
    pub displacement_pf: Option<f64>,
    /// P/S.
    pub true_pf: Option<f64>,
    /// Voltage RMS, V.
    pub voltage_rms: f64,
    /// Voltage fundamental RMS, V.
    pub voltage_fundamental_rms: f64,
    /// THD of the voltage, % of the fundamental.
    pub voltage_thd_percent: Option<f64>,
    /// Current RMS, A.
    pub current_rms: f64,
    /// Current fundamental RMS, A.
    pub current_fundamental_rms: f64,
    /// THD of the current, % of the fundamental.
    pub current_thd_percent: Option<f64>,
    /// P, W.
    pub active_w: f64,
    /// P1, W.
    pub fundamental_active_w: f64,
    /// Q1, var.
    pub reactive_var: f64,
    /// S = V·I, VA.
    pub apparent_va: f64,
}

/// A three-phase capture's system figures in one window.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct TotalFigures {
    /// Σ P, W.
    pub active_w: f64,
    /// Σ P1, W.
    pub fundamental_active_w: f64,
    /// Σ Q1, var.
    pub reactive_var: f64,
    /// Σ V·I, VA.
    pub arithmetic_apparent_va: f64,
    /// IEEE 1459 effective apparent power Se, VA.
    pub effective_apparent_va: f64,
    /// PFe = P/Se.
    pub effective_pf: Option<f64>,
}

/// What one window gave.
#[derive(Debug, Clone, PartialEq)]
pub struct WindowFigures {
    /// Index of the row (0-based).
    pub index: usize,
    /// Consecutive windows it covers (1, or more for an aggregated interval).
    pub windows: usize,
    /// Seconds from the record's first sample to the first sample.
    pub start_s: f64,
    /// Seconds from the record's first sample to one sample interval after the last.
    pub end_s: f64,
    /// Fundamental cycles covered.
    pub cycles: f64,
    /// Fundamental frequency, Hz.
    pub frequency_hz: f64,
    /// Each phase's figures (one for a single-phase capture), or why there are none.
    pub phases: Result<Vec<(Phase, PhaseFigures)>, String>,
    /// System figures of a three-phase capture.
    pub total: Option<TotalFigures>,
    /// Codes of the warnings the window's analysis gave (its own; the capture's loading
    /// warnings are in [`Trend::warnings`]).
    pub warning_codes: Vec<&'static str>,
}

/// The part at the end of a record too short for a window.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LeftOut {
    /// Start, seconds from the record's first sample.
    pub start_s: f64,
    /// End, seconds.
    pub end_s: f64,
    /// Cycles it holds.
    pub cycles: f64,
}

/// A capture as a series of windows.
#[derive(Debug, Clone, PartialEq)]
pub struct Trend {
    /// The file.
    pub path: PathBuf,
    /// Samples per second.
    pub sample_rate_hz: f64,
    /// The connection.
    pub system: System,
    /// Cycles per window.
    pub window_cycles: usize,
    /// The windows, in time order.
    pub windows: Vec<WindowFigures>,
    /// The part at the end too short for a window.
    pub left_out: Option<LeftOut>,
    /// Warnings found while loading (they hold for every window).
    pub warnings: Vec<Warning>,
}

/// The phase of the fundamental at `omega` rad/sample in `y` (its mean removed), referred to
/// `y`'s centre: a single DFT bin. On a span of whole cycles the harmonics and the fundamental's
/// image do not leak into it.
fn centre_phase(y: &[f64], omega: f64) -> Option<f64> {
    if y.is_empty() {
        return None;
    }
    let mean = y.iter().sum::<f64>() / y.len() as f64;
    let centre = (y.len() as f64 - 1.0) / 2.0;
    let mut sum = Complex64::new(0.0, 0.0);
    // the rotation is recomputed every block, so rounding never builds up
    for (b, block) in y.chunks(1024).enumerate() {
        let n0 = (b * 1024) as f64 - centre;
        let mut z = Complex64::from_polar(1.0, -omega * n0);
        let step = Complex64::from_polar(1.0, -omega);
        for &x in block {
            sum += z * (x - mean);
            z *= step;
        }
    }
    (sum.norm() > 0.0).then(|| sum.arg())
}

/// The frequency over `y` by the phase slope of the fundamental between its two halves, each's
/// phase at `f` Hz by [`centre_phase`]: `f + wrap(φ2 − φ1 − ω·Δc)/(2π·Δc)`.
fn halves_frequency(y: &[f64], fs: f64, f: f64) -> Option<f64> {
    let half = y.len() / 2;
    if half < 4 {
        return None;
    }
    let omega = 2.0 * PI * f / fs;
    let p1 = centre_phase(&y[..half], omega)?;
    let p2 = centre_phase(&y[half..2 * half], omega)?;
    let dc = half as f64;
    let df = wrap(p2 - p1 - omega * dc) / (2.0 * PI * dc) * fs;
    let g = f + df;
    // a jump of more than a tenth is a lost fundamental, not a frequency
    (g.is_finite() && (df / f).abs() < 0.1).then_some(g)
}

/// The windows of `y` (the trace the frequency is tracked on), sampled at `fs`, starting at
/// `f0` Hz, `cycles` per window; and the samples left after the last.
pub fn windows(y: &[f64], fs: f64, f0: f64, cycles: usize) -> (Vec<Window>, usize) {
    let mut out = Vec::new();
    let mut first = 0;
    let mut f = f0;
    loop {
        let len = (cycles as f64 * fs / f).round() as usize;
        if len == 0 || first + len > y.len() {
            break;
        }
        let span = &y[first..first + len];
        // measured twice: the second time at the first's result, which removes its own
        // (second-order) error from fitting at the wrong frequency
        let measured = halves_frequency(span, fs, f)
            .and_then(|g| halves_frequency(span, fs, g))
            .unwrap_or(f);
        out.push(Window {
            first,
            len,
            frequency_hz: measured,
        });
        f = measured;
        first += len;
    }
    (out, y.len() - first)
}

/// Cuts `capture` into windows and analyses each.
pub fn trend(
    capture: Capture,
    settings: &Settings,
    ts: &TrendSettings,
) -> Result<Trend, AnalysisError> {
    trend_of(&capture, settings, ts)
}

/// No window of the default length is shorter than 12 cycles of 70 Hz (0.171 s,
/// [`default_cycles`]).
const SHORTEST_WINDOW_S: f64 = 0.17;

/// [`trend_of`] with the default windows, for a capture long enough to hold `min_windows` of
/// them; `None` (nothing computed) for a shorter one.
pub fn trend_if_long(
    capture: &Capture,
    settings: &Settings,
    min_windows: usize,
) -> Option<Result<Trend, AnalysisError>> {
    let seconds = capture.len() as f64 / capture.sample_rate_hz;
    (seconds >= min_windows as f64 * SHORTEST_WINDOW_S)
        .then(|| trend_of(capture, settings, &TrendSettings::default()))
}

/// [`trend`] of a capture that stays the caller's (a report analyses the same capture whole
/// afterwards, without a second copy of its samples).
pub fn trend_of(
    capture: &Capture,
    settings: &Settings,
    ts: &TrendSettings,
) -> Result<Trend, AnalysisError> {
    let _in_hand = crate::memory::in_hand(&capture.path);
    let fs = capture.sample_rate_hz;
    let fail = |source| AnalysisError {
        path: capture.path.clone(),
        span: capture
            .span
            .filter(|s| !s.is_whole())
            .map(|s| (s.start_s(), s.end_s(fs))),
        source,
    };
    if capture.len() < estimate::MIN_SAMPLES {
        return Err(fail(EstimateError::TooShort(capture.len())));
    }
    // the first window's frequency: the usual search over the record's first second
    let head = ((START_SECONDS * fs).round() as usize).clamp(estimate::MIN_SAMPLES, capture.len());
    let v0 = &capture.voltage().samples[..head];
    let i0 = &capture.current().samples[..head];
    let est = estimate::estimate(v0, i0, fs, estimate::MIN_FIT_ORDER).map_err(fail)?;
    let track = match est.frequency_source {
        crate::warning::Trace::Voltage => &capture.voltage().samples,
        crate::warning::Trace::Current => &capture.current().samples,
    };
    let cycles = ts
        .window_cycles
        .unwrap_or_else(|| default_cycles(est.frequency_hz));
    let (list, rest) = windows(track, fs, est.frequency_hz, cycles);
    // times count from the record's first sample, also when a span of it was asked for
    // (a record with several rates: from the start of the part at this rate)
    let base = capture.span.map_or(0.0, |s| s.start_s);
    let left_out = (rest > 0).then(|| {
        let f = list.last().map_or(est.frequency_hz, |w| w.frequency_hz);
        let end = capture.len();
        LeftOut {
            start_s: base + (end - rest) as f64 / fs,
            end_s: base + end as f64 / fs,
            cycles: rest as f64 * f / fs,
        }
    });
    let rows: Vec<WindowFigures> = list
        .par_iter()
        .enumerate()
        .map(|(index, w)| {
            let mut part = capture.span(w.first..w.first + w.len);
            part.warnings.clear();
            let analysed = window::analyze_window(part, settings, w.frequency_hz);
            window_figures(index, w, base, fs, analysed)
        })
        .collect();
    Ok(Trend {
        path: capture.path.clone(),
        sample_rate_hz: fs,
        system: capture.system,
        window_cycles: cycles,
        windows: rows,
        left_out,
        warnings: capture.warnings.clone(),
    })
}

fn window_figures(
    index: usize,
    w: &Window,
    base_s: f64,
    fs: f64,
    analysed: Result<window::WindowAnalysis, EstimateError>,
) -> WindowFigures {
    let mut row = WindowFigures {
        index,
        windows: 1,
        start_s: base_s + w.first as f64 / fs,
        end_s: base_s + (w.first + w.len) as f64 / fs,
        cycles: w.len as f64 * w.frequency_hz / fs,
        frequency_hz: w.frequency_hz,
        phases: Err(String::new()),
        total: None,
        warning_codes: Vec::new(),
    };
    match analysed {
        Ok(a) => {
            for (_, q) in &a.phases {
                for c in q.warnings.iter().map(Warning::code) {
                    if !row.warning_codes.contains(&c) {
                        row.warning_codes.push(c);
                    }
                }
            }
            row.phases = Ok(a
                .phases
                .iter()
                .map(|(p, q)| (*p, phase_figures(q)))
                .collect());
            row.total = a.three_phase.as_ref().map(|f| TotalFigures {
                active_w: f.total.active_w,
                fundamental_active_w: f.total.fundamental_active_w,
                reactive_var: f.total.reactive_var,
                arithmetic_apparent_va: f.total.arithmetic_apparent_va,
                effective_apparent_va: f.effective.apparent_va,
                effective_pf: f.effective.pf,
            });
        }
        Err(e) => row.phases = Err(e.to_string()),
    }
    row
}

fn phase_figures(q: &Quantities) -> PhaseFigures {
    PhaseFigures {
        angle_dft_deg: q.phase_angle_dft_deg,
        angle_zero_crossing_deg: q.phase_angle_zero_crossing_deg,
        displacement_pf: q.displacement_pf,
        true_pf: q.true_pf,
        voltage_rms: q.voltage.rms,
        voltage_fundamental_rms: q.voltage.fundamental_rms,
        voltage_thd_percent: q.voltage.thd_percent,
        current_rms: q.current.rms,
        current_fundamental_rms: q.current.fundamental_rms,
        current_thd_percent: q.current.thd_percent,
        active_w: q.power.active_w,
        fundamental_active_w: q.power.fundamental_active_w,
        reactive_var: q.power.reactive_var,
        apparent_va: q.power.apparent_va,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn sine(n: usize, fs: f64, f: f64) -> Vec<f64> {
        (0..n)
            .map(|k| {
                let t = k as f64 / fs;
                (2.0 * PI * f * t + 0.4).cos() + 0.05 * (2.0 * PI * 3.0 * f * t).cos() + 0.1
            })
            .collect()
    }

    /// The windows are gapless, N cycles long at the measured frequency, and that frequency is
    /// the signal's, starting from a guess 0.2 Hz off.
    #[test]
    fn windows_follow_the_frequency_without_gaps() {
        let fs = 10_000.0;
        for f in [49.83, 50.0, 50.21, 59.9] {
            let y = sine(30_000, fs, f);
            let (list, rest) = windows(&y, fs, f + 0.2, 10);
            let mut next = 0;
            for w in &list {
                assert_eq!(w.first, next);
                next += w.len;
            }
            assert_eq!(next + rest, y.len());
            for w in &list[1..] {
                assert!((w.frequency_hz - f).abs() < 1e-4, "{f}: {}", w.frequency_hz);
                let want = (10.0 * fs / f).round() as usize;
                assert!(w.len.abs_diff(want) <= 1, "{} vs {want}", w.len);
            }
        }
    }
}
