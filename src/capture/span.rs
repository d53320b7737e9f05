//! A chosen span of a record, asked for in seconds, and the times a record states.
//!
//! [`SpanRequest`] is what the user asked for (`--from`, `--to` and where time zero is: the first
//! sample or a COMTRADE record's trigger); [`select`] turns it into samples of a loaded capture
//! through [`Capture::span`], refusing a span that is not inside the record. A sample at time
//! `t = k / rate` after the first sample is kept when `from ≤ t < to`, so `--from 0 --to 0.1` at
//! 1000 Hz keeps samples 0 to 99: exactly five cycles of 50 Hz.

use super::error::LoadErrorKind;
use super::{Capture, Span};
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

/// The part of `capture` that `request` asks for, as a capture of its own ([`Capture::span`]).
pub fn select(capture: &Capture, request: &SpanRequest) -> Result<Capture, LoadErrorKind> {
    let rate = capture.sample_rate_hz;
    let n = capture.len();
    let bad = |m: String| LoadErrorKind::BadSpan(format!("{request}: {m}"));
    let zero = match request.zero {
        TimeZero::Start => 0.0,
        TimeZero::Trigger => {
            let times = capture.times.as_ref().filter(|t| t.trigger.is_some());
            let Some(times) = times else {
                return Err(bad(
                    "times counted from the trigger, but the file states no trigger time (only \
                     COMTRADE records do): count from the first sample instead"
                        .into(),
                ));
            };
            match times.trigger_offset_s {
                Some(t) => t,
                None => {
                    return Err(bad(format!(
                        "the trigger time '{}' cannot be placed against the start time '{}': \
                         count from the first sample instead",
                        times.trigger.as_deref().unwrap_or(""),
                        times.start.as_deref().unwrap_or("")
                    )));
                }
            }
        }
    };
    let duration = n as f64 / rate;
    let whole = || {
        format!(
            "the record runs from 0 to {duration} s after its first sample ({n} samples at \
             {rate} Hz){}",
            match request.zero {
                TimeZero::Trigger => format!(", its trigger at {zero} s"),
                TimeZero::Start => String::new(),
            }
        )
    };
    let index = |t: f64| (t * rate - EDGE_TOLERANCE).ceil();
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

impl Span {
    /// The span of a whole record of `len` samples.
    pub fn whole(len: usize) -> Span {
        Span {
            first: 0,
            len,
            of: len,
        }
    }

    /// Whether the span is the whole record.
    pub fn is_whole(&self) -> bool {
        self.first == 0 && self.len == self.of
    }
}
