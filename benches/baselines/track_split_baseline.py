#!/usr/bin/env python3
"""NumPy/SciPy baseline of the split-rate track rasterisation in seekgrid-search.

Mirrors crates/seekgrid-search/src/split.rs (inverse cube law only, one evaluation point per
cell, the cell centre) on the benchmark of benches/search.rs: a 1000 x 1000 grid of 100 m
cells, north-west corner (0, 100000), the 10 000-fix noisy parallel-sweep track
(`bench_track(true)`), W = 2000 m, k = W^2 / (4 pi), rate (k/2) / r^3.

The rate is split at R = 10 h (h = 100 m, mesh nodes at the cell centres):
  * far rate f_far(u), u = r^2: (k/2) u^(-3/2) for u >= R^2, inside the Taylor polynomial of
    degree 6 in u about R^2, c_n = (k/2) C(-3/2, n) R^(-3-2n);
  * near part: for every piece of track within R of a cell centre, the closed-form inverse-cube
    integral over the part of the piece inside the disc of radius R, minus the closed-form
    integral of the polynomial over the same interval (the polynomial written in powers of s^2).
    Vectorised over batches of pieces, each piece against the fixed window of cells that can
    lie within R of it;
  * far part: the track length deposited on the mesh (2-point Gauss-Legendre points on
    sub-pieces of at most h/2, quintic Lagrange weights on the 6 x 6 nodes -2..3), convolved
    with f_far sampled at the node offsets by a zero-padded real FFT (scipy.fft, same
    padding as split.rs: a circular convolution just large enough to hold the linear one),
    read at the cell centres (the nodes themselves, so no interpolation is needed).
As in split.rs, each segment is first cut into pieces of at most R/4.

POD = 1 - exp(-(near + far)). Every cell is scored (the law's reach, sqrt(k / 1e-5), covers
the whole grid from the track here).

The script times the whole computation, then checks itself: at 200 cells chosen with a seeded
generator it compares the POD with the brute-force exact exposure (closed form of every
segment of the track at the cell centre, no culling) and prints the largest |dPOD|.

Run from the repository root:  python3 benches/baselines/track_split_baseline.py [--save FILE.npy]
"""
import argparse
import math
import os
import sys
import time

import numpy as np
import scipy
import scipy.fft

# The benchmark track, shared with the brute-force baseline in this folder.
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from track_baseline import K as BRUTE_K, bench_track, segment_exposure  # noqa: E402

N = 1000
CELL = 100.0
NORTH = 100_000.0
W = 2000.0
K = W * W / (4 * math.pi)
HALF_K = 0.5 * K
assert BRUTE_K == K, "the brute-force reference must use the same sweep width"
H = CELL
R = 10.0 * H
R2 = R * R
TERMS = 7  # Taylor terms: degree 6 in u
PIECE_MAX = 0.25 * R
# Lattice anchor: the centre of the south-west cell (split.rs: cell_center(rows - 1, 0)).
ANCHOR_X = 0.5 * CELL
ANCHOR_Y = NORTH - (N - 0.5) * CELL
STENCIL_MARGIN = 3
BATCH = 256  # pieces per vectorised near batch
CHECK_CELLS = 200
SEED = 20240611


def inverse_cube_integral(x2, a, b):
    """integral_a^b ds / (x2 + s^2)^(3/2) for arrays with a < b, without cancellation."""
    # A piece wholly behind the foot of the perpendicular is mirrored to lie ahead of it.
    flip = b < 0
    a, b = np.where(flip, -b, a), np.where(flip, -a, b)
    ra = np.sqrt(x2 + a * a)
    rb = np.sqrt(x2 + b * b)
    out = np.empty_like(x2)
    ahead = a > 0
    # Ahead: (b^2 - a^2) / ((b ra + a rb) ra rb); straddling: (b / rb - a / ra) / x2.
    as_, bs, ras, rbs = (v[ahead] for v in (a, b, ra, rb))
    out[ahead] = (bs - as_) * (bs + as_) / ((bs * ras + as_ * rbs) * ras * rbs)
    x2s, as_, bs, ras, rbs = (v[~ahead] for v in (x2, a, b, ra, rb))
    with np.errstate(divide="ignore", invalid="ignore"):
        out[~ahead] = (bs / rbs - as_ / ras) / x2s
    return out


