//! Errors of the prior crate.

use thiserror::Error;

/// What is wrong with one scenario's shape. Messages name the field and say how to fix it.
#[derive(Debug, Error, Clone, PartialEq)]
#[non_exhaustive]
pub enum ShapeError {
    /// A coordinate or parameter is NaN or infinite.
    #[error(
        "{field} is not a finite number; give a finite value in metres (or degrees for a bearing)"
    )]
    NotFinite {
        /// The field.
        field: String,
    },
    /// A standard deviation that is zero, negative or not finite.
    #[error("{field} is {value_m} m; give a positive standard deviation in metres")]
    BadSigma {
        /// The field (`sigma_major_m`, `sigma_minor_m`, `cross_track_sigma_m`).
        field: &'static str,
        /// The value given, metres.
        value_m: f64,
    },
    /// The minor sigma is larger than the major one.
    #[error(
        "sigma_minor_m {sigma_minor_m} m exceeds sigma_major_m {sigma_major_m} m; swap them and turn major_grid_bearing_deg by 90 degrees"
    )]
    MinorExceedsMajor {
        /// Major-axis sigma, metres.
        sigma_major_m: f64,
        /// Minor-axis sigma, metres.
        sigma_minor_m: f64,
    },
    /// A route with fewer than two waypoints.
    #[error("route has {points} waypoint(s); give at least 2")]
    RouteTooShort {
        /// Waypoints given.
        points: usize,
    },
    /// A route whose waypoints all coincide.
    #[error(
        "route has zero length (all waypoints coincide); give distinct waypoints or use a point scenario"
    )]
    RouteZeroLength,
    /// A polygon set with no area.
    #[error("{what} has no area; give at least one polygon with a positive area")]
    EmptyPolygon {
        /// Which polygon set (`area` or `segment "<id>"`).
        what: String,
    },
    /// A polygon that is not valid (self-intersecting ring, hole outside its exterior, ...).
    #[error(
        "{what}: polygon {index} is invalid ({reason}); repair the geometry (e.g. in a GIS) and retry"
    )]
    InvalidPolygon {
        /// Which polygon set.
        what: String,
        /// Index of the polygon in the multipolygon.
        index: usize,
        /// geo's description of the problem.
        reason: String,
    },
    /// Two polygons of one multipolygon overlap.
    #[error("{what}: polygons {first} and {second} overlap; merge them into one polygon")]
    OverlappingPolygons {
        /// Which polygon set.
        what: String,
        /// Index of the first polygon.
        first: usize,
        /// Index of the second polygon.
        second: usize,
    },
    /// Segments scenario without segments.
    #[error("segments scenario has no segments; give at least one segment with its POA")]
    NoSegments,
    /// POA list not aligned with the segments.
    #[error(
        "segments scenario has {segments} segments but {poa} POA values; give one POA per segment, in order"
    )]
    PoaCountMismatch {
        /// Number of segments.
        segments: usize,
        /// Number of POA values.
        poa: usize,
    },
    /// Two segments with the same id.
    #[error("segment id \"{segment}\" is used twice; give each segment its own id")]
    DuplicateSegment {
        /// The id.
        segment: String,
    },
    /// A POA that is negative, above 1 or not finite.
    #[error("POA of segment \"{segment}\" is {poa}; give a fraction in 0..=1")]
    BadPoa {
        /// The segment id.
        segment: String,
        /// The value given.
        poa: f64,
    },
    /// POA values that add up to more than 1.
    #[error(
        "POA values add up to {sum}, more than 1; lower them so that they and rest of world add up to 1"
    )]
    PoaSumAboveOne {
        /// The sum.
        sum: f64,
    },
    /// Two segments that overlap.
    #[error(
        "segments \"{first}\" and \"{second}\" overlap; make segments disjoint (they may share edges)"
    )]
    OverlappingSegments {
        /// First segment id.
        first: String,
        /// Second segment id.
        second: String,
    },
    /// Rings without quantiles.
    #[error(
        "rings scenario has no distance quantiles; give (fraction, radius_m) pairs such as (0.25, 1100), (0.5, 2000)"
    )]
    NoQuantiles,
    /// A quantile fraction outside (0, 1].
    #[error("ring quantile {index} has fraction {fraction}; give a fraction in (0, 1]")]
    BadFraction {
        /// Index of the pair.
        index: usize,
        /// The fraction given.
        fraction: f64,
    },
    /// A quantile radius that is not positive and finite.
    #[error("ring quantile {index} has radius {radius_m} m; give a positive radius in metres")]
    BadRadius {
        /// Index of the pair.
        index: usize,
        /// The radius given, metres.
        radius_m: f64,
    },
    /// Quantiles whose fractions or radii do not strictly increase.
    #[error(
        "ring quantile {index} does not increase over the one before (fraction and radius must both grow); sort the pairs and remove duplicates"
    )]
    QuantilesNotIncreasing {
        /// Index of the offending pair.
        index: usize,
    },
}

