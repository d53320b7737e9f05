//! The inrush of a switching: its peak current and the frequency it rings at.
//!
//! Input: one phase's scaled voltage and current, the sample rate, the fundamental, the sample
//! the switching starts at, where its settling ends and a span of the steady state after it.
//! Output: an [`Inrush`].
//!
//! The steady current after the switching (DC and harmonics, fitted over the span after at the
//! record's frequency by [`crate::estimate::estimate_at`]) is carried back to the switching; what
//! the current holds beyond it between the switching and the end of the settling is the
//! transient. Its ring frequency is the peak of its spectrum (a DFT on a fine grid from 1.5 times
//! the fundamental to 0.45 of the sample rate, refined by a parabola through the three highest
//! points). A bank switched onto a supply rings near `f·√(Ssc/Qc)`, the parallel resonance
//! (common practice), which the bank check compares it with when supply data are given.

use crate::estimate;
use rustfft::num_complex::Complex64;
use std::f64::consts::{PI, SQRT_2};
use std::ops::Range;

/// What the current did at a switching.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Inrush {
    /// The largest absolute current from the switching to the end of its settling, A.
    pub peak_a: f64,
    /// The peak of the steady current after it (√2 × its RMS... of the fitted waveform), A.
    pub steady_peak_a: f64,
    /// The transient's ring frequency, Hz; `None` when no transient stands above the noise.
    pub ring_hz: Option<f64>,
}

/// Grid points per DFT bin of the transient's length.
const GRID_PER_BIN: f64 = 8.0;

/// The inrush of the switching at sample `at`, the settling up to `settle_end`, the steady
/// state after it over `after`.
pub fn inrush(
    v: &[f64],
    i: &[f64],
    fs: f64,
    f: f64,
    at: usize,
    settle_end: usize,
    after: Range<usize>,
) -> Option<Inrush> {
    let n = v.len().min(i.len());
    if !(at < settle_end && settle_end <= n && after.end <= n && after.start < after.end) {
        return None;
    }
    let est = estimate::estimate_at(
        &v[after.clone()],
        &i[after.clone()],
        fs,
        estimate::MIN_FIT_ORDER,
        Some(f),
    )
    .ok()?;
    let c = &est.current;
    let omega = 2.0 * PI * f / fs;
    let model = |k: usize| {
        let t = k as f64 - after.start as f64 - est.reference_sample;
        c.dc + c
            .harmonics
            .iter()
            .enumerate()
            .map(|(h, x)| SQRT_2 * (x * Complex64::from_polar(1.0, (h + 1) as f64 * omega * t)).re)
            .sum::<f64>()
    };
    let peak_a = i[at..settle_end].iter().fold(0.0f64, |m, x| m.max(x.abs()));
    let steady: Vec<f64> = (after.start..after.start + (fs / f).ceil() as usize)
        .map(model)
        .collect();
    let steady_peak_a = steady.iter().fold(0.0f64, |m, x| m.max(x.abs()));
    let x: Vec<f64> = (at..settle_end).map(|k| i[k] - model(k)).collect();
    let biggest = x.iter().fold(0.0f64, |m, y| m.max(y.abs()));
    let ring_hz = (biggest > 10.0 * c.residual_rms.max(1e-12 * steady_peak_a))
        .then(|| ring_frequency(&x, fs, f))
        .flatten();
    Some(Inrush {
        peak_a,
        steady_peak_a,
        ring_hz,
    })
}

/// The frequency of the largest spectral peak of `x` between 1.5·`f` and 0.45·`fs`.
fn ring_frequency(x: &[f64], fs: f64, f: f64) -> Option<f64> {
    let len = x.len() as f64;
    let step = fs / len / GRID_PER_BIN;
    let (lo, hi) = (1.5 * f, 0.45 * fs);
    if !(hi > lo) {
        return None;
    }
    let power = |g: f64| {
        let w = 2.0 * PI * g / fs;
        let rot = Complex64::from_polar(1.0, -w);
        let mut z = Complex64::new(1.0, 0.0);
        let mut s = Complex64::new(0.0, 0.0);
        for &y in x {
            s += z * y;
            z *= rot;
        }
        s.norm_sqr()
    };
    let count = ((hi - lo) / step).floor() as usize;
    let (best, _) = (0..=count)
        .map(|k| (k, power(lo + k as f64 * step)))
        .fold((0, f64::NEG_INFINITY), |b, p| if p.1 > b.1 { p } else { b });
    let g = lo + best as f64 * step;
    if best == 0 || best == count {
        return Some(g);
    }
    let (a, b, c) = (power(g - step), power(g), power(g + step));
    let d = a - 2.0 * b + c;
    let shift = if d < 0.0 { 0.5 * (a - c) / d } else { 0.0 };
    Some(g + shift.clamp(-0.5, 0.5) * step)
}
