//! The incident file as written: TOML tables deserialised with serde, before validation.
//!
//! Field names carry their units. Every table refuses unknown keys, so a misspelt key is an
//! error at its line rather than a silently ignored value. A `[[scenario]]`, a search's
//! `pattern` and the `[outcome]` are read in two steps: the document is parsed once with
//! every value's position kept (`toml::de::DeTable`), then each such table is dispatched on
//! its `kind` (or `status`) and deserialised into the struct of that kind alone, so a field of
//! another kind is refused at its own line and column. `docs/incident-format.md` describes
//! every field; keep the two in step.

use crate::error::ErrorKind;
use serde::Deserialize;
use serde::de::{self, MapAccess, SeqAccess, Visitor};
use std::collections::BTreeMap;
use std::fmt;
use std::ops::Range;
use toml::Spanned;
use toml::de::{DeTable, DeValue, ValueDeserializer};

/// A problem found while reading the TOML: its byte span in the text, when known, and a
/// message in words (no Rust type names).
#[derive(Debug, Clone, PartialEq)]
pub struct RawError {
    /// Syntax (not TOML, or a value of the wrong type) or invalid (an unknown kind).
    pub kind: ErrorKind,
    /// Where in the text.
    pub span: Option<Range<usize>>,
    /// What is wrong and how to fix it.
    pub message: String,
}

impl RawError {
    fn syntax(e: &toml::de::Error) -> Self {
        Self {
            kind: ErrorKind::Syntax,
            span: e.span(),
            message: human(e.message()),
        }
    }

    fn invalid(span: Range<usize>, message: impl Into<String>) -> Self {
        Self {
            kind: ErrorKind::Invalid,
            span: Some(span),
            message: message.into(),
        }
    }
}

/// A time written either as a string (`"2026-06-14T18:00:00Z"`) or as a TOML date-time.
#[derive(Debug, Clone)]
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

impl<'de> Deserialize<'de> for TimeText {
    fn deserialize<D: de::Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct V;
        impl<'de> Visitor<'de> for V {
            type Value = TimeText;
            fn expecting(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
                f.write_str("a time such as \"2026-06-14T18:00:00Z\"")
            }
            fn visit_str<E: de::Error>(self, v: &str) -> Result<TimeText, E> {
                Ok(TimeText::Text(v.to_owned()))
            }
            fn visit_map<A: MapAccess<'de>>(self, map: A) -> Result<TimeText, A::Error> {
                toml::value::Datetime::deserialize(de::value::MapAccessDeserializer::new(map))
                    .map(TimeText::Toml)
            }
        }
        d.deserialize_any(V)
    }
}

/// A position as written: exactly two numbers `[lon, lat]`. Any other count is refused with a
/// message that shows what was written (a decimal comma, `[-40.955, 31,548]`, reads as three
/// numbers and is named as such).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Position(pub [f64; 2]);

/// A number as written: whole or with a fraction (kept apart to spot a decimal comma).
#[derive(Debug, Clone, Copy)]
enum Number {
    Whole(i128),
    Fraction(f64),
}

impl Number {
    fn value(self) -> f64 {
        match self {
            Self::Whole(i) => i as f64,
            Self::Fraction(f) => f,
        }
    }
}

impl fmt::Display for Number {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Self::Whole(i) => write!(f, "{i}"),
            Self::Fraction(x) => write!(f, "{x}"),
        }
    }
}

impl<'de> Deserialize<'de> for Number {
    fn deserialize<D: de::Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct V;
        impl Visitor<'_> for V {
            type Value = Number;
            fn expecting(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
                f.write_str("a number")
            }
            fn visit_i64<E: de::Error>(self, v: i64) -> Result<Number, E> {
                Ok(Number::Whole(v.into()))
            }
            fn visit_u64<E: de::Error>(self, v: u64) -> Result<Number, E> {
                Ok(Number::Whole(v.into()))
            }
            fn visit_f64<E: de::Error>(self, v: f64) -> Result<Number, E> {
                Ok(Number::Fraction(v))
            }
        }
        d.deserialize_any(V)
    }
}

/// Most numbers read into a list that should be a position before giving up.
const POSITION_READ_LIMIT: usize = 16;

