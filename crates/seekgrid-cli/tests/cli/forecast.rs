//! Forecast files end to end: what `check` reports against the tools that made them (`ncdump -h`
//! and `grib_ls` output frozen by fixtures/reference/make_forecast_fixtures.py), and the exit
//! code and message of each bad input.
#![allow(
    clippy::disallowed_methods,
    reason = "writes test incidents and reads the frozen reference"
)]

use crate::end_to_end::{seekgrid, workspace};
use std::path::{Path, PathBuf};

fn fixture(name: &str) -> String {
    workspace()
        .join("fixtures/forecast")
        .join(name)
        .display()
        .to_string()
}

fn reference() -> serde_json::Value {
    let text =
        std::fs::read_to_string(workspace().join("fixtures/reference/forecast_reference.json"))
            .unwrap();
    serde_json::from_str(&text).unwrap()
}

/// An incident with one drift scenario in a fresh folder; returns the folder and the file.
fn incident(current: &str, wind: &str, header: &str) -> (tempfile::TempDir, PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    let file = dir.path().join("incident.toml");
    let text = format!(
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
position_sigma_m = 300
adrift = {{ earliest = "2026-06-14T12:00:00Z", latest = "2026-06-14T12:30:00Z" }}
current = {current}
wind = {wind}
leeway = {{ downwind_slope = 0.03, source = "invented" }}
particles = 500
seed = 3
"#
    );
    std::fs::write(&file, text).unwrap();
    (dir, file)
}

