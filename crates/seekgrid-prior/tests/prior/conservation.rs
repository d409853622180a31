//! Mass conservation over random scenario sets and both pools, and the extents.

use super::common::{c, grid, multi, rect_polygon};
use proptest::prelude::*;
use seekgrid_core::neumaier_sum;
use seekgrid_prior::{
    Analyst, Pool, RingInterpolation, Scenario, ScenarioShape, Segment, auto_extent, combine,
    scenario_mass,
};

fn shape_strategy() -> impl Strategy<Value = ScenarioShape> {
    let coord = (-3_000.0..7_000.0f64, -3_000.0..7_000.0f64);
    prop_oneof![
        (coord.clone(), 50.0..3_000.0f64, 0.05..1.0f64, 0.0..360.0f64).prop_map(
            |((x, y), smaj, ratio, b)| ScenarioShape::Point {
                center: c(x, y),
                sigma_major_m: smaj,
                sigma_minor_m: smaj * ratio,
                major_grid_bearing_deg: b,
            }
        ),
        (
            proptest::collection::vec(coord.clone(), 2..5),
            50.0..1_500.0f64
        )
            .prop_map(|(pts, s)| ScenarioShape::Route {
                waypoints: pts
                    .into_iter()
                    .enumerate()
                    .map(|(i, (x, y))| c(x + i as f64, y))
                    .collect(),
                cross_track_sigma_m: s,
            }),
        (coord.clone(), 10.0..3_000.0f64, 10.0..3_000.0f64).prop_map(|((x, y), w, h)| {
            ScenarioShape::Area {
                polygons: multi(vec![rect_polygon(x, y, x + w, y + h)]),
            }
        }),
        (coord.clone(), 0.0..0.6f64, 0.0..0.4f64).prop_map(|((x, y), p1, p2)| {
            ScenarioShape::Segments {
                segments: vec![
                    Segment {
                        id: "s1".into(),
                        polygons: multi(vec![rect_polygon(x, y, x + 800.0, y + 500.0)]),
                    },
                    Segment {
                        id: "s2".into(),
                        polygons: multi(vec![rect_polygon(x + 800.0, y, x + 1_300.0, y + 900.0)]),
                    },
                ],
                poa: vec![p1, p2],
            }
        }),
        (coord, 100.0..2_000.0f64, prop::bool::ANY).prop_map(|((x, y), r, smooth)| {
            ScenarioShape::Rings {
                center: c(x, y),
                quantiles: vec![(0.25, r), (0.5, 2.0 * r), (0.9, 3.5 * r)],
                interpolation: if smooth {
                    RingInterpolation::MonotoneCubic
                } else {
                    RingInterpolation::UniformPerRing
                },
            }
        }),
    ]
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 48, ..ProptestConfig::default() })]

    #[test]
    fn pooled_cells_outside_grid_and_rest_of_world_add_up_to_one(
        shapes in proptest::collection::vec((shape_strategy(), 0.1..5.0f64, 0usize..3), 1..7),
        analyst_weights in proptest::collection::vec(0.1..5.0f64, 3),
        log in prop::bool::ANY,
    ) {
        let g = grid(0.0, 4_000.0, 125.0, 32, 40);
        let mut used = [false; 3];
        let scenarios: Vec<Scenario> = shapes
            .into_iter()
            .enumerate()
            .map(|(i, (shape, w, a))| {
                used[a] = true;
                Scenario { id: format!("s{i}"), analyst: format!("a{a}"), weight: w, shape }
            })
            .collect();
        let analysts: Vec<Analyst> = (0..3)
            .filter(|&a| used[a])
            .map(|a| Analyst { id: format!("a{a}"), weight: analyst_weights[a] })
            .collect();
        for s in &scenarios {
            let m = scenario_mass(&s.shape, &g).unwrap();
            let total = neumaier_sum(m.cells.iter().copied()) + m.outside_grid + m.rest_of_world;
            prop_assert!((total - 1.0).abs() < 1e-12, "scenario total {}", total);
            prop_assert!(m.cells.iter().all(|v| *v >= 0.0) && m.outside_grid >= 0.0);
        }
        let pool = if log { Pool::Logarithmic } else { Pool::Linear };
        match combine(&analysts, &scenarios, &g, pool) {
            Ok(p) => {
                let total = neumaier_sum(p.cells.iter().copied()) + p.outside_grid + p.rest_of_world;
                prop_assert!((total - 1.0).abs() < 1e-12, "pool total {}", total);
                prop_assert!(p.cells.iter().all(|v| *v >= 0.0));
                prop_assert!(p.diagnostics.effective_opinions >= 1.0 - 1e-9);
                let n = analysts.len() as f64;
                prop_assert!(p.diagnostics.effective_opinions <= n + 1e-9);
            }
            Err(e) => {
                // Only the logarithmic pool may come out empty.
                prop_assert!(log, "linear pool failed: {}", e);
                prop_assert_eq!(e, seekgrid_prior::PriorError::EmptyLogPool);
            }
        }
    }
}

#[test]
fn extent_of_a_point_holds_its_mass_to_a_ten_thousandth() {
    let shape = ScenarioShape::Point {
        center: c(1_000.0, 2_000.0),
        sigma_major_m: 1_500.0,
        sigma_minor_m: 300.0,
        major_grid_bearing_deg: 40.0,
    };
    let b = shape.extent().unwrap();
    let g = seekgrid_core::GridSpec::covering(&b, 50.0, seekgrid_core::DEFAULT_MAX_CELLS).unwrap();
    let m = scenario_mass(&shape, &g).unwrap();
    assert!(m.cells.sum() >= 0.9999, "{}", m.cells.sum());
}

#[test]
fn auto_extent_is_the_union_of_the_scenario_extents() {
    let s = |id: &str, shape: ScenarioShape| Scenario {
        id: id.into(),
        analyst: "a".into(),
        weight: 1.0,
        shape,
    };
    let scenarios = [
        s(
            "p",
            ScenarioShape::Point {
                center: c(0.0, 0.0),
                sigma_major_m: 100.0,
                sigma_minor_m: 100.0,
                major_grid_bearing_deg: 0.0,
            },
        ),
        s(
            "r",
            ScenarioShape::Rings {
                center: c(5_000.0, 5_000.0),
                quantiles: vec![(0.5, 1_000.0)],
                interpolation: RingInterpolation::UniformPerRing,
            },
        ),
    ];
    let b = auto_extent(&scenarios).unwrap();
    assert_eq!(
        (b.west_m, b.south_m, b.east_m, b.north_m),
        (-450.0, -450.0, 6_000.0, 6_000.0)
    );
    assert!(auto_extent(&[]).is_none());
}
