//! `bank`: nameplate from file and options, both captures analysed, the bank check, its report.

use super::{ConfigError, Outcome, format, resolve_channels};
use crate::analysis::{self, Analysis, Settings};
use crate::capture::{self, LoadOptions};
use crate::check::bank::{BankVerdict, KeyNames, Nameplate, NameplateFile, check_bank};
use crate::cli::BankArgs;
use crate::report;
use std::io::Write;
use std::path::Path;

/// The option that sets each nameplate key, for messages.
fn option_name(key: &'static str) -> String {
    match key {
        "rated_frequency_hz" => "--rated-frequency".into(),
        k => format!("--{}", k.replace('_', "-")),
    }
}

/// Merges the nameplate file (if any) with the options, options winning, and checks the result.
pub fn resolve_nameplate(a: &BankArgs) -> Result<Nameplate, ConfigError> {
    let file = match &a.nameplate {
        Some(p) => NameplateFile::load(p).map_err(|e| ConfigError(e.to_string()))?,
        None => NameplateFile::default(),
    };
    let options = NameplateFile {
        rated_kvar: a.rated_kvar,
        rated_voltage: a.rated_voltage,
        rated_frequency_hz: a.rated_frequency,
        steps: a.steps,
        step_kvar: a.step_kvar.clone(),
        three_phase: a.three_phase.then_some(true),
        standard: a.standard.clone(),
        target_pf: a.target_pf,
        supply_mva: a.supply_mva,
        transformer_kva: a.transformer_kva,
        transformer_z_percent: a.transformer_z_percent,
        connection: a.connection.clone(),
    };
    // a value is named where it was given: the option, or the key in the nameplate file
    let name = |k: &'static str| match &a.nameplate {
        Some(p) if !options.has(k) && file.has(k) => format!("{}: {k}", p.display()),
        _ => option_name(k),
    };
    let keys = KeyNames {
        name: &name,
        where_given: "an option or in --nameplate",
    };
    Nameplate::resolve(&options.clone().or(file.clone()), &keys).map_err(ConfigError)
}

/// Loads and analyses one capture, or says why not in one line.
pub(super) fn analyse_file(
    path: &Path,
    load: &LoadOptions,
    settings: &Settings,
) -> Result<Analysis, String> {
    let c = capture::load(path, load).map_err(|e| e.to_string())?;
    analysis::analyze(c, settings).map_err(|e| e.to_string())
}

/// Runs `bank`.
pub fn run_bank(a: &BankArgs, out: &mut dyn Write, err: &mut dyn Write) -> Outcome {
    let config = resolve_nameplate(a).and_then(|plate| {
        Ok((
            plate,
            resolve_channels(&a.uncertainty, &a.channels, a.harmonics)?,
            super::resolve_plot_options(&a.pcc)?,
        ))
    });
    let (plate, (load, settings), plot_options) = match config {
        Ok(c) => c,
        Err(e) => {
            let _ = writeln!(err, "error: {e}");
            return Outcome::InputErrors;
        }
    };
    let mut switched = None;
    let (before, after) = match (&a.capture, &a.before, &a.after) {
        (Some(path), ..) => match super::bank_capture::split(path, &load, &settings) {
            Ok(s) => {
                let pair = (s.before.clone(), s.after.clone());
                switched = Some(s);
                pair
            }
            Err(e) => {
                let _ = writeln!(err, "error: {e}");
                return Outcome::InputErrors;
            }
        },
        (None, Some(b), Some(f)) => {
            let before = analyse_file(b, &load, &settings);
            let after = analyse_file(f, &load, &settings);
            match (before, after) {
                (Ok(b), Ok(a)) => (b, a),
                (b, a) => {
                    for e in [b.err(), a.err()].into_iter().flatten() {
                        let _ = writeln!(err, "error: {e}");
                    }
                    return Outcome::InputErrors;
                }
            }
        }
        _ => {
            let _ = writeln!(
                err,
                "error: give --before and --after captures, or one --capture across the switching"
            );
            return Outcome::InputErrors;
        }
    };
    let (sb, sa) = match analysis::bank_pair(&before, &after, &plate) {
        Ok(s) => s,
        Err(e) => {
            let _ = writeln!(err, "error: {e}");
            return Outcome::InputErrors;
        }
    };
    let r = check_bank(&sb, &sa, &plate);
    let switching = switched.as_ref().map(|s| report::bank::Switching {
        at_s: s.switching_s,
        inrush: s.inrush,
        expected_ring_hz: r.resonance_order.map(|h| h * after.quantities.frequency_hz),
    });
    if report::bank::write_with(
        out,
        &r,
        &plate,
        &before,
        &after,
        switching.as_ref(),
        format(a.format),
    )
    .is_err()
    {
        let _ = writeln!(
            err,
            "error: could not write the results (is the output closed?)"
        );
        return Outcome::InputErrors;
    }
    if let Some(path) = &a.report {
        use crate::report::html::{BankSection, Entry, HtmlDoc, settings_rows};
        let entries = vec![
            Entry::Analysed {
                analysis: &before,
                expectation: None,
                trend: None,
            },
            Entry::Analysed {
                analysis: &after,
                expectation: None,
                trend: None,
            },
        ];
        let mut doc = HtmlDoc::new("tracephase capacitor bank check", entries);
        doc.settings = settings_rows(&settings);
        doc.plot_options = plot_options;
        doc.bank = Some(BankSection {
            report: &r,
            nameplate: &plate,
            before: &before,
            after: &after,
        });
        if let Err(e) = super::html::save(path, &doc) {
            let _ = writeln!(err, "error: {e}");
            return Outcome::InputErrors;
        }
    }
    match r.verdict {
        BankVerdict::Fail => Outcome::VerdictFailed,
        _ => Outcome::Ok,
    }
}
