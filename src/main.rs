//! The `tracephase` command: parse, run, turn the outcome into an exit code.

use clap::Parser;
use std::process::ExitCode;
use tracephase::app;
use tracephase::cli::{self, Cli, ColorWhen};

// a refused allocation ends the run with one line naming the files in hand, not an abort
#[global_allocator]
static ALLOCATOR: tracephase::memory::Guarded = tracephase::memory::Guarded;

fn main() -> ExitCode {
    tracephase::memory::one_arena();
    let cli = Cli::parse_from(cli::attach_negative_values(std::env::args_os()));
    // rayon would panic at its first use of a pool it could not start (memory, a thread limit)
    if let Err(e) = rayon::ThreadPoolBuilder::new().build_global() {
        eprintln!("error: cannot start the worker threads: {e}; close other programs");
        return ExitCode::from(app::Outcome::InputErrors.code());
    }
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
