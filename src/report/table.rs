//! A readable summary per capture, with units.

use super::Exporter;
use crate::analysis::{Analysis, PhaseAnalysis, ThreePhaseAnalysis, phase_letter};
use crate::check::decision::Verdict;
use crate::check::expected::Expected;
use crate::quantity::three_phase::Rotation;
use crate::quantity::uncertainty::TraceUncertainty;
use crate::quantity::{HarmonicLine, TraceFigures};
use crate::warning::Severity;
use std::io::{self, Write};

/// Writes the table format.
#[derive(Debug, Default)]
pub struct TableExporter {
    written: usize,
    spectrum: bool,
}

impl TableExporter {
    /// A table exporter; `spectrum` prints each capture's harmonic spectrum after its figures.
    pub fn with_spectrum(spectrum: bool) -> Self {
        TableExporter {
            written: 0,
            spectrum,
        }
    }
}

/// `x` with `sig` significant digits (no exponent), or "n/a".
pub fn num(x: f64, sig: usize) -> String {
    if !x.is_finite() {
        return "n/a".into();
    }
    if x == 0.0 {
        return "0".into();
    }
    let mag = x.abs().log10().floor() as i64;
    let decimals = (sig as i64 - 1 - mag).clamp(0, 9) as usize;
    format!("{x:.decimals$}")
}

/// `value ± U unit`, the value rounded to the uncertainty's second significant digit
/// (GUM 7.2.6); "n/a" when the value is undefined.
///
/// Digits stop at a sensible resolution, so a tiny U does not print as `1.00000000 ± 0.00000022`:
/// bounded figures by their unit (a PF or ratio, unit "", to 0.0001; degrees and percent to 0.001;
/// hertz to 1 µHz), everything else at six significant digits of the value. When that cuts the
/// uncertainty's own digits, U is rounded up to the last digit shown (`1.0000 ± 0.0001`), never
/// down, so the printed interval still covers the computed one.
pub fn pm(value: Option<f64>, u: Option<f64>, unit: &str) -> String {
    let Some(v) = value.filter(|v| v.is_finite()) else {
        return "n/a".into();
    };
    match u.filter(|u| u.is_finite() && *u > 0.0) {
        Some(u) => {
            let wanted = (1 - u.log10().floor() as i64).clamp(0, 9);
            let finest = match unit.trim() {
                "" => 4,
                "°" | "%" => 3,
                "Hz" => 6,
                _ if v != 0.0 => (5 - v.abs().log10().floor() as i64).max(0),
                _ => 9,
            };
            let decimals = wanted.min(finest).max(0) as usize;
            let shown_u = if (decimals as i64) < wanted {
                let step = 10f64.powi(decimals as i32);
                (u * step - 1e-9).ceil().max(1.0) / step
            } else {
                u
            };
            let mut text = format!("{v:.decimals$}");
            if text.starts_with('-') && text.trim_start_matches(['-', '0', '.']).is_empty() {
                text.remove(0);
            }
            format!("{text} ± {shown_u:.decimals$}{unit}")
        }
        None => format!("{}{unit}", num(v, 6)),
    }
}

/// A DC offset shown to the resolution of its trace: 1e-5 of the trace's RMS, so noise-level
/// offsets read as `0.00 V` rather than `-0.00000509 A`.
fn dc_text(dc: f64, rms: f64) -> String {
    if !dc.is_finite() {
        return "n/a".into();
    }
    let decimals = if rms.is_finite() && rms > 0.0 {
        (4 - rms.log10().floor() as i64).clamp(0, 9) as usize
    } else {
        3
    };
    let text = format!("{dc:.decimals$}");
    match text.strip_prefix('-') {
        Some(rest) if rest.trim_start_matches(['0', '.']).is_empty() => rest.to_string(),
        _ => text,
    }
}

