//! Integration tests of seekgrid-search, one binary with a module per topic.

mod allocation;
mod fixtures;
mod laws;
mod pattern;
mod properties;
mod track;
mod update;
