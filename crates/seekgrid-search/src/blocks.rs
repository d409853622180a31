//! Where the inverse cube's exposure is smooth, read it off block corners.
//!
//! The inverse cube reaches about 89 sweep widths ([`crate::law::REACH_EXPOSURE`]), so a search
//! touches most of a large grid and most of a drifting cloud, yet far from the track its
//! exposure varies slowly. A lattice of nodes (the cell centres, or a lattice laid over a
//! cloud of points) is cut into square blocks, largest first ([`BLOCK_LEVELS`]); a block whose
//! bilinear interpolation from its four corner nodes provably errs by less than
//! [`INTERPOLATION_TOLERANCE`] in exposure is read that way, any other is cut in four, down to
//! [`MIN_BLOCK_NODES`], below which its places are scored exactly.
//!
//! # The bound
//! Every point `q` of a block lies at least `d` from the track, so each element of track
//! contributes a rate `∝ r⁻³` whose second derivative along any direction is at most
//! `12 r⁻⁵ ≤ 12 r⁻³ / d²`: `|∂²E| ≤ 12 E(q) / d²`. For a corner `p`, `r_p ≤ r_q + diag`, so
//! `E(q) ≤ E(p) (1 + diag/d)³` for every corner. Bilinear interpolation over `hx x hy` errs by
//! at most `(hx² |E_xx| + hy² |E_yy|) / 8`, hence by at most `1.5 (hx² + hy²) E_bound / d²`
//! (the interpolation error bound is in any numerical analysis text, from memory; the second
//! derivative of `r⁻³` computed). The bound holds for the whole track's exposure, so the
//! corners count all of it, none left out beyond the reach (the places scored exactly leave
//! out at most [`crate::law::REACH_EXPOSURE`] there); they come from the track tree with
//! per-run tolerances ten times tighter than the cells' own ([`CORNER_TOLERANCE`]), since every
//! place of the block inherits their error.
//!
//! The exponential law's reach is a few sweep widths, and its Gaussian tail has no such
//! bound; it is always scored exactly.

use crate::law::Kernel;
use crate::track::TrackTree;
use geo::Coord;
use rayon::prelude::*;
use std::ops::Range;

/// Smallest block side, lattice steps; such blocks that fail the bound are scored place by
/// place.
pub(crate) const MIN_BLOCK_NODES: usize = 8;
/// Block sides tried, lattice steps, largest first; each is twice the next, down to
/// [`MIN_BLOCK_NODES`].
const BLOCK_LEVELS: [usize; 6] = [256, 128, 64, 32, 16, MIN_BLOCK_NODES];
/// Largest exposure error accepted where places are interpolated from a block's corners: half
/// the exposure left out beyond the reach ([`crate::law::REACH_EXPOSURE`]).
pub(crate) const INTERPOLATION_TOLERANCE: f64 = 0.5 * crate::law::REACH_EXPOSURE;
/// Run tolerances (relative, absolute) of the track tree at a block's corners.
const CORNER_TOLERANCE: (f64, f64) = (1e-4, 1e-8);

/// A square lattice of nodes in the working frame: node `(r, c)` at
/// `(west_m + c · spacing_m, north_m - r · spacing_m)`, rows running south. Only the nodes
/// `rows x cols` are in play.
#[derive(Clone, Debug)]
pub(crate) struct NodeLattice {
    pub(crate) west_m: f64,
    pub(crate) north_m: f64,
    pub(crate) spacing_m: f64,
    pub(crate) rows: Range<usize>,
    pub(crate) cols: Range<usize>,
}

impl NodeLattice {
    pub(crate) fn at(&self, r: usize, c: usize) -> Coord<f64> {
        Coord {
            x: self.west_m + c as f64 * self.spacing_m,
            y: self.north_m - r as f64 * self.spacing_m,
        }
    }
}

/// A block of lattice nodes, scored exactly or interpolated from its corners.
#[derive(Clone, Debug)]
pub(crate) enum Block {
    Exact {
        rows: Range<usize>,
        cols: Range<usize>,
    },
    /// Nodes `rows x cols` (and the places between them) interpolated from the exposure at the
    /// nodes `(corner_rows.0 | corner_rows.1) x (corner_cols.0 | corner_cols.1)`, in the order
    /// first-first, first-last, last-first, last-last. The last corners lie where the next
    /// block starts (or on the lattice's last node), so that neighbouring blocks share them.
    Interpolated {
        rows: Range<usize>,
        cols: Range<usize>,
        corner_rows: (usize, usize),
        corner_cols: (usize, usize),
        corners: [f64; 4],
    },
}

