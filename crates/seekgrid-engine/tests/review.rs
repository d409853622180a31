//! The review of an ended incident against computations done outside the program: the
//! logarithmic score and Bayes' rule on analysts by hand, the rank of the truth against a plain
//! sort, Stone's optimum against the searches actually made and against his closed form.

use geo::Coord;
use seekgrid_core::{Frame, UtmZone};
use seekgrid_engine::review::{Outcome, Review, ReviewEnd, review};
use seekgrid_engine::timeline::{MapOptions, map};
use seekgrid_incident::model::Incident;
use seekgrid_incident::parse;
use std::f64::consts::PI;

/// The working frame of every incident below (UTM 26N; the incidents lie near 29 W 30 N,
/// two degrees west of the central meridian, where the meridian convergence is about -1°).
fn frame() -> Frame {
    Frame::new(UtmZone::from_epsg(32626).unwrap())
}

/// A frame position as `[lon, lat]` text for TOML.
fn ll(x: f64, y: f64) -> String {
    let (lon, lat) = frame().to_lon_lat(Coord { x, y });
    format!("[{lon:.12}, {lat:.12}]")
}

fn ll_pair(x: f64, y: f64) -> [f64; 2] {
    let (lon, lat) = frame().to_lon_lat(Coord { x, y });
    [lon, lat]
}

/// A cell centre of a 50 m grid near 29 W 30 N (grids are aligned to multiples of the cell).
fn origin() -> (f64, f64) {
    let p = frame().to_xy(-29.0, 30.0);
    (
        (p.x / 50.0).floor() * 50.0 + 25.0,
        (p.y / 50.0).floor() * 50.0 + 25.0,
    )
}

/// `[grid]` bounds (lon/lat) covering a frame box with a margin.
fn bounds(x0: f64, y0: f64, x1: f64, y1: f64) -> String {
    let f = frame();
    let corners =
        [(x0, y0), (x0, y1), (x1, y0), (x1, y1)].map(|(x, y)| f.to_lon_lat(Coord { x, y }));
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
    format!("bounds = {{ west = {w:.9}, south = {s:.9}, east = {e:.9}, north = {n:.9} }}")
}

fn header(title: &str, cell_m: f64, bounds: &str) -> String {
    format!(
        r#"[incident]
title = "{title} (invented)"
reference_time = "2026-06-14T10:00:00Z"
crs = "EPSG:32626"
[grid]
cell_m = {cell_m}
{bounds}
"#
    )
}

fn point(id: &str, analyst: &str, x: f64, y: f64, sigma_m: f64) -> String {
    format!(
        r#"[[scenario]]
id = "{id}"
analyst = "{analyst}"
kind = "point"
position = {}
sigma_m = {sigma_m}
"#,
        ll(x, y)
    )
}

/// A parallel sweep, north-south legs, centred at (x, y) in the frame.
#[allow(clippy::too_many_arguments)]
fn sweep(
    id: &str,
    unit: &str,
    start: &str,
    end: &str,
    x: f64,
    y: f64,
    side_m: f64,
    sweep_width_m: f64,
    spacing_m: f64,
    law: &str,
) -> String {
    format!(
        r#"[[search]]
id = "{id}"
unit = "{unit}"
start = "{start}"
end = "{end}"
sweep_width_m = {sweep_width_m}
detection = "{law}"
pattern = {{ kind = "parallel-sweep", center = {}, length_m = {side_m}, width_m = {side_m}, major_bearing_deg = 0, track_spacing_m = {spacing_m} }}
"#,
        ll(x, y)
    )
}

fn load(text: &str) -> (tempfile::TempDir, Incident) {
    let dir = tempfile::tempdir().unwrap();
    let inc = parse(&dir.path().join("incident.toml"), text.to_owned()).unwrap();
    (dir, inc)
}

fn found_at(x: f64, y: f64, time: &str) -> Outcome {
    Outcome::Found {
        position: ll_pair(x, y),
        time: chrono::DateTime::parse_from_rfc3339(time)
            .unwrap()
            .with_timezone(&chrono::Utc),
        position_error_m: None,
        note: None,
    }
}

