//! POD of an actual track (a GPS track or the legs of a pattern) on cells and at points.
//!
//! # Model
//! A smooth law (inverse cube, exponential) is a detection *rate* per metre of track that
//! depends on range only. Its integral along a straight segment has a closed form, exposures add
//! along the track and over revisits, and the POD at a point is `1 - exp(-exposure)`: separate
//! passes combine as `1 - Π(1 - p)`, and a straight infinite pass at lateral distance `x` gives
//! exactly the law's lateral range curve ([`DetectionLaw::lateral_range_pod`]). Splitting a
//! straight leg into many GPS fixes changes nothing. For the inverse cube this is Koopman's own
//! derivation (rate ∝ 1/r³; Koopman 1946, Washburn ch. 2); for the exponential law it is the
//! Gaussian profile stated on [`DetectionLaw::lateral_range_pod`].
//!
//! Definite range detects with certainty within W/2 of the track: the POD of a cell is the exact
//! fraction of its area within W/2 of the track (the track's buffer polygon from `geo`,
//! arcs drawn with chords every 0.01π rad, rasterised by exact area coverage).
//!
//! # Cells
//! A cell's POD is the mean of the point POD at `n x n` sub-points on a regular lattice inside
//! it. Far from the track (beyond `max(4 cells, 2 W)`) the POD is smooth and `n = 1`; near it
//! `n = ceil(10 · cell / W)`, at most 32, and near the first and last fix four times that, at
//! most 64 (a 4x finer lattice changes no cell by more than 1e-3, checked in the tests).
//!
//! # Speed
//! The inverse cube reaches about 89 sweep widths, so one search touches most of a large grid
//! and of a drifting cloud. Far from the track its exposure is smooth: the window of cells,
//! and a lattice laid over many points, are cut into blocks whose cells or points read the
//! exposure off the block's corners wherever a stated bound keeps the error below half the
//! exposure left out beyond the reach (module `blocks`, private). On a 4 M-cell grid this
//! leaves about a tenth of the cells to score one by one.
//!
//! Cells scored one by one: a track of more than 64 segments (`TREE_ONLY_SEGMENTS`) is scored
//! through the split field (module `split`, private), built over those cells only: the rate is
//! split at a radius of ten mesh spacings into a near part summed exactly over the segments
//! close to each point and a smooth far part convolved with the whole track on a mesh by FFT.
//! A 10 000-fix track on 1 M cells takes about 0.3 s on two cores (docs/benchmarks/search.md)
//! and agrees with the exact sum over every segment to 1e-4 in POD (unit tests of this
//! module). POD at 4096 points or more ([`track_pod_at`], e.g. drifting particles) goes
//! through the same field, built over the points' box, for a track of more than 8 segments
//! (`POINT_TREE_ONLY_SEGMENTS`). Shorter tracks and fewer points go through the track tree.
//!
//! The track tree holds the track as a binary tree of runs of consecutive fixes (split at the
//! fix farthest from the chord, as Douglas-Peucker does). A run far from a point relative to
//! its deviation from its chord is evaluated as its chord weighted by the run's length (a
//! Barnes-Hut style far-field rule, within 1e-3 relative per run). Runs entirely beyond the
//! reach ([`DetectionLaw::reach_m`]) are culled, as is track beyond the reach of the grid
//! window in the split field.

use crate::blocks::{Block, BlockIndex, NodeLattice, plan_blocks};
use crate::coverage::polygon_coverage;
use crate::error::SearchError;
use crate::law::{DetectionLaw, Kernel, SweepWidth};
use crate::pod_layer::PodLayer;
use crate::split::{MeshChoice, Piece, TrackField};
use geo::{Buffer, Coord, LineString, buffer::BufferStyle, buffer::LineCap, buffer::LineJoin};
use ndarray::Array2;
use rayon::prelude::*;
use seekgrid_core::{GridSpec, ProjectedBox};

/// Tracks of at most this many segments are summed segment by segment through the track tree
/// at every point; longer ones through the split field ([`crate::split`]), whose FFT costs more
/// than a few dozen segments per point on the small grids such tracks are scored on.
const TREE_ONLY_SEGMENTS: usize = 64;
/// At many points (at least [`FIELD_MIN_POINTS`]) a track of more segments than this goes
/// through the split field.
const POINT_TREE_ONLY_SEGMENTS: usize = 8;
/// POD at points goes through the split field when there are at least this many points (and
/// the track has more than [`TREE_ONLY_SEGMENTS`] segments); fewer go through the track tree.
const FIELD_MIN_POINTS: usize = 4096;
/// Relative error accepted when a run of track stands in for its chord.
const FAR_FIELD_RELATIVE: f64 = 1e-3;
/// Absolute exposure error accepted per run when a run stands in for its chord.
const FAR_FIELD_ABSOLUTE: f64 = 1e-6;
/// Sub-points per cell side near the track, per (cell side / sweep width).
const SUBPOINTS_PER_WIDTH: f64 = 10.0;
/// Most sub-points per cell side.
const MAX_SUBPOINTS: usize = 32;
/// Sub-points per side in cells near the first and last fix (the field curves round the ends
/// of the track), as a multiple of the near value.
const END_FACTOR: usize = 4;
/// Most sub-points per cell side near the ends of the track.
const MAX_END_SUBPOINTS: usize = 64;
/// Chord angle of the arcs of the definite-range buffer, radians (the finest `geo` accepts).
const BUFFER_ARC_STEP_RAD: f64 = 0.01 * std::f64::consts::PI;

