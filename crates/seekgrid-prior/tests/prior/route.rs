//! Route scenarios against a slow dense integration of the line-source density.

use super::common::{c, dense_integral, gauss_legendre, grid};
use geo::Coord;
use seekgrid_prior::{ScenarioShape, scenario_mass};

/// The route density at (x, y), with the along-track integral done numerically (200 panels of
/// 8-point Gauss-Legendre along each leg, of the isotropic normal): slow and obviously correct.
fn route_density_numeric(waypoints: &[Coord<f64>], sigma: f64, x: f64, y: f64) -> f64 {
    let (nodes, weights) = gauss_legendre(8);
    let total: f64 = waypoints
        .windows(2)
        .map(|w| (w[1].x - w[0].x).hypot(w[1].y - w[0].y))
        .sum();
    let mut acc = 0.0;
    for w in waypoints.windows(2) {
        let (a, b) = (w[0], w[1]);
        let len = (b.x - a.x).hypot(b.y - a.y);
        let n = 200;
        for i in 0..n {
            for (t, wt) in nodes.iter().zip(&weights) {
                let s = (i as f64 + t) / n as f64;
                let px = a.x + s * (b.x - a.x);
                let py = a.y + s * (b.y - a.y);
                let d2 = (x - px).powi(2) + (y - py).powi(2);
                acc += wt * (len / n as f64) * (-0.5 * d2 / (sigma * sigma)).exp()
                    / (2.0 * std::f64::consts::PI * sigma * sigma);
            }
        }
    }
    acc / total
}

#[test]
fn route_cells_match_a_slow_dense_numeric_integration() {
    let waypoints = vec![
        c(-2_000.0, -1_500.0),
        c(300.0, 800.0),
        c(2_600.0, 500.0),
        c(2_900.0, 2_700.0),
    ];
    for (sigma, cell) in [(400.0, 250.0), (250.0, 500.0), (900.0, 100.0)] {
        let g = grid(
            -5_000.0,
            5_000.0,
            cell,
            (10_000.0 / cell) as usize,
            (10_000.0 / cell) as usize,
        );
        let shape = ScenarioShape::Route {
            waypoints: waypoints.clone(),
            cross_track_sigma_m: sigma,
        };
        let m = scenario_mass(&shape, &g).unwrap();
        let f = |x: f64, y: f64| route_density_numeric(&waypoints, sigma, x, y);
        // Cells on a leg, at a bend, at the route's end, and off to the side.
        for p in [
            c(-850.0, -350.0),
            c(300.0, 800.0),
            c(2_900.0, 2_700.0),
            c(1_500.0, -600.0),
            c(-2_300.0, -1_900.0),
        ] {
            let (r, col) = g.locate(p).unwrap();
            let b = g.cell_box(r, col);
            let want = dense_integral(&f, (b.west_m, b.east_m, b.south_m, b.north_m), 3);
            let got = m.cells[[r, col]];
            assert!(
                (got - want).abs() < 1e-9 * want.max(1e-6),
                "sigma {sigma} cell {cell} at {p:?}: {got} vs {want}"
            );
        }
        assert!((m.cells.sum() + m.outside_grid - 1.0).abs() < 1e-12);
    }
}

#[test]
fn route_far_inside_the_grid_holds_all_its_mass_and_splits_by_leg_length() {
    // Two legs, 6 km and 2 km, far apart: 3/4 of the mass around the first (derived: leg
    // weight ∝ length).
    let waypoints = vec![c(0.0, 0.0), c(6_000.0, 0.0), c(6_000.0, 2_000.0)];
    let g = grid(-10_000.0, 10_000.0, 200.0, 100, 100);
    let m = scenario_mass(
        &ScenarioShape::Route {
            waypoints,
            cross_track_sigma_m: 300.0,
        },
        &g,
    )
    .unwrap();
    assert!((m.cells.sum() - 1.0).abs() < 1e-12);
    // Mass west of x = 5 km and south of y = 1 km belongs (up to tails ~1e-3) to the first leg.
    let mut first = 0.0;
    for ((r, col), v) in m.cells.indexed_iter() {
        let p = g.cell_center(r, col);
        if p.x < 5_000.0 {
            first += v;
        }
    }
    // The first leg's uniform part west of 5 km is 5/6 of its 3/4: 0.625; the second leg adds
    // only its normal tail west of 5 km, 0.25 Φ(-1000/300) = 1e-4.
    assert!((first - 0.625).abs() < 5e-3, "{first}");
}

#[test]
fn cross_track_profile_is_normal() {
    // A long east-west leg: the mass in the row band 0..σ north of the track is
    // (Φ(1) − Φ(0)) = 0.341345 of the in-band along-track share (computed).
    let sigma = 500.0;
    let waypoints = vec![c(-40_000.0, 0.0), c(40_000.0, 0.0)];
    let g = grid(-10_000.0, 5_000.0, 500.0, 20, 40);
    let m = scenario_mass(
        &ScenarioShape::Route {
            waypoints,
            cross_track_sigma_m: sigma,
        },
        &g,
    )
    .unwrap();
    // Columns cover 20 km of 80 km: share 1/4. Row 9 spans y = 0..500 = 0..σ.
    let band: f64 = m.cells.row(9).sum();
    assert!((band - 0.25 * 0.341_344_746).abs() < 1e-9, "{band}");
}
