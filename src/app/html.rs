//! `report`: captures analysed (and compared with a model) and written as one self-contained
//! HTML file, with each plot optionally also written as its own SVG file.
//!
//! The HTML is rendered in memory, written to a temporary file beside the output and renamed
//! over it, so an interrupted run never leaves half a report. Bad files give one `error:` line
//! each and still appear in the report as failed entries.

use super::{ConfigError, Outcome, resolve_channels};
use crate::analysis::{self, Analysis, Settings};
use crate::capture::{self, LoadOptions};
use crate::check::circuit::Circuit;
use crate::check::expected::Expectation;
use crate::check::tolerance::{Distribution, MonteCarloConfig};
use crate::cli::ReportArgs;
use crate::report::html::{
    BatchRow, Digest, Entry, HtmlDoc, settings_rows, write_html, write_html_around,
};
use crate::report::plot::trend::{MIN_WINDOWS, TrendResult};
use crate::report::plot::{self, Plot, PlotOptions};
use crate::trend as over_time;
use std::collections::HashMap;
use std::fs;
use std::io::{self, Write};
use std::path::{Path, PathBuf};

/// Settings for one `report` run, validated before any file is read.
struct ReportConfig {
    load: LoadOptions,
    settings: Settings,
    expect: Option<(Circuit, MonteCarloConfig)>,
    plot_options: PlotOptions,
}

fn config(a: &ReportArgs) -> Result<ReportConfig, ConfigError> {
    let (load, mut settings) = resolve_channels(&a.uncertainty, &a.channels, a.harmonics)?;
    let expect = super::resolve_threshold_and_model(
        &mut settings,
        a.pf_threshold,
        a.expect.as_deref(),
        &a.monte_carlo,
    )?;
    Ok(ReportConfig {
        load,
        settings,
        expect,
        plot_options: super::resolve_plot_options(&a.pcc)?,
    })
}

/// The report's entries for these results, in their order.
fn entries(results: &[FileResult]) -> Vec<Entry<'_>> {
    results
        .iter()
        .map(|r| match r {
            Ok((analysis, predicted, trend)) => Entry::Analysed {
                analysis,
                expectation: predicted.as_ref(),
                trend: trend.as_ref(),
            },
            Err((file, message)) => Entry::Failed {
                file: file.clone(),
                message: message.clone(),
            },
        })
        .collect()
}

/// One file's result: the analysis, its model prediction and its trend (for a report's trend
/// plot), or the file and why it failed.
pub type FileResult =
    Result<(Analysis, Option<Expectation>, Option<TrendResult>), (String, String)>;

/// Loads and analyses one file, with its trend when `with_trend`.
pub(super) fn analyse_with_trend(
    path: &Path,
    load: &LoadOptions,
    settings: &Settings,
    with_trend: bool,
) -> Result<(Analysis, Option<TrendResult>), String> {
    let c = capture::load(path, load).map_err(|e| e.to_string())?;
    let trend = with_trend
        .then(|| over_time::trend_if_long(&c, settings, MIN_WINDOWS))
        .flatten()
        .map(|t| t.map_err(|e| e.to_string()));
    let a = analysis::analyze(c, settings).map_err(|e| e.to_string())?;
    Ok((a, trend))
}

