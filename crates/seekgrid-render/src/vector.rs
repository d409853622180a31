//! Working-frame geometries to RFC 7946 GeoJSON, and the shared GeoJSON writer.
//!
//! RFC 7946 (H. Butler et al., "The GeoJSON Format", IETF 2016) asks for: positions
//! `[lon, lat]` on WGS84 and no `crs` member (section 4), closed rings of at least four
//! positions with the exterior counter-clockwise and holes clockwise (3.1.6), geometries split
//! at the antimeridian (3.1.9) and `bbox` as `[west, south, east, north]` (5). The `geojson`
//! crate does none of this checking itself and writes NaN as `null`, so this module does it.

use crate::error::RenderError;
use geo::{BooleanOps, Coord, LineString, MultiPolygon, Polygon, Rect};
use geojson::{Feature, FeatureCollection, Geometry, GeometryValue, JsonObject, Position};
use seekgrid_core::Frame;

/// Decimals written for longitude and latitude: 1e-6 degree is at most 0.11 m, well below any
/// cell size seekgrid uses (RFC 7946 section 11.2 suggests 6 decimals; common practice).
pub const COORD_DECIMALS: u32 = 6;

/// Rounds a degree value to [`COORD_DECIMALS`] decimals.
#[must_use]
pub fn round_deg(v: f64) -> f64 {
    round_to(v, COORD_DECIMALS)
}

pub(crate) fn round_to(v: f64, decimals: u32) -> f64 {
    let s = 10f64.powi(decimals as i32);
    let r = (v * s).round() / s;
    // Avoid writing "-0.0".
    if r == 0.0 { 0.0 } else { r }
}

/// Twice the signed area of a closed ring (shoelace formula); positive when counter-clockwise
/// with x east and y north.
#[must_use]
pub fn ring_signed_area2(ring: &[[f64; 2]]) -> f64 {
    let mut a = 0.0;
    for w in ring.windows(2) {
        a += w[0][0] * w[1][1] - w[1][0] * w[0][1];
    }
    a
}

/// Longitude unwrapped around the frame's central meridian, so that a geometry near the
/// antimeridian has continuous longitudes (they may leave -180..180).
pub(crate) fn unwrapped_lon_lat(frame: &Frame, p: Coord<f64>) -> [f64; 2] {
    let (lon, lat) = frame.to_lon_lat(p);
    let lon0 = frame.central_meridian_deg();
    let d = (lon - lon0 + 180.0).rem_euclid(360.0) - 180.0;
    [lon0 + d, lat]
}

/// Puts an unwrapped longitude back into -180..=180.
pub(crate) fn wrap_lon(lon: f64) -> f64 {
    if (-180.0..=180.0).contains(&lon) {
        lon
    } else {
        (lon + 180.0).rem_euclid(360.0) - 180.0
    }
}

fn ring_lon_lat(frame: &Frame, ring: &LineString<f64>) -> Vec<[f64; 2]> {
    let mut out: Vec<[f64; 2]> = ring
        .0
        .iter()
        .map(|c| unwrapped_lon_lat(frame, *c))
        .collect();
    if out.first() != out.last()
        && let Some(first) = out.first().copied()
    {
        out.push(first);
    }
    out
}

/// Orients rings in place: the first counter-clockwise, the others clockwise.
pub(crate) fn orient_rings(rings: &mut [Vec<[f64; 2]>]) {
    for (i, r) in rings.iter_mut().enumerate() {
        let ccw = ring_signed_area2(r) > 0.0;
        if (i == 0) != ccw {
            r.reverse();
        }
    }
}

fn crosses_antimeridian(rings: &[Vec<[f64; 2]>]) -> bool {
    rings
        .iter()
        .flatten()
        .any(|p| !(-180.0..=180.0).contains(&p[0]))
}

