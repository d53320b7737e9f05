//! Conditioning: what is done to the traces between loading and estimation.
//!
//! Input: a [`crate::capture::Capture`]. Output: the same traces scaled to volts and amperes
//! ([`scale`]), and helpers the estimators use: block-average decimation with its exact transfer
//! function ([`decimate`], [`block_average_gain`]) and the whole-cycle span of a record
//! ([`whole_cycles`]).
//!
//! A known current-channel delay (`--skew`) and each trace's own delay (a COMTRADE channel's
//! skew, [`crate::capture::Trace::delay_s`]) are *not* removed here by shifting samples: they are
//! removed per harmonic as phase corrections ([`crate::quantity`] within a phase,
//! [`crate::analysis::analyze`] across phases), which is exact for any fraction of a sample.

mod scan;

use crate::capture::{Capture, Phase, Place, System};
use std::borrow::Cow;
use std::f64::consts::PI;

/// Multiplies the traces by the probe or clamp ratios (volts per unit, amperes per unit) and by
/// their header units' scale (a `mV` column is in volts afterwards), in one pass per trace.
pub fn scale(capture: &mut Capture, v_scale: f64, i_scale: f64) {
    let voltages = capture.voltages.iter_mut().map(|t| (t, v_scale));
    let currents = capture
        .currents
        .iter_mut()
        .chain(capture.neutral.as_mut())
        .map(|t| (t, i_scale));
    for (trace, ratio) in voltages.chain(currents) {
        let k = ratio * trace.channel.scale();
        if k != 1.0 {
            trace.samples.iter_mut().for_each(|x| *x *= k);
            trace.full_scale = trace.full_scale.map(|f| f * k.abs());
        }
    }
}

/// One phase's voltage and current samples, as the per-phase analysis takes them.
#[derive(Debug, Clone)]
pub struct PhaseSamples<'a> {
    /// The phase (`Phase::A` for a single-phase capture).
    pub phase: Phase,
    /// Voltage to neutral (4-wire), to the artificial star point (3-wire) or the one voltage.
    pub voltage: Cow<'a, [f64]>,
    /// The line current.
    pub current: Cow<'a, [f64]>,
    /// Index into `capture.voltages` and `capture.currents` of the traces these come from
    /// (for a 3-wire capture: derived from all of them, so the first line's).
    pub voltage_trace: usize,
    /// See `voltage_trace`; `None` for a 3-wire phase's current derived from the other two.
    pub current_trace: Option<usize>,
}

