//! Review benchmark: an invented incident of 48 hours with 50 searches in 8 periods, a grid of
//! 1000 x 1000 cells and 200,000 drifting particles; the review of the whole incident against
//! a found position, and the single `map` of the same incident at the found time. The review
//! replays the incident once (one drift simulation, one pooling) and reads the belief at every
//! search end and every hour; the target is a review in under 10 map runs' time.
//!
//! Run: `cargo bench -p seekgrid-engine --bench review`

use chrono::{DateTime, Duration, TimeZone, Utc};
use criterion::{Criterion, criterion_group, criterion_main};
use geo::Coord;
use seekgrid_core::Frame;
use seekgrid_engine::review::{Outcome, review};
use seekgrid_engine::timeline::{MapOptions, map};
use std::hint::black_box;
use std::time::Duration as StdDuration;

const PARTICLES: usize = 200_000;
const HOURS: i64 = 48;
const PERIODS: i64 = 8;
const SEARCHES: usize = 50;

/// Reference time of the invented incident.
fn t0() -> DateTime<Utc> {
    Utc.with_ymd_and_hms(2026, 6, 14, 10, 0, 0).unwrap()
}

/// Where the drift takes the mean of the cloud after `h` hours: current 0.4 kn toward 045 and
/// leeway 0.02 x 10 kn = 0.2 kn downwind (wind from 250), in frame metres from the last known
/// position (grid and true north differ by well under a degree here; placement only).
fn drift_offset(h: f64) -> (f64, f64) {
    let knot_h = seekgrid_core::units::METRES_PER_NM; // one knot for an hour
    let (c, l) = (45f64.to_radians(), 70f64.to_radians());
    (
        h * knot_h * (0.4 * c.sin() + 0.2 * l.sin()),
        h * knot_h * (0.4 * c.cos() + 0.2 * l.cos()),
    )
}

