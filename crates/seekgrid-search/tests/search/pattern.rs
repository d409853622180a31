//! Pattern geometry and pattern POD against exact areas and dense references.

use geo::{Area, Coord};
use seekgrid_core::{DEFAULT_MAX_CELLS, GridSpec};
use seekgrid_search::{
    DetectionLaw, Pattern, Rectangle, SearchError, SweepWidth, pattern_pod, pattern_pod_at,
    track_pod,
};

fn c(x: f64, y: f64) -> Coord<f64> {
    Coord { x, y }
}

fn sweep(bearing: f64) -> Pattern {
    Pattern::ParallelSweep(Rectangle {
        center: c(1000.0, 1000.0),
        length_m: 1200.0,
        width_m: 600.0,
        major_grid_bearing_deg: bearing,
        track_spacing_m: 100.0,
    })
}

#[test]
fn parallel_sweep_has_the_expected_legs_and_area() {
    let p = sweep(0.0);
    p.validate().unwrap();
    let t = p.tracks();
    assert_eq!(t.0.len(), 12); // 6 legs
    // Commence search point S/2 inside the south-west corner, first leg north.
    assert!((t.0[0].x - 750.0).abs() < 1e-9 && (t.0[0].y - 450.0).abs() < 1e-9);
    assert!((t.0[1].y - 1550.0).abs() < 1e-9);
    assert!((p.track_length_m() - (6.0 * 1100.0 + 5.0 * 100.0)).abs() < 1e-6);
    assert!((p.area_polygon().unsigned_area() - 1200.0 * 600.0).abs() < 1e-6);
    let w = SweepWidth::new(150.0, &[]).unwrap();
    assert!((p.coverage(&w) - 1.5).abs() < 1e-12);
}

#[test]
fn creeping_line_legs_cross_the_major_axis() {
    let p = Pattern::CreepingLine(Rectangle {
        center: c(0.0, 0.0),
        length_m: 1000.0,
        width_m: 400.0,
        major_grid_bearing_deg: 90.0,
        track_spacing_m: 100.0,
    });
    p.validate().unwrap();
    let t = p.tracks();
    assert_eq!(t.0.len(), 20); // 10 legs of 300 m, stepping east
    assert!((t.0[0].x + 450.0).abs() < 1e-9 && (t.0[0].y - 150.0).abs() < 1e-9);
    assert!((t.0[1].x + 450.0).abs() < 1e-9 && (t.0[1].y + 150.0).abs() < 1e-9);
    assert!((p.track_length_m() - (10.0 * 300.0 + 9.0 * 100.0)).abs() < 1e-6);
}

#[test]
fn expanding_square_legs_grow_by_one_spacing_every_two_legs() {
    let p = Pattern::ExpandingSquare {
        center: c(0.0, 0.0),
        track_spacing_m: 100.0,
        legs: 6,
        first_leg_grid_bearing_deg: 0.0,
    };
    p.validate().unwrap();
    let t = p.tracks();
    let lens: Vec<f64> = t.lines().map(|l| l.dx().hypot(l.dy())).collect();
    let want = [100.0, 100.0, 200.0, 200.0, 300.0, 300.0];
    for (a, b) in lens.iter().zip(want) {
        assert!((a - b).abs() < 1e-9);
    }
    // North, then east (right turns), then south.
    assert!((t.0[1].y - 100.0).abs() < 1e-9 && t.0[1].x.abs() < 1e-9);
    assert!((t.0[2].x - 100.0).abs() < 1e-9);
    assert!((t.0[3].y + 100.0).abs() < 1e-9);
}