impl<'de> Deserialize<'de> for Position {
    fn deserialize<D: de::Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct V;
        impl<'de> Visitor<'de> for V {
            type Value = Position;
            fn expecting(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
                f.write_str("a position [lon, lat]")
            }
            fn visit_seq<A: SeqAccess<'de>>(self, mut seq: A) -> Result<Position, A::Error> {
                let mut numbers = Vec::new();
                while let Some(n) = seq.next_element::<Number>()? {
                    numbers.push(n);
                    if numbers.len() >= POSITION_READ_LIMIT {
                        break;
                    }
                }
                match numbers[..] {
                    [lon, lat] => Ok(Position([lon.value(), lat.value()])),
                    _ => Err(de::Error::custom(position_message(&numbers))),
                }
            }
        }
        d.deserialize_seq(V)
    }
}

/// The message for a list of numbers that is not a position.
fn position_message(numbers: &[Number]) -> String {
    let written = list(numbers);
    let count = match numbers.len() {
        0 => "none".to_owned(),
        1 => "one".to_owned(),
        3 => "three".to_owned(),
        4 => "four".to_owned(),
        n if n >= POSITION_READ_LIMIT => format!("{n} or more"),
        n => n.to_string(),
    };
    let mut m = format!("a position is exactly two numbers [lon, lat]; {written} has {count}");
    if let Some(fix) = decimal_comma_fix(numbers) {
        m.push_str(&format!(
            ": a decimal comma? write {fix} with a decimal point"
        ));
    }
    m
}

fn list(numbers: &[Number]) -> String {
    let parts: Vec<String> = numbers.iter().map(ToString::to_string).collect();
    format!("[{}]", parts.join(", "))
}

/// `[-40.955, 31, 548]` was most likely `[-40.955, 31.548]` written with a decimal comma:
/// the position with the whole numbers on either side of the comma joined.
fn decimal_comma_fix(n: &[Number]) -> Option<String> {
    use Number::{Fraction, Whole};
    let join = |a: i128, b: i128| (b >= 0).then(|| format!("{a}.{b}"));
    match *n {
        [Fraction(lon), Whole(a), Whole(b)] => Some(format!("[{lon}, {}]", join(a, b)?)),
        [Whole(a), Whole(b), Fraction(lat)] => Some(format!("[{}, {lat}]", join(a, b)?)),
        [Whole(a), Whole(b), Whole(c), Whole(d)] => {
            Some(format!("[{}, {}]", join(a, b)?, join(c, d)?))
        }
        _ => None,
    }
}

/// Rewrites serde's messages in words: `expected f64` becomes `expected a number`, and so on.
fn human(message: &str) -> String {
    let m = message.trim().trim_end_matches('.').replace('\n', " ");
    if let Some(rest) = m.strip_prefix("invalid type: ")
        && let Some((found, expected)) = rest.split_once(", expected ")
    {
        return format!(
            "expected {}, found {}",
            expected_words(expected),
            found_words(found)
        );
    }
    if let Some(rest) = m.strip_prefix("invalid value: ")
        && let Some((found, expected)) = rest.split_once(", expected ")
    {
        return format!(
            "expected {}, found {}",
            expected_words(expected),
            found_words(found)
        );
    }
    m
}

fn expected_words(t: &str) -> String {
    match t.trim() {
        "f64" | "f32" => "a number".into(),
        "usize" | "u64" | "u32" | "u16" | "u8" => "a whole number, 0 or more".into(),
        "i64" | "i32" => "a whole number".into(),
        "a string" => "text in quotes".into(),
        "a boolean" => "true or false".into(),
        "a sequence" => "a list [...]".into(),
        "a map" => "a table".into(),
        other if other.starts_with("struct ") => "a table".into(),
        other => other.to_owned(),
    }
}

fn found_words(t: &str) -> String {
    let t = t.trim();
    let inner = |s: &str| s.trim_matches('`').to_owned();
    if let Some(s) = t.strip_prefix("string ") {
        format!("the text {s}")
    } else if let Some(s) = t.strip_prefix("integer ") {
        format!("the whole number {}", inner(s))
    } else if let Some(s) = t.strip_prefix("floating point ") {
        format!("the number {}", inner(s))
    } else if let Some(s) = t.strip_prefix("boolean ") {
        inner(s)
    } else {
        match t {
            "sequence" => "a list".into(),
            "map" => "a table".into(),
            other => other.to_owned(),
        }
    }
}

