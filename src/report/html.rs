//! One self-contained HTML report: inline CSS and SVG, no script, nothing fetched, readable
//! offline and printable.
//!
//! Sections: title and a generation note; inputs and settings; for several captures a summary
//! table (status per file) and a histogram of their power factors; per capture its results
//! (`value ± U`), the verdict against a circuit model when there is one, its plots and warnings;
//! the capacitor bank and meter checks when given; the methods; the safety cautions.
//!
//! The report holds no date, time, host or anything else that changes from run to run: the same
//! inputs give the same bytes. Every string that comes from a file name or a file's content goes
//! through [`escape`].

mod capture;
mod checks;
mod three_phase;

use capture::capture_section;
use checks::{bank_section, meter_section};

use super::plot::trend::TrendResult;
use super::plot::{self, Plot, PlotOptions};
use super::table::{num, pm};
use crate::analysis::{Analysis, Settings};
use crate::check::bank::{BankReport, Nameplate};
use crate::check::expected::{Expectation, Expected};
use crate::check::meter::MeterReport;
use crate::warning::{Severity, Warning};
use std::fmt::Write as _;
use std::io::{self, Write};

/// Escapes text for HTML element content and quoted attribute values.
pub fn escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            c => out.push(c),
        }
    }
    out
}

/// The status of one file in a summary (from its warnings only).
pub use crate::warning::Status;

/// One line of a summary table.
#[derive(Debug, Clone, PartialEq)]
pub struct BatchRow {
    /// The file as given.
    pub file: String,
    /// Its status.
    pub status: Status,
    /// Why (the error, or the first warning); empty when ok.
    pub message: String,
    /// The verdicts of the checks that ran, in a few words; empty when none ran.
    pub checks: String,
}

/// One capture in the report.
#[derive(Debug, Clone)]
pub enum Entry<'a> {
    /// A capture that was analysed; `expectation` is its circuit model evaluated at the measured
    /// frequency (for the Monte Carlo histogram), when compared with one.
    Analysed {
        /// The analysis.
        analysis: &'a Analysis,
        /// The model's prediction at the measured frequency.
        expectation: Option<&'a Expectation>,
        /// Its windows over time, for the trend plot (`None`: not computed, too short).
        trend: Option<&'a TrendResult>,
    },
    /// A file that could not be read or analysed.
    Failed {
        /// The file as given.
        file: String,
        /// The error, in one line.
        message: String,
    },
}

/// A capacitor bank check to include.
#[derive(Debug, Clone, Copy)]
pub struct BankSection<'a> {
    /// The check.
    pub report: &'a BankReport,
    /// The nameplate it used.
    pub nameplate: &'a Nameplate,
    /// The capture with the bank out.
    pub before: &'a Analysis,
    /// The capture with the bank in.
    pub after: &'a Analysis,
}

/// A meter check to include.
#[derive(Debug, Clone, Copy)]
pub struct MeterSection<'a> {
    /// The check.
    pub report: &'a MeterReport,
    /// The capture it was checked against.
    pub analysis: &'a Analysis,
}

/// Everything one report shows.
#[derive(Debug, Clone)]
pub struct HtmlDoc<'a> {
    /// The title.
    pub title: String,
    /// Inputs and settings, as (name, value) rows, in order.
    pub settings: Vec<(String, String)>,
    /// The captures, in input order.
    pub entries: Vec<Entry<'a>>,
    /// What the plots show.
    pub plot_options: PlotOptions,
    /// PF penalty threshold, drawn on the batch PF histogram.
    pub pf_threshold: Option<f64>,
    /// Summary rows of a batch; `None`: built from `entries` when there is more than one.
    pub batch: Option<Vec<BatchRow>>,
    /// A capacitor bank check.
    pub bank: Option<BankSection<'a>>,
    /// A meter check.
    pub meter: Option<MeterSection<'a>>,
}

impl<'a> HtmlDoc<'a> {
    /// A report of `entries` with default plot options and no checks.
    pub fn new(title: impl Into<String>, entries: Vec<Entry<'a>>) -> Self {
        HtmlDoc {
            title: title.into(),
            settings: Vec::new(),
            entries,
            plot_options: PlotOptions::default(),
            pf_threshold: None,
            batch: None,
            bank: None,
            meter: None,
        }
    }
}

