//! Output of `meter`: per quantity the meter's error against its class limit, and hints.

use super::Format;
use super::table::{num, sign_off};
use super::wire::flatten;
use crate::analysis::Analysis;
use crate::check::meter::MeterReport;
use serde::Serialize;
use std::io::{self, Write};

/// The cautions printed with every meter check.
pub const CAUTIONS: &str = "meter and CT circuits are live: never open a CT secondary under load \
(short it first); work on metering only with the procedures and authorisation your local codes \
and licensed practice require";

#[derive(Debug, Serialize)]
struct MeterRecord<'a> {
    file: String,
    span: super::wire::SpanRecord,
    #[serde(flatten)]
    report: &'a MeterReport,
    cautions: &'static str,
}

/// Writes the meter check in `format`.
pub fn write(out: &mut dyn Write, r: &MeterReport, a: &Analysis, format: Format) -> io::Result<()> {
    let record = MeterRecord {
        file: a.path.display().to_string(),
        span: super::wire::SpanRecord::new(a),
        report: r,
        cautions: CAUTIONS,
    };
    match format {
        Format::Json => {
            serde_json::to_writer(&mut *out, &super::Versioned::new(&record))?;
            writeln!(out)?;
        }
        Format::Csv => {
            // one row per checked quantity
            let mut w = ::csv::Writer::from_writer(&mut *out);
            w.write_record([
                "file",
                "quantity",
                "definition",
                "meter_value",
                "measured_value",
                "error_percent",
                "limit_percent",
                "uncertainty_percent",
                "verdict",
                "quadrant",
                "warning_codes",
            ])
            .map_err(io::Error::other)?;
            for c in &r.checks {
                let cells = flatten(&serde_json::to_value(c)?);
                let get = |k: &str| {
                    cells
                        .iter()
                        .find(|(key, _)| key == k)
                        .map(|(_, v)| v.clone())
                        .unwrap_or_default()
                };
                w.write_record([
                    record.file.clone(),
                    get("quantity"),
                    get("definition"),
                    get("meter_value"),
                    get("measured_value"),
                    get("error_percent"),
                    get("limit_percent"),
                    get("uncertainty_percent"),
                    get("verdict"),
                    r.quadrant.to_string(),
                    r.warning_codes.join(";"),
                ])
                .map_err(io::Error::other)?;
            }
            w.flush()?;
        }
        Format::Table => table(out, r, a)?,
    }
    out.flush()
}

/// A meter's error in percent with its sign, or "n/a" when there was nothing to compare with.
pub(crate) fn error_text(error_percent: f64) -> String {
    if error_percent.is_finite() {
        format!("{error_percent:+.2}")
    } else {
        "n/a".into()
    }
}

fn table(out: &mut dyn Write, r: &MeterReport, a: &Analysis) -> io::Result<()> {
    writeln!(out, "meter check: {}", a.path.display())?;
    if let Some(span) = super::span_text(a) {
        writeln!(out, "  span         {span}")?;
    }
    writeln!(out, "  class        {}", r.class)?;
    if let Some(rc) = r.reactive_class {
        writeln!(out, "  Q class      {rc}")?;
    }
    if let Some(c) = r.connection {
        writeln!(out, "  connection   {c}")?;
    }
    writeln!(out, "  PF sign      {}", r.pf_sign)?;
    writeln!(out, "  load         {}", r.quadrant_text)?;
    writeln!(
        out,
        "  {:<10}{:>14}{:>14}{:>11}{:>9}{:>9}   verdict",
        "quantity", "meter", "measured", "error %", "limit %", "U %"
    )?;
    for c in &r.checks {
        writeln!(
            out,
            "  {:<10}{:>14}{:>14}{:>11}{:>9}{:>9}   {}",
            c.quantity,
            num(c.meter_value, 5),
            num(c.measured_value, 5),
            error_text(c.error_percent),
            num(c.limit_percent, 2),
            num(c.uncertainty_percent, 2),
            super::style::word(&c.verdict.as_str().to_uppercase()),
        )?;
        writeln!(out, "  {:<10}  as: {}", "", c.definition)?;
        if let Some(n) = &c.note {
            writeln!(out, "  {:<10}  note: {n}", "")?;
        }
    }
    for w in &r.warnings {
        writeln!(out, "  warning      {w}")?;
    }
    writeln!(
        out,
        "  rule         guarded acceptance, ILAC-G8:09/2019: our uncertainty U (k = 2) is the guard band"
    )?;
    sign_off(
        out,
        "wiring",
        &r.wiring_hints,
        "no fault pattern recognised",
        CAUTIONS,
    )
}
