//! The demo fixtures are generated, not hand-edited: the generator (`fixtures/generate.rs`, the
//! `make-demo-fixtures` example, compiled here from the same file) rewrites every generated file
//! in `fixtures/` byte for byte. Its output is invented demo data; what this checks is that the
//! committed files are what the committed generator makes (seeded, repeatable).

#[path = "../fixtures/generate.rs"]
mod generate;

use std::path::Path;

/// The files the generator writes (the TOML sidecars, model files and the meter reading in
/// `fixtures/` are written by hand).
const GENERATED: [&str; 11] = [
    "demo-workshop-compressor-before-capacitor.csv",
    "demo-workshop-compressor-after-capacitor.csv",
    "demo-lab-bench-series-rlc-semicolon-decimal-comma.csv",
    "demo-lab-bench-parallel-rl-24bit.wav",
    "demo-plant-feeder-bank-off.csv",
    "demo-plant-feeder-bank-on.csv",
    "three-phase/demo-riverside-board-ct-reversed.csv",
    "three-phase/demo-riverside-bank-off.csv",
    "three-phase/demo-riverside-bank-on.csv",
    "records/demo-kestrel-hill-feeder-4-phase-a-fault.cfg",
    "records/demo-kestrel-hill-feeder-4-phase-a-fault.dat",
];

/// Every file under `dir`, as paths relative to it with `/` between folders.
fn files_under(dir: &Path) -> Vec<String> {
    let mut out = Vec::new();
    for e in std::fs::read_dir(dir).unwrap() {
        let e = e.unwrap();
        let name = e.file_name().to_string_lossy().into_owned();
        if e.file_type().unwrap().is_dir() {
            out.extend(
                files_under(&e.path())
                    .into_iter()
                    .map(|f| format!("{name}/{f}")),
            );
        } else {
            out.push(name);
        }
    }
    out
}

#[test]
fn make_demo_fixtures_regenerates_the_fixtures_byte_for_byte() {
    let out = tempfile::TempDir::new().unwrap();
    generate::write_all(out.path()).unwrap();
    let fixtures = Path::new(env!("CARGO_MANIFEST_DIR")).join("fixtures");
    let mut written = files_under(out.path());
    written.sort();
    let mut want: Vec<String> = GENERATED.iter().map(|s| s.to_string()).collect();
    want.sort();
    assert_eq!(written, want, "the generator writes exactly these files");
    for name in GENERATED {
        let new = std::fs::read(out.path().join(name)).unwrap();
        let committed = std::fs::read(fixtures.join(name)).unwrap();
        assert!(
            new == committed,
            "{name}: the generator gives {} bytes, fixtures/ holds {} (different content)",
            new.len(),
            committed.len()
        );
    }
}

/// The README shows the demo relay record's `.cfg` as it is in `fixtures/records/`.
#[test]
fn the_readme_shows_the_demo_records_configuration_as_written() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let readme = std::fs::read_to_string(root.join("README.md")).unwrap();
    let cfg = std::fs::read_to_string(
        root.join("fixtures/records/demo-kestrel-hill-feeder-4-phase-a-fault.cfg"),
    )
    .unwrap();
    let start = readme
        .find("```text\nKestrel Hill")
        .expect("the README's copy of the record's .cfg")
        + "```text\n".len();
    let end = start + readme[start..].find("```").unwrap();
    assert_eq!(&readme[start..end], cfg);
}
