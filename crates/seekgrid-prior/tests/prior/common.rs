//! Shared helpers: grids, fixtures, and slow reference integrators.
#![allow(
    clippy::disallowed_methods,
    reason = "reads the SciPy values frozen in fixtures/reference"
)]

use geo::{Coord, LineString, MultiPolygon, Polygon};
use seekgrid_core::{DEFAULT_MAX_CELLS, GridSpec};
use std::path::PathBuf;

pub fn grid(west_m: f64, north_m: f64, cell_m: f64, rows: usize, cols: usize) -> GridSpec {
    GridSpec::new(west_m, north_m, cell_m, rows, cols, DEFAULT_MAX_CELLS).unwrap()
}

pub fn fixture(name: &str) -> serde_json::Value {
    let path = PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("../../fixtures/reference")
        .join(name);
    let text = std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    serde_json::from_str(&text).unwrap()
}

pub fn c(x: f64, y: f64) -> Coord<f64> {
    Coord { x, y }
}

pub fn rect_polygon(x0: f64, y0: f64, x1: f64, y1: f64) -> Polygon<f64> {
    Polygon::new(
        LineString::from(vec![(x0, y0), (x1, y0), (x1, y1), (x0, y1), (x0, y0)]),
        vec![],
    )
}

pub fn multi(polys: Vec<Polygon<f64>>) -> MultiPolygon<f64> {
    MultiPolygon(polys)
}

/// Gauss-Legendre nodes and weights on [0, 1] by the Golub-Welsch-free Newton iteration
/// (independent of the crate's own routine: bisection-refined, slow, obviously correct).
pub fn gauss_legendre(n: usize) -> (Vec<f64>, Vec<f64>) {
    let p = |x: f64| {
        let (mut p0, mut p1) = (1.0, x);
        for k in 2..=n {
            let kf = k as f64;
            let p2 = ((2.0 * kf - 1.0) * x * p1 - (kf - 1.0) * p0) / kf;
            p0 = p1;
            p1 = p2;
        }
        (p1, n as f64 * (x * p1 - p0) / (x * x - 1.0))
    };
    let mut nodes = Vec::new();
    let mut weights = Vec::new();
    // Bracket the roots on a fine grid, then bisect.
    let m = 20_000;
    let mut prev_x = -1.0 + 1e-12;
    let mut prev = p(prev_x).0;
    for i in 1..=m {
        let x = -1.0 + 2.0 * i as f64 / m as f64 - if i == m { 1e-12 } else { 0.0 };
        let v = p(x).0;
        if prev == 0.0 || prev.signum() != v.signum() {
            let (mut a, mut b) = (prev_x, x);
            for _ in 0..200 {
                let mid = 0.5 * (a + b);
                if p(a).0.signum() == p(mid).0.signum() {
                    a = mid;
                } else {
                    b = mid;
                }
            }
            let r = 0.5 * (a + b);
            let d = p(r).1;
            nodes.push(0.5 * (r + 1.0));
            weights.push(1.0 / ((1.0 - r * r) * d * d));
        }
        prev_x = x;
        prev = v;
    }
    assert_eq!(nodes.len(), n);
    (nodes, weights)
}

/// Slow dense integral of f over [x0, x1] x [y0, y1]: `panels` x `panels` panels of an
/// 8-point Gauss-Legendre product rule.
pub fn dense_integral(
    f: &dyn Fn(f64, f64) -> f64,
    rect: (f64, f64, f64, f64),
    panels: usize,
) -> f64 {
    let (x0, x1, y0, y1) = rect;
    let (nodes, weights) = gauss_legendre(8);
    let hx = (x1 - x0) / panels as f64;
    let hy = (y1 - y0) / panels as f64;
    let mut total = 0.0;
    for i in 0..panels {
        for j in 0..panels {
            let mut acc = 0.0;
            for (a, wa) in nodes.iter().zip(&weights) {
                for (b, wb) in nodes.iter().zip(&weights) {
                    acc += wa * wb * f(x0 + (i as f64 + a) * hx, y0 + (j as f64 + b) * hy);
                }
            }
            total += acc * hx * hy;
        }
    }
    total
}

/// Bivariate normal density of an ellipse given as seekgrid states it.
pub fn ellipse_pdf(
    center: Coord<f64>,
    smaj: f64,
    smin: f64,
    bearing_deg: f64,
) -> impl Fn(f64, f64) -> f64 {
    let t = bearing_deg.to_radians();
    let (s, co) = t.sin_cos();
    move |x: f64, y: f64| {
        let dx = x - center.x;
        let dy = y - center.y;
        let a = dx * s + dy * co; // along the major axis
        let b = dx * co - dy * s; // along the minor axis
        (-0.5 * (a * a / (smaj * smaj) + b * b / (smin * smin))).exp()
            / (2.0 * std::f64::consts::PI * smaj * smin)
    }
}
