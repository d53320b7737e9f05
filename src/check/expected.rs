//! Expected vs measured: the angle a circuit model predicts, with its tolerance band, against the
//! angle measured with its uncertainty; and what would explain a gap.
//!
//! - The band is the worst case over the tolerance box ([`super::tolerance::worst_case`]); the
//!   Monte Carlo percentiles are reported beside it.
//! - The verdict follows [`super::decision`], on the angle and on |Z|. The angle decides; |Z|
//!   is a guard: when the measured |Z| lies beyond the model's worst-case |Z| band even after
//!   widening by its own expanded uncertainty (the probes' ratio accuracy and the noise), the
//!   verdict cannot be `consistent`. A factor that a wrong scale explains (a power of ten, √3,
//!   or a probe ratio in use, applied twice or not at all) makes it `inconclusive` with the
//!   question to ask; any other factor makes it `outside`. |Z| straddling its band changes
//!   nothing: the angle, which no probe ratio touches, carries the verdict there.
//! - The explanation: the measured impedance Z = V1/I1 as series R and X, the equivalent L or C,
//!   and for each part alone the value that reproduces the measured angle with the others at
//!   nominal ([`super::tolerance::part_value_for_angle`]), marked when that value lies outside the
//!   part's tolerance. The parts are listed most plausible first: smallest change in units of the
//!   part's own tolerance, and an impedance magnitude that fits the measured one.

use super::circuit::{Circuit, phase_deg};
use super::decision::{Verdict, decide};
use super::tolerance::{
    Distribution, MonteCarloConfig, MonteCarloResult, monte_carlo, part_value_for_angle,
    worst_case, worst_case_impedance,
};
use rustfft::num_complex::Complex64;
use serde::Serialize;
use std::f64::consts::PI;

/// What a circuit model predicts at one frequency, with the band its tolerances allow.
#[derive(Debug, Clone, Serialize)]
pub struct Expectation {
    /// Model name, if the file gives one.
    pub model: Option<String>,
    /// The network with its values and tolerances.
    pub network: String,
    /// Frequency the model was evaluated at, Hz.
    pub frequency_hz: f64,
    /// Nominal impedance magnitude, ohms.
    pub nominal_impedance_ohm: f64,
    /// Phase angle of the nominal circuit, degrees (positive: current lags).
    pub nominal_phase_deg: f64,
    /// cos of the nominal angle.
    pub displacement_pf: f64,
    /// "lagging", "leading" or "in phase".
    pub character: &'static str,
    /// Worst-case band of the angle over the tolerance box, degrees [low, high].
    pub band_deg: [f64; 2],
    /// Part values (SI units, in file order) at the low and the high end of the band.
    pub band_values: [Vec<f64>; 2],
    /// Worst-case band of |Z| over the tolerance box, ohms [low, high].
    pub impedance_band_ohm: [f64; 2],
    /// The Monte Carlo spread of the angle.
    pub monte_carlo: MonteCarloSummary,
    /// Frequencies where the nominal network is purely resistive, Hz.
    pub resonances_hz: Vec<f64>,
}

/// The Monte Carlo result as reported.
#[derive(Debug, Clone, Serialize)]
pub struct MonteCarloSummary {
    /// Circuits drawn.
    pub draws: usize,
    /// Seed used.
    pub seed: u64,
    /// "uniform" or "normal".
    pub distribution: &'static str,
    /// Mean angle, degrees.
    pub mean_deg: f64,
    /// Standard deviation, degrees.
    pub std_deg: f64,
    /// (percent, angle in degrees) pairs.
    pub percentiles_deg: Vec<(f64, f64)>,
    /// Histogram of the angles: lower edge, upper edge (degrees) and counts per bin.
    pub histogram: (f64, f64, Vec<usize>),
}

impl Expectation {
    /// The Monte Carlo angle at percentile `p` (one of the reported ones).
    pub fn percentile(&self, p: f64) -> Option<f64> {
        self.monte_carlo
            .percentiles_deg
            .iter()
            .find(|(q, _)| *q == p)
            .map(|&(_, a)| a)
    }
}

