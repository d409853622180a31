//! Bad input is refused with an error naming the scenario or analyst and the fix; never a panic.

use super::common::{c, grid, multi, rect_polygon};
use geo::{LineString, MultiPolygon, Polygon};
use seekgrid_prior::{
    Analyst, Pool, PriorError, RingInterpolation, Scenario, ScenarioShape, Segment, ShapeError,
    combine,
};

/// A check that an error is the expected one.
type Expect = fn(&ShapeError) -> bool;

fn ok_point() -> ScenarioShape {
    ScenarioShape::Point {
        center: c(500.0, 500.0),
        sigma_major_m: 200.0,
        sigma_minor_m: 100.0,
        major_grid_bearing_deg: 10.0,
    }
}

fn run(analysts: &[Analyst], scenarios: &[Scenario]) -> Result<seekgrid_prior::Prior, PriorError> {
    combine(
        analysts,
        scenarios,
        &grid(0.0, 1_000.0, 100.0, 10, 10),
        Pool::Linear,
    )
}

fn an(id: &str, w: f64) -> Analyst {
    Analyst {
        id: id.into(),
        weight: w,
    }
}

fn sc(id: &str, who: &str, w: f64, shape: ScenarioShape) -> Scenario {
    Scenario {
        id: id.into(),
        analyst: who.into(),
        weight: w,
        shape,
    }
}

#[test]
fn unknown_analyst_is_named_with_its_scenario() {
    let e = run(&[an("ann", 1.0)], &[sc("lkp", "bob", 1.0, ok_point())]).unwrap_err();
    assert_eq!(
        e,
        PriorError::UnknownAnalyst {
            scenario: "lkp".into(),
            analyst: "bob".into()
        }
    );
    let text = e.to_string();
    assert!(
        text.contains("\"lkp\"") && text.contains("\"bob\"") && text.contains("add the analyst")
    );
    assert!(!text.ends_with('.'));
}

#[test]
fn missing_analysts_scenarios_and_bad_weights_are_refused() {
    assert_eq!(
        run(&[], &[sc("s", "a", 1.0, ok_point())]).unwrap_err(),
        PriorError::NoAnalysts
    );
    assert_eq!(
        run(&[an("a", 1.0)], &[]).unwrap_err(),
        PriorError::NoScenarios
    );
    assert!(matches!(
        run(&[an("a", 0.0)], &[sc("s", "a", 1.0, ok_point())]).unwrap_err(),
        PriorError::BadAnalystWeight { .. }
    ));
    assert!(matches!(
        run(&[an("a", f64::NAN)], &[sc("s", "a", 1.0, ok_point())]).unwrap_err(),
        PriorError::BadAnalystWeight { .. }
    ));
    assert!(matches!(
        run(&[an("a", 1.0)], &[sc("s", "a", -1.0, ok_point())]).unwrap_err(),
        PriorError::BadScenarioWeight { .. }
    ));
    assert_eq!(
        run(
            &[an("a", 1.0), an("b", 1.0)],
            &[sc("s", "a", 1.0, ok_point())]
        )
        .unwrap_err(),
        PriorError::AnalystWithoutScenarios {
            analyst: "b".into()
        }
    );
    assert!(matches!(
        run(
            &[an("a", 1.0), an("a", 2.0)],
            &[sc("s", "a", 1.0, ok_point())]
        )
        .unwrap_err(),
        PriorError::DuplicateAnalyst { .. }
    ));
    assert!(matches!(
        run(
            &[an("a", 1.0)],
            &[sc("s", "a", 1.0, ok_point()), sc("s", "a", 1.0, ok_point())]
        )
        .unwrap_err(),
        PriorError::DuplicateScenario { .. }
    ));
}

#[test]
fn bad_shapes_are_refused_naming_scenario_analyst_and_field() {
    let e = run(
        &[an("ann", 1.0)],
        &[sc(
            "drift start",
            "ann",
            1.0,
            ScenarioShape::Point {
                center: c(0.0, 0.0),
                sigma_major_m: -5.0,
                sigma_minor_m: 1.0,
                major_grid_bearing_deg: 0.0,
            },
        )],
    )
    .unwrap_err();
    let text = e.to_string();
    assert!(
        text.contains("\"drift start\"")
            && text.contains("\"ann\"")
            && text.contains("sigma_major_m"),
        "{text}"
    );
    assert!(matches!(
        e,
        PriorError::InScenario {
            source: ShapeError::BadSigma { .. },
            ..
        }
    ));
}

