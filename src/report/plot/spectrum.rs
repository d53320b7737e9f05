//! The harmonic spectrum: bars per order for voltage and current in percent of their
//! fundamental, against the IEEE 519-2014 limits.
//!
//! - Voltage limits at the point of common coupling, by bus voltage (IEEE 519-2014 Table 1):
//!   individual harmonic / THD in percent, ≤ 1 kV: 5.0 / 8.0; 1-69 kV: 3.0 / 5.0; 69-161 kV:
//!   1.5 / 2.5; > 161 kV: 1.0 / 1.5. Without a bus voltage the ≤ 1 kV row is used, as for a
//!   low-voltage capture, and the caption says so.
//! - Current limits for 120 V to 69 kV (IEEE 519-2014 Table 2), in percent of the maximum demand
//!   load current IL, by ISC/IL; drawn only when ISC/IL is given. Even orders are limited to 25 %
//!   of the odd-order limit of their range. The bars are in percent of the captured fundamental,
//!   which equals percent of IL only when the capture was taken at maximum demand: the caption
//!   says so.

use super::{
    PlotError, PlotOptions, Swatch, TEXT_PX, TITLE_PX, font, font_at, legend, nice_step, palette,
    standard_chart, svg_document, tick_label,
};
use crate::analysis::Analysis;
use crate::report::table::num;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};

/// Size of the plot, pixels.
pub const SIZE: (u32, u32) = (960, 420);

/// A row of IEEE 519-2014 Table 1 (voltage distortion limits at the PCC).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct VoltageLimits {
    /// The bus voltage range, in words.
    pub bus: &'static str,
    /// Individual harmonic limit, percent of the fundamental.
    pub individual_percent: f64,
    /// THD limit, percent.
    pub thd_percent: f64,
}

/// IEEE 519-2014 Table 1, rows by bus voltage (upper limit in volts, inclusive).
const VOLTAGE_ROWS: [(f64, VoltageLimits); 4] = [
    (
        1_000.0,
        VoltageLimits {
            bus: "V ≤ 1 kV",
            individual_percent: 5.0,
            thd_percent: 8.0,
        },
    ),
    (
        69_000.0,
        VoltageLimits {
            bus: "1 kV < V ≤ 69 kV",
            individual_percent: 3.0,
            thd_percent: 5.0,
        },
    ),
    (
        161_000.0,
        VoltageLimits {
            bus: "69 kV < V ≤ 161 kV",
            individual_percent: 1.5,
            thd_percent: 2.5,
        },
    ),
    (
        f64::INFINITY,
        VoltageLimits {
            bus: "V > 161 kV",
            individual_percent: 1.0,
            thd_percent: 1.5,
        },
    ),
];

/// The voltage limits for a bus of `bus_voltage_v` volts; `None` picks the ≤ 1 kV row.
pub fn voltage_limits(bus_voltage_v: Option<f64>) -> VoltageLimits {
    let v = bus_voltage_v
        .filter(|v| v.is_finite() && *v > 0.0)
        .unwrap_or(0.0);
    VOLTAGE_ROWS
        .iter()
        .find(|(top, _)| v <= *top)
        .map(|(_, l)| *l)
        .unwrap_or(VOLTAGE_ROWS[3].1)
}

/// IEEE 519-2014 Table 2 (120 V to 69 kV): rows by ISC/IL (upper limit, exclusive), odd-order
/// limits in percent of IL for 3 ≤ h < 11, 11 ≤ h < 17, 17 ≤ h < 23, 23 ≤ h < 35, 35 ≤ h ≤ 50,
/// and TDD. The band edges (which range an order on a boundary falls in) are from memory.
const CURRENT_ROWS: [(f64, [f64; 6]); 5] = [
    (20.0, [4.0, 2.0, 1.5, 0.6, 0.3, 5.0]),
    (50.0, [7.0, 3.5, 2.5, 1.0, 0.5, 8.0]),
    (100.0, [10.0, 4.5, 4.0, 1.5, 0.7, 12.0]),
    (1000.0, [12.0, 5.5, 5.0, 2.0, 1.0, 15.0]),
    (f64::INFINITY, [15.0, 7.0, 6.0, 2.5, 1.4, 20.0]),
];

/// The current limit of order `h` (percent of IL) for a short-circuit ratio `isc_over_il`, or
/// `None` for orders outside 2-50 or a ratio that is not a positive number.
pub fn current_limit_percent(isc_over_il: f64, h: usize) -> Option<f64> {
    if !(isc_over_il.is_finite() && isc_over_il > 0.0 && (2..=50).contains(&h)) {
        return None;
    }
    let row = CURRENT_ROWS
        .iter()
        .find(|(top, _)| isc_over_il < *top)
        .map(|(_, r)| r)?;
    let odd = match h {
        0..11 => row[0],
        11..17 => row[1],
        17..23 => row[2],
        23..35 => row[3],
        _ => row[4],
    };
    Some(if h.is_multiple_of(2) { odd * 0.25 } else { odd })
}

