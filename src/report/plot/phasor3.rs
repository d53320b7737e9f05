//! A three-phase capture's fundamental phasors: the voltage and current of each phase as arrows,
//! phase a's voltage the reference (0°, pointing right, counter-clockwise rotation), and the
//! sequence components in the legend.
//!
//! Voltages span the unit circle at the largest phase voltage; currents 0.8 of it at the largest
//! line current, each to its own quantity's scale. A healthy abc supply shows Vb 120° behind Va
//! (below) and Vc 120° ahead; each current sits its phase angle behind its own voltage.

use super::phasor::{Chart, arrow};
use super::{PlotError, Swatch, TEXT_PX, TITLE_PX, font, font_at, legend, palette, svg_document};
use crate::analysis::{Analysis, ThreePhaseAnalysis, phase_letter};
use crate::report::table::num;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};
use rustfft::num_complex::Complex64;
use std::f64::consts::PI;

/// Size of the plot, pixels (as the single-phase phasor plot).
pub const SIZE: (u32, u32) = (520, 540);
/// Length of the largest current arrow relative to the largest voltage's.
const CURRENT_LENGTH: f64 = 0.8;
/// Half the span of each axis in plot units.
const REACH: f64 = 1.3;

/// The caption under the plot.
pub fn caption(a: &Analysis) -> String {
    format!(
        "Fundamental phasors of the three phases ({}), phase a's voltage at 0°; voltages and \
         currents each to their own scale.",
        a.system
    )
}

/// Draws the three-phase phasor diagram.
pub fn plot(a: &Analysis, t: &ThreePhaseAnalysis) -> Result<String, PlotError> {
    let v: Vec<Complex64> = a
        .phases
        .iter()
        .map(|p| p.quantities.fundamentals.0)
        .collect();
    let i: Vec<Complex64> = a
        .phases
        .iter()
        .map(|p| p.quantities.fundamentals.1)
        .collect();
    // phase a's voltage turned to 0°
    let turn = if v[0].norm() > 0.0 {
        v[0].conj() / v[0].norm()
    } else {
        Complex64::new(1.0, 0.0)
    };
    let v_max = v.iter().map(|x| x.norm()).fold(0.0, f64::max);
    let i_max = i.iter().map(|x| x.norm()).fold(0.0, f64::max);
    let f = &t.figures;
    svg_document(SIZE, |root| {
        let (head, body) = root.split_vertically(88);
        head.draw(&Text::new(
            "Fundamental phasors, three phases",
            (12, 8),
            font(TITLE_PX, palette::INK),
        ))?;
        head.draw(&Text::new(
            format!(
                "V+ {} V, V− {} V, V0 {} V · I+ {} A, I− {} A, I0 {} A",
                num(f.voltage_sequence.positive, 4),
                num(f.voltage_sequence.negative, 3),
                num(f.voltage_sequence.zero, 3),
                num(f.current_sequence.positive, 4),
                num(f.current_sequence.negative, 3),
                num(f.current_sequence.zero, 3),
            ),
            (12, 36),
            font(TEXT_PX, palette::INK),
        ))?;
        legend(
            &head,
            70,
            &[
                (
                    Swatch::Line(palette::VOLTAGE),
                    format!("V (largest {} V)", num(v_max, 4)),
                ),
                (
                    Swatch::Line(palette::CURRENT),
                    format!("I (largest {} A)", num(i_max, 4)),
                ),
            ],
        )?;
        let (w, h) = body.dim_in_pixel();
        let margin = 14.0;
        let aspect = (f64::from(w) - 2.0 * margin) / (f64::from(h) - 2.0 * margin);
        let mut chart = ChartBuilder::on(&body)
            .margin(margin as u32)
            .build_cartesian_2d(-REACH * aspect..REACH * aspect, -REACH..REACH)?;
        chart.draw_series(std::iter::once(PathElement::new(
            (0..=120)
                .map(|k| {
                    let a = 2.0 * PI * f64::from(k) / 120.0;
                    (a.cos(), a.sin())
                })
                .collect::<Vec<_>>(),
            palette::GRID.stroke_width(2),
        )))?;
        let draw = |chart: &mut _, tip: Complex64, colour: RGBColor, label: String| {
            arrow(chart, (tip.re, tip.im), colour, 3)?;
            let r = tip.norm().max(1e-9);
            let at = (tip.re + 0.09 * tip.re / r, tip.im + 0.09 * tip.im / r);
            chart_text(chart, label, at, colour)
        };
        for (k, p) in a.phases.iter().enumerate() {
            let letter = phase_letter(p.phase);
            if v_max > 0.0 {
                draw(
                    &mut chart,
                    v[k] * turn / v_max,
                    palette::VOLTAGE,
                    format!("V{letter}"),
                )?;
            }
            if i_max > 0.0 && i[k].norm() > 0.0 {
                draw(
                    &mut chart,
                    i[k] * turn / i_max * CURRENT_LENGTH,
                    palette::CURRENT,
                    format!("I{letter}"),
                )?;
            }
        }
        Ok(())
    })
}

fn chart_text(
    chart: &mut Chart,
    label: String,
    at: (f64, f64),
    colour: RGBColor,
) -> Result<(), PlotError> {
    chart.draw_series(std::iter::once(Text::new(
        label,
        at,
        font_at(
            TEXT_PX,
            colour,
            if at.0 >= 0.0 { HPos::Left } else { HPos::Right },
            VPos::Center,
        ),
    )))?;
    Ok(())
}
