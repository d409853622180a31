//! Route scenarios: uniform along a polyline, normal across track.
//!
//! Each leg of length L is a uniform line source convolved with an isotropic normal of sigma σ;
//! in leg coordinates (u along from its start, v across) its density is
//! (1/L) [Φ(u/σ) - Φ((u - L)/σ)] φ(v/σ)/σ, which integrates to 1 over the plane (derived: the
//! uniform segment convolved with the normal; the along-track integral of φ is a Φ-difference,
//! the across-track factor is φ itself). Legs are weighted by length.
//!
//! Cell integration uses the same convolution the other way round: the mass of a cell is
//! (1/L_total) Σ_legs ∫_0^L G(a + t d) dt, with G(q) the mass in the cell of the isotropic
//! normal centred at q, which is separable: [Φ-difference in x] x [Φ-difference in y]. The
//! integral over t is a composite Gauss-Legendre rule with panels under two sigmas, so every
//! node costs two short vectors of normal-CDF differences and one outer product over the cells
//! within [`crate::point::CUTOFF_SIGMAS`] sigmas of it (the mass beyond, 4Φ(-7.6) = 6e-14 per
//! node, is left out). Exact in x and y, quadrature only along the track.

use crate::point::CUTOFF_SIGMAS;
use crate::quad::{Composite, normal_interval};
use crate::window::Window;
use geo::Coord;
use ndarray::parallel::prelude::*;
use seekgrid_core::GridSpec;

/// One quadrature node along the route: its weight and the cell-mass factors of the isotropic
/// normal centred on it, per column from `col0` and per row from `row0` (grid indices).
struct Node {
    weight: f64,
    col0: usize,
    px: Vec<f64>,
    row0: usize,
    py: Vec<f64>,
}

/// Cell masses of a route; `None` when its cut-off band misses the grid.
pub(crate) fn route_window(
    waypoints: &[Coord<f64>],
    sigma_m: f64,
    grid: &GridSpec,
) -> Option<Window> {
    let h = grid.cell_m();
    // Grid-local coordinates: x east of the west edge, y north of the north edge (<= 0 inside).
    let local: Vec<Coord<f64>> = waypoints
        .iter()
        .map(|p| Coord {
            x: p.x - grid.west_m(),
            y: p.y - grid.north_m(),
        })
        .collect();
    let legs: Vec<(Coord<f64>, Coord<f64>, f64)> = local
        .windows(2)
        .filter_map(|w| {
            let length_m = (w[1].x - w[0].x).hypot(w[1].y - w[0].y);
            (length_m > 0.0).then_some((w[0], w[1], length_m))
        })
        .collect();
    let total_m: f64 = seekgrid_core::neumaier_sum(legs.iter().map(|l| l.2));
    if legs.is_empty() || total_m <= 0.0 {
        return None;
    }
    let reach = CUTOFF_SIGMAS * sigma_m;
    let bbox = seekgrid_core::ProjectedBox::of_points(local.iter().copied())?.expanded(reach);
    let c0 = (bbox.west_m / h).floor().max(0.0);
    let c1 = (bbox.east_m / h).ceil().min(grid.cols() as f64);
    let r0 = (-bbox.north_m / h).floor().max(0.0);
    let r1 = (-bbox.south_m / h).ceil().min(grid.rows() as f64);
    if !(c0 < c1 && r0 < r1) {
        return None;
    }
    let (c0, c1, r0, r1) = (c0 as usize, c1 as usize, r0 as usize, r1 as usize);
    let positions: Vec<(Coord<f64>, f64)> = legs
        .iter()
        .flat_map(|&(a, b, length_m)| {
            let rule = Composite::for_ratio(length_m / sigma_m);
            rule.nodes.into_iter().zip(rule.weights).map(move |(t, w)| {
                let q = Coord {
                    x: a.x + t * (b.x - a.x),
                    y: a.y + t * (b.y - a.y),
                };
                (q, w * length_m / total_m)
            })
        })
        .collect();
    let nodes: Vec<Node> = positions
        .par_iter()
        .filter_map(|&(q, weight)| {
            let ca = ((q.x - reach) / h).floor().max(c0 as f64) as usize;
            let cb = (((q.x + reach) / h).ceil().min(c1 as f64) as usize).max(ca);
            let ra = (-(q.y + reach) / h).floor().max(r0 as f64) as usize;
            let rb = ((-(q.y - reach) / h).ceil().min(r1 as f64) as usize).max(ra);
            if ca >= cb || ra >= rb {
                return None;
            }
            let px = (ca..cb)
                .map(|c| {
                    normal_interval(
                        (c as f64 * h - q.x) / sigma_m,
                        ((c + 1) as f64 * h - q.x) / sigma_m,
                    )
                })
                .collect();
            let py = (ra..rb)
                .map(|r| {
                    normal_interval(
                        (-((r + 1) as f64) * h - q.y) / sigma_m,
                        (-(r as f64) * h - q.y) / sigma_m,
                    )
                })
                .collect();
            Some(Node {
                weight,
                col0: ca,
                px,
                row0: ra,
                py,
            })
        })
        .collect();
    let mut w = Window::zeros(r0..r1, c0..c1);
    w.fill_rows(|r, mut row| {
        let out = row.as_slice_mut().expect("window rows are contiguous");
        for n in &nodes {
            if r < n.row0 || r >= n.row0 + n.py.len() {
                continue;
            }
            let f = n.weight * n.py[r - n.row0];
            if f == 0.0 {
                continue;
            }
            let dst = &mut out[n.col0 - c0..n.col0 - c0 + n.px.len()];
            for (d, p) in dst.iter_mut().zip(&n.px) {
                *d += f * p;
            }
        }
    });
    Some(w)
}
