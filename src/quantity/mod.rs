//! Quantities: RMS, THD, phase angles, power factors and IEEE Std 1459-2010 powers.
//!
//! Input: the scaled traces and the [`crate::estimate::Estimate`]. Output: [`Quantities`].
//!
//! Means over "an integer number of cycles" are taken over the whole cycles from the first sample,
//! rounded to a whole sample. The half-sample left by that rounding would bias RMS and P by up to
//! a few tenths of a percent on a slow logger, so the fitted Fourier series is used to remove it:
//! the mean of the fitted model over the same samples is computed in closed form and replaced by
//! its exact whole-cycle mean (DC² + Σ Xh²). What the model does not hold (noise, interharmonics)
//! stays in the time-domain sum untouched.
//!
//! A known current-channel delay (`skew`) is removed per harmonic by rotating each current phasor
//! by `2π·h·f·skew`; P is corrected by the change of Σ Re(Vh·Ih*) that rotation makes.

pub mod coverage;
pub mod crossing_shift;
pub mod events;
pub mod inrush;
pub mod power;
pub mod three_phase;
pub mod uncertainty;

use crate::analysis::DEFAULT_HARMONICS;
use crate::condition::whole_cycles;
use crate::estimate::fit::cis_sum;
use crate::estimate::frequency::wrap;
use crate::estimate::{ChannelPhasors, Estimate};
use crate::warning::{Trace, Warning};
use power::{Powers, RmsParts};
use rustfft::num_complex::Complex64;
use std::f64::consts::{PI, SQRT_2};

/// Settings the quantity stage needs.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct QuantitySettings {
    /// Current-channel delay to remove, seconds (positive: the current trace is late).
    pub skew_s: f64,
    /// Highest harmonic order to report (THD and spectrum).
    pub harmonics: usize,
}

/// RMS-level figures of one trace.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct TraceFigures {
    /// True RMS over whole cycles (DC included).
    pub rms: f64,
    /// DC level.
    pub dc: f64,
    /// Fundamental RMS.
    pub fundamental_rms: f64,
    /// THD-F in percent of the fundamental, orders 2..=order used; `None` without fundamental.
    pub thd_percent: Option<f64>,
    /// Largest absolute sample over the whole cycles.
    pub peak: f64,
    /// Peak / RMS.
    pub crest_factor: f64,
}

/// One harmonic order of both traces.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct HarmonicLine {
    /// Harmonic order.
    pub order: usize,
    /// Frequency of this order, Hz.
    pub frequency_hz: f64,
    /// Voltage RMS of this order.
    pub voltage_rms: f64,
    /// Voltage in percent of the voltage fundamental (`None` without a fundamental).
    pub voltage_percent: Option<f64>,
    /// Current RMS of this order.
    pub current_rms: f64,
    /// Current in percent of the current fundamental (`None` without a fundamental).
    pub current_percent: Option<f64>,
    /// Angle of the voltage minus the current of this order, degrees (skew removed).
    pub angle_deg: f64,
    /// Active power carried by this order, W.
    pub active_w: f64,
}

/// Inductive (lagging) or capacitive (leading), seen in the direction the active power flows:
/// the four-quadrant metering diagram (IEC 62053-23 figure, load convention, from memory) calls
/// quadrants I (import P, import Q) and III (export P, export Q) inductive, II (export P, import
/// Q) and IV (import P, export Q) capacitive. For an importing load this is the plain "current
/// lags" / "current leads"; at θ1 = 150° (exporting) the current, turned to the direction of the
/// active power, leads by 30°: capacitive.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Character {
    /// Inductive: quadrant I or III (P·Q1 > 0).
    Lagging,
    /// Capacitive: quadrant II or IV (P·Q1 < 0).
    Leading,
}

impl Character {
    /// The character at fundamental angle `theta1_rad` (V1 angle minus I1 angle): lagging when
    /// P1 = S1·cos θ1 and Q1 = S1·sin θ1 have the same sign (a zero P1 counts as importing).
    pub fn of_angle(theta1_rad: f64) -> Self {
        let (sin, cos) = theta1_rad.sin_cos();
        if (sin > 0.0) == (cos >= 0.0) {
            Character::Lagging
        } else {
            Character::Leading
        }
    }

