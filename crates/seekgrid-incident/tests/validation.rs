//! Every validation rule of the incident file as one table: each row edits one valid base
//! incident and says which field the error must name, which words its message must hold, and
//! where it must point. The base incident and its files are invented for these tests.
//!
//! The rules come from `docs/incident-format.md` and the loader (`src/load.rs`,
//! `src/geofiles.rs`); the expected values here are the documented ones, not computed.

use seekgrid_incident::model::{DriftDef, PatternDef, ScenarioKind, SearchGeometry, VectorDef};
use seekgrid_incident::{Incident, IncidentError, IncidentErrors, parse};

// ---------------------------------------------------------------------------------------------
// The base incident: every section, every scenario kind, every pattern kind, both track formats.
// Each table header carries a comment naming it, so a row can say "on the line of `# s2`".
// ---------------------------------------------------------------------------------------------

const BASE: &str = r#"# Invented test incident for the validation table; no value in it is a recommendation.
[incident]
title = "Validation base (invented test incident)"
reference_time = "2026-06-14T18:00:00Z"
crs = "EPSG:32626"
coastline = "coast.geojson"
object_afloat = true
notes = "invented for the validation tests"

[grid]
cell_m = 250
bounds = { west = -30.2, south = 19.8, east = -29.6, north = 20.3 }
max_cells = 4000000

[prior]
pool = "linear"

[[analyst]] # a0
id = "desk-a"
weight = 2.0
note = "invented"

[[analyst]] # a1
id = "desk-b"
weight = 1.5

[[scenario]] # s0 circle
id = "circle"
analyst = "desk-a"
weight = 0.41
kind = "point"
position = [-29.90, 20.00]
sigma_m = 1500

[[scenario]] # s1 ellipse
id = "ellipse"
analyst = "desk-a"
weight = 0.32
kind = "point"
position = [-29.91, 20.01]
sigma_major_m = 1400
sigma_minor_m = 700
major_bearing_deg = 60

[[scenario]] # s2 route
id = "route"
analyst = "desk-a"
weight = 0.27
kind = "route"
waypoints = [[-29.95, 19.95], [-29.90, 20.02], [-29.85, 20.05]]
cross_track_sigma_m = 800

[[scenario]] # s3 area
id = "bay"
analyst = "desk-b"
weight = 0.21
kind = "area"
polygon = "area.geojson"

[[scenario]] # s4 segments
id = "scored"
analyst = "desk-b"
weight = 0.22
kind = "segments"
segments = "segments.geojson"
poa = { S1 = 0.5, S2 = 0.3 }

[[scenario]] # s5 rings
id = "rings"
analyst = "desk-b"
weight = 0.23
kind = "rings"
position = [-29.92, 20.03]
distance_quantiles_km = { 25 = 1.1, 50 = 2.0, 75 = 3.6, 95 = 7.4 }
ring_interpolation = "monotone-cubic"

[[scenario]] # s6 drift constant
id = "drift-constant"
analyst = "desk-b"
weight = 0.24
kind = "drift"
position = [-29.93, 20.04]
position_sigma_m = 800
adrift = { earliest = "2026-06-14T15:00:00Z", latest = "2026-06-14T17:00:00Z" }
current = { speed_kn = 0.6, toward_deg = 75, speed_sigma_kn = 0.2, direction_sigma_deg = 20 }
wind = { speed_kn = 14, from_deg = 250, speed_sigma_kn = 3, direction_sigma_deg = 15 }
leeway = { downwind_slope = 0.035, downwind_offset_kn = 0.05, downwind_sigma_kn = 0.04, crosswind_slope = 0.012, crosswind_offset_kn = -0.01, crosswind_sigma_kn = 0.03, jibe_per_h = 0.05, source = "invented for this test" }
diffusivity_m2_s = 0.5
particles = 500
seed = 7

[[scenario]] # s7 drift files
id = "drift-files"
analyst = "desk-b"
kind = "drift"
position = [-29.94, 20.05]
adrift = { earliest = "2026-06-14T16:00:00Z", latest = "2026-06-14T16:00:00Z" }
current = { field = "current-field.csv", speed_sigma_kn = 0.1 }
wind = { series = "wind.csv", direction_sigma_deg = 10 }
leeway = { downwind_slope = 0.02 }

[[search]] # k0 parallel sweep
id = "sweep"
unit = "boat-1"
start = "2026-06-14T19:00:00Z"
end = "2026-06-14T21:00:00Z"
sweep_width_m = 900
sweep_width_factors = [0.9, 0.8]
detection = "exponential"
pattern = { kind = "parallel-sweep", center = [-29.90, 20.00], length_m = 9000, width_m = 4500, major_bearing_deg = 62, track_spacing_m = 900 }
note = "invented"

[[search]] # k1 creeping line
id = "creep"
unit = "boat-2"
start = "2026-06-14T19:01:00Z"
end = "2026-06-14T21:01:00Z"
sweep_width_m = 901
detection = "definite-range"
pattern = { kind = "creeping-line", center = [-29.89, 20.01], length_m = 8000, width_m = 4000, major_bearing_deg = 45, track_spacing_m = 800 }

[[search]] # k2 expanding square
id = "square"
unit = "heli-1"
start = "2026-06-14T19:02:00Z"
end = "2026-06-14T19:32:00Z"
sweep_width_m = 902
detection = "inverse-cube"
pattern = { kind = "expanding-square", center = [-29.93, 20.04], track_spacing_m = 700, legs = 16, first_leg_bearing_deg = 30 }

[[search]] # k3 sector search
id = "sector"
unit = "heli-2"
start = "2026-06-14T19:03:00Z"
end = "2026-06-14T19:33:00Z"
sweep_width_m = 903
pattern = { kind = "sector-search", center = [-29.92, 20.03], radius_m = 3000, first_leg_bearing_deg = 90, sectors = 4 }

[[search]] # k4 gpx track
id = "gpx-track"
unit = "boat-3"
start = "2026-06-14T20:00:00Z"
end = "2026-06-14T20:20:00Z"
sweep_width_m = 904
track = "track.gpx"

[[search]] # k5 geojson track
id = "line-track"
unit = "team-0"
start = "2026-06-14T20:04:00Z"
end = "2026-06-14T20:24:00Z"
sweep_width_m = 905
track = "track.geojson"

[[unit]] # u0 vessel
id = "boat-4"
speed_kn = 12
hours_on_scene = 4
sweep_width_m = 950
track_spacing_min_m = 300
detection = "exponential"

[[unit]] # u1 ground team
id = "team-1"
speed_kmh = 2.5
hours_on_scene = 6
sweep_width_m = 40
searchers = 8
"#;

const COAST: &str = r#"{"type": "FeatureCollection", "features": [
  {"type": "Feature", "properties": {"name": "invented islet"},
   "geometry": {"type": "Polygon", "coordinates": [[[-29.70, 20.20], [-29.69, 20.20], [-29.69, 20.21], [-29.70, 20.21], [-29.70, 20.20]]]}}
]}
"#;

const AREA: &str = r#"{"type": "FeatureCollection", "features": [
  {"type": "Feature", "properties": {},
   "geometry": {"type": "Polygon", "coordinates": [[[-29.96, 19.96], [-29.94, 19.96], [-29.94, 19.98], [-29.96, 19.98], [-29.96, 19.96]]]}}
]}
"#;

const SEGMENTS: &str = r#"{"type": "FeatureCollection", "features": [
  {"type": "Feature", "properties": {"id": "S1"},
   "geometry": {"type": "Polygon", "coordinates": [[[-29.90, 20.06], [-29.89, 20.06], [-29.89, 20.07], [-29.90, 20.07], [-29.90, 20.06]]]}},
  {"type": "Feature", "properties": {"id": "S2"},
   "geometry": {"type": "Polygon", "coordinates": [[[-29.89, 20.06], [-29.88, 20.06], [-29.88, 20.07], [-29.89, 20.07], [-29.89, 20.06]]]}}
]}
"#;

const WIND_CSV: &str = "# invented test series: wind from, knots
time,speed_kn,direction_deg
2026-06-14T12:00:00Z,12,250
2026-06-14T15:00:00Z,14,255
2026-06-14T21:00:00Z,15,260
";

const CURRENT_FIELD_CSV: &str = "lon,lat,time,u_kn,v_kn
-30.0,19.9,2026-06-14T12:00:00Z,0.30,0.10
-29.8,19.9,2026-06-14T12:00:00Z,0.31,0.10
-30.0,20.1,2026-06-14T12:00:00Z,0.20,0.10
-29.8,20.1,2026-06-14T12:00:00Z,0.21,0.10
-30.0,19.9,2026-06-15T00:00:00Z,0.40,0.00
-29.8,19.9,2026-06-15T00:00:00Z,0.41,0.00
-30.0,20.1,2026-06-15T00:00:00Z,0.32,0.00
-29.8,20.1,2026-06-15T00:00:00Z,0.33,0.00
";

const TRACK_GPX: &str = r#"<?xml version="1.0" encoding="UTF-8"?>
<gpx version="1.1" creator="seekgrid validation test (invented)" xmlns="http://www.topografix.com/GPX/1/1">
<trk><name>invented</name><trkseg>
<trkpt lat="20.00" lon="-29.95"><time>2026-06-14T20:00:00Z</time></trkpt>
<trkpt lat="20.01" lon="-29.94"><time>2026-06-14T20:10:00Z</time></trkpt>
<trkpt lat="20.02" lon="-29.95"><time>2026-06-14T20:20:00Z</time></trkpt>
</trkseg></trk></gpx>
"#;

const TRACK_GEOJSON: &str = r#"{"type": "Feature", "properties": {},
 "geometry": {"type": "LineString", "coordinates": [[-29.97, 20.00], [-29.96, 20.01], [-29.97, 20.02]]}}
"#;

/// The files the base incident names, written beside it.
const FILES: [(&str, &str); 7] = [
    ("coast.geojson", COAST),
    ("area.geojson", AREA),
    ("segments.geojson", SEGMENTS),
    ("wind.csv", WIND_CSV),
    ("current-field.csv", CURRENT_FIELD_CSV),
    ("track.gpx", TRACK_GPX),
    ("track.geojson", TRACK_GEOJSON),
];

/// An incident with analysts but no scenario.
const NO_SCENARIOS: &str = r#"[incident]
title = "No scenarios (invented)"
reference_time = "2026-06-14T18:00:00Z"
[grid]
cell_m = 250
[[analyst]]
id = "desk-a"
"#;

/// An incident with a scenario but no analyst.
const NO_ANALYSTS: &str = r#"[incident]
title = "No analysts (invented)"
reference_time = "2026-06-14T18:00:00Z"
[grid]
cell_m = 250
[[scenario]]
id = "circle"
analyst = "desk-a"
kind = "point"
position = [-29.90, 20.00]
sigma_m = 1500
"#;

// ---------------------------------------------------------------------------------------------
// The helper.
// ---------------------------------------------------------------------------------------------

