//! `batch` stopped part-way: Ctrl-C (SIGINT) winds it down and says how to resume, the report's
//! spool file never outlives a run, `--resume` refuses a summary it would have to start afresh,
//! and a resumed run's report holds every capture of the summary.
//!
//! Captures are invented test data (a 230 V, 50 Hz workshop supply), truth in the call.

use assert_cmd::Command;
use std::path::Path;
use std::process::Stdio;
use std::time::{Duration, Instant};
use tempfile::TempDir;
use tracephase::synth::{Spec, Waveform, synthesize};

fn tracephase() -> Command {
    Command::cargo_bin("tracephase").unwrap()
}

/// Writes a capture of 230 V and `amps` A lagging `lag` degrees, `samples` long at 10 kS/s.
fn capture(path: &Path, amps: f64, lag: f64, samples: usize) {
    let rate = 10_000.0;
    let spec = Spec::clean(
        rate,
        50.0,
        samples,
        Waveform::sine(230.0, 0.0),
        Waveform::sine(amps, -lag),
    );
    let (v, i) = synthesize(&spec);
    let mut text = String::from("t,v,i\n");
    for (k, (a, b)) in v.iter().zip(&i).enumerate() {
        text.push_str(&format!("{:.6},{a:.4},{b:.6}\n", k as f64 / rate));
    }
    std::fs::create_dir_all(path.parent().unwrap()).unwrap();
    std::fs::write(path, text).unwrap();
}

/// A folder of `n` captures, long enough that a one-job batch over it is still running when the
/// test interrupts it (the test waits for rows, never for a time).
fn visit(dir: &Path, n: usize) {
    for k in 0..n {
        capture(
            &dir.join(format!("visit/c{k:03}.csv")),
            1.0 + k as f64 / 10.0,
            (k % 70) as f64,
            40_000,
        );
    }
}

/// Hidden files beside the report (spool files are `.REPORT.PID.sections`).
fn hidden(dir: &Path) -> Vec<String> {
    std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.starts_with('.'))
        .collect()
}

fn sections(report: &Path) -> usize {
    std::fs::read_to_string(report)
        .unwrap()
        .matches("<section id=\"capture-")
        .count()
}

#[test]
fn ctrl_c_keeps_the_rows_says_how_to_resume_and_removes_the_spool() {
    const N: usize = 120;
    let dir = TempDir::new().unwrap();
    visit(dir.path(), N);
    let child = std::process::Command::new(assert_cmd::cargo::cargo_bin("tracephase"))
        .current_dir(dir.path())
        .args([
            "batch",
            "visit",
            "--jobs",
            "1",
            "--out",
            "part.csv",
            "--report",
            "visit.html",
        ])
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    // Wait (bounded) until some rows are written, then press Ctrl-C.
    let part = dir.path().join("part.csv");
    let t0 = Instant::now();
    while std::fs::read_to_string(&part).map_or(0, |t| t.lines().count()) <= 5
        && t0.elapsed() < Duration::from_secs(60)
    {
        std::thread::sleep(Duration::from_millis(5));
    }
    let spooling = hidden(dir.path());
    let sent = std::process::Command::new("kill")
        .args(["-INT", &child.id().to_string()])
        .status()
        .unwrap();
    assert!(sent.success());
    let out = child.wait_with_output().unwrap();
    let err = String::from_utf8(out.stderr).unwrap();
    assert_eq!(
        out.status.code(),
        Some(130),
        "the run was not interrupted: {err}"
    );
    // while it ran, the spool file sat beside the report; now it is gone, and no report
    assert_eq!(spooling.len(), 1, "{spooling:?}");
    assert!(spooling[0].starts_with(".visit.html.") && spooling[0].ends_with(".sections"));
    assert!(hidden(dir.path()).is_empty(), "{:?}", hidden(dir.path()));
    assert!(!dir.path().join("visit.html").exists());
    // what was kept, and the command to finish
    assert!(
        err.contains("interrupted: finishing the captures in hand"),
        "{err}"
    );
    let text = std::fs::read_to_string(&part).unwrap();
    let rows = text.lines().count() - 1;
    assert!((5..N).contains(&rows), "{rows} rows");
    assert!(
        err.contains(&format!(
            "stopped: {rows} of {N} captures done, {rows} rows written; {} not analysed",
            N - rows
        )),
        "{err}"
    );
    let resume = "tracephase batch visit --jobs 1 --out part.csv --report visit.html --resume";
    assert!(err.contains(&format!("to finish, run: {resume}")), "{err}");
    assert!(err.contains("the report was not written"), "{err}");

    // The command as printed finishes the run: the summary equals an uninterrupted run's, and
    // the report holds every capture, the kept ones read again from their files.
    let err = String::from_utf8(
        tracephase()
            .current_dir(dir.path())
            .args(resume.split(' ').skip(1))
            .assert()
            .success()
            .get_output()
            .stderr
            .clone(),
    )
    .unwrap();
    assert!(
        err.contains(&format!("({rows} kept from the earlier summary)")),
        "{err}"
    );
    assert_eq!(sections(&dir.path().join("visit.html")), N);
    tracephase()
        .current_dir(dir.path())
        .args(["batch", "visit", "--jobs", "2", "--out", "full.csv"])
        .assert()
        .success();
    assert_eq!(
        std::fs::read_to_string(dir.path().join("full.csv")).unwrap(),
        std::fs::read_to_string(&part).unwrap()
    );
    assert!(hidden(dir.path()).is_empty());
}

