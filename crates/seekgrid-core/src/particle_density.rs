//! Spreading the particle part of the belief onto the grid (a kernel density), for maps and
//! for everything that reads the belief per cell.
//!
//! Each drift scenario's particles are spread with a Gaussian kernel whose bandwidth follows
//! Silverman's rule of thumb for two dimensions, h = σ̂ n^(-1/6), with σ̂ the mean of the two
//! weighted standard deviations of that scenario's cloud (B. W. Silverman, *Density Estimation
//! for Statistics and Data Analysis*, 1986, eq. 4.14 with d = 2), and never less than half a
//! cell. The kernel is integrated over cells exactly (products of normal CDF differences) and
//! truncated at 4 h; each particle's kernel is renormalised over the cells it reaches inside the
//! grid, so the map holds exactly the mass of the particles inside the grid. Particles stranded
//! ashore are not spread: their mass stays in the cell they stranded in.

use crate::{GridSpec, Particles};
use ndarray::Array2;

/// The bandwidth used for one cloud, metres (see the module docs).
#[must_use]
pub fn silverman_bandwidth_m(
    particles: &Particles,
    range: std::ops::Range<usize>,
    cell_m: f64,
) -> f64 {
    let w = &particles.weights()[range.clone()];
    let total: f64 = w.iter().sum();
    let n = range.len();
    if n < 2 || total <= 0.0 {
        return cell_m / 2.0;
    }
    let (mut mx, mut my) = (0.0, 0.0);
    for (k, i) in range.clone().enumerate() {
        mx += w[k] * particles.x_m()[i];
        my += w[k] * particles.y_m()[i];
    }
    mx /= total;
    my /= total;
    let (mut vx, mut vy) = (0.0, 0.0);
    for (k, i) in range.enumerate() {
        vx += w[k] * (particles.x_m()[i] - mx).powi(2);
        vy += w[k] * (particles.y_m()[i] - my).powi(2);
    }
    let sigma = ((vx / total).sqrt() + (vy / total).sqrt()) / 2.0;
    (sigma * (n as f64).powf(-1.0 / 6.0)).max(cell_m / 2.0)
}

fn phi(z: f64) -> f64 {
    0.5 * libm::erfc(-z / std::f64::consts::SQRT_2)
}

/// Cell weights of a 1-D Gaussian (centre `c`, bandwidth `h`) over cells `[edge0 + k s, edge0 + (k+1) s)`.
fn axis_weights(c: f64, h: f64, edge0: f64, s: f64, n_cells: usize, out: &mut Vec<(usize, f64)>) {
    out.clear();
    let lo = (((c - 4.0 * h) - edge0) / s).floor().max(0.0) as usize;
    let hi = ((((c + 4.0 * h) - edge0) / s).ceil().max(0.0) as usize).min(n_cells);
    for k in lo..hi {
        let a = edge0 + k as f64 * s;
        let w = phi((a + s - c) / h) - phi((a - c) / h);
        if w > 0.0 {
            out.push((k, w));
        }
    }
}

/// Adds the particles' mass to `cells`, cloud by cloud (`clouds` are index ranges of
/// `particles`, one per drift scenario). Returns the bandwidth used for each cloud.
pub fn add_particles(
    cells: &mut Array2<f64>,
    grid: &GridSpec,
    particles: &Particles,
    clouds: &[std::ops::Range<usize>],
) -> Vec<f64> {
    let s = grid.cell_m();
    let west = grid.west_m();
    let north = grid.north_m();
    let mut bandwidths = Vec::new();
    let (mut wx, mut wy) = (Vec::new(), Vec::new());
    for range in clouds {
        let h = silverman_bandwidth_m(particles, range.clone(), s);
        bandwidths.push(h);
        for i in range.clone() {
            let w = particles.weights()[i];
            if w == 0.0 {
                continue;
            }
            let p = particles.position(i);
            let Some((r0, c0)) = grid.locate(p) else {
                continue;
            };
            if particles.stranded()[i] {
                cells[[r0, c0]] += w;
                continue;
            }
            axis_weights(p.x, h, west, s, grid.cols(), &mut wx);
            // Rows count southward from the north edge: mirror the axis.
            axis_weights(-p.y, h, -north, s, grid.rows(), &mut wy);
            let sx: f64 = wx.iter().map(|(_, v)| v).sum();
            let sy: f64 = wy.iter().map(|(_, v)| v).sum();
            if sx <= 0.0 || sy <= 0.0 {
                cells[[r0, c0]] += w;
                continue;
            }
            let k = w / (sx * sy);
            for (r, vy) in &wy {
                for (c, vx) in &wx {
                    cells[[*r, *c]] += k * vy * vx;
                }
            }
        }
    }
    bandwidths
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::DEFAULT_MAX_CELLS;

    fn grid() -> GridSpec {
        GridSpec::new(0.0, 10_000.0, 100.0, 100, 100, DEFAULT_MAX_CELLS).unwrap()
    }

    #[test]
    fn spreading_keeps_the_mass_of_particles_inside_the_grid() {
        let g = grid();
        let xs = vec![5000.0, 50.0, 20_000.0];
        let ys = vec![5000.0, 9950.0, 5000.0];
        let p = Particles::new(xs, ys, vec![0.5, 0.3, 0.2], vec![false; 3]).unwrap();
        let mut cells = Array2::zeros((100, 100));
        add_particles(&mut cells, &g, &p, &[std::ops::Range { start: 0, end: 3 }]);
        // The third particle is outside the grid; the second sits in a corner cell.
        assert!((cells.sum() - 0.8).abs() < 1e-12, "{}", cells.sum());
    }

    #[test]
    fn a_single_kernel_matches_the_normal_integral_over_a_cell() {
        // A particle at a cell centre with bandwidth h = s/2 puts the mass of a unit normal on
        // [-1, 1]^2 into its own cell: erf(1/sqrt 2)^2 = 0.466065 (docs/references.md §2,
        // "computed"; SciPy's mvn.cdf agrees there). The kernel reaches the cells that meet
        // +-4h, here +-5h once whole cells are taken, and is renormalised over them.
        let g = grid();
        let p = Particles::new(
            vec![5050.0, 5050.0],
            vec![5050.0, 5050.0],
            vec![0.5, 0.5],
            vec![false; 2],
        )
        .unwrap();
        let mut cells = Array2::zeros((100, 100));
        let h = add_particles(&mut cells, &g, &p, &[std::ops::Range { start: 0, end: 2 }])[0];
        assert_eq!(h, 50.0, "half a cell is the floor");
        let reached = (phi(5.0) - phi(-5.0)).powi(2);
        assert!(
            (cells[[49, 50]] - 0.466065 / reached).abs() < 1e-6,
            "{}",
            cells[[49, 50]]
        );
        assert!((cells.sum() - 1.0).abs() < 1e-12);
    }

    #[test]
    fn stranded_particles_stay_in_their_cell() {
        let g = grid();
        let p = Particles::new(vec![5050.0], vec![5050.0], vec![1.0], vec![true]).unwrap();
        let mut cells = Array2::zeros((100, 100));
        add_particles(&mut cells, &g, &p, &[std::ops::Range { start: 0, end: 1 }]);
        assert_eq!(cells[[49, 50]], 1.0);
    }
}
