//! A panel or revenue meter's reading against our measurement of the same circuit, within the
//! meter's accuracy class.
//!
//! Input: what the meter shows ([`Reading`]), its [`AccuracyClass`], how it signs PF
//! ([`PfSign`]) and our measurement with its expanded uncertainties ([`Measured`], load
//! convention, k = 2). Output: a [`MeterReport`] with one [`MeterCheck`] per quantity the meter
//! shows, the quadrant, and plain-language wiring hints.
//!
//! # Rules
//!
//! - **Error and verdict.** `error_percent = 100·(meter − measured)/|measured|`, judged by the
//!   guarded decision rule [`decide`] against `±limit`, with our own expanded uncertainty
//!   `U_percent = 100·U/|measured|` as the guard band: consistent → pass, outside → fail,
//!   straddling a limit → inconclusive.
//! - **Near-zero values.** When |P| or |Q| is below [`LOW_SHARE`] of S, its error (and U) is taken
//!   in percent of S instead (common practice in meter testing at low PF); likewise a |PF| below
//!   [`LOW_SHARE`] is compared in percent of PF 1. The check's note says so. With no apparent
//!   power (or V, I) measured at all there is nothing to compare: the check is inconclusive and
//!   its error is NaN (null in JSON).
//! - **Limits.** P: the class's active limit at the measured |PF|
//!   ([`AccuracyClass::limit`]). Q: the reactive class's limit at the measured |sin φ|
//!   (the same [`AccuracyClass::limit`]). S: the active limit at the measured |PF| (our
//!   rule). PF: the active limit, in percent of reading (our rule, common practice). V and I: the
//!   classes set no limit for them; the active limit at unity PF is used (our rule: V and I feed
//!   the energy figure that limit holds).
//! - **PF sign.** Our PF (P/S, signed by P) is signed the meter's way before comparing
//!   ([`PfSign::apply`]): power-flow by the sign of P; lead-negative negative in the capacitive
//!   quadrants (II, IV), lag-negative negative in the inductive ones (I, III); unsigned |PF|.
//!   Where our P (power-flow), or P or Q (lead- and lag-negative), is within its uncertainty of
//!   zero the sign cannot be told and magnitudes are compared. A PF whose sign is wrong while the sign is
//!   certain fails, with a note naming a convention that would fit, or a reversed CT.
//! - **Quadrant** (four-quadrant metering diagram, IEC 62053-23 figure, load convention, from
//!   memory): I +P +Q inductive, II −P +Q capacitive, III −P −Q inductive, IV +P −Q capacitive; a
//!   zero P or Q counts as positive.
//! - **Wiring hints**, in plain language, only where some check fails:
//!   - *angle faults*: a reversed CT turns the current by 180°, voltage and current from
//!     different phases of a three-phase supply by ±120°. A turn by α makes the meter see
//!     `P' = P·cos α − Q·sin α`, `Q' = Q·cos α + P·sin α`, S unchanged (handbook phasor
//!     arithmetic). The hint is given when every P, Q and PF the meter shows fits the turned values
//!     within the class limit (in percent of S) plus our uncertainty. Where a reversed CT and a
//!     current from another phase fit the same readings, the reversed CT is named and the other
//!     mentioned;
//!   - *scale faults*, while PF agrees: P, Q and S off by one factor k with I off by k (CT ratio
//!     set wrong) or V off by k (VT ratio); k = 3 with V and I agreeing (one phase against a
//!     three-phase total); V alone off by √3 (line-to-line against line-to-neutral voltage).
//!     Ratios count as equal within twice the class limit at unity plus twice our largest relative
//!     uncertainty, never closer than 2 % (our rule). A single quantity off alone gets no hint: it
//!     is an inaccurate meter as far as we can tell.

pub mod definitions;
mod error;
mod hints;
mod input;
mod limits;

pub use error::MeterError;
pub use input::{AccuracyClass, CLASS_NAMES, PF_SIGNS, PfSign, Reading, capacitive};
pub use limits::{CONNECTIONS, Connection, LOW_POINT, LOWEST_POINT, Limit, UNITY_POINT};

use super::decision::{Verdict, decide};
use crate::warning::{Trace, Warning};
use serde::Serialize;

/// Below this share of S, P and Q errors are taken in percent of S, and a |PF| below it is
/// compared in percent of PF 1 (our rule).
pub const LOW_SHARE: f64 = 0.2;

/// Our measurement of the circuit the meter measures (load convention), with expanded
/// uncertainties U (k = 2) in the same units.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Measured {
    /// Active power P, W (positive when importing).
    pub p_w: f64,
    /// Reactive power Q, var (positive when inductive: current lags).
    pub q_var: f64,
    /// Apparent power S, VA.
    pub s_va: f64,
    /// True power factor P/S, signed by P.
    pub pf: f64,
    /// Phase angle V1 − I1, degrees, positive lagging.
    pub angle_deg: f64,
    /// Fundamental active power P1, W.
    pub p1_w: f64,
    /// Budeanu's reactive power Σ Vh·Ih·sin θh, var.
    pub q_budeanu_var: f64,
    /// Nonactive power N = √(S² − P²), var (not negative).
    pub nonactive_var: f64,
    /// Fundamental apparent power S1 = V1·I1, VA.
    pub s1_va: f64,
    /// Displacement PF cos θ1.
    pub displacement_pf: f64,
    /// U of the displacement PF.
    pub u_displacement_pf: f64,
    /// Fundamental voltage RMS V1, V.
    pub v1: f64,
    /// Fundamental current RMS I1, A.
    pub i1: f64,
    /// Voltage RMS, V.
    pub v_rms: f64,
    /// Current RMS, A.
    pub i_rms: f64,
    /// U of P, W.
    pub u_p_w: f64,
    /// U of Q, var.
    pub u_q_var: f64,
    /// U of S, VA.
    pub u_s_va: f64,
    /// U of PF.
    pub u_pf: f64,
    /// U of V, V.
    pub u_v: f64,
    /// U of I, A.
    pub u_i: f64,
}

/// The outcome of one check.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum MeterVerdict {
    /// The meter is within its class, with our uncertainty to spare.
    Pass,
    /// The meter is beyond its class, by more than our uncertainty.
    Fail,
    /// Our uncertainty straddles the class limit: the measurement cannot tell.
    Inconclusive,
}

