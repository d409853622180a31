//! From a validated incident (lon/lat) to values in the working frame: the frame, the
//! projected scenarios of the prior, drift scenarios and search geometry.
//!
//! [`prepare`] is a short sequence of named steps, one per section of the incident: the frame,
//! the pool weights, the scenarios, the pool, the land, the searches. The conversions
//! themselves (scenario to prior shape, pattern to search pattern, drift definition to drift
//! scenario) belong to the incident model, which the loader also uses to run the libraries'
//! checks; this module only supplies the projection.

use geo::{Coord, MultiPolygon};
use seekgrid_core::{Frame, ProjectedBox};
use seekgrid_drift as drift;
use seekgrid_incident::model::{
    Incident, Item, ScenarioDef, ScenarioKind, SearchDef, SearchGeometry, Time, place_polygons,
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

/// What a completed search covered, in the working frame.
#[derive(Debug, Clone)]
pub enum PreparedGeometry {
    /// The tasked pattern, flown in full.
    Pattern(search::Pattern),
    /// A followed track, or the flown part of a pattern cut short (`done_fraction` < 1),
    /// scored along its points with the search's law and sweep width.
    Track {
        /// The points, working frame.
        points: Vec<Coord<f64>>,
        /// The time of every point, when the track file gave one for each.
        times: Option<Vec<Time>>,
        /// For a pattern cut short: the pattern as tasked.
        cut_from: Option<search::Pattern>,
    },
}

/// A completed search in the working frame.
#[derive(Debug, Clone)]
pub struct PreparedSearch {
    /// Index in the incident's search list.
    pub index: usize,
    /// What the incident says.
    pub def: SearchDef,
    /// Detection law.
    pub law: search::DetectionLaw,
    /// Sweep width with its correction factors.
    pub sweep_width: search::SweepWidth,
    /// The pattern or the track, in the frame.
    pub geometry: PreparedGeometry,
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

/// Why an incident cannot be prepared. [`PrepareError::item`] names the part of the incident
/// file at fault, for `FILE:LINE:COL` messages.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum PrepareError {
    /// A position cannot be projected.
    #[error("{what}: {source}")]
    Frame {
        /// Which part of the file.
        item: Item,
        /// Which input, in words.
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
    /// A drift scenario the drift crate refuses.
    #[error("drift scenario \"{id}\": {source}")]
    Drift {
        /// Scenario id.
        id: String,
        /// Why.
        source: Box<drift::DriftError>,
    },
    /// A search the search crate refuses.
    #[error("search \"{id}\": {source}")]
    Search {
        /// Search id.
        id: String,
        /// Why.
        source: Box<search::SearchError>,
    },
    /// The logarithmic pool cannot mix particles and cells (the loader refuses such a file;
    /// this guards incidents built in code).
    #[error(
        "the logarithmic pool cannot combine drift scenarios (particles) with cell maps; use pool = \"linear\" in [prior], or remove the drift scenarios"
    )]
    LogPoolWithDrift,
}

impl PrepareError {
    /// The part of the incident file this error concerns.
    #[must_use]
    pub fn item(&self) -> Item {
        match self {
            Self::Frame { item, .. } => item.clone(),
            Self::Prior { id, .. } | Self::Drift { id, .. } => Item::Scenario(id.clone()),
            Self::Search { id, .. } => Item::Search(id.clone()),
            Self::LogPoolWithDrift => Item::Prior,
        }
    }
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
        item: Item::Header,
        what: "first position".into(),
        source: Box::new(source),
    })
}

/// The projection into the frame, for one item of the incident (named in its errors).
struct Place<'a> {
    frame: &'a Frame,
    item: Item,
    what: String,
}

impl Place<'_> {
    fn xy(&self, p: [f64; 2]) -> Result<Coord<f64>, PrepareError> {
        self.frame
            .checked_to_xy(p[0], p[1])
            .map_err(|source| PrepareError::Frame {
                item: self.item.clone(),
                what: self.what.clone(),
                source: Box::new(source),
            })
    }

    fn bearing(&self, true_deg: f64, at: [f64; 2]) -> f64 {
        self.frame.true_to_grid_bearing_deg(true_deg, at[0], at[1])
    }

    fn of_scenario<'a>(frame: &'a Frame, s: &ScenarioDef) -> Place<'a> {
        Place {
            frame,
            item: Item::Scenario(s.id.clone()),
            what: format!("scenario \"{}\"", s.id),
        }
    }

    fn of_search<'a>(frame: &'a Frame, s: &SearchDef) -> Place<'a> {
        Place {
            frame,
            item: Item::Search(s.id.clone()),
            what: format!("search \"{}\"", s.id),
        }
    }
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
    let place = Place {
        frame,
        item: Item::Coastline,
        what: what.to_owned(),
    };
    place_polygons(mp, &|p| place.xy(p))
}

