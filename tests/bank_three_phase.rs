//! `tracephase bank` on three-phase captures synthesised here with known truth: an invented
//! bakery's sub-board whose 3-phase correction bank is switched out and in, each phase's
//! capacitance set in the test. Expectations are derived in the test from the inputs:
//! `Q = V²·ωC` across a capacitance and capacitors in series `C₁C₂/(C₁ + C₂)` (textbook), the
//! rated star capacitance `Q_rated/(ω·V_rated²)`, IEC 60831-1's band and its 1.08 limit on the
//! line-terminal capacitance ratio (both from memory).
//!
//! The JSON is read into this file's own structs, so renaming a key fails here.

use assert_cmd::Command;
use serde::Deserialize;
use std::f64::consts::PI;
use std::fmt::Write as _;
use std::path::{Path, PathBuf};
use tempfile::TempDir;
use tracephase::synth::{Spec, Waveform, synthesize};

const F: f64 = 50.0;
const RATE: f64 = 10_000.0;
/// 20 cycles at 50 Hz.
const SAMPLES: usize = 4_000;

#[derive(Debug, Deserialize)]
struct BankJson {
    delivered_kvar: f64,
    expected_kvar: f64,
    verdict: String,
    phases: Phases,
    weak_phases: Vec<String>,
    line_terminal_capacitance_uf: Terminals,
    line_terminal_ratio: Option<f64>,
    line_terminal_ratio_limit: f64,
    line_terminal_ratio_within_limit: Option<bool>,
    capacitance_basis: String,
    warnings: Vec<String>,
}

#[derive(Debug, Deserialize)]
struct Phases {
    a: Phase,
    b: Phase,
    c: Phase,
}

#[derive(Debug, Deserialize)]
struct Phase {
    delivered_kvar: f64,
    delivered_uncertainty_kvar: f64,
    capacitance_uf: f64,
    capacitance_uncertainty_uf: f64,
    rated_capacitance_uf: f64,
    ratio: f64,
    verdict: String,
    weak: bool,
}

#[derive(Debug, Deserialize)]
struct Terminals {
    ab: f64,
    bc: f64,
    ca: f64,
}

/// One phase: its voltage (RMS, angle) and load (P, Q per phase).
struct PhaseSpec {
    v_rms: f64,
    shift_deg: f64,
    p_w: f64,
    q_var: f64,
}

/// The sub-board: slightly unequal phase voltages and loads.
const BOARD: [PhaseSpec; 3] = [
    PhaseSpec {
        v_rms: 231.0,
        shift_deg: 0.0,
        p_w: 14_000.0,
        q_var: 11_000.0,
    },
    PhaseSpec {
        v_rms: 228.5,
        shift_deg: -120.0,
        p_w: 15_500.0,
        q_var: 12_000.0,
    },
    PhaseSpec {
        v_rms: 232.0,
        shift_deg: 120.0,
        p_w: 13_000.0,
        q_var: 10_500.0,
    },
];

/// Writes a `Time (s),Va,Vb,Vc,Ia,Ib,Ic` capture of the board with capacitances `c_farad` per
/// phase (star, to the neutral; 0 = switched out) and returns its path.
fn write_board(dir: &Path, name: &str, c_farad: [f64; 3], seed: u64) -> PathBuf {
    let mut cols: Vec<Vec<f64>> = vec![Vec::new(); 6];
    for (k, ph) in BOARD.iter().enumerate() {
        let v = Waveform::sine(ph.v_rms, ph.shift_deg);
        // the load's current plus the capacitor's, as phasors: I = (P − jQ)/V* ... written as
        // magnitude and angle: |I| = √(P² + Q²)/V at θ = −atan(Q/P) from the voltage, and the
        // capacitor's ωC·V leading by 90°
        let q_total = ph.q_var - 2.0 * PI * F * c_farad[k] * ph.v_rms.powi(2);
        let i = Waveform::sine(
            ph.p_w.hypot(q_total) / ph.v_rms,
            ph.shift_deg - q_total.atan2(ph.p_w).to_degrees(),
        );
        let mut s = Spec::clean(RATE, F, SAMPLES, v, i);
        s.start_s = 0.0017;
        s.snr_db = Some(70.0);
        s.seed = seed + k as u64;
        let (sv, si) = synthesize(&s);
        cols[k] = sv;
        cols[k + 3] = si;
    }
    let mut text = String::from("Time (s),Va (V),Vb (V),Vc (V),Ia (A),Ib (A),Ic (A)\n");
    for n in 0..SAMPLES {
        write!(text, "{:.7}", n as f64 / RATE).unwrap();
        for c in &cols {
            write!(text, ",{:.5}", c[n]).unwrap();
        }
        text.push('\n');
    }
    let path = dir.join(name);
    std::fs::write(&path, text).unwrap();
    path
}

