//! The first cycles of voltage and current, each on its own y-axis, with the fitted fundamentals
//! (dashed), the mean zero-crossing instants and any clipped spans shaded.
//!
//! The fitted fundamental is rebuilt from the RMS phasor: `x1(t) = dc + √2·|X1|·cos(2πf·(t −
//! t_ref) + arg X1)`, with `t_ref = reference_sample / rate` (the phasors' time reference). The
//! current's phasor is the one of the recorded trace (before any skew correction), so it lies on
//! the trace as drawn. The zero-crossing instants are the method's mean over the whole record,
//! `t = φ/(2πf)` for the rising edges and half a cycle later for the falling ones, repeated each
//! cycle: where they sit off the trace's own crossings the record's cycles differ.

use super::{
    PlotError, Swatch, TEXT_PX, TITLE_PX, font, legend, palette, svg_document, tick_label,
};
use crate::analysis::Analysis;
use crate::estimate::ChannelPhasors;
use crate::warning::{Trace, Warning};
use plotters::prelude::*;
use std::f64::consts::{PI, SQRT_2};

/// Size of the plot, pixels.
pub const SIZE: (u32, u32) = (960, 420);
/// Points drawn along each fitted fundamental.
const FIT_POINTS: usize = 480;
/// A point within this share of the trace's range from an extreme sits on it (clipping).
const EXTREME_SHARE: f64 = 1e-6;

/// The caption of the waveform plot.
pub fn caption(a: &Analysis) -> String {
    format!(
        "The first {} cycles of the capture: voltage (left axis, V) and current (right axis, A) \
         as recorded, their fitted fundamentals dashed, the mean zero-crossing instants of each \
         trace as ticks{}.",
        shown_cycles(a),
        if clipped_traces(a).is_empty() {
            ""
        } else {
            ", and the spans where a trace sits on its extreme value (clipping) shaded"
        }
    )
}

fn shown_cycles(a: &Analysis) -> String {
    let p = &a.preview;
    let span = p.time_s.last().copied().unwrap_or(0.0);
    let step = if p.time_s.len() > 1 {
        p.time_s[1] - p.time_s[0]
    } else {
        0.0
    };
    let cycles = (span + step) * a.quantities.frequency_hz;
    format!("{}", (cycles * 10.0).round() / 10.0)
}

fn clipped_traces(a: &Analysis) -> Vec<Trace> {
    a.warnings
        .iter()
        .filter_map(|w| match w {
            Warning::Clipping { trace, .. } => Some(*trace),
            _ => None,
        })
        .collect()
}

/// Spans of time (seconds) where `y` sits on `lo` or `hi` for two points or more.
fn extreme_spans(time: &[f64], y: &[f64], lo: f64, hi: f64) -> Vec<(f64, f64)> {
    let tol = EXTREME_SHARE * (hi - lo).abs().max(f64::MIN_POSITIVE);
    let half = if time.len() > 1 {
        (time[1] - time[0]) / 2.0
    } else {
        0.0
    };
    let mut spans = Vec::new();
    let mut start: Option<usize> = None;
    for k in 0..=y.len() {
        let at = k < y.len() && ((y[k] - hi).abs() <= tol || (y[k] - lo).abs() <= tol);
        match (at, start) {
            (true, None) => start = Some(k),
            (false, Some(s)) => {
                if k - s >= 2 {
                    spans.push((time[s] - half, time[k - 1] + half));
                }
                start = None;
            }
            _ => {}
        }
    }
    spans
}

/// The fitted fundamental of a trace at time `t` (seconds from the first sample).
fn fundamental_at(c: &ChannelPhasors, f: f64, t_ref: f64, t: f64) -> f64 {
    let x1 = c.fundamental();
    c.dc + SQRT_2 * x1.norm() * (2.0 * PI * f * (t - t_ref) + x1.arg()).cos()
}

/// Instants (seconds) of the mean rising and falling crossings within `[0, end]`.
fn crossing_instants(c: &ChannelPhasors, f: f64, end: f64) -> Vec<f64> {
    let Some(cp) = c.crossing else {
        return Vec::new();
    };
    if !(f > 0.0 && f.is_finite()) {
        return Vec::new();
    }
    let period = 1.0 / f;
    // rising and falling crossings alternate every half period: start from the earliest
    let first = (cp.phase_rad.rem_euclid(2.0 * PI) / (2.0 * PI) * period).rem_euclid(period / 2.0);
    let mut out = Vec::new();
    for k in 0.. {
        let t = first + k as f64 * period / 2.0;
        if t > end {
            break;
        }
        out.push(t);
    }
    out
}

