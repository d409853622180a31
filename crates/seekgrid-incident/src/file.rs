//! The incident file as written: TOML tables deserialised with serde, before validation.
//!
//! Field names carry their units. Every table refuses unknown keys, so a misspelt key is an
//! error at its line rather than a silently ignored value. `docs/incident-format.md` describes
//! every field; keep the two in step.

use serde::Deserialize;
use std::collections::BTreeMap;

/// A time written either as a string (`"2026-06-14T18:00:00Z"`) or as a TOML date-time.
#[derive(Debug, Clone, Deserialize)]
#[serde(untagged)]
pub enum TimeText {
    /// RFC 3339 text.
    Text(String),
    /// TOML's own date-time value.
    Toml(toml::value::Datetime),
}

impl TimeText {
    /// The time as text, for parsing as RFC 3339.
    #[must_use]
    pub fn as_text(&self) -> String {
        match self {
            Self::Text(s) => s.clone(),
            Self::Toml(d) => d.to_string(),
        }
    }
}

/// The whole file.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawFile {
    /// `[incident]`.
    pub incident: RawHeader,
    /// `[grid]`.
    pub grid: RawGrid,
    /// `[prior]`, optional.
    #[serde(default)]
    pub prior: Option<RawPrior>,
    /// `[[analyst]]`.
    #[serde(default, rename = "analyst")]
    pub analysts: Vec<RawAnalyst>,
    /// `[[scenario]]`.
    #[serde(default, rename = "scenario")]
    pub scenarios: Vec<RawScenario>,
    /// `[[search]]`: completed searches.
    #[serde(default, rename = "search")]
    pub searches: Vec<RawSearch>,
    /// `[[unit]]`: search units available for the next period.
    #[serde(default, rename = "unit")]
    pub units: Vec<RawUnit>,
}

/// `[incident]`.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawHeader {
    /// Title shown on every output.
    pub title: String,
    /// The time the prior describes (UTC, RFC 3339).
    pub reference_time: TimeText,
    /// Working CRS, `"EPSG:326zz"` or `"EPSG:327zz"`; default: UTM zone of the first position.
    pub crs: Option<String>,
    /// GeoJSON file of land polygons (lon/lat), relative to the incident file.
    pub coastline: Option<String>,
    /// With a coastline: `true`, the object floats (no probability on land); `false`, it is
    /// ashore (no probability at sea); absent, the coastline is only drawn.
    pub object_afloat: Option<bool>,
    /// Free text shown in the summary (e.g. "invented demo").
    pub notes: Option<String>,
}

/// `[grid]`.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawGrid {
    /// Cell side, metres.
    pub cell_m: f64,
    /// Optional lon/lat bounds; default: chosen to hold 99.9 % of the prior mass.
    pub bounds: Option<RawBounds>,
    /// Refuse grids with more cells than this (default 16 000 000).
    pub max_cells: Option<u64>,
}

/// A lon/lat box.
#[derive(Debug, Clone, Copy, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawBounds {
    /// West longitude, degrees.
    pub west: f64,
    /// South latitude, degrees.
    pub south: f64,
    /// East longitude, degrees.
    pub east: f64,
    /// North latitude, degrees.
    pub north: f64,
}

/// `[prior]`.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawPrior {
    /// `"linear"` (default) or `"logarithmic"`.
    pub pool: Option<String>,
}

/// `[[analyst]]`.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawAnalyst {
    /// Identifier the scenarios refer to.
    pub id: String,
    /// Credibility weight, normalised over analysts (default 1).
    pub weight: Option<f64>,
    /// Free text.
    pub note: Option<String>,
}

/// `[[scenario]]`: one analyst's theory. Which fields apply depends on `kind`.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawScenario {
    /// Identifier.
    pub id: String,
    /// The analyst whose theory this is.
    pub analyst: String,
    /// Weight among this analyst's scenarios (default 1), normalised per analyst.
    pub weight: Option<f64>,
    /// `point`, `route`, `area`, `segments`, `rings` or `drift`.
    pub kind: String,
    /// Free text.
    pub note: Option<String>,
    /// point, rings, drift: [lon, lat].
    pub position: Option<[f64; 2]>,
    /// point: circular standard deviation, metres.
    pub sigma_m: Option<f64>,
    /// point: standard deviation along the major axis, metres.
    pub sigma_major_m: Option<f64>,
    /// point: standard deviation along the minor axis, metres.
    pub sigma_minor_m: Option<f64>,
    /// point: true bearing of the major axis, degrees.
    pub major_bearing_deg: Option<f64>,
    /// route: [[lon, lat], ...].
    pub waypoints: Option<Vec<[f64; 2]>>,
    /// route: standard deviation across track, metres.
    pub cross_track_sigma_m: Option<f64>,
    /// area: GeoJSON file of polygons.
    pub polygon: Option<String>,
    /// segments: GeoJSON file of segments, each with an `id` property.
    pub segments: Option<String>,
    /// segments: this analyst's POA per segment id (fractions; the rest is rest of world).
    pub poa: Option<BTreeMap<String, f64>>,
    /// rings: distance from the initial planning point at each percentile, km.
    pub distance_quantiles_km: Option<BTreeMap<String, f64>>,
    /// rings: `"uniform-per-ring"` (default) or `"monotone-cubic"`.
    pub ring_interpolation: Option<String>,
    /// drift: standard deviation of the last known position, metres.
    pub position_sigma_m: Option<f64>,
    /// drift: when the object went adrift.
    pub adrift: Option<RawAdrift>,
    /// drift: total water current.
    pub current: Option<RawVector>,
    /// drift: wind at 10 m.
    pub wind: Option<RawVector>,
    /// drift: leeway coefficients of the object.
    pub leeway: Option<RawLeeway>,
    /// drift: random-walk diffusivity, m²/s (default 0).
    pub diffusivity_m2_s: Option<f64>,
    /// drift: number of particles (default 20 000).
    pub particles: Option<usize>,
    /// drift: random seed (default 1).
    pub seed: Option<u64>,
}