/// The TDD limit (percent) for a short-circuit ratio.
pub fn tdd_limit_percent(isc_over_il: f64) -> Option<f64> {
    if !(isc_over_il.is_finite() && isc_over_il > 0.0) {
        return None;
    }
    CURRENT_ROWS
        .iter()
        .find(|(top, _)| isc_over_il < *top)
        .map(|(_, r)| r[5])
}

/// The caption of the spectrum plot.
pub fn caption(a: &Analysis, options: &PlotOptions) -> String {
    let lim = voltage_limits(options.bus_voltage_v);
    let bus = match options.bus_voltage_v {
        Some(v) => format!("for the given bus voltage of {} V ({})", num(v, 4), lim.bus),
        None => format!(
            "the {} row, as for a low-voltage capture: no bus voltage was given",
            lim.bus
        ),
    };
    let mut s = format!(
        "Harmonics 2 to {} of voltage and current in percent of their own fundamental (orders \
         analysed up to {}; higher ones left off the axis are all below {} %). Voltage limit \
         line: IEEE 519-2014, {bus} (individual {} %, THD {} %).",
        last_shown_order(a),
        a.quantities.harmonic_order,
        SHOWN_FROM_PERCENT,
        num(lim.individual_percent, 2),
        num(lim.thd_percent, 2),
    );
    match options.isc_over_il {
        Some(r) => s.push_str(&format!(
            " Current limit marks: IEEE 519-2014 for ISC/IL = {} (TDD {} %), in percent of the \
             maximum demand load current IL; the bars are in percent of this capture's \
             fundamental, the same only at maximum demand.",
            num(r, 4),
            tdd_limit_percent(r).map(|t| num(t, 2)).unwrap_or_default(),
        )),
        None => s.push_str(
            " Current limits are not drawn: they need ISC/IL at the point of common coupling.",
        ),
    }
    s
}

/// Orders shown at least, whatever the spectrum holds.
const MIN_ORDERS_SHOWN: usize = 15;
/// Orders above the last one at or above this percentage are left off the axis.
pub const SHOWN_FROM_PERCENT: f64 = 0.05;

/// The highest order drawn: two past the last order where either trace reaches
/// [`SHOWN_FROM_PERCENT`], at least [`MIN_ORDERS_SHOWN`], at most the analysed order.
pub fn last_shown_order(a: &Analysis) -> usize {
    let q = &a.quantities;
    let last = q
        .harmonics
        .iter()
        .filter(|h| h.order >= 2)
        .filter(|h| {
            [h.voltage_percent, h.current_percent]
                .into_iter()
                .flatten()
                .any(|p| p >= SHOWN_FROM_PERCENT)
        })
        .map(|h| h.order)
        .max()
        .unwrap_or(2);
    (last + 2)
        .max(MIN_ORDERS_SHOWN)
        .min(q.harmonic_order.max(2))
}

