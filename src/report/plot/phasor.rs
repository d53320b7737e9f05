//! The fundamental phasors V1 and I1 as arrows, the angle θ between them as an arc, and the
//! strongest harmonic phasors.
//!
//! V1 is the reference (0°, pointing right); I1 is drawn at −θ, so a lagging current sits below
//! the axis, as in the usual phasor convention (counter-clockwise rotation). The two arrows are
//! not to a common scale: V1 spans the unit circle, I1 0.8 of it. A harmonic is drawn to the
//! scale of its own fundamental, at its angle referred to the voltage fundamental,
//! `arg Xh − h·arg V1` (the time origin moved to a positive peak of V1). The current's phasors
//! are taken with any `--skew` removed, like every reported figure.

use super::{
    PlotError, PlotOptions, Swatch, TEXT_PX, TITLE_PX, font, font_at, legend, palette, svg_document,
};
use crate::analysis::Analysis;
use crate::report::table::num;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};
use rustfft::num_complex::Complex64;
use std::f64::consts::PI;

/// Size of the plot, pixels.
pub const SIZE: (u32, u32) = (520, 540);
/// Harmonic phasors shown by default: those above this percentage of their fundamental.
pub const DEFAULT_HARMONIC_PERCENT: f64 = 5.0;
/// At most this many harmonic phasors per trace.
const MAX_HARMONICS: usize = 3;
/// Length of the I1 arrow relative to V1's.
const CURRENT_LENGTH: f64 = 0.8;
/// Harmonic arrows are magnified by the largest of these factors that keeps them within
/// [`HARMONIC_REACH`] of the circle's radius.
const MAGNIFICATIONS: [f64; 5] = [1.0, 2.0, 5.0, 10.0, 20.0];
/// See [`MAGNIFICATIONS`].
const HARMONIC_REACH: f64 = 0.6;
/// Half the span of each axis in plot units (the unit circle plus room for labels).
const REACH: f64 = 1.3;

/// The angle label, e.g. "θ = 25.3° lagging"; `None` when the angle is undefined.
pub fn angle_label(a: &Analysis) -> Option<String> {
    let q = &a.quantities;
    let theta = q.phase_angle_dft_deg?;
    let word = q.character.map(|c| c.as_str()).unwrap_or("");
    Some(format!("θ = {:.1}° {word}", theta).trim_end().to_string())
}

/// The caption of the phasor plot.
pub fn caption(a: &Analysis, options: &PlotOptions) -> String {
    let mut s = String::from(
        "Fundamental phasors: V1 as the reference at 0°, I1 at −θ (a lagging current below the \
         axis). Arrow lengths are not to a common scale: V1 spans the circle, I1 0.8 of it.",
    );
    if let Some(p) = options.harmonic_phasors_above_percent {
        s.push_str(&format!(
            " Thin arrows: harmonics above {} % of their fundamental (at most {MAX_HARMONICS} per \
             trace), to the scale of their own fundamental and magnified as the legend says, at arg Xh − h·arg V1.",
            num(p, 3)
        ));
    }
    if a.quantities.phase_angle_dft_deg.is_none() {
        s.push_str(" The angle is undefined here: a trace has no fundamental.");
    }
    s
}

/// A harmonic arrow: order, tip (plot units), share of its fundamental in percent, voltage?
struct HarmonicArrow {
    order: usize,
    tip: (f64, f64),
    percent: f64,
    voltage: bool,
}

fn harmonic_arrows(a: &Analysis, above_percent: f64) -> Vec<HarmonicArrow> {
    let est = &a.estimate;
    let f = est.frequency_hz;
    let skew = a.skew_s;
    let v1_arg = est.voltage.fundamental().arg();
    let mut out = Vec::new();
    for (voltage, c, length) in [
        (true, &est.voltage, 1.0),
        (false, &est.current, CURRENT_LENGTH),
    ] {
        let x1 = c.fundamental().norm();
        if !(c.has_fundamental && x1 > 0.0) {
            continue;
        }
        let mut found: Vec<HarmonicArrow> = c
            .harmonics
            .iter()
            .enumerate()
            .skip(1)
            .filter_map(|(k, x)| {
                let order = k + 1;
                let x = if voltage {
                    *x
                } else {
                    x * Complex64::from_polar(1.0, 2.0 * PI * order as f64 * f * skew)
                };
                let percent = 100.0 * x.norm() / x1;
                (percent >= above_percent && percent.is_finite()).then(|| {
                    let angle = x.arg() - order as f64 * v1_arg;
                    let r = length * percent / 100.0;
                    HarmonicArrow {
                        order,
                        tip: (r * angle.cos(), r * angle.sin()),
                        percent,
                        voltage,
                    }
                })
            })
            .collect();
        found.sort_by(|a, b| b.percent.total_cmp(&a.percent));
        found.truncate(MAX_HARMONICS);
        out.extend(found);
    }
    out
}

