//! Segment POA table of a pooled map, integrated over each segment polygon.
//!
//! A cell that a segment edge cuts holds mass on both sides of the edge, and the two sides need
//! not be equally dense: a segments scenario puts `POA / area` on one side and another
//! segment's density on the other. Splitting the cell's mass by area fraction (mass assumed
//! uniform within the cell) then moves mass across the edge, an error that grows with the cell
//! size. [`SegmentSplit::from_scenarios`] instead integrates each scenario over each piece
//! `cell ∩ segment` before pooling: exactly (polygon intersection and exact overlap areas) for
//! area and segments scenarios, whose density is piecewise constant on polygons; for point,
//! route and rings scenarios, whose density varies smoothly across a cell, by the cell's mass
//! times the piece's area fraction. The share of each cell's pooled mass that lies in each
//! segment is kept, and any later cell masses (after searches, which scale a whole cell) are
//! split by the same shares.

use crate::PriorError;
use crate::mass::sparse_mass;
use crate::model::{Analyst, Pool, Scenario, ScenarioShape, Segment};
use crate::polygon::overlap_fractions;
use crate::window::Window;
use geo::{Area, BooleanOps, BoundingRect, Intersects, MultiPolygon};
use ndarray::Array2;
use seekgrid_core::{GridSpec, neumaier_sum, units::M2_PER_KM2};

/// One segment's line in the POA table.
#[derive(Debug, Clone, PartialEq)]
pub struct SegmentRow {
    /// Segment id.
    pub id: String,
    /// Segment area, square metres (the whole segment, also any part off the grid).
    pub area_m2: f64,
    /// Probability of area: the mass of the cells, each cell weighted by the share of its mass
    /// that lies in the segment ([`SegmentSplit`]).
    pub poa: f64,
    /// POA / area, per square kilometre (POA density; common practice); 0 for a segment
    /// without area.
    pub density_per_km2: f64,
}

/// For each segment, the share of each cell's mass that lies in the segment (0..=1), over the
/// window of cells the segment's bounding box covers.
#[derive(Debug, Clone, PartialEq)]
pub struct SegmentSplit {
    ids: Vec<String>,
    areas_m2: Vec<f64>,
    shares: Vec<Option<Window>>,
}

impl SegmentSplit {
    /// Shares equal to each cell's area fraction in the segment: exact when the mass is
    /// uniform within every cut cell (for instance when the segments follow cell edges).
    #[must_use]
    pub fn by_overlap(grid: &GridSpec, segments: &[Segment]) -> Self {
        Self {
            ids: segments.iter().map(|s| s.id.clone()).collect(),
            areas_m2: segments
                .iter()
                .map(|s| s.polygons.unsigned_area())
                .collect(),
            shares: segments
                .iter()
                .map(|s| overlap_fractions(&s.polygons, grid))
                .collect(),
        }
    }

    /// Shares of the linear pool of `scenarios` (weights normalised as in [`crate::combine`]),
    /// each scenario integrated over each piece `cell ∩ segment` (module docs). Under
    /// [`Pool::Logarithmic`] the pool is defined on whole cells only, and the shares are the
    /// area fractions of [`SegmentSplit::by_overlap`]; so are they where the pool puts no mass
    /// in a cell.
    ///
    /// # Errors
    /// [`PriorError`] as [`crate::combine`] for the same analysts and scenarios.
    pub fn from_scenarios(
        analysts: &[Analyst],
        scenarios: &[Scenario],
        pool: Pool,
        grid: &GridSpec,
        segments: &[Segment],
    ) -> Result<Self, PriorError> {
        let uniform = Self::by_overlap(grid, segments);
        if pool == Pool::Logarithmic {
            return Ok(uniform);
        }
        let weights = crate::pool::scenario_weights(analysts, scenarios)?;
        let cell_area = grid.cell_area_m2();
        let mut denominator = Array2::<f64>::zeros((grid.rows(), grid.cols()));
        let mut numerators: Vec<Option<Window>> = uniform
            .shares
            .iter()
            .map(|w| {
                w.as_ref().map(|w| {
                    Window::zeros(
                        w.row0..w.row0 + w.cells.nrows(),
                        w.col0..w.col0 + w.cells.ncols(),
                    )
                })
            })
            .collect();
        for (scenario, &w) in scenarios.iter().zip(&weights) {
            if let Err(source) = scenario.shape.check() {
                return Err(PriorError::InScenario {
                    scenario: scenario.id.clone(),
                    analyst: scenario.analyst.clone(),
                    source,
                });
            }
            let mass = sparse_mass(&scenario.shape, grid);
            if let Some(m) = &mass.window {
                m.add_to(&mut denominator, w);
            }
            // Polygons of uniform density (density per m², polygons) of this scenario.
            let pieces: Option<Vec<(f64, &MultiPolygon<f64>)>> = match &scenario.shape {
                ScenarioShape::Area { polygons } => {
                    let a = polygons.unsigned_area();
                    Some(if a > 0.0 {
                        vec![(1.0 / a, polygons)]
                    } else {
                        Vec::new()
                    })
                }
                ScenarioShape::Segments { segments: own, poa } => Some(
                    own.iter()
                        .zip(poa)
                        .filter(|(_, p)| **p > 0.0)
                        .filter_map(|(t, p)| {
                            let a = t.polygons.unsigned_area();
                            (a > 0.0).then_some((p / a, &t.polygons))
                        })
                        .collect(),
                ),
                ScenarioShape::Point { .. }
                | ScenarioShape::Route { .. }
                | ScenarioShape::Rings { .. } => None,
            };
            for ((segment, numerator), share) in
                segments.iter().zip(&mut numerators).zip(&uniform.shares)
            {
                let (Some(numerator), Some(share)) = (numerator.as_mut(), share) else {
                    continue;
                };
                match &pieces {
                    Some(pieces) => {
                        for &(density, polygons) in pieces {
                            let Some(part) = intersection(polygons, &segment.polygons) else {
                                continue;
                            };
                            if let Some(f) = overlap_fractions(&part, grid) {
                                add_window(numerator, &f, w * density * cell_area);
                            }
                        }
                    }
                    None => {
                        if let Some(m) = &mass.window {
                            add_product(numerator, m, share, w);
                        }
                    }
                }
            }
        }
        let shares = numerators
            .into_iter()
            .zip(uniform.shares)
            .map(|(numerator, share)| {
                let (mut n, share) = (numerator?, share?);
                let (r0, c0) = (n.row0, n.col0);
                for ((i, j), v) in n.cells.indexed_iter_mut() {
                    let d = denominator[[r0 + i, c0 + j]];
                    *v = if d > 0.0 {
                        (*v / d).clamp(0.0, 1.0)
                    } else {
                        share.cells[[i, j]]
                    };
                }
                Some(n)
            })
            .collect();
        Ok(Self {
            ids: uniform.ids,
            areas_m2: uniform.areas_m2,
            shares,
        })
    }

