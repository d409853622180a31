//! Errors raised past the loader, in the engine, still print as `FILE:LINE:COL: message`.

use crate::end_to_end::seekgrid;

/// A drift whose wind series covers the default map time but not a later `--at`: the file is
/// valid, the map at that time is refused by the engine. Invented.
const WIND_ENDS: &str = r#"[incident]
title = "Wind series ends (invented)"
reference_time = "2026-06-14T18:00:00Z"
[grid]
cell_m = 250
[[analyst]]
id = "a"
[[scenario]]
id = "adrift"
analyst = "a"
kind = "drift"
position = [-30.0, 20.0]
position_sigma_m = 500
adrift = { earliest = "2026-06-14T17:00:00Z", latest = "2026-06-14T17:00:00Z" }
current = { speed_kn = 0.5, toward_deg = 90 }
wind = { series = "wind.csv" }
leeway = { downwind_slope = 0.03 }
particles = 200
"#;

const WIND_CSV: &str =
    "time,speed_kn,direction_deg\n2026-06-14T16:00:00Z,10,270\n2026-06-14T20:00:00Z,12,260\n";

#[test]
fn an_engine_error_prints_with_the_line_and_column_of_its_item() {
    let dir = tempfile::tempdir().unwrap();
    let f = dir.path().join("incident.toml");
    std::fs::write(&f, WIND_ENDS).unwrap();
    std::fs::write(dir.path().join("wind.csv"), WIND_CSV).unwrap();
    // The file itself is valid: the wind covers the drift to the reference time.
    let o = seekgrid(&["check", f.to_str().unwrap()]);
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let out = dir.path().join("out");
    let map_late = || {
        seekgrid(&[
            "map",
            f.to_str().unwrap(),
            "--out",
            out.to_str().unwrap(),
            "--at",
            "2026-06-15T06:00:00Z",
        ])
    };
    let o = map_late();
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    // The scenario's table starts on line 8.
    assert!(err.contains("incident.toml:8:"), "{err}");
    assert!(err.contains("hold_environment_beyond_series"), "{err}");
    assert!(!out.exists());
    // Said in the file, the wind is held at its last value and the map is made.
    let held = WIND_ENDS.replace(
        "particles = 200",
        "particles = 200\nhold_environment_beyond_series = true",
    );
    std::fs::write(&f, held).unwrap();
    let o = map_late();
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
}
