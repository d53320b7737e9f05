//! A three-phase bank phase by phase: each phase's delivered kvar and capacitance, the phases
//! that fall short (a blown fuse, a failed can), and the balance of the capacitances as seen
//! between line terminals.
//!
//! Definitions used:
//!
//! - each phase's delivered reactive power is its Q1(before) − Q1(after) (IEEE 1459 fundamental
//!   Q of that phase, load convention); they add up to the bank's;
//! - the capacitance per phase is the star equivalent `C = Q/(ω·V1²)` with the phase's V1 to
//!   the neutral (or, for a 3-wire capture, to the artificial star point) and `ω = 2πf`
//!   (textbook: `Q = V²·ωC`); the rated one, `C_rated = Q_rated/(ω_rated·V_rated²)` with the
//!   line-to-line rated voltage, is what each of three equal star capacitors holds (a delta bank's
//!   branches are each a third of this);
//! - so `C/C_rated` is the phase's delivered kvar over a third of the bank's expected kvar at that
//!   phase's voltage: the same ratio, band and guarded rule as the whole bank
//!   ([`super::budget`] with the phase's own captures);
//! - a phase is weak when its ratio falls below the band with its uncertainty (the guarded rule
//!   says outside);
//! - the capacitance between two line terminals of a star of `C_a, C_b, C_c` with its star point
//!   floating is `C_a·C_b/(C_a + C_b)` (capacitors in series, textbook); IEC 60831-1 limits the
//!   ratio of the largest to the smallest of the three line-terminal capacitances of a
//!   three-phase unit to 1.08 (from memory). Measured in service, through the supply, this is an
//!   indication, not the standard's terminal test on a disconnected unit.

use super::{BankConnection, BankSide, BankVerdict, Nameplate, budget, delivery};
use crate::check::decision::decide;
use serde::Serialize;

/// IEC 60831-1's limit on the ratio of the largest to the smallest capacitance measured between
/// two line terminals of a three-phase unit (from memory).
pub const LINE_TERMINAL_RATIO_LIMIT: f64 = 1.08;

/// The phases' names in order.
const NAMES: [&str; 3] = ["a", "b", "c"];

/// One phase of a three-phase bank.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BankPhase {
    /// The phase's Q1(before) − Q1(after), kvar.
    pub delivered_kvar: f64,
    /// Its expanded uncertainty (k = 2), kvar.
    pub delivered_uncertainty_kvar: f64,
    /// The phase's fundamental voltage after switching in (to the neutral or the artificial star
    /// point), V.
    pub voltage_v: f64,
    /// Star-equivalent capacitance `Q/(ω·V1²)`, µF.
    pub capacitance_uf: f64,
    /// Its expanded uncertainty (k = 2), µF.
    pub capacitance_uncertainty_uf: f64,
    /// What each of three equal star capacitors of the nameplate holds, µF.
    pub rated_capacitance_uf: f64,
    /// Capacitance over rated (= delivered over a third of the expected kvar at this phase's
    /// voltage).
    pub ratio: f64,
    /// Its expanded uncertainty (k = 2).
    pub ratio_uncertainty: f64,
    /// The ratio against the bank's band by the guarded rule.
    pub verdict: BankVerdict,
    /// Below the band, uncertainty included.
    pub weak: bool,
}

/// The three phases keyed a, b, c.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PhaseSet {
    /// Phase a.
    pub a: BankPhase,
    /// Phase b.
    pub b: BankPhase,
    /// Phase c.
    pub c: BankPhase,
}

impl PhaseSet {
    /// The phases in order, with their names.
    pub fn iter(&self) -> impl Iterator<Item = (&'static str, &BankPhase)> {
        NAMES.into_iter().zip([&self.a, &self.b, &self.c])
    }
}

/// Capacitances between two line terminals, µF.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct LineTerminals {
    /// Between a and b.
    pub ab: f64,
    /// Between b and c.
    pub bc: f64,
    /// Between c and a.
    pub ca: f64,
}

/// Each phase's share of a three-phase bank and its balance.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PhaseBalance {
    /// What the per-phase capacitances are.
    pub capacitance_basis: &'static str,
    /// The phases.
    pub phases: PhaseSet,
    /// The phases below the band, uncertainty included (a blown fuse or a failed can).
    pub weak_phases: Vec<&'static str>,
    /// Capacitance between each pair of line terminals of the star equivalent, µF.
    pub line_terminal_capacitance_uf: LineTerminals,
    /// Largest over smallest line-terminal capacitance; `None` when one is not positive.
    pub line_terminal_ratio: Option<f64>,
    /// IEC 60831-1's limit on that ratio (from memory).
    pub line_terminal_ratio_limit: f64,
    /// The ratio is within the limit (`None` without a ratio).
    pub line_terminal_ratio_within_limit: Option<bool>,
}

/// What the per-phase capacitances are, for every output.
pub const BASIS: &str = "star equivalent per phase, Q1/(ω·V1²) with V1 to the neutral (3-wire: \
to the artificial star point); the rated value is what each of three equal star capacitors holds";