/// The safety cautions of every report (the README's Safety section).
pub const SAFETY: [&str; 5] = [
    "Capturing these traces means measuring on live mains. This tool only reads files; the \
     measurement is yours.",
    "Use voltage probes and current clamps rated for the circuit: differential probes for line \
     voltages, and a CAT rating (CAT II, III or IV) and working voltage that match the point of \
     measurement. Check leads and probes before each use.",
    "Never float an oscilloscope by removing or defeating its protective earth to measure between \
     two live points: use rated differential probes or an isolated-input instrument.",
    "Capacitor banks and power-factor capacitors hold a dangerous charge after disconnection. \
     Wait the discharge time on the nameplate and verify with a meter before touching terminals.",
    "Follow your local electrical codes, lock-out/tag-out procedures and licensed practice; where \
     they and this text differ, they win.",
];

/// The methods, named as in the README's "Methods".
const METHODS: [(&str, &str); 6] = [
    (
        "Frequency",
        "a coarse estimate from a Hann-windowed FFT with two-point interpolation (interpolated \
         DFT), checked against sub-multiples so a strong harmonic is not taken for the \
         fundamental, then refined by the phase slope of harmonic least-squares fits over \
         sub-records.",
    ),
    (
        "Phasors",
        "DC and harmonics 1..H fitted by least squares at the measured frequency (the IEEE Std \
         1057 sine fit extended to all harmonics), exact on a non-integer number of cycles. The \
         DFT phase angle is the angle of V1 minus the angle of I1.",
    ),
    (
        "Zero crossings",
        "crossings of each trace through its DC level, armed by a hysteresis band above the \
         noise, each placed by a least-squares cubic through the samples around it; rising and \
         falling edges averaged over all cycles. Harmonics shift zero crossings; the DFT angle \
         belongs to the fundamental.",
    ),
    (
        "Quantities",
        "IEEE Std 1459-2010 single-phase definitions; RMS and P are means over whole cycles, the \
         rounding of that span to whole samples corrected with the fitted Fourier series. THD is \
         THD-F, in percent of the fundamental.",
    ),
    (
        "Uncertainty",
        "expanded uncertainty U with coverage factor k from each figure's effective degrees of \
         freedom (k = 2 unless a Type A part rests on few windows) by the GUM law of propagation (JCGM \
         100:2008): Type A from the spread over sub-records of about 200 ms or the fit noise, Type \
         B from the instrument limits in the settings, each rectangular.",
    ),
    (
        "Verdicts",
        "guarded acceptance with a guard band equal to U (ILAC-G8:09/2019): consistent (pass) \
         when the value ± U lies inside the accepted band, outside (fail) when it lies wholly \
         beyond it, otherwise inconclusive.",
    ),
];

const CSS: &str = "\
:root{--ink:#232b33;--muted:#5f6870;--rule:#d9dee3;--band:#f6f3ea;--v:#1f5f7a;--i:#c45a1c;\
--pass:#2e7d4f;--fail:#a31f34;--unsure:#9a6200}\
*{box-sizing:border-box}\
body{margin:0;background:#fbfaf7;color:var(--ink);font:15px/1.5 system-ui,-apple-system,\
'Segoe UI',Roboto,'Noto Sans','DejaVu Sans',sans-serif}\
main{max-width:1000px;margin:0 auto;padding:24px 28px 48px;background:#fff;\
border-left:1px solid var(--rule);border-right:1px solid var(--rule)}\
header{border-bottom:3px solid var(--v);padding-bottom:10px;margin-bottom:18px}\
h1{font-size:26px;margin:0 0 4px}h2{font-size:20px;margin:32px 0 8px;padding-top:10px;\
border-top:1px solid var(--rule)}h3{font-size:16px;margin:20px 0 6px}\
.note{color:var(--muted);font-size:13px;margin:2px 0}\
table{border-collapse:collapse;margin:6px 0 12px;font-size:14px}\
th,td{text-align:left;padding:3px 10px 3px 0;border-bottom:1px solid var(--rule);\
vertical-align:top}th{font-weight:600;color:var(--muted)}\
td.num{font-variant-numeric:tabular-nums;white-space:nowrap}\
table.results td:first-child{min-width:230px}\
.badge{display:inline-block;padding:0 8px;border-radius:9px;font-size:12px;font-weight:700;\
letter-spacing:.04em;text-transform:uppercase;color:#fff;vertical-align:middle}\
.ok,.pass,.consistent{background:var(--pass)}.warning,.inconclusive{background:var(--unsure)}\
.error,.fail,.outside{background:var(--fail)}\
figure{margin:12px 0 18px}figure svg{max-width:100%;height:auto;display:block;\
border:1px solid var(--rule)}figcaption{color:var(--muted);font-size:13px;margin-top:4px}\
.pair{display:flex;flex-wrap:wrap;gap:16px}.pair figure{flex:1 1 440px;margin:12px 0 18px}\
ul.warn li,ul.finding li,ul.notes li{margin:2px 0}.verdict{background:var(--band);padding:8px 12px;border-left:4px solid \
var(--muted);margin:8px 0}.safety{background:#fff4f0;border-left:4px solid var(--fail);\
padding:6px 14px}.sign{margin-top:28px;color:var(--muted)}\
code{font-size:13px}\
@media print{body{background:#fff}main{border:0;max-width:none;padding:0}\
h2{break-before:auto}figure{break-inside:avoid}}\
";

