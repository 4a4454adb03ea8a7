//! corridor (being written).