#[test]
fn each_kind_of_bad_shape_has_its_own_error() {
    let cases: Vec<(ScenarioShape, Expect)> = vec![
        (
            ScenarioShape::Point {
                center: c(0.0, 0.0),
                sigma_major_m: 100.0,
                sigma_minor_m: 0.0,
                major_grid_bearing_deg: 0.0,
            },
            |e| {
                matches!(
                    e,
                    ShapeError::BadSigma {
                        field: "sigma_minor_m",
                        ..
                    }
                )
            },
        ),
        (
            ScenarioShape::Point {
                center: c(0.0, 0.0),
                sigma_major_m: 100.0,
                sigma_minor_m: 200.0,
                major_grid_bearing_deg: 0.0,
            },
            |e| matches!(e, ShapeError::MinorExceedsMajor { .. }),
        ),
        (
            ScenarioShape::Point {
                center: c(f64::NAN, 0.0),
                sigma_major_m: 100.0,
                sigma_minor_m: 100.0,
                major_grid_bearing_deg: 0.0,
            },
            |e| matches!(e, ShapeError::NotFinite { .. }),
        ),
        (
            ScenarioShape::Route {
                waypoints: vec![c(0.0, 0.0)],
                cross_track_sigma_m: 100.0,
            },
            |e| matches!(e, ShapeError::RouteTooShort { points: 1 }),
        ),
        (
            ScenarioShape::Route {
                waypoints: vec![c(1.0, 1.0), c(1.0, 1.0)],
                cross_track_sigma_m: 100.0,
            },
            |e| matches!(e, ShapeError::RouteZeroLength),
        ),
        (
            ScenarioShape::Route {
                waypoints: vec![c(0.0, 0.0), c(1.0, 1.0)],
                cross_track_sigma_m: 0.0,
            },
            |e| {
                matches!(
                    e,
                    ShapeError::BadSigma {
                        field: "cross_track_sigma_m",
                        ..
                    }
                )
            },
        ),
        (
            ScenarioShape::Area {
                polygons: MultiPolygon(vec![]),
            },
            |e| matches!(e, ShapeError::EmptyPolygon { .. }),
        ),
        (
            ScenarioShape::Area {
                polygons: MultiPolygon(vec![Polygon::new(
                    LineString::from(vec![
                        (0.0, 0.0),
                        (10.0, 10.0),
                        (10.0, 0.0),
                        (0.0, 10.0),
                        (0.0, 0.0),
                    ]),
                    vec![],
                )]),
            },
            |e| matches!(e, ShapeError::InvalidPolygon { .. }),
        ),
        (
            ScenarioShape::Area {
                polygons: multi(vec![
                    rect_polygon(0.0, 0.0, 10.0, 10.0),
                    rect_polygon(5.0, 5.0, 15.0, 15.0),
                ]),
            },
            |e| {
                matches!(
                    e,
                    ShapeError::OverlappingPolygons {
                        first: 0,
                        second: 1,
                        ..
                    }
                )
            },
        ),
        (
            ScenarioShape::Segments {
                segments: vec![seg("A", 0.0), seg("B", 20.0)],
                poa: vec![0.7, 0.4],
            },
            |e| matches!(e, ShapeError::PoaSumAboveOne { .. }),
        ),
        (
            ScenarioShape::Segments {
                segments: vec![seg("A", 0.0)],
                poa: vec![-0.1],
            },
            |e| matches!(e, ShapeError::BadPoa { .. }),
        ),
        (
            ScenarioShape::Segments {
                segments: vec![seg("A", 0.0)],
                poa: vec![],
            },
            |e| matches!(e, ShapeError::PoaCountMismatch { .. }),
        ),
        (
            ScenarioShape::Segments {
                segments: vec![],
                poa: vec![],
            },
            |e| matches!(e, ShapeError::NoSegments),
        ),
        (
            ScenarioShape::Segments {
                segments: vec![seg("A", 0.0), seg("A", 20.0)],
                poa: vec![0.1, 0.1],
            },
            |e| matches!(e, ShapeError::DuplicateSegment { .. }),
        ),
        (rings(vec![]), |e| matches!(e, ShapeError::NoQuantiles)),
        (rings(vec![(0.5, 100.0), (0.4, 200.0)]), |e| {
            matches!(e, ShapeError::QuantilesNotIncreasing { index: 1 })
        }),
        (rings(vec![(0.5, 300.0), (0.6, 200.0)]), |e| {
            matches!(e, ShapeError::QuantilesNotIncreasing { index: 1 })
        }),
        (rings(vec![(0.0, 100.0)]), |e| {
            matches!(e, ShapeError::BadFraction { index: 0, .. })
        }),
        (rings(vec![(1.2, 100.0)]), |e| {
            matches!(e, ShapeError::BadFraction { index: 0, .. })
        }),
        (rings(vec![(0.5, -100.0)]), |e| {
            matches!(e, ShapeError::BadRadius { index: 0, .. })
        }),
    ];
    for (shape, want) in cases {
        match shape.validate() {
            Err(PriorError::Shape(e)) => {
                assert!(want(&e), "unexpected error {e:?} for {shape:?}");
                assert!(!e.to_string().ends_with('.'));
            }
            other => panic!("expected a shape error for {shape:?}, got {other:?}"),
        }
        assert!(shape.extent().is_none());
        assert!(seekgrid_prior::scenario_mass(&shape, &grid(0.0, 1_000.0, 100.0, 10, 10)).is_err());
    }
}

fn seg(id: &str, x: f64) -> Segment {
    Segment {
        id: id.into(),
        polygons: multi(vec![rect_polygon(x, 0.0, x + 10.0, 10.0)]),
    }
}

fn rings(quantiles: Vec<(f64, f64)>) -> ScenarioShape {
    ScenarioShape::Rings {
        center: c(0.0, 0.0),
        quantiles,
        interpolation: RingInterpolation::UniformPerRing,
    }
}
