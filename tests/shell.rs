//! The command line at home in a shell: completions, manual pages, and the examples every
//! subcommand's `--help` ends with (each one is run here, so none can rot).

use assert_cmd::Command;
use tempfile::TempDir;

const SUBCOMMANDS: [&str; 9] = [
    "analyze",
    "expect",
    "bank",
    "meter",
    "report",
    "batch",
    "completions",
    "man",
    "trend",
];

fn tracephase() -> Command {
    let mut cmd = Command::cargo_bin("tracephase").unwrap();
    cmd.current_dir(env!("CARGO_MANIFEST_DIR"));
    cmd
}

fn stdout_of(args: &[&str]) -> String {
    let out = tracephase().args(args).output().unwrap();
    assert!(
        out.status.success(),
        "{args:?}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout).unwrap()
}

#[test]
fn completion_scripts_name_every_subcommand() {
    for shell in ["bash", "zsh", "fish", "powershell", "elvish"] {
        let script = stdout_of(&["completions", shell]);
        for sub in SUBCOMMANDS {
            assert!(script.contains(sub), "{shell} completions lack {sub}");
        }
    }
    assert!(stdout_of(&["completions", "zsh"]).starts_with("#compdef tracephase"));
    // an option of a subcommand is completed too
    assert!(stdout_of(&["completions", "bash"]).contains("--pf-threshold"));
}

#[test]
fn manual_pages_are_roff_for_the_tool_and_each_subcommand() {
    let main = stdout_of(&["man"]);
    assert!(main.contains(".TH tracephase 1"), "{main}");
    for sub in SUBCOMMANDS {
        let page = stdout_of(&["man", sub]);
        assert!(page.contains(&format!(".TH tracephase-{sub} 1")), "{sub}");
        assert!(
            page.contains("Exit codes"),
            "{sub}: the page lacks the exit codes"
        );
    }
    let out = tracephase().args(["man", "nosuch"]).output().unwrap();
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("no subcommand 'nosuch'") && err.contains("analyze"),
        "{err}"
    );
}

/// The example command lines at the end of a help text, continuation lines joined.
fn examples(help: &str) -> Vec<Vec<String>> {
    let block = help
        .split("Examples:")
        .nth(1)
        .and_then(|rest| rest.split("Exit codes:").next())
        .unwrap_or("");
    let joined = block.replace("\\\n", " ");
    joined
        .lines()
        .map(str::trim)
        .filter(|l| l.starts_with("tracephase "))
        .map(|l| l.split_whitespace().skip(1).map(str::to_string).collect())
        .collect()
}

#[test]
fn every_help_ends_with_examples_that_run_and_the_exit_codes() {
    let tmp = TempDir::new().unwrap();
    let mut ran = 0;
    for sub in SUBCOMMANDS {
        let help = stdout_of(&[sub, "--help"]);
        let tail = &help[help
            .find("Examples:")
            .unwrap_or_else(|| panic!("{sub}: no examples"))..];
        assert!(
            tail.contains("Exit codes: 0"),
            "{sub}: the exit codes do not follow"
        );
        let list = examples(&help);
        assert!(!list.is_empty(), "{sub}: no example lines");
        for args in list {
            assert_eq!(
                args[0], sub,
                "{sub}: an example of another command: {args:?}"
            );
            // shell redirections and folders of the reader's own are for reading, not running
            if args
                .iter()
                .any(|a| a.contains('>') || a.contains('*') || a.starts_with("site-visit"))
            {
                continue;
            }
            // outputs go to a temporary folder
            let mut run: Vec<String> = Vec::new();
            let mut it = args.iter();
            while let Some(a) = it.next() {
                run.push(a.clone());
                if ["-o", "--out", "--report", "--plot-dir"].contains(&a.as_str()) {
                    let name = it.next().unwrap();
                    run.push(
                        tmp.path()
                            .join(name.trim_end_matches('/'))
                            .display()
                            .to_string(),
                    );
                }
            }
            let out = tracephase().args(&run).output().unwrap();
            let code = out.status.code();
            assert!(
                matches!(code, Some(0) | Some(1)),
                "{run:?} exited {code:?}: {}",
                String::from_utf8_lossy(&out.stderr)
            );
            ran += 1;
        }
    }
    assert!(ran >= 8, "only {ran} examples ran");
}

