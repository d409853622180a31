//! Numerical building blocks: Gauss-Legendre rules and the standard normal CDF.

use std::f64::consts::{FRAC_1_SQRT_2, PI};

/// 1/sqrt(2 pi).
pub(crate) const INV_SQRT_2PI: f64 = 0.398_942_280_401_432_7;

/// Standard normal density φ(z).
#[inline]
pub(crate) fn phi_pdf(z: f64) -> f64 {
    INV_SQRT_2PI * (-0.5 * z * z).exp()
}

/// Φ(b) - Φ(a) for a ≤ b, computed from the tail on the far side of 0 so that intervals far in
/// either tail keep their relative precision.
#[inline]
pub(crate) fn normal_interval(a: f64, b: f64) -> f64 {
    if a >= 0.0 {
        0.5 * (crate::erfc::erfc(a * FRAC_1_SQRT_2) - crate::erfc::erfc(b * FRAC_1_SQRT_2))
    } else if b <= 0.0 {
        0.5 * (crate::erfc::erfc(-b * FRAC_1_SQRT_2) - crate::erfc::erfc(-a * FRAC_1_SQRT_2))
    } else {
        1.0 - 0.5 * (crate::erfc::erfc(-a * FRAC_1_SQRT_2) + crate::erfc::erfc(b * FRAC_1_SQRT_2))
    }
}

/// A Gauss-Legendre rule on [0, 1]: nodes and weights (weights add up to 1).
#[derive(Debug, Clone)]
pub(crate) struct GaussLegendre {
    pub nodes: Vec<f64>,
    pub weights: Vec<f64>,
}

impl GaussLegendre {
    /// The n-point rule (n ≥ 1), exact for polynomials of degree 2n - 1.
    ///
    /// Nodes are the roots of the Legendre polynomial P_n found by Newton's method from the
    /// Tricomi initial guess cos(pi (i - 1/4)/(n + 1/2)); weights 2/((1 - x²) P_n'(x)²)
    /// (Abramowitz & Stegun 25.4.29). Written here rather than taken from the `gauss-quad` crate,
    /// which would bring in nalgebra for a 20-line routine.
    pub fn new(n: usize) -> Self {
        let n = n.max(1);
        let mut nodes = Vec::with_capacity(n);
        let mut weights = Vec::with_capacity(n);
        for i in 1..=n {
            let mut x = (PI * (i as f64 - 0.25) / (n as f64 + 0.5)).cos();
            let mut dp = 1.0;
            for _ in 0..100 {
                let (p, d) = legendre(n, x);
                dp = d;
                let dx = p / d;
                x -= dx;
                if dx.abs() < 1e-16 {
                    break;
                }
            }
            let (_, d) = legendre(n, x);
            if d.is_finite() {
                dp = d;
            }
            // Map [-1, 1] to [0, 1]: node (1 - x)/2 keeps them ascending; weight halves.
            nodes.push(0.5 * (1.0 - x));
            weights.push(1.0 / ((1.0 - x * x) * dp * dp));
        }
        Self { nodes, weights }
    }

    /// Number of points.
    pub fn len(&self) -> usize {
        self.nodes.len()
    }
}

/// P_n(x) and P_n'(x) by the three-term recurrence.
fn legendre(n: usize, x: f64) -> (f64, f64) {
    let mut p0 = 1.0;
    let mut p1 = x;
    if n == 0 {
        return (1.0, 0.0);
    }
    for k in 2..=n {
        let kf = k as f64;
        let p2 = ((2.0 * kf - 1.0) * x * p1 - (kf - 1.0) * p0) / kf;
        p0 = p1;
        p1 = p2;
    }
    let d = n as f64 * (x * p1 - p0) / (x * x - 1.0);
    (p1, d)
}

