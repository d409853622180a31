//! Convex polygons on the grid: fast and exact mass under a polygon, overlap tests.
//!
//! Hand-written because the planner evaluates hundreds of thousands of candidate areas:
//! geo's boolean operations (general polygons, robust predicates, allocation per call) would
//! be two orders of magnitude slower for the convex pieces used here, and its `Intersects`
//! counts touching edges as an overlap, which adjacent search areas must be allowed.

use geo::Coord;
use ndarray::Array2;
use seekgrid_core::GridSpec;

/// A convex polygon, vertices counter-clockwise, in the working frame (metres).
#[derive(Clone, Debug, PartialEq)]
pub(crate) struct Convex {
    pub(crate) pts: Vec<Coord<f64>>,
}

impl Convex {
    /// From the vertices of a convex polygon in either orientation (closing point optional).
    pub(crate) fn new(mut pts: Vec<Coord<f64>>) -> Self {
        if pts.len() > 1 && pts.first() == pts.last() {
            pts.pop();
        }
        if signed_area(&pts) < 0.0 {
            pts.reverse();
        }
        Self { pts }
    }

    pub(crate) fn area(&self) -> f64 {
        signed_area(&self.pts).abs()
    }

    pub(crate) fn y_range(&self) -> (f64, f64) {
        self.pts
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), p| {
                (lo.min(p.y), hi.max(p.y))
            })
    }

    pub(crate) fn x_range(&self) -> (f64, f64) {
        self.pts
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), p| {
                (lo.min(p.x), hi.max(p.x))
            })
    }

    /// The x-extent of the polygon on the horizontal line at `y`, if it meets it.
    fn x_at(&self, y: f64) -> Option<(f64, f64)> {
        let n = self.pts.len();
        let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
        for i in 0..n {
            let a = self.pts[i];
            let b = self.pts[(i + 1) % n];
            let (ya, yb) = (a.y.min(b.y), a.y.max(b.y));
            if y < ya || y > yb || ya == yb {
                continue;
            }
            let x = a.x + (y - a.y) * (b.x - a.x) / (b.y - a.y);
            lo = lo.min(x);
            hi = hi.max(x);
        }
        (lo <= hi).then_some((lo, hi))
    }

    /// Whether a point lies inside or on the polygon.
    pub(crate) fn contains(&self, p: Coord<f64>) -> bool {
        let n = self.pts.len();
        (0..n).all(|i| {
            let a = self.pts[i];
            let b = self.pts[(i + 1) % n];
            (b.x - a.x) * (p.y - a.y) - (b.y - a.y) * (p.x - a.x)
                >= -1e-9 * (1.0 + a.x.abs() + a.y.abs())
        })
    }

    /// Whether two convex polygons overlap with positive area: no separating axis among the
    /// edge normals of either (separating axis theorem), with `tolerance_m` of allowed
    /// penetration so that areas sharing an edge count as apart.
    pub(crate) fn overlaps(&self, other: &Self, tolerance_m: f64) -> bool {
        for poly in [self, other] {
            let n = poly.pts.len();
            for i in 0..n {
                let a = poly.pts[i];
                let b = poly.pts[(i + 1) % n];
                let (nx, ny) = (b.y - a.y, a.x - b.x);
                let len = nx.hypot(ny);
                if len == 0.0 {
                    continue;
                }
                let (nx, ny) = (nx / len, ny / len);
                let proj = |q: &Self| {
                    q.pts
                        .iter()
                        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), p| {
                            let d = p.x * nx + p.y * ny;
                            (lo.min(d), hi.max(d))
                        })
                };
                let (a0, a1) = proj(self);
                let (b0, b1) = proj(other);
                if a1 <= b0 + tolerance_m || b1 <= a0 + tolerance_m {
                    return false;
                }
            }
        }
        true
    }

    /// Area of the polygon inside an axis-aligned box (Sutherland-Hodgman clipping, then the
    /// shoelace formula).
    pub(crate) fn area_in_box(&self, west: f64, south: f64, east: f64, north: f64) -> f64 {
        let mut poly = self.pts.clone();
        let mut next = Vec::with_capacity(poly.len() + 4);
        // (component, bound, keep-greater)
        for (is_x, bound, greater) in [
            (true, west, true),
            (true, east, false),
            (false, south, true),
            (false, north, false),
        ] {
            next.clear();
            let n = poly.len();
            if n == 0 {
                return 0.0;
            }
            let inside = |p: &Coord<f64>| {
                let v = if is_x { p.x } else { p.y };
                if greater { v >= bound } else { v <= bound }
            };
            for i in 0..n {
                let a = poly[i];
                let b = poly[(i + 1) % n];
                let (ia, ib) = (inside(&a), inside(&b));
                if ia {
                    next.push(a);
                }
                if ia != ib {
                    let (va, vb) = if is_x { (a.x, b.x) } else { (a.y, b.y) };
                    let t = (bound - va) / (vb - va);
                    next.push(Coord {
                        x: a.x + t * (b.x - a.x),
                        y: a.y + t * (b.y - a.y),
                    });
                }
            }
            std::mem::swap(&mut poly, &mut next);
        }
        signed_area(&poly).abs()
    }

    /// The exact fraction of each cell's area inside the polygon, on the window of cells its
    /// bounding box touches; `None` when it misses the grid.
    pub(crate) fn cell_fractions(
        &self,
        grid: &GridSpec,
    ) -> Option<(std::ops::Range<usize>, std::ops::Range<usize>, Array2<f64>)> {
        let (x0, x1) = self.x_range();
        let (y0, y1) = self.y_range();
        let b = seekgrid_core::ProjectedBox {
            west_m: x0,
            south_m: y0,
            east_m: x1,
            north_m: y1,
        };
        let (rows, cols) = grid.cells_overlapping(&b)?;
        let cell_area = grid.cell_area_m2();
        let mut f = Array2::zeros((rows.len(), cols.len()));
        for (i, r) in rows.clone().enumerate() {
            for (j, c) in cols.clone().enumerate() {
                let bx = grid.cell_box(r, c);
                let corners = [
                    Coord {
                        x: bx.west_m,
                        y: bx.south_m,
                    },
                    Coord {
                        x: bx.east_m,
                        y: bx.south_m,
                    },
                    Coord {
                        x: bx.east_m,
                        y: bx.north_m,
                    },
                    Coord {
                        x: bx.west_m,
                        y: bx.north_m,
                    },
                ];
                f[[i, j]] = if corners.iter().all(|p| self.contains(*p)) {
                    1.0
                } else {
                    (self.area_in_box(bx.west_m, bx.south_m, bx.east_m, bx.north_m) / cell_area)
                        .clamp(0.0, 1.0)
                };
            }
        }
        Some((rows, cols, f))
    }
}

