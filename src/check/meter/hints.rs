//! Wiring hints: what a pattern of disagreements between the meter and us most likely means.
//!
//! - **Angle faults.** A reversed CT turns the current by 180°; voltage and current taken from
//!   different phases of a three-phase supply turn it by ±120°. A turn by α changes what the
//!   meter sees to `P' = P·cos α − Q·sin α`, `Q' = Q·cos α + P·sin α` with S unchanged (handbook
//!   phasor arithmetic: `θ' = θ + α`). A hint is given when some P, Q or PF check fails and every
//!   P, Q and PF the meter shows fits the turned values within the class limit (in percent of S)
//!   plus our uncertainty.
//! - **Scale faults.** P, Q and S off by one factor k while PF agrees (the PF check does not fail):
//!   with I off by k as well, the CT ratio; with V, the VT ratio; a factor 3 with V and I
//!   agreeing, one phase against a three-phase total; V alone off by √3, a line-to-line voltage
//!   against a phase voltage. Ratios agree when within twice the class limit at unity plus twice
//!   our largest relative uncertainty, and never closer than [`RATIO_FLOOR`].

use super::{AccuracyClass, LOW_SHARE, Measured, MeterCheck, MeterVerdict, PfSign, Reading};

/// Ratios closer than this are never told apart: a ratio programmed wrong is off by far more,
/// and a meter merely out of class may be off by this much (our rule).
pub const RATIO_FLOOR: f64 = 0.02;

/// Every hint the reading and the checks support, in plain language.
pub(super) fn wiring_hints(
    r: &Reading,
    m: &Measured,
    class: AccuracyClass,
    sign: PfSign,
    checks: &[MeterCheck],
) -> Vec<String> {
    let failed = |q: &str| {
        checks
            .iter()
            .any(|c| c.quantity == q && c.verdict == MeterVerdict::Fail)
    };
    let mut hints = Vec::new();
    if !(m.s_va > 0.0 && m.s_va.is_finite()) {
        return hints;
    }
    if failed("p") || failed("q") || failed("pf") {
        let turned: Vec<f64> = [120.0, -120.0]
            .into_iter()
            .filter(|&a| fits_turn(r, m, class, sign, a))
            .map(|a| wrap_deg(m.angle_deg + a))
            .collect();
        if fits_turn(r, m, class, sign, 180.0) {
            let mut h = if m.p_w < -m.u_p_w.abs() {
                "our capture's own P is negative (power flowing back to the source) and the \
                 meter's readings fit our current turned by 180°: if this circuit is a load, \
                 your own clamp or current probe is reversed, not the meter's CT (turn it round \
                 and capture again); if the circuit exports, the meter's CT is reversed"
            } else {
                "the capture is plausible (active power flows into the load) but the meter's \
                 readings fit our current turned by 180°: the meter's CT is probably reversed \
                 (P1/P2 or S1/S2 leads swapped), unless the meter counts export as positive"
            }
            .to_string();
            if r.p_w.is_none() && r.q_var.is_none() {
                h.push_str("; with only PF shown, a different PF sign convention looks the same");
            }
            // with these readings a current from another phase can look the same (θ = 30°:
            // cos 150° = cos 210°); the reversed CT is named first as the simpler fault
            if let Some(a) = turned.first() {
                h.push_str(&format!(
                    "; a current from another phase (phase angle {a:.0}°) would look the same \
                     here: the meter's Q would tell them apart"
                ));
            }
            hints.push(h);
        } else {
            for a in turned {
                hints.push(format!(
                    "the meter's readings fit a phase angle of {a:.0}° instead of our {:.0}°: \
                     voltage and current probably come from different phases; check that each \
                     CT goes with its own phase's voltage",
                    m.angle_deg
                ));
            }
        }
    }
    hints.extend(scale_hints(r, m, class, &failed));
    hints
}

