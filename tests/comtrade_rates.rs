//! COMTRADE records with several sample rates (`nrates` > 1): each part at one rate analysed at
//! its own rate, times counted from the record's first sample across the parts, the part chosen
//! by a span or (without one) the longest with a warning naming it, a span across a change of
//! rate refused, and rate lists that lie refused before anything is allocated.
//!
//! The records are written by the tests' own writer (`common::comtrade`) with a known truth: a
//! 49.95 Hz, 230 V / 10 A signal (off 50 Hz so that 1000 Hz does not repeat 20 values), v = √2·230·cos ωt and i = √2·10·cos(ωt − θ), θ = 30° before
//! 0.5 s and 60° after, sampled 2000 times at 4000 Hz, then 1000 times at 1000 Hz. The time of
//! each sample follows IEEE C37.111's `samp,endsamp` lines (from memory): a rate holds the
//! samples after the previous rate's last one up to its own end sample, `1 / rate` apart.

mod common;

use assert_cmd::Command;
use common::comtrade::{Chan, Fmt, sample_times, write_record_rates};
use serde::Deserialize;
use std::f64::consts::PI;
use std::path::{Path, PathBuf};
use tempfile::TempDir;
use tracephase::capture::{ChannelSel, LoadOptions, load};

/// The signal's frequency.
const F_HZ: f64 = 49.95;
const TIMES: (&str, &str) = ("02/12/2026,08:00:00.000000", "02/12/2026,08:00:00.100000");
/// 0.5 s at 4000 Hz, then 1 s at 1000 Hz.
const RATES: [(f64, usize); 2] = [(4000.0, 2000), (1000.0, 3000)];

#[derive(Debug, Deserialize)]
struct SpanJson {
    start_s: f64,
    end_s: f64,
    trigger_start_s: Option<f64>,
    first_sample: usize,
    samples: usize,
    record_samples: usize,
    whole_record: bool,
}

#[derive(Debug, Deserialize)]
struct Angles {
    dft: f64,
}

#[derive(Debug, Deserialize)]
struct Rms {
    rms: f64,
}

#[derive(Debug, Deserialize)]
struct Record {
    sample_rate_hz: f64,
    samples: usize,
    frequency_hz: f64,
    span: SpanJson,
    phase_angle_deg: Angles,
    voltage: Rms,
    current: Rms,
    warning_codes: Vec<String>,
    warnings: Vec<String>,
}

/// The signal at `t` seconds: (v, i) with the current lagging 30° before 0.5 s and 60° after
/// (a capacitor bank switched out at 0.5 s, invented).
fn signal(t: f64) -> (f64, f64) {
    let w = 2.0 * PI * F_HZ * t;
    let lag = if t < 0.5 - 1e-9 { 30.0f64 } else { 60.0 };
    (
        230.0 * 2f64.sqrt() * w.cos(),
        10.0 * 2f64.sqrt() * (w - lag.to_radians()).cos(),
    )
}

/// The record at `rates` in `fmt`, raw counts of 0.1 mV and 0.01 mA (exact in BINARY32 and
/// ASCII, rounded to float in FLOAT32; BINARY gets counts of 0.02 V and 1 mA to fit 16 bits).
fn record(dir: &Path, name: &str, rates: &[(f64, usize)], fmt: Fmt) -> PathBuf {
    let (av, ai) = match fmt {
        Fmt::Binary => (0.02, 0.001),
        _ => (1e-4, 1e-5),
    };
    let (v, i): (Vec<f64>, Vec<f64>) = sample_times(rates)
        .into_iter()
        .map(|t| {
            let (v, i) = signal(t);
            ((v / av).round(), (i / ai).round())
        })
        .unzip();
    let chan = |id, units, a, raw| Chan {
        id,
        ph: "A",
        units,
        a,
        b: 0.0,
        skew_us: 0.0,
        ratio: (1.0, 1.0, 'P'),
        raw,
    };
    let chans = [chan("VAN", "V", av, v), chan("IA", "A", ai, i)];
    write_record_rates(dir, name, &chans, rates, fmt, TIMES)
}

