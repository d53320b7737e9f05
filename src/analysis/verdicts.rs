//! What the verdicts take from an analysis: the bank check's and the meter check's figures, and
//! the comparison with a circuit model.

use super::{Analysis, PhaseAnalysis};
use crate::check::bank::{BankSide, Nameplate};
use crate::check::circuit::Circuit;
use crate::check::expected::{self, Expectation};
use crate::check::meter::Measured;
use crate::check::tolerance::MonteCarloConfig;
use crate::check::wiring;
use crate::quantity::uncertainty;

impl Analysis {
    /// Our measurement as the capacitor bank check needs it (single-phase: the one phase);
    /// `None` without a defined angle.
    pub fn bank_side(&self) -> Option<BankSide> {
        self.phase_bank_side(&self.phases[0])
    }

    /// Each phase's measurement as the capacitor bank check needs it, in phase order; `None`
    /// when a phase has no defined angle.
    pub fn bank_sides(&self) -> Option<Vec<BankSide>> {
        self.phases
            .iter()
            .map(|p| self.phase_bank_side(p))
            .collect()
    }

    fn phase_bank_side(&self, phase: &PhaseAnalysis) -> Option<BankSide> {
        let q = &phase.quantities;
        let (u_q_type_a_var, u_v1_type_a) = self.fundamental_type_a(phase);
        Some(BankSide {
            phases: 1,
            p_w: q.power.active_w,
            p1_w: q.power.fundamental_active_w,
            q_var: q.power.reactive_var,
            u_q_type_a_var,
            v1: q.voltage.fundamental_rms,
            u_v1_type_a,
            frequency_hz: q.frequency_hz,
            u_frequency_hz: phase.uncertainty.frequency_hz
                / phase.uncertainty.coverage.frequency_hz.k,
            angle_deg: q.phase_angle_dft_deg?,
            instrument: self.settings.uncertainty,
            current_harmonics: q.harmonics.iter().map(|h| h.current_rms).collect(),
            voltage_harmonics: q.harmonics.iter().map(|h| h.voltage_rms).collect(),
            harmonic_angles_deg: q.harmonics.iter().map(|h| h.angle_deg).collect(),
            warnings: self.warnings.clone(),
            fundamentals: q.fundamentals,
            line_to_line_voltages: self.three_phase.as_ref().is_some_and(|t| t.artificial_star),
            current_derived: phase.current_derived,
        })
    }

    /// Type A standard uncertainties of Q1 (var) and V1 (V), by the rule of the uncertainty
    /// budget: the spread of the about-200 ms windows' values (`s/√M`) with at least
    /// [`uncertainty::MIN_WINDOWS_FOR_SPREAD`] windows, else the larger of the fit noise
    /// propagated (`√(σ_v²·I1² + σ_i²·V1²)/√N` for Q1, `σ_v/√N` for V1) and a rough spread.
    fn fundamental_type_a(&self, phase: &PhaseAnalysis) -> (f64, f64) {
        let est = &phase.estimate;
        let q = &phase.quantities;
        let turn = rustfft::num_complex::Complex64::from_polar(
            1.0,
            2.0 * std::f64::consts::PI * q.frequency_hz * phase.skew_s,
        );
        let per_window: Vec<(f64, f64)> = est
            .windows
            .iter()
            .filter_map(|w| {
                let v1 = *w.voltage.harmonics.first()?;
                let i1 = *w.current.harmonics.first()? * turn;
                Some(((v1 * i1.conj()).im, v1.norm()))
            })
            .collect();
        let sd_mean = |x: &dyn Fn(&(f64, f64)) -> f64| {
            let m = per_window.len() as f64;
            if m < 2.0 {
                return 0.0;
            }
            let mean = per_window.iter().map(x).sum::<f64>() / m;
            let var = per_window
                .iter()
                .map(|w| (x(w) - mean).powi(2))
                .sum::<f64>()
                / (m - 1.0);
            (var / m).sqrt()
        };
        let (spread_q, spread_v) = (sd_mean(&|w| w.0), sd_mean(&|w| w.1));
        if per_window.len() >= uncertainty::MIN_WINDOWS_FOR_SPREAD {
            return (spread_q, spread_v);
        }
        let n = (self.samples / est.decimation.max(1)).max(1) as f64;
        let (sv, si) = (est.voltage.residual_rms, est.current.residual_rms);
        let noise_q =
            (sv * q.current.fundamental_rms).hypot(si * q.voltage.fundamental_rms) / n.sqrt();
        (noise_q.max(spread_q), (sv / n.sqrt()).max(spread_v))
    }