impl Block {
    pub(crate) fn ranges(&self) -> (Range<usize>, Range<usize>) {
        match self {
            Self::Exact { rows, cols } | Self::Interpolated { rows, cols, .. } => {
                (rows.clone(), cols.clone())
            }
        }
    }

    /// The interpolated exposure at fractional lattice position `(r, c)` inside the block's
    /// corner rectangle; `None` for an exact block.
    pub(crate) fn interpolated(&self, r: f64, c: f64) -> Option<f64> {
        let Self::Interpolated {
            corner_rows,
            corner_cols,
            corners,
            ..
        } = self
        else {
            return None;
        };
        let along = |x: f64, (a, b): (usize, usize)| {
            if b > a {
                ((x - a as f64) / (b - a) as f64).clamp(0.0, 1.0)
            } else {
                0.0
            }
        };
        let v = along(r, *corner_rows);
        let u = along(c, *corner_cols);
        let west = corners[0] + v * (corners[2] - corners[0]);
        let east = corners[1] + v * (corners[3] - corners[1]);
        Some(west + u * (east - west))
    }
}

/// The exposure at every [`MIN_BLOCK_NODES`]-th node of the lattice (and its last row and
/// column), each computed at most once and shared by the blocks that meet there.
struct CornerValues<'a> {
    lattice: &'a NodeLattice,
    /// Nodes per row.
    width: usize,
    values: Vec<f64>,
}

impl<'a> CornerValues<'a> {
    fn new(lattice: &'a NodeLattice) -> Self {
        let nodes = |n: usize| (n - 1).div_ceil(MIN_BLOCK_NODES) + 1;
        let width = nodes(lattice.cols.len());
        Self {
            lattice,
            width,
            values: vec![f64::NAN; nodes(lattice.rows.len()) * width],
        }
    }

    fn index(&self, r: usize, c: usize) -> usize {
        let node = |i: usize, range: &Range<usize>| {
            if i + 1 == range.end {
                (range.len() - 1).div_ceil(MIN_BLOCK_NODES)
            } else {
                (i - range.start) / MIN_BLOCK_NODES
            }
        };
        node(r, &self.lattice.rows) * self.width + node(c, &self.lattice.cols)
    }

    fn get(&self, r: usize, c: usize) -> f64 {
        self.values[self.index(r, c)]
    }
}