fn quiet() -> impl Fn(&str, u64, u64) + Sync {
    |_: &str, _: u64, _: u64| {}
}

fn run(inc: &Incident, outcome: Option<&Outcome>) -> Review {
    review(inc, outcome, &quiet()).unwrap()
}

/// Three analysts (weights 1, 2, 1), each with one circular normal (σ = 2 km) centred 0, 3
/// and 6 km from where the object is found, in different directions.
fn three_analysts() -> (tempfile::TempDir, Incident, Outcome, [(f64, f64); 3]) {
    let (x0, y0) = origin();
    let centres = [
        (x0, y0),
        (x0, y0 - 3_000.0),
        (x0 - 6_000.0 * 0.6, y0 - 6_000.0 * 0.8),
    ];
    let mut text = header(
        "Three analysts",
        50.0,
        &bounds(x0 - 24_000.0, y0 - 26_000.0, x0 + 18_000.0, y0 + 18_000.0),
    );
    for (i, w) in [1.0, 2.0, 1.0].iter().enumerate() {
        text.push_str(&format!("[[analyst]]\nid = \"a{}\"\nweight = {w}\n", i + 1));
    }
    for (i, (x, y)) in centres.iter().enumerate() {
        text.push_str(&point(
            &format!("s{}", i + 1),
            &format!("a{}", i + 1),
            *x,
            *y,
            2_000.0,
        ));
    }
    let (dir, inc) = load(&text);
    (dir, inc, found_at(x0, y0, "2026-06-14T12:00:00Z"), centres)
}

#[test]
fn log_scores_and_bayes_rule_on_three_analysts_match_the_hand_computation() {
    // Computed by hand (docs/references.md §7): a circular normal with σ = 2 km has the density
    // f(d) = exp(-d²/(2σ²)) / (2πσ²) = exp(-d²/8) / (8π) per km² at d km from its centre:
    //   f(0) = 0.0397887358, f(3) = 0.0129175112, f(6) = 0.000442012928;
    //   ln f = -3.2241714275, -4.3491714275, -7.7241714275.
    // Normalised weights 0.25, 0.5, 0.25; the linear pool's density is their weighted sum
    //   0.0165164428 (ln -4.1033988612): above analysts 2 and 3, below analyst 1.
    // Bayes' rule w_a f_a / Σ w_b f_b: 0.6022594614, 0.3910500403, 0.0066904983.
    // The review reads densities as cell masses over cell areas: the mean over a 50 m cell of
    // a normal differs from its value at the centre by about s²/(24σ²)·|d²/σ² − 2| relative,
    // at most 2.1e-4 here (computed, second-order Taylor expansion), hence the tolerance.
    let (_dir, inc, found, _) = three_analysts();
    let r = run(&inc, Some(&found));
    let f = [0.0397887358, 0.0129175112, 0.000442012928];
    let implied = [0.6022594614, 0.3910500403, 0.0066904983];
    let rel = |a: f64, b: f64| (a - b).abs() / b.abs();
    for (k, a) in r.analysts.iter().enumerate() {
        let d = a.density_per_km2.unwrap();
        assert!(rel(d, f[k]) < 5e-4, "analyst {k}: {d} vs {}", f[k]);
        assert!((a.log_score.unwrap() - f[k].ln()).abs() < 5e-4);
        assert!(
            (a.implied_weight.unwrap() - implied[k]).abs() < 5e-4,
            "analyst {k}: {:?}",
            a.implied_weight
        );
    }
    let pool = r.pool.unwrap();
    assert!(
        rel(pool.density_per_km2, 0.0165164428) < 5e-4,
        "{}",
        pool.density_per_km2
    );
    assert!((pool.log_score - (-4.1033988612)).abs() < 5e-4);
    assert_eq!((pool.analysts_beaten, pool.analysts), (2, 3));
    assert_eq!(
        r.analysts
            .iter()
            .map(|a| a.pool_scored_higher)
            .collect::<Vec<_>>(),
        vec![Some(false), Some(true), Some(true)]
    );
    // Each analyst has one scenario: the scenario's score is the analyst's.
    for (s, a) in r.scenarios.iter().zip(&r.analysts) {
        assert_eq!(s.density_per_km2, a.density_per_km2);
    }
}