    /// Compares the measured angle with what `circuit` predicts at the measured frequency and
    /// records the verdict in [`Analysis::expected`] (`inconclusive` with the reason when the
    /// capture cannot support the angle), when the angle is defined; gives the
    /// prediction (band, Monte Carlo spread) for plots.
    pub fn compare_with_model(
        &mut self,
        circuit: &Circuit,
        mc: &MonteCarloConfig,
    ) -> Option<Expectation> {
        let q = &self.quantities;
        let (Some(angle), Some(u)) = (q.phase_angle_dft_deg, self.uncertainty.phase_angle_deg.dft)
        else {
            return None;
        };
        let (v1, i1) = q.fundamentals;
        let uz = &self.uncertainty;
        let m = expected::Measurement {
            v1,
            i1,
            angle_deg: angle,
            u_angle_deg: u,
            // |Z| = V/I: the relative expanded uncertainties of the two RMS values combined
            // (independent probes).
            u_impedance_rel: (uz.voltage.rms / q.voltage.rms).hypot(uz.current.rms / q.current.rms),
            v_scale: self.settings.v_scale,
            i_scale: self.settings.i_scale,
        };
        let e = expected::expectation(circuit, q.frequency_hz, mc);
        let mut x = expected::compare_to(circuit, &e, &m);
        x.undermined_by(&self.verdict_doubts());
        self.expected = Some(x);
        Some(e)
    }

    /// Our measurement as the meter check needs it; `None` without a defined PF. For a
    /// three-phase capture, the system's: see [`Analysis::meter_measured_three_phase`].
    pub fn meter_measured(&self) -> Option<Measured> {
        if self.three_phase.is_some() {
            return self.meter_measured_three_phase();
        }
        let q = &self.quantities;
        let u = &self.uncertainty;
        let (v, i) = (q.voltage.rms, q.current.rms);
        let s = q.power.apparent_va;
        // U of S = V·I from the relative U of V and I (uncorrelated probes).
        let u_s = s * (u.voltage.rms / v).hypot(u.current.rms / i);
        Some(Measured {
            p_w: q.power.active_w,
            q_var: q.power.reactive_var,
            s_va: s,
            pf: q.true_pf?,
            angle_deg: q.phase_angle_dft_deg?,
            p1_w: q.power.fundamental_active_w,
            q_budeanu_var: q
                .harmonics
                .iter()
                .map(|h| h.voltage_rms * h.current_rms * h.angle_deg.to_radians().sin())
                .sum(),
            nonactive_var: q.power.nonactive_var,
            s1_va: q.power.fundamental_apparent_va,
            displacement_pf: q.displacement_pf?,
            u_displacement_pf: u.displacement_pf?,
            v1: q.voltage.fundamental_rms,
            i1: q.current.fundamental_rms,
            v_rms: v,
            i_rms: i,
            u_p_w: u.power.active_w,
            u_q_var: u.power.reactive_var,
            u_s_va: u_s,
            u_pf: u.true_pf?,
            u_v: u.voltage.rms,
            u_i: u.current.rms,
        })
    }

