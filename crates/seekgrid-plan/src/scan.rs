//! The global scan: every orientation, size and position of a rectangle, scored on rotated
//! summed-area tables of the residual mass.
//!
//! For each orientation the residual (first block-summed to about half the scan cell) is
//! splatted bilinearly onto a raster aligned with the rectangle's axes; a pyramid of 2x2 sums
//! gives coarser rasters, and each candidate size is scanned on the level whose cells are at
//! most 1/K of its short side, at every node position, in O(1) per position with the
//! summed-area table (mass taken as uniform within a scan cell, so fractional rectangle edges
//! are exact bilinear look-ups). The result is approximate (the resampling moves mass by up to
//! a scan cell); the local search and the exact evaluation that follow work on the grid's own
//! cells.

use crate::geometry::{Convex, axes};
use geo::Coord;
use ndarray::Array2;
use rayon::prelude::*;
use seekgrid_core::GridSpec;

/// One rectangle size of the scan: `legs` legs at spacing `spacing_m` (short side
/// `legs x spacing`, long side `track / legs`), with the POD it gives.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) struct RectSize {
    pub(crate) spacing_m: f64,
    pub(crate) legs: usize,
    pub(crate) long_m: f64,
    pub(crate) short_m: f64,
    pub(crate) pod: f64,
}

/// The best position found for one orientation and size.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) struct ScanHit {
    pub(crate) score: f64,
    pub(crate) theta_deg: f64,
    pub(crate) size: usize,
    pub(crate) center: Coord<f64>,
    /// The scan cell used, metres (the local search starts with this step).
    pub(crate) cell_m: f64,
}

/// Settings of one scan.
pub(crate) struct ScanSettings<'a> {
    pub(crate) thetas_deg: &'a [f64],
    pub(crate) cells_per_side: usize,
    pub(crate) max_cells_per_axis: usize,
    pub(crate) placed: &'a [Convex],
    pub(crate) overlap_tolerance_m: f64,
    /// Which positions of each rectangle are scored.
    pub(crate) range: ScanRange,
}

/// Which positions of a rectangle a scan scores.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) enum ScanRange {
    /// Centres within the box that holds the mass, with one cell of slack: moving a rectangle
    /// whose centre lies outside it towards it never loses mass.
    NearMass,
    /// Every position that touches the raster (used when the positions near the mass are all
    /// blocked by placed areas).
    Everywhere,
}

/// A box in the coordinates along one orientation's axes `(u, v)`, metres.
#[derive(Clone, Copy, Debug, PartialEq)]
struct AxisBox {
    a_min: f64,
    a_max: f64,
    b_min: f64,
    b_max: f64,
}

/// The raster of one orientation and what its positions are scored against: the axes `(u,
/// v)`, the raster's origin `(a0, b0)` along them (metres), the box holding the mass, the
/// placed areas and the range of positions scored.
struct OrientationScan<'a> {
    u: Coord<f64>,
    v: Coord<f64>,
    a0: f64,
    b0: f64,
    mass: AxisBox,
    blockers: &'a [Blocker],
    range: ScanRange,
}

struct Block {
    x: f64,
    y: f64,
    m: f64,
}

/// Scans every orientation and size; returns the best clear position of each (orientation,
/// size) pair that has one, in the order orientation-major, size-minor.
pub(crate) fn scan(
    grid: &GridSpec,
    residual: &Array2<f64>,
    sizes: &[RectSize],
    s: &ScanSettings<'_>,
) -> Vec<ScanHit> {
    if sizes.is_empty() {
        return Vec::new();
    }
    let cell = grid.cell_m();
    let ext = grid.extent();
    let diag = ext.width_m().hypot(ext.height_m());
    let min_short = sizes
        .iter()
        .map(|z| z.short_m)
        .fold(f64::INFINITY, f64::min);
    let h0 = cell
        .max(min_short / s.cells_per_side as f64)
        .max(diag / s.max_cells_per_axis as f64);
    let mut blocks = block_sum(
        grid,
        residual,
        ((h0 / (2.0 * cell)).floor() as usize).max(1),
    );
    // Leave out blocks that together hold at most 1e-9 of the mass: no candidate can gain
    // from them, and they would widen the region scanned.
    let total: f64 = blocks.iter().map(|b| b.m).sum();
    let floor_m = 1e-9 * total / blocks.len().max(1) as f64;
    blocks.retain(|b| b.m > floor_m);
    if blocks.is_empty() {
        return Vec::new();
    }
    let per_theta: Vec<Vec<ScanHit>> = s
        .thetas_deg
        .par_iter()
        .map(|&theta| scan_orientation(&blocks, theta, h0, sizes, s))
        .collect();
    per_theta.into_iter().flatten().collect()
}

