//! GPX 1.1 files for the units' navigation sets: routes (`plan.gpx`) and waypoints only
//! (`plan-waypoints.gpx`, for sets that take no routes).
//!
//! A plan is a set of routes (`rte`: what a unit is to follow), never tracks (`trk`: what was
//! recorded). A routes file holds routes only and a waypoints file waypoints only, so the `gpx`
//! crate's element order (it writes `trk` before `rte`) cannot break the schema's
//! `metadata?, wpt*, rte*, trk*` sequence. Within `metadata` the crate writes `keywords` before
//! `time` and `time` before `link`, against the schema's order (`link`, `time`, `keywords`), so
//! only `name`, `desc` and `time` are set.
//!
//! GPS sets keep short names: many handheld sets keep 10 to 14 characters of a waypoint name and
//! older ones 6 (from memory); a set that cuts two names to the same text keeps one point and
//! drops or overwrites the other. [`PointNamer`] makes names readable (the unit's code and the
//! point's number, e.g. `RESC1 07`) and unique within [`GpsOptions::name_length`]; the full
//! name goes into each point's `desc`. Routes of more than [`GpsOptions::route_points`] points
//! are split into numbered parts.

use crate::error::RenderError;
use chrono::{DateTime, Utc};
use gpx::{Gpx, GpxVersion, Metadata, Route, Waypoint};
use std::collections::BTreeSet;

/// The shortest name length accepted: a one-letter unit code and a three-character point
/// label (`R CSP` without its space).
pub const MIN_NAME_LENGTH: usize = 4;

/// The default name length, characters: what many handheld GPS sets keep (from memory; some
/// keep 14, older ones 6).
pub const DEFAULT_NAME_LENGTH: usize = 10;

/// The default largest number of points in one route. From memory: many handheld GPS sets take
/// routes of at most 50 points (older handhelds; newer ones 250), so 50 is the limit every such
/// set accepts.
pub const DEFAULT_ROUTE_POINTS: usize = 50;

/// The fewest points a route part may be limited to (a route needs two points).
pub const MIN_ROUTE_POINTS: usize = 2;

/// How the GPS files name and split routes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct GpsOptions {
    /// Longest point and route name, characters ([`MIN_NAME_LENGTH`] or more; default
    /// [`DEFAULT_NAME_LENGTH`]).
    pub name_length: usize,
    /// Most points in one route ([`MIN_ROUTE_POINTS`] or more; default
    /// [`DEFAULT_ROUTE_POINTS`]); a longer route is split into numbered parts.
    pub route_points: usize,
}

impl Default for GpsOptions {
    fn default() -> Self {
        Self {
            name_length: DEFAULT_NAME_LENGTH,
            route_points: DEFAULT_ROUTE_POINTS,
        }
    }
}

impl GpsOptions {
    /// Checks the limits.
    ///
    /// # Errors
    /// [`RenderError::BadSetting`] for a name length under [`MIN_NAME_LENGTH`] or a route limit
    /// under [`MIN_ROUTE_POINTS`].
    pub fn validate(&self) -> Result<(), RenderError> {
        if self.name_length < MIN_NAME_LENGTH {
            return Err(RenderError::BadSetting {
                name: "--gps-name-length",
                message: format!(
                    "{} is too short for a unit code and a point number; give {MIN_NAME_LENGTH} or more (the default {DEFAULT_NAME_LENGTH} suits most handheld sets)",
                    self.name_length
                ),
            });
        }
        if self.route_points < MIN_ROUTE_POINTS {
            return Err(RenderError::BadSetting {
                name: "--gps-route-points",
                message: format!(
                    "{} points cannot make a route; give {MIN_ROUTE_POINTS} or more (default {DEFAULT_ROUTE_POINTS})",
                    self.route_points
                ),
            });
        }
        Ok(())
    }
}

/// One named position of a GPS file.
#[derive(Debug, Clone, PartialEq)]
pub struct NamedPoint {
    /// Short name, unique in the file (see [`PointNamer`]).
    pub name: String,
    /// Full name and any detail (position in the chosen format), written as `desc`.
    pub description: String,
    /// Longitude, degrees.
    pub lon: f64,
    /// Latitude, degrees.
    pub lat: f64,
}

/// One route: its short name, a description (the full name first), and its points.
#[derive(Debug, Clone)]
pub struct RouteSpec {
    /// Short route name (the unit's code).
    pub name: String,
    /// Free text (the unit's full name, pattern, spacing, times).
    pub description: String,
    /// Points in order.
    pub points: Vec<NamedPoint>,
}

