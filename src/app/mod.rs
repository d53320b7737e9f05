//! Wiring: what was typed -> resolved settings -> load -> analyse -> exporters.

pub mod bank;
pub mod bank_capture;
pub mod batch;
pub mod escape;
pub mod html;
pub mod meter;
pub mod shell;
pub mod trend;

use crate::analysis::{self, Settings};
use crate::capture::{ChannelSel, LoadOptions, SpanRequest};
use crate::check::circuit::Circuit;
use crate::check::expected::expectation;
use crate::check::tolerance::{Distribution, MAX_DRAWS, MonteCarloConfig};
use crate::cli::{
    AnalyzeArgs, ChannelArgs, Cli, Command, DistributionArg, ExpectArgs, FormatArg, MonteCarloArgs,
    PccArgs, SpanArgs, UncertaintyArgs,
};
use crate::quantity::uncertainty::{Adc, UncertaintyInputs};
use crate::report::plot::PlotOptions;
use crate::report::{self, Format};
use std::io::Write;

/// How a run ended, for the exit code.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Outcome {
    /// Every input was analysed and no verdict failed (exit code 0).
    Ok,
    /// Every input was analysed and some verdict was `outside` (exit code 1).
    VerdictFailed,
    /// Some input could not be read or analysed (exit code 2).
    InputErrors,
    /// A batch was interrupted by Ctrl-C and wound down (exit code 130, the shells' 128 + SIGINT).
    Interrupted,
}

impl Outcome {
    /// The process exit code: 0, 1, 2, or 130 after Ctrl-C.
    pub fn code(self) -> u8 {
        match self {
            Outcome::Ok => 0,
            Outcome::VerdictFailed => 1,
            Outcome::InputErrors => 2,
            Outcome::Interrupted => 130,
        }
    }

    fn worst(self, other: Outcome) -> Outcome {
        if other.code() > self.code() {
            other
        } else {
            self
        }
    }
}

/// Settings for one `analyze` run, validated once.
#[derive(Debug, Clone)]
pub struct AnalyzeConfig {
    /// How to load each file.
    pub load: LoadOptions,
    /// How to analyse it.
    pub settings: Settings,
    /// Output format.
    pub format: Format,
    /// The harmonic spectrum in the table, or as a long CSV.
    pub spectrum: bool,
    /// A circuit model to compare with, and how to sample its tolerances.
    pub expect: Option<(Circuit, MonteCarloConfig)>,
    /// Where to write an HTML report.
    pub report: Option<std::path::PathBuf>,
    /// Where to write each plot as SVG.
    pub plot_dir: Option<std::path::PathBuf>,
    /// What the plots show.
    pub plot_options: PlotOptions,
}

/// A setting that makes no sense, found before any file is read.
#[derive(Debug, thiserror::Error)]
#[error("{0}")]
pub struct ConfigError(pub String);

/// Resolves channel options into loader options and analysis settings.
pub fn resolve_channels(
    u: &UncertaintyArgs,
    c: &ChannelArgs,
    harmonics: usize,
) -> Result<(LoadOptions, Settings), ConfigError> {
    let finite_nonzero = |x: f64, name: &str| {
        if x.is_finite() && x != 0.0 {
            Ok(x)
        } else {
            Err(ConfigError(format!(
                "{name} must be a finite, non-zero number, not {x}"
            )))
        }
    };
    if let Some(r) = c.rate
        && !(r.is_finite() && r > 0.0)
    {
        return Err(ConfigError(format!(
            "--rate must be a positive number of Hz, not {r}"
        )));
    }
    if !c.skew.is_finite() {
        return Err(ConfigError(
            "--skew must be a finite number of seconds".into(),
        ));
    }
    if harmonics == 0 {
        return Err(ConfigError("--harmonics must be at least 1".into()));
    }
    Ok((
        LoadOptions {
            voltage: c.voltage.as_deref().map(ChannelSel::parse),
            current: c.current.as_deref().map(ChannelSel::parse),
            neutral: c.neutral.as_deref().map(ChannelSel::parse),
            system: c.system,
            rate_hz: c.rate,
            force_channels: c.force_channels,
            secondary_values: c.secondary,
            span: resolve_span(&c.span)?,
        },
        Settings {
            v_scale: finite_nonzero(c.v_scale, "--v-scale")?,
            i_scale: finite_nonzero(c.i_scale, "--i-scale")?,
            skew_s: c.skew,
            harmonics,
            uncertainty: resolve_uncertainty(u)?,
            pf_threshold: analysis::DEFAULT_PF_THRESHOLD,
            declared_voltage_v: match c.declared_voltage {
                None => None,
                Some(u) if u.is_finite() && u > 0.0 => Some(u),
                Some(u) => {
                    return Err(ConfigError(format!(
                        "--declared-voltage must be a positive number of volts, not {u}"
                    )));
                }
            },
        },
    ))
}

