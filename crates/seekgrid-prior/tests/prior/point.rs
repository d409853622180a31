//! Point scenarios (bivariate normal) against SciPy, the k-sigma ellipse law, and a slow
//! dense integration.

use super::common::{c, dense_integral, ellipse_pdf, fixture, grid};
use seekgrid_prior::{ScenarioShape, scenario_mass};

fn point(x: f64, y: f64, smaj: f64, smin: f64, bearing: f64) -> ScenarioShape {
    ScenarioShape::Point {
        center: c(x, y),
        sigma_major_m: smaj,
        sigma_minor_m: smin,
        major_grid_bearing_deg: bearing,
    }
}

#[test]
fn rectangle_masses_match_scipy_multivariate_normal_cdf() {
    // computed: scipy.stats.multivariate_normal.cdf with lower_limit (cross-checked by dblquad),
    // frozen by fixtures/reference/make_prior_fixtures.py; the first four are the rectangles of
    // docs/references.md §2 (0.466065, 0.206396, 0.298117, 0.497972; computed).
    let fx = fixture("prior_mvn_rectangles.json");
    let cases = fx["cases"].as_array().unwrap();
    assert!(cases.len() >= 13);
    for case in cases {
        let f = |k: &str| case[k].as_f64().unwrap();
        let mean = case["mean"].as_array().unwrap();
        let rect: Vec<f64> = case["rect"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_f64().unwrap())
            .collect();
        let cell = f("cell_m");
        let rows = ((rect[3] - rect[2]) / cell).round() as usize;
        let cols = ((rect[1] - rect[0]) / cell).round() as usize;
        let g = grid(rect[0], rect[3], cell, rows, cols);
        let shape = point(
            mean[0].as_f64().unwrap(),
            mean[1].as_f64().unwrap(),
            f("sigma_major_m"),
            f("sigma_minor_m"),
            f("major_grid_bearing_deg"),
        );
        let m = scenario_mass(&shape, &g).unwrap();
        let got = m.cells.sum();
        let want = f("cdf");
        assert!(
            (got - want).abs() < 1e-9,
            "{}: {got} vs SciPy {want} (diff {:e})",
            case["name"],
            got - want
        );
        assert!((got + m.outside_grid + m.rest_of_world - 1.0).abs() < 1e-12);
    }
}

#[test]
fn published_rectangle_values_are_reproduced_to_six_places() {
    // computed (docs/references.md §2): σ=1 centred square [−1,1]² = 0.466065; offset square
    // [0.5,2.5]×[−1,1] = 0.206396; σx=1, σy=2 rectangle [0,2]×[−1,3] = 0.298117;
    // ρ=0.5 square = 0.497972.
    let cases = [
        (
            point(0.0, 0.0, 1.0, 1.0, 0.0),
            (-1.0, 1.0, -1.0, 1.0),
            0.466065,
        ),
        (
            point(0.0, 0.0, 1.0, 1.0, 0.0),
            (0.5, 2.5, -1.0, 1.0),
            0.206396,
        ),
        (
            point(0.0, 0.0, 2.0, 1.0, 0.0),
            (0.0, 2.0, -1.0, 3.0),
            0.298117,
        ),
        (
            point(0.0, 0.0, 1.5f64.sqrt(), 0.5f64.sqrt(), 45.0),
            (-1.0, 1.0, -1.0, 1.0),
            0.497972,
        ),
    ];
    for (shape, (x0, x1, y0, y1), want) in cases {
        let cell = 0.5;
        let g = grid(
            x0,
            y1,
            cell,
            ((y1 - y0) / cell) as usize,
            ((x1 - x0) / cell) as usize,
        );
        let got = scenario_mass(&shape, &g).unwrap().cells.sum();
        assert!((got - want).abs() < 5e-7, "{got} vs {want}");
    }
}

