//! What the user typed: clap types only. [`crate::app`] turns them into resolved settings; the
//! rest of the library never sees clap.

use crate::capture::{System, TimeZero};
use clap::{Args, Parser, Subcommand, ValueEnum};
use std::path::PathBuf;

/// Phase angle, power factor, THD and IEEE 1459 powers from captured voltage and current traces.
#[derive(Debug, Parser)]
#[command(name = "tracephase", version, about, propagate_version = true)]
pub struct Cli {
    /// What to do.
    #[command(subcommand)]
    pub command: Command,
    /// Colour for verdicts and statuses in tables: auto (on a terminal, unless NO_COLOR is set),
    /// always, never.
    #[arg(long, global = true, value_enum, default_value_t = ColorWhen::Auto, value_name = "WHEN")]
    pub color: ColorWhen,
}

/// When tables are coloured.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum ColorWhen {
    /// On a terminal, unless `NO_COLOR` is set (`CLICOLOR_FORCE` forces it).
    Auto,
    /// Always, even into a pipe or file.
    Always,
    /// Never.
    Never,
}

/// The subcommands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Analyse captures: frequency, phase angle (DFT and zero crossing), PF, THD, powers.
    #[command(after_help = ANALYZE_HELP)]
    Analyze(AnalyzeArgs),
    /// What a circuit model predicts: impedance, phase angle, PF and the band its tolerances allow.
    #[command(after_help = EXPECT_HELP)]
    Expect(ExpectArgs),
    /// Capacitor bank check from captures before and after switching it in.
    #[command(after_help = BANK_HELP)]
    Bank(BankArgs),
    /// Check a meter's PF, kW, kvar... reading against a capture, within its accuracy class.
    #[command(after_help = METER_HELP)]
    Meter(MeterArgs),
    /// A self-contained HTML report (results, verdicts, plots, cautions) of captures.
    #[command(after_help = REPORT_HELP)]
    Report(ReportArgs),
    /// Analyse whole folders of captures into one summary (CSV or JSON Lines), in parallel.
    #[command(after_help = BATCH_HELP)]
    Batch(BatchArgs),
    /// Figures over time: consecutive windows of 10 cycles (50 Hz) or 12 (60 Hz), each analysed.
    #[command(after_help = TREND_HELP)]
    Trend(TrendArgs),
    /// Print a completion script for a shell (bash, zsh, fish, powershell, elvish).
    #[command(after_help = COMPLETIONS_HELP)]
    Completions(CompletionsArgs),
    /// Print the manual page (roff) of tracephase or of one subcommand.
    #[command(after_help = MAN_HELP)]
    Man(ManArgs),
}

const ANALYZE_HELP: &str = "\
Examples:
  tracephase analyze fixtures/demo-workshop-compressor-before-capacitor.csv
  tracephase analyze --voltage 1 --current 2 --v-scale 400 --i-scale 5 \\
      fixtures/demo-lab-bench-parallel-rl-24bit.wav
  tracephase analyze fixtures/demo-lab-bench-series-rlc-semicolon-decimal-comma.csv \\
      --expect fixtures/demo-lab-bench-series-rlc.toml --format json
  tracephase analyze fixtures/records/demo-kestrel-hill-feeder-4-phase-a-fault.cfg \\
      --time-zero trigger --from -0.1 --to 0

Exit codes: 0 every file analysed; 1 every file analysed but a verdict is `outside`;
2 a file or an option could not be used (one `error:` line each, the other files still run).";

const EXPECT_HELP: &str = "\
Examples:
  tracephase expect fixtures/demo-lab-bench-series-rlc.toml
  tracephase expect fixtures/demo-lab-bench-series-rlc.toml --freq 60 --format json

Exit codes: 0 the model was evaluated; 2 the model or an option could not be used.";

const BANK_HELP: &str = "\
Examples:
  tracephase bank --before fixtures/demo-plant-feeder-bank-off.csv \\
      --after fixtures/demo-plant-feeder-bank-on.csv \\
      --nameplate fixtures/demo-plant-bank-nameplate.toml
  tracephase bank --capture site-visit/feeder-bank-switching.csv --rated-kvar 50 \\
      --rated-voltage 400 --rated-frequency 50 --supply-mva 2

Exit codes: 0 the check passed or is inconclusive; 1 the bank fails its check;
2 a capture, the nameplate or an option could not be used.";

const METER_HELP: &str = "\
Examples:
  tracephase meter fixtures/demo-workshop-compressor-after-capacitor.csv --class 1 \\
      --reading @fixtures/demo-workshop-compressor-meter.reading
  tracephase meter fixtures/demo-workshop-compressor-after-capacitor.csv --class 1 \\
      --reading pf=0.97,p=1.75kW,q=0.36kvar --format json

