//! `trend`: windows of a capture with known truth, the aggregation's worked example, and the
//! command line's output parsed into the test's own structs.

mod common;

use assert_cmd::Command;
use rustfft::num_complex::Complex64;
use serde::Deserialize;
use std::path::{Path, PathBuf};
use tempfile::TempDir;
use tracephase::Settings;
use tracephase::capture::{Capture, System, Trace};
use tracephase::synth::{Spec, Waveform, synthesize, synthesize_switched};
use tracephase::trend::{TrendSettings, WindowFigures, trend};

const RATE: f64 = 10_000.0;

/// Issue 14's limits for windows away from a step: Q1 within 0.3 %, the angle within 0.05°.
const Q1_LIMIT: f64 = 0.003;
const ANGLE_LIMIT_DEG: f64 = 0.05;

fn capture(v: Vec<f64>, i: Vec<f64>) -> Capture {
    common::single_phase_capture(v, i, RATE)
}

fn phasor(w: &Waveform) -> Complex64 {
    common::fundamental_phasor(w)
}

/// Q1 = V1·I1·sin θ1 and θ1 = ∠V1 − ∠I1 (IEEE Std 1459-2010, references §1).
fn truth(v: &Waveform, i: &Waveform) -> (f64, f64) {
    let (v1, i1) = (phasor(v), phasor(i));
    let theta = (v1.arg() - i1.arg()).to_degrees();
    (v1.norm() * i1.norm() * theta.to_radians().sin(), theta)
}

fn figures(w: &WindowFigures) -> &tracephase::trend::PhaseFigures {
    &w.phases.as_ref().unwrap()[0].1
}

/// A load at 230 V drawing 20 A at PF 0.8 lagging, with a 2 kvar capacitor bank switched in at
/// 2.013 s (a load current with a 10 % 5th harmonic, a voltage with 3 %, 60 dB of noise): every
/// window that does not hold the switching gives the Q1 and angle of its own state.
#[test]
fn windows_either_side_of_a_switching_give_each_state_within_the_limits() {
    let v = Waveform::sine(230.0, 0.0).with(5, 6.9, 20.0);
    let before = Waveform::sine(20.0, -36.87).with(5, 2.0, 10.0);
    // the bank's fundamental current leads the voltage by 90°: Qc/V = 2000/230 A
    let ic = Complex64::from_polar(2000.0 / 230.0, 90f64.to_radians());
    let after_i1 = phasor(&before) + ic;
    let after = Waveform::sine(after_i1.norm(), after_i1.arg().to_degrees()).with(5, 2.0, 10.0);
    let step_s = 2.013;
    let mut spec = Spec::clean(RATE, 50.0, 40_000, v.clone(), before.clone());
    spec.snr_db = Some(60.0);
    let (vs, is) = synthesize_switched(&spec, &after, step_s);
    let t = trend(
        capture(vs, is),
        &Settings::default(),
        &TrendSettings::default(),
    )
    .unwrap();
    assert_eq!(t.window_cycles, 10);
    assert_eq!(t.windows.len(), 20);
    let (q_before, a_before) = truth(&v, &before);
    let (q_after, a_after) = truth(&v, &after);
    let mut checked = (0, 0);
    for w in &t.windows {
        let f = figures(w);
        let (q, a) = if w.end_s <= step_s {
            checked.0 += 1;
            (q_before, a_before)
        } else if w.start_s > step_s {
            checked.1 += 1;
            (q_after, a_after)
        } else {
            continue;
        };
        let rel = (f.reactive_var - q).abs() / q.abs();
        assert!(
            rel < Q1_LIMIT,
            "{:.3} s: Q1 {} vs {q}",
            w.start_s,
            f.reactive_var
        );
        let d = f.angle_dft_deg.unwrap() - a;
        assert!(
            d.abs() < ANGLE_LIMIT_DEG,
            "{:.3} s: angle off by {d}",
            w.start_s
        );
    }
    assert_eq!(checked, (10, 9));
}

