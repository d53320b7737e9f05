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
        term: "current probe ratio",
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
        term: "probe phase error and skew",
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
