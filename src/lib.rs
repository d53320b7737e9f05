//! tracephase
pub mod analysis;
pub mod capture;
pub mod condition;
pub mod estimate;
pub mod quantity;
pub mod synth;
pub mod warning;

pub use analysis::{Analysis, AnalysisError, Settings, analyze, analyze_traces};
