//! The incident after validation: every value checked and typed, every referenced file read.
//! Positions are still WGS84 lon/lat; the engine (`seekgrid-engine`, module `prepare`) projects them into the working frame.

use chrono::{DateTime, Utc};
use geo::{LineString, MultiPolygon};
use seekgrid_core::UtmZone;
use std::path::PathBuf;

/// A UTC time.
pub type Time = DateTime<Utc>;

/// A validated incident.
#[derive(Debug, Clone)]
pub struct Incident {
    /// The incident file.
    pub path: PathBuf,
    /// Its text (kept for error positions).
    pub text: String,
    /// Title shown on every output.
    pub title: String,
    /// The time the prior describes.
    pub reference_time: Time,
    /// Working CRS given in the file, if any.
    pub crs: Option<UtmZone>,
    /// Free text.
    pub notes: Option<String>,
    /// Land polygons (lon/lat), if a coastline was given.
    pub coastline: Option<MultiPolygon<f64>>,
    /// The coastline file, if one was given.
    pub coastline_file: Option<PathBuf>,
    /// With a coastline: `Some(true)` afloat (no probability on land), `Some(false)` ashore
    /// (no probability at sea), `None` the coastline is only drawn.
    pub object_afloat: Option<bool>,
    /// Grid settings.
    pub grid: GridSettings,
    /// How the analysts' maps are pooled.
    pub pool: PoolChoice,
    /// Analysts in file order.
    pub analysts: Vec<AnalystDef>,
    /// Scenarios in file order.
    pub scenarios: Vec<ScenarioDef>,
    /// Completed searches in file order.
    pub searches: Vec<SearchDef>,
    /// Units available for the next period.
    pub units: Vec<UnitDef>,
}

impl Incident {
    /// Every input file of the incident: the incident file itself, then the coastline and each
    /// polygon, segment, track, time-series and field file it names, in file order, each once.
    /// Paths are as the incident resolved them (relative to the incident file's folder unless
    /// written absolute); they are not canonicalised.
    #[must_use]
    pub fn input_files(&self) -> Vec<PathBuf> {
        let mut files = vec![self.path.clone()];
        files.extend(self.coastline_file.iter().cloned());
        for s in &self.scenarios {
            match &s.kind {
                ScenarioKind::Area { file, .. } | ScenarioKind::Segments { file, .. } => {
                    files.push(file.clone());
                }
                ScenarioKind::Drift(d) => {
                    for v in [&d.current, &d.wind] {
                        match v {
                            VectorDef::Series { file, .. } | VectorDef::Field { file, .. } => {
                                files.push(file.clone());
                            }
                            VectorDef::Constant(_) => {}
                        }
                    }
                }
                ScenarioKind::Point { .. }
                | ScenarioKind::Route { .. }
                | ScenarioKind::Rings { .. } => {}
            }
        }
        for s in &self.searches {
            if let SearchGeometry::Track { file, .. } = &s.geometry {
                files.push(file.clone());
            }
        }
        let mut seen = std::collections::HashSet::new();
        files.retain(|f| seen.insert(f.clone()));
        files
    }
}

/// Grid settings.
#[derive(Debug, Clone, Copy)]
pub struct GridSettings {
    /// Cell side, metres.
    pub cell_m: f64,
    /// Lon/lat bounds (west, south, east, north), if given.
    pub bounds: Option<[f64; 4]>,
    /// Cell limit.
    pub max_cells: u64,
}

/// Opinion pool.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PoolChoice {
    /// Weighted average of the analysts' maps (default).
    Linear,
    /// Weighted geometric mean, renormalised.
    Logarithmic,
}

/// An analyst.
#[derive(Debug, Clone)]
pub struct AnalystDef {
    /// Identifier.
    pub id: String,
    /// Credibility weight as written (not yet normalised).
    pub weight: f64,
}

/// A scenario.
#[derive(Debug, Clone)]
pub struct ScenarioDef {
    /// Identifier.
    pub id: String,
    /// Analyst id.
    pub analyst: String,
    /// Weight among the analyst's scenarios, as written.
    pub weight: f64,
    /// What the scenario says.
    pub kind: ScenarioKind,
}

