//! The three-phase parts of a capture's section: each phase's figures side by side, and the
//! system's totals, IEEE 1459 effective values, sequence components, rotation and wiring hints.

use super::{escape, row};
use crate::analysis::{Analysis, PhaseAnalysis, ThreePhaseAnalysis, phase_letter};
use crate::check::bank::PhaseBalance;
use crate::quantity::three_phase::Rotation;
use crate::report::table::{num, pm};
use std::fmt::Write as _;

/// One row of the per-phase table: a label and a cell per phase.
fn phase_row(
    h: &mut String,
    name: &str,
    phases: &[PhaseAnalysis],
    cell: impl Fn(&PhaseAnalysis) -> String,
) -> std::fmt::Result {
    write!(h, "<tr><td>{}</td>", escape(name))?;
    for p in phases {
        write!(h, "<td>{}</td>", escape(&cell(p)))?;
    }
    writeln!(h, "</tr>")
}

/// The per-phase table (value ± U, k = 2) and the system table of a three-phase capture.
pub(super) fn tables(h: &mut String, a: &Analysis, t: &ThreePhaseAnalysis) -> std::fmt::Result {
    let ph = &a.phases;
    write!(h, "<table class=\"results\">\n<tr><th>quantity</th>")?;
    for p in ph {
        write!(h, "<th>phase {}</th>", phase_letter(p.phase))?;
    }
    writeln!(h, "</tr>")?;
    phase_row(h, "channels", ph, |p| {
        format!("{} · {}", p.channels.voltage.name, p.channels.current.name)
    })?;
    phase_row(h, "phase angle θ, DFT", ph, |p| {
        pm(
            p.quantities.phase_angle_dft_deg,
            p.uncertainty.phase_angle_deg.dft,
            "°",
        )
    })?;
    phase_row(h, "phase angle θ, zero crossings", ph, |p| {
        pm(
            p.quantities.phase_angle_zero_crossing_deg,
            p.uncertainty.phase_angle_deg.zero_crossing,
            "°",
        )
    })?;
    phase_row(h, "displacement PF (cos θ1)", ph, |p| {
        pm(
            p.quantities.displacement_pf,
            p.uncertainty.displacement_pf,
            "",
        )
    })?;
    phase_row(h, "true PF (P/S)", ph, |p| {
        pm(p.quantities.true_pf, p.uncertainty.true_pf, "")
    })?;
    phase_row(h, "voltage RMS", ph, |p| {
        pm(
            Some(p.quantities.voltage.rms),
            Some(p.uncertainty.voltage.rms),
            " V",
        )
    })?;
    phase_row(h, "current RMS", ph, |p| {
        pm(
            Some(p.quantities.current.rms),
            Some(p.uncertainty.current.rms),
            " A",
        )
    })?;
    phase_row(h, "voltage THD", ph, |p| {
        pm(
            p.quantities.voltage.thd_percent,
            p.uncertainty.voltage.thd_percent,
            " %",
        )
    })?;
    phase_row(h, "current THD", ph, |p| {
        pm(
            p.quantities.current.thd_percent,
            p.uncertainty.current.thd_percent,
            " %",
        )
    })?;
    phase_row(h, "active power P", ph, |p| {
        pm(
            Some(p.quantities.power.active_w),
            Some(p.uncertainty.power.active_w),
            " W",
        )
    })?;
    phase_row(h, "fundamental reactive power Q1", ph, |p| {
        pm(
            Some(p.quantities.power.reactive_var),
            Some(p.uncertainty.power.reactive_var),
            " var",
        )
    })?;
    phase_row(h, "apparent power S", ph, |p| {
        format!("{} VA", num(p.quantities.power.apparent_va, 5))
    })?;
    writeln!(h, "</table>")?;
    if t.artificial_star {
        writeln!(
            h,
            "<p class=\"note\">No neutral was measured: each phase's voltage is referred to the \
             artificial star point (where the three voltages sum to zero). The totals do not \
             depend on it.</p>"
        )?;
    }
    let f = &t.figures;
    writeln!(
        h,
        "<table class=\"results\">\n<tr><th>system ({})</th><th>value</th></tr>",
        escape(a.system.as_str())
    )?;
    row(
        h,
        "total P · Q1 (sum of the phases), ± U (k = 2)",
        &format!(
            "{} · {}",
            pm(Some(f.total.active_w), Some(t.uncertainty.active_w), " W"),
            pm(
                Some(f.total.reactive_var),
                Some(t.uncertainty.reactive_var),
                " var"
            )
        ),
    )?;
    row(
        h,
        "apparent power, arithmetic · vector",
        &format!(
            "{} VA · {} VA",
            num(f.total.arithmetic_apparent_va, 6),
            num(f.total.vector_apparent_va, 6)
        ),
    )?;
    let e = &f.effective;
    row(
        h,
        "effective Ve · Ie (IEEE 1459)",
        &format!("{} V · {} A", num(e.voltage_v, 6), num(e.current_a, 6)),
    )?;
    row(
        h,
        "effective Se · Se1 · SeN",
        &format!(
            "{} VA · {} VA · {} VA",
            num(e.apparent_va, 6),
            num(e.fundamental_apparent_va, 6),
            num(e.nonfundamental_apparent_va, 4)
        ),
    )?;
    row(
        h,
        "effective PF (P/Se), ± U (k = 2)",
        &pm(e.pf, t.uncertainty.effective_pf, ""),
    )?;
    let ps = &f.positive_sequence;
    row(
        h,
        "P1+ · Q1+ · S1+ · SU1",
        &format!(
            "{} W · {} var · {} VA · {} VA",
            num(ps.active_w, 6),
            num(ps.reactive_var, 6),
            num(ps.apparent_va, 6),
            num(ps.unbalance_va, 4)
        ),
    )?;
    let pct = |x: Option<f64>| x.map_or_else(|| "n/a".into(), |x| format!("{x:.3} %"));
    let (v, i) = (&f.voltage_sequence, &f.current_sequence);
    row(
        h,
        "voltage sequence + · − · 0 · unbalance u2",
        &format!(
            "{} V · {} V · {} V · {}",
            num(v.positive, 6),
            num(v.negative, 4),
            num(v.zero, 4),
            pct(v.unbalance_percent)
        ),
    )?;
    row(
        h,
        "current sequence + · − · 0 · unbalance",
        &format!(
            "{} A · {} A · {} A · {}",
            num(i.positive, 6),
            num(i.negative, 4),
            num(i.zero, 4),
            pct(i.unbalance_percent)
        ),
    )?;
    row(
        h,
        "rotation",
        match f.rotation {
            Rotation::Abc => "abc (positive sequence)",
            Rotation::Acb => "acb (reverse: b leads a)",
        },
    )?;
    writeln!(h, "</table>")?;
    writeln!(h, "<h3>Wiring</h3>")?;
    if t.wiring_hints.is_empty() {
        writeln!(h, "<p>Nothing odd in the phasors.</p>")
    } else {
        writeln!(h, "<ul class=\"warn\">")?;
        for hint in &t.wiring_hints {
            writeln!(h, "<li>{}</li>", escape(hint))?;
        }
        writeln!(h, "</ul>")
    }
}