/// Writes `doc` as one HTML file.
pub fn write_html(out: &mut dyn Write, doc: &HtmlDoc) -> io::Result<()> {
    let mut h = String::with_capacity(1 << 20);
    render(&mut h, doc).map_err(io::Error::other)?;
    out.write_all(h.as_bytes())?;
    out.flush()
}

/// What the parts of a report outside a capture's own section (the file list, the summary table,
/// the PF histogram) need of that capture, so that the sections can be written out one by one
/// as captures are analysed ([`capture_html`], [`write_html_around`]).
#[derive(Debug, Clone, PartialEq)]
pub struct Digest {
    /// The number of the capture's section (its anchor `capture-N`).
    pub anchor: usize,
    /// The file as given.
    pub file: String,
    /// Analysed (or it could not be read).
    pub analysed: bool,
    /// True PF, for the histogram.
    pub true_pf: Option<f64>,
    /// True PF ± U, as the summary table shows it.
    pub pf_text: String,
    /// DFT phase angle ± U, as the summary table shows it.
    pub angle_text: String,
}

impl Digest {
    /// The digest of `entry`, whose section is numbered `anchor`.
    pub fn of(anchor: usize, entry: &Entry) -> Digest {
        match entry {
            Entry::Analysed { analysis: a, .. } => match &a.three_phase {
                // a three-phase capture is summed up by its effective PF (IEEE 1459 P/Se)
                Some(t) => Digest {
                    anchor,
                    file: a.path.display().to_string(),
                    analysed: true,
                    true_pf: t.figures.effective.pf,
                    pf_text: t
                        .figures
                        .effective
                        .pf
                        .map_or_else(|| "n/a".into(), |pf| format!("{pf:.4} (PFe)")),
                    angle_text: format!("{}: per phase", a.system),
                },
                None => Digest {
                    anchor,
                    file: a.path.display().to_string(),
                    analysed: true,
                    true_pf: a.quantities.true_pf,
                    pf_text: pm(a.quantities.true_pf, a.uncertainty.true_pf, ""),
                    angle_text: pm(
                        a.quantities.phase_angle_dft_deg,
                        a.uncertainty.phase_angle_deg.dft,
                        "",
                    ),
                },
            },
            Entry::Failed { file, .. } => Digest {
                anchor,
                file: file.clone(),
                analysed: false,
                true_pf: None,
                pf_text: String::new(),
                angle_text: String::new(),
            },
        }
    }
}

/// One capture's section of a report, numbered `anchor`, for a report written in pieces.
pub fn capture_html(anchor: usize, entry: &Entry, options: &PlotOptions) -> String {
    let mut h = String::new();
    // writing to a String cannot fail
    let _ = entry_section(&mut h, anchor, entry, options);
    h
}

/// Writes a report whose capture sections were written already (by [`capture_html`], in the
/// order of `digests`) and are copied from `sections`; `doc.entries` is not used.
pub fn write_html_around(
    out: &mut dyn Write,
    doc: &HtmlDoc,
    digests: &[Digest],
    sections: &mut dyn io::Read,
) -> io::Result<()> {
    let mut h = String::with_capacity(1 << 16);
    render_head(&mut h, doc, digests).map_err(io::Error::other)?;
    out.write_all(h.as_bytes())?;
    io::copy(sections, out)?;
    h.clear();
    render_tail(&mut h, doc).map_err(io::Error::other)?;
    out.write_all(h.as_bytes())?;
    out.flush()
}

