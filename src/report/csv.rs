//! CSV: one row per capture, the JSON keys flattened with dots; the spectrum is left out.

use super::Exporter;
use super::wire::{AnalysisRecord, flatten};
use crate::analysis::Analysis;
use std::io::{self, Write};

/// Writes CSV rows, the header before the first.
#[derive(Debug, Default)]
pub struct CsvExporter {
    header_written: bool,
}

fn io_err(e: ::csv::Error) -> io::Error {
    io::Error::other(e)
}

impl Exporter for CsvExporter {
    fn write(&mut self, out: &mut dyn Write, analysis: &Analysis) -> io::Result<()> {
        let value = serde_json::to_value(AnalysisRecord::from(analysis))?;
        let cells = flatten(&value);
        let mut w = ::csv::Writer::from_writer(&mut *out);
        if !self.header_written {
            w.write_record(cells.iter().map(|(k, _)| k.as_str()))
                .map_err(io_err)?;
            self.header_written = true;
        }
        w.write_record(cells.iter().map(|(_, v)| v.as_str()))
            .map_err(io_err)?;
        w.flush()?;
        drop(w);
        out.flush()
    }
}
