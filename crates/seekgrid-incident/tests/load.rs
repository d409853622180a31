//! Reading and validating incident files: accepted shapes and the line/column of each error.

use seekgrid_incident::model::{PatternDef, ScenarioKind, SearchGeometry};
use seekgrid_incident::{ErrorKind, IncidentErrors, parse};
use seekgrid_search::DetectionLaw;
use std::path::{Path, PathBuf};

fn dir() -> tempfile::TempDir {
    tempfile::tempdir().unwrap()
}

fn parse_in(dir: &Path, text: &str) -> Result<seekgrid_incident::Incident, IncidentErrors> {
    parse(&dir.join("incident.toml"), text.to_owned())
}

/// The shape of the incident file that the probability-map issue asks every version to accept.
const BASIC: &str = r#"
[incident]
title = "Overdue day-sailer (invented test case)"
reference_time = "2026-06-14T18:00:00Z"

[grid]
cell_m = 250

[[analyst]]
id = "harbour-desk"
weight = 2.0

[[scenario]]
id = "anchored-off-the-point"
analyst = "harbour-desk"
weight = 0.7
kind = "point"
position = [-62.95, 44.12]
sigma_m = 1500

[[scenario]]
id = "sailed-the-planned-route"
analyst = "harbour-desk"
weight = 0.3
kind = "route"
waypoints = [[-63.10, 44.00], [-62.80, 44.20], [-62.70, 44.35]]
cross_track_sigma_m = 800
"#;

fn first_error(
    r: Result<seekgrid_incident::Incident, IncidentErrors>,
) -> seekgrid_incident::IncidentError {
    match r {
        Ok(_) => panic!("expected the file to be refused"),
        Err(e) => e.0.into_iter().next().unwrap(),
    }
}

#[test]
fn the_documented_basic_shape_is_accepted() {
    let d = dir();
    let inc = parse_in(d.path(), BASIC).unwrap();
    assert_eq!(inc.analysts.len(), 1);
    assert_eq!(inc.scenarios.len(), 2);
    match &inc.scenarios[0].kind {
        ScenarioKind::Point {
            sigma_major_m,
            sigma_minor_m,
            ..
        } => {
            assert_eq!((*sigma_major_m, *sigma_minor_m), (1500.0, 1500.0));
        }
        other => panic!("expected a point, got {other:?}"),
    }
    assert_eq!(inc.reference_time.to_rfc3339(), "2026-06-14T18:00:00+00:00");
}

#[test]
fn a_negative_sigma_is_reported_at_its_line_and_column() {
    let d = dir();
    let text = BASIC.replace("sigma_m = 1500", "sigma_m = -1500");
    let e = first_error(parse_in(d.path(), &text));
    assert_eq!(e.kind, ErrorKind::Invalid);
    let line = text.lines().position(|l| l.starts_with("sigma_m")).unwrap() + 1;
    assert_eq!(e.line, Some(line));
    // The column is that of the offending value, "-1500".
    assert_eq!(e.col, Some("sigma_m = ".len() + 1));
    let shown = e.to_string();
    assert!(
        shown.contains(&format!("incident.toml:{line}:11: scenario[0].sigma_m")),
        "{shown}"
    );
    assert!(shown.contains("positive"), "{shown}");
}

#[test]
fn a_misspelt_key_is_a_syntax_error_at_its_position() {
    let d = dir();
    let text = BASIC.replace("cross_track_sigma_m", "cross_trak_sigma_m");
    let e = first_error(parse_in(d.path(), &text));
    assert_eq!(e.kind, ErrorKind::Syntax);
    let line = text
        .lines()
        .position(|l| l.starts_with("cross_trak"))
        .unwrap()
        + 1;
    assert_eq!(e.line, Some(line));
    assert!(e.message.contains("cross_trak_sigma_m"), "{}", e.message);
}

#[test]
fn an_unknown_analyst_is_named_with_the_known_ones() {
    let d = dir();
    let text = BASIC.replacen("analyst = \"harbour-desk\"", "analyst = \"harbor-desk\"", 1);
    let e = first_error(parse_in(d.path(), &text));
    assert!(
        e.message.contains("harbor-desk") && e.message.contains("harbour-desk"),
        "{}",
        e.message
    );
}

