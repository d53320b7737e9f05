//! A chosen span of a record (`--from`, `--to`, `--time-zero`): the figures of the part asked
//! for, the span reported in every output, and spans that cannot be had refused in one line
//! naming the file.
//!
//! The captures are written here with a known phase angle in each part, so the truth is the
//! angle put into the samples ([computed]: v = √2·V·cos ωt, i = √2·I·cos(ωt − θ)).

mod common;

use assert_cmd::Command;
use common::comtrade::{Chan, Fmt, write_record, write_record_at};
use serde::Deserialize;
use std::f64::consts::PI;
use std::path::{Path, PathBuf};
use tempfile::TempDir;

const RATE: f64 = 5000.0;

/// The span as every JSON output gives it.
#[derive(Debug, Deserialize)]
struct SpanJson {
    start_s: f64,
    end_s: f64,
    trigger_start_s: Option<f64>,
    trigger_end_s: Option<f64>,
    first_sample: usize,
    samples: usize,
    record_samples: usize,
    whole_record: bool,
}

#[derive(Debug, Deserialize)]
struct TimesJson {
    start: Option<String>,
    trigger: Option<String>,
    trigger_offset_s: Option<f64>,
}

#[derive(Debug, Deserialize)]
struct Angles {
    dft: f64,
}

#[derive(Debug, Deserialize)]
struct Record {
    samples: usize,
    span: SpanJson,
    record_times: TimesJson,
    phase_angle_deg: Angles,
}

/// `seconds` of 50 Hz, 230 V / 10 A, the current lagging `first_deg` up to `switch_s` and
/// `then_deg` after it, as a CSV.
fn two_part_csv(
    dir: &Path,
    name: &str,
    seconds: f64,
    switch_s: f64,
    angles: (f64, f64),
) -> PathBuf {
    let w = 2.0 * PI * 50.0;
    let n = (seconds * RATE).round() as usize;
    let mut text = String::from("time (s),V (V),I (A)\n");
    for k in 0..n {
        let t = k as f64 / RATE;
        let lag = if t < switch_s { angles.0 } else { angles.1 };
        let v = 230.0 * 2f64.sqrt() * (w * t).cos();
        let i = 10.0 * 2f64.sqrt() * (w * t - lag.to_radians()).cos();
        text.push_str(&format!("{t:.6},{v:.9},{i:.9}\n"));
    }
    let p = dir.join(name);
    std::fs::write(&p, text).unwrap();
    p
}

fn run(cmd: &str, args: &[&str]) -> (Option<i32>, String, String) {
    let out = Command::cargo_bin("tracephase")
        .unwrap()
        .arg(cmd)
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
    let (code, out, err) = run("analyze", &all);
    assert_eq!(code, Some(0), "{err}");
    serde_json::from_str(out.lines().next().unwrap()).unwrap()
}

/// Both parts' angles within this of the angle written (pure sines, 10 whole cycles each).
const ANGLE_TOL_DEG: f64 = 0.01;

#[test]
fn each_part_of_a_record_gives_its_own_angle() {
    let dir = TempDir::new().unwrap();
    let csv = two_part_csv(dir.path(), "switch.csv", 0.4, 0.2, (30.0, 60.0));
    let f = csv.to_str().unwrap();
    let first = analyze_json(&[f, "--from", "0", "--to", "0.2"]);
    assert!(
        (first.phase_angle_deg.dft - 30.0).abs() < ANGLE_TOL_DEG,
        "{first:?}"
    );
    assert_eq!(first.samples, 1000);
    let s = &first.span;
    assert_eq!(
        (s.first_sample, s.samples, s.record_samples),
        (0, 1000, 2000)
    );
    assert_eq!((s.start_s, s.end_s, s.whole_record), (0.0, 0.2, false));
    assert_eq!((s.trigger_start_s, s.trigger_end_s), (None, None));
    let second = analyze_json(&[f, "--from", "0.2"]);
    assert!(
        (second.phase_angle_deg.dft - 60.0).abs() < ANGLE_TOL_DEG,
        "{second:?}"
    );
    assert_eq!((second.span.first_sample, second.span.end_s), (1000, 0.4));
    // the whole record is neither, and says it is the whole record
    let whole = analyze_json(&[f]);
    assert!(whole.span.whole_record);
    assert_eq!((whole.span.start_s, whole.span.end_s), (0.0, 0.4));
    assert!((whole.phase_angle_deg.dft - 30.0).abs() > 1.0, "{whole:?}");
    assert!(whole.record_times.start.is_none() && whole.record_times.trigger.is_none());
}