/// IEC 61000-4-30's 150-cycle aggregation on a record whose voltage is 230 V for 2 s and then
/// 207 V for 1 s: the quadratic mean of 10 windows at 230 V and 5 at 207 V is
/// √((10·230² + 5·207²)/15) = 222.60 V (references §10, computed), and P, an energy over time,
/// the plain mean of the windows' P.
#[test]
fn three_seconds_of_230_and_207_volts_aggregate_to_222_60_volts() {
    let high = Spec::clean(
        RATE,
        50.0,
        20_000,
        Waveform::sine(230.0, 0.0),
        Waveform::sine(10.0, -30.0),
    );
    let low = Spec {
        start_s: 2.0,
        samples: 10_000,
        voltage: Waveform::sine(207.0, 0.0),
        current: Waveform::sine(9.0, -30.0),
        ..high.clone()
    };
    let (mut v, mut i) = synthesize(&high);
    let (v2, i2) = synthesize(&low);
    v.extend(v2);
    i.extend(i2);
    let t = trend(
        capture(v, i),
        &Settings::default(),
        &TrendSettings::default(),
    )
    .unwrap();
    assert_eq!(t.windows.len(), 15);
    let per = tracephase::trend::aggregate::windows_per_interval(t.window_cycles, 50.0).unwrap();
    let (agg, rest) = tracephase::trend::aggregate::aggregate(&t.windows, per);
    assert_eq!((agg.len(), rest), (1, 0));
    let f = figures(&agg[0]);
    let want = ((10.0 * 230.0f64.powi(2) + 5.0 * 207.0f64.powi(2)) / 15.0).sqrt();
    assert!((f.voltage_rms - want).abs() < 1e-6, "{}", f.voltage_rms);
    assert_eq!(format!("{:.2}", f.voltage_rms), "222.60");
    let cos = 30f64.to_radians().cos();
    let p = (10.0 * 2300.0 * cos + 5.0 * 207.0 * 9.0 * cos) / 15.0;
    assert!((f.active_w - p).abs() < 1e-6 * p, "{} vs {p}", f.active_w);
}

/// The windows follow the frequency: at 59.93 Hz each holds 12 cycles (IEC 61000-4-30 for a
/// 60 Hz system, from memory) to within half a sample, the frequency is measured to within
/// 1 mHz (class A asks ±10 mHz, from memory), and no sample is lost between windows.
#[test]
fn windows_of_a_60_hz_record_hold_twelve_cycles_of_its_frequency() {
    let f = 59.93;
    let spec = Spec::clean(
        RATE,
        f,
        25_000,
        Waveform::sine(120.0, 0.0).with(3, 3.0, 0.0),
        Waveform::sine(5.0, -20.0),
    );
    let (v, i) = synthesize(&spec);
    let t = trend(
        capture(v, i),
        &Settings::default(),
        &TrendSettings::default(),
    )
    .unwrap();
    assert_eq!(t.window_cycles, 12);
    let mut end = 0.0;
    for w in &t.windows {
        assert!(
            (w.start_s - end).abs() < 1e-12,
            "a gap before {}",
            w.start_s
        );
        end = w.end_s;
        assert!((w.frequency_hz - f).abs() < 1e-3, "{}", w.frequency_hz);
        assert!(
            (w.cycles - 12.0).abs() < 0.5 * f / RATE + 1e-9,
            "{}",
            w.cycles
        );
        let a = figures(w).angle_dft_deg.unwrap();
        // a clean record: far inside the 0.05°
        assert!((a - 20.0).abs() < 1e-4, "{a} {}", w.frequency_hz);
    }
    // 25 000 samples: 12 windows of 2 002 or 2 003 samples, the rest left out and said
    assert_eq!(t.windows.len(), 12);
    let left = t.left_out.unwrap();
    assert!((left.start_s - end).abs() < 1e-12 && (left.end_s - 2.5).abs() < 1e-12);
}

fn write_csv(dir: &Path, name: &str, v: &[f64], i: &[f64]) -> PathBuf {
    let mut text = String::from("time,V,I\n");
    for (k, (a, b)) in v.iter().zip(i).enumerate() {
        text.push_str(&format!("{:.6},{a:.6},{b:.6}\n", k as f64 / RATE));
    }
    let path = dir.join(name);
    std::fs::write(&path, text).unwrap();
    path
}

#[derive(Deserialize)]
struct Record {
    file: String,
    window_cycles: usize,
    aggregate: Option<String>,
    left_out: Option<LeftOut>,
    rows: Vec<Row>,
}

#[derive(Deserialize)]
struct LeftOut {
    start_s: f64,
    end_s: f64,
}

#[derive(Deserialize)]
struct Row {
    window: usize,
    windows: usize,
    start_s: f64,
    end_s: f64,
    frequency_hz: f64,
    phase_angle_deg: Angles,
    true_pf: Option<f64>,
    voltage: TraceRow,
    power: Power,
}

