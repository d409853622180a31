//! Positions that look written as [lat, lon]: a legal position far from everything else in
//! the incident whose swap lies among it. The file is otherwise consistent and legal, so this
//! is an error only when the positions disagree with one another (or with the `crs`): a whole
//! incident written consistently in another place is not questioned.

use crate::locate::FieldPath;
use crate::model::{Outcome, ScenarioDef, ScenarioKind, SearchDef, SearchGeometry};
use seekgrid_core::UtmZone;

/// A written position this far (km) from the median of the others is suspect...
pub const SWAP_FAR_KM: f64 = 1000.0;
/// ...when its swap lies within this distance (km) of that median.
pub const SWAP_NEAR_KM: f64 = 100.0;
/// With a `crs`, a position this far (km) along its parallel from the zone's central meridian
/// is suspect when its swap lies within [`ZONE_NEAR_KM`] of it (a UTM zone is 6 degrees wide,
/// about 670 km at the equator).
pub const ZONE_FAR_KM: f64 = 1000.0;
/// See [`ZONE_FAR_KM`].
pub const ZONE_NEAR_KM: f64 = 400.0;

/// Mean Earth radius, km (IUGG; enough for a plausibility check).
const EARTH_RADIUS_KM: f64 = 6371.0;

fn km(a: [f64; 2], b: [f64; 2]) -> f64 {
    let (l1, p1, l2, p2) = (
        a[0].to_radians(),
        a[1].to_radians(),
        b[0].to_radians(),
        b[1].to_radians(),
    );
    let h = ((p2 - p1) / 2.0).sin().powi(2) + p1.cos() * p2.cos() * ((l2 - l1) / 2.0).sin().powi(2);
    2.0 * EARTH_RADIUS_KM * h.sqrt().min(1.0).asin()
}

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(f64::total_cmp);
    let n = v.len();
    if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    }
}

/// A position written in the incident file, with the path of its key.
type WrittenPosition = (FieldPath, [f64; 2]);

/// Every position written in the incident file (with its path) and the positions of the files
/// it names (as references only: GeoJSON and GPX fix the order).
fn positions(
    scenarios: &[ScenarioDef],
    searches: &[SearchDef],
    outcome: Option<&Outcome>,
) -> (Vec<WrittenPosition>, Vec<[f64; 2]>) {
    let mut written = Vec::new();
    let mut files = Vec::new();
    let first = |mp: &geo::MultiPolygon<f64>| {
        mp.0.first()
            .and_then(|p| p.exterior().0.first())
            .map(|c| [c.x, c.y])
    };
    for s in scenarios {
        match &s.kind {
            ScenarioKind::Point { position, .. } | ScenarioKind::Rings { position, .. } => {
                written.push((s.at.key("position"), *position));
            }
            ScenarioKind::Route { waypoints, .. } => {
                for (k, w) in waypoints.iter().enumerate() {
                    written.push((s.at.key("waypoints").index(k), *w));
                }
            }
            ScenarioKind::Drift(d) => written.push((s.at.key("position"), d.position)),
            ScenarioKind::Area { polygons, .. } => files.extend(first(polygons)),
            ScenarioKind::Segments { segments, .. } => {
                files.extend(segments.iter().filter_map(|(_, mp)| first(mp)));
            }
        }
    }
    for s in searches {
        match &s.geometry {
            SearchGeometry::Pattern(p) => {
                written.push((s.at.key("pattern").key("center"), p.center()));
            }
            SearchGeometry::Track { points, .. } => {
                files.extend(points.0.first().map(|c| [c.x, c.y]));
            }
        }
    }
    if let Some(Outcome::Found { position, .. }) = outcome {
        written.push((FieldPath::new("outcome").key("position"), *position));
    }
    (written, files)
}

/// Positions of the file that look like [lat, lon], with the message for each.
pub(super) fn swapped_positions(
    crs: Option<UtmZone>,
    scenarios: &[ScenarioDef],
    searches: &[SearchDef],
    outcome: Option<&Outcome>,
) -> Vec<(FieldPath, String)> {
    let (written, files) = positions(scenarios, searches, outcome);
    let mut out = Vec::new();
    for (i, (at, pos)) in written.iter().enumerate() {
        let swapped = [pos[1], pos[0]];
        if !(-80.0..=84.0).contains(&swapped[1]) {
            continue;
        }
        let others: Vec<[f64; 2]> = written
            .iter()
            .enumerate()
            .filter(|(j, _)| *j != i)
            .map(|(_, (_, q))| *q)
            .chain(files.iter().copied())
            .collect();
        let among_others = (!others.is_empty()).then(|| {
            let m = [
                median(others.iter().map(|q| q[0]).collect()),
                median(others.iter().map(|q| q[1]).collect()),
            ];
            (km(*pos, m), km(swapped, m))
        });
        let reason = match among_others {
            Some((far, near)) if far > SWAP_FAR_KM && near < SWAP_NEAR_KM => Some(format!(
                "it lies {far:.0} km from the incident's other positions, and [{}, {}] lies among them",
                swapped[0], swapped[1]
            )),
            _ => crs.and_then(|zone| {
                let cm = zone.central_meridian_deg();
                let off = |q: [f64; 2]| km(q, [cm, q[1]]);
                (off(*pos) > ZONE_FAR_KM && off(swapped) < ZONE_NEAR_KM).then(|| {
                    format!(
                        "it lies {:.0} km outside the zone of crs EPSG:{}, and [{}, {}] lies in it",
                        off(*pos),
                        zone.epsg(),
                        swapped[0],
                        swapped[1]
                    )
                })
            }),
        };
        if let Some(reason) = reason {
            out.push((
                at.clone(),
                format!(
                    "[{}, {}] looks like [lat, lon]: {reason}; write [lon, lat], longitude first",
                    pos[0], pos[1]
                ),
            ));
        }
    }
    out
}
