//! Over time: the power factor, Q1 and the current's THD of each 10/12-cycle window of a capture
//! ([`crate::trend`]), in three panels on one time axis, with the capture's events
//! ([`crate::quantity::events`], the list `analyze` reports) as labelled vertical lines.
//!
//! - **When.** Only for a capture of at least [`MIN_WINDOWS`] whole windows (about 0.8 s at
//!   50 Hz): fewer points show no trend, and the capture's own figures say it all.
//! - **What.** Top: displacement PF cos θ1 (solid) and true PF P/S (dashed); middle: Q1 (var,
//!   positive inductive, IEEE Std 1459-2010); bottom: THD of the current in % of I1. A three-phase
//!   capture has one line per phase in each panel, in the phase's colour, and the system's lines
//!   in ink: the effective PFe = P/Se (IEEE 1459 §3.2) and Σ Q1 (our choice: one panel per
//!   quantity keeps phases comparable at a glance, which per-phase panels would not).
//! - **Points.** One point per window, at the window's centre, the window's own figures
//!   ([`series`] returns them before anything is drawn). A 10-minute capture has 3 000 windows
//!   at 50 Hz: one point each. Beyond [`MAX_POINTS`] windows the windows are taken in equal
//!   groups and each group gives its lowest and its highest value (in time order), so a short
//!   excursion is never averaged away and a series never holds more than [`MAX_POINTS`] points
//!   (a day-long record keeps the SVG about the size of a 13-minute one).
//! - **Events.** At most [`MAX_EVENTS`] lines; a label (the kind, and the phase of a three-phase
//!   capture) over each line that has room for one in two rows.

use super::{
    Plot, PlotError, Swatch, TEXT_PX, TITLE_PX, font, font_at, legend, nice_step, palette,
    si_prefix, svg_document, tick_label,
};
use crate::quantity::events::{Event, EventKind};
use crate::trend::{PhaseFigures, Trend, WindowFigures};
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};

/// Fewest whole windows for which a trend is drawn.
pub const MIN_WINDOWS: usize = 4;
/// Most points per series: one per window up to this many windows, then the lowest and highest
/// of equal groups of windows.
pub const MAX_POINTS: usize = 4000;
/// Most event lines drawn (the caption says how many were left out).
pub const MAX_EVENTS: usize = 100;
/// Size of the plot, pixels.
pub const SIZE: (u32, u32) = (960, 700);

/// Colours of phases a, b and c (our own, one per phase); a single-phase capture uses a's.
pub const PHASE_COLOURS: [RGBColor; 3] = [palette::VOLTAGE, palette::CURRENT, palette::ACCENT];
/// A switching's line.
pub const SWITCHING_COLOUR: RGBColor = RGBColor(0x2b, 0x6c, 0xb0);
/// A dip's or swell's line.
pub const VOLTAGE_EVENT_COLOUR: RGBColor = palette::LIMIT;

/// A capture's trend as a report holds it: the windows, or why they could not be had.
pub type TrendResult = Result<Trend, String>;

/// The trend plot of a report's capture: `None` for fewer than [`MIN_WINDOWS`] windows; a plot
/// whose SVG is the reason when the trend could not be computed.
pub fn report_plot(trend: &TrendResult, events: &[Event]) -> Option<Plot> {
    match trend {
        Ok(t) => series(t, events).map(|s| Plot {
            name: "trend",
            caption: caption(&s),
            svg: plot(&s),
        }),
        Err(e) => Some(Plot {
            name: "trend",
            caption: String::new(),
            svg: Err(PlotError(e.clone())),
        }),
    }
}

/// One line of a panel.
#[derive(Debug, Clone, PartialEq)]
pub struct Series {
    /// What it is, for tests and the legend: `displacement PF a`, `true PF`, `PFe`, `Q1 b`,
    /// `Σ Q1`, `THD-I c`.
    pub label: String,
    /// Its colour.
    pub colour: RGBColor,
    /// Drawn dashed.
    pub dashed: bool,
    /// `(time from the record's first sample in s, value)`; NaN where a window has no value.
    pub points: Vec<(f64, f64)>,
}