/// The whole file.
#[derive(Debug, Clone)]
pub struct RawFile {
    /// `[incident]`.
    pub incident: RawHeader,
    /// `[grid]`.
    pub grid: RawGrid,
    /// `[prior]`, optional.
    pub prior: Option<RawPrior>,
    /// `[[analyst]]`.
    pub analysts: Vec<RawAnalyst>,
    /// `[[scenario]]`, each read as its kind.
    pub scenarios: Vec<RawScenario>,
    /// `[[search]]`: completed searches.
    pub searches: Vec<RawSearch>,
    /// `[[unit]]`: search units available for the next period.
    pub units: Vec<RawUnit>,
    /// `[outcome]`: how the incident ended, if it has.
    pub outcome: Option<RawOutcome>,
}

/// The tables of the file that need no dispatch on a kind.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawPlainTables {
    incident: RawHeader,
    grid: RawGrid,
    #[serde(default)]
    prior: Option<RawPrior>,
    #[serde(default, rename = "analyst")]
    analysts: Vec<RawAnalyst>,
    #[serde(default, rename = "unit")]
    units: Vec<RawUnit>,
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
    /// `true`: keep a `crs` whose zone is farther than the neighbouring one from the incident.
    pub allow_distant_crs: Option<bool>,
    /// How positions are written in the briefing and GPS descriptions (`ddm`, `mgrs`, ...).
    pub positions: Option<String>,
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

/// `[[scenario]]`: one analyst's theory; the fields every kind has, and those of its kind.
#[derive(Debug, Clone)]
pub struct RawScenario {
    /// Identifier.
    pub id: String,
    /// The analyst whose theory this is.
    pub analyst: String,
    /// Weight among this analyst's scenarios (default 1), normalised per analyst.
    pub weight: Option<f64>,
    /// Free text.
    pub note: Option<String>,
    /// The fields of its kind.
    pub shape: RawShape,
}

/// The fields every scenario has.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawScenarioCommon {
    id: String,
    analyst: String,
    weight: Option<f64>,
    note: Option<String>,
}

/// Keys of a `[[scenario]]` that every kind has (`kind` included).
const SCENARIO_COMMON_KEYS: [&str; 5] = ["id", "analyst", "weight", "kind", "note"];

/// The kinds of scenario, each with the fields of its own (see docs/incident-format.md).
#[derive(Debug, Clone)]
pub enum RawShape {
    /// `kind = "point"`.
    Point(RawPoint),
    /// `kind = "route"`.
    Route(RawRoute),
    /// `kind = "area"`.
    Area(RawArea),
    /// `kind = "segments"`.
    Segments(RawSegments),
    /// `kind = "rings"`.
    Rings(RawRings),
    /// `kind = "drift"`.
    Drift(Box<RawDrift>),
}

/// One kind of a family of tables chosen by a tag (`kind` or `status`): its name and the keys
/// its struct reads.
struct KindFields {
    name: &'static str,
    fields: &'static [&'static str],
}

/// The scenario kinds and their fields, in the order of docs/incident-format.md.
const SCENARIO_KINDS: [KindFields; 6] = [
    KindFields {
        name: "point",
        fields: &[
            "position",
            "sigma_m",
            "sigma_major_m",
            "sigma_minor_m",
            "major_bearing_deg",
        ],
    },
    KindFields {
        name: "route",
        fields: &["waypoints", "cross_track_sigma_m"],
    },
    KindFields {
        name: "area",
        fields: &["polygon"],
    },
    KindFields {
        name: "segments",
        fields: &["segments", "poa"],
    },
    KindFields {
        name: "rings",
        fields: &["position", "distance_quantiles_km", "ring_interpolation"],
    },
    KindFields {
        name: "drift",
        fields: &[
            "position",
            "position_sigma_m",
            "adrift",
            "current",
            "wind",
            "leeway",
            "diffusivity_m2_s",
            "particles",
            "seed",
            "hold_environment_beyond_series",
        ],
    },
];

/// The names of the scenario kinds the file accepts (`kind = "…"`), in the order of
/// docs/incident-format.md.
pub fn scenario_kind_names() -> impl Iterator<Item = &'static str> {
    SCENARIO_KINDS.iter().map(|k| k.name)
}

/// The names of the search pattern kinds the file accepts (`pattern = { kind = "…" }`).
pub fn pattern_kind_names() -> impl Iterator<Item = &'static str> {
    PATTERN_KINDS.iter().map(|k| k.name)
}

