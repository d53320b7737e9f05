//! The circuit model: parts with nominal values and tolerances, wired by a network expression,
//! read from a TOML file of our own schema; the network's impedance at any frequency.
//!
//! ```toml
//! name = "lab bench series RLC"      # optional
//! frequency_hz = 50                  # optional nominal frequency
//! network = "R1 + L1 + (C1 || C2)"   # '+' series, '||' parallel, '||' binds tighter than '+'
//!
//! [parts.R1]
//! value = "50 ohm"                   # number, optional space, optional SI prefix, unit
//! tolerance = "±5%"                  # "±5%", "+-5%", "5%" or "-5%/+10%"; default 0 %
//!
//! [parts.L1]
//! value = "200 mH"
//! tolerance = "±10%"
//! series_resistance = "2.1 ohm"      # inductors only: winding resistance, taken as exact
//!
//! [parts.C1]
//! value = "100 uF"
//! tolerance = "-5%/+10%"
//! kind = "capacitor"                 # optional; the unit decides, and kind must agree
//! ```
//!
//! Every part defined must appear exactly once in `network`; a part defined but not used is an
//! error (it is nearly always a typing mistake in the network).
//!
//! Impedances follow the textbook element laws: Z_R = R, Z_L = jωL (plus the winding
//! resistance), Z_C = 1/(jωC); impedances add in series and admittances add in parallel.

use std::fmt;
use std::ops::Range;
use std::path::Path;

use rustfft::num_complex::Complex64;
use toml::de::{DeTable, DeValue};

mod error;
mod expr;
mod schema;
mod units;

pub use error::{ModelError, ModelErrorKind};

use schema::{as_number, as_text, in_file_order, mark_used, parse_part, resolve};

/// What a part is; decided by the unit of its value.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PartKind {
    /// A resistor, value in ohms.
    Resistor,
    /// An inductor, value in henries.
    Inductor,
    /// A capacitor, value in farads.
    Capacitor,
}

impl PartKind {
    /// The unit symbol: Ω, H or F.
    pub fn unit_symbol(self) -> &'static str {
        match self {
            PartKind::Resistor => "Ω",
            PartKind::Inductor => "H",
            PartKind::Capacitor => "F",
        }
    }

    /// The word, lowercase: "resistor", "inductor", "capacitor".
    pub fn word(self) -> &'static str {
        match self {
            PartKind::Resistor => "resistor",
            PartKind::Inductor => "inductor",
            PartKind::Capacitor => "capacitor",
        }
    }

    fn with_article(self) -> &'static str {
        match self {
            PartKind::Resistor => "a resistor",
            PartKind::Inductor => "an inductor",
            PartKind::Capacitor => "a capacitor",
        }
    }
}

impl fmt::Display for PartKind {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.word())
    }
}

/// One component of the model.
#[derive(Debug, Clone, PartialEq)]
pub struct Part {
    /// The name used in the network expression (`R1`).
    pub name: String,
    /// Resistor, inductor or capacitor.
    pub kind: PartKind,
    /// Nominal value in SI units: ohm, henry or farad.
    pub nominal: f64,
    /// Lower tolerance limit as a signed fraction of the nominal value (−0.05 for −5 %).
    pub tol_low: f64,
    /// Upper tolerance limit as a signed fraction of the nominal value (0.10 for +10 %).
    pub tol_high: f64,
    /// Winding resistance of an inductor in ohms, in series with it; taken as exact.
    pub series_resistance_ohm: Option<f64>,
}

impl Part {
    /// The smallest value the tolerance allows: `nominal · (1 + tol_low)`.
    pub fn low_value(&self) -> f64 {
        self.nominal * (1.0 + self.tol_low)
    }

    /// The largest value the tolerance allows: `nominal · (1 + tol_high)`.
    pub fn high_value(&self) -> f64 {
        self.nominal * (1.0 + self.tol_high)
    }

    /// The impedance of this part with the given value at angular frequency `omega` (rad/s).
    pub fn impedance(&self, value: f64, omega: f64) -> Complex64 {
        match self.kind {
            PartKind::Resistor => Complex64::new(value, 0.0),
            PartKind::Inductor => {
                Complex64::new(self.series_resistance_ohm.unwrap_or(0.0), omega * value)
            }
            PartKind::Capacitor => Complex64::new(0.0, -1.0 / (omega * value)),
        }
    }

    /// "R1 50 Ω ±5 %", "L1 200 mH ±10 % with 2.1 Ω winding".
    pub fn describe(&self) -> String {
        let mut s = format!(
            "{} {}",
            self.name,
            units::format_value(self.nominal, self.kind)
        );
        let tol = units::format_tolerance(self.tol_low, self.tol_high);
        if !tol.is_empty() {
            s.push(' ');
            s.push_str(&tol);
        }
        if let Some(r) = self.series_resistance_ohm {
            s.push_str(" with ");
            s.push_str(&units::format_value(r, PartKind::Resistor));
            s.push_str(" winding");
        }
        s
    }
}

