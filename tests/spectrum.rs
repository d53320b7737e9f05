//! `analyze --spectrum`: the harmonic spectrum in the table and as a long CSV (one row per file,
//! channel and order), checked against a capture synthesised here with known harmonics (the
//! amplitudes put in are the truth) and against the JSON of the same run.

use assert_cmd::Command;
use std::fmt::Write as _;
use tempfile::TempDir;
use tracephase::synth::{Spec, Waveform, synthesize};

/// A 50 Hz capture, 10 kS/s, 20 cycles: V 230 V with a 5th of 3 %, I 10 A with a 3rd of 20 %
/// and a 5th of 8 % (the truth).
fn write_capture(dir: &std::path::Path) -> std::path::PathBuf {
    let v = Waveform::sine(230.0, 0.0).with(5, 0.03 * 230.0, 40.0);
    let i = Waveform::sine(10.0, -30.0)
        .with(3, 2.0, 10.0)
        .with(5, 0.8, -70.0);
    let (sv, si) = synthesize(&Spec::clean(10_000.0, 50.0, 4_000, v, i));
    let mut text = String::from("Time (s),Voltage (V),Current (A)\n");
    for (k, (a, b)) in sv.iter().zip(&si).enumerate() {
        writeln!(text, "{:.7},{a:.6},{b:.6}", k as f64 / 10_000.0).unwrap();
    }
    let path = dir.join("spectrum.csv");
    std::fs::write(&path, text).unwrap();
    path
}

fn run(args: &[&str]) -> String {
    let out = Command::cargo_bin("tracephase")
        .unwrap()
        .args(args)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout).unwrap()
}

#[test]
fn the_long_csv_has_a_row_per_channel_and_order_with_the_known_harmonics() {
    let dir = TempDir::new().unwrap();
    let path = write_capture(dir.path());
    let file = path.to_string_lossy().into_owned();
    let text = run(&[
        "analyze",
        "--spectrum",
        "--harmonics",
        "9",
        "--format",
        "csv",
        &file,
    ]);
    let mut rows = csv::Reader::from_reader(text.as_bytes());
    let header: Vec<String> = rows.headers().unwrap().iter().map(String::from).collect();
    assert_eq!(
        header,
        [
            "file",
            "phase",
            "channel",
            "quantity",
            "unit",
            "order",
            "frequency_hz",
            "rms",
            "percent_of_fundamental",
            "status"
        ]
    );
    let rows: Vec<csv::StringRecord> = rows.records().map(Result::unwrap).collect();
    assert_eq!(rows.len(), 2 * 9, "two channels × nine orders");
    let get = |quantity: &str, order: usize| {
        let r = rows
            .iter()
            .find(|r| &r[3] == quantity && r[5] == order.to_string())
            .unwrap();
        (r[7].parse::<f64>().unwrap(), r[8].parse::<f64>().unwrap())
    };
    // the truth put into the capture
    for (quantity, order, rms, pct) in [
        ("voltage", 1, 230.0, 100.0),
        ("voltage", 5, 6.9, 3.0),
        ("current", 1, 10.0, 100.0),
        ("current", 3, 2.0, 20.0),
        ("current", 5, 0.8, 8.0),
    ] {
        let (got_rms, got_pct) = get(quantity, order);
        assert!(
            (got_rms / rms - 1.0).abs() < 1e-4,
            "{quantity} h{order}: {got_rms}"
        );
        assert!(
            (got_pct - pct).abs() < 1e-3,
            "{quantity} h{order}: {got_pct} %"
        );
    }
    // orders not put in hold (almost) nothing
    assert!(get("current", 7).0 < 1e-4);
    // and the rows say the same as the JSON of the same capture
    let json: serde_json::Value = serde_json::from_str(&run(&[
        "analyze",
        "--harmonics",
        "9",
        "--format",
        "json",
        &file,
    ]))
    .unwrap();
    let harmonics = json["harmonics"].as_array().expect("harmonics in the JSON");
    // (serde_json reads floats to within an ulp or so; the CSV holds Rust's shortest form)
    let same = |a: f64, b: f64| (a - b).abs() <= 1e-14 * a.abs().max(b.abs());
    assert_eq!(harmonics.len(), 9);
    for h in harmonics {
        let order = h["order"].as_u64().unwrap() as usize;
        assert!(same(
            get("current", order).0,
            h["current_rms"].as_f64().unwrap()
        ));
        assert!(same(
            get("voltage", order).0,
            h["voltage_rms"].as_f64().unwrap()
        ));
    }
}

#[test]
fn the_table_prints_the_spectrum_after_the_figures_only_when_asked() {
    let dir = TempDir::new().unwrap();
    let path = write_capture(dir.path());
    let file = path.to_string_lossy().into_owned();
    let plain = run(&["analyze", "--harmonics", "9", &file]);
    assert!(!plain.contains("  spectrum     order"));
    let text = run(&["analyze", "--spectrum", "--harmonics", "9", &file]);
    let at = text.find("  spectrum     order").expect("a spectrum block");
    let lines: Vec<&str> = text[at..].lines().collect();
    assert!(lines[0].contains("order") && lines[0].contains("I %"));
    let third: Vec<&str> = lines[3].split_whitespace().collect();
    assert_eq!(third[0], "3");
    assert_eq!(third[5], "20.00", "the 3rd of the current: 20 % put in");
    assert_eq!(lines.len(), 1 + 9);
}
