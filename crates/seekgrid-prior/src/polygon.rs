//! Exact cell-polygon overlap areas.
//!
//! For each ring, per row of cells: the ring is clipped to the row's band (Sutherland-Hodgman
//! against two horizontal lines; clipping a simple polygon against a convex window keeps the
//! signed area exact, the pieces being joined by degenerate edges along the window boundary:
//! Sutherland & Hodgman, "Reentrant polygon clipping", CACM 17:32-42, 1974). Cells crossed by a
//! ring edge are clipped once more against their two vertical edges and get the shoelace area;
//! every other cell of the row lies wholly inside or outside the ring, and one point-in-polygon
//! test on the band polygon decides each run of them. A polygon's area is its exterior's minus
//! its holes'.
//!
//! Written by hand rather than with geo's boolean operations per cell: one clip per boundary
//! cell of an already band-clipped ring is far cheaper than a general overlay, and exact.

use crate::window::Window;
use geo::{LineString, MultiPolygon};
use ndarray::Axis;
use ndarray::parallel::prelude::*;
use seekgrid_core::GridSpec;

type P = (f64, f64);

/// Overlap of each cell with the polygons, as a fraction of the cell's area (0..=1), for the
/// window of grid cells that the polygons' bounding box covers; `None` when it misses the grid.
pub(crate) fn overlap_fractions(polygons: &MultiPolygon<f64>, grid: &GridSpec) -> Option<Window> {
    let h = grid.cell_m();
    let to_cell = |c: &geo::Coord<f64>| ((c.x - grid.west_m()) / h, (grid.north_m() - c.y) / h);
    let mut umin = f64::INFINITY;
    let mut umax = f64::NEG_INFINITY;
    let mut vmin = f64::INFINITY;
    let mut vmax = f64::NEG_INFINITY;
    for p in &polygons.0 {
        for c in p.exterior().coords() {
            let (u, v) = to_cell(c);
            umin = umin.min(u);
            umax = umax.max(u);
            vmin = vmin.min(v);
            vmax = vmax.max(v);
        }
    }
    let c0 = umin.floor().max(0.0);
    let c1 = umax.ceil().min(grid.cols() as f64);
    let r0 = vmin.floor().max(0.0);
    let r1 = vmax.ceil().min(grid.rows() as f64);
    if !(c0 < c1 && r0 < r1) {
        return None;
    }
    let mut w = Window::zeros(r0 as usize..r1 as usize, c0 as usize..c1 as usize);
    for p in &polygons.0 {
        add_ring(p.exterior(), 1.0, &to_cell, &mut w);
        for hole in p.interiors() {
            add_ring(hole, -1.0, &to_cell, &mut w);
        }
    }
    w.cells.mapv_inplace(|v| v.clamp(0.0, 1.0));
    Some(w)
}

/// Adds `sign` times the overlap (in cell units) of one ring with each window cell.
fn add_ring(
    ring: &LineString<f64>,
    sign: f64,
    to_cell: &impl Fn(&geo::Coord<f64>) -> P,
    w: &mut Window,
) {
    let mut pts: Vec<P> = ring.coords().map(to_cell).collect();
    if pts.len() > 1 && pts.first() == pts.last() {
        pts.pop();
    }
    if pts.len() < 3 {
        return;
    }
    let orient = shoelace(&pts).signum();
    if orient == 0.0 {
        return;
    }
    let (nr, nc) = w.cells.dim();
    let (row0, col0) = (w.row0, w.col0);
    let col_end = col0 + nc;
    // Columns crossed by an edge, per window row, as inclusive ranges.
    let mut marks: Vec<Vec<(usize, usize)>> = vec![Vec::new(); nr];
    let n = pts.len();
    for i in 0..n {
        let (p, q) = (pts[i], pts[(i + 1) % n]);
        let (vlo, vhi) = (p.1.min(q.1), p.1.max(q.1));
        let ra = vlo.floor().max(row0 as f64);
        let rb = vhi.floor().min((row0 + nr) as f64 - 1.0);
        if ra > rb {
            continue;
        }
        for r in ra as usize..=rb as usize {
            let Some((ulo, uhi)) = u_range_in_band(p, q, r as f64, r as f64 + 1.0) else {
                continue;
            };
            let ca = ulo.floor().max(col0 as f64);
            let cb = uhi.floor().min(col_end as f64 - 1.0);
            if ca <= cb {
                marks[r - row0].push((ca as usize, cb as usize));
            }
        }
    }
    w.cells
        .axis_iter_mut(Axis(0))
        .into_par_iter()
        .zip(marks.into_par_iter())
        .enumerate()
        .for_each(|(i, (mut row, mut ranges))| {
            let r = (row0 + i) as f64;
            let band = clip(&clip(&pts, Side::VMin(r)), Side::VMax(r + 1.0));
            if band.len() < 3 {
                return;
            }
            ranges.sort_unstable();
            let mut boundary: Vec<(usize, usize)> = Vec::with_capacity(ranges.len());
            for (a, b) in ranges {
                match boundary.last_mut() {
                    Some(last) if a <= last.1 + 1 => last.1 = last.1.max(b),
                    _ => boundary.push((a, b)),
                }
            }
            let out = row.as_slice_mut().expect("window rows are contiguous");
            let mut next_free = col0;
            let fill_run = |from: usize, to: usize, out: &mut [f64]| {
                if from < to && contains(&band, (from as f64 + 0.5, r + 0.5)) {
                    for v in &mut out[from - col0..to - col0] {
                        *v += sign;
                    }
                }
            };
            for &(a, b) in &boundary {
                fill_run(next_free, a, out);
                for c in a..=b {
                    let cf = c as f64;
                    let piece = clip(&clip(&band, Side::UMin(cf)), Side::UMax(cf + 1.0));
                    if piece.len() >= 3 {
                        let area = (orient * shoelace(&piece)).clamp(0.0, 1.0);
                        out[c - col0] += sign * area;
                    }
                }
                next_free = b + 1;
            }
            fill_run(next_free, col_end, out);
        });
}

