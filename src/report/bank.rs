//! Output of `bank`: a verdict a supervisor can sign, or its JSON.

use super::Format;
use super::table::{num, pm, sign_off};
use crate::analysis::Analysis;
use crate::check::bank::branches::hyphenated;
use crate::check::bank::{
    BankBranch, BankConnection, BankPhase, BankReport, DeltaBranches, Nameplate, PhaseBalance,
};
use crate::quantity::inrush::Inrush;
use serde::Serialize;
use std::io::{self, Write};

/// The cautions printed with every bank check.
pub const CAUTIONS: &str = "capacitor banks hold a dangerous charge after disconnection: wait the \
discharge time on the nameplate and verify with a meter before touching terminals; switching a \
bank causes voltage and current transients; follow local codes and licensed practice";

/// The JSON record of a bank check.
#[derive(Debug, Serialize)]
struct BankRecord<'a> {
    before: String,
    after: String,
    before_span: super::wire::SpanRecord,
    after_span: super::wire::SpanRecord,
    nameplate: &'a Nameplate,
    /// With `--capture`: the switching, its inrush and the ring expected from the supply data.
    #[serde(skip_serializing_if = "Option::is_none")]
    switching: Option<SwitchingRecord>,
    #[serde(flatten)]
    report: &'a BankReport,
    cautions: &'static str,
}

/// The switching of a `bank --capture`: when, its inrush, and the ring the supply data predict.
#[derive(Debug, Clone, Copy)]
pub struct Switching {
    /// When, seconds from the record's first sample.
    pub at_s: f64,
    /// Its inrush, where it could be measured.
    pub inrush: Option<Inrush>,
    /// f·√(Ssc/Qc) from the supply data, Hz; `None` without them.
    pub expected_ring_hz: Option<f64>,
}

#[derive(Debug, Serialize)]
struct SwitchingRecord {
    at_s: f64,
    inrush_peak_a: Option<f64>,
    steady_peak_a: Option<f64>,
    ring_hz: Option<f64>,
    expected_ring_hz: Option<f64>,
}

impl From<&Switching> for SwitchingRecord {
    fn from(s: &Switching) -> Self {
        SwitchingRecord {
            at_s: s.at_s,
            inrush_peak_a: s.inrush.map(|x| x.peak_a),
            steady_peak_a: s.inrush.map(|x| x.steady_peak_a),
            ring_hz: s.inrush.and_then(|x| x.ring_hz),
            expected_ring_hz: s.expected_ring_hz,
        }
    }
}

/// Writes the bank check in `format`.
pub fn write(
    out: &mut dyn Write,
    r: &BankReport,
    plate: &Nameplate,
    before: &Analysis,
    after: &Analysis,
    format: Format,
) -> io::Result<()> {
    write_with(out, r, plate, before, after, None, format)
}

/// [`write()`], with the switching of a `bank --capture`.
pub fn write_with(
    out: &mut dyn Write,
    r: &BankReport,
    plate: &Nameplate,
    before: &Analysis,
    after: &Analysis,
    switching: Option<&Switching>,
    format: Format,
) -> io::Result<()> {
    let record = BankRecord {
        switching: switching.map(SwitchingRecord::from),
        before: before.path.display().to_string(),
        after: after.path.display().to_string(),
        before_span: super::wire::SpanRecord::new(before),
        after_span: super::wire::SpanRecord::new(after),
        nameplate: plate,
        report: r,
        cautions: CAUTIONS,
    };
    match format {
        Format::Table => {
            if let Some(s) = switching {
                writeln!(out, "{}", switching_text(s))?;
            }
            table(out, r, plate, before, after)?
        }
        other => super::write_record(out, &record, other)?,
    }
    out.flush()
}

