//! The GPS files (`plan.gpx`, `plan-waypoints.gpx`) as navigation sets read them: converted by
//! GPSBabel (Debian package gpsbabel) into device formats that cut or shorten names, every
//! route point name must stay unique.

use crate::end_to_end::{seekgrid, workspace};
use crate::external::{have, run};
use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};

/// Plans the invented marine demo into a temporary folder with `extra` options.
fn plan_marine(dir: &Path, extra: &[&str]) -> PathBuf {
    let out = dir.join("plan");
    let incident = workspace().join("scenarios/marine/incident.toml");
    let mut args = vec![
        "plan",
        incident.to_str().unwrap(),
        "--start",
        "2026-06-14T22:30:00Z",
        "--out",
        out.to_str().unwrap(),
        "--outputs",
        "routes,waypoints",
    ];
    args.extend_from_slice(extra);
    let o = seekgrid(&args);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    out
}

/// Every `<name>` inside each `<rtept>` (or `<wpt>`) of a GPX file, with its position.
fn point_names(text: &str, element: &str) -> Vec<(String, String)> {
    text.split(&format!("<{element} "))
        .skip(1)
        .map(|chunk| {
            let position = chunk.split('>').next().unwrap().to_owned();
            let name = chunk
                .split("<name>")
                .nth(1)
                .and_then(|n| n.split("</name>").next())
                .unwrap_or_default()
                .to_owned();
            (name, position)
        })
        .collect()
}

#[test]
fn route_point_names_are_unique_short_and_split_into_parts_as_asked() {
    let dir = tempfile::tempdir().unwrap();
    let out = plan_marine(dir.path(), &["--gps-route-points", "20"]);
    let text = std::fs::read_to_string(out.join("plan.gpx")).unwrap();
    let points = point_names(&text, "rtept");
    // The invented marine demo's plan has 56 route points (three units).
    assert!(points.len() > 40, "{}", points.len());
    let names: BTreeSet<&str> = points.iter().map(|(n, _)| n.as_str()).collect();
    assert_eq!(names.len(), points.len(), "every name once: {points:?}");
    assert!(names.iter().all(|n| n.chars().count() <= 10), "{names:?}");
    // No route holds more than 20 points; parts are numbered in the route name.
    for route in text.split("<rte>").skip(1) {
        assert!(route.matches("<rtept ").count() <= 20, "{route}");
    }
    assert!(text.contains(" P2</name>"), "a split route is numbered");
    assert!(text.contains("part 2 of"), "its description says so");
    // Each point's description carries its full name.
    assert!(
        text.contains("<desc>rescue-boat-1 commence search point: "),
        "{text}"
    );
    // Metadata: the creator with the version, and the time the file was made.
    assert!(text.contains(&format!(
        "creator=\"seekgrid {}\"",
        env!("CARGO_PKG_VERSION")
    )));
    assert!(text.contains("<time>"), "{text}");
    let waypoints = std::fs::read_to_string(out.join("plan-waypoints.gpx")).unwrap();
    assert!(waypoints.contains("<wpt ") && !waypoints.contains("<rte>"));
    assert!(waypoints.contains("CSP</name>"));
}

#[test]
fn a_gps_name_length_under_four_is_refused_with_exit_2_and_the_fix() {
    let dir = tempfile::tempdir().unwrap();
    let incident = workspace().join("scenarios/marine/incident.toml");
    let out = dir.path().join("plan");
    let o = seekgrid(&[
        "plan",
        incident.to_str().unwrap(),
        "--start",
        "2026-06-14T22:30:00Z",
        "--out",
        out.to_str().unwrap(),
        "--gps-name-length",
        "3",
    ]);
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("--gps-name-length") && err.contains("4 or more"),
        "{err}"
    );
    assert!(!out.exists(), "nothing written");
}

/// Converts `gpx` with GPSBabel to `format` and reads it back as GPX text.
fn round_trip(gpx: &Path, format: &str, dir: &Path) -> String {
    let device = dir.join(format!("plan.{format}"));
    let o = run(
        "gpsbabel",
        &[
            "-r",
            "-i",
            "gpx",
            "-f",
            gpx.to_str().unwrap(),
            "-o",
            format,
            "-F",
            device.to_str().unwrap(),
        ],
    );
    assert!(
        o.status.success(),
        "{format}: {}",
        String::from_utf8_lossy(&o.stderr)
    );
    let o = run(
        "gpsbabel",
        &[
            "-r",
            "-i",
            format,
            "-f",
            device.to_str().unwrap(),
            "-o",
            "gpx",
            "-F",
            "-",
        ],
    );
    assert!(
        o.status.success(),
        "{format}: {}",
        String::from_utf8_lossy(&o.stderr)
    );
    String::from_utf8_lossy(&o.stdout).into_owned()
}

#[test]
fn gpsbabel_device_formats_keep_every_route_point_name_unique() {
    if !have("gpsbabel") {
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let out = plan_marine(dir.path(), &[]);
    let gpx = out.join("plan.gpx");
    let ours = point_names(&std::fs::read_to_string(&gpx).unwrap(), "rtept");
    // Formats that shorten names on conversion (GPSBabel 1.8 as Debian ships it): Humminbird
    // to 11 characters, Raymarine to 16, Lowrance USR keeps them; each read back by GPSBabel.
    for format in ["humminbird", "raymarine", "lowranceusr"] {
        let back = point_names(&round_trip(&gpx, format, dir.path()), "rtept");
        assert_eq!(
            back.len(),
            ours.len(),
            "{format}: every route point converted"
        );
        let names: BTreeSet<&str> = back.iter().map(|(n, _)| n.as_str()).collect();
        assert_eq!(names.len(), back.len(), "{format}: {back:?}");
    }
    // Magellan's serial format cuts names to 8 characters (GPSBabel writes the first 8 into
    // each $PMGNWPL sentence); with --gps-name-length 8 no two positions share a name.
    let out8 = plan_marine(&dir.path().join("eight"), &["--gps-name-length", "8"]);
    let device = dir.path().join("plan.magellan");
    let o = run(
        "gpsbabel",
        &[
            "-r",
            "-i",
            "gpx",
            "-f",
            out8.join("plan.gpx").to_str().unwrap(),
            "-o",
            "magellan",
            "-F",
            device.to_str().unwrap(),
        ],
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let text = std::fs::read_to_string(&device).unwrap();
    // $PMGNWPL,lat,N,lon,W,alt,M,NAME,comment,icon*cs (one per route point).
    let mut at: BTreeMap<String, BTreeSet<String>> = BTreeMap::new();
    let mut count = 0;
    for line in text.lines().filter(|l| l.starts_with("$PMGNWPL,")) {
        let f: Vec<&str> = line.split(',').collect();
        at.entry(f[7].to_owned())
            .or_default()
            .insert(format!("{},{},{},{}", f[1], f[2], f[3], f[4]));
        count += 1;
    }
    assert_eq!(count, ours.len(), "{text}");
    assert_eq!(at.len(), count, "every Magellan name once: {at:?}");
}
