//! Writes a sample heatmap, probability and containment layers of an invented incident into the
//! folder given as the first argument: `cargo run -p seekgrid-render --example sample_map -- out/`.

use geo::{Coord, LineString, Polygon};
use ndarray::Array2;
use seekgrid_core::{DEFAULT_MAX_CELLS, Frame, GridSpec, UtmZone};
use seekgrid_render::{
    CellLayer, ColourScale, MapStyle, OutputDir, OutputOptions, Overlay, containment_geojson,
    heatmap_png, probability_geojson, write_png_set,
};

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let out = std::env::args()
        .nth(1)
        .unwrap_or_else(|| "sample-out".into());
    let dir = OutputDir::create(
        std::path::Path::new(&out),
        &OutputOptions {
            run_id: "sample-map",
            force: true,
            inputs: &[],
        },
    )?;
    // Invented: a datum in the open mid-Atlantic, zone 26N.
    let frame = Frame::new(UtmZone::from_epsg(32626)?);
    let datum = frame.to_xy(-28.4, 31.2);
    let (rows, cols, cell_m) = (160usize, 220usize, 250.0);
    let west = (datum.x / cell_m).floor() * cell_m - cols as f64 * cell_m / 2.0;
    let north = (datum.y / cell_m).floor() * cell_m + rows as f64 * cell_m / 2.0;
    let grid = GridSpec::new(west, north, cell_m, rows, cols, DEFAULT_MAX_CELLS)?;
    let mut poc = Array2::from_shape_fn((rows, cols), |(r, c)| {
        let p = grid.cell_center(r, c);
        let (dx, dy) = (p.x - datum.x, p.y - datum.y);
        let a = (-(dx * dx + dy * dy) / (2.0 * 4000.0f64.powi(2))).exp();
        let (ex, ey) = (dx - 9000.0, dy + 5000.0);
        let b = 0.6 * (-(ex * ex / 3000.0f64.powi(2) + ey * ey / 7000.0f64.powi(2)) / 2.0).exp();
        let v = a + b;
        if v < 1e-3 { 0.0 } else { v }
    });
    let total: f64 = poc.iter().sum();
    poc.mapv_inplace(|v| v / total * 0.93);
    let ring = |cx: f64, cy: f64, r: f64| -> LineString<f64> {
        (0..=48)
            .map(|i| {
                let a = f64::from(i) / 48.0 * std::f64::consts::TAU;
                Coord {
                    x: cx + r * a.cos() * (1.0 + 0.25 * (3.0 * a).sin()),
                    y: cy + r * a.sin(),
                }
            })
            .collect()
    };
    let island = Polygon::new(ring(datum.x - 14_000.0, datum.y + 9_000.0, 3_000.0), vec![]);
    let area = Polygon::new(
        LineString::from(vec![
            (datum.x - 6000.0, datum.y - 6000.0),
            (datum.x + 6000.0, datum.y - 6000.0),
            (datum.x + 6000.0, datum.y + 6000.0),
            (datum.x - 6000.0, datum.y + 6000.0),
        ]),
        vec![],
    );
    let overlays = vec![
        Overlay::filled_polygon(island, [236, 226, 198, 255], [90, 70, 40], 2)
            .with_legend("land (invented)"),
        Overlay::polygon(area, [200, 30, 30], 3)
            .with_label("A1")
            .with_legend("search area"),
        Overlay::points(vec![datum], [230, 60, 20], 10)
            .with_label("datum")
            .with_legend("datum"),
    ];
    let style = MapStyle {
        title: "Probability of containment",
        subtitle: "valid 2026-06-14 18:00 UTC - INVENTED DEMO DATA",
        caution: "Decision support only: output is only as good as its inputs; the search mission coordinator decides.",
        legend_label: "probability per km\u{b2}",
        scale: ColourScale::Density,
    };
    let png = heatmap_png(&frame, &grid, &poc, &style, &overlays)?;
    write_png_set(&dir, "heatmap", &png)?;
    let layer = CellLayer {
        frame: &frame,
        grid: &grid,
        poc: &poc,
        pod_cumulative: None,
    };
    let ex = probability_geojson(&layer, 0.999, 1_000_000, "probability", Default::default())?;
    dir.write("probability.geojson", &ex.geojson)?;
    let c = containment_geojson(
        &frame,
        &grid,
        &poc,
        &[0.5, 0.9, 0.95],
        "containment",
        Default::default(),
    )?;
    dir.write("containment.geojson", &c)?;
    let written = dir.commit()?;
    println!("wrote {} ({} cells)", written.display(), ex.cells_written);
    Ok(())
}