/// The per-phase voltage and current samples of a scaled capture, in phase order.
///
/// Single-phase and 4-wire captures give their traces as they are. A 3-wire capture's
/// line-to-line voltages are referred to the artificial star point (the point whose three
/// voltages sum to zero): with Vab and Vcb, Vb = −(Vab + Vcb)/3, Va = Vab + Vb, Vc = Vcb + Vb
/// (circuit theory, common practice); a missing line current is minus the sum of the other two
/// (Kirchhoff's current law). The totals do not depend on the star point chosen.
pub fn per_phase(capture: &Capture) -> Vec<PhaseSamples<'_>> {
    let n = capture.len();
    match capture.system {
        System::Single | System::FourWire => capture
            .voltages
            .iter()
            .zip(&capture.currents)
            .enumerate()
            .map(|(k, (v, i))| PhaseSamples {
                phase: match capture.system {
                    System::Single => Phase::A,
                    _ => [Phase::A, Phase::B, Phase::C][k.min(2)],
                },
                voltage: Cow::Borrowed(&v.samples),
                current: Cow::Borrowed(&i.samples),
                voltage_trace: k,
                current_trace: Some(k),
            })
            .collect(),
        System::ThreeWire => {
            let idx = |p: Phase| match p {
                Phase::A => 0,
                Phase::B => 1,
                Phase::C => 2,
                Phase::N => 3,
            };
            // Vab and Vcb from whichever lines were measured: each line x-y is Vx − Vy
            let mut lines: [[Option<&[f64]>; 3]; 3] = [[None; 3]; 3];
            for t in &capture.voltages {
                if let Place::Line(a, b) = t.place {
                    lines[idx(a).min(2)][idx(b).min(2)] = Some(&t.samples);
                }
            }
            let line = |a: usize, b: usize, k: usize| -> Option<f64> {
                lines[a][b]
                    .map(|s| s[k])
                    .or_else(|| lines[b][a].map(|s| -s[k]))
            };
            let (a, b, c) = (0, 1, 2);
            let vab_vcb = |k: usize| -> (f64, f64) {
                let vab = line(a, b, k)
                    .or_else(|| Some(-(line(b, c, k)? + line(c, a, k)?)))
                    .unwrap_or(0.0);
                let vcb = line(c, b, k)
                    .or_else(|| Some(line(c, a, k)? + line(a, b, k)?))
                    .unwrap_or(0.0);
                (vab, vcb)
            };
            let mut va = Vec::with_capacity(n);
            let mut vb = Vec::with_capacity(n);
            let mut vc = Vec::with_capacity(n);
            for k in 0..n {
                let (vab, vcb) = vab_vcb(k);
                let b = -(vab + vcb) / 3.0;
                va.push(vab + b);
                vb.push(b);
                vc.push(vcb + b);
            }
            let mut currents: [Option<(usize, &[f64])>; 3] = [None; 3];
            for (k, t) in capture.currents.iter().enumerate() {
                if let Place::Phase(p) = t.place
                    && p != Phase::N
                {
                    currents[idx(p)] = Some((k, &t.samples));
                }
            }
            let current = |p: usize| -> (Cow<'_, [f64]>, Option<usize>) {
                if let Some((k, s)) = currents[p] {
                    return (Cow::Borrowed(s), Some(k));
                }
                let others: Vec<&[f64]> = (0..3)
                    .filter(|&q| q != p)
                    .filter_map(|q| currents[q].map(|x| x.1))
                    .collect();
                let derived = (0..n)
                    .map(|k| -others.iter().map(|s| s[k]).sum::<f64>())
                    .collect();
                (Cow::Owned(derived), None)
            };
            [(Phase::A, va), (Phase::B, vb), (Phase::C, vc)]
                .into_iter()
                .enumerate()
                .map(|(p, (phase, v))| {
                    let (i, current_trace) = current(p);
                    PhaseSamples {
                        phase,
                        voltage: Cow::Owned(v),
                        current: i,
                        voltage_trace: 0,
                        current_trace,
                    }
                })
                .collect()
        }
    }
}

/// Averages blocks of `factor` samples; a trailing partial block is dropped.
///
/// Output sample m stands for the time of its block's centre, `m·factor + (factor−1)/2`
/// input samples after the start, so a sinusoid keeps its phase and only its amplitude is
/// scaled by [`block_average_gain`]. A factor of 1 (or 0) borrows `y` as it is: no copy of a
/// record that needs no averaging.
pub fn decimate(y: &[f64], factor: usize) -> Cow<'_, [f64]> {
    if factor <= 1 {
        return Cow::Borrowed(y);
    }
    let inv = 1.0 / factor as f64;
    // Four blocks summed side by side, each in sample order from −0.0 as `Iterator::sum` takes
    // it (the same bits): one block's sum is a chain of dependent additions, which alone ran
    // at about 1.7 ns a sample here.
    let mut out = Vec::with_capacity(y.len() / factor);
    let mut groups = y.chunks_exact(4 * factor);
    for g in &mut groups {
        let (a, rest) = g.split_at(factor);
        let (b, rest) = rest.split_at(factor);
        let (c, d) = rest.split_at(factor);
        let mut s = [-0.0f64; 4];
        for (((&a, &b), &c), &d) in a.iter().zip(b).zip(c).zip(d) {
            s[0] += a;
            s[1] += b;
            s[2] += c;
            s[3] += d;
        }
        out.extend(s.map(|x| x * inv));
    }
    out.extend(
        groups
            .remainder()
            .chunks_exact(factor)
            .map(|c| c.iter().sum::<f64>() * inv),
    );
    Cow::Owned(out)
}