/// A run killed outright (SIGKILL, a power cut) cannot clean up: its spool file stays. The next
/// run with the same report removes it and says so; a spool file of a process still running is
/// left alone.
#[test]
fn a_stale_spool_of_a_killed_run_is_removed_by_the_next_run() {
    let dir = TempDir::new().unwrap();
    visit(dir.path(), 2);
    // no process has this id (Linux ids stay below 2^22)
    let stale = dir.path().join(".visit.html.4000000000.sections");
    std::fs::write(&stale, "<section>half a capture").unwrap();
    // process 1 is always running
    let alive = dir.path().join(".visit.html.1.sections");
    std::fs::write(&alive, "<section>").unwrap();
    let err = String::from_utf8(
        tracephase()
            .current_dir(dir.path())
            .args(["batch", "visit", "--out", "s.csv", "--report", "visit.html"])
            .assert()
            .success()
            .get_output()
            .stderr
            .clone(),
    )
    .unwrap();
    assert!(
        err.contains("note: removed ") && err.contains(".visit.html.4000000000.sections"),
        "{err}"
    );
    assert!(!stale.exists());
    if Path::new("/proc/1").exists() {
        assert!(alive.exists());
    }
    assert_eq!(sections(&dir.path().join("visit.html")), 2);
}

/// `--resume` with another `--format` than the summary's would start it afresh and lose its
/// rows: refused, the summary untouched. So is a CSV summary with other columns.
#[test]
fn resume_with_another_format_is_refused_and_the_summary_kept() {
    let dir = TempDir::new().unwrap();
    visit(dir.path(), 2);
    let run = |args: &[&str]| {
        tracephase()
            .current_dir(dir.path())
            .args(["batch", "visit"])
            .args(args)
            .output()
            .unwrap()
    };
    assert!(
        run(&["--format", "json", "--out", "s.jsonl"])
            .status
            .success()
    );
    let before = std::fs::read(dir.path().join("s.jsonl")).unwrap();
    let out = run(&["--out", "s.jsonl", "--resume"]);
    assert_eq!(out.status.code(), Some(2));
    assert_eq!(
        String::from_utf8(out.stderr).unwrap().trim(),
        "error: s.jsonl: this summary is in --format json, not csv: resume with --format json, \
         or write to another --out"
    );
    assert_eq!(std::fs::read(dir.path().join("s.jsonl")).unwrap(), before);

    assert!(run(&["--out", "s.csv"]).status.success());
    let text = std::fs::read_to_string(dir.path().join("s.csv")).unwrap();
    let other = text.replacen("file,status", "file,state", 1);
    std::fs::write(dir.path().join("s.csv"), &other).unwrap();
    let out = run(&["--out", "s.csv", "--resume"]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8(out.stderr).unwrap();
    assert!(
        err.contains("this summary's columns are not this version's"),
        "{err}"
    );
    assert_eq!(
        std::fs::read_to_string(dir.path().join("s.csv")).unwrap(),
        other
    );
    // and the right format resumes, keeping both rows
    let out = run(&["--format", "json", "--out", "s.jsonl", "--resume"]);
    assert!(out.status.success());
    assert!(
        String::from_utf8(out.stderr)
            .unwrap()
            .contains("(2 kept from the earlier summary)")
    );
}
