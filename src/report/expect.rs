//! Output of `expect`: what a circuit model predicts.

use super::Format;
use super::table::num;
use crate::check::expected::Expectation;
use std::io::{self, Write};

/// Writes `e` in `format` (JSON: one object on one line; CSV: a header and one row).
pub fn write(out: &mut dyn Write, e: &Expectation, format: Format) -> io::Result<()> {
    match format {
        Format::Table => table(out, e)?,
        other => super::write_record(out, e, other)?,
    }
    out.flush()
}

fn table(out: &mut dyn Write, e: &Expectation) -> io::Result<()> {
    writeln!(
        out,
        "{} at {} Hz",
        e.model.as_deref().unwrap_or("circuit model"),
        num(e.frequency_hz, 6)
    )?;
    writeln!(out, "  network      {}", e.network)?;
    writeln!(
        out,
        "  nominal      |Z| {} Ω, phase angle {}° (current {}), displacement PF {}",
        num(e.nominal_impedance_ohm, 5),
        num(e.nominal_phase_deg, 5),
        e.character,
        num(e.displacement_pf, 4)
    )?;
    writeln!(
        out,
        "  worst case   {}° to {}°, |Z| {} Ω to {} Ω over the whole tolerance box",
        num(e.band_deg[0], 4),
        num(e.band_deg[1], 4),
        num(e.impedance_band_ohm[0], 4),
        num(e.impedance_band_ohm[1], 4)
    )?;
    let m = &e.monte_carlo;
    let pct: Vec<String> = m
        .percentiles_deg
        .iter()
        .filter(|(p, _)| [0.135, 2.5, 50.0, 97.5, 99.865].contains(p))
        .map(|(p, a)| format!("{p} %: {}°", num(*a, 4)))
        .collect();
    writeln!(
        out,
        "  Monte Carlo  {} draws, {}, seed {}: mean {}°, std {}°",
        m.draws,
        m.distribution,
        m.seed,
        num(m.mean_deg, 4),
        num(m.std_deg, 2)
    )?;
    writeln!(out, "               {}", pct.join(", "))?;
    if e.resonances_hz.is_empty() {
        writeln!(out, "  resonance    none")?;
    } else {
        let r: Vec<String> = e
            .resonances_hz
            .iter()
            .map(|f| format!("{} Hz", num(*f, 5)))
            .collect();
        writeln!(out, "  resonance    {}", r.join(", "))?;
    }
    Ok(())
}
