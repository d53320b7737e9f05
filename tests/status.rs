//! Status words: warnings (what threatens a figure), findings (measured facts worth acting on) and
//! notes (explained observations) are kept apart in every output, and the status comes from the
//! warnings alone.

use assert_cmd::Command;
use serde::Deserialize;
use std::f64::consts::PI;
use std::path::{Path, PathBuf};
use tempfile::TempDir;

fn tracephase() -> Command {
    Command::cargo_bin("tracephase").unwrap()
}

const RATE: f64 = 10_000.0;
const F: f64 = 50.0;
/// Current lag of the distorted capture, degrees: PF cos 40° = 0.766 is below the 0.90 default
/// threshold, a finding.
const LAG_DEG: f64 = 40.0;
/// Third harmonic of the distorted current, share of the fundamental, and its phase (radians)
/// against the fundamental's.
const A3: f64 = 0.2;
const PHI3: f64 = 0.9;

/// Writes `t,v,i` rows from `v(x)` and `i(x)`, x = ωt: invented data, truth in the formulas.
fn write(path: &Path, samples: usize, v: impl Fn(f64) -> f64, i: impl Fn(usize, f64) -> f64) {
    let mut text = String::from("t,v,i\n");
    for k in 0..samples {
        let t = k as f64 / RATE;
        let x = 2.0 * PI * F * t;
        text.push_str(&format!("{t:.6},{:.5},{:.6}\n", v(x), i(k, x)));
    }
    std::fs::write(path, text).unwrap();
}

/// A 230 V sine and a 10 A current lagging 40° with a 20 % third harmonic: the harmonic moves the
/// current's zero crossings, so the two angle methods differ for a reason the fit explains.
fn distorted(dir: &Path) -> PathBuf {
    let p = dir.join("distorted-lag40.csv");
    let th = LAG_DEG.to_radians();
    let peak = 10.0 * 2f64.sqrt();
    write(
        &p,
        5000,
        |x| 230.0 * 2f64.sqrt() * x.sin(),
        |_, x| peak * ((x - th).sin() + A3 * (3.0 * (x - th) + PHI3).sin()),
    );
    p
}

/// The load changes halfway: 10 A lagging 20° for 50 cycles, then 4 A lagging 70°. Both methods
/// average over the record, but differently (the fit weighs each half by its amplitude, the
/// crossings count equally), so they differ by about 11° with no harmonics to explain it.
fn changing_load(dir: &Path) -> PathBuf {
    let p = dir.join("load-changes-midway.csv");
    write(
        &p,
        20_000,
        |x| 230.0 * 2f64.sqrt() * x.sin(),
        |k, x| {
            let (amps, lag) = HALVES[usize::from(k >= 10_000)];
            amps * 2f64.sqrt() * (x - f64::to_radians(lag)).sin()
        },
    );
    p
}

/// The two halves of [`changing_load`]: amperes and lag in degrees.
const HALVES: [(f64, f64); 2] = [(10.0, 20.0), (4.0, 70.0)];

#[derive(Debug, Deserialize)]
struct Record {
    status: String,
    phase_angle_deg: Angles,
    warnings: Vec<String>,
    warning_codes: Vec<String>,
    findings: Vec<String>,
    finding_codes: Vec<String>,
    notes: Vec<String>,
    note_codes: Vec<String>,
}

#[derive(Debug, Deserialize)]
struct Angles {
    dft: f64,
    zero_crossing: f64,
}

fn analyse(file: &Path) -> Record {
    let out = tracephase()
        .args(["analyze", "--format", "json"])
        .arg(file)
        .output()
        .unwrap();
    serde_json::from_slice(&out.stdout).unwrap()
}

