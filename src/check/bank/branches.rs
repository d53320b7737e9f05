//! A delta-connected bank branch by branch: the capacitance between each pair of lines (a-b,
//! b-c, c-a), resolved from the fundamental phasors of the captures before and after switching.
//!
//! The star-equivalent figures of `super::phases` cannot say which branch of a delta is weak:
//! a weak branch draws on two lines and makes two phases look weak. With the load unchanged
//! between the captures, the bank's own line currents are `ΔI_x = I_x(after) − I_x(before)`,
//! each capture's phasors first referred to its own phase-a voltage (the two captures are taken
//! at different times, so their time references differ). Kirchhoff's current law at the
//! delta's corners (textbook) gives
//!
//! ```text
//! ΔI_a = Y_ab·V_ab − Y_ca·V_ca,   ΔI_b = Y_bc·V_bc − Y_ab·V_ab,   ΔI_c = Y_ca·V_ca − Y_bc·V_bc
//! ```
//!
//! with the branch voltages of the capture after switching, `V_ab = V_a − V_b` and so on. For a
//! 3-wire capture the phases are referred to the artificial star point, whose voltage cancels
//! in the difference: `V_a − V_b` is the measured line-to-line voltage itself. The equations sum
//! to zero, so they hold two independent complex equations for three admittances; the branches
//! are taken as pure susceptances `Y = jB` (capacitors: their losses are small), and the three
//! `B` are the least-squares solution of the three complex equations written as six real ones
//! (four of them independent for a delta, the other two what a current to the neutral would
//! carry). Each branch's capacitance is `C = B/ω` and its kvar `Q = V²·B` at its own voltage
//! (textbook: `Q = V²·ωC`); each branch of a bank rated `Q_rated` at `U_rated` holds
//! `C_rated = Q_rated/(3·ω_rated·U_rated²)`, and `C/C_rated` takes the whole bank's band and
//! guarded rule.
//!
//! The residual (what three pure branch susceptances cannot explain) is the check on the model:
//! a load that changed between the captures, a star bank with its star point on the neutral, or
//! lossy branches leave one. An ungrounded star of pure capacitors is indistinguishable from a
//! delta at its terminals (the star-delta transformation, textbook: `Y_ab = Y_a·Y_b/(Y_a + Y_b +
//! Y_c)`, a pure susceptance when all three are), so it leaves none and is resolved as that
//! equivalent delta.
//!
//! Uncertainty (GUM, JCGM 100:2008 §5.1, with the sensitivity coefficients found numerically,
//! §5.1.3 note 2): each input is moved by its standard uncertainty and the solution worked out
//! again. Type B, shared by both captures (the same probes; rectangular, u = limit/√3, as in
//! [`super::budget`]): each current clamp's ratio, each voltage channel's ratio (three phase
//! voltages for 4-wire, two line-to-line channels for 3-wire), each phase's probe phase error
//! and skew. Type A, independent per capture: each phase's current phasor moved by
//! `u(Q1)/V1` and its voltage phasor by `u(V1)` along each axis, from the capture's own Type A
//! parts of Q1 and V1 ([`BankSide::u_q_type_a_var`], [`BankSide::u_v1_type_a`]: the spread over
//! the about-200 ms windows, or the fit noise). The frequency enters `C = B/ω` once. A current
//! made by Kirchhoff's law from two clamps (a 3-wire capture) has no clamp, phase error or
//! spread of its own: it is made again from the two after each of their moves.
//! The residual's expected size is worked out from the same moves, and a residual beyond
//! k = 2 times it (our rule) makes the branch verdicts `inconclusive`.

use super::budget::{BudgetTerm, RatioBudget};
use super::{BankSide, BankVerdict, Nameplate};
use crate::check::decision::decide;
use crate::quantity::uncertainty::COVERAGE_FACTOR;
use rustfft::num_complex::Complex64;
use serde::Serialize;
use std::f64::consts::PI;

/// The branches' names in order.
pub const BRANCH_NAMES: [&str; 3] = ["ab", "bc", "ca"];

/// What the branch figures are, for every output.
pub const BRANCH_BASIS: &str = "delta branches between the lines, from the line currents' \
change I(after) − I(before) (each capture referred to its own phase-a voltage) by Kirchhoff's \
current law at the corners, the branches taken as pure susceptances (least squares); the rated \
value is a third of the bank's, Q_rated/(3·ω·U_rated²)";