/// The incident text (invented, says so) and the found position.
fn incident() -> (String, Outcome) {
    let frame = Frame::for_position(-9.5, 45.0).unwrap();
    let lkp = frame.to_xy(-9.5, 45.0);
    let ll = |x: f64, y: f64| {
        let (lon, lat) = frame.to_lon_lat(Coord { x, y });
        format!("[{lon:.9}, {lat:.9}]")
    };
    let fmt = |t: DateTime<Utc>| t.to_rfc3339_opts(chrono::SecondsFormat::Secs, true);
    // A 100 km square (1000 x 1000 cells of 100 m) around the middle of the drift.
    let (mx, my) = drift_offset(HOURS as f64 / 2.0);
    let (cx, cy) = (lkp.x + mx, lkp.y + my);
    let corners = [(-1.0, -1.0), (-1.0, 1.0), (1.0, -1.0), (1.0, 1.0)].map(|(a, b)| {
        frame.to_lon_lat(Coord {
            x: cx + a * 49_950.0,
            y: cy + b * 49_950.0,
        })
    });
    let w = corners.iter().map(|c| c.0).fold(f64::INFINITY, f64::min);
    let e = corners
        .iter()
        .map(|c| c.0)
        .fold(f64::NEG_INFINITY, f64::max);
    let s = corners.iter().map(|c| c.1).fold(f64::INFINITY, f64::min);
    let n = corners
        .iter()
        .map(|c| c.1)
        .fold(f64::NEG_INFINITY, f64::max);
    let mut text = format!(
        r#"[incident]
title = "Review benchmark (invented)"
reference_time = "{ref_time}"
[grid]
cell_m = 100
bounds = {{ west = {w:.9}, south = {s:.9}, east = {e:.9}, north = {n:.9} }}
max_cells = 1200000
[[analyst]]
id = "duty officer"
weight = 2
[[analyst]]
id = "skipper's friend"
[[scenario]]
id = "adrift from the last known position"
analyst = "duty officer"
kind = "drift"
position = {lkp_ll}
position_sigma_m = 1852
adrift = {{ earliest = "{ref_time}", latest = "{adrift_latest}" }}
current = {{ speed_kn = 0.4, toward_deg = 45, speed_sigma_kn = 0.1, direction_sigma_deg = 15 }}
wind = {{ speed_kn = 10, from_deg = 250, speed_sigma_kn = 2, direction_sigma_deg = 15 }}
leeway = {{ downwind_slope = 0.02, downwind_sigma_kn = 0.05, crosswind_slope = 0.005, crosswind_sigma_kn = 0.02, jibe_per_h = 0.05, source = "invented for the benchmark" }}
diffusivity_m2_s = 1
particles = {PARTICLES}
seed = 11
[[scenario]]
id = "near the last known position"
analyst = "duty officer"
weight = 0.5
kind = "point"
position = {lkp_ll}
sigma_m = 3000
[[scenario]]
id = "along the planned passage"
analyst = "skipper's friend"
kind = "route"
waypoints = [{lkp_ll}, {route_end}]
cross_track_sigma_m = 2000
"#,
        ref_time = fmt(t0()),
        adrift_latest = fmt(t0() + Duration::hours(2)),
        lkp_ll = ll(lkp.x, lkp.y),
        route_end = ll(lkp.x + 2.0 * mx, lkp.y + 2.0 * my),
    );
    // 8 periods of 3 hours, every 6 hours; in each, searches about the predicted mean.
    let mut k = 0;
    for p in 0..PERIODS {
        let start = t0() + Duration::hours(2 + 6 * p);
        let end = start + Duration::hours(3);
        let (dx, dy) = drift_offset((2 + 6 * p) as f64 + 1.5);
        let per_period = if p < 2 { 7 } else { 6 };
        for j in 0..per_period {
            let angle = j as f64 / per_period as f64 * std::f64::consts::TAU;
            let r = if j == 0 {
                0.0
            } else {
                6_000.0 + 1_000.0 * p as f64
            };
            let (x, y) = (lkp.x + dx + r * angle.cos(), lkp.y + dy + r * angle.sin());
            let pattern = if j == 1 {
                format!(
                    r#"{{ kind = "expanding-square", center = {}, track_spacing_m = 1000, legs = 12, first_leg_bearing_deg = 0 }}"#,
                    ll(x, y)
                )
            } else {
                format!(
                    r#"{{ kind = "parallel-sweep", center = {}, length_m = 8000, width_m = 6000, major_bearing_deg = {}, track_spacing_m = 1500 }}"#,
                    ll(x, y),
                    (30 * j) % 180
                )
            };
            text.push_str(&format!(
                r#"[[search]]
id = "S{k:02}"
unit = "unit {u}"
start = "{start}"
end = "{end}"
sweep_width_m = 1200
detection = "{law}"
pattern = {pattern}
"#,
                u = j + 1,
                start = fmt(start),
                end = fmt(end),
                law = if j % 2 == 0 {
                    "inverse-cube"
                } else {
                    "exponential"
                },
            ));
            k += 1;
        }
    }
    assert_eq!(k, SEARCHES);
    let (fx, fy) = drift_offset(HOURS as f64 - 1.0);
    let (lon, lat) = frame.to_lon_lat(Coord {
        x: lkp.x + fx + 1_500.0,
        y: lkp.y + fy - 800.0,
    });
    let found = Outcome::Found {
        position: [lon, lat],
        time: t0() + Duration::hours(HOURS),
        position_error_m: Some(100.0),
        note: None,
    };
    (text, found)
}

fn bench(c: &mut Criterion) {
    let dir = tempfile::tempdir().expect("temporary folder");
    let (text, found) = incident();
    let inc = seekgrid_incident::parse(&dir.path().join("review-bench.toml"), text)
        .expect("the benchmark incident is valid");
    let quiet = |_: &str, _: u64, _: u64| {};
    let at = MapOptions {
        at: Some(found.time()),
    };
    {
        let m = map(&inc, &at, &quiet).expect("map");
        let cells = m.grid.rows() * m.grid.cols();
        assert!(
            (990_000..=1_030_000).contains(&cells),
            "about 1 M cells: {cells}"
        );
        assert_eq!(m.belief.particles().len(), PARTICLES);
        assert_eq!(m.searches.len(), SEARCHES);
    }
    let mut g = c.benchmark_group("review");
    g.sample_size(10)
        .warm_up_time(StdDuration::from_millis(1))
        .measurement_time(StdDuration::from_secs(1))
        .sampling_mode(criterion::SamplingMode::Flat);
    g.bench_function("map_48h_50_searches_1M_cells_200k_particles", |b| {
        b.iter(|| black_box(map(&inc, &at, &quiet).expect("map")));
    });
    g.bench_function("review_48h_50_searches_1M_cells_200k_particles", |b| {
        b.iter(|| black_box(review(&inc, Some(&found), &quiet).expect("review")));
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
