//! The uncertainty of delivered/expected kvar with the inputs the two captures share.
//!
//! Both captures are taken with the same probes, so their errors are not independent (GUM,
//! JCGM 100:2008 §5.2, correlated input quantities): write the true Q1 of each capture as
//! `k_V·k_I·V1·I1·sin(θ + δ)`, with `k_V`, `k_I` the probes' ratio errors and δ their phase error
//! (plus any residual skew), the same in both captures. Then
//!
//! - delivered = Q1(before) − Q1(after) goes as `k_V·k_I`, and expected = `Q_rated·(c·V1/V_rated)²·
//!   (f/f_rated)` as `k_V²`, so the ratio goes as `k_I/k_V`: each probe's ratio error enters the
//!   ratio once, with sensitivity ±1 (the correlation coefficient is 1, the terms do not add up
//!   per capture);
//! - ∂Q1/∂θ = S1·cos θ = P1, so δ moves delivered by `(P1(before) − P1(after))·δ`: the phase error
//!   cancels when the bank leaves P unchanged, as a capacitor does;
//! - the Type A parts (the spread over the about-200 ms windows) of each capture are independent;
//!   the site voltage's enters the expected kvar squared, the frequency's once.
//!
//! Each Type B limit is taken as rectangular, u = limit/√3 (GUM 4.3.7); the terms add in
//! quadrature and U = k·u_c with k = 2.

use super::BankSide;
use crate::quantity::uncertainty::COVERAGE_FACTOR;
use serde::Serialize;

/// One line of the budget.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BudgetTerm {
    /// What varies.
    pub term: &'static str,
    /// Where its size comes from, in words.
    pub source: String,
    /// Standard uncertainty it gives delivered/expected (dimensionless).
    pub ratio_standard_uncertainty: f64,
    /// Standard uncertainty it gives the delivered kvar (0 when it acts only on the expected kvar).
    pub delivered_standard_uncertainty_kvar: f64,
}

/// The budget of delivered/expected.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RatioBudget {
    /// The terms, Type B first.
    pub terms: Vec<BudgetTerm>,
    /// Root sum of squares of the terms' ratio uncertainties.
    pub ratio_combined_standard_uncertainty: f64,
    /// Coverage factor.
    pub coverage_factor: f64,
    /// k·u_c: the `ratio_uncertainty` the verdict uses.
    pub ratio_expanded_uncertainty: f64,
    /// Root sum of squares of the terms' delivered kvar uncertainties, times k.
    pub delivered_expanded_uncertainty_kvar: f64,
    /// How the captures' shared inputs were treated.
    pub correlation: &'static str,
}

/// The note on correlation, for the report.
pub const CORRELATION: &str = "both captures share the probes: ratio errors fully correlated \
(delivered/expected goes as k_I/k_V), the phase error enters as (P1 before − P1 after)·δ; Type A \
independent (GUM 5.2)";