/// Evaluates `circuit` at `frequency_hz`: nominal impedance and angle, worst-case band, Monte
/// Carlo spread and resonances.
pub fn expectation(circuit: &Circuit, frequency_hz: f64, mc: &MonteCarloConfig) -> Expectation {
    let z = circuit.nominal_impedance(frequency_hz);
    let angle = phase_deg(z);
    let band = worst_case(circuit, frequency_hz);
    let zband = worst_case_impedance(circuit, frequency_hz);
    let r: MonteCarloResult = monte_carlo(circuit, frequency_hz, mc);
    Expectation {
        model: circuit.name.clone(),
        network: circuit.describe(),
        frequency_hz,
        nominal_impedance_ohm: z.norm(),
        nominal_phase_deg: angle,
        displacement_pf: angle.to_radians().cos(),
        character: if angle > 0.0 {
            "lagging"
        } else if angle < 0.0 {
            "leading"
        } else {
            "in phase"
        },
        band_deg: [band.low_deg, band.high_deg],
        band_values: [band.low_values, band.high_values],
        impedance_band_ohm: [zband.low_deg, zband.high_deg],
        monte_carlo: MonteCarloSummary {
            draws: r.draws,
            seed: mc.seed,
            distribution: match mc.distribution {
                Distribution::Uniform => "uniform",
                Distribution::Normal => "normal",
            },
            mean_deg: r.mean_deg,
            std_deg: r.std_deg,
            percentiles_deg: r.percentiles,
            histogram: (
                r.histogram.low_deg,
                r.histogram.high_deg,
                r.histogram.counts,
            ),
        },
        resonances_hz: circuit.resonances_hz(),
    }
}

/// The comparison of one capture with a circuit model.
#[derive(Debug, Clone, Serialize)]
pub struct Expected {
    /// Model name, if the file gives one.
    pub model: Option<String>,
    /// Frequency the model was evaluated at (the measured one), Hz.
    pub frequency_hz: f64,
    /// Phase angle of the nominal circuit, degrees.
    pub nominal_phase_deg: f64,
    /// Nominal impedance magnitude, ohms.
    pub nominal_impedance_ohm: f64,
    /// Worst-case band of the angle over the tolerances, degrees [low, high].
    pub band_deg: [f64; 2],
    /// Monte Carlo 2.5 % and 97.5 % percentiles of the angle, degrees.
    pub monte_carlo_95_deg: [f64; 2],
    /// Measured angle, degrees.
    pub measured_phase_deg: f64,
    /// Its expanded uncertainty, degrees.
    pub measured_uncertainty_deg: f64,
    /// `consistent`, `outside` or `inconclusive`: the angle's verdict, made `outside` or
    /// `inconclusive` by a |Z| beyond its band (see [`ImpedanceCheck`]).
    pub verdict: Verdict,
    /// The angle's own verdict.
    pub angle_verdict: Verdict,
    /// The measured |Z| against the model's |Z| band.
    pub impedance: ImpedanceCheck,
    /// Degrees beyond the nearer band limit (negative: inside by that much).
    pub margin_deg: f64,
    /// The rule the verdict follows.
    pub decision_rule: &'static str,
    /// Why the verdict is not the angle's: a |Z| beyond its band, or a capture that cannot
    /// support the angle (clipping, too few cycles, no fundamental); `None` otherwise.
    pub reason: Option<String>,
    /// What the measured impedance says.
    pub explanation: Explanation,
}

/// The measured |Z| = |V1/I1| against the model's worst-case |Z| band.
#[derive(Debug, Clone, Serialize)]
pub struct ImpedanceCheck {
    /// Measured |Z|, ohms.
    pub measured_ohm: f64,
    /// Its expanded uncertainty (k = 2), ohms.
    pub uncertainty_ohm: f64,
    /// The model's worst-case |Z| band, ohms [low, high].
    pub band_ohm: [f64; 2],
    /// Measured |Z| over the model's nominal |Z|.
    pub ratio_to_nominal: f64,
    /// The decision rule applied to |Z| alone.
    pub verdict: Verdict,
    /// When |Z| is `outside`: a scale factor that would bring it back within reach of the band
    /// (a power of ten, √3, or a probe ratio in use), the mark of a wrong scale.
    pub scale_factor: Option<f64>,
    /// The finding in words when |Z| is `outside`.
    pub finding: Option<String>,
}

