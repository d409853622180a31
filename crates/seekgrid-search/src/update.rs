//! The Bayesian update of the belief after an unsuccessful search.
//!
//! `p_i' = p_i (1 - d_i) / (1 - Σ_j p_j d_j)` over cells and particles, rest of world
//! unsearched (`d = 0`): found: Clark 1995, sarinfo.bc.ca POAderiv.pln, citing *Managing the
//! Search Operation* (1990); sarbc.org/math.html for POS = Σ POD·POA (docs/references.md §3).

use crate::error::SearchError;
use crate::pod_layer::PodLayer;
use crate::sum::Compensated;
use rayon::prelude::*;
use seekgrid_core::{Belief, neumaier_sum};

/// Cells per parallel work unit (fixed, so sums do not depend on the thread count).
const CHUNK_CELLS: usize = 4_096;

/// What one unsuccessful search did to the belief. All values are probabilities (0..=1).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct UpdateOutcome {
    /// Probability of success of the search, `Σ p_i d_i` over cells and particles, before the
    /// update.
    pub pos: f64,
    /// Mass in the searched area (cells with `d > 0` and particles with `d > 0`) before.
    pub poc_in_area_before: f64,
    /// Mass in the same places after the update.
    pub poc_in_area_after: f64,
    /// Mass-weighted mean POD over the searched area: `pos / poc_in_area_before` (0 when the
    /// area held no mass).
    pub pod_mean_in_area: f64,
    /// Mass the search took from the particles, `Σ w_j d_j`, before renormalising.
    pub particle_mass_removed: f64,
    /// Mass the search took from the cells, `Σ p_i d_i`, before renormalising.
    pub grid_mass_removed: f64,
}

#[derive(Clone, Copy, Default)]
struct Partial {
    pos: Compensated,
    remaining: Compensated,
    area: f64,
}

fn total(parts: &[Partial]) -> (f64, f64, f64) {
    (
        neumaier_sum(parts.iter().map(|p| p.pos.value())),
        neumaier_sum(parts.iter().map(|p| p.remaining.value())),
        neumaier_sum(parts.iter().map(|p| p.area)),
    )
}

/// Σ p·d, Σ p·(1 - d) and Σ p over d > 0 of one row piece, in four independent lanes so the
/// loop vectorises (a piece is at most one grid row or chunk of particles; its plain sums are
/// exact to ~1e-16 x its length, relative, and the pieces are then added with compensation).
fn fused_sums(p: &[f64], d: &[f64]) -> (f64, f64, f64) {
    let mut pos = [0.0_f64; 4];
    let mut rem = [0.0_f64; 4];
    let mut area = [0.0_f64; 4];
    let pc = p.chunks_exact(4);
    let dc = d.chunks_exact(4);
    let (pt, dt) = (pc.remainder(), dc.remainder());
    for (p4, d4) in pc.zip(dc) {
        for l in 0..4 {
            pos[l] += p4[l] * d4[l];
            rem[l] += p4[l] * (1.0 - d4[l]);
            area[l] += if d4[l] > 0.0 { p4[l] } else { 0.0 };
        }
    }
    for (&pi, &di) in pt.iter().zip(dt) {
        pos[0] += pi * di;
        rem[0] += pi * (1.0 - di);
        area[0] += if di > 0.0 { pi } else { 0.0 };
    }
    let s = |a: [f64; 4]| (a[0] + a[1]) + (a[2] + a[3]);
    (s(pos), s(rem), s(area))
}

/// Σ p in four lanes.
fn lane_sum(p: &[f64]) -> f64 {
    let mut acc = [0.0_f64; 4];
    let pc = p.chunks_exact(4);
    let tail: f64 = pc.remainder().iter().sum();
    for p4 in pc {
        for l in 0..4 {
            acc[l] += p4[l];
        }
    }
    (acc[0] + acc[1]) + (acc[2] + acc[3]) + tail
}

