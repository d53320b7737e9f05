//! `bank --capture`: one capture across the bank's switching, cut into the steady states either
//! side of its largest reactive step.

use crate::analysis::{self, Analysis, Settings};
use crate::capture::{self, LoadOptions};
use crate::condition;
use crate::quantity::events::{EventKind, EventQuantity};
use crate::quantity::inrush::{Inrush, inrush};
use std::path::Path;

/// Cycles after the switching left out of the state after it: the inrush and its settling (our
/// choice: a bank's inrush rings down within a few cycles).
pub const SETTLE_CYCLES: f64 = 10.0;
/// Cycles before the switching left out of the state before it (the step is located to within
/// a cycle).
pub const GUARD_CYCLES: f64 = 1.0;
/// Fewest cycles a steady state must hold.
pub const MIN_STATE_CYCLES: f64 = 10.0;

/// The two states of one capture and what happened between them.
pub struct Switched {
    /// The steady state before (a span of the capture).
    pub before: Analysis,
    /// The steady state after.
    pub after: Analysis,
    /// When the bank switched, seconds from the record's first sample.
    pub switching_s: f64,
    /// Its inrush on the phase where it was largest; `None` when it could not be measured.
    pub inrush: Option<Inrush>,
}

/// Loads `path`, finds its largest reactive step and analyses the steady spans either side.
pub fn split(path: &Path, load: &LoadOptions, settings: &Settings) -> Result<Switched, String> {
    let c = capture::load(path, load).map_err(|e| e.to_string())?;
    let whole = analysis::analyze(c.clone(), settings).map_err(|e| e.to_string())?;
    let fs = c.sample_rate_hz;
    let f = whole.quantities.frequency_hz;
    let per_cycle = fs / f;
    let base_s = c.span.map_or(0.0, |s| s.start_s);
    let switchings: Vec<_> = whole
        .events
        .iter()
        .filter(|e| e.kind == EventKind::Switching)
        .collect();
    let size = |e: &&crate::quantity::events::Event| {
        let reactive = e.quantity == EventQuantity::ReactivePowerVar;
        (reactive, (e.after - e.before).abs())
    };
    let largest = switchings
        .iter()
        .copied()
        .max_by(|a, b| {
            let (ra, sa) = size(a);
            let (rb, sb) = size(b);
            ra.cmp(&rb).then(sa.total_cmp(&sb))
        })
        .ok_or_else(|| {
            format!(
                "{}: no switching found in the capture (no step in Q1 or I1 of 5 % or more): \
                 give the two states as --before and --after captures",
                path.display()
            )
        })?;
    // samples of this capture (which may itself be a span of the record)
    let local = |t_s: f64| (((t_s - base_s) * fs).round().max(0.0) as usize).min(c.len());
    let at = local(largest.time_s);
    let settle = (SETTLE_CYCLES * per_cycle).round() as usize;
    let guard = (GUARD_CYCLES * per_cycle).round() as usize;
    let previous = switchings
        .iter()
        .filter(|e| e.time_s < largest.time_s)
        .map(|e| local(e.time_s) + settle)
        .max()
        .unwrap_or(0);
    let next = switchings
        .iter()
        .filter(|e| e.time_s > largest.time_s)
        .map(|e| local(e.time_s).saturating_sub(guard))
        .min()
        .unwrap_or(c.len());
    let before = previous..at.saturating_sub(guard);
    let after = (at + settle).min(c.len())..next;
    let least = (MIN_STATE_CYCLES * per_cycle).round() as usize;
    for (range, which) in [(&before, "before"), (&after, "after")] {
        if range.end <= range.start || range.len() < least {
            return Err(format!(
                "{}: the switching at {:.4} s leaves {:.1} steady cycles {which} it (at least \
                 {MIN_STATE_CYCLES} are needed, {SETTLE_CYCLES} cycles after it are left out \
                 for the inrush): record longer either side, or give --before and --after",
                path.display(),
                largest.time_s,
                range.end.saturating_sub(range.start) as f64 / per_cycle
            ));
        }
    }
    let analyse = |r: std::ops::Range<usize>| {
        analysis::analyze(c.span(r), settings).map_err(|e| e.to_string())
    };
    let (b, a) = (analyse(before)?, analyse(after.clone())?);
    let mut scaled = c;
    condition::scale(&mut scaled, settings.v_scale, settings.i_scale);
    let inrush = condition::per_phase(&scaled)
        .iter()
        .filter_map(|ps| {
            inrush(
                &ps.voltage,
                &ps.current,
                fs,
                f,
                at,
                (at + settle).min(scaled.len()),
                after.clone(),
            )
        })
        .max_by(|x, y| x.peak_a.total_cmp(&y.peak_a));
    Ok(Switched {
        before: b,
        after: a,
        switching_s: largest.time_s,
        inrush,
    })
}
