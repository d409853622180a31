//! Layers of an incident on the date line: every polygon and line that crosses ±180° is split
//! there (RFC 7946 §3.1.9), valid and counter-clockwise by GDAL's SQLite dialect, and no part
//! of any geometry is wider than the area it shows.

use crate::end_to_end::seekgrid;
use crate::external::check_geojson;
use serde_json::Value;
use std::path::Path;

/// An invented incident centred on `lon`, -17.0: a point scenario, a drift eastward from
/// 0.05° west of it across the date line, a parallel sweep on the point, and a boat to plan.
fn incident(lon: f64) -> String {
    let west = lon - 0.05;
    let drift_lon = if west < -180.0 { west + 360.0 } else { west };
    format!(
        r#"[incident]
title = "Date line test (invented)"
reference_time = "2026-06-14T18:00:00Z"
notes = "Invented test case; not a real incident."

[grid]
cell_m = 500

[[analyst]]
id = "desk"

[[scenario]]
id = "reported"
analyst = "desk"
kind = "point"
position = [{lon}, -17.0]
sigma_major_m = 3000
sigma_minor_m = 2000
major_bearing_deg = 80

[[scenario]]
id = "adrift"
analyst = "desk"
kind = "drift"
position = [{drift_lon:.2}, -17.0]
position_sigma_m = 800
adrift = {{ earliest = "2026-06-14T15:00:00Z", latest = "2026-06-14T17:00:00Z" }}
current = {{ speed_kn = 0.6, toward_deg = 90, speed_sigma_kn = 0.2, direction_sigma_deg = 20 }}
wind = {{ speed_kn = 10, from_deg = 270, speed_sigma_kn = 2, direction_sigma_deg = 15 }}
leeway = {{ downwind_slope = 0.035, downwind_offset_kn = 0.05, downwind_sigma_kn = 0.05, crosswind_slope = 0.012, crosswind_offset_kn = 0.0, crosswind_sigma_kn = 0.03, jibe_per_h = 0.05, source = "invented for a test" }}
particles = 2000
seed = 7

[[search]]
id = "sweep"
unit = "boat"
start = "2026-06-14T19:00:00Z"
end = "2026-06-14T21:00:00Z"
sweep_width_m = 900            # invented
detection = "inverse-cube"
pattern = {{ kind = "parallel-sweep", center = [{lon}, -17.0], length_m = 6000, width_m = 4000, major_bearing_deg = 80, track_spacing_m = 900 }}

[[unit]]
id = "boat"
speed_kn = 12
hours_on_scene = 4
sweep_width_m = 900            # invented
track_spacing_min_m = 300
detection = "inverse-cube"
"#
    )
}

/// Every run of positions (ring or line) in a GeoJSON geometry.
fn position_runs(g: &Value, out: &mut Vec<Vec<[f64; 2]>>) {
    let c = &g["coordinates"];
    let run = |v: &Value| -> Vec<[f64; 2]> {
        v.as_array()
            .unwrap()
            .iter()
            .map(|p| [p[0].as_f64().unwrap(), p[1].as_f64().unwrap()])
            .collect()
    };
    match g["type"].as_str().unwrap() {
        "Point" => {}
        "LineString" => out.push(run(c)),
        "MultiLineString" | "Polygon" => out.extend(c.as_array().unwrap().iter().map(run)),
        "MultiPolygon" => {
            for p in c.as_array().unwrap() {
                out.extend(p.as_array().unwrap().iter().map(run));
            }
        }
        other => panic!("unexpected geometry {other}"),
    }
}

/// Checks one GeoJSON file: GDAL's validity and winding check, and no ring or line spanning
/// more than 1° of longitude (the incident is a few kilometres across; a part wrapped the
/// wrong way round spans about 360°). Returns how many geometries were split at ±180°.
fn check_file(path: &Path) -> usize {
    check_geojson(path);
    let v: Value = serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap();
    let mut split = 0;
    for f in v["features"].as_array().unwrap() {
        let mut runs = Vec::new();
        position_runs(&f["geometry"], &mut runs);
        let mut east = false;
        let mut west = false;
        for r in &runs {
            let lo = r.iter().map(|p| p[0]).fold(f64::MAX, f64::min);
            let hi = r.iter().map(|p| p[0]).fold(f64::MIN, f64::max);
            assert!(
                (-180.0..=180.0).contains(&lo) && (-180.0..=180.0).contains(&hi),
                "{}: longitude out of range in {r:?}",
                path.display()
            );
            assert!(
                hi - lo < 1.0,
                "{}: a part spans {lo}..{hi}: {r:?}",
                path.display()
            );
            east |= lo > 0.0;
            west |= hi < 0.0;
        }
        if east && west {
            split += 1;
        }
    }
    split
}

fn check_incident_at(lon: f64) {
    let dir = tempfile::tempdir().unwrap();
    let f = dir.path().join("incident.toml");
    std::fs::write(&f, incident(lon)).unwrap();
    let map = dir.path().join("map");
    let plan = dir.path().join("plan");
    let o = seekgrid(&["map", f.to_str().unwrap(), "--out", map.to_str().unwrap()]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let o = seekgrid(&[
        "plan",
        f.to_str().unwrap(),
        "--start",
        "2026-06-14T22:00:00Z",
        "--out",
        plan.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let mut split = Vec::new();
    for (folder, names) in [
        (
            &map,
            &[
                "probability.geojson",
                "containment.geojson",
                "searches.geojson",
                "drift.geojson",
                "particles.geojson",
            ][..],
        ),
        (&plan, &["plan.geojson", "probability.geojson"][..]),
    ] {
        for name in names {
            let n = check_file(&folder.join(name));
            split.push((*name, n));
        }
    }
    // The cells on the date line, the containment regions, the search area and its track, the
    // drift ellipses and the plan's area and track all straddle it here: each file holds at
    // least one geometry split at ±180°.
    for (name, n) in &split {
        if *name != "particles.geojson" {
            assert!(
                *n > 0,
                "{lon}: {name} has no geometry split at ±180°: {split:?}"
            );
        }
    }
}

#[test]
fn layers_of_an_incident_at_179_99_east_are_split_at_the_date_line_and_valid() {
    check_incident_at(179.99);
}

#[test]
fn layers_of_an_incident_at_179_99_west_are_split_at_the_date_line_and_valid() {
    check_incident_at(-179.99);
}