/// A pattern of the incident in the working frame (bearings turned from true to grid).
///
/// # Errors
/// [`PrepareError::Frame`] for a centre out of range.
pub fn pattern(
    frame: &Frame,
    s: &SearchDef,
    p: &seekgrid_incident::model::PatternDef,
) -> Result<search::Pattern, PrepareError> {
    let place = Place::of_search(frame, s);
    p.to_search(&|q| place.xy(q), &|b, at| place.bearing(b, at))
}

/// Each analyst's weight and each scenario's share within its analyst, normalised.
struct Weights {
    analysts: Vec<(String, f64)>,
}

impl Weights {
    fn of(incident: &Incident) -> Self {
        let total: f64 = incident.analysts.iter().map(|a| a.weight).sum();
        Self {
            analysts: incident
                .analysts
                .iter()
                .map(|a| (a.id.clone(), a.weight / total))
                .collect(),
        }
    }

    /// A scenario's mass in the pool: its analyst's weight times its share of that analyst.
    fn mass(&self, incident: &Incident, s: &ScenarioDef) -> f64 {
        let analyst = self
            .analysts
            .iter()
            .find(|(a, _)| *a == s.analyst)
            .map_or(0.0, |(_, w)| *w);
        let of_analyst: f64 = incident
            .scenarios
            .iter()
            .filter(|t| t.analyst == s.analyst)
            .map(|t| t.weight)
            .sum();
        analyst * (s.weight / of_analyst)
    }
}

/// The scenarios in the frame: the stationary part for the prior, the drift part for the
/// simulation.
#[derive(Default)]
struct Scenarios {
    stationary: Vec<prior::Scenario>,
    /// Each analyst's share of the pool held by stationary scenarios, in order of appearance.
    stationary_share: Vec<(String, f64)>,
    drift: Vec<PreparedDrift>,
    scenario_weights: Vec<(String, String, f64)>,
    segments: Option<Vec<prior::Segment>>,
}

fn scenarios(
    incident: &Incident,
    frame: &Frame,
    weights: &Weights,
) -> Result<Scenarios, PrepareError> {
    let mut out = Scenarios::default();
    for s in &incident.scenarios {
        let mass = weights.mass(incident, s);
        out.scenario_weights
            .push((s.id.clone(), s.analyst.clone(), mass));
        match &s.kind {
            ScenarioKind::Drift(d) => out.drift.push(PreparedDrift {
                id: s.id.clone(),
                analyst: s.analyst.clone(),
                mass,
                scenario: d.scenario().map_err(|source| PrepareError::Drift {
                    id: s.id.clone(),
                    source: Box::new(source),
                })?,
            }),
            _ => stationary(&mut out, frame, s, mass)?,
        }
    }
    Ok(out)
}

/// One stationary scenario projected, checked by the prior crate and added with its share.
fn stationary(
    out: &mut Scenarios,
    frame: &Frame,
    s: &ScenarioDef,
    mass: f64,
) -> Result<(), PrepareError> {
    let place = Place::of_scenario(frame, s);
    let Some(shape) = s
        .kind
        .shape(&|p| place.xy(p), &|b, at| place.bearing(b, at))?
    else {
        return Ok(());
    };
    shape.validate().map_err(|source| PrepareError::Prior {
        id: s.id.clone(),
        source: Box::new(source),
    })?;
    if let (None, prior::ScenarioShape::Segments { segments, .. }) = (&out.segments, &shape) {
        out.segments = Some(segments.clone());
    }
    match out
        .stationary_share
        .iter_mut()
        .find(|(a, _)| *a == s.analyst)
    {
        Some((_, w)) => *w += mass,
        None => out.stationary_share.push((s.analyst.clone(), mass)),
    }
    out.stationary.push(prior::Scenario {
        id: s.id.clone(),
        analyst: s.analyst.clone(),
        weight: s.weight,
        shape,
    });
    Ok(())
}

/// The pool, refused when logarithmic with drift scenarios.
fn pool(incident: &Incident, drift: &[PreparedDrift]) -> Result<prior::Pool, PrepareError> {
    if incident.pool == prior::Pool::Logarithmic && !drift.is_empty() {
        return Err(PrepareError::LogPoolWithDrift);
    }
    Ok(incident.pool)
}

fn land(incident: &Incident, frame: &Frame) -> Result<Option<MultiPolygon<f64>>, PrepareError> {
    incident
        .coastline
        .as_ref()
        .map(|c| project_polygons(frame, "coastline", c))
        .transpose()
}

