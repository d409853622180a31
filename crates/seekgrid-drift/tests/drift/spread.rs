//! Mean, covariance and containment ellipses of a cloud.

use crate::common::*;
use approx::assert_abs_diff_eq;
use geo::Coord;
use seekgrid_core::units::SECONDS_PER_HOUR;
use seekgrid_drift::*;

#[test]
fn containment_factors_are_the_chi_square_two_dof_radii() {
    // docs/references.md §2, computed: radius holding q = sigma sqrt(-2 ln(1 - q)).
    assert_abs_diff_eq!(
        containment_radius_factor(0.5).unwrap(),
        1.177410,
        epsilon = 1e-6
    );
    assert_abs_diff_eq!(
        containment_radius_factor(0.9).unwrap(),
        2.145966,
        epsilon = 1e-6
    );
    assert_abs_diff_eq!(
        containment_radius_factor(0.95).unwrap(),
        2.447747,
        epsilon = 1e-6
    );
    assert!(containment_radius_factor(1.0).is_err());
    assert!(containment_radius_factor(0.0).is_err());
}

#[test]
fn an_isotropic_gaussian_cloud_has_a_50_percent_circle_of_1_177_sigma() {
    // docs/references.md §2, computed: 50 % radius = 1.177410 sigma. Cloud: position error only,
    // sigma 1000 m (times the point scale in the working frame), N = 20 000: the estimated
    // sigma has a standard error of 0.5 %, so 2 % is four of them.
    let mut s = scenario(
        Environment::Constant(exact(0.0, 0.0)),
        Environment::Constant(exact(0.0, 0.0)),
        Leeway::NONE,
    );
    s.position_sigma_m = 1000.0;
    s.particles = 20_000;
    let run = run(&s, 1.0, SECONDS_PER_HOUR, None);
    let spread = run.spread_at(hours(1.0), &run.initial_weights()).unwrap();
    let f = frame();
    let lkp = f.to_xy(LKP.0, LKP.1);
    let k_scale = {
        let a = f.to_xy(LKP.0, LKP.1 - 1e-4);
        let b = f.to_xy(LKP.0, LKP.1 + 1e-4);
        use geo::{Distance, Geodesic, Point};
        (b.x - a.x).hypot(b.y - a.y)
            / Geodesic.distance(
                Point::new(LKP.0, LKP.1 - 1e-4),
                Point::new(LKP.0, LKP.1 + 1e-4),
            )
    };
    let sigma = 1000.0 * k_scale;
    let e = spread.ellipse(0.5).unwrap();
    assert!(
        (e.semi_major_m / (1.177410 * sigma) - 1.0).abs() < 0.02,
        "{e:?}"
    );
    assert!(
        (e.semi_minor_m / (1.177410 * sigma) - 1.0).abs() < 0.02,
        "{e:?}"
    );
    assert!((spread.mean.x - lkp.x).abs() < 4.0 * sigma / (20_000f64).sqrt());
    assert!((spread.mean.y - lkp.y).abs() < 4.0 * sigma / (20_000f64).sqrt());
    // And it holds about half of the particles (binomial: 4 sd = 1.4 %).
    let snap = run.positions_at(hours(1.0));
    let r = 1.177410 * sigma;
    let inside = (0..run.len())
        .filter(|&i| (snap.x_m[i] - lkp.x).hypot(snap.y_m[i] - lkp.y) <= r)
        .count() as f64
        / run.len() as f64;
    assert_abs_diff_eq!(inside, 0.5, epsilon = 0.014);
}

#[test]
fn the_ellipse_follows_the_covariance_axes() {
    // computed: cov diag(4, 1) -> major axis 2k along grid east; the same turned by 30°
    // counter-clockwise (grid bearing 60°) keeps its axes.
    let s = Spread {
        mean: Coord { x: 10.0, y: 20.0 },
        cov: [[4.0, 0.0], [0.0, 1.0]],
    };
    let k = containment_radius_factor(0.9).unwrap();
    let e = s.ellipse(0.9).unwrap();
    assert_abs_diff_eq!(e.semi_major_m, 2.0 * k, epsilon = 1e-12);
    assert_abs_diff_eq!(e.semi_minor_m, k, epsilon = 1e-12);
    assert_abs_diff_eq!(e.major_axis_grid_bearing_deg, 90.0, epsilon = 1e-12);
    let (c, sn) = (30f64.to_radians().cos(), 30f64.to_radians().sin());
    let rot = Spread {
        mean: s.mean,
        cov: [
            [4.0 * c * c + sn * sn, 3.0 * c * sn],
            [3.0 * c * sn, 4.0 * sn * sn + c * c],
        ],
    };
    let e = rot.ellipse(0.9).unwrap();
    assert_abs_diff_eq!(e.semi_major_m, 2.0 * k, epsilon = 1e-12);
    assert_abs_diff_eq!(e.major_axis_grid_bearing_deg, 60.0, epsilon = 1e-9);
    // Its boundary is closed and every point is at Mahalanobis distance k.
    let ring = e.boundary(36);
    assert_eq!(ring.first(), ring.last());
    let det = rot.cov[0][0] * rot.cov[1][1] - rot.cov[0][1] * rot.cov[1][0];
    for p in &ring {
        let (dx, dy) = (p.x - 10.0, p.y - 20.0);
        let m2 = (rot.cov[1][1] * dx * dx - 2.0 * rot.cov[0][1] * dx * dy
            + rot.cov[0][0] * dy * dy)
            / det;
        assert_abs_diff_eq!(m2.sqrt(), k, epsilon = 1e-9);
    }
}

#[test]
fn weights_move_the_mean_toward_the_heavier_particles() {
    let s = Spread::of_points(&[0.0, 10.0], &[0.0, 0.0], &[3.0, 1.0]).unwrap();
    assert_abs_diff_eq!(s.mean.x, 2.5, epsilon = 1e-12);
    // Weighted population variance: 0.75 * 2.5^2 + 0.25 * 7.5^2 = 18.75.
    assert_abs_diff_eq!(s.cov[0][0], 18.75, epsilon = 1e-12);
}
