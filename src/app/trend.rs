//! `trend`: each capture cut into consecutive windows, each analysed; optionally aggregated.

use super::{ConfigError, Outcome, format, resolve_channels};
use crate::analysis::Settings;
use crate::capture::{self, LoadOptions};
use crate::cli::{AggregateArg, TrendArgs, UncertaintyArgs};
use crate::report::trend::TrendWriter;
use crate::report::wire::trend::TrendRecord;
use crate::trend::aggregate::{aggregate, windows_per_interval};
use crate::trend::{self, LeftOut, TrendSettings};
use clap::{Args, FromArgMatches};
use std::io::Write;

/// The fewest cycles a window may hold.
pub const MIN_WINDOW_CYCLES: usize = 3;

/// The instrument limits' defaults, as `analyze` takes them when none are given (the windows'
/// figures carry no uncertainty, but their analysis needs the inputs).
fn default_uncertainty() -> Result<UncertaintyArgs, ConfigError> {
    let cmd = UncertaintyArgs::augment_args(clap::Command::new("trend"));
    let matches = cmd
        .try_get_matches_from(["trend"])
        .map_err(|e| ConfigError(e.to_string()))?;
    UncertaintyArgs::from_arg_matches(&matches).map_err(|e| ConfigError(e.to_string()))
}

fn config(a: &TrendArgs) -> Result<(LoadOptions, Settings, TrendSettings), ConfigError> {
    let (load, settings) = resolve_channels(&default_uncertainty()?, &a.channels, a.harmonics)?;
    if let Some(n) = a.window_cycles
        && n < MIN_WINDOW_CYCLES
    {
        return Err(ConfigError(format!(
            "--window-cycles must be at least {MIN_WINDOW_CYCLES} (a window rounded to whole \
             samples must still hold the 2 cycles the fit needs), not {n}"
        )));
    }
    Ok((
        load,
        settings,
        TrendSettings {
            window_cycles: a.window_cycles,
        },
    ))
}

/// Runs `trend`: one record per capture; a bad file is reported on `err` and the others go on.
pub fn run_trend(a: &TrendArgs, out: &mut dyn Write, err: &mut dyn Write) -> Outcome {
    let (load, settings, ts) = match config(a) {
        Ok(c) => c,
        Err(e) => {
            let _ = writeln!(err, "error: {e}");
            return Outcome::InputErrors;
        }
    };
    let mut writer = TrendWriter::new(format(a.format));
    let mut outcome = Outcome::Ok;
    let mut io_ok = true;
    for path in &a.files {
        // the windows, then the whole capture's events (the capture goes to them, scaled in
        // place: no second copy)
        let result = capture::load(path, &load)
            .map_err(|e| e.to_string())
            .and_then(|c| {
                let t = trend::trend_of(&c, &settings, &ts).map_err(|e| e.to_string())?;
                let (cycles, seconds) = t.windows.iter().fold((0.0, 0.0), |(c, s), w| {
                    (c + w.cycles, s + w.end_s - w.start_s)
                });
                let events = (cycles > 0.0 && seconds > 0.0)
                    .then(|| crate::analysis::capture_events(c, &settings, cycles / seconds));
                Ok((t, events))
            });
        let (t, events) = match result {
            Ok(t) => t,
            Err(msg) => {
                let _ = writeln!(err, "error: {msg}");
                outcome = outcome.worst(Outcome::InputErrors);
                continue;
            }
        };
        let record = match a.aggregate {
            None => TrendRecord::new(&t, &t.windows, None, t.left_out),
            Some(AggregateArg::ThreeSeconds) => {
                let f = t.windows.first().map_or(50.0, |w| w.frequency_hz);
                let per = match windows_per_interval(t.window_cycles, f) {
                    Ok(p) => p,
                    Err(e) => {
                        let _ = writeln!(err, "error: {}: {e}", path.display());
                        outcome = outcome.worst(Outcome::InputErrors);
                        continue;
                    }
                };
                let (rows, rest) = aggregate(&t.windows, per);
                // what is left: the windows after the last whole interval, and the part
                // after the last window
                let left = if rest > 0 {
                    let first = &t.windows[t.windows.len() - rest];
                    let end = t
                        .left_out
                        .map_or(t.windows[t.windows.len() - 1].end_s, |l| l.end_s);
                    let cycles = t.windows[t.windows.len() - rest..]
                        .iter()
                        .map(|w| w.cycles)
                        .sum::<f64>()
                        + t.left_out.map_or(0.0, |l| l.cycles);
                    Some(LeftOut {
                        start_s: first.start_s,
                        end_s: end,
                        cycles,
                    })
                } else {
                    t.left_out
                };
                TrendRecord::new(&t, &rows, Some("3s"), left)
            }
        };
        let record = match events {
            Some((events, references)) => record.with_events(events, references),
            None => record,
        };
        if a.format != crate::cli::FormatArg::Table
            && let Some(l) = &record.left_out
        {
            let _ = writeln!(
                err,
                "note: {}: {:.4} s to {:.4} s ({:.2} cycles) left out: shorter than a row",
                record.file, l.start_s, l.end_s, l.cycles
            );
        }
        io_ok &= writer.write(out, &record).is_ok();
    }
    if !io_ok {
        let _ = writeln!(
            err,
            "error: could not write the results (is the output closed?)"
        );
        outcome = Outcome::InputErrors;
    }
    outcome
}