fn run(args: &[&str]) -> (Option<i32>, String, String) {
    let out = Command::cargo_bin("tracephase")
        .unwrap()
        .arg("analyze")
        .args(args)
        .output()
        .unwrap();
    (
        out.status.code(),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

fn analyze_json(args: &[&str]) -> Record {
    let mut all = vec!["--format", "json"];
    all.extend_from_slice(args);
    let (code, out, err) = run(&all);
    assert_eq!(code, Some(0), "{err}");
    serde_json::from_str(out.lines().next().unwrap()).unwrap()
}

/// Pure sines: the angle within this of the angle written, the frequency and RMS within these
/// of 49.95 Hz, 230 V and 10 A (BINARY's 0.02 V and 1 mA counts move the RMS by
/// far less).
const ANGLE_TOL_DEG: f64 = 0.01;
const FREQ_TOL_HZ: f64 = 1e-4;
const RMS_TOL: f64 = 1e-4;
/// Times in JSON are sums of sample intervals.
const TIME_TOL_S: f64 = 1e-9;

fn assert_part(r: &Record, rate: f64, angle: f64) {
    assert_eq!(r.sample_rate_hz, rate, "{r:?}");
    assert!((r.frequency_hz - F_HZ).abs() < FREQ_TOL_HZ, "{r:?}");
    assert!(
        (r.phase_angle_deg.dft - angle).abs() < ANGLE_TOL_DEG,
        "{r:?}"
    );
    assert!((r.voltage.rms / 230.0 - 1.0).abs() < RMS_TOL, "{r:?}");
    assert!((r.current.rms / 10.0 - 1.0).abs() < RMS_TOL, "{r:?}");
}

fn assert_span(r: &Record, (start, end): (f64, f64), (first, samples): (usize, usize)) {
    let s = &r.span;
    assert!((s.start_s - start).abs() < TIME_TOL_S, "{s:?}");
    assert!((s.end_s - end).abs() < TIME_TOL_S, "{s:?}");
    assert_eq!((s.first_sample, s.samples), (first, samples), "{s:?}");
    assert_eq!(r.samples, samples);
    assert_eq!(s.record_samples, 3000);
    assert!(!s.whole_record);
}

#[test]
fn each_rate_part_is_analysed_at_its_own_rate_by_span() {
    let dir = TempDir::new().unwrap();
    let cfg = record(dir.path(), "two-rates", &RATES, Fmt::Binary32);
    let f = cfg.to_str().unwrap();
    // the first part, 25 cycles at 4000 Hz
    let r = analyze_json(&[f, "--from", "0", "--to", "0.5"]);
    assert_part(&r, 4000.0, 30.0);
    assert_span(&r, (0.0, 0.5), (0, 2000));
    assert!(r.warning_codes.is_empty(), "{r:?}");
    // inside the second part: sample 2000 is at 0.5 s, so 0.6 s is sample 2000 + 100
    let r = analyze_json(&[f, "--from", "0.6", "--to", "1.4"]);
    assert_part(&r, 1000.0, 60.0);
    assert_span(&r, (0.6, 1.4), (2100, 800));
    // the same samples counted from the trigger at 0.1 s
    let r = analyze_json(&[f, "--time-zero", "trigger", "--from", "0.5", "--to", "1.3"]);
    assert_part(&r, 1000.0, 60.0);
    assert_span(&r, (0.6, 1.4), (2100, 800));
    assert!((r.span.trigger_start_s.unwrap() - 0.5).abs() < TIME_TOL_S);
    // to the end of the record from a time in the second part
    let r = analyze_json(&[f, "--from", "1"]);
    assert_span(&r, (1.0, 1.5), (2500, 500));
    // windows over time count from the record's first sample too: 10 cycles of 49.95 Hz at
    // 1000 Hz are 200 samples, so the rows start at 0.6, 0.8, 1.0, 1.2 s
    let out = Command::cargo_bin("tracephase")
        .unwrap()
        .args(["trend", f, "--from", "0.6", "--format", "json"])
        .output()
        .unwrap();
    let trend: Trend = serde_json::from_slice(&out.stdout).unwrap();
    let starts: Vec<f64> = trend.rows.iter().map(|w| w.start_s).collect();
    assert_eq!(starts.len(), 4, "{starts:?}");
    for (k, s) in starts.iter().enumerate() {
        assert!(
            (s - (0.6 + 0.2 * k as f64)).abs() < TIME_TOL_S,
            "{starts:?}"
        );
    }
    assert!((trend.left_out.unwrap().end_s - 1.5).abs() < TIME_TOL_S);
}

#[derive(Debug, Deserialize)]
struct TrendRow {
    start_s: f64,
}

#[derive(Debug, Deserialize)]
struct LeftOut {
    end_s: f64,
}

#[derive(Debug, Deserialize)]
struct Trend {
    rows: Vec<TrendRow>,
    left_out: Option<LeftOut>,
}

#[test]
fn without_a_span_the_longest_part_is_analysed_and_named_in_every_data_format() {
    let dir = TempDir::new().unwrap();
    for fmt in [Fmt::Ascii, Fmt::Binary, Fmt::Binary32, Fmt::Float32] {
        let cfg = record(dir.path(), fmt.name(), &RATES, fmt);
        let r = analyze_json(&[cfg.to_str().unwrap()]);
        assert_part(&r, 1000.0, 60.0);
        assert_span(&r, (0.5, 1.5), (2000, 1000));
        assert_eq!(r.warning_codes, ["rate-part-chosen"], "{fmt:?}");
        let w = &r.warnings[0];
        assert!(
            w.contains("4000 Hz from 0 to 0.5 s, 1000 Hz from 0.5 to 1.5 s")
                && w.contains("analysed its longest part, 1000 Hz from 0.5 to 1.5 s")
                && w.contains("--from 0 --to 0.5"),
            "{w}"
        );
    }
    // the longest part first: 1 s at 4000 Hz, then 0.5 s at 1000 Hz
    let cfg = record(
        dir.path(),
        "long-first",
        &[(4000.0, 4000), (1000.0, 4500)],
        Fmt::Binary32,
    );
    let opts = LoadOptions {
        voltage: Some(ChannelSel::parse("VAN")),
        current: Some(ChannelSel::parse("IA")),
        ..Default::default()
    };
    let c = load(&cfg, &opts).unwrap();
    assert_eq!(c.sample_rate_hz, 4000.0);
    let s = c.span.unwrap();
    assert_eq!((s.first, s.len, s.of), (0, 4000, 4500));
    assert_eq!((s.start_s, s.record_s), (0.0, 1.5));
    // the samples are the record's own first 4000 (the writer's raw counts of 0.1 mV)
    let t = sample_times(&[(4000.0, 4000)]);
    let v0 = (signal(t[3999]).0 / 1e-4).round() * 1e-4;
    assert!((c.voltage().samples[3999] - v0).abs() < 1e-9);
}

#[test]
fn a_span_across_a_change_of_rate_is_refused_naming_the_parts() {
    let dir = TempDir::new().unwrap();
    let cfg = record(dir.path(), "two-rates", &RATES, Fmt::Binary);
    let f = cfg.to_str().unwrap();
    for args in [
        vec![f, "--from", "0.4", "--to", "0.6"],
        vec![f, "--to", "1"],
        vec![f, "--time-zero", "trigger", "--from", "0.3", "--to", "0.5"],
    ] {
        let (code, _, err) = run(&args);
        assert_eq!(code, Some(2), "{err}");
        assert_eq!(err.lines().count(), 1, "{err}");
        assert!(
            err.starts_with("error: ")
                && err.contains(f)
                && err.contains("crosses a change of sample rate")
                && err.contains("4000 Hz from 0 to 0.5 s, 1000 Hz from 0.5 to 1.5 s")
                && err.contains("(e.g. --from"),
            "{err}"
        );
    }
    // past the record: the same list, not a crossing
    let (code, _, err) = run(&[f, "--from", "1.2", "--to", "2"]);
    assert_eq!(code, Some(2));
    assert!(err.contains("not inside the record"), "{err}");
    // a span ending exactly where the rate changes is inside the first part
    let r = analyze_json(&[f, "--from", "0.1", "--to", "0.5"]);
    assert_span(&r, (0.1, 0.5), (400, 1600));
    // --rate cannot stand for several rates
    let (code, _, err) = run(&[f, "--rate", "4000"]);
    assert_eq!(code, Some(2));
    assert!(err.contains("leave --rate out"), "{err}");
}

/// Rate lists that lie: an end sample past what the `.dat` holds (2^31, 2^32 - 1), end samples
/// that fall back, a rate of zero. Each is one line naming the file, from the `.cfg` before any
/// sample is read.
#[test]
fn rate_lists_that_lie_are_refused() {
    let dir = TempDir::new().unwrap();
    let cfg = record(dir.path(), "lie", &RATES, Fmt::Binary);
    let text = std::fs::read_to_string(&cfg).unwrap();
    let opts = LoadOptions {
        voltage: Some(ChannelSel::parse("VAN")),
        current: Some(ChannelSel::parse("IA")),
        ..Default::default()
    };
    let cases = [
        ("1000,3000\n", "1000,2147483648\n", "promises 2147483648"),
        ("1000,3000\n", "1000,4294967295\n", "promises 4294967295"),
        ("4000,2000\n", "4000,3500\n", "line 8"),
        ("1000,3000\n", "0,3000\n", "line 8"),
        ("2\n4000,2000", "3\n4000,2000", "line 9"),
    ];
    for (from, to, says) in cases {
        std::fs::write(&cfg, text.replace(from, to)).unwrap();
        let e = load(&cfg, &opts).unwrap_err().to_string();
        assert!(e.contains("lie.") && e.contains(says), "{to:?}: {e}");
        assert_eq!(e.lines().count(), 1);
    }
}
