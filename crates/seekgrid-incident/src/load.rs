//! Reading and validating an incident file and the files it refers to.

use crate::error::{ErrorKind, IncidentError};
use crate::file::{RawFile, RawPattern, RawScenario, RawSearch, RawVector, TimeText};
use crate::geofiles;
use crate::locate::{FieldPath, span_of};
use crate::model::*;
use chrono::{DateTime, Utc};
use seekgrid_core::{DEFAULT_MAX_CELLS, UtmZone};
use std::collections::{BTreeMap, HashMap, HashSet};
use std::fmt;
use std::path::{Path, PathBuf};

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

/// Reads and validates an incident file and every file it names.
///
/// # Errors
/// Every problem found, each as `FILE:LINE:COL: what is wrong; how to fix it`.
pub fn load(path: &Path) -> Result<Incident, IncidentErrors> {
    let text = std::fs::read_to_string(path).map_err(|e| {
        IncidentError::whole_file(
            ErrorKind::Unreadable,
            path,
            format!("cannot read the incident file: {e}; check the path"),
        )
    })?;
    parse(path, text)
}

/// Validates incident text as if read from `path` (referenced files are read relative to it).
///
/// # Errors
/// As [`load`].
pub fn parse(path: &Path, text: String) -> Result<Incident, IncidentErrors> {
    let raw: RawFile = toml::from_str(&text).map_err(|e| {
        let offset = e.span().map_or(0, |s| s.start);
        IncidentError::at_offset(ErrorKind::Syntax, path, &text, offset, toml_message(&e))
    })?;
    let mut v = Validator {
        path: path.to_owned(),
        text: &text,
        errors: Vec::new(),
    };
    let incident = v.incident(&raw);
    if v.errors.is_empty() {
        Ok(incident.expect("an incident is built whenever no error was recorded"))
    } else {
        Err(IncidentErrors(v.errors))
    }
}

fn toml_message(e: &toml::de::Error) -> String {
    let m = e.message().trim().trim_end_matches('.').replace('\n', " ");
    if m.contains("unknown field") {
        format!("{m}; check the spelling against docs/incident-format.md")
    } else if m.contains("missing field") {
        format!("{m}; add it (docs/incident-format.md lists every field)")
    } else {
        m
    }
}

struct Validator<'a> {
    path: PathBuf,
    text: &'a str,
    errors: Vec<IncidentError>,
}

