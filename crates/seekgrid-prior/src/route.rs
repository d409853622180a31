//! Route scenarios: uniform along a polyline, normal across track.
//!
//! Each leg of length L is a uniform line source convolved with an isotropic normal of sigma σ;
//! in leg coordinates (u along from its start, v across) its density is
//! (1/L) [Φ(u/σ) - Φ((u - L)/σ)] φ(v/σ)/σ, which integrates to 1 over the plane. Legs are
//! weighted by length, so the route's density is Σ_legs [Φ(u/σ) - Φ((u - L)/σ)] φ(v/σ)/(σ L_total)
//! (derived: the uniform segment convolved with the normal; the along-track integral of φ is a
//! Φ-difference, the across-track factor is φ itself). The density is integrated over each cell with a tensor
//! composite Gauss-Legendre rule whose panels are at most half a sigma wide.
//!
//! Only points within [`crate::point::CUTOFF_SIGMAS`] sigmas of a leg are visited; the mass
//! beyond, 2Φ(-7.6) = 3e-14 of the route, is left out.

use crate::point::CUTOFF_SIGMAS;
use crate::quad::{Composite, INV_SQRT_2PI, normal_interval};
use crate::window::Window;
use geo::Coord;
use ndarray::Axis;
use ndarray::parallel::prelude::*;
use seekgrid_core::GridSpec;

struct Leg {
    a: Coord<f64>,
    b: Coord<f64>,
    /// Unit vector along the leg.
    d: Coord<f64>,
    length_m: f64,
}

/// Cell masses of a route; `None` when its cut-off band misses the grid.
pub(crate) fn route_window(
    waypoints: &[Coord<f64>],
    sigma_m: f64,
    grid: &GridSpec,
) -> Option<Window> {
    let h = grid.cell_m();
    // Grid-local coordinates: x east of the west edge, y north of the north edge.
    let local: Vec<Coord<f64>> = waypoints
        .iter()
        .map(|p| Coord {
            x: p.x - grid.west_m(),
            y: p.y - grid.north_m(),
        })
        .collect();
    let legs: Vec<Leg> = local
        .windows(2)
        .filter_map(|w| {
            let (a, b) = (w[0], w[1]);
            let length_m = (b.x - a.x).hypot(b.y - a.y);
            (length_m > 0.0).then(|| Leg {
                a,
                b,
                d: Coord {
                    x: (b.x - a.x) / length_m,
                    y: (b.y - a.y) / length_m,
                },
                length_m,
            })
        })
        .collect();
    let total_m: f64 = seekgrid_core::neumaier_sum(legs.iter().map(|l| l.length_m));
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
    let mut w = Window::zeros(r0..r1, c0..c1);
    let rule = Composite::for_ratio(h / sigma_m);
    let cell_area = h * h;
    let inv_norm = INV_SQRT_2PI / (sigma_m * total_m);
    w.cells
        .axis_iter_mut(Axis(0))
        .into_par_iter()
        .enumerate()
        .for_each(|(i, mut row)| {
            let r = r0 + i;
            let ya = -((r + 1) as f64) * h;
            let yb = -(r as f64) * h;
            let out = row.as_slice_mut().expect("window rows are contiguous");
            for leg in &legs {
                let Some((xlo, xhi)) = x_range_in_band(leg, ya - reach, yb + reach) else {
                    continue;
                };
                let ca = ((xlo - reach) / h).floor().max(c0 as f64) as usize;
                let cb = (((xhi + reach) / h).ceil().min(c1 as f64) as usize).max(ca);
                for c in ca..cb {
                    let xa = c as f64 * h;
                    let mut acc = 0.0;
                    for (ty, wy) in rule.nodes.iter().zip(&rule.weights) {
                        let y = ya + h * ty - leg.a.y;
                        let mut row_acc = 0.0;
                        for (tx, wx) in rule.nodes.iter().zip(&rule.weights) {
                            let x = xa + h * tx - leg.a.x;
                            let v = (-x * leg.d.y + y * leg.d.x) / sigma_m;
                            if v.abs() > CUTOFF_SIGMAS {
                                continue;
                            }
                            let u = (x * leg.d.x + y * leg.d.y) / sigma_m;
                            let l = leg.length_m / sigma_m;
                            let along = if u > CUTOFF_SIGMAS && u < l - CUTOFF_SIGMAS {
                                1.0
                            } else {
                                normal_interval(u - l, u)
                            };
                            row_acc += wx * along * (-0.5 * v * v).exp();
                        }
                        acc += wy * row_acc;
                    }
                    out[c - c0] += acc * inv_norm * cell_area;
                }
            }
        });
    Some(w)
}

/// The x-range of the part of a leg with y in [ylo, yhi]; `None` when there is none.
fn x_range_in_band(leg: &Leg, ylo: f64, yhi: f64) -> Option<(f64, f64)> {
    let (a, b) = (leg.a, leg.b);
    let dy = b.y - a.y;
    let (t0, t1) = if dy == 0.0 {
        if a.y < ylo || a.y > yhi {
            return None;
        }
        (0.0, 1.0)
    } else {
        let ta = (ylo - a.y) / dy;
        let tb = (yhi - a.y) / dy;
        (ta.min(tb).max(0.0), ta.max(tb).min(1.0))
    };
    if t0 > t1 {
        return None;
    }
    let xa = a.x + t0 * (b.x - a.x);
    let xb = a.x + t1 * (b.x - a.x);
    Some((xa.min(xb), xa.max(xb)))
}
