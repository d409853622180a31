//! `seekgrid log`: a completed search recorded without hand-editing. A search logged as planned
//! scores exactly as the same pattern written by hand; the file keeps every comment; every bad
//! input is refused with exit 2 and leaves the folder as it was.
//!
//! The incidents are the invented ones of `fixtures/golden/tiny` and `scenarios/marine`
//! (invented data; the checks here compare seekgrid with itself and with the file's text, not
//! with the world).

use crate::end_to_end::{seekgrid, workspace};
use serde_json::Value;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::process::Output;

/// The start of the planned period of the tiny incident: after its two logged searches.
const PLAN_START: &str = "2026-03-10T11:00:00Z";

fn copy_dir(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).unwrap();
    for e in std::fs::read_dir(from).unwrap() {
        let e = e.unwrap();
        let target = to.join(e.file_name());
        if e.file_type().unwrap().is_dir() {
            if e.file_name() != "expected" {
                copy_dir(&e.path(), &target);
            }
        } else {
            std::fs::copy(e.path(), target).unwrap();
        }
    }
}

/// A fresh copy of an invented incident folder (`fixtures/golden/tiny` or `scenarios/marine`).
fn incident_copy(dir: &Path, name: &str, from: &str) -> PathBuf {
    let folder = dir.join(name);
    copy_dir(&workspace().join(from), &folder);
    folder.join("incident.toml")
}

fn s(p: &Path) -> &str {
    p.to_str().unwrap()
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

fn ok(args: &[&str]) -> Output {
    let o = seekgrid(args);
    assert!(
        o.status.success(),
        "seekgrid {args:?} exited {:?}: {}",
        o.status.code(),
        stderr(&o)
    );
    o
}

/// Every file under `dir` with its bytes.
fn snapshot(dir: &Path) -> BTreeMap<PathBuf, Vec<u8>> {
    let mut out = BTreeMap::new();
    let mut stack = vec![dir.to_owned()];
    while let Some(d) = stack.pop() {
        for e in std::fs::read_dir(&d).unwrap() {
            let p = e.unwrap().path();
            if p.is_dir() {
                stack.push(p);
            } else {
                out.insert(p.clone(), std::fs::read(&p).unwrap());
            }
        }
    }
    out
}

/// Plans the tiny incident at [`PLAN_START`] into `dir/plan` and returns the folder.
fn plan(incident: &Path, dir: &Path) -> PathBuf {
    let out = dir.join("plan");
    ok(&["plan", s(incident), "--start", PLAN_START, "--out", s(&out)]);
    out
}

/// The summary's report of search `id` after mapping `incident` at `at`.
fn search_report(incident: &Path, out: &Path, at: &str, id: &str) -> (Value, Value) {
    ok(&[
        "map",
        s(incident),
        "--out",
        s(out),
        "--at",
        at,
        "--outputs",
        "summary",
    ]);
    let summary: Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).unwrap()).unwrap();
    let report = summary["searches"]
        .as_array()
        .unwrap()
        .iter()
        .find(|r| r["id"] == id)
        .unwrap_or_else(|| panic!("no search {id} in {summary}"))
        .clone();
    (report, summary["pos_cumulative"].clone())
}

/// A refusal: exit 2, the message holds `needle`, and the folder is exactly as before.
fn refused(args: &[&str], folder: &Path, needle: &str) {
    let before = snapshot(folder);
    let o = seekgrid(args);
    assert_eq!(o.status.code(), Some(2), "{args:?}: {}", stderr(&o));
    assert!(stderr(&o).contains(needle), "{args:?}: {}", stderr(&o));
    assert_eq!(snapshot(folder), before, "{args:?} changed the folder");
}

