//! Estimation: fundamental frequency, harmonic phasors and zero-crossing phases.
//!
//! Input: two scaled traces and their sample rate. Output: an [`Estimate`].
//!
//! 1. Coarse frequency from an interpolated Hann DFT ([`frequency::coarse`]).
//! 2. When the record is heavily oversampled it is block-averaged (exact, known gain per
//!    harmonic, no phase change at block centres; [`crate::condition::decimate`]).
//! 3. The frequency is refined by the phase slope of harmonic fits across sub-records
//!    ([`frequency::refine`]).
//! 4. DC and harmonics 1..H of both traces are fitted by least squares at that frequency
//!    ([`fit::fit`], IEEE Std 1057 sine fit extended to harmonics), giving RMS phasors that stay
//!    exact on a non-integer number of cycles.
//! 5. Independently, the zero-crossing phase of each raw trace ([`zero_crossing`]).

pub mod fit;
pub mod frequency;
pub mod simd;
pub mod zero_crossing;

use crate::condition::{block_average_gain, decimate, whole_cycles};
use crate::warning::Trace;
use rustfft::num_complex::Complex64;
use std::borrow::Cow;
use std::f64::consts::{PI, SQRT_2};
use std::ops::Range;
pub use zero_crossing::CrossingPhase;

/// Harmonic orders fitted at least (when the sample rate allows), whatever is reported: unmodelled
/// harmonics would leak into the fundamental on a non-integer record.
pub const MIN_FIT_ORDER: usize = 50;
/// Highest usable harmonic frequency as a share of the Nyquist frequency.
pub const NYQUIST_SHARE: f64 = 0.95;
/// Decimate only while every fitted harmonic stays below 1/8 of the new sample rate.
const OVERSAMPLE_KEEP: f64 = 8.0;
/// A fundamental weaker than this share of the rest of the trace is taken as absent.
pub const MIN_FUNDAMENTAL_RATIO: f64 = 0.05;

/// Fewer samples than this cannot carry a fundamental and its DC.
pub const MIN_SAMPLES: usize = 16;
/// Sample magnitudes outside this range would overflow or underflow squares and products.
pub const MIN_MAGNITUDE: f64 = 1e-100;
/// See [`MIN_MAGNITUDE`].
pub const MAX_MAGNITUDE: f64 = 1e100;

/// Why no estimate could be made.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum EstimateError {
    /// Every sample of a trace is the same value.
    #[error("the {0} trace is flat (every sample {1}): check the channel and probe")]
    FlatTrace(Trace, f64),
    /// Too few samples.
    #[error("only {0} samples: too short to analyse")]
    TooShort(usize),
    /// Samples too large or too small for the arithmetic.
    #[error("the {0} trace peaks at {1:e}, outside what can be analysed (check the scale)")]
    OutOfRange(Trace, f64),
    /// No periodic component found in either trace.
    #[error("no fundamental frequency found in either trace: is the sample rate right?")]
    NoPeriodicSignal,
    /// Fewer than two cycles of the fundamental.
    #[error("only {cycles:.2} cycles of {frequency_hz:.3} Hz in the record: at least 2 are needed")]
    TooFewCycles {
        /// Cycles in the record.
        cycles: f64,
        /// The frequency found.
        frequency_hz: f64,
    },
    /// The sample rate is too low for even the fundamental.
    #[error("sample rate {rate_hz} Hz is too low for a {frequency_hz:.3} Hz fundamental")]
    RateTooLow {
        /// Sample rate.
        rate_hz: f64,
        /// Frequency found.
        frequency_hz: f64,
    },
    /// The machine refused the analysis's working memory (see [`crate::memory::headroom`]).
    #[error(
        "not enough memory to analyse it: {} MB of working room were refused; close other \
         programs, or analyse a shorter span (--from/--to) or split the file",
        .bytes.div_ceil(1_000_000)
    )]
    OutOfMemory {
        /// Bytes asked for.
        bytes: usize,
    },
}

