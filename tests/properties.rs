//! Invariances of the phase angle and PF (proptest).

use proptest::prelude::*;
use tracephase::synth::{Spec, Waveform, synthesize};
use tracephase::{Settings, analyze_traces};

/// Angles agree to this much between two runs that differ only by an invariance. The signals are
/// clean doubles, so the estimators are exact up to rounding; 1e-6° leaves room for that.
const SAME_DEG: f64 = 1e-6;

fn capture(
    start_s: f64,
    angle: f64,
    rate: f64,
    cycles: f64,
    thd: f64,
) -> (Vec<f64>, Vec<f64>, f64) {
    let v = Waveform::sine(230.0, 5.0).with(5, 6.0, 70.0).with_dc(0.4);
    let i = Waveform::sine(8.0, 5.0 - angle)
        .with(3, 8.0 * thd, -20.0)
        .with(7, 8.0 * thd / 2.0, 45.0);
    let mut spec = Spec::clean(rate, 50.0, (cycles * rate / 50.0) as usize, v, i);
    spec.start_s = start_s;
    let (v, i) = synthesize(&spec);
    (v, i, rate)
}

fn angle_pf(v: &[f64], i: &[f64], rate: f64) -> (f64, f64, f64) {
    let q = analyze_traces(v, i, rate, &Settings::default()).unwrap().1;
    (
        q.phase_angle_dft_deg.unwrap(),
        q.displacement_pf.unwrap(),
        q.true_pf.unwrap(),
    )
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(24))]

    /// Delaying both channels equally (starting the record elsewhere in the signal) leaves the
    /// angle and PF unchanged.
    #[test]
    fn the_record_start_does_not_change_angle_or_pf(
        shift in 0.0f64..0.05, angle in -80.0f64..80.0, rate in 3_000.0f64..20_000.0,
        cycles in 3.0f64..12.0, thd in 0.0f64..0.3,
    ) {
        let (v0, i0, r) = capture(0.0, angle, rate, cycles, thd);
        let (v1, i1, _) = capture(shift, angle, rate, cycles, thd);
        let a = angle_pf(&v0, &i0, r);
        let b = angle_pf(&v1, &i1, r);
        prop_assert!((a.0 - b.0).abs() < SAME_DEG, "{} vs {}", a.0, b.0);
        prop_assert!((a.1 - b.1).abs() < 1e-7);
        prop_assert!((a.2 - b.2).abs() < 1e-6, "{} vs {}", a.2, b.2);
    }

    /// Scaling either channel (a probe ratio) leaves angle and PF unchanged.
    #[test]
    fn scaling_a_channel_does_not_change_angle_or_pf(
        kv in 0.01f64..100.0, ki in 0.01f64..100.0, angle in -80.0f64..80.0, thd in 0.0f64..0.3,
    ) {
        let (v, i, r) = capture(0.0, angle, 7_919.0, 7.3, thd);
        let a = angle_pf(&v, &i, r);
        let vs: Vec<f64> = v.iter().map(|x| x * kv).collect();
        let is: Vec<f64> = i.iter().map(|x| x * ki).collect();
        let b = angle_pf(&vs, &is, r);
        prop_assert!((a.0 - b.0).abs() < SAME_DEG);
        prop_assert!((a.1 - b.1).abs() < 1e-9);
        prop_assert!((a.2 - b.2).abs() < 1e-9);
    }

    /// Swapping V and I negates the angle.
    #[test]
    fn swapping_voltage_and_current_negates_the_angle(
        angle in -80.0f64..80.0, cycles in 3.0f64..20.0, thd in 0.0f64..0.3,
    ) {
        let (v, i, r) = capture(0.0, angle, 6_007.0, cycles, thd);
        let a = angle_pf(&v, &i, r);
        let b = angle_pf(&i, &v, r);
        prop_assert!((a.0 + b.0).abs() < SAME_DEG, "{} vs {}", a.0, b.0);
    }
}