/// The zero-crossing angle of the distorted capture, by bisection of its current waveform:
/// the voltage rises through zero at x = 0 and falls at π; the current's rising and falling
/// crossings, the falling one half a cycle back, averaged as unit vectors (the method's
/// definition, common practice).
fn expected_zero_crossing_deg() -> f64 {
    let th = LAG_DEG.to_radians();
    let g = |x: f64| (x - th).sin() + A3 * (3.0 * (x - th) + PHI3).sin();
    let root = |mut lo: f64, mut hi: f64| {
        assert!(g(lo) * g(hi) < 0.0, "the bracket must hold one crossing");
        for _ in 0..100 {
            let mid = 0.5 * (lo + hi);
            if (g(lo) < 0.0) == (g(mid) < 0.0) {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        0.5 * (lo + hi)
    };
    let rise = root(th - 0.6, th + 0.6);
    let fall = root(th + PI - 0.6, th + PI + 0.6) - PI;
    (rise.sin() + fall.sin())
        .atan2(rise.cos() + fall.cos())
        .to_degrees()
}

#[test]
fn a_difference_the_harmonics_explain_is_a_note_and_low_pf_a_finding() {
    let dir = TempDir::new().unwrap();
    let r = analyse(&distorted(dir.path()));
    let zc = expected_zero_crossing_deg();
    // the crossing detector times the distorted waveform's crossings: within 0.02° of bisection
    assert!(
        (r.phase_angle_deg.zero_crossing - zc).abs() < 0.02,
        "{} vs {zc}",
        r.phase_angle_deg.zero_crossing
    );
    assert!((r.phase_angle_deg.dft - LAG_DEG).abs() < 0.01, "{r:?}");
    assert!(
        (LAG_DEG - zc).abs() > 1.0,
        "the case must move the crossings"
    );
    assert_eq!(r.status, "ok", "{r:?}");
    assert!(r.warnings.is_empty() && r.warning_codes.is_empty(), "{r:?}");
    assert_eq!(r.finding_codes, ["pf-below-threshold"]);
    assert!(r.findings[0].contains("below the 0.90 threshold"), "{r:?}");
    assert_eq!(r.note_codes, ["methods-disagree"]);
    // the note states the shift the harmonics explain, to the 0.01° it prints
    let explained = format!("move the zero crossings by {:.2}°", LAG_DEG - zc);
    assert!(
        r.notes[0].contains(&explained),
        "{:?} lacks {explained}",
        r.notes
    );
}

#[test]
fn a_difference_the_harmonics_do_not_explain_stays_a_warning() {
    let dir = TempDir::new().unwrap();
    let r = analyse(&changing_load(dir.path()));
    // the fit's angle is that of the mean phasor of the two halves; the crossings' is the
    // circular mean of 20° and 70° (one crossing pair at the switch is off by at most 50°, which
    // moves the mean of 200 by under 0.1°)
    let (re, im) = HALVES.iter().fold((0.0, 0.0), |(re, im), (a, lag)| {
        let l = f64::to_radians(*lag);
        (re + a * l.cos(), im + a * l.sin())
    });
    let dft = im.atan2(re).to_degrees();
    assert!((r.phase_angle_deg.dft - dft).abs() < 0.01, "{r:?} vs {dft}");
    assert!(
        (r.phase_angle_deg.zero_crossing - 45.0).abs() < 0.1,
        "{r:?}"
    );
    assert_eq!(r.status, "warning", "{r:?}");
    assert!(
        r.warning_codes.iter().any(|c| c == "methods-disagree"),
        "{r:?}"
    );
    assert!(!r.note_codes.iter().any(|c| c == "methods-disagree"));
    let w = r.warnings.iter().find(|w| w.contains("DFT")).unwrap();
    assert!(w.contains("something else moves the zero crossings"), "{w}");
}

#[test]
fn the_table_and_csv_keep_warnings_findings_and_notes_apart() {
    let dir = TempDir::new().unwrap();
    let f = distorted(dir.path());
    let out = tracephase().arg("analyze").arg(&f).output().unwrap();
    let table = String::from_utf8(out.stdout).unwrap();
    let line = |head: &str| {
        table
            .lines()
            .find(|l| l.trim_start().starts_with(head))
            .unwrap_or_else(|| panic!("no {head} line in\n{table}"))
            .to_string()
    };
    assert_eq!(line("status").split_whitespace().nth(1), Some("ok"));
    assert!(line("warnings").ends_with("none"));
    assert!(line("findings").contains("below the 0.90 threshold"));
    assert!(line("notes").contains("which explains it"));

    let out = tracephase()
        .args(["analyze", "--format", "csv"])
        .arg(&f)
        .output()
        .unwrap();
    let mut rdr = csv::Reader::from_reader(&out.stdout[..]);
    let header = rdr.headers().unwrap().clone();
    let row = rdr.records().next().unwrap().unwrap();
    let cell = |k: &str| &row[header.iter().position(|h| h == k).unwrap()];
    assert_eq!(cell("status"), "ok");
    assert_eq!(cell("warning_codes"), "");
    assert_eq!(cell("finding_codes"), "pf-below-threshold");
    assert_eq!(cell("note_codes"), "methods-disagree");
}

#[test]
fn report_and_batch_status_come_from_warnings_only() {
    let dir = TempDir::new().unwrap();
    let (a, b) = (distorted(dir.path()), changing_load(dir.path()));
    let html = dir.path().join("r.html");
    tracephase()
        .arg("report")
        .args([&a, &b])
        .arg("-o")
        .arg(&html)
        .assert()
        .success();
    let html = std::fs::read_to_string(&html).unwrap();
    assert!(
        html.contains("2 files: 1 ok, 1 with warnings, 0 with errors."),
        "summary line"
    );
    assert!(html.contains("<h3>Findings</h3>") && html.contains("<h3>Notes</h3>"));

    let out = tracephase()
        .args(["batch", "--format", "json"])
        .arg(dir.path())
        .output()
        .unwrap();
    let rows: Vec<serde_json::Value> = String::from_utf8(out.stdout)
        .unwrap()
        .lines()
        .map(|l| serde_json::from_str(l).unwrap())
        .collect();
    assert_eq!(rows.len(), 2);
    let by = |name: &str| {
        rows.iter()
            .find(|r| r["file"].as_str().unwrap().ends_with(name))
            .unwrap()
    };
    let ok = by("distorted-lag40.csv");
    assert_eq!(ok["status"], "ok");
    assert_eq!(
        ok["message"], "",
        "findings and notes stay out of the message"
    );
    assert_eq!(ok["note_codes"][0], "methods-disagree");
    let warned = by("load-changes-midway.csv");
    assert_eq!(warned["status"], "warning");
    assert_eq!(
        warned["message"].as_str().unwrap(),
        warned["warnings"]
            .as_array()
            .unwrap()
            .iter()
            .map(|w| w.as_str().unwrap())
            .collect::<Vec<_>>()
            .join("; ")
    );
}

/// Writes `Time (s),Voltage (V),Current (A)` rows at 5 kS/s, 50 Hz: a 325 V peak sine (cut at
/// `clip` times its peak) written to `decimals` decimals, and 10 A lagging 30°. Invented data.
fn sine_capture(dir: &Path, name: &str, phase: f64, clip: f64, decimals: usize) -> PathBuf {
    let p = dir.join(name);
    let mut text = String::from("Time (s),Voltage (V),Current (A)\n");
    for k in 0..4000 {
        let t = k as f64 / 5000.0;
        let x = 2.0 * PI * 50.0 * t + phase;
        let v = (325.0 * x.sin()).clamp(-clip * 325.0, clip * 325.0);
        let i = 10.0 * (x - PI / 6.0).sin();
        text.push_str(&format!("{t:.4},{v:.decimals$},{i:.4}\n"));
    }
    std::fs::write(&p, text).unwrap();
    p
}

/// A voltage clipped at 90 % of its peak (references §8 scenario: the fundamental 3.7 % low,
/// 4.2 % THD added) once passed with status `ok`; a sine sampled in step with its cycle and
/// written to the millivolt, and 5 cycles of the demo record, were once called clipped
/// (their lowest or highest value repeated once a cycle).
#[test]
fn clipping_is_warned_of_when_there_and_only_then() {
    let dir = TempDir::new().unwrap();
    let clipped = analyse(&sine_capture(dir.path(), "clip90.csv", 0.0, 0.9, 2));
    assert_eq!(clipped.status, "warning");
    assert_eq!(clipped.warning_codes, ["clipping"], "{clipped:?}");
    let in_step = analyse(&sine_capture(dir.path(), "in-step.csv", 0.157, 1.0, 3));
    assert!(in_step.warning_codes.is_empty(), "{in_step:?}");
    let record = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("fixtures/records/demo-kestrel-hill-feeder-4-phase-a-fault.cfg");
    let out = tracephase()
        .args(["analyze", "--format", "json", "--from", "0", "--to", "0.1"])
        .arg(&record)
        .output()
        .unwrap();
    let five_cycles: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(five_cycles["status"], "ok", "{}", five_cycles["warnings"]);
}
