//! Accuracy on synthetic captures whose truth is known analytically.
//!
//! Each case is drawn from a seeded generator: 3 to 60 non-integer cycles, sample rates that are
//! not a multiple of the fundamental, 8-bit quantisation over a full scale of 1.25× the peak,
//! white noise at 50-70 dB SNR, a DC offset, current THD up to 30 %, angles across ±85°.
//! The truth is the waveform definition itself ([`tracephase::synth::Waveform`]).

use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
use tracephase::synth::{Spec, Waveform, synthesize};
use tracephase::{Settings, analyze_traces};

/// The acceptance limits for realistic (noisy, 8-bit) captures.
const ANGLE_TOL_DEG: f64 = 0.05;
const FREQ_TOL_REL: f64 = 1e-4;
const PF_TOL: f64 = 5e-4;
const THD_TOL_PP: f64 = 0.1;
const RMS_P_TOL_REL: f64 = 1e-3;
/// Clean double-precision signals: the estimators are exact up to rounding.
const CLEAN_TOL: f64 = 1e-6;

struct Case {
    spec: Spec,
    angle_deg: f64,
}

fn draw(rng: &mut ChaCha8Rng, noisy: bool) -> Case {
    let f = [50.0, 60.0, 59.93, 50.04, 400.0][rng.random_range(0..5usize)];
    let cycles = rng.random_range(3.0..60.0);
    let samples = rng.random_range(4_000..20_000usize);
    let rate = samples as f64 * f / cycles;
    let angle: f64 = rng.random_range(-85.0..85.0);
    let thd_i = rng.random_range(0.0..0.30);
    let vpk = 325.0;
    let v = Waveform::sine(230.0, rng.random_range(-180.0..180.0))
        .with(3, 230.0 * 0.01, rng.random_range(-180.0..180.0))
        .with(5, 230.0 * 0.025, rng.random_range(-180.0..180.0))
        .with_dc(if noisy { 0.01 * vpk } else { 0.5 });
    let v1_phase = v.tones[0].phase_deg;
    // Current harmonics in the ratio 3rd : 5th : 7th = 0.8 : 0.5 : 0.33, scaled to thd_i.
    let shape = [(3usize, 0.8), (5, 0.5), (7, 0.33)];
    let norm: f64 = shape.iter().map(|(_, a)| a * a).sum::<f64>().sqrt();
    let mut i = Waveform::sine(10.0, v1_phase - angle).with_dc(if noisy { 0.1 } else { -0.02 });
    for (h, a) in shape {
        i = i.with(h, 10.0 * thd_i * a / norm, rng.random_range(-180.0..180.0));
    }
    let mut spec = Spec::clean(rate, f, samples, v, i);
    spec.start_s = rng.random_range(0.0..1.0);
    spec.seed = rng.random();
    if noisy {
        spec.snr_db = Some(rng.random_range(50.0..70.0));
        let ipk = 10.0 * std::f64::consts::SQRT_2 * (1.0 + thd_i) + 0.1;
        spec.quantise = Some((8, 1.25 * (vpk * 1.04 + 3.25), 1.25 * ipk));
    }
    Case {
        spec,
        angle_deg: angle,
    }
}

struct Worst {
    angle: f64,
    freq: f64,
    pf: f64,
    thd: f64,
    rms: f64,
    p: f64,
}