/// How the branches' uncertainty is made up, for every output.
pub const BRANCH_CORRELATION: &str = "sensitivities found by moving each input by its standard \
uncertainty and solving again (GUM 5.1.3); probe ratios, phase errors and skew the same in both \
captures, Type A independent per capture";

/// One branch of a delta-connected bank.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BankBranch {
    /// "ab", "bc" or "ca".
    pub name: &'static str,
    /// The branch's fundamental voltage (line to line) after switching in, V.
    pub voltage_v: f64,
    /// Its susceptance B, siemens.
    pub susceptance_s: f64,
    /// `C = B/ω`, µF.
    pub capacitance_uf: f64,
    /// Its expanded uncertainty (k = 2), µF.
    pub capacitance_uncertainty_uf: f64,
    /// What each branch of the nameplate holds, `Q_rated/(3·ω_rated·U_rated²)`, µF.
    pub rated_capacitance_uf: f64,
    /// `V²·B` at the branch's own voltage, kvar.
    pub kvar: f64,
    /// Its expanded uncertainty (k = 2), kvar.
    pub kvar_uncertainty: f64,
    /// `U_rated²·ω_rated·C` at the rated voltage and frequency, kvar.
    pub kvar_at_rated: f64,
    /// A third of the bank's rated kvar.
    pub rated_kvar: f64,
    /// Capacitance over rated (= `kvar_at_rated` over `rated_kvar`).
    pub ratio: f64,
    /// Its expanded uncertainty (k = 2).
    pub ratio_uncertainty: f64,
    /// How that uncertainty is made up.
    pub ratio_budget: RatioBudget,
    /// The ratio against the bank's band by the guarded rule; `inconclusive` whenever the
    /// branch figures cannot be trusted (see [`DeltaBranches::branch_inconclusive_because`]).
    pub verdict: BankVerdict,
    /// Below the band, uncertainty included.
    pub weak: bool,
}

/// The branches of a delta-connected bank and the check on the model.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DeltaBranches {
    /// What the branch figures are.
    pub branch_basis: &'static str,
    /// The branches a-b, b-c, c-a; empty when they could not be resolved at all.
    pub branches: Vec<BankBranch>,
    /// The branches below the band, uncertainty included.
    pub weak_branches: Vec<&'static str>,
    /// Root sum of squares of the three line currents' parts that three pure branch
    /// susceptances do not explain, A.
    pub branch_residual_a: f64,
    /// That residual as a percentage of the root sum of squares of the bank's line currents.
    pub branch_residual_percent: f64,
    /// k = 2 times the residual the inputs' uncertainties alone would leave, A.
    pub branch_residual_limit_a: f64,
    /// Why the branch verdicts are `inconclusive` whatever their ratios say; empty otherwise.
    pub branch_inconclusive_because: Vec<String>,
}

/// One capture's three phases: voltage and current phasors.
#[derive(Debug, Clone, Copy)]
struct Phasors {
    v: [Complex64; 3],
    i: [Complex64; 3],
}

impl Phasors {
    fn of(sides: &[BankSide]) -> Phasors {
        Phasors {
            v: [0, 1, 2].map(|k| sides[k].fundamentals.0),
            i: [0, 1, 2].map(|k| sides[k].fundamentals.1),
        }
    }

    /// The current of line `derived`, when it was made from the other two by Kirchhoff's
    /// current law, made again after they moved.
    fn close(&mut self, derived: Option<usize>) {
        if let Some(d) = derived {
            self.i[d] = -(0..3)
                .filter(|&k| k != d)
                .map(|k| self.i[k])
                .sum::<Complex64>();
        }
    }

    /// Referred to its own phase-a voltage (angle zero); `None` without one.
    fn referred(&self) -> Option<Phasors> {
        let va = self.v[0];
        let n = va.norm();
        if !(n > 0.0 && n.is_finite()) {
            return None;
        }
        let turn = va.conj() / n;
        Some(Phasors {
            v: self.v.map(|x| x * turn),
            i: self.i.map(|x| x * turn),
        })
    }
}

/// The least-squares branch susceptances and what they leave unexplained.
#[derive(Debug, Clone, Copy)]
struct Fit {
    /// B of ab, bc, ca, siemens.
    b: [f64; 3],
    /// The residual line currents, A.
    residual: [Complex64; 3],
    /// The branch voltages after switching, V.
    v_branch: [Complex64; 3],
    /// The bank's line currents, A.
    delta_i: [Complex64; 3],
}

