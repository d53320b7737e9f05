//! Plots as SVG strings: one file per plot, a shared palette and a few drawing helpers.
//!
//! Input: an [`Analysis`] (and, for the tolerance band, the model's [`Expectation`]). Output:
//! `(file stem, SVG text)` pairs, ready to inline into the HTML report or to write as files.
//!
//! - [`waveform`]: the first cycles of V and I on their own axes, the fitted fundamentals, the
//!   mean zero-crossing instants and clipped spans;
//! - [`phasor`]: V1 and I1 (and the strongest harmonics) with the angle between them;
//! - [`spectrum`]: harmonics in percent of the fundamental against the IEEE 519-2014 limits;
//! - [`triangle`]: P, Q1, S1 and the non-fundamental apparent power SN (IEEE 1459);
//! - [`band`]: a model's tolerance band, its Monte Carlo histogram and the measured angle ± U;
//! - [`pf`]: the true PF of many captures, for a batch summary;
//! - [`trend`]: PF, Q1 and THD-I of each 10/12-cycle window of a long capture, with its events.
//!
//! Plots are drawn with plotters' SVG backend and no font feature: the viewer draws the text in
//! its own sans-serif, label widths are estimated, so label areas are given room. Nothing in a
//! plot depends on the clock or on the machine: the same analysis gives the same bytes.

pub mod band;
pub mod pf;
pub mod phasor;
pub mod phasor3;
pub mod spectrum;
pub mod trend;
pub mod triangle;
pub mod waveform;

use crate::analysis::Analysis;
use crate::check::expected::Expectation;
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

/// The colours every plot uses (our own palette: muted, readable on white and in grey print).
pub mod palette {
    use plotters::style::RGBColor;

    /// Voltage traces, bars and arrows: deep blue-green.
    pub const VOLTAGE: RGBColor = RGBColor(0x1f, 0x5f, 0x7a);
    /// Current traces, bars and arrows: brick orange.
    pub const CURRENT: RGBColor = RGBColor(0xc4, 0x5a, 0x1c);
    /// Harmonic arrows and other secondary marks: plum.
    pub const ACCENT: RGBColor = RGBColor(0x7b, 0x4b, 0x94);
    /// Limits from standards: dark red.
    pub const LIMIT: RGBColor = RGBColor(0xa3, 0x1f, 0x34);
    /// Shading of clipped spans: pale rose.
    pub const CLIP: RGBColor = RGBColor(0xf6, 0xd5, 0xd8);
    /// A tolerance band: pale sand.
    pub const BAND: RGBColor = RGBColor(0xf3, 0xe3, 0xb5);
    /// Histogram bars: grey-blue.
    pub const HISTOGRAM: RGBColor = RGBColor(0x8e, 0xa4, 0xbc);
    /// A consistent / pass verdict: green.
    pub const PASS: RGBColor = RGBColor(0x2e, 0x7d, 0x4f);
    /// An inconclusive verdict: amber brown.
    pub const UNSURE: RGBColor = RGBColor(0x9a, 0x62, 0x00);
    /// Text, axes and the measured value: near-black slate.
    pub const INK: RGBColor = RGBColor(0x23, 0x2b, 0x33);
    /// Secondary text: mid grey.
    pub const MUTED: RGBColor = RGBColor(0x5f, 0x68, 0x70);
    /// Grid lines: light grey.
    pub const GRID: RGBColor = RGBColor(0xe4, 0xe7, 0xea);
    /// Background.
    pub const PAPER: RGBColor = RGBColor(0xff, 0xff, 0xff);
}

/// plotters writes SVG font sizes at 1/1.24 of the size asked for; ask for this much more.
const FONT_GAIN: f64 = 1.24;

/// Body text size of every plot, pixels as drawn.
pub const TEXT_PX: f64 = 13.0;
/// Title size, pixels as drawn.
pub const TITLE_PX: f64 = 16.0;

/// A sans-serif text style `px` pixels high as drawn, in `colour`.
pub(crate) fn font(px: f64, colour: RGBColor) -> TextStyle<'static> {
    ("sans-serif", px * FONT_GAIN).into_font().color(&colour)
}

/// The same, anchored at `h`/`v`.
pub(crate) fn font_at(px: f64, colour: RGBColor, h: HPos, v: VPos) -> TextStyle<'static> {
    font(px, colour).pos(Pos::new(h, v))
}

/// A plot that could not be drawn.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{0}")]
pub struct PlotError(pub String);

impl<E: std::error::Error + Send + Sync> From<DrawingAreaErrorKind<E>> for PlotError {
    fn from(e: DrawingAreaErrorKind<E>) -> Self {
        PlotError(e.to_string())
    }
}

/// Options that change what the plots show.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PlotOptions {
    /// Nominal voltage of the bus at the point of common coupling, volts (line to line), to pick
    /// the IEEE 519-2014 voltage row; `None`: the ≤ 1 kV row, as for a low-voltage capture.
    pub bus_voltage_v: Option<f64>,
    /// Short-circuit current over maximum demand load current at the PCC; the IEEE 519-2014
    /// current limits are drawn only when it is given.
    pub isc_over_il: Option<f64>,
    /// Draw harmonic phasors above this share of their fundamental, percent (`None`: none).
    pub harmonic_phasors_above_percent: Option<f64>,
}

