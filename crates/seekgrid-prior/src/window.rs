//! A rectangular window of cell masses inside a grid: what every scenario kernel returns, so
//! that a scenario touching few cells costs little memory.

use ndarray::parallel::prelude::*;
use ndarray::{Array2, ArrayViewMut1, ArrayViewMut2, Axis, Slice};

/// Cell masses for rows `row0..row0 + cells.nrows()` and columns `col0..col0 + cells.ncols()`.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Window {
    pub row0: usize,
    pub col0: usize,
    pub cells: Array2<f64>,
}

impl Window {
    pub fn zeros(rows: std::ops::Range<usize>, cols: std::ops::Range<usize>) -> Self {
        Self {
            row0: rows.start,
            col0: cols.start,
            cells: Array2::zeros((rows.len(), cols.len())),
        }
    }

    /// Calls `fill(r, row)` for every row of the window, `r` its grid row, rows in parallel
    /// (each row is filled on its own, so the result does not depend on the number of threads).
    pub fn fill_rows(&mut self, fill: impl Fn(usize, ArrayViewMut1<'_, f64>) + Sync + Send) {
        let row0 = self.row0;
        self.cells
            .axis_iter_mut(Axis(0))
            .into_par_iter()
            .enumerate()
            .for_each(|(i, row)| fill(row0 + i, row));
    }

    /// One window covering all parts, holding their sum; `None` when there are none.
    pub fn merged(parts: &[Window]) -> Option<Self> {
        let r0 = parts.iter().map(|w| w.row0).min()?;
        let c0 = parts.iter().map(|w| w.col0).min()?;
        let r1 = parts.iter().map(|w| w.row0 + w.cells.nrows()).max()?;
        let c1 = parts.iter().map(|w| w.col0 + w.cells.ncols()).max()?;
        let mut out = Self::zeros(r0..r1, c0..c1);
        for w in parts {
            let (nr, nc) = w.cells.dim();
            let (a, b) = (w.row0 - r0, w.col0 - c0);
            sub(&mut out.cells, a..a + nr, b..b + nc).zip_mut_with(&w.cells, |t, v| *t += v);
        }
        Some(out)
    }

    /// Adds `factor` times this window to a full-grid array.
    pub fn add_to(&self, target: &mut Array2<f64>, factor: f64) {
        let (nr, nc) = self.cells.dim();
        let mut view = sub(target, self.row0..self.row0 + nr, self.col0..self.col0 + nc);
        view.zip_mut_with(&self.cells, |t, v| *t += factor * v);
    }

    /// Adds `factor` times row `row` (a grid row) of this window to a full-grid row slice.
    pub fn add_row_to(&self, row: usize, target_row: &mut [f64], factor: f64) {
        let (nr, nc) = self.cells.dim();
        if row < self.row0 || row >= self.row0 + nr {
            return;
        }
        let src = self.cells.row(row - self.row0);
        let dst = &mut target_row[self.col0..self.col0 + nc];
        for (t, v) in dst.iter_mut().zip(src.iter()) {
            *t += factor * v;
        }
    }

    /// Compensated sum of the window's masses, row by row in a fixed order.
    pub fn sum(&self) -> f64 {
        seekgrid_core::neumaier_sum(self.cells.iter().copied())
    }
}

/// A rectangular sub-view (the `s!` macro is not usable under `forbid(unsafe_code)`).
fn sub(
    a: &mut Array2<f64>,
    rows: std::ops::Range<usize>,
    cols: std::ops::Range<usize>,
) -> ArrayViewMut2<'_, f64> {
    let mut v = a.slice_axis_mut(Axis(0), Slice::from(rows));
    v.slice_axis_inplace(Axis(1), Slice::from(cols));
    v
}
