//! Reading the files an incident refers to: GeoJSON polygons and segments, GPX or GeoJSON
//! tracks, and CSV series of current and wind. Each error names the file and, where the
//! format allows, the line and column. Every file is read through [`crate::input`] (regular
//! files only, at most 256 MiB, UTF-8 with an optional byte-order mark).

use crate::error::{ErrorKind, IncidentError};
use crate::input::{InputKind, check_utf8, read_bytes, read_text};
use crate::model::{FieldSample, Time, VectorSample};
use chrono::{DateTime, Utc};
use geo::{Coord, LineString, MultiPolygon, Polygon};
use std::path::Path;

fn parse_geojson(file: &Path, text: &str) -> Result<geojson::GeoJson, IncidentError> {
    // Parsed once into JSON values for the line and column of a syntax error, then converted
    // from those values (not from the text a second time).
    let value = serde_json::from_str::<serde_json::Value>(text).map_err(|e| IncidentError {
        kind: ErrorKind::Syntax,
        file: file.to_owned(),
        line: Some(e.line()),
        col: Some(e.column()),
        message: format!("not valid JSON: {e}"),
    })?;
    serde_json::from_value::<geojson::GeoJson>(value).map_err(|e| {
        IncidentError::whole_file(ErrorKind::Syntax, file, format!("not valid GeoJSON: {e}"))
    })
}

fn check_lon_lat(file: &Path, what: &str, c: Coord<f64>) -> Result<(), IncidentError> {
    if c.x.is_finite()
        && c.y.is_finite()
        && (-180.0..=180.0).contains(&c.x)
        && (-80.0..=84.0).contains(&c.y)
    {
        Ok(())
    } else {
        Err(IncidentError::whole_file(
            ErrorKind::Invalid,
            file,
            format!(
                "{what} has position [{}, {}], not a WGS84 lon, lat within the UTM range; GeoJSON positions are [lon, lat] in degrees (RFC 7946)",
                c.x, c.y
            ),
        ))
    }
}

/// Every position of a geometry, nested collections included.
fn positions(g: &geojson::GeometryValue) -> Box<dyn Iterator<Item = &geojson::Position> + '_> {
    use geojson::GeometryValue as V;
    match g {
        V::Point { coordinates } => Box::new(std::iter::once(coordinates)),
        V::MultiPoint { coordinates } | V::LineString { coordinates } => {
            Box::new(coordinates.iter())
        }
        V::MultiLineString { coordinates } | V::Polygon { coordinates } => {
            Box::new(coordinates.iter().flatten())
        }
        V::MultiPolygon { coordinates } => Box::new(coordinates.iter().flatten().flatten()),
        V::GeometryCollection { geometries } => {
            Box::new(geometries.iter().flat_map(|g| positions(&g.value)))
        }
    }
}

/// Converts a GeoJSON geometry to a `geo` geometry. Positions with fewer than two numbers
/// are refused first: the conversion of the geojson crate indexes `[0]` and `[1]` without a
/// check and would panic (its issue 224).
fn to_geo(
    file: &Path,
    what: &str,
    g: geojson::Geometry,
) -> Result<geo::Geometry<f64>, IncidentError> {
    if let Some(p) = positions(&g.value).find(|p| p.len() < 2) {
        return Err(IncidentError::whole_file(
            ErrorKind::Invalid,
            file,
            format!(
                "{what} has a position of {} number(s), {:?}; a GeoJSON position is [lon, lat] (RFC 7946 section 3.1.1)",
                p.len(),
                p.as_slice()
            ),
        ));
    }
    g.try_into().map_err(|e| {
        IncidentError::whole_file(
            ErrorKind::Syntax,
            file,
            format!("{what}: unreadable geometry: {e}"),
        )
    })
}

