//! The timeline against computations done by hand: a drifting target searched twice.

use seekgrid_core::units::nm_to_m;
use seekgrid_engine::timeline::{MapOptions, map};
use seekgrid_incident::parse;

/// The incident, grid and a target drifting east at exactly 1 kn from a known position (every
/// error zero), shared by the tests below.
const DRIFTING_TARGET: &str = r#"
[incident]
title = "Drift test (invented)"
reference_time = "2026-06-14T10:00:00Z"
crs = "EPSG:32626"
[grid]
cell_m = 200
[[analyst]]
id = "a"
[[scenario]]
id = "adrift"
analyst = "a"
kind = "drift"
position = [-30.0, 30.0]
adrift = { earliest = "2026-06-14T10:00:00Z", latest = "2026-06-14T10:00:00Z" }
current = { speed_kn = 1.0, toward_deg = 90 }
wind = { speed_kn = 0.0, from_deg = 0 }
leeway = { downwind_slope = 0.0 }
particles = 500"#;

/// A target drifting east at exactly 1 kn from a known position (every error zero), and a
/// stationary scenario far away that no search touches. Two parallel sweeps are placed where
/// the target is at the middle of each search window.
fn incident_text(second_search_east_m: f64) -> String {
    // At 30 N, 1 NM of easting is about 1/55.6 degree of longitude; the searches are placed in
    // the working frame by the test through their lon/lat, so they are computed here.
    let frame = seekgrid_core::Frame::for_position(-30.0, 30.0).unwrap();
    let lkp = frame.to_xy(-30.0, 30.0);
    let scale = |east_m: f64| {
        frame.to_lon_lat(geo::Coord {
            x: lkp.x + east_m,
            y: lkp.y,
        })
    };
    let (lon1, lat1) = scale(nm_to_m(2.0)); // 2 h after going adrift at 1 kn
    let (lon2, lat2) = scale(second_search_east_m);
    format!(
        r#"{DRIFTING_TARGET}
[[scenario]]
id = "far-away"
analyst = "a"
kind = "point"
position = [-29.8, 30.2]
sigma_m = 500
[[search]]
id = "first"
unit = "u1"
start = "2026-06-14T11:30:00Z"
end = "2026-06-14T12:30:00Z"
sweep_width_m = 500
detection = "inverse-cube"
pattern = {{ kind = "parallel-sweep", center = [{lon1}, {lat1}], length_m = 3000, width_m = 3000, major_bearing_deg = 0, track_spacing_m = 500 }}
[[search]]
id = "second"
unit = "u2"
start = "2026-06-14T13:30:00Z"
end = "2026-06-14T14:30:00Z"
sweep_width_m = 250
detection = "inverse-cube"
pattern = {{ kind = "parallel-sweep", center = [{lon2}, {lat2}], length_m = 3000, width_m = 3000, major_bearing_deg = 0, track_spacing_m = 500 }}
"#
    )
}

#[test]
fn a_drifting_target_searched_twice_updates_as_computed_by_hand() {
    let dir = tempfile::tempdir().unwrap();
    // Second search where the target is 4 h after going adrift: 4 NM east.
    let inc = parse(&dir.path().join("i.toml"), incident_text(nm_to_m(4.0))).unwrap();
    let m = map(&inc, &MapOptions { at: None }, &|_, _, _| {}).unwrap();
    // By hand: the drifting half of the pool sits inside both rectangles at the searches'
    // middle times. POD of parallel sweeps, inverse cube: erf(sqrt(pi)/2 C) with C = W/S,
    // C = 1 -> 0.789909 and C = 0.5 -> 0.469116 (docs/references.md §1, found: Eagle, NPS
    // OA3602 notes, quoting Washburn 2002). The stationary half is never searched.
    let (d1, d2) = (0.789909, 0.469116);
    let drift = 0.5;
    let pos1 = drift * d1;
    let drift1 = drift * (1.0 - d1) / (1.0 - pos1);
    let pos2 = drift1 * d2;
    let drift2 = drift1 * (1.0 - d2) / (1.0 - pos2);
    assert!(
        (m.searches[0].pos - pos1).abs() < 1e-5,
        "{} vs {pos1}",
        m.searches[0].pos
    );
    assert!(
        (m.searches[1].pos - pos2).abs() < 1e-5,
        "{} vs {pos2}",
        m.searches[1].pos
    );
    assert!(
        (m.belief.particle_mass() - drift2).abs() < 1e-5,
        "{}",
        m.belief.particle_mass()
    );
    assert!((m.belief.total_mass() - 1.0).abs() < 1e-12);
    let (p1, p2) = (m.searches[0].pos, m.searches[1].pos);
    assert!((m.pos_cumulative - (1.0 - (1.0 - p1) * (1.0 - p2))).abs() < 1e-12);
}