#[derive(Deserialize)]
struct Angles {
    dft: Option<f64>,
}

#[derive(Deserialize)]
struct TraceRow {
    rms: f64,
}

#[derive(Deserialize)]
struct Power {
    active_w: f64,
    reactive_var: f64,
}

fn tracephase() -> Command {
    Command::cargo_bin("tracephase").unwrap()
}

/// The JSON record and the CSV rows say the same, and the part left out is said.
#[test]
fn json_and_csv_give_every_window_and_say_what_is_left_out() {
    let dir = TempDir::new().unwrap();
    let spec = Spec::clean(
        RATE,
        50.0,
        10_500,
        Waveform::sine(230.0, 0.0),
        Waveform::sine(10.0, -30.0),
    );
    let (v, i) = synthesize(&spec);
    let path = write_csv(dir.path(), "bench-load.csv", &v, &i);
    let out = tracephase()
        .args(["trend", "--format", "json"])
        .arg(&path)
        .output()
        .unwrap();
    assert!(out.status.success());
    let r: Record = serde_json::from_slice(&out.stdout).unwrap();
    assert!(r.file.ends_with("bench-load.csv"));
    assert_eq!((r.window_cycles, r.aggregate), (10, None));
    assert_eq!(r.rows.len(), 5);
    for (k, row) in r.rows.iter().enumerate() {
        assert_eq!((row.window, row.windows), (k, 1));
        assert!((row.start_s - 0.2 * k as f64).abs() < 1e-9);
        assert!((row.end_s - row.start_s - 0.2).abs() < 1e-9);
        assert!((row.frequency_hz - 50.0).abs() < 1e-6);
        assert!((row.phase_angle_deg.dft.unwrap() - 30.0).abs() < 1e-3);
        // P = V·I·cos θ, Q1 = V·I·sin θ (IEEE 1459, references §1)
        assert!((row.power.active_w - 2300.0 * 30f64.to_radians().cos()).abs() < 0.01);
        assert!((row.power.reactive_var - 1150.0).abs() < 0.01);
        assert!((row.true_pf.unwrap() - 30f64.to_radians().cos()).abs() < 1e-6);
        assert!((row.voltage.rms - 230.0).abs() < 1e-3);
    }
    let left = r.left_out.unwrap();
    assert!((left.start_s - 1.0).abs() < 1e-9 && (left.end_s - 1.05).abs() < 1e-9);
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("left out"), "{err}");

    let out = tracephase()
        .args(["trend", "--format", "csv"])
        .arg(&path)
        .output()
        .unwrap();
    assert!(out.status.success());
    let mut reader = csv::Reader::from_reader(&out.stdout[..]);
    let header = reader.headers().unwrap().clone();
    for key in [
        "file",
        "window",
        "start_s",
        "end_s",
        "frequency_hz",
        "phase_angle_deg.dft",
        "phase_angle_deg.zero_crossing",
        "true_pf",
        "displacement_pf",
        "voltage.rms",
        "current.thd_percent",
        "power.active_w",
        "power.reactive_var",
        "power.apparent_va",
    ] {
        assert!(header.iter().any(|h| h == key), "no column {key}");
    }
    assert_eq!(reader.records().count(), 5);

    // the table says it too
    let out = tracephase().arg("trend").arg(&path).output().unwrap();
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("5 windows of 10 cycles"), "{text}");
    assert!(text.contains("left out: 1.0000 s to 1.0500 s"), "{text}");
}

/// `--aggregate 3s` gives intervals of 15 windows; windows that do not divide 150 cycles and
/// windows of fewer than 3 cycles are refused with the reason.
#[test]
fn aggregate_gives_three_second_intervals_and_refuses_windows_that_do_not_divide_them() {
    let dir = TempDir::new().unwrap();
    let spec = Spec::clean(
        RATE,
        50.0,
        32_000,
        Waveform::sine(230.0, 0.0),
        Waveform::sine(10.0, -30.0),
    );
    let (v, i) = synthesize(&spec);
    let path = write_csv(dir.path(), "three-seconds.csv", &v, &i);
    let out = tracephase()
        .args(["trend", "--format", "json", "--aggregate", "3s"])
        .arg(&path)
        .output()
        .unwrap();
    assert!(out.status.success());
    let r: Record = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(r.aggregate.as_deref(), Some("3s"));
    assert_eq!(r.rows.len(), 1);
    assert_eq!(r.rows[0].windows, 15);
    assert!((r.rows[0].end_s - 3.0).abs() < 1e-9);
    // the last 0.2 s: one window, not an interval
    let left = r.left_out.unwrap();
    assert!((left.start_s - 3.0).abs() < 1e-9 && (left.end_s - 3.2).abs() < 1e-9);

    let out = tracephase()
        .args(["trend", "--aggregate", "3s", "--window-cycles", "7"])
        .arg(&path)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("three-seconds.csv") && err.contains("150 cycles"),
        "{err}"
    );

    let out = tracephase()
        .args(["trend", "--window-cycles", "2"])
        .arg(&path)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("--window-cycles"));
}

