//! The harmonic spectrum as a reader asks for it with `--spectrum`: a table per capture (and per
//! phase of a three-phase capture) after its figures, or a long CSV, one row per file, channel and
//! order (the tidy layout a spreadsheet or a plotting script takes as it is).

use super::Exporter;
use super::table::num;
use crate::analysis::{Analysis, PhaseAnalysis, phase_letter};
use std::io::{self, Write};

/// The phase's name in outputs: empty for a single-phase capture.
fn phase_name(a: &Analysis, p: &PhaseAnalysis) -> &'static str {
    if a.three_phase.is_some() {
        phase_letter(p.phase)
    } else {
        ""
    }
}

/// Four significant digits; below 0.001 in exponent form, so small figures stay narrow.
fn cell(x: f64) -> String {
    if x.is_finite() && x != 0.0 && x.abs() < 1e-3 {
        format!("{x:.2e}")
    } else {
        num(x, 4)
    }
}

fn percent(x: Option<f64>) -> String {
    x.map(cell).unwrap_or_else(|| "n/a".into())
}

/// The spectrum block of the table: order, frequency, V and I (RMS and % of the fundamental),
/// the angle V − I and the active power of each order.
pub(super) fn table(out: &mut dyn Write, a: &Analysis) -> io::Result<()> {
    for p in &a.phases {
        let name = phase_name(a, p);
        let head = if name.is_empty() {
            "spectrum".to_string()
        } else {
            format!("spectrum {name}")
        };
        writeln!(
            out,
            "  {head:<13}{:>5} {:>10} {:>10} {:>9} {:>10} {:>9} {:>9} {:>10}",
            "order", "f Hz", "V rms", "V %", "I rms", "I %", "V−I °", "P W"
        )?;
        for h in &p.quantities.harmonics {
            writeln!(
                out,
                "  {:<13}{:>5} {:>10} {:>10} {:>9} {:>10} {:>9} {:>9} {:>10}",
                "",
                h.order,
                num(h.frequency_hz, 5),
                cell(h.voltage_rms),
                percent(h.voltage_percent),
                cell(h.current_rms),
                percent(h.current_percent),
                num(h.angle_deg, 4),
                cell(h.active_w),
            )?;
        }
    }
    Ok(())
}

/// The columns of the long spectrum CSV.
pub const COLUMNS: [&str; 10] = [
    "file",
    "phase",
    "channel",
    "quantity",
    "unit",
    "order",
    "frequency_hz",
    "rms",
    "percent_of_fundamental",
    "status",
];

/// Writes the long spectrum CSV: one row per file, channel and order.
#[derive(Debug, Default)]
pub struct SpectrumCsvExporter {
    header_written: bool,
}

impl Exporter for SpectrumCsvExporter {
    fn write(&mut self, out: &mut dyn Write, a: &Analysis) -> io::Result<()> {
        let mut w = ::csv::Writer::from_writer(&mut *out);
        if !self.header_written {
            w.write_record(COLUMNS).map_err(io::Error::other)?;
            self.header_written = true;
        }
        let file = a.path.display().to_string();
        let status = a.status().as_str();
        for p in &a.phases {
            let phase = phase_name(a, p);
            for (quantity, unit, channel) in [
                ("voltage", "V", &p.channels.voltage.name),
                ("current", "A", &p.channels.current.name),
            ] {
                for h in &p.quantities.harmonics {
                    let (rms, pct) = if quantity == "voltage" {
                        (h.voltage_rms, h.voltage_percent)
                    } else {
                        (h.current_rms, h.current_percent)
                    };
                    w.write_record([
                        file.as_str(),
                        phase,
                        channel.as_str(),
                        quantity,
                        unit,
                        &h.order.to_string(),
                        &h.frequency_hz.to_string(),
                        &rms.to_string(),
                        &pct.map(|x| x.to_string()).unwrap_or_default(),
                        status,
                    ])
                    .map_err(io::Error::other)?;
                }
            }
        }
        w.flush()?;
        drop(w);
        out.flush()
    }
}