/// The per-phase rows of a three-phase bank check, inside the bank table.
pub(super) fn bank_rows(h: &mut String, b: &PhaseBalance) -> std::fmt::Result {
    for (name, p) in b.phases.iter() {
        row(
            h,
            &format!("phase {name}"),
            &format!(
                "{}: {}{}",
                crate::report::bank::phase_figures(p, ";"),
                p.verdict,
                if p.weak { ", weak" } else { "" }
            ),
        )?;
    }
    let t = &b.line_terminal_capacitance_uf;
    row(
        h,
        "line-terminal capacitance",
        &format!(
            "a-b {}, b-c {}, c-a {} µF; max/min {} against the {} of IEC 60831-1 (from memory; \
             an indication in service); weak phases: {}; {}",
            num(t.ab, 4),
            num(t.bc, 4),
            num(t.ca, 4),
            b.line_terminal_ratio
                .map(|r| num(r, 4))
                .unwrap_or_else(|| "n/a".into()),
            b.line_terminal_ratio_limit,
            if b.weak_phases.is_empty() {
                "none".to_string()
            } else {
                b.weak_phases.join(", ")
            },
            b.capacitance_basis
        ),
    )
}

/// The rows of a delta-connected bank's branches in the bank section.
pub(super) fn branch_rows(
    h: &mut String,
    d: &crate::check::bank::DeltaBranches,
) -> std::fmt::Result {
    use crate::check::bank::branches::hyphenated;
    for b in &d.branches {
        row(
            h,
            &format!("branch {}", hyphenated(b.name)),
            &format!(
                "{}: {}{}",
                crate::report::bank::branch_figures(b, ";"),
                b.verdict,
                if b.weak { ", weak" } else { "" }
            ),
        )?;
    }
    let weak: Vec<String> = d.weak_branches.iter().map(|n| hyphenated(n)).collect();
    row(
        h,
        "delta branches",
        &format!(
            "{}; weak branches: {}; {}{}",
            crate::report::bank::residual_words(d),
            if weak.is_empty() {
                "none".to_string()
            } else {
                weak.join(", ")
            },
            d.branch_basis,
            d.branch_inconclusive_because
                .iter()
                .map(|w| format!("; inconclusive: {w}"))
                .collect::<String>()
        ),
    )
}
