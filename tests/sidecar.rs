//! Sidecar settings files (`tracephase.toml`) as `batch` reads them: the options' own names,
//! whole numbers and channel numbers, old names with one note, one error per sidecar with its
//! line, notes that are not captures, and the README's list of keys.
//!
//! Captures are invented test data (a 230 V, 50 Hz bench supply), truth in the call that writes
//! them.

use assert_cmd::Command;
use std::path::Path;
use tempfile::TempDir;
use tracephase::batch::sidecar::keys;
use tracephase::synth::{Spec, Waveform, synthesize};

fn tracephase() -> Command {
    Command::cargo_bin("tracephase").unwrap()
}

/// Writes `header` then 20 cycles at 10 kS/s: time, 230 V, `amps` A lagging 30°, and a third
/// column (a spare channel at 0.5 V DC) between them when `header` has four names.
fn capture(path: &Path, header: &str, amps: f64) {
    let rate = 10_000.0;
    let spec = Spec::clean(
        rate,
        50.0,
        2000,
        Waveform::sine(230.0, 0.0),
        Waveform::sine(amps, -30.0),
    );
    let (v, i) = synthesize(&spec);
    let four = header.split(',').count() == 4;
    let mut text = format!("{header}\n");
    for (k, (a, b)) in v.iter().zip(&i).enumerate() {
        let t = k as f64 / rate;
        if four {
            text.push_str(&format!("{t:.6},{a:.4},0.5,{b:.6}\n"));
        } else {
            text.push_str(&format!("{t:.6},{a:.4},{b:.6}\n"));
        }
    }
    std::fs::create_dir_all(path.parent().unwrap()).unwrap();
    std::fs::write(path, text).unwrap();
}

/// Runs `batch --format json` over `root` with `extra`; gives the rows, stderr and exit code.
fn run(root: &Path, extra: &[&str]) -> (Vec<serde_json::Value>, String, i32) {
    let out = tracephase()
        .args(["batch", "--format", "json", "--jobs", "2"])
        .args(extra)
        .arg(root)
        .output()
        .unwrap();
    let rows = String::from_utf8(out.stdout)
        .unwrap()
        .lines()
        .map(|l| serde_json::from_str(l).unwrap())
        .collect();
    (
        rows,
        String::from_utf8(out.stderr).unwrap(),
        out.status.code().unwrap(),
    )
}

/// The case: `voltage = 2` (a number, as `--voltage 2` takes it), `harmonics = 40`, and
/// options `batch` had no key for (`adc_bits` with its full scales, `i_ratio_accuracy`).
#[test]
fn sidecar_keys_are_the_option_names_and_take_numbers_as_the_options_do() {
    let dir = TempDir::new().unwrap();
    let site = dir.path().join("site");
    // columns: 1 time, 2 CH1 the voltage, 3 CH2 a spare, 4 CH3 the current
    capture(&site.join("bench.csv"), "t,CH1,CH2,CH3", 4.0);
    std::fs::write(
        site.join("tracephase.toml"),
        "voltage = 2\ncurrent = 4\nharmonics = 40\ni_ratio_accuracy = 1.5\n\
         adc_bits = 12\nv_full_scale = 400\ni_full_scale = 10\n",
    )
    .unwrap();
    let (rows, err, code) = run(&site, &[]);
    assert_eq!(code, 0, "{err}");
    assert!(!err.contains("note:"), "{err}");
    let r = &rows[0];
    assert_eq!(r["channels"]["voltage"]["name"], "CH1", "{r}");
    assert_eq!(r["channels"]["current"]["name"], "CH3");
    assert_eq!(r["harmonic_order"], 40);
    let irms = r["current"]["rms"].as_f64().unwrap();
    assert!((irms - 4.0).abs() < 1e-3, "{irms}");
    // U(I) from the ±1.5 % ratio (rectangular, k = 2: 1.732 % of 4 A = 0.0693 A) and the
    // 12-bit step of a 10 A full scale (q = 20/4096 A; √(I² + q²/12) − I is negligible here):
    // GUM rectangular limits, JCGM 100:2008 4.3.7 (from memory).
    let u = r["uncertainty"]["current"]["rms"].as_f64().unwrap();
    let ratio = 4.0 * 0.015 / 3f64.sqrt() * 2.0;
    assert!((u / ratio - 1.0).abs() < 0.01, "{u} vs {ratio}");
    let adc = &r["settings"]["uncertainty"]["adc"];
    assert_eq!(adc["bits"], 12, "{adc}");
    assert_eq!(adc["i_full_scale"], 10.0);
}

