//! Expanded uncertainty of every reported figure, by the GUM law of propagation (JCGM 100:2008):
//! independent components, each a standard uncertainty times its sensitivity, added in
//! quadrature. The coverage factor comes from each figure's effective degrees of freedom
//! (Welch-Satterthwaite, [`super::coverage`]): k = 2 when no Type A part rests on few windows,
//! t_95.45(ν_eff) when one does (ν = M − 1 for a spread over M windows; 3.31 at ν = 3).
//!
//! Type A (statistical, from the capture itself):
//! - the spread of each figure across sub-records of about 200 ms (the IEC 61000-4-7 window):
//!   `s/√M` over M windows, used when there are at least [`MIN_WINDOWS_FOR_SPREAD`] windows;
//! - otherwise, and always for the frequency, the noise the fit leaves, propagated analytically
//!   (Cramér-Rao bound for the frequency, `σ/(X1·√N)` for a phase, `σ/√N` for an RMS,
//!   `√(σ_v²I² + σ_i²V²)/√N` for P and Q1, `σ/(X1·√N)·√(1 + THD²)` for a THD), or the crossing
//!   scatter for the zero-crossing angle. With two or three windows the larger of their rough
//!   spread and the noise is kept.
//!
//! Type B (from the instrument, [`UncertaintyInputs`], each a ± limit with a rectangular
//! distribution, u = limit/√3, GUM 4.3.7):
//! - probe or clamp ratio accuracy (% of reading) on RMS, P and Q1 (it cancels in angles, PF and THD);
//! - probe phase error (degrees) and channel skew (seconds, as 360·f·Δt degrees) on the angles,
//!   the PFs, P and Q1;
//! - converter resolution and noise: the quantisation noise q²/12 (Widrow's model) or the fit's
//!   noise σ², whichever is larger, adds to the mean square, a bias of RMS (and of true PF
//!   through S) left uncorrected and added to U whole; q from the bits and full scale, or the
//!   smallest step seen in the samples (the random part of quantisation is in the Type A spread);
//! - sample clock accuracy (ppm) on the frequency;
//! - the frequency response of probe and instrument on THD (± % of each harmonic's reading; the
//!   default 5 % is what IEC 61000-4-7 class I allows for harmonics, from memory): the
//!   distortion ratio moves by the same share, u = THD·limit/√3.
//!
//! The frequency's Type A part is that of the estimator used ([`crate::estimate::frequency()`]):
//! the phase slope across sub-records, each sub-record's phase with the noise of its own length,
//! never below the Cramér-Rao bound of the whole record.

use super::coverage::Coverage;
use super::crossing_shift::interpolation_errors;
use super::{Quantities, TraceFigures};
use crate::estimate::frequency::wrap;
use crate::estimate::{Estimate, WindowEstimate};
use rustfft::num_complex::Complex64;
use serde::Serialize;
use std::f64::consts::PI;

/// Coverage factor with infinitely many degrees of freedom (95.45 % for a normal distribution);
/// a figure whose Type A part rests on few windows gets a larger one ([`Coverage`]).
pub const COVERAGE_FACTOR: f64 = 2.0;
/// The default limit of the harmonics' readings, ± % (IEC 61000-4-7 class I for harmonics, from
/// memory).
pub const DEFAULT_HARMONIC_PERCENT: f64 = 5.0;
/// Fewer windows than this give too rough a spread to use alone.
pub const MIN_WINDOWS_FOR_SPREAD: usize = 4;

/// Instrument limits behind the Type B components. Ratios are in percent of reading, the phase
/// error in degrees, skew in seconds, the clock in parts per million.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct UncertaintyInputs {
    /// Voltage probe ratio accuracy, ± % of reading.
    pub v_ratio_percent: f64,
    /// Current clamp or shunt ratio accuracy, ± % of reading.
    pub i_ratio_percent: f64,
    /// Phase error of the probe pair (current relative to voltage), ± degrees.
    pub phase_error_deg: f64,
    /// Uncertainty of the channel skew (after any `--skew` correction), ± seconds.
    pub skew_s: f64,
    /// Sample clock accuracy, ± ppm.
    pub clock_ppm: f64,
    /// Frequency response of probe and instrument: ± % of each harmonic's reading, moving THD
    /// by the same share.
    pub harmonic_percent: f64,
    /// Converter bits, with full scale (peak, in volts and amperes after scaling); `None`: the
    /// step is taken from the samples.
    pub adc: Option<Adc>,
}