/// POD per cell from an actual track (points in the working frame, metres, in time order).
///
/// See the module documentation for the model, the sub-point sampling and the culling.
///
/// # Errors
/// [`SearchError::TrackTooShort`], [`SearchError::TrackPointNotFinite`],
/// [`SearchError::TrackHasNoLength`] for a bad track; [`SearchError::TrackOutsideGrid`] when the
/// track and its reach miss the grid.
pub fn track_pod(
    grid: &GridSpec,
    track: &[Coord<f64>],
    law: DetectionLaw,
    w: &SweepWidth,
) -> Result<PodLayer, SearchError> {
    check_track(track)?;
    let width = w.metres();
    if law == DetectionLaw::DefiniteRange {
        return definite_range_cells(grid, track, width);
    }
    let n_near = near_subpoints(grid.cell_m(), width);
    smooth_cells(
        grid,
        track,
        Kernel::new(law, width),
        width,
        Sampling::Adaptive(n_near),
    )
}

/// As [`track_pod`] but every cell sampled at `n_per_side x n_per_side` sub-points, for every
/// law (definite range too, by testing each sub-point). Slow; meant as a reference for checks.
///
/// # Errors
/// As [`track_pod`]; `n_per_side = 0` is read as 1.
pub fn track_pod_sampled(
    grid: &GridSpec,
    track: &[Coord<f64>],
    law: DetectionLaw,
    w: &SweepWidth,
    n_per_side: usize,
) -> Result<PodLayer, SearchError> {
    check_track(track)?;
    let width = w.metres();
    smooth_cells(
        grid,
        track,
        Kernel::new(law, width),
        width,
        Sampling::Uniform(n_per_side.max(1)),
    )
}

/// POD at each point (working frame, metres) for a search along `track`: the same model as
/// [`track_pod`], evaluated at the point instead of averaged over a cell. Non-finite points get 0.
///
/// # Errors
/// As [`track_pod`], except that points far from the track are no error.
pub fn track_pod_at(
    points: &[Coord<f64>],
    track: &[Coord<f64>],
    law: DetectionLaw,
    w: &SweepWidth,
) -> Result<Vec<f64>, SearchError> {
    check_track(track)?;
    let kernel = Kernel::new(law, w.metres());
    if matches!(kernel, Kernel::InverseCube { .. }) && points.len() >= FIELD_MIN_POINTS {
        return Ok(interpolated_pod_at(points, track, kernel, w.metres()));
    }
    Ok(exact_pod_at(points, track, kernel))
}

/// POD at points, each scored exactly: through the split field for many points and a long
/// track, through the track tree otherwise.
fn exact_pod_at(points: &[Coord<f64>], track: &[Coord<f64>], kernel: Kernel) -> Vec<f64> {
    let smooth = !matches!(kernel, Kernel::Disc { .. });
    if smooth && track.len() - 1 > POINT_TREE_ONLY_SEGMENTS && points.len() >= FIELD_MIN_POINTS {
        return field_pod_at(points, track, kernel);
    }
    let tree = TrackTree::new(track);
    points
        .par_iter()
        .with_min_len(1024)
        .map(|p| {
            if p.x.is_finite() && p.y.is_finite() {
                pod_of_exposure(tree.exposure(&kernel, *p))
            } else {
                0.0
            }
        })
        .collect()
}

/// Most lattice nodes laid over the points for [`interpolated_pod_at`].
const MAX_POINT_LATTICE_NODES: f64 = 1_000_000.0;

/// POD at many points for the inverse cube: a lattice of half a sweep width (coarser if the
/// points spread wide) is laid over the points within the reach of the track and cut into
/// blocks ([`crate::blocks`]); a point in an interpolated block reads its exposure off the
/// block's corners, the others are scored exactly ([`exact_pod_at`]).
fn interpolated_pod_at(
    points: &[Coord<f64>],
    track: &[Coord<f64>],
    kernel: Kernel,
    width_m: f64,
) -> Vec<f64> {
    let within = track_box(track).expanded(kernel.reach_m());
    let inside = |p: &Coord<f64>| within.contains(*p);
    let Some(bounds) = ProjectedBox::of_points(points.iter().copied().filter(inside)) else {
        return vec![0.0; points.len()];
    };
    let (w, h) = (bounds.width_m(), bounds.height_m());
    let spacing_m = (0.5 * width_m).max((w * h / MAX_POINT_LATTICE_NODES).sqrt());
    let lattice = NodeLattice {
        west_m: bounds.west_m,
        north_m: bounds.north_m,
        spacing_m,
        rows: 0..(h / spacing_m).ceil() as usize + 2,
        cols: 0..(w / spacing_m).ceil() as usize + 2,
    };
    let tree = TrackTree::new(track);
    let blocks = plan_blocks(&tree, &kernel, &lattice, 0.0);
    let index = BlockIndex::new(&lattice, &blocks);
    // NaN marks a point to score exactly.
    let read: Vec<f64> = points
        .par_iter()
        .with_min_len(4096)
        .map(|p| {
            if !inside(p) {
                return 0.0;
            }
            match index.locate(*p) {
                Some((k, r, c)) => blocks[k]
                    .interpolated(r, c)
                    .map_or(f64::NAN, pod_of_exposure),
                None => f64::NAN,
            }
        })
        .collect();
    let exact: Vec<usize> = (0..points.len()).filter(|&i| read[i].is_nan()).collect();
    let exact_points: Vec<Coord<f64>> = exact.iter().map(|&i| points[i]).collect();
    let mut out = read;
    for (i, pod) in exact.iter().zip(exact_pod_at(&exact_points, track, kernel)) {
        out[*i] = pod;
    }
    out
}