Exit codes: 0 the reading holds (or a check is inconclusive); 1 a check fails;
2 the capture, the reading or an option could not be used.";

const REPORT_HELP: &str = "\
Examples:
  tracephase report fixtures/demo-*.csv -o site-visit.html
  tracephase report fixtures/demo-lab-bench-series-rlc-semicolon-decimal-comma.csv \\
      --expect fixtures/demo-lab-bench-series-rlc.toml -o bench.html --plot-dir plots/

Exit codes: 0 the report was written; 1 written, but a verdict is `outside`;
2 a capture or an option could not be used, or the report could not be written.";

const BATCH_HELP: &str = "\
Examples:
  tracephase batch fixtures --out summary.csv
  tracephase batch site-visit/ --format json --out summary.jsonl --jobs 2 --resume
  tracephase batch site-visit/ --out summary.csv --report site-visit.html

Exit codes: 0 every capture analysed; 1 every capture analysed but a verdict failed;
2 some capture could not be read or analysed (its row says why; the others are kept).";

const TREND_HELP: &str = "\
Examples:
  tracephase trend fixtures/demo-workshop-compressor-before-capacitor.csv
  tracephase trend fixtures/demo-plant-feeder-bank-on.csv --format csv > windows.csv
  tracephase trend fixtures/demo-lab-bench-series-rlc-semicolon-decimal-comma.csv \\
      --window-cycles 4 --format json

Windows start at the first sample analysed (see --from) and follow one another without gaps; each is N cycles of the
frequency measured over the one before (rounded to whole samples). A last part shorter than a
window is left out and said so.

Exit codes: 0 every file analysed; 2 a file or an option could not be used (one `error:` line
each, the other files still run).";

const COMPLETIONS_HELP: &str = "\
Examples:
  tracephase completions bash > ~/.local/share/bash-completion/completions/tracephase
  tracephase completions zsh > ~/.zfunc/_tracephase
  tracephase completions fish > ~/.config/fish/completions/tracephase.fish

Exit codes: 0 the script was written; 2 it could not be written.";

const MAN_HELP: &str = "\
Examples:
  tracephase man > tracephase.1 && man ./tracephase.1
  tracephase man analyze > tracephase-analyze.1

Exit codes: 0 the page was written; 2 no such subcommand, or the page could not be written.";

/// Arguments of `completions`.
#[derive(Debug, Args)]
pub struct CompletionsArgs {
    /// The shell to write the script for.
    #[arg(value_enum)]
    pub shell: clap_complete::Shell,
}

/// Arguments of `man`.
#[derive(Debug, Args)]
pub struct ManArgs {
    /// A subcommand whose page to write instead of the main page.
    #[arg(value_name = "SUBCOMMAND")]
    pub subcommand: Option<String>,
}

/// Arguments of `analyze`.
#[derive(Debug, Args)]
#[command(allow_negative_numbers = true)]
pub struct AnalyzeArgs {
    /// Capture files (CSV, TSV, TXT or WAV; the format is read from the content).
    #[arg(required = true, value_name = "FILE")]
    pub files: Vec<PathBuf>,
    /// Highest harmonic order for THD and the spectrum (capped below the Nyquist limit).
    #[arg(long, default_value_t = 50, value_name = "N")]
    pub harmonics: usize,
    /// Output format.
    #[arg(long, value_enum, default_value_t = FormatArg::Table)]
    pub format: FormatArg,
    /// The harmonic spectrum: a table per capture after its figures (table), or a long CSV with
    /// one row per file, channel and order instead of the figures (csv); JSON always holds it.
    #[arg(long)]
    pub spectrum: bool,
    /// Compare the measured angle with a circuit model (TOML) and give a verdict.
    #[arg(long, value_name = "MODEL.toml")]
    pub expect: Option<PathBuf>,
    /// Flag a true PF below this (a utility penalty threshold).
    #[arg(long, default_value_t = 0.90, value_name = "PF")]
    pub pf_threshold: f64,
    /// Also write a self-contained HTML report here.
    #[arg(long, value_name = "PATH")]
    pub report: Option<PathBuf>,
    /// Point-of-common-coupling data for the limits on the spectrum.
    #[command(flatten)]
    pub pcc: PccArgs,
    /// Also write each plot as its own SVG file in this folder.
    #[arg(long, value_name = "DIR")]
    pub plot_dir: Option<PathBuf>,
    /// Channel, scale and timing options.
    #[command(flatten)]
    pub channels: ChannelArgs,
    /// Instrument limits for the uncertainty.
    #[command(flatten)]
    pub uncertainty: UncertaintyArgs,
    /// Monte Carlo settings for --expect.
    #[command(flatten)]
    pub monte_carlo: MonteCarloArgs,
}

