//! The warnings of the computation, and the refusal of a drift whose wind does not cover it,
//! checked on small invented incidents against what can be worked out by hand.

use seekgrid_engine::timeline::{MapError, MapOptions, map};
use seekgrid_incident::model::Item;
use seekgrid_incident::{WarningKind, parse};

/// An invented square island (0.1 degree a side) and two analysts with equal weight: one puts
/// the object at sea west of the island, the other in the island's middle.
const ISLAND: &str = r#"{"type":"FeatureCollection","features":[{"type":"Feature","properties":{},"geometry":{"type":"Polygon","coordinates":[[[-30.05,30.0],[-29.95,30.0],[-29.95,30.1],[-30.05,30.1],[-30.05,30.0]]]}}]}"#;

const TWO_ANALYSTS: &str = r#"
[incident]
title = "Mask test (invented)"
reference_time = "2026-06-14T10:00:00Z"
coastline = "island.geojson"
object_afloat = true
[grid]
cell_m = 250
[[analyst]]
id = "at-sea"
[[analyst]]
id = "on-land"
[[scenario]]
id = "west"
analyst = "at-sea"
kind = "point"
position = [-30.3, 30.05]
sigma_m = 1000
[[scenario]]
id = "island"
analyst = "on-land"
kind = "point"
position = [-30.0, 30.05]
sigma_m = 500
"#;

fn load(text: &str) -> (tempfile::TempDir, seekgrid_incident::Incident) {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("island.geojson"), ISLAND).unwrap();
    std::fs::write(dir.path().join("wind.csv"), WIND).unwrap();
    let path = dir.path().join("incident.toml");
    std::fs::write(&path, text).unwrap();
    let inc = parse(&path, text.to_owned()).unwrap();
    (dir, inc)
}

#[test]
fn a_scenario_on_land_is_reported_and_its_analyst_loses_the_share() {
    let (_dir, inc) = load(TWO_ANALYSTS);
    let m = map(&inc, &MapOptions { at: None }, &|_, _, _| {}).unwrap();
    let masked: Vec<_> = m
        .warnings
        .iter()
        .filter(|w| w.kind == WarningKind::ScenarioMasked)
        .collect();
    assert_eq!(masked.len(), 1, "{:?}", m.warnings);
    assert_eq!(masked[0].item, Some(Item::Scenario("island".into())));
    assert!(masked[0].message.contains("on-land"));
    // By hand: the island scenario (sigma 500 m) lies inside the island, at least 4.8 km (9.6
    // sigma) from its shore, so the mask keeps none of it (below 1e-20); the scenario at sea, 29 km west, keeps
    // all. With equal weights the shares after the mask are then 1 and 0.
    let kept: Vec<f64> = m.kept_by_mask.iter().map(|(_, k)| *k).collect();
    assert!((kept[0] - 1.0).abs() < 1e-9, "{kept:?}");
    assert!(kept[1] < 1e-9, "{kept:?}");
    assert!((m.analyst_share_after_mask("at-sea").unwrap() - 1.0).abs() < 1e-9);
    assert!(m.analyst_share_after_mask("on-land").unwrap() < 1e-9);
    // The warning is located at the scenario's table in the file.
    let located = inc.locate_warning(masked[0]);
    assert_eq!(located.line, Some(19), "{located:?}");
}

#[test]
fn without_a_mask_no_share_after_it_is_given() {
    let text = TWO_ANALYSTS.replace("object_afloat = true\n", "");
    let (_dir, inc) = load(&text);
    let m = map(&inc, &MapOptions { at: None }, &|_, _, _| {}).unwrap();
    assert!(m.kept_by_mask.is_empty());
    assert_eq!(m.analyst_share_after_mask("at-sea"), None);
    assert!(m.warnings.is_empty(), "{:?}", m.warnings);
}

/// A search 3 degrees east of both scenarios, on an automatic grid.
const FAR_SEARCH: &str = r#"
[[search]]
id = "far"
unit = "u"
start = "2026-06-14T11:00:00Z"
end = "2026-06-14T12:00:00Z"
sweep_width_m = 500
detection = "exponential"
pattern = { kind = "parallel-sweep", center = [-27.0, 30.05], length_m = 3000, width_m = 3000, major_bearing_deg = 0, track_spacing_m = 500 }
"#;

