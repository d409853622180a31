//! Integration tests of seekgrid-drift, one binary with a module per topic.

mod common;
mod conventions;
mod snapshots;
mod zero_error;