/// The file's metadata: name, description, time and the creator's version.
#[derive(Debug, Clone)]
pub struct GpxHeader<'a> {
    /// The file's name (the incident title).
    pub title: &'a str,
    /// The file's description (what it is, the run id, the caution).
    pub description: &'a str,
    /// When the file was made (GPX `metadata/time`: "the creation date of the file").
    pub time: Option<DateTime<Utc>>,
}

/// The GPX `creator`: `seekgrid` and its version.
#[must_use]
pub fn creator() -> String {
    format!("seekgrid {}", env!("CARGO_PKG_VERSION"))
}

/// Gives each point a short name made of its unit's code and a label, unique within the name
/// length across one file.
///
/// The unit code is made from the unit id's letters and digits (upper case): the whole id when
/// it fits, else the start of each word with the numbers kept whole (`rescue-boat-1` →
/// `RESBO1`), else cut; units whose codes clash are numbered.
#[derive(Debug, Clone)]
pub struct PointNamer {
    name_length: usize,
    label_width: usize,
    separator: &'static str,
    codes: Vec<(String, String)>,
}

impl PointNamer {
    /// A namer for `units` (ids, in order, each once) whose point labels are at most
    /// `label_width` characters (`CSP`, `07`, `C2`).
    ///
    /// # Errors
    /// [`RenderError::BadSetting`] when the name length leaves no room for unique codes.
    pub fn new(
        options: &GpsOptions,
        units: &[&str],
        label_width: usize,
    ) -> Result<Self, RenderError> {
        options.validate()?;
        let l = options.name_length;
        // A space between code and label when the code keeps three characters or more.
        let separator = if l >= label_width + 4 { " " } else { "" };
        let budget = l.saturating_sub(label_width + separator.len());
        let too_short = || RenderError::BadSetting {
            name: "--gps-name-length",
            message: format!(
                "{l} characters cannot name {} unit(s) with point labels of {label_width} characters uniquely; give {} or more",
                units.len(),
                (label_width + 3).max(MIN_NAME_LENGTH)
            ),
        };
        if budget == 0 {
            return Err(too_short());
        }
        let mut codes: Vec<String> = units.iter().map(|u| unit_code(u, budget)).collect();
        let mut seen = BTreeSet::new();
        let clashing: BTreeSet<String> = codes
            .iter()
            .filter(|c| !seen.insert((*c).clone()))
            .cloned()
            .collect();
        let mut counter = 0usize;
        let mut taken: BTreeSet<String> = codes
            .iter()
            .filter(|c| !clashing.contains(*c))
            .cloned()
            .collect();
        for code in &mut codes {
            if !clashing.contains(code) {
                continue;
            }
            loop {
                counter += 1;
                let n = counter.to_string();
                if n.len() > budget {
                    return Err(too_short());
                }
                let stem: String = code.chars().take(budget - n.len()).collect();
                let candidate = format!("{stem}{n}");
                if taken.insert(candidate.clone()) {
                    *code = candidate;
                    break;
                }
            }
        }
        Ok(Self {
            name_length: l,
            label_width,
            separator,
            codes: units.iter().map(|u| (*u).to_owned()).zip(codes).collect(),
        })
    }

    /// The code of `unit` (as given to [`PointNamer::new`]).
    #[must_use]
    pub fn code(&self, unit: &str) -> Option<&str> {
        self.codes
            .iter()
            .find(|(u, _)| u == unit)
            .map(|(_, c)| c.as_str())
    }

    /// The short name of `unit`'s point `label`.
    ///
    /// # Errors
    /// [`RenderError::Internal`] for a unit not given to [`PointNamer::new`] or a label wider
    /// than the width given there.
    pub fn name(&self, unit: &str, label: &str) -> Result<String, RenderError> {
        let code = self
            .code(unit)
            .ok_or_else(|| RenderError::Internal(format!("no GPS code for unit {unit}")))?;
        if label.chars().count() > self.label_width {
            return Err(RenderError::Internal(format!(
                "GPS point label {label} is wider than {}",
                self.label_width
            )));
        }
        let name = format!("{code}{}{label}", self.separator);
        debug_assert!(name.chars().count() <= self.name_length);
        Ok(name)
    }

