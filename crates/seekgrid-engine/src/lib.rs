//! The seekgrid engine: from a validated incident to plain result values.
//!
//! * [`prepare::prepare`] projects the incident into the working frame (UTM) as values of the
//!   prior, drift and search crates.
//! * [`timeline::map`] computes the belief at a time: prior, drift, and every completed search
//!   applied in time order as a Bayesian update, returned as an [`IncidentMap`].
//! * [`warnings`]: what is legal but suspect, found while computing (kept in
//!   [`IncidentMap::warnings`]; [`warnings::before_computing`] for `check`).
//! * [`IncidentMap::segment_table`]: each segment's POA, integrated over its polygons.
//! * [`planning::plan_at`] plans the next period against the belief at its start.
//! * [`review::review`] replays an ended incident against its outcome: the timeline of POS and
//!   effort, the searches over the found position, the analysts' scores, and the optimal
//!   allocation of each period's effort.
//! * [`credibility::credibility`] reads a track record across incidents: each analyst's mean
//!   log score and suggested weight, whether their biases share a direction, and whether the
//!   pooled map beat the best single analyst.
//!
//! Every error of the engine can name the part of the incident file it concerns
//! ([`MapError::item`], [`PlanRunError::item`], [`prepare::PrepareError::item`]).
//!
//! The engine knows the incident model (`seekgrid-incident`) and the search theory crates; it
//! knows no output format (no GeoJSON, no JSON, no pictures) and does no I/O: every file a user
//! receives is written by `seekgrid-render` from the values returned here.

pub mod credibility;
mod located;
pub mod phases;
pub mod planning;
pub mod prepare;
pub mod review;
pub mod segments;
pub mod sizing;
pub mod slices;
pub mod timeline;
pub mod warnings;

pub use planning::{PlanRun, PlanRunError, plan_at};
pub use review::{Outcome, Review, ReviewError, review};
pub use segments::SegmentTable;
pub use timeline::{IncidentMap, MapError, MapOptions, Progress, SearchReport, map};
