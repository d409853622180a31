//! The incident after validation: every value checked and typed, every referenced file read.
//! Positions are still WGS84 lon/lat; the engine (`seekgrid-engine`, module `prepare`) projects
//! them into the working frame with the conversions at the end of this module, which the
//! loader also uses (with lon/lat as coordinates) to run the libraries' own checks.
//!
//! The vocabulary of the file is the libraries' own: a detection law is a
//! [`seekgrid_search::DetectionLaw`], a pool a [`seekgrid_prior::Pool`], a ring interpolation a
//! [`seekgrid_prior::RingInterpolation`], each read by its `parse` and written by its `name`.

use crate::error::{ErrorKind, IncidentError};
use crate::forecast::ForecastGrid;
use crate::locate::{FieldPath, line_col, span_of};
use chrono::{DateTime, Utc};
use geo::{Coord, LineString, MultiPolygon, Polygon};
use seekgrid_core::UtmZone;
use seekgrid_drift as drift;
use seekgrid_plan as plan;
use seekgrid_prior as prior;
use seekgrid_search as search;
use std::path::PathBuf;

/// A UTC time.
pub type Time = DateTime<Utc>;

/// How positions are written in the briefing and the GPS files' descriptions.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum PositionFormat {
    /// Degrees and decimal minutes (`31°35.587'N 040°42.138'W`): the default, as boats and
    /// aircraft read positions.
    Ddm,
    /// Decimal degrees (`31.59311°N 040.70230°W`).
    Dd,
    /// Degrees, minutes and seconds (`31°35'35.2"N 040°42'08.3"W`).
    Dms,
    /// Military Grid Reference System to 1 m (`24R UV 19552 86580`), UPS letters at the poles.
    Mgrs,
    /// US National Grid: the MGRS reference on WGS84 (NAD83 differs by under 2 m), written the
    /// same way and labelled USNG.
    Usng,
    /// UTM zone, easting and northing in metres of the position's own zone (UPS beyond 84 N
    /// and 80 S).
    Utm,
    /// Easting and northing in the working CRS (the plan's own grid), metres.
    Grid,
}

impl PositionFormat {
    /// Every format, in the order the help lists them.
    pub const ALL: [Self; 7] = [
        Self::Ddm,
        Self::Dd,
        Self::Dms,
        Self::Mgrs,
        Self::Usng,
        Self::Utm,
        Self::Grid,
    ];

