//! Integration tests of seekgrid-prior, one binary with a module per topic.

mod common;
mod conservation;
mod credibility;
mod errors;
mod point;
mod polygons;
mod pooling;
mod rings;
mod route;