/// How the parts are wired: a tree of series and parallel groups over part indices.
#[derive(Debug, Clone, PartialEq)]
pub enum Network {
    /// One part, by its index in [`Circuit::parts`].
    Part(usize),
    /// Impedances that add.
    Series(Vec<Network>),
    /// Admittances that add.
    Parallel(Vec<Network>),
}

impl Network {
    fn impedance(&self, parts: &[Part], values: &[f64], omega: f64) -> Complex64 {
        match self {
            Network::Part(i) => parts[*i].impedance(values[*i], omega),
            Network::Series(items) => items
                .iter()
                .map(|n| n.impedance(parts, values, omega))
                .sum(),
            Network::Parallel(items) => {
                let mut admittance = Complex64::new(0.0, 0.0);
                for item in items {
                    let z = item.impedance(parts, values, omega);
                    if z.re == 0.0 && z.im == 0.0 {
                        // A branch at exact series resonance shorts the group.
                        return z;
                    }
                    admittance += z.inv();
                }
                if admittance.re == 0.0 && admittance.im == 0.0 {
                    // A lossless tank at exact resonance: an open circuit.
                    Complex64::new(f64::INFINITY, 0.0)
                } else {
                    admittance.inv()
                }
            }
        }
    }

    fn describe(&self, parts: &[Part], nested: bool) -> String {
        let (items, joiner) = match self {
            Network::Part(i) => return parts[*i].describe(),
            Network::Series(items) => (items, " + "),
            Network::Parallel(items) => (items, " || "),
        };
        let inner: Vec<String> = items.iter().map(|n| n.describe(parts, true)).collect();
        let text = inner.join(joiner);
        if nested { format!("({text})") } else { text }
    }
}

/// A circuit model: its parts and how they are wired.
#[derive(Debug, Clone, PartialEq)]
pub struct Circuit {
    /// Optional name from the file.
    pub name: Option<String>,
    /// Optional nominal frequency from the file, in hertz.
    pub frequency_hz: Option<f64>,
    /// The parts in the order the file defines them.
    pub parts: Vec<Part>,
    /// The wiring, over indices into `parts`.
    pub network: Network,
}

/// Highest and lowest frequency searched by [`Circuit::resonances_hz`], and the scan density.
const RESONANCE_SCAN_HZ: (f64, f64) = (0.1, 1.0e6);
const RESONANCE_POINTS_PER_DECADE: usize = 200;

/// The most parts a model may hold: the worst-case search refines one part at a time, so its
/// time grows with the square of the part count (measured: 1 000 parts 5.2 s, 3 000 parts 46 s;
/// 200 parts stay near 0.2 s). Real test networks and banks have a handful.
pub const MAX_PARTS: usize = 200;

impl Circuit {
    /// Reads and checks a model file.
    pub fn load(path: &Path) -> Result<Circuit, ModelError> {
        let bytes = std::fs::read(path).map_err(|e| {
            let reason = match e.kind() {
                std::io::ErrorKind::NotFound => "the file does not exist".to_string(),
                std::io::ErrorKind::PermissionDenied => "no permission to read it".to_string(),
                _ => e.to_string().to_lowercase(),
            };
            ModelError::new(path, ModelErrorKind::Read { reason })
        })?;
        let text =
            String::from_utf8(bytes).map_err(|_| ModelError::new(path, ModelErrorKind::NotUtf8))?;
        Circuit::parse(&text, path)
    }

