//! The benchmark capture, shared by the `make-bench-csv` example and the divan benches: a
//! 3-column CSV (`time,v,i`) of a 50 Hz voltage with a few harmonics and a lagging, noisy
//! current, seeded so every run writes the same bytes.

use std::io::{BufWriter, Write};
use std::path::Path;
use tracephase::synth::{Spec, Waveform, synthesize};

/// How the numbers are written.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Style {
    /// Fixed point like a data logger's export: `0.012345,-46.91,1.2346` (about 24 bytes a row
    /// at 1 MHz).
    Fixed,
    /// Scientific notation, 7 significant digits: `1.234500e-2,-4.691000e1,...` (about 40 bytes).
    Sci,
}

/// The signal pair: a 230 V feeder with a little 3rd, 5th and 7th, and a 14 A load lagging by
/// 30 degrees that draws some 3rd and 5th of its own; 60 dB of noise on both.
pub fn signals(rows: usize, rate_hz: f64) -> (Vec<f64>, Vec<f64>) {
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
    synthesize(&spec)
}

/// Writes `rows` rows sampled at `rate_hz` to `path`, with a `time,v,i` header.
pub fn write(path: &Path, rows: usize, rate_hz: f64, style: Style) -> std::io::Result<()> {
    let (v, i) = signals(rows, rate_hz);
    // Enough decimals in the time column to resolve one sample interval.
    let decimals = (rate_hz.log10().ceil().max(0.0) as usize).min(12);
    let mut w = BufWriter::with_capacity(1 << 20, std::fs::File::create(path)?);
    writeln!(w, "time,v,i")?;
    for (k, (a, b)) in v.iter().zip(&i).enumerate() {
        let t = k as f64 / rate_hz;
        match style {
            Style::Fixed => writeln!(w, "{t:.decimals$},{a:.2},{b:.4}")?,
            Style::Sci => writeln!(w, "{t:.6e},{a:.6e},{b:.6e}")?,
        }
    }
    w.flush()
}
