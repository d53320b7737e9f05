//! Three-phase wiring: what a meter would register under each way its current inputs may be
//! connected, and which connection of our own current channels makes the load plausible.
//!
//! Input: the fundamental voltage and current phasors of phases a, b, c (RMS, one time
//! reference). Output: [`Connection`]s with the powers they give, ranked against a meter's
//! reading ([`explain_reading`]) or against the load's own plausibility ([`diagnose`]), each
//! described in words a commissioning engineer uses.
//!
//! Complex power is S = V·conj(I) = P + jQ (load convention, Q positive when the current lags).

use rustfft::num_complex::Complex64;
use serde::Serialize;

const PHASES: [&str; 3] = ["a", "b", "c"];

/// One way the current inputs may be connected: input `k` carries the current of phase
/// `phase[k]`, reversed when `reversed[k]`.
///
/// For a 4-wire (three-element) meter, element k multiplies phase k's voltage by input k's
/// current. For a 3-wire (two-element) meter, element 1 multiplies Vab by input a's current and
/// element 2 multiplies Vcb by input c's current; input b is unused.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct Connection {
    /// The phase whose current each input carries.
    pub phase: [usize; 3],
    /// Whether each input's CT (or clamp) is reversed.
    pub reversed: [bool; 3],
}

impl Connection {
    /// Every input on its own phase, no CT reversed.
    pub const CORRECT: Connection = Connection {
        phase: [0, 1, 2],
        reversed: [false; 3],
    };

    /// Whether this is the correct connection.
    pub fn is_correct(&self) -> bool {
        *self == Self::CORRECT
    }

    /// The current input `k` carries.
    fn current(&self, i: &[Complex64; 3], k: usize) -> Complex64 {
        let x = i[self.phase[k]];
        if self.reversed[k] { -x } else { x }
    }

    /// The faults in words, naming inputs by `names` (e.g. "the meter's phase b CT").
    pub fn describe(&self, owner: &str, inputs: &[usize]) -> String {
        let mut faults = Vec::new();
        for &k in inputs {
            let what = format!("{owner} phase {} CT", PHASES[k]);
            match (self.phase[k] == k, self.reversed[k]) {
                (true, false) => {}
                (true, true) => faults.push(format!("{what} is reversed")),
                (false, rev) => faults.push(format!(
                    "{what} carries phase {}'s current{}",
                    PHASES[self.phase[k]],
                    if rev { ", reversed" } else { "" }
                )),
            }
        }
        if faults.is_empty() {
            "connected correctly".to_string()
        } else {
            faults.join("; ")
        }
    }
}

/// Every connection of three inputs: 3! phase orders × 2³ polarities = 48.
pub fn four_wire_connections() -> Vec<Connection> {
    let orders = [
        [0, 1, 2],
        [0, 2, 1],
        [1, 0, 2],
        [1, 2, 0],
        [2, 0, 1],
        [2, 1, 0],
    ];
    let mut out = Vec::with_capacity(48);
    for phase in orders {
        for bits in 0..8u8 {
            out.push(Connection {
                phase,
                reversed: [bits & 1 != 0, bits & 2 != 0, bits & 4 != 0],
            });
        }
    }
    out
}

/// Every connection of a two-element meter's inputs a and c: two different phases of three,
/// in order, × 2² polarities = 24 (input b stays unused on phase b).
pub fn three_wire_connections() -> Vec<Connection> {
    let mut out = Vec::with_capacity(24);
    for first in 0..3 {
        for second in 0..3 {
            if first == second {
                continue;
            }
            for bits in 0..4u8 {
                out.push(Connection {
                    phase: [first, 1, second],
                    reversed: [bits & 1 != 0, false, bits & 2 != 0],
                });
            }
        }
    }
    out
}

/// The fundamental complex power S = P + jQ a meter registers under a connection.
///
/// `three_wire`: a two-element meter on Vab and Vcb (the phase voltages may then refer to any
/// star point: only their differences enter).
pub fn registered(
    v: &[Complex64; 3],
    i: &[Complex64; 3],
    c: &Connection,
    three_wire: bool,
) -> Complex64 {
    if three_wire {
        let vab = v[0] - v[1];
        let vcb = v[2] - v[1];
        vab * c.current(i, 0).conj() + vcb * c.current(i, 2).conj()
    } else {
        (0..3).map(|k| v[k] * c.current(i, k).conj()).sum()
    }
}

