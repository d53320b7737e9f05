//! A readable summary per capture, with units.

use super::Exporter;
use crate::analysis::Analysis;
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

fn opt(x: Option<f64>, sig: usize, unit: &str) -> String {
    match x {
        Some(v) => format!("{}{unit}", num(v, sig)),
        None => "n/a".into(),
    }
}

fn trace_row(name: &str, unit: &str, t: &TraceFigures) -> String {
    format!(
        "  {name:<13}{:>12} {unit:<2}{:>12} {unit:<2}{:>10}{:>12} {unit:<2}{:>8}",
        num(t.rms, 6),
        num(t.fundamental_rms, 6),
        opt(t.thd_percent, 3, " %"),
        num(t.dc, 3),
        num(t.crest_factor, 3),
    )
}

impl Exporter for TableExporter {
    fn write(&mut self, out: &mut dyn Write, a: &Analysis) -> io::Result<()> {
        let q = &a.quantities;
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
            "  frequency    {} Hz ± {} Hz (1σ) | {} cycles, {} whole",
            num(q.frequency_hz, 8),
            num(a.estimate.frequency_sigma_hz, 2),
            num(q.cycles, 4),
            q.whole_cycles
        )?;
        let lag = q.character.map(|c| c.as_str()).unwrap_or("undefined");
        writeln!(
            out,
            "  phase angle  {} (DFT, ±{}° 1σ) | {} (zero crossing) | current {lag}",
            opt(q.phase_angle_dft_deg, 5, "°"),
            num(q.phase_angle_dft_sigma_deg, 2),
            opt(q.phase_angle_zero_crossing_deg, 5, "°"),
        )?;
        writeln!(
            out,
            "  power factor displacement {} | true {}",
            opt(q.displacement_pf, 5, ""),
            opt(q.true_pf, 5, ""),
        )?;
        writeln!(
            out,
            "  {:<13}{:>15}{:>15}{:>10}{:>15}{:>8}",
            "", "rms", "fundamental", "THD", "dc", "crest"
        )?;
        writeln!(out, "{}", trace_row("voltage", "V", &q.voltage))?;
        writeln!(out, "{}", trace_row("current", "A", &q.current))?;
        let p = &q.power;
        writeln!(
            out,
            "  power        P {} W | Q1 {} var | S {} VA | P1 {} W | S1 {} VA",
            num(p.active_w, 6),
            num(p.reactive_var, 6),
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
}