/// Gain of a `factor`-sample block average for a sinusoid at `omega` rad/sample (input rate),
/// referred to the block centre: `sin(Dω/2) / (D·sin(ω/2))` (a Dirichlet kernel; textbook).
pub fn block_average_gain(omega: f64, factor: usize) -> f64 {
    if factor <= 1 {
        return 1.0;
    }
    let d = factor as f64;
    let s = (omega / 2.0).sin();
    if s.abs() < 1e-15 {
        1.0
    } else {
        (d * omega / 2.0).sin() / (d * s)
    }
}

/// Slack, in samples, when whole cycles are counted: a cycle that ends within half a sample of
/// the record's end is counted.
pub const WHOLE_CYCLE_SLACK: f64 = 0.5;

/// The whole number of cycles in a record of `len` samples and the number of samples
/// (rounded) that spans them from the first sample.
///
/// A cycle that would end up to [`WHOLE_CYCLE_SLACK`] samples past the record's end counts: a
/// record of exactly 12 cycles whose frequency estimate is a hair low (noise moves it by about
/// 1e-5) holds 11.9999 estimated cycles and would otherwise be averaged over 11. The span rounds
/// to the whole record and the span correction of [`crate::quantity`] absorbs the fraction.
pub fn whole_cycles(len: usize, samples_per_cycle: f64) -> (usize, usize) {
    let cycles = ((len as f64 + WHOLE_CYCLE_SLACK) / samples_per_cycle).floor() as usize;
    let span = ((cycles as f64 * samples_per_cycle).round() as usize).min(len);
    (cycles, span)
}

/// The smallest and the largest sample of `y` (+∞ and −∞ for none; NaN is passed over, as
/// `f64::min` and `f64::max` pass it over), by the clipping check's vectorised pass: a fold of
/// `f64::min` cannot be vectorised and took about 1 ns a sample.
pub fn range(y: &[f64]) -> (f64, f64) {
    let (hi, lo) = scan::extremes(y);
    (lo, hi)
}

/// The largest magnitude in `y` (0 for none; NaN is passed over), as `range` finds it.
pub fn peak_magnitude(y: &[f64]) -> f64 {
    let (lo, hi) = range(y);
    hi.max(-lo).max(0.0)
}

/// A trace's extremes, how many samples sit on each, and the nearest distinct value inside
/// each: what the clipping check needs from the whole trace, found before the frequency is
/// known (two vectorised passes; a one-pass scan with branches took about 3 ns a sample).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Tops {
    hi: f64,
    n_hi: usize,
    below_hi: f64,
    lo: f64,
    n_lo: usize,
    above_lo: f64,
}

impl Tops {
    /// The trace's smallest and largest sample, as [`range`] gives them.
    pub fn range(&self) -> (f64, f64) {
        (self.lo, self.hi)
    }
}

/// The [`Tops`] of a trace.
pub fn tops(y: &[f64]) -> Tops {
    let (hi, lo) = scan::extremes(y);
    let (n_hi, below_hi, n_lo, above_lo) = scan::next_to_extremes(y, hi, lo);
    Tops {
        hi,
        n_hi,
        below_hi,
        lo,
        n_lo,
        above_lo,
    }
}