/// One change to the base incident or to one of its files.
#[derive(Debug, Clone, Copy)]
enum Edit {
    /// Leave everything as it is.
    Unchanged,
    /// Replace the one occurrence of the first text in the incident file by the second.
    Replace(&'static str, &'static str),
    /// Add text at the end of the incident file.
    Append(&'static str),
    /// Use this text as the whole incident file.
    Text(&'static str),
    /// Replace the one occurrence of a text in a referenced file.
    Patch(&'static str, &'static str, &'static str),
    /// Write a referenced file with these contents.
    Write(&'static str, &'static str),
    /// Write a referenced file with these bytes (for text that is not UTF-8).
    WriteBytes(&'static str, &'static [u8]),
    /// Remove a referenced file.
    Delete(&'static str),
}

/// Which error a row expects and where it must point.
#[derive(Debug, Clone, Copy)]
enum Expect {
    /// The message names this field; the error points inside the edited text.
    Key(&'static str),
    /// The message names this field; the error is on the line holding this marker (a missing
    /// key points at the table that should hold it).
    KeyOnLine(&'static str, &'static str),
    /// The message names this field; the error has no position (nothing in the file to show).
    Whole(&'static str),
    /// The error is in this referenced file, at this line (`None`: the whole file).
    InFile(&'static str, Option<usize>),
    /// A TOML error whose message does not name the key, on the line holding this marker.
    UnnamedOnLine(&'static str),
}

use Edit::*;
use Expect::*;

/// One rule: which error, after which edit, with which words in its message.
type Row = (Expect, Edit, &'static [&'static str]);

/// The base incident after `edit`, written with its files into a fresh directory; returns the
/// incident text and the parse result.
fn apply(edit: Edit) -> (tempfile::TempDir, String, Result<Incident, IncidentErrors>) {
    let dir = tempfile::tempdir().unwrap();
    for (name, text) in FILES {
        std::fs::write(dir.path().join(name), text).unwrap();
    }
    let once = |text: &str, from: &str, what: &str| {
        assert_eq!(
            text.matches(from).count(),
            1,
            "the row's text {from:?} must occur exactly once in {what}"
        );
    };
    let mut text = BASE.to_owned();
    match edit {
        Unchanged => {}
        Replace(from, to) => {
            once(&text, from, "the base incident");
            text = text.replacen(from, to, 1);
        }
        Append(more) => text.push_str(more),
        Text(whole) => text = whole.to_owned(),
        Patch(file, from, to) => {
            let path = dir.path().join(file);
            let old = std::fs::read_to_string(&path).unwrap();
            once(&old, from, file);
            std::fs::write(&path, old.replacen(from, to, 1)).unwrap();
        }
        Write(file, contents) => std::fs::write(dir.path().join(file), contents).unwrap(),
        WriteBytes(file, bytes) => std::fs::write(dir.path().join(file), bytes).unwrap(),
        Delete(file) => std::fs::remove_file(dir.path().join(file)).unwrap(),
    }
    let result = parse(&dir.path().join("incident.toml"), text.clone());
    (dir, text, result)
}

/// The byte range of the edited text in the incident file after `edit`, if the edit is there.
fn edited_range(edit: Edit, text: &str) -> Option<std::ops::Range<usize>> {
    match edit {
        Replace(from, to) => {
            let start = BASE.find(from)?;
            Some(start..start + to.len())
        }
        Append(more) => Some(text.len() - more.len()..text.len()),
        _ => None,
    }
}

/// The byte offset of a line and column (both from 1, columns in characters) in `text`.
fn offset_of(text: &str, line: usize, col: usize) -> usize {
    let line_start: usize = text
        .split_inclusive('\n')
        .take(line - 1)
        .map(str::len)
        .sum();
    line_start
        + text[line_start..]
            .chars()
            .take(col - 1)
            .map(char::len_utf8)
            .sum::<usize>()
}

/// The line (from 1) of the one occurrence of `marker` in `text`.
fn line_of(text: &str, marker: &str) -> Option<usize> {
    (text.matches(marker).count() == 1)
        .then(|| text[..text.find(marker).unwrap()].matches('\n').count() + 1)
}

/// Whether `e` is the error the row expects, at the place the row expects.
fn matches_row(e: &IncidentError, expect: Expect, edit: Edit, text: &str, words: &[&str]) -> bool {
    let named = |field: &str| e.message.contains(field);
    let worded = words.iter().all(|w| e.message.contains(w));
    let in_incident = e.file.ends_with("incident.toml");
    worded
        && match expect {
            Key(field) => {
                let Some(range) = edited_range(edit, text) else {
                    return false;
                };
                named(field)
                    && in_incident
                    && match (e.line, e.col) {
                        (Some(l), Some(c)) => range.contains(&offset_of(text, l, c)),
                        _ => false,
                    }
            }
            KeyOnLine(field, marker) => {
                named(field) && in_incident && e.line.is_some() && e.line == line_of(text, marker)
            }
            Whole(field) => named(field) && in_incident && e.line.is_none(),
            InFile(name, line) => e.file.ends_with(name) && e.line == line,
            UnnamedOnLine(marker) => matches_row(e, KeyOnLine("", marker), edit, text, words),
        }
}

/// Checks one row: the edited incident is refused with an error that names the field (or the
/// file), holds every word and points where the row says. Returns what went wrong, if anything.
fn check(expect: Expect, edit: Edit, words: &[&str]) -> Result<(), String> {
    let (_dir, text, result) = apply(edit);
    match result {
        Ok(_) => Err(format!(
            "{expect:?} after {edit:?}: accepted, expected a refusal"
        )),
        Err(errors) => {
            if errors
                .0
                .iter()
                .any(|e| matches_row(e, expect, edit, &text, words))
            {
                Ok(())
            } else {
                Err(format!(
                    "{expect:?} {words:?} after {edit:?}: no such error among:\n{errors}"
                ))
            }
        }
    }
}

/// Checks every row of a table and reports every failing row at once.
fn check_all(rows: &[Row]) {
    let failures: Vec<String> = rows
        .iter()
        .filter_map(|(expect, edit, words)| check(*expect, *edit, words).err())
        .collect();
    assert!(
        failures.is_empty(),
        "{} of {} rows failed:\n\n{}",
        failures.len(),
        rows.len(),
        failures.join("\n\n")
    );
}

fn accepted(edit: Edit) -> Incident {
    match apply(edit).2 {
        Ok(inc) => inc,
        Err(e) => panic!("after {edit:?} the incident should be accepted, got:\n{e}"),
    }
}

fn drift(inc: &Incident, i: usize) -> &DriftDef {
    match &inc.scenarios[i].kind {
        ScenarioKind::Drift(d) => d,
        other => panic!("scenario {i} is not a drift: {other:?}"),
    }
}

fn pattern(inc: &Incident, i: usize) -> &PatternDef {
    match &inc.searches[i].geometry {
        SearchGeometry::Pattern(p) => p,
        other => panic!("search {i} has no pattern: {other:?}"),
    }
}

fn constant(v: &VectorDef) -> [f64; 4] {
    match v {
        VectorDef::Constant(s) => [
            s.speed_kn,
            s.direction_deg,
            s.speed_sigma_kn,
            s.direction_sigma_deg,
        ],
        other => panic!("not a constant vector: {other:?}"),
    }
}

// ---------------------------------------------------------------------------------------------
// The base is accepted.
// ---------------------------------------------------------------------------------------------

#[test]
fn the_base_incident_with_every_section_and_kind_is_accepted() {
    let inc = accepted(Unchanged);
    assert_eq!(inc.analysts.len(), 2);
    assert_eq!(inc.scenarios.len(), 8);
    assert_eq!(inc.searches.len(), 6);
    assert_eq!(inc.units.len(), 2);
    assert!(inc.coastline.is_some());
    assert_eq!(inc.crs.map(|z| z.epsg()), Some(32626));
    let kinds: Vec<&str> = inc
        .scenarios
        .iter()
        .map(|s| match &s.kind {
            ScenarioKind::Point { .. } => "point",
            ScenarioKind::Route { .. } => "route",
            ScenarioKind::Area { .. } => "area",
            ScenarioKind::Segments { .. } => "segments",
            ScenarioKind::Rings { .. } => "rings",
            ScenarioKind::Drift(_) => "drift",
        })
        .collect();
    assert_eq!(
        kinds,
        [
            "point", "point", "route", "area", "segments", "rings", "drift", "drift"
        ]
    );
    assert!(matches!(drift(&inc, 7).current, VectorDef::Field { .. }));
    assert!(matches!(drift(&inc, 7).wind, VectorDef::Series { .. }));
    assert!(matches!(pattern(&inc, 0), PatternDef::ParallelSweep(_)));
    assert!(matches!(pattern(&inc, 1), PatternDef::CreepingLine(_)));
    assert!(matches!(
        pattern(&inc, 2),
        PatternDef::ExpandingSquare { .. }
    ));
    assert!(matches!(pattern(&inc, 3), PatternDef::SectorSearch { .. }));
    assert!(matches!(
        inc.searches[4].geometry,
        SearchGeometry::Track { .. }
    ));
    assert!(matches!(
        inc.searches[5].geometry,
        SearchGeometry::Track { .. }
    ));
}

// ---------------------------------------------------------------------------------------------
// The rules, one row each.
// ---------------------------------------------------------------------------------------------

const TITLE: &str = "title = \"Validation base (invented test incident)\"";
const REFERENCE_TIME: &str = "reference_time = \"2026-06-14T18:00:00Z\"";
const WAYPOINTS: &str = "waypoints = [[-29.95, 19.95], [-29.90, 20.02], [-29.85, 20.05]]";
const QUANTILES: &str = "distance_quantiles_km = { 25 = 1.1, 50 = 2.0, 75 = 3.6, 95 = 7.4 }";
const ADRIFT_6: &str =
    "adrift = { earliest = \"2026-06-14T15:00:00Z\", latest = \"2026-06-14T17:00:00Z\" }";
const CURRENT_6: &str =
    "current = { speed_kn = 0.6, toward_deg = 75, speed_sigma_kn = 0.2, direction_sigma_deg = 20 }";
const WIND_6: &str =
    "wind = { speed_kn = 14, from_deg = 250, speed_sigma_kn = 3, direction_sigma_deg = 15 }";
const CURRENT_7: &str = "current = { field = \"current-field.csv\", speed_sigma_kn = 0.1 }";
const WIND_7: &str = "wind = { series = \"wind.csv\", direction_sigma_deg = 10 }";

/// Errors of the TOML layer (serde): unknown keys, missing keys, wrong types, bad syntax.
const TOML_RULES: &[Row] = &[
    (
        Key("cross_trak_sigma_m"),
        Replace("cross_track_sigma_m = 800", "cross_trak_sigma_m = 800"),
        &["unknown field", "docs/incident-format.md"],
    ),
    (
        Key("major_bearing"),
        Replace("major_bearing_deg = 62,", "major_bearing = 62,"),
        &["unknown field"],
    ),
    (
        KeyOnLine("title", "[incident]"),
        Replace("title = \"Validation base (invented test incident)\"\n", ""),
        &["missing field", "add it"],
    ),
    (
        KeyOnLine("grid", "# Invented test incident"),
        Replace(
            "[grid]\ncell_m = 250\nbounds = { west = -30.2, south = 19.8, east = -29.6, north = 20.3 }\nmax_cells = 4000000\n",
            "",
        ),
        &["missing field"],
    ),
    (
        KeyOnLine("downwind_slope", "leeway = { downwind_offset_kn"),
        Replace(
            "leeway = { downwind_slope = 0.02 }",
            "leeway = { downwind_offset_kn = 0.02 }",
        ),
        &["missing field"],
    ),
    (
        Key("incident.title"),
        Replace(TITLE, "title = 7"),
        &["expected text in quotes, found the whole number 7"],
    ),
    (
        Key("grid.cell_m"),
        Replace("cell_m = 250", "cell_m = \"250\""),
        &["expected a number, found the text \"250\""],
    ),
    (
        Key("scenario[6].particles"),
        Replace("particles = 500", "particles = -500"),
        &["expected a whole number, 0 or more, found the whole number -500"],
    ),
    (
        Key("incident.reference_time"),
        Replace(REFERENCE_TIME, "reference_time = 18"),
        &["expected a time such as \"2026-06-14T18:00:00Z\""],
    ),
    (
        Key("scenario[2].waypoints[1]"),
        Replace("[-29.90, 20.02]", "[-29.90]"),
        &["a position is exactly two numbers [lon, lat]; [-29.9] has one"],
    ),
    (
        // A decimal comma makes three numbers of two.
        Key("scenario[0].position"),
        Replace("position = [-29.90, 20.00]", "position = [-29.90, 20,5]"),
        &[
            "[-29.9, 20, 5] has three",
            "a decimal comma? write [-29.9, 20.5]",
        ],
    ),
    (
        Key("search[0].pattern.center"),
        Replace("center = [-29.90, 20.00]", "center = [-29.90, 20.00, 17.5]"),
        &["exactly two numbers", "has three"],
    ),
    (
        Key("scenario[5].position"),
        Replace(
            "position = [-29.92, 20.03]",
            "position = [-29.92, 20.03, 1, 2]",
        ),
        &["has four"],
    ),
    (
        Key("scenario[2].waypoints[0]"),
        Replace("[-29.95, 19.95]", "[\"-29.95\", 19.95]"),
        &["expected a number, found the text \"-29.95\""],
    ),
    (
        UnnamedOnLine("sigma_m = 1500"),
        Replace("position = [-29.90, 20.00]", "position = [-29.90, 20.00"),
        &["expected"],
    ),
];

#[test]
fn toml_errors_point_at_the_key_or_value_at_fault() {
    check_all(TOML_RULES);
}

const HEADER_GRID_PRIOR_RULES: &[Row] = &[
    (
        Key("incident.positions"),
        Replace(
            "notes = \"invented for the validation tests\"",
            "notes = \"invented for the validation tests\"\npositions = \"osgb\"",
        ),
        &["unknown position format \"osgb\"", "\"ddm\"", "\"grid\""],
    ),
    (
        Key("incident.title"),
        Replace(TITLE, "title = \"  \""),
        &["empty"],
    ),
    (
        Key("incident.reference_time"),
        Replace(REFERENCE_TIME, "reference_time = \"14/06/2026 18:00\""),
        &["RFC 3339", "UTC"],
    ),
    (
        // A TOML local date-time has no offset, so it is not a UTC time.
        Key("incident.reference_time"),
        Replace(REFERENCE_TIME, "reference_time = 2026-06-14T18:00:00"),
        &["RFC 3339"],
    ),
    (
        Key("incident.crs"),
        Replace("crs = \"EPSG:32626\"", "crs = \"EPSG:4326\""),
        &["geographic", "use crs = \"EPSG:32626\""],
    ),
    (
        // British National Grid: a projected CRS seekgrid does not work in yet.
        Key("incident.crs"),
        Replace("crs = \"EPSG:32626\"", "crs = \"EPSG:27700\""),
        &["not a WGS84 UTM zone", "use crs = \"EPSG:32626\""],
    ),
    (
        Key("incident.crs"),
        Replace("crs = \"EPSG:32626\"", "crs = \"UTM 26N\""),
        &["cannot read CRS"],
    ),
    (
        KeyOnLine("incident.object_afloat", "object_afloat = true"),
        Replace("coastline = \"coast.geojson\"\n", ""),
        &["needs a coastline"],
    ),
    (
        Key("grid.cell_m"),
        Replace("cell_m = 250", "cell_m = 0"),
        &["cell_m must be a number of metres from 1 to 100000"],
    ),
    (
        Key("grid.cell_m"),
        Replace("cell_m = 250", "cell_m = nan"),
        &["from 1 to 100000"],
    ),
    (
        Key("grid.cell_m"),
        Replace("cell_m = 250", "cell_m = 0.5"),
        &["from 1 to 100000"],
    ),
    (
        Key("grid.cell_m"),
        Replace("cell_m = 250", "cell_m = 250000"),
        &["from 1 to 100000"],
    ),
    (
        Key("grid.bounds"),
        Replace("bounds = { west = -30.2", "bounds = { west = -29.5"),
        &["west < east"],
    ),
    (
        Key("grid.bounds"),
        Replace(
            "bounds = { west = -30.2, south = 19.8",
            "bounds = { west = -30.2, south = 20.4",
        ),
        &["south < north"],
    ),
    (
        Key("grid.bounds"),
        Replace(
            "bounds = { west = -30.2, south = 19.8",
            "bounds = { west = -30.2, south = -81",
        ),
        &["-80..84"],
    ),
    (
        Key("grid.bounds"),
        Replace("bounds = { west = -30.2", "bounds = { west = -190"),
        &["degrees"],
    ),
    (
        Key("grid.bounds"),
        Replace("bounds = { west = -30.2", "bounds = { west = nan"),
        &["west < east"],
    ),
    (
        Key("grid.max_cells"),
        Replace("max_cells = 4000000", "max_cells = 0"),
        &["at least 1"],
    ),
    (
        Key("prior.pool"),
        Replace("pool = \"linear\"", "pool = \"geometric\""),
        &["unknown pool", "\"linear\" or \"logarithmic\""],
    ),
    (
        // Refused at `check`, at the pool's line, not later when the map is computed.
        Key("prior.pool"),
        Replace("pool = \"linear\"", "pool = \"logarithmic\""),
        &[
            "logarithmic pool cannot combine drift scenarios",
            "\"drift-constant\" drifts",
        ],
    ),
];

#[test]
fn the_header_grid_and_prior_refuse_bad_values() {
    check_all(HEADER_GRID_PRIOR_RULES);
}

const ANALYST_RULES: &[Row] = &[
    (
        Key("analyst[0].id"),
        Replace("id = \"desk-a\"", "id = \" \""),
        &["id is empty"],
    ),
    (
        Key("analyst[2].id"),
        Append("\n[[analyst]]\nid = \"desk-a\"\n"),
        &["used twice"],
    ),
    (
        Key("analyst[0].weight"),
        Replace("weight = 2.0", "weight = 0"),
        &["positive"],
    ),
    (
        Key("analyst[1].weight"),
        Replace("weight = 1.5", "weight = -inf"),
        &["positive"],
    ),
    (
        Key("analyst[2].id"),
        Append("\n[[analyst]]\nid = \"desk-c\"\n"),
        &["\"desk-c\" has no scenario"],
    ),
    (Whole("analyst"), Text(NO_ANALYSTS), &["no [[analyst]]"]),
    (
        // Reported at the smallest weight, which would vanish from the pool.
        KeyOnLine("analyst[1].weight", "weight = 1.5"),
        Replace("weight = 2.0", "weight = 2e7"),
        &["analysts' weights differ by a factor of", "more than 1e6"],
    ),
];

#[test]
fn analysts_need_a_unique_id_a_positive_weight_and_a_scenario() {
    check_all(ANALYST_RULES);
}

const SCENARIO_RULES: &[Row] = &[
    (Whole("scenario"), Text(NO_SCENARIOS), &["no [[scenario]]"]),
    (
        Key("scenario[1].id"),
        Replace("id = \"ellipse\"", "id = \"circle\""),
        &["used twice"],
    ),
    (
        Key("scenario[2].analyst"),
        Replace(
            "analyst = \"desk-a\"\nweight = 0.27",
            "analyst = \"desk-z\"\nweight = 0.27",
        ),
        &["no analyst has id \"desk-z\"", "desk-a, desk-b"],
    ),
    (
        Key("scenario[0].weight"),
        Replace("weight = 0.41", "weight = -0.41"),
        &["positive"],
    ),
    (
        Key("scenario[3].kind"),
        Replace("kind = \"area\"", "kind = \"polygon\""),
        &[
            "unknown scenario kind",
            "point, route, area, segments, rings or drift",
        ],
    ),
    (
        Key("scenario[2].sigma_m"),
        Replace(
            "cross_track_sigma_m = 800",
            "cross_track_sigma_m = 800\nsigma_m = 5",
        ),
        &["does not belong", "\"route\""],
    ),
    (
        Key("scenario[0].leeway"),
        Replace(
            "sigma_m = 1500",
            "sigma_m = 1500\nleeway = { downwind_slope = 0.03 }",
        ),
        &["does not belong", "\"point\""],
    ),
    (
        // A drift field on another kind is named at its own key (it was once reported as
        // `particles` at the table).
        Key("scenario[0].seed"),
        Replace("sigma_m = 1500", "sigma_m = 1500\nseed = 3"),
        &[
            "seed does not belong",
            "\"point\"",
            "(it is a field of drift)",
        ],
    ),
    (
        Key("scenario[3].sigma_m"),
        Replace(
            "polygon = \"area.geojson\"",
            "polygon = \"area.geojson\"\nsigma_m = 5",
        ),
        &["does not belong", "\"area\"", "point"],
    ),
    (
        KeyOnLine("kind", "# s3 area"),
        Replace("kind = \"area\"\n", ""),
        &[
            "missing field `kind`",
            "point, route, area, segments, rings or drift",
        ],
    ),
    (
        Key("scenario[3].kind"),
        Replace("kind = \"area\"", "kind = 3"),
        &["kind must be text in quotes"],
    ),
    (
        Key("scenario[0].id"),
        Replace("id = \"circle\"", "id = \" \""),
        &["the scenario id is empty"],
    ),
    (
        // The other scenarios of desk-a weigh 0.32 and 0.27: more than a million times more.
        Key("scenario[0].weight"),
        Replace("weight = 0.41", "weight = 1e-7"),
        &["differ by a factor of", "more than 1e6", "desk-a"],
    ),
];

#[test]
fn scenarios_need_a_unique_id_a_known_analyst_and_kind_and_only_their_kinds_fields() {
    check_all(SCENARIO_RULES);
}

const POINT_RULES: &[Row] = &[
    (
        KeyOnLine("scenario[0].position", "# s0 circle"),
        Replace("position = [-29.90, 20.00]\n", ""),
        &["missing", "position = [lon, lat]"],
    ),
    (
        Key("scenario[0].position"),
        Replace("position = [-29.90, 20.00]", "position = [-190.0, 20.00]"),
        &["not a WGS84 position", "longitude first"],
    ),
    (
        Key("scenario[0].position"),
        Replace("position = [-29.90, 20.00]", "position = [nan, 20.00]"),
        &["not a WGS84 position"],
    ),
    (
        Key("scenario[0].position"),
        Replace("position = [-29.90, 20.00]", "position = [-29.90, 85.0]"),
        &["outside the UTM range"],
    ),
    (
        Key("scenario[0].major_bearing_deg"),
        Replace("sigma_m = 1500", "sigma_m = 1500\nmajor_bearing_deg = 10"),
        &["no major axis"],
    ),
    (
        Key("scenario[0].sigma_m"),
        Replace("sigma_m = 1500", "sigma_m = -1500"),
        &["positive"],
    ),
    (
        Key("scenario[1].sigma_major_m"),
        Replace("sigma_major_m = 1400", "sigma_major_m = 0"),
        &["positive"],
    ),
    (
        Key("scenario[1].sigma_minor_m"),
        Replace("sigma_minor_m = 700", "sigma_minor_m = inf"),
        &["positive"],
    ),
    (
        KeyOnLine("scenario[1].major_bearing_deg", "# s1 ellipse"),
        Replace("major_bearing_deg = 60\n", ""),
        &["missing", "elliptical point"],
    ),
    (
        Key("scenario[1].major_bearing_deg"),
        Replace("major_bearing_deg = 60\n", "major_bearing_deg = nan\n"),
        &["finite"],
    ),
    (
        Key("scenario[1].sigma_minor_m"),
        Replace("sigma_minor_m = 700", "sigma_minor_m = 1500"),
        &["larger than sigma_major_m", "swap them"],
    ),
    (
        Key("scenario[0].sigma_m"),
        Replace(
            "sigma_m = 1500",
            "sigma_m = 1500\nsigma_major_m = 1500\nsigma_minor_m = 900",
        ),
        &["not both"],
    ),
    (
        KeyOnLine("scenario[0].sigma_m", "# s0 circle"),
        Replace("sigma_m = 1500\n", ""),
        &["either sigma_m"],
    ),
    (
        // Half an ellipse is neither a circle nor an ellipse.
        KeyOnLine("scenario[1].sigma_m", "# s1 ellipse"),
        Replace("sigma_minor_m = 700\n", ""),
        &["either sigma_m"],
    ),
];

#[test]
fn point_scenarios_need_a_utm_position_and_positive_sigmas() {
    check_all(POINT_RULES);
}

const ROUTE_AREA_SEGMENT_RULES: &[Row] = &[
    (
        KeyOnLine("scenario[2].waypoints", "# s2 route"),
        Replace(
            "waypoints = [[-29.95, 19.95], [-29.90, 20.02], [-29.85, 20.05]]\n",
            "",
        ),
        &["missing", "waypoints = [[lon, lat]"],
    ),
    (
        KeyOnLine("scenario[2].cross_track_sigma_m", "# s2 route"),
        Replace("cross_track_sigma_m = 800\n", ""),
        &["missing", "across-track"],
    ),
    (
        Key("scenario[2].waypoints"),
        Replace(WAYPOINTS, "waypoints = [[-29.95, 19.95]]"),
        &["at least two waypoints"],
    ),
    (
        Key("scenario[2].cross_track_sigma_m"),
        Replace("cross_track_sigma_m = 800", "cross_track_sigma_m = 0"),
        &["positive"],
    ),
    (
        Key("scenario[2].waypoints[1]"),
        Replace("[-29.90, 20.02]", "[-29.90, 95.0]"),
        &["not a WGS84 position"],
    ),
    (
        Key("scenario[2].waypoints"),
        Replace(WAYPOINTS, "waypoints = [[-29.95, 19.95], [-29.95, 19.95]]"),
        &["zero length"],
    ),
    (
        KeyOnLine("scenario[3].polygon", "# s3 area"),
        Replace("polygon = \"area.geojson\"\n", ""),
        &["missing", "GeoJSON file of polygons"],
    ),
    (
        KeyOnLine("scenario[4].segments", "# s4 segments"),
        Replace("segments = \"segments.geojson\"\n", ""),
        &["missing", "id property"],
    ),
    (
        KeyOnLine("scenario[4].poa", "# s4 segments"),
        Replace("poa = { S1 = 0.5, S2 = 0.3 }\n", ""),
        &["missing", "POA per segment"],
    ),
    (
        Key("scenario[4].poa.S9"),
        Replace("S2 = 0.3", "S9 = 0.3"),
        &["segment \"S9\" is not in", "S1, S2"],
    ),
    (
        Key("scenario[4].poa.S2"),
        Replace("S2 = 0.3", "S2 = -0.3"),
        &["a POA must be a fraction in 0..=1, got -0.3"],
    ),
    (
        Key("scenario[4].poa.S2"),
        Replace("S2 = 0.3", "S2 = 1.5"),
        &["fraction in 0..=1"],
    ),
    (
        Key("scenario[4].poa"),
        Replace("poa = { S1 = 0.5", "poa = { S1 = 0.8"),
        &["add up to 1.1000", "more than 1", "rest of world"],
    ),
    (
        // One tolerance (the prior crate's): 1 + 1e-10 is over it.
        Key("scenario[4].poa"),
        Replace(
            "poa = { S1 = 0.5, S2 = 0.3 }",
            "poa = { S1 = 0.5, S2 = 0.5000000001 }",
        ),
        &["more than 1"],
    ),
    (
        InFile("segments.geojson", None),
        Write("segments.geojson", OVERLAPPING_SEGMENTS),
        &["segments \"S1\" and \"S2\" overlap"],
    ),
    (
        InFile("segments.geojson", None),
        Write("segments.geojson", SELF_INTERSECTING_SEGMENT),
        &["segment \"S1\"", "is invalid", "self-intersection"],
    ),
    (
        InFile("area.geojson", None),
        Write("area.geojson", BOWTIE_AREA),
        &["feature 0: a polygon is invalid", "self-intersection"],
    ),
    (
        InFile("area.geojson", None),
        Write("area.geojson", OVERLAPPING_AREA),
        &["features 0 and 1 overlap"],
    ),
];

/// Two segments, the second covering half of the first.
const OVERLAPPING_SEGMENTS: &str = r#"{"type": "FeatureCollection", "features": [
  {"type": "Feature", "properties": {"id": "S1"},
   "geometry": {"type": "Polygon", "coordinates": [[[-29.90, 20.06], [-29.89, 20.06], [-29.89, 20.07], [-29.90, 20.07], [-29.90, 20.06]]]}},
  {"type": "Feature", "properties": {"id": "S2"},
   "geometry": {"type": "Polygon", "coordinates": [[[-29.895, 20.06], [-29.88, 20.06], [-29.88, 20.07], [-29.895, 20.07], [-29.895, 20.06]]]}}
]}
"#;

/// A segment whose ring crosses itself (a bow tie).
const SELF_INTERSECTING_SEGMENT: &str = r#"{"type": "FeatureCollection", "features": [
  {"type": "Feature", "properties": {"id": "S1"},
   "geometry": {"type": "Polygon", "coordinates": [[[-29.90, 20.06], [-29.89, 20.07], [-29.89, 20.06], [-29.90, 20.07], [-29.90, 20.06]]]}},
  {"type": "Feature", "properties": {"id": "S2"},
   "geometry": {"type": "Polygon", "coordinates": [[[-29.89, 20.06], [-29.88, 20.06], [-29.88, 20.07], [-29.89, 20.07], [-29.89, 20.06]]]}}
]}
"#;

/// An area polygon whose ring crosses itself.
const BOWTIE_AREA: &str = r#"{"type": "Polygon", "coordinates": [[[-29.96, 19.96], [-29.94, 19.98], [-29.94, 19.96], [-29.96, 19.98], [-29.96, 19.96]]]}"#;

/// Two area features that overlap.
const OVERLAPPING_AREA: &str = r#"{"type": "FeatureCollection", "features": [
  {"type": "Feature", "properties": {},
   "geometry": {"type": "Polygon", "coordinates": [[[-29.96, 19.96], [-29.94, 19.96], [-29.94, 19.98], [-29.96, 19.98], [-29.96, 19.96]]]}},
  {"type": "Feature", "properties": {},
   "geometry": {"type": "Polygon", "coordinates": [[[-29.95, 19.96], [-29.93, 19.96], [-29.93, 19.98], [-29.95, 19.98], [-29.95, 19.96]]]}}
]}
"#;

#[test]
fn routes_areas_and_segments_need_their_fields_and_sound_values() {
    check_all(ROUTE_AREA_SEGMENT_RULES);
}

const RING_RULES: &[Row] = &[
    (
        KeyOnLine("scenario[5].position", "# s5 rings"),
        Replace("position = [-29.92, 20.03]\n", ""),
        &["missing", "initial planning point"],
    ),
    (
        KeyOnLine("scenario[5].distance_quantiles_km", "# s5 rings"),
        Replace(
            "distance_quantiles_km = { 25 = 1.1, 50 = 2.0, 75 = 3.6, 95 = 7.4 }\n",
            "",
        ),
        &["missing"],
    ),
    (
        Key("scenario[5].position"),
        Replace("position = [-29.92, 20.03]", "position = [-29.92, -95.0]"),
        &["not a WGS84 position"],
    ),
    (
        Key("scenario[5].ring_interpolation"),
        Replace(
            "ring_interpolation = \"monotone-cubic\"",
            "ring_interpolation = \"linear\"",
        ),
        &[
            "unknown ring_interpolation",
            "\"uniform-per-ring\" or \"monotone-cubic\"",
        ],
    ),
    (
        Key("scenario[5].distance_quantiles_km.median"),
        Replace("50 = 2.0", "median = 2.0"),
        &["not a percentage"],
    ),
    (
        Key("scenario[5].distance_quantiles_km.150"),
        Replace("95 = 7.4", "150 = 7.4"),
        &["outside 0..100"],
    ),
    (
        Key("scenario[5].distance_quantiles_km.0"),
        Replace("25 = 1.1", "0 = 1.1"),
        &["outside 0..100"],
    ),
    (
        // Positive as written, but the fraction 0 once divided by 100.
        Key("scenario[5].distance_quantiles_km.5e-324"),
        Replace("25 = 1.1", "5e-324 = 1.1"),
        &["percentage 5e-324 is outside 0..100"],
    ),
    (
        Key("scenario[5].distance_quantiles_km.50"),
        Replace("50 = 2.0", "50 = 0"),
        &["a ring distance must be a positive number"],
    ),
    (
        Key("scenario[5].distance_quantiles_km"),
        Replace(QUANTILES, "distance_quantiles_km = {}"),
        &["no distance quantiles"],
    ),
    (
        Key("scenario[5].distance_quantiles_km"),
        Replace(
            QUANTILES,
            "distance_quantiles_km = { 25 = 1.1, 50 = 3.9, 75 = 3.6, 95 = 7.4 }",
        ),
        &["must grow with the percentage"],
    ),
    (
        // Two keys for one percentage (the prior crate refuses equal fractions).
        Key("scenario[5].distance_quantiles_km.50.0"),
        Replace("50 = 2.0", "50 = 2.0, \"50.0\" = 2.1"),
        &[
            "percentage 50.0 is given twice",
            "give each percentage once",
        ],
    ),
];

#[test]
fn rings_need_a_position_and_distances_growing_with_the_percentage() {
    check_all(RING_RULES);
}

const DRIFT_RULES: &[Row] = &[
    (
        KeyOnLine("scenario[6].position", "# s6 drift constant"),
        Replace("position = [-29.93, 20.04]\n", ""),
        &["missing", "last known position"],
    ),
    (
        KeyOnLine("scenario[6].adrift", "# s6 drift constant"),
        Replace(ADRIFT_6, ""),
        &["missing", "earliest"],
    ),
    (
        KeyOnLine("scenario[6].current", "# s6 drift constant"),
        Replace(CURRENT_6, ""),
        &["missing", "toward_deg"],
    ),
    (
        KeyOnLine("scenario[6].wind", "# s6 drift constant"),
        Replace(WIND_6, ""),
        &["missing", "from_deg"],
    ),
    (
        KeyOnLine("scenario[7].leeway", "# s7 drift files"),
        Replace("leeway = { downwind_slope = 0.02 }", ""),
        &["missing", "no built-in leeway values"],
    ),
    (
        Key("scenario[6].position"),
        Replace("position = [-29.93, 20.04]", "position = [-29.93, -81.0]"),
        &["outside the UTM range"],
    ),
    (
        Key("scenario[6].position_sigma_m"),
        Replace("position_sigma_m = 800", "position_sigma_m = -800"),
        &["zero or positive"],
    ),
    (
        Key("scenario[6].adrift.earliest"),
        Replace(
            "earliest = \"2026-06-14T15:00:00Z\"",
            "earliest = \"15:00\"",
        ),
        &["RFC 3339"],
    ),
    (
        Key("scenario[6].adrift.latest"),
        Replace(
            "latest = \"2026-06-14T17:00:00Z\"",
            "latest = \"2026-06-14T17:00:00\"",
        ),
        &["RFC 3339"],
    ),
    (
        Key("scenario[6].adrift.latest"),
        Replace(
            "latest = \"2026-06-14T17:00:00Z\"",
            "latest = \"2026-06-14T14:00:00Z\"",
        ),
        &["latest is before earliest", "swap them"],
    ),
    (
        Key("scenario[6].leeway.downwind_slope"),
        Replace("downwind_slope = 0.035", "downwind_slope = -0.035"),
        &["zero or positive"],
    ),
    (
        Key("scenario[6].leeway.downwind_offset_kn"),
        Replace("downwind_offset_kn = 0.05", "downwind_offset_kn = nan"),
        &["finite"],
    ),
    (
        Key("scenario[6].leeway.downwind_sigma_kn"),
        Replace("downwind_sigma_kn = 0.04", "downwind_sigma_kn = -0.04"),
        &["zero or positive"],
    ),
    (
        Key("scenario[6].leeway.crosswind_slope"),
        Replace("crosswind_slope = 0.012", "crosswind_slope = inf"),
        &["finite"],
    ),
    (
        Key("scenario[6].leeway.crosswind_offset_kn"),
        Replace("crosswind_offset_kn = -0.01", "crosswind_offset_kn = inf"),
        &["finite"],
    ),
    (
        Key("scenario[6].leeway.crosswind_sigma_kn"),
        Replace("crosswind_sigma_kn = 0.03", "crosswind_sigma_kn = -0.03"),
        &["zero or positive"],
    ),
    (
        Key("scenario[6].leeway.jibe_per_h"),
        Replace("jibe_per_h = 0.05", "jibe_per_h = -0.05"),
        &["zero or positive"],
    ),
    (
        Key("scenario[6].leeway.jibe_per_h"),
        Replace("jibe_per_h = 0.05", "jibe_per_h = 1.5"),
        &["jibe_per_h is 1.5", "between 0 and 1"],
    ),
    (
        Key("scenario[6].diffusivity_m2_s"),
        Replace("diffusivity_m2_s = 0.5", "diffusivity_m2_s = -0.5"),
        &["zero or positive"],
    ),
    (
        Key("scenario[6].particles"),
        Replace("particles = 500", "particles = 0"),
        &["between 1 and 20 000 000"],
    ),
    (
        Key("scenario[6].particles"),
        Replace("particles = 500", "particles = 20000001"),
        &["between 1 and 20 000 000"],
    ),
];

#[test]
fn drift_scenarios_need_a_position_window_environment_and_leeway() {
    check_all(DRIFT_RULES);
}

const CURRENT_AND_WIND_RULES: &[Row] = &[
    (
        Key("scenario[6].current.from_deg"),
        Replace("toward_deg = 75", "from_deg = 75"),
        &["flows toward", "use toward_deg"],
    ),
    (
        Key("scenario[6].wind.toward_deg"),
        Replace("from_deg = 250", "toward_deg = 250"),
        &["blows from", "use from_deg"],
    ),
    (
        Key("scenario[6].current.speed_sigma_kn"),
        Replace("speed_sigma_kn = 0.2", "speed_sigma_kn = -0.2"),
        &["zero or positive"],
    ),
    (
        Key("scenario[6].wind.direction_sigma_deg"),
        Replace("direction_sigma_deg = 15", "direction_sigma_deg = -15"),
        &["zero or positive"],
    ),
    (
        Key("scenario[7].current.speed_sigma_kn"),
        Replace(
            CURRENT_7,
            "current = { field = \"current-field.csv\", speed_sigma_kn = -0.1 }",
        ),
        &["zero or positive"],
    ),
    (
        Key("scenario[7].wind.direction_sigma_deg"),
        Replace(
            WIND_7,
            "wind = { series = \"wind.csv\", direction_sigma_deg = nan }",
        ),
        &["direction_sigma_deg must be a finite number"],
    ),
    (
        Key("scenario[6].current"),
        Replace(
            "current = { speed_kn = 0.6,",
            "current = { series = \"wind.csv\", speed_kn = 0.6,",
        ),
        &["exactly one of", "toward_deg"],
    ),
    (
        Key("scenario[7].wind"),
        Replace(WIND_7, "wind = { direction_sigma_deg = 10 }"),
        &["exactly one of", "from_deg"],
    ),
    (
        Key("scenario[7].current"),
        Replace(
            CURRENT_7,
            "current = { field = \"current-field.csv\", series = \"wind.csv\" }",
        ),
        &["exactly one of"],
    ),
    (
        Key("scenario[6].current.speed_kn"),
        Replace(
            "current = { speed_kn = 0.6, toward_deg = 75",
            "current = { toward_deg = 75",
        ),
        &["missing", "give speed_kn"],
    ),
    (
        Key("scenario[6].wind.from_deg"),
        Replace(
            "wind = { speed_kn = 14, from_deg = 250,",
            "wind = { speed_kn = 14,",
        ),
        &["missing", "give from_deg"],
    ),
    (
        Key("scenario[6].current.speed_kn"),
        Replace("speed_kn = 0.6", "speed_kn = -0.6"),
        &["zero or positive"],
    ),
    (
        Key("scenario[6].wind.from_deg"),
        Replace("from_deg = 250", "from_deg = inf"),
        &["finite"],
    ),
    (
        Key("scenario[6].current.toward_deg"),
        Replace("toward_deg = 75", "toward_deg = nan"),
        &["finite"],
    ),
];

#[test]
fn current_and_wind_need_one_source_their_own_direction_convention_and_sound_values() {
    check_all(CURRENT_AND_WIND_RULES);
}

const SEARCH_RULES: &[Row] = &[
    (
        Key("search[1].id"),
        Replace("id = \"creep\"", "id = \"sweep\""),
        &["used twice"],
    ),
    (
        Key("search[0].start"),
        Replace("start = \"2026-06-14T19:00:00Z\"", "start = \"tonight\""),
        &["RFC 3339"],
    ),
    (
        Key("search[0].end"),
        Replace(
            "end = \"2026-06-14T21:00:00Z\"",
            "end = \"2026-06-14T25:00:00Z\"",
        ),
        &["RFC 3339"],
    ),
    (
        Key("search[0].end"),
        Replace(
            "end = \"2026-06-14T21:00:00Z\"",
            "end = \"2026-06-14T18:59:59Z\"",
        ),
        &["ends before it starts"],
    ),
    (
        Key("search[0].sweep_width_m"),
        Replace("sweep_width_m = 900", "sweep_width_m = 0"),
        &["positive"],
    ),
    (
        Key("search[0].sweep_width_factors[1]"),
        Replace(
            "sweep_width_factors = [0.9, 0.8]",
            "sweep_width_factors = [0.9, -0.8]",
        ),
        &["correction factor 1 is -0.8", "positive multiplier"],
    ),
    (
        // Each factor is fine; their product is not a number.
        Key("search[0].sweep_width_factors"),
        Replace(
            "sweep_width_factors = [0.9, 0.8]",
            "sweep_width_factors = [1e300, 1e300]",
        ),
        &["times its correction factors is inf m"],
    ),
    (
        Key("search[0].id"),
        Replace("id = \"sweep\"", "id = \"\""),
        &["the search id is empty"],
    ),
    (
        Key("search[0].unit"),
        Replace("unit = \"boat-1\"", "unit = \" \""),
        &["the unit of the search is empty"],
    ),
    (
        Key("search[0].done_fraction"),
        Replace(
            "note = \"invented\"\n\n[[search]] # k1",
            "done_fraction = 0\n\n[[search]] # k1",
        ),
        &["done_fraction must be more than 0 and at most 1"],
    ),
    (
        Key("search[0].done_fraction"),
        Replace(
            "note = \"invented\"\n\n[[search]] # k1",
            "done_fraction = 1.2\n\n[[search]] # k1",
        ),
        &["more than 0 and at most 1"],
    ),
    (
        Key("search[4].done_fraction"),
        Replace(
            "track = \"track.gpx\"",
            "track = \"track.gpx\"\ndone_fraction = 0.5",
        ),
        &["share of a pattern's track flown", "remove done_fraction"],
    ),
    (
        Key("search[0].tasked_in"),
        Replace(
            "note = \"invented\"\n\n[[search]] # k1",
            "tasked_in = \"\"\n\n[[search]] # k1",
        ),
        &["tasked_in is empty"],
    ),
    (
        Key("search[0].detection"),
        Replace(
            "detection = \"exponential\"\npattern",
            "detection = \"glimpse\"\npattern",
        ),
        &[
            "unknown detection law",
            "\"inverse-cube\", \"exponential\" or \"definite-range\"",
        ],
    ),
    (
        KeyOnLine("search[4]", "# k4 gpx track"),
        Replace(
            "track = \"track.gpx\"",
            "track = \"track.gpx\"\npattern = { kind = \"sector-search\", center = [-29.92, 20.03], radius_m = 3000 }",
        ),
        &["exactly one of pattern", "track"],
    ),
    (
        KeyOnLine("search[5]", "# k5 geojson track"),
        Replace("track = \"track.geojson\"\n", ""),
        &["exactly one of pattern"],
    ),
];

#[test]
fn searches_need_unique_ids_ordered_times_positive_widths_and_one_geometry() {
    check_all(SEARCH_RULES);
}

const PATTERN_RULES: &[Row] = &[
    (
        Key("search[0].pattern.center"),
        Replace("center = [-29.90, 20.00]", "center = [-29.90, 88.0]"),
        &["outside the UTM range"],
    ),
    (
        Key("search[3].pattern.kind"),
        Replace("kind = \"sector-search\"", "kind = \"sector\""),
        &[
            "unknown pattern",
            "parallel-sweep, creeping-line, expanding-square or sector-search",
        ],
    ),
    (
        KeyOnLine("search[0].pattern.length_m", "\"parallel-sweep\""),
        Replace("length_m = 9000, ", ""),
        &["missing", "major axis"],
    ),
    (
        KeyOnLine("search[0].pattern.width_m", "\"parallel-sweep\""),
        Replace("width_m = 4500, ", ""),
        &["missing", "give width_m"],
    ),
    (
        KeyOnLine("search[0].pattern.major_bearing_deg", "\"parallel-sweep\""),
        Replace("major_bearing_deg = 62, ", ""),
        &["missing", "long side"],
    ),
    (
        KeyOnLine("search[0].pattern.track_spacing_m", "\"parallel-sweep\""),
        Replace(", track_spacing_m = 900", ""),
        &["missing", "give track_spacing_m"],
    ),
    (
        Key("search[1].pattern.length_m"),
        Replace("length_m = 8000", "length_m = -8000"),
        &["positive"],
    ),
    (
        Key("search[1].pattern.width_m"),
        Replace("width_m = 4000", "width_m = 0"),
        &["positive"],
    ),
    (
        Key("search[1].pattern.major_bearing_deg"),
        Replace("major_bearing_deg = 45", "major_bearing_deg = nan"),
        &["finite"],
    ),
    (
        Key("search[1].pattern.track_spacing_m"),
        Replace("track_spacing_m = 800", "track_spacing_m = -800"),
        &["positive"],
    ),
    (
        KeyOnLine("search[2].pattern.track_spacing_m", "\"expanding-square\""),
        Replace("track_spacing_m = 700, ", ""),
        &["missing"],
    ),
    (
        Key("search[2].pattern.track_spacing_m"),
        Replace("track_spacing_m = 700", "track_spacing_m = 0"),
        &["positive"],
    ),
    (
        Key("search[2].pattern.first_leg_bearing_deg"),
        Replace("first_leg_bearing_deg = 30", "first_leg_bearing_deg = inf"),
        &["finite"],
    ),
    (
        Key("search[2].pattern.legs"),
        Replace("legs = 16", "legs = 0"),
        &["legs = 0 is not usable", "give 1 to 100000 legs"],
    ),
    (
        Key("search[2].pattern.legs"),
        Replace("legs = 16", "legs = 100001"),
        &["give 1 to 100000 legs"],
    ),
    (
        KeyOnLine("search[3].pattern.radius_m", "\"sector-search\""),
        Replace("radius_m = 3000, ", ""),
        &["missing", "give radius_m"],
    ),
    (
        Key("search[3].pattern.radius_m"),
        Replace("radius_m = 3000", "radius_m = -3000"),
        &["positive"],
    ),
    (
        Key("search[3].pattern.first_leg_bearing_deg"),
        Replace("first_leg_bearing_deg = 90", "first_leg_bearing_deg = nan"),
        &["finite"],
    ),
    (
        Key("search[3].pattern.sectors"),
        Replace("sectors = 4", "sectors = 0"),
        &["give 2 to 12 sectors"],
    ),
    (
        // One range everywhere: the search crate's 2..=12.
        Key("search[3].pattern.sectors"),
        Replace("sectors = 4", "sectors = 1"),
        &["sectors = 1 is not usable", "give 2 to 12 sectors"],
    ),
    (
        Key("search[3].pattern.sectors"),
        Replace("sectors = 4", "sectors = 13"),
        &["give 2 to 12 sectors"],
    ),
    (
        // The parallel sweep's legs are 9000 m long.
        Key("search[0].pattern.track_spacing_m"),
        Replace("track_spacing_m = 900 }", "track_spacing_m = 9500 }"),
        &["the spacing must be shorter than the legs"],
    ),
    (
        Key("search[0].pattern.length_m"),
        Replace("length_m = 9000", "length_m = 2e7"),
        &["at most 10 000 km"],
    ),
    (
        // Corners that would overflow to infinity in the working frame.
        Key("search[2].pattern.track_spacing_m"),
        Replace(
            "track_spacing_m = 700",
            "track_spacing_m = 1.7976931348623157e308",
        ),
        &["at most 10 000 km"],
    ),
    (
        // 16 legs, the last of 8 spacings of 2000 km: the fault is reported at `legs`.
        KeyOnLine("search[2].pattern.legs", "\"expanding-square\""),
        Replace("track_spacing_m = 700", "track_spacing_m = 2000000"),
        &["last leg would be longer than 10 000 km"],
    ),
    (
        // 8000 m crept at 1 cm: 800 000 legs.
        Key("search[1].pattern.track_spacing_m"),
        Replace("track_spacing_m = 800 }", "track_spacing_m = 0.01 }"),
        &["more than 100000 legs"],
    ),
    (
        Key("search[0].pattern.legs"),
        Replace(
            "track_spacing_m = 900 }",
            "track_spacing_m = 900, legs = 4 }",
        ),
        &[
            "legs does not belong to a pattern of kind \"parallel-sweep\"",
            "expanding-square",
        ],
    ),
    (
        Key("search[3].pattern.length_m"),
        Replace("radius_m = 3000,", "radius_m = 3000, length_m = 500,"),
        &["does not belong", "\"sector-search\""],
    ),
    (
        Key("search[2].pattern.radius"),
        Replace("legs = 16,", "legs = 16, radius = 5,"),
        &[
            "unknown field `radius`",
            "its fields are kind, center",
            "docs/incident-format.md",
        ],
    ),
    (
        KeyOnLine("kind", "{ center = [-29.92, 20.03]"),
        Replace("kind = \"sector-search\", ", ""),
        &["missing field `kind`"],
    ),
];

#[test]
fn patterns_need_every_dimension_of_their_kind_within_range() {
    check_all(PATTERN_RULES);
}

const UNIT_RULES: &[Row] = &[
    (
        Key("unit[1].positions"),
        Replace(
            "searchers = 8\n",
            "searchers = 8\npositions = \"grid-letters\"\n",
        ),
        &["unknown position format \"grid-letters\"", "\"mgrs\""],
    ),
    (
        Key("unit[1].id"),
        Replace("id = \"team-1\"", "id = \"boat-4\""),
        &["used twice"],
    ),
    (
        KeyOnLine("unit[0]", "# u0 vessel"),
        Replace("speed_kn = 12\n", "speed_kn = 12\nspeed_kmh = 22\n"),
        &["exactly one of speed_kn or speed_kmh"],
    ),
    (
        KeyOnLine("unit[1]", "# u1 ground team"),
        Replace("speed_kmh = 2.5\n", ""),
        &["exactly one of speed_kn or speed_kmh"],
    ),
    (
        Key("unit[0].speed_kn"),
        Replace("speed_kn = 12\n", "speed_kn = -12\n"),
        &["positive"],
    ),
    (
        Key("unit[1].speed_kmh"),
        Replace("speed_kmh = 2.5", "speed_kmh = 0"),
        &["positive"],
    ),
    (
        Key("unit[0].hours_on_scene"),
        Replace("hours_on_scene = 4", "hours_on_scene = 0"),
        &["positive"],
    ),
    (
        Key("unit[1].sweep_width_m"),
        Replace("sweep_width_m = 40", "sweep_width_m = -40"),
        &["positive"],
    ),
    (
        Key("unit[0].track_spacing_min_m"),
        Replace("track_spacing_min_m = 300", "track_spacing_min_m = 0"),
        &["positive"],
    ),
    (
        Key("unit[1].searchers"),
        Replace("searchers = 8", "searchers = 0"),
        &["at least one searcher"],
    ),
    (
        Key("unit[0].id"),
        Replace("id = \"boat-4\"", "id = \"\""),
        &["the unit id is empty"],
    ),
    (
        // Positive as written, but 0 m/s once converted: the plan crate's check sees it.
        Key("unit[1].speed_kmh"),
        Replace("speed_kmh = 2.5", "speed_kmh = 5e-324"),
        &["speed_kmh must be a positive number, got 5e-324"],
    ),
    (
        Key("unit[0].detection"),
        Replace(
            "track_spacing_min_m = 300\ndetection = \"exponential\"",
            "track_spacing_min_m = 300\ndetection = \"visual\"",
        ),
        &["unknown detection law"],
    ),
];

#[test]
fn units_need_one_speed_and_positive_hours_widths_and_searchers() {
    check_all(UNIT_RULES);
}

const OUTCOME_RULES: &[Row] = &[
    (
        KeyOnLine("outcome.position", "[outcome]"),
        Append("\n[outcome]\nstatus = \"found\"\ntime = \"2026-06-15T06:00:00Z\"\n"),
        &["missing", "a found outcome needs position = [lon, lat]"],
    ),
    (
        Key("outcome.time"),
        Append("\n[outcome]\nstatus = \"suspended\"\ntime = \"2026-06-14T12:00:00Z\"\n"),
        &["before reference_time"],
    ),
    (
        Key("outcome.position"),
        Append(
            "\n[outcome]\nstatus = \"suspended\"\ntime = \"2026-06-15T06:00:00Z\"\nposition = [-29.91, 20.02]\n",
        ),
        &[
            "position does not belong to an outcome of status \"suspended\"",
            "found",
        ],
    ),
    (
        Key("outcome.status"),
        Append("\n[outcome]\nstatus = \"closed\"\ntime = \"2026-06-15T06:00:00Z\"\n"),
        &["unknown outcome status \"closed\"", "found or suspended"],
    ),
    (
        KeyOnLine("status", "[outcome]"),
        Append("\n[outcome]\ntime = \"2026-06-15T06:00:00Z\"\n"),
        &["missing field `status`"],
    ),
    (
        Key("outcome.position"),
        Append(
            "\n[outcome]\nstatus = \"found\"\ntime = \"2026-06-15T06:00:00Z\"\nposition = [-29.91, 95.0]\n",
        ),
        &["not a WGS84 position"],
    ),
    (
        Key("outcome.position_error_m"),
        Append(
            "\n[outcome]\nstatus = \"found\"\ntime = \"2026-06-15T06:00:00Z\"\nposition = [-29.91, 20.02]\nposition_error_m = -5\n",
        ),
        &["zero or positive"],
    ),
    (
        Key("outcome.time"),
        Append("\n[outcome]\nstatus = \"found\"\ntime = \"morning\"\nposition = [-29.91, 20.02]\n"),
        &["RFC 3339"],
    ),
];

#[test]
fn an_outcome_is_found_with_a_position_or_suspended_after_the_reference_time() {
    check_all(OUTCOME_RULES);
}

/// One scenario, with a crs, its position written [lat, lon].
const SWAPPED_ALONE: &str = r#"[incident]
title = "Swapped (invented)"
reference_time = "2026-06-14T18:00:00Z"
crs = "EPSG:32626"
[grid]
cell_m = 250
[[analyst]]
id = "desk-a"
[[scenario]]
id = "circle"
analyst = "desk-a"
kind = "point"
position = [20.00, -29.90]
sigma_m = 1500
"#;

const SWAP_RULES: &[Row] = &[
    (
        Key("scenario[0].position"),
        Replace("position = [-29.90, 20.00]", "position = [20.00, -29.90]"),
        &[
            "[20, -29.9] looks like [lat, lon]",
            "[-29.9, 20] lies among them",
            "write [lon, lat]",
        ],
    ),
    (
        Key("search[3].pattern.center"),
        Replace("center = [-29.92, 20.03]", "center = [20.03, -29.92]"),
        &["looks like [lat, lon]"],
    ),
    (
        Key("scenario[2].waypoints[2]"),
        Replace("[-29.85, 20.05]", "[20.05, -29.85]"),
        &["looks like [lat, lon]"],
    ),
    (
        // Alone in its incident, it is out of the zone its crs names.
        KeyOnLine("scenario[0].position", "position = [20.00, -29.90]"),
        Text(SWAPPED_ALONE),
        &[
            "looks like [lat, lon]",
            "outside the zone of crs EPSG:32626",
        ],
    ),
];

#[test]
fn a_position_that_looks_like_lat_lon_among_the_others_is_refused() {
    check_all(SWAP_RULES);
}

#[test]
fn an_incident_written_consistently_elsewhere_is_not_taken_for_swapped() {
    // The same lone position without a crs: nothing to disagree with, so it stands.
    let text = SWAPPED_ALONE.replace("crs = \"EPSG:32626\"\n", "");
    let dir = tempfile::tempdir().unwrap();
    let r = parse(&dir.path().join("incident.toml"), text);
    assert!(r.is_ok(), "{}", r.unwrap_err());
}

/// A polygon ring of two positions (closed by the reader to three).
const TWO_POINT_RING: &str =
    r#"{"type": "Polygon", "coordinates": [[[-29.96, 19.96], [-29.94, 19.96]]]}"#;

const GEOJSON_FILE_RULES: &[Row] = &[
    (
        KeyOnLine("incident.coastline", "coastline = \"coast.geojson\""),
        Delete("coast.geojson"),
        &[
            "cannot read the polygon file",
            "relative to the incident file",
        ],
    ),
    (
        KeyOnLine("scenario[3].polygon", "polygon = \"area.geojson\""),
        Delete("area.geojson"),
        &["cannot read the polygon file"],
    ),
    (
        InFile("area.geojson", Some(3)),
        Patch("area.geojson", "\"properties\": {},", "\"properties\": {}"),
        &["not valid JSON"],
    ),
    (
        InFile("area.geojson", None),
        Write(
            "area.geojson",
            r#"{"type": "Polygonal", "coordinates": []}"#,
        ),
        &["not valid GeoJSON"],
    ),
    (
        InFile("area.geojson", None),
        Write(
            "area.geojson",
            r#"{"type": "Point", "coordinates": [-29.95]}"#,
        ),
        &["not valid GeoJSON", "two or more elements"],
    ),
    (
        InFile("area.geojson", None),
        Write(
            "area.geojson",
            r#"{"type": "Point", "coordinates": [-29.95, 19.97]}"#,
        ),
        &["feature 0 is a Point, not a Polygon or MultiPolygon"],
    ),
    (
        InFile("area.geojson", None),
        Patch("area.geojson", "[-29.94, 19.98]", "[-29.94, 89.98]"),
        &["feature 0 has position [-29.94, 89.98]", "RFC 7946"],
    ),
    (
        InFile("area.geojson", None),
        Write("area.geojson", TWO_POINT_RING),
        &["fewer than four positions"],
    ),
    (
        InFile("area.geojson", None),
        Write(
            "area.geojson",
            r#"{"type": "FeatureCollection", "features": []}"#,
        ),
        &["no features"],
    ),
    (
        InFile("area.geojson", None),
        Write(
            "area.geojson",
            r#"{"type": "Feature", "properties": {}, "geometry": null}"#,
        ),
        &["feature 0 has no geometry"],
    ),
    (
        KeyOnLine("scenario[4].segments", "segments = \"segments.geojson\""),
        Delete("segments.geojson"),
        &["cannot read the segments file"],
    ),
    (
        InFile("segments.geojson", None),
        Patch("segments.geojson", "{\"id\": \"S2\"}", "{\"name\": \"S2\"}"),
        &["feature 1 has no \"id\" property"],
    ),
    (
        InFile("segments.geojson", None),
        Patch("segments.geojson", "{\"id\": \"S2\"}", "{\"id\": \"S1\"}"),
        &["segment id \"S1\" is used twice"],
    ),
    (
        InFile("segments.geojson", None),
        Write(
            "segments.geojson",
            r#"{"type": "Feature", "properties": {"id": "S1"}, "geometry": null}"#,
        ),
        &["segment \"S1\" has no geometry"],
    ),
    (
        InFile("segments.geojson", None),
        Patch("segments.geojson", "[-29.88, 20.07]", "[-29.88, -85.0]"),
        &["segment \"S2\" has position", "RFC 7946"],
    ),
];

#[test]
fn polygon_and_segment_files_must_be_readable_polygons_in_range() {
    check_all(GEOJSON_FILE_RULES);
}

const GPX_WITH_A_ROUTE_ONLY: &str = r#"<?xml version="1.0" encoding="UTF-8"?>
<gpx version="1.1" creator="seekgrid validation test (invented)" xmlns="http://www.topografix.com/GPX/1/1">
<rte><rtept lat="20.00" lon="-29.95"/><rtept lat="20.01" lon="-29.94"/></rte>
</gpx>
"#;

const TRACK_RULES: &[Row] = &[
    (
        KeyOnLine("search[4].track", "track = \"track.gpx\""),
        Delete("track.gpx"),
        &["cannot read the track"],
    ),
    (
        InFile("track.gpx", None),
        Write("track.gpx", "this is not GPX"),
        &["not a readable GPX file"],
    ),
    (
        InFile("track.gpx", None),
        Write("track.gpx", GPX_WITH_A_ROUTE_ONLY),
        &["has a route", "no track"],
    ),
    (
        InFile("track.gpx", None),
        Patch(
            "track.gpx",
            "<trkpt lat=\"20.01\" lon=\"-29.94\"><time>2026-06-14T20:10:00Z</time></trkpt>\n<trkpt lat=\"20.02\" lon=\"-29.95\"><time>2026-06-14T20:20:00Z</time></trkpt>\n",
            "",
        ),
        &["the track has 1 point(s)", "at least two"],
    ),
    (
        InFile("track.gpx", None),
        Patch("track.gpx", "lat=\"20.01\"", "lat=\"84.5\""),
        &["a track point has position [-29.94, 84.5]"],
    ),
    (
        InFile("track.gpx", None),
        Patch("track.gpx", "2026-06-14T20:20:00Z", "2026-06-14T19:59:00Z"),
        &["track point 2", "earlier than the point before it"],
    ),
    (
        KeyOnLine("search[5].track", "track = \"track.geojson\""),
        Delete("track.geojson"),
        &["cannot read the track"],
    ),
    (
        InFile("track.geojson", Some(2)),
        Patch("track.geojson", "\"LineString\",", "\"LineString\""),
        &["not valid JSON"],
    ),
    (
        InFile("track.geojson", None),
        Patch("track.geojson", "\"LineString\"", "\"MultiPoint\""),
        &["must be a LineString or MultiLineString"],
    ),
    (
        InFile("track.geojson", None),
        Write(
            "track.geojson",
            r#"{"type": "LineString", "coordinates": [[-29.97, 20.00]]}"#,
        ),
        &["the track has 1 point(s)"],
    ),
    (
        InFile("track.geojson", None),
        Patch("track.geojson", "[-29.96, 20.01]", "[-189.96, 20.01]"),
        &["a track point has position [-189.96, 20.01]"],
    ),
];

#[test]
fn track_files_must_hold_a_recorded_track_of_two_or_more_points_in_time_order() {
    check_all(TRACK_RULES);
}

const CSV_RULES: &[Row] = &[
    (
        KeyOnLine("scenario[7].wind.series", "wind = { series"),
        Delete("wind.csv"),
        &["cannot read the series"],
    ),
    (
        KeyOnLine("scenario[7].current.field", "current = { field"),
        Delete("current-field.csv"),
        &["cannot read the field"],
    ),
    (
        InFile("current-field.csv", Some(1)),
        WriteBytes("current-field.csv", b"lon,lat,time,u_kn,\xff\xfe\n"),
        &["not UTF-8", "save the file as UTF-8"],
    ),
    (
        InFile("wind.csv", Some(4)),
        Patch(
            "wind.csv",
            "2026-06-14T15:00:00Z,14,255",
            "2026-06-14T15:00:00Z,14,255,9",
        ),
        &["unreadable row", "4 fields"],
    ),
    (
        InFile("current-field.csv", Some(1)),
        Patch(
            "current-field.csv",
            "lon,lat,time,u_kn,v_kn",
            "lon,lat,time,u_kn,v",
        ),
        &["no column \"v_kn\"", "lon, lat, time, u_kn, v"],
    ),
    (
        InFile("wind.csv", Some(4)),
        Patch(
            "wind.csv",
            "2026-06-14T15:00:00Z,14,255",
            "2026-06-14T15:00:00Z,fourteen,255",
        ),
        &["speed_kn \"fourteen\" is not a number"],
    ),
    (
        InFile("wind.csv", Some(5)),
        Patch(
            "wind.csv",
            "2026-06-14T21:00:00Z,15,260",
            "2026-06-14T21:00:00Z,15,inf",
        ),
        &["direction_deg \"inf\" is not a number"],
    ),
    (
        InFile("wind.csv", Some(3)),
        Patch("wind.csv", "2026-06-14T12:00:00Z", "2026-06-14 noon"),
        &["time \"2026-06-14 noon\" is not RFC 3339"],
    ),
    (
        InFile("wind.csv", Some(4)),
        Patch(
            "wind.csv",
            "2026-06-14T15:00:00Z,14,255",
            "2026-06-14T15:00:00Z,-14,255",
        ),
        &["must not be negative"],
    ),
    (
        InFile("wind.csv", Some(4)),
        Write(
            "wind.csv",
            "# invented\ntime,speed_kn,direction_deg,speed_sigma_kn,direction_sigma_deg\n2026-06-14T12:00:00Z,12,250,2,10\n2026-06-14T15:00:00Z,14,255,2,-10\n",
        ),
        &["must not be negative"],
    ),
    (
        InFile("wind.csv", Some(5)),
        Patch("wind.csv", "2026-06-14T21:00:00Z", "2026-06-14T15:00:00Z"),
        &[
            "does not come after the row before it",
            "sort the rows by time",
        ],
    ),
    (
        InFile("wind.csv", None),
        Write("wind.csv", "time,speed_kn,direction_deg\n"),
        &["the series has no rows"],
    ),
    (
        InFile("current-field.csv", Some(3)),
        Patch(
            "current-field.csv",
            "-29.8,19.9,2026-06-14T12:00:00Z",
            "-29.8,99.9,2026-06-14T12:00:00Z",
        ),
        &["[-29.8, 99.9] is not a lon, lat position"],
    ),
    (
        InFile("current-field.csv", Some(2)),
        Patch(
            "current-field.csv",
            "-30.0,19.9,2026-06-14T12:00:00Z,0.30",
            "-30.0,19.9,2026-06-14T12:00:00Z,east",
        ),
        &["u_kn \"east\" is not a number"],
    ),
    (
        InFile("current-field.csv", Some(2)),
        Patch(
            "current-field.csv",
            "-30.0,19.9,2026-06-14T12:00:00Z,0.30",
            "-30.0,19.9,12:00,0.30",
        ),
        &["not RFC 3339"],
    ),
    (
        InFile("current-field.csv", None),
        Write("current-field.csv", "lon,lat,time,u_kn,v_kn\n"),
        &["the field has no rows"],
    ),
    (
        // Refused at `check` by the drift crate's own lattice rule.
        InFile("current-field.csv", None),
        Patch(
            "current-field.csv",
            "-29.8,20.1,2026-06-15T00:00:00Z,0.33,0.00\n",
            "",
        ),
        &[
            "current gridded field is not usable",
            "do not fill",
            "lattice",
        ],
    ),
    (
        InFile("current-field.csv", Some(3)),
        Patch(
            "current-field.csv",
            "-29.8,19.9,2026-06-14T12:00:00Z",
            "-29.8,85.0,2026-06-14T12:00:00Z",
        ),
        &["within the UTM range"],
    ),
    (
        // The header's own line, after a comment line.
        InFile("current-field.csv", Some(2)),
        Patch(
            "current-field.csv",
            "lon,lat,time,u_kn,v_kn\n",
            "# invented\nlon,lat,time,u_kn,v\n",
        ),
        &["no column \"v_kn\""],
    ),
];

#[test]
fn series_and_field_csv_files_need_their_columns_numbers_and_times() {
    check_all(CSV_RULES);
}
// ---------------------------------------------------------------------------------------------
// Values at the edge of each range, and other forms the format allows, are accepted.
// ---------------------------------------------------------------------------------------------

const MULTI_POLYGON_AREA: &str = r#"{"type": "MultiPolygon", "coordinates": [
  [[[-29.96, 19.96], [-29.94, 19.96], [-29.94, 19.98], [-29.96, 19.98], [-29.96, 19.96]]],
  [[[-29.93, 19.96], [-29.92, 19.96], [-29.92, 19.97], [-29.93, 19.96]]]
]}
"#;

