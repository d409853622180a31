//! Seeded, thread-count independent results; the automatic step; progress reports.

use crate::common::*;
use geo::{Coord, MultiPolygon, Rect};
use seekgrid_core::units::{SECONDS_PER_HOUR, hours_to_s};
use seekgrid_drift::*;
use std::sync::Mutex;

fn everything_uncertain(particles: usize) -> DriftScenario {
    let wind: Vec<(Time, VectorEstimate)> = (0..=8)
        .map(|h| {
            (
                hours(h as f64),
                VectorEstimate {
                    speed_kn: 8.0 + 2.0 * h as f64,
                    direction_deg: 200.0 + 15.0 * h as f64,
                    speed_sigma_kn: 3.0,
                    direction_sigma_deg: 20.0,
                },
            )
        })
        .collect();
    let current: Vec<(Time, VectorEstimate)> = (0..=4)
        .map(|h| {
            (
                hours(2.0 * h as f64),
                VectorEstimate {
                    speed_kn: 0.3 + 0.1 * h as f64,
                    direction_deg: 60.0 - 20.0 * h as f64,
                    speed_sigma_kn: 0.1,
                    direction_sigma_deg: 15.0,
                },
            )
        })
        .collect();
    DriftScenario {
        lkp_lon_lat: LKP,
        position_sigma_m: 500.0,
        adrift_earliest: t0(),
        adrift_latest: hours(1.5),
        current: Environment::Series(current),
        wind: Environment::Series(wind),
        leeway: Leeway {
            downwind_slope: 0.035,
            downwind_offset_kn: 0.05,
            downwind_sigma_kn: 0.05,
            crosswind_slope: 0.012,
            crosswind_offset_kn: 0.02,
            crosswind_sigma_kn: 0.03,
            jibe_per_h: 0.1,
        },
        diffusivity_m2_s: 0.0,
        particles,
        seed: 99,
    }
}

fn options(step_s: Option<f64>) -> SimulationOptions {
    SimulationOptions {
        end: hours(8.0),
        record_every_s: SECONDS_PER_HOUR,
        step_s,
        also_record_at: Vec::new(),
    }
}

#[test]
fn the_same_seed_gives_bit_identical_output_on_one_and_two_threads() {
    let mut s = everything_uncertain(3000);
    s.diffusivity_m2_s = 5.0;
    let f = frame();
    let lkp = f.to_xy(LKP.0, LKP.1);
    let land = LandMask::new(MultiPolygon(vec![
        Rect::new(
            Coord {
                x: lkp.x - 3000.0,
                y: lkp.y + 2000.0,
            },
            Coord {
                x: lkp.x + 3000.0,
                y: lkp.y + 4000.0,
            },
        )
        .to_polygon(),
    ]));
    let go = |threads: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap()
            .install(|| simulate(&s, &f, Some(&land), &options(None), &|_, _| {}).unwrap())
    };
    let one = go(1);
    let two = go(2);
    assert_eq!(one.step_s(), two.step_s());
    for h in [0.0, 0.7, 3.0, 8.0] {
        let (a, b) = (one.positions_at(hours(h)), two.positions_at(hours(h)));
        assert_eq!(a, b, "differs at {h} h");
    }
    assert!(one.positions_at(hours(8.0)).stranded.iter().any(|x| *x));
    let mut other = s.clone();
    other.seed = 100;
    let three = simulate(&other, &f, Some(&land), &options(None), &|_, _| {}).unwrap();
    assert_ne!(three.positions_at(hours(8.0)), one.positions_at(hours(8.0)));
}

#[test]
fn halving_the_automatic_step_moves_the_mean_by_less_than_one_percent_of_the_spread() {
    // The property promised by simulate(): a wind veering 90° every 4 h while it strengthens
    // and eases, a turning current, every error switched on, jibes; compared at every record.
    // Samples are 4 h apart so that steps are not cut short at sample times.
    let mut s = everything_uncertain(4000);
    let wind = [(0.0, 10.0, 180.0), (4.0, 25.0, 270.0), (8.0, 8.0, 360.0)];
    s.wind = Environment::Series(
        wind.iter()
            .map(|&(h, speed_kn, direction_deg)| {
                (
                    hours(h),
                    VectorEstimate {
                        speed_kn,
                        direction_deg,
                        speed_sigma_kn: 3.0,
                        direction_sigma_deg: 20.0,
                    },
                )
            })
            .collect(),
    );
    s.current = Environment::Series(vec![
        (hours(0.0), exact(0.6, 0.0)),
        (hours(8.0), exact(0.6, 180.0)),
    ]);
    let f = frame();
    let auto = simulate(&s, &f, None, &options(None), &|_, _| {}).unwrap();
    let h = auto.step_s();
    let half = simulate(&s, &f, None, &options(Some(h / 2.0)), &|_, _| {}).unwrap();
    let w = auto.initial_weights();
    for t in auto.record_times().into_iter().skip(1) {
        let a = auto.spread_at(t, &w).unwrap();
        let b = half.spread_at(t, &w).unwrap();
        let shift = (a.mean.x - b.mean.x).hypot(a.mean.y - b.mean.y);
        assert!(
            shift < 0.01 * b.rms_radius_m(),
            "{t}: shift {shift} m, spread {}",
            b.rms_radius_m()
        );
    }
    // The test can fail: a coarse 4 h step does not meet the property here.
    let coarse_opts = SimulationOptions {
        record_every_s: hours_to_s(8.0),
        ..options(Some(hours_to_s(4.0)))
    };
    let half_opts = SimulationOptions {
        step_s: Some(hours_to_s(2.0)),
        ..coarse_opts.clone()
    };
    let coarse = simulate(&s, &f, None, &coarse_opts, &|_, _| {}).unwrap();
    let finer = simulate(&s, &f, None, &half_opts, &|_, _| {}).unwrap();
    let (a, b) = (
        coarse.spread_at(hours(8.0), &w).unwrap(),
        finer.spread_at(hours(8.0), &w).unwrap(),
    );
    let shift = (a.mean.x - b.mean.x).hypot(a.mean.y - b.mean.y);
    assert!(shift > 0.01 * b.rms_radius_m(), "coarse shift {shift} m");
    assert!(h < hours_to_s(4.0));
}

#[test]
fn progress_is_reported_once_per_chunk_up_to_the_total() {
    let s = everything_uncertain(2500);
    let calls = Mutex::new(Vec::new());
    let run = simulate(
        &s,
        &frame(),
        None,
        &options(Some(SECONDS_PER_HOUR)),
        &|done, total| {
            calls.lock().unwrap().push((done, total));
        },
    )
    .unwrap();
    let mut calls = calls.into_inner().unwrap();
    calls.sort();
    assert_eq!(calls.len(), 3);
    assert_eq!(calls.last(), Some(&(2500, 2500)));
    assert!(calls.iter().all(|(d, t)| *t == 2500 && *d <= 2500));
    assert_eq!(run.len(), 2500);
}