/// Arguments of `bank`.
#[derive(Debug, Args)]
pub struct BankArgs {
    /// Capture taken with the bank switched out.
    #[arg(long, value_name = "FILE", required_unless_present = "capture")]
    pub before: Option<PathBuf>,
    /// Capture taken with the bank switched in.
    #[arg(long, value_name = "FILE", required_unless_present = "capture")]
    pub after: Option<PathBuf>,
    /// One capture across the bank's switching instead: the steady states either side of its
    /// largest reactive step are the before and after (the inrush and 10 cycles of settling
    /// left out), and the inrush's peak and ring frequency are measured.
    #[arg(long, value_name = "FILE", conflicts_with_all = ["before", "after"])]
    pub capture: Option<PathBuf>,
    /// Nameplate file (TOML) with any of the values below; options override it.
    #[arg(long, value_name = "FILE.toml")]
    pub nameplate: Option<PathBuf>,
    /// Rated reactive power of the whole bank, kvar.
    #[arg(long, value_name = "KVAR")]
    pub rated_kvar: Option<f64>,
    /// Rated voltage, V (line-to-line for a three-phase bank).
    #[arg(long, value_name = "V")]
    pub rated_voltage: Option<f64>,
    /// Rated frequency, Hz.
    #[arg(long, value_name = "HZ")]
    pub rated_frequency: Option<f64>,
    /// Number of equal steps [default: 1].
    #[arg(long, value_name = "N")]
    pub steps: Option<usize>,
    /// Rated kvar of each step when they differ, e.g. 10,10,20.
    #[arg(long, value_name = "KVAR,...", value_delimiter = ',')]
    pub step_kvar: Option<Vec<f64>>,
    /// The captures are of one phase of a balanced three-phase system (powers ×3).
    #[arg(long)]
    pub three_phase: bool,
    /// Target PF for the correction advice [default: 0.95].
    #[arg(long, value_name = "PF")]
    pub target_pf: Option<f64>,
    /// Acceptance band: ieee-18 (100-110 %) or iec-60831 (-5/+10 %) [default: ieee-18].
    #[arg(long, value_name = "NAME")]
    pub standard: Option<String>,
    /// How a three-phase bank's capacitors are connected: star or delta (a delta bank's
    /// branches a-b, b-c, c-a are then each resolved and judged) [default: not stated: the
    /// star-equivalent figures per phase only].
    #[arg(long, value_name = "CONNECTION")]
    pub connection: Option<String>,
    /// Supply short-circuit power at the bank's bus, MVA (for the resonance order).
    #[arg(long, value_name = "MVA", conflicts_with_all = ["transformer_kva", "transformer_z_percent"])]
    pub supply_mva: Option<f64>,
    /// Supplying transformer rating, kVA (with --transformer-z-percent).
    #[arg(long, value_name = "KVA", requires = "transformer_z_percent")]
    pub transformer_kva: Option<f64>,
    /// Supplying transformer impedance, percent.
    #[arg(long, value_name = "PERCENT", requires = "transformer_kva")]
    pub transformer_z_percent: Option<f64>,
    /// Highest harmonic order analysed.
    #[arg(long, default_value_t = 50, value_name = "N")]
    pub harmonics: usize,
    /// Output format.
    #[arg(long, value_enum, default_value_t = FormatArg::Table)]
    pub format: FormatArg,
    /// Also write a self-contained HTML report here.
    #[arg(long, value_name = "PATH")]
    pub report: Option<PathBuf>,
    /// Point-of-common-coupling data for the limits on the spectrum.
    #[command(flatten)]
    pub pcc: PccArgs,
    /// Channel, scale and timing options (the same for both captures).
    #[command(flatten)]
    pub channels: ChannelArgs,
    /// Instrument limits for the uncertainty.
    #[command(flatten)]
    pub uncertainty: UncertaintyArgs,
}

