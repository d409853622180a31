//! The working frame (Krüger series, seekgrid-core) against PROJ's `cs2cs`: within 1 mm inside
//! the UTM zone and 1 cm up to 3 degrees beyond its edges, both hemispheres, both directions.

use crate::external::have;
use seekgrid_core::{Frame, UtmZone};
use std::io::Write;
use std::process::{Command, Stdio};

/// Runs one `cs2cs` over many lines and returns the first two numbers of each output line.
fn cs2cs(from: &str, to: &str, lines: &[String]) -> Vec<(f64, f64)> {
    let mut child = Command::new("cs2cs")
        .args(["-f", "%.9f", from, to])
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .spawn()
        .expect("cs2cs runs");
    child
        .stdin
        .take()
        .unwrap()
        .write_all(lines.join("\n").as_bytes())
        .unwrap();
    let out = child.wait_with_output().unwrap();
    let text = String::from_utf8(out.stdout).unwrap();
    text.lines()
        .map(|l| {
            let v: Vec<f64> = l
                .split_whitespace()
                .take(2)
                .map(|x| x.parse().expect("numeric cs2cs output"))
                .collect();
            assert!(v.iter().all(|x| x.is_finite()), "cs2cs gave {l}");
            (v[0], v[1])
        })
        .collect()
}

fn grid_of_positions(zone: &UtmZone, beyond_deg: f64, lat_range: (f64, f64)) -> Vec<(f64, f64)> {
    let cm = zone.central_meridian_deg();
    let mut out = Vec::new();
    for i in 0..=12 {
        let dlon = -3.0 - beyond_deg + (6.0 + 2.0 * beyond_deg) * f64::from(i) / 12.0;
        for j in 0..=10 {
            let lat = lat_range.0 + (lat_range.1 - lat_range.0) * f64::from(j) / 10.0;
            out.push((cm + dlon, lat));
        }
    }
    out
}

fn check_zone(epsg: u32, lat_range: (f64, f64)) {
    let zone = UtmZone::from_epsg(epsg).unwrap();
    let frame = Frame::new(zone);
    for (beyond, tol_m) in [(0.0, 0.001), (3.0, 0.01)] {
        let pts = grid_of_positions(&zone, beyond, lat_range);
        // EPSG:4326 input is latitude then longitude (docs/references.md §8.6).
        let lines: Vec<String> = pts
            .iter()
            .map(|(lon, lat)| format!("{lat} {lon}"))
            .collect();
        let proj = cs2cs("EPSG:4326", &format!("EPSG:{epsg}"), &lines);
        let mut worst: f64 = 0.0;
        for ((lon, lat), (e, n)) in pts.iter().zip(&proj) {
            let ours = frame.to_xy(*lon, *lat);
            worst = worst.max((ours.x - e).hypot(ours.y - n));
        }
        assert!(
            worst < tol_m,
            "EPSG:{epsg}, {beyond} deg beyond the zone: worst forward difference {worst} m"
        );
        // Inverse: PROJ's eastings/northings back to lon/lat, compared in metres on the ground.
        let lines: Vec<String> = proj.iter().map(|(e, n)| format!("{e} {n}")).collect();
        let back = cs2cs(&format!("EPSG:{epsg}"), "EPSG:4326", &lines);
        for ((e, n), (lat_p, lon_p)) in proj.iter().zip(&back) {
            let (lon, lat) = frame.to_lon_lat(geo::Coord { x: *e, y: *n });
            let dy = (lat - lat_p) * 111_000.0;
            let dx = (lon - lon_p) * 111_000.0 * lat.to_radians().cos();
            assert!(
                dx.hypot(dy) < tol_m,
                "EPSG:{epsg} inverse at {e} {n}: {} m",
                dx.hypot(dy)
            );
        }
    }
}

#[test]
fn utm_matches_proj_in_the_north() {
    if !have("cs2cs") {
        return;
    }
    // Reference: PROJ 9 `cs2cs` (Debian proj-bin), an outside implementation of EPSG's UTM.
    check_zone(32624, (0.0, 72.0));
    check_zone(32619, (30.0, 60.0));
}

#[test]
fn utm_matches_proj_in_the_south() {
    if !have("cs2cs") {
        return;
    }
    check_zone(32756, (-70.0, -0.5));
    check_zone(32723, (-40.0, -10.0));
}

#[test]
fn the_crs_codes_refused_as_geographic_are_geographic_for_proj() {
    // PROJ's projinfo (Debian proj-bin) writes a geographic CRS as +proj=longlat.
    if !have("projinfo") {
        return;
    }
    for code in seekgrid_incident::crs::GEOGRAPHIC_EPSG {
        let o = crate::external::run("projinfo", &[&format!("EPSG:{code}"), "-o", "PROJ", "-q"]);
        let text = String::from_utf8_lossy(&o.stdout);
        assert!(
            o.status.success() && text.trim_start().starts_with("+proj=longlat"),
            "EPSG:{code}: {text}"
        );
    }
}
