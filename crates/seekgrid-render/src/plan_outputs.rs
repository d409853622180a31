//! The writers of a plan's layers, one per [`Layer`]: GIS layers (`plan.geojson`), GPX routes
//! (`plan.gpx`), the briefing (`plan.md`) and the pictures (`plan.png`, `effort.png`), and the
//! plan's part of `summary.json` (`tasking.toml` is written by [`crate::tasking`]).
//!
//! Every headline number is computed once, by [`plan_totals`], so the briefing, the GIS layer,
//! the picture and the summary say the same thing.

use crate::gpx::{self, GpxHeader, NamedPoint, PointNamer, RouteSpec, routes_gpx};
use crate::layers::{Computed, Layer, Recorder};
use crate::outputs::{self, collection_bytes};
use crate::position::{self, format_position};
use crate::summary::CAUTION;
use crate::{self as render, ColourScale, MapStyle, Overlay, RenderError};
use geo::{Area, Coord, Polygon};
use geojson::{Feature, JsonObject};
use seekgrid_core::Frame;
use seekgrid_core::units::{M2_PER_KM2, METRES_PER_KM, m_to_nm};
use seekgrid_engine::PlanRun;
use seekgrid_incident::model::PositionFormat;
use seekgrid_plan::{SegmentAssignment, UnitAssignment};
use serde::Serialize;
use std::fmt::Write as _;

/// Which coordinate a value in degrees is: it decides the hemisphere letters and the width of
/// the degrees.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Axis {
    /// Latitude: `N`/`S`, two digits of degrees.
    Latitude,
    /// Longitude: `E`/`W`, three digits of degrees.
    Longitude,
}

/// Degrees and decimal minutes, e.g. `31°32.123'N`, `040°57.321'W`.
#[must_use]
pub fn ddm(value_deg: f64, axis: Axis) -> String {
    let hemi = match (axis, value_deg >= 0.0) {
        (Axis::Latitude, true) => 'N',
        (Axis::Latitude, false) => 'S',
        (Axis::Longitude, true) => 'E',
        (Axis::Longitude, false) => 'W',
    };
    let a = value_deg.abs();
    let mut d = a.floor();
    let mut m = ((a - d) * 60.0 * 1000.0).round() / 1000.0;
    if m >= 60.0 {
        d += 1.0;
        m -= 60.0;
    }
    match axis {
        Axis::Latitude => format!("{d:02.0}°{m:06.3}'{hemi}"),
        Axis::Longitude => format!("{d:03.0}°{m:06.3}'{hemi}"),
    }
}

/// How `unit`'s positions are written: the unit's own choice in the incident file, else the
/// run's (`--positions`), else the incident's, else degrees and decimal minutes.
#[must_use]
pub fn unit_positions(c: &Computed, unit: &str) -> PositionFormat {
    c.incident
        .units
        .iter()
        .find(|u| u.id == unit)
        .and_then(|u| u.positions)
        .or(c.settings.positions)
        .or(c.incident.positions)
        .unwrap_or(PositionFormat::Ddm)
}

fn true_bearing(frame: &Frame, grid_bearing_deg: f64, at: Coord<f64>) -> f64 {
    let (lon, lat) = frame.to_lon_lat(at);
    seekgrid_core::units::normalise_deg(grid_bearing_deg + frame.convergence_deg(lon, lat))
}

/// The plan's headline numbers, for all units together.
#[derive(Debug, Clone, PartialEq)]
pub struct PlanTotals {
    /// Joint POS of all units: the search areas and the ground teams combined as
    /// `1 - (1 - areas)(1 - teams)`.
    pub pos_plan: f64,
    /// POS of the optimal allocation of all units' effort (exponential detection).
    pub pos_optimal_bound: f64,
    /// `pos_plan / pos_optimal_bound` (0 when the bound is 0).
    pub efficiency: f64,
    /// What `pos_plan` covers, in words.
    pub covers: String,
}