/// The switching in words: `switched at 2.0137 s; inrush peak 61.2 A (steady peak 22.1 A),
/// ringing at 401 Hz (the supply data predict 400 Hz = f·√(Ssc/Qc))`.
fn switching_text(s: &Switching) -> String {
    let mut t = format!("switched at {:.4} s", s.at_s);
    match s.inrush {
        Some(x) => {
            t.push_str(&format!(
                "; inrush peak {} A (steady peak {} A)",
                num(x.peak_a, 4),
                num(x.steady_peak_a, 4)
            ));
            match x.ring_hz {
                Some(r) => t.push_str(&format!(", ringing at {} Hz", num(r, 4))),
                None => t.push_str(", no ringing above the noise"),
            }
        }
        None => t.push_str("; the inrush could not be measured"),
    }
    if let Some(e) = s.expected_ring_hz {
        t.push_str(&format!(
            " (the supply data predict {} Hz = f·√(Ssc/Qc))",
            num(e, 4)
        ));
    }
    t
}

fn capture_line(a: &Analysis, scale: f64) -> String {
    let q = &a.quantities;
    if let Some(t) = &a.three_phase {
        let total = &t.figures.total;
        let pf1 = total.fundamental_active_w / total.fundamental_active_w.hypot(total.reactive_var);
        return format!(
            "P {} kW | Q1 {} kvar (totals of the phases) | P1/√(P1² + Q1²) {}",
            num(total.active_w / 1000.0, 4),
            num(total.reactive_var / 1000.0, 4),
            if pf1.is_finite() {
                num(pf1, 3)
            } else {
                "n/a".into()
            },
        );
    }
    format!(
        "P {} kW | Q1 {} kvar | displacement PF {} {}",
        num(scale * q.power.active_w / 1000.0, 4),
        num(scale * q.power.reactive_var / 1000.0, 4),
        q.displacement_pf
            .map(|p| num(p, 3))
            .unwrap_or_else(|| "n/a".into()),
        q.character.map(|c| c.as_str()).unwrap_or(""),
    )
}

/// How the captured powers become the bank's, in words.
pub fn scaling_words(p: &Nameplate, r: &BankReport) -> &'static str {
    match (p.three_phase, r.phases.is_some()) {
        (true, true) => "three-phase bank, three-phase captures: the phases' powers add up",
        (true, false) => "one phase of a balanced three-phase bank: powers × 3, voltage × √3",
        (false, _) => "single-phase",
    }
}

/// The connection the nameplate states, in words after the scaling (empty when it does not).
pub fn connection_words(p: &Nameplate) -> &'static str {
    match p.connection {
        Some(BankConnection::Delta) => "; delta-connected (each branch resolved)",
        Some(BankConnection::Star) => "; star-connected",
        None => "",
    }
}

/// One phase's figures in words: `delivered X ± U kvar{sep} C Y ± U µF (Z ± U % of the rated W
/// µF)`, for the table and the report.
pub(crate) fn phase_figures(p: &BankPhase, sep: &str) -> String {
    format!(
        "delivered {}{sep} C {} ({} of the rated {} µF)",
        pm(
            Some(p.delivered_kvar),
            Some(p.delivered_uncertainty_kvar),
            " kvar"
        ),
        pm(
            Some(p.capacitance_uf),
            Some(p.capacitance_uncertainty_uf),
            " µF"
        ),
        pm(
            Some(100.0 * p.ratio),
            Some(100.0 * p.ratio_uncertainty),
            " %"
        ),
        num(p.rated_capacitance_uf, 4),
    )
}

/// The per-phase lines of a three-phase bank check.
fn phase_lines(out: &mut dyn Write, b: &PhaseBalance) -> io::Result<()> {
    for (k, (name, p)) in b.phases.iter().enumerate() {
        let head = if k == 0 { "phases" } else { "" };
        writeln!(
            out,
            "  {head:<13}{name}: {} {}{}",
            phase_figures(p, ","),
            super::style::word(&p.verdict.to_string()),
            if p.weak {
                format!(", {}", super::style::word("WEAK"))
            } else {
                String::new()
            }
        )?;
    }
    writeln!(out, "               ({})", b.capacitance_basis)?;
    let t = &b.line_terminal_capacitance_uf;
    writeln!(
        out,
        "  balance      line-terminal C a-b {}, b-c {}, c-a {} µF: max/min {} (IEC 60831-1 \
         limit {}, from memory; an indication in service){}",
        num(t.ab, 4),
        num(t.bc, 4),
        num(t.ca, 4),
        b.line_terminal_ratio
            .map(|r| num(r, 4))
            .unwrap_or_else(|| "n/a".into()),
        b.line_terminal_ratio_limit,
        match b.line_terminal_ratio_within_limit {
            Some(true) => format!(", {}", super::style::word("within")),
            Some(false) => format!(", {}", super::style::word("BEYOND")),
            None => String::new(),
        }
    )?;
    writeln!(
        out,
        "  weak phases  {}",
        if b.weak_phases.is_empty() {
            "none".to_string()
        } else {
            b.weak_phases.join(", ")
        }
    )
}

