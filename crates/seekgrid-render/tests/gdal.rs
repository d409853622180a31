//! End-to-end checks of the files this crate writes, by the external reference tools of
//! docs/references.md §8.7 (GDAL 3.6 ogrinfo/gdalinfo/gdalsrsinfo, PROJ 9.1 cs2cs/projinfo).
//! GDAL's readers are lenient, so each check looks past the exit code (same section).

mod support;

use ndarray::Array2;
use seekgrid_core::{DEFAULT_MAX_CELLS, Frame, GridSpec, UtmZone};
use seekgrid_render::{
    CellLayer, ColourScale, MapStyle, OutputDir, OutputOptions, Overlay, containment_geojson,
    heatmap_png, probability_geojson, utm_wkt1_esri, write_png_set,
};
use support::{cs2cs_to_lon_lat, have_tools, ogr_check_geojson, run};

/// Files are checked in the staging folder, before any commit.
const OPTIONS: OutputOptions<'static> = OutputOptions {
    run_id: "gdal-test",
    force: false,
    inputs: &[],
};

fn frame(epsg: u32) -> Frame {
    Frame::new(UtmZone::from_epsg(epsg).unwrap())
}

/// The lon/lat bounding box of every cell corner on the grid's outline, computed by cs2cs
/// (independent of seekgrid's own projection code).
fn cs2cs_outline_bbox(epsg: u32, grid: &GridSpec) -> [f64; 4] {
    let (rows, cols, s) = (grid.rows(), grid.cols(), grid.cell_m());
    let (w, n) = (grid.west_m(), grid.north_m());
    let mut pts = Vec::new();
    for c in 0..=cols {
        pts.push((w + c as f64 * s, n));
        pts.push((w + c as f64 * s, n - rows as f64 * s));
    }
    for r in 0..=rows {
        pts.push((w, n - r as f64 * s));
        pts.push((w + cols as f64 * s, n - r as f64 * s));
    }
    let ll = cs2cs_to_lon_lat(epsg, &pts);
    let mut b = [f64::MAX, f64::MAX, f64::MIN, f64::MIN];
    for (lon, lat) in ll {
        b[0] = b[0].min(lon);
        b[1] = b[1].min(lat);
        b[2] = b[2].max(lon);
        b[3] = b[3].max(lat);
    }
    b
}

fn assert_extent(got: [f64; 4], want: [f64; 4], what: &str) {
    // ogrinfo prints 6 decimals and we round to 6: allow 1.5e-6 degree.
    for i in 0..4 {
        assert!(
            (got[i] - want[i]).abs() <= 1.5e-6,
            "{what}: extent {got:?}, cs2cs says {want:?}"
        );
    }
}

/// A small deterministic pseudo-random generator for test data (64-bit LCG, Knuth MMIX
/// constants), so the test data does not depend on a crate version.
fn lcg(seed: &mut u64) -> f64 {
    *seed = seed
        .wrapping_mul(6_364_136_223_846_793_005)
        .wrapping_add(1_442_695_040_888_963_407);
    (*seed >> 11) as f64 / (1u64 << 53) as f64
}

#[test]
fn probability_geojson_is_valid_ccw_and_matches_the_cs2cs_extent() {
    if !have_tools("probability_geojson", &["ogrinfo", "cs2cs"]) {
        return;
    }
    let tmp = tempfile::tempdir().unwrap();
    let dir = OutputDir::create(&tmp.path().join("out"), &OPTIONS).unwrap();
    // Northern (zone 20N, off Nova Scotia) and southern (zone 56S, off Sydney) grids, each with
    // every cell holding mass so that the extent is the whole grid.
    for (epsg, west, north) in [
        (32620, 480_000.0, 4_900_000.0),
        (32756, 340_000.0, 6_260_000.0),
    ] {
        let f = frame(epsg);
        let grid = GridSpec::new(west, north, 250.0, 24, 31, DEFAULT_MAX_CELLS).unwrap();
        let poc = Array2::from_shape_fn((24, 31), |(r, c)| (1 + (r * 31 + c) % 5) as f64 / 2232.0);
        let pod = Array2::from_shape_fn((24, 31), |(r, _)| r as f64 / 24.0);
        let layer = CellLayer {
            frame: &f,
            grid: &grid,
            poc: &poc,
            pod_cumulative: Some(&pod),
        };
        let ex =
            probability_geojson(&layer, 0.999, 100_000, "probability", Default::default()).unwrap();
        let path = dir
            .write(&format!("probability-{epsg}.geojson"), &ex.geojson)
            .unwrap();
        let (layer_name, count, extent) = ogr_check_geojson(&path);
        assert_eq!(layer_name, "probability");
        assert_eq!(count, 24 * 31);
        assert_extent(extent, cs2cs_outline_bbox(epsg, &grid), "probability");
    }
}

