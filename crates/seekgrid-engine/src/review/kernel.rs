//! The particle kernel density of [`seekgrid_core::particle_density`], computed at many times
//! for the review: a fast field for the timeline, and the exact value in one cell for the
//! scores.
//!
//! The map spreads each particle with a Gaussian kernel integrated over the cells (Silverman's
//! bandwidth h per cloud, reaching ±[`KERNEL_REACH_H`] h, renormalised over the cells inside
//! the grid), by [`seekgrid_core::particle_density::add_particles_where_accurate`]: binned
//! onto the cell centres and convolved where that stays within 1e-4 of the
//! particle-by-particle spread, particle by particle elsewhere. The review needs the field at
//! every search end and every hour, so its timeline bins every cloud whose bandwidth is wide
//! enough for the binned field to stay within 1e-4 of each particle's own kernel
//! ([`seekgrid_core::particle_density::BINNED_FROM_CELLS`]), also clouds of fewer particles
//! than the map bins (the count there is a matter of speed only). Narrower clouds are spread
//! exactly, particle by particle, which is then cheap. Mass is kept exactly as in the map: the
//! particles inside the grid, stranded ones in their own cell.

use ndarray::Array2;
use seekgrid_core::particle_density::{
    BINNED_FROM_CELLS, KERNEL_REACH_H, add_particles_choosing, silverman_bandwidth_m,
};
use seekgrid_core::{GridSpec, Particles, neumaier_sum};
use std::ops::Range;

fn phi(z: f64) -> f64 {
    0.5 * libm::erfc(-z / std::f64::consts::SQRT_2)
}

/// Adds the particles' mass to `cells`, cloud by cloud, like
/// [`seekgrid_core::particle_density::add_particles`] but through the binned field for wide
/// clouds (see the module docs).
pub(crate) fn add_particles_fast(
    cells: &mut Array2<f64>,
    grid: &GridSpec,
    particles: &Particles,
    clouds: &[Range<usize>],
) {
    add_particles_choosing(cells, grid, particles, clouds, |h, s, _| {
        h >= BINNED_FROM_CELLS * s
    });
}

/// One axis of the map's kernel for a particle at `c`: its weight in cell `k` and the sum of
/// its weights over the cells it reaches inside `0..n` (as `particle_density` computes them).
fn axis_value(c: f64, h: f64, edge0: f64, s: f64, n: usize, k: usize) -> (f64, f64) {
    let lo = (((c - KERNEL_REACH_H * h) - edge0) / s).floor().max(0.0) as usize;
    let hi = ((((c + KERNEL_REACH_H * h) - edge0) / s).ceil().max(0.0) as usize).min(n);
    if lo >= hi {
        return (0.0, 0.0);
    }
    let at = |j: usize| phi((edge0 + j as f64 * s - c) / h);
    let sum = neumaier_sum((lo..hi).map(|j| {
        let a = edge0 + j as f64 * s;
        let w = phi((a + s - c) / h) - phi((a - c) / h);
        if w > 0.0 { w } else { 0.0 }
    }));
    let value = if (lo..hi).contains(&k) {
        let w = at(k + 1) - at(k);
        if w > 0.0 { w } else { 0.0 }
    } else {
        0.0
    };
    // `at(k + 1)` is phi((edge0 + (k + 1) s - c) / h); particle_density writes it as
    // phi((edge0 + k s + s - c) / h): the same to rounding.
    (value, sum)
}

/// The mass the map's kernel ([`seekgrid_core::particle_density::add_particles`]) puts into
/// one cell from the particles of `range`, computed for that cell alone: exact to rounding,
/// and cheap (a few error functions per particle).
pub(crate) fn mass_in_cell(
    grid: &GridSpec,
    particles: &Particles,
    range: Range<usize>,
    cell: (usize, usize),
) -> f64 {
    let s = grid.cell_m();
    let h = silverman_bandwidth_m(particles, range.clone(), s);
    let (west, north) = (grid.west_m(), grid.north_m());
    let mut parts = Vec::new();
    for i in range {
        let w = particles.weights()[i];
        if w == 0.0 {
            continue;
        }
        let p = particles.position(i);
        let Some(own) = grid.locate(p) else {
            continue;
        };
        if particles.stranded()[i] {
            if own == cell {
                parts.push(w);
            }
            continue;
        }
        let (vx, sx) = axis_value(p.x, h, west, s, grid.cols(), cell.1);
        let (vy, sy) = axis_value(-p.y, h, -north, s, grid.rows(), cell.0);
        if sx <= 0.0 || sy <= 0.0 {
            if own == cell {
                parts.push(w);
            }
            continue;
        }
        if vx > 0.0 && vy > 0.0 {
            parts.push(w / (sx * sy) * vy * vx);
        }
    }
    neumaier_sum(parts)
}

