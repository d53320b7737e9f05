//! Verdicts: does a measurement agree with what is expected of it?
//!
//! Input: measured quantities with their uncertainties, and an expectation (a circuit model with
//! tolerances). Output: bands, verdicts and explanations.
//!
//! - [`circuit`]: the circuit model file (TOML), part values with SI prefixes and tolerances, and
//!   the network expression (`R1 + L1 + (C1 || C2)`); impedance at any frequency.
//! - [`tolerance`]: the band of phase angles the tolerances allow, by worst-case search over the
//!   tolerance box and by seeded Monte Carlo.
//! - [`decision`]: the guarded decision rule (ILAC-G8:09/2019) shared by every verdict.
//! - [`expected`]: a measured angle against a model's band, and which part would explain a gap.

pub mod bank;
pub mod circuit;
pub mod decision;
pub mod expected;
pub mod meter;
pub mod tolerance;
pub mod wiring;