impl MeterVerdict {
    /// The word used in every output.
    pub fn as_str(self) -> &'static str {
        match self {
            MeterVerdict::Pass => "pass",
            MeterVerdict::Fail => "fail",
            MeterVerdict::Inconclusive => "inconclusive",
        }
    }
}

impl From<Verdict> for MeterVerdict {
    fn from(v: Verdict) -> Self {
        match v {
            Verdict::Consistent => MeterVerdict::Pass,
            Verdict::Outside => MeterVerdict::Fail,
            Verdict::Inconclusive => MeterVerdict::Inconclusive,
        }
    }
}

/// One quantity the meter shows, against ours.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MeterCheck {
    /// "pf", "p", "q", "s", "v" or "i".
    pub quantity: &'static str,
    /// The definition of the quantity the reading was judged as, e.g. "N (nonactive √(S² − P²),
    /// IEEE 1459, signed as Q1)"; it starts "none fits" when the reading fits no candidate.
    pub definition: String,
    /// What the meter shows (W, var, VA, V, A; PF as signed by the meter).
    pub meter_value: f64,
    /// Our value in the same units (PF signed by the meter's convention).
    pub measured_value: f64,
    /// 100·(meter − measured)/reference, where the reference is |measured| unless the note says
    /// otherwise; NaN (null in JSON) when there is nothing to compare with.
    pub error_percent: f64,
    /// The class limit, ± %.
    pub limit_percent: f64,
    /// Our expanded uncertainty (k = 2) in percent of the same reference.
    pub uncertainty_percent: f64,
    /// Pass, fail or inconclusive.
    pub verdict: MeterVerdict,
    /// How the comparison was made where it departs from the plain rule.
    pub note: Option<String>,
}

/// Everything the meter check found.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MeterReport {
    /// The accuracy class with its standard.
    pub class: &'static str,
    /// The reactive class Q was judged against, when one was named (or `class` is reactive).
    pub reactive_class: Option<&'static str>,
    /// The meter's connection (`direct` or `transformer`), when given.
    pub connection: Option<&'static str>,
    /// The PF sign convention the meter was taken to use.
    pub pf_sign: &'static str,
    /// Our quadrant, 1 to 4 (four-quadrant metering diagram, load convention).
    pub quadrant: u8,
    /// The quadrant in words.
    pub quadrant_text: String,
    /// One check per quantity the meter shows, in the order pf, p, q, s, v, i.
    pub checks: Vec<MeterCheck>,
    /// Plain-language hints at wiring or programming faults.
    pub wiring_hints: Vec<String>,
    /// The analysed capture's warnings, as `analyze` prints them.
    pub warnings: Vec<String>,
    /// Their stable codes, in the same order.
    pub warning_codes: Vec<&'static str>,
}

/// The quadrant of (P, Q) on the four-quadrant metering diagram (IEC 62053-23 figure, load
/// convention, from memory): I import P, import Q: inductive; II export P, import Q:
/// capacitive; III export P, export Q: inductive; IV import P, export Q: capacitive. Zero counts
/// as positive. The character is the current's seen in the direction the active power flows.
pub fn quadrant(p: f64, q: f64) -> (u8, &'static str) {
    match (p < 0.0, q < 0.0) {
        (false, false) => (
            1,
            "quadrant I: importing active and reactive power: inductive (current lags)",
        ),
        (true, false) => (
            2,
            "quadrant II: exporting active power, importing reactive power: capacitive (in the \
             direction of the active power the current leads)",
        ),
        (true, true) => (
            3,
            "quadrant III: exporting active and reactive power: inductive (in the direction of \
             the active power the current lags)",
        ),
        (false, true) => (
            4,
            "quadrant IV: importing active power, exporting reactive power: capacitive (current \
             leads)",
        ),
    }
}

/// What is known about the meter besides its reading.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Meter {
    /// Its accuracy class (an active class, or a reactive one for a meter of reactive energy
    /// only).
    pub class: AccuracyClass,
    /// How it signs PF.
    pub pf_sign: PfSign,
    /// Its rated current (Ib for a direct-connected meter, In for a transformer-operated one,
    /// test amperes for ANSI C12.20), A, when known: the limits then follow the measured current
    /// ([`AccuracyClass::limit`]).
    pub rated_current_a: Option<f64>,
    /// How it is connected, when known: the IEC classes list different low-current rows.
    pub connection: Option<Connection>,
    /// Its reactive class (IEC 62053-23 or -24), when named: Q is judged only against it (or
    /// against `class` when that is reactive).
    pub reactive_class: Option<AccuracyClass>,
}

impl Meter {
    /// A meter of `class` signing PF by `pf_sign`, rated current, connection and reactive class
    /// unknown.
    pub fn new(class: AccuracyClass, pf_sign: PfSign) -> Self {
        Meter {
            class,
            pf_sign,
            rated_current_a: None,
            connection: None,
            reactive_class: None,
        }
    }

    /// Refuses what cannot be true of a meter: a reactive class that is not reactive, a
    /// connection a class is not made for, or a rated current without the connection where the
    /// class's low-current rows depend on it.
    pub fn validate(&self) -> Result<(), MeterError> {
        if let Some(rc) = self.reactive_class
            && !rc.is_reactive()
        {
            return Err(MeterError::NotReactive { class: rc.name() });
        }
        for c in [Some(self.class), self.reactive_class]
            .into_iter()
            .flatten()
        {
            let (direct, transformer) = c.connections();
            let fits = if direct {
                "direct-connected"
            } else {
                "transformer-operated"
            };
            match self.connection {
                Some(Connection::Direct) if !direct => {}
                Some(Connection::Transformer) if !transformer => {}
                None if self.rated_current_a.is_some() && c.needs_connection() => {
                    return Err(MeterError::NeedsConnection { class: c.name() });
                }
                _ => continue,
            }
            return Err(MeterError::WrongConnection {
                class: c.name(),
                connection: self.connection.map_or("", Connection::as_str),
                fits,
            });
        }
        Ok(())
    }

    /// The class Q is judged against: the named reactive class, or `class` when it is reactive.
    pub fn q_class(&self) -> Option<AccuracyClass> {
        self.reactive_class
            .or_else(|| self.class.is_reactive().then_some(self.class))
    }
}

