//! Inputs a fault probe found misbehaving: each is refused with a clear one-line error before
//! any allocation its size would need, and never panics or aborts.

use assert_cmd::Command;
use std::fmt::Write as _;
use tempfile::TempDir;

fn tracephase() -> Command {
    Command::cargo_bin("tracephase").unwrap()
}

/// Runs and returns (exit code, stderr).
fn run(args: &[&str]) -> (Option<i32>, String) {
    let out = tracephase().args(args).output().unwrap();
    (
        out.status.code(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

const BENCH: &str = "name = \"bench\"\nfrequency_hz = 50\nnetwork = \"R1 + L1\"\n\
    [parts.R1]\nvalue = \"100 ohm\"\ntolerance = \"5 %\"\n\
    [parts.L1]\nvalue = \"0.5 H\"\ntolerance = \"10 %\"\n";

#[test]
fn a_huge_draw_count_is_refused_before_it_is_allocated() {
    let dir = TempDir::new().unwrap();
    let model = dir.path().join("bench.toml");
    std::fs::write(&model, BENCH).unwrap();
    let m = model.to_str().unwrap();
    // 1e9 draws aborted the process reserving 8 GB; 2^64 − 1 panicked on the capacity
    for n in ["1000000000", "18446744073709551615"] {
        let (code, err) = run(&["expect", m, "--draws", n]);
        assert_eq!(code, Some(2), "{n}: {err}");
        assert!(
            err.starts_with("error: --draws must be from 1 to 10000000"),
            "{err}"
        );
        assert_eq!(err.lines().count(), 1, "{err}");
    }
    // the bound itself is allowed and a small count works
    let (code, err) = run(&["expect", m, "--draws", "1000"]);
    assert_eq!(code, Some(0), "{err}");
}

#[test]
fn a_model_with_thousands_of_parts_is_refused_with_its_line() {
    // 10 000 parts took 149 s in the worst-case search (it grows with the square of the count)
    let dir = TempDir::new().unwrap();
    let model = dir.path().join("grid.toml");
    let n = 1000;
    let mut text = String::from("name = \"grid\"\nfrequency_hz = 50\nnetwork = \"");
    text.push_str(
        &(0..n)
            .map(|k| format!("R{k}"))
            .collect::<Vec<_>>()
            .join(" + "),
    );
    text.push_str("\"\n");
    for k in 0..n {
        write!(
            text,
            "[parts.R{k}]\nvalue = \"1 ohm\"\ntolerance = \"1 %\"\n"
        )
        .unwrap();
    }
    std::fs::write(&model, text).unwrap();
    let (code, err) = run(&["expect", model.to_str().unwrap()]);
    assert_eq!(code, Some(2), "{err}");
    assert!(err.contains("grid.toml: line 4"), "{err}");
    assert!(
        err.contains("1000 parts: a circuit model may hold at most 200"),
        "{err}"
    );
}

#[test]
fn a_value_too_large_for_a_number_is_not_called_not_a_number() {
    let dir = TempDir::new().unwrap();
    let model = dir.path().join("huge.toml");
    std::fs::write(&model, BENCH.replace("0.5 H", "1e300 GH")).unwrap();
    let (code, err) = run(&["expect", model.to_str().unwrap()]);
    assert_eq!(code, Some(2), "{err}");
    assert!(!err.contains("is not a number"), "{err}");
    assert!(
        err.contains("'1e300 GH': the value is beyond the range of numbers"),
        "{err}"
    );
}