fn signed_area(pts: &[Coord<f64>]) -> f64 {
    let n = pts.len();
    if n < 3 {
        return 0.0;
    }
    let o = pts[0];
    let mut s = 0.0;
    for i in 1..n - 1 {
        let a = pts[i];
        let b = pts[i + 1];
        s += (a.x - o.x) * (b.y - o.y) - (b.x - o.x) * (a.y - o.y);
    }
    0.5 * s
}

/// Row prefix sums of cell masses, for the fast mass under a convex polygon.
pub(crate) struct RowPrefix {
    west: f64,
    north: f64,
    cell: f64,
    rows: usize,
    cols: usize,
    /// `rows x (cols + 1)`: `prefix[r][k] = Σ_{c<k} m[r][c]`.
    prefix: Vec<f64>,
}

/// Nodes of the two-point Gauss-Legendre rule on 0..1.
const GAUSS2: [f64; 2] = [0.211_324_865_405_187_1, 0.788_675_134_594_812_9];

impl RowPrefix {
    pub(crate) fn new(grid: &GridSpec, mass: &Array2<f64>) -> Self {
        let (rows, cols) = mass.dim();
        let mut prefix = vec![0.0; rows * (cols + 1)];
        for (r, row) in mass.rows().into_iter().enumerate() {
            let out = &mut prefix[r * (cols + 1)..(r + 1) * (cols + 1)];
            let mut s = 0.0;
            for (c, &m) in row.iter().enumerate() {
                s += m;
                out[c + 1] = s;
            }
        }
        Self {
            west: grid.west_m(),
            north: grid.north_m(),
            cell: grid.cell_m(),
            rows,
            cols,
            prefix,
        }
    }

