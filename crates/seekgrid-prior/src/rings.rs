//! Rings scenarios: a distance distribution about the initial planning point.
//!
//! [`RingInterpolation::UniformPerRing`]: each ring's share is spread evenly over the ring, and
//! a cell's mass is Σ_k d_k (A(cell ∩ disc r_k) - A(cell ∩ disc r_{k-1})) with the exact,
//! closed-form area A of a rectangle meeting a disc.
//!
//! [`RingInterpolation::MonotoneCubic`]: the distance CDF F(r) is the monotone cubic through
//! (0, 0) and the quantiles, so the density is F'(r) / (2 pi r) and a cell's mass is
//! ∫ F'(r) θ(r) / (2 pi) dr, θ(r) the angle of the circle of radius r inside the cell
//! (θ = A'(r)/r, in closed form). The integral runs over the pieces between the radii where θ
//! or F' change form (cell edges' and corners' distances, the quantile radii), each mapped by
//! r = a + (b - a)(1 - cos t)/2 so that the square-root behaviour of θ at tangencies becomes
//! smooth, then 12-point Gauss-Legendre in t.

use crate::model::RingInterpolation;
use crate::quad::GaussLegendre;
use crate::window::Window;
use geo::Coord;
use seekgrid_core::GridSpec;
use std::f64::consts::PI;

/// Annuli of constant density: outer radii (ascending, metres) and the density in each (per
/// square metre).
pub(crate) struct Annuli {
    pub radii_m: Vec<f64>,
    pub density_per_m2: Vec<f64>,
}

/// The annuli of a uniform-per-ring scenario.
pub(crate) fn annuli(quantiles: &[(f64, f64)]) -> Annuli {
    let mut radii_m = Vec::new();
    let mut density_per_m2 = Vec::new();
    let (mut f0, mut r0) = (0.0, 0.0);
    for &(f, r) in quantiles {
        radii_m.push(r);
        density_per_m2.push((f - f0) / (PI * (r * r - r0 * r0)));
        (f0, r0) = (f, r);
    }
    Annuli {
        radii_m,
        density_per_m2,
    }
}

/// Cell masses of a ring scenario; `None` when the outer ring misses the grid.
pub(crate) fn rings_window(
    center: Coord<f64>,
    quantiles: &[(f64, f64)],
    interpolation: RingInterpolation,
    grid: &GridSpec,
) -> Option<Window> {
    let outer = quantiles.last()?.1;
    let h = grid.cell_m();
    let cx = center.x - grid.west_m();
    let cy = center.y - grid.north_m();
    let c0 = ((cx - outer) / h).floor().max(0.0);
    let c1 = ((cx + outer) / h).ceil().min(grid.cols() as f64);
    let r0 = (-(cy + outer) / h).floor().max(0.0);
    let r1 = (-(cy - outer) / h).ceil().min(grid.rows() as f64);
    if !(c0 < c1 && r0 < r1) {
        return None;
    }
    let (c0, c1, r0, r1) = (c0 as usize, c1 as usize, r0 as usize, r1 as usize);
    let mut w = Window::zeros(r0..r1, c0..c1);
    match interpolation {
        RingInterpolation::UniformPerRing => uniform_cells(&mut w, &annuli(quantiles), h, cx, cy),
        RingInterpolation::MonotoneCubic => {
            cubic_cells(&mut w, &Pchip::through_origin(quantiles), h, cx, cy);
        }
    }
    Some(w)
}

/// Fills the window with uniform-per-ring masses; (cx, cy) is the centre in grid-local metres.
fn uniform_cells(w: &mut Window, an: &Annuli, h: f64, cx: f64, cy: f64) {
    let c0 = w.col0;
    let k_total = an.radii_m.len();
    let dens = |k: usize| {
        if k < k_total {
            an.density_per_m2[k]
        } else {
            0.0
        }
    };
    w.fill_rows(|r, mut row| {
        let y1 = -(r as f64) * h - cy;
        let y0 = y1 - h;
        for (j, v) in row.iter_mut().enumerate() {
            let x0 = (c0 + j) as f64 * h - cx;
            let x1 = x0 + h;
            let nx = 0.0_f64.clamp(x0, x1);
            let ny = 0.0_f64.clamp(y0, y1);
            let dmin = nx.hypot(ny);
            let dmax = x0.abs().max(x1.abs()).hypot(y0.abs().max(y1.abs()));
            let klo = an.radii_m.partition_point(|&rk| rk <= dmin);
            let khi = an.radii_m.partition_point(|&rk| rk < dmax);
            let mut m = h * h * dens(khi);
            for k in klo..khi.min(k_total) {
                m += disc_rect_area(x0, x1, y0, y1, an.radii_m[k]) * (dens(k) - dens(k + 1));
            }
            *v = m.max(0.0);
        }
    });
}

