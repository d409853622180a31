//! Grid geometry: square cells in the working frame, row 0 at the north edge.

use crate::error::CoreError;
use geo::Coord;

/// The default limit on the number of cells of one grid (16 M cells = 128 MB per f64 layer).
pub const DEFAULT_MAX_CELLS: u64 = 16_000_000;

/// An axis-aligned box in the working frame, metres.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ProjectedBox {
    /// West edge (minimum easting), metres.
    pub west_m: f64,
    /// South edge (minimum northing), metres.
    pub south_m: f64,
    /// East edge (maximum easting), metres.
    pub east_m: f64,
    /// North edge (maximum northing), metres.
    pub north_m: f64,
}

impl ProjectedBox {
    /// The box as a counter-clockwise polygon (for clipping and export with `geo`).
    #[must_use]
    pub fn to_polygon(&self) -> geo::Polygon<f64> {
        geo::Rect::new(
            Coord {
                x: self.west_m,
                y: self.south_m,
            },
            Coord {
                x: self.east_m,
                y: self.north_m,
            },
        )
        .to_polygon()
    }

    /// A box around one point with the given half-widths.
    #[must_use]
    pub fn around(center: Coord<f64>, half_width_m: f64, half_height_m: f64) -> Self {
        Self {
            west_m: center.x - half_width_m,
            south_m: center.y - half_height_m,
            east_m: center.x + half_width_m,
            north_m: center.y + half_height_m,
        }
    }

    /// The smallest box holding all points; `None` when there are none.
    #[must_use]
    pub fn of_points(points: impl IntoIterator<Item = Coord<f64>>) -> Option<Self> {
        let mut it = points.into_iter();
        let first = it.next()?;
        let mut b = Self {
            west_m: first.x,
            south_m: first.y,
            east_m: first.x,
            north_m: first.y,
        };
        for p in it {
            b.west_m = b.west_m.min(p.x);
            b.east_m = b.east_m.max(p.x);
            b.south_m = b.south_m.min(p.y);
            b.north_m = b.north_m.max(p.y);
        }
        Some(b)
    }

    /// The smallest box holding both.
    #[must_use]
    pub fn union(&self, other: &Self) -> Self {
        Self {
            west_m: self.west_m.min(other.west_m),
            south_m: self.south_m.min(other.south_m),
            east_m: self.east_m.max(other.east_m),
            north_m: self.north_m.max(other.north_m),
        }
    }

    /// Whether `p` lies in the box, edges included (never for a NaN coordinate).
    #[must_use]
    pub fn contains(&self, p: Coord<f64>) -> bool {
        p.x >= self.west_m && p.x <= self.east_m && p.y >= self.south_m && p.y <= self.north_m
    }

    /// The box grown by `margin_m` on every side.
    #[must_use]
    pub fn expanded(&self, margin_m: f64) -> Self {
        Self {
            west_m: self.west_m - margin_m,
            south_m: self.south_m - margin_m,
            east_m: self.east_m + margin_m,
            north_m: self.north_m + margin_m,
        }
    }

    /// Width (east-west), metres.
    #[must_use]
    pub fn width_m(&self) -> f64 {
        self.east_m - self.west_m
    }

    /// Height (north-south), metres.
    #[must_use]
    pub fn height_m(&self) -> f64 {
        self.north_m - self.south_m
    }

    /// Whether the two boxes overlap with positive area.
    #[must_use]
    pub fn intersects(&self, other: &Self) -> bool {
        self.west_m < other.east_m
            && other.west_m < self.east_m
            && self.south_m < other.north_m
            && other.south_m < self.north_m
    }

    fn is_valid(&self) -> bool {
        [self.west_m, self.south_m, self.east_m, self.north_m]
            .iter()
            .all(|v| v.is_finite())
            && self.west_m < self.east_m
            && self.south_m < self.north_m
    }
}