/// Splits a polygon in unwrapped longitudes into parts within -180..=180 (RFC 7946 3.1.9).
pub(crate) fn split_polygon_at_antimeridian(rings: &[Vec<[f64; 2]>]) -> Vec<Vec<Vec<[f64; 2]>>> {
    let to_ls =
        |r: &Vec<[f64; 2]>| LineString::from(r.iter().map(|p| (p[0], p[1])).collect::<Vec<_>>());
    let poly = Polygon::new(to_ls(&rings[0]), rings[1..].iter().map(to_ls).collect());
    let mut parts = Vec::new();
    for shift in [-360.0, 0.0, 360.0] {
        // The piece of the polygon that lands in -180..180 after adding `shift`.
        let window = Rect::new(
            Coord {
                x: -180.0 - shift,
                y: -90.0,
            },
            Coord {
                x: 180.0 - shift,
                y: 90.0,
            },
        )
        .to_polygon();
        let piece: MultiPolygon<f64> = poly.intersection(&window);
        for p in piece {
            let mut rs: Vec<Vec<[f64; 2]>> = std::iter::once(p.exterior())
                .chain(p.interiors())
                // The overlay snaps to its own integer grid, so a vertex on the cut can come
                // back a hair beyond ±180, which wrapping would send to the other side (a ring
                // from 179.99 to -180, 360° wide): clamp it onto the cut.
                .map(|ls| {
                    ls.0.iter()
                        .map(|c| [(c.x + shift).clamp(-180.0, 180.0), c.y])
                        .collect()
                })
                .collect();
            orient_rings(&mut rs);
            parts.push(rs);
        }
    }
    parts
}

fn rounded_position(p: [f64; 2]) -> Position {
    Position::from([round_deg(wrap_lon(p[0])), round_deg(p[1])])
}

/// Polygon rings (unwrapped lon/lat, any winding) to a GeoJSON geometry: oriented, split at
/// the antimeridian when needed, rounded.
pub(crate) fn rings_to_geometry(mut rings: Vec<Vec<[f64; 2]>>) -> GeometryValue {
    orient_rings(&mut rings);
    let to_pos = |rs: Vec<Vec<[f64; 2]>>| -> Vec<Vec<Position>> {
        rs.into_iter()
            .map(|r| r.into_iter().map(rounded_position).collect())
            .collect()
    };
    if crosses_antimeridian(&rings) {
        let parts = split_polygon_at_antimeridian(&rings);
        GeometryValue::MultiPolygon {
            coordinates: parts.into_iter().map(to_pos).collect(),
        }
    } else {
        GeometryValue::Polygon {
            coordinates: to_pos(rings),
        }
    }
}

/// A polygon in the working frame (metres) as a GeoJSON geometry in lon/lat: exterior
/// counter-clockwise, holes clockwise, rings closed, coordinates rounded to
/// [`COORD_DECIMALS`], split into a MultiPolygon at the antimeridian (RFC 7946 3.1.6, 3.1.9).
/// Edges are straight in lon/lat between the projected vertices, so long edges should be
/// densified by the caller when metre accuracy matters.
///
/// Non-finite coordinates pass through and are refused by [`geojson_bytes`].
#[must_use]
pub fn polygon_to_geojson(frame: &Frame, poly: &Polygon<f64>) -> Geometry {
    let rings: Vec<Vec<[f64; 2]>> = std::iter::once(poly.exterior())
        .chain(poly.interiors())
        .map(|r| ring_lon_lat(frame, r))
        .collect();
    Geometry::new(rings_to_geometry(rings))
}

/// A line in the working frame (metres) as a GeoJSON LineString in lon/lat, rounded to
/// [`COORD_DECIMALS`]; a MultiLineString when it crosses the antimeridian (RFC 7946 3.1.9).
#[must_use]
pub fn line_to_geojson(frame: &Frame, line: &LineString<f64>) -> Geometry {
    let pts: Vec<[f64; 2]> = line
        .0
        .iter()
        .map(|c| unwrapped_lon_lat(frame, *c))
        .collect();
    let mut parts: Vec<Vec<[f64; 2]>> = vec![Vec::new()];
    for (i, p) in pts.iter().enumerate() {
        if i > 0 {
            let q = pts[i - 1];
            // Shift of each end into -180..180: the segment crosses where they differ.
            let (sq, sp) = (lon_shift(q[0]), lon_shift(p[0]));
            if sq != sp {
                let edge = if sp > sq { -180.0 - sq } else { 180.0 - sq };
                let t = (edge - q[0]) / (p[0] - q[0]);
                let lat = q[1] + t * (p[1] - q[1]);
                if let Some(cur) = parts.last_mut() {
                    cur.push([edge + sq, lat]);
                }
                parts.push(vec![[edge + sp, lat]]);
            }
        }
        if let Some(cur) = parts.last_mut() {
            cur.push([p[0] + lon_shift(p[0]), p[1]]);
        }
    }
    let to_pos = |r: Vec<[f64; 2]>| -> Vec<Position> {
        r.into_iter()
            .map(|p| Position::from([round_deg(p[0]), round_deg(p[1])]))
            .collect()
    };
    if parts.len() == 1 {
        Geometry::new(GeometryValue::LineString {
            coordinates: to_pos(parts.remove(0)),
        })
    } else {
        Geometry::new(GeometryValue::MultiLineString {
            coordinates: parts.into_iter().map(to_pos).collect(),
        })
    }
}