/// How the distance rings are interpolated.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RingMode {
    /// Constant density within each ring.
    UniformPerRing,
    /// Smooth monotone distance distribution.
    MonotoneCubic,
}

/// The kinds of scenario.
#[derive(Debug, Clone)]
pub enum ScenarioKind {
    /// Bivariate normal about a position.
    Point {
        /// [lon, lat].
        position: [f64; 2],
        /// Major-axis standard deviation, metres.
        sigma_major_m: f64,
        /// Minor-axis standard deviation, metres.
        sigma_minor_m: f64,
        /// True bearing of the major axis, degrees.
        major_bearing_deg: f64,
    },
    /// Along a route.
    Route {
        /// [[lon, lat], ...].
        waypoints: Vec<[f64; 2]>,
        /// Across-track standard deviation, metres.
        cross_track_sigma_m: f64,
    },
    /// Uniform over polygons.
    Area {
        /// The polygon file.
        file: PathBuf,
        /// Polygons, lon/lat.
        polygons: MultiPolygon<f64>,
    },
    /// POA per map segment.
    Segments {
        /// The segments file.
        file: PathBuf,
        /// (id, polygons lon/lat) in file order.
        segments: Vec<(String, MultiPolygon<f64>)>,
        /// POA aligned with `segments` (0 where this analyst gave none).
        poa: Vec<f64>,
    },
    /// Distance quantiles from the initial planning point.
    Rings {
        /// [lon, lat] of the initial planning point.
        position: [f64; 2],
        /// (fraction, radius metres), ascending.
        quantiles: Vec<(f64, f64)>,
        /// Interpolation between rings.
        mode: RingMode,
    },
    /// Drift from a last known position.
    Drift(Box<DriftDef>),
}

/// A current or wind estimate.
#[derive(Debug, Clone)]
pub enum VectorDef {
    /// Constant speed and direction with errors.
    Constant(VectorSample),
    /// Time series (times ascending).
    Series {
        /// The CSV file.
        file: PathBuf,
        /// (time, sample).
        samples: Vec<(Time, VectorSample)>,
    },
    /// Gridded field: rows of (lon, lat, time, u_kn east, v_kn north).
    Field {
        /// The CSV file.
        file: PathBuf,
        /// Samples.
        samples: Vec<FieldSample>,
        /// One-sigma speed error, knots.
        speed_sigma_kn: f64,
        /// One-sigma direction error, degrees.
        direction_sigma_deg: f64,
    },
}

/// One speed/direction estimate. `direction_deg` is "toward" for current, "from" for wind.
#[derive(Debug, Clone, Copy)]
pub struct VectorSample {
    /// Speed, knots.
    pub speed_kn: f64,
    /// Direction, true degrees (toward for current, from for wind).
    pub direction_deg: f64,
    /// One-sigma speed error, knots.
    pub speed_sigma_kn: f64,
    /// One-sigma direction error, degrees.
    pub direction_sigma_deg: f64,
}

/// One sample of a gridded field.
#[derive(Debug, Clone, Copy)]
pub struct FieldSample {
    /// Longitude, degrees.
    pub lon: f64,
    /// Latitude, degrees.
    pub lat: f64,
    /// Time.
    pub time: Time,
    /// Eastward component, knots.
    pub u_kn: f64,
    /// Northward component, knots.
    pub v_kn: f64,
}

/// Leeway coefficients.
#[derive(Debug, Clone)]
pub struct LeewayDef {
    /// Downwind leeway per unit wind speed.
    pub downwind_slope: f64,
    /// Downwind offset, knots.
    pub downwind_offset_kn: f64,
    /// Downwind one-sigma error, knots.
    pub downwind_sigma_kn: f64,
    /// Crosswind leeway per unit wind speed.
    pub crosswind_slope: f64,
    /// Crosswind offset, knots.
    pub crosswind_offset_kn: f64,
    /// Crosswind one-sigma error, knots.
    pub crosswind_sigma_kn: f64,
    /// Chance per hour of changing crosswind side.
    pub jibe_per_h: f64,
    /// Stated source of the coefficients.
    pub source: Option<String>,
}