const MULTI_LINE_TRACK: &str = r#"{"type": "FeatureCollection", "features": [
  {"type": "Feature", "properties": {}, "geometry": {"type": "MultiLineString", "coordinates": [
    [[-29.97, 20.00], [-29.96, 20.01]], [[-29.96, 20.02], [-29.97, 20.03]]]}}
]}
"#;

const WIND_WITH_SIGMAS: &str = "time,speed_kn,direction_deg,speed_sigma_kn,direction_sigma_deg
2026-06-14T12:00:00Z,12,250,2,10
2026-06-14T21:00:00Z,15,260,0,0
";

/// The base field with its columns in another order (the same lattice).
const FIELD_REORDERED: &str = "v_kn,u_kn,time,lat,lon
0.10,0.30,2026-06-14T12:00:00Z,19.9,-30.0
0.10,0.31,2026-06-14T12:00:00Z,19.9,-29.8
0.10,0.20,2026-06-14T12:00:00Z,20.1,-30.0
0.10,0.21,2026-06-14T12:00:00Z,20.1,-29.8
0.00,0.40,2026-06-15T00:00:00Z,19.9,-30.0
0.00,0.41,2026-06-15T00:00:00Z,19.9,-29.8
0.00,0.32,2026-06-15T00:00:00Z,20.1,-30.0
0.00,0.33,2026-06-15T00:00:00Z,20.1,-29.8
";

