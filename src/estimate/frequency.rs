//! Fundamental frequency: a coarse estimate from a Hann-windowed FFT with two-point
//! interpolation, refined by the phase slope of harmonic fits across sub-records.
//!
//! Coarse: interpolated DFT with the periodic Hann window, `δ = (2α − 1)/(α + 1)` with
//! `α = |X(k±1)| / |X(k)|` (Grandke's two-point formula). A peak that is really a harmonic is
//! caught by looking for a sizeable peak at 1/2, 1/3 and 1/4 of its frequency.
//!
//! Refinement: the record is cut into sub-records (two for short records, about five cycles each
//! for long ones); each is fitted with DC and all harmonics ([`super::fit`]) at the current
//! estimate; the fundamental's phase, less the phase the estimate predicts, grows linearly in time
//! by `2π·Δf`. A least-squares line through those phases gives Δf. Two halves reach within 15 %
//! of the Cramér-Rao bound's standard deviation; many sub-records approach it.

use super::fit::Basis;
use rayon::prelude::*;
use realfft::{RealFftPlanner, RealToComplex};
use rustfft::num_complex::Complex64;
use std::f64::consts::PI;
use std::sync::Arc;

/// Harmonic order of the sub-record fits when they span whole cycles.
pub const REFINE_ORDER: usize = 15;

/// FFT plans kept per thread, the most recently used first: a batch of captures of one length
/// (or a few) plans its FFT once instead of once per capture, and a batch of captures of all
/// different lengths holds no more than this many plans (a planner that kept every plan grew by
/// about 0.6 MB per distinct length: 300 lengths took 199 MB).
const PLANS_KEPT: usize = 4;

/// A plan and the length it is for.
type Plan = (usize, Arc<dyn RealToComplex<f64>>);

thread_local! {
    static PLANS: std::cell::RefCell<Vec<Plan>> = const { std::cell::RefCell::new(Vec::new()) };
}

/// A forward real-to-complex FFT of length `n` (half the work of a complex FFT of the same
/// length, bins 0 to n/2 alike), from this thread's few kept plans or planned afresh (a planner
/// of its own, dropped with everything it cached but the plan itself).
fn forward_plan(n: usize) -> Arc<dyn RealToComplex<f64>> {
    PLANS.with(|plans| {
        let mut plans = plans.borrow_mut();
        let plan = match plans.iter().position(|(len, _)| *len == n) {
            Some(at) => plans.remove(at).1,
            None => RealFftPlanner::new().plan_fft_forward(n),
        };
        plans.insert(0, (n, Arc::clone(&plan)));
        plans.truncate(PLANS_KEPT);
        plan
    })
}

/// How many FFT plans this thread holds (for the test that they stay bounded).
#[cfg(test)]
fn plans_held() -> usize {
    PLANS.with(|p| p.borrow().len())
}

/// Largest FFT the coarse search uses.
pub const COARSE_FFT_MAX: usize = 1 << 18;
/// Cycles the first [`COARSE_FFT_MAX`] samples of a longer record must hold for the search on
/// that span to be trusted.
const SPAN_MIN_CYCLES: f64 = 8.0;

/// A coarse frequency in Hz from the spectrum of `y` sampled at `fs`, or `None` when no peak
/// stands out of the noise (or the record holds fewer than two cycles of anything).
///
/// A record longer than [`COARSE_FFT_MAX`] samples is searched on its first `COARSE_FFT_MAX`
/// samples at the full rate, which cannot alias (the bins are fine enough for the refinement:
/// it needs the phase between sub-records, at most 1/64 of the record apart, to move by less than
/// half a cycle). Only when that span holds too few cycles (a fast scope's record of a slow
/// fundamental) is the whole record block-averaged down to `COARSE_FFT_MAX` points; by then the
/// fundamental is below `SPAN_MIN_CYCLES·fs/COARSE_FFT_MAX`, far under the averaged record's
/// Nyquist frequency for any record under 2^32 samples. (Block-averaging every long record
/// aliased the fundamental of records longer than about 2^18/(2f) seconds: 39 min at 50 Hz.)
pub fn coarse(y: &[f64], fs: f64) -> Option<f64> {
    if y.len() <= COARSE_FFT_MAX {
        return spectrum_peak(y, fs);
    }
    let span_s = COARSE_FFT_MAX as f64 / fs;
    if let Some(f) = spectrum_peak(&y[..COARSE_FFT_MAX], fs)
        && f * span_s >= SPAN_MIN_CYCLES
    {
        return Some(f);
    }
    let factor = y.len().div_ceil(COARSE_FFT_MAX);
    let fsd = fs / factor as f64;
    spectrum_peak(&crate::condition::decimate(y, factor), fsd)
        // a peak the full-rate span should have seen is an alias of something faster
        .filter(|f| f * span_s < 2.0 * SPAN_MIN_CYCLES && *f < 0.25 * fsd)
}

