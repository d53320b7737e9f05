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
mod spectrum;
pub mod style;
pub(crate) mod table;
pub mod trend;
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

/// The version of the layout of every JSON object tracephase writes (`"schema"`, the first key
/// of each). It goes up by one when a key is renamed or removed, or changes its meaning or unit;
/// new keys do not change it. The README keeps the history.
pub const SCHEMA: u32 = 2;

/// A record with the [`SCHEMA`] key before its own keys.
#[derive(Debug, serde::Serialize)]
pub struct Versioned<'a, T: serde::Serialize> {
    /// The layout's version.
    pub schema: u32,
    /// The record's own keys.
    #[serde(flatten)]
    pub record: &'a T,
}

impl<'a, T: serde::Serialize> Versioned<'a, T> {
    /// `record` with the current [`SCHEMA`].
    pub fn new(record: &'a T) -> Self {
        Versioned {
            schema: SCHEMA,
            record,
        }
    }
}

/// Seconds to the microsecond, without trailing zeros: `0.1`, `-0.0125`, `2`.
pub fn seconds(x: f64) -> String {
    let t = format!("{x:.6}");
    let t = t.trim_end_matches('0').trim_end_matches('.');
    match t {
        "-0" | "" => "0".into(),
        t => t.into(),
    }
}

/// The span analysed, in words, when it is not the whole record: `0 to 0.1 s of 0.4 s
/// (samples 0 to 99 of 400), -0.1 to 0 s from the trigger`.
pub fn span_text(a: &Analysis) -> Option<String> {
    let (s, rate) = (a.span, a.sample_rate_hz);
    if s.is_whole() {
        return None;
    }
    let mut text = format!(
        "{} to {} s of {} s (samples {} to {} of {})",
        seconds(s.start_s()),
        seconds(s.end_s(rate)),
        seconds(s.record_s),
        s.first,
        s.first + s.len - 1,
        s.of
    );
    if let Some(t) = a.times.as_ref().and_then(|t| t.trigger_offset_s) {
        text.push_str(&format!(
            ", {} to {} s from the trigger",
            seconds(s.start_s() - t),
            seconds(s.end_s(rate) - t)
        ));
    }
    Some(text)
}

/// The date-times a record states, in words: `start 01/03/2026,10:15:00.000000, trigger
/// 01/03/2026,10:15:00.100000 (0.1 s after the first sample)`.
pub fn times_text(a: &Analysis) -> Option<String> {
    let t = a.times.as_ref()?;
    let mut parts = Vec::new();
    if let Some(s) = &t.start {
        parts.push(format!("start {s}"));
    }
    if let Some(tr) = &t.trigger {
        parts.push(match t.trigger_offset_s {
            Some(x) => format!("trigger {tr} ({} s after the first sample)", seconds(x)),
            None => format!("trigger {tr} (not placed: the date-times cannot be read)"),
        });
    }
    (!parts.is_empty()).then(|| parts.join(", "))
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

/// The exporter for a format; `spectrum` adds the harmonic spectrum to the table, or makes the
/// CSV the long spectrum (JSON always holds it).
pub fn exporter(format: Format, spectrum: bool) -> Box<dyn Exporter> {
    match (format, spectrum) {
        (Format::Table, _) => Box::new(table::TableExporter::with_spectrum(spectrum)),
        (Format::Json, _) => Box::new(json::JsonExporter),
        (Format::Csv, false) => Box::new(csv::CsvExporter::default()),
        (Format::Csv, true) => Box::new(spectrum::SpectrumCsvExporter::default()),
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
            serde_json::to_writer(&mut *out, &Versioned::new(record))?;
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

#[cfg(test)]
mod tests {
    #[test]
    fn seconds_are_shown_to_the_microsecond() {
        assert_eq!(super::seconds(0.1), "0.1");
        assert_eq!(super::seconds(2.0), "2");
        assert_eq!(super::seconds(-0.0125), "-0.0125");
        assert_eq!(super::seconds(-1e-9), "0");
        assert_eq!(super::seconds(1.0 / 3.0), "0.333333");
    }
}