/// (edit, why the result must still be accepted)
const ACCEPTED_EDGES: &[(Edit, &str)] = &[
    (
        Replace("sigma_minor_m = 700", "sigma_minor_m = 1400"),
        "an ellipse with equal axes is a circle",
    ),
    (
        Replace("position = [-29.92, 20.03]", "position = [-29.92, 84.0]"),
        "84 N is the northern UTM limit",
    ),
    (
        Replace("position = [-29.92, 20.03]", "position = [-29.92, -80.0]"),
        "80 S is the southern UTM limit",
    ),
    (
        Replace("poa = { S1 = 0.5", "poa = { S1 = 0.7"),
        "POA may add up to exactly 1",
    ),
    (Replace("S2 = 0.3", "S2 = 0"), "a POA may be zero"),
    (
        Replace("95 = 7.4", "100 = 7.4"),
        "a 100 % ring is a percentage",
    ),
    (
        Replace(
            "latest = \"2026-06-14T17:00:00Z\"",
            "latest = \"2026-06-14T15:00:00Z\"",
        ),
        "the adrift window may be one instant",
    ),
    (
        Replace(
            "end = \"2026-06-14T21:00:00Z\"",
            "end = \"2026-06-14T19:00:00Z\"",
        ),
        "a search may end when it starts",
    ),
    (
        Replace("position_sigma_m = 800", "position_sigma_m = 0"),
        "every sigma may be zero",
    ),
    (
        Replace("speed_sigma_kn = 0.2", "speed_sigma_kn = 0"),
        "every sigma may be zero",
    ),
    (
        Replace("direction_sigma_deg = 15", "direction_sigma_deg = 0"),
        "every sigma may be zero",
    ),
    (
        Replace("downwind_sigma_kn = 0.04", "downwind_sigma_kn = 0"),
        "every sigma may be zero",
    ),
    (
        Replace("crosswind_sigma_kn = 0.03", "crosswind_sigma_kn = 0"),
        "every sigma may be zero",
    ),
    (
        Replace("diffusivity_m2_s = 0.5", "diffusivity_m2_s = 0"),
        "no random walk",
    ),
    (
        Replace("jibe_per_h = 0.05", "jibe_per_h = 0"),
        "an object that never jibes",
    ),
    (
        Replace("speed_kn = 0.6", "speed_kn = 0"),
        "a calm is a speed",
    ),
    (
        Replace("downwind_offset_kn = 0.05", "downwind_offset_kn = -0.05"),
        "leeway offsets are signed",
    ),
    (
        Replace("toward_deg = 75", "toward_deg = -285"),
        "a bearing may be written past 0",
    ),
    (
        Replace("from_deg = 250", "from_deg = 610"),
        "a bearing may be written past 360",
    ),
    (Replace("legs = 16", "legs = 1"), "the fewest legs"),
    (
        // The last leg, 50 000 spacings of 200 m, is exactly 10 000 km.
        Replace(
            "track_spacing_m = 700, legs = 16",
            "track_spacing_m = 200, legs = 100000",
        ),
        "the most legs, and the longest last leg",
    ),
    (Replace("sectors = 4", "sectors = 12"), "the most sectors"),
    (Replace("sectors = 4", "sectors = 2"), "the fewest sectors"),
    (
        Replace("crosswind_slope = 0.012", "crosswind_slope = -0.012"),
        "a crosswind slope is signed (the side is drawn at random)",
    ),
    (
        Replace("jibe_per_h = 0.05", "jibe_per_h = 1"),
        "the highest jibe rate",
    ),
    (Replace("cell_m = 250", "cell_m = 1"), "the smallest cell"),
    (
        Replace("cell_m = 250", "cell_m = 100000"),
        "the largest cell",
    ),
    (
        Replace("weight = 2.0", "weight = 1.5e6"),
        "analyst weights a million times apart",
    ),
    (
        Replace(
            "note = \"invented\"\n\n[[search]] # k1",
            "done_fraction = 0.4\ntasked_in = \"plan-2026-06-14T18\"\n\n[[search]] # k1",
        ),
        "a pattern cut short, tasked in a plan",
    ),
    (
        Replace("track_spacing_m = 900 }", "track_spacing_m = 8999 }"),
        "a spacing just shorter than the legs",
    ),
    (
        Append(
            "\n[outcome]\nstatus = \"found\"\ntime = \"2026-06-15T06:00:00Z\"\nposition = [-29.91, 20.02]\nposition_error_m = 50\nnote = \"invented\"\n",
        ),
        "a found outcome",
    ),
    (
        Append("\n[outcome]\nstatus = \"suspended\"\ntime = \"2026-06-16T18:00:00Z\"\n"),
        "a suspended outcome",
    ),
    (
        Replace(
            "[[analyst]] # a0",
            "[outcome]\nstatus = \"found\"\ntime = 2026-06-14T18:00:00Z\nposition = [-29.91, 20.02]\n\n[[analyst]] # a0",
        ),
        "an outcome at the reference time, written anywhere in the file",
    ),
    (
        Replace("particles = 500", "particles = 1"),
        "the fewest particles",
    ),
    (
        Replace("particles = 500", "particles = 20000000"),
        "the most particles",
    ),
    (
        Replace("max_cells = 4000000", "max_cells = 1"),
        "the smallest cell limit",
    ),
    (
        Replace(REFERENCE_TIME, "reference_time = 2026-06-14T18:00:00Z"),
        "a TOML offset date-time is a UTC time",
    ),
    (
        Replace(
            REFERENCE_TIME,
            "reference_time = \"2026-06-14T20:00:00+02:00\"",
        ),
        "RFC 3339 with an offset",
    ),
    (
        Write("area.geojson", MULTI_POLYGON_AREA),
        "a bare MultiPolygon is a polygon file",
    ),
    (
        Write("track.geojson", MULTI_LINE_TRACK),
        "a MultiLineString is a track, its parts in order",
    ),
    (
        Patch("track.gpx", "<time>2026-06-14T20:10:00Z</time>", ""),
        "a GPX point may lack its time",
    ),
    (
        Write("wind.csv", WIND_WITH_SIGMAS),
        "sigma columns in a series",
    ),
    (
        Patch(
            "current-field.csv",
            "lon,lat,time,u_kn,v_kn\n",
            "# invented field\nlon,lat,time,u_kn,v_kn\n",
        ),
        "comment lines in a field",
    ),
    (
        Write("current-field.csv", FIELD_REORDERED),
        "columns are found by name, in any order",
    ),
];

