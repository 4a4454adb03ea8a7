//! Benchmark (placeholder until written).
fn main() {}