#[test]
fn a_search_logged_as_planned_scores_exactly_as_the_same_pattern_written_by_hand() {
    let dir = tempfile::tempdir().unwrap();
    let logged = incident_copy(dir.path(), "logged", "fixtures/golden/tiny");
    let by_hand = incident_copy(dir.path(), "by-hand", "fixtures/golden/tiny");
    let plan = plan(&logged, dir.path());
    ok(&["log", s(&logged), "--plan", s(&plan), "--unit", "boat-1"]);

    // The same search written by hand from the tasking's numbers (Rust's `{:?}` of an f64 is
    // its shortest round-trip form).
    let tasking = seekgrid_incident::tasking::read(&plan).unwrap();
    let task = tasking.unit("boat-1").unwrap();
    let p = task.pattern.as_ref().unwrap();
    let hand = format!(
        "\n[[search]]\nid = \"boat-1-20260310T1100Z\"\nunit = \"boat-1\"\nstart = \"2026-03-10T11:00:00Z\"\nend = \"2026-03-10T14:00:00Z\"\nsweep_width_m = {:?}\ndetection = \"{}\"\npattern = {{ kind = \"{}\", center = [{:?}, {:?}], length_m = {:?}, width_m = {:?}, major_bearing_deg = {:?}, track_spacing_m = {:?} }}\n",
        task.sweep_width_m,
        task.detection,
        p.kind,
        p.center[0],
        p.center[1],
        p.length_m.unwrap(),
        p.width_m.unwrap(),
        p.major_bearing_deg.unwrap(),
        p.track_spacing_m.unwrap(),
    );
    let mut text = std::fs::read_to_string(&by_hand).unwrap();
    let units = text.find("\n[[unit]]").unwrap();
    text.insert_str(units, &hand);
    std::fs::write(&by_hand, text).unwrap();

    let at = "2026-03-10T14:00:00Z";
    let (a, a_total) = search_report(
        &logged,
        &dir.path().join("map-logged"),
        at,
        "boat-1-20260310T1100Z",
    );
    let (b, b_total) = search_report(
        &by_hand,
        &dir.path().join("map-by-hand"),
        at,
        "boat-1-20260310T1100Z",
    );
    // Every number of the report, to the last bit (serde_json writes f64 round-trip).
    assert_eq!(a, b);
    assert_eq!(a_total, b_total);
    assert!(a["pos"].as_f64().unwrap() > 0.0, "{a}");
    assert_eq!(a["track_spacing_m"].as_f64(), p.track_spacing_m);
    // And the logged file says where it came from.
    let text = std::fs::read_to_string(&logged).unwrap();
    assert!(
        text.contains(&format!("tasked_in = \"{}\"", tasking.run_id)),
        "{text}"
    );
}

#[test]
fn a_search_cut_short_scores_less_than_the_whole_pattern() {
    let dir = tempfile::tempdir().unwrap();
    let incident = incident_copy(dir.path(), "tiny", "fixtures/golden/tiny");
    let plan = plan(&incident, dir.path());
    let whole = incident_copy(dir.path(), "whole", "fixtures/golden/tiny");
    ok(&["log", s(&whole), "--plan", s(&plan), "--unit", "boat-1"]);
    ok(&[
        "log",
        s(&incident),
        "--plan",
        s(&plan),
        "--unit",
        "boat-1",
        "--done-fraction",
        "0.5",
        "--end",
        "2026-03-10T12:30:00Z",
    ]);
    let text = std::fs::read_to_string(&incident).unwrap();
    assert!(text.contains("done_fraction = 0.5\n"), "{text}");
    let at = "2026-03-10T14:00:00Z";
    let id = "boat-1-20260310T1100Z";
    let (half, _) = search_report(&incident, &dir.path().join("m-half"), at, id);
    let (all, _) = search_report(&whole, &dir.path().join("m-all"), at, id);
    let (h, a) = (half["pos"].as_f64().unwrap(), all["pos"].as_f64().unwrap());
    assert!(h > 0.0 && h < a, "half {h}, whole {a}");
}

