//! `meter`: the reading, the class and the PF convention checked, the capture analysed, the
//! comparison, its report.

use super::bank::analyse_file;
use super::{ConfigError, Outcome, format, resolve_channels};
use crate::check::meter::{self, AccuracyClass, Connection, Meter, MeterVerdict, PfSign, Reading};
use crate::cli::MeterArgs;
use crate::report;
use std::io::Write;

/// Runs `meter`.
pub fn run_meter(a: &MeterArgs, out: &mut dyn Write, err: &mut dyn Write) -> Outcome {
    let config = (|| -> Result<_, ConfigError> {
        let text = reading_text(&a.reading)?;
        let reading = Reading::parse(&text).map_err(|e| ConfigError(format!("--reading: {e}")))?;
        let class =
            AccuracyClass::parse(&a.class).map_err(|e| ConfigError(format!("--class: {e}")))?;
        let sign = PfSign::parse(&a.pf_sign).map_err(|e| ConfigError(format!("--pf-sign: {e}")))?;
        let (load, settings) = resolve_channels(&a.uncertainty, &a.channels, a.harmonics)?;
        let plot_options = super::resolve_plot_options(&a.pcc)?;
        if let Some(r) = a.rated_current
            && !(r.is_finite() && r > 0.0)
        {
            return Err(ConfigError(format!(
                "--rated-current must be a positive number of amperes, not {r}"
            )));
        }
        let reactive_class = a
            .reactive_class
            .as_deref()
            .map(AccuracyClass::parse)
            .transpose()
            .map_err(|e| ConfigError(format!("--reactive-class: {e}")))?;
        let connection = a
            .connection
            .as_deref()
            .map(Connection::parse)
            .transpose()
            .map_err(|e| ConfigError(format!("--connection: {e}")))?;
        let spec = Meter {
            rated_current_a: a.rated_current,
            connection,
            reactive_class,
            ..Meter::new(class, sign)
        };
        spec.validate().map_err(|e| {
            let option = match e {
                meter::MeterError::NotReactive { .. } => "--reactive-class",
                _ => "--connection",
            };
            ConfigError(format!("{option}: {e}"))
        })?;
        Ok((reading, spec, load, settings, plot_options))
    })();
    let (reading, spec, load, settings, plot_options) = match config {
        Ok(c) => c,
        Err(e) => {
            let _ = writeln!(err, "error: {e}");
            return Outcome::InputErrors;
        }
    };
    let analysis = match analyse_file(&a.file, &load, &settings) {
        Ok(x) => x,
        Err(e) => {
            let _ = writeln!(err, "error: {e}");
            return Outcome::InputErrors;
        }
    };
    let Some(m) = analysis.meter_measured() else {
        let _ = writeln!(
            err,
            "error: {}: no defined power factor (no fundamental in a trace): nothing to check",
            a.file.display()
        );
        return Outcome::InputErrors;
    };
    let mut r = meter::check(&reading, &m, &spec, &analysis.warnings);
    if let Some(p) = reading.p_w {
        // three phases: which connection of the meter's CTs reproduces the reading, first
        let mut hints = analysis.meter_connection_hints(p, reading.q_var);
        hints.append(&mut r.wiring_hints);
        r.wiring_hints = hints;
    }
    if report::meter::write(out, &r, &analysis, format(a.format)).is_err() {
        let _ = writeln!(
            err,
            "error: could not write the results (is the output closed?)"
        );
        return Outcome::InputErrors;
    }
    if let Some(path) = &a.report {
        use crate::report::html::{Entry, HtmlDoc, MeterSection, settings_rows};
        let entries = vec![Entry::Analysed {
            analysis: &analysis,
            expectation: None,
            trend: None,
        }];
        let mut doc = HtmlDoc::new("tracephase meter check", entries);
        doc.settings = settings_rows(&settings);
        doc.plot_options = plot_options;
        doc.meter = Some(MeterSection {
            report: &r,
            analysis: &analysis,
        });
        if let Err(e) = super::html::save(path, &doc) {
            let _ = writeln!(err, "error: {e}");
            return Outcome::InputErrors;
        }
    }
    if r.checks.iter().any(|c| c.verdict == MeterVerdict::Fail) {
        Outcome::VerdictFailed
    } else {
        Outcome::Ok
    }
}

/// The reading as typed, or from a file when it starts with `@`: the first line that is neither
/// blank nor a `#` comment.
fn reading_text(arg: &str) -> Result<String, ConfigError> {
    let Some(path) = arg.strip_prefix('@') else {
        return Ok(arg.to_string());
    };
    let text = std::fs::read_to_string(path)
        .map_err(|e| ConfigError(format!("{path}: cannot read the reading file: {e}")))?;
    text.lines()
        .map(str::trim)
        .find(|l| !l.is_empty() && !l.starts_with('#'))
        .map(str::to_string)
        .ok_or_else(|| ConfigError(format!("{path}: no reading in the file")))
}