fn geometry_polygons(
    file: &Path,
    what: &str,
    g: &geojson::Geometry,
) -> Result<MultiPolygon<f64>, IncidentError> {
    let geom = to_geo(file, what, g.clone())?;
    let mp = match geom {
        geo::Geometry::Polygon(p) => MultiPolygon(vec![p]),
        geo::Geometry::MultiPolygon(mp) => mp,
        other => {
            return Err(IncidentError::whole_file(
                ErrorKind::Invalid,
                file,
                format!(
                    "{what} is a {}, not a Polygon or MultiPolygon",
                    geometry_name(&other)
                ),
            ));
        }
    };
    for poly in &mp {
        for c in poly
            .exterior()
            .coords()
            .chain(poly.interiors().iter().flat_map(|r| r.coords()))
        {
            check_lon_lat(file, what, *c)?;
        }
        if poly.exterior().0.len() < 4 {
            return Err(IncidentError::whole_file(
                ErrorKind::Invalid,
                file,
                format!("{what} has a ring with fewer than four positions"),
            ));
        }
    }
    Ok(mp)
}

fn geometry_name(g: &geo::Geometry<f64>) -> &'static str {
    match g {
        geo::Geometry::Point(_) => "Point",
        geo::Geometry::Line(_) | geo::Geometry::LineString(_) => "LineString",
        geo::Geometry::MultiLineString(_) => "MultiLineString",
        geo::Geometry::MultiPoint(_) => "MultiPoint",
        geo::Geometry::GeometryCollection(_) => "GeometryCollection",
        _ => "other geometry",
    }
}

fn features(file: &Path, gj: geojson::GeoJson) -> Result<Vec<geojson::Feature>, IncidentError> {
    match gj {
        geojson::GeoJson::FeatureCollection(fc) => Ok(fc.features),
        geojson::GeoJson::Feature(f) => Ok(vec![f]),
        geojson::GeoJson::Geometry(g) => Ok(vec![geojson::Feature {
            geometry: Some(g),
            ..Default::default()
        }]),
    }
    .and_then(|f| {
        if f.is_empty() {
            Err(IncidentError::whole_file(
                ErrorKind::Invalid,
                file,
                "the file has no features",
            ))
        } else {
            Ok(f)
        }
    })
}

/// Reads every Polygon and MultiPolygon of a GeoJSON file (lon/lat) into one multipolygon.
///
/// # Errors
/// Unreadable file, invalid GeoJSON, a geometry that is not a polygon, positions out of range.
pub fn read_polygons(file: &Path) -> Result<MultiPolygon<f64>, IncidentError> {
    Ok(MultiPolygon(
        read_polygon_features(file)?.into_iter().flatten().collect(),
    ))
}

/// Reads the polygons of each feature of a GeoJSON file (lon/lat), in file order, so that a
/// later problem can name its feature.
///
/// # Errors
/// As [`read_polygons`].
pub fn read_polygon_features(file: &Path) -> Result<Vec<MultiPolygon<f64>>, IncidentError> {
    let text = read_text(file, InputKind::Polygons)?;
    let mut out = Vec::new();
    for (i, f) in features(file, parse_geojson(file, &text)?)?
        .iter()
        .enumerate()
    {
        let what = format!("feature {i}");
        let g = f.geometry.as_ref().ok_or_else(|| {
            IncidentError::whole_file(ErrorKind::Invalid, file, format!("{what} has no geometry"))
        })?;
        out.push(geometry_polygons(file, &what, g)?);
    }
    Ok(out)
}

