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
    // Two logged searches in the demo, and its invented outcome: found.
    assert_eq!(doc["end_reason"], "found");
    assert_eq!(doc["searches"].as_array().unwrap().len(), 2);
    assert!(!doc["timeline"].as_array().unwrap().is_empty());
    let md = std::fs::read_to_string(dest.join("review.md")).unwrap();
    assert!(md.contains("search mission coordinator"));
    assert!(md.contains("## What could not be computed"));
    // Every chart: POS over time, rank of the truth, each analyst's score and bias.
    for f in seekgrid_render::charts::CHART_FILES {
        let png = std::fs::read(dest.join(f)).unwrap_or_else(|e| panic!("{f}: {e}"));
        assert!(png.starts_with(b"\x89PNG\r\n\x1a\n"), "{f}");
    }
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

/// The marine demo copied into a temporary folder, its own `[outcome]` replaced by `outcome`
/// (an empty text leaves it without one).
fn marine_with_outcome(outcome: &str) -> (tempfile::TempDir, std::path::PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    let src = workspace().join("scenarios/marine");
    copy_dir(&src, dir.path());
    let f = dir.path().join("incident.toml");
    let text = std::fs::read_to_string(&f).unwrap();
    let own = text
        .find("\n# How the incident ended")
        .expect("the demo's outcome");
    let mut text = text[..own].to_owned();
    text.push_str(outcome);
    std::fs::write(&f, text).unwrap();
    (dir, f)
}

/// `seekgrid review FILE --out DIR [extra...]`.
fn review(file: &std::path::Path, out: &std::path::Path, extra: &[&str]) -> std::process::Output {
    let mut args = vec![
        "review",
        file.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ];
    args.extend_from_slice(extra);
    seekgrid(&args)
}

fn read_json(path: &std::path::Path) -> Value {
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

#[test]
fn review_of_a_suspended_incident_runs_and_says_what_it_cannot_compute() {
    let (dir, f) = marine_with_outcome(
        "\n[outcome]\nstatus = \"suspended\"\ntime = \"2026-06-15T06:00:00Z\"\n",
    );
    let dest = dir.path().join("out");
    let o = review(&f, &dest, &[]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let doc = read_json(&dest.join("review.json"));
    assert_eq!(doc["end_reason"], "suspended");
    assert!(doc["pool"].is_null(), "{}", doc["pool"]);
    assert!(
        doc["analysts"]
            .as_array()
            .unwrap()
            .iter()
            .all(|a| a["log_score"].is_null() && a["implied_weight"].is_null())
    );
    let not_computed = doc["not_computed"].as_array().unwrap();
    assert!(!not_computed.is_empty());
    let md = std::fs::read_to_string(dest.join("review.md")).unwrap();
    assert!(md.contains("## What could not be computed"), "{md}");
    assert!(!md.contains("Everything above was computed"), "{md}");
    // POS over time still drawn; the charts that need the truth are not.
    assert!(dest.join("review-pos.png").is_file());
    for f in ["review-rank.png", "review-scores.png", "review-bias.png"] {
        assert!(!dest.join(f).exists(), "{f}");
    }
}

#[test]
fn review_without_searches_or_outcome_runs_and_says_what_it_cannot_compute() {
    let (dir, f) = marine_with_outcome("");
    let text = std::fs::read_to_string(&f).unwrap();
    let (first, units) = (
        text.find("[[search]]").unwrap(),
        text.find("[[unit]]").unwrap(),
    );
    std::fs::write(&f, format!("{}{}", &text[..first], &text[units..])).unwrap();
    let dest = dir.path().join("out");
    let o = review(&f, &dest, &[]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let doc = read_json(&dest.join("review.json"));
    assert!(doc["searches"].as_array().unwrap().is_empty());
    assert_eq!(doc["pos_cumulative"], 0.0);
    assert!(!doc["not_computed"].as_array().unwrap().is_empty());
    assert!(dest.join("review-pos.png").is_file());
}

#[test]
fn review_record_appends_a_row_per_analyst_and_the_pool_that_credibility_reads() {
    let dir = tempfile::tempdir().unwrap();
    let record = dir.path().join("record.csv");
    let record_arg = record.to_str().unwrap().to_owned();
    for (case, analysts) in [("marine", 3), ("land", 4)] {
        let incident = workspace().join(format!("scenarios/{case}/incident.toml"));
        let before = std::fs::read_to_string(&record).unwrap_or_default();
        let o = review(
            &incident,
            &dir.path().join(case),
            &["--record", &record_arg],
        );
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        let after = std::fs::read_to_string(&record).unwrap();
        // The earlier text is kept byte for byte; one row per analyst and one for the pool
        // (and the header when the file is created).
        assert!(after.starts_with(&before));
        let header = usize::from(before.is_empty());
        assert_eq!(
            after.lines().count() - before.lines().count(),
            analysts + 1 + header
        );
        assert!(
            after.lines().last().unwrap().contains(",pool,pool,"),
            "{after}"
        );
    }
    // The same incident twice: refused, the record untouched.
    let before = std::fs::read_to_string(&record).unwrap();
    let incident = workspace().join("scenarios/marine/incident.toml");
    let o = review(
        &incident,
        &dir.path().join("again"),
        &["--record", &record_arg],
    );
    assert_eq!(
        o.status.code(),
        Some(2),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    assert_eq!(std::fs::read_to_string(&record).unwrap(), before);
    // The record reads as a track record of 2 incidents.
    let o = seekgrid(&["credibility", &record_arg, "--json"]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let doc: Value = serde_json::from_str(&String::from_utf8_lossy(&o.stdout)).unwrap();
    assert_eq!(doc["incidents"], 2);
    assert_eq!(doc["analysts"].as_array().unwrap().len(), 7);
}

#[test]
fn review_record_of_a_suspended_incident_exits_2_and_writes_nothing() {
    let (dir, f) = marine_with_outcome(
        "\n[outcome]\nstatus = \"suspended\"\ntime = \"2026-06-15T06:00:00Z\"\n",
    );
    let dest = dir.path().join("out");
    let record = dir.path().join("record.csv");
    let o = review(&f, &dest, &["--record", record.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&o.stderr);
    assert!(
        stderr.contains("--record") && stderr.contains("found position"),
        "{stderr}"
    );
    assert!(!dest.exists());
    assert!(!record.exists());
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
