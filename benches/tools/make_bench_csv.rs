//! Writes the benchmark capture (see `bench_csv.rs`).
//!
//! Usage: `cargo run --release --example make-bench-csv -- OUT.csv [ROWS] [RATE_HZ] [STYLE]`
//! (defaults: 2,000,000 rows at 1 MHz, that is 100 cycles of 50 Hz, style `fixed`; `sci` writes
//! scientific notation, `three-phase` a 7-column 3-phase 4-wire capture in fixed point).

#[path = "bench_csv.rs"]
mod bench_csv;

use bench_csv::Style;
use std::path::Path;
use std::process::ExitCode;

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let Some(out) = args.first() else {
        eprintln!("usage: make-bench-csv OUT.csv [ROWS] [RATE_HZ] [fixed|sci|three-phase]");
        return ExitCode::from(2);
    };
    let rows: usize = match args.get(1).map(|s| s.parse()) {
        None => 2_000_000,
        Some(Ok(n)) if n >= 2 => n,
        Some(_) => {
            eprintln!("make-bench-csv: ROWS must be a whole number >= 2");
            return ExitCode::from(2);
        }
    };
    let rate_hz: f64 = match args.get(2).map(|s| s.parse()) {
        None => 1_000_000.0,
        Some(Ok(r)) if r > 0.0 && f64::is_finite(r) => r,
        Some(_) => {
            eprintln!("make-bench-csv: RATE_HZ must be a positive number");
            return ExitCode::from(2);
        }
    };
    let style = match args.get(3).map(String::as_str) {
        None | Some("fixed") => Style::Fixed,
        Some("sci") => Style::Sci,
        Some("three-phase") => Style::ThreePhase,
        Some(other) => {
            eprintln!("make-bench-csv: unknown style '{other}' (fixed, sci or three-phase)");
            return ExitCode::from(2);
        }
    };
    match bench_csv::write(Path::new(out), rows, rate_hz, style) {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("make-bench-csv: writing {out}: {e}");
            ExitCode::FAILURE
        }
    }
}