/// Runs `report`.
pub fn run_report(a: &ReportArgs, out: &mut dyn Write, err: &mut dyn Write) -> Outcome {
    let cfg = match config(a) {
        Ok(c) => c,
        Err(e) => {
            let _ = writeln!(err, "error: {e}");
            return Outcome::InputErrors;
        }
    };
    let mut outcome = Outcome::Ok;
    let mut results: Vec<FileResult> = Vec::with_capacity(a.files.len());
    for path in &a.files {
        match analyse_with_trend(path, &cfg.load, &cfg.settings, true) {
            Ok((mut an, trend)) => {
                let mut predicted = None;
                if let Some((circuit, mc)) = &cfg.expect {
                    if let Err(e) = an.single_phase_only("--expect") {
                        let _ = writeln!(err, "error: {e}");
                        outcome = outcome.worst(Outcome::InputErrors);
                        continue;
                    }
                    predicted = an.compare_with_model(circuit, mc);
                    if an.expected.as_ref().is_some_and(|e| e.failed()) {
                        outcome = outcome.worst(Outcome::VerdictFailed);
                    }
                }
                results.push(Ok((an, predicted, trend)));
            }
            Err(msg) => {
                let _ = writeln!(err, "error: {msg}");
                outcome = outcome.worst(Outcome::InputErrors);
                let file = path.display().to_string();
                let message = msg
                    .strip_prefix(&format!("{file}: "))
                    .unwrap_or(&msg)
                    .to_string();
                results.push(Err((file, message)));
            }
        }
    }
    let options = cfg.plot_options;
    let entries = entries(&results);
    let title = match a.files.as_slice() {
        [one] => format!("tracephase report: {}", one.display()),
        many => format!("tracephase report: {} captures", many.len()),
    };
    let mut doc = HtmlDoc::new(title, entries);
    doc.settings = settings_rows(&cfg.settings);
    if let Some((circuit, mc)) = &cfg.expect {
        doc.settings.push((
            "circuit model".into(),
            format!(
                "{} ({})",
                a.expect
                    .as_deref()
                    .map(|p| p.display().to_string())
                    .unwrap_or_default(),
                circuit.describe()
            ),
        ));
        doc.settings.push((
            "Monte Carlo".into(),
            format!(
                "{} draws, {}, seed {}",
                mc.draws,
                match mc.distribution {
                    Distribution::Uniform => "uniform",
                    Distribution::Normal => "normal",
                },
                mc.seed
            ),
        ));
    }
    doc.plot_options = options;
    doc.pf_threshold = Some(cfg.settings.pf_threshold);

    let mut html = Vec::new();
    let written = write_html(&mut html, &doc).and_then(|()| write_atomically(&a.output, &html));
    if let Err(e) = written {
        let _ = writeln!(
            err,
            "error: {}: could not write the report: {e}",
            a.output.display()
        );
        return Outcome::InputErrors;
    }
    let failed = results.iter().filter(|r| r.is_err()).count();
    let _ = writeln!(
        out,
        "wrote {} ({} capture{}{})",
        a.output.display(),
        results.len(),
        if results.len() == 1 { "" } else { "s" },
        if failed > 0 {
            format!(", {failed} could not be read")
        } else {
            String::new()
        }
    );
    if let Some(dir) = &a.plot_dir {
        let mut used: HashMap<String, usize> = HashMap::new();
        let mut count = 0;
        for (an, predicted, trend) in results.iter().flatten() {
            let base = file_stem(an);
            let seen = used.entry(base.clone()).or_insert(0);
            *seen += 1;
            let stem = if *seen == 1 {
                base
            } else {
                format!("{base}-{seen}")
            };
            let mut plots = plot::plots_with(an, &options, predicted.as_ref());
            plots.extend(
                trend
                    .as_ref()
                    .and_then(|t| plot::trend::report_plot(t, &an.events)),
            );
            match write_plots(dir, &stem, &plots) {
                Ok(paths) => count += paths.len(),
                Err(e) => {
                    let _ = writeln!(
                        err,
                        "error: {}: could not write the plots: {e}",
                        dir.display()
                    );
                    return Outcome::InputErrors;
                }
            }
        }
        let _ = writeln!(out, "wrote {count} plots to {}", dir.display());
    }
    let _ = out.flush();
    outcome
}

/// Writes every plot of `a` (default options; the trend plot when `trend` has enough windows)
/// as `STEM-NAME.svg` into `dir`, creating it, and returns the paths written. STEM is the
/// capture's file stem, made safe for any file system.
pub fn write_plot_dir(
    dir: &Path,
    a: &Analysis,
    expectation: Option<&Expectation>,
    trend: Option<&TrendResult>,
    options: &PlotOptions,
) -> io::Result<Vec<PathBuf>> {
    let mut plots = plot::plots_with(a, options, expectation);
    plots.extend(trend.and_then(|t| plot::trend::report_plot(t, &a.events)));
    write_plots(dir, &file_stem(a), &plots)
}

fn write_plots(dir: &Path, stem: &str, plots: &[Plot]) -> io::Result<Vec<PathBuf>> {
    fs::create_dir_all(dir)?;
    let mut written = Vec::new();
    for p in plots {
        if let Ok(svg) = &p.svg {
            let path = dir.join(format!("{stem}-{}.svg", p.name));
            write_atomically(&path, svg.as_bytes())?;
            written.push(path);
        }
    }
    Ok(written)
}

fn file_stem(a: &Analysis) -> String {
    sanitise(
        &a.path
            .file_stem()
            .map(|s| s.to_string_lossy().into_owned())
            .unwrap_or_default(),
    )
}

