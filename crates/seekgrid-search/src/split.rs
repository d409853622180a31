//! Exposure of a long track at every cell of a large grid, by splitting the detection rate.
//!
//! # Method
//! The exposure at `p` is `E(p) = ∫ f(|p - q|) dℓ(q)` along the track, `f` the law's rate
//! ([`Kernel`]). The rate is split at a radius `R` into
//!
//! * a **far part** `f_far`, equal to `f` for `r ≥ R` and, inside, to the Taylor polynomial of
//!   `f` in `u = r²` about `R²` of degree 6 ([`Kernel::rate_taylor_in_r2`]): smooth everywhere
//!   (value and six derivatives continuous at `R`), so its convolution with the track is a
//!   smooth field that a mesh carries accurately;
//! * a **near part** `f - f_far`, zero beyond `R`, integrated exactly along each segment within
//!   `R` of the point: the law's closed form ([`Kernel::segment_exposure`]) on the part of the
//!   segment inside the disc, minus the closed-form integral of the polynomial there.
//!
//! The far field is computed on a square mesh of spacing `h` with `R = 10 h` (`h` is the
//! cheapest, by a stated cost model, of the cell size, its fractions down to the sub-point
//! spacing and its whole multiples, within an FFT size limit): the track's length is
//! deposited on the mesh by 2-point Gauss-Legendre points on pieces at most `h/2` long, each
//! spread over its 6 x 6 neighbouring nodes with quintic Lagrange weights (which keep the
//! moments up to fifth order), convolved with `f_far` sampled at the node offsets by FFT
//! (`realfft`), and read back at any point by quintic Lagrange interpolation. Both steps are
//! sixth order in `h / R`; the tests compare the result with the exact sum over all segments.
//!
//! This is the particle-particle/particle-mesh splitting (Hockney & Eastwood, *Computer
//! Simulation Using Particles*, 1981; cited from memory) applied to a line source instead of
//! point charges; the Taylor join and the quintic stencils are our choice.
//! The near sum is written by hand because it is the search-theory core (exact segment
//! integrals of the detection rate); the FFT comes from `realfft`/`rustfft`.

use crate::law::{Kernel, RATE_TAYLOR_TERMS};
use geo::Coord;
use rayon::prelude::*;
use realfft::RealFftPlanner;
use rustfft::num_complex::Complex;
use seekgrid_core::ProjectedBox;

/// Split radius in mesh spacings. Measured with the exact sum over every segment (test
/// `split_field_matches_the_exact_sum_over_every_segment` in `track.rs`, worst case W = 20 h):
/// largest POD error 3.5e-4 at 6 spacings, 7e-5 at 8, 1.8e-5 at 10. The near sum costs in
/// proportion to the radius.
pub(crate) const SPLIT_RADIUS_NODES: f64 = 10.0;
/// Largest FFT (nodes along both axes together) before the mesh is coarsened.
const MAX_FFT_NODES: usize = 1 << 24;
/// Extra nodes kept round every mesh region for the 6-point stencils.
const STENCIL_MARGIN: i64 = 3;

/// The rate split at a radius (see the module documentation).
#[derive(Clone, Copy, Debug)]
pub(crate) struct SplitKernel {
    kernel: Kernel,
    radius_m: f64,
    r2: f64,
    /// Taylor coefficients `c[n]` of the rate in `u` about `R²`.
    taylor: [f64; RATE_TAYLOR_TERMS],
    /// `binomial_taylor[j][m] = c[j+m] · C(j+m, j)`: the coefficient of `s^(2j) v^m` in the
    /// polynomial written in `s²` and `v = x² - R²`.
    binomial_taylor: [[f64; RATE_TAYLOR_TERMS]; RATE_TAYLOR_TERMS],
}

impl SplitKernel {
    pub(crate) fn new(kernel: Kernel, radius_m: f64) -> Self {
        let r2 = radius_m * radius_m;
        let taylor = kernel.rate_taylor_in_r2(r2);
        let mut binomial_taylor = [[0.0; RATE_TAYLOR_TERMS]; RATE_TAYLOR_TERMS];
        for (j, row) in binomial_taylor.iter_mut().enumerate() {
            for (m, slot) in row.iter_mut().enumerate().take(RATE_TAYLOR_TERMS - j) {
                *slot = taylor[j + m] * binomial(j + m, j);
            }
        }
        Self {
            kernel,
            radius_m,
            r2,
            taylor,
            binomial_taylor,
        }
    }

    pub(crate) fn radius_m(&self) -> f64 {
        self.radius_m
    }

