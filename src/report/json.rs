//! JSON Lines: one object per capture per line, keys as in [`super::wire::AnalysisRecord`].

use super::Exporter;
use super::wire::AnalysisRecord;
use crate::analysis::Analysis;
use std::io::{self, Write};

/// Writes JSON Lines.
#[derive(Debug, Default)]
pub struct JsonExporter;

impl Exporter for JsonExporter {
    fn write(&mut self, out: &mut dyn Write, analysis: &Analysis) -> io::Result<()> {
        serde_json::to_writer(
            &mut *out,
            &super::Versioned::new(&AnalysisRecord::from(analysis)),
        )?;
        writeln!(out)?;
        out.flush()
    }
}