#[test]
fn mass_within_the_k_sigma_ellipse_is_one_minus_exp_of_minus_half_k_squared() {
    // common practice; computed (docs/references.md §2): 1 − e^(−k²/2) = 0.393469, 0.864665,
    // 0.988891 for k = 1, 2, 3, for any covariance. Fine cells whose centre lies inside the
    // ellipse are summed; the boundary error is of the order of a cell strip.
    let (smaj, smin, bearing) = (1200.0, 400.0, 28.0);
    let center = c(10_000.0, 10_000.0);
    let cell = 10.0;
    let g = grid(0.0, 20_000.0, cell, 2000, 2000);
    let m = scenario_mass(&point(center.x, center.y, smaj, smin, bearing), &g).unwrap();
    let (s, co) = bearing.to_radians().sin_cos();
    for (k, want) in [(1.0, 0.393469), (2.0, 0.864665), (3.0, 0.988891)] {
        let mut inside = 0.0;
        for ((r, col), v) in m.cells.indexed_iter() {
            let p = g.cell_center(r, col);
            let (dx, dy) = (p.x - center.x, p.y - center.y);
            let a = dx * s + dy * co;
            let b = dx * co - dy * s;
            if (a / smaj).powi(2) + (b / smin).powi(2) <= k * k {
                inside += v;
            }
        }
        assert!((inside - want).abs() < 2e-3, "k {k}: {inside} vs {want}");
    }
    assert!((m.cells.sum() - 1.0).abs() < 1e-12);
}

#[test]
fn rotated_ellipse_cells_match_a_slow_dense_integration() {
    // Slow, obviously correct reference: 2-D composite Gauss-Legendre of the density itself.
    let cases = [
        (point(1_234.0, -567.0, 3000.0, 100.0, 60.0), 250.0),
        (point(0.0, 0.0, 1500.0, 1500.0, 0.0), 1000.0),
        (point(300.0, 200.0, 1500.0, 600.0, 35.0), 1000.0),
        (point(-40.0, 75.0, 900.0, 300.0, 170.0), 100.0),
        (point(10.0, 10.0, 2000.0, 40.0, 91.0), 500.0),
    ];
    for (shape, cell) in cases {
        let ScenarioShape::Point {
            center,
            sigma_major_m,
            sigma_minor_m,
            major_grid_bearing_deg,
        } = shape
        else {
            unreachable!()
        };
        let g = grid(-6.0 * cell, 6.0 * cell, cell, 12, 12);
        let m = scenario_mass(&shape, &g).unwrap();
        let pdf = ellipse_pdf(center, sigma_major_m, sigma_minor_m, major_grid_bearing_deg);
        let panels = ((cell / sigma_minor_m).ceil() as usize * 4).clamp(4, 64);
        for (r, col) in [(5, 5), (6, 6), (4, 7), (7, 3), (2, 9), (9, 9), (6, 2)] {
            let b = g.cell_box(r, col);
            let want = dense_integral(&pdf, (b.west_m, b.east_m, b.south_m, b.north_m), panels);
            let got = m.cells[[r, col]];
            assert!(
                (got - want).abs() < 1e-10,
                "cell {r},{col}: {got} vs {want}"
            );
        }
    }
}

#[test]
fn mass_beyond_the_grid_is_reported_as_outside_grid() {
    // Half-plane: a circular normal centred on the grid's east edge puts exactly half its mass
    // west of it (symmetry); the grid is tall enough to hold the rest.
    let g = grid(0.0, 20_000.0, 200.0, 100, 50);
    let m = scenario_mass(&point(10_000.0, 10_000.0, 800.0, 800.0, 0.0), &g).unwrap();
    assert!((m.cells.sum() - 0.5).abs() < 1e-12);
    assert!((m.outside_grid - 0.5).abs() < 1e-12);
    assert_eq!(m.rest_of_world, 0.0);
    // Far away: all outside.
    let m = scenario_mass(&point(1e6, 1e6, 800.0, 800.0, 0.0), &g).unwrap();
    assert_eq!(m.cells.sum(), 0.0);
    assert_eq!(m.outside_grid, 1.0);
}

#[test]
fn whole_ellipse_inside_the_grid_sums_to_one() {
    let g = grid(-30_000.0, 30_000.0, 100.0, 600, 600);
    for (smaj, smin, bearing) in [
        (3000.0, 300.0, 33.0),
        (300.0, 300.0, 0.0),
        (2500.0, 2000.0, 250.0),
    ] {
        let m = scenario_mass(&point(120.0, -80.0, smaj, smin, bearing), &g).unwrap();
        assert!(
            (m.cells.sum() - 1.0).abs() < 1e-12,
            "{smaj} {smin} {bearing}: {}",
            m.cells.sum()
        );
    }
}

#[test]
fn bearing_turns_the_ellipse_clockwise_from_grid_north() {
    // Major axis toward grid bearing 90 (east): the mass spreads east-west.
    let g = grid(-5_000.0, 5_000.0, 500.0, 20, 20);
    let m = scenario_mass(&point(0.0, 0.0, 2000.0, 200.0, 90.0), &g).unwrap();
    let east = m.cells[[10, 16]];
    let north = m.cells[[4, 10]];
    assert!(east > 1e3 * north, "east {east} north {north}");
}
