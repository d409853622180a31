//! Core types of seekgrid: the working frame, grid geometry, units and the belief.
//!
//! * [`frame::Frame`]: WGS84 longitude/latitude to and from UTM metres (Krüger series).
//! * [`projected::ProjectedCrs`]: any projected CRS by EPSG code (proj4rs), its WKT, point
//!   scale factor and fit to a position; the polar stereographic choice beyond the UTM range.
//! * [`grid::GridSpec`]: square cells of `cell_m` in that frame, row 0 at the north edge.
//! * [`belief::Belief`]: the probability distribution of the object's position, as cell
//!   masses, weighted particles and rest of world, always adding up to 1.
//! * [`units`]: the conversion factors (nautical miles, knots).
//! * [`rank::truth_rank`]: the mass and area of the cells denser than the place where the
//!   object was found.
//!
//! This crate does no I/O, keeps no global state and knows nothing of file formats.
//!
//! ```
//! use seekgrid_core::{belief::Belief, frame::Frame, grid::{GridSpec, ProjectedBox, DEFAULT_MAX_CELLS}};
//! let frame = Frame::for_position(-30.5, 20.2).unwrap();
//! let centre = frame.to_xy(-30.5, 20.2);
//! let grid = GridSpec::covering(&ProjectedBox::around(centre, 5_000.0, 5_000.0), 250.0, DEFAULT_MAX_CELLS).unwrap();
//! assert!(grid.rows() >= 40 && grid.cols() >= 40 && grid.cell_m() == 250.0);
//! let belief = Belief::all_rest_of_world(grid);
//! assert_eq!(belief.rest_of_world(), 1.0);
//! ```

// A pure library: it prints nothing (results go back to the caller) and reads no files,
// environment or clock (this crate's clippy.toml lists the disallowed functions).
#![deny(clippy::print_stdout, clippy::print_stderr, clippy::dbg_macro)]

pub mod belief;
pub mod error;
pub mod frame;
pub mod grid;
pub mod mass;
pub mod particle_density;
pub mod projected;
pub mod rank;
pub mod units;

pub use belief::{Belief, BeliefParts, Particles};
pub use error::CoreError;
pub use frame::{Frame, Hemisphere, UtmZone};
pub use grid::{DEFAULT_MAX_CELLS, GridSpec, ProjectedBox};
pub use mass::neumaier_sum;
pub use projected::ProjectedCrs;
pub use rank::{TruthRank, truth_rank};
