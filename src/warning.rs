//! What a result carries besides its figures: warnings, findings and notes.
//!
//! None of them stops an analysis. Each [`Warning`] value has a [`Severity`]: a *warning* says
//! what threatens a figure (clipping, too few cycles, a reversed probe, no fundamental, an uneven
//! clock) and what the technician can do about it; a *finding* is a measured fact worth acting on
//! (PF below the penalty threshold); a *note* is an explained observation that threatens nothing
//! (the harmonics moving the zero crossings). Every stage may add them; they are collected on the
//! final [`crate::Analysis`], every output format keeps the three lists apart, and the
//! [`Status`] comes from the warnings alone.

use std::fmt;

/// Which of the two traces a warning is about.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Trace {
    /// The voltage trace.
    Voltage,
    /// The current trace.
    Current,
}

impl fmt::Display for Trace {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            Trace::Voltage => "voltage",
            Trace::Current => "current",
        })
    }
}

/// Something doubtful about a capture or its results, with advice.
#[derive(Debug, Clone, PartialEq)]
pub enum Warning {
    /// Something found on one phase of a three-phase capture.
    OnPhase {
        /// The phase: `a`, `b` or `c`.
        phase: &'static str,
        /// What was found there.
        warning: Box<Warning>,
    },
    /// The sample interval of the time column varies by more than 1 %.
    TimeJitter {
        /// Largest deviation of one interval from the mean interval, in percent.
        percent: f64,
    },
    /// `--rate` and the file's own time base disagree.
    RateMismatch {
        /// Rate given on the command line.
        given_hz: f64,
        /// Rate implied by the time column or preamble.
        file_hz: f64,
    },
    /// Flat tops at the extremes of a trace: the instrument's range was exceeded.
    Clipping {
        /// Which trace.
        trace: Trace,
        /// Share of samples sitting on the extreme values, in percent.
        percent: f64,
    },
    /// The record holds fewer than three cycles of the fundamental.
    FewCycles {
        /// Number of cycles in the record.
        cycles: f64,
    },
    /// The phase angle is beyond ±90°: power flows from the "load" to the source.
    ReversedCurrent {
        /// The measured angle, degrees.
        angle_deg: f64,
    },
    /// A trace uses only a few steps of its converter.
    LowResolution {
        /// Which trace.
        trace: Trace,
        /// Number of distinct sample values seen.
        levels: usize,
    },
    /// A trace holds no fundamental above its noise: the phase angle and PF are undefined.
    NoFundamental {
        /// Which trace.
        trace: Trace,
        /// Fundamental RMS divided by the RMS of everything else.
        ratio: f64,
    },
    /// The DFT and zero-crossing angles differ by more than their expected errors allow.
    MethodsDisagree {
        /// DFT angle minus zero-crossing angle, degrees.
        difference_deg: f64,
        /// The difference the two methods' own errors allow, degrees.
        allowed_deg: f64,
        /// The difference the fitted harmonics explain (they move the zero crossings), degrees;
        /// `None` when it could not be worked out.
        explained_deg: Option<f64>,
        /// Current THD in percent, the usual cause.
        current_thd_percent: f64,
        /// Voltage THD in percent.
        voltage_thd_percent: f64,
    },
    /// Fewer harmonic orders fit below the Nyquist limit than were asked for.
    HarmonicsCapped {
        /// Orders asked for.
        asked: usize,
        /// Highest order below the Nyquist limit, used instead.
        used: usize,
    },
    /// The true PF is below the utility's penalty threshold.
    PfBelowThreshold {
        /// |P/S|.
        pf: f64,
        /// The threshold.
        threshold: f64,
    },
    /// The fundamental frequency is far from 50, 60 or 400 Hz.
    UnusualFrequency {
        /// The measured frequency.
        frequency_hz: f64,
    },
    /// Nothing in the file said which channel is which; they were taken by column order.
    ChannelAssumed {
        /// Each as `'CH2' (column 3) as the current`.
        channels: Vec<String>,
    },
    /// A channel chosen against its own unit or name, because `--force-channels` was given.
    ChannelForced {
        /// The role it was given.
        trace: Trace,
        /// `'CH2(V)' (column 3)`.
        channel: String,
        /// What the file says it is: `a voltage by its unit (V)`.
        is: String,
    },
    /// Columns of the file that were not analysed (unused channels, markers, blank columns).
    ColumnsIgnored {
        /// Each as `'Trigger' (column 4)` or `'Spare' (column 5, blank)`.
        columns: Vec<String>,
    },
    /// The record holds a switching (a step in the fundamental current or Q1): its
    /// whole-record figures mix the states before and after.
    NotSteady {
        /// Switchings found.
        switchings: usize,
        /// When the first was, seconds from the record's first sample.
        first_s: f64,
    },
    /// The record has several sample rates and no span was asked: its longest part at one rate
    /// was analysed.
    RatePartChosen {
        /// The rate of the part analysed.
        rate_hz: f64,
        /// Its start, seconds after the record's first sample.
        start_s: f64,
        /// Its end, seconds after the record's first sample.
        end_s: f64,
        /// Every part, `4000 Hz from 0 to 0.5 s, 1000 Hz from 0.5 to 1.5 s`.
        parts: String,
        /// How to ask for another part: `--from 0 --to 0.5`.
        example: String,
    },
    /// The time column gives no unit; seconds were assumed.
    TimeUnitAssumed {
        /// `'X-axis' (column 1)`.
        column: String,
    },
    /// No time column: the sample rate is the one the file's preamble states.
    RateFromPreamble {
        /// The rate, Hz.
        rate_hz: f64,
        /// 1-based line of the preamble that states it.
        line: u64,
    },
}