def taylor_coefficients():
    """c_n = (k/2) C(-3/2, n) (R^2)^(-3/2-n), the rate's Taylor coefficients in u about R^2."""
    c = np.empty(TERMS)
    binom, power = 1.0, HALF_K / (R2 * math.sqrt(R2))
    for n in range(TERMS):
        c[n] = binom * power
        binom *= (-1.5 - n) / (n + 1.0)
        power /= R2
    return c


TAYLOR = taylor_coefficients()
# BT[j][m] = c[j+m] C(j+m, j): coefficient of s^(2j) v^m with v = x^2 - R^2.
BT = [[TAYLOR[j + m] * math.comb(j + m, j) for m in range(TERMS - j)] for j in range(TERMS)]


def far_rate(u):
    v = u - R2
    poly = np.zeros_like(u)
    for c in TAYLOR[::-1]:
        poly = poly * v + c
    with np.errstate(divide="ignore"):
        exact = HALF_K / (u * np.sqrt(u))
    return np.where(u >= R2, exact, poly)


def near_exposure(x2, a, b):
    """Exposure of the near part of the rate along pieces at squared lateral distance x2
    with ends at along-track a < b (arrays); 0 where the piece misses the disc."""
    half = np.sqrt(np.maximum(R2 - x2, 0.0))
    a = np.maximum(a, -half)
    b = np.minimum(b, half)
    hit = (x2 < R2) & (a < b)
    out = np.zeros_like(x2)
    x2, a, b = x2[hit], a[hit], b[hit]
    v = x2 - R2
    a2, b2 = a * a, b * b
    # Antiderivative sum_j b_j s^(2j+1) / (2j+1), b_j a polynomial in v; Horner in s^2
    # (in-place to spare temporaries).
    acc_a = np.zeros_like(x2)
    acc_b = np.zeros_like(x2)
    bj = np.empty_like(x2)
    for j in range(TERMS - 1, -1, -1):
        row = BT[j]
        bj.fill(row[-1] / (2 * j + 1))
        for coef in row[-2::-1]:
            bj *= v
            bj += coef / (2 * j + 1)
        acc_a *= a2
        acc_a += bj
        acc_b *= b2
        acc_b += bj
    poly = b * acc_b - a * acc_a
    out[hit] = HALF_K * inverse_cube_integral(x2, a, b) - poly
    return out


def cut_into_pieces(track):
    """Segments cut into pieces of at most R/4 (ends from the fixes, as in split.rs)."""
    d = np.diff(track, axis=0)
    length = np.hypot(d[:, 0], d[:, 1])
    keep = (length > 0) & np.isfinite(length)
    start, d, length = track[:-1][keep], d[keep], length[keep]
    t = d / length[:, None]
    n = np.maximum(np.ceil(length / PIECE_MAX), 1).astype(int)
    seg = np.repeat(np.arange(len(n)), n)
    k = np.arange(n.sum()) - np.repeat(np.cumsum(n) - n, n)
    s0 = length[seg] * k / n[seg]
    s1 = length[seg] * (k + 1) / n[seg]
    a = start[seg] + s0[:, None] * t[seg]
    return a, t[seg], s1 - s0


