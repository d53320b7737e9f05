//! A chosen span of a record, asked for in seconds, and the times a record states.
//!
//! [`SpanRequest`] is what the user asked for (`--from`, `--to` and where time zero is: the first
//! sample or a COMTRADE record's trigger); [`select`] turns it into samples of a loaded capture
//! through [`Capture::span`], refusing a span that is not inside the record. A sample at time
//! `t = k / rate` after the first sample is kept when `from ≤ t < to`, so `--from 0 --to 0.1` at
//! 1000 Hz keeps samples 0 to 99: exactly five cycles of 50 Hz.
//!
//! A record with several sample rates (a COMTRADE `.cfg` with `nrates` > 1) is a run of
//! [`RateSegment`]s, each at one rate and starting when the one before it ends (its samples times
//! one interval at its rate). Times still count from the record's first sample, so `--from/--to`
//! mean the same as on a record at one rate; [`choose_segment`] keeps the one part a span lies in
//! (a span across a change of rate is refused, naming the parts), or, without a span, the longest
//! part with a [`Warning::RatePartChosen`] saying so. The capture of that part carries its place
//! in the record ([`Span::start_s`]), so [`select`] and every output count time the same way.

use super::error::LoadErrorKind;
use super::{Capture, Span};
use crate::warning::Warning;
use std::fmt;

/// Where the times of a [`SpanRequest`] count from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum TimeZero {
    /// The record's first sample.
    #[default]
    Start,
    /// The trigger time a COMTRADE record states.
    Trigger,
}

impl TimeZero {
    /// The word the command line and sidecars take.
    pub fn as_str(self) -> &'static str {
        match self {
            TimeZero::Start => "start",
            TimeZero::Trigger => "trigger",
        }
    }

    /// Reads `start` or `trigger`.
    pub fn parse(text: &str) -> Option<Self> {
        match text.trim().to_ascii_lowercase().as_str() {
            "start" => Some(TimeZero::Start),
            "trigger" => Some(TimeZero::Trigger),
            _ => None,
        }
    }
}

/// A part of a record to analyse, in seconds from [`TimeZero`]. Without `from` the span starts
/// at the first sample; without `to` it runs to the end.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SpanRequest {
    /// Start, seconds after time zero (negative: before it).
    pub from_s: Option<f64>,
    /// End, seconds after time zero.
    pub to_s: Option<f64>,
    /// Where the times count from.
    pub zero: TimeZero,
}

impl SpanRequest {
    /// Checks the request on its own: finite times, `from` before `to`. `None` when nothing
    /// is asked (the whole record). Errors name the options as `--from`/`--to`.
    pub fn new(
        from_s: Option<f64>,
        to_s: Option<f64>,
        zero: TimeZero,
    ) -> Result<Option<Self>, String> {
        for (x, name) in [(from_s, "--from"), (to_s, "--to")] {
            if let Some(x) = x
                && !x.is_finite()
            {
                return Err(format!(
                    "{name} must be a finite number of seconds, not {x}"
                ));
            }
        }
        if let (Some(a), Some(b)) = (from_s, to_s)
            && a >= b
        {
            return Err(format!(
                "--from {a} is not before --to {b}: the span must run forward in time"
            ));
        }
        if from_s.is_none() && to_s.is_none() {
            return Ok(None);
        }
        Ok(Some(SpanRequest { from_s, to_s, zero }))
    }
}

impl fmt::Display for SpanRequest {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let t = |x: Option<f64>, or: &str| x.map_or(or.to_string(), |x| format!("{x} s"));
        write!(
            f,
            "span {} to {}",
            t(self.from_s, "the start"),
            t(self.to_s, "the end")
        )?;
        if self.zero == TimeZero::Trigger {
            f.write_str(" from the trigger")?;
        }
        Ok(())
    }
}

/// The date-times a record states, as written, and the trigger's place in it.
#[derive(Debug, Clone, PartialEq)]
pub struct RecordTimes {
    /// Date and time of the first sample, as written (a COMTRADE `.cfg`'s start line).
    pub start: Option<String>,
    /// Date and time of the trigger, as written.
    pub trigger: Option<String>,
    /// The trigger, seconds after the first sample; `None` when the two date-times cannot be
    /// read as such.
    pub trigger_offset_s: Option<f64>,
}