/// A converter's resolution.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Adc {
    /// Bits.
    pub bits: u32,
    /// Full-scale peak of the voltage channel, volts.
    pub v_full_scale: f64,
    /// Full-scale peak of the current channel, amperes.
    pub i_full_scale: f64,
}

impl Adc {
    fn step(full_scale: f64, bits: u32) -> f64 {
        2.0 * full_scale / 2f64.powi(bits as i32)
    }
}

impl Default for UncertaintyInputs {
    /// Defaults for an ordinary bench set-up (common practice): differential voltage probe ±1 %,
    /// current clamp ±2 % and ±0.5° (a class 0.5 current transformer allows 30′ = 0.5°,
    /// IEC 61869-2, from memory), no residual skew, a ±50 ppm crystal clock, harmonics within
    /// ±5 % of reading (IEC 61000-4-7 class I, from memory).
    fn default() -> Self {
        UncertaintyInputs {
            v_ratio_percent: 1.0,
            i_ratio_percent: 2.0,
            phase_error_deg: 0.5,
            skew_s: 0.0,
            clock_ppm: 50.0,
            harmonic_percent: DEFAULT_HARMONIC_PERCENT,
            adc: None,
        }
    }
}

/// Expanded uncertainties, mirroring the result keys, each with its own coverage factor
/// ([`Coverages`]).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Uncertainty {
    /// The largest coverage factor among the figures (2 unless a Type A part rests on few
    /// windows); each figure's own is in `coverage`.
    pub coverage_factor: f64,
    /// Each figure's effective degrees of freedom and coverage factor.
    pub coverage: Coverages,
    /// Number of sub-records the spread was taken over.
    pub windows: usize,
    /// Fundamental frequency, Hz.
    pub frequency_hz: f64,
    /// Phase angles, degrees.
    pub phase_angle_deg: AngleUncertainty,
    /// Displacement PF.
    pub displacement_pf: Option<f64>,
    /// True PF.
    pub true_pf: Option<f64>,
    /// Voltage figures.
    pub voltage: TraceUncertainty,
    /// Current figures.
    pub current: TraceUncertainty,
    /// Powers.
    pub power: PowerUncertainty,
}

/// The effective degrees of freedom and coverage factor of each figure (Welch-Satterthwaite,
/// JCGM 100:2008 Annex G), keys as in the results.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Coverages {
    /// Frequency.
    pub frequency_hz: Coverage,
    /// DFT phase angle.
    pub phase_angle_deg: Coverage,
    /// Displacement PF.
    pub displacement_pf: Coverage,
    /// True PF.
    pub true_pf: Coverage,
    /// Voltage RMS.
    pub voltage_rms: Coverage,
    /// Voltage THD.
    pub voltage_thd_percent: Coverage,
    /// Current RMS.
    pub current_rms: Coverage,
    /// Current THD.
    pub current_thd_percent: Coverage,
    /// P.
    pub active_w: Coverage,
    /// Q1.
    pub reactive_var: Coverage,
}

impl Coverages {
    fn all(&self) -> [Coverage; 10] {
        [
            self.frequency_hz,
            self.phase_angle_deg,
            self.displacement_pf,
            self.true_pf,
            self.voltage_rms,
            self.voltage_thd_percent,
            self.current_rms,
            self.current_thd_percent,
            self.active_w,
            self.reactive_var,
        ]
    }
}

/// A standard uncertainty with its degrees of freedom (`None`: infinitely many).
type Part = (f64, Option<f64>);

/// The expanded uncertainty of `parts` and its coverage.
fn expand(parts: &[Part]) -> (f64, Coverage) {
    let c = Coverage::from_parts(parts);
    let u = parts.iter().map(|(u, _)| u * u).sum::<f64>().sqrt();
    (c.k * u, c)
}

/// Uncertainty of both angles.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct AngleUncertainty {
    /// DFT (least-squares) angle.
    pub dft: Option<f64>,
    /// Zero-crossing angle.
    pub zero_crossing: Option<f64>,
}