/// Draws the waveform plot.
pub fn plot(a: &Analysis) -> Result<String, PlotError> {
    let p = &a.preview;
    if p.time_s.len() < 2 || p.voltage.len() != p.time_s.len() || p.current.len() != p.time_s.len()
    {
        return Err(PlotError("too few samples to draw the waveform".into()));
    }
    let est = &a.estimate;
    let f = est.frequency_hz;
    let t_ref = est.reference_sample / a.sample_rate_hz;
    let step = p.time_s[1] - p.time_s[0];
    let end = p.time_s[p.time_s.len() - 1] + step;
    let fit_t: Vec<f64> = (0..=FIT_POINTS)
        .map(|k| end * k as f64 / FIT_POINTS as f64)
        .collect();
    let v_fit: Vec<f64> = fit_t
        .iter()
        .map(|&t| fundamental_at(&est.voltage, f, t_ref, t))
        .collect();
    let i_fit: Vec<f64> = fit_t
        .iter()
        .map(|&t| fundamental_at(&est.current, f, t_ref, t))
        .collect();
    let peak = |a: &[f64], b: &[f64]| {
        a.iter()
            .chain(b)
            .filter(|x| x.is_finite())
            .fold(0.0f64, |m, x| m.max(x.abs()))
    };
    let v_max = nonzero(peak(&p.voltage, &v_fit)) * 1.12;
    let i_max = nonzero(peak(&p.current, &i_fit)) * 1.12;
    let (v_lo, v_hi, i_lo, i_hi) = p.extremes;
    let clipped = clipped_traces(a);
    let mut spans = Vec::new();
    if clipped.contains(&Trace::Voltage) {
        spans.extend(extreme_spans(&p.time_s, &p.voltage, v_lo, v_hi));
    }
    if clipped.contains(&Trace::Current) {
        spans.extend(extreme_spans(&p.time_s, &p.current, i_lo, i_hi));
    }
    let v_cross = crossing_instants(&est.voltage, f, end);
    let i_cross = crossing_instants(&est.current, f, end);
    let ms = |t: f64| t * 1e3;

    svg_document(SIZE, |root| {
        let (head, body) = root.split_vertically(64);
        head.draw(&Text::new(
            format!(
                "Voltage and current, first {} cycles at {} Hz",
                shown_cycles(a),
                tick_label(f)
            ),
            (12, 8),
            font(TITLE_PX, palette::INK),
        ))?;
        let mut items = vec![
            (
                Swatch::Line(palette::VOLTAGE),
                "voltage (left axis)".to_string(),
            ),
            (
                Swatch::Line(palette::CURRENT),
                "current (right axis)".to_string(),
            ),
            (Swatch::Dashed(palette::VOLTAGE), "V1 fitted".to_string()),
            (Swatch::Dashed(palette::CURRENT), "I1 fitted".to_string()),
        ];
        if !v_cross.is_empty() || !i_cross.is_empty() {
            items.push((Swatch::Tick(palette::INK), "zero crossings".to_string()));
        }
        if !spans.is_empty() {
            items.push((Swatch::Fill(palette::CLIP), "clipped".to_string()));
        }
        legend(&head, 46, &items)?;

        let mut chart = ChartBuilder::on(&body)
            .margin_left(8)
            .margin_right(8)
            .margin_bottom(8)
            .margin_top(4)
            .x_label_area_size(44)
            .y_label_area_size(72)
            .right_y_label_area_size(72)
            .build_cartesian_2d(0.0..ms(end), -v_max..v_max)?
            .set_secondary_coord(0.0..ms(end), -i_max..i_max);
        chart
            .configure_mesh()
            .x_desc("time (ms)")
            .y_desc("voltage (V)")
            .x_labels(10)
            .y_labels(9)
            .x_label_formatter(&|x| tick_label(*x))
            .y_label_formatter(&|y| tick_label(*y))
            .label_style(font(TEXT_PX - 1.0, palette::INK))
            .y_label_style(font(TEXT_PX - 1.0, palette::VOLTAGE))
            .axis_desc_style(font(TEXT_PX, palette::VOLTAGE))
            .bold_line_style(palette::GRID)
            .light_line_style(palette::PAPER)
            .axis_style(palette::MUTED)
            .draw()?;
        chart
            .configure_secondary_axes()
            .y_desc("current (A)")
            .y_labels(9)
            .y_label_formatter(&|y| tick_label(*y))
            .label_style(font(TEXT_PX - 1.0, palette::CURRENT))
            .axis_desc_style(font(TEXT_PX, palette::CURRENT))
            .axis_style(palette::MUTED)
            .draw()?;
        chart.draw_series(spans.iter().map(|&(t0, t1)| {
            Rectangle::new(
                [(ms(t0.max(0.0)), -v_max), (ms(t1.min(end)), v_max)],
                palette::CLIP.filled(),
            )
        }))?;
        chart.draw_series(std::iter::once(PathElement::new(
            vec![(0.0, 0.0), (ms(end), 0.0)],
            palette::MUTED.stroke_width(1),
        )))?;
        chart.draw_series(LineSeries::new(
            p.time_s.iter().zip(&p.voltage).map(|(&t, &v)| (ms(t), v)),
            palette::VOLTAGE.mix(0.45).stroke_width(3),
        ))?;
        chart.draw_secondary_series(LineSeries::new(
            p.time_s.iter().zip(&p.current).map(|(&t, &i)| (ms(t), i)),
            palette::CURRENT.mix(0.45).stroke_width(3),
        ))?;
        chart.draw_series(DashedLineSeries::new(
            fit_t.iter().zip(&v_fit).map(|(&t, &v)| (ms(t), v)),
            7,
            5,
            palette::VOLTAGE.stroke_width(2),
        ))?;
        chart.draw_secondary_series(DashedLineSeries::new(
            fit_t.iter().zip(&i_fit).map(|(&t, &i)| (ms(t), i)),
            7,
            5,
            palette::CURRENT.stroke_width(2),
        ))?;
        let (vdc, idc) = (est.voltage.dc, est.current.dc);
        chart.draw_series(v_cross.iter().map(|&t| {
            PathElement::new(
                vec![(ms(t), vdc - 0.1 * v_max), (ms(t), vdc + 0.1 * v_max)],
                palette::VOLTAGE.stroke_width(2),
            )
        }))?;
        chart.draw_secondary_series(i_cross.iter().map(|&t| {
            PathElement::new(
                vec![(ms(t), idc - 0.1 * i_max), (ms(t), idc + 0.1 * i_max)],
                palette::CURRENT.stroke_width(2),
            )
        }))?;
        Ok(())
    })
}

