//! The exact null distribution of the resultant length of n uniform unit vectors (Pearson's
//! random walk), for the Rayleigh test at small n.
//!
//! Let R_k be the length of the sum of k independent unit vectors with uniform directions and
//! S_k(r) = P(R_k ≥ r). Adding one more unit vector to a resultant of length s gives length
//! |s + e^{iθ}|, θ uniform, which is at least r exactly when cos θ ≥ c = (r² − s² − 1)/(2s),
//! with probability H(s, r) = arccos(clamp(c, −1, 1))/π. Hence
//!
//! * S_2(r) = (2/π) arccos(r/2) (R_2 = 2|cos(φ/2)|, φ uniform),
//! * S_3(r) = (1/π) ∫_0^π H(2 cos(φ/2), r) dφ,
//! * S_k(r) = ∫ H(s, r) dF_{k−1}(s) for k ≥ 4.
//!
//! S_3 is integrated by adaptive Gauss-Legendre quadrature, split where H has its square-root
//! kinks (s = |r − 1| and s = r + 1) and with the substitution s = a + (b − a)u² toward each
//! end of a piece, which makes the square-root behaviour smooth. For k ≥ 4, S_{k−1} is known
//! at the nodes of a grid of step h; between nodes F_{k−1} is taken as linear (the mass of each
//! cell spread evenly), and the cell averages of H are integrated the same way. The result
//! for steps h = 1/64 and h = 1/128 is combined by Richardson extrapolation
//! (4 S(h/2) − S(h))/3, as the error falls like h².
//!
//! Source: the recursion is the law of total probability on the last step of the walk (computed);
//! the distribution is that of K. Pearson's random walk (1905) and J. C. Kluyver (1906), whose
//! integral P(R_n ≤ r) = r ∫_0^∞ J_1(rt) J_0(t)^n dt gives the values in
//! `fixtures/reference/credibility_reference.json` that the tests compare with (from memory).

use crate::quad::GaussLegendre;
use std::f64::consts::PI;

/// Grid steps per unit of resultant length for the coarse pass (the fine pass halves the step).
const COARSE_PER_UNIT: usize = 32;
/// Points of the Gauss-Legendre rule on each half of a piece that ends at a kink.
const GAUSS_POINTS: usize = 8;
/// Points of the Gauss-Legendre rule on a grid cell without a kink, where H is smooth.
const SMOOTH_POINTS: usize = 4;
/// Absolute tolerance of the adaptive quadrature of S_3.
const ADAPTIVE_TOL: f64 = 1e-13;
/// Depth limit of the adaptive quadrature.
const ADAPTIVE_DEPTH: u32 = 40;

/// P(R_n ≥ r) for the resultant length R_n of n independent uniform unit vectors.
///
/// `n` from 1; `resultant` is r (0 ≤ r ≤ n; values outside are clamped). Exact up to
/// quadrature and grid error, about 1e-7 absolute against Kluyver's integral (see the module
/// doc). The work grows like n² · 64²; meant for n below 10.
pub(crate) fn survival(n: usize, resultant: f64) -> f64 {
    let nf = n as f64;
    let r = if resultant.is_nan() {
        0.0
    } else {
        resultant.clamp(0.0, nf)
    };
    let rule = Rules {
        graded: GaussLegendre::new(GAUSS_POINTS),
        smooth: GaussLegendre::new(SMOOTH_POINTS),
    };
    let p = match n {
        0 => return if r <= 0.0 { 1.0 } else { 0.0 },
        1 => return if r <= 1.0 { 1.0 } else { 0.0 },
        2 => (2.0 / PI) * (r / 2.0).min(1.0).acos(),
        3 => s3(r, &rule.graded),
        _ => {
            let coarse = grid_survival(n, r, COARSE_PER_UNIT, &rule);
            let fine = grid_survival(n, r, 2 * COARSE_PER_UNIT, &rule);
            (4.0 * fine - coarse) / 3.0
        }
    };
    p.clamp(0.0, 1.0)
}

/// The quadrature rules on [0, 1].
struct Rules {
    /// For pieces that end at a kink, after the substitution of [`graded`].
    graded: GaussLegendre,
    /// For grid cells where H is smooth.
    smooth: GaussLegendre,
}

/// H(s, r) = P(|s + e^{iθ}| ≥ r), θ uniform.
fn h(s: f64, r: f64) -> f64 {
    if s <= 0.0 {
        return if r <= 1.0 { 1.0 } else { 0.0 };
    }
    let c = ((r * r - s * s - 1.0) / (2.0 * s)).clamp(-1.0, 1.0);
    c.acos() / PI
}

/// ∫_lo^hi f with the rule applied to each half of the interval after the substitution
/// x = end ± half · u², which clusters nodes at both ends.
fn graded(f: &impl Fn(f64) -> f64, lo: f64, hi: f64, rule: &GaussLegendre) -> f64 {
    let half = 0.5 * (hi - lo);
    let mut total = 0.0;
    for (u, w) in rule.nodes.iter().zip(&rule.weights) {
        let jac = 2.0 * half * u;
        total += w * jac * (f(lo + half * u * u) + f(hi - half * u * u));
    }
    total
}