    /// In words, with the direction of the active power: e.g. "capacitive (leading), exporting
    /// active power".
    pub fn describe(self, active_w: f64) -> String {
        let (kind, word) = match self {
            Character::Lagging => ("inductive", "lagging"),
            Character::Leading => ("capacitive", "leading"),
        };
        let flow = if active_w < 0.0 {
            "exporting"
        } else {
            "importing"
        };
        format!("{kind} ({word}), {flow} active power")
    }

    /// The word used in every output.
    pub fn as_str(self) -> &'static str {
        match self {
            Character::Lagging => "lagging",
            Character::Leading => "leading",
        }
    }
}

/// Everything computed from one capture.
#[derive(Debug, Clone, PartialEq)]
pub struct Quantities {
    /// Fundamental frequency, Hz.
    pub frequency_hz: f64,
    /// Cycles in the record.
    pub cycles: f64,
    /// Whole cycles the means were taken over.
    pub whole_cycles: usize,
    /// Highest harmonic order in THD and spectrum.
    pub harmonic_order: usize,
    /// Phase angle by the DFT (least-squares phasor) method, degrees, in (−180, 180].
    pub phase_angle_dft_deg: Option<f64>,
    /// Phase angle by zero crossings, degrees, in (−180, 180].
    pub phase_angle_zero_crossing_deg: Option<f64>,
    /// cos θ1.
    pub displacement_pf: Option<f64>,
    /// P / S.
    pub true_pf: Option<f64>,
    /// Leading or lagging.
    pub character: Option<Character>,
    /// Voltage figures.
    pub voltage: TraceFigures,
    /// Current figures.
    pub current: TraceFigures,
    /// IEEE 1459 powers.
    pub power: Powers,
    /// Spectrum, orders 1..=harmonic_order.
    pub harmonics: Vec<HarmonicLine>,
    /// Standard uncertainty of the DFT angle from the fit residuals, degrees.
    pub phase_angle_dft_sigma_deg: f64,
    /// Standard uncertainty of the zero-crossing angle from the crossing scatter, degrees.
    pub phase_angle_zero_crossing_sigma_deg: Option<f64>,
    /// Warnings this stage found.
    pub warnings: Vec<Warning>,
    /// RMS phasors of the voltage and current fundamentals (current with the skew removed), for
    /// the impedance V1/I1.
    pub fundamentals: (Complex64, Complex64),
}

/// Sums over the whole-cycle span that need the samples.
struct SpanSums {
    vv: f64,
    ii: f64,
    vi: f64,
    peak_v: f64,
    peak_i: f64,
}

/// Each sum is taken in sample order, as one loop would take it (the same bits), in two passes
/// side by side (two cores when free: this is the last step of a single-phase analysis); the
/// peaks by the vectorised range scan.
fn span_sums(v: &[f64], i: &[f64]) -> SpanSums {
    let ((vv, ii), (vi, peak_v, peak_i)) = rayon::join(
        || {
            v.iter()
                .zip(i)
                .fold((0.0, 0.0), |(vv, ii), (&a, &b)| (vv + a * a, ii + b * b))
        },
        || {
            let vi = v.iter().zip(i).fold(0.0, |vi, (&a, &b)| vi + a * b);
            (
                vi,
                crate::condition::peak_magnitude(v),
                crate::condition::peak_magnitude(i),
            )
        },
    );
    SpanSums {
        vv,
        ii,
        vi,
        peak_v,
        peak_i,
    }
}

/// Peak complex amplitudes with DC at index 0, as the model sum needs them.
fn peak_series(c: &ChannelPhasors, rotate: impl Fn(usize) -> Complex64) -> Vec<Complex64> {
    std::iter::once(Complex64::new(c.dc, 0.0))
        .chain(
            c.harmonics
                .iter()
                .enumerate()
                .map(|(k, h)| h * SQRT_2 * rotate(k + 1)),
        )
        .collect()
}

/// Σ over `len` samples of the product of two fitted models, minus `len` times its exact
/// whole-cycle mean: the rounding bias of the span, in sum units.
fn span_bias(x: &[Complex64], z: &[Complex64], s: &[Complex64], h_max: usize, len: usize) -> f64 {
    // s[m + 2H] = Σ_n e^{j m ω (n − ref)}
    let at = |m: isize| s[(m + 2 * h_max as isize) as usize];
    let mut sum = 0.0;
    let mut exact = x[0].re * z[0].re;
    for (h, xh) in x.iter().enumerate() {
        for (k, zk) in z.iter().enumerate() {
            let (h, k) = (h as isize, k as isize);
            sum += (xh * zk * at(h + k) + xh * zk.conj() * at(h - k)).re;
        }
        if h > 0 {
            exact += 0.5 * (xh * z[h].conj()).re;
        }
    }
    0.5 * sum - len as f64 * exact
}

