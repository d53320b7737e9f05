//! The band of phase angles a circuit's part tolerances allow, and the part value that explains
//! a measured angle.
//!
//! - [`worst_case`]: the lowest and highest angle anywhere in the tolerance box (every part
//!   anywhere between its limits), found by a search over the whole box, not only its corners:
//!   near resonance the angle is not monotonic in the part values.
//! - [`monte_carlo`]: the distribution of the angle when the parts are drawn at random within
//!   their tolerances (propagation of distributions, JCGM 101:2008), seeded and reproducible.
//! - [`part_value_for_angle`]: the value of one part, the others nominal, that gives a measured
//!   angle ("the capacitor would have to be 20 % low").
//!
//! Angles are θ = arg(Z) in degrees, positive when the current lags ([`phase_deg`]).

use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::StandardNormal;

use crate::check::circuit::{Circuit, phase_deg};
use rustfft::num_complex::Complex64;

/// The range of phase angles the tolerances allow, and the part values at each extreme.
#[derive(Debug, Clone, PartialEq)]
pub struct Band {
    /// The lowest angle in degrees.
    pub low_deg: f64,
    /// The highest angle in degrees.
    pub high_deg: f64,
    /// The part values (SI units, one per part) that give `low_deg`.
    pub low_values: Vec<f64>,
    /// The part values (SI units, one per part) that give `high_deg`.
    pub high_values: Vec<f64>,
}

impl Band {
    /// True if `angle_deg` lies within the band.
    pub fn contains(&self, angle_deg: f64) -> bool {
        self.low_deg <= angle_deg && angle_deg <= self.high_deg
    }
}

/// Evaluations allowed for the starting grid of [`worst_case`] (all corners are in it while
/// 2^d fits).
const GRID_BUDGET: usize = 4096;
/// Random starting points added to the grid, from a fixed seed so the result is repeatable.
const RANDOM_STARTS: usize = 256;
/// Starting points refined for each of the minimum and the maximum.
const REFINED_STARTS: usize = 4;
/// The pattern search stops when its step is this fraction of the tolerance interval.
const FINEST_STEP: f64 = 1e-12;

/// The tolerance box in unit coordinates: part `free[k]` is `lo + u[k] · (hi − lo)`.
struct ToleranceBox<'a> {
    circuit: &'a Circuit,
    frequency_hz: f64,
    /// What is searched: a figure of the network's impedance (its angle, its magnitude).
    objective: fn(Complex64) -> f64,
    free: Vec<usize>,
    lo: Vec<f64>,
    hi: Vec<f64>,
    values: Vec<f64>,
}

impl<'a> ToleranceBox<'a> {
    fn new(circuit: &'a Circuit, frequency_hz: f64, objective: fn(Complex64) -> f64) -> Self {
        let lo: Vec<f64> = circuit.parts.iter().map(|p| p.low_value()).collect();
        let hi: Vec<f64> = circuit.parts.iter().map(|p| p.high_value()).collect();
        let free = (0..lo.len()).filter(|&i| hi[i] > lo[i]).collect();
        ToleranceBox {
            circuit,
            frequency_hz,
            objective,
            free,
            lo,
            hi,
            values: circuit.nominal_values(),
        }
    }

    fn set(&mut self, u: &[f64]) {
        for (k, &i) in self.free.iter().enumerate() {
            self.values[i] = self.lo[i] + u[k] * (self.hi[i] - self.lo[i]);
        }
    }

    fn value(&mut self, u: &[f64]) -> f64 {
        self.set(u);
        (self.objective)(self.circuit.impedance(&self.values, self.frequency_hz))
    }

    fn values_at(&mut self, u: &[f64]) -> Vec<f64> {
        self.set(u);
        self.values.clone()
    }

    /// Compass (pattern) search for the largest `sign · angle`, clamped to the box: try a step
    /// up and down along each axis, keep any improvement, halve the step when none helps.
    fn refine(&mut self, mut u: Vec<f64>, mut best: f64, sign: f64) -> (f64, Vec<f64>) {
        let mut step = 0.25;
        while step > FINEST_STEP {
            let mut improved = false;
            for k in 0..u.len() {
                for dir in [1.0, -1.0] {
                    let old = u[k];
                    let trial = (old + dir * step).clamp(0.0, 1.0);
                    if trial == old {
                        continue;
                    }
                    u[k] = trial;
                    let v = sign * self.value(&u);
                    if v > best {
                        best = v;
                        improved = true;
                        break;
                    }
                    u[k] = old;
                }
            }
            if !improved {
                step *= 0.5;
            }
        }
        (best, u)
    }
}

