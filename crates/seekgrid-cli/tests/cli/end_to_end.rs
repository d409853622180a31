//! End-to-end tests of the `seekgrid` binary: exit codes, messages, and every output file
//! validated by the outside tools a GIS user relies on (GDAL, PROJ), as docs/references.md §8.7
//! describes.

use crate::external::{check_geojson, have, run, stdout};
use serde_json::Value;
use std::path::{Path, PathBuf};
use std::process::Command;

/// Runs the `seekgrid` binary built for these tests.
pub(crate) fn seekgrid(args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_seekgrid"))
        .args(args)
        .output()
        .expect("the binary runs")
}

/// The workspace root.
pub(crate) fn workspace() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../..")
        .canonicalize()
        .unwrap()
}

fn demo_once() -> PathBuf {
    // One demo run shared by the tests of this file (the demo is deterministic).
    static DEMO: std::sync::OnceLock<PathBuf> = std::sync::OnceLock::new();
    DEMO.get_or_init(|| {
        let dir = std::env::temp_dir().join(format!("seekgrid-e2e-demo-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        let o = seekgrid(&["demo", "--out", dir.to_str().unwrap()]);
        assert!(
            o.status.success(),
            "demo failed: {}",
            String::from_utf8_lossy(&o.stderr)
        );
        dir
    })
    .clone()
}

fn summary(dir: &Path) -> Value {
    serde_json::from_str(&std::fs::read_to_string(dir.join("summary.json")).unwrap()).unwrap()
}

#[test]
fn help_carries_the_caution_on_every_command() {
    for args in [
        vec!["--help"],
        vec!["map", "--help"],
        vec!["check", "--help"],
        vec!["demo", "--help"],
        vec!["credibility", "--help"],
        vec!["review", "--help"],
    ] {
        let o = seekgrid(&args);
        assert!(o.status.success());
        let text = stdout(&o);
        assert!(
            text.contains("decision support") && text.contains("search mission coordinator"),
            "{args:?}: {text}"
        );
    }
}

#[test]
fn check_accepts_the_demo_incidents() {
    for demo in ["marine", "land"] {
        let f = workspace().join(format!("scenarios/{demo}/incident.toml"));
        let o = seekgrid(&["check", f.to_str().unwrap()]);
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        assert!(stdout(&o).contains("ok"));
    }
}

#[test]
fn bad_input_exits_2_with_file_line_and_column() {
    let dir = tempfile::tempdir().unwrap();
    let f = dir.path().join("bad.toml");
    std::fs::write(
        &f,
        "[incident]\ntitle = \"bad (invented)\"\nreference_time = \"2026-06-14T18:00:00Z\"\n[grid]\ncell_m = 250\n[[analyst]]\nid = \"a\"\n[[scenario]]\nid = \"p\"\nanalyst = \"a\"\nkind = \"point\"\nposition = [-30.0, 20.0]\nsigma_m = -4\n",
    )
    .unwrap();
    let o = seekgrid(&["check", f.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("bad.toml:13:11:") && err.contains("sigma_m"),
        "{err}"
    );
    let out = dir.path().join("out");
    let o = seekgrid(&["map", f.to_str().unwrap(), "--out", out.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
    assert!(
        !out.join("summary.json").exists(),
        "nothing is written for bad input"
    );
}

#[test]
fn an_existing_output_folder_is_refused_without_force() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("keep.txt"), "x").unwrap();
    let f = workspace().join("scenarios/land/incident.toml");
    let o = seekgrid(&[
        "map",
        f.to_str().unwrap(),
        "--out",
        dir.path().to_str().unwrap(),
        "--outputs",
        "summary",
    ]);
    assert_eq!(
        o.status.code(),
        Some(2),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let o = seekgrid(&[
        "map",
        f.to_str().unwrap(),
        "--out",
        dir.path().to_str().unwrap(),
        "--outputs",
        "summary",
        "--force",
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    // --force replaces the whole folder: nothing of what was there stays.
    assert!(!dir.path().join("keep.txt").exists());
    assert!(dir.path().join("summary.json").exists());
}

#[test]
fn outputs_option_writes_only_what_is_asked_and_json_prints_the_summary() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("o");
    let f = workspace().join("scenarios/land/incident.toml");
    let o = seekgrid(&[
        "map",
        f.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--outputs",
        "summary",
        "--json",
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let printed: Value = serde_json::from_str(&stdout(&o)).unwrap();
    assert!(printed["poc_in_grid"].is_number());
    let names: Vec<String> = std::fs::read_dir(&out)
        .unwrap()
        .map(|e| e.unwrap().file_name().into_string().unwrap())
        .collect();
    assert_eq!(names, vec!["summary.json".to_owned()]);
    let o = seekgrid(&[
        "map",
        f.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--outputs",
        "summary,nonsense",
    ]);
    assert_eq!(o.status.code(), Some(2));
}

/// The phase names in a summary's `phases`, in order.
fn phase_names(summary: &Value) -> Vec<String> {
    summary["phases"]
        .as_array()
        .expect("summary.json lists its phases")
        .iter()
        .map(|p| {
            assert!(p["wall_s"].as_f64().is_some_and(|t| t >= 0.0), "{p}");
            p["phase"].as_str().unwrap().to_owned()
        })
        .collect()
}

#[test]
fn the_particle_density_is_computed_only_for_outputs_that_read_it_and_once() {
    // The marine demo drifts 20,000 particles. `--outputs summary` reads no per-cell field, so
    // the run never spreads the particles; a plan with its maps spreads them exactly once.
    let dir = tempfile::tempdir().unwrap();
    let f = workspace().join("scenarios/marine/incident.toml");
    let out = dir.path().join("summary-only");
    let o = seekgrid(&[
        "map",
        f.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--outputs",
        "summary",
        "--json",
        "--verbose",
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let printed: Value = serde_json::from_str(&stdout(&o)).unwrap();
    let names = phase_names(&printed);
    assert!(names.contains(&"drift".to_owned()), "{names:?}");
    assert!(!names.contains(&"particle density".to_owned()), "{names:?}");
    // --verbose prints the same phases with their times on standard error.
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.lines().any(|l| l.starts_with("drift ")), "{err}");
    assert!(err.lines().any(|l| l.starts_with("total ")), "{err}");

    let out = dir.path().join("plan");
    let o = seekgrid(&[
        "plan",
        f.to_str().unwrap(),
        "--start",
        "2026-06-14T22:00:00Z",
        "--out",
        out.to_str().unwrap(),
        "--json",
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let printed: Value = serde_json::from_str(&stdout(&o)).unwrap();
    let names = phase_names(&printed);
    let density = names.iter().filter(|n| *n == "particle density").count();
    assert_eq!(density, 1, "{names:?}");
    for phase in [
        "practical plan",
        "plan bound",
        "write plan-map",
        "write heatmap",
    ] {
        assert!(names.contains(&phase.to_owned()), "{phase}: {names:?}");
    }
}

#[test]
fn demo_summary_accounts_for_all_the_mass() {
    let demo = demo_once();
    for name in ["marine", "land"] {
        let s = summary(&demo.join(name).join("map"));
        let inside = s["poc_in_grid"].as_f64().unwrap();
        let outside = s["poc_outside"].as_f64().unwrap();
        assert!(
            (inside + outside - 1.0).abs() < 1e-12,
            "{name}: {inside} + {outside}"
        );
        let parts = s["rest_of_world_declared"].as_f64().unwrap()
            + s["outside_grid"].as_f64().unwrap()
            + s["particles_outside_grid"].as_f64().unwrap();
        assert!((parts - outside).abs() < 1e-12, "{name}");
        assert!(
            s["caution"]
                .as_str()
                .unwrap()
                .contains("search mission coordinator")
        );
        let weights: f64 = s["analysts"]
            .as_array()
            .unwrap()
            .iter()
            .map(|a| a["weight"].as_f64().unwrap())
            .sum();
        assert!((weights - 1.0).abs() < 1e-12);
    }
}

#[test]
fn demo_geojson_layers_pass_gdal_validity_and_winding_checks() {
    let demo = demo_once();
    for name in ["marine", "land"] {
        let dir = demo.join(name).join("map");
        for layer in [
            "probability.geojson",
            "containment.geojson",
            "searches.geojson",
        ] {
            let Some((w, s, e, n)) = check_geojson(&dir.join(layer)) else {
                return;
            };
            // The demo island is at about 41 W, 31.5 N (invented place in open ocean).
            assert!(
                (-41.5..-40.3).contains(&w) && (-41.5..-40.3).contains(&e) && w < e,
                "{name}/{layer}: lon {w}..{e}"
            );
            assert!(
                (31.2..31.9).contains(&s) && (31.2..31.9).contains(&n) && s < n,
                "{name}/{layer}: lat {s}..{n}"
            );
        }
    }
    check_geojson(&demo.join("land/map/segments.geojson"));
    for layer in ["particles.geojson", "drift.geojson"] {
        check_geojson(&demo.join("marine/map").join(layer));
    }
}

#[test]
fn heatmap_is_placed_by_gdal_in_the_working_utm_zone() {
    let demo = demo_once();
    if !have("gdalinfo") || !have("gdalsrsinfo") {
        return;
    }
    for name in ["marine", "land"] {
        let dir = demo.join(name).join("map");
        let s = summary(&dir);
        let epsg = s["grid"]["crs"].as_str().unwrap().to_owned();
        // Wrenhold Island (invented) lies at about 41 W: UTM zone 24 north (EPSG:32624).
        assert_eq!(epsg, "EPSG:32624");
        for png in ["heatmap.png", "pod.png"] {
            let p = dir.join(png);
            let got = stdout(&run(
                "gdalsrsinfo",
                &["-e", "-o", "epsg", p.to_str().unwrap()],
            ));
            assert_eq!(
                got.split_whitespace().collect::<String>(),
                epsg,
                "{name}/{png}"
            );
            let info: Value =
                serde_json::from_str(&stdout(&run("gdalinfo", &["-json", p.to_str().unwrap()])))
                    .unwrap();
            let gt: Vec<f64> = info["geoTransform"]
                .as_array()
                .unwrap()
                .iter()
                .map(|v| v.as_f64().unwrap())
                .collect();
            let cell = s["grid"]["cell_m"].as_f64().unwrap();
            let k = s["outputs"][png]["pixels_per_cell"].as_f64().unwrap();
            assert_eq!((gt[2], gt[4]), (0.0, 0.0), "north up");
            assert!(
                (gt[1] - cell / k).abs() < 1e-9 && (gt[5] + cell / k).abs() < 1e-9,
                "{gt:?}"
            );
            // The grid's north-west corner falls on a pixel corner of the image.
            let west = s["grid"]["west_m"].as_f64().unwrap();
            let north = s["grid"]["north_m"].as_f64().unwrap();
            let px = (west - gt[0]) / gt[1];
            let py = (north - gt[3]) / gt[5];
            assert!(
                (px - px.round()).abs() < 1e-6 && (py - py.round()).abs() < 1e-6,
                "corner at pixel {px}, {py}"
            );
        }
    }
}

#[test]
fn grid_corners_match_proj_for_the_demo() {
    let demo = demo_once();
    if !have("cs2cs") {
        return;
    }
    let s = summary(&demo.join("land/map"));
    // PROJ's cs2cs: UTM 24N to WGS84 (output is lat lon); our probability layer is in lon/lat.
    let west = s["grid"]["west_m"].as_f64().unwrap();
    let north = s["grid"]["north_m"].as_f64().unwrap();
    let o = Command::new("sh")
        .arg("-c")
        .arg(format!(
            "echo '{west} {north}' | cs2cs -f %.9f EPSG:32624 EPSG:4326"
        ))
        .output()
        .unwrap();
    let v: Vec<f64> = stdout(&o)
        .split_whitespace()
        .take(2)
        .map(|x| x.parse().unwrap())
        .collect();
    let frame = seekgrid_core::Frame::new(seekgrid_core::UtmZone::from_epsg(32624).unwrap());
    let (lon, lat) = frame.to_lon_lat(geo_types_coord(west, north));
    assert!(
        (lat - v[0]).abs() < 1e-8 && (lon - v[1]).abs() < 1e-8,
        "ours {lon} {lat}, PROJ {v:?}"
    );
}

fn geo_types_coord(x: f64, y: f64) -> geo::Coord<f64> {
    geo::Coord { x, y }
}

#[test]
fn searches_lower_the_probability_where_they_looked() {
    let demo = demo_once();
    let s = summary(&demo.join("marine/map"));
    let searches = s["searches"].as_array().unwrap();
    assert_eq!(searches.len(), 2);
    let mut miss = 1.0;
    for x in searches {
        let pos = x["pos"].as_f64().unwrap();
        assert!(pos > 0.0 && pos < 1.0);
        assert!(x["poc_after"].as_f64().unwrap() < x["poc_before"].as_f64().unwrap());
        miss *= 1.0 - pos;
    }
    assert!((s["pos_cumulative"].as_f64().unwrap() - (1.0 - miss)).abs() < 1e-12);
}

#[test]
fn drift_layers_carry_the_drifting_mass() {
    let demo = demo_once();
    let dir = demo.join("marine/map");
    let s = summary(&dir);
    let particles: Value =
        serde_json::from_str(&std::fs::read_to_string(dir.join("particles.geojson")).unwrap())
            .unwrap();
    let total: f64 = particles["features"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["properties"]["weight"].as_f64().unwrap())
        .sum();
    assert!(
        (total - s["poc_drifting"].as_f64().unwrap()).abs() < 1e-9,
        "{total}"
    );
    let drift: Value =
        serde_json::from_str(&std::fs::read_to_string(dir.join("drift.geojson")).unwrap()).unwrap();
    let parts: Vec<&str> = drift["features"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["properties"]["part"].as_str().unwrap())
        .collect();
    assert!(parts.contains(&"mean-track") && parts.contains(&"ellipse"));
}

#[test]
fn demo_plans_are_read_against_their_bound_and_their_files_validate() {
    let demo = demo_once();
    for name in ["marine", "land"] {
        let dir = demo.join(name).join("plan");
        let s = summary(&dir);
        let plan = s["pos_plan"].as_f64().unwrap();
        let bound = s["pos_optimal_bound"].as_f64().unwrap();
        let md = std::fs::read_to_string(dir.join("plan.md")).unwrap();
        assert!(
            plan > 0.0 && bound > 0.0,
            "{name}: plan {plan} bound {bound}"
        );
        // The bound is Stone's optimum for exponential detection (docs/references.md §4): it
        // bounds the land demo's exponential-law teams, but not the marine demo's inverse-cube
        // units, whose parallel sweeps detect more than random search at the same coverage; for
        // those the briefing must say so.
        if name == "land" {
            assert!(plan <= bound + 1e-9, "{name}: plan {plan} bound {bound}");
        } else {
            assert!(
                md.contains("use a detection law other than exponential"),
                "{name}: the briefing says the bound is not one for inverse-cube units"
            );
        }
        check_geojson(&dir.join("plan.geojson"));
        assert!(
            md.contains("search mission coordinator"),
            "the briefing carries the caution"
        );
        let gpx = dir.join("plan.gpx");
        // GPX 1.1 schema (topografix.com), kept in fixtures/schemas (docs/references.md §8.2).
        if have("xmllint") {
            let xsd = workspace().join("fixtures/schemas/gpx11.xsd");
            let o = run(
                "xmllint",
                &[
                    "--noout",
                    "--schema",
                    xsd.to_str().unwrap(),
                    gpx.to_str().unwrap(),
                ],
            );
            assert!(
                o.status.success(),
                "{name}: {}",
                String::from_utf8_lossy(&o.stderr)
            );
        }
        if have("ogrinfo") {
            let o = run("ogrinfo", &["-ro", "-so", "-al", gpx.to_str().unwrap()]);
            assert!(
                o.status.success() && stdout(&o).contains("routes"),
                "{name}: {}",
                stdout(&o)
            );
        }
    }
}

#[test]
fn gpx_tracks_read_like_gdal_reads_them() {
    // Our reader (the gpx crate) against GDAL's GPX driver on the demo's recorded tracks:
    // the same number of track points and the same extent.
    if !have("ogrinfo") {
        return;
    }
    for f in [
        "scenarios/marine/tracks/helicopter-1.gpx",
        "scenarios/land/tracks/team-alpha.gpx",
    ] {
        let path = workspace().join(f);
        let (points, times) = seekgrid_incident::geofiles::read_track(&path).unwrap();
        assert!(times.iter().all(Option::is_some));
        let o = run(
            "ogrinfo",
            &["-ro", "-so", path.to_str().unwrap(), "track_points"],
        );
        let text = stdout(&o);
        let count: usize = text
            .lines()
            .find_map(|l| l.strip_prefix("Feature Count: "))
            .expect("a feature count")
            .trim()
            .parse()
            .unwrap();
        assert_eq!(count, points.0.len(), "{f}");
        let (gw, gs, ge, gn) = crate::external::extent(&text);
        let (mut w, mut s, mut e, mut n) = (f64::MAX, f64::MAX, f64::MIN, f64::MIN);
        for c in &points.0 {
            w = w.min(c.x);
            e = e.max(c.x);
            s = s.min(c.y);
            n = n.max(c.y);
        }
        for (ours, gdal) in [w, s, e, n].iter().zip(&[gw, gs, ge, gn]) {
            assert!((ours - gdal).abs() < 1e-9, "{f}: ours {ours}, GDAL {gdal}");
        }
    }
}

#[test]
fn demo_writes_the_credibility_report_of_the_invented_record() {
    let demo = demo_once();
    let folder = demo.join("credibility");
    let record = std::fs::read_to_string(folder.join("input/credibility-record.csv")).unwrap();
    assert!(record.starts_with("# INVENTED"), "{record}");
    let report: Value =
        serde_json::from_str(&std::fs::read_to_string(folder.join("credibility.json")).unwrap())
            .unwrap();
    assert_eq!(report["record"], "input/credibility-record.csv");
    assert_eq!(report["analysts"].as_array().unwrap().len(), 6);
    assert!(folder.join("credibility.md").is_file());
}

#[test]
fn demo_logs_a_planned_search_into_a_copy_and_reviews_both_incidents() {
    let demo = demo_once();
    // `seekgrid log --plan` appended rescue-boat-1's search to the copy in marine/logged/,
    // kept the previous text as a backup, and left the bundled incident as it was.
    let logged = demo.join("marine/logged");
    let text = std::fs::read_to_string(logged.join("incident.toml")).unwrap();
    let bundled =
        std::fs::read_to_string(workspace().join("scenarios/marine/incident.toml")).unwrap();
    assert_eq!(text.matches("[[search]]").count(), 3, "{text}");
    assert_eq!(bundled.matches("[[search]]").count(), 2);
    assert!(text.contains("unit = \"rescue-boat-1\"") && text.contains("tasked_in"));
    let backups: Vec<_> = std::fs::read_dir(&logged)
        .unwrap()
        .filter_map(|e| e.ok())
        .filter(|e| {
            e.file_name()
                .to_string_lossy()
                .starts_with("incident.toml.bak-")
        })
        .collect();
    assert_eq!(backups.len(), 1);
    assert_eq!(std::fs::read_to_string(backups[0].path()).unwrap(), bundled);
    // Each incident's review against its invented outcome: the logged search is reviewed.
    for (name, searches) in [("marine", 3), ("land", 2)] {
        let dir = demo.join(name).join("review");
        let doc: Value =
            serde_json::from_str(&std::fs::read_to_string(dir.join("review.json")).unwrap())
                .unwrap();
        assert_eq!(doc["end_reason"], "found", "{name}");
        assert_eq!(
            doc["searches"].as_array().unwrap().len(),
            searches,
            "{name}"
        );
        for f in seekgrid_render::charts::CHART_FILES {
            assert!(dir.join(f).is_file(), "{name}: {f}");
        }
        let md = std::fs::read_to_string(dir.join("review.md")).unwrap();
        assert!(md.contains("search mission coordinator"), "{name}");
    }
}
