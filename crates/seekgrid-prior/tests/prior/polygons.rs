//! Area and segment scenarios: exact overlap areas against brute-force supersampling, and the
//! Mattson consensus.

use super::common::{grid, multi, rect_polygon};
use geo::{Area, Contains, LineString, MultiPolygon, Point, Polygon};
use seekgrid_prior::{
    Analyst, Pool, PriorError, Scenario, ScenarioShape, Segment, SegmentSplit, ShapeError, combine,
    scenario_mass, segment_table,
};

/// Brute force: fraction of n x n sub-cell centres of the cell inside the polygons.
fn supersampled(polys: &MultiPolygon<f64>, b: seekgrid_core::ProjectedBox, n: usize) -> f64 {
    let mut inside = 0usize;
    for i in 0..n {
        for j in 0..n {
            let x = b.west_m + b.width_m() * (i as f64 + 0.5) / n as f64;
            let y = b.south_m + b.height_m() * (j as f64 + 0.5) / n as f64;
            if polys.contains(&Point::new(x, y)) {
                inside += 1;
            }
        }
    }
    inside as f64 / (n * n) as f64
}

fn lake_with_island() -> MultiPolygon<f64> {
    // A concave polygon with a hole, plus a separate triangle.
    let outer = LineString::from(vec![
        (120.0, 130.0),
        (2_730.0, 410.0),
        (2_410.0, 1_620.0),
        (1_480.0, 1_050.0),
        (760.0, 2_390.0),
        (-150.0, 1_210.0),
        (120.0, 130.0),
    ]);
    let hole = LineString::from(vec![
        (700.0, 600.0),
        (1_300.0, 650.0),
        (900.0, 1_100.0),
        (700.0, 600.0),
    ]);
    let triangle = Polygon::new(
        LineString::from(vec![
            (3_100.0, 2_000.0),
            (3_900.0, 2_150.0),
            (3_300.0, 2_950.0),
            (3_100.0, 2_000.0),
        ]),
        vec![],
    );
    multi(vec![Polygon::new(outer, vec![hole]), triangle])
}

#[test]
fn area_cell_masses_match_brute_force_supersampling() {
    let polys = lake_with_island();
    let area = polys.unsigned_area();
    let g = grid(-300.0, 3_000.0, 170.0, 20, 26);
    let m = scenario_mass(
        &ScenarioShape::Area {
            polygons: polys.clone(),
        },
        &g,
    )
    .unwrap();
    let n = 200;
    for ((r, col), v) in m.cells.indexed_iter() {
        let b = g.cell_box(r, col);
        let brute = supersampled(&polys, b, n) * g.cell_area_m2() / area;
        // Supersampling error: a boundary through the cell misclassifies at most ~2n of n² points.
        let tol = 2.5 / n as f64 * g.cell_area_m2() / area;
        assert!((v - brute).abs() <= tol, "cell {r},{col}: {v} vs {brute}");
    }
    assert!((m.cells.sum() - 1.0).abs() < 1e-12, "{}", m.cells.sum());
    assert_eq!(m.outside_grid, 0.0);
}

#[test]
fn area_partly_off_the_grid_reports_the_rest_as_outside_grid() {
    // A 1000 x 1000 m square, of which the grid holds the west 300 m: 0.3 (exact geometry).
    let polys = multi(vec![rect_polygon(700.0, 0.0, 1_700.0, 1_000.0)]);
    let g = grid(0.0, 1_000.0, 100.0, 10, 10);
    let m = scenario_mass(&ScenarioShape::Area { polygons: polys }, &g).unwrap();
    assert!((m.cells.sum() - 0.3).abs() < 1e-14);
    assert!((m.outside_grid - 0.7).abs() < 1e-14);
}

#[test]
fn a_polygon_smaller_than_a_cell_puts_all_its_mass_in_that_cell() {
    let polys = multi(vec![rect_polygon(130.0, 140.0, 160.0, 190.0)]);
    let g = grid(0.0, 1_000.0, 100.0, 10, 10);
    let m = scenario_mass(&ScenarioShape::Area { polygons: polys }, &g).unwrap();
    assert!((m.cells[[8, 1]] - 1.0).abs() < 1e-14);
}

