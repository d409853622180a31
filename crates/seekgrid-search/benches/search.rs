//! Benchmarks of seekgrid-search (figures and commands in docs/benchmarks/search.md).
//!
//! * `update`: Bayesian update of a 1 M-cell belief with a dense POD layer, against a plain
//!   copy of the same two arrays in the same run (throughput in bytes of mass + POD).
//! * `track_pod`: a 10 000-fix track (a parallel sweep flown with small position noise, and the
//!   same legs without noise) rasterised onto a 1 M-cell grid.
//! * `track_pod_at`: POD of the same track at 1 M particle positions.
//! * `allocation`: optimal effort on a 1 M-cell circular normal prior to exact λ.

use criterion::{BatchSize, Criterion, Throughput, criterion_group, criterion_main};
use geo::Coord;
use ndarray::Array2;
use seekgrid_core::{Belief, DEFAULT_MAX_CELLS, GridSpec, Particles};
use seekgrid_search::{
    DetectionLaw, PodLayer, SweepWidth, optimal_allocation, track_pod, track_pod_at,
    update_after_miss,
};
use std::hint::black_box;

const N: usize = 1000;

fn grid() -> GridSpec {
    GridSpec::new(0.0, 100_000.0, 100.0, N, N, DEFAULT_MAX_CELLS).unwrap()
}

/// Cell masses of a circular normal prior (σ = 15 km) at the grid centre, 5 % rest of world.
fn prior() -> Array2<f64> {
    let sigma = 15_000.0;
    let f = |x: f64| 0.5 * libm::erf((x - 50_000.0) / (sigma * std::f64::consts::SQRT_2));
    let m: Vec<f64> = (0..N)
        .map(|i| f((i + 1) as f64 * 100.0) - f(i as f64 * 100.0))
        .collect();
    let mut cells = Array2::from_shape_fn((N, N), |(r, c)| m[r] * m[c]);
    let total = cells.sum();
    cells.mapv_inplace(|v| v * 0.95 / total);
    cells
}

/// The fixes of the benchmark track: with a deterministic position noise, or exactly on
/// straight legs.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum TrackNoise {
    /// A deterministic position noise of ±5 m.
    Noisy,
    /// Exactly straight legs.
    Straight,
}

/// The benchmark track: 25 east-west legs of 50 km, 2 km apart, 10 000 fixes 125 m apart,
/// with or without noise. benches/baselines/track_baseline.py builds the same track.
pub fn bench_track(noise: TrackNoise) -> Vec<Coord<f64>> {
    let per_leg = 400;
    let mut t = Vec::with_capacity(25 * per_leg);
    for leg in 0..25 {
        let y = 26_000.0 + 2_000.0 * leg as f64;
        for i in 0..per_leg {
            let s = 25_000.0 + 50_000.0 * i as f64 / (per_leg - 1) as f64;
            let x = if leg % 2 == 0 { s } else { 100_000.0 - s };
            let k = (leg * per_leg + i) as f64;
            let (nx, ny) = if noise == TrackNoise::Noisy {
                (5.0 * (1.7 * k).sin(), 5.0 * (2.3 * k).cos())
            } else {
                (0.0, 0.0)
            };
            t.push(Coord {
                x: x + nx,
                y: y + ny,
            });
        }
    }
    t
}