const BANK_DEMO: [&str; 7] = [
    "bank",
    "--before",
    "fixtures/three-phase/demo-riverside-bank-off.csv",
    "--after",
    "fixtures/three-phase/demo-riverside-bank-on.csv",
    "--nameplate",
    "fixtures/three-phase/demo-riverside-bank-nameplate.toml",
];

fn output_with(args: &[&str], env: &[(&str, &str)]) -> String {
    let mut cmd = tracephase();
    cmd.env_remove("NO_COLOR").env_remove("CLICOLOR_FORCE");
    for (k, v) in env {
        cmd.env(k, v);
    }
    let out = cmd.args(args).output().unwrap();
    String::from_utf8(out.stdout).unwrap()
}

/// Verdicts are coloured on request (red FAIL for the demo bank's verdict and its weak phase),
/// and never into a pipe by default, with `--color never`, or with NO_COLOR set (the convention
/// of no-color.org, common practice) even where CLICOLOR_FORCE asks for colour; JSON never.
#[test]
fn colour_marks_verdicts_only_when_asked_or_on_a_terminal() {
    const RED_BOLD: &str = "\u{1b}[1m\u{1b}[31m";
    let mut always = BANK_DEMO.to_vec();
    always.extend(["--color", "always"]);
    let text = output_with(&always, &[]);
    let verdict = text.lines().find(|l| l.contains("VERDICT")).unwrap();
    assert!(
        verdict.contains(&format!("{RED_BOLD}FAIL\u{1b}[0m")),
        "{verdict:?}"
    );
    assert!(text.contains(&format!("{RED_BOLD}WEAK")), "{text}");
    // the same words, plain
    let plain = output_with(&BANK_DEMO, &[]);
    assert!(!plain.contains('\u{1b}'), "piped output is plain");
    assert_eq!(
        plain.lines().count(),
        text.lines().count(),
        "colour changes no line"
    );
    let mut never = BANK_DEMO.to_vec();
    never.extend(["--color", "never"]);
    assert!(!output_with(&never, &[("CLICOLOR_FORCE", "1")]).contains('\u{1b}'));
    assert!(output_with(&BANK_DEMO, &[("CLICOLOR_FORCE", "1")]).contains('\u{1b}'));
    assert!(
        !output_with(&BANK_DEMO, &[("CLICOLOR_FORCE", "1"), ("NO_COLOR", "1")]).contains('\u{1b}')
    );
    let mut json = always.clone();
    json.extend(["--format", "json"]);
    assert!(!output_with(&json, &[]).contains('\u{1b}'));
}

/// Every JSON object starts with its layout's version, `"schema":2` (the README's history).
#[test]
fn every_json_object_starts_with_the_schema_version() {
    let dir = TempDir::new().unwrap();
    let summary = dir.path().join("summary.jsonl");
    let summary_arg = summary.to_string_lossy().into_owned();
    let mut bank = BANK_DEMO.to_vec();
    bank.extend(["--format", "json"]);
    let outputs = [
        output_with(
            &[
                "analyze",
                "--format",
                "json",
                "fixtures/demo-workshop-compressor-before-capacitor.csv",
                "fixtures/three-phase/demo-riverside-board-ct-reversed.csv",
            ],
            &[],
        ),
        output_with(&bank, &[]),
        output_with(
            &[
                "expect",
                "fixtures/demo-lab-bench-series-rlc.toml",
                "--freq",
                "60",
                "--format",
                "json",
            ],
            &[],
        ),
        output_with(
            &[
                "meter",
                "fixtures/demo-workshop-compressor-before-capacitor.csv",
                "--reading",
                "p=1.75kW",
                "--class",
                "1",
                "--format",
                "json",
            ],
            &[],
        ),
        {
            output_with(
                &[
                    "batch",
                    "fixtures/three-phase",
                    "--format",
                    "json",
                    "--out",
                    &summary_arg,
                ],
                &[],
            );
            std::fs::read_to_string(&summary).unwrap()
        },
    ];
    for text in outputs {
        assert!(!text.is_empty());
        for line in text.lines() {
            assert!(line.starts_with("{\"schema\":2,"), "{line:.80}");
        }
    }
}