fn segments(poa: [f64; 3]) -> ScenarioShape {
    // Segments whose edges follow the 100 m cell edges, so that segment_table is exact.
    ScenarioShape::Segments {
        segments: vec![
            Segment {
                id: "A".into(),
                polygons: multi(vec![rect_polygon(0.0, 0.0, 1_000.0, 2_000.0)]),
            },
            Segment {
                id: "B".into(),
                polygons: multi(vec![rect_polygon(1_000.0, 0.0, 3_000.0, 1_000.0)]),
            },
            Segment {
                id: "C".into(),
                polygons: multi(vec![rect_polygon(1_000.0, 1_000.0, 2_500.0, 2_000.0)]),
            },
        ],
        poa: poa.to_vec(),
    }
}

#[test]
fn three_planners_reproduce_the_mattson_consensus() {
    // found: sarmath.com/consensus-category/mattson (Mattson 1976): planners' (A, B, C, ROW)
    // (50,30,15,5), (40,40,10,10), (60,20,10,10) -> consensus (50, 30, 11.6667, 8.3333).
    let analysts: Vec<Analyst> = ["p1", "p2", "p3"]
        .iter()
        .map(|id| Analyst {
            id: (*id).into(),
            weight: 1.0,
        })
        .collect();
    let polls = [[0.50, 0.30, 0.15], [0.40, 0.40, 0.10], [0.60, 0.20, 0.10]];
    let scenarios: Vec<Scenario> = polls
        .iter()
        .enumerate()
        .map(|(i, p)| Scenario {
            id: format!("poll {i}"),
            analyst: format!("p{}", i + 1),
            weight: 1.0,
            shape: segments(*p),
        })
        .collect();
    let g = grid(-500.0, 2_500.0, 100.0, 30, 40);
    let prior = combine(&analysts, &scenarios, &g, Pool::Linear).unwrap();
    let ScenarioShape::Segments { segments: segs, .. } = segments([0.0; 3]) else {
        unreachable!()
    };
    let table = segment_table(&prior.cells, &g, &segs);
    let want = [0.50, 0.30, 0.116_667];
    for (row, w) in table.iter().zip(want) {
        assert!((row.poa - w).abs() < 5e-7, "{}: {} vs {w}", row.id, row.poa);
    }
    assert!((prior.rest_of_world - 0.083_333).abs() < 5e-7);
    assert!(prior.outside_grid.abs() < 1e-15);
    // POA density = POA / area (computed; common practice): A is 2 km², B 2 km², C 1.5 km².
    assert!((table[0].area_m2 - 2e6).abs() < 1e-6);
    assert!((table[0].density_per_km2 - 0.25).abs() < 1e-12);
    assert!((table[2].density_per_km2 - 0.116_666_666_666_666_7 / 1.5).abs() < 1e-12);
}

#[test]
fn segment_table_of_a_non_aligned_segment_weights_cells_by_overlap() {
    // A uniform map over a 1 km square; a segment that is the west half of it, not on cell
    // edges: POA 0.5 (exact for a uniform map).
    let g = grid(0.0, 1_000.0, 300.0, 4, 4);
    let m = scenario_mass(
        &ScenarioShape::Area {
            polygons: multi(vec![rect_polygon(0.0, -200.0, 1_200.0, 1_000.0)]),
        },
        &g,
    )
    .unwrap();
    let seg = Segment {
        id: "west".into(),
        polygons: multi(vec![rect_polygon(0.0, -200.0, 600.0, 1_000.0)]),
    };
    let t = segment_table(&m.cells, &g, &[seg]);
    assert!((t[0].poa - 0.5).abs() < 1e-12, "{}", t[0].poa);
}

#[test]
fn segments_rest_of_world_is_one_minus_the_poa_sum() {
    let g = grid(-500.0, 2_500.0, 100.0, 30, 40);
    let m = scenario_mass(&segments([0.5, 0.3, 0.15]), &g).unwrap();
    assert!((m.rest_of_world - 0.05).abs() < 1e-15);
    assert!((m.cells.sum() - 0.95).abs() < 1e-13);
    assert!((m.cells.sum() + m.outside_grid + m.rest_of_world - 1.0).abs() < 1e-12);
    // Uniform within each segment: a cell of A holds 0.5 * (100 m)² / 2 km².
    assert!((m.cells[[10, 10]] - 0.5 * 1e4 / 2e6).abs() < 1e-15);
}

