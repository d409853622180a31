//! GIS files and pictures for seekgrid.
//!
//! This crate turns core values ([`Frame`](seekgrid_core::Frame),
//! [`GridSpec`](seekgrid_core::GridSpec) and `ndarray::Array2<f64>` layers) into bytes and writes
//! them atomically. It knows nothing of incident files, scenarios or search theory.
//!
//! * [`OutputDir`]: an output folder written as one unit: staged beside its destination under a
//!   lock, put in place whole by one atomic swap, never holding the run's inputs.
//! * [`probability_geojson`]: cells as RFC 7946 polygons with `poc`, `density_km2`, `row`,
//!   `col`, the run-independent [`cell_id`] and `pod_cumulative`, limited to the top share of the mass for big grids.
//! * [`containment_geojson`]: the smallest regions holding 50 %, 90 %, 95 % of the mass,
//!   traced from the raster as valid polygons with holes.
//! * [`heatmap_png`] and [`write_png_set`]: a briefing picture with legend, scale bar, north
//!   arrow, title and caution line, with world file, `.aux.xml` and `.prj` so GIS viewers place it.
//! * [`review::write`]: an incident review as `review.json`, `review.md` and GeoJSON layers.
//! * [`geojson_bytes`], [`polygon_to_geojson`], [`line_to_geojson`], [`point_to_geojson`]: the
//!   shared GeoJSON writer and working-frame-to-lon/lat helpers for other layers.
//! * [`geotiff::float_geotiff`]: a Float32 GeoTIFF of a cell array, with GeoKeys, no-data,
//!   metadata and overviews.
//! * [`layers`]: the registry of a run's output layers ([`layers::Layer`]: `--outputs` name,
//!   files, description, one writer each), which writes a computed map or plan and lists every
//!   file written in the summary ([`summary`]); the writers live in [`outputs`] (the map's
//!   layers) and [`plan_outputs`] (the plan's).
//!
//! ```
//! use ndarray::Array2;
//! use seekgrid_core::{Frame, GridSpec, UtmZone, DEFAULT_MAX_CELLS};
//! use seekgrid_render::{probability_geojson, heatmap_png, CellLayer, ColourScale, MapStyle};
//!
//! let frame = Frame::new(UtmZone::from_epsg(32626).unwrap());
//! let grid = GridSpec::new(400_000.0, 3_300_000.0, 500.0, 20, 30, DEFAULT_MAX_CELLS).unwrap();
//! let poc = Array2::from_shape_fn((20, 30), |(r, c)| ((r * 30 + c) % 7) as f64 / 1800.0);
//! let layer = CellLayer { frame: &frame, grid: &grid, poc: &poc, pod_cumulative: None };
//! let export = probability_geojson(&layer, 0.999, 100_000, "probability", Default::default()).unwrap();
//! assert_eq!(export.cells_written, 600 - 600 / 7 - 1);
//!
//! let style = MapStyle {
//!     title: "Probability of containment",
//!     subtitle: "invented example",
//!     caution: "Decision support only",
//!     legend_label: "probability per km²",
//!     scale: ColourScale::Density,
//! };
//! let picture = heatmap_png(&frame, &grid, &poc, &style, &[]).unwrap();
//! assert_eq!(picture.world_file.lines().count(), 6);
//! assert!(picture.aux_xml.contains("EPSG:32626"));
//! ```

#![deny(missing_docs)]

mod canvas;
pub mod charts;
mod containment;
pub mod credibility;
pub mod error;
pub mod georef;
pub mod geotiff;
pub mod gpx;
mod heatmap;
pub mod kml;
pub mod layers;
pub mod output;
pub mod outputs;
pub mod plan_outputs;
pub mod position;
mod probability;
pub mod provenance;
pub mod record;
pub mod review;
pub mod summary;
pub mod tasking;
pub mod vector;

pub use containment::containment_geojson;
pub use error::RenderError;
pub use georef::{PixelGeometry, aux_xml, frame_prj, utm_wkt1_esri};
pub use heatmap::{
    ColourScale, GeoreferencedPng, MapStyle, Overlay, Rgb, data_png, heatmap_png, pixels_per_cell,
    png_set_names, write_png_set,
};
pub use output::{OutputDir, OutputOptions};
pub use probability::{CellLayer, CellLimit, ProbabilityExport, cell_id, probability_geojson};
pub use provenance::Provenance;
pub use vector::{geojson_bytes, line_to_geojson, point_to_geojson, polygon_to_geojson};