/// The plan's joint POS for all units and its bound.
///
/// The search areas and the ground teams are placed apart (`seekgrid-plan`), each against the
/// same belief; their POS are combined as `1 - (1 - a)(1 - b)`, as if the two parts searched
/// independently (exact when the object's chance of being found by one does not depend on the
/// other; when they search disjoint places the exact joint POS is `a + b`, so this is then on
/// the safe side by `a b`).
#[must_use]
pub fn plan_totals(run: &PlanRun) -> PlanTotals {
    let a = run.areas.as_ref().map_or(0.0, |p| p.pos_plan);
    let b = run.segments.as_ref().map_or(0.0, |s| s.pos_plan);
    let pos_plan = 1.0 - (1.0 - a) * (1.0 - b);
    let bound = run.bound.pos;
    let n = run.units.len();
    let units = if n == 1 {
        "the 1 unit".to_owned()
    } else {
        format!("all {n} units")
    };
    let covers = match (&run.areas, &run.segments) {
        (Some(_), Some(_)) => format!(
            "{units} (the search areas and the ground teams in segments, combined as 1 - (1 - areas)(1 - teams), as if the two parts searched independently)"
        ),
        (None, Some(_)) => format!("{units} (ground teams in segments)"),
        _ => format!("{units} (search areas)"),
    };
    PlanTotals {
        pos_plan,
        pos_optimal_bound: bound,
        efficiency: if bound > 0.0 { pos_plan / bound } else { 0.0 },
        covers,
    }
}

/// The plan's part of `summary.json`.
#[derive(Debug, Clone, Serialize)]
pub struct PlanSummary {
    /// `pos_plan / pos_optimal_bound` of the whole plan (the summary's top-level numbers).
    pub efficiency: f64,
    /// All units' effort, m² (sweep width x track length).
    pub effort_m2: f64,
    /// Lagrange multiplier of the optimal allocation, per m² of effort.
    pub lambda: f64,
    /// Start of the period (RFC 3339).
    pub start: String,
    /// What the top-level `pos_plan` covers.
    pub pos_plan_covers: String,
    /// The units given search areas (vessels, aircraft, teams without segments).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub areas: Option<AreasPart>,
    /// The ground teams assigned to segments.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub ground_teams: Option<TeamsPart>,
    /// Each unit's assignment.
    pub units: Vec<UnitSummary>,
    /// Joint POS of all units (serialised at the summary's top level).
    #[serde(skip)]
    pub pos_plan: f64,
    /// The bound (serialised at the summary's top level).
    #[serde(skip)]
    pub pos_optimal_bound: f64,
}

/// The search areas' part of the plan.
#[derive(Debug, Clone, Serialize)]
pub struct AreasPart {
    /// The units it covers.
    pub units: Vec<String>,
    /// Joint POS of these units.
    pub pos_plan: f64,
    /// POS of the optimal allocation of these units' effort (exponential detection).
    pub pos_optimal_bound: f64,
    /// `pos_plan / pos_optimal_bound`.
    pub efficiency: f64,
    /// Turn allowance, fraction of track length.
    pub turn_allowance: f64,
}

/// The ground teams' part of the plan.
#[derive(Debug, Clone, Serialize)]
pub struct TeamsPart {
    /// The teams it covers.
    pub teams: Vec<String>,
    /// Joint POS of these teams.
    pub pos_plan: f64,
    /// Whether every assignment was compared (else a greedy heuristic).
    pub exact: bool,
}

/// One unit's assignment in the summary (fields in the order summary.json has listed them).
#[derive(Debug, Clone, Serialize)]
#[serde(untagged)]
pub enum UnitSummary {
    /// A unit given a search area.
    Area {
        /// Area, km².
        area_km2: f64,
        /// Coverage.
        coverage: f64,
        /// Hours needed on scene.
        hours_needed: f64,
        /// Pattern.
        pattern: &'static str,
        /// POD.
        pod: f64,
        /// POS.
        pos: f64,
        /// Track spacing, metres.
        track_spacing_m: f64,
        /// Unit id.
        unit: String,
    },
    /// A ground team given a segment.
    Team {
        /// Coverage.
        coverage: f64,
        /// Hours needed.
        hours_needed: f64,
        /// POD.
        pod: f64,
        /// POS.
        pos: f64,
        /// Recommended spacing between searchers, metres.
        recommended_spacing_m: f64,
        /// Segment id.
        segment: String,
        /// Team id.
        unit: String,
    },
}

