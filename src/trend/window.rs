//! One window's figures: each phase fitted at the window's own frequency, and a three-phase
//! capture's system figures; no frequency search, uncertainty budget, preview or wiring hints
//! (a capture has thousands of windows; `analyze` gives those for a span of interest).

use crate::analysis::{Settings, system_figures};
use crate::capture::{Capture, Phase};
use crate::condition;
use crate::estimate::{self, EstimateError};
use crate::quantity::three_phase::ThreePhase;
use crate::quantity::{self, Quantities, QuantitySettings};

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
    let skew_s = settings.skew_s + capture.skew_s;
    condition::scale(&mut capture, settings.v_scale, settings.i_scale);
    let rate = capture.sample_rate_hz;
    let samples = condition::per_phase(&capture);
    let qs = QuantitySettings {
        skew_s,
        harmonics: settings.harmonics,
    };
    let mut phases = Vec::with_capacity(samples.len());
    let mut order = 1;
    for ps in &samples {
        let est = estimate::estimate_at(
            &ps.voltage,
            &ps.current,
            rate,
            settings.harmonics,
            Some(known_hz),
        )?;
        order = est.order;
        let q = quantity::quantities_with(&ps.voltage, &ps.current, rate, &est, &qs, false);
        phases.push((ps.phase, q));
    }
    let three_phase = (capture.system.is_three_phase() && phases.len() == 3).then(|| {
        let q = [&phases[0].1, &phases[1].1, &phases[2].1];
        system_figures(&capture, &samples, q, order, skew_s).0
    });
    Ok(WindowAnalysis {
        phases,
        three_phase,
    })
}