fn render(h: &mut String, doc: &HtmlDoc) -> std::fmt::Result {
    let digests: Vec<Digest> = doc
        .entries
        .iter()
        .enumerate()
        .map(|(k, e)| Digest::of(k + 1, e))
        .collect();
    render_head(h, doc, &digests)?;
    for (entry, d) in doc.entries.iter().zip(&digests) {
        entry_section(h, d.anchor, entry, &doc.plot_options)?;
    }
    render_tail(h, doc)
}

fn entry_section(
    h: &mut String,
    k: usize,
    entry: &Entry,
    options: &PlotOptions,
) -> std::fmt::Result {
    match entry {
        Entry::Analysed {
            analysis,
            expectation,
            trend,
        } => capture_section(h, k, analysis, *expectation, *trend, options),
        Entry::Failed { file, message } => writeln!(
            h,
            "<section id=\"capture-{k}\">\n<h2>{} <span class=\"badge error\">error\
             </span></h2>\n<p>This file could not be read or analysed: {}</p>\n</section>",
            escape(file),
            escape(message)
        ),
    }
}

/// Everything before the capture sections.
fn render_head(h: &mut String, doc: &HtmlDoc, digests: &[Digest]) -> std::fmt::Result {
    let title = escape(&doc.title);
    write!(
        h,
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n\
         <meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n\
         <title>{title}</title>\n<style>{CSS}</style>\n</head>\n<body>\n<main>\n"
    )?;
    let analysed = digests.iter().filter(|d| d.analysed).count();
    let failed = digests.len() - analysed;
    writeln!(h, "<header>\n<h1>{title}</h1>")?;
    writeln!(
        h,
        "<p class=\"note\">Made by tracephase {} from {} capture file{} ({} analysed{}). The \
         report holds no date or time, so the same captures and settings always give the same \
         file; date and sign it at the end when it becomes a record.</p>\n</header>",
        env!("CARGO_PKG_VERSION"),
        digests.len(),
        if digests.len() == 1 { "" } else { "s" },
        analysed,
        if failed > 0 {
            format!(", {failed} could not be read")
        } else {
            String::new()
        }
    )?;
    settings_section(h, doc, digests)?;
    let rows = doc
        .batch
        .clone()
        .or_else(|| (doc.entries.len() > 1).then(|| summary_rows(&doc.entries)));
    if let Some(rows) = rows {
        summary_section(h, doc, digests, &rows)?;
    }
    Ok(())
}

/// Everything after the capture sections.
fn render_tail(h: &mut String, doc: &HtmlDoc) -> std::fmt::Result {
    if let Some(b) = &doc.bank {
        bank_section(h, b)?;
    }
    if let Some(m) = &doc.meter {
        meter_section(h, m)?;
    }
    methods_section(h, doc)?;
    safety_section(h, doc)?;
    writeln!(
        h,
        "<p class=\"sign\">checked by ______________________________ &nbsp; date \
         ______________</p>\n</main>\n</body>\n</html>"
    )
}

/// The summary rows of `entries`: error for a failed file; otherwise the capture's status (from
/// its warnings only), its first warning as the message and its model verdict as the checks.
pub fn summary_rows(entries: &[Entry]) -> Vec<BatchRow> {
    entries
        .iter()
        .map(|e| match e {
            Entry::Failed { file, message } => BatchRow {
                file: file.clone(),
                status: Status::Error,
                message: message.clone(),
                checks: String::new(),
            },
            Entry::Analysed { analysis: a, .. } => BatchRow {
                file: a.path.display().to_string(),
                status: a.status(),
                message: first_of(&super::wire::words(a, Severity::Warning)),
                checks: a
                    .expected
                    .as_ref()
                    .map(|x| match &x.reason {
                        Some(why) => format!("model {}: {why}", x.verdict.as_str()),
                        None => format!("model {}", x.verdict.as_str()),
                    })
                    .unwrap_or_default(),
            },
        })
        .collect()
}

/// The first of `items` and how many more there are: `clipped (and 2 more)`; empty for none.
pub fn first_of(items: &[String]) -> String {
    match items {
        [] => String::new(),
        [one] => one.clone(),
        [first, rest @ ..] => format!("{first} (and {} more)", rest.len()),
    }
}

