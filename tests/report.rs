//! Tests of the plots and the HTML report: every SVG is well-formed XML holding its series and
//! labels, file names are escaped, the report is the same bytes on every run, `--plot-dir` writes
//! the files, and `tracephase report` works end to end on the demo captures.

use assert_cmd::Command;
use std::fs;
use std::path::{Path, PathBuf};
use tempfile::TempDir;
use tracephase::analysis::{self, Analysis};
use tracephase::capture::{self, LoadOptions};
use tracephase::check::circuit::Circuit;
use tracephase::check::tolerance::{Distribution, MonteCarloConfig};
use tracephase::report::plot::{self, PlotOptions, phasor};

fn tracephase() -> Command {
    Command::cargo_bin("tracephase").unwrap()
}

fn fixture(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("fixtures")
        .join(name)
}

/// The demo CSV captures, sorted (what `fixtures/demo-*.csv` expands to).
fn demo_csvs() -> Vec<PathBuf> {
    let mut files: Vec<PathBuf> = fs::read_dir(fixture(""))
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| {
            let name = p.file_name().unwrap().to_string_lossy().into_owned();
            name.starts_with("demo-") && name.ends_with(".csv")
        })
        .collect();
    files.sort();
    assert!(files.len() >= 3, "demo captures missing: {files:?}");
    files
}

const RLC: &str = "demo-lab-bench-series-rlc-semicolon-decimal-comma.csv";
const COMPRESSOR: &str = "demo-workshop-compressor-before-capacitor.csv";

fn analyse(name: &str) -> Analysis {
    let c = capture::load(&fixture(name), &LoadOptions::default()).unwrap();
    analysis::analyze(c, &analysis::Settings::default()).unwrap()
}

fn monte_carlo() -> MonteCarloConfig {
    MonteCarloConfig {
        draws: 20_000,
        seed: 1,
        distribution: Distribution::Uniform,
    }
}

/// Parses an SVG and returns all its text, one string per text node.
fn svg_texts(svg: &str) -> Vec<String> {
    let doc = roxmltree::Document::parse(svg).unwrap_or_else(|e| panic!("bad SVG: {e}\n{svg}"));
    assert_eq!(doc.root_element().tag_name().name(), "svg");
    doc.descendants()
        .filter(|n| n.is_text())
        .filter_map(|n| n.text())
        .map(|t| t.trim().to_string())
        .filter(|t| !t.is_empty())
        .collect()
}

/// Number of elements whose stroke or fill is `colour` (`#RRGGBB`, any case).
fn painted(svg: &str, colour: &str) -> usize {
    let doc = roxmltree::Document::parse(svg).unwrap();
    doc.descendants()
        .filter(|n| {
            ["stroke", "fill"].iter().any(|a| {
                n.attribute(*a)
                    .is_some_and(|v| v.eq_ignore_ascii_case(colour))
            })
        })
        .count()
}

const VOLTAGE: &str = "#1F5F7A";
const CURRENT: &str = "#C45A1C";

