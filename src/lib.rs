//! tracephase
pub mod capture;
pub mod warning;