/// A grid of square cells of side `cell_m`, `rows` x `cols`, whose north-west corner is at
/// (`west_m`, `north_m`) in the working frame. Cell `[row, col]` spans eastings
/// `west_m + col * cell_m ..= west_m + (col + 1) * cell_m` and northings
/// `north_m - (row + 1) * cell_m ..= north_m - row * cell_m`. Never empty.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GridSpec {
    west_m: f64,
    north_m: f64,
    cell_m: f64,
    rows: usize,
    cols: usize,
}

impl GridSpec {
    /// A grid from its north-west corner, cell size and shape.
    ///
    /// # Errors
    /// [`CoreError::BadCellSize`] for a non-positive or non-finite cell size,
    /// [`CoreError::BadExtent`] for zero rows or columns or a non-finite corner,
    /// [`CoreError::TooManyCells`] when `rows * cols > max_cells`.
    pub fn new(
        west_m: f64,
        north_m: f64,
        cell_m: f64,
        rows: usize,
        cols: usize,
        max_cells: u64,
    ) -> Result<Self, CoreError> {
        if !(cell_m.is_finite() && cell_m > 0.0) {
            return Err(CoreError::BadCellSize { cell_m });
        }
        let east_m = west_m + cols as f64 * cell_m;
        let south_m = north_m - rows as f64 * cell_m;
        if rows == 0 || cols == 0 || !west_m.is_finite() || !north_m.is_finite() {
            return Err(CoreError::BadExtent {
                west_m,
                south_m,
                east_m,
                north_m,
            });
        }
        check_cell_limit(rows as u64, cols as u64, cell_m, max_cells)?;
        Ok(Self {
            west_m,
            north_m,
            cell_m,
            rows,
            cols,
        })
    }

    /// The grid of `cell_m` cells aligned to multiples of `cell_m` that covers `extent`.
    ///
    /// # Errors
    /// As [`GridSpec::new`]; [`CoreError::BadExtent`] for an empty or non-finite box.
    pub fn covering(extent: &ProjectedBox, cell_m: f64, max_cells: u64) -> Result<Self, CoreError> {
        if !(cell_m.is_finite() && cell_m > 0.0) {
            return Err(CoreError::BadCellSize { cell_m });
        }
        if !extent.is_valid() {
            return Err(CoreError::BadExtent {
                west_m: extent.west_m,
                south_m: extent.south_m,
                east_m: extent.east_m,
                north_m: extent.north_m,
            });
        }
        let west = (extent.west_m / cell_m).floor() * cell_m;
        let east = (extent.east_m / cell_m).ceil() * cell_m;
        let south = (extent.south_m / cell_m).floor() * cell_m;
        let north = (extent.north_m / cell_m).ceil() * cell_m;
        let cols = ((east - west) / cell_m).round().max(1.0);
        let rows = ((north - south) / cell_m).round().max(1.0);
        check_cell_limit(rows as u64, cols as u64, cell_m, max_cells)?;
        Self::new(west, north, cell_m, rows as usize, cols as usize, max_cells)
    }

    /// Rows (north to south).
    #[must_use]
    pub fn rows(&self) -> usize {
        self.rows
    }

    /// Columns (west to east).
    #[must_use]
    pub fn cols(&self) -> usize {
        self.cols
    }

    /// Number of cells.
    #[must_use]
    pub fn len(&self) -> usize {
        self.rows * self.cols
    }

    /// Always false: a grid has at least one cell.
    #[must_use]
    pub fn is_empty(&self) -> bool {
        false
    }

    /// Cell side, metres.
    #[must_use]
    pub fn cell_m(&self) -> f64 {
        self.cell_m
    }

    /// Cell area, square metres.
    #[must_use]
    pub fn cell_area_m2(&self) -> f64 {
        self.cell_m * self.cell_m
    }

    /// The grid's outer box.
    #[must_use]
    pub fn extent(&self) -> ProjectedBox {
        ProjectedBox {
            west_m: self.west_m,
            south_m: self.north_m - self.rows as f64 * self.cell_m,
            east_m: self.west_m + self.cols as f64 * self.cell_m,
            north_m: self.north_m,
        }
    }