/// POD at many points through the split field: the points within the reach of the track are
/// grouped by blocks of the field, each block gathers its near pieces once, and every point
/// gets the near sum and the far mesh at its position. Points beyond the reach get 0.
fn field_pod_at(points: &[Coord<f64>], track: &[Coord<f64>], kernel: Kernel) -> Vec<f64> {
    let reach = kernel.reach_m();
    let within = track_box(track).expanded(reach);
    let inside: Vec<usize> = (0..points.len())
        .filter(|&i| within.contains(points[i]))
        .collect();
    let mut out = vec![0.0; points.len()];
    let Some(bounds) = ProjectedBox::of_points(inside.iter().map(|&i| points[i])) else {
        return out;
    };
    // A metre round the points keeps the box's area positive for a line or a single point.
    let eval = bounds.expanded(1.0);
    let density = inside.len() as f64 / (eval.width_m() * eval.height_m());
    let choice = MeshChoice {
        anchor: Coord {
            x: eval.west_m,
            y: eval.south_m,
        },
        base_m: density.sqrt().recip(),
        finest_divisor: 1,
        density_per_m2: density,
    };
    let field = TrackField::new(kernel, track, &eval, &choice, reach);
    let block = field.block_m();
    // The points grouped by block in one counting pass (stable: each block keeps the points
    // in their order), instead of a sort.
    let block_cols = (eval.width_m() / block).floor() as usize + 1;
    let block_rows = (eval.height_m() / block).floor() as usize + 1;
    let key = |p: Coord<f64>| {
        let row = (((p.y - eval.south_m) / block).floor() as usize).min(block_rows - 1);
        let col = (((p.x - eval.west_m) / block).floor() as usize).min(block_cols - 1);
        row * block_cols + col
    };
    let keys: Vec<usize> = inside.par_iter().map(|&i| key(points[i])).collect();
    let mut starts = vec![0_usize; block_rows * block_cols + 1];
    for &k in &keys {
        starts[k + 1] += 1;
    }
    for k in 1..starts.len() {
        starts[k] += starts[k - 1];
    }
    let mut next = starts.clone();
    let mut order = vec![0_usize; inside.len()];
    for (&i, &k) in inside.iter().zip(&keys) {
        order[next[k]] = i;
        next[k] += 1;
    }
    let groups: Vec<(usize, &[usize])> = (0..block_rows * block_cols)
        .filter(|&k| starts[k + 1] > starts[k])
        .map(|k| (k, &order[starts[k]..starts[k + 1]]))
        .collect();
    let pods: Vec<Vec<(usize, f64)>> = groups
        .par_iter()
        .map_init(Vec::new, |near, &(k, group)| {
            let (row, col) = (k / block_cols, k % block_cols);
            let rect = ProjectedBox {
                west_m: eval.west_m + col as f64 * block,
                south_m: eval.south_m + row as f64 * block,
                east_m: eval.west_m + (col + 1) as f64 * block,
                north_m: eval.south_m + (row + 1) as f64 * block,
            };
            field.gather(&rect, near);
            group
                .iter()
                .map(|&i| (i, pod_of_exposure(field.exposure(near, points[i]))))
                .collect()
        })
        .collect();
    for (i, pod) in pods.into_iter().flatten() {
        out[i] = pod;
    }
    out
}

pub(crate) fn check_track(track: &[Coord<f64>]) -> Result<(), SearchError> {
    if track.len() < 2 {
        return Err(SearchError::TrackTooShort {
            points: track.len(),
        });
    }
    if let Some(index) = track
        .iter()
        .position(|p| !(p.x.is_finite() && p.y.is_finite()))
    {
        return Err(SearchError::TrackPointNotFinite { index });
    }
    if track.windows(2).all(|s| s[0] == s[1]) {
        return Err(SearchError::TrackHasNoLength);
    }
    Ok(())
}

/// Sub-points per cell side near the track (see the module documentation).
#[must_use]
pub fn near_subpoints(cell_m: f64, width_m: f64) -> usize {
    ((SUBPOINTS_PER_WIDTH * cell_m / width_m).ceil() as usize).clamp(1, MAX_SUBPOINTS)
}

/// Sub-points per cell side near the first and last fix.
#[must_use]
pub fn end_subpoints(cell_m: f64, width_m: f64) -> usize {
    (END_FACTOR * near_subpoints(cell_m, width_m)).clamp(1, MAX_END_SUBPOINTS)
}

/// Euclidean norm of `(dx, dy)`. `f64::hypot` guards against overflow at a cost of several
/// times a square root; working-frame coordinates are metres (far below 1e150), so the plain
/// square root is exact to rounding here. A track with coordinates beyond 1e150 m gives an
/// infinite distance, i.e. no exposure, never a panic.
#[inline]
fn norm(dx: f64, dy: f64) -> f64 {
    (dx * dx + dy * dy).sqrt()
}

#[inline]
fn pod_of_exposure(e: f64) -> f64 {
    if e.is_nan() { 0.0 } else { -(-e).exp_m1() }
}

#[derive(Clone, Copy)]
enum Sampling {
    /// `n` sub-points per side near the track, more near its ends, 1 far from it.
    Adaptive(usize),
    /// `n` sub-points per side everywhere.
    Uniform(usize),
}

fn track_box(track: &[Coord<f64>]) -> ProjectedBox {
    // check_track guarantees at least two finite points.
    ProjectedBox::of_points(track.iter().copied()).unwrap_or(ProjectedBox {
        west_m: 0.0,
        south_m: 0.0,
        east_m: 0.0,
        north_m: 0.0,
    })
}