/// A connection that explains a meter's reading.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Explanation {
    /// The connection.
    pub connection: Connection,
    /// What the meter would register so connected, W.
    pub active_w: f64,
    /// What the meter would register so connected, var.
    pub reactive_var: f64,
    /// How far the reading is from that, relative to the load's apparent power.
    pub mismatch: f64,
    /// The connection in words.
    pub text: String,
}

/// Ranks every connection by how well it reproduces a meter's reading of P (and Q where read),
/// best first. The mismatch is |S_reading − S_connection| over the load's |S1|, so a perfect
/// explanation has 0.
pub fn explain_reading(
    v: &[Complex64; 3],
    i: &[Complex64; 3],
    reading_p: f64,
    reading_q: Option<f64>,
    three_wire: bool,
) -> Vec<Explanation> {
    let load = registered(v, i, &Connection::CORRECT, three_wire)
        .norm()
        .max(f64::MIN_POSITIVE);
    let connections = if three_wire {
        three_wire_connections()
    } else {
        four_wire_connections()
    };
    let inputs: &[usize] = if three_wire { &[0, 2] } else { &[0, 1, 2] };
    let mut out: Vec<Explanation> = connections
        .into_iter()
        .map(|c| {
            let s = registered(v, i, &c, three_wire);
            let dq = reading_q.map_or(0.0, |q| q - s.im);
            Explanation {
                connection: c,
                active_w: s.re,
                reactive_var: s.im,
                mismatch: (reading_p - s.re).hypot(dq) / load,
                text: c.describe("the meter's", inputs),
            }
        })
        .collect();
    out.sort_by(|a, b| a.mismatch.total_cmp(&b.mismatch));
    out
}

/// How plausible the load looks if our own current channels were connected as `c`: every phase
/// importing, and the phases' angles alike. Lower is more plausible: the spread of the three
/// angles in degrees, plus 360° for each phase that would export.
fn implausibility(v: &[Complex64; 3], i: &[Complex64; 3], c: &Connection) -> f64 {
    let angles: Vec<f64> = (0..3)
        .map(|k| (v[k] * c.current(i, k).conj()).arg().to_degrees())
        .collect();
    let exporting = angles.iter().filter(|a| a.abs() > 90.0).count() as f64;
    let hi = angles.iter().copied().fold(f64::MIN, f64::max);
    let lo = angles.iter().copied().fold(f64::MAX, f64::min);
    hi - lo + 360.0 * exporting
}

/// Plain-language hints on how our own current channels seem to be connected, ranked by how
/// much better each hypothesis explains the phasors than the capture as wired; empty when the
/// capture as wired is as plausible as any (or the load is not balanced enough to tell).
///
/// `names` are the current channels' names in phase order (as in the file).
pub fn diagnose(v: &[Complex64; 3], i: &[Complex64; 3], names: &[String; 3]) -> Vec<String> {
    let mut hints = Vec::new();
    // the voltages first: reverse rotation means two leads (or the supply) are swapped
    let a = crate::quantity::three_phase::a_operator();
    let pos = (v[0] + a * v[1] + a * a * v[2]).norm();
    let neg = (v[0] + a * a * v[1] + a * v[2]).norm();
    if neg > pos {
        hints.push(
            "the voltages turn in the reverse sequence (acb): two voltage leads are swapped, or \
             the supply itself runs acb; check the rotation before judging the currents"
                .to_string(),
        );
    }
    let as_wired = implausibility(v, i, &Connection::CORRECT);
    // Occam: among hypotheses that explain the phasors about as well, the one with fewer faults
    // (a single reversed clamp before a rotated set of reversed ones): 15° a fault
    let faults_of =
        |c: &Connection| (0..3).filter(|&k| c.phase[k] != k || c.reversed[k]).count() as f64;
    let mut ranked: Vec<(f64, Connection)> = four_wire_connections()
        .into_iter()
        .map(|c| (implausibility(v, i, &c) + 15.0 * faults_of(&c), c))
        .collect();
    ranked.sort_by(|x, y| x.0.total_cmp(&y.0));
    let best = ranked.first().map_or(0.0, |r| r.0);
    let angles_as_wired: Vec<f64> = (0..3)
        .map(|k| (v[k] * i[k].conj()).arg().to_degrees())
        .collect();
    let exporting: Vec<&str> = (0..3)
        .filter(|&k| angles_as_wired[k].abs() > 90.0)
        .map(|k| PHASES[k])
        .collect();
    let as_wired_words = if exporting.is_empty() {
        let hi = angles_as_wired.iter().copied().fold(f64::MIN, f64::max);
        let lo = angles_as_wired.iter().copied().fold(f64::MAX, f64::min);
        format!("as wired, the phases' angles spread over {:.0}°", hi - lo)
    } else {
        format!(
            "as wired, phase{} {} export{}",
            if exporting.len() > 1 { "s" } else { "" },
            exporting.join(" and "),
            if exporting.len() > 1 { "" } else { "s" }
        )
    };
    // a hypothesis is worth saying when it makes a phase stop exporting or tightens the spread
    // of the angles by more than 30°, and explains the phasors about as well as the best one;
    // keep the two best
    for (score, c) in ranked.iter().take(4) {
        if c.is_correct() || as_wired - (score - 15.0 * faults_of(c)) < 30.0 || *score > best + 20.0
        {
            continue;
        }
        let mut faults = Vec::new();
        for k in 0..3 {
            let channel = &names[k];
            match (c.phase[k] == k, c.reversed[k]) {
                (true, false) => {}
                (true, true) => faults.push(format!(
                    "the current channel '{channel}' on phase {} looks reversed",
                    PHASES[k]
                )),
                (false, rev) => faults.push(format!(
                    "the current channel '{channel}' looks like phase {}'s current{}",
                    PHASES[c.phase[k]],
                    if rev { ", reversed" } else { "" }
                )),
            }
        }
        let angles: Vec<String> = (0..3)
            .map(|k| format!("{:.1}°", (v[k] * c.current(i, k).conj()).arg().to_degrees()))
            .collect();
        hints.push(format!(
            "{}: so connected, all three phases import at angles {} ({as_wired_words})",
            faults.join(" and "),
            angles.join(", "),
        ));
        if hints.len() >= 3 {
            break;
        }
    }
    hints
}