/// The per-trace rows under a header, each column as wide as its widest cell plus two spaces,
/// so columns never run together whatever the numbers.
fn trace_rows(
    out: &mut dyn Write,
    rows: &[(&str, &str, &TraceFigures, &TraceUncertainty)],
) -> io::Result<()> {
    let header = ["", "rms", "fundamental", "THD", "dc", "crest"];
    let cells: Vec<[String; 6]> = rows
        .iter()
        .map(|(name, unit, t, u)| {
            [
                name.to_string(),
                pm(Some(t.rms), Some(u.rms), &format!(" {unit}")),
                format!("{} {unit}", num(t.fundamental_rms, 6)),
                pm(t.thd_percent, u.thd_percent, " %"),
                format!("{} {unit}", dc_text(t.dc, t.rms)),
                num(t.crest_factor, 3),
            ]
        })
        .collect();
    let mut width = header.map(|h| h.chars().count());
    for row in &cells {
        for (w, c) in width.iter_mut().zip(row) {
            *w = (*w).max(c.chars().count());
        }
    }
    width[0] = width[0].max(11);
    let line = |cells: [&str; 6]| -> String {
        let mut s = format!("  {:<w$}", cells[0], w = width[0]);
        for (c, w) in cells.iter().zip(width).skip(1) {
            s.push_str(&format!("  {c:>w$}"));
        }
        s
    };
    writeln!(out, "{}", line(header))?;
    for row in &cells {
        writeln!(out, "{}", line(std::array::from_fn(|k| row[k].as_str())))?;
    }
    Ok(())
}

/// One phase's figures: angles, PFs, the trace table, powers and the largest harmonics (the
/// whole of a single-phase capture's figures).
fn phase_block(out: &mut dyn Write, p: &PhaseAnalysis) -> io::Result<()> {
    let q = &p.quantities;
    let u = &p.uncertainty;
    let lag = q
        .character
        .map_or_else(|| "undefined".into(), |c| c.describe(q.power.active_w));
    writeln!(
        out,
        "  phase angle  {} (DFT) | {} (zero crossing) | {lag}",
        pm(q.phase_angle_dft_deg, u.phase_angle_deg.dft, "°"),
        pm(
            q.phase_angle_zero_crossing_deg,
            u.phase_angle_deg.zero_crossing,
            "°"
        ),
    )?;
    writeln!(
        out,
        "  power factor displacement {} | true {}",
        pm(q.displacement_pf, u.displacement_pf, ""),
        pm(q.true_pf, u.true_pf, ""),
    )?;
    trace_rows(
        out,
        &[
            ("voltage", "V", &q.voltage, &u.voltage),
            ("current", "A", &q.current, &u.current),
        ],
    )?;
    let pw = &q.power;
    writeln!(
        out,
        "  power        P {} | Q1 {} | S {} VA | P1 {} W | S1 {} VA",
        pm(Some(pw.active_w), Some(u.power.active_w), " W"),
        pm(Some(pw.reactive_var), Some(u.power.reactive_var), " var"),
        num(pw.apparent_va, 6),
        num(pw.fundamental_active_w, 6),
        num(pw.fundamental_apparent_va, 6),
    )?;
    writeln!(
        out,
        "  distortion   SN {} VA | DI {} var | DV {} var | SH {} VA | N {} var",
        num(pw.nonfundamental_apparent_va, 4),
        num(pw.current_distortion_var, 4),
        num(pw.voltage_distortion_var, 4),
        num(pw.harmonic_apparent_va, 4),
        num(pw.nonactive_var, 4),
    )?;
    // The largest harmonics of each trace, in percent of the fundamental.
    for (label, pick) in [
        (
            "voltage",
            (|h: &HarmonicLine| h.voltage_percent) as fn(&_) -> Option<f64>,
        ),
        ("current", |h: &HarmonicLine| h.current_percent),
    ] {
        let mut top: Vec<_> = q
            .harmonics
            .iter()
            .skip(1)
            .filter_map(|h| pick(h).map(|p| (h.order, p)))
            .collect();
        top.sort_by(|a, b| b.1.total_cmp(&a.1));
        let shown: Vec<String> = top
            .iter()
            .take(6)
            .filter(|(_, p)| *p >= 0.1)
            .map(|(h, p)| format!("h{h} {} %", num(*p, 2)))
            .collect();
        writeln!(
            out,
            "  {label:<13}harmonics (orders 2-{}): {}",
            q.harmonic_order,
            if q.harmonics[0].voltage_percent.is_none() && label == "voltage"
                || q.harmonics[0].current_percent.is_none() && label == "current"
            {
                "undefined without a fundamental".to_string()
            } else if shown.is_empty() {
                "none above 0.1 %".to_string()
            } else {
                shown.join(", ")
            }
        )?;
    }
    Ok(())
}