/// One branch's figures in words: `C X ± U µF (Y ± U % of the rated Z µF), Q kvar at V V`, for
/// the table and the report.
pub(crate) fn branch_figures(b: &BankBranch, sep: &str) -> String {
    format!(
        "C {} ({} of the rated {} µF){sep} {} at {} V ({} kvar at the rated voltage)",
        pm(
            Some(b.capacitance_uf),
            Some(b.capacitance_uncertainty_uf),
            " µF"
        ),
        pm(
            Some(100.0 * b.ratio),
            Some(100.0 * b.ratio_uncertainty),
            " %"
        ),
        num(b.rated_capacitance_uf, 4),
        pm(Some(b.kvar), Some(b.kvar_uncertainty), " kvar"),
        num(b.voltage_v, 4),
        num(b.kvar_at_rated, 4),
    )
}

/// The fit's residual in words, for the table and the report.
pub(crate) fn residual_words(d: &DeltaBranches) -> String {
    format!(
        "{} A left unexplained ({} % of the bank's line currents) against {} A the \
         uncertainties would leave (k = 2){}",
        num(d.branch_residual_a, 3),
        num(d.branch_residual_percent, 3),
        num(d.branch_residual_limit_a, 3),
        if d.branch_residual_a <= d.branch_residual_limit_a {
            ": three pure capacitors between the lines explain the currents"
        } else {
            ""
        }
    )
}

/// The branch lines of a delta-connected bank.
fn branch_lines(out: &mut dyn Write, d: &DeltaBranches) -> io::Result<()> {
    for (k, b) in d.branches.iter().enumerate() {
        let head = if k == 0 { "branches" } else { "" };
        writeln!(
            out,
            "  {head:<13}{}: {} {}{}",
            hyphenated(b.name),
            branch_figures(b, ","),
            super::style::word(&b.verdict.to_string()),
            if b.weak {
                format!(", {}", super::style::word("WEAK"))
            } else {
                String::new()
            }
        )?;
    }
    writeln!(out, "               ({})", d.branch_basis)?;
    writeln!(out, "  residual     {}", residual_words(d))?;
    writeln!(
        out,
        "  weak branches {}",
        if d.weak_branches.is_empty() {
            "none".to_string()
        } else {
            let names: Vec<String> = d.weak_branches.iter().map(|n| hyphenated(n)).collect();
            names.join(", ")
        }
    )?;
    Ok(())
}