/// Real inner product of two complex 3-vectors taken as real 6-vectors.
fn dot(x: &[Complex64; 3], y: &[Complex64; 3]) -> f64 {
    (0..3).map(|k| (x[k].conj() * y[k]).re).sum()
}

/// Solves the branches from the two captures' phasors; `None` when the equations cannot be
/// solved (no voltage, or branch voltages that do not span the three unknowns).
fn fit(before: &Phasors, after: &Phasors) -> Option<Fit> {
    let (b, a) = (before.referred()?, after.referred()?);
    let v = [a.v[0] - a.v[1], a.v[1] - a.v[2], a.v[2] - a.v[0]];
    let delta_i = [0, 1, 2].map(|k| a.i[k] - b.i[k]);
    let j = Complex64::i();
    let zero = Complex64::default();
    // each branch's contribution to the three line currents per siemens of susceptance
    let cols = [
        [j * v[0], -j * v[0], zero],
        [zero, j * v[1], -j * v[1]],
        [-j * v[2], zero, j * v[2]],
    ];
    let g: [[f64; 3]; 3] = [0, 1, 2].map(|p| [0, 1, 2].map(|q| dot(&cols[p], &cols[q])));
    let rhs = [0, 1, 2].map(|p| dot(&cols[p], &delta_i));
    let det = |m: &[[f64; 3]; 3]| {
        m[0][0] * (m[1][1] * m[2][2] - m[1][2] * m[2][1])
            - m[0][1] * (m[1][0] * m[2][2] - m[1][2] * m[2][0])
            + m[0][2] * (m[1][0] * m[2][1] - m[1][1] * m[2][0])
    };
    let d = det(&g);
    let scale = g[0][0] * g[1][1] * g[2][2];
    if !(d.is_finite() && scale > 0.0 && d.abs() > 1e-9 * scale) {
        return None;
    }
    // Cramer's rule on the normal equations
    let solution = [0, 1, 2].map(|c| {
        let mut m = g;
        for (row, r) in m.iter_mut().zip(rhs) {
            row[c] = r;
        }
        det(&m) / d
    });
    let residual =
        [0, 1, 2].map(|k| delta_i[k] - (0..3).map(|p| cols[p][k] * solution[p]).sum::<Complex64>());
    Some(Fit {
        b: solution,
        residual,
        v_branch: v,
        delta_i,
    })
}

fn norm3(x: &[Complex64; 3]) -> f64 {
    x.iter().map(|z| z.norm_sqr()).sum::<f64>().sqrt()
}

/// One line of the branches' budget: its name, source, and the standard uncertainty each move
/// gives B of each branch (siemens) and the residual (A), added in quadrature within the line.
struct Line {
    term: &'static str,
    source: String,
    u_b: [f64; 3],
    u_residual: f64,
}

/// Works out a budget line from the moves of the inputs `moves` gives (before, after); `None`
/// when a moved input cannot be solved.
fn line(
    base: &Fit,
    term: &'static str,
    source: String,
    moves: &[(Phasors, Phasors)],
) -> Option<Line> {
    let mut u_b = [0.0; 3];
    let mut u_r2 = 0.0;
    for (b, a) in moves {
        let f = fit(b, a)?;
        for (u, (moved, at)) in u_b.iter_mut().zip(f.b.iter().zip(base.b)) {
            *u += (moved - at).powi(2);
        }
        u_r2 += (0..3)
            .map(|k| (f.residual[k] - base.residual[k]).norm_sqr())
            .sum::<f64>();
    }
    Some(Line {
        term,
        source,
        u_b: u_b.map(f64::sqrt),
        u_residual: u_r2.sqrt(),
    })
}