/// The pattern kinds and their fields (`kind` aside).
const PATTERN_KINDS: [KindFields; 4] = [
    KindFields {
        name: "parallel-sweep",
        fields: &RECTANGLE_FIELDS,
    },
    KindFields {
        name: "creeping-line",
        fields: &RECTANGLE_FIELDS,
    },
    KindFields {
        name: "expanding-square",
        fields: &["center", "track_spacing_m", "legs", "first_leg_bearing_deg"],
    },
    KindFields {
        name: "sector-search",
        fields: &["center", "radius_m", "first_leg_bearing_deg", "sectors"],
    },
];

const RECTANGLE_FIELDS: [&str; 5] = [
    "center",
    "length_m",
    "width_m",
    "major_bearing_deg",
    "track_spacing_m",
];

/// The outcome statuses and their fields (`status` aside).
const OUTCOME_STATUSES: [KindFields; 2] = [
    KindFields {
        name: "found",
        fields: &["time", "position", "position_error_m", "note"],
    },
    KindFields {
        name: "suspended",
        fields: &["time", "note"],
    },
];

/// `kind = "point"`: a position and its error.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawPoint {
    /// [lon, lat].
    pub position: Option<Position>,
    /// Circular standard deviation, metres.
    pub sigma_m: Option<f64>,
    /// Standard deviation along the major axis, metres.
    pub sigma_major_m: Option<f64>,
    /// Standard deviation along the minor axis, metres.
    pub sigma_minor_m: Option<f64>,
    /// True bearing of the major axis, degrees.
    pub major_bearing_deg: Option<f64>,
}

/// `kind = "route"`: along a planned route.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawRoute {
    /// [[lon, lat], ...].
    pub waypoints: Option<Vec<Position>>,
    /// Standard deviation across track, metres.
    pub cross_track_sigma_m: Option<f64>,
}

/// `kind = "area"`: uniform over polygons.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawArea {
    /// GeoJSON file of polygons.
    pub polygon: Option<String>,
}

/// `kind = "segments"`: POA per map segment.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawSegments {
    /// GeoJSON file of segments, each with an `id` property.
    pub segments: Option<String>,
    /// This analyst's POA per segment id (fractions; the rest is rest of world).
    pub poa: Option<BTreeMap<String, f64>>,
}

/// `kind = "rings"`: distance quantiles from the initial planning point.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawRings {
    /// The initial planning point, [lon, lat].
    pub position: Option<Position>,
    /// Distance from the initial planning point at each percentile, km.
    pub distance_quantiles_km: Option<BTreeMap<String, f64>>,
    /// `"uniform-per-ring"` (default) or `"monotone-cubic"`.
    pub ring_interpolation: Option<String>,
}

/// `kind = "drift"`: drift from a last known position.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawDrift {
    /// Last known position, [lon, lat].
    pub position: Option<Position>,
    /// Standard deviation of the last known position, metres.
    pub position_sigma_m: Option<f64>,
    /// When the object went adrift.
    pub adrift: Option<RawAdrift>,
    /// Total water current.
    pub current: Option<RawVector>,
    /// Wind at 10 m.
    pub wind: Option<RawVector>,
    /// Leeway coefficients of the object.
    pub leeway: Option<RawLeeway>,
    /// Random-walk diffusivity, m²/s (default 0).
    pub diffusivity_m2_s: Option<f64>,
    /// Number of particles (default 20 000).
    pub particles: Option<usize>,
    /// Random seed (default 1).
    pub seed: Option<u64>,
    /// `true`: a wind or current series (or field) that ends before the drift does is held at
    /// its last value (and one that starts after going adrift, at its first) instead of being
    /// refused.
    pub hold_environment_beyond_series: Option<bool>,
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

/// A current or wind estimate: constant, or a CSV time series, or a CSV gridded field, or a
/// NetCDF or GRIB2 forecast file.
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
    /// A CF NetCDF forecast file, or several of one forecast (docs/incident-format.md,
    /// "Forecast files").
    pub netcdf: Option<OneOrMany>,
    /// One GRIB2 forecast file, or several (one or more times each).
    pub grib: Option<OneOrMany>,
    /// NetCDF: the eastward component's variable, instead of the search by standard_name.
    pub u_variable: Option<String>,
    /// NetCDF: the northward component's variable.
    pub v_variable: Option<String>,
    /// The level to use, metres (depth for a current, height for a wind); default the
    /// surface for a current, 10 m for a wind; the file's nearest level is taken.
    pub level_m: Option<f64>,
}