/// The few best points seen so far for one objective, best first.
struct Leaders {
    sign: f64,
    points: Vec<(f64, Vec<f64>)>,
}

impl Leaders {
    fn offer(&mut self, angle: f64, u: &[f64]) {
        let score = self.sign * angle;
        if !score.is_finite() {
            return;
        }
        if self.points.len() == REFINED_STARTS
            && self.points.last().is_some_and(|(s, _)| score <= *s)
        {
            return;
        }
        let at = self.points.partition_point(|(s, _)| *s >= score);
        self.points.insert(at, (score, u.to_vec()));
        self.points.truncate(REFINED_STARTS);
    }
}

/// The lowest and highest phase angle at `frequency_hz` over the whole tolerance box.
///
/// Method: a regular grid through the box as fine as a budget of 4096 points allows (with two
/// points per part it is all 2^d corners, which fit for up to 12 parts with a tolerance; beyond
/// that 4096 corners are drawn at random), the centre and 256 seeded random points; then a
/// compass search with shrinking steps (down to 1e-12 of each tolerance interval) from the four
/// best points for the minimum and the four best for the maximum.
///
/// Exact when the angle is monotonic in every part (the extreme is a corner, and corners are
/// always tried while 2^d ≤ 4096, i.e. up to 12 parts with a tolerance); finds interior extremes
/// near resonance. Like any search it cannot prove a global extreme in a box of many parts with
/// several narrow peaks. Parts with zero tolerance stay at their nominal value.
pub fn worst_case(circuit: &Circuit, frequency_hz: f64) -> Band {
    search(circuit, frequency_hz, phase_deg)
}

/// The lowest and highest impedance magnitude |Z| in ohms at `frequency_hz` over the whole
/// tolerance box, by the same search as [`worst_case`] (the `Band`'s `_deg` fields hold ohms).
pub fn worst_case_impedance(circuit: &Circuit, frequency_hz: f64) -> Band {
    search(circuit, frequency_hz, |z| z.norm())
}

/// The search behind [`worst_case`] and [`worst_case_impedance`], for any figure of Z.
fn search(circuit: &Circuit, frequency_hz: f64, objective: fn(Complex64) -> f64) -> Band {
    let mut tb = ToleranceBox::new(circuit, frequency_hz, objective);
    let d = tb.free.len();
    let mut low = Leaders {
        sign: -1.0,
        points: Vec::new(),
    };
    let mut high = Leaders {
        sign: 1.0,
        points: Vec::new(),
    };
    let mut offer = |tb: &mut ToleranceBox<'_>, u: &[f64]| {
        let a = tb.value(u);
        low.offer(a, u);
        high.offer(a, u);
    };

    let mut u = vec![0.5; d];
    offer(&mut tb, &u);
    // The largest k with k^d within the budget: k = 2 is the corners alone.
    let k = (2..=65usize)
        .take_while(|&k| (k as f64).powi(d as i32) <= GRID_BUDGET as f64)
        .last();
    let mut rng = ChaCha8Rng::seed_from_u64(0x746f_6c65_7261_6e63);
    match k {
        Some(k) => {
            let mut digits = vec![0usize; d];
            loop {
                for (x, &g) in u.iter_mut().zip(&digits) {
                    *x = g as f64 / (k - 1) as f64;
                }
                offer(&mut tb, &u);
                // Next grid point, like an odometer in base k.
                let Some(j) = digits.iter().position(|&g| g + 1 < k) else {
                    break;
                };
                digits[j] += 1;
                digits[..j].iter_mut().for_each(|g| *g = 0);
            }
        }
        None => {
            for _ in 0..GRID_BUDGET {
                u.iter_mut()
                    .for_each(|x| *x = if rng.random::<bool>() { 1.0 } else { 0.0 });
                offer(&mut tb, &u);
            }
        }
    }
    for _ in 0..RANDOM_STARTS {
        u.iter_mut().for_each(|x| *x = rng.random::<f64>());
        offer(&mut tb, &u);
    }

    let extreme = |tb: &mut ToleranceBox<'_>, leaders: Leaders| {
        let mut best: Option<(f64, Vec<f64>)> = None;
        for (score, start) in leaders.points {
            let (s, u) = tb.refine(start, score, leaders.sign);
            if best.as_ref().is_none_or(|(b, _)| s > *b) {
                best = Some((s, u));
            }
        }
        let (score, u) = best.unwrap_or((f64::NAN, vec![0.5; d]));
        (leaders.sign * score, tb.values_at(&u))
    };
    let (low_deg, low_values) = extreme(&mut tb, low);
    let (high_deg, high_values) = extreme(&mut tb, high);
    Band {
        low_deg,
        high_deg,
        low_values,
        high_values,
    }
}

