//! flight (being written).
