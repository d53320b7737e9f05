//! Tolerance bands (being written).