/// Fills the window with monotone-cubic masses; (cx, cy) is the centre in grid-local metres.
fn cubic_cells(w: &mut Window, pchip: &Pchip, h: f64, cx: f64, cy: f64) {
    let c0 = w.col0;
    let outer = *pchip.x.last().expect("at least one quantile");
    let gl = GaussLegendre::new(12);
    w.fill_rows(|r, mut row| {
        let y1 = -(r as f64) * h - cy;
        let y0 = y1 - h;
        let mut cuts = Vec::with_capacity(16 + pchip.x.len());
        for (j, v) in row.iter_mut().enumerate() {
            let x0 = (c0 + j) as f64 * h - cx;
            let x1 = x0 + h;
            let dmin = 0.0_f64.clamp(x0, x1).hypot(0.0_f64.clamp(y0, y1));
            let dmax = x0
                .abs()
                .max(x1.abs())
                .hypot(y0.abs().max(y1.abs()))
                .min(outer);
            if dmin >= dmax {
                *v = 0.0;
                continue;
            }
            cuts.clear();
            cuts.extend([dmin, dmax, x0.abs(), x1.abs(), y0.abs(), y1.abs()]);
            for &xx in &[x0, x1] {
                for &yy in &[y0, y1] {
                    cuts.push(xx.hypot(yy));
                }
            }
            cuts.extend(pchip.x.iter().copied());
            cuts.retain(|&c| c >= dmin && c <= dmax);
            cuts.sort_by(f64::total_cmp);
            cuts.dedup();
            let mut m = 0.0;
            for piece in cuts.windows(2) {
                let (a, b) = (piece[0], piece[1]);
                if b - a <= 0.0 {
                    continue;
                }
                let k = pchip.interval(0.5 * (a + b));
                let mut acc = 0.0;
                for (t, wt) in gl.nodes.iter().zip(&gl.weights) {
                    // r = a + (b - a)(1 - cos(pi t))/2, dr = (b - a) pi sin(pi t)/2 dt.
                    let (sn, cs) = (PI * t).sin_cos();
                    let rr = a + 0.5 * (b - a) * (1.0 - cs);
                    let jac = 0.5 * (b - a) * PI * sn;
                    acc += wt * jac * pchip.slope(k, rr) * arc_angle(x0, x1, y0, y1, rr);
                }
                m += acc;
            }
            *v = (m / (2.0 * PI)).max(0.0);
        }
    });
}

/// Area of the intersection of the rectangle [x0, x1] x [y0, y1] with the disc of radius `r`
/// about the origin (closed form: integrate the chord height sqrt(r² - x²) - y between the
/// clipped abscissae, ∫ = ½(x sqrt(r² - x²) + r² asin(x/r)) - y x).
pub(crate) fn disc_rect_area(x0: f64, x1: f64, y0: f64, y1: f64, r: f64) -> f64 {
    between_heights(y0, y1, |y| above(x0, x1, y, r))
}

/// The part of a disc-symmetric quantity between heights `y0 < y1`, from `above(y)`, its part
/// above the line at height `y >= 0` (the disc is symmetric about the x axis, so a band
/// below the axis is its mirror image).
fn between_heights(y0: f64, y1: f64, above: impl Fn(f64) -> f64) -> f64 {
    if y0 < 0.0 {
        if y1 <= 0.0 {
            above(-y1) - above(-y0)
        } else {
            let half = above(0.0);
            (half - above(-y0)) + (half - above(y1))
        }
    } else {
        above(y0) - above(y1)
    }
}

/// Angle (radians) of the circle of radius `r` about the origin that lies inside the rectangle:
/// A'(r)/r for A = [`disc_rect_area`] (differentiating its closed form: ∂/∂r of the chord
/// integral is r·asin(x/r); the clamping terms vanish).
pub(crate) fn arc_angle(x0: f64, x1: f64, y0: f64, y1: f64, r: f64) -> f64 {
    between_heights(y0, y1, |y| angle_above(x0, x1, y, r))
}

