//! Reading the files an incident refers to: GeoJSON polygons and segments, GPX or GeoJSON
//! tracks, and CSV series of current and wind. Each error names the file and, where the
//! format allows, the line and column.

use crate::error::{ErrorKind, IncidentError};
use crate::model::{FieldSample, Time, VectorSample};
use chrono::{DateTime, Utc};
use geo::{Coord, LineString, MultiPolygon, Polygon};
use std::path::Path;

fn read_text(file: &Path, what: &str) -> Result<String, IncidentError> {
    std::fs::read_to_string(file).map_err(|e| {
        IncidentError::whole_file(
            ErrorKind::Unreadable,
            file,
            format!("cannot read the {what}: {e}; paths are relative to the incident file"),
        )
    })
}

fn parse_geojson(file: &Path, text: &str) -> Result<geojson::GeoJson, IncidentError> {
    serde_json::from_str::<serde_json::Value>(text).map_err(|e| IncidentError {
        kind: ErrorKind::Syntax,
        file: file.to_owned(),
        line: Some(e.line()),
        col: Some(e.column()),
        message: format!("not valid JSON: {e}"),
    })?;
    text.parse::<geojson::GeoJson>().map_err(|e| {
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

fn geometry_polygons(
    file: &Path,
    what: &str,
    g: &geojson::Geometry,
) -> Result<MultiPolygon<f64>, IncidentError> {
    let geom: geo::Geometry<f64> = g.clone().try_into().map_err(|e| {
        IncidentError::whole_file(
            ErrorKind::Syntax,
            file,
            format!("{what}: unreadable geometry: {e}"),
        )
    })?;
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
    let text = read_text(file, "polygon file")?;
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
    let text = read_text(file, "segments file")?;
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
        let f = std::fs::File::open(file).map_err(|e| {
            IncidentError::whole_file(
                ErrorKind::Unreadable,
                file,
                format!("cannot read the track: {e}; paths are relative to the incident file"),
            )
        })?;
        let g = gpx::read(std::io::BufReader::new(f)).map_err(|e| {
            IncidentError::whole_file(
                ErrorKind::Syntax,
                file,
                format!("not a readable GPX file: {e}"),
            )
        })?;
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
        let text = read_text(file, "track")?;
        let mut pts = Vec::new();
        for f in features(file, parse_geojson(file, &text)?)? {
            let geom: Option<geo::Geometry<f64>> =
                f.geometry.map(|g| g.try_into()).transpose().map_err(|e| {
                    IncidentError::whole_file(
                        ErrorKind::Syntax,
                        file,
                        format!("unreadable geometry: {e}"),
                    )
                })?;
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

fn csv_reader(file: &Path, what: &str) -> Result<csv::Reader<std::fs::File>, IncidentError> {
    let f = std::fs::File::open(file).map_err(|e| {
        IncidentError::whole_file(
            ErrorKind::Unreadable,
            file,
            format!("cannot read the {what}: {e}; paths are relative to the incident file"),
        )
    })?;
    Ok(csv::ReaderBuilder::new()
        .comment(Some(b'#'))
        .trim(csv::Trim::All)
        .from_reader(f))
}

/// The header and every row of a CSV file, each read error reported with its line.
fn csv_rows(
    file: &Path,
    what: &str,
) -> Result<(csv::StringRecord, Vec<csv::StringRecord>), IncidentError> {
    let mut rdr = csv_reader(file, what)?;
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
    let (headers, records) = csv_rows(file, "series")?;
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
    let (headers, records) = csv_rows(file, "field")?;
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