/// The interpolated Hann-DFT peak of the whole of `x` sampled at `fs`.
fn spectrum_peak(x: &[f64], fs: f64) -> Option<f64> {
    let n = x.len();
    if n < 16 {
        return None;
    }
    // the plan (its twiddles cost more than the transform) made while the window is applied
    let (plan, mut windowed) = rayon::join(|| forward_plan(n), || hann_windowed(x));
    let mut buf = plan.make_output_vec();
    plan.process(&mut windowed, &mut buf).ok()?;
    drop(windowed);
    // the magnitude as the root of the squared norm: much cheaper than `hypot`, and no sample
    // here is large enough for the square to overflow (see `MAX_MAGNITUDE`)
    let mag: Vec<f64> = buf[..n / 2].iter().map(|c| c.norm_sqr().sqrt()).collect();
    let first = 2; // below two bins: DC leakage of the window, and under two cycles
    if mag.len() <= first + 2 {
        return None;
    }
    let peak = (first..mag.len() - 1).max_by(|&a, &b| mag[a].total_cmp(&mag[b]))?;
    // The peak must stand well above the spectrum's median (noise floor).
    let mut rest = mag[first..].to_vec();
    let mid = rest.len() / 2;
    let median = *rest.select_nth_unstable_by(mid, f64::total_cmp).1;
    if !(mag[peak] > 10.0 * median) {
        return None;
    }
    // A sizeable peak at a sub-multiple means `peak` is a harmonic.
    let mut k = peak;
    for d in [4usize, 3, 2] {
        let centre = (peak as f64 / d as f64).round() as usize;
        if centre < first {
            continue;
        }
        let lo = centre.saturating_sub(1).max(first);
        let hi = (centre + 1).min(mag.len() - 2);
        if let Some(c) = (lo..=hi).max_by(|&a, &b| mag[a].total_cmp(&mag[b]))
            && mag[c] >= 0.2 * mag[peak]
            && mag[c] >= mag[c - 1]
            && mag[c] >= mag[c + 1]
        {
            k = c;
            break;
        }
    }
    let (left, right) = (mag[k - 1], mag[k + 1]);
    let delta = if right >= left {
        let a = right / mag[k];
        (2.0 * a - 1.0) / (a + 1.0)
    } else {
        let a = left / mag[k];
        -(2.0 * a - 1.0) / (a + 1.0)
    };
    Some((k as f64 + delta.clamp(-1.0, 1.0)) * fs / n as f64)
}

/// `x` less its mean, times the periodic Hann window `0.5 − 0.5·cos(2πk/n)`.
fn hann_windowed(x: &[f64]) -> Vec<f64> {
    let n = x.len();
    let mean = x.iter().sum::<f64>() / n as f64;
    // the cosine by rotation, taken afresh every 1024 samples so rounding cannot build up
    let step = Complex64::from_polar(1.0, 2.0 * PI / n as f64);
    let mut z = Complex64::new(1.0, 0.0);
    x.iter()
        .enumerate()
        .map(|(k, v)| {
            if k % 1024 == 0 {
                z = Complex64::from_polar(1.0, 2.0 * PI * k as f64 / n as f64);
            }
            let w = 0.5 - 0.5 * z.re;
            z *= step;
            (v - mean) * w
        })
        .collect()
}

/// The refined frequency and what its uncertainty follows from.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Refined {
    /// Frequency, Hz.
    pub hz: f64,
    /// Number of sub-records used in the last pass.
    pub segments: usize,
    /// Samples in each sub-record.
    pub segment_len: usize,
    /// Σ (t_s − t̄)² over the sub-records' centre times, s²: the slope of phases of standard
    /// uncertainty σ_φ at those times has σ_φ/√Σ(t_s − t̄)² (least-squares line, textbook).
    pub centre_spread_s2: f64,
}