/// One path, or a list of paths.
#[derive(Debug, Clone, Deserialize)]
#[serde(untagged)]
pub enum OneOrMany {
    /// One path.
    One(String),
    /// Several paths.
    Many(Vec<String>),
}

impl OneOrMany {
    /// The paths, in order.
    #[must_use]
    pub fn paths(&self) -> Vec<&str> {
        match self {
            Self::One(s) => vec![s.as_str()],
            Self::Many(v) => v.iter().map(String::as_str).collect(),
        }
    }
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
    /// The tasked pattern, if the search followed one (read by its `kind`).
    #[serde(skip)]
    pub pattern: Option<RawPattern>,
    /// A GPX 1.1 or GeoJSON LineString file of the track actually followed.
    pub track: Option<String>,
    /// With a pattern: the share of its track flown, from its start (default 1).
    pub done_fraction: Option<f64>,
    /// The run id of the plan this search was tasked in.
    pub tasked_in: Option<String>,
    /// Free text.
    pub note: Option<String>,
}

/// A search pattern, by its `kind`.
#[derive(Debug, Clone)]
pub enum RawPattern {
    /// `kind = "parallel-sweep"`.
    ParallelSweep(RawRectangle),
    /// `kind = "creeping-line"`.
    CreepingLine(RawRectangle),
    /// `kind = "expanding-square"`.
    ExpandingSquare(RawSquare),
    /// `kind = "sector-search"`.
    SectorSearch(RawSector),
}

/// The fields of a parallel sweep or creeping line.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawRectangle {
    /// Centre of the area, [lon, lat].
    pub center: Position,
    /// Length along the major axis, metres.
    pub length_m: Option<f64>,
    /// Width across the major axis, metres.
    pub width_m: Option<f64>,
    /// True bearing of the major axis, degrees.
    pub major_bearing_deg: Option<f64>,
    /// Track spacing, metres.
    pub track_spacing_m: Option<f64>,
}

/// The fields of an expanding square.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawSquare {
    /// The datum, [lon, lat].
    pub center: Position,
    /// Track spacing, metres.
    pub track_spacing_m: Option<f64>,
    /// Number of legs.
    pub legs: Option<usize>,
    /// True bearing of the first leg, degrees.
    pub first_leg_bearing_deg: Option<f64>,
}

/// The fields of a sector search.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawSector {
    /// The datum, [lon, lat].
    pub center: Position,
    /// Radius, metres.
    pub radius_m: Option<f64>,
    /// True bearing of the first leg, degrees.
    pub first_leg_bearing_deg: Option<f64>,
    /// Number of sectors (3 for the usual pattern).
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
    /// How this unit's positions are written (`ddm`, `mgrs`, ...).
    pub positions: Option<String>,
}

/// `[outcome]`, by its `status`.
#[derive(Debug, Clone)]
pub enum RawOutcome {
    /// `status = "found"`.
    Found(RawFound),
    /// `status = "suspended"`.
    Suspended(RawSuspended),
}

/// `status = "found"`: where and when the object was found.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawFound {
    /// When it was found.
    pub time: TimeText,
    /// Where it was found, [lon, lat].
    pub position: Option<Position>,
    /// The error of that position, metres.
    pub position_error_m: Option<f64>,
    /// Free text.
    pub note: Option<String>,
}

/// `status = "suspended"`: when the search was suspended.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawSuspended {
    /// When the search was suspended.
    pub time: TimeText,
    /// Free text.
    pub note: Option<String>,
}

type Value<'i> = Spanned<DeValue<'i>>;

