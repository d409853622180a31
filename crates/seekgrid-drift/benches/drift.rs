//! Drift benchmark: 1 M particles x 48 hourly steps (records every hour), current and wind as
//! hourly series of 49 samples with errors, leeway with crosswind, adrift window, random walk.
//! The NumPy model of the same run is `benches/baselines/drift_baseline.py`.
//!
//! Run: `cargo bench -p seekgrid-drift --bench drift`

use chrono::{Duration, TimeZone, Utc};
use criterion::{Criterion, Throughput, criterion_group, criterion_main};
use seekgrid_core::Frame;
use seekgrid_core::units::{SECONDS_PER_HOUR, nm_to_m};
use seekgrid_drift::*;
use std::hint::black_box;

const PARTICLES: usize = 1_000_000;
const STEPS: usize = 48;

/// The bench scenario; `drift_baseline.py` builds the same series from the same formulas.
fn scenario() -> DriftScenario {
    let t0 = Utc.with_ymd_and_hms(2024, 5, 1, 0, 0, 0).unwrap();
    let series = |speed: &dyn Fn(f64) -> f64, dir: &dyn Fn(f64) -> f64, ss: f64, sd: f64| {
        (0..=STEPS)
            .map(|h| {
                let h = h as f64;
                (
                    t0 + Duration::hours(h as i64),
                    VectorEstimate {
                        speed_kn: speed(h),
                        direction_deg: dir(h),
                        speed_sigma_kn: ss,
                        direction_sigma_deg: sd,
                    },
                )
            })
            .collect::<Vec<_>>()
    };
    DriftScenario {
        lkp_lon_lat: (-30.5, 20.2),
        position_sigma_m: nm_to_m(1.0),
        adrift_earliest: t0,
        adrift_latest: t0 + Duration::hours(3),
        current: Environment::Series(series(
            &|h| 0.5 + 0.3 * (h / 12.4 * std::f64::consts::TAU).sin(),
            &|h| 90.0 + 60.0 * (h / 12.4 * std::f64::consts::TAU).cos(),
            0.15,
            20.0,
        )),
        wind: Environment::Series(series(&|h| 12.0 + 0.2 * h, &|h| 200.0 + 2.5 * h, 3.0, 20.0)),
        leeway: Leeway {
            downwind_slope: 0.03,
            downwind_offset_kn: 0.05,
            downwind_sigma_kn: 0.05,
            crosswind_slope: 0.01,
            crosswind_offset_kn: 0.0,
            crosswind_sigma_kn: 0.03,
            jibe_per_h: 0.0,
        },
        diffusivity_m2_s: 1.0,
        particles: PARTICLES,
        seed: 1,
    }
}

fn bench(c: &mut Criterion) {
    let s = scenario();
    let frame = Frame::for_position(s.lkp_lon_lat.0, s.lkp_lon_lat.1).unwrap();
    let options = SimulationOptions {
        end: s.adrift_earliest + Duration::hours(STEPS as i64),
        record_every_s: SECONDS_PER_HOUR,
        step_s: Some(SECONDS_PER_HOUR),
        also_record_at: Vec::new(),
    };
    let mut group = c.benchmark_group("drift");
    group.sample_size(10);
    group.measurement_time(std::time::Duration::from_secs(20));
    group.throughput(Throughput::Elements((PARTICLES * STEPS) as u64));
    group.bench_function("series_1M_particles_48_hourly_steps", |b| {
        b.iter(|| {
            let run = simulate(black_box(&s), &frame, None, &options, &|_, _| {}).unwrap();
            black_box(run.len())
        })
    });
    group.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