    /// The far part of the rate at squared range `u`.
    pub(crate) fn far_rate(&self, u: f64) -> f64 {
        if u >= self.r2 {
            self.kernel.point_exposure(u.sqrt(), 1.0)
        } else {
            let v = u - self.r2;
            self.taylor.iter().rev().fold(0.0, |acc, c| acc * v + c)
        }
    }

    /// Exposure from the near part of the rate along a segment at squared lateral distance
    /// `x2` whose ends lie at along-track `a < b` from the foot of the perpendicular.
    #[inline]
    pub(crate) fn near_exposure(&self, x2: f64, a: f64, b: f64) -> f64 {
        if x2 >= self.r2 {
            return 0.0;
        }
        let half = (self.r2 - x2).sqrt();
        let (a, b) = (a.max(-half), b.min(half));
        if a >= b {
            return 0.0;
        }
        self.kernel.segment_exposure(x2, a, b) - self.polynomial_integral(x2, a, b)
    }

    /// `∫_a^b P(x² + s²) ds` for the Taylor polynomial `P`, in closed form.
    #[inline]
    fn polynomial_integral(&self, x2: f64, a: f64, b: f64) -> f64 {
        let v = x2 - self.r2;
        // P = Σ_j b_j s^(2j); antiderivative Σ_j b_j s^(2j+1) / (2j+1).
        let mut coef = [0.0; RATE_TAYLOR_TERMS];
        for (j, slot) in coef.iter_mut().enumerate() {
            let row = &self.binomial_taylor[j];
            let bj = row[..RATE_TAYLOR_TERMS - j]
                .iter()
                .rev()
                .fold(0.0, |acc, c| acc * v + c);
            *slot = bj / (2 * j + 1) as f64;
        }
        let antiderivative = |s: f64| {
            let s2 = s * s;
            s * coef.iter().rev().fold(0.0, |acc, c| acc * s2 + c)
        };
        antiderivative(b) - antiderivative(a)
    }
}

fn binomial(n: usize, k: usize) -> f64 {
    (0..k).fold(1.0, |acc, i| acc * (n - i) as f64 / (i + 1) as f64)
}

/// A straight piece of track, at most a quarter of the split radius long.
#[derive(Clone, Copy, Debug)]
pub(crate) struct Piece {
    ax: f64,
    ay: f64,
    /// Unit tangent.
    tx: f64,
    ty: f64,
    len: f64,
}

impl Piece {
    fn mid(&self) -> Coord<f64> {
        Coord {
            x: self.ax + 0.5 * self.len * self.tx,
            y: self.ay + 0.5 * self.len * self.ty,
        }
    }

    /// Distance from the piece's bounding box to a box (0 when they meet).
    fn box_distance(&self, b: &ProjectedBox) -> f64 {
        let (bx, by) = (self.ax + self.len * self.tx, self.ay + self.len * self.ty);
        let dx = (b.west_m - self.ax.max(bx))
            .max(self.ax.min(bx) - b.east_m)
            .max(0.0);
        let dy = (b.south_m - self.ay.max(by))
            .max(self.ay.min(by) - b.north_m)
            .max(0.0);
        (dx * dx + dy * dy).sqrt()
    }
}

/// The track cut into pieces, sorted into square buckets by midpoint.
struct NearIndex {
    west_m: f64,
    south_m: f64,
    bucket_m: f64,
    nx: usize,
    ny: usize,
    /// Bucket `k` holds `pieces[starts[k]..starts[k + 1]]`.
    starts: Vec<usize>,
    pieces: Vec<Piece>,
}

impl NearIndex {
    fn new(pieces: Vec<Piece>, bucket_m: f64) -> Self {
        let mids: Vec<Coord<f64>> = pieces.iter().map(Piece::mid).collect();
        let bounds = ProjectedBox::of_points(mids.iter().copied()).unwrap_or(ProjectedBox {
            west_m: 0.0,
            south_m: 0.0,
            east_m: 0.0,
            north_m: 0.0,
        });
        let nx = ((bounds.width_m() / bucket_m).floor() as usize + 1).max(1);
        let ny = ((bounds.height_m() / bucket_m).floor() as usize + 1).max(1);
        let key = |m: &Coord<f64>| {
            let i = (((m.x - bounds.west_m) / bucket_m) as usize).min(nx - 1);
            let j = (((m.y - bounds.south_m) / bucket_m) as usize).min(ny - 1);
            j * nx + i
        };
        let mut counts = vec![0usize; nx * ny + 1];
        for m in &mids {
            counts[key(m) + 1] += 1;
        }
        for k in 1..counts.len() {
            counts[k] += counts[k - 1];
        }
        let starts = counts.clone();
        let mut fill = counts;
        let mut sorted = pieces.clone();
        for (piece, m) in pieces.iter().zip(&mids) {
            let k = key(m);
            sorted[fill[k]] = *piece;
            fill[k] += 1;
        }
        Self {
            west_m: bounds.west_m,
            south_m: bounds.south_m,
            bucket_m,
            nx,
            ny,
            starts,
            pieces: sorted,
        }
    }

