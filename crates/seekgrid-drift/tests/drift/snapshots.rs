//! Positions between records, adrift times and weights.

use crate::common::*;
use approx::assert_abs_diff_eq;
use geo::Coord;
use seekgrid_core::units::{SECONDS_PER_HOUR, s_to_hours};
use seekgrid_drift::*;

#[test]
fn particles_wait_at_their_start_until_adrift_then_move() {
    // 1 kn toward 090° exactly; adrift times spread over 2 h. Between records positions_at
    // must reproduce 1 kn x (t - adrift) for every particle (the motion is linear).
    let mut s = scenario(
        Environment::Constant(exact(1.0, 90.0)),
        Environment::Constant(exact(0.0, 0.0)),
        Leeway::NONE,
    );
    s.adrift_latest = hours(2.0);
    s.particles = 200;
    let run = run(&s, 4.0, SECONDS_PER_HOUR, None);
    let adrift = run.adrift_times();
    assert!(adrift.iter().all(|t| *t >= t0() && *t <= hours(2.0)));
    let early = adrift.iter().filter(|t| **t < hours(1.0)).count();
    assert!(
        early > 60 && early < 140,
        "{early} of 200 adrift in the first hour"
    );
    for th in [0.0, 0.5, 1.0, 1.7, 2.0, 3.3, 4.0] {
        let snap = run.positions_at(hours(th));
        for (i, adrift_i) in adrift.iter().enumerate() {
            let since_h = s_to_hours((hours(th) - *adrift_i).as_seconds_f64()).max(0.0);
            let (e, n) = true_displacement_nm(Coord {
                x: snap.x_m[i],
                y: snap.y_m[i],
            });
            assert_abs_diff_eq!(e, since_h, epsilon = 1e-6);
            assert_abs_diff_eq!(n, 0.0, epsilon = 1e-6);
            assert_eq!(snap.adrift[i], hours(th) >= *adrift_i);
        }
    }
}

#[test]
fn times_outside_the_run_are_clamped_to_its_ends() {
    let s = scenario(
        Environment::Constant(exact(1.0, 0.0)),
        Environment::Constant(exact(0.0, 0.0)),
        Leeway::NONE,
    );
    let run = run(&s, 2.0, SECONDS_PER_HOUR, None);
    assert_eq!(run.positions_at(hours(-3.0)), run.positions_at(hours(0.0)));
    assert_eq!(run.positions_at(hours(9.0)), run.positions_at(hours(2.0)));
    assert_eq!(run.record_times(), vec![hours(0.0), hours(1.0), hours(2.0)]);
    assert_eq!(run.end(), hours(2.0));
}

#[test]
fn initial_weights_are_equal_and_sum_to_one() {
    let mut s = scenario(
        Environment::Constant(exact(1.0, 0.0)),
        Environment::Constant(exact(0.0, 0.0)),
        Leeway::NONE,
    );
    s.particles = 7;
    let run = run(&s, 1.0, SECONDS_PER_HOUR, None);
    let w = run.initial_weights();
    assert_eq!(w.len(), 7);
    assert_abs_diff_eq!(
        seekgrid_core::neumaier_sum(w.iter().copied()),
        1.0,
        epsilon = 1e-15
    );
    assert!(w.iter().all(|x| *x == w[0]));
    let particles = run.positions_at(hours(1.0)).into_particles(w).unwrap();
    assert_eq!(particles.len(), 7);
}

#[test]
fn a_run_that_ends_at_its_start_keeps_the_start_positions() {
    let mut s = scenario(
        Environment::Constant(exact(1.0, 0.0)),
        Environment::Constant(exact(0.0, 0.0)),
        Leeway::NONE,
    );
    s.position_sigma_m = 100.0;
    let run = run(&s, 0.0, 600.0, None);
    let snap = run.positions_at(hours(0.0));
    assert_eq!(run.record_times(), vec![t0()]);
    assert!(snap.x_m.iter().any(|x| *x != snap.x_m[0]));
}

#[test]
fn extra_record_times_give_exact_positions_where_interpolation_would_cut_the_corner() {
    // computed: the current turns linearly from 1 kn toward 090° at 0 h to 1 kn toward 000° at
    // 2 h, so (u, v) = (1 - t/2, t/2) kn and the displacement at 1 h is (0.75, 0.25) nm; the
    // straight line between the records at 0 h and 2 h would put it at (0.5, 0.5) nm.
    let s = scenario(
        Environment::Series(vec![
            (hours(0.0), exact(1.0, 90.0)),
            (hours(2.0), exact(1.0, 0.0)),
        ]),
        Environment::Constant(exact(0.0, 0.0)),
        Leeway::NONE,
    );
    let position_at_1h = |also_record_at: Vec<Time>| {
        let options = SimulationOptions {
            end: hours(2.0),
            record_every_s: 7200.0,
            step_s: None,
            also_record_at,
        };
        let run = simulate(&s, &frame(), None, &options, &|_, _| {}).unwrap();
        let snap = run.positions_at(hours(1.0));
        (
            run.record_times(),
            true_displacement_nm(Coord {
                x: snap.x_m[0],
                y: snap.y_m[0],
            }),
        )
    };
    let (times, (e, n)) = position_at_1h(vec![hours(1.0), hours(-1.0), hours(5.0)]);
    assert_eq!(times, vec![hours(0.0), hours(1.0), hours(2.0)]);
    assert_abs_diff_eq!(e, 0.75, epsilon = 1e-6);
    assert_abs_diff_eq!(n, 0.25, epsilon = 1e-6);
    let (times, (e, n)) = position_at_1h(Vec::new());
    assert_eq!(times, vec![hours(0.0), hours(2.0)]);
    assert_abs_diff_eq!(e, 0.5, epsilon = 1e-6);
    assert_abs_diff_eq!(n, 0.5, epsilon = 1e-6);
}
