#!/usr/bin/env python3
"""NumPy/SciPy baseline for the seekgrid-prior benchmark (crates/seekgrid-prior/benches/prior.rs).

Computes the same pooled prior as the Rust benchmark: a 1000 x 1000 grid of 100 m cells,
200 elliptical point scenarios and 20 routes over 10 analysts, linear pool. Written the way a
competent GIS analyst would vectorise it: each scenario is evaluated over the whole grid at
once with scipy.special.ndtr,
  * points: 3-point Gauss-Legendre in y per row of cells, the conditional normal CDF in closed
    form at every column edge (circular / axis-aligned: product of ndtr differences);
  * routes: per leg, a 3 x 3 Gauss-Legendre rule in every cell on the line-source density
    (1/L)[Phi(u/s) - Phi((u-L)/s)] phi(v/s)/s.
The scenarios come from the same SplitMix64 generator as the Rust benchmark (invented data).

Run:  python3 benches/baselines/prior_baseline.py [--cells 1000] [--cell-m 100] [--points 200] [--routes 20]
Prints the seconds taken and a few pooled values to compare with the Rust benchmark's output.
"""
import argparse
import math
import time

import numpy as np
from scipy.special import ndtr

MASK = (1 << 64) - 1


class SplitMix64:
    def __init__(self, seed):
        self.state = seed & MASK

    def next_u64(self):
        self.state = (self.state + 0x9E3779B97F4A7C15) & MASK
        z = self.state
        z = ((z ^ (z >> 30)) * 0xBF58476D1CE4E5B9) & MASK
        z = ((z ^ (z >> 27)) * 0x94D049BB133111EB) & MASK
        return z ^ (z >> 31)

    def uniform(self, lo, hi):
        return lo + (hi - lo) * ((self.next_u64() >> 11) * 2.0**-53)


def scenarios(n_points, n_routes, size_m, west, north, seed=2024):
    rng = SplitMix64(seed)
    out = []
    for _ in range(n_points):
        x = west + rng.uniform(0.1 * size_m, 0.9 * size_m)
        y = north - rng.uniform(0.1 * size_m, 0.9 * size_m)
        smaj = rng.uniform(300.0, 3000.0)
        smin = rng.uniform(300.0, smaj)
        bearing = rng.uniform(0.0, 180.0)
        out.append(("point", (x, y, smaj, smin, bearing)))
    for _ in range(n_routes):
        n_wp = 3 + int(rng.uniform(0.0, 4.0))
        x = west + rng.uniform(0.15 * size_m, 0.85 * size_m)
        y = north - rng.uniform(0.15 * size_m, 0.85 * size_m)
        pts = [(x, y)]
        for _ in range(n_wp - 1):
            heading = math.radians(rng.uniform(0.0, 360.0))
            length = rng.uniform(0.05 * size_m, 0.15 * size_m)
            x = min(max(x + length * math.sin(heading), west + 0.05 * size_m), west + 0.95 * size_m)
            y = min(max(y + length * math.cos(heading), north - 0.95 * size_m), north - 0.05 * size_m)
            pts.append((x, y))
        sigma = rng.uniform(200.0, 1500.0)
        out.append(("route", (pts, sigma)))
    weights = [rng.uniform(0.2, 1.0) for _ in out]
    analyst_weights = [rng.uniform(0.5, 2.0) for _ in range(10)]
    return out, weights, analyst_weights


GL3_T = np.array([0.5 - math.sqrt(0.15), 0.5, 0.5 + math.sqrt(0.15)])
GL3_W = np.array([5.0 / 18.0, 8.0 / 18.0, 5.0 / 18.0])