/// How a warning bears on the figures: the three lists every output keeps apart.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Severity {
    /// Threatens a figure (clipping, too few cycles, no fundamental, a reversed probe, an uneven clock).
    Warning,
    /// A measured fact worth acting on, not a doubt about the figures (PF below the threshold).
    Finding,
    /// An explained observation that threatens nothing (harmonics moving the zero crossings).
    Note,
}

impl Severity {
    /// The word used in every output (`warning`, `finding`, `note`).
    pub fn as_str(self) -> &'static str {
        match self {
            Severity::Warning => "warning",
            Severity::Finding => "finding",
            Severity::Note => "note",
        }
    }
}

/// The status of one capture (or file) in every output: what its warnings say about its figures.
/// Findings and notes never change it; verdicts have their own fields.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Status {
    /// Analysed; nothing threatens a figure (there may be findings and notes).
    Ok,
    /// Analysed, with at least one warning: some figure may not be right.
    Warning,
    /// Could not be read or analysed.
    Error,
}

impl Status {
    /// The word shown.
    pub fn as_str(self) -> &'static str {
        match self {
            Status::Ok => "ok",
            Status::Warning => "warning",
            Status::Error => "error",
        }
    }

    /// The status of an analysed capture with these observations: `warning` when one of them is
    /// a warning, else `ok`.
    pub fn of(observations: &[Warning]) -> Status {
        if observations
            .iter()
            .any(|w| w.severity() == Severity::Warning)
        {
            Status::Warning
        } else {
            Status::Ok
        }
    }
}

/// DFT minus zero-crossing angle left once the harmonics' own shift is taken out, degrees; `None`
/// when the harmonics' shift is not known.
fn unexplained_deg(difference_deg: f64, explained_deg: Option<f64>) -> Option<f64> {
    explained_deg.map(|e| {
        let d = (difference_deg - e).rem_euclid(360.0);
        if d > 180.0 { 360.0 - d } else { d }
    })
}

impl Warning {
    /// How this warning bears on the figures.
    ///
    /// A methods disagreement is a note when the fitted harmonics explain it (they move the zero
    /// crossings by that much, within what the two methods' errors allow): the DFT angle is then
    /// the fundamental's and nothing is wrong. Unexplained, it stays a warning: something that is
    /// not in the harmonic model (a spike, a DC step, an interharmonic) moves the crossings.
    pub fn severity(&self) -> Severity {
        match self {
            Warning::OnPhase { warning, .. } => warning.severity(),
            Warning::PfBelowThreshold { .. } => Severity::Finding,
            Warning::HarmonicsCapped { .. }
            | Warning::ChannelAssumed { .. }
            | Warning::ColumnsIgnored { .. }
            | Warning::TimeUnitAssumed { .. }
            | Warning::RateFromPreamble { .. } => Severity::Note,
            Warning::MethodsDisagree {
                difference_deg,
                allowed_deg,
                explained_deg,
                ..
            } => match unexplained_deg(*difference_deg, *explained_deg) {
                Some(u) if u <= *allowed_deg => Severity::Note,
                _ => Severity::Warning,
            },
            _ => Severity::Warning,
        }
    }

    /// Why a pass/fail verdict resting on this capture would not be defensible, when this warning
    /// makes it so: the capture cannot support the figure (clipping, too few cycles, no
    /// fundamental). A verdict that meets one is `inconclusive` with this reason.
    pub fn undermines_verdict(&self) -> Option<String> {
        match self {
            Warning::OnPhase { phase, warning } => warning
                .undermines_verdict()
                .map(|why| format!("phase {phase}: {why}")),
            Warning::Clipping { trace, percent } => Some(format!(
                "the {trace} trace is clipped ({percent:.1} % of samples on flat tops)"
            )),
            Warning::FewCycles { cycles } => Some(format!(
                "only {cycles:.2} cycles of the fundamental were captured"
            )),
            Warning::NoFundamental { trace, .. } => Some(format!(
                "the {trace} trace holds no fundamental above its noise"
            )),
            Warning::NotSteady { first_s, .. } => Some(format!(
                "the record holds a switching at {first_s:.4} s: its figures mix two states"
            )),
            _ => None,
        }
    }