/// A vertical event line.
#[derive(Debug, Clone, PartialEq)]
pub struct Marker {
    /// Seconds from the record's first sample.
    pub time_s: f64,
    /// The label drawn over it.
    pub label: String,
    /// Its colour.
    pub colour: RGBColor,
}

/// What the plot draws, before it is drawn.
#[derive(Debug, Clone, PartialEq)]
pub struct TrendSeries {
    /// Power factors (no unit).
    pub pf: Vec<Series>,
    /// Q1, var.
    pub q1: Vec<Series>,
    /// THD of the current, % of I1.
    pub thd_i: Vec<Series>,
    /// The events, in time order (at most [`MAX_EVENTS`]).
    pub markers: Vec<Marker>,
    /// Events left out beyond [`MAX_EVENTS`].
    pub markers_left_out: usize,
    /// Windows drawn.
    pub windows: usize,
    /// Windows per group when decimated (1: one point per window).
    pub group: usize,
    /// Cycles per window.
    pub window_cycles: usize,
    /// Start and end of the windows, seconds.
    pub span_s: (f64, f64),
}

fn value(x: Option<f64>) -> f64 {
    x.unwrap_or(f64::NAN)
}

/// One phase's value of a window, NaN when the window has none.
fn phase_value(w: &WindowFigures, k: usize, f: impl Fn(&PhaseFigures) -> f64) -> f64 {
    match &w.phases {
        Ok(p) => p.get(k).map_or(f64::NAN, |(_, x)| f(x)),
        Err(_) => f64::NAN,
    }
}

/// The points of `f` over the windows: one per window at its centre, or, beyond
/// [`MAX_POINTS`] windows, the lowest and highest of each group of `group` windows.
fn points(
    windows: &[WindowFigures],
    group: usize,
    f: impl Fn(&WindowFigures) -> f64,
) -> Vec<(f64, f64)> {
    let centre = |w: &WindowFigures| 0.5 * (w.start_s + w.end_s);
    if group <= 1 {
        return windows.iter().map(|w| (centre(w), f(w))).collect();
    }
    let mut out = Vec::with_capacity(2 * windows.len().div_ceil(group));
    for part in windows.chunks(group) {
        let values: Vec<(f64, f64)> = part
            .iter()
            .map(|w| (centre(w), f(w)))
            .filter(|p| p.1.is_finite())
            .collect();
        let low = values
            .iter()
            .copied()
            .reduce(|a, b| if b.1 < a.1 { b } else { a });
        let high = values
            .iter()
            .copied()
            .reduce(|a, b| if b.1 > a.1 { b } else { a });
        match (low, high) {
            (Some(l), Some(h)) if l.0 < h.0 => out.extend([l, h]),
            (Some(l), Some(h)) if l.0 > h.0 => out.extend([h, l]),
            (Some(l), _) => out.push(l),
            _ => out.push((centre(&part[0]), f64::NAN)),
        }
    }
    out
}

