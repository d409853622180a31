//! Search planning for seekgrid: given the belief at the start of a search period and the
//! units available, the optimal-effort bound and a practical plan.
//!
//! * [`UnitSpec`] / [`UnitKind`]: a search unit's speed, hours on scene, sweep width, minimum
//!   track spacing and detection law.
//! * [`optimal_bound`] → [`OptimalBound`]: Stone's optimal allocation of the units' total
//!   effort for exponential detection, the upper bound of the POS of every plan whose units
//!   have that law (units with another law can pass it: docs/references.md §4).
//! * [`plan`] → [`Plan`]: one area per unit ([`UnitAssignment`]: pattern, track spacing,
//!   commence search point, waypoints and [`Leg`]s in grid bearings, POD, POS), the joint POS
//!   and its efficiency against the bound, with the heuristics used stated in `notes`.
//! * [`assign_teams_to_segments`] → [`SegmentPlan`]: land search, ground teams to whole
//!   segments.
//! * [`PlanOptions`]: every heuristic's knob, with stated defaults; [`PlanError`].
//!
//! Pure computation: no I/O, no clock, no global state. Results do not depend on the number
//! of threads.
//!
//! ```
//! use ndarray::Array2;
//! use seekgrid_core::{Belief, GridSpec, Particles, DEFAULT_MAX_CELLS};
//! use seekgrid_plan::{plan, PlanOptions, UnitKind, UnitSpec};
//! use seekgrid_search::DetectionLaw;
//!
//! // Invented example: 40 x 40 cells of 250 m, all mass in a 2 x 2 km block, 10 % rest of world.
//! let grid = GridSpec::new(0.0, 10_000.0, 250.0, 40, 40, DEFAULT_MAX_CELLS).unwrap();
//! let cells = Array2::from_shape_fn((40, 40), |(r, c)| {
//!     if (16..24).contains(&r) && (16..24).contains(&c) { 0.9 / 64.0 } else { 0.0 }
//! });
//! let belief = Belief::new(grid, cells, Particles::default(), 0.1).unwrap();
//! let boat = UnitSpec {
//!     id: "boat-1".into(),
//!     speed_mps: 5.0,
//!     hours_on_scene: 2.0,
//!     sweep_width_m: 400.0,
//!     track_spacing_min_m: None,
//!     law: DetectionLaw::Exponential,
//!     kind: UnitKind::Vessel,
//! };
//! let p = plan(&belief, &[boat], &PlanOptions::default()).unwrap();
//! assert!(p.pos_plan <= p.pos_optimal_bound + 1e-9);
//! assert!(p.efficiency > 0.9);
//! let a = &p.assignments[0];
//! assert_eq!(a.waypoints[0], a.commence_search_point);
//! assert!(a.hours_needed <= 2.0 + 1e-9);
//! ```

// A pure library: it prints nothing (results go back to the caller) and reads no files,
// environment or clock (this crate's clippy.toml lists the disallowed functions).
#![deny(clippy::print_stdout, clippy::print_stderr, clippy::dbg_macro)]

mod bound;
mod error;
mod geometry;
mod options;
mod plan;
mod scan;
mod segments;
mod shape;
mod unit;

pub use bound::{OptimalBound, optimal_bound};
pub use error::PlanError;
pub use options::{PatternOverRectangle, PlanOptions};
pub use plan::{Leg, Plan, UnitAssignment, plan};
pub use segments::{SegmentAssignment, SegmentPlan, assign_teams_to_segments};
pub use unit::{UnitKind, UnitSpec};