/// The multiple of 360 that brings an unwrapped longitude into -180..=180.
fn lon_shift(lon: f64) -> f64 {
    if lon > 180.0 {
        -360.0
    } else if lon < -180.0 {
        360.0
    } else {
        0.0
    }
}

/// A point in the working frame (metres) as a GeoJSON Point in lon/lat, rounded to
/// [`COORD_DECIMALS`].
#[must_use]
pub fn point_to_geojson(frame: &Frame, p: Coord<f64>) -> Geometry {
    let (lon, lat) = frame.to_lon_lat(p);
    Geometry::new(GeometryValue::Point {
        coordinates: Position::from([round_deg(lon), round_deg(lat)]),
    })
}

/// Members RFC 7946 reserves or forbids at collection level.
const RESERVED_MEMBERS: [&str; 5] = ["type", "features", "bbox", "crs", "geometry"];

pub(crate) fn check_foreign(foreign: &JsonObject, extra: &[&str]) -> Result<(), RenderError> {
    for key in foreign.keys() {
        if RESERVED_MEMBERS.contains(&key.as_str()) || extra.contains(&key.as_str()) {
            return Err(RenderError::ReservedMember { key: key.clone() });
        }
    }
    Ok(())
}

/// Serialises a feature collection as RFC 7946 GeoJSON, the one writer every seekgrid layer goes
/// through: refuses NaN and Infinity (which serde would write as `null`), positions outside
/// lon -180..180 / lat -90..90, unclosed rings and rings under four positions, and any `crs`
/// member; rounds coordinates to [`COORD_DECIMALS`]; orients polygon rings (exterior
/// counter-clockwise, holes clockwise). Output is compact UTF-8 JSON ending in a newline.
///
/// # Errors
/// [`RenderError::NonFiniteCoordinate`], [`RenderError::PositionOutOfRange`],
/// [`RenderError::BadRing`], [`RenderError::ReservedMember`] as above; [`RenderError::Json`]
/// when serialisation fails.
pub fn geojson_bytes(mut collection: FeatureCollection) -> Result<Vec<u8>, RenderError> {
    if let Some(f) = &collection.foreign_members {
        check_foreign(f, &[])?;
    }
    if let Some(b) = &mut collection.bbox {
        check_bbox(b, "collection bbox")?;
    }
    for (i, feature) in collection.features.iter_mut().enumerate() {
        clean_feature(feature, i)?;
    }
    let mut out = serde_json::to_vec(&collection).map_err(|e| RenderError::Json(e.to_string()))?;
    out.push(b'\n');
    Ok(out)
}

fn check_bbox(b: &mut [f64], what: &str) -> Result<(), RenderError> {
    for v in b.iter_mut() {
        if !v.is_finite() {
            return Err(RenderError::NonFiniteCoordinate {
                what: what.to_owned(),
                value: *v,
            });
        }
        *v = round_deg(*v);
    }
    Ok(())
}

fn clean_feature(feature: &mut Feature, index: usize) -> Result<(), RenderError> {
    let what = || format!("feature {index}");
    if let Some(f) = &feature.foreign_members
        && f.contains_key("crs")
    {
        return Err(RenderError::ReservedMember { key: "crs".into() });
    }
    if let Some(b) = &mut feature.bbox {
        check_bbox(b, &what())?;
    }
    if feature.properties.is_none() {
        // RFC 7946 3.2: a Feature has a "properties" member (may be null); GDAL prefers {}.
        feature.properties = Some(JsonObject::new());
    }
    if let Some(g) = &mut feature.geometry {
        clean_geometry(&mut g.value, &what())?;
        if let Some(f) = &g.foreign_members
            && f.contains_key("crs")
        {
            return Err(RenderError::ReservedMember { key: "crs".into() });
        }
    }
    Ok(())
}

