//! The random walk and the persistent environment errors.

use crate::common::*;
use approx::assert_abs_diff_eq;
use geo::Coord;
use seekgrid_core::units::{SECONDS_PER_HOUR, hours_to_s};
use seekgrid_drift::*;

fn true_offsets_m(run: &DriftRun, t: Time) -> (Vec<f64>, Vec<f64>) {
    let s = run.positions_at(t);
    let nm = seekgrid_core::units::METRES_PER_NM;
    s.x_m
        .iter()
        .zip(&s.y_m)
        .map(|(&x, &y)| {
            let (e, n) = true_displacement_nm(Coord { x, y });
            (e * nm, n * nm)
        })
        .unzip()
}

fn mean_var(v: &[f64]) -> (f64, f64) {
    let n = v.len() as f64;
    let m = v.iter().sum::<f64>() / n;
    (
        m,
        v.iter().map(|x| (x - m) * (x - m)).sum::<f64>() / (n - 1.0),
    )
}

#[test]
fn diffusion_alone_grows_the_variance_per_axis_as_2kt() {
    // common practice (Fickian diffusion, any transport textbook): a random walk with
    // diffusivity K has variance 2 K t per axis. N = 20 000: the sample variance has a relative
    // standard error of sqrt(2 / N) = 1 %, so 4 % is four standard errors.
    let mut s = scenario(
        Environment::Constant(exact(0.0, 0.0)),
        Environment::Constant(exact(0.0, 0.0)),
        Leeway::NONE,
    );
    s.diffusivity_m2_s = 10.0;
    s.particles = 20_000;
    let run = run(&s, 6.0, SECONDS_PER_HOUR, None);
    for h in [3.0, 6.0] {
        let expect = 2.0 * 10.0 * hours_to_s(h);
        let (e, n) = true_offsets_m(&run, hours(h));
        for axis in [&e, &n] {
            let (m, var) = mean_var(axis);
            assert!(
                (var / expect - 1.0).abs() < 0.04,
                "{h} h: {var} vs {expect}"
            );
            assert!(m.abs() < 4.0 * (expect / 20_000.0).sqrt(), "mean {m}");
        }
    }
}

#[test]
fn environment_errors_are_held_per_particle_so_the_spread_grows_linearly() {
    // The documented choice: each particle keeps its speed error for the whole run, so its
    // along-current displacement is (speed + z sigma) t and the spread is sigma t (0.2 kn x
    // 6 h = 1.2 NM), twice the spread at 3 h: not the sqrt(t) growth of independent errors.
    // computed; N = 20 000 gives a 0.5 % standard error on the standard deviation.
    let mut s = scenario(
        Environment::Constant(VectorEstimate {
            speed_sigma_kn: 0.2,
            ..exact(1.0, 90.0)
        }),
        Environment::Constant(exact(0.0, 0.0)),
        Leeway::NONE,
    );
    s.particles = 20_000;
    let run = run(&s, 6.0, SECONDS_PER_HOUR, None);
    let nm = seekgrid_core::units::METRES_PER_NM;
    let (e3, n3) = true_offsets_m(&run, hours(3.0));
    let (e6, _) = true_offsets_m(&run, hours(6.0));
    let (m6, v6) = mean_var(&e6);
    let (_, v3) = mean_var(&e3);
    assert_abs_diff_eq!(m6 / nm, 6.0, epsilon = 0.02);
    assert!(
        (v6.sqrt() / nm / 1.2 - 1.0).abs() < 0.02,
        "{}",
        v6.sqrt() / nm
    );
    assert_abs_diff_eq!(v6.sqrt() / v3.sqrt(), 2.0, epsilon = 1e-9);
    // Only the speed has an error: nothing moves north.
    assert!(n3.iter().all(|n| n.abs() < 1e-6));
}