/// Works out the budget of `ratio = delivered/expected`; `scale` is 3 for one phase of a
/// three-phase bank (powers in kvar for the whole bank), else 1.
pub fn ratio_budget(
    before: &BankSide,
    after: &BankSide,
    scale: f64,
    delivered_kvar: f64,
    expected_kvar: f64,
) -> RatioBudget {
    let rect = |limit: f64| limit / 3f64.sqrt();
    let ratio = delivered_kvar / expected_kvar;
    let inst = &after.instrument;
    let mut terms = Vec::new();
    let u_i = rect(inst.i_ratio_percent / 100.0);
    terms.push(BudgetTerm {
        term: OWN_CURRENT_PROBE_TERMS[0],
        source: format!(
            "±{} % of reading, rectangular, the same in both captures",
            inst.i_ratio_percent
        ),
        ratio_standard_uncertainty: ratio.abs() * u_i,
        delivered_standard_uncertainty_kvar: delivered_kvar.abs() * u_i,
    });
    let u_v = rect(inst.v_ratio_percent / 100.0);
    terms.push(BudgetTerm {
        term: "voltage probe ratio",
        source: format!(
            "±{} % of reading, rectangular, the same in both captures (delivered goes as k_V, \
             expected as k_V²)",
            inst.v_ratio_percent
        ),
        ratio_standard_uncertainty: ratio.abs() * u_v,
        delivered_standard_uncertainty_kvar: delivered_kvar.abs() * u_v,
    });
    let f = after.frequency_hz;
    let u_delta_deg = rect(inst.phase_error_deg).hypot(rect(360.0 * f * inst.skew_s));
    let dp1_kw = scale * (before.p1_w - after.p1_w) / 1000.0;
    let u_phase_kvar = dp1_kw.abs() * u_delta_deg.to_radians();
    terms.push(BudgetTerm {
        term: OWN_CURRENT_PROBE_TERMS[1],
        source: format!(
            "±{}° and ±{} s of skew, rectangular, the same in both captures: moves delivered by \
             (P1 before − P1 after)·δ = {:.3} kW·δ",
            inst.phase_error_deg, inst.skew_s, dp1_kw
        ),
        ratio_standard_uncertainty: u_phase_kvar / expected_kvar,
        delivered_standard_uncertainty_kvar: u_phase_kvar,
    });
    for (side, term) in [
        (before, "before-capture spread (Type A)"),
        (after, "after-capture spread (Type A)"),
    ] {
        let u = scale * side.u_q_type_a_var / 1000.0;
        terms.push(BudgetTerm {
            term,
            source: "Q1 over the capture's about-200 ms windows (or the fit noise)".into(),
            ratio_standard_uncertainty: u / expected_kvar,
            delivered_standard_uncertainty_kvar: u,
        });
    }
    terms.push(BudgetTerm {
        term: "site voltage spread (Type A)",
        source: "V1 of the after-capture; the expected kvar goes as V1²".into(),
        ratio_standard_uncertainty: ratio.abs() * 2.0 * after.u_v1_type_a / after.v1,
        delivered_standard_uncertainty_kvar: 0.0,
    });
    terms.push(BudgetTerm {
        term: "site frequency",
        source: "the after-capture's frequency uncertainty (sample clock and estimate); the \
                 expected kvar goes as f"
            .into(),
        ratio_standard_uncertainty: ratio.abs() * after.u_frequency_hz / f,
        delivered_standard_uncertainty_kvar: 0.0,
    });
    RatioBudget::of(terms)
}

/// The names of the two terms of a phase's own current probe, which
/// [`kirchhoff_current_terms`] replaces.
pub const OWN_CURRENT_PROBE_TERMS: [&str; 2] =
    ["current probe ratio", "probe phase error and skew"];

impl RatioBudget {
    /// The budget of these terms: root sum of squares, times k.
    fn of(terms: Vec<BudgetTerm>) -> RatioBudget {
        let rss =
            |get: fn(&BudgetTerm) -> f64| terms.iter().map(|t| get(t).powi(2)).sum::<f64>().sqrt();
        let u_c = rss(|t| t.ratio_standard_uncertainty);
        let u_delivered = rss(|t| t.delivered_standard_uncertainty_kvar);
        RatioBudget {
            ratio_combined_standard_uncertainty: u_c,
            coverage_factor: COVERAGE_FACTOR,
            ratio_expanded_uncertainty: COVERAGE_FACTOR * u_c,
            delivered_expanded_uncertainty_kvar: COVERAGE_FACTOR * u_delivered,
            correlation: CORRELATION,
            terms,
        }
    }

    /// The same budget with the phase's own current-probe terms replaced by `current` (in
    /// their place), combined again.
    pub fn with_current_terms(self, current: Vec<BudgetTerm>) -> RatioBudget {
        let mut terms = Vec::with_capacity(self.terms.len() + current.len());
        let mut current = Some(current);
        for t in self.terms {
            if OWN_CURRENT_PROBE_TERMS.contains(&t.term) {
                terms.extend(current.take().into_iter().flatten());
            } else {
                terms.push(t);
            }
        }
        RatioBudget::of(terms)
    }
}