/// What was measured, as the comparison with a model needs it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Measurement {
    /// RMS phasor of the fundamental voltage, volts.
    pub v1: Complex64,
    /// RMS phasor of the fundamental current, amperes.
    pub i1: Complex64,
    /// Measured phase angle (DFT), degrees.
    pub angle_deg: f64,
    /// Its expanded uncertainty, degrees.
    pub u_angle_deg: f64,
    /// Expanded uncertainty of |Z| relative to |Z| (the V and I relative uncertainties combined).
    pub u_impedance_rel: f64,
    /// The voltage scale in use (volts per unit of the file).
    pub v_scale: f64,
    /// The current scale in use (amperes per unit of the file).
    pub i_scale: f64,
}

/// The measured impedance and the single-part changes that would explain it.
#[derive(Debug, Clone, Serialize)]
pub struct Explanation {
    /// Measured impedance magnitude |V1/I1|, ohms.
    pub impedance_ohm: f64,
    /// Equivalent series resistance, ohms.
    pub series_resistance_ohm: f64,
    /// Equivalent series reactance, ohms (positive inductive).
    pub series_reactance_ohm: f64,
    /// "inductance" or "capacitance".
    pub equivalent: &'static str,
    /// The equivalent inductance (H) or capacitance (F) at the measured frequency.
    pub equivalent_value: f64,
    /// One line per part, most plausible first.
    pub parts: Vec<PartChange>,
}

/// What one part alone would have to be.
#[derive(Debug, Clone, Serialize)]
pub struct PartChange {
    /// Part name.
    pub part: String,
    /// Its nominal value (SI unit of its kind).
    pub nominal: f64,
    /// The value that reproduces the measured angle, if any.
    pub value_needed: Option<f64>,
    /// Change from nominal, percent.
    pub change_percent: Option<f64>,
    /// Whether that value lies within the part's tolerance.
    pub within_tolerance: bool,
    /// |Z| of the circuit with that value, ohms: it should match the measured |Z|.
    pub impedance_ohm_if_so: Option<f64>,
    /// The sentence for people, e.g. "C1 would have to be 20.3 % low (tolerance −5 %/+10 %)".
    pub note: String,
}

/// The decision rule in words, for the report.
pub const DECISION_RULE: &str = "guarded acceptance, guard band = U (k = 2), ILAC-G8:09/2019: \
consistent when angle ± U lies inside the tolerance band, outside when it lies wholly beyond it, \
otherwise inconclusive; |Z| ± U wholly beyond the |Z| band overrules consistent: outside, or \
inconclusive when a scale error (a power of ten, √3, a ratio in use) explains the factor";

fn tolerance_text(low: f64, high: f64) -> String {
    if (low + high).abs() < 1e-12 {
        format!("±{} %", trim(high * 100.0))
    } else {
        format!("{} %/+{} %", trim(low * 100.0), trim(high * 100.0))
    }
}

fn trim(x: f64) -> String {
    let s = format!("{x:.2}");
    s.trim_end_matches('0').trim_end_matches('.').to_string()
}

/// Compares a measurement with `circuit` at `frequency_hz`.
pub fn compare(
    circuit: &Circuit,
    frequency_hz: f64,
    m: &Measurement,
    mc: &MonteCarloConfig,
) -> Expected {
    let e = expectation(circuit, frequency_hz, mc);
    compare_to(circuit, &e, m)
}