fn bank(before: &Path, after: &Path, plate: &[&str]) -> std::process::Output {
    Command::cargo_bin("tracephase")
        .unwrap()
        .arg("bank")
        .arg("--before")
        .arg(before)
        .arg("--after")
        .arg(after)
        .args(plate)
        .output()
        .unwrap()
}

fn bank_json(before: &Path, after: &Path, plate: &[&str]) -> (i32, BankJson) {
    let mut args = plate.to_vec();
    args.extend(["--format", "json"]);
    let out = bank(before, after, &args);
    let r = serde_json::from_slice(&out.stdout).unwrap_or_else(|e| {
        panic!(
            "{e}: {}{}",
            String::from_utf8_lossy(&out.stdout),
            String::from_utf8_lossy(&out.stderr)
        )
    });
    (out.status.code().unwrap(), r)
}

/// A 45 kvar, 400 V bank: each of three star capacitors holds Q/(ω·V²) = 45 000/(2π·50·400²)
/// = 895.2 µF (textbook Q = V²·ωC with a third of Q at V/√3).
const PLATE: [&str; 10] = [
    "--rated-kvar",
    "45",
    "--rated-voltage",
    "400",
    "--rated-frequency",
    "50",
    "--three-phase",
    "--standard",
    "iec-60831",
    "--steps=1",
];

fn rated_star_farad() -> f64 {
    45_000.0 / (2.0 * PI * F * 400.0f64.powi(2))
}