fn smooth_cells(
    grid: &GridSpec,
    track: &[Coord<f64>],
    kernel: Kernel,
    width_m: f64,
    sampling: Sampling,
) -> Result<PodLayer, SearchError> {
    let reach = kernel.reach_m();
    let Some((rows, cols)) = grid.cells_overlapping(&track_box(track).expanded(reach)) else {
        return Err(SearchError::TrackOutsideGrid { reach_m: reach });
    };
    let c = grid.cell_m();
    let scorer = CellScorer {
        grid,
        tree: TrackTree::new(track),
        kernel,
        sampling,
        near_radius: (4.0 * c).max(2.0 * width_m) + std::f64::consts::FRAC_1_SQRT_2 * c,
        ends: (track[0], track[track.len() - 1]),
        n_end: end_subpoints(c, width_m),
    };
    // Only the inverse cube reaches far enough (about 89 sweep widths) for most of the window
    // to be smooth; the reference sampling stays exact everywhere.
    let blocks = if matches!(kernel, Kernel::InverseCube { .. })
        && matches!(sampling, Sampling::Adaptive(_))
    {
        let lattice = NodeLattice {
            west_m: grid.west_m() + 0.5 * c,
            north_m: grid.north_m() - 0.5 * c,
            spacing_m: c,
            rows: rows.clone(),
            cols: cols.clone(),
        };
        plan_blocks(&scorer.tree, &kernel, &lattice, scorer.near_radius)
    } else {
        vec![Block::Exact {
            rows: rows.clone(),
            cols: cols.clone(),
        }]
    };
    // The split field only over the cells scored exactly.
    let exact_box = blocks
        .iter()
        .filter_map(|b| match b {
            Block::Exact { rows, cols } => Some(scorer.cells_box(rows, cols)),
            Block::Interpolated { .. } => None,
        })
        .reduce(|a, b| a.union(&b));
    // Mesh through the cell centres, as fine as the sub-points near the track or coarser.
    let per_side = match sampling {
        Sampling::Uniform(n) | Sampling::Adaptive(n) => n,
    };
    let choice = MeshChoice::cells(grid.cell_center(grid.rows() - 1, 0), c, per_side);
    // Definite range has no smooth rate to split (only the sampled reference gets here).
    let smooth = !matches!(kernel, Kernel::Disc { .. });
    let field = exact_box
        .filter(|_| smooth && track.len() - 1 > TREE_ONLY_SEGMENTS)
        .map(|eval| TrackField::new(kernel, track, &eval, &choice, reach));
    let block_values: Vec<Vec<f64>> = blocks
        .par_iter()
        .map(|b| scorer.block_values(b, field.as_ref()))
        .collect();
    let ncols = cols.len();
    let mut flat = vec![0.0; rows.len() * ncols];
    for (block, v) in blocks.iter().zip(block_values) {
        let (br, bc) = block.ranges();
        for (i, row) in v.chunks_exact(bc.len()).enumerate() {
            let start = (br.start - rows.start + i) * ncols + (bc.start - cols.start);
            flat[start..start + bc.len()].copy_from_slice(row);
        }
    }
    let values = Array2::from_shape_vec((rows.len(), ncols), flat)
        .expect("one value per cell of the window");
    Ok(PodLayer::from_parts(*grid, rows, cols, values))
}

/// What scores one cell: the track, the law and the sub-point rule.
struct CellScorer<'a> {
    grid: &'a GridSpec,
    tree: TrackTree,
    kernel: Kernel,
    sampling: Sampling,
    /// Cells whose centre lies within this of the track may need sub-points.
    near_radius: f64,
    /// First and last fix.
    ends: (Coord<f64>, Coord<f64>),
    /// Sub-points per side near the ends.
    n_end: usize,
}

impl CellScorer<'_> {
    /// The working-frame box of a block of cells.
    fn cells_box(
        &self,
        rows: &std::ops::Range<usize>,
        cols: &std::ops::Range<usize>,
    ) -> ProjectedBox {
        let top_left = self.grid.cell_box(rows.start, cols.start);
        let bottom_right = self.grid.cell_box(rows.end - 1, cols.end - 1);
        ProjectedBox {
            west_m: top_left.west_m,
            north_m: top_left.north_m,
            east_m: bottom_right.east_m,
            south_m: bottom_right.south_m,
        }
    }

    /// The block's POD values in row-major order.
    fn block_values(&self, block: &Block, field: Option<&TrackField>) -> Vec<f64> {
        match block {
            Block::Interpolated { rows, cols, .. } => {
                let mut out = Vec::with_capacity(rows.len() * cols.len());
                for r in rows.clone() {
                    for col in cols.clone() {
                        let e = block.interpolated(r as f64, col as f64).unwrap_or(0.0);
                        out.push(pod_of_exposure(e));
                    }
                }
                out
            }
            Block::Exact { rows, cols } => {
                let ncols = cols.len();
                let block = field.map_or(ncols, |f| {
                    ((f.block_m() / self.grid.cell_m()).floor() as usize).max(1)
                });
                let mut out = vec![0.0; rows.len() * ncols];
                out.par_chunks_mut(ncols).enumerate().for_each_init(
                    Vec::new,
                    |near, (i, out_row)| {
                        let r = rows.start + i;
                        for (b, out_block) in out_row.chunks_mut(block).enumerate() {
                            let j0 = cols.start + b * block;
                            if let Some(field) = field {
                                let j1 = j0 + out_block.len();
                                field.gather(&self.cells_box(&(r..r + 1), &(j0..j1)), near);
                            }
                            for (k, out) in out_block.iter_mut().enumerate() {
                                *out = self.cell(r, j0 + k, field, near);
                            }
                        }
                    },
                );
                out
            }
        }
    }

    /// POD of one cell, the mean over its sub-points.
    fn cell(&self, r: usize, col: usize, field: Option<&TrackField>, near: &[Piece]) -> f64 {
        let c = self.grid.cell_m();
        let centre = self.grid.cell_center(r, col);
        let n = match self.sampling {
            Sampling::Uniform(n) => n,
            Sampling::Adaptive(n) => {
                let near_end =
                    |q: Coord<f64>| norm(q.x - centre.x, q.y - centre.y) <= self.near_radius;
                if near_end(self.ends.0) || near_end(self.ends.1) {
                    self.n_end
                } else if n > 1 && self.tree.within(centre, self.near_radius) {
                    n
                } else {
                    1
                }
            }
        };
        match field {
            Some(field) => cell_mean_pod(|p| field.exposure(near, p), centre, c, n),
            None => cell_mean_pod(|p| self.tree.exposure(&self.kernel, p), centre, c, n),
        }
    }
}