#[test]
fn old_key_names_are_read_with_one_note_per_sidecar() {
    let dir = TempDir::new().unwrap();
    let site = dir.path().join("site");
    for k in 0..3 {
        capture(&site.join(format!("feeder-{k}.csv")), "t,v,i", 1.0);
    }
    std::fs::write(
        site.join("tracephase.toml"),
        "i_scale = 10\nrate_hz = 10000\n[uncertainty]\ni_ratio_percent = 1\n",
    )
    .unwrap();
    let (rows, err, code) = run(&site, &[]);
    assert_eq!(code, 0, "{err}");
    assert_eq!(rows.len(), 3);
    let notes: Vec<&str> = err.lines().filter(|l| l.starts_with("note:")).collect();
    assert_eq!(notes.len(), 1, "{err}");
    assert!(notes[0].contains("site/tracephase.toml"), "{}", notes[0]);
    assert!(
        notes[0].contains("line 2 `rate_hz` as `rate`")
            && notes[0].contains("line 4 `[uncertainty] i_ratio_percent` as `i_ratio_accuracy`"),
        "{}",
        notes[0]
    );
    for r in &rows {
        let irms = r["current"]["rms"].as_f64().unwrap();
        assert!((irms - 10.0).abs() < 1e-2, "{irms}");
        let u = r["uncertainty"]["current"]["rms"].as_f64().unwrap();
        assert!(
            (u / (10.0 * 0.01 / 3f64.sqrt() * 2.0) - 1.0).abs() < 0.01,
            "{u}"
        );
    }
}

#[test]
fn a_sidecar_mistake_is_told_once_with_its_file_and_line() {
    let dir = TempDir::new().unwrap();
    let site = dir.path().join("site");
    for k in 0..3 {
        capture(&site.join(format!("motors/m{k}.csv")), "t,v,i", 1.0);
    }
    capture(&site.join("feeder.csv"), "t,v,i", 1.0);
    std::fs::write(
        site.join("motors/tracephase.toml"),
        "# motors: 100 A clamp\ni_scale = 100\nharmonics = \"many\"\n",
    )
    .unwrap();
    let (rows, err, code) = run(&site, &[]);
    assert_eq!(code, 2, "{err}");
    let errors: Vec<&str> = err.lines().filter(|l| l.starts_with("error:")).collect();
    assert_eq!(errors.len(), 1, "{err}");
    assert!(
        errors[0].contains("motors/tracephase.toml: line 3: `harmonics` must be a whole number"),
        "{}",
        errors[0]
    );
    assert!(errors[0].contains("not \"many\""), "{}", errors[0]);
    // every capture under it has its error row; the feeder beside it is analysed
    assert_eq!(rows.len(), 4);
    let status: Vec<&str> = rows.iter().map(|r| r["status"].as_str().unwrap()).collect();
    assert_eq!(status, ["ok", "error", "error", "error"], "{rows:?}");

    // a misspelt key: named with its line and the key meant
    std::fs::write(
        site.join("motors/tracephase.toml"),
        "i_scale = 100\n\n[meter]\nclass = \"1\"\nreading = \"pf=0.87\"\nrated_curent = 5\n",
    )
    .unwrap();
    let (_, err, code) = run(&site, &[]);
    assert_eq!(code, 2, "{err}");
    let errors: Vec<&str> = err.lines().filter(|l| l.starts_with("error:")).collect();
    assert_eq!(errors.len(), 1, "{err}");
    assert!(
        errors[0].contains("line 6: unknown key `rated_curent` in [meter]")
            && errors[0].contains("did you mean `rated_current`?"),
        "{}",
        errors[0]
    );
}

