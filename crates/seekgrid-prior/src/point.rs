//! Point scenarios: the bivariate normal integrated over each cell.
//!
//! * Circular or axis-aligned: the cell mass is the exact product of two normal-CDF
//!   differences, Φ-differences in x times Φ-differences in y (independent marginals).
//! * Rotated ellipse: P(cell) = ∫_{y0}^{y1} φ_y(y) [Φ((x1 - m(y))/s) - Φ((x0 - m(y))/s)] dy,
//!   with the conditional normal X | Y = y ~ N(m(y), s²), m(y) = μx + (cov/σy²)(y - μy),
//!   s = σ1 σ2 / σy (the conditional law of a bivariate normal, e.g. Tong, *The Multivariate
//!   Normal Distribution*, 1990), integrated
//!   over y by composite Gauss-Legendre ([`crate::quad::Composite`]) with the nodes shared by a
//!   whole row of cells.
//!
//! Only cells that meet the Mahalanobis-[`CUTOFF_SIGMAS`] ellipse are visited; the mass beyond
//! it, exp(-7.6²/2) = 2.9e-13, is left out (it is counted as outside the grid).

use crate::quad::{Composite, normal_interval, phi_pdf};
use crate::window::Window;
use geo::Coord;
use ndarray::Axis;
use ndarray::parallel::prelude::*;
use seekgrid_core::GridSpec;
use std::f64::consts::FRAC_1_SQRT_2;

/// Cut-off radius in sigmas (Mahalanobis) of the cells visited for a normal density: the mass
/// outside is exp(-k²/2) = 2.9e-13 (bivariate normal; common practice; computed).
pub(crate) const CUTOFF_SIGMAS: f64 = 7.6;

/// Marginal sigmas (σx, σy) and covariance of an ellipse given by its axis sigmas and the grid
/// bearing of the major axis (clockwise from grid north), metres and square metres.
pub(crate) fn marginals(
    sigma_major_m: f64,
    sigma_minor_m: f64,
    bearing_deg: f64,
) -> (f64, f64, f64) {
    let (s, c) = bearing_deg.to_radians().sin_cos();
    let a2 = sigma_major_m * sigma_major_m;
    let b2 = sigma_minor_m * sigma_minor_m;
    // Major axis (s, c) (x east, y north), minor axis (c, -s).
    let var_x = a2 * s * s + b2 * c * c;
    let var_y = a2 * c * c + b2 * s * s;
    let cov = (a2 - b2) * s * c;
    (var_x.sqrt(), var_y.sqrt(), cov)
}

/// Cell masses of a bivariate normal; `None` when its cut-off ellipse misses the grid.
pub(crate) fn point_window(
    center: Coord<f64>,
    sigma_major_m: f64,
    sigma_minor_m: f64,
    bearing_deg: f64,
    grid: &GridSpec,
) -> Option<Window> {
    let (sx, sy, cov) = marginals(sigma_major_m, sigma_minor_m, bearing_deg);
    let h = grid.cell_m();
    // Grid-local coordinates: x east of the west edge, y north of the north edge (so <= 0).
    let mx = center.x - grid.west_m();
    let my = center.y - grid.north_m();
    let k = CUTOFF_SIGMAS;
    let c0 = ((mx - k * sx) / h).floor().max(0.0);
    let c1 = ((mx + k * sx) / h).ceil().min(grid.cols() as f64);
    let r0 = (-(my + k * sy) / h).floor().max(0.0);
    let r1 = (-(my - k * sy) / h).ceil().min(grid.rows() as f64);
    if !(c0 < c1 && r0 < r1) {
        return None;
    }
    let (c0, c1, r0, r1) = (c0 as usize, c1 as usize, r0 as usize, r1 as usize);
    let mut w = Window::zeros(r0..r1, c0..c1);
    let aligned = cov.abs() <= 1e-12 * sigma_major_m * sigma_major_m;
    if aligned {
        let px: Vec<f64> = (c0..c1)
            .map(|c| normal_interval((c as f64 * h - mx) / sx, ((c + 1) as f64 * h - mx) / sx))
            .collect();
        let py: Vec<f64> = (r0..r1)
            .map(|r| {
                normal_interval(
                    (-((r + 1) as f64) * h - my) / sy,
                    (-(r as f64) * h - my) / sy,
                )
            })
            .collect();
        w.cells
            .axis_iter_mut(Axis(0))
            .into_par_iter()
            .zip(py.par_iter())
            .for_each(|(mut row, &fy)| {
                for (v, &fx) in row.iter_mut().zip(&px) {
                    *v = fx * fy;
                }
            });
        return Some(w);
    }
    let slope = cov / (sy * sy);
    let s = sigma_major_m * sigma_minor_m / sy;
    // Length scale in y on which the integrand varies: the y-marginal's sigma, or the distance
    // over which the conditional mean moves by one conditional sigma.
    let scale = sy.min(s / slope.abs());
    let y_left = my - k * cov / sx; // y of the ellipse's westmost point
    let y_right = my + k * cov / sx; // y of its eastmost point
    let half_width = |y: f64| {
        let t = (y - my) / sy;
        s * (k * k - t * t).max(0.0).sqrt()
    };
    w.fill_rows(|r, mut row| {
        let ya = (-((r + 1) as f64) * h).max(my - k * sy);
        let yb = (-(r as f64) * h).min(my + k * sy);
        if ya >= yb {
            return;
        }
        let xl = if (ya..=yb).contains(&y_left) {
            mx - k * sx
        } else {
            (mx + slope * (ya - my) - half_width(ya)).min(mx + slope * (yb - my) - half_width(yb))
        };
        let xr = if (ya..=yb).contains(&y_right) {
            mx + k * sx
        } else {
            (mx + slope * (ya - my) + half_width(ya)).max(mx + slope * (yb - my) + half_width(yb))
        };
        let ca = ((xl / h).floor().max(c0 as f64) as usize).min(c1);
        let cb = ((xr / h).ceil().min(c1 as f64) as usize).max(ca);
        if ca >= cb {
            return;
        }
        let rule = Composite::for_ratio((yb - ya) / scale);
        let n_edges = cb - ca + 1;
        let mut g = vec![0.0; n_edges];
        let out = row.as_slice_mut().expect("window rows are contiguous");
        for (t, wt) in rule.nodes.iter().zip(&rule.weights) {
            let y = ya + (yb - ya) * t;
            let weight = (yb - ya) * wt * phi_pdf((y - my) / sy) / sy;
            if weight == 0.0 {
                continue;
            }
            let m = mx + slope * (y - my);
            // g[e] = Φ(z) for z < 0 and Φ(z) - 1 = -Q(z) for z >= 0, so that differences
            // keep their precision in both tails; crossing z = 0 adds the 1 back.
            let mut split = n_edges;
            for (e, ge) in g.iter_mut().enumerate() {
                let z = ((ca + e) as f64 * h - m) / s;
                *ge = if z < 0.0 {
                    0.5 * crate::erfc::erfc(-z * FRAC_1_SQRT_2)
                } else {
                    split = split.min(e);
                    -0.5 * crate::erfc::erfc(z * FRAC_1_SQRT_2)
                };
            }
            for e in 0..n_edges - 1 {
                let one = if e + 1 == split { 1.0 } else { 0.0 };
                let d = (g[e + 1] - g[e] + one).max(0.0);
                out[ca - c0 + e] += weight * d;
            }
        }
    });
    Some(w)
}
