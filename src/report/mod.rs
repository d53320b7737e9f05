//! Output: one [`Exporter`] trait, one module per format.
//!
//! Exporters stream: `begin` once, `write` per analysed capture as soon as it is ready, `finish`
//! once. The serde types every format is built from live in [`wire`], so the JSON schema is
//! visible in one place.

pub mod bank;
mod csv;
pub mod expect;
pub mod html;
mod json;
pub mod meter;
pub mod plot;
pub(crate) mod table;
pub mod wire;

use crate::analysis::Analysis;
use std::io::{self, Write};

/// An output format.
pub trait Exporter {
    /// Called once before the first capture.
    fn begin(&mut self, _out: &mut dyn Write) -> io::Result<()> {
        Ok(())
    }
    /// Called per analysed capture, in input order.
    fn write(&mut self, out: &mut dyn Write, analysis: &Analysis) -> io::Result<()>;
    /// Called once after the last capture.
    fn finish(&mut self, _out: &mut dyn Write) -> io::Result<()> {
        Ok(())
    }
}

/// The formats `analyze` can write.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Format {
    /// A readable summary with units.
    Table,
    /// One JSON object per capture per line (JSON Lines).
    Json,
    /// One row per capture with a header.
    Csv,
}

/// The exporter for a format.
pub fn exporter(format: Format) -> Box<dyn Exporter> {
    match format {
        Format::Table => Box::new(table::TableExporter::default()),
        Format::Json => Box::new(json::JsonExporter),
        Format::Csv => Box::new(csv::CsvExporter::default()),
    }
}

/// Writes one record as JSON on one line, or as CSV with a header and one row (the keys
/// flattened with dots): the machine formats of `expect`, `bank` and `meter`. `Table` is the
/// caller's own; this writes nothing for it.
pub fn write_record<T: serde::Serialize>(
    out: &mut dyn Write,
    record: &T,
    format: Format,
) -> io::Result<()> {
    match format {
        Format::Json => {
            serde_json::to_writer(&mut *out, record)?;
            writeln!(out)
        }
        Format::Csv => {
            let cells = wire::flatten(&serde_json::to_value(record)?);
            let mut w = ::csv::Writer::from_writer(&mut *out);
            w.write_record(cells.iter().map(|(k, _)| k.as_str()))
                .map_err(io::Error::other)?;
            w.write_record(cells.iter().map(|(_, v)| v.as_str()))
                .map_err(io::Error::other)?;
            w.flush()
        }
        Format::Table => Ok(()),
    }
}

/// The coverage factors in words: "k = 2 for every figure (ν_eff ∞)", or the figures whose
/// effective degrees of freedom (Welch-Satterthwaite) give a larger k.
pub fn coverage_text(u: &crate::quantity::uncertainty::Uncertainty) -> String {
    let c = &u.coverage;
    let named = [
        ("frequency", c.frequency_hz),
        ("angle and PF1", c.phase_angle_deg),
        ("true PF", c.true_pf),
        ("V RMS", c.voltage_rms),
        ("THD-V", c.voltage_thd_percent),
        ("I RMS", c.current_rms),
        ("THD-I", c.current_thd_percent),
        ("P", c.active_w),
        ("Q1", c.reactive_var),
    ];
    let larger: Vec<String> = named
        .iter()
        .filter(|(_, c)| c.k > 2.0)
        .map(|(name, c)| {
            format!(
                "{name} k = {:.2} (ν_eff {})",
                c.k,
                c.effective_dof.map_or("∞".into(), |n| format!("{n:.1}"))
            )
        })
        .collect();
    if larger.is_empty() {
        "k = 2 for every figure (ν_eff large)".into()
    } else {
        format!(
            "k = 2 (ν_eff large) but {} (Student t at 95.45 %, JCGM 100 Annex G)",
            larger.join(", ")
        )
    }
}
