//! What the user typed: clap types only. [`crate::app`] turns them into resolved settings; the
//! rest of the library never sees clap.

use clap::{Args, Parser, Subcommand, ValueEnum};
use std::path::PathBuf;

/// Phase angle, power factor, THD and IEEE 1459 powers from captured voltage and current traces.
#[derive(Debug, Parser)]
#[command(name = "tracephase", version, about, propagate_version = true)]
pub struct Cli {
    /// What to do.
    #[command(subcommand)]
    pub command: Command,
}

/// The subcommands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Analyse captures: frequency, phase angle (DFT and zero crossing), PF, THD, powers.
    Analyze(AnalyzeArgs),
}

/// Arguments of `analyze`.
#[derive(Debug, Args)]
pub struct AnalyzeArgs {
    /// Capture files (CSV, TSV, TXT or WAV; the format is read from the content).
    #[arg(required = true, value_name = "FILE")]
    pub files: Vec<PathBuf>,
    /// Channel, scale and timing options.
    #[command(flatten)]
    pub channels: ChannelArgs,
    /// Highest harmonic order for THD and the spectrum (capped below the Nyquist limit).
    #[arg(long, default_value_t = 50, value_name = "N")]
    pub harmonics: usize,
    /// Output format.
    #[arg(long, value_enum, default_value_t = FormatArg::Table)]
    pub format: FormatArg,
}

/// How to read the traces: which channels, their scales and timing.
#[derive(Debug, Args, Clone)]
pub struct ChannelArgs {
    /// Voltage channel: 1-based column/channel number or header name [default: by name, else first].
    #[arg(long, value_name = "COL")]
    pub voltage: Option<String>,
    /// Current channel: 1-based column/channel number or header name [default: by name, else second].
    #[arg(long, value_name = "COL")]
    pub current: Option<String>,
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
}

/// Output formats on the command line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum FormatArg {
    /// Readable summary with units.
    Table,
    /// JSON Lines, one object per file.
    Json,
    /// One row per file with a header.
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
        let cli =
            Cli::try_parse_from(["tracephase", "analyze", "a.csv", "--skew", "-5e-5"]).unwrap();
        let Command::Analyze(a) = cli.command;
        assert_eq!(a.channels.skew, -5e-5);
    }
}