#[test]
fn a_span_edge_on_a_sample_keeps_that_sample_and_not_the_one_at_the_end() {
    // 0.1 s × 4000 Hz is 400.00000000000006 in binary floating point: still 400 samples
    let dir = TempDir::new().unwrap();
    let chans = fault_channels();
    let cfg = write_record(dir.path(), "edge", &chans, 4000.0, Fmt::Binary);
    let r = analyze_json(&[cfg.to_str().unwrap(), "--from", "0.0", "--to", "0.1"]);
    assert_eq!((r.span.first_sample, r.span.samples), (0, 400));
    let r = analyze_json(&[cfg.to_str().unwrap(), "--from", "0.0125", "--to", "0.1125"]);
    assert_eq!((r.span.first_sample, r.span.samples), (50, 400));
}

/// A relay's record at 4000 Hz: 0.1 s of load (230 V, 10 A lagging 30°), then from the trigger
/// at 0.1 s a fault on the feeder (80 A lagging 75°), 0.2 s in all.
fn fault_channels() -> Vec<Chan> {
    let w = 2.0 * PI * 50.0;
    let n = 800;
    let v: Vec<f64> = (0..n)
        .map(|s| (230.0 * 2f64.sqrt() * (w * s as f64 / 4000.0).cos() / 0.01).round())
        .collect();
    let i: Vec<f64> = (0..n)
        .map(|s| {
            let t = s as f64 / 4000.0;
            let (amps, lag) = if s < 400 { (10.0, 30.0) } else { (80.0, 75.0) };
            (amps * 2f64.sqrt() * (w * t - f64::to_radians(lag)).cos() / 0.005).round()
        })
        .collect();
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
    vec![chan("VA", "V", 0.01, v), chan("IA", "A", 0.005, i)]
}

#[test]
fn the_pre_fault_part_of_a_fault_record_is_the_load() {
    let dir = TempDir::new().unwrap();
    let cfg = write_record(
        dir.path(),
        "fault",
        &fault_channels(),
        4000.0,
        Fmt::Binary32,
    );
    let f = cfg.to_str().unwrap();
    let pre = analyze_json(&[f, "--from", "0", "--to", "0.1"]);
    assert!(
        (pre.phase_angle_deg.dft - 30.0).abs() < ANGLE_TOL_DEG,
        "{pre:?}"
    );
    // the record's own date-times, as written, and the trigger placed from them
    let t = &pre.record_times;
    assert_eq!(t.start.as_deref(), Some("02/12/2026,08:00:00.000000"));
    assert_eq!(t.trigger.as_deref(), Some("02/12/2026,08:00:00.100000"));
    assert!((t.trigger_offset_s.unwrap() - 0.1).abs() < 1e-9);
    assert!((pre.span.trigger_start_s.unwrap() + 0.1).abs() < 1e-9);
    assert!(pre.span.trigger_end_s.unwrap().abs() < 1e-9);
    // the same span counted from the trigger
    let by_trigger = analyze_json(&[f, "--time-zero", "trigger", "--from", "-0.1", "--to", "0"]);
    assert_eq!(by_trigger.span.first_sample, pre.span.first_sample);
    assert_eq!(by_trigger.span.samples, pre.span.samples);
    assert_eq!(by_trigger.phase_angle_deg.dft, pre.phase_angle_deg.dft);
    // and the fault after it
    let fault = analyze_json(&[f, "--time-zero", "trigger", "--from", "0"]);
    assert!(
        (fault.phase_angle_deg.dft - 75.0).abs() < ANGLE_TOL_DEG,
        "{fault:?}"
    );
}

#[test]
fn the_table_names_the_span_and_the_record_times() {
    let dir = TempDir::new().unwrap();
    let cfg = write_record(dir.path(), "fault", &fault_channels(), 4000.0, Fmt::Binary);
    let (code, out, err) = run("analyze", &[cfg.to_str().unwrap(), "--to", "0.1"]);
    assert_eq!(code, Some(0), "{err}");
    assert!(
        out.contains(
            "  span         0 to 0.1 s of 0.2 s (samples 0 to 399 of 800), -0.1 to 0 s from the \
             trigger"
        ),
        "{out}"
    );
    assert!(
        out.contains(
            "  record       start 02/12/2026,08:00:00.000000, trigger \
             02/12/2026,08:00:00.100000 (0.1 s after the first sample)"
        ),
        "{out}"
    );
}

/// One `error:` line on stderr, exit code 2.
fn refused(cmd: &str, args: &[&str]) -> String {
    let (code, _, err) = run(cmd, args);
    assert_eq!(code, Some(2), "{err}");
    assert_eq!(err.lines().count(), 1, "{err}");
    assert!(err.starts_with("error: "), "{err}");
    err
}

