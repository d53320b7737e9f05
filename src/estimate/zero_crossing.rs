//! Zero-crossing phase: when a trace crosses its DC level, averaged over every cycle.
//!
//! A crossing is armed only after the trace has left a hysteresis band around its DC level
//! (so noise near zero gives one crossing, not many); its instant is where a least-squares line
//! through the samples inside the band meets the level (plain linear interpolation when only the
//! two straddling samples are there). Rising and falling crossings are both used, the falling ones
//! half a cycle late, so a residual DC offset that moves them in opposite directions cancels
//! (common practice). Each crossing becomes a phase `2π·f·t` (mod 2π); their circular mean is the
//! channel's crossing phase, and the scatter of the individual phases its standard uncertainty.

use std::f64::consts::PI;

/// The crossing phase of one trace.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CrossingPhase {
    /// Mean phase of the rising crossings, `2π·f·t_rise` (mod 2π), radians.
    pub phase_rad: f64,
    /// Standard uncertainty of the mean, radians (scatter / √count).
    pub sigma_rad: f64,
    /// Number of crossings used (rising and falling).
    pub count: usize,
}

/// Crossing phase of `y` (sampled at `fs`, fundamental `f` Hz) about `level`, with a hysteresis
/// half-width `band`. `None` with fewer than two crossings.
pub fn crossing_phase(y: &[f64], fs: f64, f: f64, level: f64, band: f64) -> Option<CrossingPhase> {
    let mut state: i8 = 0; // -1 below the band, +1 above, 0 not known yet
    let mut last_out = 0usize; // last sample outside the band
    // Sums of cos and sin of the phases, rising [0] and falling [1] kept apart so that each edge
    // type weighs the same even when their counts differ by one.
    let mut sums = [(0.0f64, 0.0f64, 0usize); 2];
    let mut phases = Vec::new();
    for (k, &raw) in y.iter().enumerate() {
        let x = raw - level;
        let side = if x >= band {
            1
        } else if x <= -band {
            -1
        } else {
            continue;
        };
        if state != 0 && side != state {
            let t = crossing_time(&y[last_out..=k], level) + last_out as f64;
            let mut p = 2.0 * PI * f * t / fs;
            let edge = usize::from(side < 0);
            if side < 0 {
                p -= PI; // falling: half a cycle after the rising one
            }
            sums[edge].0 += p.cos();
            sums[edge].1 += p.sin();
            sums[edge].2 += 1;
            phases.push(p);
        }
        state = side;
        last_out = k;
    }
    let count = phases.len();
    if count < 2 {
        return None;
    }
    let (mut sc, mut ss) = (0.0, 0.0);
    for (c, s, n) in sums {
        if n > 0 {
            sc += c / n as f64;
            ss += s / n as f64;
        }
    }
    let mean = ss.atan2(sc);
    let var: f64 = phases
        .iter()
        .map(|p| {
            let d = super::frequency::wrap(p - mean);
            d * d
        })
        .sum::<f64>()
        / (count - 1) as f64;
    Some(CrossingPhase {
        phase_rad: mean.rem_euclid(2.0 * PI),
        sigma_rad: (var / count as f64).sqrt(),
        count,
    })
}

/// Sample offset (from the start of `w`) where the line through `w` meets `level`.
fn crossing_time(w: &[f64], level: f64) -> f64 {
    let n = w.len();
    if n == 2 {
        let (a, b) = (w[0] - level, w[1] - level);
        return a / (a - b);
    }
    let nf = n as f64;
    let mx = (nf - 1.0) / 2.0;
    let my = w.iter().sum::<f64>() / nf - level;
    let (mut sxy, mut sxx) = (0.0, 0.0);
    for (k, v) in w.iter().enumerate() {
        let dx = k as f64 - mx;
        sxy += dx * (v - level - my);
        sxx += dx * dx;
    }
    let slope = sxy / sxx;
    if slope == 0.0 {
        return mx;
    }
    (mx - my / slope).clamp(0.0, nf - 1.0)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A sine `sin(ωt)` rises through zero at t = 0: phase 0.
    #[test]
    fn a_sine_rises_at_phase_zero() {
        let fs = 1000.0;
        let f = 50.0 / 1.0003;
        let y: Vec<f64> = (0..700)
            .map(|k| (2.0 * PI * f * k as f64 / fs).sin())
            .collect();
        let c = crossing_phase(&y, fs, f, 0.0, 0.05).unwrap();
        let p = super::super::frequency::wrap(c.phase_rad);
        assert!(p.abs() < 1e-3, "{p}");
        assert!(c.count >= 60);
    }

    /// DC offset of 1 % of peak moves the two edges by ±0.573° (references §4); the average of
    /// both edges cancels it.
    #[test]
    fn dc_offset_cancels_between_rising_and_falling_edges() {
        let fs = 100_000.0;
        let f = 50.0;
        let y: Vec<f64> = (0..20_000)
            .map(|k| (2.0 * PI * f * k as f64 / fs).sin() + 0.01)
            .collect();
        let c = crossing_phase(&y, fs, f, 0.0, 0.05).unwrap();
        let p = super::super::frequency::wrap(c.phase_rad).to_degrees();
        assert!(p.abs() < 0.01, "{p}");
        // and the scatter shows the ±0.573° edges
        let spread = (c.sigma_rad * (c.count as f64).sqrt()).to_degrees();
        assert!((spread - 0.573).abs() < 0.02, "{spread}");
    }
}