fn update(c: &mut Criterion) {
    let g = grid();
    let belief = Belief::new(g, prior(), Particles::default(), 0.05).unwrap();
    let pod_values = Array2::from_shape_fn((N, N), |(r, c)| {
        0.5 * (((r * 7 + c * 13) % 100) as f64) / 100.0
    });
    let layer = PodLayer::from_dense(g, pod_values.clone()).unwrap();
    let bytes = (2 * N * N * std::mem::size_of::<f64>()) as u64;
    let mut group = c.benchmark_group("update_1M_cells");
    group.throughput(Throughput::Bytes(bytes));
    group.sample_size(30);
    group.bench_function("update_after_miss", |b| {
        b.iter_batched_ref(
            || belief.clone(),
            |bel| black_box(update_after_miss(bel, &layer, &[]).unwrap()),
            BatchSize::LargeInput,
        )
    });
    let src_p = belief.cells().clone();
    let mut dst_p = Array2::<f64>::zeros((N, N));
    let mut dst_d = Array2::<f64>::zeros((N, N));
    group.bench_function("plain_copy_of_mass_and_pod", |b| {
        b.iter(|| {
            dst_p
                .as_slice_mut()
                .unwrap()
                .copy_from_slice(src_p.as_slice().unwrap());
            dst_d
                .as_slice_mut()
                .unwrap()
                .copy_from_slice(pod_values.as_slice().unwrap());
            black_box((&dst_p, &dst_d));
        })
    });
    group.finish();
}

fn track(c: &mut Criterion) {
    let g = grid();
    let mut group = c.benchmark_group("track_pod_10k_fixes_1M_cells");
    group.sample_size(10);
    for (name, law, width) in [
        ("definite_range_W2km", DetectionLaw::DefiniteRange, 2000.0),
        ("exponential_W2km", DetectionLaw::Exponential, 2000.0),
        ("inverse_cube_W2km", DetectionLaw::InverseCube, 2000.0),
        // Narrower sweep: 2 x 2 sub-points in every cell within 1 km of the track.
        ("inverse_cube_W500m", DetectionLaw::InverseCube, 500.0),
    ] {
        let w = SweepWidth::new(width, &[]).unwrap();
        for (noise, label) in [
            (TrackNoise::Straight, "straight"),
            (TrackNoise::Noisy, "noisy"),
        ] {
            let t = bench_track(noise);
            let label = format!("{name}_{label}");
            group.bench_function(label, |b| {
                b.iter(|| black_box(track_pod(&g, &t, law, &w).unwrap()))
            });
        }
    }
    group.finish();
}

/// POD at 1 M particle positions (a deterministic scatter over the benchmark grid) for the
/// noisy benchmark track.
fn track_points(c: &mut Criterion) {
    let points: Vec<Coord<f64>> = (0..N * N)
        .map(|k| {
            let (i, j) = ((k / N) as f64, (k % N) as f64);
            Coord {
                x: 100.0 * j + 50.0 + 40.0 * (0.37 * k as f64).sin(),
                y: 100.0 * i + 50.0 + 40.0 * (0.53 * k as f64).cos(),
            }
        })
        .collect();
    let t = bench_track(TrackNoise::Noisy);
    let mut group = c.benchmark_group("track_pod_at_10k_fixes_1M_points");
    group.sample_size(10);
    for (name, law) in [
        ("exponential_W2km_noisy", DetectionLaw::Exponential),
        ("inverse_cube_W2km_noisy", DetectionLaw::InverseCube),
    ] {
        let w = SweepWidth::new(2000.0, &[]).unwrap();
        group.bench_function(name, |b| {
            b.iter(|| black_box(track_pod_at(&points, &t, law, &w).unwrap()))
        });
    }
    group.finish();
}

fn allocation(c: &mut Criterion) {
    let cells = prior();
    let effort = 2_000.0 * 1_250_000.0; // W = 2 km, 1250 km of track
    let out = optimal_allocation(&cells, 1e4, effort).unwrap();
    eprintln!(
        "optimal allocation on 1M cells: lambda {:.6e}, POS {:.6}, passes over data {}",
        out.lambda, out.pos, out.passes_over_data
    );
    let mut group = c.benchmark_group("allocation_1M_cells");
    group.sample_size(20);
    group.bench_function("optimal_allocation", |b| {
        b.iter(|| black_box(optimal_allocation(&cells, 1e4, effort).unwrap()))
    });
    group.finish();
}

criterion_group!(benches, update, allocation, track, track_points);
criterion_main!(benches);