/// Phase c lost a quarter of its cans: its capacitance is 3/4 of rated, a and b are 1 % over.
/// Each phase's capacitance is found to 0.3 % (its delivered kvar is `ωC·V²` at the phase's
/// own voltage), phase c alone is named weak, and the line-terminal ratio is the series formula
/// of the true capacitances, beyond IEC 60831-1's 1.08.
#[test]
fn a_bank_with_a_weak_phase_names_it_and_gives_each_phases_capacitance() {
    let dir = TempDir::new().unwrap();
    let c = rated_star_farad();
    let truth = [1.01 * c, 1.01 * c, 0.75 * c];
    let before = write_board(dir.path(), "off.csv", [0.0; 3], 11);
    let after = write_board(dir.path(), "on.csv", truth, 21);
    let (code, r) = bank_json(&before, &after, &PLATE);
    assert_eq!(code, 1, "a failed bank exits 1: {r:?}");
    assert_eq!(r.verdict, "fail");
    assert_eq!(r.weak_phases, vec!["c"]);
    assert!(r.capacitance_basis.contains("star equivalent"));
    let phases = [&r.phases.a, &r.phases.b, &r.phases.c];
    let mut delivered_sum = 0.0;
    for (k, p) in phases.iter().enumerate() {
        let want_uf = 1e6 * truth[k];
        assert!(
            (p.capacitance_uf / want_uf - 1.0).abs() < 0.003,
            "phase {k}: {} µF against {want_uf} µF",
            p.capacitance_uf
        );
        let want_kvar = 2.0 * PI * F * truth[k] * BOARD[k].v_rms.powi(2) / 1000.0;
        assert!(
            (p.delivered_kvar / want_kvar - 1.0).abs() < 0.003,
            "phase {k}: {} kvar against {want_kvar}",
            p.delivered_kvar
        );
        assert!((p.rated_capacitance_uf - 1e6 * c).abs() < 1e-6);
        assert!((p.ratio - p.capacitance_uf / p.rated_capacitance_uf).abs() < 1e-9);
        // U of C is U of the ratio times the rated C (the ratio C/C_rated has the same budget)
        assert!(p.capacitance_uncertainty_uf > 0.0);
        assert!(
            (p.capacitance_uncertainty_uf / p.capacitance_uf
                - p.delivered_uncertainty_kvar / p.delivered_kvar)
                .abs()
                < 0.01,
            "relative U of C and of its kvar differ by more than the voltage and frequency terms"
        );
        delivered_sum += p.delivered_kvar;
    }
    assert_eq!(r.phases.a.verdict, "pass");
    assert_eq!(r.phases.b.verdict, "pass");
    assert_eq!(r.phases.c.verdict, "fail");
    assert!(!r.phases.a.weak && !r.phases.b.weak && r.phases.c.weak);
    // the bank's delivered kvar is the sum of the phases'
    assert!((r.delivered_kvar - delivered_sum).abs() < 1e-9);
    // expected: 45 kvar × (V_LL/400)² with the quadratic mean of the phase voltages
    let v2: f64 = BOARD.iter().map(|p| p.v_rms.powi(2)).sum::<f64>();
    let want_expected = 45.0 * v2 / 400.0f64.powi(2);
    assert!((r.expected_kvar / want_expected - 1.0).abs() < 0.002);
    // capacitors in series (textbook): C_ab = C_a·C_b/(C_a + C_b)
    let series = |x: f64, y: f64| 1e6 * x * y / (x + y);
    let t = &r.line_terminal_capacitance_uf;
    for (got, want) in [
        (t.ab, series(truth[0], truth[1])),
        (t.bc, series(truth[1], truth[2])),
        (t.ca, series(truth[2], truth[0])),
    ] {
        assert!((got / want - 1.0).abs() < 0.003, "{got} against {want}");
    }
    let want_ratio = series(truth[0], truth[1]) / series(truth[1], truth[2]);
    assert!((r.line_terminal_ratio.unwrap() / want_ratio - 1.0).abs() < 0.003);
    assert_eq!(r.line_terminal_ratio_limit, 1.08);
    assert_eq!(r.line_terminal_ratio_within_limit, Some(false));
    assert!(r.warnings.iter().any(|w| w.starts_with("phase c is weak")));
}

/// A healthy bank: every phase within IEC 60831-1's −5 %/+10 % (from memory), no weak phase,
/// the line-terminal ratio within 1.08.
#[test]
fn a_healthy_three_phase_bank_passes_on_every_phase() {
    let dir = TempDir::new().unwrap();
    let c = rated_star_farad();
    let truth = [1.02 * c, 1.03 * c, 1.015 * c];
    let before = write_board(dir.path(), "off.csv", [0.0; 3], 31);
    let after = write_board(dir.path(), "on.csv", truth, 41);
    let (code, r) = bank_json(&before, &after, &PLATE);
    assert_eq!(r.verdict, "pass", "{r:?}");
    assert_eq!(code, 0);
    assert!(r.weak_phases.is_empty());
    assert_eq!(r.line_terminal_ratio_within_limit, Some(true));
    for p in [&r.phases.a, &r.phases.b, &r.phases.c] {
        assert_eq!(p.verdict, "pass");
    }
}

