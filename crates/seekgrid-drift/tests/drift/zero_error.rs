//! With every error zero, each particle moves exactly (current + leeway) x time.

use crate::common::*;
use approx::assert_abs_diff_eq;
use geo::Coord;
use seekgrid_core::units::{SECONDS_PER_HOUR, hours_to_s};
use seekgrid_drift::*;

#[test]
fn drift_with_no_error_is_the_vector_sum_of_current_and_leeway_times_time() {
    // found: Surf Life Saving NSW SOP LS10.21; JP 3-50 §512-515 (docs/references.md §5):
    // TWC 0.8 kn toward 090°, LW 0.5 kn toward 045°, 6 h -> (E 6.9213, N 2.1213) NM,
    // 7.2391 NM toward 072.96°. Leeway: slope 0, offset 0.5 kn, wind from 225° so that
    // downwind is 045°.
    let s = scenario(
        Environment::Constant(exact(0.8, 90.0)),
        Environment::Constant(exact(12.0, 225.0)),
        downwind_only(0.0, 0.5),
    );
    let run = run(&s, 6.0, SECONDS_PER_HOUR, None);
    let snap = run.positions_at(hours(6.0));
    for i in 0..run.len() {
        let p = Coord {
            x: snap.x_m[i],
            y: snap.y_m[i],
        };
        let (e, n) = true_displacement_nm(p);
        assert_abs_diff_eq!(e, 6.9213, epsilon = 1e-4);
        assert_abs_diff_eq!(n, 2.1213, epsilon = 1e-4);
        assert_abs_diff_eq!(e.hypot(n), 7.2391, epsilon = 1e-4);
        // Through the inverse projection and an ellipsoidal geodesic: the working-frame map is
        // taken at the LKP, so the point scale and convergence drift by ~1e-4 and ~0.04° over
        // these 13 km; hence the looser tolerances (a convergence sign error would be 1.7°).
        let (dist, bearing) = geodesic_from_lkp(p);
        assert_abs_diff_eq!(dist, 7.2391, epsilon = 1e-3);
        assert_abs_diff_eq!(bearing, 72.96, epsilon = 0.05);
        assert!(snap.adrift[i] && !snap.stranded[i]);
    }
}

#[test]
fn zero_error_drift_matches_the_vector_sum_for_any_current_and_wind() {
    // computed: the same vector sum as docs/references.md §5, for a spread of directions.
    for (cur_dir, wind_from, cur_kn, wind_kn, slope) in [
        (0.0, 0.0, 0.3, 15.0, 0.04),
        (137.0, 300.0, 1.2, 25.0, 0.02),
        (250.0, 45.0, 0.0, 8.0, 0.035),
        (359.0, 181.0, 2.0, 0.0, 0.05),
    ] {
        let s = scenario(
            Environment::Constant(exact(cur_kn, cur_dir)),
            Environment::Constant(exact(wind_kn, wind_from)),
            downwind_only(slope, 0.1),
        );
        let run = run(&s, 3.0, 1800.0, None);
        let snap = run.positions_at(hours(3.0));
        let (e, n) = true_displacement_nm(Coord {
            x: snap.x_m[0],
            y: snap.y_m[0],
        });
        let c = exact(cur_kn, cur_dir).velocity_kn(Convention::Toward);
        let down = (wind_from + 180.0_f64).to_radians();
        let lw = slope * wind_kn + 0.1;
        let expect_e = 3.0 * (c.0 + lw * down.sin());
        let expect_n = 3.0 * (c.1 + lw * down.cos());
        assert_abs_diff_eq!(e, expect_e, epsilon = 1e-6);
        assert_abs_diff_eq!(n, expect_n, epsilon = 1e-6);
    }
}

#[test]
fn series_current_is_integrated_like_a_dense_reference() {
    // Slow reference: the piecewise-linear current summed over 1 s intervals (midpoint rule),
    // compared with the simulation at its automatic step. Steps end at the sample times, so
    // both are exact for a current linear between samples: they agree to 1 mm. computed.
    let samples: Vec<(Time, VectorEstimate)> = vec![
        (hours(0.5), exact(0.4, 10.0)),
        (hours(1.7), exact(1.1, 95.0)),
        (hours(2.2), exact(0.2, 200.0)),
        (hours(4.0), exact(0.9, 300.0)),
    ];
    let s = scenario(
        Environment::Series(samples.clone()),
        Environment::Constant(exact(0.0, 0.0)),
        Leeway::NONE,
    );
    let run = run(&s, 5.0, 1800.0, None);
    let env = Environment::Series(samples);
    let (mut e, mut n) = (0.0, 0.0);
    for k in 0..hours_to_s(5.0) as i64 {
        let t = t0() + chrono::Duration::milliseconds(k * 1000 + 500);
        let (ve, vn) = env.velocity_mps(LKP.0, LKP.1, t, Convention::CURRENT);
        e += ve;
        n += vn;
    }
    let snap = run.positions_at(hours(5.0));
    let (se, sn) = true_displacement_nm(Coord {
        x: snap.x_m[0],
        y: snap.y_m[0],
    });
    let nm = seekgrid_core::units::METRES_PER_NM;
    assert_abs_diff_eq!(se, e / nm, epsilon = 1e-3 / nm);
    assert_abs_diff_eq!(sn, n / nm, epsilon = 1e-3 / nm);
}

#[test]
fn rotating_wind_leeway_is_integrated_like_a_dense_reference() {
    // A wind veering from 180° to 360° over 6 h while strengthening: leeway is nonlinear in the
    // wind, so this exercises the second-order step. Reference: explicit midpoint with 1 s
    // steps written out here. computed.
    let samples: Vec<(Time, VectorEstimate)> = (0..=6)
        .map(|h| {
            (
                hours(h as f64),
                exact(10.0 + 3.0 * h as f64, 180.0 + 30.0 * h as f64),
            )
        })
        .collect();
    let lw = Leeway {
        downwind_slope: 0.04,
        downwind_offset_kn: 0.05,
        crosswind_slope: 0.0,
        crosswind_offset_kn: 0.0,
        ..Leeway::NONE
    };
    let s = scenario(
        Environment::Constant(exact(0.3, 45.0)),
        Environment::Series(samples.clone()),
        lw,
    );
    let run = run(&s, 6.0, SECONDS_PER_HOUR, None);
    let wind = Environment::Series(samples);
    let cur = exact(0.3, 45.0).velocity_mps(Convention::CURRENT);
    let leeway_mps = |t: Time| {
        let (we, wn) = wind.velocity_mps(LKP.0, LKP.1, t, Convention::WIND);
        let u = we.hypot(wn);
        let u_kn = u / seekgrid_core::units::MPS_PER_KNOT;
        let l = (0.04 * u_kn + 0.05) * seekgrid_core::units::MPS_PER_KNOT;
        (cur.0 + l * we / u, cur.1 + l * wn / u)
    };
    let (mut e, mut n) = (0.0, 0.0);
    for k in 0..hours_to_s(6.0) as i64 {
        let (ve, vn) = leeway_mps(t0() + chrono::Duration::milliseconds(k * 1000 + 500));
        e += ve;
        n += vn;
    }
    let snap = run.positions_at(hours(6.0));
    let (se, sn) = true_displacement_nm(Coord {
        x: snap.x_m[0],
        y: snap.y_m[0],
    });
    let nm = seekgrid_core::units::METRES_PER_NM;
    // The automatic step holds the mean to 1 m for a cloud without spread.
    assert_abs_diff_eq!(se, e / nm, epsilon = 3.0 / nm);
    assert_abs_diff_eq!(sn, n / nm, epsilon = 3.0 / nm);
}