/// A file name part that is safe everywhere: ASCII letters, digits, `-`, `_` and inner `.`;
/// anything else becomes `_`; never empty, never starting with a dot.
pub fn sanitise(stem: &str) -> String {
    let s: String = stem
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || matches!(c, '-' | '_' | '.') {
                c
            } else {
                '_'
            }
        })
        .take(120)
        .collect();
    let s = s.trim_start_matches('.').to_string();
    if s.is_empty() { "capture".into() } else { s }
}

/// Writes `bytes` to a temporary file beside `path`, then renames it over `path`.
fn write_atomically(path: &Path, bytes: &[u8]) -> io::Result<()> {
    write_atomically_with(path, |f| f.write_all(bytes))
}

/// Writes `path` through `write` into a temporary file beside it, synced and then renamed over
/// it, so that the path holds the old file or the whole new one, never part of one.
fn write_atomically_with(
    path: &Path,
    write: impl FnOnce(&mut fs::File) -> io::Result<()>,
) -> io::Result<()> {
    let dir = path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let name = path
        .file_name()
        .ok_or_else(|| io::Error::other("the output path names no file"))?;
    // renamed over, a device or other special file would be replaced by a plain file
    if fs::metadata(path).is_ok_and(|m| !m.is_file()) {
        return Err(io::Error::other(
            "it is not a plain file (a folder or a device): give a file name",
        ));
    }
    let tmp = dir.join(format!(
        ".{}.{}.tmp",
        name.to_string_lossy(),
        std::process::id()
    ));
    let result = (|| {
        let mut f = fs::File::create(&tmp)?;
        write(&mut f)?;
        f.sync_all()?;
        fs::rename(&tmp, path)
    })();
    if result.is_err() {
        let _ = fs::remove_file(&tmp);
    }
    result
}

/// Writes `doc` as HTML to `path` (atomically); the error is one line naming the file.
pub fn save(path: &Path, doc: &HtmlDoc) -> Result<(), String> {
    let mut html = Vec::new();
    write_html(&mut html, doc)
        .and_then(|()| write_atomically(path, &html))
        .map_err(|e| format!("{}: could not write the report: {e}", path.display()))
}

/// A report of analysed captures (with the circuit model's prediction where one was compared)
/// and of files that failed, as `analyze --report` writes it.
pub fn save_analyses(
    path: &Path,
    title: String,
    results: &[FileResult],
    settings: &Settings,
    options: &PlotOptions,
) -> Result<(), String> {
    let mut doc = HtmlDoc::new(title, entries(results));
    doc.plot_options = *options;
    doc.settings = settings_rows(settings);
    doc.pf_threshold = Some(settings.pf_threshold);
    save(path, &doc)
}

/// A batch report: its capture sections were written one by one, in order, into the file
/// `sections` as the captures were analysed (by [`crate::report::html::capture_html`]); `digests` and `rows` describe
/// the same captures for the file list and the summary table.
pub fn save_spooled(
    path: &Path,
    title: String,
    digests: &[Digest],
    rows: Vec<BatchRow>,
    sections: &Path,
    options: &PlotOptions,
    warnings: &[String],
) -> Result<(), String> {
    let mut doc = HtmlDoc::new(title, Vec::new());
    doc.plot_options = *options;
    doc.batch = Some(rows);
    doc.settings = vec![(
        "settings".into(),
        "per capture, as recorded in the batch summary".into(),
    )];
    // the run's own warnings (a sidecar pattern that matched no capture), as told on stderr
    doc.settings
        .extend(warnings.iter().map(|w| ("warning".to_string(), w.clone())));
    let written = fs::File::open(sections).and_then(|from| {
        let mut from = io::BufReader::new(from);
        write_atomically_with(path, |f| {
            let mut w = io::BufWriter::new(f);
            write_html_around(&mut w, &doc, digests, &mut from)?;
            w.flush()
        })
    });
    written.map_err(|e| format!("{}: could not write the report: {e}", path.display()))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn stems_are_made_safe() {
        assert_eq!(sanitise("demo-plant feeder"), "demo-plant_feeder");
        assert_eq!(sanitise("<script>x"), "_script_x");
        assert_eq!(sanitise("..hidden"), "hidden");
        assert_eq!(sanitise(""), "capture");
        assert_eq!(sanitise("Zähler.1"), "Z_hler.1");
    }
}