/// A three-phase capture against a single-phase nameplate is refused with the way to say it,
/// not checked as if one phase were the bank.
#[test]
fn three_phase_captures_with_a_single_phase_nameplate_are_refused() {
    let dir = TempDir::new().unwrap();
    let before = write_board(dir.path(), "off.csv", [0.0; 3], 51);
    let after = write_board(dir.path(), "on.csv", [rated_star_farad(); 3], 61);
    let plate = [
        "--rated-kvar",
        "45",
        "--rated-voltage",
        "400",
        "--rated-frequency",
        "50",
        "--steps=1",
    ];
    let out = bank(&before, &after, &plate);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("off.csv"), "{err}");
    assert!(err.contains("--three-phase"), "{err}");
    // One line in plain words: no run of spaces left inside the sentence.
    assert_eq!(err.lines().count(), 1, "{err}");
    assert!(!err.contains("  "), "{err}");
    assert!(
        err.contains("say three_phase = true in the nameplate (or --three-phase), or choose one phase with --system single --voltage COL --current COL"),
        "{err}"
    );
}

/// A three-phase before-capture and a single-phase after-capture are refused, naming both.
#[test]
fn captures_of_different_systems_are_refused() {
    let dir = TempDir::new().unwrap();
    let before = write_board(dir.path(), "off.csv", [0.0; 3], 71);
    let three = write_board(dir.path(), "on3.csv", [rated_star_farad(); 3], 81);
    // phase a of the after-capture alone, as a single-phase scope would write it
    let text = std::fs::read_to_string(&three).unwrap();
    let mut single = String::from("Time (s),Voltage (V),Current (A)\n");
    for line in text.lines().skip(1) {
        let f: Vec<&str> = line.split(',').collect();
        writeln!(single, "{},{},{}", f[0], f[1], f[4]).unwrap();
    }
    let after = dir.path().join("on1.csv");
    std::fs::write(&after, single).unwrap();
    let out = bank(&before, &after, &PLATE);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("off.csv") && err.contains("on1.csv"), "{err}");
    assert!(err.contains("capture both the same way"), "{err}");
}

/// One phase chosen from three-phase captures is checked as one phase of a balanced bank, as
/// a single-phase capture is: powers × 3, no per-phase figures.
#[test]
fn one_phase_chosen_from_three_phase_captures_is_checked_as_one_phase() {
    let dir = TempDir::new().unwrap();
    let before = write_board(dir.path(), "off.csv", [0.0; 3], 91);
    let after = write_board(dir.path(), "on.csv", [rated_star_farad(); 3], 101);
    let mut args = PLATE.to_vec();
    args.extend(["--system", "single", "--voltage", "Va", "--current", "Ia"]);
    let out = bank(&before, &after, &args);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(
        text.contains("one phase of a balanced three-phase bank"),
        "{text}"
    );
    assert!(!text.contains("weak phases"), "{text}");
}

/// The HTML report of a three-phase bank check has a row per phase with its verdict, and the
/// line-terminal balance.
#[test]
fn the_report_shows_each_phase_and_the_balance() {
    let dir = TempDir::new().unwrap();
    let c = rated_star_farad();
    let before = write_board(dir.path(), "off.csv", [0.0; 3], 111);
    let after = write_board(dir.path(), "on.csv", [c, 0.7 * c, c], 121);
    let page = dir.path().join("bank.html");
    let mut args = PLATE.to_vec();
    let page_arg = page.to_string_lossy().into_owned();
    args.extend(["--report", &page_arg]);
    let out = bank(&before, &after, &args);
    assert_eq!(out.status.code(), Some(1));
    let html = std::fs::read_to_string(&page).unwrap();
    let row = |name: &str| {
        let start = html
            .find(&format!("<tr><td>{name}</td>"))
            .unwrap_or_else(|| panic!("no row for {name}"));
        html[start..start + html[start..].find("</tr>").unwrap()].to_string()
    };
    assert!(
        row("phase a").ends_with(": pass</td>"),
        "{}",
        row("phase a")
    );
    assert!(row("phase b").contains("fail, weak"), "{}", row("phase b"));
    assert!(row("line-terminal capacitance").contains("weak phases: b"));
}