    /// A short stable code for machines (CSV and JSON consumers filter on it).
    pub fn code(&self) -> &'static str {
        match self {
            Warning::OnPhase { warning, .. } => warning.code(),
            Warning::TimeJitter { .. } => "time-jitter",
            Warning::RateMismatch { .. } => "rate-mismatch",
            Warning::Clipping { .. } => "clipping",
            Warning::FewCycles { .. } => "few-cycles",
            Warning::ReversedCurrent { .. } => "reversed-current",
            Warning::LowResolution { .. } => "low-resolution",
            Warning::NoFundamental { .. } => "no-fundamental",
            Warning::MethodsDisagree { .. } => "methods-disagree",
            Warning::HarmonicsCapped { .. } => "harmonics-capped",
            Warning::UnusualFrequency { .. } => "unusual-frequency",
            Warning::PfBelowThreshold { .. } => "pf-below-threshold",
            Warning::ChannelAssumed { .. } => "channel-assumed",
            Warning::ChannelForced { .. } => "channel-forced",
            Warning::ColumnsIgnored { .. } => "columns-ignored",
            Warning::TimeUnitAssumed { .. } => "time-unit-assumed",
            Warning::RateFromPreamble { .. } => "rate-from-preamble",
            Warning::NotSteady { .. } => "not-steady",
            Warning::RatePartChosen { .. } => "rate-part-chosen",
        }
    }
}

