//! Writes the benchmark capture: a 3-column CSV (`time,v,i`) of a 50 Hz voltage with a few
//! harmonics and a lagging, noisy current, in a compact fixed-point format like a data logger's
//! export (`0.01234,-46.91,1.2346`).
//!
//! Usage: `cargo run --release --example make-bench-csv -- OUT.csv [ROWS] [RATE_HZ] [STYLE]`
//! (defaults: 2,000,000 rows at 1 MHz, that is 100 cycles of 50 Hz, `fixed`).
//!
//! `STYLE` is `fixed` (default, about 24 bytes a row) or `sci` (scientific notation with 7
//! significant digits, about 40 bytes a row). The data are the same for every run (seeded noise).

use std::io::{BufWriter, Write};
use std::process::ExitCode;
use tracephase::synth::{Spec, Waveform, synthesize};

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let Some(out) = args.first() else {
        eprintln!("usage: make-bench-csv OUT.csv [ROWS] [RATE_HZ] [fixed|sci]");
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
        Some(Ok(r)) if r > 0.0 => r,
        Some(_) => {
            eprintln!("make-bench-csv: RATE_HZ must be a positive number");
            return ExitCode::from(2);
        }
    };
    let sci = match args.get(3).map(String::as_str) {
        None | Some("fixed") => false,
        Some("sci") => true,
        Some(other) => {
            eprintln!("make-bench-csv: unknown style '{other}' (fixed or sci)");
            return ExitCode::from(2);
        }
    };
    // A 230 V feeder with a little 3rd, 5th and 7th, and a 14 A load lagging by about 30 degrees
    // that draws some 3rd and 5th of its own; 60 dB of noise on both, like a decent probe.
    let voltage = Waveform::sine(230.0, 0.0)
        .with(3, 4.6, 10.0)
        .with(5, 6.9, -35.0)
        .with(7, 2.3, 80.0);
    let current = Waveform::sine(14.0, -30.0)
        .with(3, 2.1, -120.0)
        .with(5, 1.1, 150.0);
    let mut spec = Spec::clean(rate_hz, 50.0, rows, voltage, current);
    spec.snr_db = Some(60.0);
    spec.seed = 20_240_611;
    let (v, i) = synthesize(&spec);

    let file = match std::fs::File::create(out) {
        Ok(f) => f,
        Err(e) => {
            eprintln!("make-bench-csv: cannot create {out}: {e}");
            return ExitCode::FAILURE;
        }
    };
    // Enough decimals in the time column to resolve one sample interval.
    let decimals = (rate_hz.log10().ceil().max(0.0) as usize).min(12);
    let mut w = BufWriter::with_capacity(1 << 20, file);
    let written = (|| -> std::io::Result<()> {
        writeln!(w, "time,v,i")?;
        for (k, (a, b)) in v.iter().zip(&i).enumerate() {
            let t = k as f64 / rate_hz;
            if sci {
                writeln!(w, "{t:.6e},{a:.6e},{b:.6e}")?;
            } else {
                writeln!(w, "{t:.decimals$},{a:.2},{b:.4}")?;
            }
        }
        w.flush()
    })();
    if let Err(e) = written {
        eprintln!("make-bench-csv: writing {out}: {e}");
        return ExitCode::FAILURE;
    }
    ExitCode::SUCCESS
}