/// Block sums of the residual (b x b cells), as points at the centre of each block's cells;
/// blocks without mass are left out.
fn block_sum(grid: &GridSpec, residual: &Array2<f64>, b: usize) -> Vec<Block> {
    let (rows, cols) = residual.dim();
    let (br, bc) = (rows.div_ceil(b), cols.div_ceil(b));
    let cell = grid.cell_m();
    let per_row: Vec<Vec<Block>> = (0..br)
        .into_par_iter()
        .map(|i| {
            let r0 = i * b;
            let r1 = (r0 + b).min(rows);
            let mut sums = vec![0.0; bc];
            for r in r0..r1 {
                let row = residual.row(r);
                let row = row.as_slice().expect("standard layout");
                for (s, chunk) in sums.iter_mut().zip(row.chunks(b)) {
                    *s += chunk.iter().sum::<f64>();
                }
            }
            let y = grid.north_m() - 0.5 * (r0 + r1) as f64 * cell;
            sums.iter()
                .enumerate()
                .filter(|(_, m)| **m > 0.0)
                .map(|(j, &m)| {
                    let c0 = j * b;
                    let c1 = (c0 + b).min(cols);
                    Block {
                        x: grid.west_m() + 0.5 * (c0 + c1) as f64 * cell,
                        y,
                        m,
                    }
                })
                .collect()
        })
        .collect();
    per_row.into_iter().flatten().collect()
}

/// A summed-area table `(na + 1) x (nb + 1)` with clamped look-ups.
struct Sat {
    na: usize,
    nb: usize,
    v: Vec<f64>,
}

impl Sat {
    fn new(raster: &[f64], na: usize, nb: usize) -> Self {
        let w = nb + 1;
        let mut v = vec![0.0; (na + 1) * w];
        for i in 0..na {
            let mut run = 0.0;
            for j in 0..nb {
                run += raster[i * nb + j];
                v[(i + 1) * w + j + 1] = v[i * w + j + 1] + run;
            }
        }
        Self { na, nb, v }
    }

    /// The table extended by `pad` nodes on every side with the clamped values (0 before the
    /// first row or column, the totals after the last), so that look-ups need no clamp.
    fn padded(&self, pad: usize) -> Padded {
        let w = self.nb + 1 + 2 * pad;
        let rows = self.na + 1 + 2 * pad;
        let mut v = vec![0.0; rows * w];
        for pi in 0..rows {
            let i = pi as isize - pad as isize;
            for pj in 0..w {
                v[pi * w + pj] = self.at(i, pj as isize - pad as isize);
            }
        }
        Padded { pad, w, v }
    }

    /// Mass of the rectangle with lower corner at node `(i, j)` and sides `ia + fa`, `ib + fb`
    /// cells (clamped look-ups; mass uniform within a cell makes the fractional edges exact
    /// bilinear interpolation). The slow reference of the padded scan.
    #[cfg(test)]
    fn rect(&self, i: isize, j: isize, ia: isize, ib: isize, fa: f64, fb: f64) -> f64 {
        let far = (1.0 - fa) * (1.0 - fb) * self.at(i + ia, j + ib)
            + fa * (1.0 - fb) * self.at(i + ia + 1, j + ib)
            + (1.0 - fa) * fb * self.at(i + ia, j + ib + 1)
            + fa * fb * self.at(i + ia + 1, j + ib + 1);
        let top = (1.0 - fb) * self.at(i, j + ib) + fb * self.at(i, j + ib + 1);
        let side = (1.0 - fa) * self.at(i + ia, j) + fa * self.at(i + ia + 1, j);
        far - top - side + self.at(i, j)
    }