#[test]
fn every_plot_is_well_formed_svg_with_its_series_and_labels() {
    let a = analyse(COMPRESSOR);
    let options = PlotOptions {
        isc_over_il: Some(35.0),
        ..PlotOptions::default()
    };
    let plots = plot::plots_with(&a, &options, None);
    let names: Vec<&str> = plots.iter().map(|p| p.name).collect();
    assert_eq!(names, ["waveform", "phasor", "spectrum", "triangle"]);
    let text = |name: &str| {
        let p = plots.iter().find(|p| p.name == name).unwrap();
        let svg = p.svg.as_ref().unwrap();
        (svg.clone(), svg_texts(svg).join("\n"))
    };

    let (svg, t) = text("waveform");
    for label in [
        "voltage (V)",
        "current (A)",
        "time (ms)",
        "V1 fitted",
        "I1 fitted",
    ] {
        assert!(t.contains(label), "waveform lacks '{label}':\n{t}");
    }
    assert!(t.contains("zero crossings"));
    // the traces and their fits are drawn in their own colours
    assert!(painted(&svg, VOLTAGE) >= 3, "voltage series missing");
    assert!(painted(&svg, CURRENT) >= 3, "current series missing");

    let (_, t) = text("phasor");
    let label = phasor::angle_label(&a).unwrap();
    assert_eq!(label, "θ = 38.0° lagging");
    assert!(t.contains(&label), "{t}");
    assert!(t.contains("V1") && t.contains("I1"));

    let (svg, t) = text("spectrum");
    assert!(
        t.contains("harmonic order") && t.contains("% of fundamental"),
        "{t}"
    );
    for order in ["3", "5", "7", "11"] {
        assert!(
            t.lines().any(|l| l == order),
            "order {order} not labelled:\n{t}"
        );
    }
    assert!(t.contains("IEEE 519 voltage limit 5.0 %"), "{t}");
    assert!(
        t.contains("assumed"),
        "the ≤ 1 kV row is said to be assumed"
    );
    assert!(
        t.contains("current limit"),
        "ISC/IL given: current limits drawn"
    );
    assert!(painted(&svg, VOLTAGE) >= 3 && painted(&svg, CURRENT) >= 3);

    let (_, t) = text("triangle");
    for label in ["P1 = ", "Q1 = ", "S1 = ", "kW", "kvar"] {
        assert!(t.contains(label), "triangle lacks '{label}':\n{t}");
    }
}

#[test]
fn current_limits_are_left_out_without_a_short_circuit_ratio() {
    let a = analyse(COMPRESSOR);
    let p = plot::plots_with(&a, &PlotOptions::default(), None);
    let spectrum = p.iter().find(|p| p.name == "spectrum").unwrap();
    let t = svg_texts(spectrum.svg.as_ref().unwrap()).join("\n");
    assert!(!t.contains("current limit"), "{t}");
    assert!(spectrum.caption.contains("not drawn"));
    // a medium-voltage bus picks its own row
    let mv = PlotOptions {
        bus_voltage_v: Some(11_000.0),
        ..PlotOptions::default()
    };
    let p = plot::plots_with(&a, &mv, None);
    let spectrum = p.iter().find(|p| p.name == "spectrum").unwrap();
    let t = svg_texts(spectrum.svg.as_ref().unwrap()).join("\n");
    assert!(t.contains("IEEE 519 voltage limit 3.0 %"), "{t}");
}

/// IEEE 519-2014 assesses its limits on the 95th/99th percentiles of many windows (from
/// memory): the plot and its caption say one capture is indicative only. A 132 kV bus takes the
/// current limits of Table 3 (69-161 kV, from memory): 5.0 % at h = 5 for ISC/IL 75, half of
/// Table 2's 10 %.
#[test]
fn the_spectrum_says_its_limits_are_for_statistics_and_picks_the_table_by_voltage() {
    let a = analyse(COMPRESSOR);
    let hv = PlotOptions {
        bus_voltage_v: Some(132_000.0),
        isc_over_il: Some(75.0),
        ..PlotOptions::default()
    };
    let p = plot::plots_with(&a, &hv, None);
    let spectrum = p.iter().find(|p| p.name == "spectrum").unwrap();
    let t = svg_texts(spectrum.svg.as_ref().unwrap()).join("\n");
    assert!(t.contains("indicative only"), "{t}");
    assert!(
        spectrum.caption.contains("95th percentile"),
        "{}",
        spectrum.caption
    );
    assert!(spectrum.caption.contains("indicative only"));
    assert!(
        spectrum.caption.contains("Table 3 (69-161 kV"),
        "{}",
        spectrum.caption
    );
    assert!(
        spectrum.caption.contains("TDD 6.0 %"),
        "{}",
        spectrum.caption
    );
    assert_eq!(
        plot::spectrum::current_limit_percent(75.0, 5, hv.bus_voltage_v),
        Some(5.0)
    );
}

