//! The `tracephase` command: parse, run, turn the outcome into an exit code.

use clap::Parser;
use std::process::ExitCode;
use tracephase::app;
use tracephase::cli::{self, Cli, ColorWhen};

fn main() -> ExitCode {
    let cli = Cli::parse_from(cli::attach_negative_values(std::env::args_os()));
    let choice = match cli.color {
        ColorWhen::Auto => anstream::ColorChoice::Auto,
        ColorWhen::Always => anstream::ColorChoice::Always,
        ColorWhen::Never => anstream::ColorChoice::Never,
    };
    // tables mark verdicts with ANSI styles; this stream keeps or strips them
    let stdout = anstream::AutoStream::new(std::io::stdout().lock(), choice);
    let mut out = std::io::BufWriter::new(stdout);
    // not held locked: a batch's Ctrl-C handler writes to it from its own thread; control
    // characters from file names and typed text are shown, not obeyed
    let mut err = app::escape::Escaped::new(std::io::stderr());
    ExitCode::from(app::run(cli, &mut out, &mut err).code())
}