/// Phasors and crossing phase of one trace.
#[derive(Debug, Clone, PartialEq)]
pub struct ChannelPhasors {
    /// DC level.
    pub dc: f64,
    /// RMS phasors of harmonics 1..=order (index h−1), angle referred to
    /// [`Estimate::reference_sample`], cosine reference.
    pub harmonics: Vec<Complex64>,
    /// RMS of what the fit leaves (noise, interharmonics) in the fitted record.
    pub residual_rms: f64,
    /// Standard uncertainty of the fundamental's phase from the fit residual, radians.
    pub phase_sigma_rad: f64,
    /// Whether the fundamental stands out of the rest of the trace.
    pub has_fundamental: bool,
    /// Fundamental RMS over the RMS of everything else.
    pub fundamental_ratio: f64,
    /// Zero-crossing phase, when the fundamental exists and crossings were found.
    pub crossing: Option<CrossingPhase>,
}

impl ChannelPhasors {
    /// Fundamental RMS phasor.
    pub fn fundamental(&self) -> Complex64 {
        self.harmonics[0]
    }
}

/// Everything the estimators found.
#[derive(Debug, Clone, PartialEq)]
pub struct Estimate {
    /// Fundamental frequency, Hz.
    pub frequency_hz: f64,
    /// Standard uncertainty of the frequency (Cramér-Rao bound at the fitted noise), Hz.
    pub frequency_sigma_hz: f64,
    /// Trace the frequency was taken from.
    pub frequency_source: Trace,
    /// Cycles in the record.
    pub cycles: f64,
    /// Highest harmonic order fitted.
    pub order: usize,
    /// Highest order below [`NYQUIST_SHARE`] of the Nyquist frequency.
    pub order_limit: usize,
    /// Block-average factor used before fitting (1 = none).
    pub decimation: usize,
    /// Sample index (input rate, may be fractional) the phasor angles refer to.
    pub reference_sample: f64,
    /// Voltage phasors.
    pub voltage: ChannelPhasors,
    /// Current phasors.
    pub current: ChannelPhasors,
    /// Phasors of consecutive sub-records, for the spread of the estimates.
    pub windows: Vec<WindowEstimate>,
}

/// Fit results of one trace in one sub-record.
#[derive(Debug, Clone, PartialEq)]
pub struct WindowPhasors {
    /// DC level.
    pub dc: f64,
    /// RMS phasors of harmonics 1..=order (index h−1), angles referred to the window's centre.
    pub harmonics: Vec<Complex64>,
    /// Mean square of what the fit leaves.
    pub residual_ms: f64,
}

/// One sub-record: about 200 ms, the window IEC 61000-4-7 uses (10 cycles at 50 Hz, 12 at 60 Hz).
#[derive(Debug, Clone, PartialEq)]
pub struct WindowEstimate {
    /// Voltage fit.
    pub voltage: WindowPhasors,
    /// Current fit.
    pub current: WindowPhasors,
    /// Mean of the product of the two residuals (the part of P the fit does not hold).
    pub residual_cross: f64,
}

/// Seconds per sub-record (IEC 61000-4-7: 10 cycles at 50 Hz, 12 at 60 Hz, from memory).
pub const WINDOW_SECONDS: f64 = 0.2;
/// At most this many sub-records; longer records get longer windows.
pub const MAX_WINDOWS: usize = 200;

/// Consecutive windows of whole cycles (about [`WINDOW_SECONDS`] each, at least two) over a
/// record of `n` samples at `fs` Hz with fundamental `f`, and the harmonic order each can carry
/// (at most `order`; 0 when they are too short for any fit).
fn window_ranges(n: usize, f: f64, fs: f64, order: usize) -> (Vec<Range<usize>>, usize) {
    let per_cycle = fs / f;
    let cycles = whole_cycles(n, per_cycle).0 as f64;
    let mut cpw = (WINDOW_SECONDS * f).round().max(1.0);
    if (cycles / cpw).floor() > MAX_WINDOWS as f64 {
        cpw = (cycles / MAX_WINDOWS as f64).ceil();
    }
    let count = ((cycles / cpw).floor() as usize).max(2);
    // Rounded to whole samples, `count` windows may need a sample or two more than the record
    // holds (10 kS/s, 9 999 samples at 50.01 Hz: 5 × 2 000 > 9 999): never more than n/count.
    let len = if (cycles / cpw).floor() >= 2.0 {
        ((cpw * per_cycle).round() as usize).min(n / count)
    } else {
        n / 2
    };
    let order = order.min(len.saturating_sub(4) / 3);
    ((0..count).map(|w| w * len..(w + 1) * len).collect(), order)
}