#[test]
fn containment_polygons_with_holes_and_pinches_are_valid_in_gdal() {
    if !have_tools("containment_geojson", &["ogrinfo", "cs2cs"]) {
        return;
    }
    let tmp = tempfile::tempdir().unwrap();
    let dir = OutputDir::create(&tmp.path().join("out"), &OPTIONS).unwrap();
    let f = frame(32626);
    let (rows, cols) = (60, 70);
    let grid = GridSpec::new(400_000.0, 3_500_000.0, 200.0, rows, cols, DEFAULT_MAX_CELLS).unwrap();
    // An annulus (holes in the regions), a checkerboard patch (diagonal pinches everywhere) and
    // noise (many small components, islands in holes).
    let mut seed = 20_260_614u64;
    let values = Array2::from_shape_fn((rows, cols), |(r, c)| {
        let (dr, dc) = (r as f64 - 30.0, c as f64 - 25.0);
        let ring = ((dr * dr + dc * dc).sqrt() - 14.0).abs();
        let annulus = (-ring * ring / 6.0).exp();
        let checker = if r >= 40 && c >= 50 && (r + c) % 2 == 0 {
            0.8
        } else {
            0.0
        };
        let noise = 0.6 * lcg(&mut seed).powi(6);
        annulus + checker + noise
    });
    let levels = [0.5, 0.9, 0.95];
    let bytes = containment_geojson(
        &f,
        &grid,
        &values,
        &levels,
        "containment",
        Default::default(),
    )
    .unwrap();
    let path = dir.write("containment.geojson", &bytes).unwrap();
    let (layer, count, extent) = ogr_check_geojson(&path);
    assert_eq!((layer.as_str(), count), ("containment", 3));
    // The regions lie inside the grid's outline.
    let outline = cs2cs_outline_bbox(32626, &grid);
    assert!(extent[0] >= outline[0] - 1e-6 && extent[2] <= outline[2] + 1e-6);
    assert!(extent[1] >= outline[1] - 1e-6 && extent[3] <= outline[3] + 1e-6);
    // GDAL's own area of the 95 % region, in square metres of the UTM zone, equals the cells.
    let j: serde_json::Value = serde_json::from_slice(&bytes).unwrap();
    let cells = j["features"][2]["properties"]["cells"].as_f64().unwrap();
    let sql = "SELECT ST_Area(ST_Transform(SetSRID(geometry, 4326), 32626)) AS a FROM containment WHERE level = 0.95";
    let r = run(
        "ogrinfo",
        &[
            "-ro",
            "-q",
            "-dialect",
            "SQLite",
            "-sql",
            sql,
            path.to_str().unwrap(),
        ],
        None,
    );
    let line = r.stdout.lines().find(|l| l.contains("a (Real)"));
    let a = *support::numbers(
        line.unwrap_or_else(|| panic!("no area from ogrinfo: {}{}", r.stdout, r.stderr)),
    )
    .last()
    .expect("area value");
    // Straight lon/lat edges between projected corners and 6-decimal rounding: within 1e-5.
    let want = cells * 200.0 * 200.0;
    assert!(
        (a - want).abs() < 1e-5 * want,
        "GDAL area {a} m², cells give {want} m²"
    );
}

#[test]
fn containment_of_random_grids_is_always_valid_in_gdal() {
    if !have_tools("containment_random", &["ogrinfo"]) {
        return;
    }
    let tmp = tempfile::tempdir().unwrap();
    let dir = OutputDir::create(&tmp.path().join("out"), &OPTIONS).unwrap();
    let f = frame(32620);
    let mut seed = 7u64;
    for case in 0..6 {
        let (rows, cols) = (8 + case * 5, 9 + case * 4);
        let grid =
            GridSpec::new(500_000.0, 4_800_000.0, 100.0, rows, cols, DEFAULT_MAX_CELLS).unwrap();
        let values = Array2::from_shape_fn((rows, cols), |_| {
            let u = lcg(&mut seed);
            if u < 0.3 { 0.0 } else { u }
        });
        let bytes = containment_geojson(
            &f,
            &grid,
            &values,
            &[0.3, 0.6, 0.9],
            "containment",
            Default::default(),
        )
        .unwrap();
        let path = dir
            .write(&format!("containment-{case}.geojson"), &bytes)
            .unwrap();
        let (_, count, _) = ogr_check_geojson(&path);
        assert_eq!(count, 3);
    }
}