/// Reads map segments: polygon features each with an `id` property (text or number).
///
/// # Errors
/// As [`read_polygons`], and a missing or repeated `id`.
pub fn read_segments(file: &Path) -> Result<Vec<(String, MultiPolygon<f64>)>, IncidentError> {
    let text = read_text(file, InputKind::Segments)?;
    let mut out: Vec<(String, MultiPolygon<f64>)> = Vec::new();
    for (i, f) in features(file, parse_geojson(file, &text)?)?
        .iter()
        .enumerate()
    {
        let id = match f.property("id") {
            Some(serde_json::Value::String(s)) => s.clone(),
            Some(serde_json::Value::Number(n)) => n.to_string(),
            _ => {
                return Err(IncidentError::whole_file(
                    ErrorKind::Invalid,
                    file,
                    format!(
                        "feature {i} has no \"id\" property; give every segment an id such as \"S1\""
                    ),
                ));
            }
        };
        if out.iter().any(|(other, _)| *other == id) {
            return Err(IncidentError::whole_file(
                ErrorKind::Invalid,
                file,
                format!("segment id \"{id}\" is used twice"),
            ));
        }
        let what = format!("segment \"{id}\"");
        let g = f.geometry.as_ref().ok_or_else(|| {
            IncidentError::whole_file(ErrorKind::Invalid, file, format!("{what} has no geometry"))
        })?;
        out.push((id, geometry_polygons(file, &what, g)?));
    }
    Ok(out)
}

/// Reads and parses a GPX file. UTF-8 (after the guards of [`read_bytes`]) is what the
/// format's files nearly always are; bytes that are not UTF-8 are still handed to the XML
/// reader, which decodes the encodings an XML declaration may name (UTF-16, ISO-8859-1), and
/// only when that fails too is the file called not UTF-8.
fn read_gpx(file: &Path) -> Result<gpx::Gpx, IncidentError> {
    let bytes = read_bytes(file, InputKind::Track)?;
    let syntax = |e: gpx::errors::GpxError| {
        IncidentError::whole_file(
            ErrorKind::Syntax,
            file,
            format!("not a readable GPX file: {e}"),
        )
    };
    gpx::read(bytes.as_slice()).map_err(|e| {
        check_utf8(file, InputKind::Track, &bytes)
            .err()
            .unwrap_or_else(|| syntax(e))
    })
}

/// Reads a track: GPX 1.1 (every `trk`/`trkseg` in order; `.gpx`) or a GeoJSON LineString or
/// MultiLineString (other endings). Returns the points (lon/lat) and their times where known.
///
/// # Errors
/// Unreadable or invalid file, fewer than two points, positions out of range, times that go
/// backwards.
pub fn read_track(file: &Path) -> Result<(LineString<f64>, Vec<Option<Time>>), IncidentError> {
    let is_gpx = file
        .extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("gpx"));
    let (points, times) = if is_gpx {
        let g = read_gpx(file)?;
        let mut pts = Vec::new();
        let mut times = Vec::new();
        for trk in &g.tracks {
            for seg in &trk.segments {
                for wp in &seg.points {
                    let c = wp.point().0;
                    pts.push(c);
                    times.push(wp.time.and_then(|t| {
                        let s = t.format().ok()?;
                        DateTime::parse_from_rfc3339(&s)
                            .ok()
                            .map(|d| d.with_timezone(&Utc))
                    }));
                }
            }
        }
        if pts.is_empty() && !g.routes.is_empty() {
            return Err(IncidentError::whole_file(
                ErrorKind::Invalid,
                file,
                "the GPX file has a route (rte, a plan) but no track (trk, what was followed); log the recorded track",
            ));
        }
        (pts, times)
    } else {
        let text = read_text(file, InputKind::Track)?;
        let mut pts = Vec::new();
        for (i, f) in features(file, parse_geojson(file, &text)?)?
            .into_iter()
            .enumerate()
        {
            let what = format!("feature {i}");
            let geom = f.geometry.map(|g| to_geo(file, &what, g)).transpose()?;
            match geom {
                Some(geo::Geometry::LineString(ls)) => pts.extend(ls.0),
                Some(geo::Geometry::MultiLineString(mls)) => {
                    pts.extend(mls.0.into_iter().flat_map(|l| l.0))
                }
                _ => {
                    return Err(IncidentError::whole_file(
                        ErrorKind::Invalid,
                        file,
                        "a GeoJSON track must be a LineString or MultiLineString",
                    ));
                }
            }
        }
        let n = pts.len();
        (pts, vec![None; n])
    };
    if points.len() < 2 {
        return Err(IncidentError::whole_file(
            ErrorKind::Invalid,
            file,
            format!(
                "the track has {} point(s); a track needs at least two",
                points.len()
            ),
        ));
    }
    for c in &points {
        check_lon_lat(file, "a track point", *c)?;
    }
    let mut last: Option<Time> = None;
    for (i, t) in times.iter().enumerate() {
        if let Some(t) = t {
            if let Some(l) = last
                && *t < l
            {
                return Err(IncidentError::whole_file(
                    ErrorKind::Invalid,
                    file,
                    format!(
                        "track point {i} has time {t}, earlier than the point before it ({l}); the points must be in the order they were recorded"
                    ),
                ));
            }
            last = Some(*t);
        }
    }
    Ok((LineString(points), times))
}