/// The budget's lines for the two captures' phasors, or why one cannot be formed.
fn budget_lines(
    base: &Fit,
    before: &[BankSide],
    after: &[BankSide],
    pb: &Phasors,
    pa: &Phasors,
) -> Result<Vec<Line>, String> {
    let rect = |limit: f64| limit / 3f64.sqrt();
    let inst = &after[0].instrument;
    let f = after[0].frequency_hz;
    let unsolved = || "the branch equations could not be solved with an input moved".to_string();
    // a current made from two clamps by Kirchhoff's law follows them: it has no clamp, phase
    // error or spread of its own
    let derived = |sides: &[BankSide]| sides.iter().take(3).position(|s| s.current_derived);
    let (db, da) = (derived(before), derived(after));
    let both = |change: &dyn Fn(&mut Phasors)| {
        let (mut b, mut a) = (*pb, *pa);
        change(&mut b);
        change(&mut a);
        b.close(db);
        a.close(da);
        (b, a)
    };
    let mut lines = Vec::new();
    let u_i = rect(inst.i_ratio_percent / 100.0);
    let moves: Vec<_> = (0..3)
        .map(|k| both(&|p: &mut Phasors| p.i[k] *= 1.0 + u_i))
        .collect();
    lines.push(
        line(
            base,
            "current probe ratios",
            format!(
                "±{} % of reading per clamp, rectangular, the same in both captures",
                inst.i_ratio_percent
            ),
            &moves,
        )
        .ok_or_else(unsolved)?,
    );
    let u_v = rect(inst.v_ratio_percent / 100.0);
    let line_to_line = after[0].line_to_line_voltages;
    let moves: Vec<_> = if line_to_line {
        // two line-to-line channels (ab and cb): moving one by δ moves the phases referred to
        // the artificial star point by (2δ, −δ, −δ)/3 (ab) or (−δ, 2δ, −δ)/3 (bc)
        [(0usize, 1usize), (1, 2)]
            .into_iter()
            .map(|(x, y)| {
                both(&move |p: &mut Phasors| {
                    let d = (p.v[x] - p.v[y]) * u_v;
                    for k in 0..3 {
                        let w = if k == x { 2.0 } else { -1.0 };
                        p.v[k] += d * w / 3.0;
                    }
                })
            })
            .collect()
    } else {
        (0..3)
            .map(|k| both(&|p: &mut Phasors| p.v[k] *= 1.0 + u_v))
            .collect()
    };
    lines.push(
        line(
            base,
            "voltage probe ratios",
            format!(
                "±{} % of reading per {} channel, rectangular, the same in both captures",
                inst.v_ratio_percent,
                if line_to_line {
                    "line-to-line"
                } else {
                    "phase"
                }
            ),
            &moves,
        )
        .ok_or_else(unsolved)?,
    );
    let u_delta = rect(inst.phase_error_deg)
        .hypot(rect(360.0 * f * inst.skew_s))
        .to_radians();
    let turn = Complex64::from_polar(1.0, u_delta);
    let moves: Vec<_> = (0..3)
        .map(|k| both(&|p: &mut Phasors| p.i[k] *= turn))
        .collect();
    lines.push(
        line(
            base,
            "probe phase errors and skew",
            format!(
                "±{}° and ±{} s of skew per phase, rectangular, the same in both captures",
                inst.phase_error_deg, inst.skew_s
            ),
            &moves,
        )
        .ok_or_else(unsolved)?,
    );
    for (which, sides, is_after) in [("before", before, false), ("after", after, true)] {
        let mut moves = Vec::new();
        let d = derived(sides);
        for (k, s) in sides.iter().enumerate().take(3) {
            let u_i = s.u_q_type_a_var / s.v1;
            let u_v = s.u_v1_type_a;
            if !(u_i.is_finite() && u_v.is_finite() && u_i >= 0.0 && u_v >= 0.0) {
                return Err(format!(
                    "the {which} capture's phase {} has no Type A uncertainty of Q1 or V1",
                    ["a", "b", "c"][k]
                ));
            }
            for step in [Complex64::new(1.0, 0.0), Complex64::i()] {
                for (on_current, u) in [(true, u_i), (false, u_v)] {
                    if on_current && d == Some(k) {
                        continue; // the spread of the two clamps it is made from
                    }
                    let (mut b, mut a) = (*pb, *pa);
                    let p = if is_after { &mut a } else { &mut b };
                    if on_current {
                        p.i[k] += step * u;
                        p.close(d);
                    } else {
                        p.v[k] += step * u;
                    }
                    moves.push((b, a));
                }
            }
        }
        lines.push(
            line(
                base,
                if is_after {
                    "after-capture spread (Type A)"
                } else {
                    "before-capture spread (Type A)"
                },
                "each phase's current phasor by u(Q1)/V1 and voltage phasor by u(V1) along each \
                 axis (the about-200 ms windows' spread, or the fit noise)"
                    .into(),
                &moves,
            )
            .ok_or_else(unsolved)?,
        );
    }
    Ok(lines)
}