    /// The route name of part `part` (1-based) of `parts` of `unit`'s route: its code, and the
    /// part number when there are several.
    ///
    /// # Errors
    /// As [`PointNamer::name`].
    pub fn route_name(&self, unit: &str, part: usize, parts: usize) -> Result<String, RenderError> {
        if parts <= 1 {
            return self
                .code(unit)
                .map(str::to_owned)
                .ok_or_else(|| RenderError::Internal(format!("no GPS code for unit {unit}")));
        }
        let label = format!("P{part}");
        if label.chars().count() <= self.label_width {
            self.name(unit, &label)
        } else {
            // More parts than the label width can number: the code and the part number, cut
            // from the code's end.
            let code = self.code(unit).unwrap_or_default();
            let keep = self.name_length.saturating_sub(label.len());
            Ok(format!(
                "{}{label}",
                code.chars().take(keep).collect::<String>()
            ))
        }
    }
}

/// Digits needed to write `n` in decimal.
#[must_use]
pub fn digits(n: usize) -> usize {
    n.max(1).ilog10() as usize + 1
}

/// A unit code of at most `budget` characters (upper-case ASCII letters and digits) from a
/// unit id; `U` when the id has none.
fn unit_code(id: &str, budget: usize) -> String {
    let words: Vec<String> = id
        .split(|c: char| !c.is_ascii_alphanumeric())
        .filter(|w| !w.is_empty())
        .map(str::to_ascii_uppercase)
        .collect();
    let whole: String = words.concat();
    if whole.is_empty() {
        return "U".chars().take(budget).collect();
    }
    if whole.len() <= budget {
        return whole;
    }
    let is_number = |w: &str| w.bytes().all(|b| b.is_ascii_digit());
    // One letter a word (numbers whole), then one more letter a word in turn from the first
    // while the budget allows.
    let mut keep: Vec<usize> = words
        .iter()
        .map(|w| if is_number(w) { w.len() } else { 1 })
        .collect();
    let mut total: usize = keep.iter().sum();
    if total <= budget {
        let mut grew = true;
        while grew && total < budget {
            grew = false;
            for (w, k) in words.iter().zip(keep.iter_mut()) {
                if total < budget && *k < w.len() {
                    *k += 1;
                    total += 1;
                    grew = true;
                }
            }
        }
        return words.iter().zip(&keep).map(|(w, k)| &w[..*k]).collect();
    }
    // Even one letter a word is too long: keep the start and the last number.
    let tail = words
        .last()
        .filter(|w| is_number(w))
        .cloned()
        .unwrap_or_default();
    if tail.len() < budget {
        let head: String = whole.chars().take(budget - tail.len()).collect();
        format!("{head}{tail}")
    } else {
        whole.chars().take(budget).collect()
    }
}

/// Splits a route of more than `max_points` points into parts of at most `max_points`, in
/// order; each part after the first starts at the point after the previous part's end (a set
/// navigates there from the last point of the part before). Never splits an empty route.
#[must_use]
pub fn split_points<T: Clone>(points: &[T], max_points: usize) -> Vec<Vec<T>> {
    if points.is_empty() {
        return Vec::new();
    }
    points
        .chunks(max_points.max(MIN_ROUTE_POINTS))
        .map(<[T]>::to_vec)
        .collect()
}

fn check_position(p: &NamedPoint) -> Result<(), RenderError> {
    let (lon, lat) = (p.lon, p.lat);
    if lon.is_finite()
        && lat.is_finite()
        && (-90.0..=90.0).contains(&lat)
        && (-180.0..180.0).contains(&lon)
    {
        return Ok(());
    }
    Err(RenderError::BadParameter {
        name: "route point latitude/longitude",
        value: if lat.is_finite() && (-90.0..=90.0).contains(&lat) {
            lon
        } else {
            lat
        },
        hint: "GPX positions have latitude -90..90 and longitude -180..<180",
    })
}

fn waypoint(p: &NamedPoint) -> Result<Waypoint, RenderError> {
    check_position(p)?;
    let mut w = Waypoint::new(geo::Point::new(round6(p.lon), round6(p.lat)));
    w.name = Some(p.name.clone());
    w.description = Some(p.description.clone());
    Ok(w)
}

fn document(header: &GpxHeader) -> Result<Gpx, RenderError> {
    let time = match header.time {
        Some(t) => Some(
            time::OffsetDateTime::from_unix_timestamp(t.timestamp())
                .map_err(|e| RenderError::Internal(format!("GPX time: {e}")))?
                .into(),
        ),
        None => None,
    };
    Ok(Gpx {
        version: GpxVersion::Gpx11,
        creator: Some(creator()),
        metadata: Some(Metadata {
            name: Some(header.title.to_owned()),
            description: Some(header.description.to_owned()),
            time,
            ..Default::default()
        }),
        ..Default::default()
    })
}

