//! Finding and running the external reference tools (GDAL, PROJ, libxml2) in end-to-end tests.
//!
//! Copy this file into another crate's `tests/support/mod.rs` and `mod support;` it. A missing
//! tool fails the test when the environment variable `CI` is `true` (CI installs them, see
//! `.ci/run`); elsewhere the test prints a loud `SKIPPED: <tool> not installed` to stderr and
//! returns, so a developer without GDAL can still run the rest.

#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};

/// The path of `tool` on `PATH`, if it is an executable file there.
pub fn find_tool(tool: &str) -> Option<PathBuf> {
    let path = std::env::var_os("PATH")?;
    std::env::split_paths(&path)
        .map(|d| d.join(tool))
        .find(|p| is_executable(p))
}

fn is_executable(p: &Path) -> bool {
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        p.metadata()
            .map(|m| m.is_file() && m.permissions().mode() & 0o111 != 0)
            .unwrap_or(false)
    }
    #[cfg(not(unix))]
    {
        p.is_file()
    }
}

/// True when every tool is installed. Otherwise: panics under `CI=true`, or prints
/// `SKIPPED: <tool> not installed (<test>)` to stderr and returns false.
pub fn have_tools(test: &str, tools: &[&str]) -> bool {
    for tool in tools {
        if find_tool(tool).is_none() {
            if std::env::var("CI").is_ok_and(|v| v == "true") {
                panic!("{tool} is required under CI=true but is not installed (test {test})");
            }
            eprintln!("\n**********\nSKIPPED: {tool} not installed ({test})\n**********\n");
            return false;
        }
    }
    true
}

/// The output of one tool run.
pub struct Run {
    /// Exit code (-1 when killed by a signal).
    pub code: i32,
    /// Standard output.
    pub stdout: String,
    /// Standard error.
    pub stderr: String,
}

/// Runs `tool args...` with `stdin` fed in, and returns its output. Panics when it cannot start.
pub fn run(tool: &str, args: &[&str], stdin: Option<&str>) -> Run {
    use std::io::Write;
    let mut child = Command::new(tool)
        .args(args)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap_or_else(|e| panic!("cannot start {tool}: {e}"));
    if let Some(mut input) = child.stdin.take()
        && let Some(s) = stdin
    {
        input.write_all(s.as_bytes()).expect("write stdin");
    }
    let out = child.wait_with_output().expect("wait for tool");
    Run {
        code: out.status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
    }
}

/// Parses every number in `s` (as printed by ogrinfo, cs2cs and friends), refusing NaN/inf.
pub fn numbers(s: &str) -> Vec<f64> {
    s.split(|c: char| !(c.is_ascii_digit() || c == '.' || c == '-' || c == 'e' || c == '+'))
        .filter(|t| !t.is_empty() && t.chars().any(|c| c.is_ascii_digit()))
        .filter_map(|t| t.parse::<f64>().ok())
        .filter(|v| v.is_finite())
        .collect()
}

/// Converts projected points (easting, northing) of `epsg` to (lon, lat) with PROJ's cs2cs.
/// Note: EPSG:4326 output is latitude then longitude; this returns lon, lat.
pub fn cs2cs_to_lon_lat(epsg: u32, points: &[(f64, f64)]) -> Vec<(f64, f64)> {
    let input: String = points.iter().map(|(x, y)| format!("{x} {y}\n")).collect();
    let src = format!("EPSG:{epsg}");
    let r = run("cs2cs", &["-f", "%.9f", &src, "EPSG:4326"], Some(&input));
    assert_eq!(r.code, 0, "cs2cs failed: {}", r.stderr);
    let out: Vec<(f64, f64)> = r
        .stdout
        .lines()
        .map(|l| {
            let v: Vec<f64> = l
                .split_whitespace()
                .take(2)
                .map(|t| t.parse().expect("cs2cs number"))
                .collect();
            assert!(
                v.len() == 2 && v.iter().all(|x| x.is_finite()),
                "cs2cs printed {l:?}"
            );
            (v[1], v[0])
        })
        .collect();
    assert_eq!(
        out.len(),
        points.len(),
        "cs2cs returned {} lines",
        out.len()
    );
    out
}

/// The `ogrinfo` checks of docs/references.md §8.7 for a GeoJSON file: it parses with unclosed
/// rings refused and prints no `ERROR`, has no `crs` member, and every polygon is valid and
/// counter-clockwise (SQLite dialect, SpatiaLite's ST_IsValid / ST_IsPolygonCCW). Returns (layer
/// name, feature count, extent [xmin, ymin, xmax, ymax]).
pub fn ogr_check_geojson(path: &Path) -> (String, usize, [f64; 4]) {
    let p = path.to_str().expect("utf-8 path");
    let r = run(
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
        None,
    );
    let all = format!("{}\n{}", r.stdout, r.stderr);
    assert_eq!(r.code, 0, "ogrinfo failed on {p}: {all}");
    assert!(
        !all.lines().any(|l| l.starts_with("ERROR")),
        "ogrinfo reported an error on {p}: {all}"
    );
    let text = std::fs::read_to_string(path).expect("read geojson");
    assert!(
        !text.contains("\"crs\""),
        "{p} has a crs member (not RFC 7946)"
    );
    let layer = all
        .lines()
        .find_map(|l| l.strip_prefix("Layer name: "))
        .expect("layer name")
        .trim()
        .to_owned();
    let count: usize = all
        .lines()
        .find_map(|l| l.strip_prefix("Feature Count: "))
        .expect("feature count")
        .trim()
        .parse()
        .expect("count");
    let ext = numbers(
        all.lines()
            .find_map(|l| l.strip_prefix("Extent: "))
            .expect("extent"),
    );
    assert_eq!(ext.len(), 4, "extent line");
    let sql = format!(
        "SELECT COUNT(*) AS bad FROM \"{layer}\" WHERE ST_GeometryType(geometry) LIKE '%POLYGON' AND (ST_IsValid(geometry)=0 OR ST_IsPolygonCCW(geometry)=0)"
    );
    let r = run(
        "ogrinfo",
        &["-ro", "-q", "-dialect", "SQLite", "-sql", &sql, p],
        None,
    );
    assert!(
        r.stdout.contains("bad (Integer) = 0"),
        "invalid or clockwise polygons in {p}: {}{}",
        r.stdout,
        r.stderr
    );
    let sql = format!(
        "SELECT COUNT(*) AS n FROM \"{layer}\" WHERE geometry IS NULL OR ST_IsEmpty(geometry)=1"
    );
    let r = run(
        "ogrinfo",
        &["-ro", "-q", "-dialect", "SQLite", "-sql", &sql, p],
        None,
    );
    assert!(
        r.stdout.contains("n (Integer) = 0"),
        "null or empty geometries in {p}: {}",
        r.stdout
    );
    (layer, count, [ext[0], ext[1], ext[2], ext[3]])
}