/// The series and event lines of `trend`'s plot, with `events` (the capture's, from
/// [`crate::analysis::Analysis::events`]); `None` for fewer than [`MIN_WINDOWS`] windows.
pub fn series(trend: &Trend, events: &[Event]) -> Option<TrendSeries> {
    let w = &trend.windows;
    if w.len() < MIN_WINDOWS {
        return None;
    }
    // groups of windows so that the lowest and highest of each keep within MAX_POINTS
    let group = if w.len() <= MAX_POINTS {
        1
    } else {
        w.len().div_ceil(MAX_POINTS / 2)
    };
    let phases: Vec<&'static str> = match &w.iter().find_map(|x| x.phases.as_ref().ok()) {
        Some(p) if p.len() > 1 => p
            .iter()
            .map(|(ph, _)| crate::analysis::phase_letter(*ph))
            .collect(),
        _ => vec![""],
    };
    let many = phases.len() > 1;
    let name = |what: &str, k: usize| {
        if many {
            format!("{what} {}", phases[k])
        } else {
            what.to_string()
        }
    };
    let line = |label: String, k: usize, dashed: bool, points: Vec<(f64, f64)>| Series {
        label,
        colour: PHASE_COLOURS[k % 3],
        dashed,
        points,
    };
    let (mut pf, mut q1, mut thd_i) = (Vec::new(), Vec::new(), Vec::new());
    for k in 0..phases.len() {
        let at = |f: fn(&PhaseFigures) -> f64| points(w, group, move |x| phase_value(x, k, f));
        pf.push(line(
            name("displacement PF", k),
            k,
            false,
            at(|p| value(p.displacement_pf)),
        ));
        pf.push(line(name("true PF", k), k, true, at(|p| value(p.true_pf))));
        q1.push(line(name("Q1", k), k, false, at(|p| p.reactive_var)));
        thd_i.push(line(
            name("THD-I", k),
            k,
            false,
            at(|p| value(p.current_thd_percent)),
        ));
    }
    if many {
        let total = |f: fn(&crate::trend::TotalFigures) -> f64| {
            points(w, group, move |x| x.total.as_ref().map_or(f64::NAN, f))
        };
        pf.push(Series {
            label: "PFe".into(),
            colour: palette::INK,
            dashed: false,
            points: total(|t| value(t.effective_pf)),
        });
        q1.push(Series {
            label: "Σ Q1".into(),
            colour: palette::INK,
            dashed: false,
            points: total(|t| t.reactive_var),
        });
    }
    let markers = events
        .iter()
        .take(MAX_EVENTS)
        .map(|e| Marker {
            time_s: e.time_s,
            label: format!(
                "{}{}",
                e.kind.as_str(),
                match (e.phase, e.phases) {
                    (Some(p), _) => format!(" {p}"),
                    (None, Some(p)) => format!(" {}", p.names().join("+")),
                    (None, None) => String::new(),
                }
            ),
            colour: match e.kind {
                EventKind::Switching => SWITCHING_COLOUR,
                _ => VOLTAGE_EVENT_COLOUR,
            },
        })
        .collect();
    Some(TrendSeries {
        pf,
        q1,
        thd_i,
        markers,
        markers_left_out: events.len().saturating_sub(MAX_EVENTS),
        windows: w.len(),
        group,
        window_cycles: trend.window_cycles,
        span_s: (w[0].start_s, w[w.len() - 1].end_s),
    })
}

/// The caption of the plot of `s`.
pub fn caption(s: &TrendSeries) -> String {
    let points = if s.group == 1 {
        "one point per window, at its centre".to_string()
    } else {
        format!(
            "the lowest and highest value of each {} consecutive windows",
            s.group
        )
    };
    let events = match (s.markers.len(), s.markers_left_out) {
        (0, _) => "No events were found.".to_string(),
        (n, 0) => format!(
            "Vertical lines: the {n} event{} listed below.",
            if n == 1 { "" } else { "s" }
        ),
        (n, more) => format!("Vertical lines: the first {n} events ({more} more not drawn)."),
    };
    format!(
        "Over time: {} windows of {} cycles ({points}). Top: displacement PF cos θ1 (solid) \
         and true PF P/S (dashed); middle: fundamental reactive power Q1 (positive: \
         inductive); bottom: current THD in % of I1.{} {events}",
        s.windows,
        s.window_cycles,
        if s.pf.len() > 2 {
            " One line per phase; in ink the system: PFe = P/Se (IEEE 1459) and Σ Q1."
        } else {
            ""
        }
    )
}

/// The value range of `series` with a margin, `(low, high)`; `floor` keeps a flat line from
/// filling the panel with rounding noise.
fn range(series: &[Series], floor: f64) -> (f64, f64) {
    let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
    for p in series.iter().flat_map(|s| &s.points) {
        if p.1.is_finite() {
            lo = lo.min(p.1);
            hi = hi.max(p.1);
        }
    }
    if !(lo <= hi) {
        return (0.0, 1.0);
    }
    let span = (hi - lo).max(floor);
    let mid = 0.5 * (hi + lo);
    (mid - 0.6 * span, mid + 0.6 * span)
}

