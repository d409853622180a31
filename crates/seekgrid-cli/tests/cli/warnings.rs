//! Warnings reach every place a planner reads: standard error with the file position,
//! `summary.json` and the briefing; `--strict` refuses them and writes nothing.

use crate::end_to_end::{seekgrid, workspace};
use serde_json::Value;

/// A copy of the invented marine demo with few particles.
fn marine(root: &std::path::Path) -> std::path::PathBuf {
    let dir = root.join("marine");
    let src = workspace().join("scenarios/marine");
    std::fs::create_dir_all(dir.join("areas")).unwrap();
    std::fs::create_dir_all(dir.join("tracks")).unwrap();
    for f in [
        "incident.toml",
        "coast.geojson",
        "wind.csv",
        "areas/kestrel-bay.geojson",
        "tracks/helicopter-1.gpx",
    ] {
        std::fs::copy(src.join(f), dir.join(f)).unwrap();
    }
    let toml = dir.join("incident.toml");
    let text = std::fs::read_to_string(&toml).unwrap();
    std::fs::write(&toml, text.replace("particles = 20000", "particles = 400")).unwrap();
    toml
}

#[test]
fn a_warning_is_printed_kept_in_the_summary_and_the_briefing() {
    let root = tempfile::tempdir().unwrap();
    let file = marine(root.path());
    let f = file.to_str().unwrap();
    // Before the reference time (18:00) and before going adrift (15:00).
    let out = root.path().join("map");
    let o = seekgrid(&[
        "map",
        f,
        "--out",
        out.to_str().unwrap(),
        "--at",
        "2026-06-14T14:00:00Z",
    ]);
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(0), "{err}");
    assert!(
        err.contains("incident.toml:8:1") || err.contains("incident.toml:8:"),
        "{err}"
    );
    assert!(err.contains(": warning: the map's time --at"), "{err}");
    let s: Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).unwrap()).unwrap();
    let kinds: Vec<&str> = s["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|w| w["kind"].as_str().unwrap())
        .collect();
    assert_eq!(kinds, ["map_before_reference_time", "not_yet_adrift"]);
    assert_eq!(s["warnings"][0]["line"], 8);
    // A plan from before the reference time says so in its briefing.
    let plan = root.path().join("plan");
    let o = seekgrid(&[
        "plan",
        f,
        "--start",
        "2026-06-14T14:00:00Z",
        "--out",
        plan.to_str().unwrap(),
    ]);
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let md = std::fs::read_to_string(plan.join("plan.md")).unwrap();
    assert!(md.contains("## Warnings"), "{md}");
    assert!(
        md.contains("**map_before_reference_time** (incident file line 8"),
        "{md}"
    );
    // Under --strict, the same run is refused and nothing is written.
    let strict = root.path().join("strict");
    let o = seekgrid(&[
        "plan",
        f,
        "--strict",
        "--start",
        "2026-06-14T14:00:00Z",
        "--out",
        strict.to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("refused under --strict: 2 warning(s)"));
    assert!(!strict.exists());
    let leftovers: Vec<_> = std::fs::read_dir(root.path())
        .unwrap()
        .filter_map(|e| e.ok())
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| n.starts_with('.'))
        .collect();
    assert!(leftovers.is_empty(), "{leftovers:?}");
}

#[test]
fn the_demo_incidents_have_no_warning() {
    for demo in ["marine", "land"] {
        let file = workspace().join(format!("scenarios/{demo}/incident.toml"));
        let o = seekgrid(&["check", "--strict", file.to_str().unwrap()]);
        assert_eq!(
            o.status.code(),
            Some(0),
            "{demo}: {}",
            String::from_utf8_lossy(&o.stderr)
        );
    }
}