/// The magnification of the harmonic arrows: the largest of [`MAGNIFICATIONS`] that keeps the
/// longest within [`HARMONIC_REACH`].
fn magnification(arrows: &[HarmonicArrow]) -> f64 {
    let longest = arrows
        .iter()
        .map(|h| h.tip.0.hypot(h.tip.1))
        .fold(0.0, f64::max);
    MAGNIFICATIONS
        .iter()
        .rev()
        .copied()
        .find(|m| longest * m <= HARMONIC_REACH)
        .unwrap_or(1.0)
}

/// The phasor plots' chart: plot units on both axes.
pub(super) type Chart<'a, 'b> = ChartContext<
    'a,
    SVGBackend<'b>,
    Cartesian2d<plotters::coord::types::RangedCoordf64, plotters::coord::types::RangedCoordf64>,
>;

/// An arrow from the origin to `tip` with a filled head.
pub(super) fn arrow(
    chart: &mut Chart,
    tip: (f64, f64),
    colour: RGBColor,
    width: u32,
) -> Result<(), PlotError> {
    let len = tip.0.hypot(tip.1);
    if !(len > 0.0 && len.is_finite()) {
        return Ok(());
    }
    let (ux, uy) = (tip.0 / len, tip.1 / len);
    let head = (0.08f64).min(0.45 * len);
    let half = head * 0.45;
    let base = (tip.0 - ux * head, tip.1 - uy * head);
    chart.draw_series(std::iter::once(PathElement::new(
        vec![(0.0, 0.0), base],
        colour.stroke_width(width),
    )))?;
    chart.draw_series(std::iter::once(Polygon::new(
        vec![
            tip,
            (base.0 - uy * half, base.1 + ux * half),
            (base.0 + uy * half, base.1 - ux * half),
        ],
        colour.filled(),
    )))?;
    Ok(())
}

