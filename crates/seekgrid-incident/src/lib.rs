//! The seekgrid incident file: reading, validation with line and column, and the validated model.
//!
//! * [`load()`] reads an incident file (TOML) and every file it names, and returns a
//!   validated [`Incident`] or every problem found as `FILE:LINE:COL: message`.
//! * [`model`] is the validated incident, positions still in WGS84 lon/lat.
//! * [`record`] is the track record CSV (analysts' scores across incidents): its one row
//!   type and its reader.
//!
//! This crate reads input files (that is what it exists for); it knows nothing of search
//! theory, and computes nothing from the incident (that is `seekgrid-engine`).

pub mod error;
pub mod file;
pub mod geofiles;
pub mod load;
pub mod locate;
pub mod model;
pub mod record;

pub use error::{ErrorKind, IncidentError};
pub use load::{IncidentErrors, load, parse};
pub use model::Incident;
