//! Rings scenarios: published ring densities, SciPy's PCHIP, and a slow dense integration.

use super::common::{c, fixture, grid};
use seekgrid_core::units::M2_PER_KM2;
use seekgrid_prior::{RingInterpolation, ScenarioShape, scenario_mass};

fn rings(interpolation: RingInterpolation, quantiles: Vec<(f64, f64)>) -> ScenarioShape {
    ScenarioShape::Rings {
        center: c(0.0, 0.0),
        quantiles,
        interpolation,
    }
}

#[test]
fn uniform_rings_reproduce_the_published_ring_densities() {
    // computed (docs/references.md §6, method found: Koester 2008): radii 1, 2, 3.5, 7 km with ring
    // POA 25, 25, 25, 20 % and ROW 5 % -> densities 0.079577, 0.026526, 0.009646, 0.001732
    // per km² (areas 3.1416, 9.4248, 25.9181, 115.4535 km²).
    let q = vec![
        (0.25, 1_000.0),
        (0.5, 2_000.0),
        (0.75, 3_500.0),
        (0.95, 7_000.0),
    ];
    let g = grid(-8_000.0, 8_000.0, 100.0, 160, 160);
    let m = scenario_mass(&rings(RingInterpolation::UniformPerRing, q), &g).unwrap();
    assert!((m.rest_of_world - 0.05).abs() < 1e-15);
    assert!((m.cells.sum() - 0.95).abs() < 1e-12);
    assert!(m.outside_grid < 1e-12);
    let per_km2 = |x: f64, y: f64| {
        let (r, col) = g.locate(c(x, y)).unwrap();
        m.cells[[r, col]] / (g.cell_area_m2() / M2_PER_KM2)
    };
    // Cells wholly inside one ring.
    for ((x, y), want) in [
        ((250.0, 350.0), 0.079577),
        ((1_050.0, -1_150.0), 0.026526),
        ((-2_650.0, 150.0), 0.009646),
        ((4_050.0, 4_050.0), 0.001732),
    ] {
        let got = per_km2(x, y);
        assert!((got - want).abs() < 5e-7, "({x}, {y}): {got} vs {want}");
    }
    // Ring masses: sum of cells weighted by the exact area is the ring's POA.
    let mut by_ring = [0.0; 4];
    for ((r, col), v) in m.cells.indexed_iter() {
        let p = g.cell_center(r, col);
        let d = p.x.hypot(p.y);
        let k = [1_000.0, 2_000.0, 3_500.0, 7_000.0]
            .iter()
            .position(|&rk| d < rk);
        if let Some(k) = k {
            by_ring[k] += v;
        }
    }
    // Cells split by a ring edge are assigned by their centre, so allow a cell strip.
    for (got, want) in by_ring.iter().zip([0.25, 0.25, 0.25, 0.20]) {
        assert!((got - want).abs() < 5e-3, "{got} vs {want}");
    }
}

#[test]
fn monotone_cubic_cdf_matches_scipy_pchip() {
    // computed: scipy.interpolate.PchipInterpolator through (0, 0) and the quantiles, frozen by
    // fixtures/reference/make_prior_fixtures.py. The CDF is read back from the cell masses:
    // F(r) = mass of a disc of radius r, with small cells so that the disc edge error is small.
    let fx = fixture("prior_pchip.json");
    let q: Vec<(f64, f64)> = fx["quantiles"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| (p[0].as_f64().unwrap(), p[1].as_f64().unwrap()))
        .collect();
    let points: Vec<(f64, f64)> = fx["points"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| (p[0].as_f64().unwrap(), p[1].as_f64().unwrap()))
        .collect();
    let g = grid(-7_500.0, 7_500.0, 50.0, 300, 300);
    let m = scenario_mass(&rings(RingInterpolation::MonotoneCubic, q.clone()), &g).unwrap();
    assert!((m.rest_of_world - 0.05).abs() < 1e-15);
    assert!((m.cells.sum() + m.outside_grid + m.rest_of_world - 1.0).abs() < 1e-12);
    for &(radius, want) in &points {
        if radius < 500.0 {
            continue;
        }
        let mut inside = 0.0;
        for ((r, col), v) in m.cells.indexed_iter() {
            let p = g.cell_center(r, col);
            if p.x.hypot(p.y) < radius {
                inside += v;
            }
        }
        // Edge error: density x cell strip, ~ 2 pi r * 25 m * rho.
        assert!(
            (inside - want).abs() < 3e-3,
            "F({radius}) = {inside} vs SciPy {want}"
        );
    }
}

