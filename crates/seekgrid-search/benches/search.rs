//! Benchmarks of seekgrid-search (see docs/benchmarks/search.md).

fn main() {}