impl Refined {
    /// The frequency's standard uncertainty, Hz, for a fundamental phase of standard uncertainty
    /// `phase_sigma_rad` in each sub-record: σ_f = σ_φ/(2π·√Σ(t_s − t̄)²). With two halves of
    /// the record this is 2/√3 = 1.15 times the Cramér-Rao bound (references §4), the estimator's
    /// own cost, which a budget at the bound leaves out.
    pub fn sigma_hz(&self, phase_sigma_rad: f64) -> f64 {
        if self.centre_spread_s2 > 0.0 {
            phase_sigma_rad / (2.0 * PI * self.centre_spread_s2.sqrt())
        } else {
            f64::INFINITY
        }
    }
}

/// Refines `f0` (Hz) on `y` sampled at `fs`, modelling harmonics up to `order`.
pub fn refine(y: &[f64], fs: f64, f0: f64, order: usize) -> Refined {
    let n = y.len();
    let cycles = n as f64 * f0 / fs;
    let segments = ((cycles / 5.0).floor() as usize).clamp(2, 64);
    // Sub-records of a whole number of cycles where the record allows: every one then sees the
    // harmonics at the same phase relative to the fundamental, so whatever leaks from harmonics
    // left out of the fit shifts every sub-record's phase alike and cancels in the slope. That
    // lets long records be refined with a low order.
    let per_seg = (cycles / segments as f64).floor();
    let whole = per_seg >= 2.0;
    let seg_len = if whole {
        ((per_seg * fs / f0).round() as usize).min(n / segments)
    } else {
        n / segments
    };
    // The order a sub-record can carry: 2H+1 unknowns need clearly more samples.
    let order = order.min(seg_len.saturating_sub(4) / 3).max(1);
    let order = if whole {
        order.min(REFINE_ORDER)
    } else {
        order
    };
    let mut f = f0;
    let mut spread = 0.0;
    for _ in 0..8 {
        let theta = 2.0 * PI * f / fs;
        let mut basis = Basis::new(theta, order);
        basis.prepare(seg_len, order);
        // the sub-records' fits side by side (two cores when free), in order
        let fits: Vec<Option<f64>> = (0..segments)
            .into_par_iter()
            .map(|s| {
                let fit = basis.fit_shared(&y[s * seg_len..(s + 1) * seg_len])?;
                Some(fit.amplitudes[0].arg())
            })
            .collect();
        let mut ts = Vec::with_capacity(segments);
        let mut ph = Vec::with_capacity(segments);
        for (s, arg) in fits.into_iter().enumerate() {
            let Some(arg) = arg else {
                return Refined {
                    hz: f,
                    segments,
                    segment_len: seg_len,
                    centre_spread_s2: spread,
                };
            };
            let centre = s as f64 * seg_len as f64 + (seg_len as f64 - 1.0) / 2.0;
            // Phase of the fundamental at the sub-record centre, less what f predicts.
            ts.push(centre / fs);
            ph.push(arg - theta * centre);
        }
        // Unwrap step by step and fit a line.
        for k in 1..ph.len() {
            let d = wrap(ph[k] - ph[k - 1]);
            ph[k] = ph[k - 1] + d;
        }
        let slope = line_slope(&ts, &ph);
        let mt = ts.iter().sum::<f64>() / ts.len() as f64;
        spread = ts.iter().map(|t| (t - mt) * (t - mt)).sum();
        let df = slope / (2.0 * PI);
        f += df;
        // far below any accuracy asked of it (the clean-signal target is 1e-6 relative)
        if df.abs() < 1e-10 * f {
            break;
        }
    }
    Refined {
        hz: f,
        segments,
        segment_len: seg_len,
        centre_spread_s2: spread,
    }
}

/// Wraps an angle in radians into (−π, π].
pub fn wrap(a: f64) -> f64 {
    let w = a.rem_euclid(2.0 * PI);
    if w > PI { w - 2.0 * PI } else { w }
}

