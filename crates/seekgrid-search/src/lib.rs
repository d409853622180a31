//! Search theory for seekgrid: detection laws, the POD of completed searches on cells and
//! particles, the Bayesian update after an unsuccessful search, and the optimal allocation of
//! effort.
//!
//! * [`DetectionLaw`] and [`SweepWidth`]: Koopman's laws, coverage → POD and lateral range
//!   curves.
//! * [`Pattern`]: parallel sweep, creeping line, expanding square and sector search, with
//!   their areas and tracks; [`pattern_pod`] / [`pattern_pod_at`] score them.
//! * [`track_pod`] / [`track_pod_at`]: the POD of an actual track (GPS) per cell or per point.
//! * [`PodLayer`]: one search's POD on a window of the grid; cumulative POD with
//!   [`PodLayer::combine_into`].
//! * [`update_after_miss`]: `p_i' = p_i (1 - d_i) / (1 - POS)` over cells, particles and rest
//!   of world, with an [`UpdateOutcome`].
//! * [`optimal_allocation`]: Stone's optimal effort for exponential detection, the upper bound
//!   for any plan of the same effort under that law.
//!
//! This crate knows nothing of files, TOML, GPX or GeoJSON: geometry comes in the working frame
//! (metres, `geo` types), and it does no I/O.
//!
//! ```
//! use geo::Coord;
//! use ndarray::Array2;
//! use seekgrid_core::{Belief, GridSpec, Particles, DEFAULT_MAX_CELLS};
//! use seekgrid_search::{pattern_pod, update_after_miss, DetectionLaw, Pattern, Rectangle, SweepWidth};
//!
//! // 10 x 10 cells of 100 m; all mass spread evenly over the grid but 10 % rest of world.
//! let grid = GridSpec::new(0.0, 1000.0, 100.0, 10, 10, DEFAULT_MAX_CELLS).unwrap();
//! let cells = Array2::from_elem((10, 10), 0.009);
//! let mut belief = Belief::new(grid, cells, Particles::default(), 0.1).unwrap();
//!
//! // A parallel sweep of the west half at coverage 1 with a 50 m sweep width.
//! let w = SweepWidth::new(50.0, &[]).unwrap();
//! let sweep = Pattern::ParallelSweep(Rectangle {
//!     center: Coord { x: 250.0, y: 500.0 },
//!     length_m: 1000.0,
//!     width_m: 500.0,
//!     major_grid_bearing_deg: 0.0,
//!     track_spacing_m: 50.0,
//! });
//! let pod = pattern_pod(&grid, &sweep, DetectionLaw::InverseCube, &w).unwrap();
//! assert!((pod.get(5, 2) - 0.789909).abs() < 1e-6); // erf(√π/2)
//!
//! let outcome = update_after_miss(&mut belief, &pod, &[]).unwrap();
//! assert!((outcome.pos - 0.45 * 0.789909).abs() < 1e-6);
//! assert!((belief.total_mass() - 1.0).abs() < 1e-12);
//! ```

// A pure library: it prints nothing (results go back to the caller) and reads no files,
// environment or clock (this crate's clippy.toml lists the disallowed functions).
#![deny(clippy::print_stdout, clippy::print_stderr, clippy::dbg_macro)]

pub mod allocation;
mod blocks;
mod coverage;
pub mod error;
pub mod law;
pub mod pattern;
pub mod pod_layer;
mod split;
mod sum;
pub mod track;
pub mod update;

pub use allocation::{
    CellAllocation, OptimalAllocation, optimal_allocation, optimal_allocation_per_cell,
};
pub use error::SearchError;
pub use law::{DetectionLaw, SweepWidth};
pub use pattern::{Pattern, Rectangle, pattern_pod, pattern_pod_at};
pub use pod_layer::PodLayer;
pub use track::{track_pod, track_pod_at, track_pod_sampled};
pub use update::{UpdateOutcome, update_after_miss};
