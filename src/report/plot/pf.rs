//! The true power factor of many captures as a histogram, with the penalty threshold, for a
//! batch summary.

use super::{
    PlotError, Swatch, TEXT_PX, TITLE_PX, font, font_at, legend, palette, standard_chart,
    svg_document, tick_label,
};
use crate::report::table::num;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};

/// Size of the plot, pixels.
pub const SIZE: (u32, u32) = (960, 360);
/// Width of one bin of |PF|.
pub const BIN: f64 = 0.02;

/// Bins of |PF| from the lowest value (rounded down to a tenth) to 1: `(low edge, count)`.
pub fn bins(pfs: &[f64]) -> Vec<(f64, usize)> {
    let values: Vec<f64> = pfs
        .iter()
        .filter(|p| p.is_finite())
        .map(|p| p.abs().min(1.0))
        .collect();
    if values.is_empty() {
        return Vec::new();
    }
    let low = values.iter().copied().fold(1.0, f64::min);
    let start = ((low * 10.0).floor() / 10.0).min(0.9);
    let n = ((1.0 - start) / BIN).round() as usize;
    let mut counts = vec![0usize; n.max(1)];
    for v in values {
        let k = (((v - start) / BIN).floor() as usize).min(counts.len() - 1);
        counts[k] += 1;
    }
    counts
        .into_iter()
        .enumerate()
        .map(|(k, c)| (start + k as f64 * BIN, c))
        .collect()
}

/// Draws the histogram of |true PF| over the captures, with the penalty threshold if given.
pub fn plot(pfs: &[f64], threshold: Option<f64>) -> Result<String, PlotError> {
    let b = bins(pfs);
    if b.is_empty() {
        return Err(PlotError("no capture has a defined power factor".into()));
    }
    let start = b[0].0;
    let tallest = b.iter().map(|x| x.1).max().unwrap_or(1).max(1);
    let y_top = tallest as f64 * 1.25;
    let shown = b.iter().map(|x| x.1).sum::<usize>();
    svg_document(SIZE, |root| {
        let (head, body) = root.split_vertically(64);
        head.draw(&Text::new(
            format!("True power factor of {shown} captures"),
            (12, 8),
            font(TITLE_PX, palette::INK),
        ))?;
        let mut items = vec![(
            Swatch::Fill(palette::HISTOGRAM),
            "captures per bin".to_string(),
        )];
        if let Some(t) = threshold {
            items.push((
                Swatch::Dashed(palette::LIMIT),
                format!("penalty threshold {}", num(t, 3)),
            ));
        }
        legend(&head, 46, &items)?;
        let mut chart = standard_chart(&body).build_cartesian_2d(start..1.0, 0.0..y_top)?;
        chart
            .configure_mesh()
            .x_desc("|true PF| (P/S)")
            .y_desc("captures")
            .x_labels(11)
            .y_labels((tallest + 1).min(8))
            .x_label_formatter(&|x| tick_label(*x))
            .y_label_formatter(&|y| {
                if (y - y.round()).abs() < 1e-9 {
                    tick_label(*y)
                } else {
                    String::new()
                }
            })
            .label_style(font(TEXT_PX - 1.0, palette::INK))
            .axis_desc_style(font(TEXT_PX, palette::INK))
            .bold_line_style(palette::GRID)
            .light_line_style(palette::PAPER)
            .axis_style(palette::MUTED)
            .draw()?;
        chart.draw_series(b.iter().filter(|x| x.1 > 0).map(|&(a, c)| {
            Rectangle::new(
                [(a + 0.1 * BIN, 0.0), (a + 0.9 * BIN, c as f64)],
                palette::HISTOGRAM.filled(),
            )
        }))?;
        chart.draw_series(b.iter().filter(|x| x.1 > 0).map(|&(a, c)| {
            Text::new(
                c.to_string(),
                (a + BIN / 2.0, c as f64),
                font_at(TEXT_PX - 2.0, palette::INK, HPos::Center, VPos::Bottom),
            )
        }))?;
        if let Some(t) = threshold.filter(|t| *t > start && *t <= 1.0) {
            chart.draw_series(DashedLineSeries::new(
                [(t, 0.0), (t, y_top)],
                7,
                5,
                palette::LIMIT.stroke_width(2),
            ))?;
        }
        Ok(())
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn power_factors_fall_in_their_bins() {
        let b = bins(&[0.81, -0.83, 0.99, 1.0, f64::NAN]);
        assert_eq!(b[0].0, 0.8);
        assert_eq!(b.len(), 10);
        assert_eq!(b[0].1, 1); // 0.81
        assert_eq!(b[1].1, 1); // |−0.83|
        assert_eq!(b[9].1, 2); // 0.99 and 1.0
        assert!(bins(&[]).is_empty());
    }
}