#[test]
fn the_band_plot_shows_the_histogram_and_the_measured_angle() {
    let mut a = analyse(RLC);
    let circuit = Circuit::load(&fixture("demo-lab-bench-series-rlc.toml")).unwrap();
    let mc = monte_carlo();
    let x = a.compare_with_model(&circuit, &mc).unwrap();
    let e = a.expected.clone().unwrap();
    // the prediction handed back is the one at the measured frequency
    assert_eq!(x.frequency_hz, e.frequency_hz);
    assert_eq!(x.band_deg, e.band_deg);
    let plots = plot::plots_with(&a, &PlotOptions::default(), Some(&x));
    let band = plots.iter().find(|p| p.name == "band").unwrap();
    let svg = band.svg.as_ref().unwrap();
    let t = svg_texts(svg).join("\n");
    assert!(t.contains("worst-case band"), "{t}");
    assert!(t.contains("Monte Carlo (95 %"), "{t}");
    assert!(t.contains("measured 31.80 ± 0.58°"), "{t}");
    assert!(t.contains(&e.verdict.as_str().to_uppercase()), "{t}");
    // one bar per non-empty histogram bin, in the histogram colour
    let bins = x.monte_carlo.histogram.2.iter().filter(|c| **c > 0).count();
    assert!(painted(svg, "#8EA4BC") >= bins, "histogram bars missing");
    // without the model's histogram the band is still drawn
    let plots = plot::plots_with(&a, &PlotOptions::default(), None);
    let band = plots.iter().find(|p| p.name == "band").unwrap();
    assert!(
        svg_texts(band.svg.as_ref().unwrap())
            .join("\n")
            .contains("worst-case band")
    );
}

#[test]
fn plots_for_gives_named_svgs() {
    let a = analyse(RLC);
    let plots = plot::plots_for(&a);
    assert_eq!(plots.len(), 4);
    for (name, svg) in &plots {
        assert!(!name.is_empty());
        svg_texts(svg);
    }
}

#[test]
fn a_script_in_a_file_name_is_escaped_in_the_report() {
    let dir = TempDir::new().unwrap();
    let evil = dir.path().join("<script>alert(1)<\\script>.csv");
    fs::copy(fixture(RLC), &evil).unwrap();
    let out = dir.path().join("r.html");
    tracephase()
        .arg("report")
        .arg(&evil)
        .arg("-o")
        .arg(&out)
        .arg("--plot-dir")
        .arg(dir.path().join("plots"))
        .assert()
        .code(0);
    let html = fs::read_to_string(&out).unwrap();
    assert!(
        !html.to_ascii_lowercase().contains("<script"),
        "unescaped script tag in the report"
    );
    assert!(html.contains("&lt;script&gt;alert(1)"));
    // and the plot files get a safe name
    let names: Vec<String> = fs::read_dir(dir.path().join("plots"))
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    assert!(
        names.contains(&"_script_alert_1___script_-waveform.svg".to_string()),
        "{names:?}"
    );
}

fn report(files: &[PathBuf], out: &Path) -> assert_cmd::assert::Assert {
    tracephase()
        .arg("report")
        .args(files)
        .arg("-o")
        .arg(out)
        .assert()
}

#[test]
fn the_demo_report_is_byte_identical_across_runs() {
    let dir = TempDir::new().unwrap();
    let files = demo_csvs();
    let (a, b) = (dir.path().join("a.html"), dir.path().join("b.html"));
    report(&files, &a).code(0);
    report(&files, &b).code(0);
    let (a, b) = (fs::read(a).unwrap(), fs::read(b).unwrap());
    assert!(a.len() > 10_000);
    assert!(a == b, "two runs gave different reports");
}