#[test]
fn heatmap_png_is_north_up_with_the_cell_pixel_size_and_epsg() {
    if !have_tools("heatmap_png", &["gdalinfo", "gdalsrsinfo"]) {
        return;
    }
    let tmp = tempfile::tempdir().unwrap();
    let dir = OutputDir::create(&tmp.path().join("out"), &OPTIONS).unwrap();
    for (epsg, west, north, rows, cols) in [
        (32620, 480_000.0, 4_900_000.0, 40, 55),
        (32733, 200_000.0, 8_000_000.0, 3, 2),
    ] {
        let f = frame(epsg);
        let grid = GridSpec::new(west, north, 250.0, rows, cols, DEFAULT_MAX_CELLS).unwrap();
        let v = Array2::from_shape_fn((rows, cols), |(r, c)| ((r + 2 * c) % 9) as f64 / 1e4);
        let style = MapStyle {
            title: "Probability of containment",
            subtitle: "test",
            caution: "Decision support only",
            legend_label: "probability per km\u{b2}",
            scale: ColourScale::Density,
        };
        let track = geo::LineString::from(vec![(west, north), (west + 5000.0, north - 5000.0)]);
        let png = heatmap_png(
            &f,
            &grid,
            &v,
            &style,
            &[Overlay::line(track, [200, 0, 0], 3)],
        )
        .unwrap();
        let stem = format!("heatmap-{epsg}");
        write_png_set(&dir, &stem, &png).unwrap();
        let p = dir.path().join(format!("{stem}.png"));
        let p = p.to_str().unwrap();

        let r = run("gdalsrsinfo", &["-e", "-o", "epsg", p], None);
        let got: String = r.stdout.split_whitespace().collect();
        assert_eq!(
            got,
            format!("EPSG:{epsg}"),
            "gdalsrsinfo: {}{}",
            r.stdout,
            r.stderr
        );

        let r = run("gdalinfo", &["-json", p], None);
        assert_eq!(r.code, 0, "{}", r.stderr);
        let info: serde_json::Value = serde_json::from_str(&r.stdout).unwrap();
        let gt: Vec<f64> = info["geoTransform"]
            .as_array()
            .expect("geoTransform")
            .iter()
            .map(|x| x.as_f64().unwrap())
            .collect();
        let k = f64::from(png.pixels_per_cell);
        let px = 250.0 / k;
        assert_eq!((gt[2], gt[4]), (0.0, 0.0), "north up");
        assert!(
            (gt[1] - px).abs() < 1e-9 && (gt[5] + px).abs() < 1e-9,
            "pixel size {gt:?}, want {px}"
        );
        // The picture's corner lies map_origin_px pixels west and north of the grid's corner.
        let (mx, my) = png.map_origin_px;
        let want_x0 = west - f64::from(mx) * px;
        let want_y0 = north + f64::from(my) * px;
        assert!(
            (gt[0] - want_x0).abs() < 1e-6 && (gt[3] - want_y0).abs() < 1e-6,
            "origin {gt:?}, want {want_x0} {want_y0}"
        );
        // The grid's north-west corner falls on a pixel boundary of the picture.
        let col = (west - gt[0]) / gt[1];
        let row = (north - gt[3]) / gt[5];
        assert!((col - col.round()).abs() < 1e-9 && (row - row.round()).abs() < 1e-9);
        assert_eq!(info["bands"].as_array().unwrap().len(), 4);
    }
}

#[test]
fn prj_text_matches_projinfo_for_several_zones() {
    if !have_tools("utm_wkt1_esri", &["projinfo"]) {
        return;
    }
    for epsg in [
        32601, 32619, 32620, 32630, 32631, 32660, 32701, 32720, 32733, 32760,
    ] {
        let r = run(
            "projinfo",
            &[&format!("EPSG:{epsg}"), "-o", "WKT1_ESRI", "-q"],
            None,
        );
        assert_eq!(r.code, 0, "{}", r.stderr);
        assert_eq!(utm_wkt1_esri(epsg).unwrap(), r.stdout.trim(), "EPSG:{epsg}");
    }
}
