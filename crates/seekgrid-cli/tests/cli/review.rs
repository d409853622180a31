//! `seekgrid review`: the files it writes, checked by the outside tools a GIS user relies on
//! (GDAL's ogrinfo, as docs/references.md §8.7 describes), and its errors.

use crate::end_to_end::{seekgrid, workspace};
use crate::external::check_geojson;
use serde_json::Value;

#[test]
fn review_of_the_marine_demo_writes_the_report_and_layers() {
    let out = tempfile::tempdir().unwrap();
    let dest = out.path().join("review");
    let incident = workspace().join("scenarios/marine/incident.toml");
    let o = seekgrid(&[
        "review",
        incident.to_str().unwrap(),
        "--out",
        dest.to_str().unwrap(),
    ]);
    let stderr = String::from_utf8_lossy(&o.stderr);
    assert!(o.status.success(), "{stderr}");
    assert!(stderr.contains("Decision support"), "{stderr}");
    for f in seekgrid_render::review::REVIEW_FILES {
        assert!(dest.join(f).is_file(), "{f} missing");
    }
    let doc: Value =
        serde_json::from_str(&std::fs::read_to_string(dest.join("review.json")).unwrap()).unwrap();
    assert!(
        doc["caution"]
            .as_str()
            .unwrap()
            .contains("Decision support")
    );
    assert!(doc["run_id"].is_string());
    // Two logged searches in the demo; no outcome yet, so the review ends at the last search.
    assert_eq!(doc["end_reason"], "last-search-end");
    assert_eq!(doc["searches"].as_array().unwrap().len(), 2);
    assert!(!doc["timeline"].as_array().unwrap().is_empty());
    assert!(!doc["not_computed"].as_array().unwrap().is_empty());
    let md = std::fs::read_to_string(dest.join("review.md")).unwrap();
    assert!(md.contains("search mission coordinator"));
    assert!(md.contains("## What could not be computed"));
    let searches = dest.join("review-searches.geojson");
    let layer: Value = serde_json::from_str(&std::fs::read_to_string(&searches).unwrap()).unwrap();
    let first = &layer["features"][0]["properties"];
    assert!(first["stroke"].as_str().unwrap().starts_with('#'));
    assert!(first["period"].is_string());
    check_geojson(&searches);
}

#[test]
fn review_of_a_missing_file_exits_2() {
    let out = tempfile::tempdir().unwrap();
    let o = seekgrid(&[
        "review",
        "no-such-incident.toml",
        "--out",
        out.path().join("r").to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(2));
}
