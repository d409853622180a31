//! GPX 1.1 routes for the units' navigation sets.
//!
//! A plan is a set of routes (`rte`: what a unit is to follow), never tracks (`trk`: what was
//! recorded). The file holds routes only, so the `gpx` crate's element order (it writes `trk`
//! before `rte`) cannot break the schema's `metadata?, wpt*, rte*, trk*` sequence.

use crate::error::RenderError;
use gpx::{Gpx, GpxVersion, Metadata, Route, Waypoint};

/// One route: its name, a description, and named points (lon, lat in degrees).
#[derive(Debug, Clone)]
pub struct RouteSpec {
    /// Route name (the unit).
    pub name: String,
    /// Free text (pattern, spacing, times).
    pub description: String,
    /// Points in order: (name, lon, lat).
    pub points: Vec<(String, f64, f64)>,
}

/// A GPX 1.1 document holding the routes.
///
/// # Errors
/// [`RenderError::BadParameter`] for a point outside -90..90 latitude or -180..<180 longitude or
/// not finite, and
/// [`RenderError::Internal`] if the writer fails.
pub fn routes_gpx(
    title: &str,
    description: &str,
    routes: &[RouteSpec],
) -> Result<Vec<u8>, RenderError> {
    let mut doc = Gpx {
        version: GpxVersion::Gpx11,
        creator: Some("seekgrid".to_owned()),
        metadata: Some(Metadata {
            name: Some(title.to_owned()),
            description: Some(description.to_owned()),
            ..Default::default()
        }),
        ..Default::default()
    };
    for r in routes {
        let mut route = Route::new();
        route.name = Some(r.name.clone());
        route.description = Some(r.description.clone());
        for (name, lon, lat) in &r.points {
            if !(lon.is_finite()
                && lat.is_finite()
                && (-90.0..=90.0).contains(lat)
                && (-180.0..180.0).contains(lon))
            {
                return Err(RenderError::BadParameter {
                    name: "route point latitude/longitude",
                    value: if lat.is_finite() && (-90.0..=90.0).contains(lat) {
                        *lon
                    } else {
                        *lat
                    },
                    hint: "GPX positions have latitude -90..90 and longitude -180..<180",
                });
            }
            let mut w = Waypoint::new(geo::Point::new(round6(*lon), round6(*lat)));
            w.name = Some(name.clone());
            route.points.push(w);
        }
        doc.routes.push(route);
    }
    let mut out = Vec::new();
    gpx::write(&doc, &mut out).map_err(|e| RenderError::Internal(format!("GPX writer: {e}")))?;
    Ok(out)
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

    #[test]
    fn routes_are_written_as_gpx_1_1_with_named_points() {
        let r = RouteSpec {
            name: "boat-1".into(),
            description: "parallel sweep".into(),
            points: vec![
                ("boat-1 CSP".into(), -40.9, 31.5),
                ("boat-1 01".into(), -40.8, 31.55),
            ],
        };
        let text = String::from_utf8(routes_gpx("plan (invented)", "test", &[r]).unwrap()).unwrap();
        // GPX 1.1 root, namespace and creator (topografix.com GPX 1.1 schema).
        assert!(
            text.contains("version=\"1.1\"") && text.contains("http://www.topografix.com/GPX/1/1"),
            "{text}"
        );
        assert!(text.contains("creator=\"seekgrid\""));
        assert!(text.contains("<rte>") && !text.contains("<trk>"));
        assert!(
            text.contains("lat=\"31.55\"") && text.contains("lon=\"-40.8\""),
            "{text}"
        );
    }

    #[test]
    fn a_point_outside_gpx_range_is_refused() {
        let r = RouteSpec {
            name: "u".into(),
            description: String::new(),
            points: vec![("p".into(), 180.0, 0.0)],
        };
        assert!(routes_gpx("t", "d", &[r]).is_err());
    }
}