/// Cuts the lattice into blocks (see the module documentation). A block is only tried when
/// it lies more than `keep_exact_m` from the track (cells there may need sub-points). Every
/// level's corners are computed in parallel, each node once; the result does not depend on
/// the number of threads.
pub(crate) fn plan_blocks(
    tree: &TrackTree,
    kernel: &Kernel,
    lattice: &NodeLattice,
    keep_exact_m: f64,
) -> Vec<Block> {
    let (rows, cols) = (lattice.rows.clone(), lattice.cols.clone());
    if rows.is_empty() || cols.is_empty() {
        return Vec::new();
    }
    let mut values = CornerValues::new(lattice);
    let mut active: Vec<(usize, usize)> = rows
        .clone()
        .step_by(BLOCK_LEVELS[0])
        .flat_map(|r| cols.clone().step_by(BLOCK_LEVELS[0]).map(move |c| (r, c)))
        .collect();
    let g = lattice.spacing_m;
    let mut out = Vec::new();
    for (level, &side) in BLOCK_LEVELS.iter().enumerate() {
        let block_of = |(r0, c0): (usize, usize)| {
            let own = (r0..(r0 + side).min(rows.end), c0..(c0 + side).min(cols.end));
            let corner_rows = (r0, (r0 + side).min(rows.end - 1));
            let corner_cols = (c0, (c0 + side).min(cols.end - 1));
            (own, corner_rows, corner_cols)
        };
        // The blocks far enough from the track to try, with their distance from it.
        let tried: Vec<(usize, f64)> = active
            .par_iter()
            .enumerate()
            .filter_map(|(k, &start)| {
                let (_, cr, cc) = block_of(start);
                let (a, b) = (lattice.at(cr.0, cc.0), lattice.at(cr.1, cc.1));
                let middle = Coord {
                    x: 0.5 * (a.x + b.x),
                    y: 0.5 * (a.y + b.y),
                };
                let half_diag = 0.5 * ((b.x - a.x).powi(2) + (b.y - a.y).powi(2)).sqrt();
                let d = tree.distance(middle) - half_diag;
                (d > keep_exact_m && d > 0.0).then_some((k, d))
            })
            .collect();
        let mut wanted: Vec<(usize, usize)> = tried
            .iter()
            .flat_map(|&(k, _)| {
                let (_, cr, cc) = block_of(active[k]);
                [(cr.0, cc.0), (cr.0, cc.1), (cr.1, cc.0), (cr.1, cc.1)]
            })
            .filter(|&(r, c)| values.get(r, c).is_nan())
            .collect();
        wanted.sort_unstable();
        wanted.dedup();
        let computed: Vec<f64> = wanted
            .par_iter()
            .map(|&(r, c)| tree.whole_exposure(kernel, lattice.at(r, c), CORNER_TOLERANCE))
            .collect();
        for (&(r, c), e) in wanted.iter().zip(computed) {
            let at = values.index(r, c);
            values.values[at] = e;
        }
        let mut passed = vec![false; active.len()];
        for &(k, d) in &tried {
            let ((own_rows, own_cols), cr, cc) = block_of(active[k]);
            let corners = [
                values.get(cr.0, cc.0),
                values.get(cr.0, cc.1),
                values.get(cr.1, cc.0),
                values.get(cr.1, cc.1),
            ];
            let hx = (cc.1 - cc.0) as f64 * g;
            let hy = (cr.1 - cr.0) as f64 * g;
            let diag = (hx * hx + hy * hy).sqrt();
            let least = corners.iter().copied().fold(f64::INFINITY, f64::min);
            let bound = least * (1.0 + diag / d).powi(3);
            if 1.5 * (hx * hx + hy * hy) * bound / (d * d) <= INTERPOLATION_TOLERANCE {
                passed[k] = true;
                out.push(Block::Interpolated {
                    rows: own_rows,
                    cols: own_cols,
                    corner_rows: cr,
                    corner_cols: cc,
                    corners,
                });
            }
        }
        let last = level + 1 == BLOCK_LEVELS.len();
        let half = side / 2;
        let mut next = Vec::new();
        for (k, &start) in active.iter().enumerate() {
            if passed[k] {
                continue;
            }
            let ((own_rows, own_cols), _, _) = block_of(start);
            if last {
                out.push(Block::Exact {
                    rows: own_rows,
                    cols: own_cols,
                });
            } else {
                for r in own_rows.step_by(half) {
                    for c in own_cols.clone().step_by(half) {
                        next.push((r, c));
                    }
                }
            }
        }
        active = next;
    }
    out
}

/// Which block holds each [`MIN_BLOCK_NODES`]-square of the lattice, for finding the block
/// of a place in constant time.
pub(crate) struct BlockIndex {
    lattice: NodeLattice,
    width: usize,
    owner: Vec<usize>,
}

impl BlockIndex {
    pub(crate) fn new(lattice: &NodeLattice, blocks: &[Block]) -> Self {
        let squares = |n: usize| n.div_ceil(MIN_BLOCK_NODES);
        let width = squares(lattice.cols.len());
        let mut owner = vec![usize::MAX; squares(lattice.rows.len()) * width];
        for (k, b) in blocks.iter().enumerate() {
            let (rows, cols) = b.ranges();
            for r in rows.step_by(MIN_BLOCK_NODES) {
                for c in cols.clone().step_by(MIN_BLOCK_NODES) {
                    let at = (r - lattice.rows.start) / MIN_BLOCK_NODES * width
                        + (c - lattice.cols.start) / MIN_BLOCK_NODES;
                    owner[at] = k;
                }
            }
        }
        Self {
            lattice: lattice.clone(),
            width,
            owner,
        }
    }

    /// The block holding `p` and `p`'s fractional lattice position, `None` outside the
    /// lattice.
    pub(crate) fn locate(&self, p: Coord<f64>) -> Option<(usize, f64, f64)> {
        let l = &self.lattice;
        let r = (l.north_m - p.y) / l.spacing_m;
        let c = (p.x - l.west_m) / l.spacing_m;
        let (r0, c0) = (l.rows.start as f64, l.cols.start as f64);
        let (r1, c1) = ((l.rows.end - 1) as f64, (l.cols.end - 1) as f64);
        if !(r >= r0 && r <= r1 && c >= c0 && c <= c1) {
            return None;
        }
        let sr =
            ((r - r0) as usize / MIN_BLOCK_NODES).min(l.rows.len().div_ceil(MIN_BLOCK_NODES) - 1);
        let sc = ((c - c0) as usize / MIN_BLOCK_NODES).min(self.width - 1);
        let k = self.owner[sr * self.width + sc];
        (k != usize::MAX).then_some((k, r, c))
    }
}