fn cell_mean_pod(
    exposure: impl Fn(Coord<f64>) -> f64,
    centre: Coord<f64>,
    c: f64,
    n: usize,
) -> f64 {
    if n == 1 {
        return pod_of_exposure(exposure(centre));
    }
    let h = c / n as f64;
    let x0 = centre.x - 0.5 * c + 0.5 * h;
    let y0 = centre.y - 0.5 * c + 0.5 * h;
    let mut sum = 0.0;
    for i in 0..n {
        for j in 0..n {
            let p = Coord {
                x: x0 + j as f64 * h,
                y: y0 + i as f64 * h,
            };
            sum += pod_of_exposure(exposure(p));
        }
    }
    sum / (n * n) as f64
}

fn definite_range_cells(
    grid: &GridSpec,
    track: &[Coord<f64>],
    width_m: f64,
) -> Result<PodLayer, SearchError> {
    let radius = 0.5 * width_m;
    let outside = SearchError::TrackOutsideGrid { reach_m: radius };
    if !grid.extent().intersects(&track_box(track).expanded(radius)) {
        return Err(outside);
    }
    let line: LineString<f64> = track.iter().copied().collect();
    let style = BufferStyle::new(radius)
        .line_cap(LineCap::Round(BUFFER_ARC_STEP_RAD))
        .line_join(LineJoin::Round(BUFFER_ARC_STEP_RAD));
    let buffer = line.buffer_with_style(style);
    let cov = polygon_coverage(grid, &buffer).ok_or(outside)?;
    Ok(PodLayer::from_parts(
        *grid,
        cov.rows,
        cov.cols,
        cov.fraction,
    ))
}

/// A node of the track tree: the run of fixes `i0..=i1`.
#[derive(Clone, Copy, Debug)]
struct Node {
    i0: usize,
    i1: usize,
    /// Children (`usize::MAX` for a leaf, a single segment).
    left: usize,
    right: usize,
    /// Largest distance of a fix of the run from the chord `i0 -> i1`, metres.
    delta: f64,
    /// Length of the run, metres.
    len: f64,
    /// Length of the chord, metres.
    chord: f64,
    /// Bounding box of the run's fixes (west, south, east, north), metres.
    bbox: [f64; 4],
}

impl Node {
    /// Distance from `p` to the run's bounding box (0 inside): a lower bound on the distance
    /// from `p` to every point of the run (the run lies in the convex hull of its fixes).
    #[inline]
    fn bbox_distance(&self, p: Coord<f64>) -> f64 {
        let [w, s, e, n] = self.bbox;
        let dx = (w - p.x).max(p.x - e).max(0.0);
        let dy = (s - p.y).max(p.y - n).max(0.0);
        norm(dx, dy)
    }
}

/// A track as a tree of runs of fixes (see the module documentation).
pub(crate) struct TrackTree {
    pts: Vec<Coord<f64>>,
    cum: Vec<f64>,
    nodes: Vec<Node>,
    root: usize,
}

/// Where a point lies relative to a segment `a -> b`.
struct SegmentGeometry {
    /// Squared distance from the segment's line.
    x2: f64,
    /// Along-track coordinates of `a` and `b` from the foot of the perpendicular.
    sa: f64,
    sb: f64,
    /// Distance from the segment.
    dist: f64,
}

fn segment_geometry(a: Coord<f64>, b: Coord<f64>, len: f64, p: Coord<f64>) -> SegmentGeometry {
    let (rx, ry) = (p.x - a.x, p.y - a.y);
    let (tx, ty) = ((b.x - a.x) / len, (b.y - a.y) / len);
    let s = rx * tx + ry * ty;
    let x = rx * ty - ry * tx;
    let dist = if s < 0.0 {
        norm(rx, ry)
    } else if s > len {
        norm(p.x - b.x, p.y - b.y)
    } else {
        x.abs()
    };
    SegmentGeometry {
        x2: x * x,
        sa: -s,
        sb: len - s,
        dist,
    }
}

fn point_segment_distance(a: Coord<f64>, b: Coord<f64>, p: Coord<f64>) -> f64 {
    let len = norm(b.x - a.x, b.y - a.y);
    if len == 0.0 {
        norm(p.x - a.x, p.y - a.y)
    } else {
        segment_geometry(a, b, len, p).dist
    }
}

impl TrackTree {
    pub(crate) fn new(track: &[Coord<f64>]) -> Self {
        let pts = track.to_vec();
        let mut cum = Vec::with_capacity(pts.len());
        let mut acc = 0.0;
        cum.push(0.0);
        for s in pts.windows(2) {
            acc += norm(s[1].x - s[0].x, s[1].y - s[0].y);
            cum.push(acc);
        }
        let mut tree = Self {
            pts,
            cum,
            nodes: Vec::new(),
            root: 0,
        };
        let last = tree.pts.len() - 1;
        tree.root = tree.build(0, last);
        tree
    }

    fn build(&mut self, i0: usize, i1: usize) -> usize {
        let (a, b) = (self.pts[i0], self.pts[i1]);
        let chord = norm(b.x - a.x, b.y - a.y);
        let len = self.cum[i1] - self.cum[i0];
        let mut node = Node {
            i0,
            i1,
            left: usize::MAX,
            right: usize::MAX,
            delta: 0.0,
            len,
            chord,
            bbox: [a.x.min(b.x), a.y.min(b.y), a.x.max(b.x), a.y.max(b.y)],
        };
        if i1 > i0 + 1 {
            let mut far = i0 + 1;
            let mut delta = -1.0;
            for m in i0 + 1..i1 {
                let d = point_segment_distance(a, b, self.pts[m]);
                if d > delta {
                    delta = d;
                    far = m;
                }
            }
            node.delta = delta.max(0.0);
            let span = i1 - i0;
            let margin = span / 10;
            let split = if far >= i0 + margin.max(1) && far + margin.max(1) <= i1 {
                far
            } else {
                i0 + span / 2
            };
            node.left = self.build(i0, split);
            node.right = self.build(split, i1);
            let (l, r) = (self.nodes[node.left].bbox, self.nodes[node.right].bbox);
            node.bbox = [
                l[0].min(r[0]),
                l[1].min(r[1]),
                l[2].max(r[2]),
                l[3].max(r[3]),
            ];
        }
        self.nodes.push(node);
        self.nodes.len() - 1
    }