impl Default for PlotOptions {
    fn default() -> Self {
        PlotOptions {
            bus_voltage_v: None,
            isc_over_il: None,
            harmonic_phasors_above_percent: Some(phasor::DEFAULT_HARMONIC_PERCENT),
        }
    }
}

/// One drawn plot, or why it could not be drawn.
#[derive(Debug, Clone, PartialEq)]
pub struct Plot {
    /// Short name, used in file names: `waveform`, `phasor`, `spectrum`, `triangle`, `band`;
    /// for a three-phase capture also `waveform-b`, `spectrum-b`, `waveform-c`, `spectrum-c`
    /// (the unsuffixed waveform and spectrum are phase a's); `trend` for a capture of at least
    /// [`trend::MIN_WINDOWS`] windows.
    pub name: &'static str,
    /// What it shows, for a figure caption.
    pub caption: String,
    /// The SVG document, or the reason there is none.
    pub svg: Result<String, PlotError>,
}

/// A chart builder with the margins and label areas most plots share (axes on the left and
/// bottom, room for their descriptions).
pub(crate) fn standard_chart<'a, 'b, DB: DrawingBackend>(
    body: &'a DrawingArea<DB, Shift>,
) -> ChartBuilder<'a, 'b, DB> {
    let mut b = ChartBuilder::on(body);
    b.margin_left(8)
        .margin_right(24)
        .margin_bottom(8)
        .margin_top(4)
        .x_label_area_size(44)
        .y_label_area_size(72);
    b
}

/// The plots of one capture with default options, as `(name, SVG)` pairs; plots that could not
/// be drawn are left out ([`plots_with`] says why).
pub fn plots_for(a: &Analysis) -> Vec<(String, String)> {
    plots_with(a, &PlotOptions::default(), None)
        .into_iter()
        .filter_map(|p| p.svg.ok().map(|s| (p.name.to_string(), s)))
        .collect()
}

/// Every plot of one capture: waveform, phasor, spectrum, power triangle, and the tolerance band
/// when the capture was compared with a model (with the Monte Carlo histogram when `expectation`,
/// the model evaluated at the measured frequency, is given).
pub fn plots_with(
    a: &Analysis,
    options: &PlotOptions,
    expectation: Option<&Expectation>,
) -> Vec<Plot> {
    let mut plots = vec![
        Plot {
            name: "waveform",
            caption: waveform::caption(a),
            svg: waveform::plot(a),
        },
        match &a.three_phase {
            // three phases: every phase's V and I in one diagram
            Some(t) => Plot {
                name: "phasor",
                caption: phasor3::caption(a),
                svg: phasor3::plot(a, t),
            },
            None => Plot {
                name: "phasor",
                caption: phasor::caption(a, options),
                svg: phasor::plot(a, options),
            },
        },
        Plot {
            name: "spectrum",
            caption: spectrum::caption(a, options),
            svg: spectrum::plot(a, options),
        },
        Plot {
            name: "triangle",
            caption: triangle::caption(a),
            svg: triangle::plot(a),
        },
    ];
    if a.three_phase.is_some() {
        // the waveform and spectrum of every phase, each drawn as a single-phase capture's
        for plot in plots.iter_mut() {
            if plot.name == "waveform" || plot.name == "spectrum" {
                plots_phase_caption(plot, "a");
            }
        }
        for (k, names) in [
            (1, ["waveform-b", "spectrum-b"]),
            (2, ["waveform-c", "spectrum-c"]),
        ] {
            let Some(view) = a.phase_view(k) else {
                continue;
            };
            let letter = crate::analysis::phase_letter(view.phases[0].phase);
            let mut waveform = Plot {
                name: names[0],
                caption: waveform::caption(&view),
                svg: waveform::plot(&view),
            };
            let mut spectrum = Plot {
                name: names[1],
                caption: spectrum::caption(&view, options),
                svg: spectrum::plot(&view, options),
            };
            plots_phase_caption(&mut waveform, letter);
            plots_phase_caption(&mut spectrum, letter);
            plots.push(waveform);
            plots.push(spectrum);
        }
    }
    if let Some(e) = &a.expected {
        plots.push(Plot {
            name: "band",
            caption: band::caption(e, expectation),
            svg: band::plot(e, expectation),
        });
    }
    plots
}

/// Says which phase a plot of a three-phase capture shows, before its caption.
fn plots_phase_caption(plot: &mut Plot, phase: &str) {
    plot.caption = format!("Phase {phase}. {}", plot.caption);
}

/// Draws into a fresh SVG string of `size` pixels: `draw` gets the whole area, already painted
/// white.
pub(crate) fn svg_document(
    size: (u32, u32),
    draw: impl FnOnce(&DrawingArea<SVGBackend, Shift>) -> Result<(), PlotError>,
) -> Result<String, PlotError> {
    let mut text = String::new();
    {
        let root = SVGBackend::with_string(&mut text, size).into_drawing_area();
        root.fill(&palette::PAPER)?;
        draw(&root)?;
        root.present()?;
    }
    Ok(text)
}