/// Arguments of `meter`.
#[derive(Debug, Args)]
pub struct MeterArgs {
    /// Capture of the metered circuit, taken while the reading was noted.
    #[arg(value_name = "FILE")]
    pub file: PathBuf,
    /// What the meter shows, e.g. pf=0.87,p=12.4kW,q=6.1kvar[,s=...,v=...,i=...].
    #[arg(long, value_name = "READING", allow_hyphen_values = true)]
    pub reading: String,
    /// Accuracy class: 1, 2 (IEC 62053-21), 0.2s, 0.5s (IEC 62053-22), ansi-0.1, ansi-0.2,
    /// ansi-0.5 (ANSI C12.20); for a meter of reactive energy only, a reactive class as for
    /// --reactive-class.
    #[arg(long, value_name = "CLASS")]
    pub class: String,
    /// The meter's reactive class, which Q is judged against (without it Q is not judged):
    /// reactive-2, reactive-3 (IEC 62053-23), fundamental-0.5s, fundamental-1s, fundamental-1,
    /// fundamental-2, fundamental-3 (IEC 62053-24, fundamental reactive energy).
    #[arg(long, value_name = "CLASS")]
    pub reactive_class: Option<String>,
    /// How the meter is connected: direct (rated current Ib) or transformer (operated from CTs,
    /// rated current In). Needed with --rated-current for classes made for both.
    #[arg(long, value_name = "CONNECTION")]
    pub connection: Option<String>,
    /// How the meter signs PF: power-flow (negative when exporting P), lead-negative (negative
    /// in the capacitive quadrants II and IV), lag-negative (negative in the inductive quadrants
    /// I and III), unsigned.
    #[arg(long, value_name = "CONVENTION", default_value = "power-flow")]
    pub pf_sign: String,
    /// The meter's rated current, A (Ib for a direct meter, In for a transformer-operated one,
    /// test amperes for ANSI): the classes' low-current rows then apply.
    #[arg(long, value_name = "A")]
    pub rated_current: Option<f64>,
    /// Also write a self-contained HTML report here.
    #[arg(long, value_name = "PATH")]
    pub report: Option<PathBuf>,
    /// Point-of-common-coupling data for the limits on the spectrum.
    #[command(flatten)]
    pub pcc: PccArgs,
    /// Highest harmonic order analysed.
    #[arg(long, default_value_t = 50, value_name = "N")]
    pub harmonics: usize,
    /// Output format.
    #[arg(long, value_enum, default_value_t = FormatArg::Table)]
    pub format: FormatArg,
    /// Channel, scale and timing options.
    #[command(flatten)]
    pub channels: ChannelArgs,
    /// Instrument limits for the uncertainty.
    #[command(flatten)]
    pub uncertainty: UncertaintyArgs,
}

/// Arguments of `batch`.
#[derive(Debug, Args)]
pub struct BatchArgs {
    /// Folders (searched recursively for .csv, .tsv, .txt and .wav), files, or `-` to read a list
    /// of files from standard input, one per line.
    #[arg(required = true, value_name = "DIR")]
    pub roots: Vec<PathBuf>,
    /// Summary file [default: standard output].
    #[arg(long, value_name = "PATH")]
    pub out: Option<PathBuf>,
    /// Summary format.
    #[arg(long, value_enum, default_value_t = SummaryFormatArg::Csv)]
    pub format: SummaryFormatArg,
    /// Parallel jobs [default: all cores].
    #[arg(long, value_name = "N")]
    pub jobs: Option<usize>,
    /// Keep the rows of --out whose file and settings are unchanged; analyse the rest.
    #[arg(long, requires = "out")]
    pub resume: bool,
    /// Take every N-th file from the K-th (1-based), for splitting a folder over N machines.
    #[arg(long, value_name = "K/N")]
    pub shard: Option<String>,
    /// Also write a self-contained HTML report here (each capture's section is spooled to a
    /// hidden file beside it while the batch runs).
    #[arg(long, value_name = "PATH")]
    pub report: Option<PathBuf>,
    /// Point-of-common-coupling data for the limits on the spectrum.
    #[command(flatten)]
    pub pcc: PccArgs,
    /// Settings that override every sidecar file.
    #[command(flatten)]
    pub overrides: OverrideArgs,
}

/// Arguments of `trend`.
#[derive(Debug, Args)]
pub struct TrendArgs {
    /// Capture files (CSV, TSV, TXT, WAV or COMTRADE; the format is read from the content).
    #[arg(required = true, value_name = "FILE")]
    pub files: Vec<PathBuf>,
    /// Cycles per window, at least 3 [default: 10 below 55 Hz, 12 from 55 to 70 Hz
    /// (IEC 61000-4-30), about 200 ms of other fundamentals].
    #[arg(long, value_name = "N")]
    pub window_cycles: Option<usize>,
    /// Aggregate the windows into intervals: 3s = 150 cycles at 50 Hz, 180 at 60 Hz
    /// (IEC 61000-4-30: quadratic mean of RMS values and THD, mean of powers).
    #[arg(long, value_enum, value_name = "INTERVAL")]
    pub aggregate: Option<AggregateArg>,
    /// Highest harmonic order for THD.
    #[arg(long, default_value_t = 50, value_name = "N")]
    pub harmonics: usize,
    /// Output format: a table per capture, one JSON object per capture (its rows under `rows`),
    /// or CSV with one row per window.
    #[arg(long, value_enum, default_value_t = FormatArg::Table)]
    pub format: FormatArg,
    /// Channel, scale and timing options.
    #[command(flatten)]
    pub channels: ChannelArgs,
}