#[test]
fn values_at_the_edge_of_each_range_are_accepted() {
    let refused: Vec<String> = ACCEPTED_EDGES
        .iter()
        .filter_map(|(edit, why)| {
            apply(*edit)
                .2
                .err()
                .map(|e| format!("{why}: {edit:?} was refused:\n{e}"))
        })
        .collect();
    assert!(refused.is_empty(), "{}", refused.join("\n\n"));
}

// ---------------------------------------------------------------------------------------------
// Each default of docs/incident-format.md applies when its field is left out.
// ---------------------------------------------------------------------------------------------

fn expanding_square(inc: &Incident) -> (usize, f64) {
    match pattern(inc, 2) {
        PatternDef::ExpandingSquare {
            legs,
            first_leg_bearing_deg,
            ..
        } => (*legs, *first_leg_bearing_deg),
        other => panic!("{other:?}"),
    }
}

fn sector_search(inc: &Incident) -> (usize, f64) {
    match pattern(inc, 3) {
        PatternDef::SectorSearch {
            sectors,
            first_leg_bearing_deg,
            ..
        } => (*sectors, *first_leg_bearing_deg),
        other => panic!("{other:?}"),
    }
}

/// Reads one value of an accepted incident, as text.
type Get = fn(&Incident) -> String;

