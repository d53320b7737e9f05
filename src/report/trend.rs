//! `trend` output: a table per capture, one JSON object per capture (JSON Lines), or CSV rows
//! of every window with a header once.

use super::Format;
use super::table::num;
use super::wire::flatten;
use super::wire::trend::{TrendRecord, TrendRow};
use std::io::{self, Write};

/// Writes trend records in one format; `begin`/`write`/`finish` as the other exporters.
#[derive(Debug)]
pub struct TrendWriter {
    format: Format,
    columns: Option<Vec<String>>,
}

impl TrendWriter {
    /// A writer of `format`.
    pub fn new(format: Format) -> Self {
        TrendWriter {
            format,
            columns: None,
        }
    }

    /// Writes one capture's record.
    pub fn write(&mut self, out: &mut dyn Write, r: &TrendRecord) -> io::Result<()> {
        match self.format {
            Format::Json => {
                serde_json::to_writer(&mut *out, &super::Versioned::new(r))?;
                writeln!(out)?;
            }
            Format::Csv => self.csv(out, r)?,
            Format::Table => table(out, r)?,
        }
        out.flush()
    }

    fn csv(&mut self, out: &mut dyn Write, r: &TrendRecord) -> io::Result<()> {
        let mut w = ::csv::Writer::from_writer(&mut *out);
        for row in &r.rows {
            let cells = flatten(&serde_json::to_value(row)?);
            let columns = match &self.columns {
                Some(c) => c,
                None => {
                    let c: Vec<String> = cells.iter().map(|(k, _)| k.clone()).collect();
                    w.write_record(&c).map_err(io::Error::other)?;
                    self.columns.insert(c)
                }
            };
            let line = columns.iter().map(|col| {
                cells
                    .iter()
                    .find(|(k, _)| k == col)
                    .map(|(_, v)| v.as_str())
                    .unwrap_or("")
            });
            w.write_record(line).map_err(io::Error::other)?;
        }
        w.flush()
    }
}

fn opt(x: Option<f64>, sig: usize) -> String {
    x.map_or("n/a".into(), |v| num(v, sig))
}

fn fixed(x: Option<f64>, decimals: usize) -> String {
    x.map_or("n/a".into(), |v| format!("{v:.decimals$}"))
}

fn table(out: &mut dyn Write, r: &TrendRecord) -> io::Result<()> {
    let what = match r.aggregate {
        Some(a) => format!("intervals of {a} (IEC 61000-4-30 aggregation)"),
        None => format!("windows of {} cycles", r.window_cycles),
    };
    writeln!(out, "{}: {} {}, {}", r.file, r.rows.len(), what, r.system)?;
    writeln!(out, "  windows: {}", r.alignment)?;
    let three = r.rows.iter().any(|x| x.total.is_some());
    let head: &[&str] = if three {
        &[
            "row", "start s", "end s", "f Hz", "P W", "Q1 var", "S VA", "PFe", "warnings",
        ]
    } else {
        &[
            "row", "start s", "end s", "f Hz", "V rms", "I rms", "angle °", "PF", "PF1", "THD-V %",
            "THD-I %", "P W", "Q1 var", "S VA", "warnings",
        ]
    };
    let cells: Vec<Vec<String>> = r.rows.iter().map(|x| cells(x, three)).collect();
    let widths: Vec<usize> = (0..head.len())
        .map(|k| {
            cells
                .iter()
                .map(|c| c[k].chars().count())
                .chain([head[k].chars().count()])
                .max()
                .unwrap_or(0)
        })
        .collect();
    let line = |c: &[String]| {
        let parts: Vec<String> = c
            .iter()
            .zip(&widths)
            .map(|(s, w)| format!("{s:>w$}"))
            .collect();
        format!("  {}", parts.join("  ").trim_end())
    };
    let head: Vec<String> = head.iter().map(|s| s.to_string()).collect();
    writeln!(out, "{}", line(&head))?;
    for c in &cells {
        writeln!(out, "{}", line(c))?;
    }
    if three {
        writeln!(out, "  per-phase figures: --format json or csv")?;
    }
    if let Some(l) = &r.left_out {
        writeln!(
            out,
            "  left out: {:.4} s to {:.4} s ({:.2} cycles), shorter than a row",
            l.start_s, l.end_s, l.cycles
        )?;
    }
    if !r.warning_codes.is_empty() {
        writeln!(out, "  loading warnings: {}", r.warning_codes.join(", "))?;
    }
    for (k, e) in r.events.iter().enumerate() {
        let head = if k == 0 { "events" } else { "" };
        writeln!(out, "  {head:<13}- {}", super::table::event_text(e))?;
    }
    if let Some(text) = super::table::reference_text(&r.dip_swell_reference) {
        writeln!(out, "  dips/swells  against {text}")?;
    }
    writeln!(out)
}

fn cells(x: &TrendRow, three: bool) -> Vec<String> {
    let mut c = vec![
        x.window.to_string(),
        format!("{:.4}", x.start_s),
        format!("{:.4}", x.end_s),
        format!("{:.4}", x.frequency_hz),
    ];
    let warnings = if let Some(e) = &x.error {
        format!("no figures: {e}")
    } else {
        x.warning_codes.join(" ")
    };
    if three {
        match &x.total {
            Some(t) => c.extend([
                num(t.active_w, 6),
                num(t.reactive_var, 6),
                num(t.arithmetic_apparent_va, 6),
                fixed(t.effective_pf, 4),
            ]),
            None => c.extend(std::iter::repeat_n("n/a".to_string(), 4)),
        }
    } else {
        match &x.single {
            Some(f) => c.extend([
                num(f.voltage.rms, 6),
                num(f.current.rms, 6),
                fixed(f.phase_angle_deg.dft, 3),
                fixed(f.true_pf, 4),
                fixed(f.displacement_pf, 4),
                opt(f.voltage.thd_percent, 3),
                opt(f.current.thd_percent, 3),
                num(f.power.active_w, 6),
                num(f.power.reactive_var, 6),
                num(f.power.apparent_va, 6),
            ]),
            None => c.extend(std::iter::repeat_n("n/a".to_string(), 10)),
        }
    }
    c.push(warnings);
    c
}