/// Aggregation intervals of `trend`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum AggregateArg {
    /// 150 cycles at 50 Hz, 180 at 60 Hz (about 3 s).
    #[value(name = "3s")]
    ThreeSeconds,
}

/// Summary formats of `batch`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum SummaryFormatArg {
    /// CSV with a header.
    Csv,
    /// JSON Lines.
    Json,
}

/// Settings given on the command line of `batch`: each overrides the sidecar files, where the
/// same settings go by the same names with `_` for `-` (`i_ratio_accuracy = 1.5`).
#[derive(Debug, Args, Clone, Default)]
#[command(next_help_heading = "Settings (override tracephase.toml sidecars)")]
pub struct OverrideArgs {
    /// Voltage channel: header name, or number counting the file's columns from 1 with the time
    /// column included (WAV: channel number); three-phase: a list in phase order (`Va,Vb,Vc`).
    #[arg(long, value_name = "COL[,COL,COL]")]
    pub voltage: Option<String>,
    /// Current channel: header name, or number counting the file's columns from 1 with the time
    /// column included (WAV: channel number); three-phase: a list in phase order (`Ia,Ib,Ic`).
    #[arg(long, value_name = "COL[,COL,COL]")]
    pub current: Option<String>,
    /// The measured neutral current of a 4-wire capture.
    #[arg(long, value_name = "COL")]
    pub neutral: Option<String>,
    /// How the circuit is connected: single, 4-wire or 3-wire [default: what the channels'
    /// names say].
    #[arg(long, value_name = "SYSTEM", value_parser = parse_system)]
    pub system: Option<System>,
    /// Use --voltage and --current even where the header's unit or name says the channel is the
    /// other quantity (a mislabelled export); the rows then carry a warning.
    #[arg(long)]
    pub force_channels: bool,
    /// COMTRADE records: values on the secondary side of the CTs and VTs instead of primary.
    #[arg(long)]
    pub secondary: bool,
    /// Sample rate, Hz.
    #[arg(long, value_name = "HZ")]
    pub rate: Option<f64>,
    /// Volts per unit of the voltage channel.
    #[arg(long, value_name = "X", allow_negative_numbers = true)]
    pub v_scale: Option<f64>,
    /// Amperes per unit of the current channel.
    #[arg(long, value_name = "X", allow_negative_numbers = true)]
    pub i_scale: Option<f64>,
    /// Current-channel delay, seconds.
    #[arg(long, value_name = "SECONDS", allow_negative_numbers = true)]
    pub skew: Option<f64>,
    /// Highest harmonic order.
    #[arg(long, value_name = "N")]
    pub harmonics: Option<usize>,
    /// PF penalty threshold.
    #[arg(long, value_name = "PF")]
    pub pf_threshold: Option<f64>,
    /// Declared supply voltage Udin, V RMS, that dips and swells are measured against (phase to
    /// neutral; line to line for 3-wire) [default: each record's median one-cycle RMS].
    #[arg(long, value_name = "VOLTS")]
    pub declared_voltage: Option<f64>,
    /// Circuit model to compare every capture with.
    #[arg(long, value_name = "MODEL.toml")]
    pub expect: Option<PathBuf>,
    /// Voltage probe ratio accuracy, ± % of reading.
    #[arg(long, value_name = "PCT")]
    pub v_ratio_accuracy: Option<f64>,
    /// Current clamp ratio accuracy, ± % of reading.
    #[arg(long, value_name = "PCT")]
    pub i_ratio_accuracy: Option<f64>,
    /// Probe pair phase error, ± degrees.
    #[arg(long, value_name = "DEG")]
    pub phase_error: Option<f64>,
    /// Remaining skew uncertainty, ± seconds.
    #[arg(long, value_name = "SECONDS")]
    pub skew_uncertainty: Option<f64>,
    /// Sample clock accuracy, ± ppm.
    #[arg(long, value_name = "PPM")]
    pub clock_ppm: Option<f64>,
    /// Frequency response for harmonics, % of reading [default: 5].
    #[arg(long, value_name = "PCT")]
    pub harmonic_accuracy: Option<f64>,
    /// Converter bits (with --v-full-scale and --i-full-scale, here or in a sidecar)
    /// [default: the step seen in the data].
    #[arg(long, value_name = "BITS")]
    pub adc_bits: Option<u32>,
    /// Full-scale peak of the voltage channel, volts (after --v-scale).
    #[arg(long, value_name = "V")]
    pub v_full_scale: Option<f64>,
    /// Full-scale peak of the current channel, amperes (after --i-scale).
    #[arg(long, value_name = "A")]
    pub i_full_scale: Option<f64>,
    /// Random circuits drawn within a model's tolerances (1 to 10 000 000) [default: 100000].
    #[arg(long, value_name = "N")]
    pub draws: Option<usize>,
    /// Seed of the random draws [default: 1].
    #[arg(long, value_name = "N")]
    pub seed: Option<u64>,
    /// How part values are drawn within their tolerance [default: uniform].
    #[arg(long, value_enum)]
    pub distribution: Option<DistributionArg>,
    /// The part of each record to analyse.
    #[command(flatten)]
    pub span: SpanArgs,
}

