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

/// The demo plant's feeder captures, bank out and in (in the tree).
fn plant(name: &str) -> String {
    format!(
        "{}/fixtures/demo-plant-feeder-bank-{name}.csv",
        env!("CARGO_MANIFEST_DIR")
    )
}

fn nameplate_with_steps(dir: &std::path::Path, steps: &str) -> std::path::PathBuf {
    let p = dir.join("np.toml");
    std::fs::write(
        &p,
        format!("rated_kvar=75\nrated_voltage=400\nrated_frequency_hz=50\nsteps={steps}\n"),
    )
    .unwrap();
    p
}

#[test]
fn a_huge_step_count_in_a_nameplate_is_refused_before_it_is_allocated() {
    // steps = 1e12 aborted with signal 6 ("memory allocation of 8000000000000 bytes failed")
    let dir = TempDir::new().unwrap();
    // 2^64 − 1 panicked on the capacity
    for steps in ["1000000000000", "18446744073709551615", "21"] {
        let np = nameplate_with_steps(dir.path(), steps);
        let (off, on) = (plant("off"), plant("on"));
        let (code, err) = run(&[
            "bank",
            "--before",
            &off,
            "--after",
            &on,
            "--nameplate",
            np.to_str().unwrap(),
        ]);
        assert_eq!(code, Some(2), "{steps}: {err}");
        assert_eq!(err.lines().count(), 1, "{err}");
        // named as the file's key, not as the option
        assert!(
            err.contains(&format!("np.toml: steps must be from 1 to 20, not {steps}")),
            "{err}"
        );
    }
    // 3e8 is not a whole number: the file's line is named
    let np = nameplate_with_steps(dir.path(), "3e8");
    let (off, on) = (plant("off"), plant("on"));
    let (code, err) = run(&[
        "bank",
        "--before",
        &off,
        "--after",
        &on,
        "--nameplate",
        np.to_str().unwrap(),
    ]);
    assert_eq!(code, Some(2), "{err}");
    assert!(err.contains("np.toml: line 4"), "{err}");
}

#[test]
fn a_huge_step_count_option_is_refused_before_it_is_allocated() {
    // --steps 2^64 − 1 panicked on the capacity, 3e8 reserved 2.4 GB before the check
    let (off, on) = (plant("off"), plant("on"));
    for steps in ["18446744073709551615", "300000000", "1000000000000"] {
        let (code, err) = run(&[
            "bank",
            "--before",
            &off,
            "--after",
            &on,
            "--rated-kvar",
            "75",
            "--rated-voltage",
            "400",
            "--rated-frequency",
            "50",
            "--steps",
            steps,
        ]);
        assert_eq!(code, Some(2), "{steps}: {err}");
        assert_eq!(
            err.trim_end(),
            format!("error: --steps must be from 1 to 20, not {steps}")
        );
    }
}

#[test]
fn a_nameplate_value_from_the_file_is_named_as_the_files_key() {
    let dir = TempDir::new().unwrap();
    let np = dir.path().join("np.toml");
    std::fs::write(
        &np,
        "rated_kvar=-75\nrated_voltage=400\nrated_frequency_hz=50\n",
    )
    .unwrap();
    let (off, on) = (plant("off"), plant("on"));
    let n = np.to_str().unwrap();
    let (code, err) = run(&["bank", "--before", &off, "--after", &on, "--nameplate", n]);
    assert_eq!(code, Some(2), "{err}");
    assert!(
        err.contains("np.toml: rated_kvar must be a positive number, not -75"),
        "{err}"
    );
    assert!(!err.contains("--rated-kvar"), "{err}");
    // the option overrides the file, and its own bad value is named as the option
    let (code, err) = run(&[
        "bank",
        "--before",
        &off,
        "--after",
        &on,
        "--nameplate",
        n,
        "--rated-kvar=-5",
    ]);
    assert_eq!(code, Some(2), "{err}");
    assert!(
        err.contains("--rated-kvar must be a positive number, not -5"),
        "{err}"
    );
}