fn table(
    out: &mut dyn Write,
    r: &BankReport,
    p: &Nameplate,
    before: &Analysis,
    after: &Analysis,
) -> io::Result<()> {
    writeln!(out, "capacitor bank check")?;
    for (which, a) in [("before", before), ("after", after)] {
        match super::span_text(a) {
            Some(span) => writeln!(out, "  {which:<13}{}, span {span}", a.path.display())?,
            None => writeln!(out, "  {which:<13}{}", a.path.display())?,
        }
    }
    let steps: Vec<String> = p.steps_kvar.iter().map(|q| num(*q, 4)).collect();
    writeln!(
        out,
        "  nameplate    {} kvar, {} V, {} Hz, steps of {} kvar; {}{}",
        num(p.rated_kvar, 4),
        num(p.rated_voltage, 4),
        num(p.rated_frequency_hz, 4),
        steps.join(" + "),
        scaling_words(p, r),
        connection_words(p)
    )?;
    writeln!(
        out,
        "  before       {}",
        capture_line(before, r.power_scale)
    )?;
    writeln!(out, "  after        {}", capture_line(after, r.power_scale))?;
    writeln!(
        out,
        "  delivered    {} (Q1 before − Q1 after)",
        pm(
            Some(r.delivered_kvar),
            Some(r.delivered_uncertainty_kvar),
            " kvar"
        )
    )?;
    writeln!(out, "  expected     {}", r.expected_arithmetic)?;
    writeln!(
        out,
        "  ratio        {} of expected; accepted {} to {} ({})",
        pm(Some(r.ratio), Some(r.ratio_uncertainty), ""),
        num(r.band[0], 3),
        num(r.band[1], 3),
        r.standard
    )?;
    if let Some(b) = &r.phases {
        phase_lines(out, b)?;
    }
    if let Some(d) = &r.branches {
        branch_lines(out, d)?;
    }
    let b = &r.ratio_budget;
    writeln!(
        out,
        "  budget       u_c = {} (k = {}: U = {}); {}",
        num(b.ratio_combined_standard_uncertainty, 3),
        b.coverage_factor,
        num(b.ratio_expanded_uncertainty, 3),
        b.correlation
    )?;
    for t in &b.terms {
        writeln!(
            out,
            "               u = {:<9.2e} {}: {}",
            t.ratio_standard_uncertainty, t.term, t.source
        )?;
    }
    writeln!(
        out,
        "  VERDICT      {} (guarded acceptance, ILAC-G8:09/2019: guard band = U, k = 2)",
        super::style::word(&r.verdict.to_string().to_uppercase())
    )?;
    for (k, why) in r.inconclusive_because.iter().enumerate() {
        let head = if k == 0 { "because" } else { "" };
        writeln!(
            out,
            "  {head:<13}{why}: the capture cannot support a pass or fail; capture it again"
        )?;
    }
    if let (Some(n), Some(text)) = (r.failed_steps, &r.failed_steps_arithmetic) {
        writeln!(out, "  failed steps {n}: {text}")?;
    }
    let chosen: Vec<String> = r.nearest_steps.iter().map(|k| k.to_string()).collect();
    writeln!(
        out,
        "  target PF    {}: {} kvar needed from the before-capture (Qc = P·(tan θ1 − tan θ2)); \
         nearest steps: {} ({} kvar at this site)",
        num(r.target_pf, 3),
        num(r.kvar_for_target_pf, 4),
        if chosen.is_empty() {
            "none".to_string()
        } else {
            chosen.join(", ")
        },
        num(r.nearest_steps_kvar, 4),
    )?;
    match r.resonance_order {
        Some(h) => writeln!(
            out,
            "  resonance    parallel resonance at order {} with the supply (h = √(Ssc/Qc), common \
             practice){}",
            num(h, 3),
            r.resonance_near_harmonic
                .map(|n| format!(": within ±0.5 of harmonic {n}, present in the current"))
                .unwrap_or_default()
        )?,
        None => writeln!(
            out,
            "  resonance    not checked: give --supply-mva, or --transformer-kva and \
             --transformer-z-percent"
        )?,
    }
    let changes: Vec<String> = r
        .harmonic_changes
        .iter()
        .filter(|c| c.significant && (c.grows || c.change_percent.abs() > 20.0))
        .take(8)
        .map(|c| {
            format!(
                "h{} {} → {} A ({:+.0} %; V{} {} → {} %; own draw {} A{}: {})",
                c.order,
                num(c.before_a, 3),
                num(c.after_a, 3),
                c.change_percent,
                c.order,
                num(c.voltage_before_percent, 3),
                num(c.voltage_after_percent, 3),
                num(c.capacitor_draw_a, 3),
                c.predicted_amplification
                    .map(|a| format!(", predicted ×{}", num(a, 3)))
                    .unwrap_or_default(),
                c.diagnosis
            )
        })
        .collect();
    writeln!(
        out,
        "  harmonics    current before → after: {}",
        if changes.is_empty() {
            "no order changed by more than 20 %".to_string()
        } else {
            changes.join(", ")
        }
    )?;
    if r.capture_warnings.is_empty() {
        writeln!(out, "  captures     no warnings")?;
    }
    for (k, w) in r.capture_warnings.iter().enumerate() {
        let head = if k == 0 { "captures" } else { "" };
        writeln!(
            out,
            "  {head:<13}- {} ({}, {}): {}",
            w.capture,
            w.severity_word(),
            w.code,
            w.message
        )?;
    }
    sign_off(out, "bank check", &r.warnings, "nothing further", CAUTIONS)
}
