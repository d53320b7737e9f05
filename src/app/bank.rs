//! `bank`: nameplate from file and options, both captures analysed, the bank check, its report.

use super::{ConfigError, Outcome, format, resolve_channels};
use crate::analysis::{self, Analysis, Settings};
use crate::capture::{self, LoadOptions};
use crate::check::bank::{
    BankSide, BankVerdict, CapacitorStandard, Nameplate, NameplateFile, Supply, check_bank,
};
use crate::cli::BankArgs;
use crate::report;
use std::io::Write;
use std::path::Path;

/// Merges the nameplate file (if any) with the options, options winning, and checks the result.
pub fn resolve_nameplate(a: &BankArgs) -> Result<Nameplate, ConfigError> {
    let file = match &a.nameplate {
        Some(p) => NameplateFile::load(p).map_err(|e| ConfigError(e.to_string()))?,
        None => NameplateFile::default(),
    };
    let need = |v: Option<f64>, what: &str| -> Result<f64, ConfigError> {
        match v {
            Some(x) if x.is_finite() && x > 0.0 => Ok(x),
            Some(x) => Err(ConfigError(format!(
                "{what} must be a positive number, not {x}"
            ))),
            None => Err(ConfigError(format!(
                "{what} is missing: give it as an option or in --nameplate"
            ))),
        }
    };
    let rated_kvar = need(a.rated_kvar.or(file.rated_kvar), "--rated-kvar")?;
    let rated_voltage = need(a.rated_voltage.or(file.rated_voltage), "--rated-voltage")?;
    let rated_frequency_hz = need(
        a.rated_frequency.or(file.rated_frequency_hz),
        "--rated-frequency",
    )?;
    let steps_kvar = match (
        a.step_kvar.clone().or(file.step_kvar),
        a.steps.or(file.steps),
    ) {
        (Some(list), _) => {
            if list.is_empty() || list.iter().any(|q| !(q.is_finite() && *q > 0.0)) {
                return Err(ConfigError("--step-kvar needs positive kvar values".into()));
            }
            let sum: f64 = list.iter().sum();
            if (sum / rated_kvar - 1.0).abs() > 0.01 {
                return Err(ConfigError(format!(
                    "the steps add up to {sum} kvar, not the rated {rated_kvar} kvar"
                )));
            }
            list
        }
        (None, Some(0)) => return Err(ConfigError("--steps must be at least 1".into())),
        (None, Some(n)) => vec![rated_kvar / n as f64; n],
        (None, None) => vec![rated_kvar],
    };
    if steps_kvar.len() > 20 {
        return Err(ConfigError("at most 20 steps are supported".into()));
    }
    let standard = match a.standard.as_deref().or(file.standard.as_deref()) {
        None => CapacitorStandard::default(),
        Some(s) => CapacitorStandard::parse(s).ok_or_else(|| {
            ConfigError(format!(
                "unknown capacitor standard '{s}': use {}",
                CapacitorStandard::NAMES.join(" or ")
            ))
        })?,
    };
    let supply = match (
        a.supply_mva.or(file.supply_mva),
        a.transformer_kva.or(file.transformer_kva),
        a.transformer_z_percent.or(file.transformer_z_percent),
    ) {
        (Some(s), _, _) => Some(Supply::ShortCircuitMva(need(Some(s), "--supply-mva")?)),
        (None, Some(k), Some(z)) => Some(Supply::Transformer {
            kva: need(Some(k), "--transformer-kva")?,
            z_percent: need(Some(z), "--transformer-z-percent")?,
        }),
        (None, Some(_), None) | (None, None, Some(_)) => {
            return Err(ConfigError(
                "a transformer needs both --transformer-kva and --transformer-z-percent".into(),
            ));
        }
        (None, None, None) => None,
    };
    let target_pf = a.target_pf.or(file.target_pf).unwrap_or(0.95);
    if !(target_pf > 0.0 && target_pf <= 1.0) {
        return Err(ConfigError(format!(
            "--target-pf must be above 0 and at most 1, not {target_pf}"
        )));
    }
    Ok(Nameplate {
        rated_kvar,
        rated_voltage,
        rated_frequency_hz,
        steps_kvar,
        three_phase: a.three_phase || file.three_phase.unwrap_or(false),
        standard,
        supply,
        target_pf,
    })
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

fn side(a: &Analysis, which: &str) -> Result<BankSide, String> {
    let q = &a.quantities;
    let angle = q.phase_angle_dft_deg.ok_or_else(|| {
        format!(
            "{}: the {which} capture has no defined phase angle (no fundamental in a trace)",
            a.path.display()
        )
    })?;
    Ok(BankSide {
        p_w: q.power.active_w,
        q_var: q.power.reactive_var,
        u_q_var: a.uncertainty.power.reactive_var,
        v1: q.voltage.fundamental_rms,
        frequency_hz: q.frequency_hz,
        angle_deg: angle,
        current_harmonics: q.harmonics.iter().map(|h| h.current_rms).collect(),
    })
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
    let before = analyse_file(&a.before, &load, &settings);
    let after = analyse_file(&a.after, &load, &settings);
    let (before, after) = match (before, after) {
        (Ok(b), Ok(a)) => (b, a),
        (b, a) => {
            for e in [b.err(), a.err()].into_iter().flatten() {
                let _ = writeln!(err, "error: {e}");
            }
            return Outcome::InputErrors;
        }
    };
    let sides = side(&before, "before").and_then(|b| Ok((b, side(&after, "after")?)));
    let (sb, sa) = match sides {
        Ok(s) => s,
        Err(e) => {
            let _ = writeln!(err, "error: {e}");
            return Outcome::InputErrors;
        }
    };
    let r = check_bank(&sb, &sa, &plate);
    if report::bank::write(out, &r, &plate, &before, &after, format(a.format)).is_err() {
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
            },
            Entry::Analysed {
                analysis: &after,
                expectation: None,
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