/// Arguments of `report`.
#[derive(Debug, Args)]
pub struct ReportArgs {
    /// Capture files.
    #[arg(required = true, value_name = "FILE")]
    pub files: Vec<PathBuf>,
    /// Where to write the HTML report.
    #[arg(short = 'o', long = "output", value_name = "PATH")]
    pub output: PathBuf,
    /// Point-of-common-coupling data for the limits on the spectrum.
    #[command(flatten)]
    pub pcc: PccArgs,
    /// Also write each plot as its own SVG file in this folder.
    #[arg(long, value_name = "DIR")]
    pub plot_dir: Option<PathBuf>,
    /// Compare each capture with a circuit model (TOML).
    #[arg(long, value_name = "MODEL.toml")]
    pub expect: Option<PathBuf>,
    /// Highest harmonic order analysed.
    #[arg(long, default_value_t = 50, value_name = "N")]
    pub harmonics: usize,
    /// Flag a true PF below this (a utility penalty threshold).
    #[arg(long, default_value_t = 0.90, value_name = "PF")]
    pub pf_threshold: f64,
    /// Channel, scale and timing options.
    #[command(flatten)]
    pub channels: ChannelArgs,
    /// Instrument limits for the uncertainty.
    #[command(flatten)]
    pub uncertainty: UncertaintyArgs,
    /// Monte Carlo settings for --expect.
    #[command(flatten)]
    pub monte_carlo: MonteCarloArgs,
}

/// Arguments of `expect`.
#[derive(Debug, Args)]
pub struct ExpectArgs {
    /// The circuit model file (TOML).
    #[arg(value_name = "MODEL.toml")]
    pub model: PathBuf,
    /// Frequency in Hz [default: the model's `frequency_hz`].
    #[arg(long, value_name = "HZ")]
    pub freq: Option<f64>,
    /// Monte Carlo settings.
    #[command(flatten)]
    pub monte_carlo: MonteCarloArgs,
    /// Output format.
    #[arg(long, value_enum, default_value_t = FormatArg::Table)]
    pub format: FormatArg,
}

/// Point-of-common-coupling data for the IEEE 519-2014 limits drawn on the harmonic spectrum.
#[derive(Debug, Args, Clone, Default)]
#[command(next_help_heading = "Harmonic limits (IEEE 519-2014) in reports")]
pub struct PccArgs {
    /// Nominal line-to-line voltage of the bus at the point of common coupling, kV; picks the
    /// voltage limits [default: the ≤ 1 kV row].
    #[arg(long, value_name = "KV")]
    pub pcc_kv: Option<f64>,
    /// Short-circuit current over maximum demand load current at the point of common coupling
    /// (ISC/IL); the current limits are drawn only when it is given.
    #[arg(long, value_name = "RATIO")]
    pub isc_il: Option<f64>,
}

/// How the tolerance band is sampled.
#[derive(Debug, Args, Clone)]
#[command(next_help_heading = "Tolerance Monte Carlo")]
pub struct MonteCarloArgs {
    /// Random circuits drawn within the tolerances (1 to 10 000 000).
    #[arg(long, default_value_t = 100_000, value_name = "N")]
    pub draws: usize,
    /// Seed of the random draws (the same seed gives the same result).
    #[arg(long, default_value_t = 1, value_name = "N")]
    pub seed: u64,
    /// How part values are drawn within their tolerance.
    #[arg(long, value_enum, default_value_t = DistributionArg::Uniform)]
    pub distribution: DistributionArg,
}

/// Part value distributions on the command line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum DistributionArg {
    /// Uniform between the tolerance limits.
    Uniform,
    /// Normal with the limits at ±3σ, truncated to them.
    Normal,
}

fn parse_time_zero(text: &str) -> Result<TimeZero, String> {
    TimeZero::parse(text).ok_or_else(|| {
        format!("'{text}' is not a time zero: use start (the first sample) or trigger")
    })
}

