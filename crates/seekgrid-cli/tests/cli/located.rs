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
    // The file parses, but the engine's sizing (run by check and map before anything is
    // computed) refuses it at the input that drives the size: `cell_m = 1` is line 5, its
    // value starts at column 10.
    for command in ["check", "map"] {
        let out = dir.path().join(format!("out-{command}"));
        let args: Vec<&str> = if command == "check" {
            vec![command, f.to_str().unwrap()]
        } else {
            vec![command, f.to_str().unwrap(), "--out", out.to_str().unwrap()]
        };
        let o = seekgrid(&args);
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{command}: {err}");
        assert!(
            err.contains("incident.toml:5:10: grid.cell_m"),
            "{command}: {err}"
        );
        assert!(!out.exists(), "{command}");
    }
}
