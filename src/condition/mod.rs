//! Conditioning: what is done to the traces between loading and estimation.
//!
//! Input: a [`crate::capture::Capture`]. Output: the same traces scaled to volts and amperes
//! ([`scale`]), and helpers the estimators use: block-average decimation with its exact transfer
//! function ([`decimate`], [`block_average_gain`]) and the whole-cycle span of a record
//! ([`whole_cycles`]).
//!
//! A known current-channel delay (`--skew`) is *not* removed here by shifting samples: it is
//! removed per harmonic as a phase correction in [`crate::quantity`], which is exact for any
//! fraction of a sample.

use crate::capture::Capture;

/// Multiplies the traces by the probe or clamp ratios (volts per unit, amperes per unit).
pub fn scale(capture: &mut Capture, v_scale: f64, i_scale: f64) {
    if v_scale != 1.0 {
        capture.voltage.samples.iter_mut().for_each(|x| *x *= v_scale);
        capture.voltage.full_scale = capture.voltage.full_scale.map(|f| f * v_scale.abs());
    }
    if i_scale != 1.0 {
        capture.current.samples.iter_mut().for_each(|x| *x *= i_scale);
        capture.current.full_scale = capture.current.full_scale.map(|f| f * i_scale.abs());
    }
}

/// Averages blocks of `factor` samples; a trailing partial block is dropped.
///
/// Output sample m stands for the time of its block's centre, `m·factor + (factor−1)/2`
/// input samples after the start, so a sinusoid keeps its phase and only its amplitude is
/// scaled by [`block_average_gain`].
pub fn decimate(y: &[f64], factor: usize) -> Vec<f64> {
    if factor <= 1 {
        return y.to_vec();
    }
    let inv = 1.0 / factor as f64;
    y.chunks_exact(factor)
        .map(|c| c.iter().sum::<f64>() * inv)
        .collect()
}

/// Gain of a `factor`-sample block average for a sinusoid at `omega` rad/sample (input rate),
/// referred to the block centre: `sin(Dω/2) / (D·sin(ω/2))` (a Dirichlet kernel; textbook).
pub fn block_average_gain(omega: f64, factor: usize) -> f64 {
    if factor <= 1 {
        return 1.0;
    }
    let d = factor as f64;
    let s = (omega / 2.0).sin();
    if s.abs() < 1e-15 {
        1.0
    } else {
        (d * omega / 2.0).sin() / (d * s)
    }
}

/// The whole number of cycles in a record of `len` samples and the number of samples
/// (rounded) that spans them from the first sample.
pub fn whole_cycles(len: usize, samples_per_cycle: f64) -> (usize, usize) {
    let cycles = (len as f64 / samples_per_cycle).floor() as usize;
    let span = ((cycles as f64 * samples_per_cycle).round() as usize).min(len);
    (cycles, span)
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::f64::consts::PI;

    /// Block averaging a cosine gives the cosine at the block centre times the Dirichlet gain.
    #[test]
    fn block_average_keeps_phase_and_scales_by_its_gain() {
        let omega = 2.0 * PI / 97.3;
        let y: Vec<f64> = (0..5000).map(|n| (omega * n as f64 + 0.3).cos()).collect();
        let d = 7;
        let g = block_average_gain(omega, d);
        for (m, v) in decimate(&y, d).iter().enumerate() {
            let t = (m * d) as f64 + (d as f64 - 1.0) / 2.0;
            assert!((v - g * (omega * t + 0.3).cos()).abs() < 1e-12);
        }
    }

    #[test]
    fn whole_cycles_of_a_record() {
        assert_eq!(whole_cycles(1000, 40.0), (25, 1000));
        assert_eq!(whole_cycles(1000, 40.01), (24, 960));
        assert_eq!(whole_cycles(100, 33.3), (3, 100));
    }
}