/// How each part's value is drawn within its tolerance in [`monte_carlo`].
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Distribution {
    /// Uniform between the tolerance limits: the rectangular distribution JCGM 100 assigns to
    /// limits with nothing more known. The default.
    #[default]
    Uniform,
    /// Normal, centred on the middle of the tolerance interval with the limits at ±3σ, and
    /// truncated to the interval (draws outside are redrawn). The middle differs from the
    /// nominal value when the tolerance is asymmetric (−5 %/+10 % is centred at +2.5 %).
    Normal,
}

/// The most draws [`monte_carlo`] makes: their angles are held together to find the
/// percentiles, 8 bytes each (80 MB at this bound). Ten times what JCGM 101 suggests for a 95 %
/// interval to two significant digits.
pub const MAX_DRAWS: usize = 10_000_000;

/// Settings for [`monte_carlo`].
#[derive(Debug, Clone, PartialEq)]
pub struct MonteCarloConfig {
    /// Number of random circuits drawn (at least one, at most [`MAX_DRAWS`]).
    pub draws: usize,
    /// Seed of the random generator (ChaCha8): the same seed gives the same result.
    pub seed: u64,
    /// How part values are drawn.
    pub distribution: Distribution,
}

impl Default for MonteCarloConfig {
    /// 100 000 draws (JCGM 101 suggests 10^6 for a 95 % interval to two significant digits;
    /// 10^5 is plenty for a bench decision), seed 1, uniform.
    fn default() -> Self {
        MonteCarloConfig {
            draws: 100_000,
            seed: 1,
            distribution: Distribution::Uniform,
        }
    }
}

/// Equal-width bins of angles, for a later plot.
#[derive(Debug, Clone, PartialEq)]
pub struct Histogram {
    /// Lower edge of the first bin, degrees.
    pub low_deg: f64,
    /// Upper edge of the last bin, degrees.
    pub high_deg: f64,
    /// Number of draws per bin; the last bin includes its upper edge.
    pub counts: Vec<usize>,
}

impl Histogram {
    /// Number of bins in [`MonteCarloResult::histogram`].
    pub const BINS: usize = 50;

    /// Width of one bin in degrees (0 when every draw gave the same angle).
    pub fn bin_width_deg(&self) -> f64 {
        (self.high_deg - self.low_deg) / self.counts.len().max(1) as f64
    }
}

/// The distribution of the phase angle over random circuits within tolerance.
#[derive(Debug, Clone, PartialEq)]
pub struct MonteCarloResult {
    /// Number of circuits drawn.
    pub draws: usize,
    /// Mean angle, degrees.
    pub mean_deg: f64,
    /// Sample standard deviation (n − 1), degrees; 0 for a single draw.
    pub std_deg: f64,
    /// (p, angle) pairs: the angle below which p % of draws fall, for p in
    /// [`MonteCarloResult::PERCENTILES`]. Linear interpolation between sorted draws (the usual
    /// "type 7" definition). 2.5 and 97.5 bound the probabilistically symmetric 95 % coverage
    /// interval of JCGM 101; 0.135 and 99.865 correspond to ±3σ of a normal distribution.
    pub percentiles: Vec<(f64, f64)>,
    /// Smallest angle drawn, degrees.
    pub min_deg: f64,
    /// Largest angle drawn, degrees.
    pub max_deg: f64,
    /// Angles in [`Histogram::BINS`] bins over [min, max].
    pub histogram: Histogram,
}

