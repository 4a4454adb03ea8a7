//! corridor_files (being written).