/// The lines of `text` that hold a comment, in order.
fn comment_lines(text: &str) -> Vec<&str> {
    text.lines().filter(|l| l.contains('#')).collect()
}

#[test]
fn log_then_check_keeps_every_comment_of_the_file() {
    let dir = tempfile::tempdir().unwrap();
    let incident = incident_copy(dir.path(), "marine", "scenarios/marine");
    let before = std::fs::read_to_string(&incident).unwrap();
    assert!(comment_lines(&before).len() >= 6, "the test needs comments");
    ok(&[
        "log",
        s(&incident),
        "--unit",
        "rescue-boat-2",
        "--pattern",
        "parallel-sweep",
        "--center=-40.93,31.54",
        "--length-m",
        "6000",
        "--width-m",
        "3000",
        "--major-bearing-deg",
        "75",
        "--track-spacing-m",
        "700",
        "--sweep-width-m",
        "700",
        "--start",
        "2026-06-14T22:30:00Z",
        "--end",
        "2026-06-15T00:30:00Z",
        "--note",
        "east of the sighting",
    ]);
    let o = ok(&["check", s(&incident)]);
    assert!(String::from_utf8_lossy(&o.stdout).contains("3 search(es)"));
    let after = std::fs::read_to_string(&incident).unwrap();
    let mut added: Vec<&str> = comment_lines(&after);
    let logged_comment = added
        .iter()
        .position(|l| l.starts_with("# logged by seekgrid log at "))
        .expect("the new search says where it came from");
    added.remove(logged_comment);
    assert_eq!(added, comment_lines(&before));
    // And every other byte: the file is the old one with one block inserted.
    let start = after.find("\n# logged by seekgrid log").unwrap();
    let end = start + after[start..].find("\n\n").unwrap_or(after.len() - start) + 1;
    assert_eq!(format!("{}{}", &after[..start], &after[end..]), before);
    // The backup is the old file.
    let backups: Vec<PathBuf> = std::fs::read_dir(incident.parent().unwrap())
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.to_string_lossy().contains("incident.toml.bak-"))
        .collect();
    assert_eq!(backups.len(), 1, "{backups:?}");
    assert_eq!(std::fs::read_to_string(&backups[0]).unwrap(), before);
}

/// An invented GPX track with a time at every point, over the tiny incident's grid.
const TRACK_IN_GRID: &str = r#"<?xml version="1.0" encoding="UTF-8"?>
<gpx version="1.1" creator="seekgrid test (invented track)" xmlns="http://www.topografix.com/GPX/1/1">
 <trk><name>boat-3</name><trkseg>
   <trkpt lat="28.010" lon="-35.040"><time>2026-03-10T11:10:00Z</time></trkpt>
   <trkpt lat="28.010" lon="-34.990"><time>2026-03-10T11:25:00Z</time></trkpt>
   <trkpt lat="28.015" lon="-34.990"><time>2026-03-10T11:27:00Z</time></trkpt>
   <trkpt lat="28.015" lon="-35.040"><time>2026-03-10T11:42:00Z</time></trkpt>
 </trkseg></trk>
</gpx>
"#;

#[test]
fn a_track_is_copied_beside_the_incident_and_its_times_are_used() {
    let dir = tempfile::tempdir().unwrap();
    let incident = incident_copy(dir.path(), "tiny", "fixtures/golden/tiny");
    let source = dir.path().join("from-the-plotter.gpx");
    std::fs::write(&source, TRACK_IN_GRID).unwrap();
    ok(&[
        "log",
        s(&incident),
        "--track",
        s(&source),
        "--unit",
        "boat-3",
        "--sweep-width-m",
        "600",
        "--detection",
        "exponential",
    ]);
    let text = std::fs::read_to_string(&incident).unwrap();
    for line in [
        "id = \"boat-3-20260310T1110Z\"\n",
        "start = \"2026-03-10T11:10:00Z\"\n",
        "end = \"2026-03-10T11:42:00Z\"\n",
        "track = \"tracks/boat-3-20260310T1110Z.gpx\"\n",
    ] {
        assert!(text.contains(line), "{line} missing from\n{text}");
    }
    let copy = incident
        .parent()
        .unwrap()
        .join("tracks/boat-3-20260310T1110Z.gpx");
    assert_eq!(std::fs::read_to_string(&copy).unwrap(), TRACK_IN_GRID);
    // Editing the original later changes nothing in the incident.
    std::fs::write(&source, "gone").unwrap();
    let (r, _) = search_report(
        &incident,
        &dir.path().join("map"),
        "2026-03-10T12:00:00Z",
        "boat-3-20260310T1110Z",
    );
    assert!(r["pos"].as_f64().unwrap() > 0.0, "{r}");
}

