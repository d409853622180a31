//! Running external reference tools (GDAL, PROJ, xmllint, GPSBabel) from tests.
//!
//! In CI (`CI=true`) a missing tool is a failure; elsewhere the test says loudly that it
//! skipped the check and passes.

use std::process::{Command, Output};

/// Whether `tool` can be run. Fails the test in CI when it cannot.
pub fn have(tool: &str) -> bool {
    let found = Command::new("sh")
        .arg("-c")
        .arg(format!("command -v {tool}"))
        .output()
        .map(|o| o.status.success())
        .unwrap_or(false);
    if !found {
        if std::env::var("CI").is_ok_and(|v| v == "true") {
            panic!(
                "{tool} is not installed; .ci/run installs it (gdal-bin, proj-bin, libxml2-utils, gpsbabel)"
            );
        }
        eprintln!(
            "SKIPPED: {tool} not installed; install gdal-bin proj-bin libxml2-utils gpsbabel to run this check"
        );
    }
    found
}

/// Runs a command and returns its output, failing the test if it cannot start.
pub fn run(program: &str, args: &[&str]) -> Output {
    Command::new(program)
        .args(args)
        .output()
        .unwrap_or_else(|e| panic!("cannot run {program}: {e}"))
}

/// Standard output as text.
pub fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

/// The GeoJSON check of docs/references.md §8.7: parses with unclosed rings refused, no `ERROR`
/// line, every polygon valid and counter-clockwise (RFC 7946 §3.1.6) by GDAL's SQLite dialect, no
/// null geometry.
/// Returns the extent GDAL reports as (west, south, east, north).
pub fn check_geojson(path: &std::path::Path) -> Option<(f64, f64, f64, f64)> {
    if !have("ogrinfo") {
        return None;
    }
    let p = path.to_str().unwrap();
    let o = run(
        "ogrinfo",
        &[
            "--config",
            "OGR_GEOMETRY_ACCEPT_UNCLOSED_RING",
            "NO",
            "-ro",
            "-al",
            "-so",
            p,
        ],
    );
    let text = format!("{}{}", stdout(&o), String::from_utf8_lossy(&o.stderr));
    assert!(o.status.success(), "ogrinfo failed on {p}: {text}");
    assert!(
        !text.lines().any(|l| l.starts_with("ERROR")),
        "ogrinfo reported an error on {p}: {text}"
    );
    let text_file = std::fs::read_to_string(path).unwrap();
    assert!(
        !text_file.contains("\"crs\""),
        "{p} has a crs member, not RFC 7946"
    );
    let layer = text
        .lines()
        .find_map(|l| l.strip_prefix("Layer name: "))
        .expect("a layer name")
        .trim()
        .to_owned();
    let q = format!(
        "SELECT COUNT(*) AS bad FROM \"{layer}\" WHERE ST_GeometryType(geometry) LIKE '%POLYGON' AND (ST_IsValid(geometry)=0 OR ST_IsPolygonCCW(geometry)=0)"
    );
    let o = run(
        "ogrinfo",
        &["-ro", "-q", "-dialect", "SQLite", "-sql", &q, p],
    );
    let out = stdout(&o);
    assert!(
        out.contains("bad (Integer) = 0"),
        "{p}: invalid or clockwise polygons: {out}"
    );
    let q = format!(
        "SELECT COUNT(*) AS n FROM \"{layer}\" WHERE geometry IS NULL OR ST_IsEmpty(geometry)=1"
    );
    let out = stdout(&run(
        "ogrinfo",
        &["-ro", "-q", "-dialect", "SQLite", "-sql", &q, p],
    ));
    assert!(
        out.contains("n (Integer) = 0"),
        "{p}: null or empty geometries: {out}"
    );
    Some(extent(&text))
}

/// The `Extent: (w, s) - (e, n)` line of `ogrinfo -so` output, as (west, south, east, north).
pub fn extent(ogrinfo_output: &str) -> (f64, f64, f64, f64) {
    let ext = ogrinfo_output
        .lines()
        .find_map(|l| l.strip_prefix("Extent: "))
        .expect("an extent");
    let nums: Vec<f64> = ext
        .split(|c: char| !(c.is_ascii_digit() || c == '.' || c == '-'))
        .filter(|s| !s.is_empty() && *s != "-")
        .map(|s| s.parse().unwrap())
        .collect();
    assert_eq!(nums.len(), 4, "extent {ext}");
    (nums[0], nums[1], nums[2], nums[3])
}
