//! # tracephase
//!
//! From captured voltage and current traces to defensible numbers: fundamental frequency, the
//! phase angle by two independent methods (least-squares DFT phasors and zero crossings),
//! displacement and true power factor, THD and the harmonic spectrum, and the IEEE Std 1459-2010
//! powers.
//!
//! The modules follow the data:
//!
//! ```text
//! capture -> condition -> estimate -> quantity -> report
//! (load)     (scale,      (frequency,  (RMS, THD,   (table, JSON Lines, CSV)
//!             decimate)    phasors,     IEEE 1459,
//!                          crossings)   PF, warnings)
//! ```
//!
//! [`analysis::analyze`] runs the pipeline on one loaded [`capture::Capture`];
//! [`analyze_traces`] runs it on two slices already in volts and amperes:
//!
//! ```
//! use tracephase::synth::{Spec, Waveform, synthesize};
//! use tracephase::{Settings, analyze_traces};
//!
//! // 230 V, 10 A lagging 30°, 7.3 cycles at 50 Hz sampled at 5 kHz.
//! let v = Waveform::sine(230.0, 0.0);
//! let i = Waveform::sine(10.0, -30.0);
//! let (vs, is) = synthesize(&Spec::clean(5_000.0, 50.0, 730, v, i));
//! let (_, q) = analyze_traces(&vs, &is, 5_000.0, &Settings::default()).unwrap();
//! assert!((q.phase_angle_dft_deg.unwrap() - 30.0).abs() < 1e-9);
//! assert!((q.displacement_pf.unwrap() - 30f64.to_radians().cos()).abs() < 1e-12);
//! assert!((q.power.active_w - 2300.0 * 30f64.to_radians().cos()).abs() < 1e-6);
//! ```
#![warn(missing_docs)]
// `!(x > y)` is how this crate says "not greater, or NaN": the negation is deliberate.
#![allow(clippy::neg_cmp_op_on_partial_ord)]

pub mod analysis;
pub mod app;
pub mod batch;
pub mod capture;
pub mod check;
pub mod cli;
pub mod condition;
pub mod estimate;
pub mod memory;
pub mod quantity;
pub mod report;
pub mod synth;
pub mod trend;
pub mod warning;

pub use analysis::{Analysis, AnalysisError, Settings, analyze, analyze_traces};