/// The phase-by-phase check of a three-phase bank from the phases' sides (a, b, c in order).
pub(super) fn balance(before: &[BankSide], after: &[BankSide], plate: &Nameplate) -> PhaseBalance {
    let (low, high) = plate.standard.band(plate.rated_kvar);
    let omega_rated = 2.0 * std::f64::consts::PI * plate.rated_frequency_hz;
    let rated_uf = 1e6 * 1000.0 * plate.rated_kvar / (omega_rated * plate.rated_voltage.powi(2));
    let phase = |k: usize| {
        let (b, a) = (&before[k], &after[k]);
        let mut d = delivery(b, a, plate);
        if b.current_derived || a.current_derived {
            // no clamp of its own: the two it is made from, each once (see the budget)
            let terms = budget::kirchhoff_current_terms(before, after, k, d.scale, d.expected);
            d.budget = d.budget.with_current_terms(terms);
        }
        let u_ratio = d.budget.ratio_expanded_uncertainty;
        let verdict = if d.ratio.is_finite() {
            BankVerdict::from(decide(d.ratio, u_ratio, low, high).verdict)
        } else {
            BankVerdict::Inconclusive
        };
        let omega = 2.0 * std::f64::consts::PI * a.frequency_hz;
        let delivered_var = b.q_var - a.q_var;
        BankPhase {
            delivered_kvar: delivered_var / 1000.0,
            delivered_uncertainty_kvar: d.budget.delivered_expanded_uncertainty_kvar / d.scale,
            voltage_v: a.v1,
            capacitance_uf: 1e6 * delivered_var / (omega * a.v1 * a.v1),
            capacitance_uncertainty_uf: u_ratio * rated_uf,
            rated_capacitance_uf: rated_uf,
            ratio: d.ratio,
            ratio_uncertainty: u_ratio,
            verdict,
            weak: verdict == BankVerdict::Fail && d.ratio < low,
        }
    };
    let phases = PhaseSet {
        a: phase(0),
        b: phase(1),
        c: phase(2),
    };
    let weak_phases = phases
        .iter()
        .filter(|(_, p)| p.weak)
        .map(|(n, _)| n)
        .collect();
    let series = |x: f64, y: f64| x * y / (x + y);
    let (ca, cb, cc) = (
        phases.a.capacitance_uf,
        phases.b.capacitance_uf,
        phases.c.capacitance_uf,
    );
    let terminals = LineTerminals {
        ab: series(ca, cb),
        bc: series(cb, cc),
        ca: series(cc, ca),
    };
    let all = [terminals.ab, terminals.bc, terminals.ca];
    let line_terminal_ratio = (ca > 0.0 && cb > 0.0 && cc > 0.0).then(|| {
        let max = all.iter().copied().fold(f64::MIN, f64::max);
        let min = all.iter().copied().fold(f64::MAX, f64::min);
        max / min
    });
    PhaseBalance {
        capacitance_basis: BASIS,
        phases,
        weak_phases,
        line_terminal_capacitance_uf: terminals,
        line_terminal_ratio,
        line_terminal_ratio_limit: LINE_TERMINAL_RATIO_LIMIT,
        line_terminal_ratio_within_limit: line_terminal_ratio
            .map(|r| r <= LINE_TERMINAL_RATIO_LIMIT),
    }
}

impl PhaseBalance {
    /// What the balance found, in words, for the bank check's warnings.
    pub fn warnings(&self) -> Vec<String> {
        self.warnings_for(None)
    }

