//! Forecast files (NetCDF and GRIB2) against the tools that made them: SciPy's
//! RegularGridInterpolator on the same node values, ecCodes' grib_get_data, and the same field
//! as a CSV lattice. The files and reference values are made by
//! fixtures/reference/make_forecast_fixtures.py.
#![allow(
    clippy::disallowed_methods,
    reason = "reads the reference values frozen in fixtures/reference"
)]

use approx::assert_abs_diff_eq;
use chrono::{TimeDelta, TimeZone, Utc};
use seekgrid_drift as drift;
use seekgrid_incident::forecast::{
    ForecastFormat, ForecastGrid, ForecastOptions, Quantity, read_grib, read_netcdf,
};
use seekgrid_incident::model::{ScenarioKind, VectorDef};
use seekgrid_incident::{Incident, IncidentErrors, parse};
use std::path::{Path, PathBuf};

fn fixture(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../../fixtures/forecast")
        .join(name)
}

fn reference() -> serde_json::Value {
    let path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../../fixtures/reference/forecast_reference.json");
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

fn t0() -> chrono::DateTime<Utc> {
    Utc.with_ymd_and_hms(2026, 6, 14, 12, 0, 0).unwrap()
}

fn field(grid: &ForecastGrid) -> drift::GriddedField {
    drift::GriddedField::on_lattice(
        grid.lon,
        grid.lat,
        &grid.times,
        grid.u_kn.clone(),
        grid.v_kn.clone(),
        (0.0, 0.0),
        drift::BeyondBox::Refuse,
        "test",
    )
    .unwrap()
}

fn check_queries(grid: &ForecastGrid, queries: &serde_json::Value) {
    let f = field(grid);
    for q in queries.as_array().unwrap() {
        let t = t0() + TimeDelta::milliseconds((q["t_s"].as_f64().unwrap() * 1e3) as i64);
        let (u, v) = f.velocity_kn_at(
            q["lon_deg"].as_f64().unwrap(),
            q["lat_deg"].as_f64().unwrap(),
            t,
        );
        assert_abs_diff_eq!(u, q["u_kn"].as_f64().unwrap(), epsilon = 1e-9);
        assert_abs_diff_eq!(v, q["v_kn"].as_f64().unwrap(), epsilon = 1e-9);
    }
}

#[test]
fn a_packed_cf_current_interpolates_like_scipy_at_the_surface_level() {
    // computed: SciPy RegularGridInterpolator on the CF-unpacked surface values (raw *
    // scale_factor + add_offset), times 3600/1852 for knots; make_forecast_fixtures.py.
    let g = read_netcdf(
        &fixture("currents_cf.nc"),
        Quantity::Current,
        &ForecastOptions::default(),
    )
    .unwrap();
    assert_eq!(g.format, ForecastFormat::NetCdf3);
    assert_eq!(g.components, ("uo".to_owned(), "vo".to_owned()));
    // 0..360 longitudes moved a turn west, north-to-south latitudes turned round.
    assert_eq!((g.lon.start_deg, g.lon.step_deg, g.lon.n), (-63.5, 0.25, 5));
    assert_eq!((g.lat.start_deg, g.lat.step_deg, g.lat.n), (43.5, 0.25, 5));
    assert_eq!(g.times.len(), 4);
    assert_eq!(g.times[3], t0() + TimeDelta::hours(12));
    assert!(
        g.level.as_deref().unwrap().contains("0.494"),
        "{:?}",
        g.level
    );
    check_queries(&g, &reference()["currents_cf"]["queries"]);
}

#[test]
fn a_cf_wind_in_knots_with_a_missing_value_interpolates_like_scipy() {
    // computed: SciPy RegularGridInterpolator on the float32 values; make_forecast_fixtures.py.
    let g = read_netcdf(
        &fixture("wind_cf.nc"),
        Quantity::Wind,
        &ForecastOptions::default(),
    )
    .unwrap();
    assert_eq!(g.components, ("u10".to_owned(), "v10".to_owned()));
    assert_eq!(g.times[0], t0());
    check_queries(&g, &reference()["wind_cf"]["queries"]);
}

#[test]
fn the_level_asked_for_is_the_nearest_level_of_the_file() {
    // The 10 m level of currents_cf.nc is the surface field with u negated (the script).
    let surface = read_netcdf(
        &fixture("currents_cf.nc"),
        Quantity::Current,
        &ForecastOptions::default(),
    )
    .unwrap();
    let deep = read_netcdf(
        &fixture("currents_cf.nc"),
        Quantity::Current,
        &ForecastOptions {
            level_m: Some(8.0),
            ..ForecastOptions::default()
        },
    )
    .unwrap();
    assert!(deep.level.as_deref().unwrap().contains("depth = 10"));
    // Packed with an offset of 0.05 m/s: -u unpacks to within one packing step of -u.
    for (a, b) in surface.u_kn.iter().zip(&deep.u_kn) {
        assert!((a + b).abs() < 0.0021, "{a} {b}");
    }
}

#[test]
fn grib2_winds_decode_to_the_values_of_eccodes_grib_get_data() {
    // computed: ecCodes' grib_get_data output for wind_a.grib2 and wind_b.grib2 (two times
    // each), frozen by make_forecast_fixtures.py; messages in file order u, v per time.
    let r = reference();
    let g = read_grib(
        &[fixture("wind_a.grib2"), fixture("wind_b.grib2")],
        Quantity::Wind,
        &ForecastOptions::default(),
    )
    .unwrap();
    assert_eq!(g.format, ForecastFormat::Grib2);
    assert_eq!(g.times.len(), 4);
    assert_eq!(g.times[3], t0() + TimeDelta::hours(9));
    assert!(g.level.as_deref().unwrap().starts_with("10 m"));
    let mps = 1852.0 / 3600.0;
    let messages = r["grib_wind"]["messages"].as_array().unwrap();
    assert_eq!(messages.len(), 8);
    for (m, msg) in messages.iter().enumerate() {
        let (k, values) = (m / 2, if m % 2 == 0 { &g.u_kn } else { &g.v_kn });
        for row in msg.as_array().unwrap() {
            let (lat, lon, value) = (
                row[0].as_f64().unwrap(),
                row[1].as_f64().unwrap(),
                row[2].as_f64().unwrap(),
            );
            let i = ((lon - 360.0 - g.lon.start_deg) / g.lon.step_deg).round() as usize;
            let j = ((lat - g.lat.start_deg) / g.lat.step_deg).round() as usize;
            let got = values[(k * g.lat.n + j) * g.lon.n + i] * mps;
            assert_abs_diff_eq!(got, value, epsilon = 1e-9);
        }
    }
}

fn incident_text(current: &str, wind: &str, header: &str, particles: usize) -> String {
    format!(
        r#"
[incident]
title = "Forecast file drift (invented test case)"
reference_time = "2026-06-14T18:00:00Z"
{header}

[grid]
cell_m = 500

[[analyst]]
id = "desk"

[[scenario]]
id = "drift"
analyst = "desk"
kind = "drift"
position = [-63.1, 44.0]
position_sigma_m = 500
adrift = {{ earliest = "2026-06-14T12:00:00Z", latest = "2026-06-14T13:00:00Z" }}
current = {current}
wind = {wind}
leeway = {{ downwind_slope = 0.03, downwind_sigma_kn = 0.05, crosswind_slope = 0.01, crosswind_sigma_kn = 0.03, jibe_per_h = 0.1, source = "invented" }}
diffusivity_m2_s = 1.0
particles = {particles}
seed = 11
"#
    )
}

fn load(current: &str, wind: &str, header: &str) -> Result<Incident, IncidentErrors> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../fixtures/forecast");
    parse(
        &dir.join("incident.toml"),
        incident_text(current, wind, header, 300),
    )
}