#[test]
fn every_problem_is_reported_not_only_the_first() {
    let d = dir();
    let text = BASIC
        .replace("sigma_m = 1500", "sigma_m = 0")
        .replace("cross_track_sigma_m = 800", "cross_track_sigma_m = -1");
    let errors = parse_in(d.path(), &text).unwrap_err();
    assert_eq!(errors.0.len(), 2, "{errors}");
}

#[test]
fn fields_of_another_kind_are_refused() {
    let d = dir();
    let text = BASIC.replace("sigma_m = 1500", "sigma_m = 1500\ncross_track_sigma_m = 5");
    let e = first_error(parse_in(d.path(), &text));
    assert!(e.message.contains("does not belong"), "{}", e.message);
}

#[test]
fn wind_must_say_where_it_blows_from() {
    let d = dir();
    let text = format!(
        "{BASIC}\n[[scenario]]\nid = \"adrift\"\nanalyst = \"harbour-desk\"\nkind = \"drift\"\nposition = [-62.95, 44.12]\nadrift = {{ earliest = \"2026-06-14T15:00:00Z\", latest = \"2026-06-14T17:00:00Z\" }}\ncurrent = {{ speed_kn = 0.6, toward_deg = 75 }}\nwind = {{ speed_kn = 14, toward_deg = 70 }}\nleeway = {{ downwind_slope = 0.03 }}\n"
    );
    let e = first_error(parse_in(d.path(), &text));
    assert!(e.message.contains("from_deg"), "{}", e.message);
}

#[test]
fn segments_rings_and_areas_read_their_files_relative_to_the_incident() {
    let d = dir();
    let seg = r#"{"type":"FeatureCollection","features":[
      {"type":"Feature","properties":{"id":"S1"},"geometry":{"type":"Polygon","coordinates":[[[-30.0,20.0],[-29.99,20.0],[-29.99,20.01],[-30.0,20.01],[-30.0,20.0]]]}},
      {"type":"Feature","properties":{"id":"S2"},"geometry":{"type":"Polygon","coordinates":[[[-29.99,20.0],[-29.98,20.0],[-29.98,20.01],[-29.99,20.01],[-29.99,20.0]]]}}]}"#;
    std::fs::create_dir_all(d.path().join("maps")).unwrap();
    std::fs::write(d.path().join("maps/segments.geojson"), seg).unwrap();
    let text = r#"
[incident]
title = "Segments test (invented)"
reference_time = "2026-06-14T18:00:00Z"
[grid]
cell_m = 100
[[analyst]]
id = "a"
[[scenario]]
id = "scored"
analyst = "a"
kind = "segments"
segments = "maps/segments.geojson"
poa = { S1 = 0.5, S2 = 0.3 }
[[scenario]]
id = "rings"
analyst = "a"
kind = "rings"
position = [-29.99, 20.005]
distance_quantiles_km = { 25 = 1.1, 50 = 2.0, 75 = 3.6, 95 = 7.4 }
"#;
    let inc = parse_in(d.path(), text).unwrap();
    match &inc.scenarios[0].kind {
        ScenarioKind::Segments { segments, poa, .. } => {
            assert_eq!(segments.len(), 2);
            assert_eq!(poa, &vec![0.5, 0.3]);
        }
        other => panic!("{other:?}"),
    }
    match &inc.scenarios[1].kind {
        ScenarioKind::Rings { quantiles, .. } => {
            assert_eq!(quantiles[0], (0.25, 1100.0));
            assert_eq!(quantiles[3], (0.95, 7400.0));
        }
        other => panic!("{other:?}"),
    }
    let over = text.replace("S2 = 0.3", "S2 = 0.6");
    let e = first_error(parse_in(d.path(), &over));
    assert!(e.message.contains("more than 1"), "{}", e.message);
    let unknown = text.replace("S2 = 0.3", "S9 = 0.3");
    let e = first_error(parse_in(d.path(), &unknown));
    assert!(
        e.message.contains("S9") && e.message.contains("S1, S2"),
        "{}",
        e.message
    );
}