    /// Every piece that may come within `radius` of the box (its bounding box does), in bucket
    /// order, into `out` (cleared first).
    fn gather(&self, b: &ProjectedBox, radius: f64, max_half_piece: f64, out: &mut Vec<Piece>) {
        out.clear();
        let reach = radius + max_half_piece;
        let lo = |v: f64, o: f64| ((v - reach - o) / self.bucket_m).floor();
        let hi = |v: f64, o: f64| ((v + reach - o) / self.bucket_m).floor();
        let (i0, i1) = (lo(b.west_m, self.west_m), hi(b.east_m, self.west_m));
        let (j0, j1) = (lo(b.south_m, self.south_m), hi(b.north_m, self.south_m));
        if i1 < 0.0 || j1 < 0.0 || i0 >= self.nx as f64 || j0 >= self.ny as f64 {
            return;
        }
        let (i0, i1) = (i0.max(0.0) as usize, (i1 as usize).min(self.nx - 1));
        let (j0, j1) = (j0.max(0.0) as usize, (j1 as usize).min(self.ny - 1));
        for j in j0..=j1 {
            let row = j * self.nx;
            let run = &self.pieces[self.starts[row + i0]..self.starts[row + i1 + 1]];
            out.extend(run.iter().filter(|p| p.box_distance(b) <= radius));
        }
    }
}

/// A square lattice: node `(i, j)` at `(anchor.x + i h, anchor.y + j h)` (j northward).
#[derive(Clone, Copy, Debug)]
pub(crate) struct Lattice {
    pub(crate) anchor: Coord<f64>,
    pub(crate) spacing_m: f64,
}

/// A window of lattice nodes `[i0, i0 + nx) x [j0, j0 + ny)`.
#[derive(Clone, Copy, Debug)]
struct Window {
    i0: i64,
    j0: i64,
    nx: usize,
    ny: usize,
}

impl Window {
    /// The nodes round a box, with the stencil margin.
    fn around(lattice: &Lattice, b: &ProjectedBox) -> Self {
        let h = lattice.spacing_m;
        let i0 = ((b.west_m - lattice.anchor.x) / h).floor() as i64 - STENCIL_MARGIN;
        let i1 = ((b.east_m - lattice.anchor.x) / h).ceil() as i64 + STENCIL_MARGIN;
        let j0 = ((b.south_m - lattice.anchor.y) / h).floor() as i64 - STENCIL_MARGIN;
        let j1 = ((b.north_m - lattice.anchor.y) / h).ceil() as i64 + STENCIL_MARGIN;
        Self {
            i0,
            j0,
            nx: (i1 - i0 + 1) as usize,
            ny: (j1 - j0 + 1) as usize,
        }
    }
}

/// Points in each axis of the interpolation and deposition stencil.
const STENCIL: usize = 6;

/// Quintic Lagrange weights for nodes -2..=3 at fraction `t` in `[0, 1)`.
#[inline]
fn stencil_weights(t: f64) -> [f64; STENCIL] {
    let d = [t + 2.0, t + 1.0, t, t - 1.0, t - 2.0, t - 3.0];
    // Denominators Π_{m≠k} (k - m) for nodes -2..=3.
    const DEN: [f64; STENCIL] = [-120.0, 24.0, -12.0, 12.0, -24.0, 120.0];
    let mut w = [0.0; STENCIL];
    for k in 0..STENCIL {
        let mut p = 1.0;
        for (m, dm) in d.iter().enumerate() {
            if m != k {
                p *= dm;
            }
        }
        w[k] = p / DEN[k];
    }
    w
}

/// The far-part exposure on a window of the lattice.
struct FarField {
    lattice: Lattice,
    window: Window,
    values: Vec<f64>,
}

impl FarField {
    /// Node base index and weights for coordinate `v` along an axis starting at `origin`.
    #[inline]
    fn stencil(v: f64, origin: f64, h: f64) -> (i64, [f64; STENCIL]) {
        let g = (v - origin) / h;
        let base = g.floor();
        (base as i64 - 2, stencil_weights(g - base))
    }