/// Resolves, judges and names the branches of a delta-connected bank from three-phase captures
/// (`before` and `after` hold the phases a, b, c); `inconclusive_because` holds what already
/// makes the whole bank's verdict inconclusive (the captures' own warnings).
pub(super) fn resolve(
    before: &[BankSide],
    after: &[BankSide],
    plate: &Nameplate,
    inconclusive_because: &[String],
) -> DeltaBranches {
    let (pb, pa) = (Phasors::of(before), Phasors::of(after));
    let mut because: Vec<String> = inconclusive_because.to_vec();
    let Some(base) = fit(&pb, &pa) else {
        because.push(
            "the branch equations cannot be solved: a phase voltage is missing or the line \
             voltages do not span the three branches"
                .into(),
        );
        return DeltaBranches {
            branch_basis: BRANCH_BASIS,
            branches: Vec::new(),
            weak_branches: Vec::new(),
            branch_residual_a: f64::NAN,
            branch_residual_percent: f64::NAN,
            branch_residual_limit_a: f64::NAN,
            branch_inconclusive_because: because,
        };
    };
    let lines = match budget_lines(&base, before, after, &pb, &pa) {
        Ok(l) => l,
        Err(why) => {
            because.push(format!("no honest uncertainty for the branches: {why}"));
            Vec::new()
        }
    };
    let residual = norm3(&base.residual);
    let size = norm3(&base.delta_i);
    let u_residual = lines
        .iter()
        .map(|l| l.u_residual.powi(2))
        .sum::<f64>()
        .sqrt();
    let residual_limit = COVERAGE_FACTOR * u_residual;
    if !lines.is_empty() && !(residual <= residual_limit) {
        because.push(format!(
            "the bank's line currents are not those of three pure capacitors between the lines: \
             {residual:.3} A ({:.2} % of them) is left unexplained, beyond the {residual_limit:.3} A \
             the measurement's uncertainty would leave; did the load change between the \
             captures, or is the bank a star with its star point on the neutral?",
            100.0 * residual / size
        ));
    }
    let (low, high) = plate.standard.band(plate.rated_kvar);
    let f = after[0].frequency_hz;
    let omega = 2.0 * PI * f;
    let u_f_rel = after[0].u_frequency_hz / f;
    let omega_rated = 2.0 * PI * plate.rated_frequency_hz;
    let rated_kvar = plate.rated_kvar / 3.0;
    let rated_c = 1000.0 * rated_kvar / (omega_rated * plate.rated_voltage.powi(2));
    let branches: Vec<BankBranch> = (0..3)
        .map(|k| {
            let b = base.b[k];
            let v = base.v_branch[k].norm();
            let c = b / omega;
            // ratio = B/(ω·C_rated): its sensitivity to B is 1/(ω·C_rated)
            let per_b = 1.0 / (omega * rated_c);
            let ratio = c / rated_c;
            let mut terms: Vec<BudgetTerm> = lines
                .iter()
                .map(|l| BudgetTerm {
                    term: l.term,
                    source: l.source.clone(),
                    ratio_standard_uncertainty: per_b * l.u_b[k],
                    delivered_standard_uncertainty_kvar: v * v * l.u_b[k] / 1000.0,
                })
                .collect();
            if !lines.is_empty() {
                terms.push(BudgetTerm {
                    term: "site frequency",
                    source: "the after-capture's frequency uncertainty: C = B/ω".into(),
                    ratio_standard_uncertainty: ratio.abs() * u_f_rel,
                    delivered_standard_uncertainty_kvar: 0.0,
                });
            }
            let rss = |get: fn(&BudgetTerm) -> f64| {
                if terms.is_empty() {
                    return f64::NAN;
                }
                terms.iter().map(|t| get(t).powi(2)).sum::<f64>().sqrt()
            };
            let u_c = rss(|t| t.ratio_standard_uncertainty);
            let u_kvar = COVERAGE_FACTOR * rss(|t| t.delivered_standard_uncertainty_kvar);
            let u_ratio = COVERAGE_FACTOR * u_c;
            let honest = ratio.is_finite() && u_ratio.is_finite();
            let verdict = if because.is_empty() && honest {
                BankVerdict::from(decide(ratio, u_ratio, low, high).verdict)
            } else {
                BankVerdict::Inconclusive
            };
            BankBranch {
                name: BRANCH_NAMES[k],
                voltage_v: v,
                susceptance_s: b,
                capacitance_uf: 1e6 * c,
                capacitance_uncertainty_uf: 1e6 * u_ratio * rated_c,
                rated_capacitance_uf: 1e6 * rated_c,
                kvar: v * v * b / 1000.0,
                kvar_uncertainty: u_kvar,
                kvar_at_rated: plate.rated_voltage.powi(2) * omega_rated * c / 1000.0,
                rated_kvar,
                ratio,
                ratio_uncertainty: u_ratio,
                ratio_budget: RatioBudget {
                    ratio_combined_standard_uncertainty: u_c,
                    coverage_factor: COVERAGE_FACTOR,
                    ratio_expanded_uncertainty: u_ratio,
                    delivered_expanded_uncertainty_kvar: u_kvar,
                    correlation: BRANCH_CORRELATION,
                    terms,
                },
                verdict,
                weak: verdict == BankVerdict::Fail && ratio < low,
            }
        })
        .collect();
    let weak_branches = branches.iter().filter(|b| b.weak).map(|b| b.name).collect();
    DeltaBranches {
        branch_basis: BRANCH_BASIS,
        branches,
        weak_branches,
        branch_residual_a: residual,
        branch_residual_percent: 100.0 * residual / size,
        branch_residual_limit_a: residual_limit,
        branch_inconclusive_because: because,
    }
}

