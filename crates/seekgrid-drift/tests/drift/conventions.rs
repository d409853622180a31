//! Direction conventions worked by hand.

use crate::common::*;
use approx::assert_abs_diff_eq;
use geo::Coord;
use seekgrid_core::units::SECONDS_PER_HOUR;
use seekgrid_drift::*;

#[test]
fn wind_from_270_pushes_the_object_east() {
    // computed by hand: wind FROM 270° at 10 kn, downwind slope 0.03 -> 0.3 kn toward 090°.
    let s = scenario(
        Environment::Constant(exact(0.0, 0.0)),
        Environment::Constant(exact(10.0, 270.0)),
        downwind_only(0.03, 0.0),
    );
    let run = run(&s, 2.0, SECONDS_PER_HOUR, None);
    let snap = run.positions_at(hours(2.0));
    let (e, n) = true_displacement_nm(Coord {
        x: snap.x_m[0],
        y: snap.y_m[0],
    });
    assert_abs_diff_eq!(e, 0.6, epsilon = 1e-9);
    assert_abs_diff_eq!(n, 0.0, epsilon = 1e-9);
}

#[test]
fn current_toward_180_pushes_the_object_south() {
    // computed by hand: 1 kn toward 180° for 3 h -> 3 NM south.
    let s = scenario(
        Environment::Constant(exact(1.0, 180.0)),
        Environment::Constant(exact(0.0, 0.0)),
        Leeway::NONE,
    );
    let run = run(&s, 3.0, SECONDS_PER_HOUR, None);
    let snap = run.positions_at(hours(3.0));
    let (e, n) = true_displacement_nm(Coord {
        x: snap.x_m[0],
        y: snap.y_m[0],
    });
    assert_abs_diff_eq!(e, 0.0, epsilon = 1e-9);
    assert_abs_diff_eq!(n, -3.0, epsilon = 1e-9);
}

#[test]
fn velocity_functions_apply_the_current_and_wind_conventions() {
    let kn = seekgrid_core::units::MPS_PER_KNOT;
    let current = Environment::Constant(exact(2.0, 180.0));
    let (e, n) = current.velocity_mps(LKP.0, LKP.1, t0(), Convention::CURRENT);
    assert_abs_diff_eq!(e, 0.0, epsilon = 1e-12);
    assert_abs_diff_eq!(n, -2.0 * kn, epsilon = 1e-12);
    let wind = Environment::Constant(exact(10.0, 270.0));
    let (e, n) = wind.velocity_mps(LKP.0, LKP.1, t0(), Convention::WIND);
    assert_abs_diff_eq!(e, 10.0 * kn, epsilon = 1e-12);
    assert_abs_diff_eq!(n, 0.0, epsilon = 1e-12);
    assert_eq!(Convention::CURRENT, Convention::Toward);
    assert_eq!(Convention::WIND, Convention::From);
    assert_abs_diff_eq!(Convention::From.toward_bearing_deg(225.0), 45.0);
}

#[test]
fn series_interpolates_components_and_holds_its_ends() {
    // computed: halfway between 1 kn toward 000° and 1 kn toward 090° the (u, v) mean is
    // (0.5, 0.5) kn, not 1 kn toward 045°.
    let env = Environment::Series(vec![
        (hours(1.0), exact(1.0, 0.0)),
        (hours(3.0), exact(1.0, 90.0)),
    ]);
    let kn = seekgrid_core::units::MPS_PER_KNOT;
    let (e, n) = env.velocity_mps(LKP.0, LKP.1, hours(2.0), Convention::Toward);
    assert_abs_diff_eq!(e, 0.5 * kn, epsilon = 1e-12);
    assert_abs_diff_eq!(n, 0.5 * kn, epsilon = 1e-12);
    let (e, n) = env.velocity_mps(LKP.0, LKP.1, hours(0.0), Convention::Toward);
    assert_abs_diff_eq!((e, n).0, 0.0, epsilon = 1e-12);
    assert_abs_diff_eq!(n, kn, epsilon = 1e-12);
    let (e, _) = env.velocity_mps(LKP.0, LKP.1, hours(9.0), Convention::Toward);
    assert_abs_diff_eq!(e, kn, epsilon = 1e-12);
}