    /// Total exposure the track gives point `p`.
    pub(crate) fn exposure(&self, kernel: &Kernel, p: Coord<f64>) -> f64 {
        self.node_exposure(
            kernel,
            kernel.reach_m(),
            (FAR_FIELD_RELATIVE, FAR_FIELD_ABSOLUTE),
            self.root,
            p,
        )
    }

    /// As [`Self::exposure`] but with no track left out beyond the law's reach, and a run
    /// standing in for its chord only within `tolerance` (relative, absolute) per run.
    pub(crate) fn whole_exposure(
        &self,
        kernel: &Kernel,
        p: Coord<f64>,
        tolerance: (f64, f64),
    ) -> f64 {
        self.node_exposure(kernel, f64::INFINITY, tolerance, self.root, p)
    }

    /// Distance from `p` to the nearest point of the track, metres.
    pub(crate) fn distance(&self, p: Coord<f64>) -> f64 {
        let mut best = f64::INFINITY;
        self.node_distance(self.root, p, &mut best);
        best
    }

    fn node_distance(&self, ni: usize, p: Coord<f64>, best: &mut f64) {
        let node = &self.nodes[ni];
        if node.bbox_distance(p) >= *best {
            return;
        }
        if node.left == usize::MAX {
            *best = best.min(point_segment_distance(
                self.pts[node.i0],
                self.pts[node.i1],
                p,
            ));
            return;
        }
        let (l, r) = (node.left, node.right);
        let (first, second) = if self.nodes[l].bbox_distance(p) <= self.nodes[r].bbox_distance(p) {
            (l, r)
        } else {
            (r, l)
        };
        self.node_distance(first, p, best);
        self.node_distance(second, p, best);
    }

    fn node_exposure(
        &self,
        kernel: &Kernel,
        reach: f64,
        tolerance: (f64, f64),
        ni: usize,
        p: Coord<f64>,
    ) -> f64 {
        let (relative, absolute) = tolerance;
        let node = &self.nodes[ni];
        if node.len == 0.0 {
            return 0.0;
        }
        let d_box = node.bbox_distance(p);
        if d_box > reach {
            return 0.0;
        }
        let a = self.pts[node.i0];
        let b = self.pts[node.i1];
        if node.chord == 0.0 {
            // A closed run (it ends where it starts); never a leaf since len > 0.
            let d = norm(p.x - a.x, p.y - a.y);
            let d_lb = (d - node.delta).max(d_box);
            if d_lb > reach {
                return 0.0;
            }
            if d_lb > 0.0 {
                let approx = kernel.point_exposure(d, node.len);
                let rel = kernel.relative_variation(d_lb, d + node.delta, node.delta);
                if rel <= relative || rel * approx <= absolute {
                    return approx;
                }
            }
            return self.children_exposure(kernel, reach, tolerance, node, p);
        }
        let g = segment_geometry(a, b, node.chord, p);
        let d_lb = (g.dist - node.delta).max(d_box);
        if d_lb > reach {
            return 0.0;
        }
        let leaf = node.left == usize::MAX;
        let straight = node.delta == 0.0 && node.len <= node.chord * (1.0 + 1e-12);
        if leaf || straight {
            return kernel.segment_exposure(g.x2, g.sa, g.sb);
        }
        if d_lb > 0.0 {
            let ratio = node.len / node.chord;
            let d_max = norm(p.x - a.x, p.y - a.y).max(norm(p.x - b.x, p.y - b.y)) + node.delta;
            // The chord, weighted by the run's length.
            let rel_chord = kernel.relative_variation(d_lb, d_max, node.delta) + (ratio - 1.0);
            let approx_chord = ratio * kernel.segment_exposure(g.x2, g.sa, g.sb);
            if rel_chord <= relative || rel_chord * approx_chord <= absolute {
                return approx_chord;
            }
            // The whole run as one source at the chord's midpoint.
            let m = Coord {
                x: 0.5 * (a.x + b.x),
                y: 0.5 * (a.y + b.y),
            };
            let rho = 0.5 * node.chord + node.delta;
            let dm = norm(p.x - m.x, p.y - m.y);
            if dm - rho > 0.0 {
                let rel_point = kernel.relative_variation(dm - rho, dm + rho, rho);
                let approx_point = kernel.point_exposure(dm, node.len);
                if rel_point <= relative || rel_point * approx_point <= absolute {
                    return approx_point;
                }
            }
        }
        self.children_exposure(kernel, reach, tolerance, node, p)
    }

    fn children_exposure(
        &self,
        kernel: &Kernel,
        reach: f64,
        tolerance: (f64, f64),
        node: &Node,
        p: Coord<f64>,
    ) -> f64 {
        let left = self.node_exposure(kernel, reach, tolerance, node.left, p);
        if left == f64::INFINITY {
            return left;
        }
        left + self.node_exposure(kernel, reach, tolerance, node.right, p)
    }

    /// Whether some point of the track lies within `radius` of `p`.
    pub(crate) fn within(&self, p: Coord<f64>, radius: f64) -> bool {
        self.node_within(self.root, p, radius)
    }