/// How a legend entry is drawn.
#[derive(Debug, Clone, Copy)]
pub(crate) enum Swatch {
    /// A solid line.
    Line(RGBColor),
    /// A dashed line.
    Dashed(RGBColor),
    /// A filled box.
    Fill(RGBColor),
    /// A short vertical tick.
    Tick(RGBColor),
}

/// Draws one row of legend entries from the left of `area`, `y` pixels down.
pub(crate) fn legend(
    area: &DrawingArea<SVGBackend, Shift>,
    y: i32,
    items: &[(Swatch, String)],
) -> Result<(), PlotError> {
    let mut x = 12;
    for (swatch, label) in items {
        match *swatch {
            Swatch::Line(c) => {
                area.draw(&PathElement::new(
                    vec![(x, y), (x + 22, y)],
                    c.stroke_width(2),
                ))?;
            }
            Swatch::Dashed(c) => {
                for k in 0..3 {
                    area.draw(&PathElement::new(
                        vec![(x + 8 * k, y), (x + 8 * k + 5, y)],
                        c.stroke_width(2),
                    ))?;
                }
            }
            Swatch::Fill(c) => {
                area.draw(&Rectangle::new([(x, y - 6), (x + 22, y + 6)], c.filled()))?;
            }
            Swatch::Tick(c) => {
                area.draw(&PathElement::new(
                    vec![(x + 11, y - 7), (x + 11, y + 7)],
                    c.stroke_width(2),
                ))?;
            }
        }
        area.draw(&Text::new(
            label.clone(),
            (x + 28, y),
            font_at(TEXT_PX, palette::INK, HPos::Left, VPos::Center),
        ))?;
        x += 28 + text_width(label, TEXT_PX) + 22;
    }
    Ok(())
}

/// Estimated width in pixels of `text` at `px` (about 0.55 em per character in a sans-serif).
pub(crate) fn text_width(text: &str, px: f64) -> i32 {
    (text.chars().count() as f64 * px * 0.55).ceil() as i32
}

/// A "nice" step (1, 2 or 5 × 10ⁿ) that cuts `span` into about `parts` pieces.
pub(crate) fn nice_step(span: f64, parts: f64) -> f64 {
    if !(span > 0.0 && span.is_finite()) {
        return 1.0;
    }
    let raw = span / parts.max(1.0);
    let mag = 10f64.powf(raw.log10().floor());
    let r = raw / mag;
    let m = if r <= 1.0 {
        1.0
    } else if r <= 2.0 {
        2.0
    } else if r <= 5.0 {
        5.0
    } else {
        10.0
    };
    m * mag
}

/// A tick label: at most three decimals, trailing zeros dropped, a true minus sign.
pub(crate) fn tick_label(x: f64) -> String {
    let s = format!("{x:.3}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    match s {
        "-0" | "" => "0".to_string(),
        _ => s.replacen('-', "−", 1),
    }
}

/// A value with an SI prefix chosen for `scale` (the largest magnitude shown): `(divisor,
/// prefix)`, e.g. `(1e3, "k")`.
pub(crate) fn si_prefix(scale: f64) -> (f64, &'static str) {
    let s = scale.abs();
    if s >= 1e6 {
        (1e6, "M")
    } else if s >= 1e3 {
        (1e3, "k")
    } else if s >= 1.0 || s == 0.0 || !s.is_finite() {
        (1.0, "")
    } else if s >= 1e-3 {
        (1e-3, "m")
    } else {
        (1e-6, "µ")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn nice_steps_are_one_two_or_five_times_a_power_of_ten() {
        assert_eq!(nice_step(10.0, 5.0), 2.0);
        assert_eq!(nice_step(0.9, 4.0), 0.5);
        assert_eq!(nice_step(730.0, 5.0), 200.0);
        assert_eq!(nice_step(0.0, 5.0), 1.0);
        assert_eq!(nice_step(f64::NAN, 5.0), 1.0);
    }

    #[test]
    fn tick_labels_are_short() {
        assert_eq!(tick_label(2.0), "2");
        assert_eq!(tick_label(-0.25), "−0.25");
        assert_eq!(tick_label(-0.0001), "0");
        assert_eq!(tick_label(12.5), "12.5");
    }

    #[test]
    fn prefixes_follow_the_magnitude() {
        assert_eq!(si_prefix(1746.0), (1e3, "k"));
        assert_eq!(si_prefix(12.0), (1.0, ""));
        assert_eq!(si_prefix(0.02), (1e-3, "m"));
        assert_eq!(si_prefix(2.5e6), (1e6, "M"));
    }

    #[test]
    fn svg_documents_are_complete() {
        let svg = svg_document((100, 50), |root| {
            root.draw(&Text::new("a < b", (10, 10), font(TEXT_PX, palette::INK)))?;
            Ok(())
        })
        .unwrap();
        assert!(svg.starts_with("<svg"));
        assert!(svg.trim_end().ends_with("</svg>"));
        assert!(svg.contains("a &lt; b"), "{svg}");
    }
}