impl MonteCarloResult {
    /// The percentiles reported, in percent.
    pub const PERCENTILES: [f64; 9] = [0.135, 2.5, 5.0, 25.0, 50.0, 75.0, 95.0, 97.5, 99.865];

    /// The angle at percentile `p` if it is one of [`MonteCarloResult::PERCENTILES`].
    pub fn percentile(&self, p: f64) -> Option<f64> {
        self.percentiles
            .iter()
            .find(|(q, _)| *q == p)
            .map(|&(_, a)| a)
    }
}

/// Draws `cfg.draws` circuits with every part at random within its tolerance (parts with zero
/// tolerance stay nominal) and summarises their phase angles at `frequency_hz`: the propagation
/// of distributions of JCGM 101:2008.
///
/// Reproducible: the same circuit, frequency and config give the same result on the same
/// platform (normal draws go through the platform's `ln`/`sqrt`, so another libm may differ in
/// the last bits). One buffer of angles is allocated up front; nothing is allocated per draw.
pub fn monte_carlo(
    circuit: &Circuit,
    frequency_hz: f64,
    cfg: &MonteCarloConfig,
) -> MonteCarloResult {
    let draws = cfg.draws.clamp(1, MAX_DRAWS);
    let mut rng = ChaCha8Rng::seed_from_u64(cfg.seed);
    let limits: Vec<(usize, f64, f64)> = circuit
        .parts
        .iter()
        .enumerate()
        .filter(|(_, p)| p.high_value() > p.low_value())
        .map(|(i, p)| (i, p.low_value(), p.high_value()))
        .collect();
    let mut values = circuit.nominal_values();
    let mut angles = Vec::with_capacity(draws);
    for _ in 0..draws {
        for &(i, lo, hi) in &limits {
            values[i] = draw(&mut rng, lo, hi, cfg.distribution);
        }
        angles.push(phase_deg(circuit.impedance(&values, frequency_hz)));
    }
    summarise(angles)
}

fn draw(rng: &mut ChaCha8Rng, lo: f64, hi: f64, distribution: Distribution) -> f64 {
    match distribution {
        Distribution::Uniform => lo + (hi - lo) * rng.random::<f64>(),
        Distribution::Normal => {
            let (mid, sigma) = (0.5 * (lo + hi), (hi - lo) / 6.0);
            loop {
                let z: f64 = rng.sample(StandardNormal);
                if z.abs() <= 3.0 {
                    return mid + sigma * z;
                }
            }
        }
    }
}

fn summarise(mut angles: Vec<f64>) -> MonteCarloResult {
    let n = angles.len();
    // Summed as deviations from the first draw: exact for constant data, less rounding overall.
    let shift = angles[0];
    let mean = shift + angles.iter().map(|a| a - shift).sum::<f64>() / n as f64;
    let var = if n > 1 {
        angles.iter().map(|a| (a - mean).powi(2)).sum::<f64>() / (n - 1) as f64
    } else {
        0.0
    };
    angles.sort_unstable_by(f64::total_cmp);
    let (min, max) = (angles[0], angles[n - 1]);
    let percentiles = MonteCarloResult::PERCENTILES
        .iter()
        .map(|&p| (p, percentile_sorted(&angles, p)))
        .collect();
    let mut counts = vec![0usize; Histogram::BINS];
    let width = (max - min) / Histogram::BINS as f64;
    for &a in &angles {
        let bin = if width > 0.0 {
            (((a - min) / width) as usize).min(Histogram::BINS - 1)
        } else {
            0
        };
        counts[bin] += 1;
    }
    MonteCarloResult {
        draws: n,
        mean_deg: mean,
        std_deg: var.sqrt(),
        percentiles,
        min_deg: min,
        max_deg: max,
        histogram: Histogram {
            low_deg: min,
            high_deg: max,
            counts,
        },
    }
}

/// Percentile `p` (in percent) of sorted data, interpolating linearly between order statistics
/// at rank (n − 1)·p/100 (Hyndman and Fan's type 7).
fn percentile_sorted(sorted: &[f64], p: f64) -> f64 {
    let rank = (sorted.len() - 1) as f64 * p / 100.0;
    let below = rank.floor() as usize;
    let above = (below + 1).min(sorted.len() - 1);
    let t = rank - below as f64;
    sorted[below] + t * (sorted[above] - sorted[below])
}