/// Reads the incident file's TOML into the raw tables.
///
/// # Errors
/// Every problem found: a TOML syntax error alone (nothing else can be read then); otherwise
/// each table's first problem, in the order of the file.
pub fn read(text: &str) -> Result<RawFile, Vec<RawError>> {
    let root = DeTable::parse(text).map_err(|e| vec![RawError::syntax(&e)])?;
    let root_span = root.span();
    let mut root = root.into_inner();
    let scenario_items = take_array(&mut root, "scenario");
    let search_items = take_array(&mut root, "search");
    let outcome_item = root.remove("outcome");
    let mut errors = Vec::new();
    let plain = RawPlainTables::deserialize(toml::de::Deserializer::from(Spanned::new(
        root_span.clone(),
        root,
    )))
    .map_err(|e| errors.push(RawError::syntax(&e)))
    .ok();
    let scenarios = collect(scenario_items?, &mut errors, scenario);
    let searches = collect(search_items?, &mut errors, search);
    let outcome = match outcome_item.map(outcome) {
        None => None,
        Some(Ok(o)) => Some(o),
        Some(Err(e)) => {
            errors.push(e);
            None
        }
    };
    // Report in the order of the file.
    errors.sort_by_key(|e| e.span.as_ref().map_or(0, |s| s.start));
    match plain {
        Some(p) if errors.is_empty() => Ok(RawFile {
            incident: p.incident,
            grid: p.grid,
            prior: p.prior,
            analysts: p.analysts,
            scenarios,
            searches,
            units: p.units,
            outcome,
        }),
        _ => Err(errors),
    }
}

/// Removes an array of tables from the root and returns its elements (none when absent).
fn take_array<'i>(root: &mut DeTable<'i>, key: &str) -> Result<Vec<Value<'i>>, Vec<RawError>> {
    match root.remove(key) {
        None => Ok(Vec::new()),
        Some(v) => {
            let span = v.span();
            match v.into_inner() {
                DeValue::Array(a) => Ok(a.into_iter().collect()),
                _ => Err(vec![RawError::invalid(
                    span,
                    format!("{key} must be written as [[{key}]] tables"),
                )]),
            }
        }
    }
}

fn collect<T>(
    items: Vec<Value<'_>>,
    errors: &mut Vec<RawError>,
    read: impl Fn(Value<'_>) -> Result<T, RawError>,
) -> Vec<T> {
    items
        .into_iter()
        .filter_map(|v| read(v).map_err(|e| errors.push(e)).ok())
        .collect()
}

/// A table value's entries, or an error naming what it should be.
fn table<'i>(v: Value<'i>, what: &str) -> Result<(Range<usize>, DeTable<'i>), RawError> {
    let span = v.span();
    match v.into_inner() {
        DeValue::Table(t) => Ok((span, t)),
        _ => Err(RawError::invalid(span, format!("{what} must be a table"))),
    }
}

/// Removes the tag (`kind`, `status`) from a table and finds its entry in `kinds`.
fn tag(
    t: &mut DeTable<'_>,
    span: &Range<usize>,
    key: &str,
    family: &str,
    kinds: &[KindFields],
) -> Result<usize, RawError> {
    let names: Vec<&str> = kinds.iter().map(|k| k.name).collect();
    let choices = match names.split_last() {
        Some((last, rest)) if !rest.is_empty() => format!("{} or {last}", rest.join(", ")),
        _ => names.join(""),
    };
    let Some(v) = t.remove(key) else {
        return Err(RawError::invalid(
            span.clone(),
            format!("missing field `{key}`; give the {family}'s {key}: {choices}"),
        ));
    };
    let vspan = v.span();
    let Some(name) = v.get_ref().as_str() else {
        return Err(RawError::invalid(
            vspan,
            format!("{key} must be text in quotes: {choices}"),
        ));
    };
    names.iter().position(|n| *n == name).ok_or_else(|| {
        RawError::invalid(
            vspan,
            format!("unknown {family} {key} \"{name}\"; use {choices}"),
        )
    })
}

/// Deserialises the table of one kind, rewording a field of another kind (or an unknown
/// field) so that it says which kind it belongs to.
fn of_kind<'de, T: Deserialize<'de>>(
    span: Range<usize>,
    t: DeTable<'de>,
    family: &str,
    kinds: &[KindFields],
    chosen: usize,
    always: &[&str],
) -> Result<T, RawError> {
    // `always` starts with the tag: "kind", or "status" for the outcome.
    let tag = always
        .iter()
        .find(|k| **k == "kind" || **k == "status")
        .copied()
        .unwrap_or("kind");
    let article = if family.starts_with(['a', 'e', 'i', 'o', 'u']) {
        "an"
    } else {
        "a"
    };
    let v = Spanned::new(span, DeValue::Table(t));
    T::deserialize(ValueDeserializer::from(v)).map_err(|e| {
        let mut err = RawError::syntax(&e);
        let message = e.message();
        if let Some(field) = message
            .strip_prefix("unknown field `")
            .and_then(|r| r.split_once('`'))
            .map(|(f, _)| f)
        {
            let kind = &kinds[chosen];
            let others: Vec<&str> = kinds
                .iter()
                .filter(|k| k.fields.contains(&field))
                .map(|k| k.name)
                .collect();
            err.message = if others.is_empty() {
                let fields: Vec<&str> = always.iter().chain(kind.fields).copied().collect();
                format!(
                    "unknown field `{field}` in {article} {family} of {tag} \"{}\"; its fields are {}; check the spelling against docs/incident-format.md",
                    kind.name,
                    fields.join(", ")
                )
            } else {
                format!(
                    "{field} does not belong to {article} {family} of {tag} \"{}\" (it is a field of {}); remove it or change the {tag}",
                    kind.name,
                    others.join(", ")
                )
            };
        }
        err
    })
}

