//! Analysts' weighted scenarios turned into cell probabilities on a [`GridSpec`](seekgrid_core::GridSpec).
//!
//! * [`Analyst`]: an id and a credibility weight (normalised over analysts).
//! * [`Scenario`]: an id, its analyst, a weight (normalised per analyst) and a [`ScenarioShape`]:
//!   a bivariate-normal point, a route (uniform along, normal across), an area, map segments
//!   with POA, or distance rings about the initial planning point.
//! * [`scenario_mass`]: one shape integrated over every cell (closed form or quadrature over the
//!   cell, never the density at the centre), with the mass outside the grid and the declared
//!   rest of world kept apart: [`ScenarioMass`].
//! * [`combine`]: the linear (default) or logarithmic opinion pool of all analysts, as a
//!   [`Prior`] with its [`Diagnostics`]: each analyst's Jensen-Shannon divergence from the
//!   pool, leave-one-out shifts, and the effective number of independent opinions.
//! * [`auto_extent`]: a box for the grid before it exists; [`SegmentSplit`] and
//!   [`segment_table`]: POA per segment, integrated over each segment polygon.
//! * [`credibility`]: scoring analysts against the outcome of an incident (log score, Bayes'
//!   rule on analysts, Rayleigh test of bearings) and weights suggested by a track record.
//!
//! Everything is in the working frame: metres, grid bearings. The crate does no I/O and knows
//! nothing of files or formats; mass is conserved:
//! `cells + outside_grid + rest_of_world == 1` to 1e-12.
//!
//! ```
//! use geo::Coord;
//! use seekgrid_core::{GridSpec, ProjectedBox, DEFAULT_MAX_CELLS};
//! use seekgrid_prior::{combine, auto_extent, Analyst, Pool, Scenario, ScenarioShape};
//!
//! let analysts = vec![
//!     Analyst { id: "duty officer".into(), weight: 2.0 },
//!     Analyst { id: "skipper's friend".into(), weight: 1.0 },
//! ];
//! let scenarios = vec![
//!     Scenario {
//!         id: "last known position".into(),
//!         analyst: "duty officer".into(),
//!         weight: 1.0,
//!         shape: ScenarioShape::Point {
//!             center: Coord { x: 500_000.0, y: 2_200_000.0 },
//!             sigma_major_m: 1_500.0,
//!             sigma_minor_m: 800.0,
//!             major_grid_bearing_deg: 30.0,
//!         },
//!     },
//!     Scenario {
//!         id: "planned passage".into(),
//!         analyst: "skipper's friend".into(),
//!         weight: 1.0,
//!         shape: ScenarioShape::Route {
//!             waypoints: vec![
//!                 Coord { x: 495_000.0, y: 2_195_000.0 },
//!                 Coord { x: 505_000.0, y: 2_206_000.0 },
//!             ],
//!             cross_track_sigma_m: 600.0,
//!         },
//!     },
//! ];
//! let extent = auto_extent(&scenarios).unwrap();
//! let grid = GridSpec::covering(&extent, 250.0, DEFAULT_MAX_CELLS).unwrap();
//! let prior = combine(&analysts, &scenarios, &grid, Pool::Linear).unwrap();
//! let total = prior.cells.sum() + prior.outside_grid + prior.rest_of_world;
//! assert!((total - 1.0).abs() < 1e-12);
//! assert!(prior.outside_grid < 1e-3);
//! assert!((prior.analyst_weights[0].1 - 2.0 / 3.0).abs() < 1e-15);
//! let n_eff = prior.diagnostics.effective_opinions;
//! assert!(n_eff > 1.0 && n_eff < 1.0 / (4.0 / 9.0 + 1.0 / 9.0));
//! ```

// A pure library: it prints nothing (results go back to the caller) and reads no files,
// environment or clock (this crate's clippy.toml lists the disallowed functions).
#![deny(clippy::print_stdout, clippy::print_stderr, clippy::dbg_macro)]
#![deny(missing_docs)]

pub mod credibility;
mod erfc;
mod error;
mod mass;
mod model;
mod point;
mod polygon;
mod pool;
mod quad;
mod rings;
mod route;
mod table;
mod window;

pub use error::{PriorError, ShapeError};
pub use mass::{ScenarioMass, scenario_mass};
pub use model::{
    Analyst, EXTENT_SIGMAS, POA_SUM_TOLERANCE, Pool, RingInterpolation, Scenario, ScenarioShape,
    Segment, auto_extent,
};
pub use pool::{AnalystDiagnostics, Diagnostics, Prior, combine};
pub use table::{SegmentRow, SegmentSplit, segment_table};
