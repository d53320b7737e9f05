//! A capture's section of the report: its results (`value ± U`) with the method and the
//! uncertainty of each, the verdict against a circuit model when there is one, its plots and
//! its warnings.

use super::*;

pub(super) fn capture_section(
    h: &mut String,
    k: usize,
    a: &Analysis,
    expectation: Option<&Expectation>,
    trend: Option<&TrendResult>,
    options: &PlotOptions,
) -> std::fmt::Result {
    let q = &a.quantities;
    let u = &a.uncertainty;
    let status = a.status();
    writeln!(
        h,
        "<section id=\"capture-{k}\">\n<h2>{} <span class=\"badge {s}\">{s}</span></h2>",
        escape(&a.path.display().to_string()),
        s = status.as_str()
    )?;
    writeln!(
        h,
        "<p class=\"note\">{} · {} Hz · {} samples · {} \
         · {} cycles ({} whole) · harmonics to order {} · U over {} sub-records: {}</p>",
        escape(&a.format.to_string()),
        num(a.sample_rate_hz, 6),
        a.samples,
        escape(&match a.three_phase {
            Some(_) => a.system.to_string(),
            None => a.channels.describe(),
        }),
        num(q.cycles, 4),
        q.whole_cycles,
        q.harmonic_order,
        u.windows,
        escape(&super::super::coverage_text(u))
    )?;
    let when: Vec<String> = [
        super::super::span_text(a).map(|s| format!("span analysed: {s}")),
        super::super::times_text(a).map(|t| format!("record {t}")),
    ]
    .into_iter()
    .flatten()
    .collect();
    if !when.is_empty() {
        writeln!(h, "<p class=\"note\">{}</p>", escape(&when.join(" · ")))?;
    }
    if let Some(t) = &a.three_phase {
        row_table_frequency(h, a)?;
        three_phase::tables(h, a, t)?;
        writeln!(
            h,
            "<p class=\"note\">The phasor diagram shows the three phases, the waveform and spectrum plots each phase (their captions say which); the power triangle is the system's (positive-sequence powers).</p>"
        )?;
        return capture_tail(h, a, expectation, trend, options);
    }
    writeln!(
        h,
        "<table class=\"results\">\n<tr><th>quantity</th><th>value ± U</th></tr>"
    )?;
    row(
        h,
        "frequency",
        &pm(Some(q.frequency_hz), Some(u.frequency_hz), " Hz"),
    )?;
    row(
        h,
        "phase angle θ, DFT (least-squares phasors)",
        &pm(q.phase_angle_dft_deg, u.phase_angle_deg.dft, "°"),
    )?;
    row(
        h,
        "phase angle θ, zero crossings",
        &pm(
            q.phase_angle_zero_crossing_deg,
            u.phase_angle_deg.zero_crossing,
            "°",
        ),
    )?;
    row(
        h,
        "current",
        q.character.map(|c| c.as_str()).unwrap_or("undefined"),
    )?;
    row(
        h,
        "displacement PF (cos θ1)",
        &pm(q.displacement_pf, u.displacement_pf, ""),
    )?;
    let below = q.true_pf.is_some_and(|p| p.abs() < a.settings.pf_threshold);
    row(
        h,
        "true PF (P/S)",
        &format!(
            "{}{}",
            pm(q.true_pf, u.true_pf, ""),
            if below {
                format!(" (below the {} threshold)", num(a.settings.pf_threshold, 3))
            } else {
                String::new()
            }
        ),
    )?;
    for (name, unit, t, tu) in [
        ("voltage", " V", &q.voltage, &u.voltage),
        ("current", " A", &q.current, &u.current),
    ] {
        row(
            h,
            &format!("{name} RMS"),
            &pm(Some(t.rms), Some(tu.rms), unit),
        )?;
        row(
            h,
            &format!("{name} fundamental RMS"),
            &format!("{}{unit}", num(t.fundamental_rms, 6)),
        )?;
        row(
            h,
            &format!("{name} THD"),
            &pm(t.thd_percent, tu.thd_percent, " %"),
        )?;
        row(
            h,
            &format!("{name} DC · peak · crest factor"),
            &format!(
                "{}{unit} · {}{unit} · {}",
                num(t.dc, 3),
                num(t.peak, 5),
                num(t.crest_factor, 3)
            ),
        )?;
    }
    let p = &q.power;
    row(
        h,
        "active power P",
        &pm(Some(p.active_w), Some(u.power.active_w), " W"),
    )?;
    row(
        h,
        "fundamental active power P1 · harmonic PH",
        &format!(
            "{} W · {} W",
            num(p.fundamental_active_w, 5),
            num(p.harmonic_active_w, 3)
        ),
    )?;
    row(
        h,
        "fundamental reactive power Q1",
        &pm(Some(p.reactive_var), Some(u.power.reactive_var), " var"),
    )?;
    row(
        h,
        "apparent power S · S1 · SN",
        &format!(
            "{} VA · {} VA · {} VA",
            num(p.apparent_va, 5),
            num(p.fundamental_apparent_va, 5),
            num(p.nonfundamental_apparent_va, 4)
        ),
    )?;
    row(
        h,
        "distortion powers DI · DV · SH · N",
        &format!(
            "{} var · {} var · {} VA · {} var",
            num(p.current_distortion_var, 4),
            num(p.voltage_distortion_var, 4),
            num(p.harmonic_apparent_va, 4),
            num(p.nonactive_var, 4)
        ),
    )?;
    writeln!(h, "</table>")?;
    capture_tail(h, a, expectation, trend, options)
}

