//! The report's sections for the capacitor bank check and the meter check: the verdicts, the
//! figures they rest on and the hints for a wrong wiring.

use super::*;

pub(super) fn bank_section(h: &mut String, b: &BankSection) -> std::fmt::Result {
    let r = b.report;
    let p = b.nameplate;
    writeln!(h, "<section id=\"bank\">\n<h2>Capacitor bank check</h2>")?;
    let verdict = r.verdict.to_string();
    writeln!(
        h,
        "<div class=\"verdict\"><p>{} delivered {} against {} expected: ratio {} (accepted {} \
         to {}, {}).</p></div>",
        verdict_badge(&verdict),
        escape(&pm(
            Some(r.delivered_kvar),
            Some(r.delivered_uncertainty_kvar),
            " kvar"
        )),
        escape(&format!("{} kvar", num(r.expected_kvar, 4))),
        escape(&pm(Some(r.ratio), Some(r.ratio_uncertainty), "")),
        num(r.band[0], 3),
        num(r.band[1], 3),
        escape(r.standard)
    )?;
    for why in &r.inconclusive_because {
        writeln!(
            h,
            "<p class=\"warn\">Inconclusive because {}: the capture cannot support a pass or \
             fail; capture it again.</p>",
            escape(why)
        )?;
    }
    writeln!(h, "<table>\n<tr><th>item</th><th>value</th></tr>")?;
    let steps: Vec<String> = p.steps_kvar.iter().map(|q| num(*q, 4)).collect();
    row(
        h,
        "capture with the bank out",
        &b.before.path.display().to_string(),
    )?;
    row(
        h,
        "capture with the bank in",
        &b.after.path.display().to_string(),
    )?;
    row(
        h,
        "nameplate",
        &format!(
            "{} kvar, {} V, {} Hz, steps of {} kvar{}",
            num(p.rated_kvar, 4),
            num(p.rated_voltage, 4),
            num(p.rated_frequency_hz, 4),
            steps.join(" + "),
            format_args!(
                "; {}{}",
                super::super::bank::scaling_words(p, r),
                super::super::bank::connection_words(p)
            )
        ),
    )?;
    row(h, "expected (arithmetic)", &r.expected_arithmetic)?;
    if let Some(balance) = &r.phases {
        three_phase::bank_rows(h, balance)?;
    }
    if let Some(d) = &r.branches {
        three_phase::branch_rows(h, d)?;
    }
    let budget = &r.ratio_budget;
    let terms: Vec<String> = budget
        .terms
        .iter()
        .map(|t| format!("{} {:.2e}", t.term, t.ratio_standard_uncertainty))
        .collect();
    row(
        h,
        "ratio uncertainty budget",
        &format!(
            "u_c = {}, k = {}, U = {}: {}; {}",
            num(budget.ratio_combined_standard_uncertainty, 3),
            budget.coverage_factor,
            num(budget.ratio_expanded_uncertainty, 3),
            terms.join("; "),
            budget.correlation
        ),
    )?;
    row(
        h,
        "PF before → after",
        &format!("{} → {}", num(r.pf_before, 3), num(r.pf_after, 3)),
    )?;
    if let (Some(n), Some(text)) = (r.failed_steps, &r.failed_steps_arithmetic) {
        row(h, "failed steps", &format!("{n}: {text}"))?;
    }
    row(
        h,
        &format!("kvar for PF {}", num(r.target_pf, 3)),
        &format!(
            "{} kvar (nearest steps: {}, {} kvar)",
            num(r.kvar_for_target_pf, 4),
            if r.nearest_steps.is_empty() {
                "none".to_string()
            } else {
                r.nearest_steps
                    .iter()
                    .map(|k| k.to_string())
                    .collect::<Vec<_>>()
                    .join(", ")
            },
            num(r.nearest_steps_kvar, 4)
        ),
    )?;
    row(
        h,
        "parallel resonance order",
        &match r.resonance_order {
            Some(o) => format!(
                "{}{}",
                num(o, 3),
                r.resonance_near_harmonic
                    .map(|n| format!(", within ±0.5 of harmonic {n}"))
                    .unwrap_or_default()
            ),
            None => "not checked (no supply short-circuit data)".into(),
        },
    )?;
    writeln!(h, "</table>")?;
    if !r.warnings.is_empty() {
        writeln!(h, "<ul class=\"warn\">")?;
        for w in &r.warnings {
            writeln!(h, "<li>{}</li>", escape(w))?;
        }
        writeln!(h, "</ul>")?;
    }
    writeln!(h, "</section>")
}

pub(super) fn meter_section(h: &mut String, m: &MeterSection) -> std::fmt::Result {
    let r = m.report;
    writeln!(
        h,
        "<section id=\"meter\">\n<h2>Meter check</h2>\n<p>Against {}: class {}{}{}, PF sign {}, \
         {}.</p>",
        escape(&m.analysis.path.display().to_string()),
        escape(r.class),
        r.reactive_class
            .map(|c| format!(", Q against {}", escape(c)))
            .unwrap_or_default(),
        r.connection
            .map(|c| format!(", {} connection", escape(c)))
            .unwrap_or_default(),
        escape(r.pf_sign),
        escape(&r.quadrant_text)
    )?;
    writeln!(
        h,
        "<table>\n<tr><th>quantity</th><th>meter</th><th>measured</th><th>error %</th>\
         <th>limit %</th><th>U %</th><th>verdict</th></tr>"
    )?;
    for c in &r.checks {
        let v = c.verdict.as_str();
        writeln!(
            h,
            "<tr><td>{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td>\
             <td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td>\
             <td>{} as {}{}</td></tr>",
            escape(c.quantity),
            num(c.meter_value, 5),
            num(c.measured_value, 5),
            super::super::meter::error_text(c.error_percent),
            num(c.limit_percent, 2),
            num(c.uncertainty_percent, 2),
            verdict_badge(v),
            escape(&c.definition),
            c.note
                .as_ref()
                .map(|n| format!("; {}", escape(n)))
                .unwrap_or_default()
        )?;
    }
    writeln!(h, "</table>")?;
    if r.wiring_hints.is_empty() {
        writeln!(h, "<p>Wiring: no fault pattern recognised.</p>")?;
    } else {
        writeln!(h, "<p>Wiring hints:</p>\n<ul class=\"warn\">")?;
        for w in &r.wiring_hints {
            writeln!(h, "<li>{}</li>", escape(w))?;
        }
        writeln!(h, "</ul>")?;
    }
    writeln!(h, "</section>")
}