/// Draws the spectrum plot.
pub fn plot(a: &Analysis, options: &PlotOptions) -> Result<String, PlotError> {
    let q = &a.quantities;
    let top_order = last_shown_order(a);
    let lines: Vec<_> = q
        .harmonics
        .iter()
        .filter(|h| h.order >= 2 && h.order <= top_order)
        .collect();
    let lim = voltage_limits(options.bus_voltage_v);
    let current_limits: Vec<(usize, f64)> = match options.isc_over_il {
        Some(r) => (2..=top_order)
            .filter_map(|h| current_limit_percent(r, h).map(|l| (h, l)))
            .collect(),
        None => Vec::new(),
    };
    let mut y_top = lines
        .iter()
        .flat_map(|h| [h.voltage_percent, h.current_percent])
        .flatten()
        .filter(|x| x.is_finite())
        .fold(lim.individual_percent, f64::max);
    for (_, l) in &current_limits {
        y_top = y_top.max(*l);
    }
    let y_top = y_top * 1.15;
    let x_hi = top_order.max(2) as f64 + 0.6;
    let title = if top_order < q.harmonic_order {
        format!(
            "Harmonic spectrum, orders 2-{top_order} (orders up to {} analysed, the rest below {} %)",
            q.harmonic_order, SHOWN_FROM_PERCENT
        )
    } else {
        format!("Harmonic spectrum, orders 2-{top_order}")
    };
    svg_document(SIZE, |root| {
        let (head, body) = root.split_vertically(64);
        head.draw(&Text::new(
            title.clone(),
            (12, 8),
            font(TITLE_PX, palette::INK),
        ))?;
        let thd = |t: Option<f64>| {
            t.map(|t| format!("{} %", num(t, 3)))
                .unwrap_or("n/a".into())
        };
        let mut items = vec![
            (
                Swatch::Fill(palette::VOLTAGE),
                format!("voltage (THD {})", thd(q.voltage.thd_percent)),
            ),
            (
                Swatch::Fill(palette::CURRENT),
                format!("current (THD {})", thd(q.current.thd_percent)),
            ),
            (
                Swatch::Dashed(palette::LIMIT),
                format!(
                    "IEEE 519 voltage limit {} % ({}{})",
                    num(lim.individual_percent, 2),
                    lim.bus,
                    if options.bus_voltage_v.is_none() {
                        ", assumed"
                    } else {
                        ""
                    }
                ),
            ),
        ];
        if !current_limits.is_empty() {
            items.push((Swatch::Line(palette::ACCENT), "current limit".to_string()));
        }
        legend(&head, 46, &items)?;
        let mut chart = standard_chart(&body).build_cartesian_2d(1.4..x_hi, 0.0..y_top)?;
        let y_step = nice_step(y_top, 6.0);
        chart
            .configure_mesh()
            .disable_x_mesh()
            .x_labels(0)
            .y_labels(((y_top / y_step).floor() as usize + 1).max(2))
            .x_desc("harmonic order")
            .y_desc("% of fundamental")
            .y_label_formatter(&|y| tick_label(*y))
            .label_style(font(TEXT_PX - 1.0, palette::INK))
            .axis_desc_style(font(TEXT_PX, palette::INK))
            .bold_line_style(palette::GRID)
            .light_line_style(palette::PAPER)
            .axis_style(palette::MUTED)
            .draw()?;
        // order labels: every order up to 25, odd orders above
        let labelled = |h: usize| top_order <= 25 || h % 2 == 1;
        let (_, y_px) = chart.plotting_area().get_pixel_range();
        for h in (2..=top_order).filter(|&h| labelled(h)) {
            let (x, _) = chart.backend_coord(&(h as f64, 0.0));
            root.draw(&Text::new(
                h.to_string(),
                (x, y_px.end + 6),
                font_at(TEXT_PX - 2.0, palette::INK, HPos::Center, VPos::Top),
            ))?;
        }
        let w = 0.38;
        chart.draw_series(lines.iter().filter_map(|h| {
            let p = h.voltage_percent.filter(|p| p.is_finite())?;
            let x = h.order as f64;
            Some(Rectangle::new(
                [(x - w, 0.0), (x, p.min(y_top))],
                palette::VOLTAGE.filled(),
            ))
        }))?;
        chart.draw_series(lines.iter().filter_map(|h| {
            let p = h.current_percent.filter(|p| p.is_finite())?;
            let x = h.order as f64;
            Some(Rectangle::new(
                [(x, 0.0), (x + w, p.min(y_top))],
                palette::CURRENT.filled(),
            ))
        }))?;
        chart.draw_series(DashedLineSeries::new(
            [
                (1.4, lim.individual_percent),
                (x_hi, lim.individual_percent),
            ],
            8,
            5,
            palette::LIMIT.stroke_width(2),
        ))?;
        chart.draw_series(current_limits.iter().map(|&(h, l)| {
            let x = h as f64;
            PathElement::new(
                vec![(x - 0.45, l), (x + 0.45, l)],
                palette::ACCENT.stroke_width(2),
            )
        }))?;
        // the three largest bars of each trace get their value
        for (pick, colour, dx) in [
            (
                (|h: &crate::quantity::HarmonicLine| h.voltage_percent) as fn(&_) -> Option<f64>,
                palette::VOLTAGE,
                -w / 2.0,
            ),
            (|h| h.current_percent, palette::CURRENT, w / 2.0),
        ] {
            let mut top: Vec<(usize, f64)> = lines
                .iter()
                .filter_map(|h| pick(h).filter(|p| p.is_finite()).map(|p| (h.order, p)))
                .filter(|(_, p)| *p >= 0.05 * y_top)
                .collect();
            top.sort_by(|a, b| b.1.total_cmp(&a.1));
            for (order, p) in top.into_iter().take(3) {
                chart.draw_series(std::iter::once(Text::new(
                    num(p, 2),
                    (order as f64 + dx, p.min(y_top)),
                    font_at(TEXT_PX - 2.0, colour, HPos::Center, VPos::Bottom),
                )))?;
            }
        }
        Ok(())
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn voltage_rows_follow_the_bus_voltage() {
        assert_eq!(voltage_limits(None).individual_percent, 5.0);
        assert_eq!(voltage_limits(Some(400.0)).thd_percent, 8.0);
        assert_eq!(voltage_limits(Some(11_000.0)).individual_percent, 3.0);
        assert_eq!(voltage_limits(Some(132_000.0)).thd_percent, 2.5);
        assert_eq!(voltage_limits(Some(400_000.0)).individual_percent, 1.0);
    }

    #[test]
    fn current_limits_follow_the_table_and_even_orders_take_a_quarter() {
        // IEEE 519-2014 Table 2 (references §3)
        assert_eq!(current_limit_percent(10.0, 5), Some(4.0));
        assert_eq!(current_limit_percent(10.0, 4), Some(1.0));
        assert_eq!(current_limit_percent(35.0, 13), Some(3.5));
        assert_eq!(current_limit_percent(75.0, 19), Some(4.0));
        assert_eq!(current_limit_percent(500.0, 25), Some(2.0));
        assert_eq!(current_limit_percent(2000.0, 49), Some(1.4));
        assert_eq!(current_limit_percent(2000.0, 51), None);
        assert_eq!(current_limit_percent(-1.0, 5), None);
        assert_eq!(tdd_limit_percent(150.0), Some(15.0));
    }
}