#[test]
fn report_of_the_demo_captures_works_from_the_command_line() {
    let dir = TempDir::new().unwrap();
    let out = dir.path().join("X.html");
    let files = demo_csvs();
    report(&files, &out)
        .code(0)
        .stdout(predicates::str::contains("wrote"));
    let html = fs::read_to_string(&out).unwrap();
    assert!(html.starts_with("<!DOCTYPE html>"));
    assert!(
        !html.to_ascii_lowercase().contains("<script"),
        "no script at all"
    );
    // the only address is the SVG namespace name, which is never fetched
    let bare = html.replace("xmlns=\"http://www.w3.org/2000/svg\"", "");
    assert!(
        !bare.contains("http://") && !bare.contains("https://"),
        "nothing fetched"
    );
    assert!(
        !bare.contains("src=") && !bare.contains("url("),
        "nothing loaded"
    );
    assert!(
        !html.contains("<link") && !html.contains("<img"),
        "everything inline"
    );
    // four plots per capture and the PF histogram of the summary
    assert_eq!(html.matches("<svg").count(), 4 * files.len() + 1);
    for f in &files {
        assert!(
            html.contains(&f.display().to_string()),
            "{} missing",
            f.display()
        );
    }
    for section in [
        "Inputs and settings",
        "Summary",
        "Methods",
        "Safety",
        "differential probes",
        "CAT rating",
        "protective earth",
        "discharge time",
        "licensed practice",
        "± ",
        "Zero crossings",
    ] {
        assert!(html.contains(section), "'{section}' missing");
    }
    // every SVG inlined is well-formed
    for part in html.split("<svg").skip(1) {
        let end = part.find("</svg>").unwrap();
        svg_texts(&format!("<svg{}</svg>", &part[..end]));
    }
}

#[test]
fn plot_dir_gets_one_svg_per_plot_and_capture() {
    let dir = TempDir::new().unwrap();
    let plots = dir.path().join("nested/plots");
    tracephase()
        .arg("report")
        .arg(fixture(RLC))
        .arg(fixture(COMPRESSOR))
        .arg("-o")
        .arg(dir.path().join("r.html"))
        .arg("--plot-dir")
        .arg(&plots)
        .assert()
        .code(0)
        .stdout(predicates::str::contains("wrote 8 plots"));
    for stem in [
        "demo-lab-bench-series-rlc-semicolon-decimal-comma",
        "demo-workshop-compressor-before-capacitor",
    ] {
        for name in ["waveform", "phasor", "spectrum", "triangle"] {
            let p = plots.join(format!("{stem}-{name}.svg"));
            let svg = fs::read_to_string(&p).unwrap_or_else(|_| panic!("{} missing", p.display()));
            svg_texts(&svg);
        }
    }
    // the library entry point for other commands
    let a = analyse(RLC);
    let other = dir.path().join("other");
    let written =
        tracephase::app::html::write_plot_dir(&other, &a, None, None, &PlotOptions::default())
            .unwrap();
    assert_eq!(written.len(), 4);
    assert!(written.iter().all(|p| p.starts_with(&other) && p.exists()));
}

#[test]
fn a_bad_file_is_reported_and_kept_in_the_report() {
    let dir = TempDir::new().unwrap();
    let bad = dir.path().join("empty.csv");
    fs::write(&bad, "").unwrap();
    let out = dir.path().join("r.html");
    let assert = tracephase()
        .arg("report")
        .arg(fixture(RLC))
        .arg(&bad)
        .arg("-o")
        .arg(&out)
        .assert()
        .code(2);
    let stderr = String::from_utf8(assert.get_output().stderr.clone()).unwrap();
    assert_eq!(stderr.lines().count(), 1, "{stderr}");
    assert!(
        stderr.starts_with("error: ") && stderr.contains("empty.csv"),
        "{stderr}"
    );
    let html = fs::read_to_string(&out).unwrap();
    // the good capture's PF of 0.85 is below the 0.90 threshold: a finding, which leaves it ok
    assert!(
        html.contains("2 files: 1 ok, 0 with warnings, 1 with errors."),
        "summary missing"
    );
    assert!(html.contains("could not be read or analysed"));
    // no temporary file is left beside the report
    let left: Vec<_> = fs::read_dir(dir.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.ends_with(".tmp"))
        .collect();
    assert!(left.is_empty(), "{left:?}");
}

