//! `meter`: the reading, the class and the PF convention checked, the capture analysed, the
//! comparison, its report.

use super::bank::analyse_file;
use super::{ConfigError, Outcome, format, resolve_channels};
use crate::analysis::Analysis;
use crate::check::meter::{AccuracyClass, Measured, MeterVerdict, PfSign, Reading, check_meter};
use crate::cli::MeterArgs;
use crate::report;
use std::io::Write;

/// Our measurement as the meter check needs it; `None` without a defined PF.
pub fn measured(a: &Analysis) -> Option<Measured> {
    let q = &a.quantities;
    let u = &a.uncertainty;
    let (v, i) = (q.voltage.rms, q.current.rms);
    let s = q.power.apparent_va;
    // U of S = V·I from the relative U of V and I (uncorrelated probes).
    let u_s = s * (u.voltage.rms / v).hypot(u.current.rms / i);
    Some(Measured {
        p_w: q.power.active_w,
        q_var: q.power.reactive_var,
        s_va: s,
        pf: q.true_pf?,
        angle_deg: q.phase_angle_dft_deg?,
        v_rms: v,
        i_rms: i,
        u_p_w: u.power.active_w,
        u_q_var: u.power.reactive_var,
        u_s_va: u_s,
        u_pf: u.true_pf?,
        u_v: u.voltage.rms,
        u_i: u.current.rms,
    })
}

/// Runs `meter`.
pub fn run_meter(a: &MeterArgs, out: &mut dyn Write, err: &mut dyn Write) -> Outcome {
    let config = (|| -> Result<_, ConfigError> {
        let text = reading_text(&a.reading)?;
        let reading = Reading::parse(&text).map_err(|e| ConfigError(format!("--reading: {e}")))?;
        let class =
            AccuracyClass::parse(&a.class).map_err(|e| ConfigError(format!("--class: {e}")))?;
        let sign = PfSign::parse(&a.pf_sign).map_err(|e| ConfigError(format!("--pf-sign: {e}")))?;
        let (load, settings) = resolve_channels(&a.uncertainty, &a.channels, a.harmonics)?;
        Ok((reading, class, sign, load, settings))
    })();
    let (reading, class, sign, load, settings) = match config {
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
    let Some(m) = measured(&analysis) else {
        let _ = writeln!(
            err,
            "error: {}: no defined power factor (no fundamental in a trace): nothing to check",
            a.file.display()
        );
        return Outcome::InputErrors;
    };
    let r = check_meter(&reading, &m, class, sign);
    if report::meter::write(out, &r, &analysis, format(a.format)).is_err() {
        let _ = writeln!(
            err,
            "error: could not write the results (is the output closed?)"
        );
        return Outcome::InputErrors;
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