def near_field(a, t, length):
    """Near-part exposure at every cell centre, as an (N, N) array (row 0 at the north)."""
    b = a + length[:, None] * t
    lo = np.minimum(a, b)
    hi = np.maximum(a, b)
    # First and last column / row whose centres can lie within R of the piece's bounding box;
    # every piece is scored against one fixed window of the largest such size.
    c0 = np.ceil((lo[:, 0] - R) / CELL - 0.5).astype(int)
    r0 = np.ceil((NORTH - hi[:, 1] - R) / CELL - 0.5).astype(int)
    c1 = np.floor((hi[:, 0] + R) / CELL - 0.5).astype(int)
    r1 = np.floor((NORTH - lo[:, 1] + R) / CELL - 0.5).astype(int)
    wc = int((c1 - c0).max()) + 1
    wr = int((r1 - r0).max()) + 1
    dc, dr = np.meshgrid(np.arange(wc), np.arange(wr))
    dc, dr = dc.ravel(), dr.ravel()
    cells, parts = [], []
    for i in range(0, len(length), BATCH):
        sl = slice(i, i + BATCH)
        col = c0[sl, None] + dc
        row = r0[sl, None] + dr
        inside = (col >= 0) & (col < N) & (row >= 0) & (row < N)
        px = (col + 0.5) * CELL
        py = NORTH - (row + 0.5) * CELL
        rx = px - a[sl, 0:1]
        ry = py - a[sl, 1:2]
        tx, ty = t[sl, 0:1], t[sl, 1:2]
        s = rx * tx + ry * ty
        x = rx * ty - ry * tx
        ln = length[sl, None]
        # Only pairs that can meet the disc (as the culling in split.rs).
        use = inside & (x * x < R2) & (s > -R) & (s < ln + R)
        x2 = (x * x)[use]
        s = s[use]
        e = near_exposure(x2, -s, np.broadcast_to(ln, use.shape)[use] - s)
        cells.append((row * N + col)[use])
        parts.append(e)
    # One scatter-add at the end (a bincount per batch would sweep the whole grid each time).
    exposure = np.bincount(np.concatenate(cells), weights=np.concatenate(parts), minlength=N * N)
    return exposure.reshape(N, N)


def stencil_weights(t):
    """Quintic Lagrange weights for nodes -2..3 at fractions t (array), shape (len(t), 6)."""
    d = np.stack([t + 2.0, t + 1.0, t, t - 1.0, t - 2.0, t - 3.0], axis=1)
    den = np.array([-120.0, 24.0, -12.0, 12.0, -24.0, 120.0])
    w = np.empty_like(d)
    for k in range(6):
        p = np.ones_like(t)
        for m in range(6):
            if m != k:
                p = p * d[:, m]
        w[:, k] = p / den[k]
    return w


def far_field(a, t, length):
    """Far-part exposure at every cell centre, as an (N, N) array (row 0 at the north)."""
    b = a + length[:, None] * t
    ends = np.concatenate([a, b])
    west, south = ends.min(axis=0)
    east, north = ends.max(axis=0)
    # Source window: nodes round the track's box with the stencil margin (split.rs Window).
    si0 = math.floor((west - ANCHOR_X) / H) - STENCIL_MARGIN
    si1 = math.ceil((east - ANCHOR_X) / H) + STENCIL_MARGIN
    sj0 = math.floor((south - ANCHOR_Y) / H) - STENCIL_MARGIN
    sj1 = math.ceil((north - ANCHOR_Y) / H) + STENCIL_MARGIN
    snx, sny = si1 - si0 + 1, sj1 - sj0 + 1
    # Output window: the cell-centre nodes only (read exactly at nodes, no stencil margin).
    oi0, oj0, onx, ony = 0, 0, N, N

    # Deposit: 2-point Gauss-Legendre on sub-pieces of at most h/2, weight sub/2 each.
    n = np.maximum(np.ceil(length / (0.5 * H)), 1).astype(int)
    sub = length / n
    piece = np.repeat(np.arange(len(n)), n)
    k = np.arange(n.sum()) - np.repeat(np.cumsum(n) - n, n)
    g = 0.5 / math.sqrt(3.0)
    s = np.concatenate([(k + 0.5 - g) * sub[piece], (k + 0.5 + g) * sub[piece]])
    piece = np.concatenate([piece, piece])
    px = a[piece, 0] + s * t[piece, 0]
    py = a[piece, 1] + s * t[piece, 1]
    mass_each = 0.5 * sub[piece]
    gx = (px - ANCHOR_X) / H
    gy = (py - ANCHOR_Y) / H
    bx, by = np.floor(gx), np.floor(gy)
    wx = stencil_weights(gx - bx)
    wy = stencil_weights(gy - by)
    li = bx.astype(int) - 2 - si0
    lj = by.astype(int) - 2 - sj0
    idx = (lj[:, None, None] + np.arange(6)[None, :, None]) * snx + (
        li[:, None, None] + np.arange(6)[None, None, :])
    wts = mass_each[:, None, None] * wy[:, :, None] * wx[:, None, :]
    mass = np.bincount(idx.ravel(), weights=wts.ravel(), minlength=snx * sny)
    mass = mass.reshape(sny, snx)

    # Linear convolution as a circular one on arrays just large enough (as split.rs).
    kx, ky = snx + onx - 1, sny + ony - 1
    fx = scipy.fft.next_fast_len(kx, real=True)
    fy = scipy.fft.next_fast_len(ky, real=True)
    dmin_x = oi0 - si0 - (snx - 1)
    dmin_y = oj0 - sj0 - (sny - 1)
    dx = (dmin_x + np.arange(kx)) * H
    dy = (dmin_y + np.arange(ky)) * H
    kern = np.zeros((fy, fx))
    kern[:ky, :kx] = far_rate(dy[:, None] ** 2 + dx[None, :] ** 2)
    conv = scipy.fft.irfft2(
        scipy.fft.rfft2(mass, s=(fy, fx), workers=-1) * scipy.fft.rfft2(kern, workers=-1),
        s=(fy, fx), workers=-1)
    values = conv[sny - 1:sny - 1 + ony, snx - 1:snx - 1 + onx]
    # Node row j lies at y = ANCHOR_Y + j h, i.e. grid row N - 1 - j.
    return values[::-1, :], (fy, fx)


