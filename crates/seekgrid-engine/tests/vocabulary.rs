//! Every scenario kind, pattern kind and detection law the file accepts goes all the way
//! through: it is documented in docs/incident-format.md, it loads into its own model value, and
//! a map is computed with it. Adding one and forgetting a place (docs/architecture.md, "Adding
//! a scenario kind, a pattern or a detection law") fails here.

use seekgrid_engine::timeline::{MapOptions, map};
use seekgrid_incident::file::{pattern_kind_names, scenario_kind_names};
use seekgrid_incident::parse;
use seekgrid_search::DetectionLaw;

const HEAD: &str = r#"[incident]
title = "Vocabulary test (invented)"
reference_time = "2026-06-14T18:00:00Z"
[grid]
cell_m = 250
[[analyst]]
id = "a"
"#;

/// An invented square of about 2 km, as polygons and as segments.
const SQUARE: &str = r#"{"type":"FeatureCollection","features":[{"type":"Feature","properties":{"id":"S1"},"geometry":{"type":"Polygon","coordinates":[[[-30.01,30.0],[-29.99,30.0],[-29.99,30.02],[-30.01,30.02],[-30.01,30.0]]]}}]}"#;

/// The fields of one example scenario of each kind (invented values); a kind without an example
/// fails the test that goes through every kind.
fn scenario_example(kind: &str) -> Option<&'static str> {
    Some(match kind {
        "point" => "position = [-30.0, 30.01]\nsigma_m = 800",
        "route" => "waypoints = [[-30.02, 30.0], [-29.98, 30.02]]\ncross_track_sigma_m = 500",
        "area" => "polygon = \"square.geojson\"",
        "segments" => "segments = \"square.geojson\"\npoa = { S1 = 0.9 }",
        "rings" => "position = [-30.0, 30.01]\ndistance_quantiles_km = { 50 = 1.0, 95 = 3.0 }",
        "drift" => {
            "position = [-30.0, 30.01]\nposition_sigma_m = 300\nadrift = { earliest = \"2026-06-14T17:00:00Z\", latest = \"2026-06-14T17:00:00Z\" }\ncurrent = { speed_kn = 0.5, toward_deg = 90 }\nwind = { speed_kn = 10, from_deg = 270 }\nleeway = { downwind_slope = 0.03 }\nparticles = 200"
        }
        _ => return None,
    })
}

/// One example pattern of each kind about the scenarios (invented values).
fn pattern_example(kind: &str) -> Option<&'static str> {
    Some(match kind {
        "parallel-sweep" | "creeping-line" => {
            "center = [-30.0, 30.01], length_m = 3000, width_m = 2000, major_bearing_deg = 0, track_spacing_m = 500"
        }
        "expanding-square" => {
            "center = [-30.0, 30.01], track_spacing_m = 500, legs = 8, first_leg_bearing_deg = 0"
        }
        "sector-search" => "center = [-30.0, 30.01], radius_m = 1500, first_leg_bearing_deg = 0",
        _ => return None,
    })
}

fn docs() -> String {
    std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../../docs/incident-format.md"
    ))
    .unwrap()
}

fn map_of(text: &str) -> seekgrid_engine::IncidentMap {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("square.geojson"), SQUARE).unwrap();
    let path = dir.path().join("incident.toml");
    let inc = parse(&path, text.to_owned()).unwrap_or_else(|e| panic!("{e}\n{text}"));
    map(&inc, &MapOptions { at: None }, &|_, _, _| {}).unwrap_or_else(|e| panic!("{e}\n{text}"))
}

#[test]
fn every_scenario_kind_is_documented_loads_as_itself_and_maps() {
    let docs = docs();
    for kind in scenario_kind_names() {
        assert!(
            docs.contains(&format!("### `kind = \"{kind}\"`")),
            "docs/incident-format.md has no section for kind = \"{kind}\""
        );
        let fields = scenario_example(kind)
            .unwrap_or_else(|| panic!("no example of kind \"{kind}\" in this test: add one"));
        let text = format!(
            "{HEAD}[[scenario]]\nid = \"s\"\nanalyst = \"a\"\nkind = \"{kind}\"\n{fields}\n"
        );
        let dir = tempfile::tempdir().unwrap();
        std::fs::write(dir.path().join("square.geojson"), SQUARE).unwrap();
        let inc = parse(&dir.path().join("incident.toml"), text.clone()).unwrap();
        assert_eq!(inc.scenarios[0].kind.name(), kind);
        let m = map_of(&text);
        // Mass is conserved: the belief holds all of it, in and outside the grid.
        let total = m.belief.total_mass();
        assert!((total - 1.0).abs() < 1e-9, "{kind}: {total}");
    }
}

#[test]
fn every_pattern_kind_and_detection_law_is_documented_and_searches() {
    let docs = docs();
    for kind in pattern_kind_names() {
        assert!(
            docs.contains(&format!("\"{kind}\"")),
            "docs/incident-format.md does not name the pattern \"{kind}\""
        );
        let pattern = pattern_example(kind)
            .unwrap_or_else(|| panic!("no example of pattern \"{kind}\" in this test: add one"));
        for law in DetectionLaw::ALL {
            assert_eq!(DetectionLaw::parse(law.name()), Some(law));
            assert!(
                docs.contains(&format!("\"{}\"", law.name())),
                "docs/incident-format.md does not name the law \"{}\"",
                law.name()
            );
            let text = format!(
                "{HEAD}[[scenario]]\nid = \"s\"\nanalyst = \"a\"\nkind = \"point\"\n{}\n[[search]]\nid = \"x\"\nunit = \"u\"\nstart = \"2026-06-14T18:00:00Z\"\nend = \"2026-06-14T19:00:00Z\"\nsweep_width_m = 400\ndetection = \"{}\"\npattern = {{ kind = \"{kind}\", {pattern} }}\n",
                scenario_example("point").unwrap(),
                law.name()
            );
            let m = map_of(&text);
            assert_eq!(m.searches.len(), 1);
            assert_eq!(m.searches[0].detection, law.name());
            // A pattern over the middle of the scenario finds something, never everything.
            let pos = m.searches[0].pos;
            assert!(pos > 0.01 && pos < 1.0, "{kind} {}: POS {pos}", law.name());
        }
    }
}