#[test]
fn a_model_gives_a_verdict_and_a_band_plot() {
    let dir = TempDir::new().unwrap();
    let out = dir.path().join("r.html");
    tracephase()
        .arg("report")
        .arg(fixture(RLC))
        .arg("--expect")
        .arg(fixture("demo-lab-bench-series-rlc.toml"))
        .arg("--draws")
        .arg("20000")
        .arg("-o")
        .arg(&out)
        .assert()
        .code(0);
    let html = fs::read_to_string(&out).unwrap();
    assert!(html.contains("Expected vs measured"));
    assert!(html.contains("<span class=\"badge consistent\">consistent</span>"));
    assert!(html.contains("class=\"plot-band\""));
    assert!(html.contains("20000 draws, uniform, seed 1"));
}

#[test]
fn an_unwritable_output_is_an_error() {
    let dir = TempDir::new().unwrap();
    let out = dir.path().join("no/such/folder/r.html");
    tracephase()
        .arg("report")
        .arg(fixture(RLC))
        .arg("-o")
        .arg(&out)
        .assert()
        .code(2)
        .stderr(predicates::str::contains("could not write the report"));
}

#[test]
fn bank_and_meter_checks_get_their_sections_and_cautions() {
    use tracephase::check::bank::{CapacitorStandard, Nameplate, check_bank};
    use tracephase::check::meter::{AccuracyClass, PfSign, Reading, check_meter};
    use tracephase::report::html::{BankSection, Entry, HtmlDoc, MeterSection, write_html};

    let before = analyse("demo-plant-feeder-bank-off.csv");
    let after = analyse("demo-plant-feeder-bank-on.csv");
    let side = |a: &Analysis| a.bank_sides().unwrap();
    let plate = Nameplate {
        rated_kvar: 75.0,
        rated_voltage: 400.0,
        rated_frequency_hz: 50.0,
        steps_kvar: vec![25.0; 3],
        three_phase: true,
        standard: CapacitorStandard::default(),
        supply: None,
        target_pf: 0.95,
        connection: None,
    };
    let bank = check_bank(&side(&before), &side(&after), &plate);
    let meter_capture = analyse(COMPRESSOR);
    let measured = meter_capture.meter_measured().unwrap();
    let meter = check_meter(
        &Reading::parse("pf=0.79,p=1.75kW").unwrap(),
        &measured,
        AccuracyClass::parse("1").unwrap(),
        PfSign::parse("power-flow").unwrap(),
    );
    let mut doc = HtmlDoc::new(
        "bank & meter <check>",
        vec![Entry::Analysed {
            analysis: &before,
            expectation: None,
            trend: None,
        }],
    );
    doc.bank = Some(BankSection {
        report: &bank,
        nameplate: &plate,
        before: &before,
        after: &after,
    });
    doc.meter = Some(MeterSection {
        report: &meter,
        analysis: &meter_capture,
    });
    let mut out = Vec::new();
    write_html(&mut out, &doc).unwrap();
    let html = String::from_utf8(out).unwrap();
    assert!(html.contains("<title>bank &amp; meter &lt;check&gt;</title>"));
    assert!(html.contains("Capacitor bank check"));
    assert!(html.contains(&format!("badge {}", bank.verdict)));
    assert!(html.contains("Meter check"));
    assert!(html.matches("<tr><td>").count() >= meter.checks.len());
    // the cautions of both checks, word for word
    assert!(html.contains(&tracephase::report::html::escape(
        tracephase::report::bank::CAUTIONS
    )));
    assert!(html.contains(&tracephase::report::html::escape(
        tracephase::report::meter::CAUTIONS
    )));
}