/// A branch's name with a hyphen: `a-b`.
pub fn hyphenated(name: &str) -> String {
    let mut c = name.chars();
    match (c.next(), c.next()) {
        (Some(x), Some(y)) => format!("{x}-{y}"),
        _ => name.to_string(),
    }
}

impl DeltaBranches {
    /// What the branches show, in words, for the bank check's warnings; reasons in `told`
    /// (the whole bank's, said with its verdict) are not repeated.
    pub fn warnings(&self, told: &[String]) -> Vec<String> {
        let mut out = Vec::new();
        for b in self.branches.iter().filter(|b| b.weak) {
            out.push(format!(
                "branch {} is weak: its capacitance {:.1} ± {:.1} µF is {:.1} % of the rated \
                 {:.1} µF (a third of the bank's): a blown fuse or a failed can in the branch \
                 between lines {}? (check with the bank switched out and discharged)",
                hyphenated(b.name),
                b.capacitance_uf,
                b.capacitance_uncertainty_uf,
                100.0 * b.ratio,
                b.rated_capacitance_uf,
                hyphenated(b.name).replace('-', " and ")
            ));
        }
        for why in self
            .branch_inconclusive_because
            .iter()
            .filter(|w| !told.contains(w))
        {
            out.push(format!("the delta branches are inconclusive: {why}"));
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn polar(r: f64, deg: f64) -> Complex64 {
        Complex64::from_polar(r, deg.to_radians())
    }

    /// Kirchhoff's current law at the corners (textbook): three branch susceptances give line
    /// currents the fit reads back exactly, with no residual, whatever the time reference of
    /// each capture.
    #[test]
    fn branch_susceptances_are_read_back_from_the_line_currents() {
        let v = [
            polar(230.0, 10.0),
            polar(229.0, -110.0),
            polar(231.0, 130.0),
        ];
        let load = [polar(50.0, -20.0), polar(48.0, -141.0), polar(52.0, 95.0)];
        let y = [0.02, 0.016, 0.021];
        let vb = [v[0] - v[1], v[1] - v[2], v[2] - v[0]];
        let j = Complex64::i();
        let bank = [
            j * (y[0] * vb[0] - y[2] * vb[2]),
            j * (y[1] * vb[1] - y[0] * vb[0]),
            j * (y[2] * vb[2] - y[1] * vb[1]),
        ];
        // the before-capture's time reference 73° away from the after-capture's
        let shift = polar(1.0, 73.0);
        let before = Phasors {
            v: v.map(|x| x * shift),
            i: load.map(|x| x * shift),
        };
        let after = Phasors {
            v,
            i: [0, 1, 2].map(|k| load[k] + bank[k]),
        };
        let f = fit(&before, &after).unwrap();
        for (got, want) in f.b.iter().zip(y) {
            assert!((got - want).abs() < 1e-12, "{got} vs {want}");
        }
        assert!(norm3(&f.residual) < 1e-9);
        // a neutral current (a star point on the neutral) cannot be explained
        let mut grounded = after;
        grounded.i[1] += j * 0.004 * v[1];
        let g = fit(&before, &grounded).unwrap();
        assert!(norm3(&g.residual) > 0.1, "{}", norm3(&g.residual));
    }

    #[test]
    fn branch_names_are_hyphenated() {
        assert_eq!(hyphenated("ab"), "a-b");
        assert_eq!(hyphenated("ca"), "c-a");
    }
}
