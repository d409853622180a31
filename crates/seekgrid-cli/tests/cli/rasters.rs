//! The Float32 GeoTIFF rasters read by GDAL: CRS, type, no-data, size, geotransform,
//! overviews, metadata, and the value at the densest cell against `probability.geojson`.

use crate::end_to_end::{seekgrid, workspace};
use crate::external::{have, run, stdout};
use serde_json::Value;
use std::path::Path;

fn json(path: &Path) -> Value {
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

#[test]
fn rasters_are_float32_geotiffs_of_the_grid_that_gdal_reads_back() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("map");
    let incident = workspace().join("scenarios/marine/incident.toml");
    let o = seekgrid(&[
        "map",
        incident.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--outputs",
        "rasters,probability,summary",
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let summary = json(&out.join("summary.json"));
    let g = &summary["grid"];
    let (rows, cols) = (g["rows"].as_u64().unwrap(), g["cols"].as_u64().unwrap());
    let cell = g["cell_m"].as_f64().unwrap();
    let (west, north) = (
        g["west_m"].as_f64().unwrap(),
        g["north_m"].as_f64().unwrap(),
    );
    let epsg: u64 = g["crs"].as_str().unwrap()["EPSG:".len()..].parse().unwrap();
    // The marine demo has searches, so all three rasters are written.
    for name in ["poc.tif", "density.tif", "pod.tif"] {
        assert!(out.join(name).is_file(), "{name} missing");
        assert!(summary["outputs"][name]["layer"] == "rasters", "{name}");
    }
    if !have("gdalinfo") || !have("gdallocationinfo") {
        return;
    }
    for name in ["poc.tif", "density.tif", "pod.tif"] {
        let path = out.join(name);
        let o = run("gdalinfo", &["-json", path.to_str().unwrap()]);
        assert!(
            o.status.success(),
            "{name}: {}",
            String::from_utf8_lossy(&o.stderr)
        );
        let v: Value = serde_json::from_slice(&o.stdout).unwrap();
        assert_eq!(v["stac"]["proj:epsg"], epsg, "{name}");
        assert_eq!(v["size"], serde_json::json!([cols, rows]), "{name}");
        let gt: Vec<f64> = v["geoTransform"]
            .as_array()
            .unwrap()
            .iter()
            .map(|x| x.as_f64().unwrap())
            .collect();
        assert_eq!(gt, [west, cell, 0.0, north, 0.0, -cell], "{name}");
        let band = &v["bands"][0];
        assert_eq!(band["type"], "Float32", "{name}");
        assert_eq!(band["noDataValue"], -9999.0, "{name}");
        // 182 x 115 cells halved down to at most 64 pixels: 91 x 58 and 46 x 29.
        assert_eq!(
            band["overviews"],
            serde_json::json!([{ "size": [91, 58] }, { "size": [46, 29] }]),
            "{name}"
        );
        assert_eq!(v["metadata"][""]["run_id"], summary["run_id"], "{name}");
        let p: Value =
            serde_json::from_str(v["metadata"][""]["provenance"].as_str().unwrap()).unwrap();
        assert_eq!(p, summary["provenance"], "{name}");
    }
    // The densest cell of probability.geojson, read back at its centre.
    let prob = json(&out.join("probability.geojson"));
    let densest = prob["features"]
        .as_array()
        .unwrap()
        .iter()
        .max_by(|a, b| {
            let d = |f: &Value| f["properties"]["density_km2"].as_f64().unwrap();
            d(a).total_cmp(&d(b))
        })
        .unwrap();
    let (r, c) = (
        densest["properties"]["row"].as_u64().unwrap() as f64,
        densest["properties"]["col"].as_u64().unwrap() as f64,
    );
    let (x, y) = (west + (c + 0.5) * cell, north - (r + 0.5) * cell);
    for (name, key) in [("poc.tif", "poc"), ("density.tif", "density_km2")] {
        let o = run(
            "gdallocationinfo",
            &[
                "-valonly",
                "-geoloc",
                out.join(name).to_str().unwrap(),
                &x.to_string(),
                &y.to_string(),
            ],
        );
        let got: f64 = stdout(&o).trim().parse().unwrap();
        let want = densest["properties"][key].as_f64().unwrap();
        // Float32 keeps 24 bits: a relative difference below 1e-7.
        assert!(
            ((got - want) / want).abs() < 1e-6,
            "{name} at ({x}, {y}): {got} vs {want}"
        );
    }
}

#[test]
fn the_plan_writes_the_optimal_coverage_as_a_float32_geotiff() {
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
        "--outputs",
        "effort,summary",
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let summary = json(&out.join("summary.json"));
    assert_eq!(summary["outputs"]["effort.tif"]["layer"], "effort");
    if !have("gdalinfo") {
        return;
    }
    let o = run(
        "gdalinfo",
        &["-json", "-stats", out.join("effort.tif").to_str().unwrap()],
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let v: Value = serde_json::from_slice(&o.stdout).unwrap();
    let g = &summary["grid"];
    assert_eq!(v["size"], serde_json::json!([g["cols"], g["rows"]]));
    assert_eq!(v["bands"][0]["type"], "Float32");
    // The bound spends effort somewhere: the coverage's maximum is positive.
    assert!(v["bands"][0]["maximum"].as_f64().unwrap() > 0.0, "{v}");
}

#[test]
fn the_data_png_covers_exactly_the_grid_and_is_transparent_where_the_probability_is_zero() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("map");
    let incident = workspace().join("scenarios/land/incident.toml");
    let o = seekgrid(&[
        "map",
        incident.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--outputs",
        "heatmap-data,summary",
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let summary = json(&out.join("summary.json"));
    let g = &summary["grid"];
    for sidecar in [
        "heatmap-data.pgw",
        "heatmap-data.png.aux.xml",
        "heatmap-data.prj",
    ] {
        assert_eq!(
            summary["outputs"][sidecar]["sidecar_of"],
            "heatmap-data.png"
        );
    }
    if !have("gdalinfo") || !have("gdallocationinfo") {
        return;
    }
    let png = out.join("heatmap-data.png");
    let o = run("gdalinfo", &["-json", png.to_str().unwrap()]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let v: Value = serde_json::from_slice(&o.stdout).unwrap();
    // The picture's corners are the grid's corners: one pixel per cell.
    let corners = &v["cornerCoordinates"];
    assert_eq!(
        corners["upperLeft"],
        serde_json::json!([g["west_m"], g["north_m"]])
    );
    assert_eq!(
        corners["lowerRight"],
        serde_json::json!([g["east_m"], g["south_m"]])
    );
    assert_eq!(v["size"], serde_json::json!([g["cols"], g["rows"]]));
    assert_eq!(
        v["stac"]["proj:epsg"],
        g["crs"].as_str().unwrap()[5..].parse::<u64>().unwrap()
    );
    assert_eq!(v["bands"][3]["colorInterpretation"], "Alpha");
    // The north-west corner pixel of the land demo lies outside every scenario: alpha 0.
    let o = run(
        "gdallocationinfo",
        &["-valonly", "-b", "4", png.to_str().unwrap(), "0", "0"],
    );
    assert_eq!(stdout(&o).trim(), "0");
}