/// [`compare`] against an expectation already worked out at the measured frequency, so that a
/// report plotting its band and histogram does not draw the Monte Carlo a second time.
pub fn compare_to(circuit: &Circuit, e: &Expectation, m: &Measurement) -> Expected {
    let frequency_hz = e.frequency_hz;
    let (v1, i1, angle_deg) = (m.v1, m.i1, m.angle_deg);
    let d = decide(angle_deg, m.u_angle_deg, e.band_deg[0], e.band_deg[1]);
    let z = v1 / i1;
    let impedance = check_impedance(e, m);
    // The angle decides; a |Z| wholly beyond its band overrules `consistent` (and a |Z| a wrong
    // scale explains cannot make the verdict `outside`: the circuit may be fine).
    let (verdict, reason) = match (d.verdict, impedance.verdict) {
        (Verdict::Outside, _) | (_, Verdict::Consistent | Verdict::Inconclusive) => {
            (d.verdict, None)
        }
        (_, Verdict::Outside) => (
            if impedance.scale_factor.is_some() {
                Verdict::Inconclusive
            } else {
                Verdict::Outside
            },
            impedance.finding.clone(),
        ),
    };
    let omega = 2.0 * PI * frequency_hz;
    let (equivalent, equivalent_value) = if z.im >= 0.0 {
        ("inductance", z.im / omega)
    } else {
        ("capacitance", -1.0 / (omega * z.im))
    };
    let nominal = circuit.nominal_values();
    let mut parts: Vec<(f64, PartChange)> = circuit
        .parts
        .iter()
        .enumerate()
        .map(|(k, p)| {
            let needed = part_value_for_angle(circuit, k, frequency_hz, angle_deg);
            let change = needed.map(|v| 100.0 * (v / p.nominal - 1.0));
            let within = needed.is_some_and(|v| v >= p.low_value() && v <= p.high_value());
            let z_if = needed.map(|v| {
                let mut values = nominal.clone();
                values[k] = v;
                circuit.impedance(&values, frequency_hz).norm()
            });
            let tol = tolerance_text(p.tol_low, p.tol_high);
            let note = match change {
                None => format!("no value of {} alone gives {angle_deg:.2}°", p.name),
                Some(c) if within => format!(
                    "{} within its tolerance ({:+.1} %, tolerance {tol}) would do",
                    p.name, c
                ),
                Some(c) => format!(
                    "{} would have to be {:.1} % {} (tolerance {tol})",
                    p.name,
                    c.abs(),
                    if c < 0.0 { "low" } else { "high" }
                ),
            };
            // Plausibility: change in units of the tolerance on that side, and |Z| mismatch.
            let score = match (change, z_if) {
                (Some(c), Some(zi)) => {
                    let side = if c < 0.0 { -p.tol_low } else { p.tol_high };
                    let in_tol = (c / 100.0).abs() / side.max(1e-6);
                    let z_miss = (zi / z.norm() - 1.0).abs() / 0.05; // 5 % of |Z| ~ one unit
                    in_tol + z_miss
                }
                _ => f64::INFINITY,
            };
            (
                score,
                PartChange {
                    part: p.name.clone(),
                    nominal: p.nominal,
                    value_needed: needed,
                    change_percent: change,
                    within_tolerance: within,
                    impedance_ohm_if_so: z_if,
                    note,
                },
            )
        })
        .collect();
    parts.sort_by(|a, b| a.0.total_cmp(&b.0));
    Expected {
        monte_carlo_95_deg: [
            e.percentile(2.5).unwrap_or(f64::NAN),
            e.percentile(97.5).unwrap_or(f64::NAN),
        ],
        model: e.model.clone(),
        frequency_hz,
        nominal_phase_deg: e.nominal_phase_deg,
        nominal_impedance_ohm: e.nominal_impedance_ohm,
        band_deg: e.band_deg,
        measured_phase_deg: angle_deg,
        measured_uncertainty_deg: m.u_angle_deg,
        verdict,
        angle_verdict: d.verdict,
        impedance,
        margin_deg: d.margin,
        decision_rule: DECISION_RULE,
        reason,
        explanation: Explanation {
            impedance_ohm: z.norm(),
            series_resistance_ohm: z.re,
            series_reactance_ohm: z.im,
            equivalent,
            equivalent_value,
            parts: parts.into_iter().map(|(_, p)| p).collect(),
        },
    }
}

