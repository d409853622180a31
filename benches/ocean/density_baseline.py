#!/usr/bin/env python3
"""NumPy/SciPy baseline for the particle density step of the open-ocean case, timing itself.

The density is the one seekgrid-core computes (crates/seekgrid-core/src/particle_density.rs):
each drift scenario's cloud is spread with a Gaussian kernel of Silverman's bandwidth
h = sigma n^(-1/6) (sigma the mean of the cloud's two weighted standard deviations; never less
than half a cell), integrated over each cell exactly (products of normal CDF differences),
reaching the cells that meet +-5 h of its centre, and renormalised over those cells inside the
grid, so the map holds exactly the mass of the particles inside the grid. Two ways:

* direct: particle by particle, the kernel's cell window added to the grid (vectorised over
  the window). Far too slow for 1 M particles, so it runs on a subsample of each cloud and the
  time is extrapolated linearly in the particle count (each particle costs the same);
* binned + separable: each particle's mass shared between its 5 x 5 nearest cell centres with
  the shares of particle_density.rs (moments of a normal of variance 1/2 cell^2 up to the
  fourth), divided by the same mix of the centres' in-grid kernel mass, then spread with the
  cell-integrated kernel of bandwidth sqrt(h^2 - cell^2/2) along x and then y with
  scipy.ndimage.correlate1d over the cloud's box; or (--fft) every cloud's binned masses
  transformed with scipy.fft, multiplied by its kernel's transform, and summed, with one
  inverse transform for all clouds.

The particles are synthetic clouds of the ocean case's size (invented; 50 clouds of 20,000
particles, normal and elongated, sigmas 4 to 35 km as the case's clouds after about two
days adrift, on a grid of the case's cells), not the
case's own particles: the work depends only on the counts, the bandwidths and the grid.

Run: python3 benches/ocean/density_baseline.py [--rows 2008 --cols 2019 --cell-m 150]
         [--clouds 50 --particles 1000000 --subsample 400 --fft --no-separable]
Prints the times, the extrapolated direct time, and the binned field's largest difference
from the direct spread on the subsample (relative to the direct peak) and its mass error.
"""
import argparse
import math
import time

import numpy as np
from scipy import fft as sfft
from scipy import ndimage
from scipy.special import ndtr

REACH_H = 5.0
BEYOND = 2
SHARES_VARIANCE = 0.5


def clouds(rng, n_clouds, n_total, rows, cols, s):
    """Synthetic elongated normal clouds inside the grid (invented)."""
    per = n_total // n_clouds
    w_m, h_m = cols * s, rows * s
    out = []
    for _ in range(n_clouds):
        cx = rng.uniform(0.3, 0.7) * w_m
        cy = rng.uniform(0.3, 0.7) * h_m
        sa = rng.uniform(10_000, 35_000)
        sb = sa * rng.uniform(0.4, 0.9)
        th = rng.uniform(0, math.pi)
        a, b = rng.standard_normal(per) * sa, rng.standard_normal(per) * sb
        x = cx + a * math.cos(th) - b * math.sin(th)
        y = cy + a * math.sin(th) + b * math.cos(th)
        out.append((x, y, np.full(per, 1.0 / (n_clouds * per))))
    return out


def silverman(x, y, w, s):
    tot = w.sum()
    n = len(x)
    if n < 2 or tot <= 0:
        return s / 2
    mx, my = (w * x).sum() / tot, (w * y).sum() / tot
    sig = (math.sqrt((w * (x - mx) ** 2).sum() / tot) + math.sqrt((w * (y - my) ** 2).sum() / tot)) / 2
    return max(sig * n ** (-1 / 6), s / 2)


def inside(x, y, rows, cols, s):
    """Particles inside the grid (west edge x = 0, north edge y = rows s; rows count south)."""
    return (x >= 0) & (x < cols * s) & (y > 0) & (y <= rows * s)


def direct(cells, x, y, w, h, s):
    rows, cols = cells.shape
    north = rows * s
    for xi, yi, wi in zip(x, y, w):
        # x axis from the west edge; y axis mirrored from the north edge, as rows count south.
        c0 = max(int(math.floor((xi - REACH_H * h) / s)), 0)
        c1 = min(max(int(math.ceil((xi + REACH_H * h) / s)), 0), cols)
        u = -yi
        r0 = max(int(math.floor((u - REACH_H * h + north) / s)), 0)
        r1 = min(max(int(math.ceil((u + REACH_H * h + north) / s)), 0), rows)
        ex = np.arange(c0, c1 + 1) * s
        wx = np.diff(ndtr((ex - xi) / h))
        ey = -north + np.arange(r0, r1 + 1) * s
        wy = np.diff(ndtr((ey - u) / h))
        sx, sy = wx.sum(), wy.sum()
        cells[r0:r1, c0:c1] += (wi / (sx * sy)) * np.outer(wy, wx)


