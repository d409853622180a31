//! Particle density benchmark: 200,000 particles of one invented cloud spread over 1000 x 1000
//! cells of 100 m, by the direct spread (`add_particles`) and by linear binning plus a
//! separable convolution (`add_particles_binned`). The cloud's spread is 100 cells, so
//! Silverman's bandwidth is about 13 cells and the direct kernel reaches about 11,000 cells per
//! particle.
//!
//! Run: `cargo bench -p seekgrid-core --bench density -- --sample-size 10 --warm-up-time 1 --measurement-time 3`

use criterion::{Criterion, criterion_group, criterion_main};
use ndarray::Array2;
use seekgrid_core::particle_density::{add_particles, add_particles_binned, binned_is_accurate};
use seekgrid_core::{DEFAULT_MAX_CELLS, GridSpec, Particles};
use std::hint::black_box;

const PARTICLES: usize = 200_000;
const CELLS: usize = 1000;
const CELL_M: f64 = 100.0;

/// A normal cloud (standard deviation 10 km) about the grid's centre, from a seeded
/// linear congruential generator and Box-Muller: invented.
fn cloud() -> Particles {
    let mut state: u64 = 0x2545_f491_4f6c_dd1d;
    let mut uniform = || {
        state = state
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1_442_695_040_888_963_407);
        ((state >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    };
    let (mut x, mut y) = (Vec::new(), Vec::new());
    for _ in 0..PARTICLES {
        let r = (-2.0 * uniform().ln()).sqrt() * 10_000.0;
        let a = std::f64::consts::TAU * uniform();
        x.push(50_000.0 + r * a.cos());
        y.push(50_000.0 + r * a.sin());
    }
    let w = vec![1.0 / PARTICLES as f64; PARTICLES];
    Particles::new(x, y, w, vec![false; PARTICLES]).unwrap()
}

fn bench(c: &mut Criterion) {
    let extent = CELLS as f64 * CELL_M;
    let grid = GridSpec::new(0.0, extent, CELL_M, CELLS, CELLS, DEFAULT_MAX_CELLS).unwrap();
    let p = cloud();
    let clouds = vec![std::ops::Range {
        start: 0,
        end: PARTICLES,
    }];
    let h = seekgrid_core::particle_density::silverman_bandwidth_m(&p, 0..PARTICLES, CELL_M);
    assert!(binned_is_accurate(h, CELL_M, PARTICLES), "h = {h}");
    let mut g = c.benchmark_group("particle_density_200k_on_1000x1000");
    g.bench_function("direct", |b| {
        b.iter(|| {
            let mut cells = Array2::zeros((CELLS, CELLS));
            add_particles(&mut cells, &grid, &p, &clouds);
            black_box(cells)
        });
    });
    g.bench_function("binned", |b| {
        b.iter(|| {
            let mut cells = Array2::zeros((CELLS, CELLS));
            add_particles_binned(&mut cells, &grid, &p, &clouds);
            black_box(cells)
        });
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
