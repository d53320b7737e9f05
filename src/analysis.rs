//! The analysis pipeline for one capture: condition -> estimate -> quantities.

use crate::capture::{Capture, SourceFormat, UsedChannels};
use crate::check::bank::BankSide;
use crate::check::circuit::Circuit;
use crate::check::expected::{self, Expectation, Expected};
use crate::check::meter::Measured;
use crate::check::tolerance::MonteCarloConfig;
use crate::condition;
use crate::estimate::{self, Estimate, EstimateError};
use crate::quantity::uncertainty::{self, Uncertainty, UncertaintyInputs};
use crate::quantity::{self, Quantities, QuantitySettings};
use crate::warning::{Severity, Status, Trace, Warning};
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
        }
    }
}

/// Everything known about one analysed capture.
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
    /// The voltage, current and time channels used: name, column, unit, how chosen.
    pub channels: UsedChannels,
    /// Settings used.
    pub settings: Settings,
    /// Estimator outputs.
    pub estimate: Estimate,
    /// Computed quantities.
    pub quantities: Quantities,
    /// Their expanded uncertainties (k = 2).
    pub uncertainty: Uncertainty,
    /// Everything observed, from loading on: warnings, findings and notes
    /// ([`Warning::severity`] tells them apart; [`Analysis::listed`] picks one kind).
    pub warnings: Vec<Warning>,
    /// Comparison with a circuit model, when one was given.
    pub expected: Option<Expected>,
    /// The first cycles of both traces, for plots.
    pub preview: Preview,
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
    fn new(v: &[f64], i: &[f64], rate_hz: f64, frequency_hz: f64) -> Self {
        let n = ((PREVIEW_CYCLES * rate_hz / frequency_hz).ceil() as usize).min(v.len());
        let stride = n.div_ceil(PREVIEW_POINTS).max(1);
        let range = |y: &[f64]| {
            y.iter()
                .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &x| {
                    (lo.min(x), hi.max(x))
                })
        };
        let (vr, ir) = (range(v), range(i));
        Preview {
            time_s: (0..n).step_by(stride).map(|k| k as f64 / rate_hz).collect(),
            voltage: v[..n].iter().step_by(stride).copied().collect(),
            current: i[..n].iter().step_by(stride).copied().collect(),
            extremes: (vr.0, vr.1, ir.0, ir.1),
        }
    }
}

