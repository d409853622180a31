//! Shared builders for the drift tests.

use chrono::{Duration, TimeZone, Utc};
use geo::Coord;
use seekgrid_core::Frame;
use seekgrid_core::units::METRES_PER_NM;
use seekgrid_core::units::hours_to_s;
use seekgrid_drift::*;

/// Last known position used by most tests: 2.5 degrees east of the central meridian of its UTM
/// zone (25, 33°W), so the meridian convergence (about 0.86 degrees) and the point scale
/// (about 1.0004) are far from trivial.
pub const LKP: (f64, f64) = (-30.5, 20.2);

pub fn t0() -> Time {
    Utc.with_ymd_and_hms(2024, 5, 1, 6, 0, 0).unwrap()
}

pub fn hours(h: f64) -> Time {
    t0() + Duration::milliseconds((hours_to_s(h) * 1000.0).round() as i64)
}

pub fn frame() -> Frame {
    Frame::for_position(LKP.0, LKP.1).unwrap()
}

/// A vector without error.
pub fn exact(speed_kn: f64, direction_deg: f64) -> VectorEstimate {
    VectorEstimate {
        speed_kn,
        direction_deg,
        speed_sigma_kn: 0.0,
        direction_sigma_deg: 0.0,
    }
}

/// A leeway with only a downwind part, without error.
pub fn downwind_only(slope: f64, offset_kn: f64) -> Leeway {
    Leeway {
        downwind_slope: slope,
        downwind_offset_kn: offset_kn,
        ..Leeway::NONE
    }
}

/// A scenario with every error zero.
pub fn scenario(current: Environment, wind: Environment, leeway: Leeway) -> DriftScenario {
    DriftScenario {
        lkp_lon_lat: LKP,
        position_sigma_m: 0.0,
        adrift_earliest: t0(),
        adrift_latest: t0(),
        current,
        wind,
        leeway,
        diffusivity_m2_s: 0.0,
        particles: 64,
        seed: 20240501,
    }
}

pub fn run(s: &DriftScenario, end_h: f64, record_every_s: f64, step_s: Option<f64>) -> DriftRun {
    let options = SimulationOptions {
        end: hours(end_h),
        record_every_s,
        step_s,
        also_record_at: Vec::new(),
    };
    simulate(s, &frame(), None, &options, &|_, _| {}).unwrap()
}

/// Undoes the working-frame map at the LKP (rotation by the convergence, point scale) to give
/// the true (east, north) displacement in nautical miles from the LKP.
pub fn true_displacement_nm(p: Coord<f64>) -> (f64, f64) {
    let f = frame();
    let lkp = f.to_xy(LKP.0, LKP.1);
    let g = f.convergence_deg(LKP.0, LKP.1).to_radians();
    // Point scale from the projection itself: grid distance of a 1e-4 degree step in latitude
    // over the ground length of the same step along a geodesic (geo's Karney geodesic).
    use geo::{Distance, Geodesic, Point};
    let d = 1e-4;
    let a = f.to_xy(LKP.0, LKP.1 - d);
    let b = f.to_xy(LKP.0, LKP.1 + d);
    let ground = Geodesic.distance(Point::new(LKP.0, LKP.1 - d), Point::new(LKP.0, LKP.1 + d));
    let k = (b.x - a.x).hypot(b.y - a.y) / ground;
    let (dx, dy) = ((p.x - lkp.x) / k, (p.y - lkp.y) / k);
    // Grid to true: turn the bearing back up by the convergence.
    let e = dx * g.cos() + dy * g.sin();
    let n = -dx * g.sin() + dy * g.cos();
    (e / METRES_PER_NM, n / METRES_PER_NM)
}

/// Geodesic distance (NM) and initial true bearing (degrees) from the LKP to a working-frame
/// point, through the frame's inverse projection and geo's Karney geodesic.
pub fn geodesic_from_lkp(p: Coord<f64>) -> (f64, f64) {
    use geo::{Bearing, Distance, Geodesic, Point};
    let (lon, lat) = frame().to_lon_lat(p);
    let a = Point::new(LKP.0, LKP.1);
    let b = Point::new(lon, lat);
    (
        Geodesic.distance(a, b) / METRES_PER_NM,
        Geodesic.bearing(a, b),
    )
}

/// The working-frame map at the LKP, built independently of the crate: a true (east, north)
/// velocity in knots to grid metres per second (convergence from the frame, point scale from
/// the projection over a Karney geodesic).
pub fn true_kn_to_grid_mps(e_kn: f64, n_kn: f64) -> Coord<f64> {
    use geo::{Distance, Geodesic, Point};
    let f = frame();
    let g = f.convergence_deg(LKP.0, LKP.1).to_radians();
    let d = 1e-4;
    let a = f.to_xy(LKP.0, LKP.1 - d);
    let b = f.to_xy(LKP.0, LKP.1 + d);
    let ground = Geodesic.distance(Point::new(LKP.0, LKP.1 - d), Point::new(LKP.0, LKP.1 + d));
    let k = (b.x - a.x).hypot(b.y - a.y) / ground * seekgrid_core::units::MPS_PER_KNOT;
    Coord {
        x: k * (e_kn * g.cos() - n_kn * g.sin()),
        y: k * (e_kn * g.sin() + n_kn * g.cos()),
    }
}
