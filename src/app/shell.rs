//! `completions` and `man`: the command line described for shells and for `man`, generated at
//! run time from the same clap definitions the parser uses, so they never drift from it.

use super::Outcome;
use crate::cli::Cli;
use clap::CommandFactory;
use std::io::Write;

/// Writes the completion script for `shell` to `out`.
pub fn completions(
    shell: clap_complete::Shell,
    out: &mut dyn Write,
    err: &mut dyn Write,
) -> Outcome {
    let mut cmd = Cli::command();
    let mut buf = Vec::new();
    clap_complete::generate(shell, &mut cmd, "tracephase", &mut buf);
    finish(
        out.write_all(&buf).and_then(|()| out.flush()),
        "completion script",
        err,
    )
}

/// Writes the manual page of tracephase, or of one subcommand (`tracephase-analyze(1)`), to `out`.
pub fn man(subcommand: Option<&str>, out: &mut dyn Write, err: &mut dyn Write) -> Outcome {
    let cmd = Cli::command();
    let (page, title) = match subcommand {
        None => (cmd, "tracephase".to_string()),
        Some(name) => match cmd.find_subcommand(name) {
            Some(sub) => (
                sub.clone()
                    .name(format!("tracephase-{name}"))
                    .bin_name(format!("tracephase {name}")),
                format!("tracephase-{name}"),
            ),
            None => {
                let names: Vec<&str> = cmd.get_subcommands().map(|c| c.get_name()).collect();
                let _ = writeln!(
                    err,
                    "error: no subcommand '{name}': choose one of {}",
                    names.join(", ")
                );
                return Outcome::InputErrors;
            }
        },
    };
    let mut buf = Vec::new();
    let written = clap_mangen::Man::new(page)
        .title(title)
        .render(&mut buf)
        .and_then(|()| out.write_all(&buf))
        .and_then(|()| out.flush());
    finish(written, "manual page", err)
}

fn finish(written: std::io::Result<()>, what: &str, err: &mut dyn Write) -> Outcome {
    match written {
        Ok(()) => Outcome::Ok,
        Err(e) => {
            let _ = writeln!(err, "error: could not write the {what}: {e}");
            Outcome::InputErrors
        }
    }
}
