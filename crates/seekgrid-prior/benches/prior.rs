//! Benchmark of the prior: 1000 x 1000 cells of 100 m, 200 elliptical point scenarios
//! (sigmas 300-3000 m, any bearing) and 20 routes (3-6 waypoints, sigma 200-1500 m) over 10
//! analysts, linear pool with all diagnostics; plus smaller sizes to show the scaling.
//!
//! The scenarios are invented, drawn from SplitMix64 exactly as in
//! `benches/baselines/prior_baseline.py` (the NumPy/SciPy baseline), so both compute the same
//! prior. Run: `cargo bench -p seekgrid-prior --bench prior`.

use criterion::{Criterion, criterion_group, criterion_main};
use geo::Coord;
use seekgrid_core::{DEFAULT_MAX_CELLS, GridSpec};
use seekgrid_prior::{Analyst, Pool, Scenario, ScenarioShape, combine};
use std::hint::black_box;

/// SplitMix64 (Steele, Lea & Flood, OOPSLA 2014), the same stream as the Python baseline.
struct SplitMix64(u64);

impl SplitMix64 {
    fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    fn uniform(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * ((self.next_u64() >> 11) as f64 * 2f64.powi(-53))
    }
}

const WEST_M: f64 = 400_000.0;
const NORTH_M: f64 = 5_100_000.0;
const SIZE_M: f64 = 100_000.0;

/// The invented benchmark incident: analysts and scenarios.
fn incident(n_points: usize, n_routes: usize) -> (Vec<Analyst>, Vec<Scenario>) {
    let mut rng = SplitMix64(2024);
    let mut shapes = Vec::new();
    for _ in 0..n_points {
        let x = WEST_M + rng.uniform(0.1 * SIZE_M, 0.9 * SIZE_M);
        let y = NORTH_M - rng.uniform(0.1 * SIZE_M, 0.9 * SIZE_M);
        let smaj = rng.uniform(300.0, 3000.0);
        let smin = rng.uniform(300.0, smaj);
        let bearing = rng.uniform(0.0, 180.0);
        shapes.push(ScenarioShape::Point {
            center: Coord { x, y },
            sigma_major_m: smaj,
            sigma_minor_m: smin,
            major_grid_bearing_deg: bearing,
        });
    }
    for _ in 0..n_routes {
        let n_wp = 3 + rng.uniform(0.0, 4.0) as usize;
        let mut x = WEST_M + rng.uniform(0.15 * SIZE_M, 0.85 * SIZE_M);
        let mut y = NORTH_M - rng.uniform(0.15 * SIZE_M, 0.85 * SIZE_M);
        let mut pts = vec![Coord { x, y }];
        for _ in 1..n_wp {
            let heading = rng.uniform(0.0, 360.0).to_radians();
            let length = rng.uniform(0.05 * SIZE_M, 0.15 * SIZE_M);
            x = (x + length * heading.sin()).clamp(WEST_M + 0.05 * SIZE_M, WEST_M + 0.95 * SIZE_M);
            y = (y + length * heading.cos())
                .clamp(NORTH_M - 0.95 * SIZE_M, NORTH_M - 0.05 * SIZE_M);
            pts.push(Coord { x, y });
        }
        let sigma = rng.uniform(200.0, 1500.0);
        shapes.push(ScenarioShape::Route {
            waypoints: pts,
            cross_track_sigma_m: sigma,
        });
    }
    let weights: Vec<f64> = shapes.iter().map(|_| rng.uniform(0.2, 1.0)).collect();
    let analysts: Vec<Analyst> = (0..10)
        .map(|k| Analyst {
            id: format!("analyst {k}"),
            weight: rng.uniform(0.5, 2.0),
        })
        .collect();
    let scenarios = shapes
        .into_iter()
        .zip(weights)
        .enumerate()
        .map(|(i, (shape, weight))| Scenario {
            id: format!("scenario {i}"),
            analyst: format!("analyst {}", i % 10),
            weight,
            shape,
        })
        .collect();
    (analysts, scenarios)
}

fn grid(cells: usize, cell_m: f64) -> GridSpec {
    GridSpec::new(WEST_M, NORTH_M, cell_m, cells, cells, DEFAULT_MAX_CELLS).expect("valid grid")
}

fn bench(c: &mut Criterion) {
    let mut group = c.benchmark_group("combine");
    group.sample_size(10);
    for (name, cells, cell_m, points, routes) in [
        ("1000x1000_100m_200pts_20routes", 1000, 100.0, 200, 20),
        ("1000x1000_100m_50pts_5routes", 1000, 100.0, 50, 5),
        ("500x500_200m_200pts_20routes", 500, 200.0, 200, 20),
    ] {
        let (analysts, scenarios) = incident(points, routes);
        let g = grid(cells, cell_m);
        // Printed once, to compare with the Python baseline's output.
        let p =
            combine(&analysts, &scenarios, &g, Pool::Linear).expect("benchmark incident is valid");
        let in_grid: f64 = seekgrid_core::neumaier_sum(p.cells.iter().copied());
        eprintln!("{name}: in-grid mass {in_grid:.12}");
        for (r, col) in [(250, 250), (500, 500), (750, 300)] {
            let (r, col) = (r * cells / 1000, col * cells / 1000);
            eprintln!("{name}: cell [{r}, {col}] {:.12e}", p.cells[[r, col]]);
        }
        group.bench_function(name, |b| {
            b.iter(|| {
                combine(
                    black_box(&analysts),
                    black_box(&scenarios),
                    &g,
                    Pool::Linear,
                )
                .expect("valid")
            })
        });
    }
    group.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
