//! Leeway divergence and jibing.

use crate::common::*;
use approx::assert_abs_diff_eq;
use geo::Coord;
use seekgrid_core::units::SECONDS_PER_HOUR;
use seekgrid_drift::*;

#[test]
fn the_two_leeway_sides_separate_by_twice_the_crosswind_drift() {
    // docs/references.md §5 (concept found: SLSNSW SOP, MSC/Circ.999; geometry computed): two
    // datums at ±30° from downwind, 0.5 kn of leeway, 6 h -> separation 2 |L| t sin 30° =
    // 3.0 NM. Here downwind 0.5 cos 30° and crosswind 0.5 sin 30° = 0.25 kn, wind from 000°.
    let lw = Leeway {
        downwind_offset_kn: 0.5 * 30f64.to_radians().cos(),
        crosswind_offset_kn: 0.25,
        ..Leeway::NONE
    };
    let mut s = scenario(
        Environment::Constant(exact(0.0, 0.0)),
        Environment::Constant(exact(10.0, 0.0)),
        lw,
    );
    s.particles = 2000;
    let run = run(&s, 6.0, SECONDS_PER_HOUR, None);
    let snap = run.positions_at(hours(6.0));
    let mut east = Vec::new();
    for i in 0..run.len() {
        let (e, n) = true_displacement_nm(Coord {
            x: snap.x_m[i],
            y: snap.y_m[i],
        });
        // Downwind is south: 0.433 kn x 6 h.
        assert_abs_diff_eq!(n, -6.0 * 0.5 * 30f64.to_radians().cos(), epsilon = 1e-9);
        assert_abs_diff_eq!(e.abs(), 1.5, epsilon = 1e-9);
        east.push(e);
    }
    let right = east.iter().filter(|e| **e < 0.0).count();
    let left = east.iter().filter(|e| **e > 0.0).count();
    let sep = east.iter().cloned().fold(f64::MIN, f64::max)
        - east.iter().cloned().fold(f64::MAX, f64::min);
    assert_abs_diff_eq!(sep, 3.0, epsilon = 1e-9);
    // Sides drawn 50/50: binomial standard deviation sqrt(2000)/2 = 22; four of them.
    assert!(
        (right as i64 - 1000).abs() < 90,
        "{right} right, {left} left"
    );
    assert_eq!(right + left, 2000);
}

#[test]
fn jibing_objects_spread_across_the_wind_like_a_telegraph_process() {
    // computed: with side flips at rate lambda (Poisson), side(t) side(s) has mean
    // exp(-2 lambda |t - s|), so the crosswind displacement X = c * integral of side has
    // variance 2 c^2 [T / a - (1 - exp(-a T)) / a^2], a = 2 lambda. c = 0.5 kn,
    // lambda = 0.5 per h, T = 6 h -> 2.501239 NM^2. N = 20 000; 5 % is about 4 standard errors.
    let lw = Leeway {
        crosswind_offset_kn: 0.5,
        jibe_per_h: 0.5,
        ..Leeway::NONE
    };
    let mut s = scenario(
        Environment::Constant(exact(0.0, 0.0)),
        Environment::Constant(exact(10.0, 0.0)),
        lw,
    );
    s.particles = 20_000;
    let run = run(&s, 6.0, SECONDS_PER_HOUR, None);
    let snap = run.positions_at(hours(6.0));
    let east: Vec<f64> = (0..run.len())
        .map(|i| {
            true_displacement_nm(Coord {
                x: snap.x_m[i],
                y: snap.y_m[i],
            })
            .0
        })
        .collect();
    let n = east.len() as f64;
    let mean = east.iter().sum::<f64>() / n;
    let var = east.iter().map(|e| (e - mean).powi(2)).sum::<f64>() / (n - 1.0);
    let (a, t, c) = (1.0_f64, 6.0_f64, 0.5_f64);
    let expect = 2.0 * c * c * (t / a - (1.0 - (-a * t).exp()) / (a * a));
    assert_abs_diff_eq!(expect, 2.501239, epsilon = 1e-6);
    assert!((var / expect - 1.0).abs() < 0.05, "{var} vs {expect}");
    assert!(mean.abs() < 0.05, "{mean}");
    // Jibing objects end up between the two sides, not only on them.
    assert!(east.iter().filter(|e| e.abs() < 2.9).count() > 10_000);
}