#[test]
fn each_documented_default_applies_when_the_field_is_left_out() {
    let rows: &[(&str, Edit, Get, &str)] = &[
        (
            "crs: none (the UTM zone of the first position is chosen later)",
            Replace("crs = \"EPSG:32626\"\n", ""),
            |i| format!("{:?}", i.crs),
            "None",
        ),
        (
            "object_afloat: none",
            Replace("object_afloat = true\n", ""),
            |i| format!("{:?}", i.object_afloat),
            "None",
        ),
        (
            "bounds: automatic",
            Replace(
                "bounds = { west = -30.2, south = 19.8, east = -29.6, north = 20.3 }\n",
                "",
            ),
            |i| format!("{:?}", i.grid.bounds),
            "None",
        ),
        (
            "max_cells: 16 000 000",
            Replace("max_cells = 4000000\n", ""),
            |i| i.grid.max_cells.to_string(),
            "16000000",
        ),
        (
            "pool: linear",
            Replace("pool = \"linear\"\n", ""),
            |i| format!("{:?}", i.pool),
            "Linear",
        ),
        (
            "[prior] itself is optional",
            Replace("[prior]\npool = \"linear\"\n", ""),
            |i| format!("{:?}", i.pool),
            "Linear",
        ),
        (
            "analyst weight: 1",
            Replace("weight = 2.0\n", ""),
            |i| i.analysts[0].weight.to_string(),
            "1",
        ),
        (
            "scenario weight: 1",
            Replace("weight = 0.41\n", ""),
            |i| i.scenarios[0].weight.to_string(),
            "1",
        ),
        (
            "ring_interpolation: uniform-per-ring",
            Replace("ring_interpolation = \"monotone-cubic\"\n", ""),
            |i| match &i.scenarios[5].kind {
                ScenarioKind::Rings { mode, .. } => format!("{mode:?}"),
                other => format!("{other:?}"),
            },
            "UniformPerRing",
        ),
        (
            "position_sigma_m: 0",
            Replace("position_sigma_m = 800\n", ""),
            |i| drift(i, 6).position_sigma_m.to_string(),
            "0",
        ),
        (
            "diffusivity_m2_s: 0",
            Replace("diffusivity_m2_s = 0.5\n", ""),
            |i| drift(i, 6).diffusivity_m2_s.to_string(),
            "0",
        ),
        (
            "particles: 20 000",
            Replace("particles = 500\n", ""),
            |i| drift(i, 6).particles.to_string(),
            "20000",
        ),
        (
            "seed: 1",
            Replace("seed = 7\n", ""),
            |i| drift(i, 6).seed.to_string(),
            "1",
        ),
        (
            "a constant current's sigmas: 0",
            Replace(CURRENT_6, "current = { speed_kn = 0.6, toward_deg = 75 }"),
            |i| format!("{:?}", constant(&drift(i, 6).current)),
            "[0.6, 75.0, 0.0, 0.0]",
        ),
        (
            "a field's direction sigma: 0",
            Unchanged,
            |i| match &drift(i, 7).current {
                VectorDef::Field {
                    speed_sigma_kn,
                    direction_sigma_deg,
                    ..
                } => format!("{speed_sigma_kn} {direction_sigma_deg}"),
                other => format!("{other:?}"),
            },
            "0.1 0",
        ),
        (
            "a series' speed sigma: 0, the table's direction sigma on every row",
            Unchanged,
            |i| match &drift(i, 7).wind {
                VectorDef::Series { samples, .. } => samples
                    .iter()
                    .map(|(_, s)| format!("{} {}", s.speed_sigma_kn, s.direction_sigma_deg))
                    .collect::<Vec<_>>()
                    .join(", "),
                other => format!("{other:?}"),
            },
            "0 10, 0 10, 0 10",
        ),
        (
            "leeway: every coefficient but downwind_slope 0, no source",
            Unchanged,
            |i| {
                let l = &drift(i, 7).leeway;
                format!(
                    "{} {} {} {} {} {} {:?}",
                    l.downwind_offset_kn,
                    l.downwind_sigma_kn,
                    l.crosswind_slope,
                    l.crosswind_offset_kn,
                    l.crosswind_sigma_kn,
                    l.jibe_per_h,
                    l.source
                )
            },
            "0 0 0 0 0 0 None",
        ),
        (
            "search detection: inverse-cube",
            Replace("detection = \"exponential\"\npattern", "pattern"),
            |i| format!("{:?}", i.searches[0].detection),
            "InverseCube",
        ),
        (
            "sweep_width_factors: none",
            Replace("sweep_width_factors = [0.9, 0.8]\n", ""),
            |i| format!("{:?}", i.searches[0].sweep_width_factors),
            "[]",
        ),
        (
            "expanding square legs: 12",
            Replace(", legs = 16", ""),
            |i| expanding_square(i).0.to_string(),
            "12",
        ),
        (
            "expanding square first_leg_bearing_deg: 0",
            Replace(", first_leg_bearing_deg = 30", ""),
            |i| expanding_square(i).1.to_string(),
            "0",
        ),
        (
            "sector search sectors: 3",
            Replace(", sectors = 4", ""),
            |i| sector_search(i).0.to_string(),
            "3",
        ),
        (
            "sector search first_leg_bearing_deg: 0",
            Replace(", first_leg_bearing_deg = 90", ""),
            |i| sector_search(i).1.to_string(),
            "0",
        ),
        (
            "unit detection: inverse-cube",
            Replace("detection = \"exponential\"\n\n[[unit]]", "\n[[unit]]"),
            |i| format!("{:?}", i.units[0].detection),
            "InverseCube",
        ),
        (
            "positions: none (the run's or degrees and decimal minutes)",
            Unchanged,
            |i| format!("{:?} {:?}", i.positions, i.units[1].positions),
            "None None",
        ),
        (
            "track_spacing_min_m: none",
            Replace("track_spacing_min_m = 300\n", ""),
            |i| format!("{:?}", i.units[0].track_spacing_min_m),
            "None",
        ),
        (
            "done_fraction: 1 (the whole pattern)",
            Unchanged,
            |i| i.searches[0].done_fraction.to_string(),
            "1",
        ),
        (
            "tasked_in: none",
            Unchanged,
            |i| format!("{:?}", i.searches[0].tasked_in),
            "None",
        ),
        (
            "outcome: none",
            Unchanged,
            |i| format!("{:?}", i.outcome),
            "None",
        ),
        (
            "searchers: none (not a ground team)",
            Replace("searchers = 8\n", ""),
            |i| format!("{:?}", i.units[1].searchers),
            "None",
        ),
    ];
    let wrong: Vec<String> = rows
        .iter()
        .filter_map(|(what, edit, get, expected)| {
            let got = get(&accepted(*edit));
            (got != *expected).then(|| format!("{what}: got {got}, expected {expected}"))
        })
        .collect();
    assert!(wrong.is_empty(), "{}", wrong.join("\n"));
}

