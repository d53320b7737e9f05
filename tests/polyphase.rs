//! Polyphase dips and swells of three-phase captures: IEC 61000-4-30 class A (from memory; no
//! published text of the standard at hand) aggregates a polyphase dip from the first channel's
//! Urms(1/2) below the dip threshold to the first instant every channel is at or above the
//! threshold plus the hysteresis, its residual the lowest Urms(1/2) on any channel. (That a
//! three-phase dip is a reduction in at least one of the phase or line voltages: M. H. J.
//! Bollen, IEEE Trans. Power Delivery 18(4), 2003, §I.) The captures are written as CSV files
//! and loaded as a user's would be.

use assert_cmd::Command;
use serde::Deserialize;
use std::f64::consts::{PI, SQRT_2};
use std::path::{Path, PathBuf};
use tempfile::TempDir;
use tracephase::capture::{self, LoadOptions};
use tracephase::quantity::events::{Event, EventKind};
use tracephase::{Analysis, Settings, analyze};

const RATE: f64 = 10_000.0;
const F: f64 = 50.0;
const CYCLE_S: f64 = 1.0 / F;
/// Where a dip's start and end can be placed. Urms(1/2) is the RMS over one cycle, a value
/// every half cycle, and an event's times are the starts of those windows (the module's
/// method). The first window below the threshold starts within the cycle before the true
/// instant (a window starting at it is wholly in the dip); the first window back above the
/// hysteresis starts within the cycle before the recovery to half a cycle after it (the next
/// window on the half-cycle grid is wholly recovered). So: start within [−1, 0] cycle, end
/// within [−1, +½] cycle.
const START_EARLY_S: f64 = CYCLE_S;
const END_EARLY_S: f64 = CYCLE_S;
const END_LATE_S: f64 = CYCLE_S / 2.0;

/// A channel: its name, RMS, angle (degrees) and the spans (from, to, share of the RMS) where
/// its RMS is scaled.
struct Col {
    name: &'static str,
    rms: f64,
    deg: f64,
    dips: Vec<(f64, f64, f64)>,
}

fn col(name: &'static str, rms: f64, deg: f64, dips: &[(f64, f64, f64)]) -> Col {
    Col {
        name,
        rms,
        deg,
        dips: dips.to_vec(),
    }
}

/// Writes `seconds` of the columns at [`RATE`].
fn write_csv(dir: &Path, file: &str, cols: &[Col], seconds: f64) -> PathBuf {
    let n = (seconds * RATE).round() as usize;
    let mut text = String::from("time");
    for c in cols {
        text.push(',');
        text.push_str(c.name);
    }
    text.push('\n');
    for k in 0..n {
        let t = k as f64 / RATE;
        text.push_str(&format!("{t:.7}"));
        for c in cols {
            let share = c
                .dips
                .iter()
                .find(|(a, b, _)| t >= *a && t < *b)
                .map_or(1.0, |d| d.2);
            let x = share * c.rms * SQRT_2 * (2.0 * PI * F * t + c.deg.to_radians()).cos();
            text.push_str(&format!(",{x:.6}"));
        }
        text.push('\n');
    }
    let path = dir.join(file);
    std::fs::write(&path, text).unwrap();
    path
}

/// A 4-wire 230 V set with 10 A lagging 30° per phase; `dips` per phase a, b, c.
fn four_wire(dips: [&[(f64, f64, f64)]; 3]) -> Vec<Col> {
    vec![
        col("Va", 230.0, 0.0, dips[0]),
        col("Vb", 230.0, -120.0, dips[1]),
        col("Vc", 230.0, 120.0, dips[2]),
        col("Ia", 10.0, -30.0, &[]),
        col("Ib", 10.0, -150.0, &[]),
        col("Ic", 10.0, 90.0, &[]),
    ]
}

fn analysed(path: &Path, declared: Option<f64>) -> Analysis {
    let c = capture::load(path, &LoadOptions::default()).unwrap_or_else(|e| panic!("{e}"));
    let settings = Settings {
        declared_voltage_v: declared,
        ..Settings::default()
    };
    analyze(c, &settings).unwrap_or_else(|e| panic!("{e}"))
}