/// `--pcc-kv` and `--isc-il` pick the IEEE 519-2014 rows the spectrum's limits come from; a
/// bad value stops before any file is read.
#[test]
fn pcc_options_pick_the_ieee_519_rows() {
    let dir = TempDir::new().unwrap();
    let out = dir.path().join("r.html");
    tracephase()
        .arg("report")
        .arg(fixture(COMPRESSOR))
        .args(["--pcc-kv", "11", "--isc-il", "35", "-o"])
        .arg(&out)
        .assert()
        .code(0);
    let html = fs::read_to_string(&out).unwrap();
    // IEEE 519-2014 Table 1, 1 kV < V ≤ 69 kV: individual 3.0 %, THD 5.0 % (from memory)
    assert!(
        html.contains("bus voltage of 11000 V (1 kV &lt; V ≤ 69 kV) (individual 3.0 %, THD 5.0 %)")
    );
    // IEEE 519-2014 Table 2, 20 ≤ ISC/IL < 50: TDD 8.0 % (from memory)
    assert!(html.contains("ISC/IL = 35.00 (TDD 8.0 %)"));
    let err = tracephase()
        .arg("report")
        .arg(fixture(COMPRESSOR))
        .args(["--isc-il", "0", "-o"])
        .arg(dir.path().join("bad.html"))
        .assert()
        .code(2)
        .get_output()
        .stderr
        .clone();
    assert!(
        String::from_utf8(err)
            .unwrap()
            .contains("--isc-il must be a positive number")
    );
    assert!(!dir.path().join("bad.html").exists());
}

/// A report put together from sections written one by one (as `batch --report` does) is byte
/// for byte the report written in one go, and a batch leaves no spool file behind.
#[test]
fn a_report_written_in_pieces_equals_one_written_at_once() {
    use tracephase::report::html::{
        Digest, Entry, HtmlDoc, capture_html, write_html, write_html_around,
    };
    let a = analyse(COMPRESSOR);
    let b = analyse(RLC);
    let entries = vec![
        Entry::Analysed {
            analysis: &a,
            expectation: None,
            trend: None,
        },
        Entry::Failed {
            file: "site/broken.csv".into(),
            message: "line 3: not a number".into(),
        },
        Entry::Analysed {
            analysis: &b,
            expectation: None,
            trend: None,
        },
    ];
    let options = PlotOptions {
        isc_over_il: Some(35.0),
        ..PlotOptions::default()
    };
    let mut whole_doc = HtmlDoc::new("pieces", entries.clone());
    whole_doc.plot_options = options;
    let mut whole = Vec::new();
    write_html(&mut whole, &whole_doc).unwrap();
    let mut sections = String::new();
    let mut digests = Vec::new();
    for (k, e) in entries.iter().enumerate() {
        sections.push_str(&capture_html(k + 1, e, &options));
        digests.push(Digest::of(k + 1, e));
    }
    let mut empty_doc = HtmlDoc::new("pieces", Vec::new());
    empty_doc.plot_options = options;
    // the summary table is built from the entries when there are several: give it the same rows
    empty_doc.batch = Some(tracephase::report::html::summary_rows(&entries));
    let mut pieces = Vec::new();
    write_html_around(&mut pieces, &empty_doc, &digests, &mut sections.as_bytes()).unwrap();
    assert!(whole.len() > 10_000);
    assert!(whole == pieces, "the two reports differ");

    let dir = TempDir::new().unwrap();
    tracephase()
        .arg("batch")
        .arg(fixture(COMPRESSOR))
        .arg("--report")
        .arg(dir.path().join("b.html"))
        .assert()
        .success();
    let names: Vec<String> = fs::read_dir(dir.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    assert_eq!(names, vec!["b.html".to_string()]);
}