    fn build(split: &SplitKernel, pieces: &[Piece], eval: &ProjectedBox, lattice: Lattice) -> Self {
        let h = lattice.spacing_m;
        let out = Window::around(&lattice, eval);
        let Some(src_box) = ProjectedBox::of_points(pieces.iter().flat_map(|p| {
            [
                Coord { x: p.ax, y: p.ay },
                Coord {
                    x: p.ax + p.len * p.tx,
                    y: p.ay + p.len * p.ty,
                },
            ]
        })) else {
            return Self {
                lattice,
                window: out,
                values: vec![0.0; out.nx * out.ny],
            };
        };
        let src = Window::around(&lattice, &src_box);
        // Deposit the track's length (2-point Gauss-Legendre on sub-pieces of at most h/2).
        let mut mass = vec![0.0; src.nx * src.ny];
        let gauss = 0.5 / 3.0_f64.sqrt();
        for p in pieces {
            let n = (p.len / (0.5 * h)).ceil().max(1.0);
            let sub = p.len / n;
            for k in 0..n as usize {
                for offset in [-gauss, gauss] {
                    let s = (k as f64 + 0.5 + offset) * sub;
                    let (x, y) = (p.ax + s * p.tx, p.ay + s * p.ty);
                    let (bi, wx) = Self::stencil(x, lattice.anchor.x, h);
                    let (bj, wy) = Self::stencil(y, lattice.anchor.y, h);
                    let (li, lj) = ((bi - src.i0) as usize, (bj - src.j0) as usize);
                    for (dj, wyv) in wy.iter().enumerate() {
                        let row = (lj + dj) * src.nx + li;
                        for (di, wxv) in wx.iter().enumerate() {
                            mass[row + di] += 0.5 * sub * wyv * wxv;
                        }
                    }
                }
            }
        }
        // Linear convolution by a circular one on a padded array (see `fft_convolve`).
        let (kx, ky) = (src.nx + out.nx - 1, src.ny + out.ny - 1);
        let (nx, ny) = (fft_length(kx, Parity::Even), fft_length(ky, Parity::Any));
        let dmin_x = out.i0 - src.i0 - (src.nx as i64 - 1);
        let dmin_y = out.j0 - src.j0 - (src.ny as i64 - 1);
        let mut kernel = vec![0.0; nx * ny];
        kernel
            .par_chunks_mut(nx)
            .take(ky)
            .enumerate()
            .for_each(|(t_y, row)| {
                let dy = (dmin_y + t_y as i64) as f64 * h;
                for (t_x, slot) in row.iter_mut().take(kx).enumerate() {
                    let dx = (dmin_x + t_x as i64) as f64 * h;
                    *slot = split.far_rate(dx * dx + dy * dy);
                }
            });
        let mut padded = vec![0.0; nx * ny];
        for (j, row) in mass.chunks(src.nx).enumerate() {
            padded[j * nx..j * nx + src.nx].copy_from_slice(row);
        }
        let conv = fft_convolve(padded, kernel, nx, ny);
        let mut values = vec![0.0; out.nx * out.ny];
        for (j, row) in values.chunks_mut(out.nx).enumerate() {
            let start = (j + src.ny - 1) * nx + src.nx - 1;
            row.copy_from_slice(&conv[start..start + out.nx]);
        }
        Self {
            lattice,
            window: out,
            values,
        }
    }

    /// The far field at `p` (which must lie in the box the field was built for).
    #[inline]
    fn at(&self, p: Coord<f64>) -> f64 {
        let h = self.lattice.spacing_m;
        let (bi, wx) = Self::stencil(p.x, self.lattice.anchor.x, h);
        let (bj, wy) = Self::stencil(p.y, self.lattice.anchor.y, h);
        let (li, lj) = (bi - self.window.i0, bj - self.window.j0);
        if li < 0
            || lj < 0
            || li + STENCIL as i64 > self.window.nx as i64
            || lj + STENCIL as i64 > self.window.ny as i64
        {
            return 0.0;
        }
        let (li, lj) = (li as usize, lj as usize);
        let mut sum = 0.0;
        for (dj, wyv) in wy.iter().enumerate() {
            let row = &self.values[(lj + dj) * self.window.nx + li..][..STENCIL];
            let along: f64 = row.iter().zip(&wx).map(|(v, w)| v * w).sum();
            sum += wyv * along;
        }
        sum
    }
}