/// Samples within this fraction of a sample interval of a span's edge count as on it
/// (`0.1 × 1000 Hz` is 100.00000000000001 in binary floating point).
const EDGE_TOLERANCE: f64 = 1e-6;

/// Where time zero lies, seconds after the record's first sample, or why it cannot be placed.
fn zero_s(request: &SpanRequest, times: Option<&RecordTimes>) -> Result<f64, String> {
    match request.zero {
        TimeZero::Start => Ok(0.0),
        TimeZero::Trigger => {
            let Some(times) = times.filter(|t| t.trigger.is_some()) else {
                return Err(
                    "times counted from the trigger, but the file states no trigger time (only \
                     COMTRADE records do): count from the first sample instead"
                        .into(),
                );
            };
            times.trigger_offset_s.ok_or_else(|| {
                format!(
                    "the trigger time '{}' cannot be placed against the start time '{}': count \
                     from the first sample instead",
                    times.trigger.as_deref().unwrap_or(""),
                    times.start.as_deref().unwrap_or("")
                )
            })
        }
    }
}

/// The part of `capture` that `request` asks for, as a capture of its own ([`Capture::span`]).
/// `capture` may itself be a part of its record (one [`RateSegment`]): the request's times count
/// from the record's first sample (or trigger) all the same.
pub fn select(capture: &Capture, request: &SpanRequest) -> Result<Capture, LoadErrorKind> {
    let rate = capture.sample_rate_hz;
    let n = capture.len();
    let bad = |m: String| LoadErrorKind::BadSpan(format!("{request}: {m}"));
    let zero = zero_s(request, capture.times.as_ref()).map_err(bad)?;
    // the time of this capture's first sample in its record
    let offset = capture.span.map_or(0.0, |s| s.start_s);
    let end_s = offset + n as f64 / rate;
    let whole = || {
        let what = if capture.span.is_some_and(|s| s.len < s.of) {
            "the part of the record at this rate"
        } else {
            "the record"
        };
        format!(
            "{what} runs from {offset} to {end_s} s after its first sample ({n} samples at \
             {rate} Hz){}",
            match request.zero {
                TimeZero::Trigger => format!(", its trigger at {zero} s"),
                TimeZero::Start => String::new(),
            }
        )
    };
    let index = |t: f64| ((t - offset) * rate - EDGE_TOLERANCE).ceil();
    let first = match request.from_s {
        None => 0.0,
        Some(from) => index(from + zero),
    };
    let end = match request.to_s {
        None => n as f64,
        Some(to) => index(to + zero),
    };
    if first < 0.0 {
        return Err(bad(format!(
            "it starts before the record's first sample: {}",
            whole()
        )));
    }
    if first >= n as f64 {
        return Err(bad(format!(
            "it starts after the record's end: {}",
            whole()
        )));
    }
    if end > n as f64 {
        return Err(bad(format!("it ends past the record: {}", whole())));
    }
    let (first, end) = (first as usize, end as usize);
    if end < first + 2 {
        return Err(bad(format!(
            "it holds {} sample(s) at {rate} Hz: too short to analyse",
            end.saturating_sub(first)
        )));
    }
    Ok(capture.span(first..end))
}

/// A stretch of a record sampled at one rate.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RateSegment {
    /// Samples per second.
    pub rate_hz: f64,
    /// Index of its first sample, counted from the record's first sample (0-based).
    pub first: usize,
    /// Number of samples.
    pub len: usize,
    /// Time of its first sample, seconds after the record's first sample.
    pub start_s: f64,
}

impl RateSegment {
    /// One interval after its last sample, seconds after the record's first sample (where the
    /// next segment starts).
    pub fn end_s(&self) -> f64 {
        self.start_s + self.len as f64 / self.rate_hz
    }

    /// The segment as a [`Span`] of a record of `of` samples lasting `record_s` seconds.
    pub fn span(&self, of: usize, record_s: f64) -> Span {
        Span {
            first: self.first,
            len: self.len,
            of,
            start_s: self.start_s,
            record_s,
        }
    }

    /// `1000 Hz from 0.5 to 1.5 s`.
    fn describe(&self) -> String {
        format!(
            "{} Hz from {} to {} s",
            self.rate_hz,
            self.start_s,
            self.end_s()
        )
    }
}