/// A three-phase capture's system figures: totals, IEEE 1459 effective values, sequence
/// components, rotation and wiring hints.
fn system_block(out: &mut dyn Write, t: &ThreePhaseAnalysis) -> io::Result<()> {
    let f = &t.figures;
    writeln!(
        out,
        "  total        P {} | Q1 {} | S arithmetic {} VA | S vector {} VA",
        pm(Some(f.total.active_w), Some(t.uncertainty.active_w), " W"),
        pm(
            Some(f.total.reactive_var),
            Some(t.uncertainty.reactive_var),
            " var"
        ),
        num(f.total.arithmetic_apparent_va, 6),
        num(f.total.vector_apparent_va, 6),
    )?;
    let e = &f.effective;
    writeln!(
        out,
        "  effective    Ve {} V | Ie {} A | Se {} VA | Se1 {} VA | SeN {} VA | PFe {}",
        num(e.voltage_v, 6),
        num(e.current_a, 6),
        num(e.apparent_va, 6),
        num(e.fundamental_apparent_va, 6),
        num(e.nonfundamental_apparent_va, 4),
        pm(e.pf, t.uncertainty.effective_pf, ""),
    )?;
    let ps = &f.positive_sequence;
    writeln!(
        out,
        "  sequence     P1+ {} W | Q1+ {} var | S1+ {} VA | SU1 {} VA",
        num(ps.active_w, 6),
        num(ps.reactive_var, 6),
        num(ps.apparent_va, 6),
        num(ps.unbalance_va, 4),
    )?;
    let pct = |x: Option<f64>| x.map_or_else(|| "n/a".into(), |x| format!("{x:.3} %"));
    let (v, i) = (&f.voltage_sequence, &f.current_sequence);
    writeln!(
        out,
        "  voltage seq. positive {} V | negative {} V | zero {} V | unbalance {}",
        num(v.positive, 6),
        num(v.negative, 4),
        num(v.zero, 4),
        pct(v.unbalance_percent),
    )?;
    writeln!(
        out,
        "  current seq. positive {} A | negative {} A | zero {} A | unbalance {}",
        num(i.positive, 6),
        num(i.negative, 4),
        num(i.zero, 4),
        pct(i.unbalance_percent),
    )?;
    writeln!(
        out,
        "  rotation     {}{}",
        match f.rotation {
            Rotation::Abc => "abc (positive sequence)",
            Rotation::Acb => "acb (reverse: b leads a)",
        },
        if t.artificial_star {
            " | phase voltages are to the artificial star point (no neutral measured)"
        } else {
            ""
        }
    )?;
    if t.wiring_hints.is_empty() {
        writeln!(out, "  wiring       nothing odd in the phasors")?;
    }
    for (k, h) in t.wiring_hints.iter().enumerate() {
        writeln!(out, "  {:<13}- {h}", if k == 0 { "wiring" } else { "" })?;
    }
    Ok(())
}

impl Exporter for TableExporter {
    fn write(&mut self, out: &mut dyn Write, a: &Analysis) -> io::Result<()> {
        let q = &a.quantities;
        let u = &a.uncertainty;
        if self.written > 0 {
            writeln!(out)?;
        }
        self.written += 1;
        writeln!(out, "{}", a.path.display())?;
        writeln!(
            out,
            "  source       {} | {} Hz | {} samples",
            a.format,
            num(a.sample_rate_hz, 6),
            a.samples,
        )?;
        if let Some(span) = super::span_text(a) {
            writeln!(out, "  span         {span}")?;
        }
        if let Some(times) = super::times_text(a) {
            writeln!(out, "  record       {times}")?;
        }
        match &a.three_phase {
            None => writeln!(out, "  channels     {}", a.channels.describe())?,
            Some(_) => writeln!(out, "  system       {}", a.system)?,
        }
        writeln!(
            out,
            "  frequency    {} | {} cycles, {} whole | uncertainties over {} windows: {}",
            pm(Some(q.frequency_hz), Some(u.frequency_hz), " Hz"),
            num(q.cycles, 4),
            q.whole_cycles,
            u.windows,
            super::coverage_text(u),
        )?;
        match &a.three_phase {
            None => phase_block(out, &a.phases[0])?,
            Some(t) => {
                for p in &a.phases {
                    writeln!(out, "  phase {}", phase_letter(p.phase))?;
                    writeln!(out, "  channels     {}", p.channels.describe())?;
                    phase_block(out, p)?;
                }
                writeln!(out, "  system")?;
                system_block(out, t)?;
            }
        }
        if let Some(e) = &a.expected {
            expected_block(out, e)?;
        }
        for (k, e) in a.events.iter().enumerate() {
            let head = if k == 0 { "events" } else { "" };
            writeln!(out, "  {head:<13}- {}", event_text(e))?;
        }
        if shows_reference(a)
            && let Some(text) = reference_text(&a.dip_references)
        {
            writeln!(out, "  dips/swells  against {text}")?;
        }
        writeln!(
            out,
            "  status       {}",
            super::style::word(a.status().as_str())
        )?;
        // warnings always (their absence is news), findings and notes when there are any
        for (label, severity) in [
            ("warnings", Severity::Warning),
            ("findings", Severity::Finding),
            ("notes", Severity::Note),
        ] {
            let mut items = a.listed(severity).peekable();
            if items.peek().is_none() && severity == Severity::Warning {
                writeln!(out, "  {label:<13}none")?;
            }
            for (k, w) in items.enumerate() {
                let head = if k == 0 { label } else { "" };
                writeln!(out, "  {head:<13}- {w}")?;
            }
        }
        if self.spectrum {
            super::spectrum::table(out, a)?;
        }
        out.flush()
    }
}