#[test]
fn overlapping_segments_are_refused_naming_both() {
    let shape = ScenarioShape::Segments {
        segments: vec![
            Segment {
                id: "ridge".into(),
                polygons: multi(vec![rect_polygon(0.0, 0.0, 1_000.0, 1_000.0)]),
            },
            Segment {
                id: "valley".into(),
                polygons: multi(vec![rect_polygon(900.0, 0.0, 2_000.0, 1_000.0)]),
            },
        ],
        poa: vec![0.4, 0.4],
    };
    let err = shape.validate().unwrap_err();
    assert_eq!(
        err,
        PriorError::Shape(ShapeError::OverlappingSegments {
            first: "ridge".into(),
            second: "valley".into()
        })
    );
    assert!(err.to_string().contains("\"ridge\" and \"valley\" overlap"));
    // Sharing an edge is fine.
    let shape = ScenarioShape::Segments {
        segments: vec![
            Segment {
                id: "ridge".into(),
                polygons: multi(vec![rect_polygon(0.0, 0.0, 1_000.0, 1_000.0)]),
            },
            Segment {
                id: "valley".into(),
                polygons: multi(vec![rect_polygon(1_000.0, 0.0, 2_000.0, 1_000.0)]),
            },
        ],
        poa: vec![0.4, 0.4],
    };
    assert!(shape.validate().is_ok());
}

#[test]
fn area_mass_is_conserved_wherever_the_square_sits_on_the_lattice() {
    // The same square placed off the cell lattice gives the same total whatever the offset.
    let g = grid(0.0, 5_000.0, 250.0, 20, 20);
    for dx in [0.0, 17.3, 125.0, 249.9] {
        let polys = multi(vec![rect_polygon(
            1_000.0 + dx,
            1_000.0 + dx,
            2_300.0 + dx,
            3_100.0 + dx,
        )]);
        let m = scenario_mass(&ScenarioShape::Area { polygons: polys }, &g).unwrap();
        assert!((m.cells.sum() - 1.0).abs() < 1e-12);
    }
}

/// Four 2 km squares making one 4 km square turned by 30° about (2 000, 2 000): segments whose
/// edges follow no cell edge.
fn tilted_quadrants() -> Vec<Segment> {
    let (cx, cy) = (2_000.0_f64, 2_000.0_f64);
    let (s, c) = 30f64.to_radians().sin_cos();
    let turn = |u: f64, v: f64| (cx + u * c - v * s, cy + u * s + v * c);
    let square = |u0: f64, v0: f64| {
        let ring: Vec<(f64, f64)> = [
            (u0, v0),
            (u0 + 2e3, v0),
            (u0 + 2e3, v0 + 2e3),
            (u0, v0 + 2e3),
            (u0, v0),
        ]
        .iter()
        .map(|&(u, v)| turn(u, v))
        .collect();
        multi(vec![Polygon::new(LineString::from(ring), vec![])])
    };
    [
        ("S1", -2e3, -2e3),
        ("S2", 0.0, -2e3),
        ("S3", 0.0, 0.0),
        ("S4", -2e3, 0.0),
    ]
    .iter()
    .map(|&(id, u, v)| Segment {
        id: id.into(),
        polygons: square(u, v),
    })
    .collect()
}