// ---------------------------------------------------------------------------------------------
// The helper itself: a row that does not describe the error fails.
// ---------------------------------------------------------------------------------------------

#[test]
fn a_row_fails_when_its_field_words_place_or_refusal_do_not_match() {
    let edit = Replace("sigma_m = 1500", "sigma_m = -1500");
    assert_eq!(
        check(Key("scenario[0].sigma_m"), edit, &["positive"]),
        Ok(())
    );
    // Another field, other words, another place, an error in another file.
    assert!(check(Key("scenario[1].sigma_m"), edit, &["positive"]).is_err());
    assert!(check(Key("scenario[0].sigma_m"), edit, &["negative"]).is_err());
    assert!(check(KeyOnLine("scenario[0].sigma_m", "# s1 ellipse"), edit, &[]).is_err());
    assert!(check(Whole("scenario[0].sigma_m"), edit, &[]).is_err());
    assert!(check(InFile("area.geojson", None), edit, &[]).is_err());
    // An accepted edit.
    let fine = Replace("sigma_m = 1500", "sigma_m = 1501");
    assert!(check(Key("scenario[0].sigma_m"), fine, &[]).is_err());
    // The error is on another line than the edit.
    let elsewhere = Replace(
        "crs = \"EPSG:32626\"\ncoastline = \"coast.geojson\"\n",
        "crs = \"EPSG:32626\"\n",
    );
    assert!(check(Key("incident.object_afloat"), elsewhere, &[]).is_err());
    assert_eq!(
        check(
            KeyOnLine("incident.object_afloat", "object_afloat = true"),
            elsewhere,
            &[]
        ),
        Ok(())
    );
}

#[test]
fn position_formats_are_read_per_incident_and_per_unit() {
    // Names as docs/incident-format.md lists them (case-insensitive).
    use seekgrid_incident::model::PositionFormat;
    let inc = accepted(Replace(
        "searchers = 8\n",
        "searchers = 8\npositions = \"MGRS\"\n",
    ));
    assert_eq!(inc.units[1].positions, Some(PositionFormat::Mgrs));
    assert_eq!(inc.units[0].positions, None);
    let inc = accepted(Replace(
        "notes = \"invented for the validation tests\"",
        "notes = \"invented for the validation tests\"\npositions = \"dms\"",
    ));
    assert_eq!(inc.positions, Some(PositionFormat::Dms));
    for f in PositionFormat::ALL {
        assert_eq!(PositionFormat::parse(f.name()), Some(f));
    }
}