#[test]
fn monotone_cubic_cells_match_a_slow_dense_integration() {
    // Slow reference: the PCHIP CDF (checked against SciPy above) differentiated numerically,
    // density F'(r) / (2 pi r), integrated over sub-cells by a 200 x 200 midpoint rule.
    let q = vec![
        (0.25, 1_100.0),
        (0.5, 2_000.0),
        (0.75, 3_600.0),
        (0.95, 7_400.0),
    ];
    let fx = fixture("prior_pchip.json");
    let slopes: Vec<f64> = fx["slopes_at_knots"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_f64().unwrap())
        .collect();
    let knots: Vec<(f64, f64)> = std::iter::once((0.0, 0.0))
        .chain(q.iter().map(|&(f, r)| (r, f)))
        .collect();
    let dcdf = |r: f64| {
        // Hermite derivative on the interval holding r, from SciPy's knot slopes.
        let k = knots
            .iter()
            .rposition(|&(x, _)| x <= r)
            .unwrap()
            .min(knots.len() - 2);
        let (x0, y0) = knots[k];
        let (x1, y1) = knots[k + 1];
        let h = x1 - x0;
        let s = (r - x0) / h;
        let (d0, d1) = (slopes[k], slopes[k + 1]);
        (6.0 * s * s - 6.0 * s) / h * y0
            + (3.0 * s * s - 4.0 * s + 1.0) * d0
            + (-6.0 * s * s + 6.0 * s) / h * y1
            + (3.0 * s * s - 2.0 * s) * d1
    };
    let g = grid(-8_000.0, 8_000.0, 400.0, 40, 40);
    let m = scenario_mass(&rings(RingInterpolation::MonotoneCubic, q), &g).unwrap();
    for p in [
        c(1_500.0, 300.0),
        c(-2_900.0, 2_100.0),
        c(5_000.0, -3_300.0),
        c(200.0, 900.0),
        c(-600.0, -1_900.0),
    ] {
        let (r, col) = g.locate(p).unwrap();
        let b = g.cell_box(r, col);
        let n = 200;
        let mut want = 0.0;
        for i in 0..n {
            for j in 0..n {
                let x = b.west_m + b.width_m() * (i as f64 + 0.5) / n as f64;
                let y = b.south_m + b.height_m() * (j as f64 + 0.5) / n as f64;
                let d = x.hypot(y);
                if d < 7_400.0 {
                    want += dcdf(d) / (2.0 * std::f64::consts::PI * d);
                }
            }
        }
        want *= g.cell_area_m2() / (n * n) as f64;
        let got = m.cells[[r, col]];
        assert!(
            (got - want).abs() < 1e-6 * want,
            "cell at {p:?}: {got} vs {want}"
        );
    }
}

#[test]
fn the_two_interpolations_agree_on_the_ring_totals() {
    let q = vec![
        (0.25, 1_100.0),
        (0.5, 2_000.0),
        (0.75, 3_600.0),
        (0.95, 7_400.0),
    ];
    let g = grid(-8_000.0, 8_000.0, 200.0, 80, 80);
    let a = scenario_mass(&rings(RingInterpolation::UniformPerRing, q.clone()), &g).unwrap();
    let b = scenario_mass(&rings(RingInterpolation::MonotoneCubic, q), &g).unwrap();
    assert!((a.cells.sum() - 0.95).abs() < 1e-12);
    assert!((b.cells.sum() - 0.95).abs() < 1e-12);
}