#[test]
fn a_search_far_from_every_scenario_is_left_out_and_does_not_stretch_the_grid() {
    let without = TWO_ANALYSTS.replace("object_afloat = true\n", "");
    let (_d1, plain) = load(&without);
    let (_d2, far) = load(&format!("{without}{FAR_SEARCH}"));
    let a = map(&plain, &MapOptions { at: None }, &|_, _, _| {}).unwrap();
    let b = map(&far, &MapOptions { at: None }, &|_, _, _| {}).unwrap();
    assert_eq!(a.grid, b.grid, "the far search stretched the grid");
    assert!(b.searches.is_empty());
    let w: Vec<_> = b
        .warnings
        .iter()
        .filter(|w| w.kind == WarningKind::SearchOutsideGrid)
        .collect();
    assert_eq!(w.len(), 1);
    assert_eq!(w[0].item, Some(Item::Search("far".into())));
}

const WIND: &str =
    "time,speed_kn,direction_deg\n2026-06-14T08:00:00Z,10,270\n2026-06-14T14:00:00Z,12,260\n";

const DRIFT: &str = r#"
[incident]
title = "Drift window test (invented)"
reference_time = "2026-06-14T10:00:00Z"
[grid]
cell_m = 250
[[analyst]]
id = "a"
[[scenario]]
id = "adrift"
analyst = "a"
kind = "drift"
position = [-30.0, 30.0]
position_sigma_m = 300
adrift = { earliest = "2026-06-14T09:00:00Z", latest = "2026-06-14T09:30:00Z" }
current = { speed_kn = 0.5, toward_deg = 90 }
wind = { series = "wind.csv" }
leeway = { downwind_slope = 0.03 }
particles = 100
"#;

fn at(t: &str) -> MapOptions {
    MapOptions {
        at: Some(chrono::DateTime::parse_from_rfc3339(t).unwrap().to_utc()),
    }
}

#[test]
fn a_map_before_going_adrift_and_before_the_reference_time_warns_of_both() {
    let (_dir, inc) = load(DRIFT);
    let m = map(&inc, &at("2026-06-14T08:30:00Z"), &|_, _, _| {}).unwrap();
    let kinds: Vec<WarningKind> = m.warnings.iter().map(|w| w.kind).collect();
    assert_eq!(
        kinds,
        [
            WarningKind::MapBeforeReferenceTime,
            WarningKind::NotYetAdrift
        ]
    );
    let m = map(&inc, &at("2026-06-14T12:00:00Z"), &|_, _, _| {}).unwrap();
    assert!(m.warnings.is_empty(), "{:?}", m.warnings);
}

#[test]
fn a_map_beyond_the_wind_series_is_refused_unless_the_file_says_hold() {
    let (_dir, inc) = load(DRIFT);
    // The series ends at 14:00; 15:00 is within the hour held without asking, 15:01 is not.
    assert!(map(&inc, &at("2026-06-14T15:00:00Z"), &|_, _, _| {}).is_ok());
    let e = map(&inc, &at("2026-06-14T15:01:00Z"), &|_, _, _| {}).unwrap_err();
    assert!(
        matches!(&e, MapError::EnvironmentNotCovered { id, .. } if id == "adrift"),
        "{e}"
    );
    assert_eq!(e.item(), Some(Item::Scenario("adrift".into())));
    assert!(e.to_string().contains("hold_environment_beyond_series"));
    let held = DRIFT.replace(
        "particles = 100",
        "particles = 100\nhold_environment_beyond_series = true",
    );
    let (_dir, inc) = load(&held);
    assert!(map(&inc, &at("2026-06-15T15:01:00Z"), &|_, _, _| {}).is_ok());
}

#[test]
fn the_grid_alone_is_the_grid_of_the_map() {
    // grid_at runs only the first steps of map (inputs, drift, extent): the same grid.
    let (_dir, inc) = load(&format!(
        "{}{FAR_SEARCH}",
        TWO_ANALYSTS.replace("object_afloat = true\n", "")
    ));
    let (_dir2, drift) = load(DRIFT);
    for (inc, options) in [
        (&inc, MapOptions { at: None }),
        (&drift, at("2026-06-14T12:00:00Z")),
    ] {
        let grid = seekgrid_engine::timeline::grid_at(inc, &options, &|_, _, _| {}).unwrap();
        let m = map(inc, &options, &|_, _, _| {}).unwrap();
        assert_eq!(grid, m.grid);
    }
}