/// The plan's part of the summary.
#[must_use]
pub fn plan_summary(run: &PlanRun) -> PlanSummary {
    let totals = plan_totals(run);
    let mut units = Vec::new();
    if let Some(p) = &run.areas {
        units.extend(p.assignments.iter().map(|a| UnitSummary::Area {
            area_km2: a.area_m2 / M2_PER_KM2,
            coverage: a.coverage,
            hours_needed: a.hours_needed,
            pattern: a.pattern.kind(),
            pod: a.pod,
            pos: a.pos,
            track_spacing_m: a.track_spacing_m,
            unit: a.unit.clone(),
        }));
    }
    if let Some(sp) = &run.segments {
        units.extend(sp.assignments.iter().map(|a| UnitSummary::Team {
            coverage: a.coverage,
            hours_needed: a.hours_needed,
            pod: a.pod,
            pos: a.pos,
            recommended_spacing_m: a.recommended_spacing_m,
            segment: a.segment.clone(),
            unit: a.team.clone(),
        }));
    }
    PlanSummary {
        efficiency: totals.efficiency,
        effort_m2: run.bound.effort_m2,
        lambda: run.bound.lambda,
        start: run.start.to_rfc3339(),
        pos_plan_covers: totals.covers,
        areas: run.areas.as_ref().map(|p| AreasPart {
            units: p.assignments.iter().map(|a| a.unit.clone()).collect(),
            pos_plan: p.pos_plan,
            pos_optimal_bound: p.pos_optimal_bound,
            efficiency: p.efficiency,
            turn_allowance: p.turn_allowance,
        }),
        ground_teams: run.segments.as_ref().map(|sp| TeamsPart {
            teams: sp.assignments.iter().map(|a| a.team.clone()).collect(),
            pos_plan: sp.pos_plan,
            exact: sp.exact,
        }),
        units,
        pos_plan: totals.pos_plan,
        pos_optimal_bound: totals.pos_optimal_bound,
    }
}

/// The search areas' assignments (none when no unit got an area).
fn area_assignments(run: &PlanRun) -> &[UnitAssignment] {
    run.areas.as_ref().map_or(&[], |p| &p.assignments)
}

/// Each ground team's assignment with the polygons of its segment.
fn team_assignments(run: &PlanRun) -> Vec<(&SegmentAssignment, &[Polygon<f64>])> {
    let (Some(sp), Some(segments)) = (&run.segments, &run.map.prepared.segments) else {
        return Vec::new();
    };
    sp.assignments
        .iter()
        .filter_map(|a| {
            let seg = segments.iter().find(|s| s.id == a.segment)?;
            Some((a, seg.polygons.0.as_slice()))
        })
        .collect()
}

fn feature(geometry: geojson::Geometry, props: JsonObject) -> Feature {
    Feature {
        geometry: Some(geometry),
        properties: Some(props),
        ..Default::default()
    }
}

/// The plan layer's writer: `plan.geojson`, each area (with its track and commence search
/// point) and each team's segment, the headline numbers as collection members.
pub(crate) fn geojson(c: &Computed, run: &PlanRun, out: &mut Recorder) -> Result<(), RenderError> {
    let features = plan_features(c, run);
    let totals = plan_totals(run);
    let mut members = JsonObject::new();
    members.insert("name".into(), "plan".into());
    members.insert("run_id".into(), out.run_id().into());
    members.insert("caution".into(), CAUTION.into());
    members.insert("start".into(), run.start.to_rfc3339().into());
    members.insert("pos_plan".into(), totals.pos_plan.into());
    members.insert("pos_plan_covers".into(), totals.covers.into());
    members.insert("pos_optimal_bound".into(), totals.pos_optimal_bound.into());
    let l = Layer::Plan;
    out.write(l, l.files()[0], &collection_bytes(features, members)?, None)
}

/// The KML layer's writer: `plan.kml` (KML 2.2), a folder of the containment regions at the
/// plan's start and a folder of the plan's areas, tracks, commence search points and segments.
pub(crate) fn kml(c: &Computed, run: &PlanRun, out: &mut Recorder) -> Result<(), RenderError> {
    let m = c.map;
    let regions = render::containment_geojson(
        &m.prepared.frame,
        &m.grid,
        m.poc(),
        &crate::outputs::CONTAINMENT_LEVELS,
        "containment",
        JsonObject::new(),
    )?;
    let regions: geojson::FeatureCollection = serde_json::from_slice(&regions)
        .map_err(|e| RenderError::Internal(format!("containment for KML: {e}")))?;
    let plan = plan_features(c, run);
    let text = |f: &Feature, k: &str| {
        f.property(k)
            .map(|v| v.as_str().map_or_else(|| v.to_string(), str::to_owned))
    };
    let description = format!(
        "seekgrid plan from {}, run {}. {CAUTION}",
        run.start.to_rfc3339(),
        out.run_id()
    );
    let doc = crate::kml::document(
        &c.incident.title,
        &description,
        &[("containment", &regions.features[..]), ("plan", &plan[..])],
        |f| match (text(f, "unit"), text(f, "part"), text(f, "level")) {
            (Some(u), Some(p), _) => format!("{u} {p}"),
            (Some(u), None, _) => u,
            (None, _, Some(l)) => format!("containment {l}"),
            _ => String::new(),
        },
    );
    out.write(Layer::Kml, Layer::Kml.files()[0], doc.as_bytes(), None)
}