def centred_kernel(h, s):
    first = math.floor(0.5 - REACH_H * h / s)
    end = math.ceil(0.5 + REACH_H * h / s)
    k = np.arange(first, end, dtype=float)
    return first, np.maximum(ndtr((k + 0.5) * s / h) - ndtr((k - 0.5) * s / h), 0.0)


def normalisers(first, g, n):
    """In-grid mass of the kernel of each source -BEYOND..n+BEYOND (entry t+BEYOND is t)."""
    c = np.arange(-BEYOND, n + BEYOND)
    cs = np.concatenate([[0.0], np.cumsum(g)])
    lo = np.clip(-(c + first), 0, len(g))          # j with c + first + j >= 0
    hi = np.clip(n - (c + first), 0, len(g))       # j with c + first + j < n
    return cs[np.maximum(hi, lo)] - cs[lo]


def shares(u, n):
    c = np.clip(np.round(u), 0, n - 1)
    f = np.clip(u - c, -0.5, 0.5)
    f2, f3, f4 = f * f, f ** 3, f ** 4

    def outer(sg):
        q = 2 * f2 + sg * 2 * f + 1
        return q * q / 96

    def inner(sg):
        return (-4 * f4 - sg * 4 * f3 + 4 * f2 + sg * 10 * f + 5) / 24

    sh = np.stack([outer(-1), inner(-1), (4 * f4 - 8 * f2 + 9) / 16, inner(1), outer(1)])
    return c.astype(np.int64) + BEYOND, sh


def bin_sources(x, y, w, h, s, rows, cols):
    """The kernel (first offset, cell weights) of the cloud's centres, and its binned source
    masses as a box of the shifted centre lattice -BEYOND..n+BEYOND: (box, first row, first
    column)."""
    north = rows * s
    first, g = centred_kernel(math.sqrt(h * h - SHARES_VARIANCE * s * s), s)
    nx, ny = normalisers(first, g, cols), normalisers(first, g, rows)
    # Positions in cells, 0 at the first centre.
    cx, sx = shares(x / s - 0.5, cols)
    cy, sy = shares((north - y) / s - 0.5, rows)
    offs = np.arange(-2, 3)
    mx = (sx * nx[cx[None, :] + offs[:, None]]).sum(0)
    my = (sy * ny[cy[None, :] + offs[:, None]]).sum(0)
    k = w / (mx * my)
    r_lo, r_hi = int(cy.min()) - 2, int(cy.max()) + 3
    c_lo, c_hi = int(cx.min()) - 2, int(cx.max()) + 3
    bw = c_hi - c_lo
    # All 25 shares of every particle in one bincount.
    idx = ((cy[None, :] + offs[:, None] - r_lo) * bw)[:, None, :] \
        + (cx[None, :] + offs[:, None] - c_lo)[None, :, :]
    wts = (k * sy)[:, None, :] * sx[None, :, :]
    flat = np.bincount(idx.ravel(), weights=wts.ravel(), minlength=(r_hi - r_lo) * bw)
    return first, g, flat.reshape(r_hi - r_lo, bw), r_lo, c_lo


def binned(cells, x, y, w, h, s):
    """Binned, then spread along x and y with scipy.ndimage.correlate1d over the cloud's box."""
    rows, cols = cells.shape
    _, g, box, r_lo, c_lo = bin_sources(x, y, w, h, s, rows, cols)
    # Spread over the box plus the kernel's reach, then add the part inside the grid.
    pad = len(g) // 2
    src = np.pad(box, pad)
    field = ndimage.correlate1d(src, g, axis=1, mode="constant")
    field = ndimage.correlate1d(field, g, axis=0, mode="constant")
    # src index (i, j) is shifted source row r_lo + i - pad, i.e. grid row r_lo + i - pad - BEYOND.
    gr0, gc0 = r_lo - pad - BEYOND, c_lo - pad - BEYOND
    rr0, cc0 = max(gr0, 0), max(gc0, 0)
    rr1, cc1 = min(gr0 + field.shape[0], rows), min(gc0 + field.shape[1], cols)
    cells[rr0:rr1, cc0:cc1] += field[rr0 - gr0:rr1 - gr0, cc0 - gc0:cc1 - gc0]