fn line_slope(x: &[f64], y: &[f64]) -> f64 {
    let n = x.len() as f64;
    let mx = x.iter().sum::<f64>() / n;
    let my = y.iter().sum::<f64>() / n;
    let sxy: f64 = x.iter().zip(y).map(|(a, b)| (a - mx) * (b - my)).sum();
    let sxx: f64 = x.iter().map(|a| (a - mx) * (a - mx)).sum();
    sxy / sxx
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A batch of captures of 300 different lengths once kept a plan for each (199 MB for 300
    /// 20 000-sample WAVs against 11 MB for equal lengths): the plans held stay few, and a plan
    /// taken from the kept ones gives what a fresh one gives.
    #[test]
    fn fft_plans_of_many_lengths_are_not_all_kept() {
        // one worker thread: the plans are made (and kept) on the thread looked at
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(1)
            .build()
            .unwrap();
        pool.install(|| {
            let fs = 10_000.0;
            let first = coarse(&wave(20_000, fs, 50.0), fs);
            for k in 0..300 {
                let n = 20_000 + 7 * k;
                let f = coarse(&wave(n, fs, 50.0), fs).unwrap();
                assert!((f - 50.0).abs() < 0.5, "{n}: {f}");
                assert!(plans_held() <= PLANS_KEPT);
            }
            assert_eq!(plans_held(), PLANS_KEPT);
            // planned afresh after being dropped, then taken from the kept plans: the same bits
            assert_eq!(coarse(&wave(20_000, fs, 50.0), fs), first);
            assert_eq!(coarse(&wave(20_000, fs, 50.0), fs), first);
        });
    }

    fn wave(n: usize, fs: f64, f: f64) -> Vec<f64> {
        (0..n)
            .map(|k| {
                let t = k as f64 / fs;
                (2.0 * PI * f * t).sin() + 0.3 * (2.0 * PI * 3.0 * f * t + 1.0).sin() + 0.2
            })
            .collect()
    }

    #[test]
    fn coarse_finds_an_off_nominal_fundamental_within_a_few_percent_of_a_bin() {
        let fs = 10_000.0;
        let y = wave(10_000, fs, 59.93);
        let f = coarse(&y, fs).unwrap();
        assert!((f - 59.93).abs() < 0.05, "{f}");
    }

    #[test]
    fn coarse_prefers_the_fundamental_to_a_larger_harmonic() {
        let fs = 5_000.0;
        let y: Vec<f64> = (0..5000)
            .map(|k| {
                let t = k as f64 / fs;
                0.6 * (2.0 * PI * 50.0 * t).sin() + (2.0 * PI * 150.0 * t).sin()
            })
            .collect();
        let f = coarse(&y, fs).unwrap();
        assert!((f - 50.0).abs() < 0.5, "{f}");
    }

    #[test]
    fn refine_reaches_double_precision_on_a_clean_three_cycle_record() {
        let fs = 7_000.0;
        let f_true = 50.0 * 1.001_37;
        let n = (3.3 * fs / f_true) as usize;
        let y = wave(n, fs, f_true);
        let f0 = coarse(&y, fs).unwrap();
        let r = refine(&y, fs, f0, 10);
        assert!(
            ((r.hz - f_true) / f_true).abs() < 1e-9,
            "{} vs {f_true}",
            r.hz
        );
    }

    /// Long records: 2 370 s at 1 kS/s (once "no fundamental", the averaged record's Nyquist
    /// frequency fell on 50 Hz) and a fast scope's 600 000 samples at 5 MS/s holding 6 cycles
    /// (the first 2^18 samples hold 2.6: the whole record is averaged down).
    #[test]
    fn coarse_finds_the_fundamental_of_long_records() {
        for (fs, f, n) in [(1_000.0, 50.0, 2_370_000), (5e6, 50.0, 600_000)] {
            let y = wave(n, fs, f);
            let found = coarse(&y, fs).unwrap();
            let bin = fs / n.min(COARSE_FFT_MAX) as f64;
            assert!((found - f).abs() < 0.5 * bin.max(fs / n as f64), "{found}");
        }
    }

    #[test]
    fn noise_alone_has_no_frequency() {
        use rand::SeedableRng;
        use rand_distr::Distribution;
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(7);
        let normal = rand_distr::Normal::new(0.0, 1.0).unwrap();
        let y: Vec<f64> = (0..4096).map(|_| normal.sample(&mut rng)).collect();
        assert_eq!(coarse(&y, 10_000.0), None);
    }
}
