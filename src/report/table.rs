//! A readable summary per capture, with units.

use super::Exporter;
use crate::analysis::Analysis;
use crate::check::expected::Expected;
use crate::quantity::uncertainty::TraceUncertainty;
use crate::quantity::{HarmonicLine, TraceFigures};
use std::io::{self, Write};

/// Writes the table format.
#[derive(Debug, Default)]
pub struct TableExporter {
    written: usize,
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
pub fn pm(value: Option<f64>, u: Option<f64>, unit: &str) -> String {
    let Some(v) = value.filter(|v| v.is_finite()) else {
        return "n/a".into();
    };
    match u.filter(|u| u.is_finite() && *u > 0.0) {
        Some(u) => {
            let decimals = (1 - u.log10().floor() as i64).clamp(0, 9) as usize;
            format!("{v:.decimals$} ± {u:.decimals$}{unit}")
        }
        None => format!("{}{unit}", num(v, 6)),
    }
}

fn trace_row(name: &str, unit: &str, t: &TraceFigures, u: &TraceUncertainty) -> String {
    format!(
        "  {name:<13}{:>22}{:>14} {unit:<2}{:>16}{:>12} {unit:<2}{:>7}",
        pm(Some(t.rms), Some(u.rms), &format!(" {unit}")),
        num(t.fundamental_rms, 6),
        pm(t.thd_percent, u.thd_percent, " %"),
        num(t.dc, 3),
        num(t.crest_factor, 3),
    )
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
            "  source       {} | {} Hz | {} samples | voltage '{}', current '{}'",
            a.format,
            num(a.sample_rate_hz, 6),
            a.samples,
            a.voltage_channel,
            a.current_channel
        )?;
        writeln!(
            out,
            "  frequency    {} | {} cycles, {} whole | uncertainties: k = {}, {} windows",
            pm(Some(q.frequency_hz), Some(u.frequency_hz), " Hz"),
            num(q.cycles, 4),
            q.whole_cycles,
            u.coverage_factor,
            u.windows,
        )?;
        let lag = q.character.map(|c| c.as_str()).unwrap_or("undefined");
        writeln!(
            out,
            "  phase angle  {} (DFT) | {} (zero crossing) | current {lag}",
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
        writeln!(
            out,
            "  {:<13}{:>22}{:>17}{:>16}{:>15}{:>7}",
            "", "rms", "fundamental", "THD", "dc", "crest"
        )?;
        writeln!(out, "{}", trace_row("voltage", "V", &q.voltage, &u.voltage))?;
        writeln!(out, "{}", trace_row("current", "A", &q.current, &u.current))?;
        let p = &q.power;
        writeln!(
            out,
            "  power        P {} | Q1 {} | S {} VA | P1 {} W | S1 {} VA",
            pm(Some(p.active_w), Some(u.power.active_w), " W"),
            pm(Some(p.reactive_var), Some(u.power.reactive_var), " var"),
            num(p.apparent_va, 6),
            num(p.fundamental_active_w, 6),
            num(p.fundamental_apparent_va, 6),
        )?;
        writeln!(
            out,
            "  distortion   SN {} VA | DI {} var | DV {} var | SH {} VA | N {} var",
            num(p.nonfundamental_apparent_va, 4),
            num(p.current_distortion_var, 4),
            num(p.voltage_distortion_var, 4),
            num(p.harmonic_apparent_va, 4),
            num(p.nonactive_var, 4),
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
        if let Some(e) = &a.expected {
            expected_block(out, e)?;
        }
        if a.warnings.is_empty() {
            writeln!(out, "  warnings     none")?;
        } else {
            for (k, w) in a.warnings.iter().enumerate() {
                let head = if k == 0 { "warnings" } else { "" };
                writeln!(out, "  {head:<13}- {w}")?;
            }
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
    let where_ = if e.margin_deg > 0.0 {
        format!("outside the band by {}°", num(e.margin_deg, 2))
    } else {
        format!("inside the band by {}°", num(-e.margin_deg, 2))
    };
    writeln!(
        out,
        "  verdict      {} (measured {} is {where_})",
        e.verdict.as_str().to_uppercase(),
        pm(
            Some(e.measured_phase_deg),
            Some(e.measured_uncertainty_deg),
            "°"
        ),
    )?;
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
}