    /// The POA of `cells` (the grid's `rows x cols` array; cells it lacks count as 0) in each
    /// segment, in segment order.
    #[must_use]
    pub fn poa(&self, cells: &Array2<f64>) -> Vec<f64> {
        self.shares
            .iter()
            .map(|w| {
                w.as_ref().map_or(0.0, |w| {
                    neumaier_sum(w.cells.indexed_iter().map(|((r, c), f)| {
                        cells.get([w.row0 + r, w.col0 + c]).map_or(0.0, |m| m * f)
                    }))
                })
            })
            .collect()
    }

    /// The table of `cells` with `extra[k]` (mass the cells do not hold, such as particles
    /// inside segment `k`; missing entries count as 0) added to each segment's POA.
    #[must_use]
    pub fn table(&self, cells: &Array2<f64>, extra: &[f64]) -> Vec<SegmentRow> {
        self.poa(cells)
            .into_iter()
            .enumerate()
            .map(|(k, poa)| {
                let poa = poa + extra.get(k).copied().unwrap_or(0.0);
                let area_m2 = self.areas_m2[k];
                SegmentRow {
                    id: self.ids[k].clone(),
                    area_m2,
                    poa,
                    density_per_km2: if area_m2 > 0.0 {
                        poa / (area_m2 / M2_PER_KM2)
                    } else {
                        0.0
                    },
                }
            })
            .collect()
    }
}

/// The POA of `cells` per segment, with its area and POA density, each cell split by its area
/// fraction in the segment ([`SegmentSplit::by_overlap`]).
///
/// `cells` should be the grid's `rows x cols` array; cells it lacks count as 0 (no panic).
#[must_use]
pub fn segment_table(
    cells: &Array2<f64>,
    grid: &GridSpec,
    segments: &[Segment],
) -> Vec<SegmentRow> {
    SegmentSplit::by_overlap(grid, segments).table(cells, &[])
}

/// `a ∩ b`, `None` when the bounding boxes are apart or the intersection is empty; `a` itself
/// when both are the same polygons.
fn intersection(a: &MultiPolygon<f64>, b: &MultiPolygon<f64>) -> Option<MultiPolygon<f64>> {
    if a == b {
        return Some(a.clone());
    }
    let (ra, rb) = (a.bounding_rect()?, b.bounding_rect()?);
    if !ra.intersects(&rb) {
        return None;
    }
    let part = a.intersection(b);
    (part.unsigned_area() > 0.0).then_some(part)
}

/// Adds `factor * f` to `target` where their windows overlap.
fn add_window(target: &mut Window, f: &Window, factor: f64) {
    for ((i, j), v) in f.cells.indexed_iter() {
        let (r, c) = (f.row0 + i, f.col0 + j);
        if r >= target.row0
            && c >= target.col0
            && let Some(t) = target.cells.get_mut([r - target.row0, c - target.col0])
        {
            *t += factor * v;
        }
    }
}

/// Adds `factor * mass * share` to `target` (same window as `share`).
fn add_product(target: &mut Window, mass: &Window, share: &Window, factor: f64) {
    for ((i, j), t) in target.cells.indexed_iter_mut() {
        let (r, c) = (target.row0 + i, target.col0 + j);
        if r >= mass.row0
            && c >= mass.col0
            && let Some(m) = mass.cells.get([r - mass.row0, c - mass.col0])
        {
            *t += factor * m * share.cells[[i, j]];
        }
    }
}