fn unique_names<'p>(points: impl Iterator<Item = &'p NamedPoint>) -> Result<(), RenderError> {
    let mut seen = BTreeSet::new();
    for p in points {
        if !seen.insert(p.name.as_str()) {
            return Err(RenderError::Internal(format!(
                "GPS point name {} is used twice",
                p.name
            )));
        }
    }
    Ok(())
}

fn serialise(doc: &Gpx) -> Result<Vec<u8>, RenderError> {
    let mut out = Vec::new();
    gpx::write(doc, &mut out).map_err(|e| RenderError::Internal(format!("GPX writer: {e}")))?;
    Ok(out)
}

/// A GPX 1.1 document holding the routes.
///
/// # Errors
/// [`RenderError::BadParameter`] for a point outside -90..90 latitude or -180..<180 longitude or
/// not finite, and [`RenderError::Internal`] for a point name used twice or if the writer fails.
pub fn routes_gpx(header: &GpxHeader, routes: &[RouteSpec]) -> Result<Vec<u8>, RenderError> {
    let mut doc = document(header)?;
    unique_names(routes.iter().flat_map(|r| r.points.iter()))?;
    for r in routes {
        let mut route = Route::new();
        route.name = Some(r.name.clone());
        route.description = Some(r.description.clone());
        for p in &r.points {
            route.points.push(waypoint(p)?);
        }
        doc.routes.push(route);
    }
    serialise(&doc)
}

/// A GPX 1.1 document holding waypoints only, for sets that take no routes.
///
/// # Errors
/// As [`routes_gpx`].
pub fn waypoints_gpx(header: &GpxHeader, points: &[NamedPoint]) -> Result<Vec<u8>, RenderError> {
    let mut doc = document(header)?;
    unique_names(points.iter())?;
    for p in points {
        doc.waypoints.push(waypoint(p)?);
    }
    serialise(&doc)
}

/// The namespace of the provenance element in the metadata's `extensions` (the GPX 1.1 schema
/// lets `extensions` hold elements of any other namespace).
pub const PROVENANCE_NAMESPACE: &str = "urn:seekgrid:provenance:1";

/// `gpx` (a document from [`routes_gpx`]) with `<extensions><provenance xmlns="…">JSON
/// </provenance></extensions>` as the last child of its `<metadata>` (where the GPX 1.1
/// schema puts `extensions`); unchanged when it has no `</metadata>`.
#[must_use]
pub fn with_provenance(gpx: &[u8], provenance: &crate::Provenance) -> Vec<u8> {
    const END: &[u8] = b"</metadata>";
    let Some(at) = gpx.windows(END.len()).position(|w| w == END) else {
        return gpx.to_vec();
    };
    let json = provenance
        .to_json_line()
        .replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;");
    let block = format!(
        "<extensions><provenance xmlns=\"{PROVENANCE_NAMESPACE}\">{json}</provenance></extensions>"
    );
    let mut out = Vec::with_capacity(gpx.len() + block.len());
    out.extend_from_slice(&gpx[..at]);
    out.extend_from_slice(block.as_bytes());
    out.extend_from_slice(&gpx[at..]);
    out
}

fn round6(v: f64) -> f64 {
    (v * 1e6).round() / 1e6
}

#[cfg(test)]
mod tests {
    use super::*;

    fn point(name: &str, lon: f64, lat: f64) -> NamedPoint {
        NamedPoint {
            name: name.into(),
            description: format!("{name} in full"),
            lon,
            lat,
        }
    }