fn clean_position(p: &mut Position, what: &str) -> Result<(), RenderError> {
    for v in p.as_slice_mut().iter_mut() {
        if !v.is_finite() {
            return Err(RenderError::NonFiniteCoordinate {
                what: what.to_owned(),
                value: *v,
            });
        }
        *v = round_deg(*v);
    }
    let s = p.as_slice();
    if s.len() < 2 || !(-180.0..=180.0).contains(&s[0]) || !(-90.0..=90.0).contains(&s[1]) {
        return Err(RenderError::PositionOutOfRange {
            what: what.to_owned(),
            lon: s.first().copied().unwrap_or(f64::NAN),
            lat: s.get(1).copied().unwrap_or(f64::NAN),
        });
    }
    Ok(())
}

fn clean_polygon(rings: &mut [Vec<Position>], what: &str) -> Result<(), RenderError> {
    for (i, ring) in rings.iter_mut().enumerate() {
        for p in ring.iter_mut() {
            clean_position(p, what)?;
        }
        if ring.len() < 4 || ring.first() != ring.last() {
            return Err(RenderError::BadRing {
                what: what.to_owned(),
                positions: ring.len(),
            });
        }
        let flat: Vec<[f64; 2]> = ring.iter().map(|p| [p[0], p[1]]).collect();
        let ccw = ring_signed_area2(&flat) > 0.0;
        if (i == 0) != ccw {
            ring.reverse();
        }
    }
    Ok(())
}