#[test]
fn spans_that_cannot_be_had_are_refused_in_one_line_naming_the_file() {
    let dir = TempDir::new().unwrap();
    let csv = two_part_csv(dir.path(), "short.csv", 0.2, 1.0, (30.0, 30.0));
    let f = csv.to_str().unwrap();
    let e = refused("analyze", &[f, "--from", "0.1", "--to", "0.1"]);
    assert!(e.contains("--from 0.1 is not before --to 0.1"), "{e}");
    let e = refused("analyze", &[f, "--from", "0.1", "--to", "0.5"]);
    assert!(e.contains(f) && e.contains("ends past the record"), "{e}");
    assert!(e.contains("runs from 0 to 0.2 s"), "{e}");
    let e = refused("analyze", &[f, "--from", "0.3"]);
    assert!(
        e.contains(f) && e.contains("starts after the record's end"),
        "{e}"
    );
    let e = refused("analyze", &[f, "--from", "-0.05", "--to", "0.1"]);
    assert!(
        e.contains(f) && e.contains("starts before the record's first sample"),
        "{e}"
    );
    let e = refused("analyze", &[f, "--time-zero", "trigger", "--from", "0"]);
    assert!(e.contains(f) && e.contains("states no trigger time"), "{e}");
    // 1.5 cycles of 50 Hz: the estimator needs two
    let e = refused("analyze", &[f, "--from", "0", "--to", "0.03"]);
    assert!(
        e.contains(&format!("{f}: in the span 0 s to 0.03 s: only")),
        "{e}"
    );
    let e = refused("analyze", &[f, "--from", "0", "--to", "0.0002"]);
    assert!(e.contains(f) && e.contains("1 sample(s)"), "{e}");
    let (code, _, e) = run("analyze", &[f, "--time-zero", "noon", "--from", "0"]);
    assert_eq!(code, Some(2));
    assert!(e.contains("'noon' is not a time zero"), "{e}");
}

#[test]
fn a_span_one_file_cannot_give_leaves_the_others_analysed() {
    let dir = TempDir::new().unwrap();
    let long = two_part_csv(dir.path(), "long.csv", 0.4, 1.0, (30.0, 30.0));
    let short = two_part_csv(dir.path(), "short.csv", 0.2, 1.0, (30.0, 30.0));
    let (code, out, err) = run(
        "analyze",
        &[
            "--format",
            "json",
            "--from",
            "0.2",
            short.to_str().unwrap(),
            long.to_str().unwrap(),
        ],
    );
    assert_eq!(code, Some(2));
    assert_eq!(err.lines().count(), 1, "{err}");
    assert!(err.contains("short.csv"), "{err}");
    let r: Record = serde_json::from_str(out.lines().next().unwrap()).unwrap();
    assert_eq!(r.span.first_sample, 1000);
}