/// Which part of a record to analyse: `--from`/`--to` in seconds, counted from the record's
/// first sample or from a COMTRADE record's trigger (`--time-zero`). Flattened into every
/// command that analyses a capture.
#[derive(Debug, Args, Clone, Default)]
#[command(next_help_heading = "Span of the record")]
pub struct SpanArgs {
    /// Analyse from this time on, seconds after time zero (see --time-zero; negative: before
    /// the trigger) [default: the first sample].
    #[arg(long, value_name = "SECONDS", allow_negative_numbers = true)]
    pub from: Option<f64>,
    /// Analyse up to this time, seconds after time zero; the sample at it is left out
    /// [default: the end of the record].
    #[arg(long, value_name = "SECONDS", allow_negative_numbers = true)]
    pub to: Option<f64>,
    /// Where --from and --to count from: start (the record's first sample) or trigger (the
    /// trigger time a COMTRADE record states) [default: start].
    #[arg(long, value_name = "ZERO", value_parser = parse_time_zero)]
    pub time_zero: Option<TimeZero>,
}

fn parse_system(text: &str) -> Result<System, String> {
    System::parse(text)
        .ok_or_else(|| format!("'{text}' is not a system: use single, 4-wire or 3-wire"))
}

/// How to read the traces: which channels, their scales and timing.
#[derive(Debug, Args, Clone)]
#[command(next_help_heading = "Channels, scales and timing")]
pub struct ChannelArgs {
    /// Voltage channel: header name, or number counting the file's columns from 1 with the time
    /// column included (WAV: channel number); three-phase: a list in phase order, `Va,Vb,Vc`
    /// (to neutral) or two line-to-line voltages `Vab,Vcb` (3-wire) [default: the one channel
    /// in volts or named like a voltage (V, U, Va, V_L1, UL1, Voltage...), or a complete phase
    /// set (Va Vb Vc with Ia Ib Ic; Vab Vcb with Ia Ic); with only two data channels and
    /// nothing to tell them apart, the first; otherwise the file is refused with a list of its
    /// channels].
    #[arg(long, value_name = "COL[,COL,COL]")]
    pub voltage: Option<String>,
    /// Current channel: header name, or number counting the file's columns from 1 with the time
    /// column included (WAV: channel number); three-phase: a list in phase order, `Ia,Ib,Ic`
    /// (3-wire: `Ia,Ic`) [default: the one channel in amperes or named like a current (I, Ia,
    /// I_L1, IL, Iload, Current...); with only two data channels, the second].
    #[arg(long, value_name = "COL[,COL,COL]")]
    pub current: Option<String>,
    /// The measured neutral current of a 4-wire capture [default: the one channel named In, I0
    /// or IN; without one, the phasor sum of the line currents].
    #[arg(long, value_name = "COL")]
    pub neutral: Option<String>,
    /// How the circuit is connected: single (one voltage, one current), 4-wire (three phases
    /// and neutral: voltages to neutral) or 3-wire (no neutral: line-to-line voltages, a
    /// two-element connection) [default: what the channels' names say; lists of three mean
    /// 4-wire, of two 3-wire].
    #[arg(long, value_name = "SYSTEM", value_parser = parse_system)]
    pub system: Option<System>,
    /// Use --voltage and --current even where the header's unit or name says the channel is the
    /// other quantity (a mislabelled export); the output then carries a warning.
    #[arg(long)]
    pub force_channels: bool,
    /// COMTRADE records: give values on the secondary side of the CTs and VTs, as the relay
    /// saw them, instead of primary (the record's ratios convert between them).
    #[arg(long)]
    pub secondary: bool,
    /// Sample rate in Hz, for files without a time column (overrides the file's own).
    #[arg(long, value_name = "HZ")]
    pub rate: Option<f64>,
    /// Volts per unit of the voltage channel (probe ratio; WAV full scale is 1.0).
    #[arg(
        long,
        default_value_t = 1.0,
        value_name = "X",
        allow_negative_numbers = true
    )]
    pub v_scale: f64,
    /// Amperes per unit of the current channel (clamp or shunt ratio; WAV full scale is 1.0).
    #[arg(
        long,
        default_value_t = 1.0,
        value_name = "X",
        allow_negative_numbers = true
    )]
    pub i_scale: f64,
    /// Known delay of the current channel behind the voltage channel, seconds (negative if ahead).
    #[arg(
        long,
        default_value_t = 0.0,
        value_name = "SECONDS",
        allow_negative_numbers = true
    )]
    pub skew: f64,
    /// Declared supply voltage Udin, V RMS: dips (below 90 %) and swells (above 110 %) are
    /// measured against it (IEC 61000-4-30); phase to neutral for single-phase and 4-wire
    /// captures, line to line for 3-wire ones [default: the record's median one-cycle RMS].
    #[arg(long, value_name = "VOLTS")]
    pub declared_voltage: Option<f64>,
    /// The part of the record to analyse.
    #[command(flatten)]
    pub span: SpanArgs,
}