fn out(o: &std::process::Output) -> String {
    format!(
        "{}{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    )
}

const STILL: &str = "{ speed_kn = 0, from_deg = 0 }";

#[test]
fn check_reports_what_ncdump_shows_of_a_netcdf_current() {
    // ncdump -h of currents_cf.nc (frozen): its dimensions and its u/v variables.
    let r = reference();
    let header = r["currents_cf"]["ncdump_h"].as_str().unwrap();
    let size = |dim: &str| -> String {
        let line = header
            .lines()
            .find(|l| l.trim_start().starts_with(&format!("{dim} =")))
            .unwrap();
        // "time = UNLIMITED ; // (4 currently)" or "latitude = 5 ;".
        line.split(['(', '=', ';'])
            .map(str::trim)
            .find_map(|p| p.split_whitespace().next()?.parse::<usize>().ok())
            .unwrap()
            .to_string()
    };
    assert!(header.contains("short uo(time, depth, latitude, longitude)"));
    let (_d, file) = incident(
        &format!("{{ netcdf = \"{}\" }}", fixture("currents_cf.nc")),
        STILL,
        "",
    );
    let o = seekgrid(&["check", file.to_str().unwrap()]);
    let text = out(&o);
    assert_eq!(o.status.code(), Some(0), "{text}");
    for want in [
        "NetCDF classic".to_owned(),
        "using u = uo, v = vo (m s-1)".to_owned(),
        format!("grid {} x {}", size("longitude"), size("latitude")),
        format!(
            "{} times 2026-06-14T12:00Z to 2026-06-15T00:00Z",
            size("time")
        ),
        format!("depth = 0.494 m (level 1 of {}", size("depth")),
        "every 3/6 h".to_owned(),
    ] {
        assert!(text.contains(&want), "missing {want:?} in {text}");
    }
}

#[test]
fn check_reports_what_grib_ls_shows_of_grib2_winds() {
    // grib_ls of wind.grib2 (frozen): 10u and 10v at level 10 for steps 0, 3, 6 and 9 on 5 x 5.
    let r = reference();
    let listing = r["grib_wind"]["grib_ls"].as_str().unwrap();
    let rows: Vec<Vec<&str>> = listing
        .lines()
        .map(|l| l.split_whitespace().collect::<Vec<_>>())
        .filter(|w| w.len() == 5 && (w[0] == "10u" || w[0] == "10v"))
        .collect();
    let mut steps: Vec<&str> = rows.iter().map(|w| w[2]).collect();
    steps.dedup();
    let (_d, file) = incident(
        "{ speed_kn = 0.2, toward_deg = 90 }",
        &format!("{{ grib = \"{}\" }}", fixture("wind.grib2")),
        "",
    );
    let o = seekgrid(&["check", file.to_str().unwrap()]);
    let text = out(&o);
    assert_eq!(o.status.code(), Some(0), "{text}");
    for want in [
        "GRIB2".to_owned(),
        format!("grid {} x {}", rows[0][3], rows[0][4]),
        format!(
            "{} times 2026-06-14T12:00Z to 2026-06-14T21:00Z",
            steps.len()
        ),
        format!("level: {} m", rows[0][1]),
    ] {
        assert!(text.contains(&want), "missing {want:?} in {text}");
    }
}

#[test]
fn bad_forecast_inputs_exit_2_naming_the_file_and_the_fix() {
    for (name, wants) in [
        ("not_netcdf.nc", vec!["is not a NetCDF file"]),
        ("no_current.nc", vec!["u_variable", "thetao"]),
        ("bad_time.nc", vec!["UNIT since DATE"]),
        (
            "rotated.nc",
            vec!["variable uo", "regular latitude/longitude"],
        ),
        ("bad_units.nc", vec!["variable uo", "kg m-2"]),
    ] {
        let (_d, file) = incident(&format!("{{ netcdf = \"{}\" }}", fixture(name)), STILL, "");
        let o = seekgrid(&["check", file.to_str().unwrap()]);
        let text = out(&o);
        assert_eq!(o.status.code(), Some(2), "{name}: {text}");
        assert!(text.contains(name), "{name}: {text}");
        for w in wants {
            assert!(text.contains(w), "{name}: missing {w:?} in {text}");
        }
    }
}

fn map(file: &Path, dir: &Path) -> std::process::Output {
    seekgrid(&[
        "map",
        file.to_str().unwrap(),
        "--out",
        dir.join("out").to_str().unwrap(),
        "--at",
        "2026-06-14T18:00:00Z",
    ])
}

#[test]
fn a_fill_value_in_the_clouds_way_exits_2_unless_the_coastline_makes_it_land() {
    let current = format!("{{ netcdf = \"{}\" }}", fixture("land_fill.nc"));
    let (d, file) = incident(&current, STILL, "");
    let o = map(&file, d.path());
    let text = out(&o);
    assert_eq!(o.status.code(), Some(2), "{text}");
    assert!(
        text.contains("land_fill.nc")
            && text.contains("no value")
            && text.contains("uo")
            && text.contains("give a coastline that covers it"),
        "{text}"
    );
    assert!(!d.path().join("out").exists(), "nothing is written");
    let coast = format!("coastline = \"{}\"", fixture("land_fill_coast.geojson"));
    let (d, file) = incident(&current, STILL, &coast);
    let o = map(&file, d.path());
    assert_eq!(o.status.code(), Some(0), "{}", out(&o));
}

#[test]
fn a_cloud_that_leaves_the_field_exits_2_naming_the_side_unless_held() {
    // wind_same.nc covers 63.5 W to 62.5 W; a 6 kn current toward the east carries the cloud
    // from 63.1 W past 62.5 W (0.6 degree, 26 NM at 44 N) before 18:00 (36 NM in 6 h).
    let wind = format!("{{ netcdf = \"{}\" }}", fixture("wind_same.nc"));
    let (d, file) = incident("{ speed_kn = 6, toward_deg = 90 }", &wind, "");
    let o = map(&file, d.path());
    let text = out(&o);
    assert_eq!(o.status.code(), Some(2), "{text}");
    assert!(
        text.contains("east side")
            && text.contains("wind_same.nc")
            && text.contains("hold_environment_beyond_series = true"),
        "{text}"
    );
}