/// The invalid glob in a `[[files]]` section: a set opened with `[` and never closed.
/// The sidecar is refused like any other mistake (one line with its file and line, exit 2, its
/// folder's captures error rows) and the captures beside it keep their results.
#[test]
fn an_invalid_pattern_is_an_error_naming_the_sidecar_and_line() {
    let dir = TempDir::new().unwrap();
    let site = dir.path().join("site");
    capture(&site.join("motors/m1.csv"), "t,v,i", 1.0);
    capture(&site.join("feeder.csv"), "t,v,i", 1.0);
    std::fs::write(
        site.join("motors/tracephase.toml"),
        "i_scale = 10\n[[files]]\npattern = \"m[12.csv\"\ni_scale = 100\n",
    )
    .unwrap();
    let (rows, err, code) = run(&site, &[]);
    assert_eq!(code, 2, "{err}");
    let errors: Vec<&str> = err.lines().filter(|l| l.starts_with("error:")).collect();
    assert_eq!(errors.len(), 1, "{err}");
    assert!(
        errors[0].contains("motors/tracephase.toml: line 3: pattern \"m[12.csv\" opens a set"),
        "{}",
        errors[0]
    );
    let status: Vec<&str> = rows.iter().map(|r| r["status"].as_str().unwrap()).collect();
    assert_eq!(status, ["ok", "error"], "{rows:?}");
}