/// Share of samples (percent) sitting on flat tops at the trace's extremes, when that is more
/// than an unclipped sine would show; `None` when the trace looks unclipped. `tops` are the
/// trace's own, `samples_per_cycle` at the frequency found.
///
/// An unclipped sine of amplitude A digitised in steps q stays on its top step for a share
/// `acos(1 − q/A)/π` of each cycle; a clipped one for much longer. The step q is the gap between
/// the extreme value and the next distinct value below (above) it.
///
/// That gap is the converter's step (or a few) only when the trace lies on a grid of it (or of a
/// fraction of it). A finely resolved
/// trace clipped at 90 % of its peak, sampled 100 times a cycle, has its next value below the
/// flat top one sample's slope away (2.7 % of the peak), and the rule above then allows it a
/// flat top of 20 % of the samples where it has 14 %. Such a gap is no step: off the grid, a
/// long flat top is clipping.
///
/// Either way a flat top must hold more than 2.5 samples a cycle on average. A sine sampled in
/// step with its cycle repeats its top value once or twice a cycle: written to the millivolt,
/// 100 samples a cycle put 1 % of them on a top 1 mV wide, which the step rule alone took for
/// clipping; a 5-cycle record at 40 a cycle hit its lowest value 3 times, off the grid of the
/// 1.5 V gap next to it.
pub fn clipping(y: &[f64], tops: &Tops, samples_per_cycle: f64) -> Option<f64> {
    let Tops {
        hi,
        lo,
        mut n_hi,
        mut below_hi,
        mut n_lo,
        mut above_lo,
    } = *tops;
    let amplitude = (hi - lo) / 2.0;
    if !(amplitude > 0.0) {
        return None;
    }
    // A gap of a few units in the last place is no step: a sine computed in floating point
    // hits its top value to within that each cycle. Such a top is taken whole, to 10⁻⁹ of the
    // amplitude, and the gap measured from it (a plain pass; only such traces take it).
    let tol = amplitude * 1e-9;
    if hi - below_hi <= tol {
        let top = |x: f64| x >= hi - tol;
        below_hi = y.iter().copied().filter(|&x| !top(x)).fold(lo, f64::max);
        n_hi = y.iter().filter(|&&x| top(x)).count();
    }
    if above_lo - lo <= tol {
        let bottom = |x: f64| x <= lo + tol;
        above_lo = y.iter().copied().filter(|&x| !bottom(x)).fold(hi, f64::min);
        n_lo = y.iter().filter(|&&x| bottom(x)).count();
    }
    let n = y.len() as f64;
    let cycles = n / samples_per_cycle;
    let expected = |step: f64| (1.0 - (step / amplitude).min(2.0)).acos() / PI;
    let side = |count: usize, top: f64, next: f64| {
        let share = count as f64 / n;
        let gap = (top - next).abs();
        count >= 3
            && share > 0.005
            && count as f64 > 2.5 * cycles
            // the step rule, else the grid's pass (only for a long flat top it lets pass)
            && (share > 2.5 * expected(gap) + 0.005 || !on_grid(y, top, gap, amplitude))
    };
    let clipped = side(n_hi, hi, below_hi) || side(n_lo, lo, above_lo);
    clipped.then(|| 100.0 * (n_hi + n_lo) as f64 / n)
}

/// Whether nine samples in ten lie on a grid `top ± k·gap/m` for some m from 1 to 8 (to a
/// hundredth of its step): a gap of one or a few converter steps (a sine sampled in step with
/// its cycle can skip the level next to its top), not one left by clipping. A gap under 10⁻⁹
/// of the amplitude is no converter's.
fn on_grid(y: &[f64], top: f64, gap: f64, amplitude: f64) -> bool {
    if !(gap > amplitude * 1e-9) || y.is_empty() {
        return false;
    }
    // round to the nearest whole number by adding and taking off 2^52 (|r| < 2^51 here):
    // unlike `round`, this vectorises
    const SHIFT: f64 = 4_503_599_627_370_496.0;
    (1..=8).any(|m| {
        let step = gap / f64::from(m);
        let off = y
            .iter()
            .filter(|&&x| {
                let r = (top - x) / step;
                let whole = if r >= 0.0 {
                    (r + SHIFT) - SHIFT
                } else {
                    (r - SHIFT) + SHIFT
                };
                !((r - whole).abs() <= 0.01)
            })
            .count();
        off * 10 <= y.len()
    })
}