/// The runs of finite points of a series (a window without a value breaks the line).
fn runs(points: &[(f64, f64)]) -> Vec<Vec<(f64, f64)>> {
    let mut out: Vec<Vec<(f64, f64)>> = vec![Vec::new()];
    for &p in points {
        if p.1.is_finite() {
            if let Some(last) = out.last_mut() {
                last.push(p);
            }
        } else if out.last().is_some_and(|l| !l.is_empty()) {
            out.push(Vec::new());
        }
    }
    out.retain(|r| !r.is_empty());
    out
}

/// Draws the plot of `s`.
pub fn plot(s: &TrendSeries) -> Result<String, PlotError> {
    let (t0, t1) = s.span_s;
    // minutes for records over five minutes, seconds otherwise
    let (per, unit) = if t1 - t0 > 300.0 {
        (60.0, "min")
    } else {
        (1.0, "s")
    };
    let (x0, x1) = (t0 / per, t1 / per);
    svg_document(SIZE, |root| {
        let (head, rest) = root.split_vertically(64);
        head.draw(&Text::new(
            format!(
                "Over time: PF, Q1 and THD-I of {} windows of {} cycles",
                s.windows, s.window_cycles
            ),
            (12, 8),
            font(TITLE_PX, palette::INK),
        ))?;
        let mut items: Vec<(Swatch, String)> = Vec::new();
        if s.pf.len() > 2 {
            for (k, letter) in ["a", "b", "c"].iter().enumerate() {
                items.push((Swatch::Line(PHASE_COLOURS[k]), format!("phase {letter}")));
            }
            items.push((Swatch::Line(palette::INK), "system".into()));
        }
        items.push((Swatch::Line(palette::MUTED), "cos θ1".into()));
        items.push((Swatch::Dashed(palette::MUTED), "P/S".into()));
        if s.markers.iter().any(|m| m.colour == SWITCHING_COLOUR) {
            items.push((Swatch::Tick(SWITCHING_COLOUR), "switching".into()));
        }
        if s.markers.iter().any(|m| m.colour == VOLTAGE_EVENT_COLOUR) {
            items.push((Swatch::Tick(VOLTAGE_EVENT_COLOUR), "dip / swell".into()));
        }
        legend(&head, 46, &items)?;
        let (labels, panels) = rest.split_vertically(36);
        let heights = [190, 180];
        let (top, lower) = panels.split_vertically(heights[0]);
        let (middle, bottom) = lower.split_vertically(heights[1]);
        let (q_div, q_prefix) = si_prefix(range(&s.q1, 0.0).1.abs().max(range(&s.q1, 0.0).0.abs()));
        let panels = [
            (&top, &s.pf, "power factor".to_string(), 1.0, 0.02),
            (
                &middle,
                &s.q1,
                format!("Q1 ({q_prefix}var)"),
                q_div,
                0.02 * q_div,
            ),
            (&bottom, &s.thd_i, "THD-I (% of I1)".to_string(), 1.0, 0.5),
        ];
        let mut line_x: Vec<i32> = Vec::new();
        for (k, (area, series, desc, div, floor)) in panels.into_iter().enumerate() {
            let last = k == 2;
            let (mut lo, mut hi) = range(series, floor);
            lo /= div;
            hi /= div;
            // the range out to whole tick steps, so both ends carry a labelled tick
            let ystep = nice_step(hi - lo, 4.0);
            let (mut lo, mut hi) = ((lo / ystep).floor() * ystep, (hi / ystep).ceil() * ystep);
            if k == 0 {
                lo = lo.max(-1.0);
                hi = hi.min(1.0);
            }
            let mut chart = ChartBuilder::on(area)
                .margin_left(8)
                .margin_right(24)
                .margin_top(10)
                .margin_bottom(if last { 8 } else { 6 })
                .x_label_area_size(if last { 44 } else { 0 })
                .y_label_area_size(72)
                .build_cartesian_2d(x0..x1, lo..hi)?;
            chart
                .configure_mesh()
                .x_desc(format!("time from the record's first sample ({unit})"))
                .y_desc(desc)
                .x_labels(10)
                .y_labels(((hi - lo) / ystep).round().max(2.0) as usize + 1)
                .x_label_formatter(&|x| tick_label(*x))
                .y_label_formatter(&|y| tick_label(*y))
                .label_style(font(TEXT_PX - 1.0, palette::INK))
                .axis_desc_style(font(TEXT_PX, palette::INK))
                .bold_line_style(palette::GRID)
                .light_line_style(palette::PAPER)
                .axis_style(palette::MUTED)
                .draw()?;
            for m in &s.markers {
                let x = m.time_s / per;
                if !(x >= x0 && x <= x1) {
                    continue;
                }
                chart.draw_series(DashedLineSeries::new(
                    [(x, lo), (x, hi)],
                    5,
                    4,
                    m.colour.stroke_width(1),
                ))?;
                if k == 0 {
                    line_x.push(chart.backend_coord(&(x, hi)).0);
                }
            }
            for ser in series.iter() {
                let width = if ser.colour == palette::INK { 2 } else { 1 };
                for run in runs(&ser.points) {
                    let pts: Vec<(f64, f64)> = run.iter().map(|p| (p.0 / per, p.1 / div)).collect();
                    if ser.dashed {
                        chart.draw_series(DashedLineSeries::new(
                            pts,
                            6,
                            4,
                            ser.colour.stroke_width(width),
                        ))?;
                    } else {
                        chart.draw_series(LineSeries::new(pts, ser.colour.stroke_width(width)))?;
                    }
                }
            }
        }
        // labels over the lines, in the first of two rows where they do not overlap
        let mut row_end = [i32::MIN; 2];
        for (m, x) in s.markers.iter().zip(line_x) {
            let w = super::text_width(&m.label, TEXT_PX - 1.0);
            let left = x - w / 2;
            if let Some(r) = (0..2).find(|&r| left > row_end[r] + 4) {
                row_end[r] = left + w;
                labels.draw(&Text::new(
                    m.label.clone(),
                    (x, 10 + 16 * r as i32),
                    font_at(TEXT_PX - 1.0, m.colour, HPos::Center, VPos::Center),
                ))?;
            }
        }
        Ok(())
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn window(k: usize, q: f64) -> WindowFigures {
        WindowFigures {
            index: k,
            windows: 1,
            start_s: 0.2 * k as f64,
            end_s: 0.2 * (k + 1) as f64,
            cycles: 10.0,
            frequency_hz: 50.0,
            phases: Ok(vec![(
                crate::capture::Phase::A,
                PhaseFigures {
                    reactive_var: q,
                    ..PhaseFigures::default()
                },
            )]),
            total: None,
            warning_codes: Vec::new(),
        }
    }

    /// Beyond MAX_POINTS windows, each group keeps its lowest and highest value, so a one-window
    /// excursion survives and the series stays within MAX_POINTS points.
    #[test]
    fn decimation_keeps_each_groups_extremes() {
        let n = 3 * MAX_POINTS + 7;
        let w: Vec<WindowFigures> = (0..n)
            .map(|k| {
                window(
                    k,
                    if k == 5_001 {
                        -900.0
                    } else {
                        100.0 + (k % 3) as f64
                    },
                )
            })
            .collect();
        let group = n.div_ceil(MAX_POINTS / 2);
        let p = points(&w, group, |x| phase_value(x, 0, |f| f.reactive_var));
        assert!(p.len() <= MAX_POINTS, "{}", p.len());
        assert!(p.iter().any(|x| x.1 == -900.0));
        assert!(p.iter().any(|x| x.1 == 102.0));
        assert!(p.windows(2).all(|x| x[0].0 < x[1].0), "time order");
    }

    #[test]
    fn missing_values_break_the_line() {
        let r = runs(&[(0.0, 1.0), (1.0, f64::NAN), (2.0, 2.0), (3.0, 3.0)]);
        assert_eq!(r, vec![vec![(0.0, 1.0)], vec![(2.0, 2.0), (3.0, 3.0)]]);
    }
}