/// Puts the window fits of the two traces together (`correct` undoes the decimation gain of
/// harmonic h); a window either trace could not fit is left out.
fn window_estimates(
    vd: &[f64],
    id: &[f64],
    ranges: &[Range<usize>],
    fits_v: &[Option<fit::HarmonicFit>],
    fits_i: &[Option<fit::HarmonicFit>],
    correct: impl Fn(usize, Complex64) -> Complex64,
) -> Vec<WindowEstimate> {
    let phasors = |x: &fit::HarmonicFit| WindowPhasors {
        dc: x.dc,
        harmonics: x
            .amplitudes
            .iter()
            .enumerate()
            .map(|(k, a)| correct(k + 1, *a))
            .collect(),
        residual_ms: x.residual_ms(),
    };
    ranges
        .iter()
        .zip(fits_v.iter().zip(fits_i))
        .filter_map(|(range, pair)| {
            let (Some(fv), Some(fi)) = pair else {
                return None;
            };
            let sum_vi = simd::dot(&vd[range.clone()], &id[range.clone()]);
            Some(WindowEstimate {
                voltage: phasors(fv),
                current: phasors(fi),
                residual_cross: fv.residual_cross(fi, sum_vi) / range.len() as f64,
            })
        })
        .collect()
}

/// Estimates frequency and phasors of `v` and `i` sampled at `fs` Hz, fitting at least
/// `wanted_order` harmonics where the sample rate allows.
pub fn estimate(
    v: &[f64],
    i: &[f64],
    fs: f64,
    wanted_order: usize,
) -> Result<Estimate, EstimateError> {
    estimate_at(v, i, fs, wanted_order, None)
}

/// Whether a current that is the same value in every sample is refused ([`estimate`] refuses it:
/// on a single-phase capture it is a wrong channel or a dead probe) or fitted as no current (a
/// phase of a three-phase capture that carries no load).
pub fn flat_current_allowed(known_hz: Option<f64>) -> bool {
    known_hz.is_some()
}

/// [`estimate`] at a frequency already known (another phase's of the same record), so that
/// every phase of a three-phase capture is fitted at one frequency and its phasors share one
/// time reference; `None` finds the frequency.
pub fn estimate_at(
    v: &[f64],
    i: &[f64],
    fs: f64,
    wanted_order: usize,
    known_hz: Option<f64>,
) -> Result<Estimate, EstimateError> {
    match known_hz {
        Some(f) => {
            check_traces(v, i, known_hz)?;
            estimate_found(v, i, fs, wanted_order, Frequency::given(f))
        }
        None => {
            let found = frequency(v, i, fs, wanted_order)?;
            estimate_found(v, i, fs, wanted_order, found)
        }
    }
}

