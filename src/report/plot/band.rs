//! Expected vs measured phase angle: the worst-case tolerance band of a circuit model, the
//! Monte Carlo histogram of the angle, the nominal angle, and the measured angle ± U with the
//! verdict of the decision rule.

use super::{
    PlotError, Swatch, TEXT_PX, TITLE_PX, font, font_at, legend, nice_step, palette,
    standard_chart, svg_document, tick_label,
};
use crate::check::decision::Verdict;
use crate::check::expected::{Expectation, Expected};
use crate::report::table::{num, pm};
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};

/// Size of the plot, pixels.
pub const SIZE: (u32, u32) = (960, 400);

/// What one band plot shows.
struct BandData<'a> {
    title: String,
    band: [f64; 2],
    nominal: f64,
    mc95: Option<[f64; 2]>,
    histogram: Option<&'a (f64, f64, Vec<usize>)>,
    measured: Option<(f64, f64, Verdict)>,
}

/// The caption of the band plot of a capture.
pub fn caption(e: &Expected, expectation: Option<&Expectation>) -> String {
    format!(
        "Phase angle expected from {} at {} Hz: the worst-case band over the tolerances (shaded, \
         {}° to {}°){}, the nominal angle (dashed) and the measured angle {} with its expanded \
         uncertainty. Verdict: {} ({}).",
        e.model.as_deref().unwrap_or("the circuit model"),
        num(e.frequency_hz, 5),
        num(e.band_deg[0], 4),
        num(e.band_deg[1], 4),
        match expectation {
            Some(x) => format!(
                ", the Monte Carlo histogram of {} draws ({}, seed {})",
                x.monte_carlo.draws, x.monte_carlo.distribution, x.monte_carlo.seed
            ),
            None => String::new(),
        },
        pm(
            Some(e.measured_phase_deg),
            Some(e.measured_uncertainty_deg),
            "°"
        ),
        e.verdict.as_str(),
        e.decision_rule,
    )
}

/// Draws the band plot of a capture compared with a model; `expectation` (the same model at the
/// same frequency) adds the Monte Carlo histogram.
pub fn plot(e: &Expected, expectation: Option<&Expectation>) -> Result<String, PlotError> {
    draw(&BandData {
        title: format!(
            "Expected vs measured phase angle: {}",
            e.verdict.as_str().to_uppercase()
        ),
        band: e.band_deg,
        nominal: e.nominal_phase_deg,
        mc95: Some(e.monte_carlo_95_deg).filter(|m| m.iter().all(|x| x.is_finite())),
        histogram: expectation.map(|x| &x.monte_carlo.histogram),
        measured: Some((e.measured_phase_deg, e.measured_uncertainty_deg, e.verdict)),
    })
}

/// Draws what a model predicts, without a measurement (for `expect`).
pub fn plot_expectation(x: &Expectation) -> Result<String, PlotError> {
    let mc95 = match (x.percentile(2.5), x.percentile(97.5)) {
        (Some(a), Some(b)) => Some([a, b]),
        _ => None,
    };
    draw(&BandData {
        title: format!(
            "Phase angle of {} at {} Hz",
            x.model.as_deref().unwrap_or("the circuit model"),
            num(x.frequency_hz, 5)
        ),
        band: x.band_deg,
        nominal: x.nominal_phase_deg,
        mc95,
        histogram: Some(&x.monte_carlo.histogram),
        measured: None,
    })
}

fn verdict_colour(v: Verdict) -> RGBColor {
    match v {
        Verdict::Consistent => palette::PASS,
        Verdict::Outside => palette::LIMIT,
        Verdict::Inconclusive => palette::UNSURE,
    }
}