#[test]
fn meter_bank_and_report_take_the_span_and_say_so() {
    let dir = TempDir::new().unwrap();
    let csv = two_part_csv(dir.path(), "load.csv", 0.4, 0.2, (30.0, 60.0));
    let f = csv.to_str().unwrap();
    let (code, out, err) = run(
        "meter",
        &[
            f,
            "--class",
            "1",
            "--reading",
            "pf=0.866",
            "--from",
            "0",
            "--to",
            "0.2",
            "--format",
            "json",
        ],
    );
    assert_eq!(code, Some(0), "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    let span: SpanJson = serde_json::from_value(v["span"].clone()).unwrap();
    assert_eq!((span.samples, span.end_s), (1000, 0.2));
    // the PF of the first part (cos 30°) passes; the whole record's would not be this
    assert_eq!(v["checks"][0]["verdict"], "pass", "{v}");

    let after = two_part_csv(dir.path(), "after.csv", 0.4, 0.2, (20.0, 20.0));
    let (code, out, err) = run(
        "bank",
        &[
            "--before",
            f,
            "--after",
            after.to_str().unwrap(),
            "--rated-kvar",
            "1",
            "--rated-voltage",
            "230",
            "--rated-frequency",
            "50",
            "--to",
            "0.2",
            "--format",
            "json",
        ],
    );
    assert!(code == Some(0) || code == Some(1), "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    for key in ["before_span", "after_span"] {
        let span: SpanJson = serde_json::from_value(v[key].clone()).unwrap();
        assert_eq!((span.samples, span.end_s), (1000, 0.2), "{key}");
    }

    let html = dir.path().join("r.html");
    let (code, _, err) = run(
        "report",
        &[f, "--from", "0.2", "-o", html.to_str().unwrap()],
    );
    assert_eq!(code, Some(0), "{err}");
    let page = std::fs::read_to_string(&html).unwrap();
    assert!(
        page.contains("span analysed: 0.2 to 0.4 s of 0.4 s (samples 1000 to 1999 of 2000)"),
        "no span in the report"
    );
}

#[test]
fn batch_takes_a_span_per_file_from_its_sidecar() {
    let dir = TempDir::new().unwrap();
    two_part_csv(dir.path(), "early.csv", 0.4, 0.2, (30.0, 60.0));
    two_part_csv(dir.path(), "late.csv", 0.4, 0.2, (30.0, 60.0));
    std::fs::write(
        dir.path().join("tracephase.toml"),
        "to = 0.2\n[[files]]\npattern = \"late*\"\nfrom = 0.2\nto = 0.4\n",
    )
    .unwrap();
    let out = dir.path().join("summary.csv");
    let (code, _, err) = run(
        "batch",
        &[dir.path().to_str().unwrap(), "--out", out.to_str().unwrap()],
    );
    assert_eq!(code, Some(0), "{err}");
    let mut rd = csv::Reader::from_path(&out).unwrap();
    let head = rd.headers().unwrap().clone();
    let col = |name: &str| {
        head.iter()
            .position(|h| h == name)
            .unwrap_or_else(|| panic!("{name}"))
    };
    let (file, start, end, angle) = (
        col("file"),
        col("span.start_s"),
        col("span.end_s"),
        col("phase_angle_deg.dft"),
    );
    let rows: Vec<csv::StringRecord> = rd.records().map(Result::unwrap).collect();
    assert_eq!(rows.len(), 2);
    for r in &rows {
        let a: f64 = r[angle].parse().unwrap();
        if r[file].ends_with("early.csv") {
            assert_eq!((&r[start], &r[end]), ("0.0", "0.2"));
            assert!((a - 30.0).abs() < ANGLE_TOL_DEG, "{a}");
        } else {
            assert_eq!((&r[start], &r[end]), ("0.2", "0.4"));
            assert!((a - 60.0).abs() < ANGLE_TOL_DEG, "{a}");
        }
    }
    // the command line overrides the sidecars, and a bad span is one error per capture
    let (code, _, err) = run(
        "batch",
        &[
            dir.path().to_str().unwrap(),
            "--out",
            out.to_str().unwrap(),
            "--to",
            "0.5",
        ],
    );
    assert_eq!(code, Some(2), "{err}");
    let rows: Vec<csv::StringRecord> = csv::Reader::from_path(&out)
        .unwrap()
        .records()
        .map(Result::unwrap)
        .collect();
    assert!(rows.iter().all(|r| r[1].contains("error")), "{rows:?}");
}

#[test]
fn a_loggers_date_times_give_the_start_and_no_trigger() {
    // 0.2 s of 50 Hz at 5000 Hz with ISO 8601 time stamps, as a data logger writes them
    let dir = TempDir::new().unwrap();
    let w = 2.0 * PI * 50.0;
    let mut text = String::from("Time,V (V),I (A)\n");
    for k in 0..1000 {
        let t = k as f64 / RATE;
        let us = k * 200;
        text.push_str(&format!(
            "2026-03-14 09:41:{:02}.{:06},{:.6},{:.6}\n",
            27 + us / 1_000_000,
            us % 1_000_000,
            325.0 * (w * t).cos(),
            14.0 * (w * t - PI / 6.0).cos()
        ));
    }
    let csv = dir.path().join("logger.csv");
    std::fs::write(&csv, text).unwrap();
    let f = csv.to_str().unwrap();
    let r = analyze_json(&[f, "--from", "0.1"]);
    // the record's first sample, as written, whatever span is analysed
    assert_eq!(
        r.record_times.start.as_deref(),
        Some("2026-03-14 09:41:27.000000")
    );
    assert_eq!(
        (
            r.record_times.trigger.as_deref(),
            r.record_times.trigger_offset_s
        ),
        (None, None)
    );
    assert_eq!((r.span.first_sample, r.span.trigger_start_s), (500, None));
    let e = refused("analyze", &[f, "--time-zero", "trigger", "--to", "0.1"]);
    assert!(e.contains("states no trigger time"), "{e}");
}

#[test]
fn a_trigger_that_is_no_date_cannot_be_counted_from() {
    let dir = TempDir::new().unwrap();
    let cfg = write_record_at(
        dir.path(),
        "odd",
        &fault_channels(),
        4000.0,
        Fmt::Binary,
        ("02/12/2026,08:00:00.000000", "31/02/2026,08:00:00.100000"),
    );
    let f = cfg.to_str().unwrap();
    let e = refused("analyze", &[f, "--time-zero", "trigger", "--to", "0"]);
    assert!(
        e.contains("the trigger time '31/02/2026,08:00:00.100000' cannot be placed"),
        "{e}"
    );
    // counted from the first sample it is fine, and the trigger is given as written, unplaced
    let r = analyze_json(&[f, "--to", "0.1"]);
    assert_eq!(
        r.record_times.trigger.as_deref(),
        Some("31/02/2026,08:00:00.100000")
    );
    assert_eq!(r.record_times.trigger_offset_s, None);
}