fn drift_def(i: &Incident) -> &seekgrid_incident::model::DriftDef {
    match &i.scenarios[0].kind {
        ScenarioKind::Drift(d) => d,
        _ => panic!("not a drift"),
    }
}

fn run(d: &seekgrid_incident::model::DriftDef, hours: i64) -> drift::DriftRun {
    let frame = seekgrid_core::Frame::for_position(d.position[0], d.position[1]).unwrap();
    let options = drift::SimulationOptions {
        end: t0() + TimeDelta::hours(hours),
        record_every_s: 3600.0,
        step_s: Some(600.0),
        also_record_at: Vec::new(),
    };
    drift::simulate(&d.scenario().unwrap(), &frame, None, &options, &|_, _| {}).unwrap()
}

const CURRENT: &str =
    "{ speed_kn = 0.3, toward_deg = 45, speed_sigma_kn = 0.1, direction_sigma_deg = 10 }";

#[test]
fn the_same_wind_as_netcdf_grib2_and_csv_gives_identical_particle_clouds() {
    // Also as two NetCDF files of two times each.
    // The three files hold the same decoded values (make_forecast_fixtures.py): the lattices
    // are equal and so, seed for seed, is every particle.
    let sigmas = "speed_sigma_kn = 1.0, direction_sigma_deg = 10";
    let runs: Vec<drift::DriftRun> = [
        format!("{{ netcdf = \"wind_same.nc\", {sigmas} }}"),
        // Two files in the wrong order: their times are put in order.
        format!("{{ netcdf = [\"wind_same_b.nc\", \"wind_same_a.nc\"], {sigmas} }}"),
        format!("{{ grib = [\"wind_a.grib2\", \"wind_b.grib2\"], {sigmas} }}"),
        format!("{{ field = \"wind_same.csv\", {sigmas} }}"),
    ]
    .iter()
    .map(|w| run(drift_def(&load(CURRENT, w, "").unwrap()), 6))
    .collect();
    let end = t0() + TimeDelta::hours(6);
    let a = runs[0].positions_at(end);
    for other in &runs[1..] {
        let b = other.positions_at(end);
        assert_eq!(a.x_m, b.x_m);
        assert_eq!(a.y_m, b.y_m);
    }
}