/// The silent pattern: `[[files]]` sections whose pattern matches no capture (a name
/// misremembered) are each told with the sidecar, line and pattern, and counted in the batch's
/// last line; the pattern that does match is not.
#[test]
fn a_pattern_matching_no_capture_is_a_warning_with_its_line() {
    let dir = TempDir::new().unwrap();
    let site = dir.path().join("site");
    capture(&site.join("motors/m1-clamp-a.csv"), "t,v,i", 1.0);
    capture(&site.join("motors/deep/m2.csv"), "t,v,i", 1.0);
    std::fs::write(
        site.join("motors/tracephase.toml"),
        "i_scale = 10\n[[files]]\npattern = \"*-clamp-b*\"\ni_scale = 100\n\n\
         [[files]]\npattern = \"m2.csv\"\nharmonics = 13\n[[files]]\npattern = \"*.wav\"\n\
         harmonics = 7\n",
    )
    .unwrap();
    let report = dir.path().join("visit.html");
    let (rows, err, code) = run(&site, &["--report", report.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    assert_eq!(rows.len(), 2);
    // the report carries them too
    let html = std::fs::read_to_string(&report).unwrap();
    assert!(
        html.contains("*-clamp-b*") && html.contains("*.wav"),
        "{html}"
    );
    assert_eq!(html.matches("matches no capture of this batch").count(), 2);
    let warnings: Vec<&str> = err.lines().filter(|l| l.starts_with("warning:")).collect();
    assert_eq!(warnings.len(), 2, "{err}");
    assert!(
        warnings[0].contains("motors/tracephase.toml: line 3: the [[files]] pattern \"*-clamp-b*\" matches no capture"),
        "{}",
        warnings[0]
    );
    assert!(
        warnings[1].contains("motors/tracephase.toml: line 10: the [[files]] pattern \"*.wav\""),
        "{}",
        warnings[1]
    );
    let last = err.lines().last().unwrap();
    assert!(
        last.starts_with("batch: ") && last.contains("2 sidecar patterns matched no capture"),
        "{last}"
    );
}

#[test]
fn command_line_values_are_checked_by_the_same_rules() {
    let dir = TempDir::new().unwrap();
    capture(&dir.path().join("a.csv"), "t,v,i", 1.0);
    let (rows, err, code) = run(dir.path(), &["--draws", "0"]);
    assert_eq!(code, 2);
    assert!(rows.is_empty());
    assert_eq!(
        err.trim(),
        "error: --draws must be a whole number from 1 to 10000000, not 0"
    );
}

/// A mislabelled export: the header says CH1 is in amperes, but it carries the voltage.
/// `batch` refuses it like `analyze`, and takes `--force-channels` or `force_channels = true`.
#[test]
fn batch_takes_force_channels_from_the_command_line_and_a_sidecar() {
    let dir = TempDir::new().unwrap();
    let site = dir.path().join("site");
    capture(&site.join("mislabelled.csv"), "t,CH1 (A),CH2 (V)", 2.0);
    let (rows, err, code) = run(&site, &["--voltage", "2", "--current", "3"]);
    assert_eq!(code, 2, "{err}");
    assert_eq!(rows[0]["status"], "error");
    let (rows, err, code) = run(
        &site,
        &["--voltage", "2", "--current", "3", "--force-channels"],
    );
    assert_eq!(code, 0, "{err}");
    assert_eq!(rows[0]["status"], "warning", "{}", rows[0]);
    let vrms = rows[0]["voltage"]["rms"].as_f64().unwrap();
    assert!((vrms - 230.0).abs() < 0.01, "{vrms}");
    std::fs::write(
        site.join("tracephase.toml"),
        "voltage = 2\ncurrent = 3\nforce_channels = true\n",
    )
    .unwrap();
    let (rows2, err, code) = run(&site, &[]);
    assert_eq!(code, 0, "{err}");
    assert_eq!(rows2[0]["voltage"], rows[0]["voltage"]);
}

/// Notes of the visit in the folder: prose, with and without commas (a comma-separated line of
/// words looks like a header to the sniffer). Skipped with a note; a `.csv` of the same prose is
/// a failed export and stays an error.
#[test]
fn notes_in_a_batch_folder_are_skipped_with_a_note() {
    let dir = TempDir::new().unwrap();
    let site = dir.path().join("site");
    capture(&site.join("feeder.csv"), "t,v,i", 1.0);
    std::fs::write(
        site.join("notes.txt"),
        "Site visit, 3 March.\nFeeder 2 off, the compressor ran at full load.\n\
         Probe 10:1 on CH1, clamp on the blue phase.\n",
    )
    .unwrap();
    std::fs::write(
        site.join("todo.txt"),
        "call the plant electrician\nask for the bank nameplate\n",
    )
    .unwrap();
    let (rows, err, code) = run(&site, &[]);
    assert_eq!(code, 0, "{err}");
    assert_eq!(rows.len(), 1, "{rows:?}");
    let notes: Vec<&str> = err.lines().filter(|l| l.starts_with("note:")).collect();
    assert_eq!(notes.len(), 2, "{err}");
    assert!(
        notes[0].contains("notes.txt: not a capture"),
        "{}",
        notes[0]
    );
    assert!(notes[1].contains("todo.txt: not a capture"), "{}", notes[1]);
    assert!(
        err.contains("2 other files skipped (2 of them not captures)"),
        "{err}"
    );

    std::fs::copy(site.join("notes.txt"), site.join("notes.csv")).unwrap();
    let (rows, err, code) = run(&site, &[]);
    assert_eq!(code, 2, "{err}");
    assert_eq!(rows.len(), 2);
}

/// The README's list of sidecar keys is the code's list ([`keys::readme_table`]): generated,
/// then checked, so it cannot drift. `TRACEPHASE_UPDATE_README=1` rewrites it.
#[test]
fn the_readme_lists_every_sidecar_key() {
    const START: &str =
        "(TRACEPHASE_UPDATE_README=1 cargo test --release --test sidecar rewrites it) -->\n";
    const END: &str = "<!-- end of sidecar keys -->";
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("README.md");
    let readme = std::fs::read_to_string(&path).unwrap();
    let a = readme.find(START).expect("the README's sidecar keys block") + START.len();
    let b = a + readme[a..].find(END).expect("the block's end");
    let want = keys::readme_table();
    if std::env::var_os("TRACEPHASE_UPDATE_README").is_some() {
        std::fs::write(&path, format!("{}{want}{}", &readme[..a], &readme[b..])).unwrap();
        return;
    }
    assert_eq!(
        &readme[a..b],
        want,
        "the README's sidecar keys differ from src/batch/sidecar/keys.rs: run \
         TRACEPHASE_UPDATE_README=1 cargo test --release --test sidecar"
    );
}