/// Draws the phasor plot.
pub fn plot(a: &Analysis, options: &PlotOptions) -> Result<String, PlotError> {
    let q = &a.quantities;
    let theta = q.phase_angle_dft_deg;
    let harmonics = match (theta, options.harmonic_phasors_above_percent) {
        (Some(_), Some(p)) => harmonic_arrows(a, p),
        _ => Vec::new(),
    };
    let zoom = magnification(&harmonics);
    svg_document(SIZE, |root| {
        let (head, body) = root.split_vertically(88);
        head.draw(&Text::new(
            "Fundamental phasors",
            (12, 8),
            font(TITLE_PX, palette::INK),
        ))?;
        let mut items = vec![
            (
                Swatch::Line(palette::VOLTAGE),
                format!("V1 {} V", num(q.voltage.fundamental_rms, 4)),
            ),
            (
                Swatch::Line(palette::CURRENT),
                format!("I1 {} A", num(q.current.fundamental_rms, 4)),
            ),
        ];
        if !harmonics.is_empty() {
            items.push((
                Swatch::Line(palette::ACCENT),
                if zoom > 1.0 {
                    format!("harmonics, drawn ×{zoom}")
                } else {
                    "harmonics".to_string()
                },
            ));
        }
        head.draw(&Text::new(
            angle_label(a).unwrap_or_else(|| "θ undefined".to_string()),
            (12, 34),
            font(TEXT_PX + 3.0, palette::INK),
        ))?;
        legend(&head, 70, &items)?;
        let (w, h) = body.dim_in_pixel();
        let margin = 14.0;
        let aspect = (f64::from(w) - 2.0 * margin) / (f64::from(h) - 2.0 * margin);
        let mut chart = ChartBuilder::on(&body)
            .margin(margin as u32)
            .build_cartesian_2d(-REACH * aspect..REACH * aspect, -REACH..REACH)?;
        // the unit circle and the axes, faint
        chart.draw_series(std::iter::once(PathElement::new(
            (0..=120)
                .map(|k| {
                    let t = 2.0 * PI * f64::from(k) / 120.0;
                    (t.cos(), t.sin())
                })
                .collect::<Vec<_>>(),
            palette::GRID.stroke_width(2),
        )))?;
        for seg in [[(-1.15, 0.0), (1.15, 0.0)], [(0.0, -1.15), (0.0, 1.15)]] {
            chart.draw_series(std::iter::once(PathElement::new(
                seg.to_vec(),
                palette::GRID.stroke_width(1),
            )))?;
        }
        for (label, at) in [
            ("0°", (1.17, 0.0)),
            ("90°", (0.0, 1.17)),
            ("−90°", (0.0, -1.21)),
        ] {
            let anchor = if at.0 > 0.0 { HPos::Left } else { HPos::Center };
            chart.draw_series(std::iter::once(Text::new(
                label,
                at,
                font_at(TEXT_PX - 2.0, palette::MUTED, anchor, VPos::Center),
            )))?;
        }
        let Some(theta) = theta else {
            chart.draw_series(std::iter::once(Text::new(
                "no phase angle: a trace has no fundamental",
                (0.0, 0.0),
                font_at(TEXT_PX, palette::INK, HPos::Center, VPos::Center),
            )))?;
            return Ok(());
        };
        let th = theta.to_radians();
        let i_tip = (CURRENT_LENGTH * (-th).cos(), CURRENT_LENGTH * (-th).sin());
        for hm in &harmonics {
            let colour = if hm.voltage {
                palette::VOLTAGE
            } else {
                palette::CURRENT
            };
            let tip = (hm.tip.0 * zoom, hm.tip.1 * zoom);
            arrow(&mut chart, tip, palette::ACCENT, 2)?;
            let r = tip.0.hypot(tip.1).max(1e-9);
            let at = (tip.0 + 0.07 * tip.0 / r, tip.1 + 0.07 * tip.1 / r);
            chart.draw_series(std::iter::once(Text::new(
                format!(
                    "{}{} {} %",
                    if hm.voltage { "V" } else { "I" },
                    hm.order,
                    num(hm.percent, 2)
                ),
                at,
                font_at(
                    TEXT_PX - 2.0,
                    colour,
                    if at.0 >= 0.0 { HPos::Left } else { HPos::Right },
                    VPos::Center,
                ),
            )))?;
        }
        // the angle arc from V1 (0) to I1 (−θ)
        let r = 0.32;
        let arc: Vec<(f64, f64)> = (0..=60)
            .map(|k| {
                let t = -th * f64::from(k) / 60.0;
                (r * t.cos(), r * t.sin())
            })
            .collect();
        chart.draw_series(std::iter::once(PathElement::new(
            arc,
            palette::INK.stroke_width(1),
        )))?;
        arrow(&mut chart, (1.0, 0.0), palette::VOLTAGE, 3)?;
        arrow(&mut chart, i_tip, palette::CURRENT, 3)?;
        chart.draw_series(std::iter::once(Text::new(
            "V1",
            (1.0, 0.07),
            font_at(TEXT_PX, palette::VOLTAGE, HPos::Right, VPos::Bottom),
        )))?;
        let lab = (i_tip.0 * 1.16, i_tip.1 * 1.16);
        chart.draw_series(std::iter::once(Text::new(
            "I1",
            lab,
            font_at(
                TEXT_PX,
                palette::CURRENT,
                if lab.0 >= 0.0 {
                    HPos::Left
                } else {
                    HPos::Right
                },
                VPos::Center,
            ),
        )))?;
        // a θ beside the arc (the full label is in the heading): at the arc's middle, or past
        // I1 when the arc is too short to hold it
        let mid = if th.abs() >= 16f64.to_radians() {
            -th / 2.0
        } else {
            let away = if th >= 0.0 { -1.0 } else { 1.0 };
            -th + away * 10f64.to_radians()
        };
        chart.draw_series(std::iter::once(Text::new(
            "θ",
            (0.42 * mid.cos(), 0.42 * mid.sin()),
            font_at(TEXT_PX + 1.0, palette::INK, HPos::Center, VPos::Center),
        )))?;
        Ok(())
    })
}