/// One `[[scenario]]`: the common fields, then the fields of its kind.
fn scenario(v: Value<'_>) -> Result<RawScenario, RawError> {
    let (span, mut t) = table(v, "a [[scenario]]")?;
    let chosen = tag(&mut t, &span, "kind", "scenario", &SCENARIO_KINDS)?;
    let mut common = DeTable::new();
    for key in SCENARIO_COMMON_KEYS {
        if let Some((k, v)) = t.remove_entry(key) {
            common.insert(k, v);
        }
    }
    let c: RawScenarioCommon = RawScenarioCommon::deserialize(ValueDeserializer::from(
        Spanned::new(span.clone(), DeValue::Table(common)),
    ))
    .map_err(|e| RawError::syntax(&e))?;
    let always = &SCENARIO_COMMON_KEYS;
    let shape = match SCENARIO_KINDS[chosen].name {
        "point" => RawShape::Point(of_kind(
            span,
            t,
            "scenario",
            &SCENARIO_KINDS,
            chosen,
            always,
        )?),
        "route" => RawShape::Route(of_kind(
            span,
            t,
            "scenario",
            &SCENARIO_KINDS,
            chosen,
            always,
        )?),
        "area" => RawShape::Area(of_kind(
            span,
            t,
            "scenario",
            &SCENARIO_KINDS,
            chosen,
            always,
        )?),
        "segments" => RawShape::Segments(of_kind(
            span,
            t,
            "scenario",
            &SCENARIO_KINDS,
            chosen,
            always,
        )?),
        "rings" => RawShape::Rings(of_kind(
            span,
            t,
            "scenario",
            &SCENARIO_KINDS,
            chosen,
            always,
        )?),
        _ => RawShape::Drift(Box::new(of_kind(
            span,
            t,
            "scenario",
            &SCENARIO_KINDS,
            chosen,
            always,
        )?)),
    };
    Ok(RawScenario {
        id: c.id,
        analyst: c.analyst,
        weight: c.weight,
        note: c.note,
        shape,
    })
}

/// One `[[search]]`, its pattern read by its kind.
fn search(v: Value<'_>) -> Result<RawSearch, RawError> {
    let (span, mut t) = table(v, "a [[search]]")?;
    let pattern = t.remove("pattern").map(pattern).transpose()?;
    let mut s = RawSearch::deserialize(ValueDeserializer::from(Spanned::new(
        span,
        DeValue::Table(t),
    )))
    .map_err(|e| RawError::syntax(&e))?;
    s.pattern = pattern;
    Ok(s)
}

fn pattern(v: Value<'_>) -> Result<RawPattern, RawError> {
    let (span, mut t) = table(v, "pattern")?;
    let chosen = tag(&mut t, &span, "kind", "pattern", &PATTERN_KINDS)?;
    let kinds = &PATTERN_KINDS;
    Ok(match kinds[chosen].name {
        "parallel-sweep" => {
            RawPattern::ParallelSweep(of_kind(span, t, "pattern", kinds, chosen, &["kind"])?)
        }
        "creeping-line" => {
            RawPattern::CreepingLine(of_kind(span, t, "pattern", kinds, chosen, &["kind"])?)
        }
        "expanding-square" => {
            RawPattern::ExpandingSquare(of_kind(span, t, "pattern", kinds, chosen, &["kind"])?)
        }
        _ => RawPattern::SectorSearch(of_kind(span, t, "pattern", kinds, chosen, &["kind"])?),
    })
}