fn of_kind(a: &Analysis, kind: EventKind) -> Vec<Event> {
    a.events
        .iter()
        .filter(|e| e.kind == kind)
        .copied()
        .collect()
}

/// Holds a polyphase event to its true start and end, residual (share of `reference`) and
/// channels.
fn check(e: &Event, from: f64, to: f64, residual: f64, reference: f64, phases: &[&str]) {
    assert!(
        e.time_s >= from - START_EARLY_S - 1e-9 && e.time_s <= from + 1e-9,
        "start {} for {from}",
        e.time_s
    );
    let end = e.time_s + e.duration_s.expect("an end");
    assert!(
        end >= to - END_EARLY_S - 1e-9 && end <= to + END_LATE_S + 1e-9,
        "end {end} for {to}"
    );
    assert_eq!(e.reference_v, Some(reference));
    // the residual is the lowest one-cycle RMS: a whole window inside the dip is found
    let extreme = e.extreme.unwrap();
    assert!(
        (extreme - residual * reference).abs() < 0.005 * reference,
        "residual {extreme} for {}",
        residual * reference
    );
    assert_eq!(e.phases.unwrap().names(), phases);
}

/// Phase a dips to 70 % from 0.20 s to 0.30 s, phase c to 80 % from 0.25 s to 0.40 s: one
/// polyphase dip from about 0.20 s (a falls) to about 0.40 s (c recovers), residual 70 % (161 V)
/// on phases a and c, against the declared 230 V and against the record's medians (230 V);
/// each phase's own dips are still listed.
#[test]
fn overlapping_dips_on_two_phases_are_one_polyphase_dip() {
    let dir = TempDir::new().unwrap();
    let cols = four_wire([&[(0.20, 0.30, 0.70)], &[], &[(0.25, 0.40, 0.80)]]);
    let path = write_csv(dir.path(), "dips-a-and-c.csv", &cols, 1.0);
    for declared in [Some(230.0), None] {
        let a = analysed(&path, declared);
        let poly = of_kind(&a, EventKind::PolyphaseDip);
        assert_eq!(poly.len(), 1, "{declared:?}: {:?}", a.events);
        let reference = declared.unwrap_or(poly[0].reference_v.unwrap());
        assert!((reference - 230.0).abs() < 0.01, "{reference}");
        check(&poly[0], 0.20, 0.40, 0.70, reference, &["a", "c"]);
        println!(
            "polyphase dip {:.4} s for {:.4} s, residual {:.2} V",
            poly[0].time_s,
            poly[0].duration_s.unwrap(),
            poly[0].extreme.unwrap()
        );
        let own: Vec<_> = of_kind(&a, EventKind::Dip)
            .iter()
            .map(|e| e.phase.unwrap())
            .collect();
        assert_eq!(own, ["a", "c"]);
        assert!(of_kind(&a, EventKind::PolyphaseSwell).is_empty());
    }
}

/// Dips on two phases that do not overlap (a from 0.20 s to 0.30 s, c from 0.50 s to 0.60 s,
/// all channels back in between) are two polyphase dips, one phase each.
#[test]
fn dips_that_do_not_overlap_are_two_polyphase_dips() {
    let dir = TempDir::new().unwrap();
    let cols = four_wire([&[(0.20, 0.30, 0.70)], &[], &[(0.50, 0.60, 0.80)]]);
    let path = write_csv(dir.path(), "dips-apart.csv", &cols, 1.0);
    let a = analysed(&path, Some(230.0));
    let poly = of_kind(&a, EventKind::PolyphaseDip);
    assert_eq!(poly.len(), 2, "{:?}", a.events);
    check(&poly[0], 0.20, 0.30, 0.70, 230.0, &["a"]);
    check(&poly[1], 0.50, 0.60, 0.80, 230.0, &["c"]);
}

