//! Synthetic captures with known truth, for the demo fixtures, the tests and the benchmarks.
//!
//! A [`Waveform`] is a DC level plus harmonics given as RMS and phase (cosine reference);
//! [`synthesize`] samples a voltage and a current at any rate and start time, optionally with white
//! noise at a given SNR, quantisation to a converter's bits and a delay on the current channel
//! (what a probe or a scanned logger adds). The noise generator is ChaCha8, seeded, so a run is
//! repeatable on every platform.

use rand::SeedableRng;
use rand_distr::{Distribution, Normal};
use std::f64::consts::{PI, SQRT_2};

/// One harmonic: order, RMS value and phase in degrees (cosine reference).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Tone {
    /// Harmonic order (1 = fundamental).
    pub order: usize,
    /// RMS value.
    pub rms: f64,
    /// Phase, degrees, of `√2·rms·cos(2π·order·f·t + phase)`.
    pub phase_deg: f64,
}

/// A periodic waveform: DC plus harmonics.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Waveform {
    /// DC level.
    pub dc: f64,
    /// The harmonics.
    pub tones: Vec<Tone>,
}

impl Waveform {
    /// A pure sinusoid of `rms` at `phase_deg`.
    pub fn sine(rms: f64, phase_deg: f64) -> Self {
        Waveform {
            dc: 0.0,
            tones: vec![Tone {
                order: 1,
                rms,
                phase_deg,
            }],
        }
    }

    /// Adds a harmonic.
    pub fn with(mut self, order: usize, rms: f64, phase_deg: f64) -> Self {
        self.tones.push(Tone {
            order,
            rms,
            phase_deg,
        });
        self
    }

    /// Adds a DC level.
    pub fn with_dc(mut self, dc: f64) -> Self {
        self.dc = dc;
        self
    }

    /// Value at time `t` seconds for fundamental `f` Hz.
    pub fn at(&self, f: f64, t: f64) -> f64 {
        self.dc
            + self
                .tones
                .iter()
                .map(|h| {
                    SQRT_2
                        * h.rms
                        * (2.0 * PI * h.order as f64 * f * t + h.phase_deg.to_radians()).cos()
                })
                .sum::<f64>()
    }

    /// True RMS: √(DC² + Σ rms²).
    pub fn rms(&self) -> f64 {
        (self.dc * self.dc + self.tones.iter().map(|h| h.rms * h.rms).sum::<f64>()).sqrt()
    }

    /// RMS of the given order (0 when absent).
    pub fn order_rms(&self, order: usize) -> f64 {
        self.tones
            .iter()
            .filter(|h| h.order == order)
            .map(|h| h.rms)
            .sum()
    }

    /// THD-F in percent over orders 2..=`max_order` (IEC 61000-4-7 style, DC excluded).
    pub fn thd_percent(&self, max_order: usize) -> f64 {
        let h: f64 = self
            .tones
            .iter()
            .filter(|t| t.order >= 2 && t.order <= max_order)
            .map(|t| t.rms * t.rms)
            .sum();
        100.0 * h.sqrt() / self.order_rms(1)
    }
}

/// How to sample a pair of waveforms.
#[derive(Debug, Clone, PartialEq)]
pub struct Spec {
    /// Sample rate, Hz.
    pub rate_hz: f64,
    /// Fundamental, Hz.
    pub frequency_hz: f64,
    /// Number of samples.
    pub samples: usize,
    /// Time of the first sample, seconds.
    pub start_s: f64,
    /// Voltage waveform.
    pub voltage: Waveform,
    /// Current waveform.
    pub current: Waveform,
    /// White noise, dB below each channel's RMS; `None` for none.
    pub snr_db: Option<f64>,
    /// Quantisation: bits and full-scale peak of each channel (voltage, current).
    pub quantise: Option<(u32, f64, f64)>,
    /// Delay of the current channel, seconds (a late probe).
    pub current_delay_s: f64,
    /// Noise seed.
    pub seed: u64,
}