/// Angle of the circle's arc above the line y = `y` (y >= 0) with x between x0 and x1.
fn angle_above(x0: f64, x1: f64, y: f64, r: f64) -> f64 {
    if y >= r {
        return 0.0;
    }
    let s = (r * r - y * y).sqrt();
    let a = |x: f64| (x.clamp(-s, s) / r).clamp(-1.0, 1.0).asin();
    (a(x1) - a(x0)).max(0.0)
}

/// Area of the disc above the line y = `y` (y >= 0) between x0 and x1.
fn above(x0: f64, x1: f64, y: f64, r: f64) -> f64 {
    if y >= r {
        return 0.0;
    }
    let s = (r * r - y * y).sqrt();
    let g = |x: f64| {
        let x = x.clamp(-s, s);
        0.5 * (x * (r * r - x * x).max(0.0).sqrt() + r * r * (x / r).clamp(-1.0, 1.0).asin())
            - y * x
    };
    (g(x1) - g(x0)).max(0.0)
}

/// Monotone piecewise cubic Hermite interpolant (Fritsch & Carlson 1980, with the slope and end
/// rules of SciPy's `PchipInterpolator`: weighted harmonic mean inside, a shape-preserving
/// three-point formula at the ends). Written by hand: no maintained crate offers PCHIP.
pub(crate) struct Pchip {
    pub x: Vec<f64>,
    pub y: Vec<f64>,
    pub d: Vec<f64>,
}

impl Pchip {
    /// Through (0, 0) and the quantile pairs (fraction, radius) as points (radius, fraction).
    pub fn through_origin(quantiles: &[(f64, f64)]) -> Self {
        let mut x = vec![0.0];
        let mut y = vec![0.0];
        for &(f, r) in quantiles {
            x.push(r);
            y.push(f);
        }
        let n = x.len();
        let hs: Vec<f64> = (0..n - 1).map(|k| x[k + 1] - x[k]).collect();
        let del: Vec<f64> = (0..n - 1).map(|k| (y[k + 1] - y[k]) / hs[k]).collect();
        let mut d = vec![0.0; n];
        if n == 2 {
            d[0] = del[0];
            d[1] = del[0];
        } else {
            for k in 1..n - 1 {
                if del[k - 1] * del[k] > 0.0 {
                    let w1 = 2.0 * hs[k] + hs[k - 1];
                    let w2 = hs[k] + 2.0 * hs[k - 1];
                    d[k] = (w1 + w2) / (w1 / del[k - 1] + w2 / del[k]);
                }
            }
            d[0] = edge(hs[0], hs[1], del[0], del[1]);
            d[n - 1] = edge(hs[n - 2], hs[n - 3], del[n - 2], del[n - 3]);
        }
        Self { x, y, d }
    }

    /// The interval k with x_k <= t < x_{k+1} (clamped to the first and last).
    pub fn interval(&self, t: f64) -> usize {
        self.x
            .partition_point(|&x| x <= t)
            .clamp(1, self.x.len() - 1)
            - 1
    }

    /// The derivative F'(t) in interval `k`; 0 beyond the last knot.
    pub fn slope(&self, k: usize, t: f64) -> f64 {
        if t > self.x[self.x.len() - 1] {
            return 0.0;
        }
        let h = self.x[k + 1] - self.x[k];
        let s = (t - self.x[k]) / h;
        let s2 = s * s;
        (6.0 * s2 - 6.0 * s) / h * self.y[k]
            + (3.0 * s2 - 4.0 * s + 1.0) * self.d[k]
            + (-6.0 * s2 + 6.0 * s) / h * self.y[k + 1]
            + (3.0 * s2 - 2.0 * s) * self.d[k + 1]
    }

    /// The interpolant at `t` in interval `k` ([x_k, x_{k+1}]).
    #[cfg(test)]
    pub fn eval(&self, k: usize, t: f64) -> f64 {
        let h = self.x[k + 1] - self.x[k];
        let s = (t - self.x[k]) / h;
        let (s2, s3) = (s * s, s * s * s);
        let h00 = 2.0 * s3 - 3.0 * s2 + 1.0;
        let h10 = s3 - 2.0 * s2 + s;
        let h01 = -2.0 * s3 + 3.0 * s2;
        let h11 = s3 - s2;
        h00 * self.y[k] + h10 * h * self.d[k] + h01 * self.y[k + 1] + h11 * h * self.d[k + 1]
    }
}