    #[inline(always)]
    fn at(&self, i: isize, j: isize) -> f64 {
        let i = i.clamp(0, self.na as isize) as usize;
        let j = j.clamp(0, self.nb as isize) as usize;
        self.v[i * (self.nb + 1) + j]
    }
}

/// A summed-area table padded with its clamped values (see [`Sat::padded`]).
struct Padded {
    pad: usize,
    w: usize,
    v: Vec<f64>,
}

fn scan_orientation(
    blocks: &[Block],
    theta: f64,
    h0: f64,
    sizes: &[RectSize],
    s: &ScanSettings<'_>,
) -> Vec<ScanHit> {
    let (u, v) = axes(theta);
    let mass = AxisBox::of_blocks(blocks, u, v);
    // One spare cell on each side for the bilinear splat; the first mass point sits at the
    // centre of a cell, so that at 0° and 90° the grid's cells land whole in the raster's.
    let a0 = mass.a_min - 1.5 * h0;
    let b0 = mass.b_min - 1.5 * h0;
    let na = ((mass.a_max - a0) / h0).ceil() as usize + 2;
    let nb = ((mass.b_max - b0) / h0).ceil() as usize + 2;
    let mut raster = vec![0.0; na * nb];
    for bl in blocks {
        let fa = (bl.x * u.x + bl.y * u.y - a0) / h0 - 0.5;
        let fb = (bl.x * v.x + bl.y * v.y - b0) / h0 - 0.5;
        // fa, fb >= 0.5, so truncation is the floor.
        let (ia, ib) = (fa as usize, fb as usize);
        let (wa, wb) = (fa - ia as f64, fb - ib as f64);
        raster[ia * nb + ib] += bl.m * (1.0 - wa) * (1.0 - wb);
        raster[(ia + 1) * nb + ib] += bl.m * wa * (1.0 - wb);
        raster[ia * nb + ib + 1] += bl.m * (1.0 - wa) * wb;
        raster[(ia + 1) * nb + ib + 1] += bl.m * wa * wb;
    }
    // Pyramid of 2x2 sums.
    let mut levels = vec![Sat::new(&raster, na, nb)];
    let (mut cur, mut cna, mut cnb) = (raster, na, nb);
    while cna >= 4 && cnb >= 4 {
        let (pa, pb) = (cna.div_ceil(2), cnb.div_ceil(2));
        let mut next = vec![0.0; pa * pb];
        for i in 0..cna {
            for j in 0..cnb {
                next[(i / 2) * pb + j / 2] += cur[i * cnb + j];
            }
        }
        levels.push(Sat::new(&next, pa, pb));
        (cur, cna, cnb) = (next, pa, pb);
    }
    let blockers: Vec<Blocker> = s
        .placed
        .iter()
        .map(|p| Blocker::new(p, u, v, s.overlap_tolerance_m))
        .collect();
    let k = s.cells_per_side as f64;
    let level_of = |z: &RectSize| {
        let ratio = z.short_m / (k * h0);
        if ratio >= 2.0 {
            (ratio.log2().floor() as usize).min(levels.len() - 1)
        } else {
            0
        }
    };
    // Padding each level needs: the largest side in cells, plus two.
    let mut pads = vec![0usize; levels.len()];
    for z in sizes {
        let l = level_of(z);
        let h = h0 * (1u64 << l) as f64;
        let need = (z.long_m / h).max(z.short_m / h).ceil() as usize + 2;
        pads[l] = pads[l].max(need);
    }
    let padded: Vec<Option<Padded>> = levels
        .iter()
        .zip(&pads)
        .map(|(sat, &p)| (p > 0).then(|| sat.padded(p)))
        .collect();
    let scan_at = OrientationScan {
        u,
        v,
        a0,
        b0,
        mass,
        blockers: &blockers,
        range: s.range,
    };
    sizes
        .iter()
        .enumerate()
        .filter_map(|(idx, z)| {
            let level = level_of(z);
            let h = h0 * (1u64 << level) as f64;
            let table = padded[level].as_ref().expect("padded for its sizes");
            scan_at
                .best_position(&levels[level], table, z, h)
                .map(|(score, center)| ScanHit {
                    score,
                    theta_deg: theta,
                    size: idx,
                    center,
                    cell_m: h,
                })
        })
        .collect()
}

