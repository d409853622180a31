//! Reading and validating an incident file and the files it refers to.
//!
//! Each rule is checked in one place. Where a library crate owns a value (a pattern, a sweep
//! width, a scenario shape, a drift scenario), the loader builds the library's own value from
//! the file (positions as lon/lat, bearings as written) and calls its `validate`, then reports
//! the library's typed error at the file position of the field it names, in the file's words
//! (`checks`). What only the file knows (a missing field, a position out of the WGS84 or UTM
//! range, an unknown name, an id used twice, a file that cannot be read, a position that looks
//! like [lat, lon]) is checked here.

mod checks;
mod swaps;

use crate::error::{ErrorKind, IncidentError};
use crate::file::{
    self, Position, RawArea, RawDrift, RawError, RawFile, RawFound, RawHeader, RawOutcome,
    RawPattern, RawPoint, RawRectangle, RawRings, RawRoute, RawScenario, RawSearch, RawSector,
    RawSegments, RawShape, RawSquare, RawSuspended, RawUnit, RawVector, TimeText,
};
use crate::forecast::{self, ForecastGrid, ForecastOptions, Quantity};
use crate::geofiles;
use crate::locate::{FieldPath, path_at, span_of};
use crate::model::*;
use chrono::{DateTime, Utc};
use seekgrid_core::{DEFAULT_MAX_CELLS, UtmZone};
use seekgrid_drift::BeyondBox;
use seekgrid_prior as prior;
use seekgrid_search as search;
use std::collections::{BTreeMap, HashMap, HashSet};
use std::fmt;
use std::path::{Path, PathBuf};

/// Smallest and largest cell side, metres: below a metre no position in the file is that
/// precise; above 100 km a grid is no longer a search map.
pub const CELL_M_RANGE: std::ops::RangeInclusive<f64> = 1.0..=100_000.0;

/// Largest ratio of the largest to the smallest weight among analysts, or among one analyst's
/// scenarios: beyond it the smaller ones vanish from the pool (their share is below 1e-6).
pub const MAX_WEIGHT_RATIO: f64 = 1e6;

/// Every problem found in one incident file, in file order.
#[derive(Debug, Clone, PartialEq)]
pub struct IncidentErrors(pub Vec<IncidentError>);

impl fmt::Display for IncidentErrors {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for (i, e) in self.0.iter().enumerate() {
            if i > 0 {
                writeln!(f)?;
            }
            write!(f, "{e}")?;
        }
        Ok(())
    }
}

impl std::error::Error for IncidentErrors {}

impl From<IncidentError> for IncidentErrors {
    fn from(e: IncidentError) -> Self {
        Self(vec![e])
    }
}

/// Reads and validates an incident file and every file it names. Every file is read through
/// [`crate::input`]: regular files only, at most 16 MiB for the incident file and 256 MiB for
/// each GeoJSON, GPX or CSV file, UTF-8 with an optional byte-order mark.
///
/// # Errors
/// Every problem found, each as `FILE:LINE:COL: what is wrong; how to fix it`.
pub fn load(path: &Path) -> Result<Incident, IncidentErrors> {
    let text = crate::input::read_text(path, crate::input::InputKind::Incident)?;
    parse(path, text)
}

/// Validates incident text as if read from `path` (referenced files are read relative to it).
///
/// # Errors
/// As [`load`].
pub fn parse(path: &Path, text: String) -> Result<Incident, IncidentErrors> {
    let raw = file::read(&text).map_err(|errors| {
        IncidentErrors(
            errors
                .into_iter()
                .map(|e| raw_error(path, &text, e))
                .collect(),
        )
    })?;
    let mut v = Validator {
        path: path.to_owned(),
        text: &text,
        errors: Vec::new(),
        land: None,
    };
    let incident = v.incident(&raw);
    if v.errors.is_empty() {
        Ok(incident.expect("an incident is built whenever no error was recorded"))
    } else {
        Err(IncidentErrors(v.errors))
    }
}

/// A reading error at its place, its message led by the path of the key it concerns.
fn raw_error(path: &Path, text: &str, e: RawError) -> IncidentError {
    let offset = e.span.as_ref().map_or(0, |s| s.start);
    let at = e.span.as_ref().and_then(|s| path_at(text, s.start));
    let mut message = e.message;
    if message.contains("unknown field") && !message.contains("docs/incident-format.md") {
        message.push_str("; check the spelling against docs/incident-format.md");
    } else if message.contains("missing field") && !message.contains(';') {
        message.push_str("; add it (docs/incident-format.md lists every field)");
    }
    let message = match at {
        Some(p) if !p.0.is_empty() => format!("{p}: {message}"),
        _ => message,
    };
    IncidentError::at_offset(e.kind, path, text, offset, message)
}

struct Validator<'a> {
    path: PathBuf,
    text: &'a str,
    errors: Vec<IncidentError>,
    /// The coastline's land polygons, for the fill values of forecast files.
    land: Option<geo::MultiPolygon<f64>>,
}

/// The years a time in an incident file may fall in: a wider range is a typing slip, and times
/// far outside it overflow the calendar arithmetic of drift and outputs.
const TIME_YEARS: std::ops::RangeInclusive<i32> = 1900..=2199;

fn p(s: &str) -> FieldPath {
    FieldPath::new(s)
}

/// A list of names as "a, b or c", each in quotes.
fn choices(names: impl IntoIterator<Item = &'static str>) -> String {
    let names: Vec<String> = names.into_iter().map(|n| format!("\"{n}\"")).collect();
    match names.split_last() {
        Some((last, rest)) if !rest.is_empty() => format!("{} or {last}", rest.join(", ")),
        _ => names.concat(),
    }
}

/// What the header gives.
struct Header {
    title: String,
    reference_time: Option<Time>,
    crs: Option<UtmZone>,
    /// An EPSG code given as `crs` that is not a UTM zone.
    unsupported_crs: Option<u32>,
    coastline: Option<geo::MultiPolygon<f64>>,
    coastline_file: Option<PathBuf>,
}