#[test]
fn an_analysts_bias_is_the_geodesic_distance_and_bearing_from_their_centre() {
    // The mean of a circular normal is its centre. Checked against the geodesic from the
    // centre to the truth (geographiclib's algorithm in the geo crate, an outside
    // implementation): the true bearing within 0.01°, the distance within 0.1 % (the review
    // measures in the UTM grid, whose scale factor here is 1.00006, computed).
    use geo::{Bearing, Distance, Geodesic, Point};
    let (_dir, inc, found, centres) = three_analysts();
    let r = run(&inc, Some(&found));
    let truth = r.truth.as_ref().unwrap().lon_lat;
    for (a, (x, y)) in r.analysts.iter().zip(centres).skip(1) {
        let b = a.bias.unwrap();
        let c = ll_pair(x, y);
        let (p, q) = (Point::new(c[0], c[1]), Point::new(truth[0], truth[1]));
        let expected_bearing = Geodesic.bearing(p, q).rem_euclid(360.0);
        let expected_distance = Geodesic.distance(p, q);
        let got = b.bearing_deg.unwrap();
        let diff = (got - expected_bearing + 540.0).rem_euclid(360.0) - 180.0;
        assert!(diff.abs() < 0.01, "{}: {got} vs {expected_bearing}", a.id);
        assert!(
            (b.distance_m - expected_distance).abs() < 1e-3 * expected_distance,
            "{}: {} vs {expected_distance}",
            a.id,
            b.distance_m
        );
    }
    // The first analyst is centred on the truth: no bias (to rounding of the cell moments).
    assert!(r.analysts[0].bias.unwrap().distance_m < 1e-3);
}

/// Two stationary analysts, two periods of searches (one search covers the truth).
fn searched_incident(law: &str) -> (tempfile::TempDir, Incident, Outcome) {
    let (x0, y0) = origin();
    let mut text = header(
        "Searched",
        100.0,
        &bounds(x0 - 15_000.0, y0 - 15_000.0, x0 + 15_000.0, y0 + 15_000.0),
    );
    text.push_str("[[analyst]]\nid = \"a\"\n[[analyst]]\nid = \"b\"\n");
    text.push_str(&point("near", "a", x0 - 1_000.0, y0, 1_500.0));
    text.push_str(&point("far", "b", x0 + 4_000.0, y0 + 2_000.0, 2_500.0));
    text.push_str(&sweep(
        "s1",
        "boat",
        "2026-06-14T10:30:00Z",
        "2026-06-14T12:30:00Z",
        x0 + 4_000.0,
        y0 + 2_000.0,
        3_000.0,
        400.0,
        500.0,
        law,
    ));
    text.push_str(&sweep(
        "s2",
        "plane",
        "2026-06-14T10:30:00Z",
        "2026-06-14T12:30:00Z",
        x0 - 2_000.0,
        y0,
        2_000.0,
        800.0,
        1_000.0,
        law,
    ));
    text.push_str(&sweep(
        "s3",
        "boat",
        "2026-06-14T13:00:00Z",
        "2026-06-14T15:15:00Z",
        x0 + 200.0,
        y0 - 100.0,
        2_000.0,
        400.0,
        500.0,
        law,
    ));
    let (dir, inc) = load(&text);
    (dir, inc, found_at(x0 + 150.0, y0, "2026-06-14T16:00:00Z"))
}

