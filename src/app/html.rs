//! `report`: captures analysed and written as one self-contained HTML file (scaffolding: the
//! HTML writer is being built).

use super::Outcome;
use crate::cli::ReportArgs;
use std::io::Write;

/// Runs `report`.
pub fn run_report(a: &ReportArgs, _out: &mut dyn Write, err: &mut dyn Write) -> Outcome {
    let _ = writeln!(
        err,
        "error: {}: the HTML report is not available in this build yet",
        a.output.display()
    );
    Outcome::InputErrors
}