/// The measured impedance in words: `58.83 Ω = 50.00 Ω + j31.00 Ω (series inductance of
/// 98.68 mH at 50.0000 Hz)`; shared by the table and the HTML report.
pub fn impedance_text(e: &Expected) -> String {
    let x = &e.explanation;
    let (value, unit) = if x.equivalent == "inductance" {
        (x.equivalent_value * 1e3, "mH")
    } else {
        (x.equivalent_value * 1e6, "µF")
    };
    format!(
        "{} Ω = {} Ω {} j{} Ω (series {} of {} {unit} at {} Hz)",
        num(x.impedance_ohm, 5),
        num(x.series_resistance_ohm, 5),
        if x.series_reactance_ohm < 0.0 {
            "−"
        } else {
            "+"
        },
        num(x.series_reactance_ohm.abs(), 5),
        x.equivalent,
        num(value, 4),
        num(e.frequency_hz, 6),
    )
}

/// What the model verdict rests on, in words: `measured 31.80 ± 0.60° is inside the band by
/// 1.20°; |Z| 58.83 ± 1.52 Ω is inside its band`; shared by the table and the HTML report.
pub fn verdict_grounds(e: &Expected) -> String {
    let where_ = if e.margin_deg > 0.0 {
        format!("outside the band by {}°", num(e.margin_deg, 2))
    } else {
        format!("inside the band by {}°", num(-e.margin_deg, 2))
    };
    let z = &e.impedance;
    let z_where = match z.verdict {
        Verdict::Consistent => "inside its band",
        Verdict::Outside => "outside its band",
        Verdict::Inconclusive => "on its band's edge",
    };
    format!(
        "measured {} is {where_}; |Z| {} is {z_where}",
        pm(
            Some(e.measured_phase_deg),
            Some(e.measured_uncertainty_deg),
            "°"
        ),
        pm(Some(z.measured_ohm), Some(z.uncertainty_ohm), " Ω"),
    )
}

fn expected_block(out: &mut dyn Write, e: &Expected) -> io::Result<()> {
    writeln!(
        out,
        "  expected     {}: nominal {}°, tolerance band {}° to {}° (worst case), \
         Monte Carlo 95 % {}° to {}°",
        e.model.as_deref().unwrap_or("circuit model"),
        num(e.nominal_phase_deg, 4),
        num(e.band_deg[0], 4),
        num(e.band_deg[1], 4),
        num(e.monte_carlo_95_deg[0], 4),
        num(e.monte_carlo_95_deg[1], 4),
    )?;
    writeln!(
        out,
        "               |Z| nominal {} Ω, tolerance band {} Ω to {} Ω (worst case)",
        num(e.nominal_impedance_ohm, 4),
        num(e.impedance.band_ohm[0], 4),
        num(e.impedance.band_ohm[1], 4),
    )?;
    writeln!(
        out,
        "  verdict      {} ({})",
        super::style::word(&e.verdict.as_str().to_uppercase()),
        verdict_grounds(e)
    )?;
    if let Some(r) = &e.reason {
        writeln!(out, "  reason       {r}")?;
    }
    writeln!(out, "  rule         {}", e.decision_rule)?;
    let x = &e.explanation;
    writeln!(out, "  measured Z   {}", impedance_text(e))?;
    for (k, p) in x.parts.iter().enumerate() {
        let head = if k == 0 { "which part" } else { "" };
        let z = p
            .impedance_ohm_if_so
            .map(|z| format!(" (|Z| would be {} Ω)", num(z, 4)))
            .unwrap_or_default();
        writeln!(out, "  {head:<13}- {}{z}", p.note)?;
    }
    Ok(())
}

