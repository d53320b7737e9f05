//! Three-phase quantities from per-phase figures.
//!
//! Input: each phase's fundamental phasors, true RMS values and active power, the line-to-line
//! RMS values and, for a 4-wire system, the neutral current ([`ThreePhaseInput`]).
//! Output: [`ThreePhase`]: the totals, the IEEE Std 1459-2010 §3.2 effective quantities, the
//! positive-sequence powers and the unbalance power, and Fortescue's symmetrical components of
//! the fundamental voltages and currents with the phase rotation.
//!
//! A single-phase capture is not a special case of this module: its figures are the phase's own
//! (`quantity::power`). Per-phase figures of a 3-wire (two-element) capture refer to the
//! artificial star point; the totals and effective values do not depend on that choice.

use rustfft::num_complex::Complex64;
use serde::Serialize;
use std::f64::consts::PI;

use super::power::RmsParts;

/// How the system is connected.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Wiring {
    /// Three phases and a neutral (phase-to-neutral voltages measured).
    FourWire,
    /// Three phases without a neutral (line-to-line voltages measured).
    ThreeWire,
}

/// One phase's figures, as the three-phase definitions need them.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PhaseFigures {
    /// Fundamental RMS phasor of the voltage to neutral (4-wire) or to the artificial star point
    /// (3-wire); cosine reference, every phase to the same time reference.
    pub voltage: Complex64,
    /// Fundamental RMS phasor of the line current, into the load.
    pub current: Complex64,
    /// True RMS of the voltage (DC and harmonics included).
    pub voltage_rms: f64,
    /// True RMS of the current.
    pub current_rms: f64,
    /// Active power of the phase: the mean of v·i over whole cycles, W.
    pub active_w: f64,
}

/// What the three-phase quantities are computed from.
#[derive(Debug, Clone, PartialEq)]
pub struct ThreePhaseInput {
    /// The connection.
    pub wiring: Wiring,
    /// Phases a, b, c in that order.
    pub phases: [PhaseFigures; 3],
    /// True RMS of the line-to-line voltages Vab, Vbc, Vca (from the samples: harmonics make
    /// them differ from what the fundamental phasors give).
    pub line_rms: [f64; 3],
    /// The neutral current (4-wire): measured, or the RMS of ia + ib + ic. Ignored for 3-wire.
    pub neutral: Option<RmsParts>,
}

/// The totals over the three phases.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Totals {
    /// P = Pa + Pb + Pc, W.
    pub active_w: f64,
    /// P1 = the sum of the phases' fundamental active powers, W.
    pub fundamental_active_w: f64,
    /// The sum of the phases' Q1 (positive inductive), var.
    pub reactive_var: f64,
    /// Arithmetic apparent power Va·Ia + Vb·Ib + Vc·Ic (true RMS values), VA: what many meters
    /// call S.
    pub arithmetic_apparent_va: f64,
    /// Vector apparent power √(P² + Q²) with Q the sum of the phases' Q1, VA: what other meters
    /// call S.
    pub vector_apparent_va: f64,
}

/// IEEE Std 1459-2010 §3.2 effective quantities.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Effective {
    /// Ve, V.
    pub voltage_v: f64,
    /// Ie, A.
    pub current_a: f64,
    /// Ve1, from the fundamental phasors, V.
    pub fundamental_voltage_v: f64,
    /// Ie1, from the fundamental phasors, A.
    pub fundamental_current_a: f64,
    /// Se = 3·Ve·Ie, VA.
    pub apparent_va: f64,
    /// Se1 = 3·Ve1·Ie1, VA.
    pub fundamental_apparent_va: f64,
    /// SeN = √(Se² − Se1²), VA.
    pub nonfundamental_apparent_va: f64,
    /// PFe = P/Se (`None` when Se is zero).
    pub pf: Option<f64>,
}