#[test]
fn three_sector_search_returns_to_the_datum_with_six_outer_corners() {
    let p = Pattern::SectorSearch {
        center: c(0.0, 0.0),
        radius_m: 1000.0,
        first_leg_grid_bearing_deg: 0.0,
        sectors: 3,
    };
    p.validate().unwrap();
    let t = p.tracks();
    assert_eq!(t.0.len(), 10);
    let lens: Vec<f64> = t.lines().map(|l| l.dx().hypot(l.dy())).collect();
    assert!(lens.iter().all(|l| (l - 1000.0).abs() < 1e-9)); // equilateral triangles
    for i in [3, 6, 9] {
        assert!(t.0[i].x.hypot(t.0[i].y) < 1e-9);
    }
    // Turns of 120° to the right at the outer corners: first leg north, second toward 120°.
    let l1 = t.lines().nth(1).unwrap();
    let bearing = l1.dx().atan2(l1.dy()).to_degrees();
    assert!((bearing - 120.0).abs() < 1e-9);
    let hexagon = 1.5 * 3.0_f64.sqrt() * 1e6;
    assert!((p.area_polygon().unsigned_area() - hexagon).abs() < 1e-3);
}

#[test]
fn rectangle_pattern_pod_is_uniform_with_exact_partial_cells() {
    let grid = GridSpec::new(0.0, 2000.0, 50.0, 40, 40, DEFAULT_MAX_CELLS).unwrap();
    let w = SweepWidth::new(100.0, &[]).unwrap();
    for bearing in [0.0, 33.0] {
        let p = sweep(bearing);
        let law = DetectionLaw::InverseCube;
        let pod = law.pod_from_coverage(1.0);
        let layer = pattern_pod(&grid, &p, law, &w).unwrap();
        let dense = layer.to_dense(&grid).unwrap();
        // The POD-weighted area equals POD x rectangle area (exact overlap).
        assert!((dense.sum() * 2500.0 - pod * 720_000.0).abs() < 1e-6);
        // Against point evaluation at dense sub-points (slow reference).
        let n = 20;
        for r in 0..40 {
            for col in 0..40 {
                let b = grid.cell_box(r, col);
                let pts: Vec<Coord<f64>> = (0..n * n)
                    .map(|k| {
                        c(
                            b.west_m + ((k % n) as f64 + 0.5) * 50.0 / n as f64,
                            b.south_m + ((k / n) as f64 + 0.5) * 50.0 / n as f64,
                        )
                    })
                    .collect();
                let at = pattern_pod_at(&pts, &p, law, &w).unwrap();
                let mean = at.iter().sum::<f64>() / at.len() as f64;
                assert!(
                    (mean - dense[[r, col]]).abs() < 0.08 * pod,
                    "cell {r},{col}"
                );
            }
        }
        assert!((layer.get(20, 20) - pod).abs() < 1e-12);
    }
}

#[test]
fn expanding_square_pod_is_its_track_pod() {
    let grid = GridSpec::new(-1000.0, 1000.0, 50.0, 40, 40, DEFAULT_MAX_CELLS).unwrap();
    let w = SweepWidth::new(80.0, &[]).unwrap();
    let p = Pattern::ExpandingSquare {
        center: c(0.0, 0.0),
        track_spacing_m: 100.0,
        legs: 12,
        first_leg_grid_bearing_deg: 45.0,
    };
    let law = DetectionLaw::Exponential;
    let a = pattern_pod(&grid, &p, law, &w).unwrap();
    let b = track_pod(&grid, &p.tracks().0, law, &w).unwrap();
    assert_eq!(a, b);
    let pts = [c(0.0, 0.0), c(50.0, 50.0), c(900.0, 900.0)];
    let at = pattern_pod_at(&pts, &p, law, &w).unwrap();
    assert!(at[0] > 0.5 && at[2] < 1e-3);
}

#[test]
fn bad_patterns_name_the_field() {
    let bad = Pattern::ParallelSweep(Rectangle {
        center: c(0.0, 0.0),
        length_m: 1000.0,
        width_m: 500.0,
        major_grid_bearing_deg: 0.0,
        track_spacing_m: -5.0,
    });
    let err = bad.validate().unwrap_err();
    assert!(matches!(
        err,
        SearchError::BadPattern {
            field: "track_spacing_m",
            ..
        }
    ));
    assert!(err.to_string().contains("track_spacing_m"));
    let sector = Pattern::SectorSearch {
        center: c(0.0, 0.0),
        radius_m: 100.0,
        first_leg_grid_bearing_deg: 0.0,
        sectors: 1,
    };
    assert!(matches!(
        sector.validate(),
        Err(SearchError::BadPattern {
            field: "sectors",
            ..
        })
    ));
    let grid = GridSpec::new(0.0, 100.0, 10.0, 10, 10, DEFAULT_MAX_CELLS).unwrap();
    let w = SweepWidth::new(10.0, &[]).unwrap();
    let far = Pattern::ParallelSweep(Rectangle {
        center: c(1e6, 1e6),
        length_m: 1000.0,
        width_m: 500.0,
        major_grid_bearing_deg: 0.0,
        track_spacing_m: 50.0,
    });
    assert!(matches!(
        pattern_pod(&grid, &far, DetectionLaw::DefiniteRange, &w),
        Err(SearchError::PatternOutsideGrid { .. })
    ));
}