/// A drift scenario.
#[derive(Debug, Clone)]
pub struct DriftDef {
    /// Last known position [lon, lat].
    pub position: [f64; 2],
    /// Its standard deviation, metres.
    pub position_sigma_m: f64,
    /// Earliest time adrift.
    pub adrift_earliest: Time,
    /// Latest time adrift.
    pub adrift_latest: Time,
    /// Total water current (direction: toward).
    pub current: VectorDef,
    /// Wind at 10 m (direction: from).
    pub wind: VectorDef,
    /// Leeway.
    pub leeway: LeewayDef,
    /// Random-walk diffusivity, m²/s.
    pub diffusivity_m2_s: f64,
    /// Particles.
    pub particles: usize,
    /// Seed.
    pub seed: u64,
}

/// Detection law named in the file.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DetectionName {
    /// Inverse cube (default).
    InverseCube,
    /// Exponential (random search).
    Exponential,
    /// Definite range.
    DefiniteRange,
}

/// A pattern, positions in lon/lat, bearings true.
#[derive(Debug, Clone)]
pub enum PatternDef {
    /// Parallel sweep over a rectangle.
    ParallelSweep(RectanglePattern),
    /// Creeping line over a rectangle.
    CreepingLine(RectanglePattern),
    /// Expanding square about a datum.
    ExpandingSquare {
        /// Datum [lon, lat].
        center: [f64; 2],
        /// Track spacing, metres.
        track_spacing_m: f64,
        /// Number of legs.
        legs: usize,
        /// True bearing of the first leg.
        first_leg_bearing_deg: f64,
    },
    /// Sector search about a datum.
    SectorSearch {
        /// Datum [lon, lat].
        center: [f64; 2],
        /// Radius, metres.
        radius_m: f64,
        /// True bearing of the first leg.
        first_leg_bearing_deg: f64,
        /// Number of sectors.
        sectors: usize,
    },
}

/// A rectangle pattern.
#[derive(Debug, Clone, Copy)]
pub struct RectanglePattern {
    /// Centre [lon, lat].
    pub center: [f64; 2],
    /// Length along the major axis, metres.
    pub length_m: f64,
    /// Width, metres.
    pub width_m: f64,
    /// True bearing of the major axis.
    pub major_bearing_deg: f64,
    /// Track spacing, metres.
    pub track_spacing_m: f64,
}

/// What a completed search covered.
#[derive(Debug, Clone)]
pub enum SearchGeometry {
    /// The tasked pattern.
    Pattern(PatternDef),
    /// The track actually followed, lon/lat, with times where the file had them.
    Track {
        /// The track file.
        file: PathBuf,
        /// Points, lon/lat.
        points: LineString<f64>,
        /// Times per point, where known.
        times: Vec<Option<Time>>,
    },
}

/// A completed search.
#[derive(Debug, Clone)]
pub struct SearchDef {
    /// Identifier.
    pub id: String,
    /// Unit.
    pub unit: String,
    /// Start.
    pub start: Time,
    /// End.
    pub end: Time,
    /// Sweep width as given, metres.
    pub sweep_width_m: f64,
    /// Correction factors.
    pub sweep_width_factors: Vec<f64>,
    /// Detection law.
    pub detection: DetectionName,
    /// What was covered.
    pub geometry: SearchGeometry,
}

/// A search unit for the next period.
#[derive(Debug, Clone)]
pub struct UnitDef {
    /// Identifier.
    pub id: String,
    /// Search speed, metres per second.
    pub speed_mps: f64,
    /// Hours on scene.
    pub hours_on_scene: f64,
    /// Sweep width, metres (per searcher for ground teams).
    pub sweep_width_m: f64,
    /// Smallest track spacing, metres.
    pub track_spacing_min_m: Option<f64>,
    /// Detection law.
    pub detection: DetectionName,
    /// Ground team: searchers.
    pub searchers: Option<u32>,
}
