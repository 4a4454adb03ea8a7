//! loops (being written).