#[test]
fn the_rank_of_the_truth_matches_a_plain_sort_of_the_map_at_the_end() {
    // Reference: the map of the same incident at the found time (timeline::map), its cells
    // sorted by density, highest first, and summed until the density is no longer above the
    // truth's cell (computed here by brute force).
    let (_dir, inc, found) = searched_incident("exponential");
    let r = run(&inc, Some(&found));
    let m = map(
        &inc,
        &MapOptions {
            at: Some(found.time()),
        },
        &quiet(),
    )
    .unwrap();
    let cell = r.truth.as_ref().unwrap().cell.unwrap();
    let area_km2 = m.grid.cell_area_m2() / seekgrid_core::units::M2_PER_KM2;
    let truth_density = m.poc()[cell] / area_km2;
    let mut d: Vec<f64> = m.poc().iter().copied().collect();
    d.sort_by(|a, b| b.total_cmp(a));
    let above: Vec<f64> = d
        .iter()
        .copied()
        .take_while(|&p| p / area_km2 > truth_density)
        .collect();
    let mass_above: f64 = above.iter().sum();
    let last = r.timeline.last().unwrap();
    let t = last.truth.unwrap();
    assert_eq!(last.time, found.time());
    assert!((t.density_per_km2 - truth_density).abs() < 1e-12);
    assert_eq!(t.rank.cells_above, above.len());
    assert!((t.rank.mass_above - mass_above).abs() < 1e-9);
    assert!((t.rank.area_above_km2 - above.len() as f64 * area_km2).abs() < 1e-9);
    // The replay ends where the map does.
    assert!((r.pos_cumulative - m.pos_cumulative).abs() < 1e-12);
    assert!((last.pos_cumulative - m.pos_cumulative).abs() < 1e-12);
}

#[test]
fn the_timeline_has_a_row_at_every_search_end_and_every_whole_hour() {
    let (_dir, inc, found) = searched_incident("exponential");
    let r = run(&inc, Some(&found));
    let hours: Vec<f64> = r.timeline.iter().map(|t| t.hours_since_reference).collect();
    // Reference 10:00, hours 11..16, search ends 12:30 and 15:15; found at 16:00.
    assert_eq!(hours, vec![0.0, 1.0, 2.0, 2.5, 3.0, 4.0, 5.0, 5.25, 6.0]);
    let at_1230 = &r.timeline[3];
    assert_eq!(
        at_1230.searches_ended,
        vec!["s1".to_owned(), "s2".to_owned()]
    );
    assert_eq!(at_1230.searches_applied, 2);
    assert!(!at_1230.whole_hour);
    assert_eq!(r.timeline[2].searches_applied, 0);
    // Effort adds up by unit and by period, and the POS never falls.
    let last = r.timeline.last().unwrap();
    let total: f64 = r.searches.iter().map(|s| s.effort.area_swept_m2).sum();
    assert!((last.effort.area_swept_m2 - total).abs() < 1e-6 * total);
    let by_unit: f64 = last.effort_by_unit.iter().map(|e| e.area_swept_m2).sum();
    let by_period: f64 = last.effort_by_period.iter().map(|e| e.area_swept_m2).sum();
    assert!((by_unit - total).abs() < 1e-6 * total);
    assert!((by_period - total).abs() < 1e-6 * total);
    assert_eq!(r.units.len(), 2);
    assert_eq!(r.units[0].unit, "boat");
    assert_eq!(r.units[0].effort.searches, 2);
    for w in r.timeline.windows(2) {
        assert!(w[1].pos_cumulative >= w[0].pos_cumulative);
    }
    // Two periods: s1 and s2 share their window; s3 has its own.
    assert_eq!(r.periods.len(), 2);
    assert_eq!(
        r.periods[0].searches,
        vec!["s1".to_owned(), "s2".to_owned()]
    );
    assert_eq!(r.periods[0].id, "2026-06-14T10:30:00Z/2026-06-14T12:30:00Z");
}

#[test]
fn a_search_over_the_truth_reports_the_pod_its_law_gives_there() {
    // Inside a parallel sweep with the exponential law, POD = 1 - exp(-W/S) (docs/references.md
    // §1, random search): W = 400 m, S = 500 m -> 1 - e^(-0.8) = 0.550671 (computed).
    let (_dir, inc, found) = searched_incident("exponential");
    let r = run(&inc, Some(&found));
    let s3 = r.searches.iter().find(|s| s.id == "s3").unwrap();
    assert!(s3.covered_truth());
    assert!(
        (s3.pod_at_truth.unwrap() - 0.550671).abs() < 1e-6,
        "{:?}",
        s3.pod_at_truth
    );
    let s1 = r.searches.iter().find(|s| s.id == "s1").unwrap();
    assert!(!s1.covered_truth());
    let p = &r.periods[1];
    assert!((p.pod_at_truth.unwrap() - s3.pod_at_truth.unwrap()).abs() < 1e-12);
}