/// Positive-sequence powers and the fundamental unbalance power (IEEE Std 1459-2010 §3.2).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct PositiveSequencePowers {
    /// P1+ = 3·V1+·I1+·cos θ1+, W.
    pub active_w: f64,
    /// Q1+ = 3·V1+·I1+·sin θ1+, var (positive inductive).
    pub reactive_var: f64,
    /// S1+ = 3·V1+·I1+, VA.
    pub apparent_va: f64,
    /// SU1 = √(Se1² − S1+²), VA.
    pub unbalance_va: f64,
}

/// Symmetrical components of one quantity's fundamental phasors (magnitudes, RMS).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Sequence {
    /// Positive-sequence magnitude (in the abc sense).
    pub positive: f64,
    /// Negative-sequence magnitude (in the abc sense).
    pub negative: f64,
    /// Zero-sequence magnitude.
    pub zero: f64,
    /// The smaller of the two rotating sequences over the larger one, percent (for voltages
    /// u2 of IEC 61000-4-30); for currents the sequence against the voltages' rotation over
    /// the one with it, which may pass 100 % on a load fed from one phase.
    pub unbalance_percent: Option<f64>,
}

/// The phase sequence the voltages turn in.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Rotation {
    /// b lags a by 120°, c lags b: the positive sequence dominates.
    Abc,
    /// b leads a by 120°: the negative sequence (in the abc sense) dominates.
    Acb,
}

/// Every three-phase quantity.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ThreePhase {
    /// The connection the figures were computed for.
    pub wiring: Wiring,
    /// Sums over the phases.
    pub total: Totals,
    /// IEEE 1459 effective values.
    pub effective: Effective,
    /// Positive-sequence and unbalance powers.
    pub positive_sequence: PositiveSequencePowers,
    /// Symmetrical components of the fundamental voltages.
    pub voltage_sequence: Sequence,
    /// Symmetrical components of the fundamental currents.
    pub current_sequence: Sequence,
    /// The voltages' phase sequence.
    pub rotation: Rotation,
}

/// Fortescue's operator a = e^{j120°}.
pub fn a_operator() -> Complex64 {
    Complex64::from_polar(1.0, 2.0 * PI / 3.0)
}

/// Fortescue's transform of phasors a, b, c: (zero, positive, negative), abc rotation.
///
/// X0 = (Xa + Xb + Xc)/3, X+ = (Xa + a·Xb + a²·Xc)/3, X− = (Xa + a²·Xb + a·Xc)/3 (textbook).
pub fn symmetrical_components(x: [Complex64; 3]) -> [Complex64; 3] {
    let a = a_operator();
    let a2 = a * a;
    [
        (x[0] + x[1] + x[2]) / 3.0,
        (x[0] + a * x[1] + a2 * x[2]) / 3.0,
        (x[0] + a2 * x[1] + a * x[2]) / 3.0,
    ]
}

/// Voltage unbalance from the three line-to-line RMS values alone (IEC 61000-4-30's closed form,
/// from memory): β = ΣV⁴/(ΣV²)², u2 = √((1 − √(3 − 6β))/(1 + √(3 − 6β))); percent.
pub fn unbalance_from_line_voltages(line: [f64; 3]) -> Option<f64> {
    let s2: f64 = line.iter().map(|v| v * v).sum();
    if s2 <= 0.0 || line.iter().any(|v| !v.is_finite()) {
        return None;
    }
    let beta = line.iter().map(|v| v.powi(4)).sum::<f64>() / (s2 * s2);
    let r = (3.0 - 6.0 * beta).max(0.0).sqrt();
    Some(((1.0 - r) / (1.0 + r)).max(0.0).sqrt() * 100.0)
}

fn root_diff(a: f64, b: f64) -> f64 {
    (a * a - b * b).max(0.0).sqrt()
}

fn ratio_percent(small: f64, large: f64) -> Option<f64> {
    (large > 0.0).then(|| small / large * 100.0)
}