fn p(s: &str) -> FieldPath {
    FieldPath::new(s)
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

    fn dir(&self) -> PathBuf {
        self.path
            .parent()
            .map(Path::to_path_buf)
            .unwrap_or_default()
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

    fn finite(&mut self, at: &FieldPath, v: f64, what: &str) -> bool {
        if v.is_finite() {
            true
        } else {
            self.err(at, format!("{what} must be a finite number, got {v}"));
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

    fn required<T: Clone>(&mut self, at: &FieldPath, v: &Option<T>, hint: &str) -> Option<T> {
        if v.is_none() {
            self.err(at, format!("missing; {hint}"));
        }
        v.clone()
    }

    fn detection(&mut self, at: &FieldPath, d: &Option<String>) -> DetectionName {
        match d.as_deref() {
            None | Some("inverse-cube") => DetectionName::InverseCube,
            Some("exponential") => DetectionName::Exponential,
            Some("definite-range") => DetectionName::DefiniteRange,
            Some(other) => {
                self.err(at, format!("unknown detection law \"{other}\"; use \"inverse-cube\", \"exponential\" or \"definite-range\""));
                DetectionName::InverseCube
            }
        }
    }

    fn incident(&mut self, raw: &RawFile) -> Option<Incident> {
        let h = &raw.incident;
        let title = h.title.trim().to_owned();
        if title.is_empty() {
            self.err(
                &p("incident").key("title"),
                "the title is empty; give the incident a name planners will recognise",
            );
        }
        let reference_time = self.time(&p("incident").key("reference_time"), &h.reference_time);
        let crs = h.crs.as_ref().and_then(|c| match UtmZone::parse(c) {
            Ok(z) => Some(z),
            Err(e) => {
                self.err(&p("incident").key("crs"), e.to_string());
                None
            }
        });
        let coastline_file = h.coastline.as_ref().map(|c| self.resolve(c));
        let coastline = h.coastline.as_ref().and_then(|c| {
            let file = self.resolve(c);
            match geofiles::read_polygons(&file) {
                Ok(mp) => Some(mp),
                Err(e) => {
                    self.file_err(e);
                    None
                }
            }
        });
        let object_afloat = h.object_afloat;
        if object_afloat.is_some() && h.coastline.is_none() {
            self.err(&p("incident").key("object_afloat"), "object_afloat needs a coastline to tell land from water; add coastline = \"coast.geojson\" or remove object_afloat");
        }

        let g = &raw.grid;
        self.positive(&p("grid").key("cell_m"), g.cell_m, "cell_m");
        let bounds = g.bounds.map(|b| [b.west, b.south, b.east, b.north]);
        if let Some([w, s, e, n]) = bounds {
            let at = p("grid").key("bounds");
            let lon_ok = |v: f64| (-180.0..=180.0).contains(&v);
            let lat_ok = |v: f64| (-80.0..=84.0).contains(&v);
            let ordered = w < e && s < n && [w, s, e, n].iter().all(|v| v.is_finite());
            if !(ordered && lon_ok(w) && lon_ok(e) && lat_ok(s) && lat_ok(n)) {
                self.err(&at, "bounds must have west < east and south < north, in degrees within the UTM range (latitude -80..84)");
            }
        }
        let max_cells = g.max_cells.unwrap_or(DEFAULT_MAX_CELLS);
        if max_cells == 0 {
            self.err(&p("grid").key("max_cells"), "max_cells must be at least 1");
        }

        let pool = match raw.prior.as_ref().and_then(|pr| pr.pool.as_deref()) {
            None | Some("linear") => PoolChoice::Linear,
            Some("logarithmic") => PoolChoice::Logarithmic,
            Some(other) => {
                self.err(
                    &p("prior").key("pool"),
                    format!("unknown pool \"{other}\"; use \"linear\" or \"logarithmic\""),
                );
                PoolChoice::Linear
            }
        };

        let analysts = self.analysts(raw);
        let scenarios = self.scenarios(raw, &analysts);
        let searches = self.searches(raw);
        let units = self.units(raw);
        if !self.errors.is_empty() {
            return None;
        }
        Some(Incident {
            path: self.path.clone(),
            text: self.text.to_owned(),
            title,
            reference_time: reference_time?,
            crs,
            notes: h.notes.clone(),
            coastline,
            coastline_file,
            object_afloat,
            grid: GridSettings {
                cell_m: g.cell_m,
                bounds,
                max_cells,
            },
            pool,
            analysts,
            scenarios,
            searches,
            units,
        })
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
            if a.id.trim().is_empty() {
                self.err(&at.key("id"), "the analyst id is empty");
            }
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
            });
        }
        out
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
        let mut segment_cache: HashMap<PathBuf, Vec<(String, geo::MultiPolygon<f64>)>> =
            HashMap::new();
        let mut out = Vec::new();
        let mut with_scenarios = HashSet::new();
        for (i, s) in raw.scenarios.iter().enumerate() {
            let at = p("scenario").index(i);
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
            self.fields_fit_kind(&at, s);
            if let Some(kind) = self.scenario_kind(&at, s, &mut segment_cache) {
                out.push(ScenarioDef {
                    id: s.id.clone(),
                    analyst: s.analyst.clone(),
                    weight,
                    kind,
                });
            }
        }
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
        }
        out
    }

    /// Refuses fields that belong to another kind: they would be silently ignored otherwise.
    fn fields_fit_kind(&mut self, at: &FieldPath, s: &RawScenario) {
        let present: [(&str, bool); 19] = [
            ("position", s.position.is_some()),
            ("sigma_m", s.sigma_m.is_some()),
            ("sigma_major_m", s.sigma_major_m.is_some()),
            ("sigma_minor_m", s.sigma_minor_m.is_some()),
            ("major_bearing_deg", s.major_bearing_deg.is_some()),
            ("waypoints", s.waypoints.is_some()),
            ("cross_track_sigma_m", s.cross_track_sigma_m.is_some()),
            ("polygon", s.polygon.is_some()),
            ("segments", s.segments.is_some()),
            ("poa", s.poa.is_some()),
            ("distance_quantiles_km", s.distance_quantiles_km.is_some()),
            ("ring_interpolation", s.ring_interpolation.is_some()),
            ("position_sigma_m", s.position_sigma_m.is_some()),
            ("adrift", s.adrift.is_some()),
            ("current", s.current.is_some()),
            ("wind", s.wind.is_some()),
            ("leeway", s.leeway.is_some()),
            ("diffusivity_m2_s", s.diffusivity_m2_s.is_some()),
            ("particles", s.particles.is_some() || s.seed.is_some()),
        ];
        let allowed: &[&str] = match s.kind.as_str() {
            "point" => &[
                "position",
                "sigma_m",
                "sigma_major_m",
                "sigma_minor_m",
                "major_bearing_deg",
            ],
            "route" => &["waypoints", "cross_track_sigma_m"],
            "area" => &["polygon"],
            "segments" => &["segments", "poa"],
            "rings" => &["position", "distance_quantiles_km", "ring_interpolation"],
            "drift" => &[
                "position",
                "position_sigma_m",
                "adrift",
                "current",
                "wind",
                "leeway",
                "diffusivity_m2_s",
                "particles",
            ],
            _ => return,
        };
        for (name, there) in present {
            if there && !allowed.contains(&name) {
                self.err(&at.key(name), format!("{name} does not belong to a scenario of kind \"{}\"; remove it or change the kind", s.kind));
            }
        }
    }

    fn scenario_kind(
        &mut self,
        at: &FieldPath,
        s: &RawScenario,
        segment_cache: &mut HashMap<PathBuf, Vec<(String, geo::MultiPolygon<f64>)>>,
    ) -> Option<ScenarioKind> {
        match s.kind.as_str() {
            "point" => {
                let position = self.required(
                    &at.key("position"),
                    &s.position,
                    "give position = [lon, lat]",
                )?;
                if !self.position(&at.key("position"), position) {
                    return None;
                }
                match (s.sigma_m, s.sigma_major_m, s.sigma_minor_m) {
                    (Some(sig), None, None) => {
                        if s.major_bearing_deg.is_some() {
                            self.err(&at.key("major_bearing_deg"), "a circular point (sigma_m) has no major axis; remove major_bearing_deg or give sigma_major_m and sigma_minor_m");
                        }
                        self.positive(&at.key("sigma_m"), sig, "sigma_m").then_some(
                            ScenarioKind::Point {
                                position,
                                sigma_major_m: sig,
                                sigma_minor_m: sig,
                                major_bearing_deg: 0.0,
                            },
                        )
                    }
                    (None, Some(a), Some(b)) => {
                        let ok = self.positive(&at.key("sigma_major_m"), a, "sigma_major_m")
                            & self.positive(&at.key("sigma_minor_m"), b, "sigma_minor_m");
                        let bearing = self.required(&at.key("major_bearing_deg"), &s.major_bearing_deg, "an elliptical point needs major_bearing_deg, the true bearing of its major axis")?;
                        if !ok
                            || !self.finite(
                                &at.key("major_bearing_deg"),
                                bearing,
                                "major_bearing_deg",
                            )
                        {
                            return None;
                        }
                        if b > a {
                            self.err(&at.key("sigma_minor_m"), format!("sigma_minor_m ({b}) is larger than sigma_major_m ({a}); swap them and turn major_bearing_deg by 90"));
                            return None;
                        }
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
            "route" => {
                let w = self.required(
                    &at.key("waypoints"),
                    &s.waypoints,
                    "give waypoints = [[lon, lat], [lon, lat], ...]",
                )?;
                let sigma = self.required(
                    &at.key("cross_track_sigma_m"),
                    &s.cross_track_sigma_m,
                    "give cross_track_sigma_m, the across-track standard deviation in metres",
                )?;
                if w.len() < 2 {
                    self.err(&at.key("waypoints"), "a route needs at least two waypoints");
                    return None;
                }
                let mut ok =
                    self.positive(&at.key("cross_track_sigma_m"), sigma, "cross_track_sigma_m");
                for (k, pt) in w.iter().enumerate() {
                    ok &= self.position(&at.key("waypoints").index(k), *pt);
                }
                if ok && w.windows(2).all(|ab| ab[0] == ab[1]) {
                    self.err(&at.key("waypoints"), "the route has zero length; give distinct waypoints or use kind = \"point\"");
                    return None;
                }
                ok.then_some(ScenarioKind::Route {
                    waypoints: w,
                    cross_track_sigma_m: sigma,
                })
            }
            "area" => {
                let rel = self.required(
                    &at.key("polygon"),
                    &s.polygon,
                    "give polygon = \"file.geojson\", a GeoJSON file of polygons",
                )?;
                let file = self.resolve(&rel);
                match geofiles::read_polygons(&file) {
                    Ok(polygons) => Some(ScenarioKind::Area { file, polygons }),
                    Err(e) => {
                        self.file_err(e);
                        None
                    }
                }
            }
            "segments" => {
                let rel = self.required(&at.key("segments"), &s.segments, "give segments = \"segments.geojson\", a GeoJSON file with an id property per feature")?;
                let poa_map = self.required(
                    &at.key("poa"),
                    &s.poa,
                    "give poa = { S1 = 0.3, S2 = 0.2 }, this analyst's POA per segment id",
                )?;
                let file = self.resolve(&rel);
                let segments = if let Some(seg) = segment_cache.get(&file) {
                    seg.clone()
                } else {
                    match geofiles::read_segments(&file) {
                        Ok(seg) => {
                            segment_cache.insert(file.clone(), seg.clone());
                            seg
                        }
                        Err(e) => {
                            self.file_err(e);
                            return None;
                        }
                    }
                };
                let ids: Vec<&str> = segments.iter().map(|(id, _)| id.as_str()).collect();
                let mut ok = true;
                for (id, v) in &poa_map {
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
                    ok &= self.non_negative(&at.key("poa").key(id), *v, "a POA");
                }
                let total: f64 = poa_map.values().sum();
                if total > 1.0 + 1e-9 {
                    self.err(&at.key("poa"), format!("the POA values add up to {total:.4}, more than 1; give fractions whose sum is at most 1 (the rest is rest of world)"));
                    ok = false;
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
            "rings" => {
                let position = self.required(
                    &at.key("position"),
                    &s.position,
                    "give position = [lon, lat], the initial planning point",
                )?;
                let q = self.required(
                    &at.key("distance_quantiles_km"),
                    &s.distance_quantiles_km,
                    "give distance_quantiles_km = { 25 = 1.1, 50 = 2.0, 75 = 3.6, 95 = 7.4 }",
                )?;
                if !self.position(&at.key("position"), position) {
                    return None;
                }
                let mode = match s.ring_interpolation.as_deref() {
                    None | Some("uniform-per-ring") => RingMode::UniformPerRing,
                    Some("monotone-cubic") => RingMode::MonotoneCubic,
                    Some(other) => {
                        self.err(&at.key("ring_interpolation"), format!("unknown ring_interpolation \"{other}\"; use \"uniform-per-ring\" or \"monotone-cubic\""));
                        return None;
                    }
                };
                self.quantiles(&at.key("distance_quantiles_km"), &q)
                    .map(|quantiles| ScenarioKind::Rings {
                        position,
                        quantiles,
                        mode,
                    })
            }
            "drift" => self.drift(at, s).map(|d| ScenarioKind::Drift(Box::new(d))),
            other => {
                self.err(&at.key("kind"), format!("unknown scenario kind \"{other}\"; use point, route, area, segments, rings or drift"));
                None
            }
        }
    }

    fn quantiles(&mut self, at: &FieldPath, q: &BTreeMap<String, f64>) -> Option<Vec<(f64, f64)>> {
        let mut out = Vec::new();
        for (k, v) in q {
            let Ok(pct) = k.trim().parse::<f64>() else {
                self.err(&at.key(k), format!("\"{k}\" is not a percentage; write keys as percentages such as 25, 50, 75, 95"));
                return None;
            };
            if !(pct > 0.0 && pct <= 100.0) {
                self.err(&at.key(k), format!("percentage {pct} is outside 0..100"));
                return None;
            }
            if !self.positive(&at.key(k), *v, "a ring distance") {
                return None;
            }
            out.push((pct / 100.0, v * 1000.0));
        }
        out.sort_by(|a, b| a.0.total_cmp(&b.0));
        if out.is_empty() {
            self.err(at, "no distance quantiles given");
            return None;
        }
        if out.windows(2).any(|w| w[1].1 <= w[0].1) {
            self.err(at, "ring distances must grow with the percentage (a larger share of subjects lies within a larger distance)");
            return None;
        }
        Some(out)
    }

    fn drift(&mut self, at: &FieldPath, s: &RawScenario) -> Option<DriftDef> {
        let position = self.required(
            &at.key("position"),
            &s.position,
            "give position = [lon, lat], the last known position",
        )?;
        let adrift = self.required(
            &at.key("adrift"),
            &s.adrift,
            "give adrift = { earliest = \"...\", latest = \"...\" }",
        )?;
        let current = self.required(
            &at.key("current"),
            &s.current,
            "give current = { speed_kn, toward_deg, ... } or { series = \"current.csv\" }",
        )?;
        let wind = self.required(
            &at.key("wind"),
            &s.wind,
            "give wind = { speed_kn, from_deg, ... } or { series = \"wind.csv\" }",
        )?;
        let leeway = self.required(&at.key("leeway"), &s.leeway, "give leeway = { downwind_slope, ... } for the object; seekgrid has no built-in leeway values")?;
        let mut ok = self.position(&at.key("position"), position);
        let position_sigma_m = s.position_sigma_m.unwrap_or(0.0);
        ok &= self.non_negative(
            &at.key("position_sigma_m"),
            position_sigma_m,
            "position_sigma_m",
        );
        let earliest = self.time(&at.key("adrift").key("earliest"), &adrift.earliest);
        let latest = self.time(&at.key("adrift").key("latest"), &adrift.latest);
        if let (Some(e), Some(l)) = (earliest, latest)
            && l < e
        {
            self.err(
                &at.key("adrift").key("latest"),
                "latest is before earliest; swap them",
            );
            ok = false;
        }
        let current = self.vector(&at.key("current"), &current, Convention::Toward);
        let wind = self.vector(&at.key("wind"), &wind, Convention::From);
        let la = at.key("leeway");
        let lw = LeewayDef {
            downwind_slope: leeway.downwind_slope,
            downwind_offset_kn: leeway.downwind_offset_kn.unwrap_or(0.0),
            downwind_sigma_kn: leeway.downwind_sigma_kn.unwrap_or(0.0),
            crosswind_slope: leeway.crosswind_slope.unwrap_or(0.0),
            crosswind_offset_kn: leeway.crosswind_offset_kn.unwrap_or(0.0),
            crosswind_sigma_kn: leeway.crosswind_sigma_kn.unwrap_or(0.0),
            jibe_per_h: leeway.jibe_per_h.unwrap_or(0.0),
            source: leeway.source.clone(),
        };
        ok &= self.non_negative(
            &la.key("downwind_slope"),
            lw.downwind_slope,
            "downwind_slope",
        );
        ok &= self.finite(
            &la.key("downwind_offset_kn"),
            lw.downwind_offset_kn,
            "downwind_offset_kn",
        );
        ok &= self.non_negative(
            &la.key("downwind_sigma_kn"),
            lw.downwind_sigma_kn,
            "downwind_sigma_kn",
        );
        ok &= self.non_negative(
            &la.key("crosswind_slope"),
            lw.crosswind_slope,
            "crosswind_slope",
        );
        ok &= self.finite(
            &la.key("crosswind_offset_kn"),
            lw.crosswind_offset_kn,
            "crosswind_offset_kn",
        );
        ok &= self.non_negative(
            &la.key("crosswind_sigma_kn"),
            lw.crosswind_sigma_kn,
            "crosswind_sigma_kn",
        );
        ok &= self.non_negative(&la.key("jibe_per_h"), lw.jibe_per_h, "jibe_per_h");
        let diffusivity_m2_s = s.diffusivity_m2_s.unwrap_or(0.0);
        ok &= self.non_negative(
            &at.key("diffusivity_m2_s"),
            diffusivity_m2_s,
            "diffusivity_m2_s",
        );
        let particles = s.particles.unwrap_or(20_000);
        if particles == 0 || particles > 20_000_000 {
            self.err(
                &at.key("particles"),
                format!("particles must be between 1 and 20 000 000, got {particles}"),
            );
            ok = false;
        }
        if !ok {
            return None;
        }
        Some(DriftDef {
            position,
            position_sigma_m,
            adrift_earliest: earliest?,
            adrift_latest: latest?,
            current: current?,
            wind: wind?,
            leeway: lw,
            diffusivity_m2_s,
            particles,
            seed: s.seed.unwrap_or(1),
        })
    }

    fn vector(
        &mut self,
        at: &FieldPath,
        v: &RawVector,
        convention: Convention,
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
        let mut ok = self.non_negative(&at.key("speed_sigma_kn"), speed_sigma_kn, "speed_sigma_kn")
            & self.non_negative(
                &at.key("direction_sigma_deg"),
                direction_sigma_deg,
                "direction_sigma_deg",
            );
        let sources = [
            v.speed_kn.is_some() || dir.is_some(),
            v.series.is_some(),
            v.field.is_some(),
        ];
        if sources.iter().filter(|b| **b).count() != 1 {
            self.err(at, format!("give exactly one of: speed_kn with {dir_name} (constant), series = \"file.csv\" (time series) or field = \"file.csv\" (gridded)"));
            return None;
        }
        if let Some(rel) = &v.series {
            let file = self.resolve(rel);
            return match geofiles::read_series(&file, speed_sigma_kn, direction_sigma_deg) {
                Ok(samples) if ok => Some(VectorDef::Series { file, samples }),
                Ok(_) => None,
                Err(e) => {
                    self.file_err(e);
                    None
                }
            };
        }
        if let Some(rel) = &v.field {
            let file = self.resolve(rel);
            return match geofiles::read_field(&file) {
                Ok(samples) if ok => Some(VectorDef::Field {
                    file,
                    samples,
                    speed_sigma_kn,
                    direction_sigma_deg,
                }),
                Ok(_) => None,
                Err(e) => {
                    self.file_err(e);
                    None
                }
            };
        }
        let speed_kn = self.required(&at.key("speed_kn"), &v.speed_kn, "give speed_kn")?;
        let direction_deg = self.required(&at.key(dir_name), &dir, &format!("give {dir_name}"))?;
        ok &= self.non_negative(&at.key("speed_kn"), speed_kn, "speed_kn");
        ok &= self.finite(&at.key(dir_name), direction_deg, dir_name);
        ok.then_some(VectorDef::Constant(VectorSample {
            speed_kn,
            direction_deg,
            speed_sigma_kn,
            direction_sigma_deg,
        }))
    }

    fn searches(&mut self, raw: &RawFile) -> Vec<SearchDef> {
        let mut seen = HashSet::new();
        let mut out = Vec::new();
        for (i, s) in raw.searches.iter().enumerate() {
            let at = p("search").index(i);
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
        let mut ok = self.positive(&at.key("sweep_width_m"), s.sweep_width_m, "sweep_width_m");
        let factors = s.sweep_width_factors.clone().unwrap_or_default();
        for (k, f) in factors.iter().enumerate() {
            ok &= self.positive(
                &at.key("sweep_width_factors").index(k),
                *f,
                "a sweep width correction factor",
            );
        }
        let detection = self.detection(&at.key("detection"), &s.detection);
        let geometry = match (&s.pattern, &s.track) {
            (Some(pat), None) => self
                .pattern(&at.key("pattern"), pat)
                .map(SearchGeometry::Pattern),
            (None, Some(rel)) => {
                let file = self.resolve(rel);
                match geofiles::read_track(&file) {
                    Ok((points, times)) => Some(SearchGeometry::Track {
                        file,
                        points,
                        times,
                    }),
                    Err(e) => {
                        self.file_err(e);
                        None
                    }
                }
            }
            _ => {
                self.err(at, "a search needs exactly one of pattern = { kind = ..., ... } (as tasked) or track = \"file.gpx\" (as followed)");
                None
            }
        };
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
        })
    }

    fn pattern(&mut self, at: &FieldPath, pat: &RawPattern) -> Option<PatternDef> {
        if !self.position(&at.key("center"), pat.center) {
            return None;
        }
        let center = pat.center;
        match pat.kind.as_str() {
            "parallel-sweep" | "creeping-line" => {
                let length_m = self.required(
                    &at.key("length_m"),
                    &pat.length_m,
                    "give length_m, the length of the area along its major axis",
                )?;
                let width_m = self.required(&at.key("width_m"), &pat.width_m, "give width_m")?;
                let major_bearing_deg = self.required(
                    &at.key("major_bearing_deg"),
                    &pat.major_bearing_deg,
                    "give major_bearing_deg, the true bearing of the area's long side",
                )?;
                let track_spacing_m = self.required(
                    &at.key("track_spacing_m"),
                    &pat.track_spacing_m,
                    "give track_spacing_m",
                )?;
                let ok = self.positive(&at.key("length_m"), length_m, "length_m")
                    & self.positive(&at.key("width_m"), width_m, "width_m")
                    & self.finite(
                        &at.key("major_bearing_deg"),
                        major_bearing_deg,
                        "major_bearing_deg",
                    )
                    & self.positive(
                        &at.key("track_spacing_m"),
                        track_spacing_m,
                        "track_spacing_m",
                    );
                let r = RectanglePattern {
                    center,
                    length_m,
                    width_m,
                    major_bearing_deg,
                    track_spacing_m,
                };
                ok.then(|| {
                    if pat.kind == "parallel-sweep" {
                        PatternDef::ParallelSweep(r)
                    } else {
                        PatternDef::CreepingLine(r)
                    }
                })
            }
            "expanding-square" => {
                let track_spacing_m = self.required(
                    &at.key("track_spacing_m"),
                    &pat.track_spacing_m,
                    "give track_spacing_m",
                )?;
                let legs = pat.legs.unwrap_or(12);
                let first = pat.first_leg_bearing_deg.unwrap_or(0.0);
                let ok = self.positive(
                    &at.key("track_spacing_m"),
                    track_spacing_m,
                    "track_spacing_m",
                ) & self.finite(
                    &at.key("first_leg_bearing_deg"),
                    first,
                    "first_leg_bearing_deg",
                );
                if !(2..=400).contains(&legs) {
                    self.err(&at.key("legs"), "legs must be between 2 and 400");
                    return None;
                }
                ok.then_some(PatternDef::ExpandingSquare {
                    center,
                    track_spacing_m,
                    legs,
                    first_leg_bearing_deg: first,
                })
            }
            "sector-search" => {
                let radius_m =
                    self.required(&at.key("radius_m"), &pat.radius_m, "give radius_m")?;
                let first = pat.first_leg_bearing_deg.unwrap_or(0.0);
                let sectors = pat.sectors.unwrap_or(3);
                let ok = self.positive(&at.key("radius_m"), radius_m, "radius_m")
                    & self.finite(
                        &at.key("first_leg_bearing_deg"),
                        first,
                        "first_leg_bearing_deg",
                    );
                if !(1..=12).contains(&sectors) {
                    self.err(
                        &at.key("sectors"),
                        "sectors must be between 1 and 12 (3 is usual)",
                    );
                    return None;
                }
                ok.then_some(PatternDef::SectorSearch {
                    center,
                    radius_m,
                    first_leg_bearing_deg: first,
                    sectors,
                })
            }
            other => {
                self.err(&at.key("kind"), format!("unknown pattern \"{other}\"; use parallel-sweep, creeping-line, expanding-square or sector-search"));
                None
            }
        }
    }

    fn units(&mut self, raw: &RawFile) -> Vec<UnitDef> {
        let mut seen = HashSet::new();
        let mut out = Vec::new();
        for (i, u) in raw.units.iter().enumerate() {
            let at = p("unit").index(i);
            if !seen.insert(u.id.clone()) {
                self.err(&at.key("id"), format!("unit id \"{}\" is used twice", u.id));
            }
            let speed_mps = match (u.speed_kn, u.speed_kmh) {
                (Some(kn), None) => self
                    .positive(&at.key("speed_kn"), kn, "speed_kn")
                    .then(|| seekgrid_core::units::knots_to_mps(kn)),
                (None, Some(kmh)) => self
                    .positive(&at.key("speed_kmh"), kmh, "speed_kmh")
                    .then_some(kmh * seekgrid_core::units::MPS_PER_KMH),
                _ => {
                    self.err(&at, "give exactly one of speed_kn or speed_kmh");
                    None
                }
            };
            let ok = self.positive(
                &at.key("hours_on_scene"),
                u.hours_on_scene,
                "hours_on_scene",
            ) & self.positive(&at.key("sweep_width_m"), u.sweep_width_m, "sweep_width_m");
            if let Some(m) = u.track_spacing_min_m {
                self.positive(&at.key("track_spacing_min_m"), m, "track_spacing_min_m");
            }
            if u.searchers == Some(0) {
                self.err(
                    &at.key("searchers"),
                    "a ground team needs at least one searcher",
                );
            }
            let detection = self.detection(&at.key("detection"), &u.detection);
            if let (Some(speed_mps), true) = (speed_mps, ok) {
                out.push(UnitDef {
                    id: u.id.clone(),
                    speed_mps,
                    hours_on_scene: u.hours_on_scene,
                    sweep_width_m: u.sweep_width_m,
                    track_spacing_min_m: u.track_spacing_min_m,
                    detection,
                    searchers: u.searchers,
                });
            }
        }
        out
    }
}

#[derive(Clone, Copy, PartialEq, Eq)]
enum Convention {
    Toward,
    From,
}