/// The fundamental frequency of `v` and `i` (of `v` when it has one, else of `i`), found as
/// [`estimate`] finds it, for [`estimate_found`] to fit at: a three-phase capture's first phase
/// gives the frequency every phase is fitted at, and the other phases need not wait for its fit.
pub fn frequency<'a>(
    v: &'a [f64],
    i: &'a [f64],
    fs: f64,
    wanted_order: usize,
) -> Result<Frequency<'a>, EstimateError> {
    check_traces(v, i, None)?;
    let (coarse_hz, source) = match frequency::coarse(v, fs) {
        Some(f) => (f, Trace::Voltage),
        None => (
            frequency::coarse(i, fs).ok_or(EstimateError::NoPeriodicSignal)?,
            Trace::Current,
        ),
    };
    let (_, order, decimation) = order_and_decimation(fs, coarse_hz, wanted_order)?;
    let (y, other) = if source == Trace::Voltage {
        (v, i)
    } else {
        (i, v)
    };
    // the other trace decimated for the fit while this one is refined (two cores when free)
    let ((yd, refined), other_d) = both(
        || {
            let yd = decimate(y, decimation);
            let refined = frequency::refine(&yd, fs / decimation as f64, coarse_hz, order);
            (yd, refined)
        },
        || decimate(other, decimation),
    );
    Ok(Frequency {
        hz: refined.hz,
        coarse_hz,
        source,
        refined: Some(refined),
        decimated: Some(if source == Trace::Voltage {
            (yd, other_d)
        } else {
            (other_d, yd)
        }),
    })
}

/// A voltage and a current decimated for the fit.
type Decimated<'a> = (Cow<'a, [f64]>, Cow<'a, [f64]>);

/// A fundamental frequency to fit at: given, or found by [`frequency()`] (with what its
/// uncertainty follows from, and the decimated trace it was refined on, which the fit reuses).
#[derive(Debug, Clone)]
pub struct Frequency<'a> {
    /// Frequency, Hz.
    pub hz: f64,
    /// The spectrum's estimate, which sets the fitted order and the decimation (the frequency
    /// itself when it was given).
    coarse_hz: f64,
    /// The trace it was found on.
    source: Trace,
    /// The refinement, when it was found here.
    refined: Option<frequency::Refined>,
    /// The voltage and the current decimated as the fit needs them: the source for the
    /// refinement, the other beside it.
    decimated: Option<Decimated<'a>>,
}

impl Frequency<'_> {
    /// A frequency known from elsewhere (another phase's of the same record).
    pub fn given(hz: f64) -> Self {
        Frequency {
            hz,
            coarse_hz: hz,
            source: Trace::Voltage,
            refined: None,
            decimated: None,
        }
    }
}

/// Refuses traces that cannot be analysed: too short, flat (a flat current is no current when
/// the frequency is known, `known_hz`: a phase that carries no load), or out of the
/// arithmetic's range.
fn check_traces(v: &[f64], i: &[f64], known_hz: Option<f64>) -> Result<(), EstimateError> {
    if v.len() < MIN_SAMPLES {
        return Err(EstimateError::TooShort(v.len()));
    }
    for (y, t) in [(v, Trace::Voltage), (i, Trace::Current)] {
        let flat = y
            .first()
            .is_some_and(|&first| y.iter().all(|&x| x == first));
        if flat && t == Trace::Current && flat_current_allowed(known_hz) {
            continue;
        }
        if flat {
            return Err(EstimateError::FlatTrace(t, y[0]));
        }
        let peak = crate::condition::peak_magnitude(y);
        if !(MIN_MAGNITUDE..=MAX_MAGNITUDE).contains(&peak) {
            return Err(EstimateError::OutOfRange(t, peak));
        }
    }
    Ok(())
}

/// The highest order a record at `fs` can carry near `hz` (see [`order_limit`]), the order to
/// fit (at most the wanted one, at least [`MIN_FIT_ORDER`] where the rate allows), and the
/// block-average factor that keeps every fitted harmonic well below the reduced rate.
fn order_and_decimation(
    fs: f64,
    hz: f64,
    wanted_order: usize,
) -> Result<(usize, usize, usize), EstimateError> {
    let order_limit = order_limit(fs, hz)?;
    let order = order_limit.min(wanted_order.max(MIN_FIT_ORDER));
    let decimation = ((fs / (OVERSAMPLE_KEEP * 2.0 * order as f64 * hz)).floor() as usize).max(1);
    Ok((order_limit, order, decimation))
}

