//! `analyze` and `report` exit with 1 when a verdict is `outside`, 0 when it is `consistent`
//! (the README's exit codes: 0 all fine, 1 a verdict `outside` or `fail`, 2 an input error).

use assert_cmd::Command;
use std::path::{Path, PathBuf};
use tempfile::TempDir;

fn tracephase() -> Command {
    Command::cargo_bin("tracephase").unwrap()
}

fn fixture(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("fixtures")
        .join(name)
}

/// The demo series R-L-C capture: 31.800° lagging (R = 50 Ω, L = 0.2 H, C = 100 µF at 50 Hz,
/// θ = atan((ωL − 1/(ωC))/R), the textbook series impedance, references §7).
const RLC: &str = "demo-lab-bench-series-rlc-semicolon-decimal-comma.csv";

/// A model of a plain resistor: 0° whatever its value, so the 31.8° capture is outside it by
/// far more than any uncertainty.
fn resistor_model(dir: &Path) -> PathBuf {
    let path = dir.join("resistor.toml");
    std::fs::write(
        &path,
        "name = \"plain resistor\"\nfrequency_hz = 50\nnetwork = \"R1\"\n\n\
         [parts.R1]\nvalue = \"50 ohm\"\ntolerance = \"±5%\"\n",
    )
    .unwrap();
    path
}

#[derive(serde::Deserialize)]
struct Expected {
    verdict: String,
}

#[derive(serde::Deserialize)]
struct Record {
    expected: Expected,
}

#[test]
fn analyze_exits_1_on_an_outside_verdict() {
    let dir = TempDir::new().unwrap();
    let out = tracephase()
        .arg("analyze")
        .arg(fixture(RLC))
        .arg("--expect")
        .arg(resistor_model(dir.path()))
        .args(["--format", "json"])
        .assert()
        .code(1)
        .get_output()
        .stdout
        .clone();
    let r: Record = serde_json::from_slice(&out).unwrap();
    assert_eq!(r.expected.verdict, "outside");
}

#[test]
fn analyze_exits_0_when_the_capture_matches_its_model() {
    // the demo's own model (31.8° with its parts' tolerances) is consistent with the capture:
    // the exit code follows the verdict, not merely the presence of a model
    let out = tracephase()
        .arg("analyze")
        .arg(fixture(RLC))
        .arg("--expect")
        .arg(fixture("demo-lab-bench-series-rlc.toml"))
        .args(["--format", "json"])
        .assert()
        .code(0)
        .get_output()
        .stdout
        .clone();
    let r: Record = serde_json::from_slice(&out).unwrap();
    assert_eq!(r.expected.verdict, "consistent");
}

#[test]
fn report_exits_1_on_an_outside_verdict_and_still_writes_the_page() {
    let dir = TempDir::new().unwrap();
    let page = dir.path().join("r.html");
    tracephase()
        .arg("report")
        .arg(fixture(RLC))
        .arg("--expect")
        .arg(resistor_model(dir.path()))
        .args(["--draws", "1000"])
        .arg("-o")
        .arg(&page)
        .assert()
        .code(1);
    let html = std::fs::read_to_string(&page).unwrap();
    assert!(html.contains("<span class=\"badge outside\">outside</span>"));
}