fn draw(d: &BandData) -> Result<String, PlotError> {
    let mut xs = vec![d.band[0], d.band[1], d.nominal];
    if let Some(m) = d.mc95 {
        xs.extend(m);
    }
    if let Some((lo, hi, counts)) = d.histogram
        && !counts.is_empty()
    {
        xs.extend([*lo, *hi]);
    }
    if let Some((m, u, _)) = d.measured {
        xs.extend([m - u, m + u]);
    }
    let xs: Vec<f64> = xs.into_iter().filter(|x| x.is_finite()).collect();
    if xs.is_empty() {
        return Err(PlotError("no finite angle to draw".into()));
    }
    let lo = xs.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = xs.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let span = (hi - lo).max(0.5);
    let (x0, x1) = (lo - 0.12 * span, hi + 0.12 * span);
    // histogram as percent of draws per bin
    let bars: Vec<(f64, f64, f64)> = match d.histogram {
        Some((h_lo, h_hi, counts)) if !counts.is_empty() => {
            let total: usize = counts.iter().sum();
            let width = (h_hi - h_lo) / counts.len() as f64;
            counts
                .iter()
                .enumerate()
                .map(|(k, &c)| {
                    let a = h_lo + k as f64 * width;
                    (a, a + width, 100.0 * c as f64 / total.max(1) as f64)
                })
                .collect()
        }
        _ => Vec::new(),
    };
    let tallest = bars.iter().map(|b| b.2).fold(0.0, f64::max);
    let y_top = if tallest > 0.0 { tallest * 1.45 } else { 1.0 };
    svg_document(SIZE, |root| {
        let (head, body) = root.split_vertically(64);
        head.draw(&Text::new(
            d.title.clone(),
            (12, 8),
            font(TITLE_PX, palette::INK),
        ))?;
        let mut items = vec![(
            Swatch::Fill(palette::BAND),
            format!(
                "worst-case band {}° to {}°",
                num(d.band[0], 4),
                num(d.band[1], 4)
            ),
        )];
        if !bars.is_empty() {
            items.push((
                Swatch::Fill(palette::HISTOGRAM),
                match d.mc95 {
                    Some(m) => {
                        format!("Monte Carlo (95 %: {}° to {}°)", num(m[0], 4), num(m[1], 4))
                    }
                    None => "Monte Carlo".to_string(),
                },
            ));
        }
        items.push((
            Swatch::Dashed(palette::INK),
            format!("nominal {}°", num(d.nominal, 4)),
        ));
        if let Some((_, _, v)) = d.measured {
            items.push((Swatch::Line(verdict_colour(v)), "measured ± U".to_string()));
        }
        legend(&head, 46, &items)?;
        let mut chart = standard_chart(&body).build_cartesian_2d(x0..x1, 0.0..y_top)?;
        let y_step = nice_step(y_top, 5.0);
        chart
            .configure_mesh()
            .x_desc("phase angle (°), positive: current lags")
            .y_desc(if bars.is_empty() {
                ""
            } else {
                "share of draws per bin (%)"
            })
            .x_labels(10)
            .y_labels(((y_top / y_step).floor() as usize + 1).max(2))
            .x_label_formatter(&|x| tick_label(*x))
            .y_label_formatter(&|y| tick_label(*y))
            .label_style(font(TEXT_PX - 1.0, palette::INK))
            .axis_desc_style(font(TEXT_PX, palette::INK))
            .bold_line_style(palette::GRID)
            .light_line_style(palette::PAPER)
            .axis_style(palette::MUTED)
            .draw()?;
        chart.draw_series(std::iter::once(Rectangle::new(
            [(d.band[0], 0.0), (d.band[1], y_top)],
            palette::BAND.mix(0.75).filled(),
        )))?;
        chart
            .draw_series(bars.iter().map(|&(a, b, h)| {
                Rectangle::new([(a, 0.0), (b, h)], palette::HISTOGRAM.filled())
            }))?;
        chart.draw_series(DashedLineSeries::new(
            [(d.nominal, 0.0), (d.nominal, y_top)],
            7,
            5,
            palette::INK.stroke_width(1),
        ))?;
        if let Some((m, u, v)) = d.measured {
            let c = verdict_colour(v);
            let y = 0.82 * y_top;
            let cap = 0.04 * y_top;
            chart.draw_series([
                PathElement::new(vec![(m, 0.0), (m, y)], c.stroke_width(2)),
                PathElement::new(vec![(m - u, y), (m + u, y)], c.stroke_width(3)),
                PathElement::new(vec![(m - u, y - cap), (m - u, y + cap)], c.stroke_width(2)),
                PathElement::new(vec![(m + u, y - cap), (m + u, y + cap)], c.stroke_width(2)),
            ])?;
            chart.draw_series(std::iter::once(Circle::new((m, y), 4, c.filled())))?;
            // the label beside the error bar, on the side with more room
            let gap = 0.01 * (x1 - x0);
            let (at, anchor) = if m > (x0 + x1) / 2.0 {
                (m - u - gap, HPos::Right)
            } else {
                (m + u + gap, HPos::Left)
            };
            chart.draw_series(std::iter::once(Text::new(
                format!("measured {}", pm(Some(m), Some(u), "°")),
                (at, y),
                font_at(TEXT_PX, c, anchor, VPos::Center),
            )))?;
        }
        Ok(())
    })
}