/// The plan's features: each area with its track and commence search point, each team's
/// segment.
fn plan_features(c: &Computed, run: &PlanRun) -> Vec<Feature> {
    let frame = &c.map.prepared.frame;
    let mut features = Vec::new();
    for a in area_assignments(run) {
        let mut props = JsonObject::new();
        props.insert("unit".into(), a.unit.clone().into());
        props.insert("pattern".into(), a.pattern.kind().into());
        props.insert("track_spacing_m".into(), a.track_spacing_m.into());
        props.insert("coverage".into(), a.coverage.into());
        props.insert("pod".into(), a.pod.into());
        props.insert("pos".into(), a.pos.into());
        props.insert("poa".into(), a.poa.into());
        props.insert("area_km2".into(), (a.area_m2 / M2_PER_KM2).into());
        props.insert("track_length_m".into(), a.track_length_m.into());
        props.insert("hours_needed".into(), a.hours_needed.into());
        let mut area = props.clone();
        area.insert("part".into(), "area".into());
        let polygon = a.pattern.area_polygon();
        features.push(feature(render::polygon_to_geojson(frame, &polygon), area));
        let mut track = props;
        track.insert("part".into(), "track".into());
        let line = geo::LineString(a.waypoints.clone());
        features.push(feature(render::line_to_geojson(frame, &line), track));
        let mut csp = JsonObject::new();
        csp.insert("unit".into(), a.unit.clone().into());
        csp.insert("part".into(), "commence search point".into());
        let point = render::point_to_geojson(frame, a.commence_search_point);
        features.push(feature(point, csp));
    }
    for (a, polygons) in team_assignments(run) {
        for poly in polygons {
            let mut props = JsonObject::new();
            props.insert("unit".into(), a.team.clone().into());
            props.insert("segment".into(), a.segment.clone().into());
            props.insert("pattern".into(), "segment".into());
            props.insert("track_spacing_m".into(), a.recommended_spacing_m.into());
            props.insert("coverage".into(), a.coverage.into());
            props.insert("pod".into(), a.pod.into());
            props.insert("pos".into(), a.pos.into());
            props.insert(
                "area_km2".into(),
                (poly.unsigned_area() / M2_PER_KM2).into(),
            );
            props.insert("part".into(), "area".into());
            features.push(feature(render::polygon_to_geojson(frame, poly), props));
        }
    }
    features
}

/// One unit's points for the GPS files: its routes (an area's turn points from the commence
/// search point; each polygon of a team's segment, its boundary) and its waypoints (the
/// commence search point and the corners).
struct GpsUnit {
    unit: String,
    /// What the unit does, for the route's `desc`.
    what: String,
    /// Each route before splitting: (short label, full name, position in the frame).
    routes: Vec<Vec<(String, String, Coord<f64>)>>,
    /// The waypoints: (short label, full name, position in the frame).
    waypoints: Vec<(String, String, Coord<f64>)>,
}