/// The closing lines of a verdict table: the listed `items` under `label` (or `none_text`),
/// the cautions and a line for a supervisor's signature.
pub fn sign_off(
    out: &mut dyn Write,
    label: &str,
    items: &[String],
    none_text: &str,
    cautions: &str,
) -> io::Result<()> {
    if items.is_empty() {
        writeln!(out, "  {label:<13}{none_text}")?;
    }
    for (k, item) in items.iter().enumerate() {
        let head = if k == 0 { label } else { "" };
        writeln!(out, "  {head:<13}- {item}")?;
    }
    writeln!(out, "  caution      {cautions}")?;
    writeln!(
        out,
        "  checked by   ______________________   date __________"
    )
}

/// Whether a capture's output says what dips and swells were measured against: when a declared
/// voltage was given or a dip or swell was found.
pub fn shows_reference(a: &crate::analysis::Analysis) -> bool {
    a.settings.declared_voltage_v.is_some()
        || a.events
            .iter()
            .any(|e| e.kind != crate::quantity::events::EventKind::Switching)
}

/// What dips and swells were measured against, in words: `declared 230 V: ...` or `median of
/// the record 229.8 V (a), 230.1 V (b), 229.5 V (c): ...`; `None` without a reference.
pub fn reference_text(refs: &[crate::quantity::events::DipReference]) -> Option<String> {
    let first = refs.first()?;
    let values: Vec<String> = if refs.iter().all(|r| r.voltage_v == first.voltage_v) {
        vec![format!("{} V", num(first.voltage_v, 5))]
    } else {
        refs.iter()
            .map(|r| match r.phase {
                Some(p) => format!("{} V ({p})", num(r.voltage_v, 5)),
                None => format!("{} V", num(r.voltage_v, 5)),
            })
            .collect()
    };
    let line = first
        .declared_line_to_line_v
        .map(|u| {
            format!(
                " (the declared {} V line to line ÷ √3, for the voltages to the artificial star \
                 point)",
                num(u, 5)
            )
        })
        .unwrap_or_default();
    Some(format!(
        "{} {}{line}: a dip below 90 %, a swell above 110 % (IEC 61000-4-30)",
        first.source.as_str(),
        values.join(", ")
    ))
}

/// An event in words: `switching at 1.2137 s (to the sample): Q1 2760 var before, 760 var
/// after`, `dip at 0.7900 s for 0.130 s: one-cycle RMS 230.0 V before, lowest 161.0 V, 230.0 V
/// after`.
pub fn event_text(e: &crate::quantity::events::Event) -> String {
    use crate::quantity::events::{EventKind, EventQuantity};
    let (name, unit) = match e.quantity {
        EventQuantity::ReactivePowerVar => ("Q1", " var"),
        EventQuantity::FundamentalCurrentA => ("I1", " A"),
        EventQuantity::VoltageRmsV => ("one-cycle RMS", " V"),
    };
    let phase = e.phase.map(|p| format!("phase {p}: ")).unwrap_or_default();
    let value = |x: f64| {
        if x.is_finite() {
            format!("{}{unit}", num(x, 4))
        } else {
            "n/a".into()
        }
    };
    match e.kind {
        EventKind::Switching => format!(
            "{phase}switching at {:.4} s (to the {}): {name} {} before, {} after",
            e.time_s,
            e.located_to,
            value(e.before),
            value(e.after)
        ),
        EventKind::Dip | EventKind::Swell => format!(
            "{phase}{} at {:.4} s {}: {name} {} before, {} {}, {} after",
            e.kind.as_str(),
            e.time_s,
            e.duration_s
                .map_or("lasting to the end".into(), |d| format!("for {d:.3} s")),
            value(e.before),
            if e.kind == EventKind::Dip {
                "lowest"
            } else {
                "highest"
            },
            value(e.extreme.unwrap_or(f64::NAN)),
            value(e.after)
        ),
        // `polyphase dip on a, c at 0.2000 s for 0.200 s: lowest 161.0 V on a (70.0 % of
        // 230.0 V)`
        EventKind::PolyphaseDip | EventKind::PolyphaseSwell => {
            let extreme = e.extreme.unwrap_or(f64::NAN);
            let share = match e.reference_v {
                Some(r) if r > 0.0 && extreme.is_finite() => {
                    format!(" ({:.1} % of {})", 100.0 * extreme / r, value(r))
                }
                _ => String::new(),
            };
            format!(
                "{} on {} at {:.4} s {}: {} {}{share}",
                e.kind.as_str(),
                e.phases.map_or("?".into(), |p| p.names().join(", ")),
                e.time_s,
                e.duration_s
                    .map_or("lasting to the end".into(), |d| format!("for {d:.3} s")),
                if e.kind == EventKind::PolyphaseDip {
                    "lowest"
                } else {
                    "highest"
                },
                value(extreme),
            )
        }
    }
}