    fn node_within(&self, ni: usize, p: Coord<f64>, radius: f64) -> bool {
        let node = &self.nodes[ni];
        if node.bbox_distance(p) > radius {
            return false;
        }
        let d = point_segment_distance(self.pts[node.i0], self.pts[node.i1], p);
        if node.left == usize::MAX {
            return d <= radius;
        }
        if d - node.delta > radius {
            return false;
        }
        self.node_within(node.left, p, radius) || self.node_within(node.right, p, radius)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn brute_exposure(kernel: &Kernel, track: &[Coord<f64>], p: Coord<f64>) -> f64 {
        track
            .windows(2)
            .map(|s| {
                let len = norm(s[1].x - s[0].x, s[1].y - s[0].y);
                if len == 0.0 {
                    0.0
                } else {
                    let g = segment_geometry(s[0], s[1], len, p);
                    kernel.segment_exposure(g.x2, g.sa, g.sb)
                }
            })
            .sum()
    }

    fn noisy_wander(
        seed: u64,
        n: usize,
        step: f64,
        jitter: f64,
        start: Coord<f64>,
    ) -> Vec<Coord<f64>> {
        use rand::{RngExt, SeedableRng};
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(seed);
        let (mut x, mut y, mut heading) = (start.x, start.y, 0.3_f64);
        let mut track = Vec::with_capacity(n);
        for _ in 0..n {
            heading += rng.random_range(-0.15..0.15);
            x += step * heading.cos();
            y += step * heading.sin();
            track.push(Coord {
                x: x + rng.random_range(-jitter..jitter),
                y: y + rng.random_range(-jitter..jitter),
            });
        }
        track
    }

    #[test]
    #[allow(
        clippy::print_stderr,
        reason = "prints the worst errors per case, shown with --nocapture"
    )]
    fn split_field_matches_the_exact_sum_over_every_segment() {
        // The slow reference: every segment's closed-form exposure at every cell centre, no
        // culling. Bound: |ΔPOD| ≤ 1e-4 per cell, and, wherever the POD is below 0.9, an
        // exposure within 1e-4 relative once the track left out beyond the reach is allowed
        // for (2 REACH_EXPOSURE).
        for (cell, n_fix, step, jitter) in [(100.0, 600, 40.0, 5.0), (10.0, 400, 6.0, 1.0)] {
            let grid = GridSpec::new(
                0.0,
                120.0 * cell,
                cell,
                120,
                120,
                seekgrid_core::DEFAULT_MAX_CELLS,
            )
            .unwrap();
            let track = noisy_wander(
                9,
                n_fix,
                step,
                jitter,
                Coord {
                    x: 30.0 * cell,
                    y: 40.0 * cell,
                },
            );
            for law in [DetectionLaw::InverseCube, DetectionLaw::Exponential] {
                for width in [0.2, 2.0, 20.0, 200.0].map(|f| f * cell) {
                    let w = SweepWidth::new(width, &[]).unwrap();
                    let kernel = Kernel::new(law, width);
                    let fast = track_pod_sampled(&grid, &track, law, &w, 1)
                        .unwrap()
                        .to_dense(&grid)
                        .unwrap();
                    assert!(
                        fast.iter().all(|v| (0.0..=1.0).contains(v)),
                        "{law:?} W={width}"
                    );
                    let mut worst_pod = 0.0_f64;
                    let mut worst_rel = 0.0_f64;
                    for ((r, col), v) in fast.indexed_iter() {
                        let e = brute_exposure(&kernel, &track, grid.cell_center(r, col));
                        let want = pod_of_exposure(e);
                        worst_pod = worst_pod.max((v - want).abs());
                        if want < 0.9 {
                            let got_e = -(-v).ln_1p();
                            // Track beyond the reach of the grid window is left out by
                            // design: up to REACH_EXPOSURE per pass.
                            let excess = (got_e - e).abs() - 2.0 * crate::law::REACH_EXPOSURE;
                            worst_rel = worst_rel.max(excess / e);
                        }
                    }
                    eprintln!(
                        "cell {cell} {law:?} W={width}: pod {worst_pod:.2e} rel {worst_rel:.2e}"
                    );
                    assert!(
                        worst_pod <= 1e-4,
                        "{law:?} W={width}: POD off by {worst_pod}"
                    );
                    assert!(
                        worst_rel <= 1e-4,
                        "{law:?} W={width}: exposure off by {worst_rel}"
                    );
                }
            }
        }
    }

    #[test]
    fn many_points_through_the_split_field_match_the_exact_sum() {
        // The slow reference: every segment's closed form at every point, no culling.
        use rand::{RngExt, SeedableRng};
        let track = noisy_wander(21, 800, 30.0, 4.0, Coord { x: 0.0, y: 0.0 });
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(22);
        let mut points: Vec<Coord<f64>> = (0..6000)
            .map(|_| {
                let k = rng.random_range(0..track.len());
                Coord {
                    x: track[k].x + rng.random_range(-3000.0..3000.0),
                    y: track[k].y + rng.random_range(-3000.0..3000.0),
                }
            })
            .collect();
        points.push(Coord {
            x: f64::NAN,
            y: 0.0,
        });
        points.push(Coord { x: 1e8, y: 1e8 });
        assert!(points.len() >= FIELD_MIN_POINTS);
        for law in [DetectionLaw::InverseCube, DetectionLaw::Exponential] {
            for width in [50.0, 500.0, 5000.0] {
                let w = SweepWidth::new(width, &[]).unwrap();
                let kernel = Kernel::new(law, width);
                let got = track_pod_at(&points, &track, law, &w).unwrap();
                assert_eq!(got.len(), points.len());
                assert!(got.iter().all(|v| (0.0..=1.0).contains(v)));
                assert_eq!(got[points.len() - 2], 0.0);
                assert_eq!(got[points.len() - 1], 0.0);
                let mut worst = 0.0_f64;
                for (p, g) in points.iter().zip(&got).take(6000) {
                    let want = pod_of_exposure(brute_exposure(&kernel, &track, *p));
                    worst = worst.max((g - want).abs());
                }
                assert!(worst <= 1e-4, "{law:?} W={width}: {worst}");
            }
        }
    }

    #[test]
    fn tree_exposure_matches_brute_force_sum_over_segments() {
        // A noisy wandering track, 2000 fixes ~25 m apart with 5 m jitter.
        use rand::{RngExt, SeedableRng};
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(7);
        let mut track = Vec::new();
        let (mut x, mut y, mut heading) = (0.0_f64, 0.0_f64, 0.3_f64);
        for _ in 0..2000 {
            heading += rng.random_range(-0.05..0.05);
            x += 25.0 * heading.cos();
            y += 25.0 * heading.sin();
            track.push(Coord {
                x: x + rng.random_range(-5.0..5.0),
                y: y + rng.random_range(-5.0..5.0),
            });
        }
        let tree = TrackTree::new(&track);
        for law in [DetectionLaw::InverseCube, DetectionLaw::Exponential] {
            for width in [20.0, 200.0, 2000.0] {
                let kernel = Kernel::new(law, width);
                for _ in 0..300 {
                    let k = rng.random_range(0..track.len());
                    let p = Coord {
                        x: track[k].x + rng.random_range(-3.0 * width..3.0 * width),
                        y: track[k].y + rng.random_range(-3.0 * width..3.0 * width),
                    };
                    let fast = pod_of_exposure(tree.exposure(&kernel, p));
                    let slow = pod_of_exposure(brute_exposure(&kernel, &track, p));
                    assert!(
                        (fast - slow).abs() < 2e-4,
                        "{law:?} W={width}: {fast} vs {slow}"
                    );
                }
            }
        }
    }

    /// A wandering track of `n_fix` fixes `step` metres apart, turning up to 0.6 rad a fix.
    fn zigzag(seed: u64, n_fix: usize, step: f64) -> Vec<Coord<f64>> {
        use rand::{RngExt, SeedableRng};
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(seed);
        let (mut x, mut y, mut heading) = (0.0_f64, 0.0_f64, 0.2_f64);
        (0..n_fix)
            .map(|_| {
                heading += rng.random_range(-0.6..0.6);
                x += step * heading.cos();
                y += step * heading.sin();
                Coord { x, y }
            })
            .collect()
    }

    #[test]
    fn inverse_cube_points_read_off_blocks_match_the_exact_sum() {
        // The slow reference: every segment's closed form at every point, no culling. Points
        // spread over 300 km so that most of them read their exposure off block corners;
        // allowed: the interpolation tolerance plus the track left out beyond the reach of
        // the points scored exactly (REACH_EXPOSURE).
        use rand::{RngExt, SeedableRng};
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(5);
        let points: Vec<Coord<f64>> = (0..20_000)
            .map(|_| Coord {
                x: rng.random_range(-150_000.0..150_000.0),
                y: rng.random_range(-150_000.0..150_000.0),
            })
            .collect();
        for (n_fix, step) in [(40, 2000.0), (400, 100.0)] {
            let track = zigzag(n_fix as u64, n_fix, step);
            for width in [300.0, 2000.0] {
                let w = SweepWidth::new(width, &[]).unwrap();
                let kernel = Kernel::new(DetectionLaw::InverseCube, width);
                let got = track_pod_at(&points, &track, DetectionLaw::InverseCube, &w).unwrap();
                let worst = points
                    .iter()
                    .zip(&got)
                    .map(|(p, g)| (g - pod_of_exposure(brute_exposure(&kernel, &track, *p))).abs())
                    .fold(0.0, f64::max);
                assert!(
                    worst <= crate::blocks::INTERPOLATION_TOLERANCE + crate::law::REACH_EXPOSURE,
                    "{n_fix} fixes, W={width}: {worst}"
                );
            }
        }
    }

    #[test]
    fn inverse_cube_cells_read_off_blocks_match_the_exact_sum() {
        // As above on cells: a 60 x 60 km grid of 150 m cells; cells farther from the track
        // than the sub-point radius (scored at their centre) against the exact sum there.
        let cell = 150.0;
        let grid = GridSpec::new(
            -30_000.0,
            30_000.0,
            cell,
            400,
            400,
            seekgrid_core::DEFAULT_MAX_CELLS,
        )
        .unwrap();
        for (n_fix, step) in [(30, 1500.0), (300, 60.0)] {
            let track = zigzag(3, n_fix, step);
            let tree = TrackTree::new(&track);
            for width in [500.0, 2000.0] {
                let w = SweepWidth::new(width, &[]).unwrap();
                let kernel = Kernel::new(DetectionLaw::InverseCube, width);
                let got = track_pod(&grid, &track, DetectionLaw::InverseCube, &w)
                    .unwrap()
                    .to_dense(&grid)
                    .unwrap();
                let near_radius = (4.0 * cell).max(2.0 * width) + cell;
                let lattice = NodeLattice {
                    west_m: grid.west_m() + 0.5 * cell,
                    north_m: grid.north_m() - 0.5 * cell,
                    spacing_m: cell,
                    rows: 0..400,
                    cols: 0..400,
                };
                let read_off: usize = plan_blocks(&tree, &kernel, &lattice, near_radius)
                    .iter()
                    .filter(|b| matches!(b, Block::Interpolated { .. }))
                    .map(|b| b.ranges().0.len() * b.ranges().1.len())
                    .sum();
                assert!(
                    read_off > 60_000,
                    "{n_fix} fixes, W={width}: {read_off} read off"
                );
                let mut worst = 0.0_f64;
                for ((r, col), v) in got.indexed_iter() {
                    let centre = grid.cell_center(r, col);
                    if tree.distance(centre) > near_radius {
                        let want = pod_of_exposure(brute_exposure(&kernel, &track, centre));
                        worst = worst.max((v - want).abs());
                    }
                }
                assert!(
                    worst <= crate::blocks::INTERPOLATION_TOLERANCE + crate::law::REACH_EXPOSURE,
                    "{n_fix} fixes, W={width}: {worst}"
                );
            }
        }
    }
}