    /// A three-phase capture's measurement as a meter of the whole system registers it (our
    /// rule, documented in the README): P, Q1, P1 and Budeanu's Q summed over the phases; S the
    /// arithmetic sum of the phases' V·I (the IEEE 1459 candidates S1 and the vector
    /// √(P² + Q1²) are offered beside it by the meter check); PF = P/S; the angle and the
    /// displacement PF those of the total P1 + jQ1; V and I the means of the phases (what a
    /// meter shows as "V" and "I"). Uncertainties: the phases' probes are independent, so U of
    /// the sums is the root sum of squares; U of PF by first-order propagation from P and S;
    /// U of the displacement PF the largest of the phases'.
    pub fn meter_measured_three_phase(&self) -> Option<Measured> {
        let ph = &self.phases;
        let rss =
            |f: &dyn Fn(&PhaseAnalysis) -> f64| ph.iter().map(|p| f(p).powi(2)).sum::<f64>().sqrt();
        let sum = |f: &dyn Fn(&PhaseAnalysis) -> f64| ph.iter().map(f).sum::<f64>();
        let mean = |f: &dyn Fn(&PhaseAnalysis) -> f64| sum(f) / ph.len() as f64;
        let p = sum(&|x| x.quantities.power.active_w);
        let q = sum(&|x| x.quantities.power.reactive_var);
        let p1 = sum(&|x| x.quantities.power.fundamental_active_w);
        let s = sum(&|x| x.quantities.power.apparent_va);
        if !(s > 0.0) {
            return None;
        }
        let u_p = rss(&|x| x.uncertainty.power.active_w);
        let u_q = rss(&|x| x.uncertainty.power.reactive_var);
        let u_s = rss(&|x| {
            let (v, i) = (x.quantities.voltage.rms, x.quantities.current.rms);
            let rel_v = if v > 0.0 {
                x.uncertainty.voltage.rms / v
            } else {
                0.0
            };
            let rel_i = if i > 0.0 {
                x.uncertainty.current.rms / i
            } else {
                0.0
            };
            x.quantities.power.apparent_va * rel_v.hypot(rel_i)
        });
        let pf = p / s;
        let u_pf = pf.abs() * (if p != 0.0 { u_p / p } else { 0.0 }).hypot(u_s / s);
        let s1_total = p1.hypot(q);
        let u_dpf = ph
            .iter()
            .filter_map(|x| x.uncertainty.displacement_pf)
            .fold(None, |m: Option<f64>, u| Some(m.map_or(u, |m| m.max(u))))?;
        Some(Measured {
            p_w: p,
            q_var: q,
            s_va: s,
            pf,
            angle_deg: q.atan2(p1).to_degrees(),
            p1_w: p1,
            q_budeanu_var: sum(&|x| {
                x.quantities
                    .harmonics
                    .iter()
                    .map(|h| h.voltage_rms * h.current_rms * h.angle_deg.to_radians().sin())
                    .sum()
            }),
            nonactive_var: (s * s - p * p).max(0.0).sqrt(),
            s1_va: sum(&|x| x.quantities.power.fundamental_apparent_va),
            displacement_pf: if s1_total > 0.0 { p1 / s1_total } else { 1.0 },
            u_displacement_pf: u_dpf,
            v1: mean(&|x| x.quantities.voltage.fundamental_rms),
            i1: mean(&|x| x.quantities.current.fundamental_rms),
            v_rms: mean(&|x| x.quantities.voltage.rms),
            i_rms: mean(&|x| x.quantities.current.rms),
            u_p_w: u_p,
            u_q_var: u_q,
            u_s_va: u_s,
            u_pf,
            u_v: mean(&|x| x.uncertainty.voltage.rms),
            u_i: mean(&|x| x.uncertainty.current.rms),
        })
    }

