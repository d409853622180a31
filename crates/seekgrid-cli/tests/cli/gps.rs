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

/// Copies the invented marine demo into `dir` with `edit` applied to its incident file.
fn marine_copy(dir: &Path, edit: impl Fn(String) -> String) -> PathBuf {
    let src = workspace().join("scenarios/marine");
    let dst = dir.join("marine");
    for sub in ["", "areas", "tracks"] {
        std::fs::create_dir_all(dst.join(sub)).unwrap();
        for e in std::fs::read_dir(src.join(sub)).unwrap() {
            let e = e.unwrap();
            if e.file_type().unwrap().is_file() {
                std::fs::copy(e.path(), dst.join(sub).join(e.file_name())).unwrap();
            }
        }
    }
    let f = dst.join("incident.toml");
    let text = std::fs::read_to_string(&f).unwrap();
    std::fs::write(&f, edit(text)).unwrap();
    f
}

/// The text of `plan.md` from the `### unit` heading to the next heading of that level.
fn unit_section<'a>(md: &'a str, unit: &str) -> &'a str {
    let start = md
        .find(&format!("### {unit}\n"))
        .expect("the unit's section");
    let rest = &md[start + 4..];
    &md[start..start + 4 + rest.find("\n### ").unwrap_or(rest.len())]
}

#[test]
fn positions_follow_the_run_and_a_units_own_choice_in_the_briefing_and_gpx() {
    let dir = tempfile::tempdir().unwrap();
    let f = marine_copy(dir.path(), |t| {
        t.replace(
            "id = \"rescue-boat-2\"\n",
            "id = \"rescue-boat-2\"\npositions = \"utm\"\n",
        )
    });
    let out = dir.path().join("plan");
    let o = seekgrid(&[
        "plan",
        f.to_str().unwrap(),
        "--start",
        "2026-06-14T22:30:00Z",
        "--out",
        out.to_str().unwrap(),
        "--positions",
        "mgrs",
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let md = std::fs::read_to_string(out.join("plan.md")).unwrap();
    // MGRS in the invented demo's area off 40.9 W, 31.5 N: zone 24, band R (see the reference
    // points of fixtures/reference/make_position_fixtures.py).
    let boat1 = unit_section(&md, "rescue-boat-1");
    assert!(boat1.contains("| positions | MGRS, 1 m |"), "{boat1}");
    assert!(boat1.contains("| commence search point | 24R "), "{boat1}");
    let boat2 = unit_section(&md, "rescue-boat-2");
    assert!(boat2.contains("| positions | UTM"), "{boat2}");
    assert!(
        boat2.contains("| commence search point | UTM 24N "),
        "{boat2}"
    );
    let gpx = std::fs::read_to_string(out.join("plan.gpx")).unwrap();
    assert!(
        gpx.contains("rescue-boat-1 commence search point: 24R "),
        "{gpx}"
    );
    assert!(
        gpx.contains("rescue-boat-2 commence search point: UTM 24N "),
        "{gpx}"
    );
}

#[test]
fn an_unknown_position_format_is_refused_with_exit_2_on_the_command_line_and_in_the_file() {
    let dir = tempfile::tempdir().unwrap();
    let incident = workspace().join("scenarios/marine/incident.toml");
    let o = seekgrid(&[
        "plan",
        incident.to_str().unwrap(),
        "--start",
        "2026-06-14T22:30:00Z",
        "--out",
        dir.path().join("a").to_str().unwrap(),
        "--positions",
        "osgb",
    ]);
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("--positions") && err.contains("mgrs"), "{err}");
    let f = marine_copy(dir.path(), |t| {
        t.replace(
            "id = \"helicopter-1\"\n",
            "id = \"helicopter-1\"\npositions = \"bng\"\n",
        )
    });
    let o = seekgrid(&["check", f.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    let line = std::fs::read_to_string(&f)
        .unwrap()
        .lines()
        .position(|l| l == "positions = \"bng\"")
        .unwrap()
        + 1;
    assert!(
        err.contains(&format!("incident.toml:{line}:")) && err.contains("unknown position format"),
        "{err}"
    );
}