impl Spec {
    /// A clean spec: no noise, no quantisation, no delay, start at 0.
    pub fn clean(
        rate_hz: f64,
        frequency_hz: f64,
        samples: usize,
        v: Waveform,
        i: Waveform,
    ) -> Self {
        Spec {
            rate_hz,
            frequency_hz,
            samples,
            start_s: 0.0,
            voltage: v,
            current: i,
            snr_db: None,
            quantise: None,
            current_delay_s: 0.0,
            seed: 1,
        }
    }
}

fn quantise(x: f64, bits: u32, full_scale: f64) -> f64 {
    let q = 2.0 * full_scale / 2f64.powi(bits as i32);
    let top = full_scale - q;
    ((x / q).round() * q).clamp(-full_scale, top)
}

/// Samples the voltage and current of `spec`.
pub fn synthesize(spec: &Spec) -> (Vec<f64>, Vec<f64>) {
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(spec.seed);
    let noise = |rms: f64| {
        spec.snr_db
            .map(|db| Normal::new(0.0, rms / 10f64.powf(db / 20.0)).expect("finite sigma"))
    };
    let (nv, ni) = (noise(spec.voltage.rms()), noise(spec.current.rms()));
    let mut v = Vec::with_capacity(spec.samples);
    let mut i = Vec::with_capacity(spec.samples);
    for k in 0..spec.samples {
        let t = spec.start_s + k as f64 / spec.rate_hz;
        let mut a = spec.voltage.at(spec.frequency_hz, t);
        let mut b = spec.current.at(spec.frequency_hz, t - spec.current_delay_s);
        if let (Some(nv), Some(ni)) = (&nv, &ni) {
            a += nv.sample(&mut rng);
            b += ni.sample(&mut rng);
        }
        if let Some((bits, fv, fi)) = spec.quantise {
            a = quantise(a, bits, fv);
            b = quantise(b, bits, fi);
        }
        v.push(a);
        i.push(b);
    }
    (v, i)
}

/// The current waveform a series R-L-C branch draws from a voltage waveform, harmonic by harmonic:
/// `I_h = V_h / Z(h·f)` with `Z = R + j(ωL − 1/(ωC))` (textbook series impedance). Pass
/// `capacitance_f = f64::INFINITY` for no capacitor.
pub fn series_rlc_current(
    v: &Waveform,
    f: f64,
    resistance: f64,
    inductance_h: f64,
    capacitance_f: f64,
) -> Waveform {
    let tones = v
        .tones
        .iter()
        .map(|t| {
            let w = 2.0 * PI * t.order as f64 * f;
            let x = w * inductance_h - 1.0 / (w * capacitance_f);
            let z = resistance.hypot(x);
            let angle = x.atan2(resistance).to_degrees();
            Tone {
                order: t.order,
                rms: t.rms / z,
                phase_deg: t.phase_deg - angle,
            }
        })
        .collect();
    Waveform { dc: 0.0, tones }
}

/// Samples `spec` with its current switching to `after` at `at_s` seconds (a load or a
/// capacitor bank switched at that instant, without a transient): the current of `spec` before,
/// `after`'s from the first sample at or after `at_s`; the voltage is `spec`'s throughout. Noise
/// and quantisation as `spec` says (the same seed before and after).
pub fn synthesize_switched(spec: &Spec, after: &Waveform, at_s: f64) -> (Vec<f64>, Vec<f64>) {
    let (v, mut i) = synthesize(spec);
    let (_, i_after) = synthesize(&Spec {
        current: after.clone(),
        ..spec.clone()
    });
    let first = ((at_s - spec.start_s) * spec.rate_hz).ceil().max(0.0) as usize;
    if first < i.len() {
        i[first..].copy_from_slice(&i_after[first..]);
    }
    (v, i)
}
