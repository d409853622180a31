//! Monte Carlo drift of a floating object from its last known position.
//!
//! Main types:
//! * [`DriftScenario`]: last known position and its error, the adrift window, the total water
//!   current and the wind ([`Environment`]: constant, time series or [`GriddedField`]), the
//!   object's [`Leeway`], a diffusivity, particle count and seed;
//! * [`simulate()`]: weighted particles advanced through time (rayon, reproducible at any thread
//!   count), stranding on a [`LandMask`];
//! * [`DriftRun`]: the result, giving a [`ParticleSnapshot`] or a [`Spread`] (mean and
//!   covariance, containment [`Ellipse`]s) at any time of the run.
//!
//! Directions follow docs/architecture.md (cross-cutting invariants): the current is given by
//! the direction it flows toward, the wind by the direction it blows from ([`Convention`]). All
//! positions inside are working frame metres ([`seekgrid_core::Frame`]).
//!
//! This crate does no I/O: it takes parsed values, reads no clock, prints nothing, and reports
//! progress only through the callback given to [`simulate()`].
//!
//! ```
//! use chrono::{TimeZone, Utc};
//! use seekgrid_core::Frame;
//! use seekgrid_drift::*;
//!
//! let t0 = Utc.with_ymd_and_hms(2024, 5, 1, 6, 0, 0).unwrap();
//! let calm = VectorEstimate { speed_kn: 0.0, direction_deg: 0.0, speed_sigma_kn: 0.0, direction_sigma_deg: 0.0 };
//! let scenario = DriftScenario {
//!     lkp_lon_lat: (-30.5, 20.2),
//!     position_sigma_m: 0.0,
//!     adrift_earliest: t0,
//!     adrift_latest: t0,
//!     // 1 kn toward the east, no wind.
//!     current: Environment::Constant(VectorEstimate { speed_kn: 1.0, direction_deg: 90.0, ..calm }),
//!     wind: Environment::Constant(calm),
//!     leeway: Leeway::NONE,
//!     diffusivity_m2_s: 0.0,
//!     particles: 100,
//!     seed: 7,
//! };
//! let frame = Frame::for_position(-30.5, 20.2).unwrap();
//! let options = SimulationOptions {
//!     end: t0 + chrono::Duration::hours(2),
//!     record_every_s: seekgrid_core::units::SECONDS_PER_HOUR,
//!     step_s: None,
//!     also_record_at: Vec::new(),
//! };
//! let run = simulate(&scenario, &frame, None, &options, &|_done, _total| {}).unwrap();
//! let spread = run.spread_at(options.end, &run.initial_weights()).unwrap();
//! let lkp = frame.to_xy(-30.5, 20.2);
//! // Two hours at one knot: 2 NM (3704 m), almost all of it along grid east near the LKP.
//! let moved = (spread.mean.x - lkp.x).hypot(spread.mean.y - lkp.y);
//! assert!((moved - seekgrid_core::units::nm_to_m(2.0)).abs() < 5.0);
//! ```

// A pure library: it prints nothing (results go back to the caller) and reads no files,
// environment or clock (this crate's clippy.toml lists the disallowed functions).
#![deny(clippy::print_stdout, clippy::print_stderr, clippy::dbg_macro)]
#![deny(missing_docs)]

pub mod environment;
pub mod error;
pub mod land;
pub mod leeway;
pub mod simulate;
pub mod spread;

/// A time, UTC.
pub type Time = chrono::DateTime<chrono::Utc>;

pub use environment::{
    BeyondBox, Convention, Environment, GridSample, GriddedField, RegularAxis, VectorEstimate,
};
pub use error::DriftError;
pub use land::LandMask;
pub use leeway::{Leeway, MAX_JIBE_PER_H};
pub use simulate::{
    DriftRun, DriftScenario, MAX_PARTICLES, ParticleSnapshot, SimulationOptions, simulate,
};
pub use spread::{Ellipse, Spread, containment_radius_factor};