/// Uncertainty of one trace's figures.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct TraceUncertainty {
    /// True RMS.
    pub rms: f64,
    /// THD, percentage points.
    pub thd_percent: Option<f64>,
}

/// Uncertainty of the powers.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct PowerUncertainty {
    /// P, W.
    pub active_w: f64,
    /// Q1, var.
    pub reactive_var: f64,
}

/// One window's figures, for the spread.
struct WindowFigures {
    angle_deg: f64,
    pf: f64,
    v_rms: f64,
    i_rms: f64,
    v_thd: f64,
    i_thd: f64,
    p: f64,
    q1: f64,
}

fn window_figures(
    w: &WindowEstimate,
    order: usize,
    skew_rot: &dyn Fn(usize) -> Complex64,
) -> WindowFigures {
    let v = &w.voltage.harmonics;
    let i: Vec<Complex64> = w
        .current
        .harmonics
        .iter()
        .enumerate()
        .map(|(k, x)| x * skew_rot(k + 1))
        .collect();
    let ms = |dc: f64, h: &[Complex64], r: f64| {
        dc * dc + h.iter().map(|x| x.norm_sqr()).sum::<f64>() + r
    };
    let v_rms = ms(w.voltage.dc, v, w.voltage.residual_ms).sqrt();
    let i_rms = ms(w.current.dc, &i, w.current.residual_ms).sqrt();
    let p = w.voltage.dc * w.current.dc
        + v.iter()
            .zip(&i)
            .map(|(a, b)| (a * b.conj()).re)
            .sum::<f64>()
        + w.residual_cross;
    let theta = wrap(v[0].arg() - i[0].arg());
    let n = order.min(v.len());
    let thd = |h: &[Complex64]| {
        100.0 * h[1..n].iter().map(|x| x.norm_sqr()).sum::<f64>().sqrt() / h[0].norm()
    };
    WindowFigures {
        angle_deg: theta.to_degrees(),
        pf: p / (v_rms * i_rms),
        v_rms,
        i_rms,
        v_thd: thd(v),
        i_thd: thd(&i),
        p,
        q1: v[0].norm() * i[0].norm() * theta.sin(),
    }
}

/// Standard deviation of the mean of `x` (sample standard deviation over √n).
fn sd_mean(x: impl Iterator<Item = f64> + Clone) -> f64 {
    let n = x.clone().count() as f64;
    if n < 2.0 {
        return 0.0;
    }
    let mean = x.clone().sum::<f64>() / n;
    let var = x.map(|v| (v - mean) * (v - mean)).sum::<f64>() / (n - 1.0);
    (var / n).sqrt()
}

/// Standard uncertainty of `scale·cos θ` for an angle θ (radians) of standard uncertainty `u`:
/// `scale·√(sin²θ·u² + ½·cos²θ·u⁴)`, the law of propagation with its second-order term for a
/// normal input (JCGM 100:2008, 5.1.2 note). Near θ = 0 or 180° the cosine is flat and the
/// first-order term alone would vanish (it gave ±2e-7 where the spread is 5e-5).
fn through_cos(theta: f64, u: f64, scale: f64) -> f64 {
    let (s, c) = theta.sin_cos();
    scale.abs() * (s * s * u * u + 0.5 * c * c * u.powi(4)).sqrt()
}

fn rss(parts: &[f64]) -> f64 {
    parts.iter().map(|x| x * x).sum::<f64>().sqrt()
}

/// The smallest positive step between distinct values among up to 4096 samples.
fn observed_step(y: &[f64]) -> f64 {
    let stride = (y.len() / 4096).max(1);
    // Sorted as integers in the order of `f64::total_cmp` (the same bit flip, its own inverse),
    // which sorts several times faster than comparing floats.
    let flip = |b: i64| b ^ ((((b >> 63) as u64) >> 1) as i64);
    let mut s: Vec<i64> = y
        .iter()
        .step_by(stride)
        .map(|x| flip(x.to_bits() as i64))
        .collect();
    s.sort_unstable();
    s.windows(2)
        .map(|w| f64::from_bits(flip(w[1]) as u64) - f64::from_bits(flip(w[0]) as u64))
        .filter(|d| *d > 0.0)
        .fold(f64::INFINITY, f64::min)
}