/// The segments of a record from its rates and the 1-based number of the last sample at each
/// (a COMTRADE `.cfg`'s `samp,endsamp` lines): segment `k` holds the samples after the previous
/// one's last up to its own, `1 / rate` apart, and starts when the previous one ends. The end
/// samples must rise (the caller has checked it).
pub fn segments(rates: &[(f64, u64)]) -> Vec<RateSegment> {
    let mut out = Vec::with_capacity(rates.len());
    let (mut first, mut start_s) = (0u64, 0.0);
    for &(rate_hz, end) in rates {
        let len = end.saturating_sub(first);
        let seg = RateSegment {
            rate_hz,
            first: first as usize,
            len: len as usize,
            start_s,
        };
        start_s = seg.end_s();
        first = end;
        out.push(seg);
    }
    out
}

/// The segments in words: `4000 Hz from 0 to 0.5 s, 1000 Hz from 0.5 to 1.5 s`.
fn list(segments: &[RateSegment]) -> String {
    segments
        .iter()
        .map(RateSegment::describe)
        .collect::<Vec<_>>()
        .join(", ")
}

/// Which segment of a record with several rates to analyse: the one `request` lies in, or without
/// a request the longest in time (the earliest of equals), with a warning naming it. A request
/// that crosses a change of rate, or lies outside every segment, is refused with the segments
/// and how to ask for one.
pub fn choose_segment(
    segments: &[RateSegment],
    request: Option<&SpanRequest>,
    times: Option<&RecordTimes>,
) -> Result<(usize, Option<Warning>), LoadErrorKind> {
    let example = |s: &RateSegment, zero: f64| {
        format!("--from {} --to {}", s.start_s - zero, s.end_s() - zero)
    };
    let Some(request) = request else {
        let mut best = 0;
        for (k, s) in segments.iter().enumerate() {
            if s.end_s() - s.start_s > segments[best].end_s() - segments[best].start_s {
                best = k;
            }
        }
        // the example asks for another part than the one analysed
        let other = usize::from(best == 0);
        let chosen = segments
            .get(best)
            .copied()
            .ok_or_else(|| LoadErrorKind::BadRecord("the record states no sample rate".into()))?;
        return Ok((
            best,
            Some(Warning::RatePartChosen {
                rate_hz: chosen.rate_hz,
                start_s: chosen.start_s,
                end_s: chosen.end_s(),
                parts: list(segments),
                example: segments
                    .get(other)
                    .map_or(String::new(), |s| example(s, 0.0)),
            }),
        ));
    };
    let bad = |m: String| LoadErrorKind::BadSpan(format!("{request}: {m}"));
    let zero = zero_s(request, times).map_err(bad)?;
    let end = segments.last().map_or(0.0, RateSegment::end_s);
    let from = request.from_s.map_or(0.0, |t| t + zero);
    let to = request.to_s.map_or(end, |t| t + zero);
    // the segment holding the span's first sample: from is on or after its start and before
    // its end (edges within a small fraction of a sample interval count as on them)
    let found = segments.iter().position(|s| {
        let tol = EDGE_TOLERANCE / s.rate_hz;
        from >= s.start_s - tol && from < s.end_s() - tol && to <= s.end_s() + tol
    });
    match found {
        Some(k) => Ok((k, None)),
        None => {
            let zero_words = match request.zero {
                TimeZero::Trigger => format!(" (the trigger at {zero} s)"),
                TimeZero::Start => String::new(),
            };
            let within = segments
                .iter()
                .any(|s| from >= s.start_s && from < s.end_s())
                && to <= end;
            Err(bad(format!(
                "{}; the record's parts at one rate, in seconds after its first sample{zero_words}, \
                 are {}: ask for a span inside one of them (e.g. {})",
                if within {
                    "it crosses a change of sample rate"
                } else {
                    "it is not inside the record"
                },
                list(segments),
                segments.first().map_or(String::new(), |s| example(s, zero))
            )))
        }
    }
}

impl Span {
    /// The span of a whole record of `len` samples at `sample_rate_hz`.
    pub fn whole(len: usize, sample_rate_hz: f64) -> Span {
        Span {
            first: 0,
            len,
            of: len,
            start_s: 0.0,
            record_s: len as f64 / sample_rate_hz,
        }
    }

    /// Whether the span is the whole record.
    pub fn is_whole(&self) -> bool {
        self.first == 0 && self.len == self.of
    }
}
