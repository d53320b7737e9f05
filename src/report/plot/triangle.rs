//! The power triangle of IEEE Std 1459-2010: the fundamental active power P1 along the x-axis,
//! the fundamental reactive power Q1 up (inductive) or down (capacitive), their apparent power
//! S1 as the hypotenuse, and, when the capture is distorted, the non-fundamental apparent power
//! SN at right angles to that plane (`S² = S1² + SN²`), drawn in an oblique view, and S.
//!
//! The drawing is to scale in the P-Q1 plane (both axes in the same unit per pixel); SN, being
//! perpendicular to it, is drawn at an angle and its length is in the legend.

use super::{
    PlotError, Swatch, TEXT_PX, TITLE_PX, font, font_at, legend, palette, si_prefix, svg_document,
    tick_label,
};
use crate::analysis::Analysis;
use crate::report::table::num;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};

/// Size of the plot, pixels.
pub const SIZE: (u32, u32) = (520, 540);
/// SN is drawn when it is at least this share of S.
pub const SN_SHOWN_SHARE: f64 = 0.01;
/// Direction of the SN edge in the drawing, degrees from the P axis (oblique view).
const SN_ANGLE_DEG: f64 = 35.0;

/// The sides the triangle is drawn from, with their names: one phase's P1, Q1, S1 and SN, or a
/// three-phase system's positive-sequence P+, Q+, S+ and the rest of its effective apparent power
/// (IEEE Std 1459-2010: Se² = S+² + SU1² + SeN², the unbalance and non-fundamental powers).
#[derive(Debug, Clone, PartialEq)]
pub struct Sides {
    /// The plot's title.
    pub title: &'static str,
    /// The names of the legs and hypotenuse: `P1`, `Q1`, `S1` or `P+`, `Q+`, `S+`.
    pub names: [&'static str; 3],
    /// The active power along the axis (P1 or P+), W.
    pub p1: f64,
    /// The reactive power up or down (Q1 or Q+), var.
    pub q1: f64,
    /// The hypotenuse (S1 or S+), VA.
    pub s1: f64,
    /// The active power of everything (P), W.
    pub p: f64,
    /// The apparent power at right angles to the P-Q plane (SN, or √(SU1² + SeN²)), VA.
    pub rest: f64,
    /// What `rest` is made of, for the legend.
    pub rest_parts: Vec<(&'static str, f64)>,
    /// The whole apparent power (S or Se), VA.
    pub s: f64,
    /// The figures line under the title.
    pub figures: String,
}

/// The sides of `a`'s triangle: the system's for a three-phase capture, else the phase's.
pub fn sides(a: &Analysis) -> Sides {
    let pf = |x: Option<f64>| x.map(|v| num(v, 3)).unwrap_or("n/a".into());
    match &a.three_phase {
        Some(t) => {
            let f = &t.figures;
            let (pos, eff) = (&f.positive_sequence, &f.effective);
            let ratio = |x: f64, y: f64| (y > 0.0).then(|| x / y);
            Sides {
                title: "Power triangle of the system",
                names: ["P+", "Q+", "S+"],
                p1: pos.active_w,
                q1: pos.reactive_var,
                s1: pos.apparent_va,
                p: f.total.active_w,
                rest: pos.unbalance_va.hypot(eff.nonfundamental_apparent_va),
                rest_parts: vec![
                    ("SU1", pos.unbalance_va),
                    ("SeN", eff.nonfundamental_apparent_va),
                ],
                s: eff.apparent_va,
                figures: format!(
                    "PF = P/Se {} · P+/S+ {}",
                    pf(eff.pf),
                    pf(ratio(pos.active_w, pos.apparent_va))
                ),
            }
        }
        None => {
            let q = &a.quantities;
            let pw = &q.power;
            Sides {
                title: "Power triangle",
                names: ["P1", "Q1", "S1"],
                p1: pw.fundamental_active_w,
                q1: pw.reactive_var,
                s1: pw.fundamental_apparent_va,
                p: pw.active_w,
                rest: pw.nonfundamental_apparent_va,
                rest_parts: vec![("SN", pw.nonfundamental_apparent_va)],
                s: pw.apparent_va,
                figures: format!(
                    "true PF {} · displacement PF {}{}",
                    pf(q.true_pf),
                    pf(q.displacement_pf),
                    q.character
                        .map(|c| format!(" · {}", c.as_str()))
                        .unwrap_or_default()
                ),
            }
        }
    }
}

/// The caption of the power triangle.
pub fn caption(a: &Analysis) -> String {
    let t = sides(a);
    let mut s = if a.three_phase.is_some() {
        String::from(
            "Power triangle of the three-phase system (IEEE Std 1459-2010): the positive-sequence \
             active power P+ along the axis, Q+ up when inductive and down when capacitive, S+ \
             the hypotenuse, to scale.",
        )
    } else {
        String::from(
            "Power triangle (IEEE Std 1459-2010): P1 along the axis, Q1 up when inductive and \
             down when capacitive, S1 the hypotenuse, to scale.",
        )
    };
    if show_sn(&t) {
        s.push_str(if a.three_phase.is_some() {
            " The unbalance power SU1 and the non-fundamental effective apparent power SeN \
             together, √(SU1² + SeN²), are perpendicular to that plane (Se² = S+² + SU1² + \
             SeN²) and drawn at an angle; their lengths are in the legend."
        } else {
            " SN, the non-fundamental apparent power, is perpendicular to that plane \
             (S² = S1² + SN²) and drawn at an angle; its length is in the legend."
        });
    } else if t.s > 0.0 {
        s.push_str(if a.three_phase.is_some() {
            " √(SU1² + SeN²) is below 1 % of Se and is not drawn."
        } else {
            " SN is below 1 % of S and is not drawn."
        });
    }
    s
}

fn show_sn(t: &Sides) -> bool {
    t.rest.is_finite() && t.rest >= SN_SHOWN_SHARE * t.s
}

/// Draws the power triangle.
pub fn plot(a: &Analysis) -> Result<String, PlotError> {
    let t = sides(a);
    let (p1, q1, sn) = (t.p1, t.q1, t.rest);
    let [p_name, q_name, s_name] = t.names;
    if ![p1, q1, t.s].iter().all(|x| x.is_finite()) || t.s <= 0.0 {
        return Err(PlotError("no power to draw".into()));
    }
    let (div, prefix) = si_prefix(t.s);
    let (p1d, q1d) = (p1 / div, q1 / div);
    let sn_on = show_sn(&t);
    let dir_x = if p1 < 0.0 { -1.0 } else { 1.0 };
    // SN leaves the tip of S1 away from the P axis, clear of the Q1 label
    let dir_y = if q1 >= 0.0 { 1.0 } else { -1.0 };
    let alpha = SN_ANGLE_DEG.to_radians();
    let tip = if sn_on {
        (
            p1d + dir_x * sn / div * alpha.cos(),
            q1d + dir_y * sn / div * alpha.sin(),
        )
    } else {
        (p1d, q1d)
    };
    let xs = [0.0, p1d, tip.0];
    let ys = [0.0, q1d, tip.1];
    let (x_lo, x_hi) = span(&xs);
    let (y_lo, y_hi) = span(&ys);
    let scale = (x_hi - x_lo).max(y_hi - y_lo).max(f64::MIN_POSITIVE);
    // room for the labels: Q1, SN and S sit on the far side from the origin
    let (pad_near, pad_far) = (0.12 * scale, 0.4 * scale);
    let (pad_left, pad_right) = if dir_x > 0.0 {
        (pad_near, pad_far)
    } else {
        (pad_far, pad_near)
    };
    svg_document(SIZE, |root| {
        let (head, body) = root.split_vertically(if sn_on { 84 } else { 64 });
        let unit = |x: f64, u: &str| format!("{} {prefix}{u}", num(x / div, 4));
        head.draw(&Text::new(t.title, (12, 8), font(TITLE_PX, palette::INK)))?;
        head.draw(&Text::new(
            t.figures.clone(),
            (12, 38),
            font(TEXT_PX, palette::MUTED),
        ))?;
        if sn_on {
            legend(
                &head,
                70,
                &[
                    (
                        Swatch::Line(palette::ACCENT),
                        t.rest_parts
                            .iter()
                            .map(|(name, x)| format!("{name} = {}", unit(*x, "VA")))
                            .collect::<Vec<_>>()
                            .join(" · "),
                    ),
                    (
                        Swatch::Dashed(palette::MUTED),
                        format!(
                            "{} = {}",
                            if a.three_phase.is_some() { "Se" } else { "S" },
                            unit(t.s, "VA")
                        ),
                    ),
                ],
            )?;
        }
        // the same units per pixel on both axes
        let (w, h) = body.dim_in_pixel();
        let (label_x, label_y, margin) = (44.0, 64.0, 16.0);
        let pw_px = f64::from(w) - label_y - 2.0 * margin;
        let ph_px = f64::from(h) - label_x - 2.0 * margin;
        let (mut x0, mut x1) = (x_lo - pad_left, x_hi + pad_right);
        let (mut y0, mut y1) = (y_lo - 0.12 * scale, y_hi + 0.12 * scale);
        let per_px = ((x1 - x0) / pw_px).max((y1 - y0) / ph_px);
        let grow = |lo: &mut f64, hi: &mut f64, px: f64| {
            let extra = (per_px * px - (*hi - *lo)) / 2.0;
            *lo -= extra;
            *hi += extra;
        };
        grow(&mut x0, &mut x1, pw_px);
        grow(&mut y0, &mut y1, ph_px);
        let mut chart = ChartBuilder::on(&body)
            .margin(margin as u32)
            .x_label_area_size(label_x as u32)
            .y_label_area_size(label_y as u32)
            .build_cartesian_2d(x0..x1, y0..y1)?;
        chart
            .configure_mesh()
            .x_desc(format!("active power ({prefix}W)"))
            .y_desc(format!("reactive power ({prefix}var)"))
            .x_labels(6)
            .y_labels(6)
            .x_label_formatter(&|x| tick_label(*x))
            .y_label_formatter(&|y| tick_label(*y))
            .label_style(font(TEXT_PX - 1.0, palette::INK))
            .axis_desc_style(font(TEXT_PX, palette::INK))
            .bold_line_style(palette::GRID)
            .light_line_style(palette::PAPER)
            .axis_style(palette::MUTED)
            .draw()?;
        for seg in [[(x0, 0.0), (x1, 0.0)], [(0.0, y0), (0.0, y1)]] {
            chart.draw_series(std::iter::once(PathElement::new(
                seg.to_vec(),
                palette::MUTED.stroke_width(1),
            )))?;
        }
        let off = 0.035 * scale;
        let line = |from: (f64, f64), to: (f64, f64), c: RGBColor, width: u32| {
            PathElement::new(vec![from, to], c.stroke_width(width))
        };
        chart.draw_series([
            line((0.0, 0.0), (p1d, 0.0), palette::VOLTAGE, 3),
            line((p1d, 0.0), (p1d, q1d), palette::CURRENT, 3),
            line((0.0, 0.0), (p1d, q1d), palette::INK, 3),
        ])?;
        let p_text = if (t.p - p1).abs() > 0.01 * t.s {
            format!("{p_name} = {} (P = {})", unit(p1, "W"), unit(t.p, "W"))
        } else {
            format!("{p_name} = {}", unit(p1, "W"))
        };
        // P1 on the far side of the axis from Q1
        let below = if q1 >= 0.0 { -off } else { off };
        chart.draw_series(std::iter::once(Text::new(
            p_text,
            (p1d / 2.0, below),
            font_at(
                TEXT_PX,
                palette::VOLTAGE,
                HPos::Center,
                if q1 >= 0.0 { VPos::Top } else { VPos::Bottom },
            ),
        )))?;
        chart.draw_series(std::iter::once(Text::new(
            format!("{q_name} = {}", unit(q1, "var")),
            (p1d + dir_x * off, q1d / 2.0),
            font_at(
                TEXT_PX,
                palette::CURRENT,
                if dir_x > 0.0 { HPos::Left } else { HPos::Right },
                VPos::Center,
            ),
        )))?;
        // S1 beside the hypotenuse: outside the triangle, or inside it when the dashed S runs
        // outside and the triangle is tall enough to hold the text
        let len = p1d.hypot(q1d).max(f64::MIN_POSITIVE);
        let mut n = (-q1d / len, p1d / len);
        if n.0 * (p1d / 2.0) + n.1 * (-q1d / 2.0) > 0.0 {
            n = (-n.0, -n.1);
        }
        let (at, h_pos, v_pos) = if sn_on && q1d.abs() > 0.15 * scale {
            (
                (0.45 * p1d, 0.45 * q1d - q1d.signum() * 0.6 * off),
                if p1d >= 0.0 { HPos::Left } else { HPos::Right },
                if q1d >= 0.0 { VPos::Top } else { VPos::Bottom },
            )
        } else {
            (
                (p1d / 2.0 + n.0 * off * 1.5, q1d / 2.0 + n.1 * off * 1.5),
                if n.0 < 0.0 { HPos::Right } else { HPos::Left },
                VPos::Center,
            )
        };
        chart.draw_series(std::iter::once(Text::new(
            format!("{s_name} = {}", unit(t.s1, "VA")),
            at,
            font_at(TEXT_PX, palette::INK, h_pos, v_pos),
        )))?;
        if sn_on {
            chart.draw_series([line((p1d, q1d), tip, palette::ACCENT, 3)])?;
            chart.draw_series(DashedLineSeries::new(
                [(0.0, 0.0), tip],
                7,
                5,
                palette::MUTED.stroke_width(2),
            ))?;
        }
        Ok(())
    })
}

fn span(v: &[f64]) -> (f64, f64) {
    v.iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &x| {
            (lo.min(x), hi.max(x))
        })
}