/// A capture that loaded but could not be analysed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{}: {source}", .path.display())]
pub struct AnalysisError {
    /// The file.
    pub path: PathBuf,
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

/// Runs the whole pipeline on a loaded capture.
pub fn analyze(mut capture: Capture, settings: &Settings) -> Result<Analysis, AnalysisError> {
    // a skew the file itself declares (COMTRADE) adds to the one the command line gives
    let settings = &Settings {
        skew_s: settings.skew_s + capture.skew_s,
        ..*settings
    };
    condition::scale(&mut capture, settings.v_scale, settings.i_scale);
    let (v, i) = (&capture.voltage.samples, &capture.current.samples);
    let (estimate, quantities) =
        analyze_traces(v, i, capture.sample_rate_hz, settings).map_err(|source| AnalysisError {
            path: capture.path.clone(),
            source,
        })?;
    let mut warnings = std::mem::take(&mut capture.warnings);
    let (clip_v, clip_i) = rayon::join(|| condition::clipping(v), || condition::clipping(i));
    for (y, t, clip) in [(v, Trace::Voltage, clip_v), (i, Trace::Current, clip_i)] {
        if let Some(percent) = clip {
            warnings.push(Warning::Clipping { trace: t, percent });
        }
        if let Some(levels) = condition::few_levels(y) {
            warnings.push(Warning::LowResolution { trace: t, levels });
        }
    }
    warnings.extend(quantities.warnings.iter().cloned());
    if let Some(pf) = quantities.true_pf
        && pf.abs() < settings.pf_threshold
    {
        warnings.push(Warning::PfBelowThreshold {
            pf: pf.abs(),
            threshold: settings.pf_threshold,
        });
    }
    let uncertainty = uncertainty::uncertainty(
        v,
        i,
        &estimate,
        &quantities,
        settings.skew_s,
        &settings.uncertainty,
    );
    let preview = Preview::new(v, i, capture.sample_rate_hz, quantities.frequency_hz);
    let channels = capture.used_channels();
    Ok(Analysis {
        preview,
        uncertainty,
        samples: capture.len(),
        path: capture.path,
        format: capture.format,
        sample_rate_hz: capture.sample_rate_hz,
        channels,
        settings: *settings,
        estimate,
        quantities,
        warnings,
        expected: None,
    })
}

impl Analysis {
    /// The observations of one severity (warnings, findings or notes), in the order found.
    pub fn listed(&self, severity: Severity) -> impl Iterator<Item = &Warning> {
        self.warnings
            .iter()
            .filter(move |w| w.severity() == severity)
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

    /// Our measurement as the capacitor bank check needs it; `None` without a defined angle.
    pub fn bank_side(&self) -> Option<BankSide> {
        let q = &self.quantities;
        let (u_q_type_a_var, u_v1_type_a) = self.fundamental_type_a();
        Some(BankSide {
            p_w: q.power.active_w,
            p1_w: q.power.fundamental_active_w,
            q_var: q.power.reactive_var,
            u_q_type_a_var,
            v1: q.voltage.fundamental_rms,
            u_v1_type_a,
            frequency_hz: q.frequency_hz,
            u_frequency_hz: self.uncertainty.frequency_hz / self.uncertainty.coverage_factor,
            angle_deg: q.phase_angle_dft_deg?,
            instrument: self.settings.uncertainty,
            current_harmonics: q.harmonics.iter().map(|h| h.current_rms).collect(),
            voltage_harmonics: q.harmonics.iter().map(|h| h.voltage_rms).collect(),
            harmonic_angles_deg: q.harmonics.iter().map(|h| h.angle_deg).collect(),
            warnings: self.warnings.clone(),
        })
    }

    /// Type A standard uncertainties of Q1 (var) and V1 (V), by the rule of the uncertainty
    /// budget: the spread of the about-200 ms windows' values (`s/√M`) with at least
    /// [`uncertainty::MIN_WINDOWS_FOR_SPREAD`] windows, else the larger of the fit noise
    /// propagated (`√(σ_v²·I1² + σ_i²·V1²)/√N` for Q1, `σ_v/√N` for V1) and a rough spread.
    fn fundamental_type_a(&self) -> (f64, f64) {
        let est = &self.estimate;
        let q = &self.quantities;
        let turn = rustfft::num_complex::Complex64::from_polar(
            1.0,
            2.0 * std::f64::consts::PI * q.frequency_hz * self.settings.skew_s,
        );
        let per_window: Vec<(f64, f64)> = est
            .windows
            .iter()
            .filter_map(|w| {
                let v1 = *w.voltage.harmonics.first()?;
                let i1 = *w.current.harmonics.first()? * turn;
                Some(((v1 * i1.conj()).im, v1.norm()))
            })
            .collect();
        let sd_mean = |x: &dyn Fn(&(f64, f64)) -> f64| {
            let m = per_window.len() as f64;
            if m < 2.0 {
                return 0.0;
            }
            let mean = per_window.iter().map(x).sum::<f64>() / m;
            let var = per_window
                .iter()
                .map(|w| (x(w) - mean).powi(2))
                .sum::<f64>()
                / (m - 1.0);
            (var / m).sqrt()
        };
        let (spread_q, spread_v) = (sd_mean(&|w| w.0), sd_mean(&|w| w.1));
        if per_window.len() >= uncertainty::MIN_WINDOWS_FOR_SPREAD {
            return (spread_q, spread_v);
        }
        let n = (self.samples / est.decimation.max(1)).max(1) as f64;
        let (sv, si) = (est.voltage.residual_rms, est.current.residual_rms);
        let noise_q =
            (sv * q.current.fundamental_rms).hypot(si * q.voltage.fundamental_rms) / n.sqrt();
        (noise_q.max(spread_q), (sv / n.sqrt()).max(spread_v))
    }

    /// Compares the measured angle with what `circuit` predicts at the measured frequency and
    /// records the verdict in [`Analysis::expected`] (`inconclusive` with the reason when the
    /// capture cannot support the angle), when the angle is defined; gives the
    /// prediction (band, Monte Carlo spread) for plots.
    pub fn compare_with_model(
        &mut self,
        circuit: &Circuit,
        mc: &MonteCarloConfig,
    ) -> Option<Expectation> {
        let q = &self.quantities;
        let (Some(angle), Some(u)) = (q.phase_angle_dft_deg, self.uncertainty.phase_angle_deg.dft)
        else {
            return None;
        };
        let (v1, i1) = q.fundamentals;
        let uz = &self.uncertainty;
        let m = expected::Measurement {
            v1,
            i1,
            angle_deg: angle,
            u_angle_deg: u,
            // |Z| = V/I: the relative expanded uncertainties of the two RMS values combined
            // (independent probes).
            u_impedance_rel: (uz.voltage.rms / q.voltage.rms).hypot(uz.current.rms / q.current.rms),
            v_scale: self.settings.v_scale,
            i_scale: self.settings.i_scale,
        };
        let e = expected::expectation(circuit, q.frequency_hz, mc);
        let mut x = expected::compare_to(circuit, &e, &m);
        x.undermined_by(&self.verdict_doubts());
        self.expected = Some(x);
        Some(e)
    }

    /// Our measurement as the meter check needs it; `None` without a defined PF.
    pub fn meter_measured(&self) -> Option<Measured> {
        let q = &self.quantities;
        let u = &self.uncertainty;
        let (v, i) = (q.voltage.rms, q.current.rms);
        let s = q.power.apparent_va;
        // U of S = V·I from the relative U of V and I (uncorrelated probes).
        let u_s = s * (u.voltage.rms / v).hypot(u.current.rms / i);
        Some(Measured {
            p_w: q.power.active_w,
            q_var: q.power.reactive_var,
            s_va: s,
            pf: q.true_pf?,
            angle_deg: q.phase_angle_dft_deg?,
            p1_w: q.power.fundamental_active_w,
            q_budeanu_var: q
                .harmonics
                .iter()
                .map(|h| h.voltage_rms * h.current_rms * h.angle_deg.to_radians().sin())
                .sum(),
            nonactive_var: q.power.nonactive_var,
            s1_va: q.power.fundamental_apparent_va,
            displacement_pf: q.displacement_pf?,
            u_displacement_pf: u.displacement_pf?,
            v1: q.voltage.fundamental_rms,
            i1: q.current.fundamental_rms,
            v_rms: v,
            i_rms: i,
            u_p_w: u.power.active_w,
            u_q_var: u.power.reactive_var,
            u_s_va: u_s,
            u_pf: u.true_pf?,
            u_v: u.voltage.rms,
            u_i: u.current.rms,
        })
    }
}