fn outcome(v: Value<'_>) -> Result<RawOutcome, RawError> {
    let (span, mut t) = table(v, "[outcome]")?;
    let chosen = tag(&mut t, &span, "status", "outcome", &OUTCOME_STATUSES)?;
    let kinds = &OUTCOME_STATUSES;
    Ok(match kinds[chosen].name {
        "found" => RawOutcome::Found(of_kind(span, t, "outcome", kinds, chosen, &["status"])?),
        _ => RawOutcome::Suspended(of_kind(span, t, "outcome", kinds, chosen, &["status"])?),
    })
}

impl RawShape {
    /// The kind as written in the file.
    #[must_use]
    pub fn kind(&self) -> &'static str {
        match self {
            Self::Point(_) => "point",
            Self::Route(_) => "route",
            Self::Area(_) => "area",
            Self::Segments(_) => "segments",
            Self::Rings(_) => "rings",
            Self::Drift(_) => "drift",
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn err(text: &str) -> RawError {
        read(text).unwrap_err().remove(0)
    }

    const HEAD: &str = "[incident]\ntitle = \"t\"\nreference_time = \"2026-06-14T18:00:00Z\"\n[grid]\ncell_m = 250\n";

    #[test]
    fn every_kind_accepts_each_field_it_lists() {
        // A scenario of each kind with every field of its list present is not refused for a
        // field that does not belong (it may still miss nothing: all are optional here but
        // the leeway's slope).
        let values = |f: &str| match f {
            "position" => "[1.0, 2.0]",
            "waypoints" => "[[1.0, 2.0], [1.1, 2.1]]",
            "polygon" | "segments" | "ring_interpolation" => "\"x\"",
            "poa" | "distance_quantiles_km" => "{ a = 1.0 }",
            "adrift" => {
                "{ earliest = \"2026-06-14T15:00:00Z\", latest = \"2026-06-14T15:00:00Z\" }"
            }
            "current" | "wind" => "{ speed_kn = 1.0 }",
            "leeway" => "{ downwind_slope = 0.01 }",
            "particles" | "seed" => "5",
            "hold_environment_beyond_series" => "true",
            _ => "1.0",
        };
        for k in &SCENARIO_KINDS {
            let mut text = format!(
                "{HEAD}[[scenario]]\nid = \"s\"\nanalyst = \"a\"\nkind = \"{}\"\n",
                k.name
            );
            for f in k.fields {
                text.push_str(&format!("{f} = {}\n", values(f)));
            }
            let raw = read(&text).unwrap_or_else(|e| panic!("{}: {e:?}", k.name));
            assert_eq!(raw.scenarios[0].shape.kind(), k.name);
        }
    }

    #[test]
    fn a_field_of_another_kind_is_refused_at_its_key() {
        let text = format!(
            "{HEAD}[[scenario]]\nid = \"s\"\nanalyst = \"a\"\nkind = \"point\"\nposition = [1.0, 2.0]\nseed = 3\n"
        );
        let e = err(&text);
        assert_eq!(e.span.map(|s| &text[s]), Some("seed"));
        assert!(
            e.message.contains("(it is a field of drift)"),
            "{}",
            e.message
        );
    }

    #[test]
    fn a_position_of_three_numbers_names_the_decimal_comma() {
        let text = format!(
            "{HEAD}[[scenario]]\nid = \"s\"\nanalyst = \"a\"\nkind = \"point\"\nposition = [-40.955, 31,548]\n"
        );
        let e = err(&text);
        assert_eq!(e.span.map(|s| &text[s]), Some("[-40.955, 31,548]"));
        assert_eq!(
            e.message,
            "a position is exactly two numbers [lon, lat]; [-40.955, 31, 548] has three: a decimal comma? write [-40.955, 31.548] with a decimal point"
        );
    }

    #[test]
    fn serde_messages_are_reworded_without_type_names() {
        assert_eq!(
            human("invalid type: string \"250\", expected f64"),
            "expected a number, found the text \"250\""
        );
        assert_eq!(
            human("invalid value: integer `-500`, expected usize"),
            "expected a whole number, 0 or more, found the whole number -500"
        );
        assert_eq!(
            human("invalid type: integer `7`, expected a time such as \"2026-06-14T18:00:00Z\""),
            "expected a time such as \"2026-06-14T18:00:00Z\", found the whole number 7"
        );
    }
}