fn length(l: &geo::LineString<f64>) -> f64 {
    l.lines().map(|s| s.dx().hypot(s.dy())).sum()
}

#[test]
fn a_pattern_cut_short_keeps_the_first_share_of_its_track_by_length() {
    // Expanding square, S = 100 m, first leg north: legs of 100, 100, 200, 200 m turning right
    // (N, E, S, W); 600 m in all (computed by hand from the leg rule S, S, 2S, 2S).
    let p = Pattern::ExpandingSquare {
        center: c(0.0, 0.0),
        track_spacing_m: 100.0,
        legs: 4,
        first_leg_grid_bearing_deg: 0.0,
    };
    p.validate().unwrap();
    assert!((p.track_length_m() - 600.0).abs() < 1e-9);
    // Half of it: the first two legs (200 m) and half of the third (100 m of 200 m south).
    let half = p.truncated_tracks(0.5);
    assert!((length(&half) - 300.0).abs() < 1e-9);
    assert_eq!(half.0.len(), 4);
    let end = half.0[3];
    assert!(
        (end.x - 100.0).abs() < 1e-9 && end.y.abs() < 1e-9,
        "{end:?}"
    );
    // The whole share is the pattern itself; a share ending on a turn point adds no extra point.
    assert_eq!(p.truncated_tracks(1.0), p.tracks());
    let two_legs = p.truncated_tracks(200.0 / 600.0);
    assert!((length(&two_legs) - 200.0).abs() < 1e-9);
    // Out-of-range shares are clamped.
    assert_eq!(p.truncated_tracks(1.5), p.tracks());
    assert!(length(&p.truncated_tracks(-1.0)) < 1e-12);
}

#[test]
fn a_rectangle_pattern_cut_short_follows_its_legs_in_order() {
    let p = sweep(0.0);
    let full = p.tracks();
    let total = p.track_length_m();
    for share in [0.1, 0.37, 0.5, 0.93] {
        let cut = p.truncated_tracks(share);
        assert!((length(&cut) - share * total).abs() < 1e-6 * total);
        // Every point but the last is a turn point of the full pattern, in order.
        let n = cut.0.len();
        assert_eq!(&cut.0[..n - 1], &full.0[..n - 1]);
    }
}

#[test]
fn patterns_larger_than_the_earth_allows_are_refused() {
    // A spacing that would make corners overflow to infinity.
    let p = Pattern::ExpandingSquare {
        center: c(0.0, 0.0),
        track_spacing_m: f64::MAX,
        legs: 4,
        first_leg_grid_bearing_deg: 0.0,
    };
    assert!(matches!(
        p.validate(),
        Err(SearchError::BadPattern {
            field: "track_spacing_m",
            ..
        })
    ));
    // Each leg short enough, the last one too long: 2 x 6000 km.
    let p = Pattern::ExpandingSquare {
        center: c(0.0, 0.0),
        track_spacing_m: 6e6,
        legs: 4,
        first_leg_grid_bearing_deg: 0.0,
    };
    assert!(matches!(
        p.validate(),
        Err(SearchError::BadPattern { field: "legs", .. })
    ));
    let mut r = match sweep(0.0) {
        Pattern::ParallelSweep(r) => r,
        other => panic!("{other:?}"),
    };
    r.length_m = 2e7;
    assert!(Pattern::ParallelSweep(r).validate().is_err());
    r.length_m = seekgrid_search::pattern::MAX_PATTERN_M;
    assert!(Pattern::ParallelSweep(r).validate().is_ok());
}
