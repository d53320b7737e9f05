//! Under an address-space limit (`ulimit -v`, as a shared machine or a container may set), every
//! run ends with an exit code of 0 or 2 and, when refused, one line naming the file: never an
//! abort (134, "memory allocation of N bytes failed"), a panic (101) or a signal. Before the
//! guarded allocator (src/memory.rs) a refused allocation in the analysis aborted, and a batch
//! under 20 MB panicked starting its threads. A batch keeps the results of the files that fit.
//! The limits are scanned in steps, so the test holds wherever this machine's thresholds lie.
#![cfg(target_os = "linux")]

use std::f64::consts::PI;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::Command;

/// A 3-wire capture (two line-to-line voltages, two line currents), 200 000 rows at 10 kHz.
fn three_wire(dir: &Path) -> PathBuf {
    let path = dir.join("feeder.csv");
    let mut w = std::io::BufWriter::new(std::fs::File::create(&path).unwrap());
    writeln!(w, "time,Vab,Vcb,Ia,Ic").unwrap();
    let (om, p) = (2.0 * PI * 50.0, 2.0 * PI / 3.0);
    for k in 0..200_000 {
        let t = k as f64 / 10_000.0;
        writeln!(
            w,
            "{t:.4},{:.2},{:.2},{:.4},{:.4}",
            563.0 * (om * t + PI / 6.0).sin(),
            563.0 * (om * t + PI / 6.0 + p - PI).sin(),
            14.0 * (om * t - 0.5).sin(),
            14.0 * (om * t - 0.5 + p).sin()
        )
        .unwrap();
    }
    w.flush().unwrap();
    path
}

/// Runs the binary with `args` under an address-space limit of `mb` MB: (exit code, or `None`
/// for a signal; standard error).
fn limited(mb: u64, args: &[&Path]) -> (Option<i32>, String) {
    let out = Command::new("sh")
        .arg("-c")
        .arg(format!("ulimit -v {} && exec \"$@\"", mb * 1024))
        .arg("sh")
        .arg(env!("CARGO_BIN_EXE_tracephase"))
        .args(args)
        .output()
        .unwrap();
    (
        out.status.code(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

/// `analyze` probes for its working room before it starts (a refusal says "to analyse it");
/// `trend` asks as it goes, and a refusal there is the guarded allocator's one line naming the
/// file in hand ("to go on"), which aborted before.
#[test]
fn analyze_and_trend_under_a_memory_limit_end_cleanly_naming_the_file() {
    let dir = tempfile::TempDir::new().unwrap();
    let file = three_wire(dir.path());
    let shown = file.display().to_string();
    for (command, refusal) in [
        ("analyze", "not enough memory to analyse it"),
        ("trend", "not enough memory to go on"),
    ] {
        let mut outcomes = Vec::new();
        for mb in (12..=70).step_by(2) {
            let (code, err) = limited(mb, &[Path::new(command), &file]);
            let what = format!("{command} under {mb} MB: exit {code:?}: {err}");
            assert!(matches!(code, Some(0 | 2)), "{what}");
            if code == Some(2) {
                assert_eq!(err.lines().count(), 1, "{what}");
                // before any file is opened, the worker threads may be what cannot be had
                let threads = err.starts_with("error: cannot start the worker threads: ");
                assert!(
                    threads
                        || (err.starts_with(&format!("error: {shown}: "))
                            && err.contains("not enough memory")),
                    "{what}"
                );
            }
            outcomes.push((code, err));
        }
        // the scan reaches the limit where it fits, and the refusal this command meets below
        assert!(
            outcomes.iter().any(|(c, _)| *c == Some(0)),
            "{command}: {outcomes:?}"
        );
        assert!(
            outcomes.iter().any(|(_, e)| e.contains(refusal)),
            "{command}: {outcomes:?}"
        );
    }
}

#[test]
fn a_batch_under_a_memory_limit_keeps_the_files_that_fit() {
    let dir = tempfile::TempDir::new().unwrap();
    let site = dir.path().join("site");
    std::fs::create_dir(&site).unwrap();
    let big = three_wire(&site);
    let small = site.join("compressor.csv");
    std::fs::copy(
        Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("fixtures/demo-workshop-compressor-before-capacitor.csv"),
        &small,
    )
    .unwrap();
    let out = dir.path().join("summary.csv");
    let mut kept = 0;
    for mb in (12..=60).step_by(2) {
        let _ = std::fs::remove_file(&out);
        let (code, err) = limited(mb, &[Path::new("batch"), Path::new("--out"), &out, &site]);
        let what = format!("under {mb} MB: exit {code:?}: {err}");
        assert!(matches!(code, Some(0 | 2)), "{what}");
        assert!(!err.contains("panicked"), "{what}");
        let summary = std::fs::read_to_string(&out).unwrap_or_default();
        let row = |p: &Path| {
            summary
                .lines()
                .find(|l| l.contains(&*p.display().to_string()))
                .map(str::to_owned)
        };
        // the small capture analysed while the large one was refused for memory
        if err.contains(&format!("error: {}: not enough memory", big.display()))
            && row(&small).is_some_and(|r| r.contains(",ok,"))
        {
            kept += 1;
        }
    }
    assert!(
        kept > 0,
        "no limit left the small capture's result beside the refusal"
    );
}
