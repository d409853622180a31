//! Errors raised past the loader, in the engine, still print as `FILE:LINE:COL: message`.

use crate::end_to_end::seekgrid;

/// A drift scenario whose starting cloud (20 km sigma) cannot be mapped on 1 m cells: the grid
/// it asks for is far over the cell limit. Invented.
const TOO_BIG: &str = r#"[incident]
title = "Grid too big (invented)"
reference_time = "2026-06-14T18:00:00Z"
[grid]
cell_m = 1
[[analyst]]
id = "a"
[[scenario]]
id = "adrift"
analyst = "a"
kind = "drift"
position = [-30.0, 20.0]
position_sigma_m = 20000
adrift = { earliest = "2026-06-14T17:00:00Z", latest = "2026-06-14T17:00:00Z" }
current = { speed_kn = 0.5, toward_deg = 90 }
wind = { speed_kn = 10, from_deg = 270 }
leeway = { downwind_slope = 0.03 }
particles = 200
"#;

#[test]
fn an_engine_error_prints_with_the_line_and_column_of_its_item() {
    let dir = tempfile::tempdir().unwrap();
    let f = dir.path().join("incident.toml");
    std::fs::write(&f, TOO_BIG).unwrap();
    // The file itself is valid.
    let o = seekgrid(&["check", f.to_str().unwrap()]);
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let out = dir.path().join("out");
    let o = seekgrid(&["map", f.to_str().unwrap(), "--out", out.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    // `cell_m = 1` is line 5; its value starts at column 10.
    assert!(err.contains("incident.toml:5:10: grid:"), "{err}");
    assert!(!out.join("summary.json").exists());
}