/// Computes every quantity.
pub fn quantities(
    v: &[f64],
    i: &[f64],
    fs: f64,
    est: &Estimate,
    settings: &QuantitySettings,
) -> Quantities {
    quantities_with(v, i, fs, est, settings, true)
}

/// [`quantities`], with `explain` false leaving out how far the harmonics move the zero
/// crossings when the two angle methods disagree (`explained_deg` of the warning is then
/// `None`): the windows of [`crate::trend`], thousands per capture, skip that model.
pub fn quantities_with(
    v: &[f64],
    i: &[f64],
    fs: f64,
    est: &Estimate,
    settings: &QuantitySettings,
    explain: bool,
) -> Quantities {
    let f = est.frequency_hz;
    let mut warnings = Vec::new();
    let (whole, span) = whole_cycles(v.len(), fs / f);
    let sums = span_sums(&v[..span], &i[..span]);
    let omega = 2.0 * PI * f / fs;
    // Skew: the recorded current is late by skew; advance each harmonic by 2π·h·f·skew.
    let skew_rot = |h: usize| Complex64::from_polar(1.0, 2.0 * PI * h as f64 * f * settings.skew_s);
    let h_max = est.order;
    let s: Vec<Complex64> = (-2 * h_max as isize..=2 * h_max as isize)
        .map(|m| cis_sum(m as f64 * omega, span, est.reference_sample))
        .collect();
    let xv = peak_series(&est.voltage, |_| Complex64::new(1.0, 0.0));
    let xi_raw = peak_series(&est.current, |_| Complex64::new(1.0, 0.0));
    let n = span as f64;
    let v_ms = (sums.vv - span_bias(&xv, &xv, &s, h_max, span)) / n;
    let i_ms = (sums.ii - span_bias(&xi_raw, &xi_raw, &s, h_max, span)) / n;
    let p_raw = (sums.vi - span_bias(&xv, &xi_raw, &s, h_max, span)) / n;
    let ih: Vec<Complex64> = est
        .current
        .harmonics
        .iter()
        .enumerate()
        .map(|(k, c)| c * skew_rot(k + 1))
        .collect();
    let vh = &est.voltage.harmonics;
    let skew_dp: f64 = vh
        .iter()
        .zip(&est.current.harmonics)
        .zip(&ih)
        .map(|((a, raw), cor)| (a * cor.conj()).re - (a * raw.conj()).re)
        .sum();
    let active_w = p_raw + skew_dp;

    let order = settings.harmonics.min(est.order).max(1);
    // Asking for more than the rate allows earns a warning; the default quietly stops lower.
    if settings.harmonics > est.order_limit && settings.harmonics != DEFAULT_HARMONICS {
        warnings.push(Warning::HarmonicsCapped {
            asked: settings.harmonics,
            used: est.order_limit.min(order),
        });
    }
    let figures = |c: &ChannelPhasors, ms: f64, peak: f64, h: &[Complex64]| {
        let rms = ms.max(0.0).sqrt();
        let fund = h[0].norm();
        let thd = c
            .has_fundamental
            .then(|| 100.0 * h[1..order].iter().map(|x| x.norm_sqr()).sum::<f64>().sqrt() / fund);
        TraceFigures {
            rms,
            dc: c.dc,
            fundamental_rms: fund,
            thd_percent: thd,
            peak,
            crest_factor: if rms > 0.0 { peak / rms } else { f64::NAN },
        }
    };
    let voltage = figures(&est.voltage, v_ms, sums.peak_v, vh);
    let current = figures(&est.current, i_ms, sums.peak_i, &ih);

    let both = est.voltage.has_fundamental && est.current.has_fundamental;
    for (c, t) in [
        (&est.voltage, Trace::Voltage),
        (&est.current, Trace::Current),
    ] {
        if !c.has_fundamental {
            warnings.push(Warning::NoFundamental {
                trace: t,
                ratio: c.fundamental_ratio,
            });
        }
    }
    let theta1 = wrap(vh[0].arg() - ih[0].arg());
    let power = Powers::new(
        active_w,
        RmsParts {
            total: voltage.rms,
            fundamental: voltage.fundamental_rms,
        },
        RmsParts {
            total: current.rms,
            fundamental: current.fundamental_rms,
        },
        theta1,
    );
    let phase_dft = both.then(|| theta1.to_degrees());
    let sigma_dft = est
        .voltage
        .phase_sigma_rad
        .hypot(est.current.phase_sigma_rad)
        .to_degrees();
    let zc = match (&est.voltage.crossing, &est.current.crossing) {
        (Some(cv), Some(ci)) if both => {
            let a = wrap(ci.phase_rad - 2.0 * PI * f * settings.skew_s - cv.phase_rad);
            Some((
                a.to_degrees(),
                cv.sigma_rad.hypot(ci.sigma_rad).to_degrees(),
            ))
        }
        _ => None,
    };
    if let (Some(d), Some((z, zs))) = (phase_dft, zc) {
        let diff = wrap((d - z).to_radians()).to_degrees();
        let allowed = (3.0 * sigma_dft.hypot(zs)).max(0.1);
        if diff.abs() > allowed {
            warnings.push(Warning::MethodsDisagree {
                difference_deg: diff,
                allowed_deg: allowed,
                explained_deg: if explain {
                    crossing_shift::explained_difference_deg(&est.voltage, &est.current)
                } else {
                    None
                },
                current_thd_percent: current.thd_percent.unwrap_or(f64::NAN),
                voltage_thd_percent: voltage.thd_percent.unwrap_or(f64::NAN),
            });
        }
    }
    if let Some(d) = phase_dft
        && d.abs() > 90.0
    {
        warnings.push(Warning::ReversedCurrent { angle_deg: d });
    }
    if est.cycles < 3.0 {
        warnings.push(Warning::FewCycles { cycles: est.cycles });
    }
    let near = |nominal: f64| (f / nominal - 1.0).abs() < 0.15;
    if ![16.7, 25.0, 50.0, 60.0, 400.0].into_iter().any(near) {
        warnings.push(Warning::UnusualFrequency { frequency_hz: f });
    }

    let (v1, i1) = (voltage.fundamental_rms, current.fundamental_rms);
    let harmonics = (1..=order)
        .map(|h| {
            let (a, b) = (vh[h - 1], ih[h - 1]);
            HarmonicLine {
                order: h,
                frequency_hz: h as f64 * f,
                voltage_rms: a.norm(),
                voltage_percent: est.voltage.has_fundamental.then(|| 100.0 * a.norm() / v1),
                current_rms: b.norm(),
                current_percent: est.current.has_fundamental.then(|| 100.0 * b.norm() / i1),
                angle_deg: wrap(a.arg() - b.arg()).to_degrees(),
                active_w: (a * b.conj()).re,
            }
        })
        .collect();
    Quantities {
        frequency_hz: f,
        cycles: est.cycles,
        whole_cycles: whole,
        harmonic_order: order,
        phase_angle_dft_deg: phase_dft,
        phase_angle_zero_crossing_deg: zc.map(|z| z.0),
        displacement_pf: both.then(|| theta1.cos()),
        true_pf: if both { power.power_factor() } else { None },
        character: both.then_some(Character::of_angle(theta1)),
        voltage,
        current,
        power,
        harmonics,
        phase_angle_dft_sigma_deg: sigma_dft,
        fundamentals: (vh[0], ih[0]),
        phase_angle_zero_crossing_sigma_deg: zc.map(|z| z.1),
        warnings,
    }
}

#[cfg(test)]
mod tests {
    use super::Character;

    /// The four-quadrant metering diagram (IEC 62053-23 figure, load convention, from memory):
    /// I inductive, II capacitive, III inductive, IV capacitive. θ1 = 150° lies in quadrant II
    /// (P1 = S1·cos 150° < 0, Q1 = S1·sin 150° > 0).
    #[test]
    fn the_character_follows_the_quadrant_for_exported_power_too() {
        let at = |deg: f64| Character::of_angle(deg.to_radians());
        assert_eq!(at(30.0), Character::Lagging);
        assert_eq!(at(150.0), Character::Leading);
        assert_eq!(at(-150.0), Character::Lagging);
        assert_eq!(at(-30.0), Character::Leading);
        assert_eq!(
            at(150.0).describe(-1.0),
            "capacitive (leading), exporting active power"
        );
    }
}
