//! Every file of a run that can hold it records where it came from: seekgrid's version, the
//! command, the time, the SHA-256 of the incident file and of each file it names, the seeds.

use crate::end_to_end::{seekgrid, workspace};
use crate::external::{have, run, stdout};
use serde_json::Value;
use std::path::Path;

/// The SHA-256 that coreutils' `sha256sum` gives for `path` (an outside reader).
fn sha256sum(path: &Path) -> Option<String> {
    if !have("sha256sum") {
        return None;
    }
    let o = run("sha256sum", &[path.to_str().unwrap()]);
    assert!(o.status.success());
    Some(stdout(&o).split_whitespace().next().unwrap().to_owned())
}

fn check_provenance(p: &Value, incident: &Path) {
    assert_eq!(p["seekgrid_version"], env!("CARGO_PKG_VERSION"));
    assert!(p["command"].as_str().unwrap().contains(" plan "), "{p}");
    let time = p["time_utc"].as_str().unwrap();
    assert!(chrono::DateTime::parse_from_rfc3339(time).is_ok(), "{time}");
    let inputs = p["inputs"].as_array().unwrap();
    let names: Vec<&str> = inputs.iter().map(|i| i["path"].as_str().unwrap()).collect();
    // The incident file first, then the files it names.
    assert_eq!(
        names,
        ["incident.toml", "segments.geojson", "tracks/boat-2.gpx"]
    );
    let dir = incident.parent().unwrap();
    for i in inputs {
        if let Some(want) = sha256sum(&dir.join(i["path"].as_str().unwrap())) {
            assert_eq!(i["sha256"], want.as_str(), "{i}");
        }
    }
    assert_eq!(
        p["seeds"],
        serde_json::json!([{ "scenario": "drifting-since-the-call", "seed": 11 }])
    );
}

#[test]
fn every_file_of_a_plan_run_carries_the_provenance() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("plan");
    let incident = workspace().join("fixtures/golden/tiny/incident.toml");
    let o = seekgrid(&[
        "plan",
        incident.to_str().unwrap(),
        "--start",
        "2026-03-10T11:00:00Z",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let summary: Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).unwrap()).unwrap();
    check_provenance(&summary["provenance"], &incident);
    let mut checked = 0;
    for entry in std::fs::read_dir(&out).unwrap() {
        let path = entry.unwrap().path();
        let name = path.file_name().unwrap().to_str().unwrap().to_owned();
        if name.ends_with(".geojson") {
            let v: Value = serde_json::from_str(&std::fs::read_to_string(&path).unwrap()).unwrap();
            assert_eq!(v["provenance"], summary["provenance"], "{name}");
            checked += 1;
        } else if name.ends_with(".png") && have("gdalinfo") {
            // GDAL reads a PNG's text chunks as metadata items.
            let o = run("gdalinfo", &["-json", path.to_str().unwrap()]);
            let v: Value = serde_json::from_slice(&o.stdout).unwrap();
            let text = v["metadata"][""]["provenance"]
                .as_str()
                .unwrap_or_else(|| panic!("{name}: {v}"));
            let p: Value = serde_json::from_str(text).unwrap();
            assert_eq!(p, summary["provenance"], "{name}");
            checked += 1;
        } else if name.ends_with(".gpx") {
            let text = std::fs::read_to_string(&path).unwrap();
            let start = text
                .find("<provenance xmlns=\"urn:seekgrid:provenance:1\">")
                .unwrap();
            let body = &text[start..];
            let json = &body[body.find('>').unwrap() + 1..body.find("</provenance>").unwrap()];
            let p: Value = serde_json::from_str(
                &json
                    .replace("&lt;", "<")
                    .replace("&gt;", ">")
                    .replace("&amp;", "&"),
            )
            .unwrap();
            assert_eq!(p, summary["provenance"]);
            assert!(text.find("</provenance></extensions></metadata>").is_some());
            if have("xmllint") {
                let schema = workspace().join("fixtures/schemas/gpx11.xsd");
                let o = run(
                    "xmllint",
                    &[
                        "--noout",
                        "--schema",
                        schema.to_str().unwrap(),
                        path.to_str().unwrap(),
                    ],
                );
                assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
            }
            checked += 1;
        }
    }
    // probability, containment, plan GeoJSON; heatmap, plan, effort pictures; plan.gpx.
    assert!(checked >= 4, "{checked}");
}