#[test]
fn a_team_sent_to_a_segment_logs_its_track_with_the_plans_sweep_width_and_run_id() {
    let dir = tempfile::tempdir().unwrap();
    let incident = incident_copy(dir.path(), "tiny", "fixtures/golden/tiny");
    let plan = plan(&incident, dir.path());
    let source = dir.path().join("team.gpx");
    std::fs::write(&source, TRACK_IN_GRID).unwrap();
    ok(&[
        "log",
        s(&incident),
        "--plan",
        s(&plan),
        "--unit",
        "shore-team",
        "--track",
        s(&source),
    ]);
    let tasking = seekgrid_incident::tasking::read(&plan).unwrap();
    let text = std::fs::read_to_string(&incident).unwrap();
    // The line of 5 searchers at 30 m each (the tiny incident's invented values).
    for line in [
        "sweep_width_m = 150.0\n".to_owned(),
        "detection = \"exponential\"\n".to_owned(),
        format!("tasked_in = \"{}\"\n", tasking.run_id),
    ] {
        assert!(text.contains(&line), "{line} missing from\n{text}");
    }
    ok(&["check", s(&incident)]);
}

#[test]
fn a_plan_made_for_another_incident_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let incident = incident_copy(dir.path(), "tiny", "fixtures/golden/tiny");
    let plan = plan(&incident, dir.path());
    let other = incident_copy(dir.path(), "marine", "scenarios/marine");
    refused(
        &["log", s(&other), "--plan", s(&plan), "--unit", "boat-1"],
        other.parent().unwrap(),
        "was made for the incident \"Golden test",
    );
}

#[test]
fn a_unit_not_in_the_plan_is_refused_with_the_plans_units() {
    let dir = tempfile::tempdir().unwrap();
    let incident = incident_copy(dir.path(), "tiny", "fixtures/golden/tiny");
    let plan = plan(&incident, dir.path());
    let folder = incident.parent().unwrap();
    refused(
        &["log", s(&incident), "--plan", s(&plan), "--unit", "boat-9"],
        folder,
        "the plan's units are: boat-1, shore-team",
    );
    // A team sent to a segment has no pattern to log as planned.
    refused(
        &[
            "log",
            s(&incident),
            "--plan",
            s(&plan),
            "--unit",
            "shore-team",
        ],
        folder,
        "log the team's recorded track with --track FILE",
    );
}

#[test]
fn times_outside_the_plans_period_are_refused() {
    let dir = tempfile::tempdir().unwrap();
    let incident = incident_copy(dir.path(), "tiny", "fixtures/golden/tiny");
    let plan = plan(&incident, dir.path());
    let folder = incident.parent().unwrap();
    for (option, time) in [
        ("--start", "2026-03-10T10:59:00Z"),
        ("--end", "2026-03-10T14:01:00Z"),
    ] {
        refused(
            &[
                "log",
                s(&incident),
                "--plan",
                s(&plan),
                "--unit",
                "boat-1",
                option,
                time,
            ],
            folder,
            "is outside the period of unit \"boat-1\"",
        );
    }
}