fn csv_reader(
    file: &Path,
    kind: InputKind,
) -> Result<csv::Reader<std::io::Cursor<String>>, IncidentError> {
    let text = read_text(file, kind)?;
    Ok(csv::ReaderBuilder::new()
        .comment(Some(b'#'))
        .trim(csv::Trim::All)
        .from_reader(std::io::Cursor::new(text)))
}

/// The header and every row of a CSV file, each read error reported with its line.
fn csv_rows(
    file: &Path,
    kind: InputKind,
) -> Result<(csv::StringRecord, Vec<csv::StringRecord>), IncidentError> {
    let mut rdr = csv_reader(file, kind)?;
    let mut headers = rdr
        .headers()
        .map_err(|e| {
            let line = e.position().map_or(1, csv::Position::line);
            csv_error(file, line, format!("unreadable header: {e}"))
        })?
        .clone();
    // The reader stands at the line after the header (comment lines before it included).
    let mut at = csv::Position::new();
    at.set_line(rdr.position().line().saturating_sub(1).max(1));
    headers.set_position(Some(at));
    let records = rdr
        .records()
        .map(|rec| {
            rec.map_err(|e| {
                csv_error(
                    file,
                    e.position().map_or(0, csv::Position::line),
                    format!("unreadable row: {e}"),
                )
            })
        })
        .collect::<Result<Vec<_>, _>>()?;
    Ok((headers, records))
}

fn csv_error(file: &Path, line: u64, message: String) -> IncidentError {
    IncidentError {
        kind: ErrorKind::Invalid,
        file: file.to_owned(),
        line: Some(line as usize),
        col: None,
        message,
    }
}

fn field<'r>(
    file: &Path,
    rec: &'r csv::StringRecord,
    headers: &csv::StringRecord,
    name: &str,
) -> Result<&'r str, IncidentError> {
    let line = rec.position().map_or(0, csv::Position::line);
    let i = headers.iter().position(|h| h == name).ok_or_else(|| {
        csv_error(
            file,
            headers.position().map_or(1, csv::Position::line),
            format!(
                "no column \"{name}\"; the header must name {}",
                headers.iter().collect::<Vec<_>>().join(", ")
            ),
        )
    })?;
    rec.get(i)
        .ok_or_else(|| csv_error(file, line, format!("missing value for \"{name}\"")))
}

fn number(
    file: &Path,
    rec: &csv::StringRecord,
    headers: &csv::StringRecord,
    name: &str,
) -> Result<f64, IncidentError> {
    let line = rec.position().map_or(0, csv::Position::line);
    let s = field(file, rec, headers, name)?;
    s.parse::<f64>()
        .ok()
        .filter(|v| v.is_finite())
        .ok_or_else(|| csv_error(file, line, format!("{name} \"{s}\" is not a number")))
}

