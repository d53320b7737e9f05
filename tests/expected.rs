//! Expected vs measured on synthetic bench captures of a series RLC network whose truth is the
//! textbook series impedance Z = R + j(ωL − 1/(ωC)), θ = atan(X/R) (positive: current lags).

use std::f64::consts::PI;
use std::path::Path;
use tracephase::check::circuit::Circuit;
use tracephase::check::decision::Verdict;
use tracephase::check::expected::{Expected, compare};
use tracephase::check::tolerance::MonteCarloConfig;
use tracephase::quantity::uncertainty::{UncertaintyInputs, uncertainty};
use tracephase::synth::{Spec, Waveform, series_rlc_current, synthesize};
use tracephase::{Settings, analyze_traces};

const F: f64 = 50.0;
const R: f64 = 50.0;
const L: f64 = 0.2;
const C: f64 = 100e-6;

/// A bench model with tight tolerances: R ±1 %, L ±2 %, C ±5 % (invented test parts).
fn model() -> Circuit {
    let text = r#"
        name = "tight series RLC"
        frequency_hz = 50
        network = "R1 + L1 + C1"
        [parts.R1]
        value = "50 ohm"
        tolerance = "±1%"
        [parts.L1]
        value = "200 mH"
        tolerance = "±2%"
        [parts.C1]
        value = "100 uF"
        tolerance = "±5%"
    "#;
    Circuit::parse(text, Path::new("tight.toml")).unwrap()
}

/// Measures a series R-L-C with the given capacitance on a 12-bit bench logger.
fn measure(c_actual: f64) -> Expected {
    let v = Waveform::sine(120.0, 0.0).with(3, 1.5, 30.0);
    let i = series_rlc_current(&v, F, R, L, c_actual);
    let rate = 10_000.0;
    let mut spec = Spec::clean(rate, F, (10.3 * rate / F) as usize, v, i);
    spec.snr_db = Some(60.0);
    spec.quantise = Some((12, 200.0, 5.0));
    let (vs, is) = synthesize(&spec);
    let (est, q) = analyze_traces(&vs, &is, rate, &Settings::default()).unwrap();
    let inputs = UncertaintyInputs::default();
    let u = uncertainty(&vs, &is, &est, &q, 0.0, &inputs);
    let (v1, i1) = q.fundamentals;
    let mc = MonteCarloConfig {
        draws: 20_000,
        ..Default::default()
    };
    compare(
        &model(),
        q.frequency_hz,
        v1,
        i1,
        q.phase_angle_dft_deg.unwrap(),
        u.phase_angle_deg.dft.unwrap(),
        &mc,
    )
}

fn series_angle_at(c: f64, f: f64) -> f64 {
    let w = 2.0 * PI * f;
    ((w * L - 1.0 / (w * c)) / R).atan().to_degrees()
}

#[test]
fn nominal_parts_are_consistent() {
    let e = measure(C);
    assert_eq!(e.verdict, Verdict::Consistent, "{e:?}");
    // series RLC formula (textbook): 31.800° (references §7)
    // the model is evaluated at the measured frequency
    assert!((e.nominal_phase_deg - series_angle_at(C, e.frequency_hz)).abs() < 1e-9);
    assert!((e.nominal_phase_deg - 31.800).abs() < 5e-4);
    assert!(e.margin_deg < 0.0);
}

#[test]
fn a_capacitor_20_percent_low_is_outside_and_named() {
    let e = measure(0.8 * C);
    assert_eq!(e.verdict, Verdict::Outside, "{e:?}");
    assert!(e.margin_deg > 1.0, "{}", e.margin_deg);
    // the angle the handbook formula gives for the low capacitor
    assert!((e.measured_phase_deg - series_angle_at(0.8 * C, F)).abs() < 0.05);
    // the measured series reactance is ωL − 1/(ω·0.8C) and reads as an inductance
    let w = 2.0 * PI * F;
    let x = w * L - 1.0 / (w * 0.8 * C);
    assert!((e.explanation.series_reactance_ohm / x - 1.0).abs() < 2e-3);
    assert_eq!(e.explanation.equivalent, "inductance");
    // C1 is the most plausible single part, about 20 % low, outside its ±5 %
    let first = &e.explanation.parts[0];
    assert_eq!(first.part, "C1", "{:?}", e.explanation.parts);
    let change = first.change_percent.unwrap();
    assert!((change + 20.0).abs() < 0.5, "{change}");
    assert!(!first.within_tolerance);
    assert!(
        first.note.contains("C1 would have to be") && first.note.contains("low"),
        "{}",
        first.note
    );
}

#[test]
fn an_angle_on_the_band_edge_is_inconclusive() {
    // Choose C so the true angle sits 0.1° below the band's lower edge: within U (about 0.6°
    // with the default ±0.5° probe phase error) of the limit.
    let band = tracephase::check::tolerance::worst_case(&model(), F);
    let target = (band.low_deg - 0.1).to_radians();
    let w = 2.0 * PI * F;
    let c = 1.0 / (w * (w * L - R * target.tan()));
    let e = measure(c);
    assert_eq!(e.verdict, Verdict::Inconclusive, "{e:?}");
    assert!(e.margin_deg.abs() < e.measured_uncertainty_deg);
}