/// One separating-axis test of the candidates against a placed area: the candidates overlap
/// the area on this axis when `lo < c·n ± extent < hi` (see [`Blocker`]).
struct Axis {
    /// Components of the axis along the candidate's u and v.
    nu: f64,
    nv: f64,
    /// The placed area's projection, shrunk by the tolerance.
    lo: f64,
    hi: f64,
}

/// A placed area as seen by the scan of one orientation: for each row `i` of positions, the
/// positions `j` whose rectangle overlaps it form an open interval (the separating axis theorem
/// with the candidate's two axes and the area's edge normals, each giving an interval that is
/// linear in `j`), so blocked positions are skipped without testing each one.
struct Blocker {
    axes: Vec<Axis>,
}

impl Blocker {
    fn new(poly: &Convex, u: Coord<f64>, v: Coord<f64>, tol: f64) -> Self {
        let mut normals = vec![u, v];
        let n = poly.pts.len();
        for k in 0..n {
            let a = poly.pts[k];
            let b = poly.pts[(k + 1) % n];
            let (nx, ny) = (b.y - a.y, a.x - b.x);
            let len = nx.hypot(ny);
            if len > 0.0 {
                normals.push(Coord {
                    x: nx / len,
                    y: ny / len,
                });
            }
        }
        let axes = normals
            .into_iter()
            .map(|nrm| {
                let (lo, hi) =
                    poly.pts
                        .iter()
                        .fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), p| {
                            let d = p.x * nrm.x + p.y * nrm.y;
                            (l.min(d), h.max(d))
                        });
                Axis {
                    nu: u.x * nrm.x + u.y * nrm.y,
                    nv: v.x * nrm.x + v.y * nrm.y,
                    lo: lo + tol,
                    hi: hi - tol,
                }
            })
            .collect();
        Self { axes }
    }

    /// The open interval of `j` blocked in row `i`, for candidates centred at
    /// `a_c u + (b_start + j h) v` with half extents `ha` (along u) and `hb` (along v).
    fn blocked(&self, a_c: f64, b_start: f64, h: f64, ha: f64, hb: f64) -> (f64, f64) {
        let (mut jl, mut jh) = (f64::NEG_INFINITY, f64::INFINITY);
        for ax in &self.axes {
            let e = ha * ax.nu.abs() + hb * ax.nv.abs();
            // Overlap on this axis: lo - e < alpha + beta j < hi + e.
            let alpha = a_c * ax.nu + b_start * ax.nv;
            let beta = h * ax.nv;
            let (lo, hi) = (ax.lo - e - alpha, ax.hi + e - alpha);
            if beta.abs() < 1e-12 * h {
                if !(lo < 0.0 && 0.0 < hi) {
                    return (0.0, 0.0);
                }
                continue;
            }
            let (a, b) = if beta > 0.0 {
                (lo / beta, hi / beta)
            } else {
                (hi / beta, lo / beta)
            };
            jl = jl.max(a);
            jh = jh.min(b);
            if jl >= jh {
                return (0.0, 0.0);
            }
        }
        (jl, jh)
    }
}

impl AxisBox {
    /// The box of the blocks' centres along `(u, v)`.
    fn of_blocks(blocks: &[Block], u: Coord<f64>, v: Coord<f64>) -> Self {
        let mut bx = Self {
            a_min: f64::INFINITY,
            a_max: f64::NEG_INFINITY,
            b_min: f64::INFINITY,
            b_max: f64::NEG_INFINITY,
        };
        for bl in blocks {
            let a = bl.x * u.x + bl.y * u.y;
            let b = bl.x * v.x + bl.y * v.y;
            bx.a_min = bx.a_min.min(a);
            bx.a_max = bx.a_max.max(a);
            bx.b_min = bx.b_min.min(b);
            bx.b_max = bx.b_max.max(b);
        }
        bx
    }
}