/// Computes the expanded uncertainty of every figure in `q`.
pub fn uncertainty(
    v: &[f64],
    i: &[f64],
    est: &Estimate,
    q: &Quantities,
    skew_s: f64,
    inputs: &UncertaintyInputs,
) -> Uncertainty {
    let f = est.frequency_hz;
    let rect = |limit: f64| limit / 3f64.sqrt();
    let skew_rot = |h: usize| Complex64::from_polar(1.0, 2.0 * PI * h as f64 * f * skew_s);
    let wins: Vec<WindowFigures> = est
        .windows
        .iter()
        .map(|w| window_figures(w, q.harmonic_order, &skew_rot))
        .collect();
    let spread_ok = wins.len() >= MIN_WINDOWS_FOR_SPREAD;
    let spread = |get: fn(&WindowFigures) -> f64| sd_mean(wins.iter().map(get));
    // The degrees of freedom of a spread over the windows (GUM G.3.3): M − 1.
    let window_dof = Some(wins.len().saturating_sub(1) as f64);
    // Type A: the window spread when there are enough windows, with M − 1 degrees of freedom;
    // otherwise the noise propagated analytically (from the fit over the whole record: infinitely
    // many degrees of freedom), or the rough spread of two or three windows if that is larger, a
    // guard on the model, not an estimate to weigh by its own degrees of freedom (taken at M − 1
    // it made U four times the Monte Carlo spread of a 10.3-cycle record).
    let type_a = |get: fn(&WindowFigures) -> f64, noise: f64| -> Part {
        let s = spread(get);
        if spread_ok {
            (s, window_dof)
        } else {
            (noise.max(if wins.len() >= 2 { s } else { 0.0 }), None)
        }
    };
    let b = |u: f64| -> Part { (u, None) };

    // Angle: Type B from probe phase error and skew.
    let u_phase_b = rect(inputs.phase_error_deg).hypot(rect(360.0 * f * inputs.skew_s));
    let u_angle_noise = q.phase_angle_dft_sigma_deg;
    let angle_a = type_a(|w| w.angle_deg, u_angle_noise);
    let angle_parts = [angle_a, b(u_phase_b)];
    let (u_angle_expanded, angle_cov) = expand(&angle_parts);
    let u_angle = u_angle_expanded / angle_cov.k;
    // The crossing detector interpolates between samples; on a distorted wave that misses the
    // crossing by an amount the scatter cannot show (up to 0.1° at 40 samples per cycle), set
    // by where the samples fall in the cycle, which is not known: its root mean square over
    // sub-sample starting points, worked out on the fitted series, is a Type B standard
    // uncertainty (GUM 4.3.1), one per trace.
    // Harmonics within three noise standard deviations of zero (σ/√N for an RMS phasor, see
    // below) are left out of the series.
    let per_cycle = v.len() as f64 / est.cycles;
    let n_fit = (v.len() / est.decimation.max(1)).max(1) as f64;
    let interpolation = |c: &crate::estimate::ChannelPhasors| {
        let e = interpolation_errors(c, per_cycle, 3.0 * c.residual_rms / n_fit.sqrt());
        (e.iter().map(|x| x * x).sum::<f64>() / e.len().max(1) as f64)
            .sqrt()
            .to_degrees()
    };
    let u_interpolation = interpolation(&est.voltage).hypot(interpolation(&est.current));
    let u_angle_zc = q
        .phase_angle_zero_crossing_sigma_deg
        .map(|s| rss(&[s, u_phase_b, u_interpolation]));
    let theta = q.phase_angle_dft_deg.unwrap_or(0.0).to_radians();
    // The figures below take the angle's Type B part through their sensitivity and their own
    // window spread for Type A (which already holds the angle's noise).
    let u_theta_b = u_phase_b.to_radians();
    let u_theta_noise = u_angle_noise.to_radians();

    // Noise floors for fewer than four windows, from the fit residuals σ_v, σ_i over the N fitted
    // samples (block averaging keeps σ²/N): an RMS reading moves by σ/√N, P = mean(v·i) by
    // √(σ_v²·I² + σ_i²·V²)/√N, a harmonic magnitude by σ/√N (radially, as the phase moves by
    // σ/(X1·√N)), so THD = D/X1 moves by (σ/(X1·√N))·√(1 + THD²) (first-order propagation,
    // GUM; Kay vol. I for the phasor variances, references §4).
    let (sv, si) = (est.voltage.residual_rms, est.current.residual_rms);
    let noise_rms = |sigma: f64| sigma / n_fit.sqrt();
    let noise_thd = |sigma: f64, t: &TraceFigures| match t.thd_percent {
        Some(thd) if t.fundamental_rms > 0.0 => {
            100.0 * sigma / (t.fundamental_rms * n_fit.sqrt())
                * (1.0 + (thd / 100.0).powi(2)).sqrt()
        }
        _ => 0.0,
    };
    let noise_power = |vr: f64, ir: f64| (sv * ir).hypot(si * vr) / n_fit.sqrt();

    // RMS: ratio accuracy, converter resolution, spread.
    let steps = match inputs.adc {
        Some(a) => (
            Adc::step(a.v_full_scale, a.bits),
            Adc::step(a.i_full_scale, a.bits),
        ),
        None => (observed_step(v), observed_step(i)),
    };
    // Noise on the samples adds its variance to the mean square: the RMS reads √(X² + σ²), a
    // bias of one sign. Quantisation with step q adds q²/12 (Widrow's model, textbook) and the
    // fit residual at the input rate (σ²·D after block averaging) holds white noise, the random
    // part of quantisation, and any content the fit does not model, which may be signal. The
    // larger of the two is left uncorrected and added to U whole, not in quadrature (JCGM
    // 100:2008 F.2.4.5, from memory: a known correction not applied enlarges the expanded
    // uncertainty by its size): taken as a ± limit (u = b/√3) it let a 40 dB record's RMS U
    // cover 87 % of Monte Carlo errors (tests/uncertainty.rs).
    let d = est.decimation.max(1) as f64;
    let rms_bias = |t: &TraceFigures, step: f64, sigma: f64| {
        let quantisation = if step.is_finite() {
            step * step / 12.0
        } else {
            0.0
        };
        (t.rms * t.rms + quantisation.max(sigma * sigma * d)).sqrt() - t.rms
    };
    let rms_u = |t: &TraceFigures, ratio_pct: f64, noise: f64, get: fn(&WindowFigures) -> f64| {
        expand(&[b(t.rms * rect(ratio_pct / 100.0)), type_a(get, noise)])
    };
    let (u_v, cov_v) = rms_u(&q.voltage, inputs.v_ratio_percent, noise_rms(sv), |w| {
        w.v_rms
    });
    let (u_i, cov_i) = rms_u(&q.current, inputs.i_ratio_percent, noise_rms(si), |w| {
        w.i_rms
    });
    let u_v = u_v + rms_bias(&q.voltage, steps.0, sv);
    let u_i = u_i + rms_bias(&q.current, steps.1, si);

    // Powers: ratio errors of both channels, the angle, spread.
    let ratio_rel =
        rect(inputs.v_ratio_percent / 100.0).hypot(rect(inputs.i_ratio_percent / 100.0));
    let s1 = q.power.fundamental_apparent_va;
    let (u_p, cov_p) = expand(&[
        b(q.power.active_w.abs() * ratio_rel),
        b(s1 * theta.sin().abs() * u_theta_b),
        type_a(|w| w.p, noise_power(q.voltage.rms, q.current.rms)),
    ]);
    let (u_q, cov_q) = expand(&[
        b(q.power.reactive_var.abs() * ratio_rel),
        b(s1 * theta.cos().abs() * u_theta_b),
        type_a(
            |w| w.q1,
            noise_power(q.voltage.fundamental_rms, q.current.fundamental_rms),
        ),
    ]);
    // THD: the harmonics' reading limit (Type B) and the spread or noise (Type A).
    let thd_u = |t: &TraceFigures, sigma: f64, get: fn(&WindowFigures) -> f64| {
        t.thd_percent.map(|thd| {
            expand(&[
                b(thd * rect(inputs.harmonic_percent / 100.0)),
                type_a(get, noise_thd(sigma, t)),
            ])
        })
    };
    let thd_v = thd_u(&q.voltage, sv, |w| w.v_thd);
    let thd_i = thd_u(&q.current, si, |w| w.i_thd);
    // Frequency: the estimator's own noise (infinitely many degrees of freedom: the fit's
    // residual over the whole record) and the clock.
    let (u_f, cov_f) = expand(&[
        b(est.frequency_sigma_hz),
        b(f * rect(inputs.clock_ppm * 1e-6)),
    ]);
    let s = q.power.apparent_va;
    let defined = q.phase_angle_dft_deg.is_some();
    // PF1 = cos θ depends on the angle alone, so the angle's whole uncertainty goes through the
    // cosine, with the angle's degrees of freedom.
    let displacement_pf =
        defined.then(|| angle_cov.k * through_cos(theta, u_angle.to_radians(), 1.0));
    // True PF takes the angle's Type B part through the cosine and its own window spread.
    let true_pf = defined.then(|| {
        let scale = s1 / s;
        // The noise the fit leaves (at the input rate) is in the RMS readings and so in S: PF
        // reads low by PF·(1 − 1/√((1 + σv²/V²)(1 + σi²/I²))), a bias left uncorrected and added
        // to U whole, as for RMS (JCGM 100:2008 F.2.4.5, from memory); as a ± limit in
        // quadrature it covered 84 % of Monte Carlo errors on a 40 dB record.
        let rel = |sigma: f64, x: f64| {
            if x > 0.0 {
                sigma * sigma * d / (x * x)
            } else {
                0.0
            }
        };
        let inflation = ((1.0 + rel(sv, q.voltage.rms)) * (1.0 + rel(si, q.current.rms))).sqrt();
        let noise_bias = q.true_pf.unwrap_or(0.0).abs() * (1.0 - 1.0 / inflation);
        let (u, c) = expand(&[
            b(through_cos(theta, u_theta_b, scale)),
            type_a(|w| w.pf, through_cos(theta, u_theta_noise, scale)),
        ]);
        (u + noise_bias, c)
    });
    let normal = Coverage::NORMAL;
    let coverage = Coverages {
        frequency_hz: cov_f,
        phase_angle_deg: angle_cov,
        displacement_pf: angle_cov,
        true_pf: true_pf.map_or(normal, |t| t.1),
        voltage_rms: cov_v,
        voltage_thd_percent: thd_v.map_or(normal, |t| t.1),
        current_rms: cov_i,
        current_thd_percent: thd_i.map_or(normal, |t| t.1),
        active_w: cov_p,
        reactive_var: cov_q,
    };
    Uncertainty {
        coverage_factor: coverage
            .all()
            .iter()
            .map(|c| c.k)
            .fold(COVERAGE_FACTOR, f64::max),
        coverage,
        windows: wins.len(),
        frequency_hz: u_f,
        phase_angle_deg: AngleUncertainty {
            dft: defined.then_some(u_angle_expanded),
            zero_crossing: u_angle_zc.map(|u| COVERAGE_FACTOR * u),
        },
        displacement_pf,
        true_pf: true_pf.map(|t| t.0),
        voltage: TraceUncertainty {
            rms: u_v,
            thd_percent: thd_v.map(|t| t.0),
        },
        current: TraceUncertainty {
            rms: u_i,
            thd_percent: thd_i.map(|t| t.0),
        },
        power: PowerUncertainty {
            active_w: u_p,
            reactive_var: u_q,
        },
    }
}

#[cfg(test)]
mod tests {
    use super::observed_step;

    /// The step of a quantised trace, across zero and with repeats, matches a plain
    /// float-comparison sort.
    #[test]
    fn observed_step_finds_the_quantisation_step() {
        let q = 0.0625;
        let y: Vec<f64> = (0..3000)
            .map(|k| ((k as f64 * 0.37).sin() * 40.0).round() * q - 0.5)
            .collect();
        let mut naive = y.clone();
        naive.sort_by(|a, b| a.partial_cmp(b).unwrap());
        let want = naive
            .windows(2)
            .map(|w| w[1] - w[0])
            .filter(|d| *d > 0.0)
            .fold(f64::INFINITY, f64::min);
        assert_eq!(observed_step(&y), want);
        assert!((want - q).abs() < 1e-12);
        assert_eq!(observed_step(&[-1.0, -3.0, 2.0, -0.5]), 0.5);
        assert_eq!(observed_step(&[1.0, 1.0]), f64::INFINITY);
    }
}
