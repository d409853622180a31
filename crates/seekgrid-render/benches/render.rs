//! Speed of the GIS writers on realistic grid sizes.
//!
//! `cargo bench -p seekgrid-render --bench render`
//!
//! * `probability_geojson/1000x1000`: a million cells with mass, hand-formatted writer, against
//!   `probability_geojson/geojson_crate_1000x1000`: the same features built as `geojson::Feature`
//!   values and serialised through [`seekgrid_render::geojson_bytes`] (the reason the writer is
//!   hand-written).
//! * `containment_geojson/2000x2000`: 4 M cells, levels 0.5, 0.9, 0.95.
//! * `heatmap_png/1000x1000`: picture with sidecars.

#![allow(missing_docs)]

use criterion::{Criterion, criterion_group, criterion_main};
use ndarray::Array2;
use seekgrid_core::{DEFAULT_MAX_CELLS, Frame, GridSpec, UtmZone};
use seekgrid_render::{
    CellLayer, ColourScale, MapStyle, containment_geojson, geojson_bytes, heatmap_png,
    polygon_to_geojson, probability_geojson,
};
use std::hint::black_box;

fn blob(rows: usize, cols: usize) -> Array2<f64> {
    let mut v = Array2::from_shape_fn((rows, cols), |(r, c)| {
        let (dr, dc) = (r as f64 / rows as f64 - 0.45, c as f64 / cols as f64 - 0.55);
        let ring = ((dr * dr + dc * dc).sqrt() - 0.2).abs();
        (-(dr * dr + 2.0 * dc * dc) / 0.02).exp() + 0.5 * (-ring * ring / 0.002).exp() + 1e-9
    });
    let s: f64 = v.iter().sum();
    v.mapv_inplace(|x| x / s);
    v
}

fn setup(rows: usize, cols: usize) -> (Frame, GridSpec) {
    let frame = Frame::new(UtmZone::from_epsg(32626).unwrap());
    let grid = GridSpec::new(300_000.0, 3_600_000.0, 100.0, rows, cols, DEFAULT_MAX_CELLS).unwrap();
    (frame, grid)
}

fn bench(c: &mut Criterion) {
    let (frame, grid) = setup(1000, 1000);
    let poc = blob(1000, 1000);
    let layer = CellLayer {
        frame: &frame,
        grid: &grid,
        poc: &poc,
        pod_cumulative: None,
    };
    let mut g = c.benchmark_group("probability_geojson");
    g.sample_size(10);
    g.bench_function("1000x1000", |b| {
        b.iter(|| {
            probability_geojson(
                black_box(&layer),
                0.999,
                2_000_000,
                "probability",
                Default::default(),
            )
            .unwrap()
        })
    });
    g.bench_function("geojson_crate_1000x1000", |b| {
        b.iter(|| {
            let mut features = Vec::with_capacity(1_000_000);
            for ((r, cc), &p) in poc.indexed_iter() {
                let poly = grid.cell_box(r, cc).to_polygon();
                let mut f = geojson::Feature::from(polygon_to_geojson(&frame, &poly));
                f.set_property("poc", p);
                f.set_property("density_km2", p / 0.01);
                f.set_property("row", r);
                f.set_property("col", cc);
                features.push(f);
            }
            geojson_bytes(geojson::FeatureCollection::new(features)).unwrap()
        })
    });
    g.finish();

    let (frame4, grid4) = setup(2000, 2000);
    let poc4 = blob(2000, 2000);
    let mut g = c.benchmark_group("containment_geojson");
    g.sample_size(10);
    g.bench_function("2000x2000", |b| {
        b.iter(|| {
            containment_geojson(
                &frame4,
                &grid4,
                black_box(&poc4),
                &[0.5, 0.9, 0.95],
                "containment",
                Default::default(),
            )
            .unwrap()
        })
    });
    g.finish();

    let style = MapStyle {
        title: "Probability of containment",
        subtitle: "benchmark",
        caution: "Decision support only",
        legend_label: "probability per km\u{b2}",
        scale: ColourScale::Density,
    };
    let mut g = c.benchmark_group("heatmap_png");
    g.sample_size(10);
    g.bench_function("1000x1000", |b| {
        b.iter(|| heatmap_png(&frame, &grid, black_box(&poc), &style, &[]).unwrap())
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
