//! The seekgrid incident file: reading, validation with line and column, and the validated model.
//!
//! * [`load()`] reads an incident file (TOML) and every file it names, and returns a
//!   validated [`Incident`] or every problem found as `FILE:LINE:COL: message`.
//! * [`model`] is the validated incident, positions still in WGS84 lon/lat.
//! * [`record`] is the track record CSV (analysts' scores across incidents): its one row
//!   type and its reader.
//! * [`edit`] appends a completed search to an incident file safely (comments kept, new text
//!   validated, atomic replace with a backup, refused when the file changed meanwhile).
//! * [`warning`]: what is legal but suspect ([`Incident::warnings`] for what the file alone
//!   shows; the engine adds what needs the computation).
//! * [`tasking`] is the tasking file a plan writes (`tasking.toml`) and `seekgrid log` reads.
//!
//! This crate reads input files and edits the incident file (that is what it exists for); it knows nothing of search
//! theory, and computes nothing from the incident (that is `seekgrid-engine`).

pub mod crs;
pub mod edit;
pub mod error;
pub mod file;
pub mod forecast;
pub mod geofiles;
pub mod input;
pub mod load;
pub mod locate;
pub mod model;
pub mod record;
pub mod tasking;
pub mod warning;

pub use error::{ErrorKind, IncidentError};
pub use load::{IncidentErrors, load, parse};
pub use model::Incident;
pub use warning::{LocatedWarning, Warning, WarningKind};