/// Settings as report rows (name with unit, value), for [`HtmlDoc::settings`].
pub fn settings_rows(s: &Settings) -> Vec<(String, String)> {
    let u = &s.uncertainty;
    let mut rows = vec![
        ("voltage scale (V per unit)".into(), num(s.v_scale, 6)),
        ("current scale (A per unit)".into(), num(s.i_scale, 6)),
        ("current channel skew removed (s)".into(), num(s.skew_s, 4)),
        ("highest harmonic order".into(), s.harmonics.to_string()),
        ("PF penalty threshold".into(), num(s.pf_threshold, 3)),
        (
            "voltage probe ratio accuracy (± % of reading)".into(),
            num(u.v_ratio_percent, 3),
        ),
        (
            "current clamp ratio accuracy (± % of reading)".into(),
            num(u.i_ratio_percent, 3),
        ),
        (
            "probe pair phase error (± °)".into(),
            num(u.phase_error_deg, 3),
        ),
        ("residual skew (± s)".into(), num(u.skew_s, 3)),
        ("sample clock (± ppm)".into(), num(u.clock_ppm, 3)),
        (
            "harmonics, frequency response (± % of reading)".into(),
            num(u.harmonic_percent, 3),
        ),
    ];
    rows.push((
        "converter resolution".into(),
        match &u.adc {
            Some(adc) => format!(
                "{} bits, full scale {} V and {} A",
                adc.bits,
                num(adc.v_full_scale, 4),
                num(adc.i_full_scale, 4)
            ),
            None => "the smallest step seen in the samples".into(),
        },
    ));
    rows
}

fn settings_section(h: &mut String, doc: &HtmlDoc, digests: &[Digest]) -> std::fmt::Result {
    writeln!(h, "<section id=\"inputs\">\n<h2>Inputs and settings</h2>")?;
    writeln!(h, "<table>\n<tr><th>file</th><th>status</th></tr>")?;
    for d in digests {
        let status = if d.analysed {
            "analysed"
        } else {
            "could not be read"
        };
        writeln!(
            h,
            "<tr><td><a href=\"#capture-{}\">{}</a></td><td>{status}</td></tr>",
            d.anchor,
            escape(&d.file)
        )?;
    }
    writeln!(h, "</table>")?;
    let o = &doc.plot_options;
    let lim = plot::spectrum::voltage_limits(o.bus_voltage_v);
    let mut rows = doc.settings.clone();
    rows.push((
        "IEEE 519-2014 voltage row".into(),
        match o.bus_voltage_v {
            Some(v) => format!("{} ({} V bus)", lim.bus, num(v, 4)),
            None => format!("{} (assumed: no bus voltage given)", lim.bus),
        },
    ));
    rows.push((
        "ISC/IL for current limits".into(),
        o.isc_over_il
            .map(|r| num(r, 4))
            .unwrap_or_else(|| "not given: current limits not drawn".into()),
    ));
    writeln!(h, "<table>\n<tr><th>setting</th><th>value</th></tr>")?;
    for (name, value) in &rows {
        writeln!(
            h,
            "<tr><td>{}</td><td class=\"num\">{}</td></tr>",
            escape(name),
            escape(value)
        )?;
    }
    writeln!(h, "</table>\n</section>")
}

fn summary_section(
    h: &mut String,
    doc: &HtmlDoc,
    digests: &[Digest],
    rows: &[BatchRow],
) -> std::fmt::Result {
    writeln!(h, "<section id=\"summary\">\n<h2>Summary</h2>")?;
    let count = |s: Status| rows.iter().filter(|r| r.status == s).count();
    writeln!(
        h,
        "<p>{} files: {} ok, {} with warnings, {} with errors.</p>",
        rows.len(),
        count(Status::Ok),
        count(Status::Warning),
        count(Status::Error)
    )?;
    // a column for the checks' verdicts when any capture had a check
    let any_checks = rows.iter().any(|r| !r.checks.is_empty());
    writeln!(
        h,
        "<table>\n<tr><th>file</th><th>status</th><th>true PF</th><th>phase angle (°)</th>\
         {}<th>message</th></tr>",
        if any_checks { "<th>checks</th>" } else { "" }
    )?;
    // each row's capture by file, looked up once (a batch report may hold thousands)
    let mut by_file: std::collections::HashMap<&str, &Digest> = std::collections::HashMap::new();
    for d in digests {
        by_file.entry(d.file.as_str()).or_insert(d);
    }
    for row in rows {
        let (link, pf, angle) = match by_file.get(row.file.as_str()) {
            Some(d) => (Some(d.anchor), d.pf_text.clone(), d.angle_text.clone()),
            None => (None, String::new(), String::new()),
        };
        let file = match link {
            Some(k) => format!("<a href=\"#capture-{k}\">{}</a>", escape(&row.file)),
            None => escape(&row.file),
        };
        writeln!(
            h,
            "<tr><td>{file}</td><td><span class=\"badge {s}\">{s}</span></td>\
             <td class=\"num\">{}</td><td class=\"num\">{}</td>{}<td>{}</td></tr>",
            escape(&pf),
            escape(&angle),
            if any_checks {
                format!("<td>{}</td>", escape(&row.checks))
            } else {
                String::new()
            },
            escape(&row.message),
            s = row.status.as_str(),
        )?;
    }
    writeln!(h, "</table>")?;
    let pfs: Vec<f64> = digests.iter().filter_map(|d| d.true_pf).collect();
    match plot::pf::plot(&pfs, doc.pf_threshold) {
        Ok(svg) => writeln!(
            h,
            "<figure>{svg}<figcaption>The true power factor |P/S| of every analysed capture, in \
             bins of {}.</figcaption></figure>",
            plot::pf::BIN
        )?,
        Err(e) => writeln!(
            h,
            "<p class=\"note\">No PF histogram: {}.</p>",
            escape(&e.0)
        )?,
    }
    writeln!(h, "</section>")
}

