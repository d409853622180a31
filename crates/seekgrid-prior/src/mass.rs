//! One scenario's probability masses on a grid.

use crate::error::{PriorError, ShapeError};
use crate::model::ScenarioShape;
use crate::window::Window;
use crate::{point, polygon, rings, route};
use geo::Area;
use ndarray::Array2;
use seekgrid_core::{GridSpec, neumaier_sum};

/// One scenario's masses: in the cells, outside the grid (in world, but off the grid) and rest
/// of world (declared by the scenario itself: segments' 1 - Σ POA, rings beyond the last
/// quantile). `cells + outside_grid + rest_of_world == 1` to 1e-12.
#[derive(Debug, Clone, PartialEq)]
pub struct ScenarioMass {
    /// Probability of each cell, `[row, col]`, row 0 at the north edge.
    pub cells: Array2<f64>,
    /// Probability that falls outside the grid.
    pub outside_grid: f64,
    /// Probability the scenario declares to be elsewhere (rest of world).
    pub rest_of_world: f64,
}

/// A scenario's masses with the cells kept as one window of the grid.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct SparseMass {
    pub window: Option<Window>,
    pub outside_grid: f64,
    pub rest_of_world: f64,
}

/// Integrates one shape over every cell of the grid (never sampling the density at a cell
/// centre): points in closed form or by Gauss-Legendre on the conditional normal, routes by
/// tensor Gauss-Legendre on the line-source density, areas and segments by exact overlap areas,
/// rings by exact disc-rectangle areas (see the module docs of each kind).
///
/// # Errors
/// [`PriorError::Shape`] when [`ScenarioShape::validate`] fails.
pub fn scenario_mass(shape: &ScenarioShape, grid: &GridSpec) -> Result<ScenarioMass, PriorError> {
    shape.check()?;
    let sparse = sparse_mass(shape, grid);
    let mut cells = Array2::zeros((grid.rows(), grid.cols()));
    if let Some(w) = &sparse.window {
        w.add_to(&mut cells, 1.0);
    }
    Ok(ScenarioMass {
        cells,
        outside_grid: sparse.outside_grid,
        rest_of_world: sparse.rest_of_world,
    })
}

/// Checks and integrates one shape.
pub(crate) fn checked_sparse_mass(
    shape: &ScenarioShape,
    grid: &GridSpec,
) -> Result<SparseMass, ShapeError> {
    shape.check()?;
    Ok(sparse_mass(shape, grid))
}

/// Integrates a shape that has passed [`ScenarioShape::check`].
pub(crate) fn sparse_mass(shape: &ScenarioShape, grid: &GridSpec) -> SparseMass {
    let cell_area = grid.cell_area_m2();
    let (window, rest_of_world) = match shape {
        ScenarioShape::Point {
            center,
            sigma_major_m,
            sigma_minor_m,
            major_grid_bearing_deg,
        } => (
            point::point_window(
                *center,
                *sigma_major_m,
                *sigma_minor_m,
                *major_grid_bearing_deg,
                grid,
            ),
            0.0,
        ),
        ScenarioShape::Route {
            waypoints,
            cross_track_sigma_m,
        } => (
            route::route_window(waypoints, *cross_track_sigma_m, grid),
            0.0,
        ),
        ScenarioShape::Area { polygons } => {
            let area = polygons.unsigned_area();
            let w = polygon::overlap_fractions(polygons, grid).map(|mut w| {
                w.cells.mapv_inplace(|f| f * cell_area / area);
                w
            });
            (w, 0.0)
        }
        ScenarioShape::Segments { segments, poa } => {
            let parts: Vec<Window> = segments
                .iter()
                .zip(poa)
                .filter(|(_, p)| **p > 0.0)
                .filter_map(|(s, p)| {
                    let area = s.polygons.unsigned_area();
                    polygon::overlap_fractions(&s.polygons, grid).map(|mut w| {
                        w.cells.mapv_inplace(|f| f * p * cell_area / area);
                        w
                    })
                })
                .collect();
            let row = (1.0 - neumaier_sum(poa.iter().copied())).max(0.0);
            (Window::merged(&parts), row)
        }
        ScenarioShape::Rings {
            center,
            quantiles,
            interpolation,
        } => {
            let last = quantiles.last().map_or(0.0, |q| q.0);
            (
                rings::rings_window(*center, quantiles, *interpolation, grid),
                (1.0 - last).max(0.0),
            )
        }
    };
    finish(window, rest_of_world)
}

/// Sets outside_grid = (1 - rest of world) - Σ cells, scaling the cells down in the rare case
/// that quadrature rounding puts them a hair above the in-world mass.
fn finish(mut window: Option<Window>, rest_of_world: f64) -> SparseMass {
    let in_world = 1.0 - rest_of_world;
    let mut sum = window.as_ref().map_or(0.0, Window::sum);
    if sum > in_world
        && let Some(w) = &mut window
    {
        let f = in_world / sum;
        w.cells.mapv_inplace(|v| v * f);
        sum = w.sum();
    }
    SparseMass {
        window,
        outside_grid: (in_world - sum).max(0.0),
        rest_of_world,
    }
}
