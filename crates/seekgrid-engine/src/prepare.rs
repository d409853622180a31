//! From a validated incident (lon/lat) to values in the working frame: the frame, the
//! projected scenarios of the prior, drift scenarios and search geometry.

use geo::{Coord, LineString, MultiPolygon, Polygon};
use seekgrid_core::{Frame, ProjectedBox};
use seekgrid_drift as drift;
use seekgrid_incident::model::{
    DetectionName, DriftDef, Incident, PatternDef, PoolChoice, RingMode, ScenarioKind,
    SearchGeometry, Time, VectorDef, VectorSample,
};
use seekgrid_prior as prior;
use seekgrid_search as search;

/// A drift scenario ready to simulate, with its share of the pool.
#[derive(Debug, Clone)]
pub struct PreparedDrift {
    /// Scenario id.
    pub id: String,
    /// Analyst id.
    pub analyst: String,
    /// Its mass in the linear pool: analyst weight x scenario weight, both normalised.
    pub mass: f64,
    /// The drift crate's description.
    pub scenario: drift::DriftScenario,
}

/// A completed search in the working frame.
#[derive(Debug, Clone)]
pub struct PreparedSearch {
    /// Index in the incident's search list.
    pub index: usize,
    /// What the incident says.
    pub def: seekgrid_incident::model::SearchDef,
    /// Detection law.
    pub law: search::DetectionLaw,
    /// Sweep width with its correction factors.
    pub sweep_width: search::SweepWidth,
    /// The pattern (rectangles and datum patterns) in the frame.
    pub pattern: Option<search::Pattern>,
    /// The followed track in the frame.
    pub track: Option<Vec<Coord<f64>>>,
    /// The time of every fix of the followed track, when the file gave one for each.
    pub track_times: Option<Vec<Time>>,
}

/// An incident in the working frame.
#[derive(Debug, Clone)]
pub struct Prepared {
    /// The working frame.
    pub frame: Frame,
    /// Analysts of the stationary part, weighted by their stationary share.
    pub stationary_analysts: Vec<prior::Analyst>,
    /// Stationary scenarios.
    pub stationary: Vec<prior::Scenario>,
    /// Share of the pool held by stationary scenarios.
    pub stationary_mass: f64,
    /// Drift scenarios.
    pub drift: Vec<PreparedDrift>,
    /// Normalised analyst weights (all scenarios).
    pub analyst_weights: Vec<(String, f64)>,
    /// Effective weight of each scenario in the pool (analyst x scenario, normalised).
    pub scenario_weights: Vec<(String, String, f64)>,
    /// Segments of the incident (from the first segments scenario), for the segment tables.
    pub segments: Option<Vec<prior::Segment>>,
    /// Land polygons in the frame.
    pub land: Option<MultiPolygon<f64>>,
    /// Completed searches in the frame, in file order.
    pub searches: Vec<PreparedSearch>,
    /// Pool.
    pub pool: prior::Pool,
}

/// Why an incident cannot be prepared.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum PrepareError {
    /// A position cannot be projected.
    #[error("{what}: {source}")]
    Frame {
        /// Which input.
        what: String,
        /// Why.
        source: Box<seekgrid_core::CoreError>,
    },
    /// A scenario the prior crate refuses.
    #[error("scenario \"{id}\": {source}")]
    Prior {
        /// Scenario id.
        id: String,
        /// Why.
        source: Box<prior::PriorError>,
    },
    /// A search the search crate refuses.
    #[error("search \"{id}\": {source}")]
    Search {
        /// Search id.
        id: String,
        /// Why.
        source: Box<search::SearchError>,
    },
    /// The logarithmic pool cannot mix particles and cells.
    #[error(
        "the logarithmic pool cannot combine drift scenarios (particles) with cell maps; use pool = \"linear\" in [prior], or remove the drift scenarios"
    )]
    LogPoolWithDrift,
}

