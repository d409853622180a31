//! Errors of the search crate.

use thiserror::Error;

/// What went wrong when scoring, applying or planning a search. Each message names the search
/// field at fault and says how to fix the input.
#[derive(Debug, Error, Clone, PartialEq)]
#[non_exhaustive]
pub enum SearchError {
    /// The base sweep width is not a positive finite number of metres.
    #[error(
        "sweep width {sweep_width_m} m is not usable; give sweep_width_m as a positive number of metres from your detection tables or trials"
    )]
    BadSweepWidth {
        /// The value given, metres.
        sweep_width_m: f64,
    },
    /// A sweep width correction factor is not a positive finite multiplier.
    #[error(
        "sweep width correction factor {index} is {factor}; give each correction (weather, fatigue, speed) as a positive multiplier such as 0.8"
    )]
    BadCorrectionFactor {
        /// Position of the factor in the list, from 0.
        index: usize,
        /// The value given.
        factor: f64,
    },
    /// A pattern field is out of range.
    #[error("{pattern}: {field} = {value} is not usable; {fix}")]
    BadPattern {
        /// The kind of pattern ("parallel sweep", ...).
        pattern: &'static str,
        /// The field at fault.
        field: &'static str,
        /// The value given.
        value: f64,
        /// How to fix it.
        fix: &'static str,
    },
    /// A track with fewer than two points.
    #[error(
        "the track has {points} point(s); a searched track needs at least 2 points in time order"
    )]
    TrackTooShort {
        /// Points given.
        points: usize,
    },
    /// A track point that is not finite.
    #[error(
        "track point {index} is not a finite position in the working frame; remove or repair that fix"
    )]
    TrackPointNotFinite {
        /// Index of the point.
        index: usize,
    },
    /// All track points coincide.
    #[error(
        "the track has zero length (all points at one place); give the track the unit actually steered, or record the search as a pattern"
    )]
    TrackHasNoLength,
    /// The track (with the reach of the detection law) does not touch the grid.
    #[error(
        "the searched track lies entirely outside the grid (reach {reach_m} m included); check the track's coordinates and frame, or widen the grid"
    )]
    TrackOutsideGrid {
        /// Reach of the detection law used, metres.
        reach_m: f64,
    },
    /// The pattern area does not touch the grid.
    #[error(
        "the {pattern} area lies entirely outside the grid; check its centre and size, or widen the grid"
    )]
    PatternOutsideGrid {
        /// The kind of pattern.
        pattern: &'static str,
    },
    /// A POD layer made for another grid.
    #[error(
        "the POD layer was made for a {layer_rows} x {layer_cols} grid but the belief or array has {rows} x {cols} cells; rasterise the search on the belief's own grid"
    )]
    GridMismatch {
        /// Rows of the layer's grid.
        layer_rows: usize,
        /// Columns of the layer's grid.
        layer_cols: usize,
        /// Rows of the target.
        rows: usize,
        /// Columns of the target.
        cols: usize,
    },
    /// The particle POD list does not match the particles.
    #[error(
        "particle POD has {got} values but the belief has {expected} particles; evaluate the search at every particle (track_pod_at / pattern_pod_at)"
    )]
    ParticleCountMismatch {
        /// Particles in the belief.
        expected: usize,
        /// Values given.
        got: usize,
    },
    /// A probability of detection outside 0..=1 or not finite.
    #[error("{what} has POD {value}; a POD must be a number in 0..=1")]
    BadPod {
        /// Which cell or particle.
        what: String,
        /// The value.
        value: f64,
    },
    /// The search would have found the object with certainty, yet it was not found.
    #[error(
        "the search has POS {pos}: every place holding probability was searched with POD 1, so an unsuccessful search contradicts the inputs; lower the POD (sweep width, coverage) or add rest-of-world probability"
    )]
    CertainDetectionContradicted {
        /// The probability of success computed.
        pos: f64,
    },
    /// Total effort not a finite non-negative area.
    #[error(
        "effort {effort_m2} m² is not usable; give the effort as sweep width x track length, a non-negative number of square metres"
    )]
    BadEffort {
        /// The value given.
        effort_m2: f64,
    },
    /// A cell area that is not positive and finite.
    #[error("cell {index} has area {area_m2} m²; every cell area must be positive")]
    BadCellArea {
        /// Cell index (row-major).
        index: usize,
        /// The value given.
        area_m2: f64,
    },
    /// A cell mass that is negative or not finite, or masses adding up to more than 1.
    #[error("cell masses are invalid: {what}")]
    BadMass {
        /// What is wrong.
        what: String,
    },
    /// There is no probability in any searchable cell.
    #[error(
        "no cell holds probability, so there is nothing to allocate effort to; build the prior first"
    )]
    NothingToSearch,
}