fn time(
    file: &Path,
    rec: &csv::StringRecord,
    headers: &csv::StringRecord,
) -> Result<Time, IncidentError> {
    let line = rec.position().map_or(0, csv::Position::line);
    let s = field(file, rec, headers, "time")?;
    DateTime::parse_from_rfc3339(s)
        .map(|d| d.with_timezone(&Utc))
        .map_err(|_| {
            csv_error(
                file,
                line,
                format!("time \"{s}\" is not RFC 3339; write it as 2026-06-14T18:00:00Z"),
            )
        })
}

/// Reads a time series CSV with columns `time,speed_kn,direction_deg` (optional
/// `speed_sigma_kn,direction_sigma_deg` per row; otherwise the given ones). Times must increase.
///
/// # Errors
/// Unreadable file, missing columns, bad numbers or times, times not increasing, no rows.
pub fn read_series(
    file: &Path,
    speed_sigma_kn: f64,
    direction_sigma_deg: f64,
) -> Result<Vec<(Time, VectorSample)>, IncidentError> {
    let (headers, records) = csv_rows(file, InputKind::Series)?;
    let mut out: Vec<(Time, VectorSample)> = Vec::new();
    for rec in records {
        let line = rec.position().map_or(0, csv::Position::line);
        let t = time(file, &rec, &headers)?;
        let speed_kn = number(file, &rec, &headers, "speed_kn")?;
        let direction_deg = number(file, &rec, &headers, "direction_deg")?;
        let ss = if headers.iter().any(|h| h == "speed_sigma_kn") {
            number(file, &rec, &headers, "speed_sigma_kn")?
        } else {
            speed_sigma_kn
        };
        let ds = if headers.iter().any(|h| h == "direction_sigma_deg") {
            number(file, &rec, &headers, "direction_sigma_deg")?
        } else {
            direction_sigma_deg
        };
        if speed_kn < 0.0 || ss < 0.0 || ds < 0.0 {
            return Err(csv_error(
                file,
                line,
                "speeds and sigmas must not be negative".into(),
            ));
        }
        if let Some((last, _)) = out.last()
            && t <= *last
        {
            return Err(csv_error(
                file,
                line,
                format!("time {t} does not come after the row before it; sort the rows by time"),
            ));
        }
        out.push((
            t,
            VectorSample {
                speed_kn,
                direction_deg,
                speed_sigma_kn: ss,
                direction_sigma_deg: ds,
            },
        ));
    }
    if out.is_empty() {
        return Err(IncidentError::whole_file(
            ErrorKind::Invalid,
            file,
            "the series has no rows",
        ));
    }
    Ok(out)
}

/// Reads a gridded field CSV with columns `lon,lat,time,u_kn,v_kn` (u toward east, v toward
/// north).
///
/// # Errors
/// Unreadable file, missing columns, bad numbers, positions out of range, no rows.
pub fn read_field(file: &Path) -> Result<Vec<FieldSample>, IncidentError> {
    let (headers, records) = csv_rows(file, InputKind::Field)?;
    let mut out = Vec::new();
    for rec in records {
        let line = rec.position().map_or(0, csv::Position::line);
        let lon = number(file, &rec, &headers, "lon")?;
        let lat = number(file, &rec, &headers, "lat")?;
        if !(-180.0..=180.0).contains(&lon) || !(-80.0..=84.0).contains(&lat) {
            return Err(csv_error(
                file,
                line,
                format!(
                    "[{lon}, {lat}] is not a lon, lat position within the UTM range (latitude -80..84)"
                ),
            ));
        }
        out.push(FieldSample {
            lon,
            lat,
            time: time(file, &rec, &headers)?,
            u_kn: number(file, &rec, &headers, "u_kn")?,
            v_kn: number(file, &rec, &headers, "v_kn")?,
        });
    }
    if out.is_empty() {
        return Err(IncidentError::whole_file(
            ErrorKind::Invalid,
            file,
            "the field has no rows",
        ));
    }
    Ok(out)
}

/// Polygons of a multipolygon, for callers that iterate.
#[must_use]
pub fn polygons(mp: &MultiPolygon<f64>) -> &[Polygon<f64>] {
    &mp.0
}
