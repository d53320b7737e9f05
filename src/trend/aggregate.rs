//! Aggregation of consecutive windows into longer intervals (IEC 61000-4-30 class A, from
//! memory: 150 cycles at 50 Hz, 180 at 60 Hz, about 3 s, from the 10/12-cycle values).
//!
//! How each quantity aggregates:
//! - RMS values (V, I and their fundamentals) and THD: the quadratic mean `√(Σx²/n)`, the
//!   standard's rule for RMS quantities and harmonic values;
//! - P, P1, Q1 and S: the arithmetic mean weighted by each window's duration (the energy over the
//!   interval divided by its duration);
//! - frequency: cycles over duration (the windows' cycles summed, over their summed duration);
//! - true PF: the aggregated P over the aggregated S; displacement PF and the DFT angle: from the
//!   aggregated P1 and Q1 (`atan2(Q1, P1)`); the zero-crossing angle: the circular mean;
//! - a three-phase total: as its parts (P, P1, Q1, S means; PFe = P/Se of the means).
//!
//! A window with no figures (its analysis failed) makes its interval's figures absent too: an
//! aggregate over part of an interval would not be the interval's. The windows after the last
//! whole interval are left out and counted.

use super::{PhaseFigures, TotalFigures, WindowFigures};

/// Seconds of the aggregation interval IEC 61000-4-30 names "150/180 cycles" (about 3 s).
pub const THREE_SECONDS: f64 = 3.0;

/// The quadratic mean `√(Σx²/n)` (IEC 61000-4-30's aggregation of RMS quantities); `None` for
/// no values.
pub fn quadratic_mean(x: &[f64]) -> Option<f64> {
    if x.is_empty() {
        return None;
    }
    Some((x.iter().map(|v| v * v).sum::<f64>() / x.len() as f64).sqrt())
}

/// How many windows of `window_cycles` make an interval of 150 cycles (50 Hz) or 180 (60 Hz):
/// `Err` with the reason when they do not divide it.
pub fn windows_per_interval(window_cycles: usize, frequency_hz: f64) -> Result<usize, String> {
    let interval = (THREE_SECONDS * if frequency_hz < 55.0 { 50.0 } else { 60.0 }).round() as usize;
    if window_cycles == 0 || !interval.is_multiple_of(window_cycles) {
        return Err(format!(
            "--aggregate 3s takes {interval} cycles at this frequency, which windows of \
             {window_cycles} cycles do not divide: choose --window-cycles among the divisors of \
             {interval} (10 or 12 by default)"
        ));
    }
    Ok(interval / window_cycles)
}

/// Consecutive groups of `per` windows aggregated, and the number of windows after the last
/// whole group (left out).
pub fn aggregate(rows: &[WindowFigures], per: usize) -> (Vec<WindowFigures>, usize) {
    let per = per.max(1);
    let groups = rows.len() / per;
    let out = (0..groups)
        .map(|g| interval(g, &rows[g * per..(g + 1) * per]))
        .collect();
    (out, rows.len() - groups * per)
}

fn weighted_mean(parts: &[(f64, f64)]) -> f64 {
    let w: f64 = parts.iter().map(|p| p.1).sum();
    parts.iter().map(|(x, d)| x * d).sum::<f64>() / w
}

fn interval(index: usize, rows: &[WindowFigures]) -> WindowFigures {
    let first = &rows[0];
    let last = &rows[rows.len() - 1];
    let duration: f64 = rows.iter().map(|r| r.end_s - r.start_s).sum();
    let cycles: f64 = rows.iter().map(|r| r.cycles).sum();
    let mut out = WindowFigures {
        index,
        windows: rows.iter().map(|r| r.windows).sum(),
        start_s: first.start_s,
        end_s: last.end_s,
        cycles,
        frequency_hz: cycles / duration,
        phases: Err(String::new()),
        total: None,
        warning_codes: Vec::new(),
    };
    for r in rows {
        for c in &r.warning_codes {
            if !out.warning_codes.contains(c) {
                out.warning_codes.push(c);
            }
        }
    }
    let mut phases = Vec::new();
    for r in rows {
        match &r.phases {
            Ok(p) => phases.push(p),
            Err(e) => {
                out.phases = Err(format!("window at {:.3} s has no figures: {e}", r.start_s));
                return out;
            }
        }
    }
    let durations: Vec<f64> = rows.iter().map(|r| r.end_s - r.start_s).collect();
    let count = phases[0].len();
    if phases.iter().any(|p| p.len() != count) {
        out.phases = Err("the windows hold different phases".into());
        return out;
    }
    out.phases = Ok((0..count)
        .map(|k| {
            let each: Vec<&PhaseFigures> = phases.iter().map(|p| &p[k].1).collect();
            (phases[0][k].0, phase_interval(&each, &durations))
        })
        .collect());
    if rows.iter().all(|r| r.total.is_some()) {
        let totals: Vec<TotalFigures> = rows.iter().filter_map(|r| r.total).collect();
        let mean = |f: &dyn Fn(&TotalFigures) -> f64| {
            let parts: Vec<(f64, f64)> = totals
                .iter()
                .zip(&durations)
                .map(|(t, d)| (f(t), *d))
                .collect();
            weighted_mean(&parts)
        };
        let p = mean(&|t| t.active_w);
        let se = mean(&|t| t.effective_apparent_va);
        out.total = Some(TotalFigures {
            active_w: p,
            fundamental_active_w: mean(&|t| t.fundamental_active_w),
            reactive_var: mean(&|t| t.reactive_var),
            arithmetic_apparent_va: mean(&|t| t.arithmetic_apparent_va),
            effective_apparent_va: se,
            effective_pf: (se > 0.0).then(|| p / se),
        });
    }
    out
}