/// What went wrong while building a prior. Messages name the analyst or scenario and say how to
/// fix the input.
#[derive(Debug, Error, Clone, PartialEq)]
#[non_exhaustive]
pub enum PriorError {
    /// A shape problem, outside the context of a named scenario (see [`crate::ScenarioShape::validate`]).
    #[error("{0}")]
    Shape(#[from] ShapeError),
    /// A shape problem in a named scenario.
    #[error("scenario \"{scenario}\" of analyst \"{analyst}\": {source}")]
    InScenario {
        /// Scenario id.
        scenario: String,
        /// Analyst id.
        analyst: String,
        /// The problem.
        #[source]
        source: ShapeError,
    },
    /// No analysts.
    #[error("no analysts given; give at least one analyst with a positive weight")]
    NoAnalysts,
    /// No scenarios.
    #[error("no scenarios given; give at least one scenario")]
    NoScenarios,
    /// Two analysts with one id.
    #[error("analyst id \"{analyst}\" is used twice; give each analyst its own id")]
    DuplicateAnalyst {
        /// The id.
        analyst: String,
    },
    /// Two scenarios with one id.
    #[error("scenario id \"{scenario}\" is used twice; give each scenario its own id")]
    DuplicateScenario {
        /// The id.
        scenario: String,
    },
    /// Analyst weight not positive and finite.
    #[error("analyst \"{analyst}\" has weight {weight}; give a positive finite credibility weight")]
    BadAnalystWeight {
        /// The analyst.
        analyst: String,
        /// The weight given.
        weight: f64,
    },
    /// Scenario weight not positive and finite.
    #[error("scenario \"{scenario}\" has weight {weight}; give a positive finite weight")]
    BadScenarioWeight {
        /// The scenario.
        scenario: String,
        /// The weight given.
        weight: f64,
    },
    /// A scenario names an analyst not in the list.
    #[error(
        "scenario \"{scenario}\" names analyst \"{analyst}\", who is not in the analyst list; add the analyst or correct the name"
    )]
    UnknownAnalyst {
        /// The scenario.
        scenario: String,
        /// The analyst named.
        analyst: String,
    },
    /// An analyst without scenarios.
    #[error(
        "analyst \"{analyst}\" has no scenarios; give the analyst a scenario or remove the analyst"
    )]
    AnalystWithoutScenarios {
        /// The analyst.
        analyst: String,
    },
    /// The logarithmic pool has nothing left: every bin is zero in some analyst's map.
    #[error(
        "the logarithmic pool is empty: no cell, outside-grid or rest-of-world bin has positive probability in every analyst's map; use the linear pool, or give each analyst some rest of world"
    )]
    EmptyLogPool,
    /// A list that the credibility statistics need is empty.
    #[error("{field} is empty; {fix}")]
    EmptyCredibilityInput {
        /// The list (`weights_used`, `bearings_deg`, `analysts`, `incidents`, ...).
        field: &'static str,
        /// How to fix it.
        fix: &'static str,
    },
    /// Two lists that must run in step have different lengths.
    #[error(
        "{field} has {got} entries but {other_field} has {expected}; give one entry per analyst, in the same order"
    )]
    CredibilityLengthMismatch {
        /// The list whose length is wrong.
        field: &'static str,
        /// Its length.
        got: usize,
        /// The list it must match.
        other_field: &'static str,
        /// That list's length.
        expected: usize,
    },
    /// A number that the credibility statistics cannot use.
    #[error("{field} entry {position} is {value}; give {expected}")]
    BadCredibilityValue {
        /// The list or field (`weights_used`, `density_at_truth`, `bearings_deg`, ...).
        field: String,
        /// Position in the list, counting from 1.
        position: usize,
        /// The value given.
        value: f64,
        /// What is accepted.
        expected: &'static str,
    },
    /// Bayes' rule on analysts has nothing left: no analyst with a positive weight gave the
    /// truth a positive density.
    #[error(
        "no analyst with a positive weight gave the truth a positive density, so Bayes' rule leaves no weight; check the truth position and that density_at_truth is per km², or give each analyst some rest of world"
    )]
    TruthOutsideEveryAnalyst,
    /// Too few bearings for the Rayleigh test.
    #[error(
        "the Rayleigh test needs at least 2 bearings in bearings_deg, got {n}; give more bearings"
    )]
    TooFewBearings {
        /// Bearings given.
        n: usize,
    },
    /// The shrinkage constant is negative or not finite.
    #[error(
        "shrinkage_incidents is {value}; give a finite number of incidents, 0 or more, such as 3"
    )]
    BadShrinkage {
        /// The value given.
        value: f64,
    },
    /// An incident without analysts' scores.
    #[error(
        "incident {incident} has no analyst log scores; give each incident at least one analyst's log score"
    )]
    IncidentWithoutAnalysts {
        /// Position of the incident, counting from 1.
        incident: usize,
    },
}