#[test]
fn a_start_after_the_end_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let incident = incident_copy(dir.path(), "tiny", "fixtures/golden/tiny");
    refused(
        &[
            "log",
            s(&incident),
            "--unit",
            "boat-1",
            "--pattern",
            "expanding-square",
            "--center=-35.0,28.0",
            "--track-spacing-m",
            "500",
            "--sweep-width-m",
            "800",
            "--start",
            "2026-03-10T13:00:00Z",
            "--end",
            "2026-03-10T12:00:00Z",
        ],
        incident.parent().unwrap(),
        "starts (2026-03-10T13:00:00+00:00) after it ends",
    );
}

#[test]
fn a_done_fraction_outside_zero_to_one_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let incident = incident_copy(dir.path(), "tiny", "fixtures/golden/tiny");
    let plan = plan(&incident, dir.path());
    for f in ["0", "-0.2", "1.5", "NaN"] {
        refused(
            &[
                "log",
                s(&incident),
                "--plan",
                s(&plan),
                "--unit",
                "boat-1",
                "--done-fraction",
                f,
            ],
            incident.parent().unwrap(),
            "is outside (0, 1]",
        );
    }
}

#[test]
fn a_track_wholly_outside_the_grid_is_refused_and_not_copied() {
    let dir = tempfile::tempdir().unwrap();
    let incident = incident_copy(dir.path(), "tiny", "fixtures/golden/tiny");
    // The same track moved half a degree north (about 55 km beyond the grid's north edge).
    let far = TRACK_IN_GRID.replace("lat=\"28.0", "lat=\"28.5");
    let source = dir.path().join("far.gpx");
    std::fs::write(&source, far).unwrap();
    refused(
        &[
            "log",
            s(&incident),
            "--track",
            s(&source),
            "--unit",
            "boat-3",
            "--sweep-width-m",
            "600",
        ],
        incident.parent().unwrap(),
        "lies wholly outside the incident's grid",
    );
    // A pattern placed there by hand too (the grid of the marine demo is automatic).
    let marine = incident_copy(dir.path(), "marine", "scenarios/marine");
    refused(
        &[
            "log",
            s(&marine),
            "--unit",
            "rescue-boat-2",
            "--pattern",
            "sector-search",
            "--center=-41.5,31.54",
            "--radius-m",
            "2000",
            "--sweep-width-m",
            "700",
            "--start",
            "2026-06-14T22:30:00Z",
            "--end",
            "2026-06-14T23:30:00Z",
        ],
        marine.parent().unwrap(),
        "lies wholly outside the incident's grid",
    );
}

#[cfg(unix)]
#[test]
fn a_read_only_incident_file_fails_with_exit_1_and_is_left_alone() {
    use std::os::unix::fs::PermissionsExt;
    let dir = tempfile::tempdir().unwrap();
    let incident = incident_copy(dir.path(), "tiny", "fixtures/golden/tiny");
    let source = dir.path().join("track.gpx");
    std::fs::write(&source, TRACK_IN_GRID).unwrap();
    std::fs::set_permissions(&incident, std::fs::Permissions::from_mode(0o444)).unwrap();
    let folder = incident.parent().unwrap();
    let before = snapshot(folder);
    let o = seekgrid(&[
        "log",
        s(&incident),
        "--track",
        s(&source),
        "--unit",
        "boat-3",
        "--sweep-width-m",
        "600",
    ]);
    assert_eq!(o.status.code(), Some(1), "{}", stderr(&o));
    assert!(stderr(&o).contains("is read-only"), "{}", stderr(&o));
    assert_eq!(snapshot(folder), before);
}

#[test]
fn log_help_carries_the_caution() {
    let o = ok(&["log", "--help"]);
    let text = String::from_utf8_lossy(&o.stdout);
    assert!(
        text.contains("decision support") && text.contains("search mission coordinator"),
        "{text}"
    );
    assert!(text.contains("--done-fraction"), "{text}");
}