fn row(h: &mut String, name: &str, value: &str) -> std::fmt::Result {
    writeln!(
        h,
        "<tr><td>{}</td><td class=\"num\">{}</td></tr>",
        escape(name),
        escape(value)
    )
}

fn verdict_badge(v: &str) -> String {
    format!("<span class=\"badge {v}\">{v}</span>")
}

fn methods_section(h: &mut String, doc: &HtmlDoc) -> std::fmt::Result {
    writeln!(h, "<section id=\"methods\">\n<h2>Methods</h2>\n<ul>")?;
    for (name, text) in METHODS {
        writeln!(h, "<li><strong>{name}.</strong> {}</li>", escape(text))?;
    }
    let lim = plot::spectrum::voltage_limits(doc.plot_options.bus_voltage_v);
    writeln!(
        h,
        "<li><strong>Limits.</strong> {}</li>\n</ul>\n</section>",
        escape(&format!(
            "harmonic voltage limits from IEEE 519-2014 ({} row: {} % individual, {} % THD); \
             current limits from IEEE 519-2014 {} only when ISC/IL is given. {}",
            lim.bus,
            num(lim.individual_percent, 2),
            num(lim.thd_percent, 2),
            plot::spectrum::current_table(doc.plot_options.bus_voltage_v).0,
            plot::spectrum::STATISTICS_NOTE
        ))
    )
}

fn safety_section(h: &mut String, doc: &HtmlDoc) -> std::fmt::Result {
    writeln!(
        h,
        "<section id=\"safety\">\n<h2>Safety</h2>\n<div class=\"safety\">\n<ul>"
    )?;
    for s in SAFETY {
        writeln!(h, "<li>{}</li>", escape(s))?;
    }
    if doc.bank.is_some() {
        writeln!(
            h,
            "<li>Capacitor banks: {}.</li>",
            escape(super::bank::CAUTIONS)
        )?;
    }
    if doc.meter.is_some() {
        writeln!(h, "<li>Metering: {}.</li>", escape(super::meter::CAUTIONS))?;
    }
    writeln!(h, "</ul>\n</div>\n</section>")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn escape_replaces_every_markup_character() {
        assert_eq!(
            escape(r#"<script>alert("x") & 'y'</script>"#),
            "&lt;script&gt;alert(&quot;x&quot;) &amp; &#39;y&#39;&lt;/script&gt;"
        );
        assert_eq!(escape("230 V ± 1 %"), "230 V ± 1 %");
        assert_eq!(escape(""), "");
    }

    #[test]
    fn a_failed_file_is_escaped_and_listed_as_an_error() {
        let doc = HtmlDoc::new(
            "t",
            vec![
                Entry::Failed {
                    file: "<b>x.csv".into(),
                    message: "line 2: '<i>' is not a number".into(),
                },
                Entry::Failed {
                    file: "y.csv".into(),
                    message: "empty".into(),
                },
            ],
        );
        let mut out = Vec::new();
        write_html(&mut out, &doc).unwrap();
        let html = String::from_utf8(out).unwrap();
        assert!(!html.contains("<b>x") && !html.contains("<i>"));
        assert!(html.contains("&lt;b&gt;x.csv"));
        assert!(html.contains("2 files: 0 ok, 0 with warnings, 2 with errors."));
        assert!(!html.to_ascii_lowercase().contains("<script"));
        assert!(
            !html.contains("http"),
            "nothing is fetched or linked outside"
        );
    }
}