/// The frequency of a three-phase capture, above its per-phase table.
pub(super) fn row_table_frequency(h: &mut String, a: &Analysis) -> std::fmt::Result {
    writeln!(
        h,
        "<table class=\"results\">\n<tr><th>quantity</th><th>value ± U (k = 2)</th></tr>"
    )?;
    row(
        h,
        "frequency (phase a; every phase fitted at it)",
        &pm(
            Some(a.quantities.frequency_hz),
            Some(a.uncertainty.frequency_hz),
            " Hz",
        ),
    )?;
    writeln!(h, "</table>")
}

/// What follows a capture's figures: the model verdict, the plots, the observations.
pub(super) fn capture_tail(
    h: &mut String,
    a: &Analysis,
    expectation: Option<&Expectation>,
    trend: Option<&TrendResult>,
    options: &PlotOptions,
) -> std::fmt::Result {
    if let Some(e) = &a.expected {
        expected_block(h, e)?;
    }
    let mut plots = plot::plots_with(a, options, expectation);
    plots.extend(trend.and_then(|t| plot::trend::report_plot(t, &a.events)));
    write_plots(h, &plots)?;
    // the events, as `analyze` lists them (the trend plot marks the same ones), and what dips
    // and swells were measured against
    let reference = super::super::table::shows_reference(a)
        .then(|| super::super::table::reference_text(&a.dip_references))
        .flatten();
    if !a.events.is_empty() || reference.is_some() {
        writeln!(h, "<h3>Events</h3>")?;
        if a.events.is_empty() {
            writeln!(h, "<p>None.</p>")?;
        } else {
            writeln!(h, "<ul class=\"notes\">")?;
            for e in &a.events {
                writeln!(
                    h,
                    "<li>{}</li>",
                    escape(&super::super::table::event_text(e))
                )?;
            }
            writeln!(h, "</ul>")?;
        }
        if let Some(text) = reference {
            writeln!(
                h,
                "<p class=\"note\">Dips and swells against the {}.</p>",
                escape(&text)
            )?;
        }
    }
    // warnings always (their absence is news), findings and notes when there are any
    for (title, severity, class) in [
        ("Warnings", Severity::Warning, "warn"),
        ("Findings", Severity::Finding, "finding"),
        ("Notes", Severity::Note, "notes"),
    ] {
        let items: Vec<&Warning> = a.listed(severity).collect();
        if items.is_empty() && severity != Severity::Warning {
            continue;
        }
        writeln!(h, "<h3>{title}</h3>")?;
        if items.is_empty() {
            writeln!(h, "<p>None.</p>")?;
            continue;
        }
        writeln!(h, "<ul class=\"{class}\">")?;
        for w in items {
            writeln!(h, "<li>{}</li>", escape(&w.to_string()))?;
        }
        writeln!(h, "</ul>")?;
    }
    writeln!(h, "</section>")
}