def point_mass(x, y, smaj, smin, bearing, west, north, cell, n):
    t = math.radians(bearing)
    s, c = math.sin(t), math.cos(t)
    vx = smaj**2 * s * s + smin**2 * c * c
    vy = smaj**2 * c * c + smin**2 * s * s
    cov = (smaj**2 - smin**2) * s * c
    sx, sy = math.sqrt(vx), math.sqrt(vy)
    xe = west + cell * np.arange(n + 1)  # column edges
    ytop = north - cell * np.arange(n)  # row north edges
    if abs(cov) <= 1e-12 * smaj * smaj:
        px = np.diff(ndtr((xe - x) / sx))
        ye = north - cell * np.arange(n + 1)
        py = -np.diff(ndtr((ye - y) / sy))
        return np.outer(py, px)
    slope = cov / vy
    sc = smaj * smin / sy
    ynodes = ytop[:, None] - cell * GL3_T[None, :]  # (rows, 3)
    wy = cell * GL3_W[None, :] * np.exp(-0.5 * ((ynodes - y) / sy) ** 2) / (sy * math.sqrt(2 * math.pi))
    m = x + slope * (ynodes - y)  # conditional means
    F = ndtr((xe[None, None, :] - m[:, :, None]) / sc)  # (rows, 3, cols+1)
    return np.einsum("rk,rkc->rc", wy, np.diff(F, axis=2))


def route_mass(pts, sigma, west, north, cell, n):
    total = sum(math.hypot(b[0] - a[0], b[1] - a[1]) for a, b in zip(pts, pts[1:]))
    xs = west + cell * (np.arange(n)[:, None] + GL3_T[None, :]).ravel()  # (n*3,)
    out = np.zeros((n, n))
    for a, b in zip(pts, pts[1:]):
        length = math.hypot(b[0] - a[0], b[1] - a[1])
        if length == 0:
            continue
        dx, dy = (b[0] - a[0]) / length, (b[1] - a[1]) / length
        for row0 in range(0, n, 100):  # 100 rows at a time to bound memory
            rows = np.arange(row0, min(row0 + 100, n))
            ys = (north - cell * (rows[:, None] + GL3_T[None, :])).ravel()
            X = xs[None, :] - a[0]
            Y = ys[:, None] - a[1]
            u = (X * dx + Y * dy) / sigma
            v = (-X * dy + Y * dx) / sigma
            dens = (ndtr(u) - ndtr(u - length / sigma)) * np.exp(-0.5 * v * v) / (sigma * math.sqrt(2 * math.pi) * total)
            w = np.outer(np.tile(GL3_W, len(rows)), np.tile(GL3_W, n)) * dens
            out[rows[0]:rows[-1] + 1, :] += w.reshape(len(rows), 3, n, 3).sum(axis=(1, 3)) * cell * cell
    return out


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--cells", type=int, default=1000)
    ap.add_argument("--cell-m", type=float, default=100.0)
    ap.add_argument("--points", type=int, default=200)
    ap.add_argument("--routes", type=int, default=20)
    args = ap.parse_args()
    n, cell = args.cells, args.cell_m
    west, north = 400_000.0, 5_100_000.0
    size_m = 100_000.0
    scen, weights, aw = scenarios(args.points, args.routes, size_m, west, north)
    start = time.perf_counter()
    analyst = [i % 10 for i in range(len(scen))]
    wa = np.array(aw) / sum(aw)
    per_analyst = [sum(w for w, a in zip(weights, analyst) if a == k) for k in range(10)]
    pooled = np.zeros((n, n))
    for (kind, p), w, a in zip(scen, weights, analyst):
        if per_analyst[a] == 0:
            continue
        if kind == "point":
            m = point_mass(*p, west, north, cell, n)
        else:
            m = route_mass(*p, west, north, cell, n)
        pooled += wa[a] * (w / per_analyst[a]) * m
    seconds = time.perf_counter() - start
    print(f"grid {n} x {n} cells of {cell} m, {args.points} points + {args.routes} routes")
    print(f"seconds {seconds:.3f}")
    print(f"in-grid mass {pooled.sum():.12f}")
    for r, c in [(250, 250), (500, 500), (750, 300)]:
        rr, cc = r * n // 1000, c * n // 1000
        print(f"cell [{rr}, {cc}] {pooled[rr, cc]:.12e}")


if __name__ == "__main__":
    main()
