//! tracephase
// `!(x > y)` is how this crate says "not greater, or NaN": the negation is deliberate.
#![allow(clippy::neg_cmp_op_on_partial_ord)]
pub mod analysis;
pub mod app;
pub mod capture;
pub mod cli;
pub mod condition;
pub mod estimate;
pub mod quantity;
pub mod report;
pub mod synth;
pub mod warning;

pub use analysis::{Analysis, AnalysisError, Settings, analyze, analyze_traces};