def brute_force_exposure(track, px, py):
    e = np.zeros_like(px)
    for i in range(len(track) - 1):
        (ax, ay), (bx, by) = track[i], track[i + 1]
        e += segment_exposure(ax, ay, bx, by, px, py)
    return e


def main():
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--save", metavar="FILE.npy", help="save the POD array (row 0 north)")
    args = parser.parse_args()

    track = bench_track(True)
    t0 = time.perf_counter()
    a, t, length = cut_into_pieces(track)
    t1 = time.perf_counter()
    near = near_field(a, t, length)
    t2 = time.perf_counter()
    far, fft_shape = far_field(a, t, length)
    t3 = time.perf_counter()
    pod = -np.expm1(-(near + far))
    t4 = time.perf_counter()

    print(f"numpy {np.__version__}, scipy {scipy.__version__}: {len(track)} fixes, "
          f"{len(length)} pieces, {N} x {N} cells: {t4 - t0:.3f} s "
          f"(pieces {t1 - t0:.3f} s, near {t2 - t1:.3f} s, far {t3 - t2:.3f} s "
          f"[FFT {fft_shape[0]} x {fft_shape[1]}], POD {t4 - t3:.3f} s); "
          f"mean POD {pod.mean():.6e}")

    rng = np.random.default_rng(SEED)
    cells = rng.choice(N * N, size=CHECK_CELLS, replace=False)
    rows, cols = np.divmod(cells, N)
    px = (cols + 0.5) * CELL
    py = NORTH - (rows + 0.5) * CELL
    exact = brute_force_exposure(track, px, py)
    pod_exact = -np.expm1(-exact)
    got = pod[rows, cols]
    e_got = near[rows, cols] + far[rows, cols]
    rel = np.abs(e_got - exact) / exact
    print(f"check at {CHECK_CELLS} seeded cells against the exact sum over all "
          f"{len(track) - 1} segments: max |dPOD| {np.abs(got - pod_exact).max():.2e}, "
          f"max relative exposure error {rel.max():.2e} "
          f"(POD there {pod_exact.min():.3e} .. {pod_exact.max():.3e})")

    if args.save:
        np.save(args.save, pod)
        print(f"saved POD to {args.save}")


if __name__ == "__main__":
    main()
