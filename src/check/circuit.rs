//! Circuit model (being written).