/// An angle in (−180, 180].
fn wrap_deg(a: f64) -> f64 {
    let w = a.rem_euclid(360.0);
    if w > 180.0 { w - 360.0 } else { w }
}

/// Do all of the meter's P, Q and PF fit our current turned by `alpha_deg`?
pub(super) fn fits_turn(
    r: &Reading,
    m: &Measured,
    class: AccuracyClass,
    sign: PfSign,
    alpha: f64,
) -> bool {
    let s = m.s_va;
    let (sin, cos) = alpha.to_radians().sin_cos();
    let p = m.p_w * cos - m.q_var * sin;
    let q = m.q_var * cos + m.p_w * sin;
    let pf = p / s;
    let sin_phi = q / s;
    // a tolerance for the pattern, not a verdict: the widest listed limit where none is specified
    let or_widest = |l: f64| {
        if l.is_nan() {
            class.widest_listed() * if class.is_reactive() { 1.0 } else { 2.0 }
        } else {
            l
        }
    };
    let mut any = false;
    if let Some(x) = r.p_w {
        let tol = or_widest(active_tolerance(class, pf)) / 100.0 * s + m.u_p_w.abs();
        if !((x - p).abs() <= tol) {
            return false;
        }
        any = true;
    }
    if let Some(x) = r.q_var {
        let tol = or_widest(reactive_tolerance(class, sin_phi)) / 100.0 * s + m.u_q_var.abs();
        if !((x - q).abs() <= tol) {
            return false;
        }
        any = true;
    }
    if let Some(x) = r.pf {
        let tol = or_widest(active_tolerance(class, pf)) / 100.0 + m.u_pf.abs();
        if !((x - sign.apply(pf, p, q)).abs() <= tol) {
            return false;
        }
        any = true;
    }
    any
}

