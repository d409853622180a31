//! Integration tests of seekgrid-search, one binary with a module per topic.

mod fixtures;
mod laws;
mod track;
mod update;