/// A balanced 4-wire load, 230 V and 10 A per phase lagging 30°: each window gives three phases
/// and totals P = 3·V·I·cos θ and Q1 = 3·V·I·sin θ (textbook), PFe = cos θ for a balanced
/// sinusoidal load (IEEE Std 1459-2010 §3.2, references §9).
#[test]
fn three_phase_windows_give_each_phase_and_the_totals() {
    let (mut voltages, mut currents) = (Vec::new(), Vec::new());
    for (k, shift) in [0.0, -120.0, 120.0].into_iter().enumerate() {
        let (v, i) = synthesize(&Spec::clean(
            RATE,
            50.0,
            6_000,
            Waveform::sine(230.0, shift),
            Waveform::sine(10.0, shift - 30.0),
        ));
        voltages.push(Trace::plain("v", k + 2, v));
        currents.push(Trace::plain("i", k + 5, i));
    }
    let mut c = capture(Vec::new(), Vec::new());
    c.system = System::FourWire;
    c.voltages = voltages;
    c.currents = currents;
    let t = trend(c, &Settings::default(), &TrendSettings::default()).unwrap();
    assert_eq!(t.windows.len(), 3);
    let (sin, cos) = 30f64.to_radians().sin_cos();
    for w in &t.windows {
        let phases = w.phases.as_ref().unwrap();
        assert_eq!(phases.len(), 3);
        let total = w.total.unwrap();
        let sum: f64 = phases.iter().map(|p| p.1.active_w).sum();
        assert!((total.active_w - sum).abs() < 1e-6);
        assert!((total.active_w - 3.0 * 2300.0 * cos).abs() < 1e-3);
        assert!((total.reactive_var - 3.0 * 2300.0 * sin).abs() < 1e-3);
        assert!((total.effective_pf.unwrap() - cos).abs() < 1e-6);
    }
}

/// `--from/--to` (the span options every command takes) choose the part to cut into windows:
/// the first window starts at `--from`, the part left out ends at `--to`, and the times still
/// count from the record's first sample.
#[test]
fn a_span_is_cut_into_windows_from_its_first_sample() {
    let dir = TempDir::new().unwrap();
    let spec = Spec::clean(
        RATE,
        50.0,
        20_000,
        Waveform::sine(230.0, 0.0),
        Waveform::sine(10.0, -30.0),
    );
    let (v, i) = synthesize(&spec);
    let path = write_csv(dir.path(), "span.csv", &v, &i);
    let out = tracephase()
        .args(["trend", "--format", "json", "--from", "0.3", "--to", "1.75"])
        .arg(&path)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let r: Record = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(r.rows.len(), 7);
    assert!((r.rows[0].start_s - 0.3).abs() < 1e-9);
    let left = r.left_out.unwrap();
    assert!((left.start_s - 1.7).abs() < 1e-9 && (left.end_s - 1.75).abs() < 1e-9);
}

/// Like every JSON object tracephase writes, a trend record starts with the layout's version.
#[test]
fn a_trend_record_starts_with_the_schema_version() {
    let dir = TempDir::new().unwrap();
    let (v, i) = synthesize(&Spec::clean(
        RATE,
        50.0,
        4_000,
        Waveform::sine(230.0, 0.0),
        Waveform::sine(10.0, -30.0),
    ));
    let path = write_csv(dir.path(), "versioned.csv", &v, &i);
    let out = tracephase()
        .args(["trend", "--format", "json"])
        .arg(&path)
        .output()
        .unwrap();
    assert!(String::from_utf8_lossy(&out.stdout).starts_with("{\"schema\":2,"));
}
