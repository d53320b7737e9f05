//! The decision rule: a measured value with its expanded uncertainty against a band of
//! acceptable values.
//!
//! Guarded acceptance with a guard band equal to the expanded uncertainty U (ILAC-G8:09/2019,
//! "Guidelines on Decision Rules and Statements of Conformity", simple and guarded acceptance,
//! from memory): the value is *consistent* when `x ± U` lies wholly inside the band, *outside*
//! when `x ± U` lies wholly outside it, and *inconclusive* when the uncertainty interval straddles
//! a limit. The same rule serves every check: pass / fail / inconclusive are the same three
//! outcomes in a check's own words.

use serde::Serialize;

/// One of the three outcomes of the decision rule.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Verdict {
    /// `x ± U` lies within the limits.
    Consistent,
    /// `x ± U` lies beyond a limit.
    Outside,
    /// `x ± U` straddles a limit: the measurement cannot tell.
    Inconclusive,
}

impl Verdict {
    /// The word used in every output.
    pub fn as_str(self) -> &'static str {
        match self {
            Verdict::Consistent => "consistent",
            Verdict::Outside => "outside",
            Verdict::Inconclusive => "inconclusive",
        }
    }
}

/// The outcome and how far the value sits from the nearer limit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Decision {
    /// The verdict.
    pub verdict: Verdict,
    /// Distance of the value beyond the nearer limit: positive outside the band, negative inside
    /// (by how much it is inside).
    pub margin: f64,
}

/// Applies the guarded decision rule to `value ± u_expanded` against `[low, high]`.
pub fn decide(value: f64, u_expanded: f64, low: f64, high: f64) -> Decision {
    let margin = if value < low {
        low - value
    } else if value > high {
        value - high
    } else {
        -(value - low).min(high - value)
    };
    let u = u_expanded.abs();
    let verdict = if value - u >= low && value + u <= high {
        Verdict::Consistent
    } else if value + u < low || value - u > high {
        Verdict::Outside
    } else {
        Verdict::Inconclusive
    };
    Decision { verdict, margin }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The three zones of guarded acceptance (ILAC-G8:09/2019, from memory).
    #[test]
    fn guard_bands_give_the_three_zones() {
        let d = decide(30.0, 0.5, 28.0, 33.0);
        assert_eq!((d.verdict, d.margin), (Verdict::Consistent, -2.0));
        let d = decide(27.2, 0.5, 28.0, 33.0);
        assert_eq!(d.verdict, Verdict::Outside);
        assert!((d.margin - 0.8).abs() < 1e-12);
        // on the boundary within U either way: inconclusive
        assert_eq!(decide(28.2, 0.5, 28.0, 33.0).verdict, Verdict::Inconclusive);
        assert_eq!(decide(27.8, 0.5, 28.0, 33.0).verdict, Verdict::Inconclusive);
        assert_eq!(decide(33.4, 0.5, 28.0, 33.0).verdict, Verdict::Inconclusive);
    }
}