/// Adaptive version of [`graded`]: halves the interval until the two halves agree with the
/// whole within the tolerance.
fn adaptive(
    f: &impl Fn(f64) -> f64,
    lo: f64,
    hi: f64,
    whole: f64,
    rule: &GaussLegendre,
    depth: u32,
) -> f64 {
    let mid = 0.5 * (lo + hi);
    let left = graded(f, lo, mid, rule);
    let right = graded(f, mid, hi, rule);
    if depth >= ADAPTIVE_DEPTH || (left + right - whole).abs() <= ADAPTIVE_TOL {
        return left + right;
    }
    adaptive(f, lo, mid, left, rule, depth + 1) + adaptive(f, mid, hi, right, rule, depth + 1)
}

/// ∫ f over [lo, hi] split at the given points that fall inside.
fn split_integral(
    f: &impl Fn(f64) -> f64,
    lo: f64,
    hi: f64,
    splits: &[f64],
    rule: &GaussLegendre,
    adapt: bool,
) -> f64 {
    let mut points = vec![lo];
    points.extend(splits.iter().copied().filter(|&x| x > lo && x < hi));
    points.push(hi);
    points.sort_by(f64::total_cmp);
    points
        .windows(2)
        .filter(|w| w[1] > w[0])
        .map(|w| {
            let first = graded(f, w[0], w[1], rule);
            if adapt {
                adaptive(f, w[0], w[1], first, rule, 0)
            } else {
                first
            }
        })
        .sum()
}

/// S_3(r) = (1/π) ∫_0^π H(2 cos(φ/2), r) dφ.
fn s3(r: f64, rule: &GaussLegendre) -> f64 {
    // The kinks of H in s, as angles φ with 2 cos(φ/2) = s.
    let splits: Vec<f64> = [(r - 1.0).abs(), r + 1.0]
        .into_iter()
        .filter(|&s| s > 0.0 && s < 2.0)
        .map(|s| 2.0 * (s / 2.0).acos())
        .collect();
    let f = |phi: f64| h(2.0 * (phi / 2.0).cos(), r);
    split_integral(&f, 0.0, PI, &splits, rule, true) / PI
}

/// S_n(r) for n ≥ 4 on a grid of `per_unit` steps per unit length.
fn grid_survival(n: usize, r: f64, per_unit: usize, rule: &Rules) -> f64 {
    let step = 1.0 / per_unit as f64;
    // S_3 at the nodes 0, h, ..., 3.
    let mut survival: Vec<f64> = (0..=3 * per_unit)
        .map(|j| s3(j as f64 * step, &rule.graded))
        .collect();
    fix_ends(&mut survival);
    // S_4 .. S_{n-1} at the nodes 0, h, ..., k.
    for k in 4..n {
        let masses = cell_masses(&survival);
        survival = (0..=k * per_unit)
            .map(|j| next_survival(&masses, step, j as f64 * step, rule))
            .collect();
        fix_ends(&mut survival);
    }
    next_survival(&cell_masses(&survival), step, r, rule)
}

/// The probability in each grid cell, from the survival function at the nodes.
fn cell_masses(survival: &[f64]) -> Vec<f64> {
    survival.windows(2).map(|w| w[0] - w[1]).collect()
}

/// S(0) = 1 and S(max) = 0 exactly.
fn fix_ends(survival: &mut [f64]) {
    if let Some(first) = survival.first_mut() {
        *first = 1.0;
    }
    if let Some(last) = survival.last_mut() {
        *last = 0.0;
    }
}

/// S_k(r) = Σ_cells mass · (mean of H(s, r) over the cell).
fn next_survival(masses: &[f64], step: f64, r: f64, rule: &Rules) -> f64 {
    let (low_kink, high_kink) = ((r - 1.0).abs(), r + 1.0);
    // Below |r − 1|, H is 1 when r < 1 and 0 when r > 1; above r + 1 it is 1.
    let below = if r < 1.0 { 1.0 } else { 0.0 };
    let f = |s: f64| h(s, r);
    masses
        .iter()
        .enumerate()
        .map(|(j, &m)| {
            let (a, b) = (j as f64 * step, (j + 1) as f64 * step);
            let mean = if b <= low_kink {
                below
            } else if a >= high_kink {
                1.0
            } else if a < low_kink || b > high_kink {
                // A kink inside the cell: split there and grade toward it.
                split_integral(&f, a, b, &[low_kink, high_kink], &rule.graded, false) / step
            } else {
                rule.smooth
                    .nodes
                    .iter()
                    .zip(&rule.smooth.weights)
                    .map(|(u, w)| w * f(a + step * u))
                    .sum()
            };
            m * mean
        })
        .sum()
}