fn phase_interval(each: &[&PhaseFigures], durations: &[f64]) -> PhaseFigures {
    let mean = |f: &dyn Fn(&PhaseFigures) -> f64| {
        let parts: Vec<(f64, f64)> = each
            .iter()
            .zip(durations)
            .map(|(x, d)| (f(x), *d))
            .collect();
        weighted_mean(&parts)
    };
    let quad = |f: &dyn Fn(&PhaseFigures) -> f64| {
        quadratic_mean(&each.iter().map(|x| f(x)).collect::<Vec<f64>>()).unwrap_or(0.0)
    };
    let quad_opt = |f: &dyn Fn(&PhaseFigures) -> Option<f64>| {
        let x: Option<Vec<f64>> = each.iter().map(|x| f(x)).collect();
        x.and_then(|x| quadratic_mean(&x))
    };
    let p = mean(&|x| x.active_w);
    let p1 = mean(&|x| x.fundamental_active_w);
    let q1 = mean(&|x| x.reactive_var);
    let s = mean(&|x| x.apparent_va);
    let s1 = p1.hypot(q1);
    let defined = each.iter().all(|x| x.angle_dft_deg.is_some());
    let zc: Option<Vec<f64>> = each.iter().map(|x| x.angle_zero_crossing_deg).collect();
    PhaseFigures {
        angle_dft_deg: (defined && s1 > 0.0).then(|| q1.atan2(p1).to_degrees()),
        angle_zero_crossing_deg: zc.map(|a| {
            let (s, c) = a.iter().fold((0.0, 0.0), |(s, c), d| {
                let (ds, dc) = d.to_radians().sin_cos();
                (s + ds, c + dc)
            });
            s.atan2(c).to_degrees()
        }),
        displacement_pf: (defined && s1 > 0.0).then(|| p1 / s1),
        true_pf: (each.iter().all(|x| x.true_pf.is_some()) && s > 0.0).then(|| p / s),
        voltage_rms: quad(&|x| x.voltage_rms),
        voltage_fundamental_rms: quad(&|x| x.voltage_fundamental_rms),
        voltage_thd_percent: quad_opt(&|x| x.voltage_thd_percent),
        current_rms: quad(&|x| x.current_rms),
        current_fundamental_rms: quad(&|x| x.current_fundamental_rms),
        current_thd_percent: quad_opt(&|x| x.current_thd_percent),
        active_w: p,
        fundamental_active_w: p1,
        reactive_var: q1,
        apparent_va: s,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::capture::Phase;

    /// IEC 61000-4-30's quadratic mean on the worked example of references §10 [computed]:
    /// 10 windows at 230 V and 5 at 207 V aggregate to √((10·230² + 5·207²)/15) = 222.60 V.
    #[test]
    fn ten_windows_at_230_v_and_five_at_207_v_aggregate_to_222_60_v() {
        let mut x = vec![230.0; 10];
        x.extend([207.0; 5]);
        let want = ((10.0 * 230.0f64.powi(2) + 5.0 * 207.0f64.powi(2)) / 15.0).sqrt();
        let got = quadratic_mean(&x).unwrap();
        assert!((got - want).abs() < 1e-12);
        assert_eq!(format!("{got:.2}"), "222.60");
        // the same through a whole interval of window rows
        let rows: Vec<WindowFigures> = x
            .iter()
            .enumerate()
            .map(|(k, &v)| WindowFigures {
                index: k,
                windows: 1,
                start_s: k as f64 * 0.2,
                end_s: (k + 1) as f64 * 0.2,
                cycles: 10.0,
                frequency_hz: 50.0,
                phases: Ok(vec![(
                    Phase::A,
                    PhaseFigures {
                        voltage_rms: v,
                        active_w: v,
                        ..PhaseFigures::default()
                    },
                )]),
                total: None,
                warning_codes: Vec::new(),
            })
            .collect();
        let per = windows_per_interval(10, 50.0).unwrap();
        assert_eq!(per, 15);
        let (agg, rest) = aggregate(&rows, per);
        assert_eq!((agg.len(), rest), (1, 0));
        let a = &agg[0].phases.as_ref().unwrap()[0].1;
        assert!((a.voltage_rms - want).abs() < 1e-9);
        // P is an arithmetic mean, not a quadratic one
        assert!((a.active_w - (10.0 * 230.0 + 5.0 * 207.0) / 15.0).abs() < 1e-9);
        assert!((agg[0].frequency_hz - 50.0).abs() < 1e-12);
        assert_eq!(agg[0].windows, 15);
    }

    #[test]
    fn windows_that_do_not_divide_the_interval_are_refused() {
        assert_eq!(windows_per_interval(12, 60.0), Ok(15));
        assert!(windows_per_interval(7, 50.0).is_err());
    }
}