    /// Parses and checks model text; `path` is only used in error messages.
    pub fn parse(text: &str, path: &Path) -> Result<Circuit, ModelError> {
        let at = |span: Range<usize>, kind| ModelError::located(path, text, Some(span), kind);
        let doc = DeTable::parse(text).map_err(|err| {
            let message = err
                .message()
                .lines()
                .map(str::trim)
                .filter(|l| !l.is_empty())
                .collect::<Vec<_>>()
                .join("; ");
            ModelError::located(path, text, err.span(), ModelErrorKind::Syntax { message })
        })?;

        let mut name = None;
        let mut frequency_hz = None;
        let mut network: Option<(&str, Range<usize>)> = None;
        let mut parts_table: Option<(&DeTable<'_>, Range<usize>)> = None;
        for (key, value) in in_file_order(doc.get_ref()) {
            let span = value.span();
            match key.get_ref().as_ref() {
                "name" => {
                    let s = as_text(value, "name", "text in quotes, like \"lab bench\"");
                    name = Some(s.map_err(|k| at(span, k))?.to_string());
                }
                "frequency_hz" => {
                    let f = as_number(value).ok_or_else(|| {
                        at(
                            span.clone(),
                            ModelErrorKind::WrongType {
                                what: "frequency_hz".into(),
                                expected: "a number, like 50",
                            },
                        )
                    })?;
                    if !(f.is_finite() && f > 0.0) {
                        return Err(at(span, ModelErrorKind::BadFrequency { found: f }));
                    }
                    frequency_hz = Some(f);
                }
                "network" => {
                    let s = as_text(value, "network", "text in quotes, like \"R1 + L1\"");
                    network = Some((s.map_err(|k| at(span.clone(), k))?, span));
                }
                "parts" => match value.get_ref() {
                    DeValue::Table(t) => parts_table = Some((t, key.span())),
                    _ => {
                        return Err(at(
                            span,
                            ModelErrorKind::WrongType {
                                what: "parts".into(),
                                expected: "tables, like [parts.R1]",
                            },
                        ));
                    }
                },
                other => {
                    return Err(at(
                        key.span(),
                        ModelErrorKind::UnknownKey {
                            key: other.to_string(),
                            part: None,
                        },
                    ));
                }
            }
        }

        let Some((parts_table, parts_span)) = parts_table.filter(|(t, _)| !t.is_empty()) else {
            return Err(ModelError::new(path, ModelErrorKind::NoParts));
        };
        if parts_table.len() > MAX_PARTS {
            return Err(at(
                parts_span,
                ModelErrorKind::TooManyParts {
                    count: parts_table.len(),
                    max: MAX_PARTS,
                },
            ));
        }
        let mut parts = Vec::new();
        let mut name_spans = Vec::new();
        for (key, value) in in_file_order(parts_table) {
            let part = parse_part(key, value).map_err(|(span, kind)| at(span, kind))?;
            parts.push(part);
            name_spans.push(key.span());
        }

        let Some((network_text, network_span)) = network else {
            return Err(ModelError::new(path, ModelErrorKind::MissingNetwork));
        };
        let network = expr::parse_network(network_text)
            .and_then(|e| resolve(&e, &parts))
            .map_err(|k| ModelError::on_line_of(path, text, network_span.start, k))?;
        let mut used = vec![false; parts.len()];
        mark_used(&network, &mut used);
        if let Some(unused) = used.iter().position(|u| !u) {
            return Err(at(
                name_spans[unused].clone(),
                ModelErrorKind::UnusedPart {
                    name: parts[unused].name.clone(),
                },
            ));
        }

        Ok(Circuit {
            name,
            frequency_hz,
            parts,
            network,
        })
    }

    /// The nominal value of each part, in the order of [`Circuit::parts`].
    pub fn nominal_values(&self) -> Vec<f64> {
        self.parts.iter().map(|p| p.nominal).collect()
    }

    /// The network's impedance in ohms with the given part values (one per part, SI units) at
    /// `frequency_hz` (> 0; at 0 Hz a capacitor is an open circuit and the result is not finite).
    ///
    /// Panics if `values` holds fewer values than there are parts (a programming error).
    pub fn impedance(&self, values: &[f64], frequency_hz: f64) -> Complex64 {
        assert!(values.len() >= self.parts.len(), "one value per part");
        let omega = 2.0 * std::f64::consts::PI * frequency_hz;
        self.network.impedance(&self.parts, values, omega)
    }

    /// The network's impedance in ohms with every part at its nominal value.
    pub fn nominal_impedance(&self, frequency_hz: f64) -> Complex64 {
        self.impedance(&self.nominal_values(), frequency_hz)
    }

    /// Frequencies in hertz, ascending, where the nominal network's reactance changes sign: where
    /// Im Z passes through zero (the network looks purely resistive), and, for a lossless parallel
    /// tank, where it flips through infinity (Im Y = 0).
    ///
    /// Found numerically: a scan of 200 points per decade from 0.1 Hz to 1 MHz, then bisection in
    /// log frequency to full double precision. Two resonances closer than about 1.2 % in frequency
    /// may be missed. Empty for networks without both an inductor and a capacitor.
    pub fn resonances_hz(&self) -> Vec<f64> {
        let has = |k| self.parts.iter().any(|p| p.kind == k);
        if !(has(PartKind::Inductor) && has(PartKind::Capacitor)) {
            return Vec::new();
        }
        let values = self.nominal_values();
        let reactance = |log_f: f64| self.impedance(&values, 10f64.powf(log_f)).im;
        let (lo, hi) = (RESONANCE_SCAN_HZ.0.log10(), RESONANCE_SCAN_HZ.1.log10());
        let steps = ((hi - lo) * RESONANCE_POINTS_PER_DECADE as f64).round() as usize;
        let at = |k: usize| lo + (hi - lo) * k as f64 / steps as f64;
        let mut found = Vec::new();
        let mut prev = (at(0), reactance(at(0)));
        for k in 1..=steps {
            let x = at(k);
            let cur = (x, reactance(x));
            if prev.1 == 0.0 {
                found.push(10f64.powf(prev.0));
            } else if prev.1 * cur.1 < 0.0 {
                found.push(10f64.powf(bisect(prev, cur, &reactance)));
            }
            prev = cur;
        }
        found
    }

    /// The network as text with every part's value and tolerance, e.g.
    /// "R1 50 Ω ±5 % + L1 200 mH ±10 % + C1 100 µF −5/+10 %"; nested groups in parentheses.
    pub fn describe(&self) -> String {
        self.network.describe(&self.parts, false)
    }
}

/// Bisection of `g` on [a.0, b.0], where `g` changes sign, to full double precision.
pub(crate) fn bisect(mut a: (f64, f64), mut b: (f64, f64), mut g: impl FnMut(f64) -> f64) -> f64 {
    for _ in 0..200 {
        let mid = 0.5 * (a.0 + b.0);
        if mid <= a.0.min(b.0) || mid >= a.0.max(b.0) {
            break;
        }
        let gm = g(mid);
        if gm == 0.0 {
            return mid;
        }
        if (gm < 0.0) == (a.1 < 0.0) {
            a = (mid, gm);
        } else {
            b = (mid, gm);
        }
    }
    if a.1.abs() <= b.1.abs() { a.0 } else { b.0 }
}

/// Phase angle θ = arg(Z) in degrees: the voltage's phase minus the current's. Positive means
/// the current lags (inductive), negative that it leads (capacitive). A passive network gives
/// −90° ≤ θ ≤ 90°, so there is no wrap-around.
pub fn phase_deg(z: Complex64) -> f64 {
    z.im.atan2(z.re).to_degrees()
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::f64::consts::PI;

    /// Agreement of two evaluations of the same closed-form expression in double precision.
    const CLOSE: f64 = 1e-9;

    fn parse(text: &str) -> Result<Circuit, ModelError> {
        Circuit::parse(text, Path::new("bench.toml"))
    }

    fn circuit(text: &str) -> Circuit {
        match parse(text) {
            Ok(c) => c,
            Err(e) => panic!("model should parse: {e}"),
        }
    }

    fn error(text: &str) -> String {
        match parse(text) {
            Ok(_) => "parsed without error".to_string(),
            Err(e) => e.to_string(),
        }
    }

    const SERIES_RLC: &str = r#"
name = "bench"
frequency_hz = 50
network = "R1 + L1 + C1"

[parts.R1]
value = "50 ohm"
tolerance = "±5%"

[parts.L1]
value = "200 mH"
tolerance = "±10%"

[parts.C1]
value = "100 uF"
tolerance = "-5%/+10%"
"#;

    #[test]
    fn series_rlc_matches_the_handbook_formula() {
        // Textbook: Z = R + j(ωL − 1/(ωC)), θ = atan((ωL − 1/(ωC))/R); references §7 gives
        // 31.800° and PF 0.8499 for 50 Ω, 0.2 H, 100 µF at 50 Hz.
        let c = circuit(SERIES_RLC);
        let w = 2.0 * PI * 50.0;
        let x = w * 0.2 - 1.0 / (w * 100e-6);
        let z = c.nominal_impedance(50.0);
        assert!((z.re - 50.0).abs() < CLOSE && (z.im - x).abs() < CLOSE);
        let theta = phase_deg(z);
        assert!((theta - (x / 50.0).atan().to_degrees()).abs() < CLOSE);
        assert!((theta - 31.800).abs() < 5e-4);
        assert!((theta.to_radians().cos() - 0.8499).abs() < 5e-5);
    }

    #[test]
    fn an_inductor_in_series_makes_the_current_lag() {
        // Textbook: θ = atan(ωL/R); references §7: 57.518° at 50 Hz, 62.053° at 60 Hz.
        let c = circuit(
            "network = \"R1 + L1\"\n[parts.R1]\nvalue = \"100 ohm\"\n[parts.L1]\nvalue = \"0.5 H\"",
        );
        for (f, expected) in [(50.0, 57.518), (60.0, 62.053)] {
            let theta = phase_deg(c.nominal_impedance(f));
            assert!((theta - (2.0 * PI * f * 0.5 / 100.0).atan().to_degrees()).abs() < CLOSE);
            assert!((theta - expected).abs() < 5e-4);
        }
    }

    #[test]
    fn a_capacitor_in_series_makes_the_angle_lead() {
        // Textbook: Z = R − j/(ωC), θ = −atan(1/(ωCR)).
        let c = circuit(
            "network = \"R1 + C1\"\n[parts.R1]\nvalue = \"100 ohm\"\n[parts.C1]\nvalue = \"22 uF\"",
        );
        let theta = phase_deg(c.nominal_impedance(50.0));
        assert!(theta < 0.0);
        let expected = -(1.0 / (2.0 * PI * 50.0 * 22e-6 * 100.0))
            .atan()
            .to_degrees();
        assert!((theta - expected).abs() < CLOSE);
    }

    #[test]
    fn parallel_rl_matches_the_admittance_formula() {
        // Textbook: Y = 1/R − j/(ωL), θ = −arg Y = atan(R/(ωL)); references §7: 32.482°.
        let c = circuit(
            "network = \"R1 || L1\"\n[parts.R1]\nvalue = \"100 ohm\"\n[parts.L1]\nvalue = \"500 mH\"",
        );
        let w = 2.0 * PI * 50.0;
        let y = Complex64::new(1.0 / 100.0, -1.0 / (w * 0.5));
        let z = c.nominal_impedance(50.0);
        assert!((z - y.inv()).norm() < CLOSE);
        let theta = phase_deg(z);
        assert!((theta - (100.0 / (w * 0.5)).atan().to_degrees()).abs() < CLOSE);
        assert!((theta - 32.482).abs() < 5e-4);
    }

    #[test]
    fn parallel_rc_matches_the_admittance_formula() {
        // Textbook: Y = 1/R + jωC, θ = −atan(ωCR).
        let c = circuit(
            "network = \"C1 || R1\"\n[parts.R1]\nvalue = \"1 kohm\"\n[parts.C1]\nvalue = \"4.7 uF\"",
        );
        let theta = phase_deg(c.nominal_impedance(60.0));
        let expected = -(2.0 * PI * 60.0 * 4.7e-6 * 1000.0).atan().to_degrees();
        assert!((theta - expected).abs() < CLOSE);
    }

    #[test]
    fn winding_resistance_adds_in_series_with_its_inductor() {
        // Textbook: a real coil is R_w + jωL.
        let c = circuit(
            "network = \"L1 || C1\"\n[parts.L1]\nvalue = \"10 mH\"\nseries_resistance = \"2.1 ohm\"\n\
             [parts.C1]\nvalue = \"10 uF\"",
        );
        let w = 2.0 * PI * 50.0;
        let zl = Complex64::new(2.1, w * 10e-3);
        let zc = Complex64::new(0.0, -1.0 / (w * 10e-6));
        let expected = (zl.inv() + zc.inv()).inv();
        assert!((c.nominal_impedance(50.0) - expected).norm() < CLOSE);
        assert_eq!(c.parts[0].series_resistance_ohm, Some(2.1));
    }

    #[test]
    fn nested_groups_combine_series_and_parallel() {
        // Textbook: impedances add in series, admittances in parallel.
        let c = circuit(
            "network = \"R1 + (L1 || (C1 + R2))\"\n[parts.R1]\nvalue = \"10 ohm\"\n\
             [parts.L1]\nvalue = \"50 mH\"\n[parts.C1]\nvalue = \"220 uF\"\n[parts.R2]\nvalue = \"3.3 ohm\"",
        );
        let w = 2.0 * PI * 50.0;
        let branch = Complex64::new(3.3, -1.0 / (w * 220e-6));
        let tank = (Complex64::new(0.0, w * 0.05).inv() + branch.inv()).inv();
        let expected = Complex64::new(10.0, 0.0) + tank;
        assert!((c.nominal_impedance(50.0) - expected).norm() < CLOSE);
    }

    #[test]
    fn series_lc_resonates_at_one_over_two_pi_root_lc() {
        // Textbook: f0 = 1/(2π√(LC)).
        let c = circuit(
            "network = \"L1 + C1\"\n[parts.L1]\nvalue = \"10 mH\"\n[parts.C1]\nvalue = \"1 uF\"",
        );
        let f0 = 1.0 / (2.0 * PI * (10e-3f64 * 1e-6).sqrt());
        let found = c.resonances_hz();
        assert_eq!(found.len(), 1, "{found:?}");
        assert!((found[0] / f0 - 1.0).abs() < 1e-12);
    }

    #[test]
    fn the_bench_series_rlc_resonates_at_35_588_hz() {
        // Textbook f0 = 1/(2π√(LC)); references §7: 35.588 Hz for 0.2 H and 100 µF.
        let found = circuit(SERIES_RLC).resonances_hz();
        let f0 = 1.0 / (2.0 * PI * (0.2f64 * 100e-6).sqrt());
        assert_eq!(found.len(), 1, "{found:?}");
        assert!((found[0] / f0 - 1.0).abs() < 1e-12);
        assert!((found[0] - 35.588).abs() < 5e-4);
    }

    #[test]
    fn a_lossy_coil_tank_resonates_below_the_ideal_frequency() {
        // Textbook (tank with a lossy coil, unity power factor): f = (1/2π)·√(1/(LC) − R²/L²).
        let c = circuit(
            "network = \"L1 || C1\"\n[parts.L1]\nvalue = \"10 mH\"\nseries_resistance = \"20 ohm\"\n\
             [parts.C1]\nvalue = \"10 uF\"",
        );
        let (l, cap, r) = (10e-3f64, 10e-6f64, 20.0f64);
        let expected = (1.0 / (l * cap) - r * r / (l * l)).sqrt() / (2.0 * PI);
        let found = c.resonances_hz();
        assert_eq!(found.len(), 1, "{found:?}");
        assert!((found[0] / expected - 1.0).abs() < 1e-10);
    }

    #[test]
    fn a_lossless_tank_resonates_where_its_reactance_flips() {
        // Textbook: an ideal parallel LC is an open circuit at 1/(2π√(LC)).
        let c = circuit(
            "network = \"R1 + (L1 || C1)\"\n[parts.R1]\nvalue = \"1 ohm\"\n[parts.L1]\nvalue = \"1 H\"\n\
             [parts.C1]\nvalue = \"1 uF\"",
        );
        let found = c.resonances_hz();
        let f0 = 1.0 / (2.0 * PI * 1e-6f64.sqrt());
        assert_eq!(found.len(), 1, "{found:?}");
        assert!((found[0] / f0 - 1.0).abs() < 1e-10);
    }

    #[test]
    fn two_tanks_give_two_resonances() {
        // Textbook: L1 + (L2 || C1) has a parallel resonance at 1/(2π√(L2·C1)) and a series one
        // where ωL1 = −X_tank, i.e. ω² = (L1 + L2)/(L1·L2·C1) (from the reactance formula).
        let c = circuit(
            "network = \"L1 + (L2 || C1)\"\n[parts.L1]\nvalue = \"1 mH\"\n[parts.L2]\nvalue = \"3 mH\"\n\
             [parts.C1]\nvalue = \"1 uF\"",
        );
        let (l1, l2, cap) = (1e-3f64, 3e-3f64, 1e-6f64);
        let parallel = 1.0 / (2.0 * PI * (l2 * cap).sqrt());
        let series = ((l1 + l2) / (l1 * l2 * cap)).sqrt() / (2.0 * PI);
        let found = c.resonances_hz();
        assert_eq!(found.len(), 2, "{found:?}");
        assert!((found[0] / parallel - 1.0).abs() < 1e-10);
        assert!((found[1] / series - 1.0).abs() < 1e-10);
    }

    #[test]
    fn networks_without_both_l_and_c_have_no_resonance() {
        let c = circuit(
            "network = \"R1 + L1\"\n[parts.R1]\nvalue = \"100 ohm\"\n[parts.L1]\nvalue = \"0.5 H\"",
        );
        assert!(c.resonances_hz().is_empty());
    }

    #[test]
    fn the_model_keeps_name_frequency_and_file_order() {
        let c = circuit(SERIES_RLC);
        assert_eq!(c.name.as_deref(), Some("bench"));
        assert_eq!(c.frequency_hz, Some(50.0));
        let names: Vec<&str> = c.parts.iter().map(|p| p.name.as_str()).collect();
        assert_eq!(names, ["R1", "L1", "C1"]);
        assert_eq!(c.nominal_values(), vec![50.0, 0.2, 100e-6]);
        assert_eq!(c.parts[2].kind, PartKind::Capacitor);
        assert_eq!((c.parts[2].tol_low, c.parts[2].tol_high), (-0.05, 0.10));
        assert_eq!(
            c.network,
            Network::Series(vec![Network::Part(0), Network::Part(1), Network::Part(2)])
        );
    }

    #[test]
    fn describe_lists_parts_with_values_and_tolerances() {
        assert_eq!(
            circuit(SERIES_RLC).describe(),
            "R1 50 Ω ±5 % + L1 200 mH ±10 % + C1 100 µF \u{2212}5/+10 %"
        );
        let c = circuit(
            "network = \"R1 + (L1 || C1)\"\n[parts.R1]\nvalue = \"4.7 kohm\"\n[parts.L1]\nvalue = \"10 mH\"\n\
             series_resistance = \"2.1 ohm\"\n[parts.C1]\nvalue = \"33 nF\"\ntolerance = \"2.5%\"",
        );
        assert_eq!(
            c.describe(),
            "R1 4.7 kΩ + (L1 10 mH with 2.1 Ω winding || C1 33 nF ±2.5 %)"
        );
    }

    #[test]
    fn a_declared_kind_that_agrees_is_accepted() {
        let c = circuit("network = \"C1\"\n[parts.C1]\nvalue = \"1 uF\"\nkind = \"capacitor\"");
        assert_eq!(c.parts[0].kind, PartKind::Capacitor);
        assert_eq!(c.network, Network::Part(0));
    }

    #[test]
    fn the_demo_models_give_the_handbook_angles() {
        // Textbook formulas as in the tests above: 31.800° (series RLC) and 32.482° (R ∥ L).
        let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("fixtures");
        let rlc = Circuit::load(&dir.join("demo-lab-bench-series-rlc.toml"));
        let rl = Circuit::load(&dir.join("demo-lab-bench-parallel-rl.toml"));
        let (rlc, rl) = match (rlc, rl) {
            (Ok(a), Ok(b)) => (a, b),
            (a, b) => panic!("demo models should load: {:?} {:?}", a.err(), b.err()),
        };
        assert!((phase_deg(rlc.nominal_impedance(50.0)) - 31.800).abs() < 5e-4);
        assert!((phase_deg(rl.nominal_impedance(50.0)) - 32.482).abs() < 5e-4);
        assert_eq!(rlc.frequency_hz, Some(50.0));
        assert_eq!((rlc.parts[2].tol_low, rlc.parts[2].tol_high), (-0.05, 0.10));
        assert_eq!((rl.parts[0].tol_low, rl.parts[0].tol_high), (-0.01, 0.01));
    }

    // ---- every error path, with its message ----

    #[test]
    fn a_missing_file_is_reported_by_name() {
        let e = Circuit::load(Path::new("no/such/model.toml"))
            .err()
            .map(|e| e.to_string());
        assert_eq!(
            e.as_deref(),
            Some("no/such/model.toml: cannot read the model file: the file does not exist")
        );
    }

    #[test]
    fn a_toml_syntax_error_names_line_and_column() {
        // The explanation after "not a valid TOML file:" is the toml crate's own.
        assert_eq!(
            error("network = \"R1\"\n[parts.R1\nvalue = \"1 ohm\"\n"),
            "bench.toml: line 2, column 10: not a valid TOML file: unclosed table, expected `]`"
        );
        let e = error("network = \"R1\"\nname = \n");
        assert!(
            e.starts_with("bench.toml: line 2, column 8: not a valid TOML file: "),
            "{e}"
        );
        assert!(!e.contains('\n') && !e.ends_with('.'), "{e}");
    }

    #[test]
    fn unknown_keys_are_refused_with_the_keys_that_exist() {
        assert_eq!(
            error("network = \"R1\"\ncolour = \"red\"\n[parts.R1]\nvalue = \"1 ohm\""),
            "bench.toml: line 2, column 1: unknown key 'colour', expected name, frequency_hz, \
             network or parts"
        );
        assert_eq!(
            error("network = \"R1\"\n[parts.R1]\nvalue = \"1 ohm\"\n  tolerence = \"5%\""),
            "bench.toml: line 4, column 3: unknown key 'tolerence' in part 'R1', expected value, \
             tolerance, series_resistance or kind"
        );
    }

    #[test]
    fn a_part_missing_from_the_definitions_is_named_with_its_column() {
        assert_eq!(
            error(
                "network = \"R1 + L1 + C3\"\n[parts.R1]\nvalue = \"1 ohm\"\n[parts.L1]\nvalue = \"1 H\""
            ),
            "bench.toml: line 1: unknown part 'C3' in network at column 11"
        );
    }

    #[test]
    fn a_defined_part_left_out_of_the_network_is_an_error() {
        assert_eq!(
            error("network = \"R1\"\n[parts.R1]\nvalue = \"1 ohm\"\n[parts.R2]\nvalue = \"1 ohm\""),
            "bench.toml: line 4, column 8: part 'R2' is defined but not used in network"
        );
    }

    #[test]
    fn a_part_used_twice_is_an_error() {
        assert_eq!(
            error(
                "network = \"R1 + (R1 || L1)\"\n[parts.R1]\nvalue = \"1 ohm\"\n[parts.L1]\nvalue = \"1 H\""
            ),
            "bench.toml: line 1: part 'R1' appears twice in network, at columns 1 and 7"
        );
    }

    #[test]
    fn bad_network_expressions_give_line_and_column() {
        let parts = "\n[parts.R1]\nvalue = \"1 ohm\"\n[parts.L1]\nvalue = \"1 H\"\n[parts.C1]\nvalue = \"1 F\"";
        let e = |net: &str| error(&format!("network = \"{net}\"{parts}"));
        assert_eq!(
            e("R1 + L1 ) + C1"),
            "bench.toml: line 1: unexpected ')' at column 9"
        );
        assert_eq!(
            e("R1 +(L1 || C1"),
            "bench.toml: line 1: missing ')' opened at column 5"
        );
        assert_eq!(e(""), "bench.toml: line 1: empty network");
        assert_eq!(
            e("R1 + L1 + C1 +"),
            "bench.toml: line 1: network ends after '+' at column 14, expected a part name or '('"
        );
    }

    #[test]
    fn unknown_units_prefixes_and_numbers_point_at_the_value() {
        let e = |v: &str| error(&format!("network = \"C1\"\n[parts.C1]\nvalue = \"{v}\""));
        assert_eq!(
            e("22 uQ"),
            "bench.toml: line 3, column 9: '22 uQ': unknown unit 'Q', expected ohm, H or F"
        );
        assert_eq!(
            e("2,2 uF"),
            "bench.toml: line 3, column 9: '2,2 uF': write decimals with a point, like '2.2 uF'"
        );
        assert_eq!(
            e("1.2.3 uF"),
            "bench.toml: line 3, column 9: '1.2.3 uF': '1.2.3' is not a number"
        );
        assert_eq!(
            e("-22 uF"),
            "bench.toml: line 3, column 9: '-22 uF': the value must be greater than zero"
        );
        assert_eq!(
            e("0 uF"),
            "bench.toml: line 3, column 9: '0 uF': the value must be greater than zero"
        );
        assert_eq!(
            e("22 xF"),
            "bench.toml: line 3, column 9: '22 xF': unknown prefix 'x', expected p, n, u, µ, m, \
             k, M or G"
        );
        assert_eq!(
            error("network = \"C1\"\n[parts.C1]\nvalue = 22"),
            "bench.toml: line 3, column 9: value of part 'C1' must be text in quotes with a \
             unit, like \"50 ohm\""
        );
    }

    #[test]
    fn a_bad_tolerance_points_at_the_tolerance() {
        assert_eq!(
            error("network = \"C1\"\n[parts.C1]\nvalue = \"1 uF\"\ntolerance = \"5\""),
            "bench.toml: line 4, column 13: '5': bad tolerance, expected a percentage like \
             '±5%', '5%' or '-5%/+10%'"
        );
    }

    #[test]
    fn a_kind_that_contradicts_the_unit_is_refused() {
        assert_eq!(
            error("network = \"C1\"\n[parts.C1]\nvalue = \"100 uF\"\nkind = \"inductor\""),
            "bench.toml: line 4, column 8: part 'C1' is declared an inductor but its value \
             '100 uF' is for a capacitor"
        );
        assert_eq!(
            error("network = \"C1\"\n[parts.C1]\nvalue = \"100 uF\"\nkind = \"cap\""),
            "bench.toml: line 4, column 8: 'cap': unknown kind, expected resistor, inductor or \
             capacitor"
        );
    }

    #[test]
    fn series_resistance_is_only_for_inductors_and_in_ohm() {
        assert_eq!(
            error("network = \"R1\"\n[parts.R1]\nvalue = \"1 ohm\"\nseries_resistance = \"1 ohm\""),
            "bench.toml: line 4, column 21: part 'R1' is a resistor: series_resistance is only \
             for inductors"
        );
        assert_eq!(
            error("network = \"L1\"\n[parts.L1]\nvalue = \"1 H\"\nseries_resistance = \"2 H\""),
            "bench.toml: line 4, column 21: '2 H': series_resistance must be in ohm"
        );
    }

    #[test]
    fn missing_network_parts_and_values_are_named() {
        assert_eq!(
            error("[parts.R1]\nvalue = \"1 ohm\""),
            "bench.toml: no network given, add a line like network = \"R1 + L1\""
        );
        assert_eq!(
            error("network = \"R1\""),
            "bench.toml: no parts defined, add a table like [parts.R1] with value = \"50 ohm\""
        );
        assert_eq!(
            error("network = \"R1\"\n[parts.R1]\ntolerance = \"5%\""),
            "bench.toml: line 2, column 8: part 'R1' has no value, add a line like \
             value = \"50 ohm\""
        );
    }

    #[test]
    fn wrong_types_and_bad_frequencies_are_refused() {
        let parts = "\n[parts.R1]\nvalue = \"1 ohm\"";
        assert_eq!(
            error(&format!("network = \"R1\"\nfrequency_hz = 0{parts}")),
            "bench.toml: line 2, column 16: frequency_hz must be greater than zero, found 0"
        );
        assert_eq!(
            error(&format!(
                "network = \"R1\"\nfrequency_hz = \"50 Hz\"{parts}"
            )),
            "bench.toml: line 2, column 16: frequency_hz must be a number, like 50"
        );
        assert_eq!(
            error(&format!("network = 5{parts}")),
            "bench.toml: line 1, column 11: network must be text in quotes, like \"R1 + L1\""
        );
        assert_eq!(
            error("network = \"R1\"\nparts = 3"),
            "bench.toml: line 2, column 9: parts must be tables, like [parts.R1]"
        );
        assert_eq!(
            error("network = \"R1\"\n[parts]\nR1 = \"1 ohm\""),
            "bench.toml: line 3, column 6: part 'R1' must be a table, like [parts.R1] with \
             value = \"50 ohm\""
        );
        assert_eq!(
            error("network = \"R1\"\n[parts.\"R 1\"]\nvalue = \"1 ohm\""),
            "bench.toml: line 2, column 8: part name 'R 1' may hold only letters, digits, '_' \
             and '-'"
        );
    }

    #[test]
    fn frequency_accepts_integers_and_decimals() {
        let c = circuit("frequency_hz = 59.94\nnetwork = \"R1\"\n[parts.R1]\nvalue = \"1 ohm\"");
        assert_eq!(c.frequency_hz, Some(59.94));
    }
}