/// drift: the window in which the object went adrift.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawAdrift {
    /// Earliest time adrift.
    pub earliest: TimeText,
    /// Latest time adrift (may equal earliest).
    pub latest: TimeText,
}

/// A current or wind estimate: constant, or a CSV time series, or a CSV gridded field.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawVector {
    /// Speed, knots.
    pub speed_kn: Option<f64>,
    /// Current: the direction it flows toward, true degrees.
    pub toward_deg: Option<f64>,
    /// Wind: the direction it blows from, true degrees.
    pub from_deg: Option<f64>,
    /// One-sigma speed error, knots (default 0).
    pub speed_sigma_kn: Option<f64>,
    /// One-sigma direction error, degrees (default 0).
    pub direction_sigma_deg: Option<f64>,
    /// CSV time series: `time,speed_kn,direction_deg`.
    pub series: Option<String>,
    /// CSV gridded field: `lon,lat,time,u_kn,v_kn`.
    pub field: Option<String>,
}

/// Leeway as downwind and crosswind components linear in wind speed.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawLeeway {
    /// Downwind leeway per unit wind speed (dimensionless).
    pub downwind_slope: f64,
    /// Downwind offset, knots.
    pub downwind_offset_kn: Option<f64>,
    /// Downwind one-sigma error, knots.
    pub downwind_sigma_kn: Option<f64>,
    /// Crosswind leeway per unit wind speed (dimensionless).
    pub crosswind_slope: Option<f64>,
    /// Crosswind offset, knots.
    pub crosswind_offset_kn: Option<f64>,
    /// Crosswind one-sigma error, knots.
    pub crosswind_sigma_kn: Option<f64>,
    /// Chance per hour of changing crosswind side.
    pub jibe_per_h: Option<f64>,
    /// Where the coefficients come from (a publication, or "invented for the demo").
    pub source: Option<String>,
}

/// `[[search]]`: a completed search.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawSearch {
    /// Identifier.
    pub id: String,
    /// The unit that searched.
    pub unit: String,
    /// Start time.
    pub start: TimeText,
    /// End time.
    pub end: TimeText,
    /// Sweep width for this unit, object and conditions, metres.
    pub sweep_width_m: f64,
    /// Correction factors (weather, fatigue, speed) multiplying the sweep width.
    pub sweep_width_factors: Option<Vec<f64>>,
    /// `inverse-cube` (default), `exponential` or `definite-range`.
    pub detection: Option<String>,
    /// The tasked pattern, if the search followed one.
    pub pattern: Option<RawPattern>,
    /// A GPX 1.1 or GeoJSON LineString file of the track actually followed.
    pub track: Option<String>,
    /// Free text.
    pub note: Option<String>,
}

/// A search pattern.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawPattern {
    /// `parallel-sweep`, `creeping-line`, `expanding-square` or `sector-search`.
    pub kind: String,
    /// Centre of the area (or datum), [lon, lat].
    pub center: [f64; 2],
    /// Rectangle: length along the major axis, metres.
    pub length_m: Option<f64>,
    /// Rectangle: width across the major axis, metres.
    pub width_m: Option<f64>,
    /// Rectangle: true bearing of the major axis, degrees.
    pub major_bearing_deg: Option<f64>,
    /// Track spacing, metres.
    pub track_spacing_m: Option<f64>,
    /// Expanding square: number of legs.
    pub legs: Option<usize>,
    /// Sector search: radius, metres.
    pub radius_m: Option<f64>,
    /// Expanding square, sector search: true bearing of the first leg, degrees.
    pub first_leg_bearing_deg: Option<f64>,
    /// Sector search: number of sectors (3 for the usual pattern).
    pub sectors: Option<usize>,
}

/// `[[unit]]`: a search unit available for the next period.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawUnit {
    /// Identifier.
    pub id: String,
    /// Search speed, knots.
    pub speed_kn: Option<f64>,
    /// Search speed, km/h (ground teams).
    pub speed_kmh: Option<f64>,
    /// Hours on scene.
    pub hours_on_scene: f64,
    /// Sweep width for this unit, object and conditions, metres (per searcher for teams).
    pub sweep_width_m: f64,
    /// Smallest track spacing the unit can hold, metres.
    pub track_spacing_min_m: Option<f64>,
    /// `inverse-cube` (default), `exponential` or `definite-range`.
    pub detection: Option<String>,
    /// Ground team: number of searchers.
    pub searchers: Option<u32>,
}