#[test]
fn the_optimal_allocation_is_never_below_what_exponential_searches_achieved() {
    // Stone (docs/references.md §4): for exponential detection the optimal allocation of an
    // effort bounds the POS of any search with that effort, against the same belief; and for
    // a stationary target, optimal period after period is optimal overall (§7). Checked over
    // seeded random incidents (a stated generator, not data): stationary scenarios, periods
    // that do not overlap, exponential parallel sweeps placed at random.
    let mut state: u64 = 0x5eed_2026;
    let mut next = move || {
        // SplitMix64 (Steele, Lea & Flood 2014): a fixed, documented generator.
        state = state.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = state;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        ((z ^ (z >> 31)) >> 11) as f64 / (1u64 << 53) as f64
    };
    let (x0, y0) = origin();
    for case in 0..6 {
        let mut text = header(
            "Random searches",
            100.0,
            &bounds(x0 - 12_000.0, y0 - 12_000.0, x0 + 12_000.0, y0 + 12_000.0),
        );
        text.push_str("[[analyst]]\nid = \"a\"\n[[analyst]]\nid = \"b\"\nweight = 2\n");
        let mut centres = Vec::new();
        for k in 0..3 {
            let (x, y, sigma) = (
                x0 + (next() - 0.5) * 8_000.0,
                y0 + (next() - 0.5) * 8_000.0,
                800.0 + next() * 1_500.0,
            );
            centres.push((x, y, sigma));
            text.push_str(&point(
                &format!("p{k}"),
                if k == 0 { "a" } else { "b" },
                x,
                y,
                sigma,
            ));
        }
        for period in 0..3 {
            let start = format!("2026-06-14T{:02}:00:00Z", 11 + 3 * period);
            let end = format!("2026-06-14T{:02}:00:00Z", 13 + 3 * period);
            for unit in 0..(1 + case % 3) {
                // Aimed at one scenario, near its centre and about its size (searches a
                // planner might make, some close to the optimum), or anywhere.
                let (cx, cy, sigma) = centres[(next() * 3.0) as usize % 3];
                let aimed = next() < 0.7;
                let (x, y, side) = if aimed {
                    (
                        cx + (next() - 0.5) * sigma,
                        cy + (next() - 0.5) * sigma,
                        sigma * (1.5 + 2.5 * next()),
                    )
                } else {
                    (
                        x0 + (next() - 0.5) * 8_000.0,
                        y0 + (next() - 0.5) * 8_000.0,
                        1_000.0 + next() * 3_000.0,
                    )
                };
                text.push_str(&sweep(
                    &format!("s{period}{unit}"),
                    &format!("u{unit}"),
                    &start,
                    &end,
                    x,
                    y,
                    side,
                    200.0 + next() * 600.0,
                    300.0 + next() * 700.0,
                    "exponential",
                ));
            }
        }
        let (_dir, inc) = load(&text);
        let r = run(&inc, None);
        assert_eq!(r.periods.len(), 3);
        for p in &r.periods {
            assert!(p.all_exponential);
            let o = p.optimal.unwrap();
            assert!(
                o.pos_same_belief >= p.pos - 1e-12,
                "case {case}, period {}: optimal {} < actual {}",
                p.id,
                o.pos_same_belief,
                p.pos
            );
            assert!(o.pos_cumulative_chain >= p.pos_cumulative - 1e-12);
        }
    }
}

