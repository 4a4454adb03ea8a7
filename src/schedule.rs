//! schedule (being written).