#[test]
fn a_missing_referenced_file_names_that_file() {
    let d = dir();
    let text = BASIC.replace(
        "kind = \"route\"\nwaypoints = [[-63.10, 44.00], [-62.80, 44.20], [-62.70, 44.35]]\ncross_track_sigma_m = 800",
        "kind = \"area\"\npolygon = \"areas/bay.geojson\"",
    );
    let e = first_error(parse_in(d.path(), &text));
    assert_eq!(e.kind, ErrorKind::Unreadable);
    assert!(
        e.file.ends_with(PathBuf::from("areas/bay.geojson")),
        "{}",
        e.file.display()
    );
}

#[test]
fn searches_with_a_pattern_or_a_track_are_read() {
    let d = dir();
    let gpx = r#"<?xml version="1.0" encoding="UTF-8"?>
<gpx version="1.1" creator="seekgrid test" xmlns="http://www.topografix.com/GPX/1/1">
<trk><name>t</name><trkseg>
<trkpt lat="44.10" lon="-62.95"><time>2026-06-14T20:00:00Z</time></trkpt>
<trkpt lat="44.11" lon="-62.94"><time>2026-06-14T20:10:00Z</time></trkpt>
<trkpt lat="44.12" lon="-62.95"><time>2026-06-14T20:20:00Z</time></trkpt>
</trkseg></trk></gpx>"#;
    std::fs::write(d.path().join("boat.gpx"), gpx).unwrap();
    let text = format!(
        "{BASIC}\n[[search]]\nid = \"s1\"\nunit = \"boat-1\"\nstart = \"2026-06-14T20:00:00Z\"\nend = \"2026-06-14T23:00:00Z\"\nsweep_width_m = 900\ndetection = \"exponential\"\npattern = {{ kind = \"parallel-sweep\", center = [-62.95, 44.12], length_m = 12000, width_m = 6000, major_bearing_deg = 30, track_spacing_m = 900 }}\n\n[[search]]\nid = \"s2\"\nunit = \"boat-1\"\nstart = \"2026-06-14T20:00:00Z\"\nend = \"2026-06-14T20:20:00Z\"\nsweep_width_m = 900\ntrack = \"boat.gpx\"\n"
    );
    let inc = parse_in(d.path(), &text).unwrap();
    assert_eq!(inc.searches.len(), 2);
    assert_eq!(inc.searches[0].detection, DetectionLaw::Exponential);
    assert!(matches!(
        inc.searches[0].geometry,
        SearchGeometry::Pattern(PatternDef::ParallelSweep(_))
    ));
    match &inc.searches[1].geometry {
        SearchGeometry::Track { points, times, .. } => {
            assert_eq!(points.0.len(), 3);
            assert!(times.iter().all(Option::is_some));
        }
        other => panic!("{other:?}"),
    }
    let backwards = gpx.replace("20:20:00Z", "19:00:00Z");
    std::fs::write(d.path().join("boat.gpx"), backwards).unwrap();
    let e = first_error(parse_in(d.path(), &text));
    assert!(e.message.contains("earlier"), "{}", e.message);
}

#[test]
fn input_files_lists_the_incident_and_every_file_it_names_once() {
    // The bundled land incident names its segments file three times and two track files.
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../scenarios");
    let land = seekgrid_incident::load(&root.join("land/incident.toml")).unwrap();
    let names = |i: &seekgrid_incident::Incident| -> Vec<PathBuf> {
        let base = i.path.parent().unwrap();
        i.input_files()
            .iter()
            .map(|f| f.strip_prefix(base).unwrap().to_owned())
            .collect()
    };
    assert_eq!(
        names(&land),
        [
            "incident.toml",
            "coast.geojson",
            "segments.geojson",
            "tracks/team-alpha.gpx",
            "tracks/team-bravo.gpx"
        ]
        .map(PathBuf::from)
    );
    // The marine incident: a wind series of a drift scenario and an area polygon.
    let marine = seekgrid_incident::load(&root.join("marine/incident.toml")).unwrap();
    let mut got = names(&marine);
    got.sort();
    assert_eq!(
        got,
        [
            "areas/kestrel-bay.geojson",
            "coast.geojson",
            "incident.toml",
            "tracks/helicopter-1.gpx",
            "wind.csv"
        ]
        .map(PathBuf::from)
    );
}