/// Hints at a CT or VT ratio set wrong, a three-phase total, or a line-to-line voltage.
fn scale_hints(
    r: &Reading,
    m: &Measured,
    class: AccuracyClass,
    failed: &dyn Fn(&str) -> bool,
) -> Vec<String> {
    let mut hints = Vec::new();
    let s = m.s_va;
    let rel = |u: f64, x: f64| (u / x).abs();
    let kv =
        r.v.filter(|_| m.v_rms > 0.0)
            .map(|x| (x / m.v_rms, rel(m.u_v, m.v_rms)));
    let ki =
        r.i.filter(|_| m.i_rms > 0.0)
            .map(|x| (x / m.i_rms, rel(m.u_i, m.i_rms)));
    // (symbol, ratio, relative U); P and Q only where they are a fair share of S
    let mut powers: Vec<(&str, f64, f64)> = Vec::new();
    if let Some(x) = r.p_w.filter(|_| m.p_w.abs() >= LOW_SHARE * s) {
        powers.push(("P", x / m.p_w, rel(m.u_p_w, m.p_w)));
    }
    if let Some(x) = r.q_var.filter(|_| m.q_var.abs() >= LOW_SHARE * s) {
        powers.push(("Q", x / m.q_var, rel(m.u_q_var, m.q_var)));
    }
    if let Some(x) = r.s_va {
        powers.push(("S", x / s, rel(m.u_s_va, s)));
    }
    let u_max = powers
        .iter()
        .map(|p| p.2)
        .chain(kv.map(|k| k.1))
        .chain(ki.map(|k| k.1))
        .fold(0.0, f64::max);
    let tol = (2.0 * active_tolerance(class, 1.0) / 100.0 + 2.0 * u_max).max(RATIO_FLOOR);
    let close = |a: f64, b: f64| (a / b - 1.0).abs() <= tol;
    let root3 = 3f64.sqrt();

    let v_is_root3 = kv.is_some_and(|(k, _)| close(k, root3) || close(k, 1.0 / root3));
    if v_is_root3 && failed("v") {
        let k = kv.map_or(f64::NAN, |k| k.0);
        hints.push(format!(
            "the meter's voltage is {k:.3} times ours, close to {}: one shows line-to-line and \
             the other line-to-neutral (phase) voltage",
            if k > 1.0 { "√3" } else { "1/√3" }
        ));
    }

    let power_failed = ["p", "q", "s"].iter().any(|q| failed(q));
    if powers.is_empty() || !power_failed || failed("pf") {
        return hints;
    }
    if powers.len() + usize::from(kv.is_some()) + usize::from(ki.is_some()) < 2 {
        return hints; // one value off alone is an inaccurate meter as far as we can tell
    }
    let ratios: Vec<f64> = powers.iter().map(|p| p.1).collect();
    let lo = ratios.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = ratios.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    if !(lo > 0.0) || !close(hi, lo) {
        return hints;
    }
    let k = (ratios.iter().map(|x| x.ln()).sum::<f64>() / ratios.len() as f64).exp();
    let one = |x: Option<(f64, f64)>| x.is_none_or(|(r, _)| close(r, 1.0));
    let scaled = |x: Option<(f64, f64)>| x.is_some_and(|(r, _)| close(r, k));
    let names = |extra: Option<&str>| {
        let mut n: Vec<&str> = powers.iter().map(|p| p.0).collect();
        n.extend(extra);
        match n.split_last() {
            Some((last, rest)) if !rest.is_empty() => format!("{} and {last}", rest.join(", ")),
            _ => n.join(""),
        }
    };
    let three = close(k, 3.0) || close(k, 1.0 / 3.0);
    if scaled(ki) && one(kv) {
        hints.push(format!(
            "{} on the meter are all {k:.3} times ours while PF agrees: the CT ratio set in the \
             meter is probably wrong by that factor",
            names(Some("I"))
        ));
    } else if scaled(kv) && one(ki) {
        if !v_is_root3 {
            hints.push(format!(
                "{} on the meter are all {k:.3} times ours while PF agrees: the VT ratio set in \
                 the meter is probably wrong by that factor",
                names(Some("V"))
            ));
        }
    } else if let (Some((rv, _)), Some((ri, _))) = (kv, ki)
        && close(rv * ri, k)
        && !close(rv, 1.0)
        && !close(ri, 1.0)
    {
        hints.push(format!(
            "the meter's V is {rv:.3} and its I {ri:.3} times ours while PF agrees: both the VT \
             and the CT ratio set in the meter are probably wrong"
        ));
    } else if three && one(kv) && one(ki) {
        let which = if k > 1.0 {
            "the meter probably shows the three-phase total while the capture holds one phase"
        } else {
            "the meter probably shows one phase while it was compared with a three-phase total"
        };
        let or = if kv.is_none() && ki.is_none() {
            " (or a CT or VT ratio is wrong by that factor)"
        } else {
            ""
        };
        hints.push(format!(
            "{} on the meter are {k:.3} times ours while PF agrees: {which}{or}",
            names(None)
        ));
    } else if kv.is_none() && ki.is_none() {
        hints.push(format!(
            "{} on the meter are all {k:.3} times ours while PF agrees: a CT or VT ratio set in \
             the meter is probably wrong by that factor (its V and I would tell which)",
            names(None)
        ));
    } else if one(kv) && one(ki) {
        hints.push(format!(
            "the meter's V and I agree with ours but {} are {k:.3} times ours: check the meter's \
             setting for the number of phases or elements",
            names(None)
        ));
    }
    hints
}

/// The class's full-current limit at an inductive |PF|, as a pattern tolerance (NaN where none is
/// listed; a reactive class's own figure stands in, as a tolerance only).
fn active_tolerance(class: AccuracyClass, pf: f64) -> f64 {
    class.pattern_limit(pf)
}

/// A reactive tolerance for patterns: a reactive class's own limit at |sin φ|, twice an active
/// class's limit at the same point (a tolerance, never a verdict's limit).
fn reactive_tolerance(class: AccuracyClass, sin_phi: f64) -> f64 {
    if class.is_reactive() {
        class.pattern_limit(sin_phi)
    } else {
        2.0 * class.pattern_limit(sin_phi)
    }
}

