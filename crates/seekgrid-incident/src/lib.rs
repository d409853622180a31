//! The seekgrid incident file and the timeline of an incident.
//!
//! * [`load()`] reads an incident file (TOML) and every file it names, and returns a
//!   validated [`Incident`] or every problem found as `FILE:LINE:COL: message`.
//! * [`prepare::prepare`] projects it into the working frame (UTM) as values of the prior,
//!   drift and search crates.
//! * [`timeline::map`] computes the belief at a time: prior, drift, and every completed search
//!   applied in time order as a Bayesian update.
//! * [`outputs::write`] writes the chosen layers through seekgrid-render, and
//!   [`summary::summarise`] says what was computed.
//!
//! This crate reads input files (that is what it exists for) and writes outputs only through
//! seekgrid-render's atomic output folder.

pub mod error;
pub mod file;
pub mod geofiles;
pub mod input;
pub mod load;
pub mod locate;
pub mod model;
pub mod outputs;
pub mod plan_outputs;
pub mod planning;
pub mod prepare;
pub mod raster;
pub mod slices;
pub mod summary;
pub mod timeline;

pub use error::{ErrorKind, IncidentError};
pub use load::{IncidentErrors, load, parse};
pub use model::Incident;
