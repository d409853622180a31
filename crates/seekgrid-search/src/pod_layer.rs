//! POD of one search on the cells of a grid, stored on the window of cells it touches.

use crate::error::SearchError;
use ndarray::{Array2, ArrayViewMut2, Axis, Slice};
use seekgrid_core::GridSpec;
use std::ops::Range;

/// The probability of detection (0..=1) that one search gives each cell of a grid, if the
/// object is there. Only a window of rows and columns is stored; cells outside it have POD 0,
/// so a small search on a large grid costs little.
#[derive(Clone, Debug, PartialEq)]
pub struct PodLayer {
    grid: GridSpec,
    rows: Range<usize>,
    cols: Range<usize>,
    values: Array2<f64>,
}

impl PodLayer {
    /// A layer with POD 0 everywhere (a search that covered no cell, e.g. one that only
    /// reached particles outside the grid).
    #[must_use]
    pub fn empty(grid: GridSpec) -> Self {
        Self {
            grid,
            rows: 0..0,
            cols: 0..0,
            values: Array2::zeros((0, 0)),
        }
    }

    /// A layer from POD values on the whole grid.
    ///
    /// # Errors
    /// [`SearchError::GridMismatch`] when the shape is not the grid's;
    /// [`SearchError::BadPod`] for a value outside 0..=1 or not finite.
    pub fn from_dense(grid: GridSpec, values: Array2<f64>) -> Result<Self, SearchError> {
        let (rows, cols) = (grid.rows(), grid.cols());
        Self::from_window(grid, 0..rows, 0..cols, values)
    }

    /// A layer from POD values on a window of rows and columns.
    ///
    /// # Errors
    /// [`SearchError::GridMismatch`] when the window does not fit the grid or the values do
    /// not fit the window; [`SearchError::BadPod`] for a value outside 0..=1 or not finite.
    pub fn from_window(
        grid: GridSpec,
        rows: Range<usize>,
        cols: Range<usize>,
        values: Array2<f64>,
    ) -> Result<Self, SearchError> {
        if rows.end > grid.rows()
            || cols.end > grid.cols()
            || rows.start > rows.end
            || cols.start > cols.end
            || values.dim() != (rows.len(), cols.len())
        {
            return Err(SearchError::GridMismatch {
                layer_rows: values.nrows(),
                layer_cols: values.ncols(),
                rows: grid.rows(),
                cols: grid.cols(),
            });
        }
        if let Some(((r, c), v)) = values
            .indexed_iter()
            .find(|(_, v)| !(v.is_finite() && (0.0..=1.0).contains(*v)))
        {
            return Err(SearchError::BadPod {
                what: format!("cell [{}, {}]", r + rows.start, c + cols.start),
                value: *v,
            });
        }
        Ok(Self {
            grid,
            rows,
            cols,
            values: values.as_standard_layout().into_owned(),
        })
    }

    /// Internal constructor for values known to lie in 0..=1.
    pub(crate) fn from_parts(
        grid: GridSpec,
        rows: Range<usize>,
        cols: Range<usize>,
        values: Array2<f64>,
    ) -> Self {
        debug_assert_eq!(values.dim(), (rows.len(), cols.len()));
        Self {
            grid,
            rows,
            cols,
            values,
        }
    }

    /// The grid the layer belongs to.
    #[must_use]
    pub fn grid(&self) -> &GridSpec {
        &self.grid
    }

    /// Rows of the stored window.
    #[must_use]
    pub fn rows(&self) -> Range<usize> {
        self.rows.clone()
    }

    /// Columns of the stored window.
    #[must_use]
    pub fn cols(&self) -> Range<usize> {
        self.cols.clone()
    }

    /// POD values on the window, `[row - rows.start, col - cols.start]`.
    #[must_use]
    pub fn window_values(&self) -> &Array2<f64> {
        &self.values
    }

    /// POD of cell `[row, col]`; 0 outside the window or the grid.
    #[must_use]
    pub fn get(&self, row: usize, col: usize) -> f64 {
        if self.rows.contains(&row) && self.cols.contains(&col) {
            self.values[[row - self.rows.start, col - self.cols.start]]
        } else {
            0.0
        }
    }

    /// The POD on every cell of `grid`.
    ///
    /// # Errors
    /// [`SearchError::GridMismatch`] when `grid` is not the layer's grid.
    pub fn to_dense(&self, grid: &GridSpec) -> Result<Array2<f64>, SearchError> {
        self.check_grid(grid.rows(), grid.cols())?;
        if grid != &self.grid {
            return Err(self.mismatch(grid.rows(), grid.cols()));
        }
        let mut out = Array2::zeros((grid.rows(), grid.cols()));
        self.window_of(&mut out).assign(&self.values);
        Ok(out)
    }

    /// Folds this search into a cumulative POD array of the grid's shape:
    /// `c = 1 - (1 - c)(1 - d)` (independent searches; cumulative POD = 1 - Π(1 - POD_k),
    /// found: Patterson 1998, sarinfo.bc.ca MultiResCumPOD; docs/references.md §3).
    ///
    /// # Errors
    /// [`SearchError::GridMismatch`] when the array does not have the grid's shape.
    pub fn combine_into(&self, cumulative: &mut Array2<f64>) -> Result<(), SearchError> {
        self.check_grid(cumulative.nrows(), cumulative.ncols())?;
        let mut view = self.window_of(cumulative);
        ndarray::Zip::from(&mut view)
            .and(&self.values)
            .for_each(|c, &d| *c = 1.0 - (1.0 - *c) * (1.0 - d));
        Ok(())
    }

    fn window_of<'a>(&self, a: &'a mut Array2<f64>) -> ArrayViewMut2<'a, f64> {
        let mut v = a.view_mut();
        v.slice_axis_inplace(Axis(0), Slice::from(self.rows.clone()));
        v.slice_axis_inplace(Axis(1), Slice::from(self.cols.clone()));
        v
    }

    /// Checks that an array of `rows x cols` matches the layer's grid.
    pub(crate) fn check_grid(&self, rows: usize, cols: usize) -> Result<(), SearchError> {
        if rows != self.grid.rows() || cols != self.grid.cols() {
            return Err(self.mismatch(rows, cols));
        }
        Ok(())
    }

    fn mismatch(&self, rows: usize, cols: usize) -> SearchError {
        SearchError::GridMismatch {
            layer_rows: self.grid.rows(),
            layer_cols: self.grid.cols(),
            rows,
            cols,
        }
    }
}