/// A circular normal point prior (σ = 1 km) searched by exponential parallel sweeps in one or
/// two periods.
fn stone_incident(periods: usize) -> (tempfile::TempDir, Incident) {
    let (x0, y0) = origin();
    let mut text = header(
        "Stone",
        50.0,
        &bounds(x0 - 7_000.0, y0 - 7_000.0, x0 + 7_000.0, y0 + 7_000.0),
    );
    text.push_str("[[analyst]]\nid = \"a\"\n");
    text.push_str(&point("datum", "a", x0, y0, 1_000.0));
    for k in 0..periods {
        text.push_str(&sweep(
            &format!("s{k}"),
            "boat",
            &format!("2026-06-14T{:02}:00:00Z", 11 + 2 * k),
            &format!("2026-06-14T{:02}:00:00Z", 12 + 2 * k),
            x0 + 300.0,
            y0,
            2_000.0,
            300.0,
            400.0,
            "exponential",
        ));
    }
    load(&text)
}

#[test]
fn the_optimum_on_a_circular_normal_prior_is_stones_closed_form() {
    // Stone's closed form (docs/references.md §4): POS* = 1 - (1 + h) e^(-h),
    // h = sqrt(E/(πσ²)); for two periods of effort E each on a stationary target the chain of
    // optimal periods reaches the single-period optimum of 2E (§7, computed). The grid optimum
    // converges to it as the cells shrink: with cells of σ/20, as here, the plan crate's check
    // of the same allocation finds it within 0.5 % (crates/seekgrid-plan/tests/checks.rs), the
    // tolerance used here.
    let sigma = 1_000.0;
    let stone = |e: f64| {
        let h = (e / (PI * sigma * sigma)).sqrt();
        1.0 - (1.0 + h) * (-h).exp()
    };
    let (_dir, inc) = stone_incident(1);
    let r = run(&inc, None);
    let p = &r.periods[0];
    let e = p.effort.area_swept_m2;
    // W·A/S = 300 m x 4 km² / 400 m (the track length credited to a parallel sweep, L = A/S).
    assert!((e - 300.0 * 4.0e6 / 400.0).abs() < 1e-6 * e, "{e}");
    let o = p.optimal.unwrap();
    assert!(
        (o.pos_same_belief - stone(e)).abs() < 0.005 * stone(e),
        "{} vs {}",
        o.pos_same_belief,
        stone(e)
    );
    assert_eq!(o.pos_same_belief, o.pos_chain);

    let (_dir, inc) = stone_incident(2);
    let r = run(&inc, None);
    let total: f64 = r.periods.iter().map(|p| p.effort.area_swept_m2).sum();
    let chain = r.periods[1].optimal.unwrap().pos_cumulative_chain;
    assert!(
        (chain - stone(total)).abs() < 0.005 * stone(total),
        "{chain} vs {}",
        stone(total)
    );
}

#[test]
fn a_review_without_searches_or_outcome_runs_and_says_what_it_cannot_compute() {
    let (x0, y0) = origin();
    let mut text = header(
        "Nothing yet",
        100.0,
        &bounds(x0 - 5_000.0, y0 - 5_000.0, x0 + 5_000.0, y0 + 5_000.0),
    );
    text.push_str("[[analyst]]\nid = \"a\"\n");
    text.push_str(&point("datum", "a", x0, y0, 1_000.0));
    let (_dir, inc) = load(&text);
    let r = run(&inc, None);
    assert_eq!(r.end_reason, ReviewEnd::ReferenceTime);
    assert_eq!(r.timeline.len(), 1);
    assert_eq!(r.pos_cumulative, 0.0);
    assert!(r.periods.is_empty() && r.searches.is_empty());
    assert!(r.truth.is_none() && r.pool.is_none());
    assert!(r.analysts[0].log_score.is_none());
    let why: Vec<&str> = r.not_computed.iter().map(|n| n.why.as_str()).collect();
    assert!(
        why.iter().any(|w| w.contains("no search is logged")),
        "{why:?}"
    );
    assert!(why.iter().any(|w| w.contains("no outcome")), "{why:?}");

    // Suspended: the same review to the suspension time, without the truth.
    let suspended = Outcome::Suspended {
        time: chrono::DateTime::parse_from_rfc3339("2026-06-14T13:30:00Z")
            .unwrap()
            .with_timezone(&chrono::Utc),
        note: None,
    };
    let r = run(&inc, Some(&suspended));
    assert_eq!(r.end_reason, ReviewEnd::Suspended);
    assert_eq!(r.timeline.len(), 5); // 10:00, 11:00, 12:00, 13:00, 13:30
    assert!(r.timeline.iter().all(|t| t.truth.is_none()));
    assert!(r.not_computed.iter().any(|n| n.why.contains("suspended")));
}