#[test]
fn a_huge_step_count_from_a_sidecar_fails_its_capture_not_the_batch() {
    let dir = TempDir::new().unwrap();
    let site = dir.path().join("plant");
    std::fs::create_dir(&site).unwrap();
    for name in ["off", "on"] {
        std::fs::copy(
            plant(name),
            site.join(format!("demo-plant-feeder-bank-{name}.csv")),
        )
        .unwrap();
    }
    nameplate_with_steps(&site, "1000000000000");
    std::fs::write(
        site.join("tracephase.toml"),
        "[[files]]\npattern = \"*-bank-on.csv\"\n[files.bank]\nnameplate = \"np.toml\"\n\
         before = \"demo-plant-feeder-bank-off.csv\"\n",
    )
    .unwrap();
    let out = dir.path().join("summary.csv");
    let (code, err) = run(&[
        "batch",
        site.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(code, Some(2), "{err}");
    assert!(
        err.contains("np.toml: steps must be from 1 to 20, not 1000000000000"),
        "{err}"
    );
    let text = std::fs::read_to_string(&out).unwrap();
    let rows: Vec<&str> = text.lines().skip(1).collect();
    assert_eq!(rows.len(), 2, "{text}");
    // the bank-out capture is analysed; the bank-in one has its error row
    assert!(rows[0].contains("bank-off.csv,ok") || rows[0].contains("bank-off.csv,warning"));
    assert!(rows[1].contains("bank-on.csv,error"), "{}", rows[1]);

    // written in the sidecar itself, the count is refused with the sidecar's line
    std::fs::write(
        site.join("tracephase.toml"),
        "[[files]]\npattern = \"*-bank-on.csv\"\n[files.bank]\nrated_kvar = 75\n\
         rated_voltage = 400\nrated_frequency = 50\nsteps = 1000000000000\n\
         before = \"demo-plant-feeder-bank-off.csv\"\n",
    )
    .unwrap();
    let (code, err) = run(&[
        "batch",
        site.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(code, Some(2), "{err}");
    assert!(err.contains("tracephase.toml: line 7"), "{err}");
    let text = std::fs::read_to_string(&out).unwrap();
    assert_eq!(text.lines().count(), 3, "{text}");
}

#[test]
fn an_unwritable_report_path_leaves_an_existing_summary_as_it_was() {
    // the summary was truncated to its header before the report's folder was found missing
    let dir = TempDir::new().unwrap();
    let site = dir.path().join("site");
    std::fs::create_dir(&site).unwrap();
    for name in ["before", "after"] {
        std::fs::copy(
            format!(
                "{}/fixtures/demo-workshop-compressor-{name}-capacitor.csv",
                env!("CARGO_MANIFEST_DIR")
            ),
            site.join(format!("{name}.csv")),
        )
        .unwrap();
    }
    let out = dir.path().join("summary.csv");
    let s = site.to_str().unwrap();
    let o = out.to_str().unwrap();
    let (code, err) = run(&["batch", s, "--out", o]);
    assert_eq!(code, Some(0), "{err}");
    let first = std::fs::read(&out).unwrap();
    assert_eq!(String::from_utf8_lossy(&first).lines().count(), 3);
    let folder = dir.path().join("report-folder");
    std::fs::create_dir(&folder).unwrap();
    let missing = dir.path().join("no-such-folder").join("r.html");
    for report in [&missing, &folder] {
        for resume in [false, true] {
            let mut args = vec!["batch", s, "--out", o, "--report", report.to_str().unwrap()];
            if resume {
                args.push("--resume");
            }
            let (code, err) = run(&args);
            assert_eq!(code, Some(2), "{err}");
            assert_eq!(err.lines().count(), 1, "{err}");
            assert!(err.contains("cannot write the report"), "{err}");
            assert_eq!(
                std::fs::read(&out).unwrap(),
                first,
                "{report:?}, resume {resume}"
            );
        }
    }
}

fn workshop() -> String {
    format!(
        "{}/fixtures/demo-workshop-compressor-before-capacitor.csv",
        env!("CARGO_MANIFEST_DIR")
    )
}

#[test]
fn a_reading_beyond_the_range_of_numbers_is_refused() {
    // p=1e308kW was read as infinity: the meter check printed n/a and FAIL
    for reading in ["p=1e308kW", "p=1e400W", "pf=0.9,q=-1e306Mvar"] {
        let (code, err) = run(&["meter", &workshop(), "--class", "1", "--reading", reading]);
        assert_eq!(code, Some(2), "{reading}: {err}");
        assert_eq!(err.lines().count(), 1, "{err}");
        assert!(
            err.contains("the value is beyond the range of numbers"),
            "{err}"
        );
        assert!(!err.contains("not a number"), "{err}");
    }
}

#[test]
fn a_long_reading_is_not_repeated_whole() {
    // a 100 KB reading came back twice in the error (200 KB on the terminal)
    let long = format!("p={}x", "1".repeat(100_000));
    let junk = format!("p=1,{}", "a".repeat(100_000));
    for reading in [long, junk] {
        let (code, err) = run(&["meter", &workshop(), "--class", "1", "--reading", &reading]);
        assert_eq!(code, Some(2), "{err}");
        assert_eq!(err.lines().count(), 1, "{err}");
        assert!(err.len() < 300, "{} bytes: {}", err.len(), &err[..300]);
        assert!(err.contains("characters)"), "{err}");
    }
    // terminal escapes typed into a reading are shown, not obeyed
    let (_, err) = run(&[
        "meter",
        &workshop(),
        "--class",
        "1",
        "--reading",
        "p=1\x1b[31mkW",
    ]);
    assert!(!err.contains('\x1b'), "{err:?}");
}

/// A report is written beside its path and renamed over it: over a device that replaced the
/// device with a plain file (`--report /dev/full` run as root left /dev/full a plain file).
#[cfg(target_os = "linux")]
#[test]
fn a_report_over_a_device_is_refused_and_the_device_kept() {
    let dir = TempDir::new().unwrap();
    let capture = format!(
        "{}/fixtures/demo-workshop-compressor-before-capacitor.csv",
        env!("CARGO_MANIFEST_DIR")
    );
    let out = dir.path().join("s.csv");
    for args in [
        vec!["analyze", capture.as_str(), "--report", "/dev/full"],
        vec![
            "batch",
            capture.as_str(),
            "--out",
            out.to_str().unwrap(),
            "--report",
            "/dev/full",
        ],
    ] {
        let (code, err) = run(&args);
        assert_eq!(code, Some(2), "{err}");
        assert!(err.contains("/dev/full: "), "{err}");
        assert!(err.contains("not a plain file"), "{err}");
        use std::os::unix::fs::FileTypeExt;
        let kind = std::fs::metadata("/dev/full").unwrap().file_type();
        assert!(kind.is_char_device(), "/dev/full was replaced");
    }
}

/// A full disk names the file it could not write.
#[cfg(target_os = "linux")]
#[test]
fn a_full_disk_names_the_summary() {
    let capture = format!(
        "{}/fixtures/demo-workshop-compressor-before-capacitor.csv",
        env!("CARGO_MANIFEST_DIR")
    );
    let (code, err) = run(&["batch", &capture, "--out", "/dev/full"]);
    assert_eq!(code, Some(2), "{err}");
    assert!(
        err.contains("/dev/full: cannot write the summary: No space left on device"),
        "{err}"
    );
}

/// File names carrying terminal escapes and NUL bytes were echoed raw to standard error.
#[cfg(unix)]
#[test]
fn control_characters_in_file_names_are_escaped_on_stderr() {
    let dir = TempDir::new().unwrap();
    let red = dir.path().join("\u{1b}[31mred\u{1b}]0;title\u{7}.csv");
    std::fs::write(&red, "not a capture at all\n").unwrap();
    let out = tracephase().arg("analyze").arg(&red).output().unwrap();
    let err = out.stderr;
    assert_eq!(out.status.code(), Some(2));
    assert!(!err.iter().any(|&b| b == 0x1b || b == 0x07), "{err:?}");
    let text = String::from_utf8_lossy(&err);
    assert!(
        text.contains("\\x1b[31mred\\x1b]0;title\\x07.csv"),
        "{text}"
    );
    // a NUL can only come in through a list on standard input
    let list = format!("{}/a\0b.csv\n", dir.path().display());
    let out = tracephase()
        .args(["batch", "-"])
        .write_stdin(list)
        .output()
        .unwrap();
    assert!(!out.stderr.contains(&0), "{:?}", out.stderr);
    assert!(String::from_utf8_lossy(&out.stderr).contains("a\\x00b.csv"));
}

/// Two names differing only in bytes that are not text were written alike into the summary, so
/// `--resume` found one row for two files and analysed one of them again on every run.
#[cfg(unix)]
#[test]
fn two_names_that_are_not_text_are_kept_apart_on_resume() {
    use std::os::unix::ffi::OsStrExt;
    let dir = TempDir::new().unwrap();
    let site = dir.path().join("site");
    std::fs::create_dir(&site).unwrap();
    // different contents: with one row for both names, one of them never matched its row
    for (b, which) in [(b"a\xff.csv", "before"), (b"a\xfe.csv", "after")] {
        let capture = format!(
            "{}/fixtures/demo-workshop-compressor-{which}-capacitor.csv",
            env!("CARGO_MANIFEST_DIR")
        );
        std::fs::copy(&capture, site.join(std::ffi::OsStr::from_bytes(b))).unwrap();
    }
    let out = dir.path().join("s.csv");
    let (s, o) = (site.to_str().unwrap(), out.to_str().unwrap());
    let (code, err) = run(&["batch", s, "--out", o]);
    assert_eq!(code, Some(0), "{err}");
    let text = std::fs::read_to_string(&out).unwrap();
    assert!(
        text.contains("a\\xfe.csv,") && text.contains("a\\xff.csv,"),
        "{text}"
    );
    let (code, err) = run(&["batch", s, "--out", o, "--resume"]);
    assert_eq!(code, Some(0), "{err}");
    assert!(err.contains("(2 kept from the earlier summary)"), "{err}");
}

/// Header text went verbatim into the summary CSV, where `=HYPERLINK(...)` runs as a formula.
#[test]
fn header_text_in_the_summary_cannot_run_as_a_formula() {
    let dir = TempDir::new().unwrap();
    let site = dir.path().join("site");
    std::fs::create_dir(&site).unwrap();
    let capture = format!(
        "{}/fixtures/demo-workshop-compressor-before-capacitor.csv",
        env!("CARGO_MANIFEST_DIR")
    );
    let text = std::fs::read_to_string(capture).unwrap();
    let header_at = text.lines().position(|l| l.starts_with("Time")).unwrap();
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    let n = lines[header_at].split(',').count();
    let mut names: Vec<String> = lines[header_at].split(',').map(str::to_string).collect();
    names[n - 2] = "=HYPERLINK(\"http://example.invalid\") (V)".into();
    names[n - 1] = "@cmd (A)".into();
    lines[header_at] = names.join(",");
    std::fs::write(site.join("f.csv"), lines.join("\n") + "\n").unwrap();
    let out = dir.path().join("s.csv");
    let (s, o) = (site.to_str().unwrap(), out.to_str().unwrap());
    let (code, err) = run(&["batch", s, "--out", o]);
    assert!(code == Some(0), "{err}");
    let mut rdr = csv::Reader::from_path(&out).unwrap();
    let mut seen = false;
    for rec in rdr.records() {
        for cell in rec.unwrap().iter() {
            assert!(!cell.starts_with(['=', '+', '@']), "{cell}");
            if cell.starts_with('-') {
                assert!(cell.parse::<f64>().is_ok(), "{cell}");
            }
            seen |= cell.starts_with("'=HYPERLINK");
        }
    }
    assert!(seen, "the header text is in the summary, made safe");
    // the row is found again on resume
    let (code, err) = run(&["batch", s, "--out", o, "--resume"]);
    assert_eq!(code, Some(0), "{err}");
    assert!(err.contains("(1 kept from the earlier summary)"), "{err}");
}