#[cfg(test)]
mod tests {
    use super::super::tests::measured;
    use super::super::*;

    fn hints_for(angle: f64, reading: &str) -> Vec<String> {
        let m = measured(angle);
        let r = Reading::parse(reading).unwrap();
        check_meter(&r, &m, AccuracyClass::Iec1, PfSign::PowerFlow).wiring_hints
    }

    fn one_hint(angle: f64, reading: &str, words: &str) {
        let h = hints_for(angle, reading);
        assert_eq!(h.len(), 1, "{h:?}");
        assert!(h[0].contains(words), "{h:?}");
    }

    #[test]
    fn a_reversed_ct_is_reported() {
        // 30° lagging: P = 9 959 W, Q = 5 750 var; a reversed CT shows both negated
        one_hint(
            30.0,
            "p=-9.97kW,q=-5.76kvar,pf=-0.866",
            "CT is probably reversed",
        );
        // P alone: opposite sign, same size
        one_hint(30.0, "p=-9.95kW", "CT is probably reversed");
        // at 30° a current from another phase gives the same P (cos 150° = cos 210°)
        one_hint(30.0, "p=-9.95kW", "would look the same here");
        // PF alone: the hint says a sign convention looks the same
        one_hint(
            30.0,
            "pf=-0.866",
            "different PF sign convention looks the same",
        );
    }

    #[test]
    fn a_reversed_p_with_an_unreversed_q_is_not_called_a_reversed_ct() {
        let h = hints_for(30.0, "p=-9.96kW,q=5.75kvar");
        assert!(h.iter().all(|x| !x.contains("reversed")), "{h:?}");
    }

    #[test]
    fn voltage_and_current_from_different_phases_are_reported() {
        // 20° lagging; a current from the phase 120° away makes the meter see 140°:
        // PF = cos 140° = −0.766, P = 11 500·cos 140° = −8 810 W (handbook arithmetic)
        one_hint(
            20.0,
            "pf=-0.766,p=-8.81kW",
            "phase angle of 140° instead of our 20°",
        );
        // and −100°: PF = cos(−100°) = −0.174, Q = 11 500·sin(−100°) = −11 325 var
        one_hint(20.0, "pf=-0.174,q=-11.33kvar", "different phases");
    }

    #[test]
    fn a_ct_ratio_programmed_wrong_is_reported_with_its_factor() {
        // 30° lagging, CT ratio 150/5 set as 100/5: everything current-borne is 2/3
        let r = "pf=0.866,p=6.64kW,s=7.667kVA,v=230V,i=33.33A";
        one_hint(30.0, r, "P, S and I on the meter are all 0.667 times ours");
        one_hint(30.0, r, "CT ratio");
    }

    #[test]
    fn a_vt_ratio_programmed_wrong_is_reported() {
        one_hint(30.0, "pf=0.866,p=19.92kW,s=23kVA,v=460V,i=50A", "VT ratio");
    }

    #[test]
    fn a_three_phase_total_against_one_phase_is_reported() {
        one_hint(
            30.0,
            "pf=0.866,p=29.88kW,s=34.5kVA,v=230V,i=50A",
            "three-phase total while the capture holds one phase",
        );
    }

    #[test]
    fn a_line_to_line_voltage_against_a_phase_voltage_is_reported() {
        // 230 V line-to-neutral is 398 V line-to-line (×√3)
        one_hint(30.0, "v=398V,i=50A", "line-to-line");
    }

    #[test]
    fn a_meter_merely_out_of_class_gets_no_wiring_hint() {
        // P 5 % high, nothing else off: an inaccurate meter, not a wiring fault
        let h = hints_for(30.0, "pf=0.866,p=10.46kW,s=11.5kVA,v=230V,i=50A");
        assert!(h.is_empty(), "{h:?}");
    }
}
