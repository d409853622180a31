//! OGC KML 2.2 documents for people who look at an incident in a virtual globe: folders of
//! placemarks made from GeoJSON features (the same geometries and properties as the GeoJSON
//! layers, already in lon/lat, counter-clockwise and split at ±180°).
//!
//! KML 2.2 (OGC 07-147r2): `<kml xmlns="http://www.opengis.net/kml/2.2"><Document>`, each
//! `Placemark` with a `name`, `ExtendedData`/`Data` for the properties and one geometry;
//! coordinates are `lon,lat` tuples separated by spaces; a polygon's rings are
//! `outerBoundaryIs`/`innerBoundaryIs` `LinearRing`s; several geometries go in a
//! `MultiGeometry`.

use geojson::{Feature, GeometryValue as G, Position};
use std::fmt::Write;

/// Escapes text for XML character data and attribute values.
fn esc(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

fn coords(out: &mut String, ps: &[Position]) {
    out.push_str("<coordinates>");
    for (i, p) in ps.iter().enumerate() {
        if i > 0 {
            out.push(' ');
        }
        let _ = write!(out, "{},{}", p[0], p[1]);
    }
    out.push_str("</coordinates>");
}

fn polygon(out: &mut String, rings: &[Vec<Position>]) {
    out.push_str("<Polygon>");
    for (i, r) in rings.iter().enumerate() {
        out.push_str(if i == 0 {
            "<outerBoundaryIs><LinearRing>"
        } else {
            "<innerBoundaryIs><LinearRing>"
        });
        coords(out, r);
        out.push_str(if i == 0 {
            "</LinearRing></outerBoundaryIs>"
        } else {
            "</LinearRing></innerBoundaryIs>"
        });
    }
    out.push_str("</Polygon>");
}

fn point(out: &mut String, p: &Position) {
    out.push_str("<Point>");
    coords(out, std::slice::from_ref(p));
    out.push_str("</Point>");
}

fn line(out: &mut String, l: &[Position]) {
    out.push_str("<LineString><tessellate>1</tessellate>");
    coords(out, l);
    out.push_str("</LineString>");
}

fn geometry(out: &mut String, g: &G) {
    match g {
        G::Point { coordinates } => point(out, coordinates),
        G::LineString { coordinates } => line(out, coordinates),
        G::Polygon { coordinates } => polygon(out, coordinates),
        G::MultiPoint { coordinates } => {
            out.push_str("<MultiGeometry>");
            for p in coordinates {
                point(out, p);
            }
            out.push_str("</MultiGeometry>");
        }
        G::MultiLineString { coordinates } => {
            out.push_str("<MultiGeometry>");
            for l in coordinates {
                line(out, l);
            }
            out.push_str("</MultiGeometry>");
        }
        G::MultiPolygon { coordinates } => {
            out.push_str("<MultiGeometry>");
            for p in coordinates {
                polygon(out, p);
            }
            out.push_str("</MultiGeometry>");
        }
        G::GeometryCollection { geometries } => {
            out.push_str("<MultiGeometry>");
            for g in geometries {
                geometry(out, &g.value);
            }
            out.push_str("</MultiGeometry>");
        }
    }
}

/// A KML 2.2 document named `name` with one `Folder` per `(folder name, features)`; each
/// feature with a geometry becomes a `Placemark` named by `name_of` and carrying its
/// properties as `ExtendedData`. `description` goes into the document's `description`.
#[must_use]
pub fn document(
    name: &str,
    description: &str,
    folders: &[(&str, &[Feature])],
    name_of: impl Fn(&Feature) -> String,
) -> String {
    let mut out = String::from(
        "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n<kml xmlns=\"http://www.opengis.net/kml/2.2\"><Document>",
    );
    let _ = write!(
        out,
        "<name>{}</name><description>{}</description>",
        esc(name),
        esc(description)
    );
    for (folder, features) in folders {
        let _ = write!(out, "\n<Folder><name>{}</name>", esc(folder));
        for f in *features {
            let Some(g) = &f.geometry else { continue };
            let _ = write!(out, "\n<Placemark><name>{}</name>", esc(&name_of(f)));
            if let Some(props) = &f.properties {
                out.push_str("<ExtendedData>");
                for (k, v) in props {
                    let text = match v {
                        serde_json::Value::String(s) => s.clone(),
                        other => other.to_string(),
                    };
                    let _ = write!(
                        out,
                        "<Data name=\"{}\"><value>{}</value></Data>",
                        esc(k),
                        esc(&text)
                    );
                }
                out.push_str("</ExtendedData>");
            }
            geometry(&mut out, &g.value);
            out.push_str("</Placemark>");
        }
        out.push_str("\n</Folder>");
    }
    out.push_str("\n</Document></kml>\n");
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_polygon_with_a_hole_and_a_point_become_placemarks_in_a_folder() {
        let pos = |x: f64, y: f64| Position::from([x, y]);
        let poly = Feature::from(geojson::Geometry::new(G::Polygon {
            coordinates: vec![
                vec![pos(0.0, 0.0), pos(1.0, 0.0), pos(1.0, 1.0), pos(0.0, 0.0)],
                vec![pos(0.2, 0.1), pos(0.3, 0.2), pos(0.4, 0.1), pos(0.2, 0.1)],
            ],
        }));
        let point = Feature::from(geojson::Geometry::new(G::Point {
            coordinates: pos(-40.5, 31.25),
        }));
        let features = [poly, point];
        let k = document("t & u", "d", &[("plan", &features[..])], |_| "x<y".into());
        assert!(k.contains("<kml xmlns=\"http://www.opengis.net/kml/2.2\">"));
        assert!(k.contains("<name>t &amp; u</name>"));
        assert!(k.contains("<name>x&lt;y</name>"));
        assert!(
            k.contains("<outerBoundaryIs><LinearRing><coordinates>0,0 1,0 1,1 0,0</coordinates>")
        );
        assert!(k.contains("<innerBoundaryIs>"));
        assert!(k.contains("<Point><coordinates>-40.5,31.25</coordinates></Point>"));
        assert_eq!(k.matches("<Placemark>").count(), 2);
    }
}