fn clean_geometry(g: &mut GeometryValue, what: &str) -> Result<(), RenderError> {
    match g {
        GeometryValue::Point { coordinates } => clean_position(coordinates, what),
        GeometryValue::MultiPoint { coordinates } | GeometryValue::LineString { coordinates } => {
            coordinates
                .iter_mut()
                .try_for_each(|p| clean_position(p, what))
        }
        GeometryValue::MultiLineString { coordinates } => coordinates
            .iter_mut()
            .flatten()
            .try_for_each(|p| clean_position(p, what)),
        GeometryValue::Polygon { coordinates } => clean_polygon(coordinates, what),
        GeometryValue::MultiPolygon { coordinates } => coordinates
            .iter_mut()
            .try_for_each(|p| clean_polygon(p, what)),
        GeometryValue::GeometryCollection { geometries } => geometries
            .iter_mut()
            .try_for_each(|g| clean_geometry(&mut g.value, what)),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use seekgrid_core::UtmZone;

    fn frame(epsg: u32) -> Frame {
        Frame::new(UtmZone::from_epsg(epsg).unwrap())
    }

    fn polygon_rings(g: &Geometry) -> Vec<Vec<[f64; 2]>> {
        match &g.value {
            GeometryValue::Polygon { coordinates } => coordinates
                .iter()
                .map(|r| r.iter().map(|p| [p[0], p[1]]).collect())
                .collect(),
            other => panic!("expected a polygon, got {}", other.type_name()),
        }
    }

    #[test]
    fn clockwise_input_comes_out_with_ccw_exterior_and_cw_hole() {
        // RFC 7946 3.1.6 right-hand rule, checked with the shoelace sign in lon/lat.
        let f = frame(32620);
        let (x0, y0) = (500_000.0, 4_800_000.0);
        let cw_outer = LineString::from(vec![
            (x0, y0),
            (x0, y0 + 1000.0),
            (x0 + 1000.0, y0 + 1000.0),
            (x0 + 1000.0, y0),
        ]);
        let ccw_hole = LineString::from(vec![
            (x0 + 200.0, y0 + 200.0),
            (x0 + 800.0, y0 + 200.0),
            (x0 + 800.0, y0 + 800.0),
            (x0 + 200.0, y0 + 800.0),
        ]);
        let g = polygon_to_geojson(&f, &Polygon::new(cw_outer, vec![ccw_hole]));
        let rings = polygon_rings(&g);
        assert!(ring_signed_area2(&rings[0]) > 0.0, "exterior must be CCW");
        assert!(ring_signed_area2(&rings[1]) < 0.0, "hole must be CW");
        for r in &rings {
            assert_eq!(r.first(), r.last(), "ring closed");
            assert!(r.len() >= 4);
        }
    }

    #[test]
    fn coordinates_are_rounded_to_six_decimals() {
        let f = frame(32620);
        let g = point_to_geojson(
            &f,
            Coord {
                x: 512_345.678,
                y: 4_876_543.21,
            },
        );
        let GeometryValue::Point { coordinates } = &g.value else {
            panic!("point expected")
        };
        for v in coordinates.as_slice() {
            assert_eq!(*v, round_deg(*v));
            assert!(((v * 1e6).round() - v * 1e6).abs() < 1e-6);
        }
    }

    #[test]
    fn writer_refuses_nan_and_crs_and_unclosed_rings() {
        let nan = Feature::from(Geometry::new(GeometryValue::new_point([f64::NAN, 1.0])));
        assert!(matches!(
            geojson_bytes(FeatureCollection::new([nan])),
            Err(RenderError::NonFiniteCoordinate { .. })
        ));
        let open = Feature::from(Geometry::new(GeometryValue::new_polygon([vec![
            [0.0, 0.0],
            [1.0, 0.0],
            [1.0, 1.0],
            [0.0, 1.0],
        ]])));
        assert!(matches!(
            geojson_bytes(FeatureCollection::new([open])),
            Err(RenderError::BadRing { .. })
        ));
        let mut fc = FeatureCollection::new([]);
        let mut m = JsonObject::new();
        m.insert("crs".into(), serde_json::json!({"type": "name"}));
        fc.foreign_members = Some(m);
        assert!(matches!(
            geojson_bytes(fc),
            Err(RenderError::ReservedMember { .. })
        ));
        let swapped = Feature::from(Geometry::new(GeometryValue::new_point([10.0, 120.0])));
        assert!(matches!(
            geojson_bytes(FeatureCollection::new([swapped])),
            Err(RenderError::PositionOutOfRange { .. })
        ));
    }

    #[test]
    fn writer_fixes_winding_and_rounds() {
        let cw = Feature::from(Geometry::new(GeometryValue::new_polygon([vec![
            [0.0, 0.0],
            [0.0, 1.000_000_04],
            [1.0, 1.0],
            [1.0, 0.0],
            [0.0, 0.0],
        ]])));
        let bytes = geojson_bytes(FeatureCollection::new([cw])).unwrap();
        let text = String::from_utf8(bytes).unwrap();
        assert!(
            text.contains("[[[0.0,0.0],[1.0,0.0],[1.0,1.0],[0.0,1.0],[0.0,0.0]]]"),
            "{text}"
        );
        assert!(!text.contains("crs"));
    }

    #[test]
    fn polygon_across_the_antimeridian_is_split_into_parts_within_range() {
        // Zone 60 (central meridian 177 E); a box from 179.5 E to 180.5 E (= -179.5).
        let f = frame(32660);
        let a = f.to_xy(179.5, -0.01 + 10.0);
        let b = f.to_xy(180.5 - 360.0, 10.01);
        let poly = Rect::new(a, b).to_polygon();
        let g = polygon_to_geojson(&f, &poly);
        let GeometryValue::MultiPolygon { coordinates } = &g.value else {
            panic!("expected a MultiPolygon, got {}", g.value.type_name())
        };
        assert_eq!(coordinates.len(), 2);
        for part in coordinates {
            let ring: Vec<[f64; 2]> = part[0].iter().map(|p| [p[0], p[1]]).collect();
            assert!(ring.iter().all(|p| (-180.0..=180.0).contains(&p[0])));
            assert!(ring_signed_area2(&ring) > 0.0);
            let lon_span = ring.iter().map(|p| p[0]).fold(f64::MIN, f64::max)
                - ring.iter().map(|p| p[0]).fold(f64::MAX, f64::min);
            assert!(lon_span < 1.0, "part spans {lon_span} degrees");
        }
        let line = line_to_geojson(&f, &LineString::from(vec![a, b]));
        let GeometryValue::MultiLineString { coordinates } = &line.value else {
            panic!("expected a MultiLineString")
        };
        assert_eq!(coordinates.len(), 2);
        assert_eq!(coordinates[0].last().unwrap()[0], 180.0);
        assert_eq!(coordinates[1][0][0], -180.0);
    }
}
