//! What a meter may mean by P, Q, S, PF, V and I: the IEEE 1459 candidates, and which one a
//! reading matches.
//!
//! Meters differ (references §5, common practice): Q may be the fundamental reactive power Q1,
//! the nonactive power N = √(S² − P²) (signed here as Q1, the way meters that show it sign it) or
//! Budeanu's Q_B = Σ Vh·Ih·sin θh (which IEEE 1459 does not recommend); S may be arithmetic
//! (V·I), the fundamental S1 = V1·I1 or vector √(P² + Q1²); PF the true P/S, the displacement
//! cos θ1 = P1/S1 or the vector P/√(P² + Q1²); P may be P or the fundamental P1; V and I the true
//! RMS or the fundamental. The first candidate of each list is the one IEEE Std 1459-2010 names
//! for the quantity.
//!
//! **Which one is judged** (our rule): the reading is compared with every candidate. Among those
//! it does not fail against, the one nearest the reading is taken, unless the first candidate is
//! no further from the reading than our uncertainty (then the candidates cannot be told apart on
//! this capture and the first stands). When it fails against all, it is judged against the first
//! and the check says that none fits.
//!
//! **Uncertainties** of the other candidates (our rule): their relative U is that of the
//! candidate they are nearest in make-up (S1 and V1, I1 as S, V, I; P1 as P; Q_B as Q1; the
//! displacement PF its own), N and the vector S by first-order propagation from S, P and Q1
//! taken as uncorrelated, which overstates U when the probes' ratio errors dominate.

use super::Measured;

/// One meaning of a quantity, with our value and its expanded uncertainty (k = 2).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Candidate {
    /// The definition in words, e.g. "N (nonactive, IEEE 1459)".
    pub name: &'static str,
    /// Our value by this definition.
    pub value: f64,
    /// Its expanded uncertainty.
    pub u: f64,
}

const fn c(name: &'static str, value: f64, u: f64) -> Candidate {
    Candidate { name, value, u }
}

/// The candidates for `quantity` ("p", "q", "s", "pf", "v", "i"), IEEE 1459's own first.
pub fn candidates(quantity: &str, m: &Measured) -> Vec<Candidate> {
    let rel = |u: f64, x: f64| if x != 0.0 { (u / x).abs() } else { 0.0 };
    let s_vec = m.p_w.hypot(m.q_var);
    let u_s_vec = if s_vec > 0.0 {
        (m.p_w * m.u_p_w).hypot(m.q_var * m.u_q_var) / s_vec
    } else {
        m.u_s_va
    };
    match quantity {
        "p" => vec![
            c("P (active, IEEE 1459)", m.p_w, m.u_p_w),
            c("P1 (fundamental active, IEEE 1459)", m.p1_w, m.u_p_w),
        ],
        "q" => {
            let n = m.nonactive_var.copysign(m.q_var);
            let u_n = if m.nonactive_var > 0.0 {
                (m.s_va * m.u_s_va).hypot(m.p_w * m.u_p_w) / m.nonactive_var
            } else {
                m.u_s_va
            };
            vec![
                c("Q1 (fundamental reactive, IEEE 1459)", m.q_var, m.u_q_var),
                c("N (nonactive √(S² − P²), IEEE 1459, signed as Q1)", n, u_n),
                c(
                    "Q_B (Budeanu, Σ Vh·Ih·sin θh; not recommended by IEEE 1459)",
                    m.q_budeanu_var,
                    m.u_q_var,
                ),
            ]
        }
        "s" => vec![
            c("S (arithmetic V·I, IEEE 1459)", m.s_va, m.u_s_va),
            c(
                "S1 (fundamental V1·I1, IEEE 1459)",
                m.s1_va,
                m.s1_va * rel(m.u_s_va, m.s_va),
            ),
            c("vector √(P² + Q1²)", s_vec, u_s_vec),
        ],
        "pf" => {
            let pf_vec = if s_vec > 0.0 { m.p_w / s_vec } else { 0.0 };
            vec![
                c("true P/S (IEEE 1459)", m.pf, m.u_pf),
                c(
                    "displacement cos θ1 = P1/S1 (IEEE 1459)",
                    m.displacement_pf,
                    m.u_displacement_pf,
                ),
                c("vector P/√(P² + Q1²)", pf_vec, m.u_pf),
            ]
        }
        "v" => vec![
            c("V (true RMS, IEEE 1459)", m.v_rms, m.u_v),
            c(
                "V1 (fundamental RMS, IEEE 1459)",
                m.v1,
                m.v1 * rel(m.u_v, m.v_rms),
            ),
        ],
        _ => vec![
            c("I (true RMS, IEEE 1459)", m.i_rms, m.u_i),
            c(
                "I1 (fundamental RMS, IEEE 1459)",
                m.i1,
                m.i1 * rel(m.u_i, m.i_rms),
            ),
        ],
    }
}
