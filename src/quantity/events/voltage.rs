//! Dips and swells: the one-cycle RMS refreshed every half cycle, Urms(1/2), held against a
//! reference, on one channel (each phase's own events) or on several together (a three-phase
//! capture's polyphase events).
//!
//! IEC 61000-4-30 class A (from memory; we have no published text of the standard to cite):
//! on a single channel a dip begins when Urms(1/2) falls below the dip threshold and ends when
//! it is equal to or above the threshold plus the hysteresis; on a polyphase system it begins
//! when Urms(1/2) of at least one channel falls below the threshold and ends when Urms(1/2) on
//! all measured channels is equal to or above the threshold plus the hysteresis, its residual
//! voltage the lowest Urms(1/2) on any channel and its duration from that start to that end.
//! Swells likewise, mirrored: from any channel above the swell threshold until all are at or
//! below it less the hysteresis, the magnitude the highest value. (That a three-phase dip is a
//! reduction in at least one of the phase or line voltages: M. H. J. Bollen, "Voltage recovery
//! after unbalanced and balanced voltage dips in three-phase systems", IEEE Trans. Power
//! Delivery 18(4), 2003, §I.) The standard measures phase-to-neutral voltages on a 4-wire
//! system and line-to-line voltages on a 3-wire one.
//!
//! One rule serves both: [`spells`] runs it on any number of channels, and a single channel is
//! its special case (any channel below = all channels below), so a phase's own dips and the
//! polyphase dips cannot drift apart. Dips and swells are looked for in separate passes, each
//! with its own state, as the standard keeps them.

use super::{
    DIP_SHARE, Event, EventKind, EventQuantity, HYSTERESIS_SHARE, STEP_CYCLES, SWELL_SHARE, median,
};
use serde::Serialize;

/// The channels a polyphase dip or swell took part on, in channel order: the phases (`a`, `c`)
/// of a 4-wire capture, the lines (`ab`, `bc`) of a 3-wire one.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Channels {
    names: [&'static str; 3],
    len: usize,
}

impl Channels {
    /// The channels' names.
    pub fn names(&self) -> &[&'static str] {
        &self.names[..self.len]
    }

    fn push(&mut self, name: &'static str) {
        if self.len < self.names.len() {
            self.names[self.len] = name;
            self.len += 1;
        }
    }
}

impl Serialize for Channels {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        self.names().serialize(s)
    }
}

/// One voltage channel of a polyphase system.
#[derive(Debug, Clone, Copy)]
pub enum Voltage<'a> {
    /// Its samples, as measured (a phase to neutral).
    Samples(&'a [f64]),
    /// The difference of two traces' samples, x − y (a line voltage from two phases' voltages
    /// to the artificial star point: Vab = Va − Vb exactly, the star point cancelling).
    Difference(&'a [f64], &'a [f64]),
}

impl Voltage<'_> {
    fn len(&self) -> usize {
        match self {
            Voltage::Samples(x) => x.len(),
            Voltage::Difference(x, y) => x.len().min(y.len()),
        }
    }

    /// The mean square over `a..e`.
    fn mean_square(&self, a: usize, e: usize) -> f64 {
        let sum = match self {
            Voltage::Samples(x) => x[a..e].iter().map(|x| x * x).sum::<f64>(),
            Voltage::Difference(x, y) => x[a..e]
                .iter()
                .zip(&y[a..e])
                .map(|(x, y)| (x - y) * (x - y))
                .sum::<f64>(),
        };
        sum / (e - a) as f64
    }
}

/// The sample spans of the Urms(1/2) values (first sample, one past the last) and the values.
type HalfCycleRms = (Vec<(usize, usize)>, Vec<f64>);

/// Urms(1/2) of a channel: the RMS over one cycle, a value every half cycle, with the sample
/// spans they cover (`None` when there are too few for a median either side).
fn half_cycle_rms(v: Voltage<'_>, fs: f64, f: f64) -> Option<HalfCycleRms> {
    let half = fs / f / 2.0;
    let mut spans = Vec::new();
    let mut k = 0usize;
    loop {
        let a = (k as f64 * half).round() as usize;
        let e = ((k + 2) as f64 * half).round() as usize;
        if e > v.len() || e <= a {
            break;
        }
        spans.push((a, e));
        k += 1;
    }
    if spans.len() < 4 * STEP_CYCLES {
        return None;
    }
    let urms = spans
        .iter()
        .map(|&(a, e)| v.mean_square(a, e).sqrt())
        .collect();
    Some((spans, urms))
}