fn run(noisy: bool, cases: usize, seed: u64) -> Worst {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut w = Worst {
        angle: 0.0,
        freq: 0.0,
        pf: 0.0,
        thd: 0.0,
        rms: 0.0,
        p: 0.0,
    };
    for _ in 0..cases {
        let c = draw(&mut rng, noisy);
        let s = &c.spec;
        let (v, i) = synthesize(s);
        let (_, q) = analyze_traces(&v, &i, s.rate_hz, &Settings::default()).unwrap();
        let (vw, iw) = (&s.voltage, &s.current);
        // Truth from the definitions: P = V0·I0 + Σ Vh·Ih·cos(φVh − φIh) (Fourier series).
        let p_true = vw.dc * iw.dc
            + vw.tones
                .iter()
                .flat_map(|a| {
                    iw.tones
                        .iter()
                        .filter(move |b| b.order == a.order)
                        .map(move |b| {
                            a.rms * b.rms * (a.phase_deg - b.phase_deg).to_radians().cos()
                        })
                })
                .sum::<f64>();
        let s_true = vw.rms() * iw.rms();
        let pf1_true = c.angle_deg.to_radians().cos();
        let err_angle = (q.phase_angle_dft_deg.unwrap() - c.angle_deg).abs();
        let err = |a: f64, b: f64| ((a - b) / b).abs();
        w.angle = w.angle.max(err_angle);
        w.freq = w.freq.max(err(q.frequency_hz, s.frequency_hz));
        w.pf =
            w.pf.max((q.displacement_pf.unwrap() - pf1_true).abs())
                .max((q.true_pf.unwrap() - p_true / s_true).abs());
        w.thd = w
            .thd
            .max((q.current.thd_percent.unwrap() - iw.thd_percent(50)).abs())
            .max((q.voltage.thd_percent.unwrap() - vw.thd_percent(50)).abs());
        w.rms = w
            .rms
            .max(err(q.voltage.rms, vw.rms()))
            .max(err(q.current.rms, iw.rms()));
        // P is judged against its reading down to |PF| 0.5 and against S/2 below that, as meter
        // accuracy classes are (IEC 62053-21 specifies errors at PF 1 and 0.5, from memory): near
        // 90° a tiny angle error is a large share of a small P.
        w.p =
            w.p.max((q.power.active_w - p_true).abs() / p_true.abs().max(0.5 * s_true));
    }
    eprintln!(
        "worst: angle {:.2e} deg, freq {:.2e}, pf {:.2e}, thd {:.2e} pp, rms {:.2e}, p {:.2e}",
        w.angle, w.freq, w.pf, w.thd, w.rms, w.p
    );
    w
}

#[test]
fn noisy_eight_bit_captures_meet_the_accuracy_limits() {
    let w = run(true, 80, 2026);
    assert!(w.angle < ANGLE_TOL_DEG, "angle {}", w.angle);
    assert!(w.freq < FREQ_TOL_REL, "freq {}", w.freq);
    assert!(w.pf < PF_TOL, "pf {}", w.pf);
    assert!(w.thd < THD_TOL_PP, "thd {}", w.thd);
    assert!(w.rms < RMS_P_TOL_REL, "rms {}", w.rms);
    assert!(w.p < RMS_P_TOL_REL, "p {}", w.p);
}

#[test]
fn clean_double_precision_captures_are_exact_to_one_part_per_million() {
    let w = run(false, 40, 7);
    assert!(w.angle < CLEAN_TOL, "angle {}", w.angle);
    assert!(w.freq < CLEAN_TOL, "freq {}", w.freq);
    assert!(w.pf < CLEAN_TOL, "pf {}", w.pf);
    assert!(w.thd < CLEAN_TOL, "thd {}", w.thd);
    assert!(w.rms < CLEAN_TOL, "rms {}", w.rms);
    assert!(w.p < CLEAN_TOL, "p {}", w.p);
}

/// A record of exactly 12 cycles (50 Hz at 6 400 S/s: 1 536 samples, 8-bit, 50 dB SNR) is
/// averaged over all 12. A frequency estimate a hair low (noise moves it by about 1e-5) once put
/// 11.9999 cycles in the record and the means were taken over 11. Whole cycles are counted with
/// half a sample of slack, which the span correction then absorbs.
#[test]
fn a_record_of_exactly_twelve_cycles_is_averaged_over_twelve() {
    let mut low = 0;
    for seed in 0..24 {
        let v = Waveform::sine(230.0, 10.0).with(5, 5.0, 40.0);
        let i = Waveform::sine(10.0, -20.0).with(3, 1.0, 60.0);
        let mut spec = Spec::clean(6_400.0, 50.0, 1_536, v, i);
        spec.snr_db = Some(50.0);
        spec.quantise = Some((8, 400.0, 18.0));
        spec.seed = seed;
        let (vs, is) = synthesize(&spec);
        let (est, q) = analyze_traces(&vs, &is, spec.rate_hz, &Settings::default()).unwrap();
        if est.frequency_hz < spec.frequency_hz {
            low += 1;
        }
        assert_eq!(q.whole_cycles, 12, "seed {seed}: {} Hz", est.frequency_hz);
    }
    // the case the test is for: estimates below the true frequency occur among the seeds
    assert!(low > 0);
}