/// A swell on one phase and a dip on another at once (as a fault to earth can give) are a
/// polyphase dip and a polyphase swell, each by its own rule: the swell's magnitude the
/// highest value.
#[test]
fn a_swell_during_a_dip_is_its_own_polyphase_swell() {
    let dir = TempDir::new().unwrap();
    let cols = four_wire([&[(0.20, 0.30, 0.70)], &[(0.20, 0.30, 1.20)], &[]]);
    let path = write_csv(dir.path(), "dip-and-swell.csv", &cols, 1.0);
    let a = analysed(&path, Some(230.0));
    let dips = of_kind(&a, EventKind::PolyphaseDip);
    let swells = of_kind(&a, EventKind::PolyphaseSwell);
    assert_eq!((dips.len(), swells.len()), (1, 1), "{:?}", a.events);
    check(&dips[0], 0.20, 0.30, 0.70, 230.0, &["a"]);
    check(&swells[0], 0.20, 0.30, 1.20, 230.0, &["b"]);
}

/// A single-phase capture has no polyphase events: its one channel's dip is the standard's
/// dip already (our choice: not listed twice).
#[test]
fn a_single_phase_capture_has_no_polyphase_events() {
    let dir = TempDir::new().unwrap();
    let cols = vec![
        col("V", 230.0, 0.0, &[(0.20, 0.30, 0.70)]),
        col("I", 10.0, -30.0, &[]),
    ];
    let path = write_csv(dir.path(), "single-dip.csv", &cols, 1.0);
    let a = analysed(&path, Some(230.0));
    assert_eq!(of_kind(&a, EventKind::Dip).len(), 1, "{:?}", a.events);
    assert!(a.events.iter().all(|e| !e.kind.is_polyphase()));
}

/// A 3-wire capture's polyphase dip is taken over its line-to-line voltages (IEC 61000-4-30
/// measures a 3-wire system between lines, from memory) against the declared line-to-line
/// voltage: Vab at 70 % of 400 V from 0.20 s to 0.30 s with Vcb steady makes
/// Vca = Vcb − Vab = 400∠90° − 280∠30° = 355.5 V (88.9 %, [computed]) below 90 % too: one
/// polyphase dip on ab and ca, residual 280 V against 400 V.
#[test]
fn a_three_wire_polyphase_dip_is_between_lines() {
    let dir = TempDir::new().unwrap();
    let cols = vec![
        col("Vab", 400.0, 30.0, &[(0.20, 0.30, 0.70)]),
        col("Vcb", 400.0, 90.0, &[]),
        col("Ia", 10.0, -30.0, &[]),
        col("Ic", 10.0, 90.0, &[]),
    ];
    let path = write_csv(dir.path(), "three-wire-dip.csv", &cols, 1.0);
    // the computed Vca during the dip
    let vca = (400.0 * num(90.0) - 280.0 * num(30.0)).norm();
    assert!((vca / 400.0 - 0.889).abs() < 0.001, "{vca}");
    let a = analysed(&path, Some(400.0));
    let poly = of_kind(&a, EventKind::PolyphaseDip);
    assert_eq!(poly.len(), 1, "{:?}", a.events);
    check(&poly[0], 0.20, 0.30, 0.70, 400.0, &["ab", "ca"]);
}

fn num(deg: f64) -> rustfft::num_complex::Complex64 {
    rustfft::num_complex::Complex64::from_polar(1.0, deg.to_radians())
}

#[derive(Deserialize)]
struct EventJson {
    kind: String,
    time_s: f64,
    #[serde(default)]
    phases: Option<Vec<String>>,
    extreme: Option<f64>,
}

#[derive(Deserialize)]
struct Record {
    schema: u32,
    #[serde(default)]
    event_count: Option<usize>,
    events: Vec<EventJson>,
}

fn run(args: &[&str], path: &Path) -> String {
    let out = Command::cargo_bin("tracephase")
        .unwrap()
        .args(args)
        .arg(path)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout).unwrap()
}