/// A dip or swell found by [`spells`] on one or more channels.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Spell {
    dip: bool,
    /// The first Urms(1/2) value of it.
    start: usize,
    /// The first value after it (every channel back beyond the hysteresis), or the number of
    /// values when it lasts to the end.
    end: usize,
    /// The channel holding the extreme: the lowest (dip) or highest (swell) value as a share of
    /// its channel's reference.
    channel: usize,
    /// That value, V.
    extreme: f64,
    /// The channels that crossed the threshold during it.
    took_part: [bool; 3],
}

/// The dips and swells of `urms` (each channel's Urms(1/2) values, same length), each channel
/// against its own reference (all the same when a declared voltage is given), by the module's
/// rule, in time order.
fn spells(urms: &[&[f64]], refs: &[f64]) -> Vec<Spell> {
    let len = urms.iter().map(|u| u.len()).min().unwrap_or(0);
    let mut out = Vec::new();
    for dip in [true, false] {
        // the threshold crossed, and the value every channel must be back at to end it
        let crossed = |c: usize, x: f64| {
            if dip {
                x < DIP_SHARE * refs[c]
            } else {
                x > SWELL_SHARE * refs[c]
            }
        };
        let back = |c: usize, x: f64| {
            if dip {
                x >= (DIP_SHARE + HYSTERESIS_SHARE) * refs[c]
            } else {
                x <= (SWELL_SHARE - HYSTERESIS_SHARE) * refs[c]
            }
        };
        let mut j = 0;
        while j < len {
            if !(0..urms.len()).any(|c| crossed(c, urms[c][j])) {
                j += 1;
                continue;
            }
            let start = j;
            let mut end = j;
            while end < len && !(0..urms.len()).all(|c| back(c, urms[c][end])) {
                end += 1;
            }
            let (mut channel, mut extreme, mut share) = (0, f64::NAN, f64::NAN);
            let mut took_part = [false; 3];
            for (c, u) in urms.iter().enumerate() {
                for &x in &u[start..end] {
                    let s = x / refs[c];
                    if share.is_nan() || (dip && s < share) || (!dip && s > share) {
                        (channel, extreme, share) = (c, x, s);
                    }
                    if c < took_part.len() && crossed(c, x) {
                        took_part[c] = true;
                    }
                }
            }
            out.push(Spell {
                dip,
                start,
                end,
                channel,
                extreme,
                took_part,
            });
            j = end + 1;
        }
    }
    out.sort_by_key(|s| s.start);
    out
}

/// The medians of the Urms(1/2) values either side of a spell (values two half cycles apart
/// share no samples: every second is taken), the one before falling back to `reference`.
fn either_side(urms: &[f64], s: &Spell, reference: f64) -> (f64, f64) {
    let side = |from: usize, to: usize| {
        let x: Vec<f64> = (from..to).step_by(2).map(|k| urms[k]).collect();
        median(&x)
    };
    let before = side(s.start.saturating_sub(2 * STEP_CYCLES), s.start);
    let after = side(s.end, (s.end + 2 * STEP_CYCLES).min(urms.len()));
    (
        if before.is_finite() {
            before
        } else {
            reference
        },
        after,
    )
}

/// The event of a spell.
fn event(s: &Spell, spans: &[(usize, usize)], urms: &[f64], reference: f64, fs: f64) -> Event {
    let (before, after) = either_side(urms, s, reference);
    Event {
        kind: if s.dip {
            EventKind::Dip
        } else {
            EventKind::Swell
        },
        quantity: EventQuantity::VoltageRmsV,
        time_s: spans[s.start].0 as f64 / fs,
        located_to: "cycle",
        duration_s: (s.end < spans.len()).then(|| (spans[s.end].0 - spans[s.start].0) as f64 / fs),
        before,
        after,
        extreme: Some(s.extreme),
        phase: None,
        phases: None,
        reference_v: Some(reference),
    }
}

/// Dips and swells of one phase's `v` against `declared` or the median of its Urms(1/2) values;
/// and the reference used (`None`: no declared voltage and too few values for a median).
pub(super) fn dips_and_swells(
    v: &[f64],
    fs: f64,
    f: f64,
    declared: Option<f64>,
) -> (Vec<Event>, Option<f64>) {
    let Some((spans, urms)) = half_cycle_rms(Voltage::Samples(v), fs, f) else {
        return (Vec::new(), declared);
    };
    let reference = declared.unwrap_or_else(|| median(&urms));
    if !(reference > 0.0) {
        return (Vec::new(), None);
    }
    let events = spells(&[&urms], &[reference])
        .iter()
        .map(|s| event(s, &spans, &urms, reference, fs))
        .collect();
    (events, Some(reference))
}