/// Which FFT lengths [`fft_length`] may return.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Parity {
    /// Even lengths only (the real FFT's axis).
    Even,
    /// Any length.
    Any,
}

/// The smallest `n' ≥ n` whose prime factors are 2, 3 and 5 (fast FFT lengths), of the given
/// parity.
fn fft_length(n: usize, parity: Parity) -> usize {
    let mut m = n.max(2);
    loop {
        let mut r = m;
        for p in [2, 3, 5] {
            while r.is_multiple_of(p) {
                r /= p;
            }
        }
        if r == 1 && (parity == Parity::Any || m.is_multiple_of(2)) {
            return m;
        }
        m += 1;
    }
}

/// Circular 2-D convolution of two `ny x nx` row-major real arrays (`nx` even): real FFT of
/// every row, complex FFT of every column, product, and back. Each row and column is
/// transformed on its own, so the result does not depend on the number of threads.
fn fft_convolve(a: Vec<f64>, b: Vec<f64>, nx: usize, ny: usize) -> Vec<f64> {
    let mut real_planner = RealFftPlanner::<f64>::new();
    let r2c = real_planner.plan_fft_forward(nx);
    let c2r = real_planner.plan_fft_inverse(nx);
    let mut planner = rustfft::FftPlanner::<f64>::new();
    let col_fwd = planner.plan_fft_forward(ny);
    let col_inv = planner.plan_fft_inverse(ny);
    let nxc = nx / 2 + 1;
    let zero = Complex::new(0.0, 0.0);

    let forward = |mut data: Vec<f64>| -> Vec<Complex<f64>> {
        let mut spectrum = vec![zero; ny * nxc];
        spectrum
            .par_chunks_mut(nxc)
            .zip(data.par_chunks_mut(nx))
            .for_each_init(
                || r2c.make_scratch_vec(),
                |scratch, (out, row)| {
                    r2c.process_with_scratch(row, out, scratch)
                        .expect("row lengths come from the plan");
                },
            );
        let mut cols = transpose(&spectrum, ny, nxc);
        columns_in_place(&mut cols, &*col_fwd);
        cols
    };
    let fa = forward(a);
    let mut product = forward(b);
    product
        .par_iter_mut()
        .zip(fa.par_iter())
        .for_each(|(p, q)| *p *= q);
    drop(fa);
    columns_in_place(&mut product, &*col_inv);
    let mut rows = transpose(&product, nxc, ny);
    drop(product);
    let scale = 1.0 / (nx * ny) as f64;
    let mut result = vec![0.0; ny * nx];
    result
        .par_chunks_mut(nx)
        .zip(rows.par_chunks_mut(nxc))
        .for_each_init(
            || c2r.make_scratch_vec(),
            |scratch, (out, row)| {
                // The first and last bins of a real signal's spectrum are real; rounding
                // leaves a tiny imaginary part that the inverse transform refuses.
                row[0].im = 0.0;
                row[nxc - 1].im = 0.0;
                c2r.process_with_scratch(row, out, scratch)
                    .expect("row lengths come from the plan");
                for v in out.iter_mut() {
                    *v *= scale;
                }
            },
        );
    result
}

/// One complex FFT of each contiguous run of `fft.len()` values (a column of the transposed
/// spectrum), in parallel.
fn columns_in_place(data: &mut [Complex<f64>], fft: &dyn rustfft::Fft<f64>) {
    data.par_chunks_mut(fft.len()).for_each_init(
        || vec![Complex::new(0.0, 0.0); fft.get_inplace_scratch_len()],
        |scratch, col| fft.process_with_scratch(col, scratch),
    );
}

/// Transpose of a `rows x cols` row-major array, in tiles so that reads and writes both stay
/// in cache.
fn transpose(a: &[Complex<f64>], rows: usize, cols: usize) -> Vec<Complex<f64>> {
    const TILE: usize = 32;
    let mut t = vec![Complex::new(0.0, 0.0); rows * cols];
    // Each task writes TILE whole output rows (input columns c0..c0 + TILE).
    t.par_chunks_mut(rows * TILE)
        .enumerate()
        .for_each(|(tile, out)| {
            let c0 = tile * TILE;
            let width = out.len() / rows;
            for r0 in (0..rows).step_by(TILE) {
                for r in r0..(r0 + TILE).min(rows) {
                    let src = &a[r * cols + c0..r * cols + c0 + width];
                    for (dc, v) in src.iter().enumerate() {
                        out[dc * rows + r] = *v;
                    }
                }
            }
        });
    t
}

