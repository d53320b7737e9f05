//! Textbook references for the tests: quantities by their defining sums, no cleverness.
#![allow(dead_code)]

pub mod comtrade;

use std::f64::consts::PI;

/// Naive O(N²) DFT: X[k] = Σ x[n]·e^{−j2πkn/N}, returned as (re, im).
pub fn naive_dft(x: &[f64], k: usize) -> (f64, f64) {
    let n = x.len() as f64;
    x.iter().enumerate().fold((0.0, 0.0), |(re, im), (i, v)| {
        let a = -2.0 * PI * k as f64 * i as f64 / n;
        (re + v * a.cos(), im + v * a.sin())
    })
}

/// RMS by its definition, √(Σx²/N).
pub fn rms(x: &[f64]) -> f64 {
    (x.iter().map(|v| v * v).sum::<f64>() / x.len() as f64).sqrt()
}

/// Mean power by its definition, Σ v·i / N.
pub fn mean_power(v: &[f64], i: &[f64]) -> f64 {
    v.iter().zip(i).map(|(a, b)| a * b).sum::<f64>() / v.len() as f64
}

fn wrap(a: f64) -> f64 {
    let w = a.rem_euclid(2.0 * PI);
    if w > PI { w - 2.0 * PI } else { w }
}

/// The zero-crossing phase of a periodic waveform by its definition, found by a naive root
/// finder: the instants in one period where the waveform crosses its DC level rising and falling
/// (a scan of 20 000 points for sign changes, then 60 bisections), the falling one taken half a
/// cycle back, and the phase halfway between the two (rising and falling edges weighed equally,
/// which cancels a DC offset: references §4). Radians of 2π·f·t in (−π, π]. `None` unless the waveform
/// crosses exactly once each way per cycle.
pub fn crossing_phase(w: &tracephase::synth::Waveform) -> Option<f64> {
    let ac = |t: f64| w.at(1.0, t) - w.dc;
    let n = 20_000;
    // the sign at each grid point, the last interval closing on the first point (periodic)
    let above: Vec<bool> = (0..n).map(|k| ac(k as f64 / n as f64) >= 0.0).collect();
    let (mut rise, mut fall) = (vec![], vec![]);
    for k in 0..n {
        let up = !above[k];
        if up != above[(k + 1) % n] {
            continue;
        }
        let (mut a, mut b) = (k as f64 / n as f64, (k + 1) as f64 / n as f64);
        for _ in 0..60 {
            let m = 0.5 * (a + b);
            if (ac(m) < 0.0) == up { a = m } else { b = m }
        }
        if up { &mut rise } else { &mut fall }.push(0.5 * (a + b));
    }
    if (rise.len(), fall.len()) != (1, 1) {
        return None;
    }
    let (r, f) = (2.0 * PI * rise[0], 2.0 * PI * fall[0] - PI);
    Some(wrap(r + wrap(f - r) / 2.0))
}

/// The zero-crossing angle of two distorted waveforms, degrees: the current's crossing phase
/// minus the voltage's (positive when the current crosses later, as θ), the crossings of the
/// whole waveforms, not of their fundamentals.
pub fn crossing_angle_deg(
    v: &tracephase::synth::Waveform,
    i: &tracephase::synth::Waveform,
) -> Option<f64> {
    Some(wrap(crossing_phase(i)? - crossing_phase(v)?).to_degrees())
}

/// A single-phase capture of the voltage `v` and current `i` sampled at `rate_hz`, as a CSV
/// loader would give it (channels 2 and 3, no time column), for tests that build their
/// samples in memory.
pub fn single_phase_capture(
    v: Vec<f64>,
    i: Vec<f64>,
    rate_hz: f64,
) -> tracephase::capture::Capture {
    use tracephase::capture::{Capture, SourceFormat, System, Trace};
    Capture {
        path: "synthetic".into(),
        format: SourceFormat::Csv {
            delimiter: b',',
            decimal_comma: false,
        },
        sample_rate_hz: rate_hz,
        system: System::Single,
        voltages: vec![Trace::plain("v", 2, v)],
        currents: vec![Trace::plain("i", 3, i)],
        neutral: None,
        time: None,
        warnings: Vec::new(),
        span: None,
        times: None,
    }
}

/// The fundamental phasor (RMS, angle in radians) of a synthesized waveform: its order-1 tones
/// summed.
pub fn fundamental_phasor(w: &tracephase::synth::Waveform) -> rustfft::num_complex::Complex64 {
    w.tones
        .iter()
        .filter(|t| t.order == 1)
        .map(|t| rustfft::num_complex::Complex64::from_polar(t.rms, t.phase_deg.to_radians()))
        .sum()
}
