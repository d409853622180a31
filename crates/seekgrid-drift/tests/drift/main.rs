//! Integration tests of seekgrid-drift, one binary with a module per topic.

mod common;
mod conventions;
mod diffusion;
mod errors;
mod gridded;
mod leeway;
mod properties;
mod reproducibility;
mod snapshots;
mod spread;
mod stranding;
mod zero_error;