def binned_fft(cells, prepared, s):
    """Every cloud binned, transformed once (scipy.fft.rfft2 over the grid padded by the widest
    kernel's reach, so nothing wraps into the grid), multiplied by its own separable kernel's
    transform; the sum transformed back once."""
    rows, cols = cells.shape
    reach = max(len(centred_kernel(math.sqrt(h * h - SHARES_VARIANCE * s * s), s)[1]) // 2
                for _, _, _, h in prepared)
    pad = reach + BEYOND
    P = sfft.next_fast_len(rows + 2 * pad, real=True)
    Q = sfft.next_fast_len(cols + 2 * pad, real=True)
    total = np.zeros((P, Q // 2 + 1), dtype=complex)
    for x, y, w, h in prepared:
        _, g, box, r_lo, c_lo = bin_sources(x, y, w, h, s, rows, cols)
        src = np.zeros((P, Q))
        # Shifted source row R is grid row R - BEYOND, put at array row R - BEYOND + pad.
        src[r_lo - BEYOND + pad:r_lo - BEYOND + pad + box.shape[0],
            c_lo - BEYOND + pad:c_lo - BEYOND + pad + box.shape[1]] = box
        half = len(g) // 2
        gy = np.zeros(P)
        gy[:half + 1] = g[half:]
        gy[P - half:] = g[:half]
        gx = np.zeros(Q)
        gx[:half + 1] = g[half:]
        gx[Q - half:] = g[:half]
        total += sfft.rfft2(src, workers=-1) * np.outer(sfft.fft(gy).real, sfft.rfft(gx).real)
    field = sfft.irfft2(total, s=(P, Q), workers=-1)
    cells += field[pad:pad + rows, pad:pad + cols]


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rows", type=int, default=2008)
    ap.add_argument("--cols", type=int, default=2019)
    ap.add_argument("--cell-m", type=float, default=150.0)
    ap.add_argument("--clouds", type=int, default=50)
    ap.add_argument("--particles", type=int, default=1_000_000)
    ap.add_argument("--subsample", type=int, default=400,
                    help="particles per cloud spread directly (default 400)")
    ap.add_argument("--fft", action="store_true", help="also time the FFT convolution")
    ap.add_argument("--no-separable", action="store_true", help="skip the separable convolution")
    ap.add_argument("--seed", type=int, default=16)
    a = ap.parse_args()
    s = a.cell_m
    rng = np.random.default_rng(a.seed)
    cl = clouds(rng, a.clouds, a.particles, a.rows, a.cols, s)
    n_all = sum(len(x) for x, _, _ in cl)
    print(f"numpy {np.__version__}, scipy {__import__('scipy').__version__}: {a.rows} x {a.cols} "
          f"cells of {s:g} m, {a.clouds} clouds, {n_all} particles")

    t = time.perf_counter()
    prepared = []
    for x, y, w in cl:
        h = silverman(x, y, w, s)
        keep = inside(x, y, a.rows, a.cols, s)
        prepared.append((x[keep], y[keep], w[keep], h))
    t_h = time.perf_counter() - t
    hs = np.array([p[3] for p in prepared]) / s
    print(f"bandwidths: {hs.min():.1f} to {hs.max():.1f} cells (median {np.median(hs):.1f}); "
          f"Silverman step {t_h:.3f} s")

    mass = sum(w.sum() for _, _, w, _ in prepared)
    fields = []
    for name in (["fft"] if a.fft else []) + ([] if a.no_separable else ["separable"]):
        cells = np.zeros((a.rows, a.cols))
        t = time.perf_counter()
        if name == "fft":
            binned_fft(cells, prepared, s)
        else:
            for x, y, w, h in prepared:
                binned(cells, x, y, w, h, s)
        t_b = time.perf_counter() - t
        label = ("binned + FFT (scipy.fft, all clouds in one inverse transform)" if name == "fft"
                 else "binned + separable (scipy.ndimage.correlate1d per cloud)")
        print(f"{label}: {t_b:.2f} s for {n_all} particles; mass error "
              f"{abs(cells.sum() - mass) / mass:.1e}", flush=True)
        fields.append(cells)
    if len(fields) == 2:
        print(f"FFT vs separable: largest difference "
              f"{np.abs(fields[0] - fields[1]).max() / fields[1].max():.1e} of the peak cell")

    # Direct on a subsample of each cloud (same bandwidth as the whole cloud), extrapolated;
    # the binned field of the same subsample is compared with it.
    sub = []
    for x, y, w, h in prepared:
        m = min(a.subsample, len(x))
        sub.append((x[:m], y[:m], w[:m], h))
    n_sub = sum(len(x) for x, _, _, _ in sub)
    d = np.zeros((a.rows, a.cols))
    t = time.perf_counter()
    for x, y, w, h in sub:
        direct(d, x, y, w, h, s)
    t_d = time.perf_counter() - t
    n_in = sum(len(x) for x, _, _, _ in prepared)
    print(f"direct: {t_d:.2f} s for {n_sub} particles, "
          f"{t_d / n_sub * 1e3:.3f} ms a particle: {t_d / n_sub * n_in:.0f} s for {n_in} (extrapolated)")
    b = np.zeros((a.rows, a.cols))
    for x, y, w, h in sub:
        binned(b, x, y, w, h, s)
    peak = d.max()
    print(f"binned vs direct on the subsample: largest difference {np.abs(b - d).max() / peak:.1e} "
          f"of the peak cell; masses {d.sum():.12f} and {b.sum():.12f}")


if __name__ == "__main__":
    main()