/// Every unit's GPS points, labelled; and the widest label.
fn gps_units(run: &PlanRun) -> (Vec<GpsUnit>, usize) {
    let mut units = Vec::new();
    for a in area_assignments(run) {
        let d = gpx::digits(a.waypoints.len().saturating_sub(1)).max(2);
        let route = a
            .waypoints
            .iter()
            .enumerate()
            .map(|(k, p)| match k {
                0 => (
                    "CSP".to_owned(),
                    format!("{} commence search point", a.unit),
                    *p,
                ),
                _ => (format!("{k:0d$}"), format!("{} turn point {k}", a.unit), *p),
            })
            .collect();
        let area = a.pattern.area_polygon();
        let corners = &area.exterior().0;
        let corners = &corners[..corners.len().saturating_sub(1)];
        let mut waypoints = vec![(
            "CSP".to_owned(),
            format!("{} commence search point", a.unit),
            a.commence_search_point,
        )];
        waypoints.extend(corners.iter().enumerate().map(|(k, p)| {
            (
                format!("C{}", k + 1),
                format!("{} area corner {}", a.unit, k + 1),
                *p,
            )
        }));
        units.push(GpsUnit {
            unit: a.unit.clone(),
            what: format!(
                "{} at {:.0} m track spacing, {} legs",
                a.pattern.kind(),
                a.track_spacing_m,
                a.legs.len()
            ),
            routes: vec![route],
            waypoints,
        });
    }
    for (a, polygons) in team_assignments(run) {
        let n: usize = polygons.iter().map(|p| p.exterior().0.len()).sum();
        let d = gpx::digits(n).max(2);
        let mut k = 0;
        let mut routes = Vec::new();
        let mut waypoints = Vec::new();
        for poly in polygons {
            let ring = &poly.exterior().0;
            let mut route = Vec::new();
            for (j, p) in ring.iter().enumerate() {
                k += 1;
                let point = (
                    format!("{k:0d$}"),
                    format!("{} segment {} corner {k}", a.team, a.segment),
                    *p,
                );
                // The ring's closing point (the first again) is a route point, not a waypoint.
                if j + 1 < ring.len() {
                    waypoints.push(point.clone());
                }
                route.push(point);
            }
            routes.push(route);
        }
        units.push(GpsUnit {
            unit: a.team.clone(),
            what: format!("boundary of segment {}", a.segment),
            routes,
            waypoints,
        });
    }
    let width = units
        .iter()
        .flat_map(|u| u.routes.iter().flatten().chain(&u.waypoints))
        .map(|(label, _, _)| label.chars().count())
        .max()
        .unwrap_or(3)
        .max(3);
    (units, width)
}

/// The namer of the GPS files: every unit's code, unique within the name length.
fn gps_namer(c: &Computed, units: &[GpsUnit], width: usize) -> Result<PointNamer, RenderError> {
    let mut ids: Vec<&str> = Vec::new();
    for u in units {
        if !ids.contains(&u.unit.as_str()) {
            ids.push(&u.unit);
        }
    }
    PointNamer::new(&c.settings.gps, &ids, width)
}

fn gps_point(
    c: &Computed,
    namer: &PointNamer,
    unit: &str,
    (label, full, p): &(String, String, Coord<f64>),
) -> Result<NamedPoint, RenderError> {
    let frame = &c.map.prepared.frame;
    let (lon, lat) = frame.to_lon_lat(*p);
    Ok(NamedPoint {
        name: namer.name(unit, label)?,
        description: format!(
            "{full}: {}",
            format_position(frame, *p, unit_positions(c, unit))
        ),
        lon,
        lat,
    })
}

fn gps_header<'a>(c: &'a Computed, description: &'a str) -> GpxHeader<'a> {
    GpxHeader {
        title: &c.incident.title,
        description,
        time: c.settings.made_at,
    }
}

/// The routes layer's writer: `plan.gpx`, one route per area (its waypoints, from the commence
/// search point) and per team's segment polygon (its boundary), when there is one; a route of
/// more points than the GPS options allow is split into numbered parts.
pub(crate) fn gpx(c: &Computed, run: &PlanRun, out: &mut Recorder) -> Result<(), RenderError> {
    let l = Layer::Routes;
    let (units, width) = gps_units(run);
    if units.is_empty() {
        out.skip(l, "no unit has an area or a segment to follow");
        return Ok(());
    }
    let namer = gps_namer(c, &units, width)?;
    let max = c.settings.gps.route_points;
    let mut routes = Vec::new();
    for u in &units {
        let parts: Vec<Vec<(String, String, Coord<f64>)>> = u
            .routes
            .iter()
            .flat_map(|r| gpx::split_points(r, max))
            .collect();
        let n = parts.len();
        for (i, part) in parts.iter().enumerate() {
            let points = part
                .iter()
                .map(|p| gps_point(c, &namer, &u.unit, p))
                .collect::<Result<Vec<_>, _>>()?;
            let of = if n > 1 {
                format!(
                    " (part {} of {n}, {} to {})",
                    i + 1,
                    points[0].name,
                    points[points.len() - 1].name
                )
            } else {
                String::new()
            };
            routes.push(RouteSpec {
                name: namer.route_name(&u.unit, i + 1, n)?,
                description: format!("{}: {}{of}", u.unit, u.what),
                points,
            });
        }
    }
    let description = format!(
        "seekgrid plan from {}, run {}. {CAUTION}",
        run.start.to_rfc3339(),
        out.run_id()
    );
    let mut bytes = routes_gpx(&gps_header(c, &description), &routes)?;
    if let Some(p) = out.provenance() {
        bytes = crate::gpx::with_provenance(&bytes, p);
    }
    out.write(l, l.files()[0], &bytes, None)
}