/// The exposure field of one track over a box: exact near sums plus the far mesh.
pub(crate) struct TrackField {
    split: SplitKernel,
    near: NearIndex,
    far: FarField,
    max_half_piece: f64,
}

impl TrackField {
    /// Builds the field for points inside `eval`, on a lattice through `choice.anchor` whose
    /// spacing [`choose_spacing`] picks. Pieces farther than `reach` from `eval` are left out
    /// (as beyond the law's reach).
    pub(crate) fn new(
        kernel: Kernel,
        track: &[Coord<f64>],
        eval: &ProjectedBox,
        choice: &MeshChoice,
        reach: f64,
    ) -> Self {
        let lattice = Lattice {
            anchor: choice.anchor,
            spacing_m: choose_spacing(choice, track, eval, reach),
        };
        let split = SplitKernel::new(kernel, SPLIT_RADIUS_NODES * lattice.spacing_m);
        let piece_max = 0.25 * split.radius_m();
        let keep = eval.expanded(reach);
        let mut pieces = Vec::new();
        for s in track.windows(2) {
            let (dx, dy) = (s[1].x - s[0].x, s[1].y - s[0].y);
            let len = (dx * dx + dy * dy).sqrt();
            if len == 0.0 || !len.is_finite() {
                continue;
            }
            let (tx, ty) = (dx / len, dy / len);
            let n = (len / piece_max).ceil().max(1.0) as usize;
            for k in 0..n {
                // Ends computed from the fixes so that the pieces tile the segment.
                let s0 = len * k as f64 / n as f64;
                let s1 = len * (k + 1) as f64 / n as f64;
                let piece = Piece {
                    ax: s[0].x + s0 * tx,
                    ay: s[0].y + s0 * ty,
                    tx,
                    ty,
                    len: s1 - s0,
                };
                if piece.box_distance(&keep) == 0.0 {
                    pieces.push(piece);
                }
            }
        }
        let far = FarField::build(&split, &pieces, eval, lattice);
        let near = NearIndex::new(pieces, 0.5 * split.radius_m());
        Self {
            split,
            near,
            far,
            max_half_piece: 0.5 * piece_max,
        }
    }

    /// Width of the blocks of points that share one gathered list of near pieces, metres.
    pub(crate) fn block_m(&self) -> f64 {
        0.5 * self.split.radius_m()
    }

    /// The pieces that may be near some point of `b`.
    pub(crate) fn gather(&self, b: &ProjectedBox, out: &mut Vec<Piece>) {
        self.near
            .gather(b, self.split.radius_m(), self.max_half_piece, out);
    }

    /// Exposure at `p`, given the pieces gathered for a box holding `p`.
    #[inline]
    pub(crate) fn exposure(&self, near: &[Piece], p: Coord<f64>) -> f64 {
        let radius = self.split.radius_m();
        let mut sum = 0.0;
        for piece in near {
            let (rx, ry) = (p.x - piece.ax, p.y - piece.ay);
            let s = rx * piece.tx + ry * piece.ty;
            if s < -radius || s > piece.len + radius {
                continue;
            }
            let x = rx * piece.ty - ry * piece.tx;
            sum += self.split.near_exposure(x * x, -s, piece.len - s);
        }
        // The near part is never negative (the rate lies above its Taylor polynomial inside
        // R: the remainder's sign); the far mesh can dip a rounding error below zero where
        // the field is tiny, since the quintic weights have negative lobes.
        (sum + self.far.at(p)).max(0.0)
    }
}

/// Wall time of the far field per mesh node per `log2(nodes)` (three transforms, the kernel
/// and the deposit), and of one (point, piece) pair of the near sum, in nanoseconds on two
/// cores (measured on the 1 M-cell benchmarks of `benches/search.rs`: about 0.13 s for the far
/// field on 2.3 M nodes, 0.65 s on 9 M; about 20 ns per near pair). Only their ratio matters.
const FFT_NS_PER_NODE_LOG: f64 = 3.0;
const NEAR_NS_PER_PAIR: f64 = 20.0;

/// Where the field will be evaluated, for the choice of its mesh.
#[derive(Clone, Copy, Debug)]
pub(crate) struct MeshChoice {
    /// A point every lattice must pass through.
    pub(crate) anchor: Coord<f64>,
    /// The natural spacing: the cell size for cells, the mean spacing of the points for points.
    pub(crate) base_m: f64,
    /// Finest spacing considered, as a divisor of `base_m` (sub-points per cell side).
    pub(crate) finest_divisor: usize,
    /// Evaluation points per square metre (near the track).
    pub(crate) density_per_m2: f64,
}

