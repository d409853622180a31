//! Gridded current from a forecast file against the same values as a CSV lattice: 20 000
//! particles x 24 hourly steps through a 41 x 41 lattice of 25 hourly times. The CSV lattice
//! path builds the field with `GriddedField::from_samples`, a forecast file with
//! `GriddedField::on_lattice` (box refused beyond its edges, and once with uneven times);
//! the forecast paths should stay within 2x of the CSV path.
//!
//! Run: `cargo bench -p seekgrid-drift --bench forecast`

use chrono::{Duration, TimeZone, Utc};
use criterion::{Criterion, Throughput, criterion_group, criterion_main};
use seekgrid_core::Frame;
use seekgrid_core::units::SECONDS_PER_HOUR;
use seekgrid_drift::*;
use std::hint::black_box;

const PARTICLES: usize = 20_000;
const STEPS: usize = 24;
const N: usize = 41;

fn uv(lon: f64, lat: f64, h: f64) -> (f64, f64) {
    (
        0.4 + 0.3 * (lon * 7.0 + h * 0.2).sin(),
        -0.2 + 0.25 * (lat * 5.0 - h * 0.1).cos(),
    )
}

fn axis(start_deg: f64) -> RegularAxis {
    RegularAxis {
        start_deg,
        step_deg: 0.05,
        n: N,
    }
}

fn fields(hours: &[f64]) -> (Vec<GridSample>, Vec<f64>, Vec<f64>) {
    let t0 = Utc.with_ymd_and_hms(2024, 5, 1, 0, 0, 0).unwrap();
    let (mut samples, mut u, mut v) = (Vec::new(), Vec::new(), Vec::new());
    for &h in hours {
        for j in 0..N {
            for i in 0..N {
                let (lon, lat) = (-31.5 + 0.05 * i as f64, 19.2 + 0.05 * j as f64);
                let (a, b) = uv(lon, lat, h);
                samples.push(GridSample {
                    lon_deg: lon,
                    lat_deg: lat,
                    time: t0 + Duration::minutes((h * 60.0) as i64),
                    u_kn: a,
                    v_kn: b,
                });
                u.push(a);
                v.push(b);
            }
        }
    }
    (samples, u, v)
}

fn scenario(current: GriddedField) -> DriftScenario {
    let t0 = Utc.with_ymd_and_hms(2024, 5, 1, 0, 0, 0).unwrap();
    DriftScenario {
        lkp_lon_lat: (-30.5, 20.2),
        position_sigma_m: 1000.0,
        adrift_earliest: t0,
        adrift_latest: t0 + Duration::hours(2),
        current: Environment::Gridded(current),
        wind: Environment::Constant(VectorEstimate {
            speed_kn: 12.0,
            direction_deg: 250.0,
            speed_sigma_kn: 2.0,
            direction_sigma_deg: 15.0,
        }),
        leeway: Leeway {
            downwind_slope: 0.03,
            ..Leeway::NONE
        },
        diffusivity_m2_s: 1.0,
        particles: PARTICLES,
        seed: 1,
    }
}

fn bench(c: &mut Criterion) {
    let t0 = Utc.with_ymd_and_hms(2024, 5, 1, 0, 0, 0).unwrap();
    let even: Vec<f64> = (0..=STEPS).map(|h| h as f64).collect();
    // The same span with a 90-minute step in the middle hours: uneven times.
    let uneven: Vec<f64> = (0..=STEPS)
        .map(|h| h as f64)
        .filter(|h| !(8.0..16.0).contains(h) || h % 3.0 == 0.0 || *h == 8.0)
        .collect();
    let (samples, u, v) = fields(&even);
    let times = |hours: &[f64]| -> Vec<_> {
        hours
            .iter()
            .map(|h| t0 + Duration::minutes((h * 60.0) as i64))
            .collect()
    };
    let csv = GriddedField::from_samples(&samples, 0.1, 10.0).unwrap();
    let forecast = GriddedField::on_lattice(
        axis(-31.5),
        axis(19.2),
        &times(&even),
        u,
        v,
        (0.1, 10.0),
        BeyondBox::Refuse,
        "bench",
    )
    .unwrap();
    let (_, uu, vu) = fields(&uneven);
    let forecast_uneven = GriddedField::on_lattice(
        axis(-31.5),
        axis(19.2),
        &times(&uneven),
        uu,
        vu,
        (0.1, 10.0),
        BeyondBox::Refuse,
        "bench",
    )
    .unwrap();
    let frame = Frame::for_position(-30.5, 20.2).unwrap();
    let options = SimulationOptions {
        end: t0 + Duration::hours(STEPS as i64),
        record_every_s: SECONDS_PER_HOUR,
        step_s: Some(SECONDS_PER_HOUR),
        also_record_at: Vec::new(),
    };
    let mut group = c.benchmark_group("gridded_current");
    group.sample_size(10);
    group.throughput(Throughput::Elements((PARTICLES * STEPS) as u64));
    for (name, field) in [
        ("csv_lattice", csv),
        ("forecast_lattice", forecast),
        ("forecast_lattice_uneven_times", forecast_uneven),
    ] {
        let s = scenario(field);
        group.bench_function(name, |b| {
            b.iter(|| {
                let run = simulate(black_box(&s), &frame, None, &options, &|_, _| {}).unwrap();
                black_box(run.len())
            })
        });
    }
    group.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
