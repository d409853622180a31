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

/// The marine demo copied into a temporary folder with an `[outcome]` appended.
fn marine_with_outcome(outcome: &str) -> (tempfile::TempDir, std::path::PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    let src = workspace().join("scenarios/marine");
    copy_dir(&src, dir.path());
    let f = dir.path().join("incident.toml");
    let mut text = std::fs::read_to_string(&f).unwrap();
    text.push_str(outcome);
    std::fs::write(&f, text).unwrap();
    (dir, f)
}

fn copy_dir(from: &std::path::Path, to: &std::path::Path) {
    for e in std::fs::read_dir(from).unwrap() {
        let e = e.unwrap();
        let target = to.join(e.file_name());
        if e.file_type().unwrap().is_dir() {
            std::fs::create_dir_all(&target).unwrap();
            copy_dir(&e.path(), &target);
        } else {
            std::fs::copy(e.path(), target).unwrap();
        }
    }
}

#[test]
fn review_of_a_found_object_scores_the_analysts() {
    let (dir, f) = marine_with_outcome(
        "\n[outcome]\nstatus = \"found\"\ntime = \"2026-06-14T23:00:00Z\"\nposition = [-40.93, 31.54]\nnote = \"invented\"\n",
    );
    let dest = dir.path().join("out");
    let o = seekgrid(&[
        "review",
        f.to_str().unwrap(),
        "--out",
        dest.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let doc: Value =
        serde_json::from_str(&std::fs::read_to_string(dest.join("review.json")).unwrap()).unwrap();
    assert_eq!(doc["end_reason"], "found");
    assert!(doc["pool"]["density_per_km2"].as_f64().unwrap() > 0.0);
    let analysts = doc["analysts"].as_array().unwrap();
    assert!(analysts.iter().all(|a| a["density_per_km2"].is_f64()));
    let implied: f64 = analysts
        .iter()
        .filter_map(|a| a["implied_weight"].as_f64())
        .sum();
    assert!((implied - 1.0).abs() < 1e-9, "{implied}");
    assert!(doc["timeline"].as_array().unwrap().last().unwrap()["truth"].is_object());
    check_geojson(&dest.join("review-found.geojson"));
    check_geojson(&dest.join("review-analysts.geojson"));
}

#[test]
fn an_outcome_before_the_reference_time_exits_2_at_its_line() {
    let (dir, f) = marine_with_outcome(
        "\n[outcome]\nstatus = \"suspended\"\ntime = \"2026-06-14T17:00:00Z\"\n",
    );
    let o = seekgrid(&[
        "review",
        f.to_str().unwrap(),
        "--out",
        dir.path().join("out").to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&o.stderr);
    // Refused by the loader, at the outcome's line, before anything is computed.
    assert!(
        stderr.contains("incident.toml:") && stderr.contains("before reference_time"),
        "{stderr}"
    );
    assert!(!dir.path().join("out").exists());
}
