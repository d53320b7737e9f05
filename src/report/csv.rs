//! CSV: one row per capture, the JSON keys flattened with dots; the spectrum is left out.

use super::Exporter;
use super::wire::{AnalysisRecord, flatten};
use crate::analysis::Analysis;
use std::io::{self, Write};

/// Writes CSV rows, the header before the first.
#[derive(Debug, Default)]
pub struct CsvExporter {
    /// Columns, fixed by the first row; later rows are matched to them by key.
    columns: Option<Vec<String>>,
}

fn io_err(e: ::csv::Error) -> io::Error {
    io::Error::other(e)
}

impl Exporter for CsvExporter {
    fn write(&mut self, out: &mut dyn Write, analysis: &Analysis) -> io::Result<()> {
        let value = serde_json::to_value(AnalysisRecord::from(analysis))?;
        let cells = flatten(&value);
        let mut w = ::csv::Writer::from_writer(&mut *out);
        let columns = match &self.columns {
            Some(c) => c,
            None => {
                let c: Vec<String> = cells.iter().map(|(k, _)| k.clone()).collect();
                w.write_record(&c).map_err(io_err)?;
                self.columns.insert(c)
            }
        };
        let row = columns.iter().map(|col| {
            cells
                .iter()
                .find(|(k, _)| k == col)
                .map(|(_, v)| v.as_str())
                .unwrap_or("")
        });
        w.write_record(row).map_err(io_err)?;
        w.flush()?;
        drop(w);
        out.flush()
    }
}