/// Fewest distinct values a trace may use before it is flagged.
const FEW_LEVELS: usize = 20;

/// Number of distinct values in the whole trace, when it is under 20 (a trace that uses only a
/// few converter steps); `None` otherwise, or for fewer than 256 samples.
///
/// Every sample is looked at, stopping at the 20th distinct value (at once on any real trace).
/// Counting a spread subset instead (every `len/1024`-th sample) failed when that stride shared
/// a factor with the period: the subset then held the same few phases over and over, and a
/// 1 M-row capture using 202 levels was reported as using 13.
pub fn few_levels(y: &[f64]) -> Option<usize> {
    if y.len() < 256 {
        return None;
    }
    let mut seen: Vec<u64> = Vec::with_capacity(FEW_LEVELS);
    for x in y {
        // -0.0 and 0.0 are one level
        let bits = if *x == 0.0 { 0 } else { x.to_bits() };
        if !seen.contains(&bits) {
            if seen.len() + 1 == FEW_LEVELS {
                return None;
            }
            seen.push(bits);
        }
    }
    Some(seen.len())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The clipping check of a trace with its own tops.
    fn judge(y: &[f64], samples_per_cycle: f64) -> Option<f64> {
        clipping(y, &tops(y), samples_per_cycle)
    }

    fn quantised_sine(n: usize, bits: u32, clip: f64) -> Vec<f64> {
        let q = 2.0 / 2f64.powi(bits as i32);
        (0..n)
            .map(|k| {
                let x = 0.9 * (2.0 * PI * k as f64 / 200.0).sin();
                (x.clamp(-clip, clip) / q).round() * q
            })
            .collect()
    }

    /// The one-pass scan against the plain two-pass definition (extremes first, then their counts
    /// and the nearest distinct values inside them) on clipped, quantised and odd traces.
    #[test]
    fn the_one_pass_scan_finds_what_two_passes_find() {
        fn naive(y: &[f64]) -> (f64, usize, f64, f64, usize, f64) {
            let hi = y.iter().copied().fold(f64::NEG_INFINITY, f64::max);
            let lo = y.iter().copied().fold(f64::INFINITY, f64::min);
            let n_hi = y.iter().filter(|&&x| x == hi).count();
            let n_lo = y.iter().filter(|&&x| x == lo).count();
            let below = y.iter().copied().filter(|&x| x < hi).fold(lo, f64::max);
            let above = y.iter().copied().filter(|&x| x > lo).fold(hi, f64::min);
            (hi, n_hi, below, lo, n_lo, above)
        }
        let traces = [
            quantised_sine(4000, 8, 0.81),
            quantised_sine(4000, 12, 1.0),
            quantised_sine(997, 4, 0.5),
            vec![1.0, -1.0, 1.0, 0.5, -1.0, -0.5, 1.0],
            vec![3.0, 2.0, 1.0, 0.0, -1.0, 0.0, 1.0, 2.0, 3.0, 3.0],
        ];
        for y in &traces {
            let (hi, n_hi, below, lo, n_lo, above) = naive(y);
            assert_eq!(scan::extremes(y), (hi, lo));
            assert_eq!(
                scan::next_to_extremes(y, hi, lo),
                (n_hi, below, n_lo, above)
            );
        }
        assert_eq!(judge(&[2.0; 10], 5.0), None);
    }

    /// Clipping at 90 % of the peak (references §8 scenario) is reported; the plain 8-bit
    /// quantisation flats of an unclipped sine are not.
    #[test]
    fn clipping_is_told_apart_from_quantisation() {
        assert_eq!(judge(&quantised_sine(4000, 8, 1.0), 200.0), None);
        let pct = judge(&quantised_sine(4000, 8, 0.81), 200.0).unwrap();
        assert!(pct > 20.0, "{pct}");
        assert_eq!(judge(&quantised_sine(4000, 16, 1.0), 200.0), None);
    }

    /// A finely resolved sine clipped at 90 % of its peak (references §8 scenario, which drops
    /// the fundamental 3.7 % and adds 4.2 % THD) or at 92 %, 50 or 100 samples a cycle (5 kS/s
    /// at 100 or 50 Hz), written to the millivolt: at most starting phases once not reported,
    /// because the gap below the flat top (one sample's slope, up to 2.7 % of the peak at
    /// 100 a cycle) was taken for the converter's step.
    #[test]
    fn a_finely_resolved_sine_clipped_at_90_percent_is_reported() {
        let peak = 325.0;
        for f in [50.0, 50.02, 100.0] {
            for phase in [0.0, 0.3, 1.0] {
                for clip in [0.9, 0.92] {
                    let y: Vec<f64> = (0..2000)
                        .map(|k| {
                            let x = peak * (2.0 * PI * f * k as f64 / 5000.0 + phase).sin();
                            (x.clamp(-clip * peak, clip * peak) * 1e3).round() / 1e3
                        })
                        .collect();
                    let case = format!("clip {clip} at {f} Hz, phase {phase}");
                    let pct = judge(&y, 5000.0 / f).unwrap_or_else(|| panic!("{case}: missed"));
                    // share of a cycle beyond the clip, both sides: 2·acos(c)/π, give or take
                    // two samples a cycle
                    let want = 200.0 * clip.acos() / PI;
                    let slack = 200.0 * f / 5000.0 + 0.5;
                    assert!((pct - want).abs() < slack, "{case}: {pct} % for {want} %");
                }
            }
        }
    }

    /// No unclipped sine is reported, whatever its resolution, samples a cycle or phase: in
    /// step with its cycle or not, finely resolved, on a converter's grid, or written to two or
    /// three decimals (325 V peak) as a text export is.
    #[test]
    fn no_unclipped_sine_is_reported() {
        // (bits, decimals): 0 bits is the sine as computed
        let resolutions = [
            (0, None),
            (6, None),
            (8, None),
            (10, None),
            (12, None),
            (16, None),
        ]
        .into_iter()
        .chain([(0, Some(2)), (0, Some(3))]);
        for (bits, decimals) in resolutions {
            for per_cycle in [
                20.0, 25.0, 50.0, 64.0, 99.7, 100.0, 100.3, 128.0, 200.0, 1000.0,
            ] {
                for phase in [0.0, 0.1, 0.157, 0.314, 0.5, PI / 2.0, PI / per_cycle] {
                    for scale in [0.9, 0.999, 325.0] {
                        let q = 2.0 * scale / 2f64.powi(bits);
                        let y: Vec<f64> = (0..4000)
                            .map(|k| {
                                let x = scale * (2.0 * PI * k as f64 / per_cycle + phase).sin();
                                match decimals {
                                    Some(d) => (x * 10f64.powi(d)).round() / 10f64.powi(d),
                                    None if bits > 0 => (x / q).round() * q,
                                    None => x,
                                }
                            })
                            .collect();
                        assert_eq!(
                            judge(&y, per_cycle),
                            None,
                            "{bits} bits, {decimals:?} decimals, {per_cycle} a cycle, \
                             phase {phase}, scale {scale}"
                        );
                    }
                }
            }
        }
    }

    /// The fault probe's case: 1 M samples of a sine using about 200 levels, at 208 samples per
    /// cycle (10.4 kS/s at 50 Hz), so every 976th sample (the old spread subset) fell on the same
    /// 13 phases: 13 levels were counted and a false `low-resolution` warning given.
    #[test]
    fn a_trace_of_202_levels_is_not_counted_as_a_few() {
        let q = 2.0 / 201.0;
        let y: Vec<f64> = (0..1_000_000)
            .map(|k| ((2.0 * PI * k as f64 / 208.0 + 0.1).sin() / q).round() * q)
            .collect();
        let mut naive = y.clone();
        naive.sort_by(f64::total_cmp);
        naive.dedup();
        assert!(naive.len() > 150, "{} levels", naive.len());
        let stride: Vec<f64> = y.iter().step_by(y.len() / 1024).copied().collect();
        let mut sub = stride.clone();
        sub.sort_by(f64::total_cmp);
        sub.dedup();
        assert_eq!(sub.len(), 13, "the case the old subset miscounted");
        assert_eq!(few_levels(&y), None);
        // and a trace truly using 13 levels is still flagged with its count
        let q = 2.0 / 12.0;
        let y13: Vec<f64> = y.iter().map(|x| (x / q).round() * q).collect();
        assert_eq!(few_levels(&y13), Some(13));
    }

    #[test]
    fn few_levels_flags_a_trace_using_four_bits() {
        assert_eq!(few_levels(&quantised_sine(4000, 12, 1.0)), None);
        assert!(few_levels(&quantised_sine(4000, 4, 1.0)).is_some());
    }

    /// Block averaging a cosine gives the cosine at the block centre times the Dirichlet gain.
    #[test]
    fn block_average_keeps_phase_and_scales_by_its_gain() {
        let omega = 2.0 * PI / 97.3;
        let y: Vec<f64> = (0..5000).map(|n| (omega * n as f64 + 0.3).cos()).collect();
        let d = 7;
        let g = block_average_gain(omega, d);
        for (m, v) in decimate(&y, d).iter().enumerate() {
            let t = (m * d) as f64 + (d as f64 - 1.0) / 2.0;
            assert!((v - g * (omega * t + 0.3).cos()).abs() < 1e-12);
        }
    }

    /// The side-by-side block sums are the plain ones to the bit, for any length and factor
    /// (a partial block at the end dropped, as before).
    #[test]
    fn decimation_gives_the_plain_block_means_bit_for_bit() {
        let y: Vec<f64> = (0..1000)
            .map(|n| (n as f64 * 0.731).sin() * 1e3 + (n % 7) as f64 * 1e-9)
            .collect();
        for len in [0, 1, 5, 31, 32, 33, 199, 1000] {
            for factor in 2..=13 {
                let inv = 1.0 / factor as f64;
                let plain: Vec<f64> = y[..len]
                    .chunks_exact(factor)
                    .map(|c| c.iter().sum::<f64>() * inv)
                    .collect();
                let got = decimate(&y[..len], factor);
                let bits = |x: &[f64]| x.iter().map(|v| v.to_bits()).collect::<Vec<_>>();
                assert_eq!(bits(&got), bits(&plain), "len {len}, factor {factor}");
            }
        }
        // a block of negative zeros keeps its sign, as `sum` keeps it
        assert!(
            decimate(&[-0.0; 16], 2)
                .iter()
                .all(|x| x.is_sign_negative())
        );
    }

    /// A factor of 1 hands back the samples themselves, borrowed, not a copy of them.
    #[test]
    fn decimating_by_one_borrows_the_samples() {
        let y: Vec<f64> = (0..100).map(|n| n as f64 * 0.25).collect();
        for factor in [0, 1] {
            let d = decimate(&y, factor);
            assert!(matches!(d, Cow::Borrowed(_)), "factor {factor}");
            assert_eq!(d.as_ptr(), y.as_ptr());
            assert_eq!(&*d, &y[..]);
        }
        assert!(matches!(decimate(&y, 2), Cow::Owned(_)));
    }

    #[test]
    fn whole_cycles_of_a_record() {
        assert_eq!(whole_cycles(1000, 40.0), (25, 1000));
        // 25 cycles of 40.01 samples end 0.25 samples past the record: within the slack
        assert_eq!(whole_cycles(1000, 40.01), (25, 1000));
        assert_eq!(whole_cycles(1000, 40.03), (24, 961));
        assert_eq!(whole_cycles(100, 33.3), (3, 100));
    }
}
