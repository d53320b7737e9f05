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
    /// A 3-phase 4-wire capture in fixed point: `time,Va,Vb,Vc,Ia,Ib,Ic` (7 columns).
    ThreePhase,
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

/// The three phases of the same feeder: each phase's pair of [`signals`] turned by 0, −120 and
/// +120 degrees (the harmonics by h times that), with its own noise seed.
pub fn three_phase_signals(rows: usize, rate_hz: f64) -> Vec<(Vec<f64>, Vec<f64>)> {
    [0.0, -120.0, 120.0]
        .into_iter()
        .enumerate()
        .map(|(k, shift)| {
            let turn = |w: Waveform| Waveform {
                dc: w.dc,
                tones: w
                    .tones
                    .iter()
                    .map(|t| tracephase::synth::Tone {
                        order: t.order,
                        rms: t.rms,
                        phase_deg: t.phase_deg + shift * t.order as f64,
                    })
                    .collect(),
            };
            let voltage = turn(
                Waveform::sine(230.0, 0.0)
                    .with(3, 4.6, 10.0)
                    .with(5, 6.9, -35.0)
                    .with(7, 2.3, 80.0),
            );
            let current = turn(
                Waveform::sine(14.0, -30.0)
                    .with(3, 2.1, -120.0)
                    .with(5, 1.1, 150.0),
            );
            let mut spec = Spec::clean(rate_hz, 50.0, rows, voltage, current);
            spec.snr_db = Some(60.0);
            spec.seed = 20_240_611 + k as u64;
            synthesize(&spec)
        })
        .collect()
}

/// Writes `rows` rows sampled at `rate_hz` to `path`, with a `time,v,i` header (`time,Va,Vb,Vc,
/// Ia,Ib,Ic` for [`Style::ThreePhase`]).
pub fn write(path: &Path, rows: usize, rate_hz: f64, style: Style) -> std::io::Result<()> {
    if style == Style::ThreePhase {
        return write_three_phase(path, rows, rate_hz);
    }
    let (v, i) = signals(rows, rate_hz);
    // Enough decimals in the time column to resolve one sample interval.
    let decimals = (rate_hz.log10().ceil().max(0.0) as usize).min(12);
    let mut w = BufWriter::with_capacity(1 << 20, std::fs::File::create(path)?);
    writeln!(w, "time,v,i")?;
    for (k, (a, b)) in v.iter().zip(&i).enumerate() {
        let t = k as f64 / rate_hz;
        match style {
            Style::Fixed => writeln!(w, "{t:.decimals$},{a:.2},{b:.4}")?,
            Style::Sci | Style::ThreePhase => writeln!(w, "{t:.6e},{a:.6e},{b:.6e}")?,
        }
    }
    w.flush()
}

fn write_three_phase(path: &Path, rows: usize, rate_hz: f64) -> std::io::Result<()> {
    let p = three_phase_signals(rows, rate_hz);
    let decimals = (rate_hz.log10().ceil().max(0.0) as usize).min(12);
    let mut w = BufWriter::with_capacity(1 << 20, std::fs::File::create(path)?);
    writeln!(w, "time,Va,Vb,Vc,Ia,Ib,Ic")?;
    for k in 0..rows {
        let t = k as f64 / rate_hz;
        writeln!(
            w,
            "{t:.decimals$},{:.2},{:.2},{:.2},{:.4},{:.4},{:.4}",
            p[0].0[k], p[1].0[k], p[2].0[k], p[0].1[k], p[1].1[k], p[2].1[k]
        )?;
    }
    w.flush()
}
