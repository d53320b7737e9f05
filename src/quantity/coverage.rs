//! Coverage factors from the effective degrees of freedom (JCGM 100:2008, Annex G): the
//! Welch-Satterthwaite formula and the Student t quantile at the coverage probability of k = 2
//! for a normal distribution (95.45 %).
//!
//! A Type A component taken from the spread of M windows has M − 1 degrees of freedom; a Type B
//! component (a stated limit) and one propagated from the fit's noise over thousands of samples
//! are taken as having infinitely many (GUM G.4.2, G.4.3). Then
//! `ν_eff = u_c⁴ / Σ (u_i⁴/ν_i)` (G.2b), truncated to the next lower integer (G.4.1), and
//! `k = t_p(ν_eff)`.

use serde::Serialize;

/// The coverage probability of k = 2 for a normal distribution: erf(√2) = 95.45 %.
pub const COVERAGE_PROBABILITY: f64 = 0.954_499_736_103_641_6;
/// Above this many degrees of freedom t_p(ν) is taken as the normal quantile, 2.00 (it differs by
/// less than 0.005 from ν = 400 on; JCGM 100 Table G.2 lists ∞ after 100).
const NORMAL_FROM: f64 = 400.0;

/// The effective degrees of freedom of a figure and the coverage factor they give.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Coverage {
    /// ν_eff by Welch-Satterthwaite; `None` (null in JSON) when infinite (no Type A component
    /// from few windows).
    pub effective_dof: Option<f64>,
    /// The coverage factor k = t_95.45(ν_eff), 2 for infinitely many.
    pub k: f64,
}

impl Coverage {
    /// Infinitely many degrees of freedom: k = 2.
    pub const NORMAL: Coverage = Coverage {
        effective_dof: None,
        k: 2.0,
    };

    /// Welch-Satterthwaite over `parts`: (standard uncertainty, degrees of freedom, `None` for
    /// infinitely many).
    pub fn from_parts(parts: &[(f64, Option<f64>)]) -> Coverage {
        let uc2: f64 = parts.iter().map(|(u, _)| u * u).sum();
        let denom: f64 = parts
            .iter()
            .filter_map(|(u, nu)| nu.map(|nu| u.powi(4) / nu))
            .sum();
        if !(denom > 0.0) || !uc2.is_finite() {
            return Coverage::NORMAL;
        }
        let nu = uc2 * uc2 / denom;
        if nu >= NORMAL_FROM {
            return Coverage {
                effective_dof: Some(nu),
                k: 2.0,
            };
        }
        Coverage {
            effective_dof: Some(nu),
            k: student_t_quantile(COVERAGE_PROBABILITY, nu.floor().max(1.0) as u32),
        }
    }
}

/// P(|T| ≤ t) for Student's t with `nu` degrees of freedom, by the finite series of Abramowitz
/// and Stegun 26.7.3 (odd ν) and 26.7.4 (even ν), θ = atan(t/√ν).
pub fn student_t_two_sided(t: f64, nu: u32) -> f64 {
    let theta = (t / (nu as f64).sqrt()).atan();
    let (s, c) = theta.sin_cos();
    let c2 = c * c;
    if nu % 2 == 1 {
        // (2/π)[θ + sin θ (cos θ + (2/3) cos³θ + … + (2·4⋯(ν−3))/(1·3⋯(ν−2)) cos^(ν−2) θ)]
        let mut sum = 0.0;
        if nu > 1 {
            let mut term = c;
            sum = term;
            let mut j = 2;
            while j + 1 < nu {
                term *= c2 * j as f64 / (j + 1) as f64;
                sum += term;
                j += 2;
            }
        }
        2.0 / std::f64::consts::PI * (theta + s * sum)
    } else {
        // sin θ [1 + (1/2) cos²θ + (1·3)/(2·4) cos⁴θ + … + (1·3⋯(ν−3))/(2·4⋯(ν−2)) cos^(ν−2) θ]
        let mut term = 1.0;
        let mut sum = 1.0;
        let mut j = 1;
        while j + 1 < nu {
            term *= c2 * j as f64 / (j + 1) as f64;
            sum += term;
            j += 2;
        }
        s * sum
    }
}

/// The two-sided quantile t_p(ν): P(|T| ≤ t) = p, by bisection on [`student_t_two_sided`].
pub fn student_t_quantile(p: f64, nu: u32) -> f64 {
    let (mut lo, mut hi) = (0.0, 1e4);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if student_t_two_sided(mid, nu) < p {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// JCGM 100:2008 Table G.2 (from memory): t_p(ν) for p = 95.45 % and, as a check of the
    /// series, p = 95 %. ν = 3: 3.31 at 95.45 %, 3.18 at 95 %.
    #[test]
    fn student_t_quantiles_match_the_gum_table() {
        for (nu, k) in [
            (1, 13.97),
            (2, 4.53),
            (3, 3.31),
            (4, 2.87),
            (5, 2.65),
            (10, 2.28),
            (20, 2.13),
            (50, 2.05),
        ] {
            let t = student_t_quantile(COVERAGE_PROBABILITY, nu);
            assert!((t - k).abs() < 0.006, "ν = {nu}: {t} vs {k}");
        }
        for (nu, k) in [(1, 12.71), (3, 3.18), (10, 2.23), (30, 2.04)] {
            let t = student_t_quantile(0.95, nu);
            assert!((t - k).abs() < 0.006, "ν = {nu}: {t} vs {k}");
        }
    }

    /// Welch-Satterthwaite (JCGM 100 G.2b): a Type A part of 4 windows (ν = 3) alone keeps
    /// ν = 3 and k = t(3); beside an equal Type B part ν_eff = (2u²)²/(u⁴/3) = 12; a Type B part
    /// alone gives k = 2.
    #[test]
    fn welch_satterthwaite_weighs_the_few_windows_by_their_share() {
        let alone = Coverage::from_parts(&[(1.0, Some(3.0))]);
        assert_eq!(alone.effective_dof, Some(3.0));
        assert!((alone.k - 3.31).abs() < 0.006);
        let shared = Coverage::from_parts(&[(1.0, Some(3.0)), (1.0, None)]);
        assert!((shared.effective_dof.unwrap() - 12.0).abs() < 1e-12);
        assert!((shared.k - student_t_quantile(COVERAGE_PROBABILITY, 12)).abs() < 1e-12);
        assert_eq!(Coverage::from_parts(&[(1.0, None)]), Coverage::NORMAL);
        assert_eq!(Coverage::from_parts(&[(0.0, Some(3.0))]), Coverage::NORMAL);
    }
}