/// The polyphase dips and swells of a three-phase capture's voltage `channels` (named: `a`,
/// `b`, `c` phase to neutral on a 4-wire capture, `ab`, `bc`, `ca` on a 3-wire one), sampled at
/// `fs` with fundamental `f`: kinds [`EventKind::PolyphaseDip`] and
/// [`EventKind::PolyphaseSwell`], by the module's rule, each channel against `declared` (a 3-wire
/// capture's line-to-line Udin) or, without one, against the median of its own Urms(1/2)
/// values (our choice, as for each phase's own events). `extreme` is the lowest (highest) value
/// as a share of its channel's reference and `reference_v` that channel's reference, so
/// `extreme / reference_v` is the residual voltage (magnitude) in per unit; `before` and
/// `after` are that channel's. `phases` lists the channels that crossed the threshold. Times
/// from the first sample of `channels`.
pub fn polyphase(
    channels: &[(&'static str, Voltage<'_>)],
    fs: f64,
    f: f64,
    declared: Option<f64>,
) -> Vec<Event> {
    if !(f > 0.0 && fs > 0.0 && fs / f >= 4.0) || channels.is_empty() {
        return Vec::new();
    }
    let mut spans = Vec::new();
    let mut urms = Vec::new();
    let mut refs = Vec::new();
    for (_, v) in channels {
        let Some((s, u)) = half_cycle_rms(*v, fs, f) else {
            return Vec::new();
        };
        let reference = declared.unwrap_or_else(|| median(&u));
        if !(reference > 0.0) {
            return Vec::new();
        }
        spans = s;
        urms.push(u);
        refs.push(reference);
    }
    let views: Vec<&[f64]> = urms.iter().map(|u| u.as_slice()).collect();
    spells(&views, &refs)
        .iter()
        .map(|s| {
            let mut e = event(s, &spans, &urms[s.channel], refs[s.channel], fs);
            e.kind = if s.dip {
                EventKind::PolyphaseDip
            } else {
                EventKind::PolyphaseSwell
            };
            let mut names = Channels::default();
            for (c, (name, _)) in channels.iter().enumerate() {
                if s.took_part.get(c) == Some(&true) {
                    names.push(name);
                }
            }
            e.phases = Some(names);
            e
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The rule on hand-made Urms(1/2) values against 100 V (thresholds 90 / 92 V, 110 / 108 V):
    /// a dip from the first channel below 90 to the first value where every channel is at or
    /// above 92; a channel between 90 and 92 holds it open; the extreme is the lowest share.
    #[test]
    fn a_polyphase_dip_runs_from_the_first_channel_below_to_all_back_above_the_hysteresis() {
        let a = [
            100.0, 100.0, 70.0, 70.0, 95.0, 95.0, 95.0, 95.0, 95.0, 100.0,
        ];
        let b = [
            100.0, 100.0, 100.0, 85.0, 85.0, 91.0, 92.0, 100.0, 100.0, 100.0,
        ];
        let c = [100.0; 10];
        let s = spells(&[&a, &b, &c], &[100.0; 3]);
        assert_eq!(s.len(), 1, "{s:?}");
        assert_eq!((s[0].start, s[0].end), (2, 6));
        assert_eq!((s[0].channel, s[0].extreme), (0, 70.0));
        assert_eq!(s[0].took_part, [true, true, false]);
        // each channel alone: a ends at 4, b's runs from 3 to 6
        let one = |u: &[f64]| spells(&[u], &[100.0]);
        assert_eq!((one(&a)[0].start, one(&a)[0].end), (2, 4));
        assert_eq!((one(&b)[0].start, one(&b)[0].end), (3, 6));
        // a swell mirrored, on another channel during the dip: found on its own
        let c = [
            100.0, 100.0, 100.0, 115.0, 115.0, 109.0, 100.0, 100.0, 100.0, 100.0,
        ];
        let s = spells(&[&a, &b, &c], &[100.0; 3]);
        assert_eq!(s.len(), 2, "{s:?}");
        let swell = s.iter().find(|s| !s.dip).unwrap();
        assert_eq!((swell.start, swell.end, swell.extreme), (3, 6, 115.0));
    }
}