/// Checks `--from`, `--to` and `--time-zero` on their own (finite, from before to); whether
/// the span lies in a record is checked with each file.
pub fn resolve_span(s: &SpanArgs) -> Result<Option<SpanRequest>, ConfigError> {
    SpanRequest::new(s.from, s.to, s.time_zero.unwrap_or_default()).map_err(ConfigError)
}

/// Checks the point-of-common-coupling data and turns it into plot options.
pub fn resolve_plot_options(p: &PccArgs) -> Result<PlotOptions, ConfigError> {
    let positive = |x: Option<f64>, what: &str| match x {
        Some(v) if !(v.is_finite() && v > 0.0) => Err(ConfigError(format!(
            "{what} must be a positive number, not {v}"
        ))),
        _ => Ok(x),
    };
    Ok(PlotOptions {
        bus_voltage_v: positive(p.pcc_kv, "--pcc-kv")?.map(|kv| kv * 1e3),
        isc_over_il: positive(p.isc_il, "--isc-il")?,
        ..PlotOptions::default()
    })
}

/// Checks the instrument limits: each must be a finite number, zero or more.
pub fn resolve_uncertainty(u: &UncertaintyArgs) -> Result<UncertaintyInputs, ConfigError> {
    let limit = |x: f64, name: &str| {
        if x.is_finite() && x >= 0.0 {
            Ok(x)
        } else {
            Err(ConfigError(format!(
                "{name} must be zero or a positive number, not {x}"
            )))
        }
    };
    let adc = match (u.adc_bits, u.v_full_scale, u.i_full_scale) {
        (Some(bits), Some(v), Some(i)) => {
            if !(1..=32).contains(&bits) {
                return Err(ConfigError(format!(
                    "--adc-bits must be 1 to 32, not {bits}"
                )));
            }
            let fs = |x: f64, name: &str| {
                if x.is_finite() && x > 0.0 {
                    Ok(x)
                } else {
                    Err(ConfigError(format!(
                        "{name} must be a positive number, not {x}"
                    )))
                }
            };
            Some(Adc {
                bits,
                v_full_scale: fs(v, "--v-full-scale")?,
                i_full_scale: fs(i, "--i-full-scale")?,
            })
        }
        _ => None,
    };
    Ok(UncertaintyInputs {
        v_ratio_percent: limit(u.v_ratio_accuracy, "--v-ratio-accuracy")?,
        i_ratio_percent: limit(u.i_ratio_accuracy, "--i-ratio-accuracy")?,
        phase_error_deg: limit(u.phase_error, "--phase-error")?,
        skew_s: limit(u.skew_uncertainty, "--skew-uncertainty")?,
        clock_ppm: limit(u.clock_ppm, "--clock-ppm")?,
        harmonic_percent: limit(u.harmonic_accuracy, "--harmonic-accuracy")?,
        adc,
    })
}