/// The highest order below [`NYQUIST_SHARE`] of the Nyquist frequency.
fn order_limit(fs: f64, hz: f64) -> Result<usize, EstimateError> {
    let order_limit = (NYQUIST_SHARE * fs / 2.0 / hz).floor() as usize;
    if order_limit < 1 {
        return Err(EstimateError::RateTooLow {
            rate_hz: fs,
            frequency_hz: hz,
        });
    }
    Ok(order_limit)
}

/// [`estimate`] at a frequency found by [`frequency()`] on these traces, or given (the traces
/// then checked by the caller as [`estimate_at`] checks them).
pub fn estimate_found(
    v: &[f64],
    i: &[f64],
    fs: f64,
    wanted_order: usize,
    found: Frequency<'_>,
) -> Result<Estimate, EstimateError> {
    let Frequency {
        hz: f,
        coarse_hz,
        source,
        refined,
        decimated,
    } = found;
    let (order_limit, order, decimation) = order_and_decimation(fs, coarse_hz, wanted_order)?;
    // The two traces are independent until the angle: each gets its own thread (both are
    // decimated already when the frequency was found here).
    let (vd, id) = match decimated {
        Some(pair) => pair,
        None => both(|| decimate(v, decimation), || decimate(i, decimation)),
    };
    let fsd = fs / decimation as f64;
    let cycles = v.len() as f64 * f / fs;
    if !(cycles >= 2.0) {
        return Err(EstimateError::TooFewCycles {
            cycles,
            frequency_hz: f,
        });
    }
    // Final order: the record must carry 2H+1 unknowns with room to spare.
    let order = order.min(vd.len().saturating_sub(4) / 3).max(1);
    let theta = 2.0 * PI * f / fsd;
    let reference_sample = (vd.len() * decimation) as f64 / 2.0 - 0.5;
    let omega_in = 2.0 * PI * f / fs;
    // Peak amplitude at the decimated rate -> RMS phasor of the input signal.
    let correct =
        |h: usize, a: Complex64| a / (SQRT_2 * block_average_gain(h as f64 * omega_in, decimation));
    // One basis for both traces; the windows' fits come from the same pass as the whole
    // record's, and both traces' from the same pass over the table.
    let (ranges, window_order) = window_ranges(vd.len(), f, fsd, order);
    let ranges = if window_order == 0 {
        Vec::new()
    } else {
        ranges
    };
    let mut basis = fit::Basis::new(theta, order);
    basis.prepare(vd.len(), order);
    if let Some(r) = ranges.first() {
        basis.prepare(r.len(), window_order);
    }
    // Both traces' fits from one pass over their samples (each the same as fitted alone).
    let (fit_v, fit_i) = if vd.len() == id.len() {
        let mut fits = basis.fit_parts_many(&[&vd, &id], &ranges, window_order);
        let fit_i = fits.pop().flatten();
        (fits.pop().flatten(), fit_i)
    } else {
        (
            basis.fit_parts(&vd, &ranges, window_order),
            basis.fit_parts(&id, &ranges, window_order),
        )
    };
    let channel = |y: &[f64],
                   yd: &[f64],
                   fitted: Option<(fit::HarmonicFit, Vec<Option<fit::HarmonicFit>>)>|
     -> Result<(ChannelPhasors, Vec<Option<fit::HarmonicFit>>), EstimateError> {
        let (fit, window_fits) = fitted.ok_or(EstimateError::NoPeriodicSignal)?;
        let harmonics: Vec<Complex64> = fit
            .amplitudes
            .iter()
            .enumerate()
            .map(|(k, a)| correct(k + 1, *a))
            .collect();
        let residual_rms = fit.residual_ms().sqrt();
        let fund = harmonics[0].norm();
        // Everything but the fundamental, from the fit: harmonics, DC and residual.
        let rest = (fit.dc * fit.dc
            + harmonics[1..].iter().map(|h| h.norm_sqr()).sum::<f64>()
            + fit.residual_ms())
        .sqrt();
        // a trace of nothing at all (a phase without load, fitted at another phase's
        // frequency) has no fundamental, not an infinitely clean one
        let fundamental_ratio = if rest > 0.0 {
            fund / rest
        } else if fund > 0.0 {
            f64::INFINITY
        } else {
            0.0
        };
        // Noise alone leaves a fundamental of about sqrt(2/N) of its RMS; ask for four times that.
        let noise_floor = 4.0 * (2.0 / yd.len() as f64).sqrt();
        let has_fundamental = fundamental_ratio > MIN_FUNDAMENTAL_RATIO.max(noise_floor);
        // var(φ) ≈ 1/(η N), η = A²/(2σ²) (Kay, vol. I; references §4), A = √2·RMS.
        let phase_sigma_rad = if fund > 0.0 {
            residual_rms / (fund * (yd.len() as f64).sqrt())
        } else {
            f64::INFINITY
        };
        let crossing = if has_fundamental {
            let noise_in = residual_rms * (decimation as f64).sqrt();
            let band = (0.03 * fund * SQRT_2)
                .max(3.0 * noise_in)
                .min(0.5 * fund * SQRT_2);
            zero_crossing::crossing_phase(y, fs, f, fit.dc, band)
        } else {
            None
        };
        let phasors = ChannelPhasors {
            dc: fit.dc,
            harmonics,
            residual_rms,
            phase_sigma_rad,
            has_fundamental,
            fundamental_ratio,
            crossing,
        };
        Ok((phasors, window_fits))
    };
    let (voltage, current) = both(|| channel(v, &vd, fit_v), || channel(i, &id, fit_i));
    let ((voltage, windows_v), (current, windows_i)) = (voltage?, current?);
    // The frequency's standard uncertainty from the estimator used: the phase slope across the
    // sub-records, each sub-record's phase with var(φ) ≈ 1/(η·L), η = RMS²/σ² (Kay, vol. I;
    // references §4). The Cramér-Rao bound of the whole record is the floor under it.
    let src = if source == Trace::Voltage {
        &voltage
    } else {
        &current
    };
    let nd = vd.len() as f64;
    let eta = src.fundamental().norm_sqr() / src.residual_rms.powi(2).max(f64::MIN_POSITIVE);
    let crb_hz = (12.0 / ((2.0 * PI).powi(2) * eta * nd * (nd * nd - 1.0))).sqrt() * fsd;
    // With the frequency given (another phase's), the bound stands for what this record says.
    let sigma_f = refined.map_or(crb_hz, |r| {
        let segment_phase_sigma = 1.0 / (eta * r.segment_len.max(1) as f64).sqrt();
        r.sigma_hz(segment_phase_sigma).max(crb_hz)
    });
    Ok(Estimate {
        frequency_hz: f,
        frequency_sigma_hz: sigma_f,
        frequency_source: source,
        cycles,
        order,
        order_limit,
        decimation,
        reference_sample,
        voltage,
        current,
        windows: window_estimates(&vd, &id, &ranges, &windows_v, &windows_i, correct),
    })
}

/// Runs `a` and `b`, in parallel when a core is free (rayon's work stealing, so a batch that
/// already keeps every core busy does not start more threads than cores).
fn both<A: Send, B: Send>(a: impl FnOnce() -> A + Send, b: impl FnOnce() -> B + Send) -> (A, B) {
    rayon::join(a, b)
}

#[cfg(test)]
mod tests {
    use super::window_ranges;

    /// The windows stay inside the record at every frequency near 50 Hz, length and rate: once
    /// they were rounded up to whole samples past its end (10 kS/s, 9 999 samples, 50.01 Hz).
    #[test]
    fn windows_stay_inside_the_record() {
        for (fs, n) in [(10_000.0, 9_999usize), (4_000.0, 7_999), (6_400.0, 64_003)] {
            for step in 0..=1000 {
                let f = 49.5 + step as f64 * 0.001;
                let (ranges, _) = window_ranges(n, f, fs, 50);
                let mut last = 0;
                for r in &ranges {
                    assert!(
                        last <= r.start && r.start < r.end && r.end <= n,
                        "{fs} {n} {f}"
                    );
                    last = r.end;
                }
            }
        }
    }
}