    /// Its name in the incident file and on the command line.
    #[must_use]
    pub fn name(self) -> &'static str {
        match self {
            Self::Ddm => "ddm",
            Self::Dd => "dd",
            Self::Dms => "dms",
            Self::Mgrs => "mgrs",
            Self::Usng => "usng",
            Self::Utm => "utm",
            Self::Grid => "grid",
        }
    }

    /// The format named `name` (case-insensitive), or `None`.
    #[must_use]
    pub fn parse(name: &str) -> Option<Self> {
        Self::ALL
            .into_iter()
            .find(|f| f.name().eq_ignore_ascii_case(name.trim()))
    }
}

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
    /// How positions are written (`[incident] positions`), if the file says.
    pub positions: Option<PositionFormat>,
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
    pub pool: prior::Pool,
    /// Analysts in file order.
    pub analysts: Vec<AnalystDef>,
    /// Scenarios in file order.
    pub scenarios: Vec<ScenarioDef>,
    /// Completed searches in file order.
    pub searches: Vec<SearchDef>,
    /// Units available for the next period.
    pub units: Vec<UnitDef>,
    /// How the incident ended, if it has.
    pub outcome: Option<Outcome>,
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
                            VectorDef::Forecast { grid, .. } => {
                                files.extend(grid.files.iter().cloned());
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

/// An analyst.
#[derive(Debug, Clone)]
pub struct AnalystDef {
    /// Identifier.
    pub id: String,
    /// Credibility weight as written (not yet normalised).
    pub weight: f64,
    /// Where it is written (`analyst[i]`).
    pub at: FieldPath,
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
    /// Where it is written (`scenario[i]`).
    pub at: FieldPath,
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
        mode: prior::RingInterpolation,
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
    /// A NetCDF or GRIB2 forecast read into a lattice (see [`crate::forecast`]).
    Forecast {
        /// The grid, its files and what was used.
        grid: Box<ForecastGrid>,
        /// The key of its source in the scenario (`"netcdf"`, `"grib"`).
        key: &'static str,
        /// One-sigma speed error, knots.
        speed_sigma_kn: f64,
        /// One-sigma direction error, degrees.
        direction_sigma_deg: f64,
        /// Outside its box: refuse, or hold the edge values
        /// (`hold_environment_beyond_series = true`).
        beyond_box: drift::BeyondBox,
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
    /// Whether a wind or current series (or field) that does not cover the drift is held at
    /// its end values (`hold_environment_beyond_series = true`) rather than refused.
    pub hold_environment_beyond_series: bool,
}

/// A pattern, positions in lon/lat, bearings true.
#[derive(Debug, Clone)]
pub enum PatternDef {
    /// Parallel sweep over a rectangle.
    ParallelSweep(RectangleOnChart),
    /// Creeping line over a rectangle.
    CreepingLine(RectangleOnChart),
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

/// The rectangle of a parallel sweep or creeping line as written on the chart: centre in
/// lon/lat, bearing true (the search crate's [`seekgrid_search::Rectangle`] is the same in the
/// working frame, metres and grid bearing).
#[derive(Debug, Clone, Copy)]
pub struct RectangleOnChart {
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
    pub detection: search::DetectionLaw,
    /// What was covered.
    pub geometry: SearchGeometry,
    /// With a pattern: the share of its track flown, from its start, in (0, 1] (1 unless the
    /// search was cut short).
    pub done_fraction: f64,
    /// The run id of the plan this search was tasked in, if any.
    pub tasked_in: Option<String>,
    /// Where it is written (`search[i]`).
    pub at: FieldPath,
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
    pub detection: search::DetectionLaw,
    /// Ground team: searchers.
    pub searchers: Option<u32>,
    /// How this unit's positions are written, if the file says (over the run's and the
    /// incident's choice).
    pub positions: Option<PositionFormat>,
    /// Where it is written (`unit[i]`).
    pub at: FieldPath,
}

/// How the incident ended (`[outcome]`).
#[derive(Debug, Clone, PartialEq)]
pub enum Outcome {
    /// The object was found.
    Found {
        /// When.
        time: Time,
        /// Where, [lon, lat].
        position: [f64; 2],
        /// The error of that position, metres, if stated.
        position_error_m: Option<f64>,
        /// Free text.
        note: Option<String>,
    },
    /// The search was suspended without finding the object.
    Suspended {
        /// When.
        time: Time,
        /// Free text.
        note: Option<String>,
    },
}

impl Outcome {
    /// When the incident ended.
    #[must_use]
    pub fn time(&self) -> Time {
        match self {
            Self::Found { time, .. } | Self::Suspended { time, .. } => *time,
        }
    }
}

/// One item of the incident file that a later error can concern; the incident turns it into
/// the file position of its table ([`Incident::error_at`]).
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Item {
    /// `[incident]`.
    Header,
    /// `[incident]`'s coastline.
    Coastline,
    /// `[grid]` (its `cell_m`).
    Grid,
    /// `[prior]` (its `pool`).
    Prior,
    /// The `[[analyst]]` of this id.
    Analyst(String),
    /// The `[[scenario]]` of this id.
    Scenario(String),
    /// The `[[search]]` of this id.
    Search(String),
    /// The `[[unit]]` of this id.
    Unit(String),
    /// `[outcome]`.
    Outcome,
}

/// The first position named in these scenarios (the incident's), to choose the UTM zone.
#[must_use]
pub fn first_position(scenarios: &[ScenarioDef]) -> Option<[f64; 2]> {
    scenarios.iter().find_map(|s| match &s.kind {
        ScenarioKind::Point { position, .. } | ScenarioKind::Rings { position, .. } => {
            Some(*position)
        }
        ScenarioKind::Route { waypoints, .. } => waypoints.first().copied(),
        ScenarioKind::Area { polygons, .. } => polygons
            .0
            .first()
            .and_then(|p| p.exterior().0.first())
            .map(|c| [c.x, c.y]),
        ScenarioKind::Segments { segments, .. } => segments
            .first()
            .and_then(|(_, mp)| mp.0.first())
            .and_then(|p| p.exterior().0.first())
            .map(|c| [c.x, c.y]),
        ScenarioKind::Drift(d) => Some(d.position),
    })
}

impl Incident {
    /// The first position named anywhere in the incident, to choose the UTM zone.
    #[must_use]
    pub fn first_position(&self) -> Option<[f64; 2]> {
        first_position(&self.scenarios)
    }

    /// The path in the file of an item's table or key (a section header when the id is not
    /// in the incident).
    #[must_use]
    pub fn path_of(&self, item: &Item) -> FieldPath {
        fn find<'a, T>(
            list: &'a [T],
            id: &str,
            of: impl Fn(&'a T) -> (&'a str, &'a FieldPath),
        ) -> Option<FieldPath> {
            list.iter()
                .map(of)
                .find(|(i, _)| *i == id)
                .map(|(_, at)| at.clone())
        }
        match item {
            Item::Header => FieldPath::new("incident"),
            Item::Coastline => FieldPath::new("incident").key("coastline"),
            Item::Grid => FieldPath::new("grid").key("cell_m"),
            Item::Prior => FieldPath::new("prior").key("pool"),
            Item::Analyst(id) => find(&self.analysts, id, |a| (&a.id, &a.at))
                .unwrap_or_else(|| FieldPath::new("analyst")),
            Item::Scenario(id) => find(&self.scenarios, id, |s| (&s.id, &s.at))
                .unwrap_or_else(|| FieldPath::new("scenario")),
            Item::Search(id) => find(&self.searches, id, |s| (&s.id, &s.at))
                .unwrap_or_else(|| FieldPath::new("search")),
            Item::Unit(id) => {
                find(&self.units, id, |u| (&u.id, &u.at)).unwrap_or_else(|| FieldPath::new("unit"))
            }
            Item::Outcome => FieldPath::new("outcome"),
        }
    }

    /// Line and column (from 1) of a path in the incident file: of its value, or of the nearest
    /// enclosing table that is written.
    #[must_use]
    pub fn locate(&self, path: &FieldPath) -> Option<(usize, usize)> {
        span_of(&self.text, path).map(|s| line_col(&self.text, s.start))
    }

    /// An error about `item`, at its place in the incident file (`FILE:LINE:COL: message`).
    #[must_use]
    pub fn error_at(&self, item: &Item, message: impl Into<String>) -> IncidentError {
        let (line, col) = self.locate(&self.path_of(item)).unzip();
        IncidentError {
            kind: ErrorKind::Invalid,
            file: self.path.clone(),
            line,
            col,
            message: message.into(),
        }
    }
}

impl ScenarioKind {
    /// The kind as written in the file (`kind = "point"`, ...).
    #[must_use]
    pub fn name(&self) -> &'static str {
        match self {
            Self::Point { .. } => "point",
            Self::Route { .. } => "route",
            Self::Area { .. } => "area",
            Self::Segments { .. } => "segments",
            Self::Rings { .. } => "rings",
            Self::Drift(_) => "drift",
        }
    }

    /// The prior crate's shape of a stationary scenario, each position placed by `xy` and each
    /// true bearing turned by `bearing` (true bearing, where) into the frame's; `None` for a
    /// drift scenario.
    ///
    /// # Errors
    /// The first error of `xy`.
    pub fn shape<E>(
        &self,
        xy: &impl Fn([f64; 2]) -> Result<Coord<f64>, E>,
        bearing: &impl Fn(f64, [f64; 2]) -> f64,
    ) -> Result<Option<prior::ScenarioShape>, E> {
        Ok(Some(match self {
            Self::Point {
                position,
                sigma_major_m,
                sigma_minor_m,
                major_bearing_deg,
            } => prior::ScenarioShape::Point {
                center: xy(*position)?,
                sigma_major_m: *sigma_major_m,
                sigma_minor_m: *sigma_minor_m,
                major_grid_bearing_deg: bearing(*major_bearing_deg, *position),
            },
            Self::Route {
                waypoints,
                cross_track_sigma_m,
            } => prior::ScenarioShape::Route {
                waypoints: waypoints.iter().map(|w| xy(*w)).collect::<Result<_, _>>()?,
                cross_track_sigma_m: *cross_track_sigma_m,
            },
            Self::Area { polygons, .. } => prior::ScenarioShape::Area {
                polygons: place_polygons(polygons, xy)?,
            },
            Self::Segments { segments, poa, .. } => prior::ScenarioShape::Segments {
                segments: segments
                    .iter()
                    .map(|(id, mp)| {
                        Ok(prior::Segment {
                            id: id.clone(),
                            polygons: place_polygons(mp, xy)?,
                        })
                    })
                    .collect::<Result<_, E>>()?,
                poa: poa.clone(),
            },
            Self::Rings {
                position,
                quantiles,
                mode,
            } => prior::ScenarioShape::Rings {
                center: xy(*position)?,
                quantiles: quantiles.clone(),
                interpolation: *mode,
            },
            Self::Drift(_) => return Ok(None),
        }))
    }
}

/// Polygons with every vertex placed by `xy` (at seekgrid's cell sizes the curvature of a
/// projected edge is far below a cell).
///
/// # Errors
/// The first error of `xy`.
pub fn place_polygons<E>(
    mp: &MultiPolygon<f64>,
    xy: &impl Fn([f64; 2]) -> Result<Coord<f64>, E>,
) -> Result<MultiPolygon<f64>, E> {
    let ring = |ls: &LineString<f64>| -> Result<LineString<f64>, E> {
        ls.0.iter()
            .map(|c| xy([c.x, c.y]))
            .collect::<Result<Vec<_>, _>>()
            .map(LineString)
    };
    mp.0.iter()
        .map(|p| {
            Ok(Polygon::new(
                ring(p.exterior())?,
                p.interiors().iter().map(ring).collect::<Result<_, _>>()?,
            ))
        })
        .collect::<Result<Vec<_>, E>>()
        .map(MultiPolygon)
}

impl PatternDef {
    /// The search crate's pattern, its centre placed by `xy` and its true bearings turned by
    /// `bearing` (true bearing, where) into the frame's.
    ///
    /// # Errors
    /// The error of `xy`.
    pub fn to_search<E>(
        &self,
        xy: &impl Fn([f64; 2]) -> Result<Coord<f64>, E>,
        bearing: &impl Fn(f64, [f64; 2]) -> f64,
    ) -> Result<search::Pattern, E> {
        let rectangle = |r: &RectangleOnChart| -> Result<search::Rectangle, E> {
            Ok(search::Rectangle {
                center: xy(r.center)?,
                length_m: r.length_m,
                width_m: r.width_m,
                major_grid_bearing_deg: bearing(r.major_bearing_deg, r.center),
                track_spacing_m: r.track_spacing_m,
            })
        };
        Ok(match self {
            Self::ParallelSweep(r) => search::Pattern::ParallelSweep(rectangle(r)?),
            Self::CreepingLine(r) => search::Pattern::CreepingLine(rectangle(r)?),
            Self::ExpandingSquare {
                center,
                track_spacing_m,
                legs,
                first_leg_bearing_deg,
            } => search::Pattern::ExpandingSquare {
                center: xy(*center)?,
                track_spacing_m: *track_spacing_m,
                legs: *legs,
                first_leg_grid_bearing_deg: bearing(*first_leg_bearing_deg, *center),
            },
            Self::SectorSearch {
                center,
                radius_m,
                first_leg_bearing_deg,
                sectors,
            } => search::Pattern::SectorSearch {
                center: xy(*center)?,
                radius_m: *radius_m,
                first_leg_grid_bearing_deg: bearing(*first_leg_bearing_deg, *center),
                sectors: *sectors,
            },
        })
    }

    /// The centre or datum, [lon, lat].
    #[must_use]
    pub fn center(&self) -> [f64; 2] {
        match self {
            Self::ParallelSweep(r) | Self::CreepingLine(r) => r.center,
            Self::ExpandingSquare { center, .. } | Self::SectorSearch { center, .. } => *center,
        }
    }
}

impl LeewayDef {
    /// The drift crate's leeway coefficients.
    #[must_use]
    pub fn coefficients(&self) -> drift::Leeway {
        drift::Leeway {
            downwind_slope: self.downwind_slope,
            downwind_offset_kn: self.downwind_offset_kn,
            downwind_sigma_kn: self.downwind_sigma_kn,
            crosswind_slope: self.crosswind_slope,
            crosswind_offset_kn: self.crosswind_offset_kn,
            crosswind_sigma_kn: self.crosswind_sigma_kn,
            jibe_per_h: self.jibe_per_h,
        }
    }
}

impl VectorSample {
    /// The drift crate's estimate.
    #[must_use]
    pub fn estimate(&self) -> drift::VectorEstimate {
        drift::VectorEstimate {
            speed_kn: self.speed_kn,
            direction_deg: self.direction_deg,
            speed_sigma_kn: self.speed_sigma_kn,
            direction_sigma_deg: self.direction_sigma_deg,
        }
    }
}

/// Hours a series or field may fall short of the drift at either end and be held at its end
/// value without `hold_environment_beyond_series`: less than one step of an hourly forecast.
pub const HELD_WITHOUT_ASKING_H: f64 = 1.0;

impl VectorDef {
    /// The times a series or a field covers, first and last; `None` for a constant and for a
    /// series or field of a single time (held steady by design).
    #[must_use]
    pub fn time_span(&self) -> Option<(Time, Time)> {
        let times: Vec<Time> = match self {
            Self::Constant(_) => return None,
            Self::Series { samples, .. } => samples.iter().map(|(t, _)| *t).collect(),
            Self::Field { samples, .. } => samples.iter().map(|s| s.time).collect(),
            Self::Forecast { grid, .. } => grid.times.clone(),
        };
        let first = *times.iter().min()?;
        let last = *times.iter().max()?;
        (first < last).then_some((first, last))
    }

    /// What is missing when this series or field does not cover `from..=to` (give or take
    /// [`HELD_WITHOUT_ASKING_H`]): a message naming
    /// `what` (`"wind"`, `"current"`), the gap and the fixes the file accepts; `None` when it
    /// covers them (or is constant).
    #[must_use]
    pub fn uncovered(&self, what: &str, from: Time, to: Time) -> Option<String> {
        let (first, last) = self.time_span()?;
        let fmt = |t: Time| t.format("%Y-%m-%dT%H:%MZ").to_string();
        let hours = |a: Time, b: Time| seekgrid_core::units::s_to_hours((b - a).as_seconds_f64());
        let slack = chrono::TimeDelta::seconds(seekgrid_core::units::hours_to_s(
            HELD_WITHOUT_ASKING_H,
        ) as i64);
        let gap = if first > from + slack {
            format!(
                "starts at {}, {:.1} h after the drift begins ({})",
                fmt(first),
                hours(from, first),
                fmt(from)
            )
        } else if last + slack < to {
            format!(
                "ends at {}, {:.1} h before the drift does ({})",
                fmt(last),
                hours(last, to),
                fmt(to)
            )
        } else {
            return None;
        };
        Some(format!(
            "the {what} {gap}, and would be held at its {} value for that time; extend the file to cover the drift, or add hold_environment_beyond_series = true to this scenario to hold it",
            if first > from + slack {
                "first"
            } else {
                "last"
            }
        ))
    }

    /// The drift crate's environment (a gridded field is built into its lattice here).
    ///
    /// # Errors
    /// [`drift::DriftError`] from [`drift::GriddedField::from_samples`]: an incomplete or
    /// uneven lattice, a bad sigma.
    pub fn environment(&self) -> Result<drift::Environment, drift::DriftError> {
        Ok(match self {
            Self::Constant(s) => drift::Environment::Constant(s.estimate()),
            Self::Series { samples, .. } => drift::Environment::Series(
                samples.iter().map(|(t, s)| (*t, s.estimate())).collect(),
            ),
            Self::Field {
                samples,
                speed_sigma_kn,
                direction_sigma_deg,
                ..
            } => {
                let nodes: Vec<drift::GridSample> = samples
                    .iter()
                    .map(|s| drift::GridSample {
                        lon_deg: s.lon,
                        lat_deg: s.lat,
                        time: s.time,
                        u_kn: s.u_kn,
                        v_kn: s.v_kn,
                    })
                    .collect();
                drift::Environment::Gridded(drift::GriddedField::from_samples(
                    &nodes,
                    *speed_sigma_kn,
                    *direction_sigma_deg,
                )?)
            }
            Self::Forecast {
                grid,
                speed_sigma_kn,
                direction_sigma_deg,
                beyond_box,
                ..
            } => {
                let files: Vec<String> =
                    grid.files.iter().map(|f| f.display().to_string()).collect();
                let label = format!(
                    "field of {} ({}, {})",
                    files.join(", "),
                    grid.components.0,
                    grid.components.1
                );
                drift::Environment::Gridded(drift::GriddedField::on_lattice(
                    grid.lon,
                    grid.lat,
                    &grid.times,
                    grid.u_kn.clone(),
                    grid.v_kn.clone(),
                    (*speed_sigma_kn, *direction_sigma_deg),
                    *beyond_box,
                    &label,
                )?)
            }
        })
    }
}

impl DriftDef {
    /// The wind and current that do not cover this drift from going adrift to the later of
    /// `until` and the latest time adrift: for each, its key in the scenario (`"current"`,
    /// `"wind"`), the key of its file (`"series"`, `"field"`) and what is missing. Empty when
    /// they cover it, or when the scenario says `hold_environment_beyond_series = true`.
    #[must_use]
    pub fn environment_gaps(&self, until: Time) -> Vec<(&'static str, &'static str, String)> {
        if self.hold_environment_beyond_series {
            return Vec::new();
        }
        let end = until.max(self.adrift_latest);
        [("current", &self.current), ("wind", &self.wind)]
            .into_iter()
            .filter_map(|(key, v)| {
                let file_key = match v {
                    VectorDef::Field { .. } => "field",
                    VectorDef::Forecast { key, .. } => key,
                    _ => "series",
                };
                v.uncovered(key, self.adrift_earliest, end)
                    .map(|message| (key, file_key, message))
            })
            .collect()
    }

    /// The drift crate's scenario.
    ///
    /// # Errors
    /// [`drift::DriftError`] naming `current` or `wind` when a gridded field cannot be built.
    pub fn scenario(&self) -> Result<drift::DriftScenario, drift::DriftError> {
        // The drift crate names a gridded field's fields `gridded.*`; say which vector.
        let named = |which: &str, e: drift::DriftError| match e {
            drift::DriftError::BadGrid { what, .. } => drift::DriftError::BadGrid {
                field: which.to_owned(),
                what,
            },
            drift::DriftError::NotFinite { field, value } => drift::DriftError::NotFinite {
                field: field.replacen("gridded", which, 1),
                value,
            },
            drift::DriftError::Negative { field, value } => drift::DriftError::Negative {
                field: field.replacen("gridded", which, 1),
                value,
            },
            other => other,
        };
        Ok(drift::DriftScenario {
            lkp_lon_lat: (self.position[0], self.position[1]),
            position_sigma_m: self.position_sigma_m,
            adrift_earliest: self.adrift_earliest,
            adrift_latest: self.adrift_latest,
            current: self
                .current
                .environment()
                .map_err(|e| named("current", e))?,
            wind: self.wind.environment().map_err(|e| named("wind", e))?,
            leeway: self.leeway.coefficients(),
            diffusivity_m2_s: self.diffusivity_m2_s,
            particles: self.particles,
            seed: self.seed,
        })
    }
}

/// Search speed above which a unit is treated as an aircraft (knots); only the briefing
/// wording depends on it.
pub const AIRCRAFT_SPEED_KN: f64 = 40.0;

impl UnitDef {
    /// The planner's unit: a ground team when it has searchers, an aircraft above
    /// [`AIRCRAFT_SPEED_KN`], a vessel otherwise.
    #[must_use]
    pub fn spec(&self) -> plan::UnitSpec {
        let kind = match self.searchers {
            Some(searchers) => plan::UnitKind::GroundTeam { searchers },
            None if seekgrid_core::units::mps_to_knots(self.speed_mps) > AIRCRAFT_SPEED_KN => {
                plan::UnitKind::Aircraft
            }
            None => plan::UnitKind::Vessel,
        };
        plan::UnitSpec {
            id: self.id.clone(),
            speed_mps: self.speed_mps,
            hours_on_scene: self.hours_on_scene,
            sweep_width_m: self.sweep_width_m,
            track_spacing_min_m: self.track_spacing_min_m,
            law: self.detection,
            kind,
        }
    }
}