#[test]
fn a_truth_outside_the_grid_is_reported_not_scored() {
    let (_dir, inc, _) = searched_incident("exponential");
    let (x0, y0) = origin();
    let far = found_at(x0 + 40_000.0, y0, "2026-06-14T16:00:00Z");
    let r = run(&inc, Some(&far));
    assert!(r.truth.as_ref().unwrap().cell.is_none());
    assert!(r.pool.is_none());
    assert!(r.timeline.iter().all(|t| t.truth.is_none()));
    assert!(
        r.not_computed
            .iter()
            .any(|n| n.why.contains("outside the grid"))
    );
    // Searches are still scored at the truth: none reaches 40 km away.
    assert!(r.searches.iter().all(|s| !s.covered_truth()));
}

#[test]
fn an_outcome_before_the_reference_time_is_refused() {
    let (_dir, inc, _) = searched_incident("exponential");
    let (x0, y0) = origin();
    let early = found_at(x0, y0, "2026-06-14T09:00:00Z");
    let e = review(&inc, Some(&early), &quiet()).unwrap_err();
    assert!(e.to_string().contains("before the reference time"), "{e}");
}

/// A drifting object (current 1 kn east, small errors) and a stationary scenario.
fn drifting_incident() -> (tempfile::TempDir, Incident, Outcome) {
    let (x0, y0) = origin();
    let mut text = header(
        "Drifting",
        100.0,
        &bounds(x0 - 8_000.0, y0 - 8_000.0, x0 + 20_000.0, y0 + 8_000.0),
    );
    text.push_str("[[analyst]]\nid = \"a\"\n[[analyst]]\nid = \"b\"\n");
    text.push_str(&format!(
        r#"[[scenario]]
id = "adrift"
analyst = "a"
kind = "drift"
position = {}
position_sigma_m = 300
adrift = {{ earliest = "2026-06-14T09:00:00Z", latest = "2026-06-14T10:00:00Z" }}
current = {{ speed_kn = 1.0, toward_deg = 90, speed_sigma_kn = 0.1, direction_sigma_deg = 10 }}
wind = {{ speed_kn = 0.0, from_deg = 0 }}
leeway = {{ downwind_slope = 0.0 }}
particles = 4000
seed = 7
"#,
        ll(x0, y0)
    ));
    text.push_str(&point("anchored", "b", x0 + 2_000.0, y0 + 1_000.0, 1_500.0));
    text.push_str(&sweep(
        "s1",
        "boat",
        "2026-06-14T12:00:00Z",
        "2026-06-14T13:00:00Z",
        x0 + 5_500.0,
        y0,
        3_000.0,
        400.0,
        500.0,
        "exponential",
    ));
    let (dir, inc) = load(&text);
    (
        dir,
        inc,
        found_at(x0 + 10_200.0, y0 + 200.0, "2026-06-14T15:00:00Z"),
    )
}