/// A measured neutral current checked against the line currents (Kirchhoff: in a 4-wire
/// system the neutral carries the phasor sum of the three line currents): when they disagree by
/// more than 10 % of the largest line current (our rule: well above a clamp's ratio and phase
/// errors), one of our current channels is reversed or on another phase, or the neutral clamp
/// is; the hint says which line channel, turned round, makes them agree, when one does.
pub fn neutral_hint(i: &[Complex64; 3], neutral: Complex64, neutral_name: &str) -> Option<String> {
    let largest = i.iter().map(|x| x.norm()).fold(0.0, f64::max);
    let sum = i[0] + i[1] + i[2];
    let gap = (sum - neutral).norm();
    if !(largest > 0.0) || gap <= 0.1 * largest {
        return None;
    }
    let turned = (0..3).find(|&k| (sum - 2.0 * i[k] - neutral).norm() <= 0.1 * largest);
    let mut hint = format!(
        "the measured neutral '{neutral_name}' ({:.3} A) does not match the sum of the line \
         currents ({:.3} A)",
        neutral.norm(),
        sum.norm()
    );
    match turned {
        Some(k) => hint.push_str(&format!(
            ": with phase {}'s current turned round they agree, so that channel is reversed \
             (or the neutral's clamp and two others are)",
            PHASES[k]
        )),
        None => hint.push_str(
            ": a line current channel is reversed or on another phase, or the neutral's clamp is",
        ),
    }
    Some(hint)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn polar(r: f64, deg: f64) -> Complex64 {
        Complex64::from_polar(r, deg.to_radians())
    }

    fn balanced(v: f64, i: f64, phi_deg: f64) -> ([Complex64; 3], [Complex64; 3]) {
        let vs = [polar(v, 0.0), polar(v, -120.0), polar(v, 120.0)];
        let is = vs.map(|x| x / v * polar(i, -phi_deg));
        (vs, is)
    }

    #[test]
    fn there_are_48_four_wire_and_24_three_wire_connections() {
        let four = four_wire_connections();
        assert_eq!(four.len(), 48);
        assert_eq!(four.iter().filter(|c| c.is_correct()).count(), 1);
        let three = three_wire_connections();
        assert_eq!(three.len(), 24);
        assert!(three.contains(&Connection::CORRECT));
    }

    #[test]
    fn one_reversed_ct_on_a_balanced_four_wire_load_registers_a_third() {
        // references §9 [computed]: (1 − 1 + 1)/3 = 1/3 of the energy (−66.7 %)
        let (v, i) = balanced(230.0, 10.0, 25.0);
        let right = registered(&v, &i, &Connection::CORRECT, false);
        let mut c = Connection::CORRECT;
        c.reversed[1] = true;
        let wrong = registered(&v, &i, &c, false);
        assert_relative_eq!(wrong.re / right.re, 1.0 / 3.0, max_relative = 1e-12);
        // and the search finds it from the reading alone
        let best = &explain_reading(&v, &i, wrong.re, Some(wrong.im), false)[0];
        assert_eq!(best.connection, c);
        assert!(best.mismatch < 1e-12);
        assert_eq!(best.text, "the meter's phase b CT is reversed");
    }

    #[test]
    fn two_wattmeter_readings_match_the_textbook_identity() {
        // textbook (references §9): 400 V, 10 A, PF 0.8 lagging: W1 = V·I·cos(30° + φ) =
        // 1571.3 W, W2 = V·I·cos(30° − φ) = 3971.3 W, P = W1 + W2, Q = √3·(W2 − W1) = 4156.9 var
        let vl = 400.0;
        let phi = 0.8f64.acos().to_degrees();
        let (v, i) = balanced(vl / 3f64.sqrt(), 10.0, phi);
        let w1 = ((v[0] - v[1]) * i[0].conj()).re;
        let w2 = ((v[2] - v[1]) * i[2].conj()).re;
        assert_relative_eq!(
            w1,
            vl * 10.0 * (30.0 + phi).to_radians().cos(),
            max_relative = 1e-12
        );
        assert_relative_eq!(
            w2,
            vl * 10.0 * (30.0 - phi).to_radians().cos(),
            max_relative = 1e-12
        );
        assert!(
            (w1 - 1571.3).abs() < 0.05 && (w2 - 3971.3).abs() < 0.05,
            "{w1} {w2}"
        );
        assert!((3f64.sqrt() * (w2 - w1) - 4156.9).abs() < 0.05);
        // the two-element meter registers the load's whole P and Q
        let s = registered(&v, &i, &Connection::CORRECT, true);
        let four = registered(&v, &i, &Connection::CORRECT, false);
        assert_relative_eq!(s.re, w1 + w2, max_relative = 1e-12);
        assert_relative_eq!(s.re, four.re, max_relative = 1e-12);
        assert_relative_eq!(s.im, four.im, max_relative = 1e-12);
    }

    #[test]
    fn exchanged_cts_are_named_with_their_phases() {
        let (v, i) = balanced(230.0, 10.0, 20.0);
        let c = Connection {
            phase: [1, 0, 2],
            reversed: [false; 3],
        };
        let reading = registered(&v, &i, &c, false);
        let best = &explain_reading(&v, &i, reading.re, Some(reading.im), false)[0];
        assert_eq!(best.connection, c);
        assert_eq!(
            best.text,
            "the meter's phase a CT carries phase b's current; the meter's phase b CT carries \
             phase a's current"
        );
    }

    #[test]
    fn a_reversed_clamp_of_our_own_is_diagnosed_by_the_load_plausibility() {
        let (v, mut i) = balanced(230.0, 10.0, 26.0);
        i[1] = -i[1];
        let names = ["Ia".to_string(), "Ib".to_string(), "Ic".to_string()];
        let hints = diagnose(&v, &i, &names);
        assert!(!hints.is_empty());
        assert!(
            hints[0].starts_with("the current channel 'Ib' on phase b looks reversed"),
            "{hints:?}"
        );
        assert!(hints[0].contains("26.0°, 26.0°, 26.0°"), "{hints:?}");
        // a healthy capture gets no hint
        let (v, i) = balanced(230.0, 10.0, 26.0);
        assert!(diagnose(&v, &i, &names).is_empty());
    }

    #[test]
    fn reverse_rotation_is_a_hint_of_its_own() {
        let v = [polar(230.0, 0.0), polar(230.0, 120.0), polar(230.0, -120.0)];
        let i = v.map(|x| x / 23.0 * polar(1.0, -20.0));
        let names = ["Ia".to_string(), "Ib".to_string(), "Ic".to_string()];
        let hints = diagnose(&v, &i, &names);
        assert_eq!(hints.len(), 1, "{hints:?}");
        assert!(hints[0].contains("reverse sequence (acb)"));
    }

    #[test]
    fn a_measured_neutral_that_disagrees_with_the_line_currents_names_the_reversed_one() {
        // Kirchhoff's current law (textbook): the neutral carries Ia + Ib + Ic
        let (_, i) = balanced(230.0, 10.0, 25.0);
        let unbalanced = [i[0], i[1] * 0.6, i[2] * 1.3];
        let true_neutral = unbalanced[0] + unbalanced[1] + unbalanced[2];
        assert_eq!(neutral_hint(&unbalanced, true_neutral, "In"), None);
        let mut captured = unbalanced;
        captured[2] = -captured[2];
        let hint = neutral_hint(&captured, true_neutral, "In").unwrap();
        assert!(
            hint.contains("with phase c's current turned round"),
            "{hint}"
        );
    }
}