impl Expected {
    /// True when the verdict is `outside`.
    pub fn failed(&self) -> bool {
        self.verdict == Verdict::Outside
    }

    /// Makes the verdict `inconclusive` because the capture cannot support the angle, for the
    /// `doubts` given (the reasons of the capture's warnings); nothing when there are none.
    pub fn undermined_by(&mut self, doubts: &[String]) {
        if doubts.is_empty() {
            return;
        }
        self.verdict = Verdict::Inconclusive;
        let doubt = format!(
            "the capture cannot support the angle: {}",
            doubts.join("; ")
        );
        self.reason = Some(match self.reason.take() {
            Some(r) => format!("{doubt}; {r}"),
            None => doubt,
        });
    }
}

/// Powers of ten a wrong scale most often is off by (a 10:1 probe set as 1:1, a clamp's mV/A
/// range, a shunt's mΩ read as Ω, kV or kA read as units): 10^-6 to 10^6 (common practice).
const DECADES: i32 = 6;

/// The measured |Z| against the model's |Z| band, with the scale factor that would explain a
/// |Z| beyond it.
fn check_impedance(e: &Expectation, m: &Measurement) -> ImpedanceCheck {
    let z = (m.v1 / m.i1).norm();
    let u = z * m.u_impedance_rel.abs();
    let [low, high] = e.impedance_band_ohm;
    let d = decide(z, u, low, high);
    let ratio = z / e.nominal_impedance_ohm;
    let mut check = ImpedanceCheck {
        measured_ohm: z,
        uncertainty_ohm: u,
        band_ohm: [low, high],
        ratio_to_nominal: ratio,
        verdict: d.verdict,
        scale_factor: None,
        finding: None,
    };
    if d.verdict != Verdict::Outside || !ratio.is_finite() || ratio <= 0.0 {
        return check;
    }
    // Candidate scale errors, simplest first: a factor c explains |Z| when |Z|/c ± U/c is no
    // longer wholly outside the band.
    let mut candidates: Vec<(f64, String)> = Vec::new();
    for k in 1..=DECADES {
        let c = 10f64.powi(k);
        candidates.push((c, format!("a factor of {}", decade_text(k))));
        candidates.push((1.0 / c, format!("a factor of 1/{}", decade_text(k))));
    }
    for (scale, which) in [(m.i_scale, "current"), (m.v_scale, "voltage")] {
        let s = scale.abs();
        if s.is_finite() && s > 0.0 && (s - 1.0).abs() > 1e-9 {
            let text = format!(
                "the {which} scale in use ({}): applied twice, or not needed?",
                short(s)
            );
            candidates.push((s, text.clone()));
            candidates.push((1.0 / s, text));
        }
    }
    candidates.push((
        3f64.sqrt(),
        "√3, the ratio of line-to-line to line-to-neutral voltage".to_string(),
    ));
    candidates.push((
        1.0 / 3f64.sqrt(),
        "1/√3, the ratio of line-to-neutral to line-to-line voltage".to_string(),
    ));
    let explained = candidates
        .into_iter()
        .find(|(c, _)| decide(z / c, u / c, low, high).verdict != Verdict::Outside);
    let head = format!(
        "|Z| is {}x the model ({} Ω against {} to {} Ω; V1 {} V, I1 {} A)",
        short(ratio),
        short(z),
        short(low),
        short(high),
        short(m.v1.norm()),
        short(m.i1.norm()),
    );
    check.finding = Some(match &explained {
        Some((c, why)) => {
            check.scale_factor = Some(*c);
            format!(
                "{head}: {why} is the mark of a scale error: is the current or voltage scale right?"
            )
        }
        None => format!("{head}: the circuit's impedance does not match the model"),
    });
    check
}

fn decade_text(k: i32) -> String {
    format!("{}", 10u64.pow(k as u32))
}

/// A figure with four significant digits, no exponent for ordinary magnitudes.
fn short(x: f64) -> String {
    if x == 0.0 || !x.is_finite() {
        return format!("{x}");
    }
    let digits = (3 - x.abs().log10().floor() as i32).clamp(0, 9) as usize;
    format!("{x:.digits$}")
}