/// Decades searched either side of the nominal value by [`part_value_for_angle`].
const SEARCH_DECADES: f64 = 3.0;
/// Scan points per decade before bisection.
const SEARCH_POINTS_PER_DECADE: usize = 100;
/// A bracketed root whose angle misses the target by more than this is a jump through a pole,
/// not a solution.
const ROOT_CHECK_DEG: f64 = 1e-6;

/// The value of part `part` (SI units), every other part nominal, that gives `target_deg` at
/// `frequency_hz`; when several values do, the one nearest the nominal (by ratio). `None` when
/// no value between 1/1000 and 1000 times the nominal does, or for an index out of range or a
/// target that is not finite.
///
/// Method: a scan of 100 points per decade over ±3 decades around the nominal, then bisection in
/// log value on each sign change of (angle − target), keeping only true crossings.
pub fn part_value_for_angle(
    circuit: &Circuit,
    part: usize,
    frequency_hz: f64,
    target_deg: f64,
) -> Option<f64> {
    let nominal = circuit.parts.get(part)?.nominal;
    if !target_deg.is_finite() {
        return None;
    }
    let mut values = circuit.nominal_values();
    let mut miss = |log_ratio: f64| {
        values[part] = nominal * 10f64.powf(log_ratio);
        phase_deg(circuit.impedance(&values, frequency_hz)) - target_deg
    };
    let half = (SEARCH_DECADES * SEARCH_POINTS_PER_DECADE as f64) as i64;
    let at = |k: i64| k as f64 / SEARCH_POINTS_PER_DECADE as f64;
    let mut best: Option<f64> = None;
    let mut keep = |log_ratio: f64| {
        if best.is_none_or(|b: f64| log_ratio.abs() < b.abs()) {
            best = Some(log_ratio);
        }
    };
    let mut prev = (at(-half), miss(at(-half)));
    for k in (-half + 1)..=half {
        let cur = (at(k), miss(at(k)));
        if prev.1 == 0.0 {
            keep(prev.0);
        } else if prev.1 * cur.1 < 0.0 {
            let root = crate::check::circuit::bisect(prev, cur, &mut miss);
            if miss(root).abs() <= ROOT_CHECK_DEG {
                keep(root);
            }
        }
        prev = cur;
    }
    if prev.1 == 0.0 {
        keep(prev.0);
    }
    best.map(|log_ratio| nominal * 10f64.powf(log_ratio))
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::f64::consts::PI;
    use std::path::Path;

    /// Agreement of two evaluations of the same closed-form expression in double precision.
    const CLOSE: f64 = 1e-9;

    fn circuit(text: &str) -> Circuit {
        match Circuit::parse(text, Path::new("test.toml")) {
            Ok(c) => c,
            Err(e) => panic!("model should parse: {e}"),
        }
    }

    const RL: &str = "network = \"R1 + L1\"\n[parts.R1]\nvalue = \"100 ohm\"\ntolerance = \"±5%\"\n\
                      [parts.L1]\nvalue = \"0.5 H\"\ntolerance = \"±10%\"";

    const SERIES_RLC: &str = "network = \"R1 + L1 + C1\"\n[parts.R1]\nvalue = \"50 ohm\"\n\
                              tolerance = \"±5%\"\n[parts.L1]\nvalue = \"200 mH\"\ntolerance = \"±10%\"\n\
                              [parts.C1]\nvalue = \"100 uF\"\ntolerance = \"-5%/+10%\"";

    /// (R1 + L1) || C1 above its resonance. Its admittance angle is
    /// tan φ = ωC·R + k/R with k = ωL(ω²LC − 1) (textbook admittance of a lossy coil in parallel
    /// with a capacitor, rearranged), which is smallest at R* = √(k/(ωC)) ≈ 22.07 Ω, inside
    /// 22 Ω ±20 %: the impedance angle θ = −φ has its maximum inside the tolerance box.
    const INTERIOR: &str = "network = \"(R1 + L1) || C1\"\n[parts.R1]\nvalue = \"22 ohm\"\n\
                            tolerance = \"±20%\"\n[parts.L1]\nvalue = \"100 mH\"\ntolerance = \"±5%\"\n\
                            [parts.C1]\nvalue = \"200 uF\"\ntolerance = \"±5%\"";

    fn angle(c: &Circuit, values: &[f64], f: f64) -> f64 {
        phase_deg(c.impedance(values, f))
    }

    #[test]
    fn the_rl_band_is_the_handbook_formula_at_the_corners() {
        // Textbook θ = atan(ωL/R), monotonic: lowest at L low and R high, highest at L high and
        // R low; references §7 gives [53.40°, 61.20°].
        let c = circuit(RL);
        let band = worst_case(&c, 50.0);
        let w = 2.0 * PI * 50.0;
        let low = (w * 0.5 * 0.9 / (100.0 * 1.05)).atan().to_degrees();
        let high = (w * 0.5 * 1.1 / (100.0 * 0.95)).atan().to_degrees();
        assert!((band.low_deg - low).abs() < CLOSE, "{band:?}");
        assert!((band.high_deg - high).abs() < CLOSE, "{band:?}");
        assert!((band.low_deg - 53.40).abs() < 5e-3 && (band.high_deg - 61.20).abs() < 5e-3);
        assert!(
            (band.low_values[0] - 105.0).abs() < CLOSE && (band.low_values[1] - 0.45).abs() < CLOSE
        );
        assert!(
            (band.high_values[0] - 95.0).abs() < CLOSE
                && (band.high_values[1] - 0.55).abs() < CLOSE
        );
        assert!(band.contains(57.518));
    }

    #[test]
    fn an_interior_extreme_near_resonance_is_found() {
        let c = circuit(INTERIOR);
        let f = 50.0;
        let band = worst_case(&c, f);
        // Brute force over a fine grid of the whole box, and over the corners alone.
        let (lo, hi): (Vec<f64>, Vec<f64>) = c
            .parts
            .iter()
            .map(|p| (p.low_value(), p.high_value()))
            .unzip();
        let n = 60;
        let at = |i: usize, k: usize| lo[i] + (hi[i] - lo[i]) * k as f64 / n as f64;
        let (mut grid_min, mut grid_max) = (f64::INFINITY, f64::NEG_INFINITY);
        let mut corner_max = f64::NEG_INFINITY;
        for a in 0..=n {
            for b in 0..=n {
                for d in 0..=n {
                    let th = angle(&c, &[at(0, a), at(1, b), at(2, d)], f);
                    grid_min = grid_min.min(th);
                    grid_max = grid_max.max(th);
                    if [a, b, d].iter().all(|&k| k == 0 || k == n) {
                        corner_max = corner_max.max(th);
                    }
                }
            }
        }
        // The search is at least as good as the grid and not better than possible by more than
        // the grid's coarseness allows.
        assert!(
            band.high_deg >= grid_max - CLOSE && band.high_deg < grid_max + 0.01,
            "{band:?} {grid_max}"
        );
        assert!(
            band.low_deg <= grid_min + CLOSE && band.low_deg > grid_min - 0.01,
            "{band:?} {grid_min}"
        );
        assert!(
            band.high_deg > corner_max + 0.05,
            "the extreme must be interior: {corner_max}"
        );
        // The extreme values reproduce the extreme angles and lie in the box.
        assert!((angle(&c, &band.high_values, f) - band.high_deg).abs() < CLOSE);
        assert!((angle(&c, &band.low_values, f) - band.low_deg).abs() < CLOSE);
        // R sits where the formula puts it, for the L and C found.
        let (r, l, cap) = (
            band.high_values[0],
            band.high_values[1],
            band.high_values[2],
        );
        let w = 2.0 * PI * f;
        let k = w * l * (w * w * l * cap - 1.0);
        let r_star = (k / (w * cap)).sqrt();
        assert!(r > lo[0] * 1.05 && r < hi[0] * 0.95, "{r}");
        assert!((r / r_star - 1.0).abs() < 1e-4, "{r} vs {r_star}");
    }

    #[test]
    fn parts_without_tolerance_give_a_single_angle() {
        let c = circuit(
            "network = \"R1 + L1\"\n[parts.R1]\nvalue = \"100 ohm\"\n[parts.L1]\nvalue = \"0.5 H\"",
        );
        let band = worst_case(&c, 50.0);
        let nominal = phase_deg(c.nominal_impedance(50.0));
        assert_eq!((band.low_deg, band.high_deg), (nominal, nominal));
        let mc = monte_carlo(
            &c,
            50.0,
            &MonteCarloConfig {
                draws: 10,
                ..Default::default()
            },
        );
        assert_eq!(
            (mc.min_deg, mc.max_deg, mc.std_deg),
            (nominal, nominal, 0.0)
        );
        assert_eq!(mc.histogram.counts.iter().sum::<usize>(), 10);
    }

    #[test]
    fn monte_carlo_is_reproducible_with_a_seed() {
        let c = circuit(SERIES_RLC);
        let cfg = MonteCarloConfig {
            draws: 5_000,
            seed: 7,
            distribution: Distribution::Uniform,
        };
        let a = monte_carlo(&c, 50.0, &cfg);
        let b = monte_carlo(&c, 50.0, &cfg);
        assert_eq!(a, b);
        let other = monte_carlo(
            &c,
            50.0,
            &MonteCarloConfig {
                seed: 8,
                ..cfg.clone()
            },
        );
        assert_ne!(a.mean_deg, other.mean_deg);
        let normal = MonteCarloConfig {
            distribution: Distribution::Normal,
            ..cfg
        };
        assert_eq!(
            monte_carlo(&c, 50.0, &normal),
            monte_carlo(&c, 50.0, &normal)
        );
    }

    #[test]
    fn monte_carlo_stays_inside_the_worst_case_band() {
        for text in [SERIES_RLC, RL, INTERIOR] {
            let c = circuit(text);
            let band = worst_case(&c, 50.0);
            for distribution in [Distribution::Uniform, Distribution::Normal] {
                let cfg = MonteCarloConfig {
                    draws: 20_000,
                    seed: 3,
                    distribution,
                };
                let mc = monte_carlo(&c, 50.0, &cfg);
                assert!(mc.min_deg >= band.low_deg - CLOSE && mc.max_deg <= band.high_deg + CLOSE);
                for &(p, a) in &mc.percentiles {
                    assert!(band.contains(a), "p{p} = {a} outside {band:?}");
                }
                let p = |q| mc.percentile(q).unwrap_or(f64::NAN);
                assert!(p(0.135) <= p(2.5) && p(2.5) <= p(50.0) && p(50.0) <= p(97.5));
                assert!(p(97.5) <= p(99.865));
                assert_eq!(mc.histogram.counts.iter().sum::<usize>(), mc.draws);
                assert_eq!(mc.histogram.counts.len(), Histogram::BINS);
            }
        }
    }

    #[test]
    fn uniform_percentiles_follow_the_part_quantiles() {
        // One uniform part: the angle is monotonic in L, so its p-quantile is the angle at
        // L_p = L_lo + p·(L_hi − L_lo) (quantiles map through monotonic functions; textbook).
        // Sampling error of a quantile is √(p(1−p)/n) of the interval (common practice); 5×.
        let c = circuit(
            "network = \"R1 + L1\"\n[parts.R1]\nvalue = \"100 ohm\"\n[parts.L1]\nvalue = \"0.5 H\"\ntolerance = \"±10%\"",
        );
        let n = 100_000;
        let mc = monte_carlo(
            &c,
            50.0,
            &MonteCarloConfig {
                draws: n,
                seed: 11,
                distribution: Distribution::Uniform,
            },
        );
        let w = 2.0 * PI * 50.0;
        for &(p, a) in &mc.percentiles {
            let q = p / 100.0;
            let quantile = |q: f64| (w * (0.45 + 0.1 * q) / 100.0).atan().to_degrees();
            let err = 5.0 * (q * (1.0 - q) / n as f64).sqrt().max(1.0 / n as f64);
            let slack = quantile((q + err).min(1.0)) - quantile((q - err).max(0.0));
            assert!(
                (a - quantile(q)).abs() <= slack,
                "p{p}: {a} vs {}",
                quantile(q)
            );
        }
    }

    #[test]
    fn normal_draws_spread_less_than_uniform_ones() {
        // Limits at ±3σ, truncated: σ_trunc = σ·√(1 − 6φ(3)/(2Φ(3) − 1)) = 0.98658σ with
        // σ = width/6; uniform: width/√12 (textbook). For a near-linear angle the ratio of the
        // angle spreads is the ratio of the part spreads: 0.98658·√12/6 = 0.5696.
        let c = circuit(
            "network = \"R1 + L1\"\n[parts.R1]\nvalue = \"100 ohm\"\n[parts.L1]\nvalue = \"0.5 H\"\ntolerance = \"±1%\"",
        );
        let cfg = MonteCarloConfig {
            draws: 100_000,
            seed: 5,
            distribution: Distribution::Uniform,
        };
        let uniform = monte_carlo(&c, 50.0, &cfg);
        let normal = monte_carlo(
            &c,
            50.0,
            &MonteCarloConfig {
                distribution: Distribution::Normal,
                ..cfg
            },
        );
        let ratio = normal.std_deg / uniform.std_deg;
        let expected = (1.0f64 - 6.0 * 0.004431848 / 0.9973002).sqrt() * 12f64.sqrt() / 6.0;
        assert!((ratio - expected).abs() < 0.01, "{ratio} vs {expected}");
        let nominal = phase_deg(c.nominal_impedance(50.0));
        assert!((normal.percentile(50.0).unwrap_or(f64::NAN) - nominal).abs() < 0.01);
    }

    #[test]
    fn zero_draws_still_draws_one() {
        let c = circuit(RL);
        let mc = monte_carlo(
            &c,
            50.0,
            &MonteCarloConfig {
                draws: 0,
                seed: 1,
                distribution: Distribution::Uniform,
            },
        );
        assert_eq!(mc.draws, 1);
        assert_eq!(mc.min_deg, mc.max_deg);
        assert_eq!(mc.std_deg, 0.0);
    }

    #[test]
    fn a_capacitor_20_percent_low_is_recovered_from_its_angle() {
        // Textbook series RLC angle with C = 80 µF instead of 100 µF.
        let c = circuit(SERIES_RLC);
        let w = 2.0 * PI * 50.0;
        let measured = ((w * 0.2 - 1.0 / (w * 80e-6)) / 50.0).atan().to_degrees();
        let found = part_value_for_angle(&c, 2, 50.0, measured);
        assert!(
            found.is_some_and(|v| (v / 80e-6 - 1.0).abs() < 1e-9),
            "{found:?}"
        );
        // And the resistor that would explain the same angle with C nominal (θ = atan(X/R)).
        let x = w * 0.2 - 1.0 / (w * 100e-6);
        let r = x / measured.to_radians().tan();
        let found = part_value_for_angle(&c, 0, 50.0, measured);
        assert!(
            found.is_some_and(|v| (v / r - 1.0).abs() < 1e-9),
            "{found:?} vs {r}"
        );
    }

    #[test]
    fn an_angle_no_value_can_give_is_none() {
        // An R + L network can never lead, whatever L is.
        let c = circuit(RL);
        assert_eq!(part_value_for_angle(&c, 1, 50.0, -10.0), None);
        assert_eq!(part_value_for_angle(&c, 5, 50.0, 30.0), None);
        assert_eq!(part_value_for_angle(&c, 1, 50.0, f64::NAN), None);
    }

    #[test]
    fn of_two_values_that_fit_the_one_nearer_nominal_is_chosen() {
        // In INTERIOR, tan φ(R) = ωC·R + k/R takes the same value at R and R*²/R, so the angle
        // at R = 30 Ω is also reached at R*²/30 ≈ 16.2 Ω; from nominal 15 Ω that one is nearer.
        let text = INTERIOR.replace("\"22 ohm\"", "\"15 ohm\"");
        let c = circuit(&text);
        let f = 50.0;
        let w = 2.0 * PI * f;
        let k = w * 0.1 * (w * w * 0.1 * 200e-6 - 1.0);
        let r_star_sq = k / (w * 200e-6);
        let target = angle(&c, &[30.0, 0.1, 200e-6], f);
        let found = part_value_for_angle(&c, 0, f, target);
        assert!(
            found.is_some_and(|v| (v / (r_star_sq / 30.0) - 1.0).abs() < 1e-9),
            "{found:?}"
        );
        let from_above = INTERIOR.replace("\"22 ohm\"", "\"33 ohm\"");
        let found = part_value_for_angle(&circuit(&from_above), 0, f, target);
        assert!(
            found.is_some_and(|v| (v / 30.0 - 1.0).abs() < 1e-9),
            "{found:?}"
        );
    }
}
