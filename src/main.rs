//! The `tracephase` command: parse, run, turn the outcome into an exit code.

use clap::Parser;
use std::process::ExitCode;
use tracephase::app;
use tracephase::cli::{self, Cli};

fn main() -> ExitCode {
    let cli = Cli::parse_from(cli::attach_negative_values(std::env::args_os()));
    let stdout = std::io::stdout();
    let mut out = std::io::BufWriter::new(stdout.lock());
    // not held locked: a batch's Ctrl-C handler writes to it from its own thread
    let mut err = std::io::stderr();
    ExitCode::from(app::run(cli, &mut out, &mut err).code())
}