#[test]
fn a_drift_through_a_uniform_netcdf_current_equals_the_constant_current_drift() {
    // uniform_cf.nc: 1 kn toward 000 at every node; all errors zero.
    let still = "{ speed_kn = 0, from_deg = 0 }";
    let a = load("{ netcdf = \"uniform_cf.nc\" }", still, "").unwrap();
    let b = load("{ speed_kn = 1.0, toward_deg = 0 }", still, "").unwrap();
    let (ra, rb) = (run(drift_def(&a), 6), run(drift_def(&b), 6));
    let end = t0() + TimeDelta::hours(6);
    let (pa, pb) = (ra.positions_at(end), rb.positions_at(end));
    for i in 0..pa.x_m.len() {
        assert_abs_diff_eq!(pa.x_m[i], pb.x_m[i], epsilon = 1e-6);
        assert_abs_diff_eq!(pa.y_m[i], pb.y_m[i], epsilon = 1e-6);
    }
}

fn error_text(r: Result<Incident, IncidentErrors>) -> String {
    match r {
        Ok(_) => panic!("expected the file to be refused"),
        Err(e) => e.to_string(),
    }
}

#[test]
fn bad_forecast_files_are_refused_naming_the_file_the_variable_and_the_fix() {
    let still = "{ speed_kn = 0, from_deg = 0 }";
    for (current, wants) in [
        (
            "{ netcdf = \"not_netcdf.nc\" }",
            vec!["not_netcdf.nc", "is not a NetCDF file"],
        ),
        (
            "{ netcdf = \"no_current.nc\" }",
            vec![
                "no_current.nc",
                "eastward_sea_water_velocity",
                "thetao",
                "u_variable",
            ],
        ),
        (
            "{ netcdf = \"bad_time.nc\" }",
            vec!["bad_time.nc", "time variable time", "UNIT since DATE"],
        ),
        (
            "{ netcdf = \"rotated.nc\" }",
            vec![
                "rotated.nc",
                "variable uo",
                "rotated_latitude_longitude",
                "cdo remapbil",
            ],
        ),
        (
            "{ netcdf = \"bad_units.nc\" }",
            vec!["bad_units.nc", "variable uo", "kg m-2", "m s-1"],
        ),
        (
            "{ netcdf = \"currents_cf.nc\", u_variable = \"water_u\" }",
            vec![
                "currents_cf.nc",
                "water_u",
                "uo (eastward_sea_water_velocity)",
            ],
        ),
        (
            "{ grib = \"wind.grib2\" }",
            vec!["wind.grib2", "no current u and v messages", "0.2.2"],
        ),
        (
            "{ grib = \"currents_cf.nc\" }",
            vec!["currents_cf.nc", "not a GRIB file"],
        ),
    ] {
        let text = error_text(load(current, still, ""));
        for w in wants {
            assert!(text.contains(w), "{current}: missing {w:?} in {text}");
        }
    }
}