/// Compares the meter's reading with our measurement of a capture without warnings, at the
/// class's full-current limits: [`check`] for the simplest case.
pub fn check_meter(
    reading: &Reading,
    measured: &Measured,
    class: AccuracyClass,
    pf_sign: PfSign,
) -> MeterReport {
    check(reading, measured, &Meter::new(class, pf_sign), &[])
}

/// The trace a warning is about, where it is about one.
fn warning_trace(w: &Warning) -> Option<Trace> {
    match w {
        Warning::Clipping { trace, .. } | Warning::NoFundamental { trace, .. } => Some(*trace),
        _ => None,
    }
}

/// Why the capture cannot support a verdict on `quantity`: the reasons of the capture's warnings
/// that undermine a verdict ([`Warning::undermines_verdict`]), leaving out those about the trace
/// the quantity does not rest on (V rests on the voltage trace only, I on the current trace only).
fn doubts(capture: &[Warning], quantity: &str) -> Vec<String> {
    capture
        .iter()
        .filter(|w| match warning_trace(w) {
            Some(Trace::Voltage) => quantity != "i",
            Some(Trace::Current) => quantity != "v",
            None => true,
        })
        .filter_map(Warning::undermines_verdict)
        .collect()
}

/// Compares the meter's reading with our measurement, quantity by quantity. `capture` holds the
/// analysed capture's warnings: they are reported with the checks, and a warning that undermines
/// a verdict turns the pass or fail of each check resting on that trace into inconclusive.
pub fn check(
    reading: &Reading,
    measured: &Measured,
    meter: &Meter,
    capture: &[Warning],
) -> MeterReport {
    let Meter {
        class,
        pf_sign,
        rated_current_a,
        connection,
        reactive_class: _,
    } = *meter;
    let m = measured;
    let ratio = rated_current_a.filter(|r| *r > 0.0).map(|r| m.i_rms / r);
    let cap = capacitive(m.p_w, m.q_var);
    // the limit of the active class at `x` (a |PF|), or why there is none
    let active = |x: f64, what: &str| -> (f64, Option<String>) {
        if class.is_reactive() {
            return (
                f64::NAN,
                Some(format!(
                    "not judged: {} is a reactive class and sets no limit for {what}",
                    class.name()
                )),
            );
        }
        let l = class.limit(x, cap && x < UNITY_POINT, ratio, connection);
        (l.percent, l.note)
    };
    let pf_abs = m.pf.abs();
    let sin_phi = if m.angle_deg.is_finite() {
        m.angle_deg.to_radians().sin().abs()
    } else {
        (m.q_var / m.s_va).abs()
    };
    let mut checks = Vec::new();
    if let Some(x) = reading.pf {
        let limit = active(pf_abs, "power factor");
        let mut wrong_sign = false;
        let mut each: Vec<MeterCheck> = definitions::candidates("pf", m)
            .into_iter()
            .map(|d| {
                let (mut c, wrong) = check_pf(x, d.value, d.u, m, pf_sign, limit.clone());
                wrong_sign |= wrong;
                c.definition = d.name.to_string();
                c
            })
            .collect();
        // a PF of the wrong sign is that, whatever the definition
        checks.push(if wrong_sign {
            each.swap_remove(0)
        } else {
            choose(each)
        });
    }
    // one quantity against each of its candidate definitions
    let judge = |q: &'static str, x: f64, limit: &(f64, Option<String>), note: Option<String>| {
        let share = match q {
            "p" => Some("P"),
            "q" => Some("Q"),
            _ => None,
        };
        let each = definitions::candidates(q, m)
            .into_iter()
            .map(|d| {
                let mut c = Compare::new(q, x, d.value, d.u, limit.0, note.clone())
                    .with_note(limit.1.clone());
                if let Some(symbol) = share {
                    c = c.share_of_s(m.s_va, symbol);
                }
                let mut c = c.finish();
                c.definition = d.name.to_string();
                c
            })
            .collect();
        choose(each)
    };
    if let Some(x) = reading.p_w {
        checks.push(judge("p", x, &active(pf_abs, "active power"), None));
    }
    if let Some(x) = reading.q_var {
        let limit = match meter.q_class() {
            Some(rc) => {
                let l = rc.limit(sin_phi, cap, ratio, connection);
                (l.percent, l.note)
            }
            None => (
                f64::NAN,
                Some(format!(
                    "not judged: {} is an active-energy class and sets no limit for reactive \
                     power; name the meter's reactive class (IEC 62053-23 or -24) to judge Q",
                    class.name()
                )),
            ),
        };
        checks.push(judge("q", x, &limit, None));
    }
    if let Some(x) = reading.s_va {
        checks.push(judge("s", x, &active(pf_abs, "apparent power"), None));
    }
    let unity_note = || {
        (!class.is_reactive()).then(|| {
            format!(
                "{} sets no limit for voltage or current; its active limit at unity PF is used \
                 (our rule)",
                class.name()
            )
        })
    };
    let unity = active(1.0, "voltage or current");
    if let Some(x) = reading.v {
        checks.push(judge("v", x, &unity, unity_note()));
    }
    if let Some(x) = reading.i {
        checks.push(judge("i", x, &unity, unity_note()));
    }
    let mut undermined: Vec<&'static str> = Vec::new();
    for c in &mut checks {
        let why = doubts(capture, c.quantity);
        if why.is_empty() || c.verdict == MeterVerdict::Inconclusive {
            continue;
        }
        c.verdict = MeterVerdict::Inconclusive;
        c.add_note(format!(
            "the capture cannot support this figure: {}",
            why.join("; ")
        ));
        undermined.push(c.quantity);
    }
    let mut wiring_hints = Vec::new();
    if !undermined.is_empty() {
        wiring_hints.push(format!(
            "no verdict on {} and no wiring fault is told from them: the capture cannot support \
             them ({}); capture again",
            undermined.join(", "),
            doubts(capture, "").join("; ")
        ));
    }
    wiring_hints.extend(hints::wiring_hints(reading, m, class, pf_sign, &checks));
    // Our own P negative while the meter fits our current turned by 180°: for a load, our clamp
    // is the one reversed; only the user knows whether the circuit exports.
    if m.p_w < -m.u_p_w.abs() && hints::fits_turn(reading, m, class, pf_sign, 180.0) {
        for c in &mut checks {
            if c.verdict == MeterVerdict::Fail {
                c.verdict = MeterVerdict::Inconclusive;
                c.add_note(
                    "our capture's own P is negative: if this circuit is a load, our clamp is \
                     reversed and, turned round, the capture agrees with the meter; if it \
                     exports, the meter's CT is reversed"
                        .to_string(),
                );
            }
        }
    }
    let (quadrant, text) = quadrant(m.p_w, m.q_var);
    MeterReport {
        class: class.name(),
        reactive_class: meter.q_class().map(|c| c.name()),
        connection: connection.map(Connection::as_str),
        pf_sign: pf_sign.as_str(),
        quadrant,
        quadrant_text: text.to_string(),
        checks,
        wiring_hints,
        warnings: capture.iter().map(ToString::to_string).collect(),
        warning_codes: capture.iter().map(Warning::code).collect(),
    }
}