#[test]
fn a_drift_scenario_is_scored_with_the_maps_kernel_at_the_found_time() {
    // The pool's density at the truth is the belief before any search, carried to the found
    // time: the map of the same incident without its search, read at the truth's cell. The
    // review reads that cell with the kernel particle by particle (core's reference spread);
    // the map bins this cloud, which core keeps within 1e-4 of the reference's peak cell.
    let (_dir, inc, found) = drifting_incident();
    let r = run(&inc, Some(&found));
    let mut unsearched = inc.clone();
    unsearched.searches.clear();
    let m = map(
        &unsearched,
        &MapOptions {
            at: Some(found.time()),
        },
        &quiet(),
    )
    .unwrap();
    let cell = r.truth.as_ref().unwrap().cell.unwrap();
    let area_km2 = m.grid.cell_area_m2() / seekgrid_core::units::M2_PER_KM2;
    let pool = r.pool.unwrap().density_per_km2;
    let peak = m.poc().iter().copied().fold(0.0, f64::max) / area_km2;
    assert!(
        (pool - m.poc()[cell] / area_km2).abs() < 1e-4 * peak,
        "{pool} vs {}",
        m.poc()[cell] / area_km2
    );
    // The pool is the mix of its analysts (linear pool, equal weights).
    let mix: f64 = r
        .analysts
        .iter()
        .map(|a| a.weight_used * a.density_per_km2.unwrap())
        .sum();
    assert!((pool - mix).abs() < 1e-9 * pool);
    // The timeline's last row reads the map after the search with the binned kernel: within
    // 1e-4 of the peak of the map's field (see review/kernel.rs for the bound).
    let after = map(
        &inc,
        &MapOptions {
            at: Some(found.time()),
        },
        &quiet(),
    )
    .unwrap();
    let exact = after.poc()[cell] / area_km2;
    let peak = after.poc().iter().copied().fold(0.0, f64::max) / area_km2;
    let fast = r.timeline.last().unwrap().truth.unwrap().density_per_km2;
    assert!((fast - exact).abs() < 1e-4 * peak, "{fast} vs {exact}");
    // The drift analyst's mean is carried to the found time: 5 to 6 h adrift at 1 kn east,
    // about 10.2 km east of the last known position, where the object was found.
    let b = r.analysts[0].bias.unwrap();
    assert!(b.distance_m < 1_000.0, "{}", b.distance_m);
}

#[test]
fn searches_tasked_in_one_plan_form_one_period_and_the_files_outcome_is_read() {
    // Two searches with different windows but the same `tasked_in` (a plan's run id) are one
    // period running from the earlier start to the later end; a third, untasked, is its own.
    let (x0, y0) = origin();
    let mut text = header(
        "Tasked",
        100.0,
        &bounds(x0 - 10_000.0, y0 - 10_000.0, x0 + 10_000.0, y0 + 10_000.0),
    );
    text.push_str("[[analyst]]\nid = \"a\"\n");
    text.push_str(&point("datum", "a", x0, y0, 1_500.0));
    for (id, start, end, tasked) in [
        ("s1", "11:00", "13:00", Some("20260614T103000Z-77")),
        ("s2", "11:30", "14:00", Some("20260614T103000Z-77")),
        ("s3", "15:00", "16:00", None),
    ] {
        text.push_str(&sweep(
            id,
            "boat",
            &format!("2026-06-14T{start}:00Z"),
            &format!("2026-06-14T{end}:00Z"),
            x0,
            y0,
            2_000.0,
            300.0,
            500.0,
            "exponential",
        ));
        if let Some(run) = tasked {
            text.push_str(&format!("tasked_in = \"{run}\"\n"));
        }
    }
    text.push_str(&format!(
        "[outcome]\nstatus = \"found\"\ntime = \"2026-06-14T17:00:00Z\"\nposition = {}\n",
        ll(x0 + 100.0, y0)
    ));
    let (_dir, inc) = load(&text);
    let r = run(&inc, inc.outcome.as_ref());
    assert_eq!(r.end_reason, ReviewEnd::Found);
    assert_eq!(r.periods.len(), 2);
    let p = &r.periods[0];
    assert!(p.tasked);
    assert_eq!(p.id, "20260614T103000Z-77");
    assert_eq!(p.searches, vec!["s1".to_owned(), "s2".to_owned()]);
    assert_eq!(p.start.format("%H:%M").to_string(), "11:00");
    assert_eq!(p.end.format("%H:%M").to_string(), "14:00");
    assert!(!r.periods[1].tasked);
    assert!(!p.overlaps_other_period);
    // s1 and s2 overlap in time but are one period; the effort adds up.
    let e: f64 = r.searches[..2].iter().map(|s| s.effort.area_swept_m2).sum();
    assert!((p.effort.area_swept_m2 - e).abs() < 1e-6 * e);
}