#[test]
fn a_search_where_the_target_is_not_yet_leaves_the_drift_untouched() {
    let dir = tempfile::tempdir().unwrap();
    // Second search 20 NM east, far from where the target is at its time.
    let inc = parse(&dir.path().join("i.toml"), incident_text(nm_to_m(20.0))).unwrap();
    let m = map(&inc, &MapOptions { at: None }, &|_, _, _| {}).unwrap();
    assert!(m.searches[1].pos < 1e-9, "{}", m.searches[1].pos);
    let d1 = 0.789909;
    let expected = 0.5 * (1.0 - d1) / (1.0 - 0.5 * d1);
    assert!((m.belief.particle_mass() - expected).abs() < 1e-5);
}

#[test]
fn a_long_search_meets_drifting_particles_part_by_part() {
    // The target drifts east at exactly 1 kn from 10:00. A helicopter flies a 40 km
    // north-south line from 11:00 to 11:30 (GPX fix times), within a search logged from 11:00
    // to 13:00. Cut into 30-minute parts, the line is scored against the target where it is at
    // 11:15, 1.25 NM east; the line lies 300 m east of that. By hand (inverse cube, rate
    // (k/2)/r³ with k = W²/(4π), Koopman): a segment of length L seen from lateral distance x
    // at its middle gives exposure k (L/2) / (x² sqrt(x² + L²/4)); POD = 1 - exp(-exposure).
    // Scored once at the search's middle (12:00, 2 NM east) the line would be 1,089 m away.
    let dir = tempfile::tempdir().unwrap();
    let frame = seekgrid_core::Frame::for_position(-30.0, 30.0).unwrap();
    let lkp = frame.to_xy(-30.0, 30.0);
    let x_line = lkp.x + nm_to_m(1.25) + 300.0;
    let ends =
        [lkp.y + 20_000.0, lkp.y - 20_000.0].map(|y| frame.to_lon_lat(geo::Coord { x: x_line, y }));
    let gpx = format!(
        r#"<?xml version="1.0" encoding="UTF-8"?>
<gpx version="1.1" creator="seekgrid test (invented)" xmlns="http://www.topografix.com/GPX/1/1">
<trk><name>helicopter (invented)</name><trkseg>
<trkpt lat="{:.9}" lon="{:.9}"><time>2026-06-14T11:00:00Z</time></trkpt>
<trkpt lat="{:.9}" lon="{:.9}"><time>2026-06-14T11:30:00Z</time></trkpt>
</trkseg></trk></gpx>
"#,
        ends[0].1, ends[0].0, ends[1].1, ends[1].0
    );
    std::fs::write(dir.path().join("line.gpx"), gpx).unwrap();
    let text = format!(
        r#"{DRIFTING_TARGET}
[[search]]
id = "line"
unit = "helicopter"
start = "2026-06-14T11:00:00Z"
end = "2026-06-14T13:00:00Z"
sweep_width_m = 500
detection = "inverse-cube"
track = "line.gpx"
"#
    );
    let inc = parse(&dir.path().join("i.toml"), text).unwrap();
    let m = map(&inc, &MapOptions { at: None }, &|_, _, _| {}).unwrap();
    let k = 500.0_f64 * 500.0 / (4.0 * std::f64::consts::PI);
    let exposure = |x: f64| k * 20_000.0 / (x * x * (x * x + 20_000.0_f64 * 20_000.0).sqrt());
    // Where the target is at 11:15 in the working frame: 1.25 NM east on the ground, times
    // the frame's point scale (about 1.0004 here), so the line is 299.1 m from it.
    let at_1115 = chrono::DateTime::parse_from_rfc3339("2026-06-14T11:15:00Z")
        .unwrap()
        .with_timezone(&chrono::Utc);
    let snap = m.drift_runs[0].1.positions_at(at_1115);
    let lateral = x_line - snap.x_m[0];
    assert!((lateral - 300.0).abs() < 1.5, "{lateral}");
    let pod = -(-exposure(lateral)).exp_m1();
    let removed = m.searches[0].outcome.particle_mass_removed;
    assert!((removed - pod).abs() < 1e-6, "{removed} vs {pod}");
    let once = -(-exposure(nm_to_m(0.75) - 300.0)).exp_m1();
    assert!(removed > 3.0 * once, "{removed} vs {once}");
}