fn nonzero(x: f64) -> f64 {
    if x > 0.0 && x.is_finite() { x } else { 1.0 }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::{Settings, analyze_traces};
    use crate::synth::{Spec, Waveform, synthesize};

    /// 230 V at 20°, 10 A at −30° with a 5th harmonic and DC, 7.3 cycles at 50 Hz, 5 kHz.
    fn estimate() -> (Vec<f64>, crate::estimate::Estimate) {
        let v = Waveform::sine(230.0, 20.0).with_dc(1.5);
        let i = Waveform::sine(10.0, -30.0).with(5, 1.0, 40.0);
        let (vs, is) = synthesize(&Spec::clean(5_000.0, 50.0, 730, v, i));
        let (est, _) = analyze_traces(&vs, &is, 5_000.0, &Settings::default()).unwrap();
        (vs, est)
    }

    #[test]
    fn the_fitted_fundamental_lies_on_the_trace() {
        let (vs, est) = estimate();
        let t_ref = est.reference_sample / 5_000.0;
        for (k, &v) in vs.iter().enumerate().step_by(37) {
            let t = k as f64 / 5_000.0;
            // the voltage is a pure sine plus DC: its fundamental is the whole trace
            let fit = fundamental_at(&est.voltage, est.frequency_hz, t_ref, t);
            assert!((fit - v).abs() < 1e-6, "sample {k}: {fit} vs {v}");
        }
        // at t = 0 the voltage is 1.5 + √2·230·cos 20°
        let at0 = fundamental_at(&est.voltage, est.frequency_hz, t_ref, 0.0);
        assert!((at0 - (1.5 + SQRT_2 * 230.0 * 20f64.to_radians().cos())).abs() < 1e-6);
    }

    #[test]
    fn crossing_ticks_fall_where_the_fundamental_crosses_its_level() {
        let (_, est) = estimate();
        let f = est.frequency_hz;
        let ticks = crossing_instants(&est.voltage, f, 0.06);
        assert_eq!(ticks.len(), 6, "{ticks:?}"); // two per cycle over three cycles
        // √2·230·cos(ωt + 20°) rises through zero at ωt + 20° = 270°
        let first_rise = (270.0 - 20.0) / 360.0 / f;
        let first_fall = (90.0 - 20.0) / 360.0 / f;
        assert!(
            ticks.iter().any(|t| (t - first_rise).abs() < 1e-6),
            "{ticks:?}"
        );
        assert!(
            ticks.iter().any(|t| (t - first_fall).abs() < 1e-6),
            "{ticks:?}"
        );
    }

    #[test]
    fn flat_tops_of_two_points_or_more_are_clipped_spans() {
        let t: Vec<f64> = (0..8).map(|k| k as f64).collect();
        let y = [0.0, 1.0, 1.0, 1.0, 0.0, -1.0, 0.0, 1.0];
        let spans = extreme_spans(&t, &y, -1.0, 1.0);
        // one flat top of three points; a single sample at an extreme is no clipping
        assert_eq!(spans, vec![(0.5, 3.5)]);
    }
}
