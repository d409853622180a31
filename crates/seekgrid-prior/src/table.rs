//! Segment POA table of a pooled map.

use crate::model::Segment;
use crate::polygon::overlap_fractions;
use geo::Area;
use ndarray::Array2;
use seekgrid_core::{GridSpec, neumaier_sum, units::M2_PER_KM2};

/// One segment's line in the POA table.
#[derive(Debug, Clone, PartialEq)]
pub struct SegmentRow {
    /// Segment id.
    pub id: String,
    /// Segment area, square metres (the whole segment, also any part off the grid).
    pub area_m2: f64,
    /// Probability of area: the mass of the cells weighted by each cell's overlap fraction with
    /// the segment (mass assumed uniform within a cell; exact when the segment's edges follow
    /// cell edges).
    pub poa: f64,
    /// POA / area, per square kilometre (POA density; common practice); 0 for a segment
    /// without area.
    pub density_per_km2: f64,
}

/// The POA of `cells` per segment, with its area and POA density.
///
/// `cells` should be the grid's `rows x cols` array; cells it lacks count as 0 (no panic).
#[must_use]
pub fn segment_table(
    cells: &Array2<f64>,
    grid: &GridSpec,
    segments: &[Segment],
) -> Vec<SegmentRow> {
    segments
        .iter()
        .map(|s| {
            let area_m2 = s.polygons.unsigned_area();
            let poa =
                overlap_fractions(&s.polygons, grid).map_or(0.0, |w| {
                    neumaier_sum(w.cells.indexed_iter().map(|((r, c), f)| {
                        cells.get([w.row0 + r, w.col0 + c]).map_or(0.0, |m| m * f)
                    }))
                });
            let density_per_km2 = if area_m2 > 0.0 {
                poa / (area_m2 / M2_PER_KM2)
            } else {
                0.0
            };
            SegmentRow {
                id: s.id.clone(),
                area_m2,
                poa,
                density_per_km2,
            }
        })
        .collect()
}