impl Validator<'_> {
    fn err(&mut self, at: &FieldPath, message: impl Into<String>) {
        let message = format!("{at}: {}", message.into());
        let e = match span_of(self.text, at) {
            Some(span) => IncidentError::at_offset(
                ErrorKind::Invalid,
                &self.path,
                self.text,
                span.start,
                message,
            ),
            None => IncidentError::whole_file(ErrorKind::Invalid, &self.path, message),
        };
        self.errors.push(e);
    }

    fn file_err(&mut self, e: IncidentError) {
        self.errors.push(e);
    }

    /// An error reading the file named at `at`: one that cannot be read at all (missing, not
    /// a regular file, too large) is reported at the key that names it, which is what to fix,
    /// still as [`ErrorKind::Unreadable`]; one inside the file, at its own line.
    fn named_file_err(&mut self, at: &FieldPath, e: IncidentError) {
        if e.kind == ErrorKind::Unreadable && e.line.is_none() {
            self.err(at, format!("{}: {}", e.file.display(), e.message));
            if let Some(last) = self.errors.last_mut() {
                last.kind = ErrorKind::Unreadable;
            }
        } else {
            self.file_err(e);
        }
    }

    fn file_invalid(&mut self, file: &Path, message: impl Into<String>) {
        self.errors
            .push(IncidentError::whole_file(ErrorKind::Invalid, file, message));
    }

    fn dir(&self) -> PathBuf {
        self.path
            .parent()
            .map(Path::to_path_buf)
            .unwrap_or_default()
    }

    /// Sets to zero the nodes of a forecast with no value (fill values) that the coastline
    /// says are land; without a coastline nothing changes, and the drift refuses such nodes
    /// where a particle needs them.
    fn apply_land(&self, grid: &mut ForecastGrid) {
        use geo::Contains;
        if let Some(land) = &self.land {
            grid.apply_land(|lon, lat| land.contains(&geo::Point::new(lon, lat)));
        }
    }

    fn resolve(&self, rel: &str) -> PathBuf {
        let r = Path::new(rel);
        if r.is_absolute() {
            r.to_owned()
        } else {
            self.dir().join(r)
        }
    }

    fn time(&mut self, at: &FieldPath, t: &TimeText) -> Option<Time> {
        let s = t.as_text();
        match DateTime::parse_from_rfc3339(s.trim()) {
            Ok(d) if !TIME_YEARS.contains(&chrono::Datelike::year(&d.with_timezone(&Utc))) => {
                self.err(
                    at,
                    format!(
                        "\"{s}\" is outside the years {} to {} that an incident can take place in; check the year",
                        TIME_YEARS.start(),
                        TIME_YEARS.end()
                    ),
                );
                None
            }
            Ok(d) => Some(d.with_timezone(&Utc)),
            Err(_) => {
                self.err(at, format!("\"{s}\" is not an RFC 3339 time; write it as \"2026-06-14T18:00:00Z\" (UTC)"));
                None
            }
        }
    }

    fn positive(&mut self, at: &FieldPath, v: f64, what: &str) -> bool {
        if v.is_finite() && v > 0.0 {
            true
        } else {
            self.err(at, format!("{what} must be a positive number, got {v}"));
            false
        }
    }

    fn non_negative(&mut self, at: &FieldPath, v: f64, what: &str) -> bool {
        if v.is_finite() && v >= 0.0 {
            true
        } else {
            self.err(at, format!("{what} must be zero or positive, got {v}"));
            false
        }
    }

    fn position(&mut self, at: &FieldPath, pos: [f64; 2]) -> bool {
        let [lon, lat] = pos;
        if !(lon.is_finite()
            && lat.is_finite()
            && (-180.0..=180.0).contains(&lon)
            && (-90.0..=90.0).contains(&lat))
        {
            self.err(at, format!("[{lon}, {lat}] is not a WGS84 position; write [lon, lat] in degrees, longitude first"));
            return false;
        }
        if !(-80.0..=84.0).contains(&lat) {
            self.err(
                at,
                format!("latitude {lat} is outside the UTM range -80..84; seekgrid works in UTM"),
            );
            return false;
        }
        true
    }

    /// A required position, checked.
    fn required_position(
        &mut self,
        at: &FieldPath,
        v: Option<Position>,
        hint: &str,
    ) -> Option<[f64; 2]> {
        let Position(pos) = self.required(at, v, hint)?;
        self.position(at, pos).then_some(pos)
    }

    fn required<T>(&mut self, at: &FieldPath, v: Option<T>, hint: &str) -> Option<T> {
        if v.is_none() {
            self.err(at, format!("missing; {hint}"));
        }
        v
    }

    /// An id: not empty.
    fn id(&mut self, at: &FieldPath, id: &str, what: &str) {
        if id.trim().is_empty() {
            self.err(at, format!("the {what} is empty; give it a name"));
        }
    }

    fn positions(&mut self, at: &FieldPath, f: Option<&str>) -> Option<PositionFormat> {
        let name = f?;
        PositionFormat::parse(name).or_else(|| {
            let list = choices(PositionFormat::ALL.map(PositionFormat::name));
            self.err(
                at,
                format!("unknown position format \"{name}\"; use {list}"),
            );
            None
        })
    }

    fn detection(&mut self, at: &FieldPath, d: Option<&str>) -> search::DetectionLaw {
        match d {
            None => search::DetectionLaw::InverseCube,
            Some(name) => search::DetectionLaw::parse(name).unwrap_or_else(|| {
                let list = choices(search::DetectionLaw::ALL.map(search::DetectionLaw::name));
                self.err(at, format!("unknown detection law \"{name}\"; use {list}"));
                search::DetectionLaw::InverseCube
            }),
        }
    }

    fn incident(&mut self, raw: &RawFile) -> Option<Incident> {
        let header = self.header(&raw.incident);
        self.land.clone_from(&header.coastline);
        let grid = self.grid(&raw.grid);
        let pool = self.pool(raw.prior.as_ref().and_then(|pr| pr.pool.as_deref()));
        let analysts = self.analysts(raw);
        let scenarios = self.scenarios(raw, &analysts);
        let searches = self.searches(raw);
        let units = self.units(raw);
        let positions = self.positions(
            &p("incident").key("positions"),
            raw.incident.positions.as_deref(),
        );
        let outcome = raw
            .outcome
            .as_ref()
            .and_then(|o| self.outcome(o, header.reference_time));
        if let Some(code) = header.unsupported_crs {
            let message =
                crate::crs::unsupported_crs_message(code, crate::model::first_position(&scenarios));
            self.err(&p("incident").key("crs"), message);
        }
        self.log_pool_with_drift(pool, &scenarios);
        if raw.incident.allow_distant_crs != Some(true) {
            self.distant_crs(header.crs, &scenarios);
        }
        if let Some(reference) = header.reference_time {
            let last_search_end = searches.iter().map(|s| s.end).max();
            self.environment_covers(
                &scenarios,
                reference.max(last_search_end.unwrap_or(reference)),
            );
        }
        let swaps = swaps::swapped_positions(header.crs, &scenarios, &searches, outcome.as_ref());
        for (at, message) in swaps {
            self.err(&at, message);
        }
        if !self.errors.is_empty() {
            return None;
        }
        Some(Incident {
            path: self.path.clone(),
            text: self.text.to_owned(),
            title: header.title,
            reference_time: header.reference_time?,
            crs: header.crs,
            positions,
            notes: raw.incident.notes.clone(),
            coastline: header.coastline,
            coastline_file: header.coastline_file,
            object_afloat: raw.incident.object_afloat,
            grid,
            pool,
            analysts,
            scenarios,
            searches,
            units,
            outcome,
        })
    }

    /// Refuses a `crs` whose zone is past the neighbouring one from the first position: grid
    /// distances there are off by percents (a typing slip in the zone number, usually).
    fn distant_crs(&mut self, crs: Option<UtmZone>, scenarios: &[ScenarioDef]) {
        let (Some(zone), Some(position)) = (crs, crate::model::first_position(scenarios)) else {
            return;
        };
        let Some(d) = crate::crs::ZoneDistance::of(zone, position) else {
            return;
        };
        if d.reach() != crate::crs::ZoneReach::Distant {
            return;
        }
        let ([lon, lat], off, own) = (d.position, d.off_deg, d.own);
        let error = d.scale_error.filter(|e| e.abs() < 10.0).map_or_else(
            || "where that zone cannot draw distances at all".to_owned(),
            |e| {
                format!(
                    "where its grid distances differ from those on the ground by {:+.1} %",
                    100.0 * e
                )
            },
        );
        self.err(
            &p("incident").key("crs"),
            format!(
                "crs = \"EPSG:{}\" is {off:.1} degrees of longitude from the incident's first position ({lon:.3}, {lat:.3}), {error}; use crs = \"EPSG:{}\" (the position's own zone), or add allow_distant_crs = true to [incident] to keep it",
                zone.epsg(),
                own.epsg()
            ),
        );
    }

    /// Refuses a wind or current series or field that does not cover a drift scenario from
    /// its earliest time adrift to `until` (the later of the reference time and the last
    /// search's end) or its latest time adrift, unless the scenario says
    /// `hold_environment_beyond_series = true`. The map checks again against its own time.
    fn environment_covers(&mut self, scenarios: &[ScenarioDef], until: Time) {
        for s in scenarios {
            let ScenarioKind::Drift(d) = &s.kind else {
                continue;
            };
            for (key, file_key, message) in d.environment_gaps(until) {
                self.err(&s.at.key(key).key(file_key), message);
            }
        }
    }

    fn header(&mut self, h: &RawHeader) -> Header {
        let title = h.title.trim().to_owned();
        if title.is_empty() {
            self.err(
                &p("incident").key("title"),
                "the title is empty; give the incident a name planners will recognise",
            );
        }
        let reference_time = self.time(&p("incident").key("reference_time"), &h.reference_time);
        let mut unsupported_crs = None;
        let crs = h.crs.as_ref().and_then(|c| match UtmZone::parse(c) {
            Ok(z) => Some(z),
            // Refused once the scenarios are read, naming the zone that fits them.
            Err(seekgrid_core::CoreError::UnsupportedCrs { code }) => {
                unsupported_crs = Some(code);
                None
            }
            Err(e) => {
                self.err(&p("incident").key("crs"), e.to_string());
                None
            }
        });
        let coastline_file = h.coastline.as_ref().map(|c| self.resolve(c));
        let coastline = h.coastline.as_ref().and_then(|c| {
            let file = self.resolve(c);
            geofiles::read_polygons(&file)
                .map_err(|e| self.named_file_err(&p("incident").key("coastline"), e))
                .ok()
        });
        if h.object_afloat.is_some() && h.coastline.is_none() {
            self.err(&p("incident").key("object_afloat"), "object_afloat needs a coastline to tell land from water; add coastline = \"coast.geojson\" or remove object_afloat");
        }
        Header {
            title,
            reference_time,
            crs,
            unsupported_crs,
            coastline,
            coastline_file,
        }
    }

    fn grid(&mut self, g: &file::RawGrid) -> GridSettings {
        if !(g.cell_m.is_finite() && CELL_M_RANGE.contains(&g.cell_m)) {
            self.err(
                &p("grid").key("cell_m"),
                format!(
                    "cell_m must be a number of metres from {} to {}, got {}",
                    CELL_M_RANGE.start(),
                    CELL_M_RANGE.end(),
                    g.cell_m
                ),
            );
        }
        let bounds = g.bounds.map(|b| [b.west, b.south, b.east, b.north]);
        if let Some([w, s, e, n]) = bounds {
            let lon_ok = |v: f64| (-180.0..=180.0).contains(&v);
            let lat_ok = |v: f64| (-80.0..=84.0).contains(&v);
            let ordered = w < e && s < n && [w, s, e, n].iter().all(|v| v.is_finite());
            if !(ordered && lon_ok(w) && lon_ok(e) && lat_ok(s) && lat_ok(n)) {
                self.err(&p("grid").key("bounds"), "bounds must have west < east and south < north, in degrees within the UTM range (latitude -80..84)");
            }
        }
        let max_cells = g.max_cells.unwrap_or(DEFAULT_MAX_CELLS);
        if max_cells == 0 {
            self.err(&p("grid").key("max_cells"), "max_cells must be at least 1");
        }
        GridSettings {
            cell_m: g.cell_m,
            bounds,
            max_cells,
        }
    }

    fn pool(&mut self, name: Option<&str>) -> prior::Pool {
        match name {
            None => prior::Pool::Linear,
            Some(name) => prior::Pool::parse(name).unwrap_or_else(|| {
                let list = choices(prior::Pool::ALL.map(prior::Pool::name));
                self.err(
                    &p("prior").key("pool"),
                    format!("unknown pool \"{name}\"; use {list}"),
                );
                prior::Pool::Linear
            }),
        }
    }

    /// The logarithmic pool works on cells; drift scenarios are particles.
    fn log_pool_with_drift(&mut self, pool: prior::Pool, scenarios: &[ScenarioDef]) {
        let drifting = scenarios
            .iter()
            .find(|s| matches!(s.kind, ScenarioKind::Drift(_)));
        if let (prior::Pool::Logarithmic, Some(d)) = (pool, drifting) {
            self.err(&p("prior").key("pool"), format!("the logarithmic pool cannot combine drift scenarios (particles) with cell maps, and scenario \"{}\" drifts; use pool = \"linear\", or remove the drift scenarios", d.id));
        }
    }

    fn analysts(&mut self, raw: &RawFile) -> Vec<AnalystDef> {
        if raw.analysts.is_empty() {
            self.err(
                &p("analyst"),
                "no [[analyst]] is given; add at least one analyst with an id and a weight",
            );
        }
        let mut seen = HashSet::new();
        let mut out = Vec::new();
        for (i, a) in raw.analysts.iter().enumerate() {
            let at = p("analyst").index(i);
            self.id(&at.key("id"), &a.id, "analyst id");
            if !seen.insert(a.id.clone()) {
                self.err(
                    &at.key("id"),
                    format!(
                        "analyst id \"{}\" is used twice; give each analyst its own id",
                        a.id
                    ),
                );
            }
            let weight = a.weight.unwrap_or(1.0);
            self.positive(&at.key("weight"), weight, "an analyst's weight");
            out.push(AnalystDef {
                id: a.id.clone(),
                weight,
                at,
            });
        }
        let weights: Vec<(FieldPath, f64)> =
            out.iter().map(|a| (a.at.key("weight"), a.weight)).collect();
        self.weight_ratio(&weights, "analysts' weights");
        out
    }

    /// Refuses weights so unequal that the smallest vanish: reported at the smallest.
    fn weight_ratio(&mut self, weights: &[(FieldPath, f64)], what: &str) {
        let usable = || weights.iter().filter(|(_, w)| w.is_finite() && *w > 0.0);
        let (Some(small), Some(large)) = (
            usable().min_by(|a, b| a.1.total_cmp(&b.1)),
            usable().max_by(|a, b| a.1.total_cmp(&b.1)),
        ) else {
            return;
        };
        let ratio = large.1 / small.1;
        if ratio > MAX_WEIGHT_RATIO {
            let at = small.0.clone();
            self.err(&at, format!("the {what} differ by a factor of {ratio:.3e}, more than 1e6: the smaller ones would vanish from the pool; weights are relative, so give them within a factor of a million (e.g. 1 to 100)"));
        }
    }

    fn scenarios(&mut self, raw: &RawFile, analysts: &[AnalystDef]) -> Vec<ScenarioDef> {
        if raw.scenarios.is_empty() {
            self.err(
                &p("scenario"),
                "no [[scenario]] is given; add at least one scenario",
            );
        }
        let known: HashSet<&str> = analysts.iter().map(|a| a.id.as_str()).collect();
        let mut seen = HashSet::new();
        let mut files = SegmentFiles::default();
        let mut out = Vec::new();
        let mut with_scenarios = HashSet::new();
        for (i, s) in raw.scenarios.iter().enumerate() {
            let at = p("scenario").index(i);
            self.id(&at.key("id"), &s.id, "scenario id");
            if !seen.insert(s.id.clone()) {
                self.err(
                    &at.key("id"),
                    format!(
                        "scenario id \"{}\" is used twice; give each scenario its own id",
                        s.id
                    ),
                );
            }
            if !known.contains(s.analyst.as_str()) {
                let list: Vec<&str> = analysts.iter().map(|a| a.id.as_str()).collect();
                self.err(
                    &at.key("analyst"),
                    format!(
                        "no analyst has id \"{}\"; use one of: {}",
                        s.analyst,
                        list.join(", ")
                    ),
                );
            }
            with_scenarios.insert(s.analyst.clone());
            let weight = s.weight.unwrap_or(1.0);
            self.positive(&at.key("weight"), weight, "a scenario's weight");
            if let Some(kind) = self.scenario_kind(&at, s, &mut files) {
                out.push(ScenarioDef {
                    id: s.id.clone(),
                    analyst: s.analyst.clone(),
                    weight,
                    kind,
                    at,
                });
            }
        }
        self.analysts_have_scenarios(raw, analysts, &with_scenarios);
        out
    }

    /// Every analyst has a scenario, and their scenarios' weights are within
    /// [`MAX_WEIGHT_RATIO`] of one another.
    fn analysts_have_scenarios(
        &mut self,
        raw: &RawFile,
        analysts: &[AnalystDef],
        with_scenarios: &HashSet<String>,
    ) {
        for (i, a) in analysts.iter().enumerate() {
            if !with_scenarios.contains(&a.id) && !raw.scenarios.is_empty() {
                self.err(
                    &p("analyst").index(i).key("id"),
                    format!(
                        "analyst \"{}\" has no scenario; add one or remove the analyst",
                        a.id
                    ),
                );
            }
            let weights: Vec<(FieldPath, f64)> = raw
                .scenarios
                .iter()
                .enumerate()
                .filter(|(_, s)| s.analyst == a.id)
                .map(|(i, s)| {
                    (
                        p("scenario").index(i).key("weight"),
                        s.weight.unwrap_or(1.0),
                    )
                })
                .collect();
            self.weight_ratio(
                &weights,
                &format!("weights of analyst \"{}\"'s scenarios", a.id),
            );
        }
    }

    /// The scenario's kind, read by the step of its kind, then checked by the prior crate.
    fn scenario_kind(
        &mut self,
        at: &FieldPath,
        s: &RawScenario,
        files: &mut SegmentFiles,
    ) -> Option<ScenarioKind> {
        let kind = match &s.shape {
            RawShape::Point(r) => self.point(at, r),
            RawShape::Route(r) => self.route(at, r),
            RawShape::Area(r) => self.area(at, r, files),
            RawShape::Segments(r) => self.segments(at, r, files),
            RawShape::Rings(r) => self.rings(at, r),
            RawShape::Drift(r) => {
                return self.drift(at, r).map(|d| ScenarioKind::Drift(Box::new(d)));
            }
        }?;
        let shape = kind
            .shape(&checks::as_lon_lat, &checks::as_written)
            .ok()
            .flatten()?;
        match shape.validate() {
            Ok(()) => Some(kind),
            Err(prior::PriorError::Shape(e)) => {
                let (where_, message) = checks::shape(at, s, &kind, files, &e);
                match where_ {
                    checks::Place::Field(path) => self.err(&path, message),
                    checks::Place::File(file) => self.file_invalid(&file, message),
                }
                None
            }
            Err(other) => {
                self.err(at, other.to_string());
                None
            }
        }
    }

    fn point(&mut self, at: &FieldPath, r: &RawPoint) -> Option<ScenarioKind> {
        let position = self.required_position(
            &at.key("position"),
            r.position,
            "give position = [lon, lat]",
        )?;
        match (r.sigma_m, r.sigma_major_m, r.sigma_minor_m) {
            (Some(sig), None, None) => {
                if r.major_bearing_deg.is_some() {
                    self.err(&at.key("major_bearing_deg"), "a circular point (sigma_m) has no major axis; remove major_bearing_deg or give sigma_major_m and sigma_minor_m");
                    return None;
                }
                Some(ScenarioKind::Point {
                    position,
                    sigma_major_m: sig,
                    sigma_minor_m: sig,
                    major_bearing_deg: 0.0,
                })
            }
            (None, Some(a), Some(b)) => {
                let bearing = self.required(&at.key("major_bearing_deg"), r.major_bearing_deg, "an elliptical point needs major_bearing_deg, the true bearing of its major axis")?;
                Some(ScenarioKind::Point {
                    position,
                    sigma_major_m: a,
                    sigma_minor_m: b,
                    major_bearing_deg: bearing,
                })
            }
            _ => {
                self.err(&at.key("sigma_m"), "a point needs either sigma_m (circular) or sigma_major_m, sigma_minor_m and major_bearing_deg (elliptical), not both");
                None
            }
        }
    }

    fn route(&mut self, at: &FieldPath, r: &RawRoute) -> Option<ScenarioKind> {
        let w = self.required(
            &at.key("waypoints"),
            r.waypoints.clone(),
            "give waypoints = [[lon, lat], [lon, lat], ...]",
        )?;
        let sigma = self.required(
            &at.key("cross_track_sigma_m"),
            r.cross_track_sigma_m,
            "give cross_track_sigma_m, the across-track standard deviation in metres",
        )?;
        let mut ok = true;
        for (k, Position(pt)) in w.iter().enumerate() {
            ok &= self.position(&at.key("waypoints").index(k), *pt);
        }
        ok.then(|| ScenarioKind::Route {
            waypoints: w.iter().map(|Position(p)| *p).collect(),
            cross_track_sigma_m: sigma,
        })
    }

    fn area(
        &mut self,
        at: &FieldPath,
        r: &RawArea,
        files: &mut SegmentFiles,
    ) -> Option<ScenarioKind> {
        let rel = self.required(
            &at.key("polygon"),
            r.polygon.clone(),
            "give polygon = \"file.geojson\", a GeoJSON file of polygons",
        )?;
        let file = self.resolve(&rel);
        let features = geofiles::read_polygon_features(&file)
            .map_err(|e| self.named_file_err(&at.key("polygon"), e))
            .ok()?;
        let polygons = geo::MultiPolygon(features.iter().flatten().cloned().collect());
        files
            .feature_of_polygon
            .insert(file.clone(), feature_index(&features));
        Some(ScenarioKind::Area { file, polygons })
    }

    fn segments(
        &mut self,
        at: &FieldPath,
        r: &RawSegments,
        files: &mut SegmentFiles,
    ) -> Option<ScenarioKind> {
        let rel = self.required(
            &at.key("segments"),
            r.segments.clone(),
            "give segments = \"segments.geojson\", a GeoJSON file with an id property per feature",
        )?;
        let poa_map = self.required(
            &at.key("poa"),
            r.poa.clone(),
            "give poa = { S1 = 0.3, S2 = 0.2 }, this analyst's POA per segment id",
        )?;
        let file = self.resolve(&rel);
        let segments = match files.segments.get(&file) {
            Some(seg) => seg.clone(),
            None => {
                let seg = geofiles::read_segments(&file)
                    .map_err(|e| self.named_file_err(&at.key("segments"), e))
                    .ok()?;
                files.segments.insert(file.clone(), seg.clone());
                seg
            }
        };
        let ids: Vec<&str> = segments.iter().map(|(id, _)| id.as_str()).collect();
        let mut ok = true;
        for id in poa_map.keys() {
            if !ids.contains(&id.as_str()) {
                self.err(
                    &at.key("poa").key(id),
                    format!(
                        "segment \"{id}\" is not in {}; its segments are: {}",
                        file.display(),
                        ids.join(", ")
                    ),
                );
                ok = false;
            }
        }
        let poa = segments
            .iter()
            .map(|(id, _)| poa_map.get(id).copied().unwrap_or(0.0))
            .collect();
        ok.then_some(ScenarioKind::Segments {
            file,
            segments,
            poa,
        })
    }

    fn rings(&mut self, at: &FieldPath, r: &RawRings) -> Option<ScenarioKind> {
        let position = self.required(
            &at.key("position"),
            r.position,
            "give position = [lon, lat], the initial planning point",
        );
        let q = self.required(
            &at.key("distance_quantiles_km"),
            r.distance_quantiles_km.clone(),
            "give distance_quantiles_km = { 25 = 1.1, 50 = 2.0, 75 = 3.6, 95 = 7.4 }",
        )?;
        let Position(position) = position?;
        if !self.position(&at.key("position"), position) {
            return None;
        }
        let mode = match r.ring_interpolation.as_deref() {
            None => prior::RingInterpolation::UniformPerRing,
            Some(name) => match prior::RingInterpolation::parse(name) {
                Some(m) => m,
                None => {
                    let list =
                        choices(prior::RingInterpolation::ALL.map(prior::RingInterpolation::name));
                    self.err(
                        &at.key("ring_interpolation"),
                        format!("unknown ring_interpolation \"{name}\"; use {list}"),
                    );
                    return None;
                }
            },
        };
        self.quantiles(&at.key("distance_quantiles_km"), &q)
            .map(|quantiles| ScenarioKind::Rings {
                position,
                quantiles,
                mode,
            })
    }

    /// The rings as (fraction, radius metres) in the order of the percentages; each key read
    /// as a percentage (the prior crate checks the values).
    fn quantiles(&mut self, at: &FieldPath, q: &BTreeMap<String, f64>) -> Option<Vec<(f64, f64)>> {
        let mut out = Vec::new();
        for (k, v) in q {
            let Ok(pct) = k.trim().parse::<f64>() else {
                self.err(&at.key(k), format!("\"{k}\" is not a percentage; write keys as percentages such as 25, 50, 75, 95"));
                return None;
            };
            out.push((pct / 100.0, v * 1000.0));
        }
        out.sort_by(|a, b| a.0.total_cmp(&b.0));
        Some(out)
    }

    fn drift(&mut self, at: &FieldPath, s: &RawDrift) -> Option<DriftDef> {
        let position = self.required(
            &at.key("position"),
            s.position,
            "give position = [lon, lat], the last known position",
        );
        let adrift = self.required(
            &at.key("adrift"),
            s.adrift.as_ref(),
            "give adrift = { earliest = \"...\", latest = \"...\" }",
        );
        let current = self.required(
            &at.key("current"),
            s.current.as_ref(),
            "give current = { speed_kn, toward_deg, ... } or { series = \"current.csv\" }",
        );
        let wind = self.required(
            &at.key("wind"),
            s.wind.as_ref(),
            "give wind = { speed_kn, from_deg, ... } or { series = \"wind.csv\" }",
        );
        let leeway = self.required(&at.key("leeway"), s.leeway.as_ref(), "give leeway = { downwind_slope, ... } for the object; seekgrid has no built-in leeway values");
        let (Some(Position(position)), Some(adrift), Some(current), Some(wind), Some(leeway)) =
            (position, adrift, current, wind, leeway)
        else {
            return None;
        };
        let ok = self.position(&at.key("position"), position);
        let earliest = self.time(&at.key("adrift").key("earliest"), &adrift.earliest);
        let latest = self.time(&at.key("adrift").key("latest"), &adrift.latest);
        let hold = s.hold_environment_beyond_series.unwrap_or(false);
        let current = self.vector(&at.key("current"), current, Convention::Toward, hold);
        let wind = self.vector(&at.key("wind"), wind, Convention::From, hold);
        let def = DriftDef {
            position,
            position_sigma_m: s.position_sigma_m.unwrap_or(0.0),
            adrift_earliest: earliest?,
            adrift_latest: latest?,
            current: current?,
            wind: wind?,
            leeway: LeewayDef {
                downwind_slope: leeway.downwind_slope,
                downwind_offset_kn: leeway.downwind_offset_kn.unwrap_or(0.0),
                downwind_sigma_kn: leeway.downwind_sigma_kn.unwrap_or(0.0),
                crosswind_slope: leeway.crosswind_slope.unwrap_or(0.0),
                crosswind_offset_kn: leeway.crosswind_offset_kn.unwrap_or(0.0),
                crosswind_sigma_kn: leeway.crosswind_sigma_kn.unwrap_or(0.0),
                jibe_per_h: leeway.jibe_per_h.unwrap_or(0.0),
                source: leeway.source.clone(),
            },
            diffusivity_m2_s: s.diffusivity_m2_s.unwrap_or(0.0),
            particles: s.particles.unwrap_or(20_000),
            seed: s.seed.unwrap_or(1),
            hold_environment_beyond_series: s.hold_environment_beyond_series.unwrap_or(false),
        };
        if !ok {
            return None;
        }
        // The drift crate's own checks: the gridded fields' lattices, every coefficient.
        match def.scenario().and_then(|d| d.validate()) {
            Ok(()) => Some(def),
            Err(e) => {
                match checks::drift(at, &def, &e) {
                    (checks::Place::Field(path), message) => self.err(&path, message),
                    (checks::Place::File(file), message) => self.file_invalid(&file, message),
                }
                None
            }
        }
    }

    fn vector(
        &mut self,
        at: &FieldPath,
        v: &RawVector,
        convention: Convention,
        hold: bool,
    ) -> Option<VectorDef> {
        let (dir, dir_name, wrong_name, wrong) = match convention {
            Convention::Toward => (v.toward_deg, "toward_deg", "from_deg", v.from_deg.is_some()),
            Convention::From => (v.from_deg, "from_deg", "toward_deg", v.toward_deg.is_some()),
        };
        if wrong {
            let what = if convention == Convention::Toward {
                "current is given as the direction it flows toward"
            } else {
                "wind is given as the direction it blows from"
            };
            self.err(&at.key(wrong_name), format!("{what}; use {dir_name}"));
            return None;
        }
        let speed_sigma_kn = v.speed_sigma_kn.unwrap_or(0.0);
        let direction_sigma_deg = v.direction_sigma_deg.unwrap_or(0.0);
        let sources = [
            v.speed_kn.is_some() || dir.is_some(),
            v.series.is_some(),
            v.field.is_some(),
            v.netcdf.is_some(),
            v.grib.is_some(),
        ];
        if sources.iter().filter(|b| **b).count() != 1 {
            self.err(at, format!("give exactly one of: speed_kn with {dir_name} (constant), series = \"file.csv\" (time series), field = \"file.csv\" (gridded CSV), netcdf = \"file.nc\" or grib = \"file.grib2\" (forecast files)"));
            return None;
        }
        let forecast_only = [
            ("u_variable", v.u_variable.is_some()),
            ("v_variable", v.v_variable.is_some()),
            ("level_m", v.level_m.is_some()),
        ];
        if v.netcdf.is_none() && v.grib.is_none() {
            if let Some((key, _)) = forecast_only.iter().find(|(_, given)| *given) {
                self.err(&at.key(key), format!("{key} applies to a forecast file only; give netcdf = \"file.nc\" or grib = \"file.grib2\", or remove {key}"));
                return None;
            }
        } else if v.grib.is_some() {
            for key in ["u_variable", "v_variable"] {
                if forecast_only.iter().any(|(k, given)| *k == key && *given) {
                    self.err(&at.key(key), format!("{key} applies to a NetCDF file only; a GRIB2 file is read by its parameter codes (docs/incident-format.md)"));
                    return None;
                }
            }
        }
        if let Some(level) = v.level_m
            && !(level.is_finite() && level >= 0.0)
        {
            self.err(&at.key("level_m"), format!("level_m is {level}; give metres below (current) or above (wind) the surface, 0 or more"));
            return None;
        }
        let quantity = match convention {
            Convention::Toward => Quantity::Current,
            Convention::From => Quantity::Wind,
        };
        let options = ForecastOptions {
            u_variable: v.u_variable.clone(),
            v_variable: v.v_variable.clone(),
            level_m: v.level_m,
        };
        let forecast = |grid: ForecastGrid, key: &'static str| VectorDef::Forecast {
            grid: Box::new(grid),
            key,
            speed_sigma_kn,
            direction_sigma_deg,
            beyond_box: if hold {
                BeyondBox::HoldEdge
            } else {
                BeyondBox::Refuse
            },
        };
        if let Some(list) = &v.netcdf {
            let files: Vec<PathBuf> = list.paths().iter().map(|p| self.resolve(p)).collect();
            if files.is_empty() {
                self.err(
                    &at.key("netcdf"),
                    "netcdf = [] names no file; give one or more NetCDF files",
                );
                return None;
            }
            return forecast::read_netcdf_files(&files, quantity, &options)
                .map(|mut g| {
                    self.apply_land(&mut g);
                    forecast(g, "netcdf")
                })
                .map_err(|e| self.named_file_err(&at.key("netcdf"), e))
                .ok();
        }
        if let Some(list) = &v.grib {
            let files: Vec<PathBuf> = list.paths().iter().map(|p| self.resolve(p)).collect();
            if files.is_empty() {
                self.err(
                    &at.key("grib"),
                    "grib = [] names no file; give one or more GRIB2 files",
                );
                return None;
            }
            return forecast::read_grib(&files, quantity, &options)
                .map(|mut g| {
                    self.apply_land(&mut g);
                    forecast(g, "grib")
                })
                .map_err(|e| self.named_file_err(&at.key("grib"), e))
                .ok();
        }
        if let Some(rel) = &v.series {
            let file = self.resolve(rel);
            return geofiles::read_series(&file, speed_sigma_kn, direction_sigma_deg)
                .map(|samples| VectorDef::Series { file, samples })
                .map_err(|e| self.named_file_err(&at.key("series"), e))
                .ok();
        }
        if let Some(rel) = &v.field {
            let file = self.resolve(rel);
            return geofiles::read_field(&file)
                .map(|samples| VectorDef::Field {
                    file,
                    samples,
                    speed_sigma_kn,
                    direction_sigma_deg,
                })
                .map_err(|e| self.named_file_err(&at.key("field"), e))
                .ok();
        }
        let speed_kn = self.required(&at.key("speed_kn"), v.speed_kn, "give speed_kn");
        let direction_deg = self.required(&at.key(dir_name), dir, &format!("give {dir_name}"));
        Some(VectorDef::Constant(VectorSample {
            speed_kn: speed_kn?,
            direction_deg: direction_deg?,
            speed_sigma_kn,
            direction_sigma_deg,
        }))
    }

    fn searches(&mut self, raw: &RawFile) -> Vec<SearchDef> {
        let mut seen = HashSet::new();
        let mut out = Vec::new();
        for (i, s) in raw.searches.iter().enumerate() {
            let at = p("search").index(i);
            self.id(&at.key("id"), &s.id, "search id");
            self.id(&at.key("unit"), &s.unit, "unit of the search");
            if !seen.insert(s.id.clone()) {
                self.err(
                    &at.key("id"),
                    format!(
                        "search id \"{}\" is used twice; give each search its own id",
                        s.id
                    ),
                );
            }
            if let Some(d) = self.search(&at, s) {
                out.push(d);
            }
        }
        out
    }

    fn search(&mut self, at: &FieldPath, s: &RawSearch) -> Option<SearchDef> {
        let start = self.time(&at.key("start"), &s.start);
        let end = self.time(&at.key("end"), &s.end);
        if let (Some(a), Some(b)) = (start, end)
            && b < a
        {
            self.err(
                &at.key("end"),
                "the search ends before it starts; check start and end",
            );
        }
        let factors = s.sweep_width_factors.clone().unwrap_or_default();
        let ok = match search::SweepWidth::new(s.sweep_width_m, &factors) {
            Ok(_) => true,
            Err(e) => {
                let (path, message) = checks::sweep_width(at, s.sweep_width_m, &e);
                self.err(&path, message);
                false
            }
        };
        let detection = self.detection(&at.key("detection"), s.detection.as_deref());
        let geometry = match (&s.pattern, &s.track) {
            (Some(pat), None) => self
                .pattern(&at.key("pattern"), pat)
                .map(SearchGeometry::Pattern),
            (None, Some(rel)) => {
                let file = self.resolve(rel);
                geofiles::read_track(&file)
                    .map(|(points, times)| SearchGeometry::Track {
                        file,
                        points,
                        times,
                    })
                    .map_err(|e| self.named_file_err(&at.key("track"), e))
                    .ok()
            }
            _ => {
                self.err(at, "a search needs exactly one of pattern = { kind = ..., ... } (as tasked) or track = \"file.gpx\" (as followed)");
                None
            }
        };
        let done_fraction = self.done_fraction(at, s);
        if let Some(run) = &s.tasked_in {
            self.id(&at.key("tasked_in"), run, "plan run id in tasked_in");
        }
        if !ok {
            return None;
        }
        Some(SearchDef {
            id: s.id.clone(),
            unit: s.unit.clone(),
            start: start?,
            end: end?,
            sweep_width_m: s.sweep_width_m,
            sweep_width_factors: factors,
            detection,
            geometry: geometry?,
            done_fraction: done_fraction?,
            tasked_in: s.tasked_in.clone(),
            at: at.clone(),
        })
    }

    /// The share of a pattern flown: in (0, 1], only with a pattern.
    fn done_fraction(&mut self, at: &FieldPath, s: &RawSearch) -> Option<f64> {
        let Some(f) = s.done_fraction else {
            return Some(1.0);
        };
        let here = at.key("done_fraction");
        if s.pattern.is_none() {
            self.err(&here, "done_fraction is the share of a pattern's track flown; a followed track is already what was flown, so remove done_fraction or give the pattern");
            return None;
        }
        if !(f.is_finite() && f > 0.0 && f <= 1.0) {
            self.err(&here, format!("done_fraction must be more than 0 and at most 1 (the share of the pattern's track flown from its start), got {f}"));
            return None;
        }
        Some(f)
    }

    /// The pattern, read by the step of its kind, then checked by the search crate.
    fn pattern(&mut self, at: &FieldPath, pat: &RawPattern) -> Option<PatternDef> {
        let def = match pat {
            RawPattern::ParallelSweep(r) => self.rectangle(at, r).map(PatternDef::ParallelSweep),
            RawPattern::CreepingLine(r) => self.rectangle(at, r).map(PatternDef::CreepingLine),
            RawPattern::ExpandingSquare(r) => self.square(at, r),
            RawPattern::SectorSearch(r) => self.sector(at, r),
        }?;
        let Ok(pattern) = def.to_search(&checks::as_lon_lat, &checks::as_written);
        match pattern.validate() {
            Ok(()) => Some(def),
            Err(e) => {
                let (path, message) = checks::pattern(at, &e);
                self.err(&path, message);
                None
            }
        }
    }

    fn rectangle(&mut self, at: &FieldPath, r: &RawRectangle) -> Option<RectangleOnChart> {
        let Position(center) = r.center;
        let center_ok = self.position(&at.key("center"), center);
        let length_m = self.required(
            &at.key("length_m"),
            r.length_m,
            "give length_m, the length of the area along its major axis",
        );
        let width_m = self.required(&at.key("width_m"), r.width_m, "give width_m");
        let major_bearing_deg = self.required(
            &at.key("major_bearing_deg"),
            r.major_bearing_deg,
            "give major_bearing_deg, the true bearing of the area's long side",
        );
        let track_spacing_m = self.required(
            &at.key("track_spacing_m"),
            r.track_spacing_m,
            "give track_spacing_m",
        );
        center_ok.then_some(())?;
        Some(RectangleOnChart {
            center,
            length_m: length_m?,
            width_m: width_m?,
            major_bearing_deg: major_bearing_deg?,
            track_spacing_m: track_spacing_m?,
        })
    }

    fn square(&mut self, at: &FieldPath, r: &RawSquare) -> Option<PatternDef> {
        let Position(center) = r.center;
        let center_ok = self.position(&at.key("center"), center);
        let track_spacing_m = self.required(
            &at.key("track_spacing_m"),
            r.track_spacing_m,
            "give track_spacing_m",
        )?;
        center_ok.then_some(PatternDef::ExpandingSquare {
            center,
            track_spacing_m,
            legs: r.legs.unwrap_or(12),
            first_leg_bearing_deg: r.first_leg_bearing_deg.unwrap_or(0.0),
        })
    }

    fn sector(&mut self, at: &FieldPath, r: &RawSector) -> Option<PatternDef> {
        let Position(center) = r.center;
        let center_ok = self.position(&at.key("center"), center);
        let radius_m = self.required(&at.key("radius_m"), r.radius_m, "give radius_m")?;
        center_ok.then_some(PatternDef::SectorSearch {
            center,
            radius_m,
            first_leg_bearing_deg: r.first_leg_bearing_deg.unwrap_or(0.0),
            sectors: r.sectors.unwrap_or(3),
        })
    }

    fn units(&mut self, raw: &RawFile) -> Vec<UnitDef> {
        let mut seen = HashSet::new();
        let mut out = Vec::new();
        for (i, u) in raw.units.iter().enumerate() {
            let at = p("unit").index(i);
            if !seen.insert(u.id.clone()) {
                self.err(&at.key("id"), format!("unit id \"{}\" is used twice", u.id));
            }
            if let Some(d) = self.unit(at, u) {
                out.push(d);
            }
        }
        out
    }

    /// One unit: its speed in m/s, then checked by the plan crate.
    fn unit(&mut self, at: FieldPath, u: &RawUnit) -> Option<UnitDef> {
        let detection = self.detection(&at.key("detection"), u.detection.as_deref());
        let speed_mps = match (u.speed_kn, u.speed_kmh) {
            (Some(kn), None) => seekgrid_core::units::knots_to_mps(kn),
            (None, Some(kmh)) => seekgrid_core::units::kmh_to_mps(kmh),
            _ => {
                self.err(&at, "give exactly one of speed_kn or speed_kmh");
                return None;
            }
        };
        let def = UnitDef {
            id: u.id.clone(),
            speed_mps,
            hours_on_scene: u.hours_on_scene,
            sweep_width_m: u.sweep_width_m,
            track_spacing_min_m: u.track_spacing_min_m,
            detection,
            searchers: u.searchers,
            positions: self.positions(&at.key("positions"), u.positions.as_deref()),
            at,
        };
        match def.spec().validate() {
            Ok(()) => Some(def),
            Err(e) => {
                let (path, message) = checks::unit(&def.at, u, &e);
                self.err(&path, message);
                None
            }
        }
    }

    fn outcome(&mut self, o: &RawOutcome, reference_time: Option<Time>) -> Option<Outcome> {
        let at = p("outcome");
        match o {
            RawOutcome::Found(f) => self.found(&at, f, reference_time),
            RawOutcome::Suspended(s) => self.suspended(&at, s, reference_time),
        }
    }

    /// An outcome's time: after the reference time.
    fn outcome_time(
        &mut self,
        at: &FieldPath,
        t: &TimeText,
        reference: Option<Time>,
    ) -> Option<Time> {
        let time = self.time(at, t)?;
        if let Some(r) = reference
            && time < r
        {
            self.err(at, format!("the outcome time {} is before reference_time {}; the incident cannot end before the time its scenarios describe", time.to_rfc3339(), r.to_rfc3339()));
            return None;
        }
        Some(time)
    }

    fn found(&mut self, at: &FieldPath, f: &RawFound, reference: Option<Time>) -> Option<Outcome> {
        let time = self.outcome_time(&at.key("time"), &f.time, reference);
        let position = self.required_position(
            &at.key("position"),
            f.position,
            "a found outcome needs position = [lon, lat], where the object was found",
        );
        if let Some(e) = f.position_error_m {
            self.non_negative(&at.key("position_error_m"), e, "position_error_m");
        }
        Some(Outcome::Found {
            time: time?,
            position: position?,
            position_error_m: f.position_error_m,
            note: f.note.clone(),
        })
    }

    fn suspended(
        &mut self,
        at: &FieldPath,
        s: &RawSuspended,
        reference: Option<Time>,
    ) -> Option<Outcome> {
        Some(Outcome::Suspended {
            time: self.outcome_time(&at.key("time"), &s.time, reference)?,
            note: s.note.clone(),
        })
    }
}

/// Files read once per incident, and what is needed to name their features later.
#[derive(Default)]
pub(crate) struct SegmentFiles {
    /// Segments per file.
    segments: HashMap<PathBuf, Vec<(String, geo::MultiPolygon<f64>)>>,
    /// For an area file: the feature of each polygon, in the order of the flattened polygons.
    pub(crate) feature_of_polygon: HashMap<PathBuf, Vec<usize>>,
}

/// The feature index of each polygon of the flattened features.
fn feature_index(features: &[geo::MultiPolygon<f64>]) -> Vec<usize> {
    features
        .iter()
        .enumerate()
        .flat_map(|(i, mp)| std::iter::repeat_n(i, mp.0.len()))
        .collect()
}

#[derive(Clone, Copy, PartialEq, Eq)]
enum Convention {
    Toward,
    From,
}