impl MeterCheck {
    /// Appends a note.
    fn add_note(&mut self, text: String) {
        self.note = Some(match self.note.take() {
            Some(n) => format!("{n}; {text}"),
            None => text,
        });
    }
}

/// One comparison being built: the reference it is taken against, and its notes.
struct Compare {
    quantity: &'static str,
    meter: f64,
    measured: f64,
    u: f64,
    limit: f64,
    reference: f64,
    notes: Vec<String>,
}

impl Compare {
    fn new(
        quantity: &'static str,
        meter: f64,
        measured: f64,
        u: f64,
        limit: f64,
        note: Option<String>,
    ) -> Self {
        Compare {
            quantity,
            meter,
            measured,
            u,
            limit,
            reference: measured.abs(),
            notes: note.into_iter().collect(),
        }
    }

    /// Adds a note, if any.
    fn with_note(mut self, note: Option<String>) -> Self {
        self.notes.extend(note);
        self
    }

    /// Takes the error in percent of S when |measured| is below [`LOW_SHARE`] of S.
    fn share_of_s(mut self, s: f64, symbol: &str) -> Self {
        if s > 0.0 && self.measured.abs() < LOW_SHARE * s {
            self.reference = s;
            self.notes.push(format!(
                "{symbol} is under {:.0} % of S here: its error is taken in percent of S \
                 (common practice at low PF)",
                100.0 * LOW_SHARE
            ));
        }
        self
    }

    fn finish(self) -> MeterCheck {
        let mut notes = self.notes;
        let (error, u_pct, verdict) =
            if self.reference > 0.0 && self.reference.is_finite() && self.u.is_finite() {
                let error = 100.0 * (self.meter - self.measured) / self.reference;
                let u_pct = 100.0 * self.u.abs() / self.reference;
                if self.limit.is_finite() {
                    let d = decide(error, u_pct, -self.limit, self.limit);
                    (error, u_pct, d.verdict.into())
                } else {
                    // no limit applies (below the lowest current the class lists): no verdict
                    (error, u_pct, MeterVerdict::Inconclusive)
                }
            } else {
                notes.push(
                    "nothing measured to compare with (our value is zero or unknown)".to_string(),
                );
                (f64::NAN, f64::NAN, MeterVerdict::Inconclusive)
            };
        MeterCheck {
            quantity: self.quantity,
            definition: String::new(),
            meter_value: self.meter,
            measured_value: self.measured,
            error_percent: error,
            limit_percent: self.limit,
            uncertainty_percent: u_pct,
            verdict,
            note: (!notes.is_empty()).then(|| notes.join("; ")),
        }
    }
}

/// The check against the definition the reading matches (the rule in [`definitions`]): `each`
/// holds one check per candidate, IEEE 1459's own first.
fn choose(each: Vec<MeterCheck>) -> MeterCheck {
    let size = |c: &MeterCheck| {
        if c.error_percent.is_finite() {
            c.error_percent.abs()
        } else {
            f64::INFINITY
        }
    };
    let fitting: Vec<usize> = (0..each.len())
        .filter(|&k| each[k].verdict != MeterVerdict::Fail && size(&each[k]).is_finite())
        .collect();
    let Some(&nearest) = fitting
        .iter()
        .min_by(|&&a, &&b| size(&each[a]).total_cmp(&size(&each[b])))
    else {
        let mut first = each[0].clone();
        if each.iter().any(|c| c.error_percent.is_finite()) {
            let errors: Vec<String> = each
                .iter()
                .map(|c| format!("{} {}", c.definition, signed_percent(c.error_percent)))
                .collect();
            first.add_note(format!(
                "the reading fits none of the definitions (errors: {}); judged as the first",
                errors.join(", ")
            ));
            first.definition = format!("none fits; judged as {}", first.definition);
        }
        return first;
    };
    // the first stands while it is no further from the reading than our uncertainty
    let first = &each[0];
    let pick = if fitting.contains(&0)
        && size(first) - size(&each[nearest]) <= first.uncertainty_percent
    {
        0
    } else {
        nearest
    };
    let mut chosen = each[pick].clone();
    let also: Vec<&str> = fitting
        .iter()
        .filter(|&&k| k != pick)
        .map(|&k| each[k].definition.as_str())
        .collect();
    if pick != 0 {
        chosen.add_note(format!(
            "the reading matches {} and not {} ({}): judged as {}",
            chosen.definition,
            first.definition,
            signed_percent(first.error_percent),
            chosen.definition
        ));
    } else if !also.is_empty() && each.len() > 1 {
        // clean waveforms make the definitions agree: worth saying only when they differ
        let spread = each
            .iter()
            .map(|c| c.measured_value)
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), x| {
                (lo.min(x), hi.max(x))
            });
        if spread.1 - spread.0 > 1e-3 * spread.1.abs().max(spread.0.abs()) {
            chosen.add_note(format!(
                "the reading also fits {} on this capture",
                also.join(" and ")
            ));
        }
    }
    chosen
}

/// An error in percent with its sign, or "n/a".
fn signed_percent(x: f64) -> String {
    if x.is_finite() {
        format!("{x:+.2} %")
    } else {
        "n/a".into()
    }
}