    /// Cell side, metres.
    pub(crate) fn cell_m(&self) -> f64 {
        self.cell
    }

    /// The same masses on cells twice as large (2 x 2 sums; a last odd row or column makes
    /// a cell that reaches past the grid edge, its mass spread over the whole cell).
    pub(crate) fn coarsen(&self) -> Self {
        let (rows, cols) = (self.rows.div_ceil(2), self.cols.div_ceil(2));
        let mut prefix = vec![0.0; rows * (cols + 1)];
        let w = self.cols + 1;
        for r in 0..rows {
            let out = &mut prefix[r * (cols + 1)..(r + 1) * (cols + 1)];
            for fr in [2 * r, 2 * r + 1] {
                if fr >= self.rows {
                    continue;
                }
                let p = &self.prefix[fr * w..(fr + 1) * w];
                for c in 0..cols {
                    // Running sum over coarse columns: prefix at fine column 2(c + 1).
                    out[c + 1] += p[(2 * c + 2).min(self.cols)];
                }
            }
        }
        Self {
            west: self.west,
            north: self.north,
            cell: 2.0 * self.cell,
            rows,
            cols,
            prefix,
        }
    }

    /// Mass of row `r` between fractional columns `x0 <= x1` (mass uniform within a cell).
    #[inline]
    fn row_between(&self, r: usize, x0: f64, x1: f64) -> f64 {
        let p = &self.prefix[r * (self.cols + 1)..(r + 1) * (self.cols + 1)];
        let at = |x: f64| {
            let x = x.clamp(0.0, self.cols as f64);
            // x >= 0, so truncation is the floor.
            let k = (x as usize).min(self.cols - 1);
            let f = x - k as f64;
            p[k] + f * (p[k + 1] - p[k])
        };
        at(x1) - at(x0)
    }

    /// Mass under a convex polygon, cell masses taken as uniform within each cell: exact in
    /// the vertical direction (each row is clipped to the polygon's y-range) and a two-point
    /// Gauss rule for the x-extent within a row, so exact for axis-aligned rectangles and
    /// within a fraction of the boundary cells' mass otherwise.
    pub(crate) fn mass_under(&self, poly: &Convex) -> f64 {
        let (ymin, ymax) = poly.y_range();
        let r0 = ((self.north - ymax) / self.cell).floor().max(0.0);
        let r1 = ((self.north - ymin) / self.cell)
            .ceil()
            .min(self.rows as f64);
        if r0.is_nan() || r1.is_nan() || r0 >= r1 {
            return 0.0;
        }
        let mut total = 0.0;
        for r in (r0 as usize)..(r1 as usize) {
            let top = self.north - r as f64 * self.cell;
            let y_hi = top.min(ymax);
            let y_lo = (top - self.cell).max(ymin);
            if y_hi <= y_lo {
                continue;
            }
            let mut row = 0.0;
            for g in GAUSS2 {
                let y = y_lo + g * (y_hi - y_lo);
                if let Some((xa, xb)) = poly.x_at(y) {
                    row += self.row_between(
                        r,
                        (xa - self.west) / self.cell,
                        (xb - self.west) / self.cell,
                    );
                }
            }
            total += 0.5 * row * (y_hi - y_lo) / self.cell;
        }
        total
    }
}

/// Corners of a rectangle of `long_m` along the grid bearing `theta_deg` and `short_m` across
/// it, centred on `center`.
pub(crate) fn rectangle(center: Coord<f64>, theta_deg: f64, long_m: f64, short_m: f64) -> Convex {
    let (u, v) = axes(theta_deg);
    let (hl, hs) = (0.5 * long_m, 0.5 * short_m);
    let at = |a: f64, b: f64| Coord {
        x: center.x + u.x * a + v.x * b,
        y: center.y + u.y * a + v.y * b,
    };
    Convex::new(vec![at(-hl, -hs), at(hl, -hs), at(hl, hs), at(-hl, hs)])
}

/// Unit vectors along a grid bearing and 90° to its right.
pub(crate) fn axes(theta_deg: f64) -> (Coord<f64>, Coord<f64>) {
    let t = theta_deg.to_radians();
    let (s, c) = t.sin_cos();
    (Coord { x: s, y: c }, Coord { x: c, y: -s })
}