/// A composite Gauss-Legendre rule for an interval of length `h` on which the integrand varies
/// on the length scale `scale` (a standard deviation), chosen for ~1e-12 relative error on
/// normal-type integrands: the n-point error is about
/// r^{2n} (n!)^4 sqrt((2n-1)!) / ((2n+1) ((2n)!)^3) for r = h/scale (the Gauss-Legendre
/// remainder, Abramowitz & Stegun 25.4.30, with |φ^{(m)}| ≲ sqrt(m!) φ(0)), which gives
/// 3 points up to r = 0.075, 4 to 0.26, 5 to 0.58, 6 to 1, 8 to 1.97, then panels of
/// at most 1.9 scales with 8 points each. Checked in the tests against dense reference
/// integrals and SciPy.
#[derive(Debug, Clone)]
pub(crate) struct Composite {
    /// Nodes on [0, 1].
    pub nodes: Vec<f64>,
    /// Weights on [0, 1], adding up to 1.
    pub weights: Vec<f64>,
}

impl Composite {
    pub fn for_ratio(h_over_scale: f64) -> Self {
        let r = if h_over_scale.is_finite() {
            h_over_scale.max(0.0)
        } else {
            1e6
        };
        let (panels, points) = if r <= 0.075 {
            (1, 3)
        } else if r <= 0.26 {
            (1, 4)
        } else if r <= 0.58 {
            (1, 5)
        } else if r <= 1.0 {
            (1, 6)
        } else if r <= 1.97 {
            (1, 8)
        } else {
            (((r / 1.9).ceil() as usize).min(1 << 16), 8)
        };
        Self::new(panels, points)
    }

    pub fn new(panels: usize, points: usize) -> Self {
        let gl = GaussLegendre::new(points);
        let mut nodes = Vec::with_capacity(panels * points);
        let mut weights = Vec::with_capacity(panels * points);
        let w = 1.0 / panels as f64;
        for p in 0..panels {
            for k in 0..gl.len() {
                nodes.push((p as f64 + gl.nodes[k]) * w);
                weights.push(gl.weights[k] * w);
            }
        }
        Self { nodes, weights }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn three_point_rule_matches_the_tabulated_nodes_and_weights() {
        // found: Abramowitz & Stegun Table 25.4 (n = 3: x = 0, ±sqrt(3/5); w = 8/9, 5/9),
        // mapped to [0, 1].
        let g = GaussLegendre::new(3);
        let s = (0.6f64).sqrt();
        assert!((g.nodes[0] - 0.5 * (1.0 - s)).abs() < 1e-15);
        assert!((g.nodes[1] - 0.5).abs() < 1e-15);
        assert!((g.weights[0] - 5.0 / 18.0).abs() < 1e-15);
        assert!((g.weights[1] - 8.0 / 18.0).abs() < 1e-15);
    }

    #[test]
    fn n_point_rule_integrates_degree_2n_minus_1_exactly() {
        for n in 1..=16 {
            let g = GaussLegendre::new(n);
            for deg in 0..(2 * n) {
                let q: f64 = g
                    .nodes
                    .iter()
                    .zip(&g.weights)
                    .map(|(x, w)| w * x.powi(deg as i32))
                    .sum();
                let exact = 1.0 / (deg as f64 + 1.0);
                assert!((q - exact).abs() < 1e-14, "n {n} deg {deg}: {q} vs {exact}");
            }
        }
    }

    #[test]
    fn normal_interval_keeps_precision_in_both_tails() {
        // computed: Φ(-8) = 6.220960574271785e-16 (scipy.special.ndtr(-8)).
        let t = normal_interval(8.0, f64::INFINITY);
        assert!((t / 6.220_960_574_271_785e-16 - 1.0).abs() < 1e-12);
        let t = normal_interval(f64::NEG_INFINITY, -8.0);
        assert!((t / 6.220_960_574_271_785e-16 - 1.0).abs() < 1e-12);
        // computed: Φ(1) - Φ(-1) = erf(1/sqrt 2) = 0.6826894921370859.
        assert!((normal_interval(-1.0, 1.0) - 0.682_689_492_137_085_9).abs() < 1e-15);
    }
}