/// Bayesian update after an unsuccessful search: every cell and particle keeps the share
/// `1 - d` of its mass, the rest of world all of its mass, and the belief is scaled back to a
/// total of 1: `p_i' = p_i (1 - d_i) / (1 - POS)`.
///
/// `cells` is the search's POD layer on the belief's grid; `particle_pod` the POD at each
/// particle's position at the time of the search (empty when the belief has no particles).
/// Two passes over the cells: one reads masses and POD and forms the sums, one writes the
/// scaled masses; the belief is untouched when an error is returned.
///
/// # Errors
/// [`SearchError::GridMismatch`] when the layer was made for another grid;
/// [`SearchError::ParticleCountMismatch`] / [`SearchError::BadPod`] for the particle POD;
/// [`SearchError::CertainDetectionContradicted`] when POS = 1 (nothing would be left: the
/// search could not have missed).
pub fn update_after_miss(
    belief: &mut Belief,
    cells: &PodLayer,
    particle_pod: &[f64],
) -> Result<UpdateOutcome, SearchError> {
    let grid = *belief.grid();
    cells.check_grid(grid.rows(), grid.cols())?;
    if cells.grid() != &grid {
        return Err(SearchError::GridMismatch {
            layer_rows: cells.grid().rows(),
            layer_cols: cells.grid().cols(),
            rows: grid.rows(),
            cols: grid.cols(),
        });
    }
    let n_particles = belief.particles().len();
    if particle_pod.len() != n_particles {
        return Err(SearchError::ParticleCountMismatch {
            expected: n_particles,
            got: particle_pod.len(),
        });
    }
    if let Some((i, &v)) = particle_pod
        .iter()
        .enumerate()
        .find(|(_, v)| !(v.is_finite() && (0.0..=1.0).contains(*v)))
    {
        return Err(SearchError::BadPod {
            what: format!("particle {i}"),
            value: v,
        });
    }

    let ncols = grid.cols();
    let rows = cells.rows();
    let cols = cells.cols();
    let pod = cells.window_values();
    let chunk_rows = (CHUNK_CELLS / ncols).max(1);
    let parts = belief.parts_mut();
    if parts.cells.as_slice().is_none() {
        *parts.cells = parts.cells.as_standard_layout().into_owned();
    }
    let masses = parts
        .cells
        .as_slice_mut()
        .expect("standard layout was just ensured");

    // Pass 1: sums only.
    let grid_parts: Vec<Partial> = masses
        .par_chunks(chunk_rows * ncols)
        .enumerate()
        .map(|(k, chunk)| {
            let mut acc = Partial::default();
            for (i, row) in chunk.chunks_exact(ncols).enumerate() {
                let r = k * chunk_rows + i;
                if rows.contains(&r) && !cols.is_empty() {
                    let d_row = pod.row(r - rows.start);
                    let d_row = d_row
                        .as_slice()
                        .expect("PodLayer values are standard layout");
                    let (pos, rem, area) = fused_sums(&row[cols.clone()], d_row);
                    acc.pos.add(pos);
                    acc.remaining.add(rem);
                    acc.remaining.add(lane_sum(&row[..cols.start]));
                    acc.remaining.add(lane_sum(&row[cols.end..]));
                    acc.area += area;
                } else {
                    acc.remaining.add(lane_sum(row));
                }
            }
            acc
        })
        .collect();
    let weights: &mut [f64] = parts.particle_weights;
    let particle_parts: Vec<Partial> = weights
        .par_chunks(CHUNK_CELLS)
        .zip(particle_pod.par_chunks(CHUNK_CELLS))
        .map(|(w, d)| {
            let mut acc = Partial::default();
            let (pos, rem, area) = fused_sums(w, d);
            acc.pos.add(pos);
            acc.remaining.add(rem);
            acc.area += area;
            acc
        })
        .collect();
    let (pos_cells, rem_cells, area_cells) = total(&grid_parts);
    let (pos_particles, rem_particles, area_particles) = total(&particle_parts);
    let row_mass = *parts.rest_of_world;
    let remaining = neumaier_sum([rem_cells, rem_particles, row_mass]);
    let pos = pos_cells + pos_particles;
    if !(remaining > 0.0 && remaining.is_finite()) {
        return Err(SearchError::CertainDetectionContradicted { pos });
    }
    let area_before = area_cells + area_particles;
    if pos == 0.0 {
        // Nothing was searched where mass lies: the belief stays exactly as it is.
        return Ok(UpdateOutcome {
            pos,
            poc_in_area_before: area_before,
            poc_in_area_after: area_before,
            pod_mean_in_area: 0.0,
            particle_mass_removed: 0.0,
            grid_mass_removed: 0.0,
        });
    }
    let k = 1.0 / remaining;

    // Pass 2: write p (1 - d) / (1 - POS).
    masses
        .par_chunks_mut(chunk_rows * ncols)
        .enumerate()
        .for_each(|(kc, chunk)| {
            for (i, row) in chunk.chunks_exact_mut(ncols).enumerate() {
                let r = kc * chunk_rows + i;
                if rows.contains(&r) && !cols.is_empty() {
                    let d_row = pod.row(r - rows.start);
                    let d_row = d_row
                        .as_slice()
                        .expect("PodLayer values are standard layout");
                    let (west, rest) = row.split_at_mut(cols.start);
                    let (mid, east) = rest.split_at_mut(cols.len());
                    west.iter_mut().for_each(|p| *p *= k);
                    for (p, &d) in mid.iter_mut().zip(d_row) {
                        *p = *p * (1.0 - d) * k;
                    }
                    east.iter_mut().for_each(|p| *p *= k);
                } else {
                    row.iter_mut().for_each(|p| *p *= k);
                }
            }
        });
    weights
        .par_chunks_mut(CHUNK_CELLS)
        .zip(particle_pod.par_chunks(CHUNK_CELLS))
        .for_each(|(w, d)| {
            for (p, &d) in w.iter_mut().zip(d) {
                *p = *p * (1.0 - d) * k;
            }
        });
    *parts.rest_of_world = row_mass * k;

    Ok(UpdateOutcome {
        pos,
        poc_in_area_before: area_before,
        poc_in_area_after: ((area_before - pos) * k).max(0.0),
        pod_mean_in_area: if area_before > 0.0 {
            pos / area_before
        } else {
            0.0
        },
        particle_mass_removed: pos_particles,
        grid_mass_removed: pos_cells,
    })
}