pub(super) fn write_plots(h: &mut String, plots: &[Plot]) -> std::fmt::Result {
    writeln!(h, "<h3>Plots</h3>")?;
    let figure = |h: &mut String, p: &Plot| -> std::fmt::Result {
        match &p.svg {
            Ok(svg) => writeln!(
                h,
                "<figure class=\"plot-{}\">{svg}<figcaption>{}</figcaption></figure>",
                p.name,
                escape(&p.caption)
            ),
            Err(e) => writeln!(
                h,
                "<p class=\"note\">The {} plot could not be drawn: {}.</p>",
                p.name,
                escape(&e.0)
            ),
        }
    };
    let paired = |name: &str| name == "phasor" || name == "triangle";
    for p in plots.iter().filter(|p| !paired(p.name)) {
        if p.name == "spectrum" {
            // phasor and triangle side by side before the spectrum
            writeln!(h, "<div class=\"pair\">")?;
            for q in plots.iter().filter(|q| paired(q.name)) {
                figure(h, q)?;
            }
            writeln!(h, "</div>")?;
        }
        figure(h, p)?;
    }
    Ok(())
}

pub(super) fn expected_block(h: &mut String, e: &Expected) -> std::fmt::Result {
    writeln!(h, "<h3>Expected vs measured</h3>\n<div class=\"verdict\">")?;
    writeln!(
        h,
        "<p>{} against {}: nominal {}°, worst-case band {}° to {}°, Monte Carlo 95 % {}° to \
         {}°; |Z| nominal {} Ω, worst-case band {} Ω to {} Ω. The {}.</p>",
        verdict_badge(e.verdict.as_str()),
        escape(e.model.as_deref().unwrap_or("the circuit model")),
        num(e.nominal_phase_deg, 4),
        num(e.band_deg[0], 4),
        num(e.band_deg[1], 4),
        num(e.monte_carlo_95_deg[0], 4),
        num(e.monte_carlo_95_deg[1], 4),
        num(e.nominal_impedance_ohm, 4),
        num(e.impedance.band_ohm[0], 4),
        num(e.impedance.band_ohm[1], 4),
        escape(&super::super::table::verdict_grounds(e)),
    )?;
    if let Some(r) = &e.reason {
        let lead = if e.verdict == crate::check::decision::Verdict::Outside {
            "Finding"
        } else {
            "No verdict"
        };
        writeln!(h, "<p>{lead}: {}.</p>", escape(r))?;
    }
    let x = &e.explanation;
    writeln!(
        h,
        "<p>Measured impedance |Z| = {}.</p>",
        super::super::table::impedance_text(e)
    )?;
    if !x.parts.is_empty() {
        writeln!(
            h,
            "<p>Which part would explain it, most plausible first:</p>\n<ul>"
        )?;
        for p in &x.parts {
            let z = p
                .impedance_ohm_if_so
                .map(|z| format!(" (|Z| would be {} Ω)", num(z, 4)))
                .unwrap_or_default();
            writeln!(h, "<li>{}{}</li>", escape(&p.note), escape(&z))?;
        }
        writeln!(h, "</ul>")?;
    }
    writeln!(
        h,
        "<p class=\"note\">Rule: {}.</p>\n</div>",
        escape(e.decision_rule)
    )
}