/// The PF check against our PF `value` (±`u`) by one definition, signed the meter's way, a
/// wrong sign explained.
fn check_pf(
    meter: f64,
    value: f64,
    u: f64,
    m: &Measured,
    sign: PfSign,
    (limit, limit_note): (f64, Option<String>),
) -> (MeterCheck, bool) {
    let pf_abs = value.abs();
    let p_unsure = m.p_w.abs() <= m.u_p_w.abs();
    let q_unsure = m.q_var.abs() <= m.u_q_var.abs();
    let uncertain_sign = match sign {
        PfSign::PowerFlow => p_unsure,
        PfSign::LeadNegative | PfSign::LagNegative => p_unsure || q_unsure,
        PfSign::Unsigned => false,
    };
    let mut notes: Vec<String> = limit_note.into_iter().collect();
    let ours = if uncertain_sign {
        notes.push(format!(
            "our {} is within its uncertainty of zero, so the PF sign cannot be told: sizes \
             compared",
            if p_unsure { "P" } else { "Q" }
        ));
        pf_abs.copysign(meter)
    } else {
        sign.apply(value, m.p_w, m.q_var)
    };
    let wrong_sign =
        !uncertain_sign && meter != 0.0 && ours != 0.0 && (meter < 0.0) != (ours < 0.0);
    let mut c = Compare::new("pf", meter, ours, u, limit, None);
    c.notes = notes;
    if pf_abs < LOW_SHARE {
        c.reference = 1.0;
        c.notes.push(format!(
            "PF is under {LOW_SHARE} here: its error is taken in percent of PF 1"
        ));
    }
    let reference = c.reference;
    let mut check = c.finish();
    if wrong_sign {
        let size_fits = limit.is_finite()
            && decide(
                100.0 * (meter.abs() - ours.abs()) / reference,
                check.uncertainty_percent,
                -limit,
                limit,
            )
            .verdict
                != Verdict::Outside;
        let fitting: Vec<&str> = PF_SIGNS
            .into_iter()
            .filter(|s| *s != PfSign::Unsigned)
            .filter(|s| (s.apply(value, m.p_w, m.q_var) < 0.0) == (meter < 0.0))
            .map(PfSign::as_str)
            .collect();
        let why = if sign == PfSign::Unsigned {
            "the meter shows a signed PF but 'unsigned' was chosen".to_string()
        } else {
            format!("the PF sign does not fit '{}'", sign.as_str())
        };
        let cause = match fitting.as_slice() {
            [] => "its CT may be reversed".to_string(),
            some => format!(
                "the meter may sign PF '{}', or its CT is reversed",
                some.join("' or '")
            ),
        };
        let text = if size_fits {
            format!("the size of the PF agrees but its sign does not: {why}; {cause}")
        } else {
            format!("{why}; {cause}")
        };
        check.verdict = MeterVerdict::Fail;
        check.note = Some(match check.note {
            Some(n) => format!("{n}; {text}"),
            None => text,
        });
    }
    (check, wrong_sign)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// 230 V, 50 A at `angle_deg` (positive lagging): P = VI cos θ, Q = VI sin θ, S = VI
    /// (handbook arithmetic), with small uncertainties: 0.1 % on V, I, S, P, Q and PF.
    pub(super) fn measured(angle_deg: f64) -> Measured {
        let (v, i) = (230.0, 50.0);
        let s = v * i;
        let (sin, cos) = angle_deg.to_radians().sin_cos();
        let (p, q) = (s * cos, s * sin);
        Measured {
            p_w: p,
            q_var: q,
            s_va: s,
            pf: cos,
            angle_deg,
            p1_w: p,
            q_budeanu_var: q,
            nonactive_var: q.abs(),
            s1_va: s,
            displacement_pf: cos,
            u_displacement_pf: 1e-3,
            v1: v,
            i1: i,
            v_rms: v,
            i_rms: i,
            u_p_w: 1e-3 * s,
            u_q_var: 1e-3 * s,
            u_s_va: 1e-3 * s,
            u_pf: 1e-3,
            u_v: 1e-3 * v,
            u_i: 1e-3 * i,
        }
    }

    fn find<'a>(r: &'a MeterReport, q: &str) -> &'a MeterCheck {
        r.checks.iter().find(|c| c.quantity == q).unwrap()
    }

    #[test]
    fn a_reading_inside_its_class_passes() {
        // 30° lagging: P = 11 500·cos 30° = 9 959.3 W, Q = 5 750 var, PF 0.866
        let m = measured(30.0);
        let r = Reading::parse("pf=0.868,p=9.99kW,q=5.78kvar,s=11.55kVA,v=231V,i=50.2A").unwrap();
        let meter = Meter {
            reactive_class: Some(AccuracyClass::Reactive2),
            ..Meter::new(AccuracyClass::Iec1, PfSign::PowerFlow)
        };
        let rep = check(&r, &m, &meter, &[]);
        assert_eq!(rep.checks.len(), 6);
        for c in &rep.checks {
            assert_eq!(c.verdict, MeterVerdict::Pass, "{c:?}");
        }
        let p = find(&rep, "p");
        assert!((p.error_percent - 100.0 * (9990.0 - 9959.3) / 9959.3).abs() < 0.01);
        assert_eq!(p.limit_percent, 1.0);
        // Q against the named reactive class: IEC 62053-23 class 2 at sin φ 0.5 (from memory)
        assert_eq!(find(&rep, "q").limit_percent, 2.0);
        assert_eq!(rep.reactive_class, Some("IEC 62053-23 class 2"));
        assert!(rep.wiring_hints.is_empty(), "{:?}", rep.wiring_hints);
        assert_eq!(rep.quadrant, 1);
        assert_eq!(
            rep.quadrant_text,
            "quadrant I: importing active and reactive power: inductive (current lags)"
        );
        assert_eq!(rep.class, "IEC 62053-21 class 1");
    }

    /// IEC 62053-21 class 1, direct-connected (from memory): ±1.0 % at PF 1 from 0.1 Ib,
    /// ±1.5 % from 0.05 Ib to 0.1 Ib, nothing below 0.05 Ib; at PF 0.5 inductive ±1.0 % from
    /// 0.2 Ib, ±1.5 % from 0.1 Ib. The capture's 50 A against a rated current of 700 A is 7.1 %
    /// of Ib.
    #[test]
    fn low_current_limits_follow_the_rated_current() {
        let m = measured(0.0);
        let r = Reading {
            p_w: Some(1.012 * m.p_w),
            ..Reading::default()
        };
        let rated = |class, a: Option<f64>, connection| Meter {
            rated_current_a: a,
            connection,
            ..Meter::new(class, PfSign::PowerFlow)
        };
        let direct = Some(Connection::Direct);
        let at = |a: Option<f64>| {
            check(&r, &m, &rated(AccuracyClass::Iec1, a, direct), &[]).checks[0].clone()
        };
        // at full current a 1.2 % error fails the 1 % limit
        let full = at(Some(100.0));
        assert_eq!(
            (full.limit_percent, full.verdict),
            (1.0, MeterVerdict::Fail)
        );
        assert_eq!(at(None).verdict, MeterVerdict::Fail);
        // at 7.1 % of Ib the class allows 1.5 %
        let low = at(Some(700.0));
        assert_eq!((low.limit_percent, low.verdict), (1.5, MeterVerdict::Pass));
        assert!(
            low.note.as_deref().unwrap().contains("7.14 % of Ib"),
            "{low:?}"
        );
        // below 5 % of Ib no limit applies: no verdict either way
        let below = at(Some(2000.0));
        assert!(below.limit_percent.is_nan());
        assert_eq!(below.verdict, MeterVerdict::Inconclusive);
        assert!(below.note.as_deref().unwrap().contains("not specified"));
        // at PF 0.5 the low-current range runs from 0.1 Ib to 0.2 Ib: 50 A of 300 A is 16.7 %
        let m60 = measured(60.0);
        let r60 = Reading {
            p_w: Some(1.012 * m60.p_w),
            ..Reading::default()
        };
        let c = &check(
            &r60,
            &m60,
            &rated(AccuracyClass::Iec1, Some(300.0), direct),
            &[],
        )
        .checks[0];
        assert_eq!((c.limit_percent, c.verdict), (1.5, MeterVerdict::Pass));
        // IEC 62053-22 class 0.2S (from memory): ±0.4 % at PF 1 from 0.01 In to 0.05 In
        let c = &check(
            &r,
            &m,
            &rated(AccuracyClass::Iec02S, Some(2000.0), None),
            &[],
        )
        .checks[0];
        assert_eq!(c.limit_percent, 0.4);
        // a transformer-operated class 1 meter at 2.5 % of In: ±1.5 % (IEC 62053-21, from
        // memory); the direct rows (from 5 % of Ib) specify nothing there
        let transformer = Some(Connection::Transformer);
        let c = &check(
            &r,
            &m,
            &rated(AccuracyClass::Iec1, Some(2000.0), transformer),
            &[],
        )
        .checks[0];
        assert_eq!((c.limit_percent, c.verdict), (1.5, MeterVerdict::Pass));
    }

    /// Q is judged only against a reactive class the meter is named to have: an active class
    /// (IEC 62053-21) sets no limit for reactive energy. Today's rule of twice the active limit
    /// is gone.
    #[test]
    fn q_on_an_active_class_is_not_judged_without_a_reactive_class() {
        let m = measured(30.0);
        let r = Reading {
            q_var: Some(1.05 * m.q_var),
            ..Reading::default()
        };
        let c = &check_meter(&r, &m, AccuracyClass::Iec1, PfSign::PowerFlow).checks[0];
        assert!(c.limit_percent.is_nan());
        assert_eq!(c.verdict, MeterVerdict::Inconclusive);
        assert!(c.note.as_deref().unwrap().contains("not judged"), "{c:?}");
        // named: IEC 62053-23 class 2 at sin φ 0.5 is ±2.0 % (from memory), 5 % fails
        let meter = Meter {
            reactive_class: Some(AccuracyClass::Reactive2),
            ..Meter::new(AccuracyClass::Iec1, PfSign::PowerFlow)
        };
        let c = &check(&r, &m, &meter, &[]).checks[0];
        assert_eq!((c.limit_percent, c.verdict), (2.0, MeterVerdict::Fail));
        // IEC 62053-24 class 0.5S (from memory): ±0.6 % at sin φ 0.5
        let meter = Meter {
            reactive_class: Some(AccuracyClass::Fundamental05S),
            ..meter
        };
        assert_eq!(check(&r, &m, &meter, &[]).checks[0].limit_percent, 0.6);
        // a reactive-only meter sets no limit for P
        let r = Reading {
            p_w: Some(m.p_w),
            ..Reading::default()
        };
        let c = &check_meter(&r, &m, AccuracyClass::Reactive2, PfSign::PowerFlow).checks[0];
        assert!(c.limit_percent.is_nan(), "{c:?}");
    }

    /// A capacitive load at PF 0.6: IEC 62053-21 lists PF 0.8 capacitive and nothing below
    /// (from memory), so no verdict; the same PF inductive takes the PF 0.5 row.
    #[test]
    fn a_capacitive_pf_under_0_8_gets_no_active_limit() {
        let angle = 0.6f64.acos().to_degrees();
        for (a, limit) in [(-angle, f64::NAN), (angle, 1.0)] {
            let m = measured(a);
            let r = Reading {
                p_w: Some(1.03 * m.p_w),
                ..Reading::default()
            };
            let c = &check_meter(&r, &m, AccuracyClass::Iec1, PfSign::PowerFlow).checks[0];
            if limit.is_nan() {
                assert!(c.limit_percent.is_nan(), "{c:?}");
                assert_eq!(c.verdict, MeterVerdict::Inconclusive);
            } else {
                assert_eq!((c.limit_percent, c.verdict), (limit, MeterVerdict::Fail));
            }
        }
    }

    /// What cannot be true of a meter is refused: 0.2S is transformer-operated only
    /// (IEC 62053-22, from memory); class 1 with a rated current needs the connection.
    #[test]
    fn impossible_meters_are_refused() {
        let base = Meter::new(AccuracyClass::Iec02S, PfSign::PowerFlow);
        let direct = Meter {
            connection: Some(Connection::Direct),
            ..base
        };
        assert!(matches!(
            direct.validate(),
            Err(MeterError::WrongConnection { .. })
        ));
        let unsure = Meter {
            rated_current_a: Some(5.0),
            ..Meter::new(AccuracyClass::Iec1, PfSign::PowerFlow)
        };
        let e = unsure.validate().unwrap_err().to_string();
        assert!(e.contains("give the meter's connection"), "{e}");
        let not_reactive = Meter {
            reactive_class: Some(AccuracyClass::Iec1),
            ..base
        };
        assert!(matches!(
            not_reactive.validate(),
            Err(MeterError::NotReactive { .. })
        ));
        assert!(
            Meter {
                rated_current_a: Some(5.0),
                ..base
            }
            .validate()
            .is_ok()
        );
    }

    #[test]
    fn a_three_percent_pf_error_on_a_class_1_meter_fails() {
        let m = measured(30.0);
        let shown = 1.03 * m.pf;
        let r = Reading {
            pf: Some(shown),
            ..Reading::default()
        };
        let c = check_meter(&r, &m, AccuracyClass::Iec1, PfSign::PowerFlow).checks[0].clone();
        assert_eq!(c.verdict, MeterVerdict::Fail);
        assert!((c.error_percent - 3.0).abs() < 1e-9);
        assert_eq!(c.limit_percent, 1.0);
    }

    #[test]
    fn an_error_at_the_limit_within_our_uncertainty_is_inconclusive() {
        // 0.95 % off on a class 1 meter, with our U = 0.3 %: 0.95 ± 0.3 straddles 1.0
        let mut m = measured(0.0);
        m.u_p_w = 0.003 * m.p_w;
        let r = Reading {
            p_w: Some(1.0095 * m.p_w),
            ..Reading::default()
        };
        let c = check_meter(&r, &m, AccuracyClass::Iec1, PfSign::PowerFlow).checks[0].clone();
        assert_eq!(c.verdict, MeterVerdict::Inconclusive);
        assert!((c.uncertainty_percent - 0.3).abs() < 1e-9);
        assert_eq!(
            serde_json::to_value(c.verdict).unwrap(),
            serde_json::json!("inconclusive")
        );
    }

    #[test]
    fn the_tighter_class_at_unity_and_the_wider_at_pf_0_5_are_used() {
        // 0.2S: ±0.2 % at PF 1, ±0.3 % at PF 0.5 inductive (IEC 62053-22, from memory)
        let at = |angle: f64, off: f64| {
            let m = measured(angle);
            let r = Reading {
                p_w: Some((1.0 + off) * m.p_w),
                ..Reading::default()
            };
            check_meter(&r, &m, AccuracyClass::Iec02S, PfSign::PowerFlow).checks[0].clone()
        };
        // at PF 1: 0.4 ± 0.1 % is beyond 0.2 %
        assert_eq!(at(0.0, 0.004).limit_percent, 0.2);
        assert_eq!(at(0.0, 0.004).verdict, MeterVerdict::Fail);
        // at PF 0.515 (59°): limit 0.3 %; U is 0.1 % of S = 0.19 % of P, so 0.25 ± 0.19
        // straddles 0.3, while 0.6 ± 0.19 lies beyond it
        assert_eq!(at(59.0, 0.0025).limit_percent, 0.3);
        assert_eq!(at(59.0, 0.0025).verdict, MeterVerdict::Inconclusive);
        assert_eq!(at(59.0, 0.006).verdict, MeterVerdict::Fail);
        assert_eq!(at(59.0, 0.0).verdict, MeterVerdict::Pass);
    }

    #[test]
    fn a_leading_load_is_signed_by_each_convention() {
        // 30° leading, importing: quadrant IV, PF 0.866
        let m = measured(-30.0);
        let pf = m.pf;
        let run = |shown: f64, sign: PfSign| {
            let r = Reading {
                pf: Some(shown),
                ..Reading::default()
            };
            check_meter(&r, &m, AccuracyClass::Iec1, sign)
        };
        let rep = run(pf, PfSign::PowerFlow);
        assert_eq!(rep.quadrant, 4);
        assert_eq!(rep.checks[0].verdict, MeterVerdict::Pass);
        let c = &run(-pf, PfSign::LeadNegative).checks[0];
        assert_eq!((c.verdict, c.measured_value), (MeterVerdict::Pass, -pf));
        assert_eq!(
            run(pf, PfSign::Unsigned).checks[0].verdict,
            MeterVerdict::Pass
        );
        // the right size with the wrong sign fails and says why
        let c = &run(pf, PfSign::LeadNegative).checks[0];
        assert_eq!(c.verdict, MeterVerdict::Fail);
        let note = c.note.as_deref().unwrap();
        assert!(
            note.contains("the size of the PF agrees but its sign does not"),
            "{note}"
        );
        assert!(note.contains("'power-flow'"), "{note}");
        let c = &run(-pf, PfSign::PowerFlow).checks[0];
        assert_eq!(c.verdict, MeterVerdict::Fail);
        assert!(c.note.as_deref().unwrap().contains("'lead-negative'"));
        let c = &run(-pf, PfSign::Unsigned).checks[0];
        assert_eq!(c.verdict, MeterVerdict::Fail);
        assert!(c.note.as_deref().unwrap().contains("'unsigned' was chosen"));
    }

    #[test]
    fn an_exporting_circuit_importing_q_is_quadrant_ii_and_signed_by_power_flow() {
        let m = measured(150.0); // P < 0, Q > 0
        let r = Reading {
            pf: Some(m.pf),
            ..Reading::default()
        };
        let rep = check_meter(&r, &m, AccuracyClass::Iec1, PfSign::PowerFlow);
        assert_eq!(rep.quadrant, 2);
        assert!(rep.checks[0].measured_value < 0.0);
        assert_eq!(rep.checks[0].verdict, MeterVerdict::Pass);
        assert_eq!(quadrant(-1.0, -1.0).0, 3);
    }

    /// The four-quadrant metering diagram (IEC 62053-23 figure, load convention, from memory):
    /// II (export P, import Q) and IV capacitive, I and III inductive. At θ = 150° (quadrant II)
    /// a lead-negative meter shows −|cos 150°| = −0.866; at θ = −150° (quadrant III) +0.866.
    #[test]
    fn exported_power_is_signed_by_the_quadrants_character() {
        let run = |angle: f64, shown: f64, sign: PfSign| {
            let m = measured(angle);
            let r = Reading {
                pf: Some(shown),
                ..Reading::default()
            };
            check_meter(&r, &m, AccuracyClass::Iec1, sign)
        };
        let pf = 150f64.to_radians().cos().abs();
        let rep = run(150.0, -pf, PfSign::LeadNegative);
        assert_eq!(rep.quadrant, 2);
        assert!(rep.quadrant_text.contains("capacitive"), "{rep:?}");
        assert_eq!(rep.checks[0].verdict, MeterVerdict::Pass, "{rep:?}");
        let rep = run(-150.0, pf, PfSign::LeadNegative);
        assert_eq!(rep.quadrant, 3);
        assert!(rep.quadrant_text.contains("inductive"), "{rep:?}");
        assert_eq!(rep.checks[0].verdict, MeterVerdict::Pass, "{rep:?}");
        // lag-negative: the other way round in every quadrant
        for (angle, shown) in [(30.0, -pf), (150.0, pf), (-150.0, -pf), (-30.0, pf)] {
            let c = &run(angle, shown, PfSign::LagNegative).checks[0];
            assert_eq!(c.verdict, MeterVerdict::Pass, "{angle}: {c:?}");
            let c = &run(angle, -shown, PfSign::LagNegative).checks[0];
            assert_eq!(c.verdict, MeterVerdict::Fail, "{angle}: {c:?}");
        }
        // a lag-negative meter read as lead-negative is named
        let c = &run(30.0, -pf, PfSign::LeadNegative).checks[0];
        assert!(
            c.note.as_deref().unwrap().contains("'lag-negative'"),
            "{c:?}"
        );
    }

    /// A warning that undermines a verdict (src/warning.rs) turns pass and fail into
    /// inconclusive on every check resting on its trace; other warnings only travel along.
    #[test]
    fn a_doubtful_capture_leaves_only_the_checks_it_does_not_touch() {
        let m = measured(30.0);
        // V and I right, P 5 % high: a fail on a clean capture
        let r = Reading::parse("p=10.46kW,v=230V,i=50A").unwrap();
        let meter = Meter::new(AccuracyClass::Iec1, PfSign::PowerFlow);
        let verdicts = |w: &[Warning]| -> Vec<MeterVerdict> {
            check(&r, &m, &meter, w)
                .checks
                .iter()
                .map(|c| c.verdict)
                .collect()
        };
        use MeterVerdict::*;
        assert_eq!(verdicts(&[]), [Fail, Pass, Pass]);
        let clipped_v = Warning::Clipping {
            trace: Trace::Voltage,
            percent: 12.0,
        };
        assert_eq!(
            verdicts(std::slice::from_ref(&clipped_v)),
            [Inconclusive, Inconclusive, Pass]
        );
        let few = Warning::FewCycles { cycles: 1.5 };
        assert_eq!(verdicts(&[few]), [Inconclusive; 3]);
        let note = Warning::HarmonicsCapped {
            asked: 50,
            used: 20,
        };
        let rep = check(&r, &m, &meter, &[note, clipped_v]);
        assert_eq!(rep.warning_codes, ["harmonics-capped", "clipping"]);
        assert!(
            rep.wiring_hints[0].contains("no verdict on p, v"),
            "{rep:?}"
        );
    }

    #[test]
    fn at_unity_pf_the_lead_negative_sign_is_not_judged() {
        let m = measured(0.0); // Q = 0 within its uncertainty
        let r = Reading {
            pf: Some(-0.999),
            ..Reading::default()
        };
        let c = &check_meter(&r, &m, AccuracyClass::Iec1, PfSign::LeadNegative).checks[0];
        assert_eq!(c.verdict, MeterVerdict::Pass);
        assert!(c.note.as_deref().unwrap().contains("cannot be told"));
    }

    #[test]
    fn near_zero_p_is_judged_in_percent_of_s_and_below_pf_0_25_nothing_is_specified() {
        // 88° lagging: P = 401 W, 3.5 % of S; a meter 40 W off is 10 % of P but 0.35 % of S.
        // PF 0.035 is below the lowest test point (PF 0.25 inductive, IEC 62053-21, from
        // memory): no limit is specified there, so no verdict, never a borrowed limit
        let m = measured(88.0);
        let r = Reading {
            p_w: Some(m.p_w + 40.0),
            ..Reading::default()
        };
        let c = &check_meter(&r, &m, AccuracyClass::Iec1, PfSign::PowerFlow).checks[0];
        assert!((c.error_percent - 100.0 * 40.0 / 11_500.0).abs() < 1e-9);
        assert!(c.limit_percent.is_nan());
        assert_eq!(c.verdict, MeterVerdict::Inconclusive);
        let note = c.note.as_deref().unwrap();
        assert!(note.contains("in percent of S"), "{note}");
        assert!(note.contains("not specified"), "{note}");
        // at 70° (PF 0.342) the PF 0.25 point holds: ±3.5 % for class 1
        let m = measured(70.0);
        let r = Reading {
            p_w: Some(1.03 * m.p_w),
            ..Reading::default()
        };
        let c = &check_meter(&r, &m, AccuracyClass::Iec1, PfSign::PowerFlow).checks[0];
        assert_eq!((c.limit_percent, c.verdict), (3.5, MeterVerdict::Pass));
    }

    #[test]
    fn no_measured_current_makes_every_check_inconclusive_without_panicking() {
        let mut m = measured(0.0);
        for x in [
            &mut m.p_w,
            &mut m.q_var,
            &mut m.s_va,
            &mut m.pf,
            &mut m.i_rms,
            &mut m.i1,
            &mut m.p1_w,
            &mut m.s1_va,
            &mut m.q_budeanu_var,
            &mut m.nonactive_var,
            &mut m.displacement_pf,
        ] {
            *x = 0.0;
        }
        let r = Reading::parse("pf=1,p=1kW,q=0,s=1kVA,i=4A").unwrap();
        let rep = check_meter(&r, &m, AccuracyClass::Iec1, PfSign::PowerFlow);
        for c in rep.checks.iter().filter(|c| c.quantity != "pf") {
            assert_eq!(c.verdict, MeterVerdict::Inconclusive, "{c:?}");
            assert!(c.error_percent.is_nan());
        }
        let json = serde_json::to_string(&rep).unwrap();
        assert!(json.contains("\"error_percent\":null"), "{json}");
    }
}
