//! Land: particles strand on the shore and stay there.

use crate::common::*;
use approx::assert_abs_diff_eq;
use geo::{Coord, MultiPolygon, Rect};
use seekgrid_core::units::SECONDS_PER_HOUR;
use seekgrid_drift::*;

/// First entry of the segment p + t d, t in [0, 1], into an axis-aligned box (slab method):
/// the obviously correct reference for the coastline crossing.
fn slab_entry(p: Coord<f64>, d: Coord<f64>, min: Coord<f64>, max: Coord<f64>) -> Option<f64> {
    let (mut t0, mut t1) = (0.0_f64, 1.0_f64);
    for (p, d, lo, hi) in [(p.x, d.x, min.x, max.x), (p.y, d.y, min.y, max.y)] {
        if d == 0.0 {
            if p < lo || p > hi {
                return None;
            }
        } else {
            let (a, b) = ((lo - p) / d, (hi - p) / d);
            t0 = t0.max(a.min(b));
            t1 = t1.min(a.max(b));
        }
    }
    (t0 <= t1).then_some(t0)
}

fn island(center: Coord<f64>, half_m: f64) -> (LandMask, Coord<f64>, Coord<f64>) {
    let min = Coord {
        x: center.x - half_m,
        y: center.y - half_m,
    };
    let max = Coord {
        x: center.x + half_m,
        y: center.y + half_m,
    };
    let poly = Rect::new(min, max).to_polygon();
    (LandMask::new(MultiPolygon(vec![poly])), min, max)
}

fn heading_east(particles: usize) -> DriftScenario {
    let mut s = scenario(
        Environment::Constant(exact(1.0, 90.0)),
        Environment::Constant(exact(0.0, 0.0)),
        Leeway::NONE,
    );
    s.position_sigma_m = 800.0;
    s.particles = particles;
    s
}

#[test]
fn particles_heading_into_an_island_stop_on_its_shore_flagged_and_never_inside() {
    // A 2 km square island 5 km east of the LKP; 1 kn toward 090° for 6 h (11 km). Each
    // particle moves on a straight line, so the reference is the free run's segment clipped
    // at the square by the slab method. computed.
    let s = heading_east(2000);
    let f = frame();
    let lkp = f.to_xy(LKP.0, LKP.1);
    let (land, min, max) = island(
        Coord {
            x: lkp.x + 5000.0,
            y: lkp.y,
        },
        1000.0,
    );
    let options = SimulationOptions {
        end: hours(6.0),
        record_every_s: 1800.0,
        step_s: None,
        also_record_at: Vec::new(),
    };
    let free = simulate(&s, &f, None, &options, &|_, _| {}).unwrap();
    let run = simulate(&s, &f, Some(&land), &options, &|_, _| {}).unwrap();
    let start = free.positions_at(hours(0.0));
    let free_end = free.positions_at(hours(6.0));
    let end = run.positions_at(hours(6.0));
    let mut stranded = 0;
    for i in 0..run.len() {
        let p = Coord {
            x: start.x_m[i],
            y: start.y_m[i],
        };
        let d = Coord {
            x: free_end.x_m[i] - p.x,
            y: free_end.y_m[i] - p.y,
        };
        let q = Coord {
            x: end.x_m[i],
            y: end.y_m[i],
        };
        match slab_entry(p, d, min, max) {
            Some(t) => {
                stranded += 1;
                assert!(end.stranded[i], "particle {i} should strand");
                let hit = p + d * t;
                // On the shore, 1 mm seaward (SHORE_SETBACK_M).
                assert_abs_diff_eq!(q.x, hit.x - 1e-3 * d.x / d.x.hypot(d.y), epsilon = 1e-6);
                assert_abs_diff_eq!(q.y, hit.y - 1e-3 * d.y / d.x.hypot(d.y), epsilon = 1e-6);
                // The entry point is on the west or south or north shore.
                let on_shore = (hit.x - min.x).abs() < 1e-6
                    || (hit.y - min.y).abs() < 1e-6
                    || (hit.y - max.y).abs() < 1e-6;
                assert!(on_shore, "{hit:?}");
            }
            None => {
                assert!(!end.stranded[i], "particle {i} should pass");
                assert_eq!((q.x, q.y), (free_end.x_m[i], free_end.y_m[i]));
            }
        }
    }
    // Both kinds occur (about 79 % of a 800 m normal lies within +-1 km).
    assert!(stranded > 1000 && stranded < 1900, "{stranded}");
    for t in run.record_times() {
        let snap = run.positions_at(t);
        for i in 0..run.len() {
            let p = Coord {
                x: snap.x_m[i],
                y: snap.y_m[i],
            };
            assert!(!land.contains(p), "particle {i} on land at {t}");
        }
    }
    // A stranded particle stays put from its stranding time on.
    let at4 = run.positions_at(hours(4.0));
    for i in 0..run.len() {
        if at4.stranded[i] {
            assert_eq!((at4.x_m[i], at4.y_m[i]), (end.x_m[i], end.y_m[i]));
        }
    }
}

#[test]
fn particles_drawn_on_land_are_stranded_from_the_start() {
    let mut s = heading_east(50);
    s.position_sigma_m = 10.0;
    let f = frame();
    let (land, _, _) = island(f.to_xy(LKP.0, LKP.1), 1000.0);
    let options = SimulationOptions {
        end: hours(2.0),
        record_every_s: SECONDS_PER_HOUR,
        step_s: None,
        also_record_at: Vec::new(),
    };
    let run = simulate(&s, &f, Some(&land), &options, &|_, _| {}).unwrap();
    let a = run.positions_at(hours(0.0));
    let b = run.positions_at(hours(2.0));
    assert!(a.stranded.iter().all(|x| *x));
    assert_eq!(a.x_m, b.x_m);
}

#[test]
fn a_step_across_a_spit_of_land_strands_at_the_first_crossing() {
    // A 20 m wide strip crossed in one step: ending in water is not enough to pass.
    let land = LandMask::new(MultiPolygon(vec![
        Rect::new(Coord { x: 100.0, y: -50.0 }, Coord { x: 120.0, y: 50.0 }).to_polygon(),
    ]));
    let (frac, hit) = land
        .first_crossing(Coord { x: 0.0, y: 0.0 }, Coord { x: 200.0, y: 0.0 })
        .unwrap();
    assert_abs_diff_eq!(frac, 0.5, epsilon = 1e-12);
    assert_abs_diff_eq!(hit.x, 100.0, epsilon = 1e-12);
    assert!(land.contains(Coord { x: 110.0, y: 0.0 }));
    assert!(!land.contains(Coord { x: 130.0, y: 0.0 }));
    assert!(
        land.first_crossing(Coord { x: 0.0, y: 60.0 }, Coord { x: 200.0, y: 60.0 })
            .is_none()
    );
}