    /// [`PhaseBalance::warnings`] for a bank whose connection the nameplate states: two weak
    /// phases point at a branch only when it does not (a delta's branches are resolved
    /// themselves, a star has none).
    pub fn warnings_for(&self, connection: Option<BankConnection>) -> Vec<String> {
        let mut out = Vec::new();
        for (name, p) in self.phases.iter().filter(|(_, p)| p.weak) {
            out.push(format!(
                "phase {name} is weak: it delivers {:.2} kvar, its capacitance {:.1} ± {:.1} µF \
                 is {:.1} % of the rated {:.1} µF: a blown fuse or a failed can on that phase? \
                 (check with the bank switched out and discharged)",
                p.delivered_kvar,
                p.capacitance_uf,
                p.capacitance_uncertainty_uf,
                100.0 * p.ratio,
                p.rated_capacitance_uf
            ));
        }
        if self.weak_phases.len() == 2 && connection.is_none() {
            out.push(format!(
                "phases {} and {} are both weak: on a delta-connected bank that points at the \
                 branch between them",
                self.weak_phases[0], self.weak_phases[1]
            ));
        }
        if let (Some(r), Some(false)) = (
            self.line_terminal_ratio,
            self.line_terminal_ratio_within_limit,
        ) {
            out.push(format!(
                "the line-terminal capacitances differ by a ratio of {r:.3}, beyond the {} of \
                 IEC 60831-1 (from memory; measured in service, an indication)",
                self.line_terminal_ratio_limit
            ));
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::check::bank::{CapacitorStandard, check_bank};
    use crate::quantity::uncertainty::UncertaintyInputs;

    fn side(q: f64, v1: f64) -> BankSide {
        BankSide {
            phases: 1,
            p_w: 10_000.0,
            p1_w: 10_000.0,
            q_var: q,
            u_q_type_a_var: 1.0,
            v1,
            u_v1_type_a: 0.01,
            frequency_hz: 50.0,
            u_frequency_hz: 1e-4,
            angle_deg: q.atan2(10_000.0).to_degrees(),
            instrument: UncertaintyInputs::default(),
            current_harmonics: vec![40.0, 0.0, 0.4],
            voltage_harmonics: vec![v1, 0.0, 0.0],
            harmonic_angles_deg: vec![0.0; 3],
            warnings: Vec::new(),
            fundamentals: Default::default(),
            line_to_line_voltages: false,
            current_derived: false,
        }
    }

    fn plate() -> Nameplate {
        Nameplate {
            rated_kvar: 30.0,
            rated_voltage: 400.0,
            rated_frequency_hz: 50.0,
            steps_kvar: vec![10.0; 3],
            three_phase: true,
            standard: CapacitorStandard::Iec60831,
            supply: None,
            target_pf: 0.95,
            connection: None,
        }
    }

    /// Textbook `Q = V²·ωC`: 10 kvar per phase at 230.94 V (400 V line-to-line), 50 Hz, is
    /// 10 000 / (2π·50·230.94²) = 596.83 µF, what each of three star capacitors of a 30 kvar,
    /// 400 V bank holds (30 000 / (2π·50·400²) = 596.83 µF).
    #[test]
    fn a_healthy_bank_holds_its_rated_capacitance_on_every_phase() {
        let v = 400.0 / 3f64.sqrt();
        let before: Vec<BankSide> = (0..3).map(|_| side(15_000.0, v)).collect();
        let after: Vec<BankSide> = (0..3).map(|_| side(5_000.0, v)).collect();
        let r = check_bank(&before, &after, &plate());
        let b = r.phases.expect("per-phase figures");
        let want = 10_000.0 / (2.0 * std::f64::consts::PI * 50.0 * v * v) * 1e6;
        assert!((want - 596.83).abs() < 0.01, "{want}");
        for (_, p) in b.phases.iter() {
            assert!((p.capacitance_uf - want).abs() < 1e-9);
            assert!((p.rated_capacitance_uf - want).abs() < 1e-9);
            assert!((p.delivered_kvar - 10.0).abs() < 1e-12);
            assert!(!p.weak);
        }
        assert!(b.weak_phases.is_empty());
        assert!(
            (r.delivered_kvar - 30.0).abs() < 1e-9,
            "{}",
            r.delivered_kvar
        );
        assert!((r.expected_kvar - 30.0).abs() < 1e-9, "{}", r.expected_kvar);
        assert_eq!(b.line_terminal_ratio, Some(1.0));
    }

    /// One of four parallel cans of phase b failed: phase b holds 3/4 of its capacitance. The
    /// line-terminal capacitances (series pairs, textbook) are then C·3/7 between a-b and b-c
    /// and C/2 between c-a: ratio (1/2)/(3/7) = 7/6 = 1.1667, beyond 1.08.
    #[test]
    fn a_phase_that_lost_a_quarter_of_its_cans_is_weak_and_named() {
        let v = 400.0 / 3f64.sqrt();
        let before: Vec<BankSide> = (0..3).map(|_| side(15_000.0, v)).collect();
        let after = vec![side(5_000.0, v), side(7_500.0, v), side(5_000.0, v)];
        let r = check_bank(&before, &after, &plate());
        let b = r.phases.as_ref().unwrap();
        assert_eq!(b.weak_phases, vec!["b"]);
        assert!((b.phases.b.ratio - 0.75).abs() < 1e-9);
        assert!((b.line_terminal_ratio.unwrap() - 7.0 / 6.0).abs() < 1e-9);
        assert_eq!(b.line_terminal_ratio_within_limit, Some(false));
        assert!(r.warnings.iter().any(|w| w.starts_with("phase b is weak")));
        assert!(r.warnings.iter().any(|w| w.contains("1.08")));
        // the whole bank: 27.5 of 30 kvar
        assert!((r.delivered_kvar - 27.5).abs() < 1e-9);
    }

    /// The totals of three phases: P and Q add up, V1 is the quadratic mean.
    #[test]
    fn totals_add_the_powers_and_take_the_quadratic_mean_voltage() {
        let t = BankSide::total(&[side(1.0, 220.0), side(2.0, 230.0), side(3.0, 240.0)]);
        assert_eq!(t.phases, 3);
        assert_eq!(t.q_var, 6.0);
        assert_eq!(t.p_w, 30_000.0);
        let qm = ((220.0f64.powi(2) + 230.0f64.powi(2) + 240.0f64.powi(2)) / 3.0).sqrt();
        assert!((t.v1 - qm).abs() < 1e-12);
    }
}
