//! Gridded fields: trilinear interpolation against SciPy, drift through a varying field.
#![allow(
    clippy::disallowed_methods,
    reason = "reads the SciPy values frozen in fixtures/reference"
)]

use crate::common::*;
use approx::assert_abs_diff_eq;
use chrono::Duration;
use geo::Coord;
use seekgrid_core::units::{SECONDS_PER_HOUR, hours_to_s};
use seekgrid_drift::*;

fn at_s(t_s: f64) -> Time {
    t0() + Duration::milliseconds((t_s * 1000.0).round() as i64)
}

fn fixture() -> serde_json::Value {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../../fixtures/reference/drift_gridded_interp.json"
    );
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

fn floats(v: &serde_json::Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

#[test]
fn gridded_field_interpolates_like_scipy_and_holds_its_edges() {
    // computed: SciPy RegularGridInterpolator (linear), frozen by
    // fixtures/reference/drift_gridded_interp.py; queries outside the lattice clipped there.
    let fx = fixture();
    let (lons, lats, times) = (
        floats(&fx["lons_deg"]),
        floats(&fx["lats_deg"]),
        floats(&fx["times_s"]),
    );
    let mut samples = Vec::new();
    // Reversed order: from_samples must not depend on it.
    for (k, t) in times.iter().enumerate().rev() {
        for (j, lat) in lats.iter().enumerate() {
            for (i, lon) in lons.iter().enumerate() {
                samples.push(GridSample {
                    lon_deg: *lon,
                    lat_deg: *lat,
                    time: at_s(*t),
                    u_kn: fx["u_kn"][k][j][i].as_f64().unwrap(),
                    v_kn: fx["v_kn"][k][j][i].as_f64().unwrap(),
                });
            }
        }
    }
    let field = GriddedField::from_samples(&samples, 0.1, 5.0).unwrap();
    assert_eq!(field.shape(), (4, 3, 3));
    for q in fx["queries"].as_array().unwrap() {
        let (u, v) = field.velocity_kn_at(
            q["lon_deg"].as_f64().unwrap(),
            q["lat_deg"].as_f64().unwrap(),
            at_s(q["t_s"].as_f64().unwrap()),
        );
        assert_abs_diff_eq!(u, q["u_kn"].as_f64().unwrap(), epsilon = 1e-12);
        assert_abs_diff_eq!(v, q["v_kn"].as_f64().unwrap(), epsilon = 1e-12);
    }
}

fn lattice(
    lons: &[f64],
    lats: &[f64],
    hours_at: &[f64],
    uv: impl Fn(f64, f64, f64) -> (f64, f64),
) -> Vec<GridSample> {
    let mut out = Vec::new();
    for &h in hours_at {
        for &lat in lats {
            for &lon in lons {
                let (u_kn, v_kn) = uv(lon, lat, h);
                out.push(GridSample {
                    lon_deg: lon,
                    lat_deg: lat,
                    time: hours(h),
                    u_kn,
                    v_kn,
                });
            }
        }
    }
    out
}

#[test]
fn a_field_uniform_in_space_drifts_like_the_same_time_series() {
    // The same current as a series (speed/direction) and as a gridded field (u, v) with every
    // node equal: with the same seed and errors the two runs agree.
    let series = [(0.0, 0.8, 30.0), (3.0, 1.2, 120.0), (6.0, 0.4, 200.0)];
    let samples = lattice(
        &[-31.0, -30.0],
        &[20.0, 20.5],
        &[0.0, 3.0, 6.0],
        |_, _, h| {
            let (_, s, d) = series.iter().find(|x| x.0 == h).unwrap();
            exact(*s, *d).velocity_kn(Convention::Toward)
        },
    );
    let gridded = GriddedField::from_samples(&samples, 0.1, 10.0).unwrap();
    let as_series = Environment::Series(
        series
            .iter()
            .map(|&(h, s, d)| {
                (
                    hours(h),
                    VectorEstimate {
                        speed_kn: s,
                        direction_deg: d,
                        speed_sigma_kn: 0.1,
                        direction_sigma_deg: 10.0,
                    },
                )
            })
            .collect(),
    );
    let wind = Environment::Constant(VectorEstimate {
        speed_sigma_kn: 2.0,
        direction_sigma_deg: 15.0,
        ..exact(12.0, 300.0)
    });
    let mut a = scenario(
        Environment::Gridded(gridded),
        wind.clone(),
        downwind_only(0.03, 0.0),
    );
    a.particles = 300;
    a.position_sigma_m = 300.0;
    let mut b = a.clone();
    b.current = as_series;
    let ra = run(&a, 6.0, SECONDS_PER_HOUR, Some(900.0));
    let rb = run(&b, 6.0, SECONDS_PER_HOUR, Some(900.0));
    let (pa, pb) = (ra.positions_at(hours(6.0)), rb.positions_at(hours(6.0)));
    for i in 0..ra.len() {
        assert_abs_diff_eq!(pa.x_m[i], pb.x_m[i], epsilon = 1e-6);
        assert_abs_diff_eq!(pa.y_m[i], pb.y_m[i], epsilon = 1e-6);
    }
}

#[test]
fn drift_through_a_sheared_field_matches_a_dense_reference() {
    // A current that turns and strengthens with latitude and longitude and changes in time,
    // no errors. Slow reference: explicit midpoint with 1 s steps, the field looked up at
    // each point's lon/lat through the frame and the LKP map built here. computed.
    let lons: Vec<f64> = (0..9).map(|i| -31.0 + 0.125 * i as f64).collect();
    let lats: Vec<f64> = (0..9).map(|j| 19.8 + 0.1 * j as f64).collect();
    let samples = lattice(&lons, &lats, &[0.0, 3.0, 6.0], |lon, lat, h| {
        let a = (lat - 20.2) * 8.0 + (lon + 30.5) * 3.0 + 0.2 * h;
        (1.5 * a.cos(), 1.5 * a.sin())
    });
    let field = GriddedField::from_samples(&samples, 0.0, 0.0).unwrap();
    let mut s = scenario(
        Environment::Gridded(field.clone()),
        Environment::Constant(exact(0.0, 0.0)),
        Leeway::NONE,
    );
    s.particles = 4;
    let r = run(&s, 6.0, SECONDS_PER_HOUR, None);
    let f = frame();
    let vel = |p: Coord<f64>, t_s: f64| {
        let (lon, lat) = f.to_lon_lat(p);
        let (u, v) = field.velocity_kn_at(lon, lat, at_s(t_s));
        true_kn_to_grid_mps(u, v)
    };
    let mut p = f.to_xy(LKP.0, LKP.1);
    for k in 0..hours_to_s(6.0) as i64 {
        let t = k as f64;
        let mid = p + vel(p, t) * 0.5;
        p = p + vel(mid, t + 0.5);
    }
    let end = r.positions_at(hours(6.0));
    let moved = (end.x_m[0] - f.to_xy(LKP.0, LKP.1).x).hypot(end.y_m[0] - f.to_xy(LKP.0, LKP.1).y);
    assert!(moved > 5000.0, "{moved}");
    // The automatic step holds a cloud without spread to 1 m between a step and its half;
    // for a second-order method the error of the step itself is then about 4/3 of that.
    assert_abs_diff_eq!(end.x_m[0], p.x, epsilon = 1.5);
    assert_abs_diff_eq!(end.y_m[0], p.y, epsilon = 1.5);
}

#[test]
fn incomplete_or_irregular_lattices_are_refused() {
    let full = lattice(
        &[-31.0, -30.5, -30.0],
        &[20.0, 20.5],
        &[0.0, 1.0],
        |_, _, _| (0.1, 0.2),
    );
    assert!(GriddedField::from_samples(&full, 0.0, 0.0).is_ok());
    let missing = &full[1..];
    let e = GriddedField::from_samples(missing, 0.0, 0.0).unwrap_err();
    assert!(e.to_string().contains("one sample per node"), "{e}");
    let mut repeated = full.clone();
    repeated[1] = repeated[0];
    assert!(GriddedField::from_samples(&repeated, 0.0, 0.0).is_err());
    let uneven = lattice(&[-31.0, -30.5, -29.0], &[20.0], &[0.0], |_, _, _| {
        (0.1, 0.2)
    });
    let e = GriddedField::from_samples(&uneven, 0.0, 0.0).unwrap_err();
    assert!(e.to_string().contains("evenly spaced"), "{e}");
    assert!(GriddedField::from_samples(&[], 0.0, 0.0).is_err());
    assert!(matches!(
        GriddedField::from_samples(&full, -0.1, 0.0),
        Err(DriftError::Negative { .. })
    ));
    let mut nan = full.clone();
    nan[2].u_kn = f64::NAN;
    assert!(GriddedField::from_samples(&nan, 0.0, 0.0).is_err());
}

fn axis(start_deg: f64, step_deg: f64, n: usize) -> RegularAxis {
    RegularAxis {
        start_deg,
        step_deg,
        n,
    }
}

/// A 2 x 2 lattice at the given hours with u = 1 + hour, v = 0 (knots) at every node.
fn lattice_field(hours_at: &[f64], beyond: BeyondBox) -> GriddedField {
    let times: Vec<Time> = hours_at.iter().map(|&h| hours(h)).collect();
    let u: Vec<f64> = hours_at.iter().flat_map(|&h| [1.0 + h; 4]).collect();
    GriddedField::on_lattice(
        axis(-31.0, 1.0, 2),
        axis(20.0, 0.5, 2),
        &times,
        u,
        vec![0.0; 4 * hours_at.len()],
        (0.0, 0.0),
        beyond,
        "current from test.nc (uo, vo)",
    )
    .unwrap()
}

#[test]
fn uneven_forecast_times_are_interpolated_linearly_between_their_neighbours() {
    // computed by hand: u = 1 + hour at 0, 1 and 4 h; at 2.5 h it is 3.5 (between 1 h and 4 h).
    let f = lattice_field(&[0.0, 1.0, 4.0], BeyondBox::Refuse);
    let (u, _) = f.velocity_kn_at(-30.5, 20.2, hours(2.5));
    assert_abs_diff_eq!(u, 3.5, epsilon = 1e-12);
    let (u, _) = f.velocity_kn_at(-30.5, 20.2, hours(0.5));
    assert_abs_diff_eq!(u, 1.5, epsilon = 1e-12);
    // Held beyond its last time (the incident refuses a time gap before the drift runs).
    let (u, _) = f.velocity_kn_at(-30.5, 20.2, hours(9.0));
    assert_abs_diff_eq!(u, 5.0, epsilon = 1e-12);
}

#[test]
fn a_particle_leaving_a_refusing_field_names_the_side_of_the_box() {
    // 1 kn + hour toward the east from 30.5°W: the cloud crosses 30°W within the hour.
    let f = lattice_field(&[0.0, 1.0, 2.0, 3.0], BeyondBox::Refuse);
    let s = scenario(
        Environment::Gridded(f.clone()),
        Environment::Constant(exact(0.0, 0.0)),
        Leeway::NONE,
    );
    let options = SimulationOptions {
        end: hours(3.0),
        record_every_s: SECONDS_PER_HOUR,
        step_s: Some(600.0),
        also_record_at: Vec::new(),
    };
    // 1 to 4 kn east for 3 h is about 7.5 NM, 0.13° of longitude at 20°N: still inside.
    assert!(simulate(&s, &frame(), None, &options, &|_, _| {}).is_ok());
    let far = GriddedField::on_lattice(
        axis(-30.6, 0.2, 2),
        axis(20.0, 0.5, 2),
        &[hours(0.0), hours(3.0)],
        vec![4.0; 8],
        vec![0.0; 8],
        (0.0, 0.0),
        BeyondBox::Refuse,
        "current from test.nc (uo, vo)",
    )
    .unwrap();
    let s = scenario(
        Environment::Gridded(far.clone()),
        Environment::Constant(exact(0.0, 0.0)),
        Leeway::NONE,
    );
    let e = simulate(&s, &frame(), None, &options, &|_, _| {}).unwrap_err();
    let text = e.to_string();
    assert!(matches!(e, DriftError::FieldGap { .. }), "{text}");
    assert!(
        text.contains("east side") && text.contains("test.nc"),
        "{text}"
    );
    // Held at its edge, the same drift runs.
    let held = GriddedField::on_lattice(
        axis(-30.6, 0.2, 2),
        axis(20.0, 0.5, 2),
        &[hours(0.0), hours(3.0)],
        vec![4.0; 8],
        vec![0.0; 8],
        (0.0, 0.0),
        BeyondBox::HoldEdge,
        "current",
    )
    .unwrap();
    let s = scenario(
        Environment::Gridded(held),
        Environment::Constant(exact(0.0, 0.0)),
        Leeway::NONE,
    );
    assert!(simulate(&s, &frame(), None, &options, &|_, _| {}).is_ok());
}

#[test]
fn a_node_with_no_value_next_to_a_particle_stops_the_drift_with_its_place() {
    let mut u = vec![0.5; 8];
    // The node at 30°W, 20.5°N at the second time has no value.
    u[4 + 3] = f64::NAN;
    let f = GriddedField::on_lattice(
        axis(-31.0, 1.0, 2),
        axis(20.0, 0.5, 2),
        &[hours(0.0), hours(6.0)],
        u,
        vec![0.0; 8],
        (0.0, 0.0),
        BeyondBox::Refuse,
        "current from test.nc (uo, vo)",
    )
    .unwrap();
    let s = scenario(
        Environment::Gridded(f),
        Environment::Constant(exact(0.0, 0.0)),
        Leeway::NONE,
    );
    let options = SimulationOptions {
        end: hours(2.0),
        record_every_s: SECONDS_PER_HOUR,
        step_s: Some(600.0),
        also_record_at: Vec::new(),
    };
    let text = simulate(&s, &frame(), None, &options, &|_, _| {})
        .unwrap_err()
        .to_string();
    assert!(
        text.contains("no value") && text.contains("-30.0000, 20.5000"),
        "{text}"
    );
}

#[test]
fn a_field_round_the_whole_earth_interpolates_across_its_last_and_first_columns() {
    // computed by hand: columns at 0, 90, 180 and 270 E with u = 1, 2, 3, 4; at 315 E
    // (= -45) halfway between 270 (4) and 0 (1): 2.5; nowhere is it beyond the box.
    let f = GriddedField::on_lattice(
        axis(0.0, 90.0, 4),
        axis(-10.0, 20.0, 2),
        &[hours(0.0)],
        vec![1.0, 2.0, 3.0, 4.0, 1.0, 2.0, 3.0, 4.0],
        vec![0.0; 8],
        (0.0, 0.0),
        BeyondBox::Refuse,
        "global wind",
    )
    .unwrap();
    for lon in [315.0, -45.0, -405.0] {
        let (u, _) = f.velocity_kn_at(lon, 0.0, hours(0.0));
        assert_abs_diff_eq!(u, 2.5, epsilon = 1e-12);
    }
    let (u, _) = f.velocity_kn_at(45.0, 0.0, hours(0.0));
    assert_abs_diff_eq!(u, 1.5, epsilon = 1e-12);
    assert!(f.gap_at(-45.0, 0.0, hours(0.0)).is_none());
    // Beyond its latitudes it still refuses, naming the side.
    let gap = f.gap_at(-45.0, 12.0, hours(0.0)).unwrap();
    assert!(gap.contains("north side"), "{gap}");
}
