//! The README against the code it documents: the warning codes and their kinds (README "Warnings,
//! findings and notes") must be exactly those `Warning::code` and `Warning::severity` give
//! (src/warning.rs), so a new code or a changed kind cannot go undocumented.

use std::collections::{BTreeMap, BTreeSet};

/// `Variant => "code"` pairs of `Warning::code`, read from the source.
fn codes_in_source(src: &str) -> BTreeMap<String, String> {
    let start = src.find("pub fn code(&self)").expect("Warning::code");
    let body = &src[start..];
    let body = &body[..body.find("\n    }\n").expect("end of code()")];
    body.lines()
        .filter_map(|l| {
            let l = l.trim();
            let variant = l.strip_prefix("Warning::")?.split([' ', '{']).next()?;
            let code = l.split('"').nth(1)?;
            Some((variant.to_string(), code.to_string()))
        })
        .collect()
}

/// The variants `Warning::severity` names before `=> Severity::{kind}`.
fn variants_of_kind(src: &str, kind: &str) -> BTreeSet<String> {
    let start = src
        .find("pub fn severity(&self)")
        .expect("Warning::severity");
    let body = &src[start..];
    let body = &body[..body.find("\n    }\n").expect("end of severity()")];
    let mut out = BTreeSet::new();
    let mut pending: Vec<String> = Vec::new();
    for l in body.lines() {
        for part in l.split("Warning::").skip(1) {
            if let Some(v) = part.split([' ', '{']).next() {
                pending.push(v.to_string());
            }
        }
        if l.contains("=>") {
            if l.contains(&format!("Severity::{kind}")) {
                out.extend(pending.drain(..));
            }
            pending.clear();
        }
    }
    out
}

/// The backticked codes of the README table row that starts `| {kind} |`.
fn readme_row(readme: &str, kind: &str) -> BTreeSet<String> {
    let section = &readme[readme
        .find("## Warnings, findings and notes")
        .expect("section")..];
    let row = section
        .lines()
        .find(|l| l.starts_with(&format!("| {kind} |")))
        .unwrap_or_else(|| panic!("no {kind} row"));
    let codes_cell = row.rsplit('|').nth(1).unwrap();
    codes_cell
        .split('`')
        .skip(1)
        .step_by(2)
        .filter(|c| c.starts_with(|ch: char| ch.is_ascii_lowercase()))
        .map(str::to_string)
        .collect()
}

#[test]
fn the_readme_lists_every_warning_code_under_its_kind() {
    let src = std::fs::read_to_string("src/warning.rs").unwrap();
    let readme = std::fs::read_to_string("README.md").unwrap();
    let codes = codes_in_source(&src);
    assert!(codes.len() >= 15, "{codes:?}");
    let code_of = |vs: BTreeSet<String>| -> BTreeSet<String> {
        vs.iter().map(|v| codes[v].clone()).collect()
    };
    let findings = code_of(variants_of_kind(&src, "Finding"));
    let notes = code_of(variants_of_kind(&src, "Note"));
    assert_eq!(readme_row(&readme, "finding"), findings);
    // methods-disagree is a note when the harmonics explain the difference, else a warning
    let mut notes_readme = readme_row(&readme, "note");
    assert!(notes_readme.remove("methods-disagree"));
    assert_eq!(notes_readme, notes);
    let warnings_readme = readme_row(&readme, "warning");
    let warnings: BTreeSet<String> = codes
        .values()
        .filter(|c| !findings.contains(*c) && !notes.contains(*c))
        .cloned()
        .collect();
    assert_eq!(warnings_readme, warnings);
    // and the JSON key table's lists name the same codes
    for code in codes.values() {
        assert!(
            readme.contains(&format!("`{code}`")),
            "{code} is not in the README"
        );
    }
}

/// The demo plant's captures name the plant's own logger as their source, not the workshop's
/// scope (issue 11, item 10): each demo scenario is its own.
#[test]
fn the_demo_plant_captures_name_their_own_source() {
    for name in [
        "demo-plant-feeder-bank-off.csv",
        "demo-plant-feeder-bank-on.csv",
    ] {
        let text = std::fs::read_to_string(format!("fixtures/{name}")).unwrap();
        let source = text.lines().next().unwrap();
        assert!(source.starts_with("Source,"), "{name}: {source}");
        assert!(source.contains("Northgate plant"), "{name}: {source}");
        assert!(
            !text.to_lowercase().contains("workshop"),
            "{name} names the workshop"
        );
    }
}

/// Every `.rs` file under `dir`, recursively.
fn rust_files(dir: &std::path::Path, out: &mut Vec<std::path::PathBuf>) {
    for e in std::fs::read_dir(dir).unwrap() {
        let p = e.unwrap().path();
        if p.is_dir() {
            rust_files(&p, out);
        } else if p.extension().is_some_and(|x| x == "rs") {
            out.push(p);
        }
    }
}

/// A message split over two source lines without its `\` keeps the second line's indentation:
/// a run of ten or more spaces between two words inside one string literal. Three such
/// messages reached users (the summary lock, the bank's single-phase nameplate refusal, the
/// preamble's two rates); none may come back.
#[test]
fn no_message_carries_a_lost_line_continuation() {
    let mut files = Vec::new();
    rust_files(
        &std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("src"),
        &mut files,
    );
    assert!(files.len() > 20, "the sources were found");
    let mut found = Vec::new();
    for f in &files {
        let text = std::fs::read_to_string(f).unwrap();
        for (i, line) in text.lines().enumerate() {
            if line.trim_start().starts_with("//") {
                continue;
            }
            // The parts between quotes: every odd piece is inside a literal.
            for piece in line.split('"').skip(1).step_by(2) {
                let b = piece.as_bytes();
                let mut run = 0;
                for (k, &c) in b.iter().enumerate() {
                    if c == b' ' {
                        run += 1;
                        continue;
                    }
                    if run >= 10 && k > run && b[k - run - 1] != b' ' {
                        found.push(format!("{}:{}", f.display(), i + 1));
                    }
                    run = 0;
                }
            }
        }
    }
    assert!(found.is_empty(), "a lost `\\` continuation: {found:?}");
}