#[cfg(test)]
mod tests {
    use super::*;
    use seekgrid_core::DEFAULT_MAX_CELLS;

    fn grid() -> GridSpec {
        GridSpec::new(0.0, 1000.0, 50.0, 20, 20, DEFAULT_MAX_CELLS).unwrap()
    }

    fn masses(g: &GridSpec) -> Array2<f64> {
        Array2::from_shape_fn((g.rows(), g.cols()), |(r, c)| {
            ((r * 7 + c * 13) % 11) as f64 / 1000.0
        })
    }

    /// Slow reference: each cell's exactly clipped area.
    fn exact_mass(g: &GridSpec, m: &Array2<f64>, poly: &Convex) -> f64 {
        let mut s = 0.0;
        for r in 0..g.rows() {
            for c in 0..g.cols() {
                let b = g.cell_box(r, c);
                s += m[[r, c]] * poly.area_in_box(b.west_m, b.south_m, b.east_m, b.north_m)
                    / g.cell_area_m2();
            }
        }
        s
    }

    #[test]
    fn clipped_area_of_a_rotated_rectangle_adds_up_to_its_area() {
        let g = grid();
        let poly = rectangle(Coord { x: 480.0, y: 510.0 }, 27.0, 600.0, 230.0);
        let (_, _, f) = poly.cell_fractions(&g).unwrap();
        assert!((f.sum() * g.cell_area_m2() - 600.0 * 230.0).abs() < 1e-6);
    }

    #[test]
    fn fast_mass_is_exact_for_axis_aligned_rectangles_and_close_for_rotated_ones() {
        let g = grid();
        let m = masses(&g);
        let rp = RowPrefix::new(&g, &m);
        let aligned = rectangle(Coord { x: 433.0, y: 517.0 }, 0.0, 610.0, 233.0);
        assert!((rp.mass_under(&aligned) - exact_mass(&g, &m, &aligned)).abs() < 1e-12);
        for theta in [10.0, 27.0, 45.0, 80.0, 133.0] {
            let rot = rectangle(Coord { x: 480.0, y: 510.0 }, theta, 600.0, 230.0);
            let exact = exact_mass(&g, &m, &rot);
            let fast = rp.mass_under(&rot);
            // Boundary cells only: well under 1 % for a rectangle some 5 x 12 cells across.
            assert!(
                (fast - exact).abs() <= 0.01 * exact,
                "{theta}: {fast} vs {exact}"
            );
        }
    }

    #[test]
    fn coarse_prefix_keeps_the_mass_of_aligned_blocks() {
        let g = grid();
        let m = masses(&g);
        let rp = RowPrefix::new(&g, &m);
        let c = rp.coarsen().coarsen();
        assert_eq!(c.cell_m(), 200.0);
        // A block aligned with the 200 m cells holds the same mass at both resolutions.
        let block = rectangle(Coord { x: 300.0, y: 500.0 }, 0.0, 200.0, 600.0);
        assert!((c.mass_under(&block) - rp.mass_under(&block)).abs() < 1e-12);
        let all = rectangle(Coord { x: 500.0, y: 500.0 }, 0.0, 1000.0, 1000.0);
        assert!((c.mass_under(&all) - m.sum()).abs() < 1e-12);
    }

    #[test]
    fn rectangles_sharing_an_edge_do_not_overlap_but_crossing_ones_do() {
        let a = rectangle(Coord { x: 0.0, y: 0.0 }, 30.0, 100.0, 40.0);
        let (_, v) = axes(30.0);
        let b = rectangle(
            Coord {
                x: 40.0 * v.x,
                y: 40.0 * v.y,
            },
            30.0,
            100.0,
            40.0,
        );
        assert!(!a.overlaps(&b, 1e-6));
        let c = rectangle(Coord { x: 10.0, y: 0.0 }, 120.0, 100.0, 40.0);
        assert!(a.overlaps(&c, 1e-6));
        assert!(a.contains(Coord { x: 1.0, y: 1.0 }));
        assert!(!a.contains(Coord { x: 100.0, y: 1.0 }));
    }
}
