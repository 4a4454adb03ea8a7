//! flight_files (being written).