#[test]
fn a_rotated_grib2_wind_is_refused_naming_its_grid_template() {
    let text = error_text(load(CURRENT, "{ grib = \"rotated.grib2\" }", ""));
    for w in [
        "rotated.grib2",
        "rotated latitude/longitude",
        "template 3.1",
        "regrid",
    ] {
        assert!(text.contains(w), "missing {w:?} in {text}");
    }
}

#[cfg(not(feature = "netcdf4"))]
#[test]
fn a_netcdf4_file_without_the_feature_is_refused_with_the_conversion() {
    let text = error_text(load(
        "{ netcdf = \"currents_nc4.nc\" }",
        "{ speed_kn = 0, from_deg = 0 }",
        "",
    ));
    assert!(
        text.contains("NetCDF-4") && text.contains("nccopy -k classic"),
        "{text}"
    );
}

#[cfg(feature = "netcdf4")]
#[test]
fn a_netcdf4_file_is_read_with_the_feature() {
    // currents_nc4.nc: 0.1 m/s everywhere (make_forecast_fixtures.py).
    let g = read_netcdf(
        &fixture("currents_nc4.nc"),
        Quantity::Current,
        &ForecastOptions::default(),
    )
    .unwrap();
    assert_eq!(g.format, ForecastFormat::NetCdf4);
    assert_abs_diff_eq!(g.u_kn[0], 0.1 * 3600.0 / 1852.0, epsilon = 1e-12);
}

#[test]
fn fill_values_become_zero_only_where_the_coastline_is_land() {
    let still = "{ speed_kn = 0, from_deg = 0 }";
    let open = load("{ netcdf = \"land_fill.nc\" }", still, "").unwrap();
    let coast = load(
        "{ netcdf = \"land_fill.nc\" }",
        still,
        "coastline = \"land_fill_coast.geojson\"",
    )
    .unwrap();
    let grid = |i: &Incident| match &drift_def(i).current {
        VectorDef::Forecast { grid, .. } => grid.as_ref().clone(),
        _ => panic!("not a forecast"),
    };
    // Six corner nodes (lon >= -63.0, lat >= 44.25) at two times have the fill value.
    assert_eq!(grid(&open).missing_nodes(), 12);
    assert_eq!(grid(&coast).missing_nodes(), 0);
    assert_eq!(grid(&coast).land_nodes, 12);
    // Without the coastline the drift from 63.1 W 44.0 N needs the fill node at 63.0 W
    // 44.25 N within hours, and is refused naming it.
    let d = drift_def(&open);
    let frame = seekgrid_core::Frame::for_position(d.position[0], d.position[1]).unwrap();
    let options = drift::SimulationOptions {
        end: t0() + TimeDelta::hours(6),
        record_every_s: 3600.0,
        step_s: Some(600.0),
        also_record_at: Vec::new(),
    };
    let e = drift::simulate(&d.scenario().unwrap(), &frame, None, &options, &|_, _| {})
        .unwrap_err()
        .to_string();
    assert!(
        e.contains("no value") && e.contains("land_fill.nc") && e.contains("coastline"),
        "{e}"
    );
}