/// The waypoints layer's writer: `plan-waypoints.gpx`, each unit's commence search point and
/// area corners or segment corners as waypoints, named as in `plan.gpx`.
pub(crate) fn waypoints_gpx(
    c: &Computed,
    run: &PlanRun,
    out: &mut Recorder,
) -> Result<(), RenderError> {
    let l = Layer::Waypoints;
    let (units, width) = gps_units(run);
    if units.is_empty() {
        out.skip(l, "no unit has an area or a segment to follow");
        return Ok(());
    }
    let namer = gps_namer(c, &units, width)?;
    let mut points = Vec::new();
    for u in &units {
        for p in &u.waypoints {
            points.push(gps_point(c, &namer, &u.unit, p)?);
        }
    }
    let description = format!(
        "seekgrid plan from {}, run {}: waypoints only. {CAUTION}",
        run.start.to_rfc3339(),
        out.run_id()
    );
    let mut bytes = gpx::waypoints_gpx(&gps_header(c, &description), &points)?;
    if let Some(p) = out.provenance() {
        bytes = crate::gpx::with_provenance(&bytes, p);
    }
    out.write(l, l.files()[0], &bytes, None)
}

/// The briefing layer's writer: `plan.md`.
pub(crate) fn briefing(c: &Computed, run: &PlanRun, out: &mut Recorder) -> Result<(), RenderError> {
    let mut md = String::new();
    briefing_header(&mut md, c, run, out.run_id());
    briefing_warnings(&mut md, c);
    briefing_headline(&mut md, run);
    if let Some(p) = &run.areas {
        briefing_areas(&mut md, c, p);
    }
    if let Some(sp) = &run.segments {
        briefing_teams(&mut md, sp);
    }
    // Every block ends with a blank line; the file ends with exactly one newline.
    let md = format!("{}\n", md.trim_end());
    let l = Layer::Briefing;
    out.write(l, l.files()[0], md.as_bytes(), None)
}

/// Title, period, belief, run id and caution.
fn briefing_header(md: &mut String, c: &Computed, run: &PlanRun, run_id: &str) {
    let _ = writeln!(md, "# Search plan: {}\n", c.incident.title);
    let _ = writeln!(
        md,
        "Period starting {} UTC. Belief after {} logged search(es); working CRS EPSG:{}.\n",
        run.start.format("%Y-%m-%d %H:%M"),
        c.map.searches.len(),
        c.map.prepared.frame.epsg()
    );
    let _ = writeln!(md, "Run id: `{}`.\n", run_id);
    let _ = writeln!(md, "> **Caution.** {CAUTION}\n");
}

/// The warnings of the computation (also in summary.json and on standard error), before the
/// plan they qualify; nothing when there are none.
fn briefing_warnings(md: &mut String, c: &Computed) {
    if c.map.warnings.is_empty() {
        return;
    }
    let _ = writeln!(md, "## Warnings\n");
    for w in c.incident.locate_warnings(&c.map.warnings) {
        let place = match (w.line, w.column) {
            (Some(l), Some(col)) => format!(" (incident file line {l}, column {col})"),
            (Some(l), None) => format!(" (incident file line {l})"),
            _ => String::new(),
        };
        let _ = writeln!(md, "- **{}**{place}: {}", w.kind.name(), w.message);
    }
    let _ = writeln!(md);
}

/// What the bound is to a reader: the best possible POS only when every unit detects by the
/// exponential law (the bound's own law, docs/references.md §4); with inverse-cube or
/// definite-range units a plan can exceed it, and the briefing says so rather than call it the
/// best possible.
fn bound_name(run: &PlanRun) -> String {
    let other = run
        .units
        .iter()
        .filter(|u| u.law != seekgrid_search::DetectionLaw::Exponential)
        .count();
    if other == 0 {
        "best possible with the same total effort (optimal allocation, exponential detection)"
            .to_owned()
    } else {
        format!(
            "optimal allocation of the same total effort under exponential detection (a yardstick, not a ceiling: {other} of {} units detect by another law, and a plan for them can exceed it)",
            run.units.len()
        )
    }
}