/// SciPy's `PchipInterpolator._edge_case`.
fn edge(h0: f64, h1: f64, m0: f64, m1: f64) -> f64 {
    let d = ((2.0 * h0 + h1) * m0 - h0 * m1) / (h0 + h1);
    if d.signum() != m0.signum() || d == 0.0 {
        0.0
    } else if m0.signum() != m1.signum() && d.abs() > 3.0 * m0.abs() {
        3.0 * m0
    } else {
        d
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn disc_area_splits_exactly_over_the_four_quadrant_boxes() {
        let r = 3.0;
        let total = disc_rect_area(-5.0, 5.0, -5.0, 5.0, r);
        assert!((total - PI * r * r).abs() < 1e-12);
        let q = disc_rect_area(0.0, 5.0, 0.0, 5.0, r);
        assert!((q - PI * r * r / 4.0).abs() < 1e-12);
        let straddling = disc_rect_area(-1.0, 2.0, -0.5, 4.0, r);
        let parts =
            disc_rect_area(-1.0, 2.0, -0.5, 0.0, r) + disc_rect_area(-1.0, 2.0, 0.0, 4.0, r);
        assert!((straddling - parts).abs() < 1e-12);
    }

    #[test]
    fn arc_angle_is_the_radial_derivative_of_the_area_over_r() {
        for &(x0, x1, y0, y1) in &[
            (0.3, 1.3, -0.7, 0.3),
            (-2.0, -0.5, 0.2, 1.9),
            (-1.0, 1.0, -1.0, 1.0),
        ] {
            for r in [0.2, 0.7, 1.1, 1.6, 2.3] {
                let e = 1e-6;
                let d = (disc_rect_area(x0, x1, y0, y1, r + e)
                    - disc_rect_area(x0, x1, y0, y1, r - e))
                    / (2.0 * e);
                assert!(
                    (d / r - arc_angle(x0, x1, y0, y1, r)).abs() < 1e-6,
                    "{x0} {x1} {y0} {y1} r {r}"
                );
            }
        }
        assert!((arc_angle(-5.0, 5.0, -5.0, 5.0, 1.0) - 2.0 * PI).abs() < 1e-15);
    }

    #[test]
    #[allow(
        clippy::disallowed_methods,
        reason = "reads the SciPy values frozen in fixtures/reference"
    )]
    fn pchip_matches_scipy_pchip_interpolator() {
        // computed: scipy.interpolate.PchipInterpolator, frozen by
        // fixtures/reference/make_prior_fixtures.py into prior_pchip.json.
        let path = concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/../../fixtures/reference/prior_pchip.json"
        );
        let text = std::fs::read_to_string(path).unwrap();
        let v: serde_json::Value = serde_json::from_str(&text).unwrap();
        let q: Vec<(f64, f64)> = v["quantiles"]
            .as_array()
            .unwrap()
            .iter()
            .map(|p| (p[0].as_f64().unwrap(), p[1].as_f64().unwrap()))
            .collect();
        let p = Pchip::through_origin(&q);
        for pt in v["points"].as_array().unwrap() {
            let (x, want) = (pt[0].as_f64().unwrap(), pt[1].as_f64().unwrap());
            let got = p.eval(p.interval(x), x);
            assert!((got - want).abs() < 1e-13, "F({x}) = {got} vs {want}");
        }
        for (d, want) in p.d.iter().zip(v["slopes_at_knots"].as_array().unwrap()) {
            assert!((d - want.as_f64().unwrap()).abs() < 1e-15);
        }
    }

    #[test]
    fn disc_area_matches_dense_supersampling() {
        // Slow, obviously correct reference: count sub-cell centres inside the disc.
        let n = 2000;
        for &(x0, x1, y0, y1, r) in &[
            (0.3, 1.3, -0.7, 0.3, 1.0),
            (-2.0, -0.5, 0.2, 1.9, 1.5),
            (0.5, 1.5, 0.5, 1.5, 1.2),
            (-0.2, 0.2, -0.3, 0.1, 2.0),
        ] {
            let mut inside = 0usize;
            for i in 0..n {
                for j in 0..n {
                    let x = x0 + (x1 - x0) * (i as f64 + 0.5) / n as f64;
                    let y = y0 + (y1 - y0) * (j as f64 + 0.5) / n as f64;
                    if x * x + y * y <= r * r {
                        inside += 1;
                    }
                }
            }
            let brute = inside as f64 / (n * n) as f64 * (x1 - x0) * (y1 - y0);
            let exact = disc_rect_area(x0, x1, y0, y1, r);
            assert!(
                (brute - exact).abs() < 2e-4 * (x1 - x0) * (y1 - y0),
                "{brute} vs {exact}"
            );
        }
    }
}