/// Checks `--pf-threshold` and loads the `--expect` model with its Monte Carlo settings, for the
/// commands that take them.
pub fn resolve_threshold_and_model(
    settings: &mut Settings,
    pf_threshold: f64,
    expect: Option<&std::path::Path>,
    monte_carlo: &MonteCarloArgs,
) -> Result<Option<(Circuit, MonteCarloConfig)>, ConfigError> {
    if !(pf_threshold > 0.0 && pf_threshold <= 1.0) {
        return Err(ConfigError(format!(
            "--pf-threshold must be above 0 and at most 1, not {pf_threshold}"
        )));
    }
    settings.pf_threshold = pf_threshold;
    Ok(match expect {
        Some(path) => Some((
            Circuit::load(path).map_err(|e| ConfigError(e.to_string()))?,
            resolve_monte_carlo(monte_carlo)?,
        )),
        None => None,
    })
}

impl AnalyzeConfig {
    /// Builds and checks the configuration of `analyze`.
    pub fn from_args(a: &AnalyzeArgs) -> Result<Self, ConfigError> {
        let (load, mut settings) = resolve_channels(&a.uncertainty, &a.channels, a.harmonics)?;
        let expect = resolve_threshold_and_model(
            &mut settings,
            a.pf_threshold,
            a.expect.as_deref(),
            &a.monte_carlo,
        )?;
        Ok(AnalyzeConfig {
            load,
            settings,
            format: format(a.format),
            spectrum: a.spectrum,
            expect,
            report: a.report.clone(),
            plot_dir: a.plot_dir.clone(),
            plot_options: resolve_plot_options(&a.pcc)?,
        })
    }
}

pub(crate) fn format(f: FormatArg) -> Format {
    match f {
        FormatArg::Table => Format::Table,
        FormatArg::Json => Format::Json,
        FormatArg::Csv => Format::Csv,
    }
}

/// Checks the Monte Carlo settings.
pub fn resolve_monte_carlo(m: &MonteCarloArgs) -> Result<MonteCarloConfig, ConfigError> {
    if m.draws == 0 || m.draws > MAX_DRAWS {
        return Err(ConfigError(format!(
            "--draws must be from 1 to {MAX_DRAWS} (JCGM 101 asks for about 10^6 for a 95 % \
             interval to two significant digits), not {}",
            m.draws
        )));
    }
    Ok(MonteCarloConfig {
        draws: m.draws,
        seed: m.seed,
        distribution: match m.distribution {
            DistributionArg::Uniform => Distribution::Uniform,
            DistributionArg::Normal => Distribution::Normal,
        },
    })
}

/// Runs `expect`: what a model predicts at a frequency.
pub fn run_expect(a: &ExpectArgs, out: &mut dyn Write) -> Result<Outcome, ConfigError> {
    let circuit = Circuit::load(&a.model).map_err(|e| ConfigError(e.to_string()))?;
    let f = match a.freq.or(circuit.frequency_hz) {
        Some(f) if f.is_finite() && f > 0.0 => f,
        Some(f) => {
            return Err(ConfigError(format!(
                "--freq must be a positive number of Hz, not {f}"
            )));
        }
        None => {
            return Err(ConfigError(format!(
                "{}: no frequency: give --freq HZ or frequency_hz in the model",
                a.model.display()
            )));
        }
    };
    let e = expectation(&circuit, f, &resolve_monte_carlo(&a.monte_carlo)?);
    report::expect::write(out, &e, format(a.format))
        .map_err(|e| ConfigError(format!("could not write the results: {e}")))?;
    Ok(Outcome::Ok)
}

/// Runs a parsed command line, writing results to `out` and one line per bad input to `err`.
pub fn run(cli: Cli, out: &mut dyn Write, err: &mut dyn Write) -> Outcome {
    match cli.command {
        Command::Analyze(args) => match AnalyzeConfig::from_args(&args) {
            Ok(cfg) => run_analyze(&args.files, &cfg, out, err),
            Err(e) => {
                let _ = writeln!(err, "error: {e}");
                Outcome::InputErrors
            }
        },
        Command::Bank(args) => bank::run_bank(&args, out, err),
        Command::Meter(args) => meter::run_meter(&args, out, err),
        Command::Batch(args) => batch::run_batch(&args, out, err),
        Command::Report(args) => html::run_report(&args, out, err),
        Command::Trend(args) => trend::run_trend(&args, out, err),
        Command::Expect(args) => run_expect(&args, out).unwrap_or_else(|e| {
            let _ = writeln!(err, "error: {e}");
            Outcome::InputErrors
        }),
        Command::Completions(args) => shell::completions(args.shell, out, err),
        Command::Man(args) => shell::man(args.subcommand.as_deref(), out, err),
    }
}

