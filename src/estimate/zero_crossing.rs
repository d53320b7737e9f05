//! Zero-crossing phase: when a trace crosses its DC level, averaged over every cycle.
//!
//! A crossing is armed only after the trace has left a hysteresis band around its DC level
//! (so noise near zero gives one crossing, not many); its instant is where a least-squares cubic
//! through the samples inside the band, and one more on each side, meets the level (a plain cubic
//! interpolation through four samples when only the two straddling samples are inside). A line
//! through the straddling samples misses the crossing of a distorted waveform by
//! x''/(2x')·u(1−u)·Δ² for a sample spacing Δ (Taylor expansion of the waveform; the error of
//! linear interpolation, textbook numerical analysis): 0.15° at 40 samples per cycle on a current
//! with 12 % third and 6 % fifth harmonic, always of one sign, so averaging never removes it; the
//! cubic's error goes as Δ⁴. Rising and falling crossings are both used, the falling ones
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
    // First pass: where the trace crosses, as (last sample outside the band before, first one
    // outside after, falling).
    let hits = band_exits(y, level, band);
    // Second pass: each crossing placed by a cubic through the same number of samples (the
    // median span of that edge type, and one more on each side), centred on the line's root. A
    // window chosen by which noisy samples fall inside the band would pick samples by their
    // noise: on a record sampled in step with the fundamental (every cycle at the same sample
    // phase) that bias is the same in every cycle and does not average out (it doubled the
    // error of a 40 dB record at 80 samples per cycle).
    let points = |falling: bool| {
        let mut spans: Vec<usize> = hits
            .iter()
            .filter(|h| h.2 == falling)
            .map(|(a, b, _)| b - a + 1)
            .collect();
        spans.sort_unstable();
        spans.get(spans.len() / 2).map_or(4, |m| (m + 2).max(4))
    };
    let width = [points(false), points(true)];
    // each width's normal equations are the same for every crossing: eliminated once
    let cubics = width.map(Cubic::new);
    // Sums of cos and sin of the phases, rising [0] and falling [1] kept apart so that each edge
    // type weighs the same even when their counts differ by one.
    let mut sums = [(0.0f64, 0.0f64, 0usize); 2];
    let mut phases = Vec::with_capacity(hits.len());
    for &(first, last, falling) in &hits {
        let edge = usize::from(falling);
        let t = crossing_time(y, level, first, last, &cubics[edge]);
        let mut p = 2.0 * PI * f * t / fs;
        if falling {
            p -= PI; // falling: half a cycle after the rising one
        }
        sums[edge].0 += p.cos();
        sums[edge].1 += p.sin();
        sums[edge].2 += 1;
        phases.push(p);
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

/// Samples looked at together: a group wholly on the side the trace is already on is passed
/// over at once (most of a cycle), the others sample by sample.
const GROUP: usize = 8;

/// Where `y` crosses from one side of the band `level ± band` to the other: (last sample
/// outside the band before, first sample outside it after, whether it falls). Samples inside
/// the band are passed over (hysteresis).
fn band_exits(y: &[f64], level: f64, band: f64) -> Vec<(usize, usize, bool)> {
    let mut walk = BandWalk {
        state: 0,
        last_out: 0,
        hits: Vec::new(),
    };
    let groups = y.chunks_exact(GROUP);
    let tail = groups.remainder();
    let all = (1u32 << GROUP) - 1;
    for (g, c) in groups.enumerate() {
        // which samples of the group are above and below the band (branch-free, vectorised)
        let (mut above, mut below) = (0u32, 0u32);
        for (j, &raw) in c.iter().enumerate() {
            let x = raw - level;
            above |= u32::from(x >= band) << j;
            below |= u32::from(x <= -band) << j;
        }
        let k0 = g * GROUP;
        if (walk.state == 1 && above == all) || (walk.state == -1 && below == all) {
            walk.last_out = k0 + GROUP - 1;
            continue;
        }
        for (j, &raw) in c.iter().enumerate() {
            walk.step(k0 + j, raw - level, band);
        }
    }
    let k0 = y.len() - tail.len();
    for (j, &raw) in tail.iter().enumerate() {
        walk.step(k0 + j, raw - level, band);
    }
    walk.hits
}

/// [`band_exits`]' walk along the samples.
struct BandWalk {
    /// -1 below the band, +1 above, 0 not known yet.
    state: i8,
    /// The last sample outside the band.
    last_out: usize,
    hits: Vec<(usize, usize, bool)>,
}

impl BandWalk {
    /// Sample `k`, `x` from the level.
    #[inline]
    fn step(&mut self, k: usize, x: f64, band: f64) {
        let side = if x >= band {
            1
        } else if x <= -band {
            -1
        } else {
            return;
        };
        if self.state != 0 && side != self.state {
            self.hits.push((self.last_out, k, side < 0));
        }
        self.state = side;
        self.last_out = k;
    }
}

/// The least-squares cubic through `points` samples (centred at 0, x = offset/half-width, in
/// [−1, 1] so that the 4×4 normal equations stay well conditioned): the normal equations'
/// matrix depends on `points` alone, so its Gaussian elimination (partial pivoting) is done
/// once and each crossing's right-hand side follows the same steps. Every value is what
/// eliminating the whole augmented matrix per crossing gives, to the bit.
struct Cubic {
    points: usize,
    half: f64,
    /// The matrix after elimination (upper triangular); `None` when it is singular.
    upper: Option<[[f64; 4]; 4]>,
    /// The row swapped into place at each column.
    pivots: [usize; 4],
    /// The multiple of the pivot row taken from each row below it, by column.
    factors: [[f64; 4]; 4],
}

impl Cubic {
    fn new(points: usize) -> Self {
        let half = (points as f64 - 1.0) / 2.0;
        let mut a = [[0.0f64; 4]; 4];
        for k in 0..points {
            let p = Self::powers(k, half);
            for r in 0..4 {
                for c in 0..4 {
                    a[r][c] += p[r] * p[c];
                }
            }
        }
        let mut pivots = [0; 4];
        let mut factors = [[0.0; 4]; 4];
        let mut upper = Some(a);
        for col in 0..4 {
            let Some(pivot) = (col..4).max_by(|&r, &s| a[r][col].abs().total_cmp(&a[s][col].abs()))
            else {
                upper = None;
                break;
            };
            if a[pivot][col].abs() < 1e-300 {
                upper = None;
                break;
            }
            a.swap(col, pivot);
            pivots[col] = pivot;
            let pivot_row = a[col];
            for (r, row) in a.iter_mut().enumerate().skip(col + 1) {
                let f = row[col] / pivot_row[col];
                factors[col][r] = f;
                for (x, p) in row.iter_mut().zip(pivot_row).skip(col) {
                    *x -= f * p;
                }
            }
            upper = upper.map(|_| a);
        }
        Cubic {
            points,
            half,
            upper,
            pivots,
            factors,
        }
    }

    /// 1, x, x², x³ at sample `k` of the window.
    #[inline]
    fn powers(k: usize, half: f64) -> [f64; 4] {
        let x = (k as f64 - half) / half;
        [1.0, x, x * x, x * x * x]
    }

    /// The cubic's coefficients through the window `w` (`points` samples) less `level`.
    fn fit(&self, w: &[f64], level: f64) -> Option<[f64; 4]> {
        let upper = self.upper.as_ref()?;
        let mut b = [0.0f64; 4];
        for (k, v) in w.iter().enumerate() {
            let p = Self::powers(k, self.half);
            for r in 0..4 {
                b[r] += p[r] * (v - level);
            }
        }
        for col in 0..4 {
            b.swap(col, self.pivots[col]);
            for r in col + 1..4 {
                b[r] -= self.factors[col][r] * b[col];
            }
        }
        let mut x = [0.0; 4];
        for r in (0..4).rev() {
            let tail: f64 = (r + 1..4).map(|c| upper[r][c] * x[c]).sum();
            x[r] = (b[r] - tail) / upper[r][r];
        }
        x.iter().all(|v| v.is_finite()).then_some(x)
    }
}

/// Sample index where the least-squares cubic through `cubic.points` samples of `y` centred on
/// the crossing meets `level`; the crossing lies between `y[first]` and `y[last]`, which are on
/// opposite sides of the band. Falls back to the least-squares line through `y[first..=last]`
/// when the record is too short for the window or the cubic has no root there (noise can bend a
/// cubic through few points).
fn crossing_time(y: &[f64], level: f64, first: usize, last: usize, cubic: &Cubic) -> f64 {
    let points = cubic.points;
    let line = line_crossing(&y[first..=last], level) + first as f64;
    if y.len() < points || points < 4 {
        return line;
    }
    let start =
        ((line - (points as f64 - 1.0) / 2.0).round().max(0.0) as usize).min(y.len() - points);
    let w = &y[start..start + points];
    let half = cubic.half;
    let centre = start as f64 + half;
    let rel = |index: f64| (index - centre) / half;
    let Some(c) = cubic.fit(w, level) else {
        return line;
    };
    let value = |x: f64| c[0] + x * (c[1] + x * (c[2] + x * c[3]));
    let slope = |x: f64| c[1] + x * (2.0 * c[2] + x * 3.0 * c[3]);
    // Newton's method from the line's root, kept between the straddling samples.
    let (lo, hi) = (rel(first as f64), rel(last as f64));
    let mut x = rel(line);
    for _ in 0..30 {
        let d = slope(x);
        if d == 0.0 || !d.is_finite() {
            return line;
        }
        let step = value(x) / d;
        x -= step;
        if !(lo..=hi).contains(&x) {
            return line;
        }
        if step.abs() < 1e-13 {
            break;
        }
    }
    // a root where the cubic turns back is noise, not a crossing
    if value(lo) * value(hi) > 0.0 {
        return line;
    }
    centre + x * half
}

/// Sample offset (from the start of `w`) where the line through `w` meets `level`.
fn line_crossing(w: &[f64], level: f64) -> f64 {
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

    /// The cubic eliminated once per width gives, to the bit, what eliminating each crossing's
    /// augmented normal equations afresh gives (Gaussian elimination with partial pivoting, as
    /// it was done per crossing before).
    #[test]
    fn the_cubic_eliminated_once_matches_a_fresh_elimination() {
        fn fresh(w: &[f64], level: f64) -> Option<[f64; 4]> {
            let half = (w.len() as f64 - 1.0) / 2.0;
            let mut a = [[0.0f64; 5]; 4];
            for (k, v) in w.iter().enumerate() {
                let x = (k as f64 - half) / half;
                let p = [1.0, x, x * x, x * x * x];
                for r in 0..4 {
                    for c in 0..4 {
                        a[r][c] += p[r] * p[c];
                    }
                    a[r][4] += p[r] * (v - level);
                }
            }
            for col in 0..4 {
                let pivot =
                    (col..4).max_by(|&r, &s| a[r][col].abs().total_cmp(&a[s][col].abs()))?;
                if a[pivot][col].abs() < 1e-300 {
                    return None;
                }
                a.swap(col, pivot);
                let pivot_row = a[col];
                for row in a.iter_mut().skip(col + 1) {
                    let f = row[col] / pivot_row[col];
                    for (x, p) in row.iter_mut().zip(pivot_row).skip(col) {
                        *x -= f * p;
                    }
                }
            }
            let mut x = [0.0; 4];
            for r in (0..4).rev() {
                let tail: f64 = (r + 1..4).map(|c| a[r][c] * x[c]).sum();
                x[r] = (a[r][4] - tail) / a[r][r];
            }
            x.iter().all(|v| v.is_finite()).then_some(x)
        }
        for points in 4..=12 {
            let cubic = Cubic::new(points);
            for start in 0..20 {
                let w: Vec<f64> = (0..points)
                    .map(|k| ((start * 7 + k * 3) as f64 * 0.37).sin() * 2.0 - 0.3)
                    .collect();
                let bits = |c: Option<[f64; 4]>| c.map(|c| c.map(f64::to_bits));
                assert_eq!(
                    bits(cubic.fit(&w, 0.1)),
                    bits(fresh(&w, 0.1)),
                    "{points} {start}"
                );
                assert!(cubic.fit(&w, 0.1).is_some());
            }
        }
    }

    /// The grouped walk finds the crossings the plain one (sample by sample, as it was written
    /// before groups were passed over) finds, on noisy sines of several rates and bands, lengths
    /// that leave a tail, and samples exactly on the band's edges.
    #[test]
    fn grouped_band_walk_finds_what_the_plain_walk_finds() {
        fn plain(y: &[f64], level: f64, band: f64) -> Vec<(usize, usize, bool)> {
            let mut walk = BandWalk {
                state: 0,
                last_out: 0,
                hits: Vec::new(),
            };
            for (k, &raw) in y.iter().enumerate() {
                walk.step(k, raw - level, band);
            }
            walk.hits
        }
        let mut seed = 7u64;
        let mut noise = || {
            seed = seed
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (seed >> 11) as f64 / (1u64 << 53) as f64 - 0.5
        };
        for (n, per_cycle, noise_amp, band) in [
            (1000usize, 40.0, 0.0, 0.03),
            (1003, 40.0, 0.2, 0.1),
            (20_011, 200.0, 0.05, 0.03),
            (5_005, 7.3, 0.3, 0.25),
            (64, 16.0, 0.0, 1.0),
        ] {
            let y: Vec<f64> = (0..n)
                .map(|k| (2.0 * PI * k as f64 / per_cycle).sin() + 0.1 + noise_amp * noise())
                .collect();
            let hits = band_exits(&y, 0.1, band);
            assert_eq!(hits, plain(&y, 0.1, band), "{n} {per_cycle}");
            assert!(!hits.is_empty() || band >= 1.0);
        }
        // on the edges exactly: x >= band is above, x <= -band below
        let y = [0.5, 0.5, -0.5, 0.0, 0.5, -0.5, -0.5, -0.5, -0.5, 0.5, 0.2];
        assert_eq!(band_exits(&y, 0.0, 0.5), plain(&y, 0.0, 0.5));
        assert_eq!(band_exits(&y, 0.0, 0.5).len(), 4);
    }

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
