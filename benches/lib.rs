//! Benchmark support (placeholder until the solver benchmarks land).