/// Analyses each file in turn; a bad file is reported on `err` and the others go on.
pub fn run_analyze(
    files: &[std::path::PathBuf],
    cfg: &AnalyzeConfig,
    out: &mut dyn Write,
    err: &mut dyn Write,
) -> Outcome {
    let mut exporter = report::exporter(cfg.format, cfg.spectrum);
    let mut outcome = Outcome::Ok;
    let mut io_ok = exporter.begin(out).is_ok();
    // kept only when a report or plots are asked for
    let keep = cfg.report.is_some() || cfg.plot_dir.is_some();
    let mut kept: Vec<html::FileResult> = Vec::new();
    let mut csv_kind: Option<bool> = None;
    for path in files {
        let result = html::analyse_with_trend(path, &cfg.load, &cfg.settings, keep);
        match result {
            Ok((mut a, trend)) => {
                let mut predicted = None;
                if let Some((circuit, mc)) = &cfg.expect {
                    if let Err(e) = a.single_phase_only("--expect") {
                        let _ = writeln!(err, "error: {e}");
                        outcome = outcome.worst(Outcome::InputErrors);
                        continue;
                    }
                    predicted = a.compare_with_model(circuit, mc);
                    if a.expected.as_ref().is_some_and(|e| e.failed()) {
                        outcome = outcome.worst(Outcome::VerdictFailed);
                    }
                }
                // CSV columns are set by the first capture: a capture of the other kind would
                // lose its own keys without a word
                let three = a.three_phase.is_some();
                if let (Format::Csv, false) = (cfg.format, cfg.spectrum) {
                    match csv_kind {
                        Some(first) if first != three => {
                            let _ = writeln!(
                                err,
                                "error: {}: a {} capture after {} ones: the CSV's columns are \
                                 set by the first file; analyse single-phase and three-phase \
                                 captures in separate runs, or use --format json",
                                a.path.display(),
                                if three { "three-phase" } else { "single-phase" },
                                if three { "single-phase" } else { "three-phase" },
                            );
                            outcome = outcome.worst(Outcome::InputErrors);
                            continue;
                        }
                        _ => csv_kind = Some(three),
                    }
                }
                io_ok &= exporter.write(out, &a).is_ok();
                if keep {
                    kept.push(Ok((a, predicted, trend)));
                }
            }
            Err(msg) => {
                let _ = writeln!(err, "error: {msg}");
                outcome = outcome.worst(Outcome::InputErrors);
                if keep {
                    let file = path.display().to_string();
                    let m = msg.strip_prefix(&format!("{file}: ")).unwrap_or(&msg);
                    kept.push(Err((file, m.to_string())));
                }
            }
        }
    }
    if let Some(dir) = &cfg.plot_dir {
        for (a, predicted, trend) in kept.iter().flatten() {
            let written = html::write_plot_dir(
                dir,
                a,
                predicted.as_ref(),
                trend.as_ref(),
                &cfg.plot_options,
            );
            if let Err(e) = written {
                let _ = writeln!(
                    err,
                    "error: {}: could not write the plots: {e}",
                    dir.display()
                );
                outcome = outcome.worst(Outcome::InputErrors);
            }
        }
    }
    if let Some(path) = &cfg.report {
        let title = format!("tracephase analysis: {} capture(s)", files.len());
        if let Err(e) = html::save_analyses(path, title, &kept, &cfg.settings, &cfg.plot_options) {
            let _ = writeln!(err, "error: {e}");
            outcome = outcome.worst(Outcome::InputErrors);
        }
    }
    io_ok &= exporter.finish(out).is_ok();
    if !io_ok {
        let _ = writeln!(
            err,
            "error: could not write the results (is the output closed?)"
        );
        outcome = Outcome::InputErrors;
    }
    outcome
}