    /// For a three-phase capture whose meter reading of P (and Q) is off: which connection of the
    /// meter's CTs (every assignment to phases, every polarity: 48 for 4-wire, the two-element
    /// patterns for 3-wire) reproduces the reading, in words with what it would read; empty for
    /// a single-phase capture or when the correct connection explains the reading as well.
    pub fn meter_connection_hints(&self, reading_p: f64, reading_q: Option<f64>) -> Vec<String> {
        let Some(t) = &self.three_phase else {
            return Vec::new();
        };
        let v = [0, 1, 2].map(|k| self.phases[k].quantities.fundamentals.0);
        let i = [0, 1, 2].map(|k| self.phases[k].quantities.fundamentals.1);
        let three_wire = t.artificial_star;
        let ranked = wiring::explain_reading(&v, &i, reading_p, reading_q, three_wire);
        let Some(best) = ranked.first() else {
            return Vec::new();
        };
        let correct = ranked
            .iter()
            .find(|e| e.connection.is_correct())
            .map_or(f64::INFINITY, |e| e.mismatch);
        // worth saying when it explains the reading within 2 % of the load's S1 and clearly
        // better than the correct connection does
        if best.connection.is_correct()
            || best.mismatch > 0.02
            || correct < 2.0 * best.mismatch + 0.01
        {
            return Vec::new();
        }
        let kw = |w: f64| format!("{:.2} kW", w / 1000.0);
        let load_p = t.figures.total.fundamental_active_w;
        // every connection that fits as well, the simplest (fewest faults) first
        let faults =
            |c: &wiring::Connection| (0..3).filter(|&k| c.phase[k] != k || c.reversed[k]).count();
        let mut fits: Vec<&wiring::Explanation> = ranked
            .iter()
            .filter(|e| !e.connection.is_correct() && e.mismatch <= best.mismatch + 0.002)
            .collect();
        fits.sort_by_key(|e| faults(&e.connection));
        let fewest = faults(&fits[0].connection);
        let mut simplest: Vec<&wiring::Explanation> = fits
            .iter()
            .copied()
            .filter(|e| faults(&e.connection) == fewest)
            .collect();
        simplest.sort_by(|x, y| x.text.cmp(&y.text));
        let mut hints = Vec::new();
        if simplest.len() == 1 {
            hints.push(format!(
                "{}: it would read {} where the load takes {}",
                simplest[0].text,
                kw(simplest[0].active_w),
                kw(load_p)
            ));
        } else {
            let texts: Vec<&str> = simplest.iter().take(3).map(|e| e.text.as_str()).collect();
            hints.push(format!(
                "the reading fits any of: {} (each would read about {} where the load takes {}); \
                 the reading alone cannot tell them apart: compare the meter's per-phase \
                 readings or check the CT connections at the meter",
                texts.join("; or "),
                kw(simplest[0].active_w),
                kw(load_p)
            ));
        }
        hints
    }
}

/// Each captured phase's figures of one capture, as the bank check takes them.
fn sides(a: &Analysis, which: &str, plate: &Nameplate) -> Result<Vec<BankSide>, String> {
    if a.three_phase.is_some() && !plate.three_phase {
        return Err(format!(
            "{}: the {which} capture is {} but the nameplate is of a single-phase bank: say \
             three_phase = true in the nameplate (or --three-phase), or choose one phase with \
             --system single --voltage COL --current COL",
            a.path.display(),
            a.system
        ));
    }
    a.bank_sides().ok_or_else(|| {
        format!(
            "{}: the {which} capture has no defined phase angle (no fundamental in a trace)",
            a.path.display()
        )
    })
}

/// The bank check's figures of the captures before and after switching, each phase's (one for a
/// single-phase capture); refused when the captures are of different systems or a three-phase
/// capture meets a single-phase nameplate.
pub fn bank_pair(
    before: &Analysis,
    after: &Analysis,
    plate: &Nameplate,
) -> Result<(Vec<BankSide>, Vec<BankSide>), String> {
    let b = sides(before, "before", plate)?;
    let a = sides(after, "after", plate)?;
    if b.len() != a.len() {
        return Err(format!(
            "{} is {} but {} is {}: capture both the same way",
            before.path.display(),
            before.system,
            after.path.display(),
            after.system
        ));
    }
    Ok((b, a))
}
