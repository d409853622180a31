//! Errors of the planning crate.

use seekgrid_search::SearchError;
use thiserror::Error;

/// What went wrong when planning a search. Each message names the unit, option or segment at
/// fault and says how to fix the input.
#[derive(Debug, Error, Clone, PartialEq)]
#[non_exhaustive]
pub enum PlanError {
    /// No search unit was given.
    #[error(
        "no search units were given; add at least one unit with its speed, hours on scene and sweep width"
    )]
    NoUnits,
    /// A unit field is not usable (not positive, not finite, out of range).
    #[error("unit \"{unit}\": {field} = {value} is not usable; {fix}")]
    BadUnit {
        /// The unit's id.
        unit: String,
        /// The field at fault (`speed_mps`, `hours_on_scene`, `sweep_width_m`, ...).
        field: &'static str,
        /// The value given.
        value: f64,
        /// How to fix it.
        fix: &'static str,
    },
    /// Two units share one id.
    #[error("unit id \"{unit}\" is given twice; give every search unit its own id")]
    DuplicateUnit {
        /// The repeated id.
        unit: String,
    },
    /// A planning option is out of range.
    #[error("plan option {field} = {value} is not usable; {fix}")]
    BadOption {
        /// The option at fault.
        field: &'static str,
        /// The value given.
        value: f64,
        /// How to fix it.
        fix: &'static str,
    },
    /// The belief holds no probability that a search could reach.
    #[error(
        "the belief holds no probability in the grid or in particles inside it (rest of world {rest_of_world}, particles outside the grid {particles_outside}); build the prior first, or widen the grid so that it holds the particles"
    )]
    NothingToSearch {
        /// Rest-of-world mass of the belief.
        rest_of_world: f64,
        /// Mass of the particles that lie outside the grid.
        particles_outside: f64,
    },
    /// No area for a unit could be found that keeps clear of the other units' areas.
    #[error(
        "unit \"{unit}\": no search area clear of the other units' areas fits; set allow_overlap, give the units less endurance, or widen the grid"
    )]
    NoRoomForUnit {
        /// The unit's id.
        unit: String,
    },
    /// No land segments were given.
    #[error("no segments were given; give at least one segment with its POA and area")]
    NoSegments,
    /// A segment field is not usable.
    #[error("segment \"{segment}\": {field} = {value} is not usable; {fix}")]
    BadSegment {
        /// The segment's id.
        segment: String,
        /// The field at fault (`poa` or `area_m2`).
        field: &'static str,
        /// The value given.
        value: f64,
        /// How to fix it.
        fix: &'static str,
    },
    /// Two segments share one id.
    #[error("segment id \"{segment}\" is given twice; give every segment its own id")]
    DuplicateSegment {
        /// The repeated id.
        segment: String,
    },
    /// The segments' POA add up to more than 1.
    #[error(
        "the segments' POA add up to {total}, more than 1; give POA as probabilities (fractions) whose total with rest of world is 1"
    )]
    SegmentPoaOverOne {
        /// The total.
        total: f64,
    },
    /// A computation of the search crate refused its input.
    #[error("search computation failed: {0}")]
    Search(#[from] SearchError),
}