/// The terms of each line's clamp (a, b, c) in [`kirchhoff_current_terms`].
const RATIO_TERMS: [&str; 3] = [
    "current probe ratio, line a",
    "current probe ratio, line b",
    "current probe ratio, line c",
];
const PHASE_TERMS: [&str; 3] = [
    "probe phase error and skew, line a",
    "probe phase error and skew, line b",
    "probe phase error and skew, line c",
];

/// The current-probe terms of phase `k` of a three-phase bank when its current was made from
/// the other two lines' by Kirchhoff's current law in either capture (a 3-wire capture with two
/// clamps). Such a current carries the two clamps' errors, not a clamp of its own:
///
/// - with `I_k = −(I_m + I_n)` and `Q_k = Im(V_k·conj(I_k))`, a ratio error ε_m of clamp m moves
///   `Q_k` by `ε_m·Im(V_k·conj(−I_m))` and a phase error δ_m by `−δ_m·Re(V_k·conj(−I_m))`
///   (first order, the phasors of one capture on its own time reference); a phase measured
///   with its own clamp moves by `ε_k·Q_k` and `−δ_k·P_k`, as [`ratio_budget`] has it;
/// - each clamp's errors are the same in both captures, so its sensitivity on the delivered
///   kvar is its sensitivity before minus after; the clamps are independent of each other.
///
/// Each ratio limit is `±i_ratio_percent`, each phase limit the probe phase error and skew
/// together, both rectangular (GUM 4.3.7). Checked against a Monte Carlo of the same model
/// (GUM Supplement 1) in the tests. `scale` and `expected_kvar` as for [`ratio_budget`].
pub fn kirchhoff_current_terms(
    before: &[BankSide],
    after: &[BankSide],
    k: usize,
    scale: f64,
    expected_kvar: f64,
) -> Vec<BudgetTerm> {
    use rustfft::num_complex::Complex64;
    // d Q_k / d ε_m and d Q_k / d δ_m in one capture, for every clamp m
    let sensitivities = |sides: &[BankSide]| -> [(f64, f64); 3] {
        let mut out = [(0.0, 0.0); 3];
        let v = sides[k].fundamentals.0;
        for (m, side) in sides.iter().enumerate().take(3) {
            let x: Complex64 = if m == k && !side.current_derived {
                v * side.fundamentals.1.conj()
            } else if m != k && sides[k].current_derived && !side.current_derived {
                v * (-side.fundamentals.1).conj()
            } else {
                continue;
            };
            out[m] = (x.im, -x.re);
        }
        out
    };
    let (b, a) = (sensitivities(before), sensitivities(after));
    let inst = &after[k].instrument;
    let f = after[k].frequency_hz;
    let u_ratio = inst.i_ratio_percent / 100.0 / 3f64.sqrt();
    let u_delta = (inst.phase_error_deg / 3f64.sqrt())
        .hypot(360.0 * f * inst.skew_s / 3f64.sqrt())
        .to_radians();
    let kvar = |x: f64| scale * x / 1000.0;
    let names = ["a", "b", "c"];
    let mut terms = Vec::new();
    for m in 0..3 {
        let s_ratio = kvar(b[m].0 - a[m].0);
        let s_phase = kvar(b[m].1 - a[m].1);
        if s_ratio == 0.0 && s_phase == 0.0 {
            continue;
        }
        let whose = if m == k {
            format!("line {}'s own clamp", names[m])
        } else {
            format!(
                "line {}'s clamp, of which phase {}'s current is made (Kirchhoff's current law)",
                names[m], names[k]
            )
        };
        let u = s_ratio.abs() * u_ratio;
        terms.push(BudgetTerm {
            term: RATIO_TERMS[m],
            source: format!(
                "{whose}: ±{} % of reading, rectangular, the same in both captures, independent \
                 of the other clamp; moves delivered by {:.3} kvar per 1 %",
                inst.i_ratio_percent,
                s_ratio.abs() / 100.0
            ),
            ratio_standard_uncertainty: u / expected_kvar,
            delivered_standard_uncertainty_kvar: u,
        });
        let u = s_phase.abs() * u_delta;
        terms.push(BudgetTerm {
            term: PHASE_TERMS[m],
            source: format!(
                "{whose}: ±{}° and ±{} s of skew, rectangular, the same in both captures, \
                 independent of the other clamp; moves delivered by {:.3} kvar per degree",
                inst.phase_error_deg,
                inst.skew_s,
                s_phase.abs() * 1f64.to_radians()
            ),
            ratio_standard_uncertainty: u / expected_kvar,
            delivered_standard_uncertainty_kvar: u,
        });
    }
    terms
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::quantity::uncertainty::UncertaintyInputs;
    use rand::SeedableRng;
    use rand_distr::{Distribution, Uniform};
    use rustfft::num_complex::Complex64;

    /// One phase's side from its fundamental phasors (the rest as the budget needs it).
    fn side(v: Complex64, i: Complex64, derived: bool, inst: UncertaintyInputs) -> BankSide {
        let s = v * i.conj();
        BankSide {
            phases: 1,
            p_w: s.re,
            p1_w: s.re,
            q_var: s.im,
            u_q_type_a_var: 0.0,
            v1: v.norm(),
            u_v1_type_a: 0.0,
            frequency_hz: 50.0,
            u_frequency_hz: 0.0,
            angle_deg: s.arg().to_degrees(),
            instrument: inst,
            current_harmonics: vec![i.norm()],
            voltage_harmonics: vec![v.norm()],
            harmonic_angles_deg: vec![0.0],
            warnings: Vec::new(),
            fundamentals: (v, i),
            line_to_line_voltages: true,
            current_derived: derived,
        }
    }

    /// A 3-wire capture with clamps on lines a and c, phase b's current made by Kirchhoff's
    /// law: the phases' sides of an unbalanced load and, after, of the load and a balanced
    /// star bank of `kvar` a phase (an invented bench case; the truth is the model below).
    fn captures(
        clamps: &[(f64, f64); 2],
        kvar: f64,
        inst: UncertaintyInputs,
    ) -> (Vec<BankSide>, Vec<BankSide>) {
        let v: Vec<Complex64> = (0..3)
            .map(|k| Complex64::from_polar(230.0, -2.0 * PI * k as f64 / 3.0))
            .collect();
        // an unbalanced load whose currents add up to zero, as a 3-wire circuit's do
        let (la, lc) = (
            Complex64::from_polar(40.0, -0.5),
            Complex64::from_polar(25.0, 2.0 * PI / 3.0 - 0.3),
        );
        let load = [la, -(la + lc), lc];
        // a capacitor's current leads its voltage by 90°: I = j·Q/|V| along V
        let bank: Vec<Complex64> = (0..3)
            .map(|k| v[k] / v[k].norm() * Complex64::new(0.0, kvar * 1000.0 / 230.0))
            .collect();
        let sides = |currents: Vec<Complex64>| {
            // the clamps' errors: ratio (1 + ε) and phase δ on lines a and c
            let seen = [
                currents[0] * (1.0 + clamps[0].0) * Complex64::from_polar(1.0, clamps[0].1),
                Complex64::default(),
                currents[2] * (1.0 + clamps[1].0) * Complex64::from_polar(1.0, clamps[1].1),
            ];
            let b = -(seen[0] + seen[2]);
            vec![
                side(v[0], seen[0], false, inst),
                side(v[1], b, true, inst),
                side(v[2], seen[2], false, inst),
            ]
        };
        let before = sides(load.to_vec());
        let after = sides(load.iter().zip(&bank).map(|(l, b)| l + b).collect());
        (before, after)
    }

    use std::f64::consts::PI;

    /// The derived phase's current terms against a Monte Carlo of the same model (GUM
    /// Supplement 1, JCGM 101:2008: the distribution of the output by drawing the inputs):
    /// each clamp's ratio and phase errors drawn rectangular within their limits, the same in
    /// both captures, phase b's current made from the two again, its delivered kvar worked
    /// out in full (no linearisation). The standard deviation of the draws and the terms' root
    /// sum of squares agree within 2 %. The own-clamp terms are left for the measured phases.
    #[test]
    fn a_current_made_by_kirchhoff_carries_both_clamps_errors() {
        for inst in [
            UncertaintyInputs::default(),
            UncertaintyInputs {
                i_ratio_percent: 1.0,
                phase_error_deg: 1.0,
                ..UncertaintyInputs::default()
            },
        ] {
            let kvar = 10.0;
            let (before, after) = captures(&[(0.0, 0.0); 2], kvar, inst);
            let delivered_b = (before[1].q_var - after[1].q_var) / 1000.0;
            assert!((delivered_b - kvar).abs() < 1e-9, "{delivered_b}");
            let terms = kirchhoff_current_terms(&before, &after, 1, 1.0, 10.0);
            let names: Vec<&str> = terms.iter().map(|t| t.term).collect();
            assert_eq!(
                names,
                [
                    RATIO_TERMS[0],
                    PHASE_TERMS[0],
                    RATIO_TERMS[2],
                    PHASE_TERMS[2]
                ]
            );
            let u_terms = terms
                .iter()
                .map(|t| t.delivered_standard_uncertainty_kvar.powi(2))
                .sum::<f64>()
                .sqrt();

            let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(0x6b69_7263);
            let ratio = Uniform::new_inclusive(-1.0, 1.0).unwrap();
            let draws = 100_000;
            let (mut sum, mut sum2) = (0.0, 0.0);
            for _ in 0..draws {
                let mut clamp = || {
                    (
                        ratio.sample(&mut rng) * inst.i_ratio_percent / 100.0,
                        ratio.sample(&mut rng) * inst.phase_error_deg.to_radians(),
                    )
                };
                let clamps = [clamp(), clamp()];
                let (b, a) = captures(&clamps, kvar, inst);
                let d = (b[1].q_var - a[1].q_var) / 1000.0;
                sum += d;
                sum2 += d * d;
            }
            let mean = sum / draws as f64;
            let sd = (sum2 / draws as f64 - mean * mean).sqrt();
            assert!(
                (u_terms / sd - 1.0).abs() < 0.02,
                "terms {u_terms} kvar against the draws' {sd} kvar ({inst:?})"
            );

            // phases a and c keep their own clamp's terms: ε·ΔQ and δ·ΔP
            for k in [0, 2] {
                let own = kirchhoff_current_terms(&before, &after, k, 1.0, 10.0);
                let dq = (before[k].q_var - after[k].q_var) / 1000.0;
                let u = own[0].delivered_standard_uncertainty_kvar;
                let want = dq.abs() * inst.i_ratio_percent / 100.0 / 3f64.sqrt();
                assert!((u - want).abs() < 1e-9 * want, "{u} {want}");
            }
        }
    }

    /// In the budget, a derived phase's own-clamp terms are replaced in place by the two
    /// clamps' terms and everything is combined again.
    #[test]
    fn the_replaced_terms_are_combined_again() {
        let (before, after) = captures(&[(0.0, 0.0); 2], 10.0, UncertaintyInputs::default());
        let plain = ratio_budget(&before[1], &after[1], 1.0, 10.0, 10.0);
        let current = kirchhoff_current_terms(&before, &after, 1, 1.0, 10.0);
        let replaced = plain.clone().with_current_terms(current.clone());
        assert_eq!(replaced.terms.len(), plain.terms.len() - 2 + current.len());
        assert_eq!(replaced.terms[0].term, RATIO_TERMS[0]);
        let u = replaced
            .terms
            .iter()
            .map(|t| t.ratio_standard_uncertainty.powi(2))
            .sum::<f64>()
            .sqrt();
        assert!((replaced.ratio_combined_standard_uncertainty - u).abs() < 1e-15);
        assert!((replaced.ratio_expanded_uncertainty - 2.0 * u).abs() < 1e-15);
    }
}