/// Instrument limits behind the Type B uncertainty components (each a ± limit).
#[derive(Debug, Args, Clone)]
#[command(next_help_heading = "Uncertainty (instrument limits, each ±)")]
pub struct UncertaintyArgs {
    /// Voltage probe ratio accuracy, % of reading.
    #[arg(long, default_value_t = 1.0, value_name = "PCT")]
    pub v_ratio_accuracy: f64,
    /// Current clamp or shunt ratio accuracy, % of reading.
    #[arg(long, default_value_t = 2.0, value_name = "PCT")]
    pub i_ratio_accuracy: f64,
    /// Phase error of the probe pair, degrees.
    #[arg(long, default_value_t = 0.5, value_name = "DEG")]
    pub phase_error: f64,
    /// Uncertainty of the channel skew that remains after --skew, seconds.
    #[arg(long, default_value_t = 0.0, value_name = "SECONDS")]
    pub skew_uncertainty: f64,
    /// Sample clock accuracy, parts per million.
    #[arg(long, default_value_t = 50.0, value_name = "PPM")]
    pub clock_ppm: f64,
    /// Frequency response of probe and instrument for harmonics, % of each harmonic's reading
    /// (moves THD by the same share; default 5: IEC 61000-4-7 class I).
    #[arg(long, default_value_t = 5.0, value_name = "PCT")]
    pub harmonic_accuracy: f64,
    /// Converter bits (with --v-full-scale and --i-full-scale); default: the step seen in the data.
    #[arg(long, value_name = "BITS", requires_all = ["v_full_scale", "i_full_scale"])]
    pub adc_bits: Option<u32>,
    /// Full-scale peak of the voltage channel, volts (after --v-scale).
    #[arg(long, value_name = "V", requires = "adc_bits")]
    pub v_full_scale: Option<f64>,
    /// Full-scale peak of the current channel, amperes (after --i-scale).
    #[arg(long, value_name = "A", requires = "adc_bits")]
    pub i_full_scale: Option<f64>,
}

/// Options whose value may be a negative number in exponent form.
const SIGNED_OPTIONS: &[&str] = &["--skew", "--v-scale", "--i-scale", "--from", "--to"];

/// Joins `--skew -5e-5` into `--skew=-5e-5`: clap reads a negative number with an exponent as
/// short flags, so such values are attached to their option before parsing.
pub fn attach_negative_values<I, T>(args: I) -> Vec<std::ffi::OsString>
where
    I: IntoIterator<Item = T>,
    T: Into<std::ffi::OsString>,
{
    let mut out: Vec<std::ffi::OsString> = Vec::new();
    let mut iter = args.into_iter().map(Into::into).peekable();
    while let Some(arg) = iter.next() {
        let signed = arg.to_str().is_some_and(|a| SIGNED_OPTIONS.contains(&a));
        let next_negative = iter
            .peek()
            .and_then(|n| n.to_str())
            .is_some_and(|n| n.starts_with('-') && n.parse::<f64>().is_ok());
        if signed && next_negative {
            let mut joined = arg;
            joined.push("=");
            if let Some(v) = iter.next() {
                joined.push(v);
            }
            out.push(joined);
        } else {
            out.push(arg);
        }
    }
    out
}

/// Output formats on the command line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum FormatArg {
    /// Readable summary with units.
    Table,
    /// JSON Lines: one object per capture (one in all for a model, a bank or a meter check).
    Json,
    /// A header, then one row per capture (one row for a model, a bank or a meter check).
    Csv,
}

#[cfg(test)]
mod tests {
    use super::*;
    use clap::CommandFactory;

    #[test]
    fn clap_definition_is_consistent() {
        Cli::command().debug_assert();
    }

    #[test]
    fn negative_skew_is_accepted() {
        let args = attach_negative_values(["tracephase", "analyze", "a.csv", "--skew", "-5e-5"]);
        let Command::Analyze(a) = Cli::try_parse_from(args).unwrap().command else {
            panic!("not analyze")
        };
        assert_eq!(a.channels.skew, -5e-5);
        // a file name after a negative value is still a file
        let args = attach_negative_values(["tracephase", "analyze", "--v-scale", "-1e2", "b.wav"]);
        let Command::Analyze(a) = Cli::try_parse_from(args).unwrap().command else {
            panic!("not analyze")
        };
        assert_eq!(a.channels.v_scale, -100.0);
        assert_eq!(a.files, vec![std::path::PathBuf::from("b.wav")]);
    }
}