    /// West edge, metres.
    #[must_use]
    pub fn west_m(&self) -> f64 {
        self.west_m
    }

    /// North edge, metres.
    #[must_use]
    pub fn north_m(&self) -> f64 {
        self.north_m
    }

    /// The box of one cell.
    #[must_use]
    pub fn cell_box(&self, row: usize, col: usize) -> ProjectedBox {
        let west_m = self.west_m + col as f64 * self.cell_m;
        let north_m = self.north_m - row as f64 * self.cell_m;
        ProjectedBox {
            west_m,
            south_m: north_m - self.cell_m,
            east_m: west_m + self.cell_m,
            north_m,
        }
    }

    /// The centre of one cell.
    #[must_use]
    pub fn cell_center(&self, row: usize, col: usize) -> Coord<f64> {
        Coord {
            x: self.west_m + (col as f64 + 0.5) * self.cell_m,
            y: self.north_m - (row as f64 + 0.5) * self.cell_m,
        }
    }

    /// The cell holding a point, `None` outside the grid. Points on an inner edge belong to
    /// the cell east and south of it.
    #[must_use]
    pub fn locate(&self, p: Coord<f64>) -> Option<(usize, usize)> {
        let c = ((p.x - self.west_m) / self.cell_m).floor();
        let r = ((self.north_m - p.y) / self.cell_m).floor();
        if c >= 0.0 && r >= 0.0 && (c as usize) < self.cols && (r as usize) < self.rows {
            Some((r as usize, c as usize))
        } else {
            None
        }
    }

    /// Fractional row and column of a point, returned as `(row, col)` like [`GridSpec::locate`]:
    /// row counted south from the north edge, column east from the west edge, so that 0.5 is
    /// the centre of the first row or column. May lie outside `0..rows`, `0..cols`.
    #[must_use]
    pub fn fractional_index(&self, p: Coord<f64>) -> (f64, f64) {
        (
            (self.north_m - p.y) / self.cell_m,
            (p.x - self.west_m) / self.cell_m,
        )
    }

    /// The range of rows and columns whose cells intersect a box, clipped to the grid;
    /// `None` when the box misses the grid.
    #[must_use]
    pub fn cells_overlapping(
        &self,
        b: &ProjectedBox,
    ) -> Option<(std::ops::Range<usize>, std::ops::Range<usize>)> {
        if !b.intersects(&self.extent()) {
            return None;
        }
        let c0 = ((b.west_m - self.west_m) / self.cell_m).floor().max(0.0) as usize;
        let c1 = (((b.east_m - self.west_m) / self.cell_m).ceil() as usize).min(self.cols);
        let r0 = ((self.north_m - b.north_m) / self.cell_m).floor().max(0.0) as usize;
        let r1 = (((self.north_m - b.south_m) / self.cell_m).ceil() as usize).min(self.rows);
        (c0 < c1 && r0 < r1).then_some((r0..r1, c0..c1))
    }
}

fn check_cell_limit(rows: u64, cols: u64, cell_m: f64, max_cells: u64) -> Result<(), CoreError> {
    let cells = rows.saturating_mul(cols);
    if cells > max_cells {
        let needed = cell_m * (cells as f64 / max_cells as f64).sqrt();
        return Err(CoreError::TooManyCells {
            cells,
            rows,
            cols,
            limit: max_cells,
            suggested_cell_m: round_up_nice(needed),
        });
    }
    Ok(())
}