fn searches(incident: &Incident, frame: &Frame) -> Result<Vec<PreparedSearch>, PrepareError> {
    incident
        .searches
        .iter()
        .enumerate()
        .map(|(index, s)| prepared_search(frame, index, s))
        .collect()
}

/// One completed search in the frame: its sweep width, its pattern (cut to the share flown)
/// or its track.
fn prepared_search(
    frame: &Frame,
    index: usize,
    s: &SearchDef,
) -> Result<PreparedSearch, PrepareError> {
    let refused = |source| PrepareError::Search {
        id: s.id.clone(),
        source: Box::new(source),
    };
    let sweep_width =
        search::SweepWidth::new(s.sweep_width_m, &s.sweep_width_factors).map_err(refused)?;
    let place = Place::of_search(frame, s);
    let geometry = match &s.geometry {
        SearchGeometry::Pattern(p) => {
            let pattern = pattern(frame, s, p)?;
            pattern.validate().map_err(refused)?;
            if s.done_fraction < 1.0 {
                PreparedGeometry::Track {
                    points: pattern.truncated_tracks(s.done_fraction).0,
                    times: None,
                    cut_from: Some(pattern),
                }
            } else {
                PreparedGeometry::Pattern(pattern)
            }
        }
        SearchGeometry::Track { points, times, .. } => PreparedGeometry::Track {
            points: points
                .0
                .iter()
                .map(|c| place.xy([c.x, c.y]))
                .collect::<Result<_, _>>()?,
            times: times.iter().copied().collect(),
            cut_from: None,
        },
    };
    Ok(PreparedSearch {
        index,
        def: s.clone(),
        law: s.detection,
        sweep_width,
        geometry,
    })
}

/// Projects an incident into its working frame, section by section.
///
/// # Errors
/// A position out of range, a scenario the prior or drift crate refuses, a search the search
/// crate refuses, or a logarithmic pool with drift scenarios; [`PrepareError::item`] says
/// which part of the file.
pub fn prepare(incident: &Incident) -> Result<Prepared, PrepareError> {
    let frame = frame_for(incident)?;
    let weights = Weights::of(incident);
    let scenarios = scenarios(incident, &frame, &weights)?;
    let pool = pool(incident, &scenarios.drift)?;
    let land = land(incident, &frame)?;
    let searches = searches(incident, &frame)?;
    Ok(Prepared {
        frame,
        stationary_mass: scenarios.stationary_share.iter().map(|(_, w)| *w).sum(),
        stationary_analysts: scenarios
            .stationary_share
            .into_iter()
            .map(|(id, weight)| prior::Analyst { id, weight })
            .collect(),
        stationary: scenarios.stationary,
        drift: scenarios.drift,
        analyst_weights: weights.analysts,
        scenario_weights: scenarios.scenario_weights,
        segments: scenarios.segments,
        land,
        searches,
        pool,
    })
}

impl PreparedSearch {
    /// The pattern, when the search flew it in full (a pattern cut short is scored as a
    /// track; see [`PreparedGeometry`]).
    #[must_use]
    pub fn pattern(&self) -> Option<&search::Pattern> {
        match &self.geometry {
            PreparedGeometry::Pattern(p) => Some(p),
            PreparedGeometry::Track { .. } => None,
        }
    }

    /// Whether the search's area or track comes within one sweep width of the box `b` (e.g. a
    /// grid's extent): false when it lies wholly outside, where it can find nothing.
    #[must_use]
    pub fn reaches(&self, b: &ProjectedBox) -> bool {
        use geo::Intersects;
        let grown = b.expanded(self.sweep_width.metres()).to_polygon();
        match &self.geometry {
            PreparedGeometry::Pattern(p) => p.area_polygon().intersects(&grown),
            PreparedGeometry::Track { points: t, .. } if t.len() == 1 => {
                grown.intersects(&geo::Point(t[0]))
            }
            PreparedGeometry::Track { points: t, .. } => {
                geo::LineString(t.clone()).intersects(&grown)
            }
        }
    }

    /// The box in the frame that this search touches (its area, or its track), grown by a
    /// margin of two sweep widths on every side.
    #[must_use]
    pub fn extent(&self) -> Option<ProjectedBox> {
        let margin = self.sweep_width.metres() * 2.0;
        let pts: Vec<Coord<f64>> = match &self.geometry {
            PreparedGeometry::Pattern(p) => p.area_polygon().exterior().0.clone(),
            PreparedGeometry::Track { points, .. } => points.clone(),
        };
        ProjectedBox::of_points(pts).map(|b| b.expanded(margin))
    }
}