#[test]
fn segment_poa_of_tilted_segments_is_the_analysts_weighted_average() {
    // Three analysts score four tilted segments; with segments scenarios only, each segment's
    // POA in the linear pool is Σ_a w_a POA_a (the weighted-average consensus; computed).
    let segs = tilted_quadrants();
    let analysts = vec![
        Analyst {
            id: "a".into(),
            weight: 3.0,
        },
        Analyst {
            id: "b".into(),
            weight: 2.0,
        },
        Analyst {
            id: "c".into(),
            weight: 1.0,
        },
    ];
    let poas = [
        [0.40, 0.30, 0.20, 0.10],
        [0.10, 0.20, 0.30, 0.30],
        [0.25, 0.25, 0.25, 0.25],
    ];
    let scenarios: Vec<Scenario> = analysts
        .iter()
        .zip(&poas)
        .map(|(a, p)| Scenario {
            id: format!("{} segments", a.id),
            analyst: a.id.clone(),
            weight: 1.0,
            shape: ScenarioShape::Segments {
                segments: segs.clone(),
                poa: p.to_vec(),
            },
        })
        .collect();
    // 700 m cells over -1 000..5 000 m: every segment edge cuts cells.
    let g = grid(-1_000.0, 5_000.0, 700.0, 9, 9);
    let prior = combine(&analysts, &scenarios, &g, Pool::Linear).unwrap();
    assert!(prior.outside_grid.abs() < 1e-12);
    let split =
        SegmentSplit::from_scenarios(&analysts, &scenarios, Pool::Linear, &g, &segs).unwrap();
    let table = split.table(&prior.cells, &[]);
    let mut sum = 0.0;
    for (k, row) in table.iter().enumerate() {
        let want = (3.0 * poas[0][k] + 2.0 * poas[1][k] + poas[2][k]) / 6.0;
        assert!(
            (row.poa - want).abs() < 1e-9,
            "{}: {} vs {want}",
            row.id,
            row.poa
        );
        sum += row.poa;
    }
    // POAs + rest of world + the mass outside the segments (none here) add up to 1.
    let outside_segments = prior.cells.sum() - sum;
    assert!(outside_segments.abs() < 1e-9, "{outside_segments}");
    assert!((sum + prior.rest_of_world + prior.outside_grid + outside_segments - 1.0).abs() < 1e-9);
    // The area-fraction split of the pooled cells misses by more than 1e-3 on these cells,
    // which is what the sub-cell integration is for.
    let naive = segment_table(&prior.cells, &g, &segs);
    let worst = naive
        .iter()
        .zip(&table)
        .map(|(n, t)| (n.poa - t.poa).abs())
        .fold(0.0, f64::max);
    assert!(worst > 1e-3, "{worst}");
}

#[test]
fn segment_split_of_a_point_and_an_area_keeps_every_cell_share_at_most_one() {
    // A smooth scenario and an area crossing segment edges: shares stay in 0..=1, the POAs and
    // the mass outside the segments add up to the grid's mass, and the area's exact part in
    // S3 (its overlap area over its area, computed with geo) comes through.
    let segs = tilted_quadrants();
    let lake = lake_with_island();
    let analysts = vec![Analyst {
        id: "a".into(),
        weight: 1.0,
    }];
    let scenarios = vec![
        Scenario {
            id: "lake".into(),
            analyst: "a".into(),
            weight: 1.0,
            shape: ScenarioShape::Area {
                polygons: lake.clone(),
            },
        },
        Scenario {
            id: "point".into(),
            analyst: "a".into(),
            weight: 1.0,
            shape: ScenarioShape::Point {
                center: geo::Coord {
                    x: 2_300.0,
                    y: 1_900.0,
                },
                sigma_major_m: 600.0,
                sigma_minor_m: 400.0,
                major_grid_bearing_deg: 20.0,
            },
        },
    ];
    let g = grid(-1_000.0, 5_000.0, 700.0, 9, 9);
    let prior = combine(&analysts, &scenarios, &g, Pool::Linear).unwrap();
    let split =
        SegmentSplit::from_scenarios(&analysts, &scenarios, Pool::Linear, &g, &segs).unwrap();
    let poa = split.poa(&prior.cells);
    let in_segments: f64 = poa.iter().sum();
    assert!(in_segments <= prior.cells.sum() + 1e-12);
    // Only the lake: each segment's POA is the lake's share in it, exactly.
    let only_lake = &scenarios[..1];
    let lake_prior = combine(&analysts, only_lake, &g, Pool::Linear).unwrap();
    let lake_split =
        SegmentSplit::from_scenarios(&analysts, only_lake, Pool::Linear, &g, &segs).unwrap();
    for (seg, got) in segs.iter().zip(lake_split.poa(&lake_prior.cells)) {
        use geo::BooleanOps;
        let want = lake.intersection(&seg.polygons).unsigned_area() / lake.unsigned_area();
        // geo's overlay works on a snapped integer grid, good to about 1e-9 relative.
        assert!((got - want).abs() < 1e-8, "{}: {got} vs {want}", seg.id);
    }
}
