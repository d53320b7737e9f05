//! One window's figures: each phase fitted at the window's own frequency, and a three-phase
//! capture's system figures; no frequency search, uncertainty budget, preview or wiring hints
//! (a capture has thousands of windows; `analyze` gives those for a span of interest).

use crate::analysis::{Settings, phase_delays, system_figures};
use crate::capture::{Capture, Phase};
use crate::condition;
use crate::estimate::{self, EstimateError};
use crate::quantity::three_phase::ThreePhase;
use crate::quantity::{self, Quantities, QuantitySettings};
use rustfft::num_complex::Complex64;
use std::f64::consts::PI;

/// What one window gave.
pub(crate) struct WindowAnalysis {
    /// Each phase's quantities, in phase order.
    pub phases: Vec<(Phase, Quantities)>,
    /// The system figures of a three-phase capture.
    pub three_phase: Option<ThreePhase>,
}

/// Analyses `capture` (a window of a longer record, as loaded) at `known_hz`.
pub(crate) fn analyze_window(
    mut capture: Capture,
    settings: &Settings,
    known_hz: f64,
) -> Result<WindowAnalysis, EstimateError> {
    condition::scale(&mut capture, settings.v_scale, settings.i_scale);
    let rate = capture.sample_rate_hz;
    let samples = condition::per_phase(&capture);
    let mut phases = Vec::with_capacity(samples.len());
    let mut order = 1;
    for ps in &samples {
        // each trace's own delay removed as `analyze` removes it
        let (v_delay, i_delay) = phase_delays(&capture, ps);
        let qs = QuantitySettings {
            skew_s: settings.skew_s + i_delay - v_delay,
            harmonics: settings.harmonics,
        };
        let est = estimate::estimate_at(
            &ps.voltage,
            &ps.current,
            rate,
            settings.harmonics,
            Some(known_hz),
        )?;
        order = est.order;
        let mut q = quantity::quantities_with(&ps.voltage, &ps.current, rate, &est, &qs, false);
        let turn = Complex64::from_polar(1.0, 2.0 * PI * q.frequency_hz * v_delay);
        let (v1, i1) = q.fundamentals;
        q.fundamentals = (v1 * turn, i1 * turn);
        phases.push((ps.phase, q));
    }
    let three_phase = (capture.system.is_three_phase() && phases.len() == 3).then(|| {
        let q = [&phases[0].1, &phases[1].1, &phases[2].1];
        let neutral_delay_s = settings.skew_s + capture.neutral.as_ref().map_or(0.0, |t| t.delay_s);
        system_figures(&capture, &samples, q, order, neutral_delay_s).0
    });
    Ok(WindowAnalysis {
        phases,
        three_phase,
    })
}