/// The smallest of 1, 2, 2.5, 5 x 10^k that is at least `v`.
fn round_up_nice(v: f64) -> f64 {
    let k = v.log10().floor();
    let base = 10f64.powf(k);
    for m in [1.0, 2.0, 2.5, 5.0, 10.0] {
        if m * base >= v * (1.0 - 1e-12) {
            return m * base;
        }
    }
    10.0 * base
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fractional_index_is_row_then_column() {
        // Cells of 100 m, north-west corner (1000, 5000): a point 250 m east and 130 m south
        // of the corner is at row 1.3, column 2.5, in cell (1, 2).
        let g = GridSpec::new(1000.0, 5000.0, 100.0, 4, 6, DEFAULT_MAX_CELLS).unwrap();
        let p = Coord {
            x: 1250.0,
            y: 4870.0,
        };
        let (r, c) = g.fractional_index(p);
        assert!((r - 1.3).abs() < 1e-12, "row {r}");
        assert!((c - 2.5).abs() < 1e-12, "col {c}");
        assert_eq!(g.locate(p), Some((1, 2)));
    }

    #[test]
    fn covering_snaps_outward_to_cell_multiples() {
        let b = ProjectedBox {
            west_m: 1010.0,
            south_m: 2020.0,
            east_m: 1990.0,
            north_m: 2980.0,
        };
        let g = GridSpec::covering(&b, 250.0, DEFAULT_MAX_CELLS).unwrap();
        assert_eq!(g.west_m(), 1000.0);
        assert_eq!(g.north_m(), 3000.0);
        assert_eq!((g.rows(), g.cols()), (4, 4));
        assert_eq!(g.extent().south_m, 2000.0);
    }

    #[test]
    fn row_zero_is_the_north_edge() {
        let g = GridSpec::new(0.0, 1000.0, 100.0, 10, 20, DEFAULT_MAX_CELLS).unwrap();
        assert_eq!(g.locate(Coord { x: 5.0, y: 995.0 }), Some((0, 0)));
        assert_eq!(g.locate(Coord { x: 1995.0, y: 5.0 }), Some((9, 19)));
        assert_eq!(g.locate(Coord { x: -1.0, y: 5.0 }), None);
        assert_eq!(g.cell_center(0, 0), Coord { x: 50.0, y: 950.0 });
        let bx = g.cell_box(9, 19);
        assert_eq!(
            (bx.west_m, bx.south_m, bx.east_m, bx.north_m),
            (1900.0, 0.0, 2000.0, 100.0)
        );
    }

    #[test]
    fn too_many_cells_is_refused_with_a_cell_size_that_fits() {
        let b = ProjectedBox {
            west_m: 0.0,
            south_m: 0.0,
            east_m: 100_000.0,
            north_m: 100_000.0,
        };
        match GridSpec::covering(&b, 10.0, 16_000_000) {
            Err(CoreError::TooManyCells {
                cells,
                suggested_cell_m,
                ..
            }) => {
                assert_eq!(cells, 100_000_000);
                assert_eq!(suggested_cell_m, 25.0);
                assert!(GridSpec::covering(&b, suggested_cell_m, 16_000_000).is_ok());
            }
            other => panic!("expected TooManyCells, got {other:?}"),
        }
    }

    #[test]
    fn bad_sizes_and_extents_are_refused() {
        let b = ProjectedBox {
            west_m: 0.0,
            south_m: 0.0,
            east_m: 1.0,
            north_m: 1.0,
        };
        assert!(GridSpec::covering(&b, 0.0, 10).is_err());
        assert!(GridSpec::covering(&b, f64::NAN, 10).is_err());
        let empty = ProjectedBox {
            west_m: 5.0,
            south_m: 0.0,
            east_m: 5.0,
            north_m: 1.0,
        };
        assert!(GridSpec::covering(&empty, 1.0, 10).is_err());
        assert!(GridSpec::new(0.0, 0.0, 1.0, 0, 3, 10).is_err());
    }

    #[test]
    fn overlapping_cells_are_clipped_to_the_grid() {
        let g = GridSpec::new(0.0, 1000.0, 100.0, 10, 10, DEFAULT_MAX_CELLS).unwrap();
        let b = ProjectedBox {
            west_m: 150.0,
            south_m: -50.0,
            east_m: 250.0,
            north_m: 120.0,
        };
        assert_eq!(g.cells_overlapping(&b), Some((8..10, 1..3)));
        let away = ProjectedBox {
            west_m: 5000.0,
            south_m: 0.0,
            east_m: 6000.0,
            north_m: 10.0,
        };
        assert_eq!(g.cells_overlapping(&away), None);
    }
}