impl ThreePhase {
    /// Computes every quantity from the per-phase figures.
    pub fn new(input: &ThreePhaseInput) -> Self {
        let ph = &input.phases;
        let v1 = ph.map(|p| p.voltage);
        let i1 = ph.map(|p| p.current);
        let sq = |x: f64| x * x;

        // totals: S = V·conj(I) is P + jQ with Q positive when the current lags
        let s1: Vec<Complex64> = (0..3).map(|k| v1[k] * i1[k].conj()).collect();
        let active_w: f64 = ph.iter().map(|p| p.active_w).sum();
        let reactive_var: f64 = s1.iter().map(|s| s.im).sum();
        let total = Totals {
            active_w,
            fundamental_active_w: s1.iter().map(|s| s.re).sum(),
            reactive_var,
            arithmetic_apparent_va: ph.iter().map(|p| p.voltage_rms * p.current_rms).sum(),
            vector_apparent_va: active_w.hypot(reactive_var),
        };

        // effective values, IEEE Std 1459-2010 §3.2 (references §9)
        let line1 = [v1[0] - v1[1], v1[1] - v1[2], v1[2] - v1[0]].map(|x| x.norm());
        let line_sq: f64 = input.line_rms.iter().map(|v| sq(*v)).sum();
        let line1_sq: f64 = line1.iter().map(|v| sq(*v)).sum();
        let phase_sq: f64 = ph.iter().map(|p| sq(p.voltage_rms)).sum();
        let phase1_sq: f64 = v1.iter().map(|v| v.norm_sqr()).sum();
        let current_sq: f64 = ph.iter().map(|p| sq(p.current_rms)).sum();
        let current1_sq: f64 = i1.iter().map(|i| i.norm_sqr()).sum();
        let (ve, ve1, ie, ie1) = match input.wiring {
            Wiring::FourWire => {
                // the fundamental neutral current is the phasor sum when none was measured
                let neutral = input.neutral.unwrap_or(RmsParts {
                    total: (i1[0] + i1[1] + i1[2]).norm(),
                    fundamental: (i1[0] + i1[1] + i1[2]).norm(),
                });
                (
                    ((3.0 * phase_sq + line_sq) / 18.0).sqrt(),
                    ((3.0 * phase1_sq + line1_sq) / 18.0).sqrt(),
                    ((current_sq + sq(neutral.total)) / 3.0).sqrt(),
                    ((current1_sq + sq(neutral.fundamental)) / 3.0).sqrt(),
                )
            }
            Wiring::ThreeWire => (
                (line_sq / 9.0).sqrt(),
                (line1_sq / 9.0).sqrt(),
                (current_sq / 3.0).sqrt(),
                (current1_sq / 3.0).sqrt(),
            ),
        };
        let se = 3.0 * ve * ie;
        let se1 = 3.0 * ve1 * ie1;
        let effective = Effective {
            voltage_v: ve,
            current_a: ie,
            fundamental_voltage_v: ve1,
            fundamental_current_a: ie1,
            apparent_va: se,
            fundamental_apparent_va: se1,
            nonfundamental_apparent_va: root_diff(se, se1),
            pf: (se > 0.0).then(|| active_w / se),
        };

        // symmetrical components and rotation
        let [v0, vp, vn] = symmetrical_components(v1);
        let [c0, cp, cn] = symmetrical_components(i1);
        let rotation = if vp.norm() >= vn.norm() {
            Rotation::Abc
        } else {
            Rotation::Acb
        };
        // the sequence turning with the supply carries the power
        let (v_main, v_other, i_main, i_other) = match rotation {
            Rotation::Abc => (vp, vn, cp, cn),
            Rotation::Acb => (vn, vp, cn, cp),
        };
        let s_plus = 3.0 * v_main * i_main.conj();
        let positive_sequence = PositiveSequencePowers {
            active_w: s_plus.re,
            reactive_var: s_plus.im,
            apparent_va: s_plus.norm(),
            unbalance_va: root_diff(se1, s_plus.norm()),
        };
        let voltage_sequence = Sequence {
            positive: vp.norm(),
            negative: vn.norm(),
            zero: v0.norm(),
            unbalance_percent: ratio_percent(v_other.norm(), v_main.norm()),
        };
        let current_sequence = Sequence {
            positive: cp.norm(),
            negative: cn.norm(),
            zero: c0.norm(),
            unbalance_percent: ratio_percent(i_other.norm(), i_main.norm()),
        };
        ThreePhase {
            wiring: input.wiring,
            total,
            effective,
            positive_sequence,
            voltage_sequence,
            current_sequence,
            rotation,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn polar(r: f64, deg: f64) -> Complex64 {
        Complex64::from_polar(r, deg.to_radians())
    }

    /// A sinusoidal phase: RMS values equal the fundamental's, P from the phasors.
    fn pure(v: Complex64, i: Complex64) -> PhaseFigures {
        PhaseFigures {
            voltage: v,
            current: i,
            voltage_rms: v.norm(),
            current_rms: i.norm(),
            active_w: (v * i.conj()).re,
        }
    }

    fn balanced_voltages(v: f64) -> [Complex64; 3] {
        [polar(v, 0.0), polar(v, -120.0), polar(v, 120.0)]
    }

    fn lines(v: [Complex64; 3]) -> [f64; 3] {
        [v[0] - v[1], v[1] - v[2], v[2] - v[0]].map(|x| x.norm())
    }

    #[test]
    fn a_resistive_load_from_a_to_n_has_an_effective_pf_of_one_over_root_six() {
        // IEEE Std 1459-2010 §3.2 [standard, from memory]: a resistor from a to n on a balanced
        // 4-wire supply: Ve = V, Ie = √(2/3)·I, PFe = 1/√6 = 0.4082 (references §9)
        let v = balanced_voltages(230.0);
        let zero = Complex64::new(0.0, 0.0);
        let i = polar(10.0, 0.0);
        let input = ThreePhaseInput {
            wiring: Wiring::FourWire,
            phases: [pure(v[0], i), pure(v[1], zero), pure(v[2], zero)],
            line_rms: lines(v),
            neutral: Some(RmsParts {
                total: 10.0,
                fundamental: 10.0,
            }),
        };
        let t = ThreePhase::new(&input);
        assert_relative_eq!(t.effective.voltage_v, 230.0, max_relative = 1e-12);
        assert_relative_eq!(
            t.effective.current_a,
            10.0 * (2.0f64 / 3.0).sqrt(),
            max_relative = 1e-12
        );
        assert_relative_eq!(
            t.effective.pf.unwrap(),
            1.0 / 6f64.sqrt(),
            max_relative = 1e-12
        );
        assert!((t.effective.pf.unwrap() - 0.4082).abs() < 5e-5);
        // the neutral's fundamental from the phasor sum gives the same when none is measured
        let t2 = ThreePhase::new(&ThreePhaseInput {
            neutral: None,
            ..input
        });
        assert_relative_eq!(
            t2.effective.pf.unwrap(),
            1.0 / 6f64.sqrt(),
            max_relative = 1e-12
        );
        // a single-phase load is all three sequences alike: I+ = I− = I0 = I/3
        for x in [
            t.current_sequence.positive,
            t.current_sequence.negative,
            t.current_sequence.zero,
        ] {
            assert_relative_eq!(x, 10.0 / 3.0, max_relative = 1e-12);
        }
    }

    #[test]
    fn unbalance_of_400_400_380_v_is_3_363_percent_by_fortescue_and_by_the_closed_form() {
        // references §9 [computed]: Vab = Vbc = 400 V, Vca = 380 V gives u2 = 3.363 %.
        let (ab, bc, ca) = (400.0f64, 400.0f64, 380.0f64);
        let closed = unbalance_from_line_voltages([ab, bc, ca]).unwrap();
        assert!((closed - 3.363).abs() < 5e-4, "{closed}");
        // Fortescue on the line-voltage triangle (law of cosines places the phasors; their sum
        // is zero), then a star of phase voltages with the same line voltages
        let vab = polar(ab, 30.0);
        let angle_b = ((ab * ab + bc * bc - ca * ca) / (2.0 * ab * bc)).acos();
        // Vbc turns by 180° − (interior angle at b) from Vab, clockwise for abc rotation
        let vbc = vab * polar(bc / ab, -(180.0 - angle_b.to_degrees()));
        let vca = -(vab + vbc);
        assert_relative_eq!(vca.norm(), ca, max_relative = 1e-12);
        let [zero, pos, neg] = symmetrical_components([vab, vbc, vca]);
        assert!(zero.norm() < 1e-9);
        let fortescue = neg.norm() / pos.norm() * 100.0;
        assert_relative_eq!(fortescue, closed, max_relative = 1e-9);
        // phase voltages to the centroid (the artificial star point) carry the same u2
        let va = (vab - vca) / 3.0;
        let vb = (vbc - vab) / 3.0;
        let vc = (vca - vbc) / 3.0;
        let i = [va, vb, vc].map(|v| v / 23.0);
        let t = ThreePhase::new(&ThreePhaseInput {
            wiring: Wiring::ThreeWire,
            phases: [pure(va, i[0]), pure(vb, i[1]), pure(vc, i[2])],
            line_rms: [ab, bc, ca],
            neutral: None,
        });
        assert_eq!(t.rotation, Rotation::Abc);
        assert_relative_eq!(
            t.voltage_sequence.unbalance_percent.unwrap(),
            closed,
            max_relative = 1e-9
        );
    }

    #[test]
    fn reverse_rotation_is_said_and_the_unbalance_stays_small_over_large() {
        let v = [polar(230.0, 0.0), polar(230.0, 120.0), polar(225.0, -120.0)];
        let i = v.map(|x| x / 23.0);
        let t = ThreePhase::new(&ThreePhaseInput {
            wiring: Wiring::FourWire,
            phases: [pure(v[0], i[0]), pure(v[1], i[1]), pure(v[2], i[2])],
            line_rms: lines(v),
            neutral: None,
        });
        assert_eq!(t.rotation, Rotation::Acb);
        let u = t.voltage_sequence.unbalance_percent.unwrap();
        assert!(u > 0.0 && u < 2.0, "{u}");
        // the power still flows in the sequence that turns with the supply
        assert_relative_eq!(
            t.positive_sequence.active_w,
            t.total.active_w,
            max_relative = 1e-3
        );
    }

    #[test]
    fn balanced_sinusoidal_system_has_equal_effective_and_per_phase_figures() {
        // textbook: on a balanced sinusoidal system Se = Se1 = S1+ = 3·V·I, SU1 = 0, PFe = cos φ
        let v = balanced_voltages(230.0);
        let phi = 36.87f64;
        let i = v.map(|x| x / 23.0 * polar(1.0, -phi));
        let t = ThreePhase::new(&ThreePhaseInput {
            wiring: Wiring::FourWire,
            phases: [pure(v[0], i[0]), pure(v[1], i[1]), pure(v[2], i[2])],
            line_rms: lines(v),
            neutral: None,
        });
        let s = 3.0 * 230.0 * 10.0;
        assert_relative_eq!(t.effective.apparent_va, s, max_relative = 1e-12);
        assert_relative_eq!(t.positive_sequence.apparent_va, s, max_relative = 1e-12);
        assert!(t.positive_sequence.unbalance_va < 1e-6 * s);
        assert_relative_eq!(
            t.effective.pf.unwrap(),
            phi.to_radians().cos(),
            max_relative = 1e-12
        );
        assert_relative_eq!(
            t.total.reactive_var,
            s * phi.to_radians().sin(),
            max_relative = 1e-12
        );
        assert!(t.voltage_sequence.unbalance_percent.unwrap() < 1e-9);
    }
}