impl fmt::Display for Warning {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Warning::OnPhase { phase, warning } => write!(f, "phase {phase}: {warning}"),
            Warning::TimeJitter { percent } => write!(
                f,
                "sample interval varies by up to {percent:.1} %: the time column is uneven, \
                 results assume its mean rate; check the logger's clock or export settings"
            ),
            Warning::RateMismatch { given_hz, file_hz } => write!(
                f,
                "--rate {given_hz} Hz differs from the file's own time base ({file_hz:.6} Hz); \
                 using --rate"
            ),
            Warning::Clipping { trace, percent } => write!(
                f,
                "{trace} trace looks clipped ({percent:.1} % of samples on flat tops): \
                 use a larger range or probe ratio and capture again"
            ),
            Warning::FewCycles { cycles } => write!(
                f,
                "only {cycles:.2} cycles in the record: results are less certain; \
                 capture at least 10 cycles where you can"
            ),
            Warning::ReversedCurrent { angle_deg } => write!(
                f,
                "phase angle {angle_deg:.1}° is beyond ±90°: power flows back to the source; \
                 if this load does not generate, the current probe or clamp is probably reversed"
            ),
            Warning::LowResolution { trace, levels } => write!(
                f,
                "{trace} trace uses only {levels} distinct levels: raise the vertical gain \
                 so the waveform fills more of the screen"
            ),
            Warning::NoFundamental { trace, ratio } => write!(
                f,
                "{trace} trace holds no fundamental above its noise (ratio {ratio:.2}): \
                 phase angle and power factor are undefined (is the load switched off?)"
            ),
            Warning::MethodsDisagree {
                difference_deg,
                allowed_deg,
                explained_deg,
                current_thd_percent,
                voltage_thd_percent,
            } => {
                write!(
                    f,
                    "DFT and zero-crossing angles differ by {difference_deg:.2}° (their errors \
                     allow {allowed_deg:.2}°)"
                )?;
                match (
                    explained_deg,
                    unexplained_deg(*difference_deg, *explained_deg),
                ) {
                    (Some(e), Some(u)) if u <= *allowed_deg => write!(
                        f,
                        ": the harmonics move the zero crossings by {e:.2}° (current THD \
                         {current_thd_percent:.1} %, voltage THD {voltage_thd_percent:.1} %), \
                         which explains it; the DFT angle is the one for the fundamental"
                    ),
                    (Some(e), _) => write!(
                        f,
                        " and the harmonics explain only {e:.2}° of it: something else moves \
                         the zero crossings (spikes, a DC step, interharmonics, a changing \
                         load); look at the waveform before trusting either angle"
                    ),
                    (None, _) => write!(
                        f,
                        " and the harmonics' share could not be worked out (current THD \
                         {current_thd_percent:.1} %, voltage THD {voltage_thd_percent:.1} %); \
                         look at the waveform before trusting either angle"
                    ),
                }
            }
            Warning::HarmonicsCapped { asked, used } => write!(
                f,
                "harmonics up to order {asked} asked for, but only orders up to {used} lie \
                 below the Nyquist limit of this sample rate; THD and spectrum stop at {used}"
            ),
            Warning::PfBelowThreshold { pf, threshold } => write!(
                f,
                "power factor {pf:.3} is below the {threshold:.2} threshold: a utility may \
                 charge a penalty; see `tracephase bank` for the correction needed"
            ),
            Warning::UnusualFrequency { frequency_hz } => write!(
                f,
                "fundamental at {frequency_hz:.3} Hz is far from 50, 60 or 400 Hz: \
                 check the sample rate (--rate) or the time column"
            ),
            Warning::ChannelAssumed { channels } => write!(
                f,
                "nothing in the file says which channel is which: took {} by column order; \
                 if that is wrong, say which with --voltage and --current",
                channels.join(" and ")
            ),
            Warning::ChannelForced { trace, channel, is } => write!(
                f,
                "{channel} is used as the {trace} because of --force-channels, though the file \
                 says it is {is}"
            ),
            Warning::ColumnsIgnored { columns } => {
                write!(f, "columns not analysed: {}", columns.join(", "))
            }
            Warning::TimeUnitAssumed { column } => write!(
                f,
                "the time column {column} gives no unit: read as seconds; if it is not, name the \
                 unit in the header (e.g. 'Time (ms)') or give the rate with --rate HZ"
            ),
            Warning::RatePartChosen {
                rate_hz,
                start_s,
                end_s,
                parts,
                example,
            } => write!(
                f,
                "the record has several sample rates ({parts}): analysed its longest part, \
                 {rate_hz} Hz from {start_s} to {end_s} s; choose another with --from/--to \
                 (e.g. {example})"
            ),
            Warning::RateFromPreamble { rate_hz, line } => write!(
                f,
                "sample rate {rate_hz} Hz as the file's preamble states it (line {line}); \
                 --rate HZ overrides it"
            ),
            Warning::NotSteady {
                switchings,
                first_s,
            } => write!(
                f,
                "the record holds {switchings} switching{} (the first at {first_s:.4} s): its \
                 whole-record figures mix the states before and after; see them over time with \
                 `tracephase trend`, or analyse one steady part with --from/--to",
                if *switchings == 1 { "" } else { "s" }
            ),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn only_doubts_about_the_capture_undermine_a_verdict() {
        let clipped = Warning::Clipping {
            trace: Trace::Current,
            percent: 44.0,
        };
        assert_eq!(clipped.severity(), Severity::Warning);
        assert!(clipped.undermines_verdict().unwrap().contains("current"));
        let low_pf = Warning::PfBelowThreshold {
            pf: 0.8,
            threshold: 0.9,
        };
        assert_eq!(low_pf.severity(), Severity::Finding);
        assert!(low_pf.undermines_verdict().is_none());
        let capped = Warning::HarmonicsCapped {
            asked: 50,
            used: 20,
        };
        assert_eq!(capped.severity(), Severity::Note);
        assert!(capped.undermines_verdict().is_none());
    }

    fn disagree(difference_deg: f64, explained_deg: Option<f64>) -> Warning {
        Warning::MethodsDisagree {
            difference_deg,
            allowed_deg: 0.1,
            explained_deg,
            current_thd_percent: 20.0,
            voltage_thd_percent: 2.0,
        }
    }

    #[test]
    fn a_methods_disagreement_the_harmonics_explain_is_a_note() {
        let w = disagree(1.5, Some(1.45));
        assert_eq!(w.severity(), Severity::Note);
        assert!(w.to_string().contains("which explains it"), "{w}");
        // across the ±180° seam: 179.95° and −179.98° are 0.07° apart
        assert_eq!(disagree(179.95, Some(-179.98)).severity(), Severity::Note);
    }

    #[test]
    fn a_methods_disagreement_the_harmonics_do_not_explain_stays_a_warning() {
        let w = disagree(1.5, Some(0.2));
        assert_eq!(w.severity(), Severity::Warning);
        assert!(w.to_string().contains("explain only 0.20°"), "{w}");
        assert_eq!(disagree(1.5, None).severity(), Severity::Warning);
    }

    #[test]
    fn status_comes_from_warnings_only() {
        let finding = Warning::PfBelowThreshold {
            pf: 0.8,
            threshold: 0.9,
        };
        let note = disagree(1.5, Some(1.5));
        assert_eq!(Status::of(&[]), Status::Ok);
        assert_eq!(Status::of(&[finding.clone(), note.clone()]), Status::Ok);
        let few = Warning::FewCycles { cycles: 2.0 };
        assert_eq!(Status::of(&[finding, note, few]), Status::Warning);
    }
}