/// The u-range of the part of segment p-q with v in [vlo, vhi].
fn u_range_in_band(p: P, q: P, vlo: f64, vhi: f64) -> Option<(f64, f64)> {
    let dv = q.1 - p.1;
    let (t0, t1) = if dv == 0.0 {
        if p.1 < vlo || p.1 > vhi {
            return None;
        }
        (0.0, 1.0)
    } else {
        let ta = (vlo - p.1) / dv;
        let tb = (vhi - p.1) / dv;
        (ta.min(tb).max(0.0), ta.max(tb).min(1.0))
    };
    if t0 > t1 {
        return None;
    }
    let ua = p.0 + t0 * (q.0 - p.0);
    let ub = p.0 + t1 * (q.0 - p.0);
    Some((ua.min(ub), ua.max(ub)))
}

#[derive(Clone, Copy)]
enum Side {
    UMin(f64),
    UMax(f64),
    VMin(f64),
    VMax(f64),
}

impl Side {
    fn inside(self, p: P) -> bool {
        match self {
            Side::UMin(a) => p.0 >= a,
            Side::UMax(a) => p.0 <= a,
            Side::VMin(a) => p.1 >= a,
            Side::VMax(a) => p.1 <= a,
        }
    }

    /// The point where segment p-q crosses the clip line (p and q on opposite sides).
    fn cross(self, p: P, q: P) -> P {
        match self {
            Side::UMin(a) | Side::UMax(a) => {
                let t = (a - p.0) / (q.0 - p.0);
                (a, p.1 + t * (q.1 - p.1))
            }
            Side::VMin(a) | Side::VMax(a) => {
                let t = (a - p.1) / (q.1 - p.1);
                (p.0 + t * (q.0 - p.0), a)
            }
        }
    }
}

/// Sutherland-Hodgman clip of a closed polygon (no repeated closing vertex) to a half-plane.
fn clip(poly: &[P], side: Side) -> Vec<P> {
    let mut out = Vec::with_capacity(poly.len() + 4);
    let n = poly.len();
    for i in 0..n {
        let cur = poly[i];
        let prev = poly[(i + n - 1) % n];
        let (ci, pi) = (side.inside(cur), side.inside(prev));
        if ci {
            if !pi {
                out.push(side.cross(prev, cur));
            }
            out.push(cur);
        } else if pi {
            out.push(side.cross(prev, cur));
        }
    }
    out
}

/// Signed shoelace area (positive for counter-clockwise in (u, v)), about the first vertex so
/// that far-from-origin coordinates lose no precision.
fn shoelace(poly: &[P]) -> f64 {
    let n = poly.len();
    let o = poly[0];
    let mut acc = 0.0;
    for i in 1..n.saturating_sub(1) {
        let (a, b) = (poly[i], poly[i + 1]);
        acc += (a.0 - o.0) * (b.1 - o.1) - (b.0 - o.0) * (a.1 - o.1);
    }
    0.5 * acc
}

/// Even-odd point-in-polygon test (W. R. Franklin's crossing test).
fn contains(poly: &[P], p: P) -> bool {
    let n = poly.len();
    let mut inside = false;
    let mut j = n - 1;
    for i in 0..n {
        let (a, b) = (poly[i], poly[j]);
        if (a.1 > p.1) != (b.1 > p.1) {
            let x = a.0 + (p.1 - a.1) * (b.0 - a.0) / (b.1 - a.1);
            if p.0 < x {
                inside = !inside;
            }
        }
        j = i;
    }
    inside
}