#[cfg(test)]
mod tests {
    use super::*;
    use seekgrid_core::DEFAULT_MAX_CELLS;
    use seekgrid_core::particle_density::add_particles;

    /// A normal cloud of `n` particles (deterministic quasi-random draws) about (cx, cy).
    fn cloud(n: usize, cx: f64, cy: f64, sigma: f64) -> Particles {
        let (mut x, mut y) = (Vec::new(), Vec::new());
        for i in 0..n {
            // Box-Muller on a Halton pair (bases 2 and 3).
            let u1 = (halton(i + 1, 2)).max(1e-12);
            let u2 = halton(i + 1, 3);
            let r = (-2.0 * u1.ln()).sqrt() * sigma;
            let a = std::f64::consts::TAU * u2;
            x.push(cx + r * a.cos());
            y.push(cy + r * a.sin());
        }
        Particles::new(x, y, vec![1.0 / n as f64; n], vec![false; n]).unwrap()
    }

    fn halton(mut i: usize, b: usize) -> f64 {
        let (mut f, mut r) = (1.0, 0.0);
        while i > 0 {
            f /= b as f64;
            r += f * (i % b) as f64;
            i /= b;
        }
        r
    }

    #[test]
    fn one_cell_alone_matches_the_maps_kernel() {
        // The map's field (core's add_particles) read at a few cells, against the value
        // computed for each cell alone: the same sums, so equal to rounding.
        let grid = GridSpec::new(0.0, 20_000.0, 100.0, 200, 200, DEFAULT_MAX_CELLS).unwrap();
        let p = cloud(3_000, 9_000.0, 11_000.0, 1_500.0);
        let mut field = Array2::zeros((200, 200));
        add_particles(&mut field, &grid, &p, std::slice::from_ref(&(0..3_000)));
        for cell in [(90, 90), (100, 80), (60, 120), (0, 0), (150, 40)] {
            let one = mass_in_cell(&grid, &p, 0..3_000, cell);
            assert!(
                (one - field[cell]).abs() <= 1e-12 * field[cell].max(1e-300) + 1e-18,
                "{cell:?}: {one} vs {}",
                field[cell]
            );
        }
    }

    #[test]
    fn the_binned_field_keeps_the_mass_and_stays_close_to_the_maps_kernel() {
        // Against the particle-by-particle field: the mass is the same, and the largest cell
        // difference is under 1e-4 of the peak (the accuracy core's binned field promises; a
        // cloud just over three cells of bandwidth and a wide one).
        let grid = GridSpec::new(0.0, 20_000.0, 100.0, 200, 200, DEFAULT_MAX_CELLS).unwrap();
        for sigma in [1_700.0, 4_000.0] {
            let n = 20_000;
            // Near the west edge too, so the renormalisation at the edge is exercised.
            let p = cloud(n, 3_000.0, 10_000.0, sigma);
            let h = silverman_bandwidth_m(&p, 0..n, 100.0);
            assert!(h >= BINNED_FROM_CELLS * 100.0, "h = {h}");
            let mut exact = Array2::zeros((200, 200));
            add_particles(&mut exact, &grid, &p, std::slice::from_ref(&(0..n)));
            let mut fast = Array2::zeros((200, 200));
            add_particles_fast(&mut fast, &grid, &p, std::slice::from_ref(&(0..n)));
            let (me, mf) = (
                neumaier_sum(exact.iter().copied()),
                neumaier_sum(fast.iter().copied()),
            );
            assert!((me - mf).abs() < 1e-12, "{me} vs {mf}");
            let peak = exact.iter().copied().fold(0.0, f64::max);
            let worst = exact
                .iter()
                .zip(&fast)
                .map(|(a, b)| (a - b).abs())
                .fold(0.0, f64::max);
            assert!(worst < 1e-4 * peak, "sigma {sigma}: {worst} vs peak {peak}");
        }
    }

    #[test]
    fn narrow_clouds_are_spread_exactly() {
        let grid = GridSpec::new(0.0, 20_000.0, 100.0, 200, 200, DEFAULT_MAX_CELLS).unwrap();
        let p = cloud(500, 10_000.0, 10_000.0, 100.0);
        let mut exact = Array2::zeros((200, 200));
        add_particles(&mut exact, &grid, &p, std::slice::from_ref(&(0..500)));
        let mut fast = Array2::zeros((200, 200));
        add_particles_fast(&mut fast, &grid, &p, std::slice::from_ref(&(0..500)));
        assert_eq!(exact, fast);
    }
}
