//! tracephase
pub mod capture;
pub mod condition;
pub mod estimate;
pub mod warning;