/// The first position named anywhere in the incident, to choose the UTM zone.
fn first_position(incident: &Incident) -> Option<[f64; 2]> {
    incident.scenarios.iter().find_map(|s| match &s.kind {
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

/// The working frame: the CRS given, or the UTM zone of the first position.
///
/// # Errors
/// [`PrepareError::Frame`] when the first position is not valid.
pub fn frame_for(incident: &Incident) -> Result<Frame, PrepareError> {
    if let Some(zone) = incident.crs {
        return Ok(Frame::new(zone));
    }
    let [lon, lat] = first_position(incident).unwrap_or([0.0, 0.0]);
    Frame::for_position(lon, lat).map_err(|source| PrepareError::Frame {
        what: "first position".into(),
        source: Box::new(source),
    })
}

fn xy(frame: &Frame, what: &str, p: [f64; 2]) -> Result<Coord<f64>, PrepareError> {
    frame
        .checked_to_xy(p[0], p[1])
        .map_err(|source| PrepareError::Frame {
            what: what.to_owned(),
            source: Box::new(source),
        })
}

/// Projects lon/lat polygons into the frame (vertex by vertex; at seekgrid's cell sizes the
/// curvature of a projected edge is far below a cell).
///
/// # Errors
/// [`PrepareError::Frame`] for a position out of range.
pub fn project_polygons(
    frame: &Frame,
    what: &str,
    mp: &MultiPolygon<f64>,
) -> Result<MultiPolygon<f64>, PrepareError> {
    let ring = |ls: &LineString<f64>| -> Result<LineString<f64>, PrepareError> {
        ls.0.iter()
            .map(|c| xy(frame, what, [c.x, c.y]))
            .collect::<Result<Vec<_>, _>>()
            .map(LineString)
    };
    mp.0.iter()
        .map(|p| {
            Ok(Polygon::new(
                ring(p.exterior())?,
                p.interiors()
                    .iter()
                    .map(ring)
                    .collect::<Result<Vec<_>, _>>()?,
            ))
        })
        .collect::<Result<Vec<_>, _>>()
        .map(MultiPolygon)
}

fn grid_bearing(frame: &Frame, bearing_deg: f64, at: [f64; 2]) -> f64 {
    frame.true_to_grid_bearing_deg(bearing_deg, at[0], at[1])
}

/// The detection law of the search crate for a name in the file.
#[must_use]
pub fn law(name: DetectionName) -> search::DetectionLaw {
    match name {
        DetectionName::InverseCube => search::DetectionLaw::InverseCube,
        DetectionName::Exponential => search::DetectionLaw::Exponential,
        DetectionName::DefiniteRange => search::DetectionLaw::DefiniteRange,
    }
}

/// A pattern of the incident in the working frame (bearings turned from true to grid).
///
/// # Errors
/// [`PrepareError::Frame`] for a centre out of range.
pub fn pattern(frame: &Frame, what: &str, p: &PatternDef) -> Result<search::Pattern, PrepareError> {
    Ok(match p {
        PatternDef::ParallelSweep(r) | PatternDef::CreepingLine(r) => {
            let center = xy(frame, what, r.center)?;
            let major_grid_bearing_deg = grid_bearing(frame, r.major_bearing_deg, r.center);
            if matches!(p, PatternDef::ParallelSweep(_)) {
                search::Pattern::ParallelSweep {
                    center,
                    length_m: r.length_m,
                    width_m: r.width_m,
                    major_grid_bearing_deg,
                    track_spacing_m: r.track_spacing_m,
                }
            } else {
                search::Pattern::CreepingLine {
                    center,
                    length_m: r.length_m,
                    width_m: r.width_m,
                    major_grid_bearing_deg,
                    track_spacing_m: r.track_spacing_m,
                }
            }
        }
        PatternDef::ExpandingSquare {
            center,
            track_spacing_m,
            legs,
            first_leg_bearing_deg,
        } => search::Pattern::ExpandingSquare {
            center: xy(frame, what, *center)?,
            track_spacing_m: *track_spacing_m,
            legs: *legs,
            first_leg_grid_bearing_deg: grid_bearing(frame, *first_leg_bearing_deg, *center),
        },
        PatternDef::SectorSearch {
            center,
            radius_m,
            first_leg_bearing_deg,
            sectors,
        } => search::Pattern::SectorSearch {
            center: xy(frame, what, *center)?,
            radius_m: *radius_m,
            first_leg_grid_bearing_deg: grid_bearing(frame, *first_leg_bearing_deg, *center),
            sectors: *sectors,
        },
    })
}

fn vector_estimate(s: &VectorSample) -> drift::VectorEstimate {
    drift::VectorEstimate {
        speed_kn: s.speed_kn,
        direction_deg: s.direction_deg,
        speed_sigma_kn: s.speed_sigma_kn,
        direction_sigma_deg: s.direction_sigma_deg,
    }
}

fn environment(id: &str, v: &VectorDef) -> Result<drift::Environment, PrepareError> {
    Ok(match v {
        VectorDef::Constant(s) => drift::Environment::Constant(vector_estimate(s)),
        VectorDef::Series { samples, .. } => drift::Environment::Series(
            samples
                .iter()
                .map(|(t, s)| (*t, vector_estimate(s)))
                .collect(),
        ),
        VectorDef::Field {
            samples,
            speed_sigma_kn,
            direction_sigma_deg,
            ..
        } => {
            let grid_samples: Vec<drift::GridSample> = samples
                .iter()
                .map(|s| drift::GridSample {
                    lon_deg: s.lon,
                    lat_deg: s.lat,
                    time: s.time,
                    u_kn: s.u_kn,
                    v_kn: s.v_kn,
                })
                .collect();
            drift::Environment::Gridded(
                drift::GriddedField::from_samples(
                    &grid_samples,
                    *speed_sigma_kn,
                    *direction_sigma_deg,
                )
                .map_err(|e| PrepareError::Frame {
                    what: format!("scenario \"{id}\" gridded field"),
                    source: Box::new(seekgrid_core::CoreError::BadMass {
                        what: e.to_string(),
                    }),
                })?,
            )
        }
    })
}

fn drift_scenario(d: &DriftDef, id: &str) -> Result<drift::DriftScenario, PrepareError> {
    Ok(drift::DriftScenario {
        lkp_lon_lat: (d.position[0], d.position[1]),
        position_sigma_m: d.position_sigma_m,
        adrift_earliest: d.adrift_earliest,
        adrift_latest: d.adrift_latest,
        current: environment(id, &d.current)?,
        wind: environment(id, &d.wind)?,
        leeway: drift::Leeway {
            downwind_slope: d.leeway.downwind_slope,
            downwind_offset_kn: d.leeway.downwind_offset_kn,
            downwind_sigma_kn: d.leeway.downwind_sigma_kn,
            crosswind_slope: d.leeway.crosswind_slope,
            crosswind_offset_kn: d.leeway.crosswind_offset_kn,
            crosswind_sigma_kn: d.leeway.crosswind_sigma_kn,
            jibe_per_h: d.leeway.jibe_per_h,
        },
        diffusivity_m2_s: d.diffusivity_m2_s,
        particles: d.particles,
        seed: d.seed,
    })
}

/// Projects an incident into its working frame.
///
/// # Errors
/// A position out of range, a scenario the prior refuses, a search the search crate refuses,
/// or a logarithmic pool with drift scenarios.
pub fn prepare(incident: &Incident) -> Result<Prepared, PrepareError> {
    let frame = frame_for(incident)?;
    let total_a: f64 = incident.analysts.iter().map(|a| a.weight).sum();
    let analyst_weights: Vec<(String, f64)> = incident
        .analysts
        .iter()
        .map(|a| (a.id.clone(), a.weight / total_a))
        .collect();
    let weight_of = |id: &str| {
        analyst_weights
            .iter()
            .find(|(a, _)| a == id)
            .map_or(0.0, |(_, w)| *w)
    };
    let scenario_total = |analyst: &str| -> f64 {
        incident
            .scenarios
            .iter()
            .filter(|s| s.analyst == analyst)
            .map(|s| s.weight)
            .sum()
    };

    let mut stationary = Vec::new();
    let mut drift = Vec::new();
    let mut scenario_weights = Vec::new();
    let mut segments = None;
    let mut stationary_share: Vec<(String, f64)> = Vec::new();
    for s in &incident.scenarios {
        let within = s.weight / scenario_total(&s.analyst);
        let mass = weight_of(&s.analyst) * within;
        scenario_weights.push((s.id.clone(), s.analyst.clone(), mass));
        let what = format!("scenario \"{}\"", s.id);
        let shape = match &s.kind {
            ScenarioKind::Point {
                position,
                sigma_major_m,
                sigma_minor_m,
                major_bearing_deg,
            } => prior::Shape::Point {
                center: xy(&frame, &what, *position)?,
                sigma_major_m: *sigma_major_m,
                sigma_minor_m: *sigma_minor_m,
                major_grid_bearing_deg: grid_bearing(&frame, *major_bearing_deg, *position),
            },
            ScenarioKind::Route {
                waypoints,
                cross_track_sigma_m,
            } => prior::Shape::Route {
                waypoints: waypoints
                    .iter()
                    .map(|w| xy(&frame, &what, *w))
                    .collect::<Result<_, _>>()?,
                cross_track_sigma_m: *cross_track_sigma_m,
            },
            ScenarioKind::Area { polygons, .. } => prior::Shape::Area {
                polygons: project_polygons(&frame, &what, polygons)?,
            },
            ScenarioKind::Segments {
                segments: segs,
                poa,
                ..
            } => {
                let projected = segs
                    .iter()
                    .map(|(id, mp)| {
                        Ok(prior::Segment {
                            id: id.clone(),
                            polygons: project_polygons(&frame, &what, mp)?,
                        })
                    })
                    .collect::<Result<Vec<_>, PrepareError>>()?;
                if segments.is_none() {
                    segments = Some(projected.clone());
                }
                prior::Shape::Segments {
                    segments: projected,
                    poa: poa.clone(),
                }
            }
            ScenarioKind::Rings {
                position,
                quantiles,
                mode,
            } => prior::Shape::Rings {
                center: xy(&frame, &what, *position)?,
                quantiles: quantiles.clone(),
                interpolation: match mode {
                    RingMode::UniformPerRing => prior::RingInterpolation::UniformPerRing,
                    RingMode::MonotoneCubic => prior::RingInterpolation::MonotoneCubic,
                },
            },
            ScenarioKind::Drift(d) => {
                drift.push(PreparedDrift {
                    id: s.id.clone(),
                    analyst: s.analyst.clone(),
                    mass,
                    scenario: drift_scenario(d, &s.id)?,
                });
                continue;
            }
        };
        shape.validate().map_err(|source| PrepareError::Prior {
            id: s.id.clone(),
            source: Box::new(source),
        })?;
        match stationary_share.iter_mut().find(|(a, _)| *a == s.analyst) {
            Some((_, w)) => *w += mass,
            None => stationary_share.push((s.analyst.clone(), mass)),
        }
        stationary.push(prior::Scenario {
            id: s.id.clone(),
            analyst: s.analyst.clone(),
            weight: s.weight,
            shape,
        });
    }
    let stationary_mass: f64 = stationary_share.iter().map(|(_, w)| *w).sum();
    let stationary_analysts = stationary_share
        .into_iter()
        .map(|(id, weight)| prior::Analyst { id, weight })
        .collect();
    let pool = match incident.pool {
        PoolChoice::Linear => prior::Pool::Linear,
        PoolChoice::Logarithmic => prior::Pool::Logarithmic,
    };
    if pool == prior::Pool::Logarithmic && !drift.is_empty() {
        return Err(PrepareError::LogPoolWithDrift);
    }

    let land = incident
        .coastline
        .as_ref()
        .map(|c| project_polygons(&frame, "coastline", c))
        .transpose()?;

    let mut searches = Vec::new();
    for (index, s) in incident.searches.iter().enumerate() {
        let what = format!("search \"{}\"", s.id);
        let sweep_width = search::SweepWidth::new(s.sweep_width_m, &s.sweep_width_factors)
            .map_err(|source| PrepareError::Search {
                id: s.id.clone(),
                source: Box::new(source),
            })?;
        let track_times = match &s.geometry {
            SearchGeometry::Track { times, .. } => times.iter().copied().collect(),
            SearchGeometry::Pattern(_) => None,
        };
        let (pattern, track) = match &s.geometry {
            SearchGeometry::Pattern(p) => (Some(pattern(&frame, &what, p)?), None),
            SearchGeometry::Track { points, .. } => (
                None,
                Some(
                    points
                        .0
                        .iter()
                        .map(|c| xy(&frame, &what, [c.x, c.y]))
                        .collect::<Result<Vec<_>, _>>()?,
                ),
            ),
        };
        if let Some(p) = &pattern {
            p.validate().map_err(|source| PrepareError::Search {
                id: s.id.clone(),
                source: Box::new(source),
            })?;
        }
        searches.push(PreparedSearch {
            index,
            def: s.clone(),
            law: law(s.detection),
            sweep_width,
            pattern,
            track,
            track_times,
        });
    }

    Ok(Prepared {
        frame,
        stationary_analysts,
        stationary,
        stationary_mass,
        drift,
        analyst_weights,
        scenario_weights,
        segments,
        land,
        searches,
        pool,
    })
}

impl PreparedSearch {
    /// Whether the search's area or track comes within one sweep width of the box `b` (e.g. a
    /// grid's extent): false when it lies wholly outside, where it can find nothing.
    #[must_use]
    pub fn reaches(&self, b: &ProjectedBox) -> bool {
        use geo::Intersects;
        let grown = b.expanded(self.sweep_width.metres()).to_polygon();
        match (&self.pattern, &self.track) {
            (Some(p), _) => p.area_polygon().intersects(&grown),
            (None, Some(t)) if t.len() == 1 => grown.intersects(&geo::Point(t[0])),
            (None, Some(t)) => LineString(t.clone()).intersects(&grown),
            (None, None) => false,
        }
    }

    /// The box in the frame that this search touches (its area, or its track), grown by a
    /// margin of two sweep widths on every side.
    #[must_use]
    pub fn extent(&self) -> Option<ProjectedBox> {
        let margin = self.sweep_width.metres() * 2.0;
        let pts: Vec<Coord<f64>> = match (&self.pattern, &self.track) {
            (Some(p), _) => p.area_polygon().exterior().0.clone(),
            (None, Some(t)) => t.clone(),
            (None, None) => Vec::new(),
        };
        ProjectedBox::of_points(pts).map(|b| b.expanded(margin))
    }
}