/// The whole plan's joint POS and bound: the numbers `pos_plan` and `pos_optimal_bound` of
/// `summary.json`, with what they cover.
fn briefing_headline(md: &mut String, run: &PlanRun) {
    let t = plan_totals(run);
    let _ = writeln!(
        md,
        "Joint POS of the whole plan, {}: **{:.3}**; {}: **{:.3}**; efficiency {:.0} %. These are `pos_plan` and `pos_optimal_bound` in summary.json.\n",
        t.covers,
        t.pos_plan,
        bound_name(run),
        t.pos_optimal_bound,
        100.0 * t.efficiency
    );
}

/// The search areas: their own joint POS and bound, a section per unit, the planner's notes.
fn briefing_areas(md: &mut String, c: &Computed, p: &seekgrid_plan::Plan) {
    let units: Vec<&str> = p.assignments.iter().map(|a| a.unit.as_str()).collect();
    let _ = writeln!(md, "## Search areas\n");
    let _ = writeln!(
        md,
        "Joint POS of the search areas ({}): **{:.3}**; optimal allocation of these units' effort under exponential detection: **{:.3}**; efficiency {:.0} %. Turn allowance {:.0} % of track length.\n",
        units.join(", "),
        p.pos_plan,
        p.pos_optimal_bound,
        100.0 * p.efficiency,
        100.0 * p.turn_allowance
    );
    for a in &p.assignments {
        briefing_unit(md, c, a);
    }
    briefing_notes(md, &p.notes);
}

/// One unit's table and its legs.
fn briefing_unit(md: &mut String, c: &Computed, a: &UnitAssignment) {
    let frame = &c.map.prepared.frame;
    let format = unit_positions(c, &a.unit);
    let lat_lon = |frame: &Frame, p: Coord<f64>| format_position(frame, p, format);
    let area = a.pattern.area_polygon();
    let ring = &area.exterior().0;
    let corners: Vec<String> = ring
        .iter()
        .take(ring.len().saturating_sub(1))
        .map(|c| lat_lon(frame, *c))
        .collect();
    let _ = writeln!(md, "### {}\n", a.unit);
    let _ = writeln!(md, "| item | value |\n|---|---|");
    let rows = [
        ("positions", position::label(format).to_owned()),
        ("pattern", a.pattern.kind().to_owned()),
        (
            "commence search point",
            lat_lon(frame, a.commence_search_point),
        ),
        ("area corners", corners.join("; ")),
        (
            "area",
            format!(
                "{:.2} km² ({:.2} NM²)",
                a.area_m2 / M2_PER_KM2,
                m_to_nm(m_to_nm(a.area_m2))
            ),
        ),
        (
            "track spacing",
            format!(
                "{:.0} m ({:.2} NM)",
                a.track_spacing_m,
                m_to_nm(a.track_spacing_m)
            ),
        ),
        ("coverage", format!("{:.2}", a.coverage)),
        ("POD", format!("{:.3}", a.pod)),
        ("POA of the area", format!("{:.3}", a.poa)),
        ("POS", format!("{:.3}", a.pos)),
        (
            "track length",
            format!(
                "{:.1} km ({:.1} NM)",
                a.track_length_m / METRES_PER_KM,
                m_to_nm(a.track_length_m)
            ),
        ),
        ("time needed", format!("{:.2} h", a.hours_needed)),
    ];
    for (item, value) in rows {
        let _ = writeln!(md, "| {item} | {value} |");
    }
    let _ = writeln!(
        md,
        "\n| leg | from | to | bearing (true) | length |\n|---|---|---|---|---|"
    );
    for (k, l) in a.legs.iter().enumerate() {
        let _ = writeln!(
            md,
            "| {} | {} | {} | {:05.1}° | {:.2} km |",
            k + 1,
            lat_lon(frame, l.from),
            lat_lon(frame, l.to),
            true_bearing(frame, l.grid_bearing_deg, l.from),
            l.length_m / 1000.0
        );
    }
    let _ = writeln!(md);
}

/// The ground teams: their joint POS, a table of teams and segments, the notes.
fn briefing_teams(md: &mut String, sp: &seekgrid_plan::SegmentPlan) {
    let _ = writeln!(md, "## Ground teams to segments\n");
    let _ = writeln!(
        md,
        "Joint POS of the team assignment: **{:.3}** ({}).\n",
        sp.pos_plan,
        if sp.exact {
            "exact: every assignment was compared"
        } else {
            "heuristic: greedy by marginal POS"
        }
    );
    let _ = writeln!(
        md,
        "| team | segment | coverage | POD | POS | recommended spacing | time needed |\n|---|---|---|---|---|---|---|"
    );
    for a in &sp.assignments {
        let _ = writeln!(
            md,
            "| {} | {} | {:.2} | {:.3} | {:.3} | {:.0} m | {:.1} h |",
            a.team, a.segment, a.coverage, a.pod, a.pos, a.recommended_spacing_m, a.hours_needed
        );
    }
    let _ = writeln!(md);
    briefing_notes(md, &sp.notes);
}