#[test]
fn a_forecast_that_ends_before_the_drift_names_the_time_window_and_its_key() {
    // wind_same.nc ends at 21:00; a search ending at 23:00 makes the drift run to 23:00.
    let text = incident_text(CURRENT, "{ netcdf = \"wind_same.nc\" }", "", 300)
        + r#"
[[search]]
id = "s1"
unit = "boat"
start = "2026-06-14T21:30:00Z"
end = "2026-06-14T23:00:00Z"
sweep_width_m = 900
pattern = { kind = "parallel-sweep", center = [-63.0, 44.05], length_m = 4000, width_m = 2000, major_bearing_deg = 0, track_spacing_m = 900 }
"#;
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../fixtures/forecast");
    let e = error_text(parse(&dir.join("incident.toml"), text));
    assert!(
        e.contains("wind.netcdf") && e.contains("ends at 2026-06-14T21:00Z"),
        "{e}"
    );
}

#[test]
fn a_grib2_current_with_a_bitmap_has_no_value_where_eccodes_reports_missing() {
    // computed: grib_get_data -m MISSING counts 24 missing points over the 4 messages (u and v
    // at 2 times, the same 6 nodes each), frozen by make_forecast_fixtures.py.
    let r = &reference()["grib_current_bitmap"];
    let missing = r["missing_points"].as_u64().unwrap() as usize;
    let g = read_grib(
        &[fixture("current_bitmap.grib2")],
        Quantity::Current,
        &ForecastOptions::default(),
    )
    .unwrap();
    assert_eq!(r["messages"].as_u64(), Some(4));
    assert_eq!(g.times.len(), 2);
    assert_eq!(2 * g.missing_nodes(), missing);
    let mps = 1852.0 / 3600.0;
    for (u, v) in g.u_kn.iter().zip(&g.v_kn) {
        if u.is_finite() {
            assert_abs_diff_eq!(u * mps, 0.25, epsilon = 1e-9);
            assert_abs_diff_eq!(v * mps, -0.125, epsilon = 1e-9);
        }
    }
    // The coastline of land_fill.nc covers those nodes: they become a zero current.
    let coast = load(
        &format!(
            "{{ grib = \"{}\" }}",
            fixture("current_bitmap.grib2").display()
        ),
        "{ speed_kn = 0, from_deg = 0 }",
        "coastline = \"land_fill_coast.geojson\"",
    )
    .unwrap();
    match &drift_def(&coast).current {
        VectorDef::Forecast { grid, .. } => assert_eq!(grid.missing_nodes(), 0),
        _ => panic!("not a forecast"),
    }
}

#[test]
fn a_grib2_grid_across_the_greenwich_meridian_keeps_its_points_in_order() {
    // computed: grib_get_data of wind_greenwich.grib2 (359.5 E to 0.5 E by 0.25, printed as
    // -0.5 to 0.5), frozen by make_forecast_fixtures.py; u rows then v rows.
    let g = read_grib(
        &[fixture("wind_greenwich.grib2")],
        Quantity::Wind,
        &ForecastOptions::default(),
    )
    .unwrap();
    assert_eq!((g.lon.start_deg, g.lon.step_deg, g.lon.n), (-0.5, 0.25, 5));
    assert_eq!((g.lat.start_deg, g.lat.n), (50.0, 2));
    let rows = reference()["grib_greenwich"]["rows"]
        .as_array()
        .unwrap()
        .clone();
    assert_eq!(rows.len(), 20);
    let mps = 1852.0 / 3600.0;
    for (n, row) in rows.iter().enumerate() {
        let (lat, lon, value) = (
            row[0].as_f64().unwrap(),
            row[1].as_f64().unwrap(),
            row[2].as_f64().unwrap(),
        );
        let values = if n < 10 { &g.u_kn } else { &g.v_kn };
        let i = ((lon - g.lon.start_deg) / g.lon.step_deg).round() as usize;
        let j = ((lat - g.lat.start_deg) / g.lat.step_deg).round() as usize;
        assert_abs_diff_eq!(values[j * g.lon.n + i] * mps, value, epsilon = 1e-9);
    }
}