impl OrientationScan<'_> {
    /// The best clear position of a rectangle of size `z` on the level with cells `h` metres
    /// (`sat` its table, `table` the same padded), as (score, centre); `None` when every
    /// position is blocked.
    fn best_position(
        &self,
        sat: &Sat,
        table: &Padded,
        z: &RectSize,
        h: f64,
    ) -> Option<(f64, Coord<f64>)> {
        let (a0, b0, u, v) = (self.a0, self.b0, self.u, self.v);
        let blockers = self.blockers;
        let la = z.long_m / h;
        let lb = z.short_m / h;
        let (ia, ib) = (la.floor() as isize, lb.floor() as isize);
        let (fa, fb) = (la - ia as f64, lb - ib as f64);
        let w00 = (1.0 - fa) * (1.0 - fb);
        let w10 = fa * (1.0 - fb);
        let w01 = (1.0 - fa) * fb;
        let w11 = fa * fb;
        let (ha, hb) = (0.5 * z.long_m, 0.5 * z.short_m);
        let b_start = b0 + 0.5 * lb * h;
        let mut best: Option<(f64, isize, isize)> = None;
        let mut blocked: Vec<(isize, isize)> = Vec::with_capacity(blockers.len());
        let (na, nb) = (sat.na as isize, sat.nb as isize);
        // Every position that touches the raster, or those near the mass (see `ScanRange`).
        let (mut i_first, mut i_last) = (-(ia + 1), na);
        let (mut j_first, mut j_last) = (-(ib + 1), nb);
        if self.range == ScanRange::NearMass {
            let m = &self.mass;
            let (ra0, ra1) = ((m.a_min - a0) / h, (m.a_max - a0) / h);
            let (rb0, rb1) = ((m.b_min - b0) / h, (m.b_max - b0) / h);
            i_first = i_first.max((ra0 - 0.5 * la).floor() as isize - 1);
            i_last = i_last.min((ra1 - 0.5 * la).ceil() as isize + 1);
            j_first = j_first.max((rb0 - 0.5 * lb).floor() as isize - 1);
            j_last = j_last.min((rb1 - 0.5 * lb).ceil() as isize + 1);
        }
        for i in i_first..=i_last {
            let a_c = a0 + (i as f64 + 0.5 * la) * h;
            // Blocked positions j: l < j < h, as inclusive integer ranges.
            blocked.clear();
            for bl in blockers {
                let (l, hh) = bl.blocked(a_c, b_start, h, ha, hb);
                if l < hh {
                    let lo = if l.is_finite() {
                        (l.floor() as isize + 1).max(j_first)
                    } else {
                        j_first
                    };
                    let hi = if hh.is_finite() {
                        (hh.ceil() as isize - 1).min(j_last)
                    } else {
                        j_last
                    };
                    if lo <= hi {
                        blocked.push((lo, hi));
                    }
                }
            }
            blocked.sort_unstable();
            let (pad, w) = (table.pad as isize, table.w);
            let row = |r: isize| {
                let r = (r + pad) as usize;
                &table.v[r * w..(r + 1) * w]
            };
            let (r0, ra, rb) = (row(i), row(i + ia), row(i + ia + 1));
            let mut j = j_first;
            let mut k = 0;
            while j <= j_last {
                // Skip blocked ranges that start at or before j.
                while k < blocked.len() && blocked[k].1 < j {
                    k += 1;
                }
                if k < blocked.len() && blocked[k].0 <= j {
                    j = blocked[k].1 + 1;
                    continue;
                }
                let seg_end = if k < blocked.len() {
                    blocked[k].0 - 1
                } else {
                    j_last
                };
                for jj in j..=seg_end {
                    let q = (jj + pad) as usize;
                    let qb = q + ib as usize;
                    let m = w00 * ra[qb] + w10 * rb[qb] + w01 * ra[qb + 1] + w11 * rb[qb + 1]
                        - ((1.0 - fb) * r0[qb] + fb * r0[qb + 1])
                        - ((1.0 - fa) * ra[q] + fa * rb[q])
                        + r0[q];
                    if best.is_none_or(|(bm, _, _)| m > bm) {
                        best = Some((m, i, jj));
                    }
                }
                j = seg_end + 1;
            }
        }
        best.map(|(m, i, j)| {
            let a = a0 + (i as f64 + 0.5 * la) * h;
            let b = b_start + j as f64 * h;
            (
                m.max(0.0) * z.pod,
                Coord {
                    x: a * u.x + b * v.x,
                    y: a * u.y + b * v.y,
                },
            )
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::geometry::{RowPrefix, rectangle};
    use seekgrid_core::DEFAULT_MAX_CELLS;

    fn raster(na: usize, nb: usize) -> Vec<f64> {
        (0..na * nb)
            .map(|k| ((k * 37 + 11) % 17) as f64 / 17.0)
            .collect()
    }

    #[test]
    fn padded_table_matches_clamped_lookups() {
        let sat = Sat::new(&raster(7, 5), 7, 5);
        let p = sat.padded(4);
        for i in -4..=11isize {
            for j in -4..=9isize {
                let v = p.v[(i + 4) as usize * p.w + (j + 4) as usize];
                assert_eq!(v, sat.at(i, j));
            }
        }
        // The bilinear rectangle of the clamped table against a direct sum of whole cells.
        let r = raster(7, 5);
        let direct: f64 = (1..4)
            .flat_map(|i| (2..4).map(move |j| (i, j)))
            .map(|(i, j)| r[i * 5 + j])
            .sum();
        assert!((sat.rect(1, 2, 3, 2, 0.0, 0.0) - direct).abs() < 1e-12);
    }

    #[test]
    fn blocked_positions_are_exactly_the_overlapping_ones() {
        let placed = rectangle(Coord { x: 40.0, y: -25.0 }, 63.0, 120.0, 45.0);
        for theta in [0.0, 15.0, 63.0, 100.0] {
            let (u, v) = axes(theta);
            let bl = Blocker::new(&placed, u, v, 1e-6);
            let (h, long, short) = (7.0, 55.0, 20.0);
            let (a0, b0) = (-150.0, -140.0);
            for i in 0..40 {
                let a_c = a0 + (i as f64 + 0.5 * long / h) * h;
                let b_start = b0 + 0.5 * short;
                let (l, hi) = bl.blocked(a_c, b_start, h, 0.5 * long, 0.5 * short);
                for j in 0..40 {
                    let b = b_start + j as f64 * h;
                    let c = Coord {
                        x: a_c * u.x + b * v.x,
                        y: a_c * u.y + b * v.y,
                    };
                    let slow = rectangle(c, theta, long, short).overlaps(&placed, 1e-6);
                    let jf = j as f64;
                    let fast = l < hi && l < jf && jf < hi;
                    assert_eq!(fast, slow, "theta {theta} i {i} j {j}");
                }
            }
        }
    }

    #[test]
    fn aligned_scan_finds_the_brute_force_best_position() {
        let grid = GridSpec::new(0.0, 2000.0, 100.0, 20, 20, DEFAULT_MAX_CELLS).unwrap();
        let m = Array2::from_shape_fn((20, 20), |(r, c)| {
            let (r, c) = (r as f64, c as f64);
            (-((r - 6.0).powi(2) + (c - 12.0).powi(2)) / 8.0).exp()
        });
        let z = RectSize {
            spacing_m: 50.0,
            legs: 6,
            long_m: 700.0,
            short_m: 300.0,
            pod: 0.5,
        };
        let s = ScanSettings {
            thetas_deg: &[0.0],
            cells_per_side: 3,
            max_cells_per_axis: 1024,
            placed: &[],
            overlap_tolerance_m: 1e-6,
            range: ScanRange::Everywhere,
        };
        let hits = scan(&grid, &m, &[z], &s);
        assert_eq!(hits.len(), 1);
        assert_eq!(hits[0].cell_m, 100.0);
        // Brute force on the same lattice of positions (lower corners on cell corners).
        let rp = RowPrefix::new(&grid, &m);
        let mut best = 0.0f64;
        for i in -8..28 {
            for j in -8..28 {
                let c = Coord {
                    x: i as f64 * 100.0 + 150.0,
                    y: j as f64 * 100.0 + 350.0,
                };
                best = best.max(rp.mass_under(&rectangle(c, 0.0, 700.0, 300.0)));
            }
        }
        assert!(
            (hits[0].score - 0.5 * best).abs() < 1e-12,
            "{} vs {}",
            hits[0].score,
            0.5 * best
        );
    }
}