#[cfg(test)]
mod tests {
    use super::num;

    #[test]
    fn numbers_keep_their_significant_digits() {
        assert_eq!(num(230.123456, 6), "230.123");
        assert_eq!(num(0.0012345, 3), "0.00123");
        assert_eq!(num(12345.6, 3), "12346");
        assert_eq!(num(f64::NAN, 3), "n/a");
    }

    #[test]
    fn values_are_rounded_to_two_digits_of_their_uncertainty() {
        assert_eq!(
            super::pm(Some(37.996391), Some(0.5774), "°"),
            "38.00 ± 0.58°"
        );
        assert_eq!(super::pm(Some(1746.4589), Some(47.15), " W"), "1746 ± 47 W");
        assert_eq!(super::pm(None, Some(1.0), " W"), "n/a");
    }

    #[test]
    fn bounded_figures_stop_at_a_sensible_resolution_and_round_u_up() {
        use super::pm;
        // the unity-PF case of the report: U of a few 1e-7 printed as 1.00000000 ± 0.00000022
        assert_eq!(pm(Some(0.99999989), Some(2.2e-7), ""), "1.0000 ± 0.0001");
        assert_eq!(pm(Some(0.99995), Some(0.00005), ""), "1.0000 ± 0.0001");
        assert_eq!(pm(Some(0.8499), Some(0.0053), ""), "0.8499 ± 0.0053");
        assert_eq!(pm(Some(1.0006), Some(0.0026), " %"), "1.001 ± 0.003 %");
        assert_eq!(pm(Some(-1e-12), Some(1e-11), "°"), "0.000 ± 0.001°");
        assert_eq!(
            pm(Some(50.000012), Some(3.4e-9), " Hz"),
            "50.000012 ± 0.000001 Hz"
        );
        assert_eq!(pm(Some(230.0000001), Some(1e-7), " V"), "230.000 ± 0.001 V");
    }

    #[test]
    fn trace_columns_never_run_together() {
        use super::*;
        let t = |rms: f64, dc: f64| TraceFigures {
            rms,
            dc,
            fundamental_rms: rms * 0.999,
            thd_percent: Some(123.4567),
            peak: rms * 1.5,
            crest_factor: 1.5,
        };
        let u = TraceUncertainty {
            rms: 0.00012,
            thd_percent: Some(0.00026),
        };
        let mut out = Vec::new();
        trace_rows(
            &mut out,
            &[
                ("voltage", "V", &t(123456.789, -0.00000509), &u),
                ("current", "A", &t(0.00123, 1e-9), &u),
            ],
        )
        .unwrap();
        let text = String::from_utf8(out).unwrap();
        let lines: Vec<&str> = text.lines().collect();
        assert_eq!(lines.len(), 3);
        // every row splits into its six cells at runs of two or more spaces
        for line in &lines[1..] {
            let cells: Vec<&str> = line
                .trim()
                .split("  ")
                .map(str::trim)
                .filter(|c| !c.is_empty())
                .collect();
            assert_eq!(cells.len(), 6, "{line}");
        }
        let width = |l: &str| l.chars().count();
        assert_eq!(width(lines[1]), width(lines[2]), "{text}");
        // a noise-level offset reads as zero at 1e-5 of the trace RMS, without a minus sign
        assert!(text.contains("  0 V  "), "{text}");
        assert!(text.contains("  0.0000000 A  "), "{text}");
    }
}