impl MeshChoice {
    /// Cells of side `cell_m` scored at up to `points_per_side²` sub-points each, on a mesh
    /// through `anchor` (a cell centre).
    pub(crate) fn cells(anchor: Coord<f64>, cell_m: f64, points_per_side: usize) -> Self {
        let n = points_per_side.max(1);
        Self {
            anchor,
            base_m: cell_m,
            finest_divisor: n,
            density_per_m2: (n as f64 / cell_m).powi(2),
        }
    }
}

/// The mesh spacing of least estimated cost among `base · m / finest_divisor` (whole `m`) and
/// whole multiples of `base` up to 64, whose FFT stays within [`MAX_FFT_NODES`]. A finer mesh
/// shrinks the near radius and so the near sum, but enlarges the FFT.
fn choose_spacing(
    choice: &MeshChoice,
    track: &[Coord<f64>],
    eval: &ProjectedBox,
    reach: f64,
) -> f64 {
    let keep = eval.expanded(reach);
    let lengths: Vec<f64> = track
        .windows(2)
        .filter(|s| {
            let b = ProjectedBox::of_points(s.iter().copied());
            b.is_some_and(|b| b.intersects(&keep))
        })
        .map(|s| (s[1].x - s[0].x).hypot(s[1].y - s[0].y))
        .filter(|l| l.is_finite() && *l > 0.0)
        .collect();
    let (sw, sh) = ProjectedBox::of_points(track.iter().copied()).map_or((0.0, 0.0), |t| {
        let w = t.east_m.min(keep.east_m) - t.west_m.max(keep.west_m);
        let h = t.north_m.min(keep.north_m) - t.south_m.max(keep.south_m);
        (w.max(0.0), h.max(0.0))
    });
    let n = choice.finest_divisor.max(1);
    let base = choice.base_m;
    let density = choice.density_per_m2;
    let points = eval.width_m() * eval.height_m() * density;
    let nodes = |h: f64| {
        let margin = 4.0 * STENCIL_MARGIN as f64 + 2.0;
        ((sw + eval.width_m()) / h + margin) * ((sh + eval.height_m()) / h + margin)
    };
    let cost = |h: f64| {
        let radius = SPLIT_RADIUS_NODES * h;
        let piece = 0.25 * radius;
        let pieces: f64 = lengths.iter().map(|l| (l / piece).ceil()).sum();
        let mean = lengths.iter().sum::<f64>() / pieces.max(1.0);
        let per_piece = (std::f64::consts::PI * radius * radius + 2.0 * radius * mean) * density;
        let pairs = pieces * per_piece.min(points);
        let m = nodes(h);
        FFT_NS_PER_NODE_LOG * m * m.log2() + NEAR_NS_PER_PAIR * pairs
    };
    let candidates = (1..=n)
        .map(|m| base * m as f64 / n as f64)
        .chain((2..=64).map(|k| base * k as f64));
    let best = candidates
        .filter(|&h| nodes(h) <= MAX_FFT_NODES as f64)
        .map(|h| (cost(h), h))
        .min_by(|a, b| a.0.total_cmp(&b.0));
    match best {
        Some((_, h)) => h,
        // Beyond 64 times the base spacing: coarsen until the FFT fits.
        None => {
            let mut h = base * 64.0;
            while nodes(h) > MAX_FFT_NODES as f64 {
                h *= 2.0;
            }
            h
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::law::DetectionLaw;

    #[test]
    fn far_rate_joins_the_rate_smoothly_at_the_split_radius() {
        for law in [DetectionLaw::InverseCube, DetectionLaw::Exponential] {
            let kernel = Kernel::new(law, 500.0);
            let split = SplitKernel::new(kernel, 800.0);
            let r2 = 800.0_f64 * 800.0;
            let rate = |u: f64| kernel.point_exposure(u.sqrt(), 1.0);
            // Value and first derivative in u on both sides of R² (computed: finite differences).
            let e = 1e-3 * r2;
            let inside = split.far_rate(r2 - e);
            let outside = split.far_rate(r2 + e);
            let exact_in = rate(r2 - e);
            assert!((inside - exact_in).abs() <= 1e-12 * exact_in, "{law:?}");
            assert!((outside - rate(r2 + e)).abs() <= 1e-15 * outside.abs());
            // Far from R inside, the polynomial stays positive and finite.
            for f in [0.0, 0.25, 0.5, 0.75] {
                let v = split.far_rate(f * r2);
                assert!(v.is_finite() && v > 0.0, "{law:?}: {v}");
            }
        }
    }

    #[test]
    fn near_plus_far_along_a_segment_is_the_whole_exposure() {
        // computed: the far part integrated along the segment by composite Simpson's rule.
        for law in [DetectionLaw::InverseCube, DetectionLaw::Exponential] {
            let kernel = Kernel::new(law, 400.0);
            let split = SplitKernel::new(kernel, 600.0);
            for (x, a, b) in [
                (30.0, -200.0, 500.0),
                (300.0, -900.0, 100.0),
                (590.0, 10.0, 2000.0),
                (100.0, 700.0, 900.0),
            ] {
                let x2: f64 = x * x;
                let n = 20_000;
                let step = (b - a) / n as f64;
                let mut far = 0.0;
                for i in 0..=n {
                    let s = a + i as f64 * step;
                    let w = if i == 0 || i == n {
                        1.0
                    } else if i % 2 == 1 {
                        4.0
                    } else {
                        2.0
                    };
                    far += w * split.far_rate(x2 + s * s);
                }
                far *= step / 3.0;
                let whole = kernel.segment_exposure(x2, a, b);
                let near = split.near_exposure(x2, a, b);
                assert!(
                    (near + far - whole).abs() <= 1e-9 * whole,
                    "{law:?} x={x}: {near} + {far} vs {whole}"
                );
            }
        }
    }

    #[test]
    fn fft_convolution_matches_the_direct_sum() {
        let (nx, ny) = (12, 10);
        let a: Vec<f64> = (0..nx * ny).map(|k| ((k * 7) % 11) as f64 - 3.0).collect();
        let b: Vec<f64> = (0..nx * ny).map(|k| ((k * 5) % 13) as f64 * 0.5).collect();
        let got = fft_convolve(a.clone(), b.clone(), nx, ny);
        for y in 0..ny {
            for x in 0..nx {
                let mut want = 0.0;
                for sy in 0..ny {
                    for sx in 0..nx {
                        let (ty, tx) = ((y + ny - sy) % ny, (x + nx - sx) % nx);
                        want += a[sy * nx + sx] * b[ty * nx + tx];
                    }
                }
                assert!((got[y * nx + x] - want).abs() < 1e-9, "{x},{y}");
            }
        }
    }

    #[test]
    fn mesh_far_field_matches_the_far_rate_integrated_along_the_segment() {
        // computed: the far part of the rate integrated along the segment by Simpson's rule.
        let kernel = Kernel::new(DetectionLaw::InverseCube, 300.0);
        let lattice = MeshChoice::cells(Coord { x: 50.0, y: 50.0 }, 100.0, 1);
        let (a, b) = (
            Coord {
                x: 3000.0,
                y: 4000.0,
            },
            Coord {
                x: 3400.0,
                y: 4100.0,
            },
        );
        let eval = ProjectedBox {
            west_m: 0.0,
            south_m: 0.0,
            east_m: 12_000.0,
            north_m: 12_000.0,
        };
        let field = TrackField::new(kernel, &[a, b], &eval, &lattice, 1e6);
        let len = (b.x - a.x).hypot(b.y - a.y);
        for (x, y) in [
            (3050.0, 4050.0),
            (3210.0, 4080.0),
            (3550.0, 4050.0),
            (4550.0, 4050.0),
            (6050.0, 4050.0),
            (9050.0, 9050.0),
        ] {
            let p = Coord { x, y };
            let n = 20_000;
            let step = len / n as f64;
            let mut want = 0.0;
            for i in 0..=n {
                let s = i as f64 * step;
                let q = Coord {
                    x: a.x + s * (b.x - a.x) / len,
                    y: a.y + s * (b.y - a.y) / len,
                };
                let w = if i == 0 || i == n {
                    1.0
                } else if i % 2 == 1 {
                    4.0
                } else {
                    2.0
                };
                want += w * field
                    .split
                    .far_rate((p.x - q.x).powi(2) + (p.y - q.y).powi(2));
            }
            want *= step / 3.0;
            let got = field.far.at(p);
            assert!(
                (got - want).abs() <= 1e-4 * want,
                "({x}, {y}): {got:e} vs {want:e}"
            );
        }
    }

    #[test]
    fn fft_lengths_have_small_prime_factors() {
        assert_eq!(fft_length(1499, Parity::Even), 1500);
        assert_eq!(fft_length(1537, Parity::Any), 1600);
        assert_eq!(fft_length(7, Parity::Even), 8);
        assert_eq!(fft_length(7, Parity::Any), 8);
        assert_eq!(fft_length(9, Parity::Any), 9);
    }
}