/// The polyphase dip reaches `analyze`'s JSON (kind `polyphase_dip`, `phases`), its table,
/// `trend`'s JSON and table, and the HTML report's events.
#[test]
fn the_polyphase_dip_reaches_json_table_trend_and_report() {
    let dir = TempDir::new().unwrap();
    let cols = four_wire([&[(0.20, 0.30, 0.70)], &[], &[(0.25, 0.40, 0.80)]]);
    let path = write_csv(dir.path(), "dips-a-and-c.csv", &cols, 1.0);
    let declared = ["--declared-voltage", "230"];
    let r: Record = serde_json::from_str(&run(
        &[&["analyze", "--format", "json"][..], &declared].concat(),
        &path,
    ))
    .unwrap();
    assert_eq!(r.schema, 2);
    let poly: Vec<_> = r
        .events
        .iter()
        .filter(|e| e.kind == "polyphase_dip")
        .collect();
    assert_eq!(poly.len(), 1);
    assert_eq!(
        poly[0].phases.as_deref(),
        Some(&["a".to_string(), "c".to_string()][..])
    );
    assert!((poly[0].extreme.unwrap() - 161.0).abs() < 1.2);
    assert!((poly[0].time_s - 0.2).abs() <= CYCLE_S);
    // the two phases' own dips and the polyphase one
    assert_eq!(r.event_count, Some(3));
    assert!(
        r.events
            .iter()
            .filter(|e| e.kind == "dip")
            .all(|e| e.phases.is_none())
    );

    let text = run(&[&["analyze"][..], &declared].concat(), &path);
    assert!(text.contains("polyphase dip on a, c at 0.19"), "{text}");
    assert!(text.contains("(70.0 % of 230.0 V)"), "{text}");

    let t: Record = serde_json::from_str(&run(
        &[&["trend", "--format", "json"][..], &declared].concat(),
        &path,
    ))
    .unwrap();
    assert_eq!(
        t.events
            .iter()
            .filter(|e| e.kind == "polyphase_dip")
            .count(),
        1
    );
    let text = run(&[&["trend"][..], &declared].concat(), &path);
    assert!(text.contains("polyphase dip on a, c"), "{text}");

    let html = dir.path().join("r.html");
    let out = Command::cargo_bin("tracephase")
        .unwrap()
        .arg("report")
        .args(declared)
        .arg(&path)
        .arg("-o")
        .arg(&html)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let page = std::fs::read_to_string(&html).unwrap();
    assert!(
        page.contains("polyphase dip on a, c"),
        "no polyphase dip in the report"
    );
}

/// `trend --format csv` keeps one table, one row per window, and says in each row which events
/// are in progress during it (`event_count`, `event_codes`): with 10-cycle windows (0.2 s), a
/// dip on a from 0.25 s to 0.35 s and on c from 0.30 s to 0.45 s fall in the windows from 0.2 s
/// and from 0.4 s (c's dip and the polyphase one), none in the others.
#[test]
fn trend_csv_rows_carry_the_events_in_progress() {
    let dir = TempDir::new().unwrap();
    let cols = four_wire([&[(0.25, 0.35, 0.70)], &[], &[(0.30, 0.45, 0.80)]]);
    let path = write_csv(dir.path(), "dips-in-windows.csv", &cols, 1.0);
    let out = run(
        &["trend", "--format", "csv", "--declared-voltage", "230"],
        &path,
    );
    let mut reader = csv::Reader::from_reader(out.as_bytes());
    let header = reader.headers().unwrap().clone();
    let col = |name: &str| {
        header
            .iter()
            .position(|h| h == name)
            .unwrap_or_else(|| panic!("no column {name}: {header:?}"))
    };
    let (start, count, codes) = (col("start_s"), col("event_count"), col("event_codes"));
    let rows: Vec<(f64, String, String)> = reader
        .records()
        .map(|r| {
            let r = r.unwrap();
            (
                r[start].parse().unwrap(),
                r[count].to_string(),
                r[codes].to_string(),
            )
        })
        .collect();
    assert_eq!(rows.len(), 5, "{rows:?}");
    let want = [
        ("0", ""),
        ("3", "dip:a; polyphase_dip:a+c; dip:c"),
        ("2", "polyphase_dip:a+c; dip:c"),
        ("0", ""),
        ("0", ""),
    ];
    for (k, ((s, n, c), (wn, wc))) in rows.iter().zip(want).enumerate() {
        assert!((s - 0.2 * k as f64).abs() < 1e-9, "{rows:?}");
        assert_eq!((n.as_str(), c.as_str()), (wn, wc), "row {k}: {rows:?}");
    }
}