    fn header() -> GpxHeader<'static> {
        GpxHeader {
            title: "plan (invented)",
            description: "test",
            time: Some(
                DateTime::parse_from_rfc3339("2026-06-14T22:30:00Z")
                    .unwrap()
                    .into(),
            ),
        }
    }

    #[test]
    fn routes_are_written_as_gpx_1_1_with_named_points_a_version_and_a_time() {
        let r = RouteSpec {
            name: "BOAT1".into(),
            description: "boat-1: parallel sweep".into(),
            points: vec![
                point("BOAT1 CSP", -40.9, 31.5),
                point("BOAT1 01", -40.8, 31.55),
            ],
        };
        let text = String::from_utf8(routes_gpx(&header(), &[r]).unwrap()).unwrap();
        // GPX 1.1 root, namespace and creator (topografix.com GPX 1.1 schema).
        assert!(
            text.contains("version=\"1.1\"") && text.contains("http://www.topografix.com/GPX/1/1"),
            "{text}"
        );
        assert!(
            text.contains(&format!(
                "creator=\"seekgrid {}\"",
                env!("CARGO_PKG_VERSION")
            )),
            "{text}"
        );
        assert!(text.contains("<time>2026-06-14T22:30:00"), "{text}");
        assert!(text.contains("<rte>") && !text.contains("<trk>") && !text.contains("<wpt"));
        assert!(text.contains("<desc>BOAT1 01 in full</desc>"), "{text}");
        assert!(
            text.contains("lat=\"31.55\"") && text.contains("lon=\"-40.8\""),
            "{text}"
        );
    }

    #[test]
    fn a_waypoints_file_holds_waypoints_only() {
        let text = String::from_utf8(
            waypoints_gpx(
                &header(),
                &[point("A CSP", 1.0, 2.0), point("A C1", 1.1, 2.0)],
            )
            .unwrap(),
        )
        .unwrap();
        assert_eq!(text.matches("<wpt").count(), 2, "{text}");
        assert!(!text.contains("<rte>"));
    }

    #[test]
    fn a_point_outside_gpx_range_is_refused() {
        let r = RouteSpec {
            name: "u".into(),
            description: String::new(),
            points: vec![point("p", 180.0, 0.0)],
        };
        assert!(routes_gpx(&header(), &[r]).is_err());
    }

    #[test]
    fn a_name_used_twice_is_refused() {
        let r = RouteSpec {
            name: "u".into(),
            description: String::new(),
            points: vec![point("p", 1.0, 0.0), point("p", 2.0, 0.0)],
        };
        assert!(routes_gpx(&header(), &[r]).is_err());
    }

    #[test]
    fn unit_codes_keep_numbers_and_word_starts_within_the_budget() {
        assert_eq!(unit_code("boat-1", 6), "BOAT1");
        assert_eq!(unit_code("rescue-boat-1", 6), "RESBO1");
        assert_eq!(unit_code("helicopter-12", 6), "HELI12");
        assert_eq!(unit_code("team-charlie", 6), "TEACHA");
        assert_eq!(unit_code("--", 3), "U");
        assert_eq!(unit_code("a-b-c-d-e-f-g-1", 3), "AB1");
    }

    #[test]
    fn names_are_unique_and_within_the_length_even_for_look_alike_units() {
        // The case of the issue: names that differ only at the end collapse when cut.
        let units = [
            "rescue-boat-alpha",
            "rescue-boat-alpine",
            "rescue-boat-alpaca",
        ];
        for l in [MIN_NAME_LENGTH, 6, DEFAULT_NAME_LENGTH, 14] {
            let o = GpsOptions {
                name_length: l,
                ..GpsOptions::default()
            };
            let namer = PointNamer::new(&o, &units, 3).unwrap();
            let mut all = BTreeSet::new();
            for u in units {
                for label in ["CSP", "01", "99", "C1"] {
                    let n = namer.name(u, label).unwrap();
                    assert!(n.chars().count() <= l, "{n} longer than {l}");
                    assert!(all.insert(n.clone()), "{n} twice at length {l}");
                }
            }
        }
    }

    #[test]
    fn a_name_length_under_four_is_refused_naming_the_fix() {
        let o = GpsOptions {
            name_length: 3,
            ..GpsOptions::default()
        };
        let e = o.validate().unwrap_err().to_string();
        assert!(
            e.contains("--gps-name-length") && e.contains("4 or more"),
            "{e}"
        );
        let o = GpsOptions {
            route_points: 1,
            ..GpsOptions::default()
        };
        assert!(
            o.validate()
                .unwrap_err()
                .to_string()
                .contains("--gps-route-points")
        );
    }

    #[test]
    fn long_routes_split_into_parts_of_at_most_the_limit_keeping_every_point_once() {
        let pts: Vec<usize> = (0..121).collect();
        let parts = split_points(&pts, 50);
        assert_eq!(parts.iter().map(Vec::len).collect::<Vec<_>>(), [50, 50, 21]);
        assert_eq!(parts.concat(), pts);
        assert_eq!(split_points(&pts[..50], 50).len(), 1);
        assert!(split_points::<usize>(&[], 50).is_empty());
    }
}