/// The planner's notes as a list, followed by a blank line.
fn briefing_notes(md: &mut String, notes: &[String]) {
    if notes.is_empty() {
        return;
    }
    for n in notes {
        let _ = writeln!(md, "- {n}");
    }
    let _ = writeln!(md);
}

/// The plan-map layer's writer: `plan.png` and its sidecars, the areas, tracks, commence search
/// points and segments over the probability map.
pub(crate) fn picture(c: &Computed, run: &PlanRun, out: &mut Recorder) -> Result<(), RenderError> {
    let m = c.map;
    let mut overlays = outputs::base_overlays(c.incident, m);
    for a in area_assignments(run) {
        let area = a.pattern.area_polygon();
        let track = geo::LineString(a.waypoints.clone());
        overlays.push(Overlay::polygon(area, [255, 255, 255], 3).with_label(&a.unit));
        overlays.push(Overlay::line(track, [255, 140, 0], 1));
        overlays.push(
            Overlay::points(vec![a.commence_search_point], [255, 60, 60], 9)
                .with_legend("commence search point"),
        );
    }
    for (a, polygons) in team_assignments(run) {
        for poly in polygons {
            overlays.push(
                Overlay::polygon(poly.clone(), [255, 255, 255], 3)
                    .with_label(&format!("{} {}", a.team, a.segment)),
            );
        }
    }
    let t = plan_totals(run);
    let cell_km2 = m.grid.cell_area_m2() / M2_PER_KM2;
    let density = m.poc().mapv(|p| p / cell_km2);
    let sub = format!(
        "Plan for the period from {} UTC | POS {:.3} of at best {:.3}",
        run.start.format("%Y-%m-%d %H:%M"),
        t.pos_plan,
        t.pos_optimal_bound
    );
    let style = MapStyle::density(&c.incident.title, &sub);
    let png = render::heatmap_png(&m.prepared.frame, &m.grid, &density, &style, &overlays)?;
    out.write_picture(Layer::PlanMap, &png)
}

/// The effort layer's writer: `effort.png` and its sidecars, the optimal coverage behind the
/// bound.
pub(crate) fn effort(c: &Computed, run: &PlanRun, out: &mut Recorder) -> Result<(), RenderError> {
    let m = c.map;
    let sub = format!(
        "Optimal coverage (the bound): POS {:.3} for {:.1} km² of effort",
        run.bound.pos,
        run.bound.effort_m2 / M2_PER_KM2
    );
    let style = MapStyle {
        title: &c.incident.title,
        subtitle: &sub,
        caution: CAUTION,
        legend_label: "coverage (effort / area)",
        scale: ColourScale::Density,
    };
    let png = render::heatmap_png(&m.prepared.frame, &m.grid, &run.bound.coverage, &style, &[])?;
    out.write_picture(Layer::Effort, &png)?;
    let mut items = vec![
        (
            "quantity",
            "optimal coverage (effort over area) of the bound".to_owned(),
        ),
        ("time", run.start.to_rfc3339()),
        ("run_id", out.run_id().to_owned()),
        ("caution", CAUTION.to_owned()),
    ];
    if let Some(p) = out.provenance() {
        items.push(("provenance", p.to_json_line()));
    }
    let tif =
        crate::geotiff::float_geotiff(&m.prepared.frame, &m.grid, &run.bound.coverage, &items)?;
    out.write(Layer::Effort, Layer::Effort.files()[1], &tif, None)
}

#[cfg(test)]
mod tests {
    use super::{Axis, ddm};

    #[test]
    fn degrees_and_decimal_minutes_carry_their_hemisphere() {
        // 31.5 deg = 31 deg 30.000 min (common practice for charts).
        assert_eq!(ddm(31.5, Axis::Latitude), "31°30.000'N");
        assert_eq!(ddm(-40.95, Axis::Longitude), "040°57.000'W");
        assert_eq!(ddm(-0.25, Axis::Latitude), "00°15.000'S");
        assert_eq!(ddm(10.999_999_9, Axis::Longitude), "011°00.000'E");
    }
}
