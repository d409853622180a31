#!/usr/bin/env python3
"""NumPy baseline for seekgrid-search's track_pod benchmark (inverse cube, exposure model).

Same grid (1000 x 1000 cells of 100 m, north-west corner (0, 100000)), same 10 000-fix noisy
parallel-sweep track as benches/search.rs (`bench_track(true)`), W = 2000 m. Computes, fully
vectorised per segment, the closed-form inverse-cube exposure of each segment at every cell
centre within the law's reach (89 W, culled by the segment's bounding box), sums the
exposures and returns POD = 1 - exp(-E). This is the brute-force sum over segments (no tree,
one point per cell, so less work per cell than seekgrid's sub-sampled cells).

It is far too slow to run on all 10 000 segments, so it times the first SEGMENTS segments and
reports the extrapolated time for the whole track.

Run from the repository root:  python3 benches/baselines/track_baseline.py [SEGMENTS]
"""
import math
import sys
import time

import numpy as np

N = 1000
CELL = 100.0
W = 2000.0
K = W * W / (4 * math.pi)
REACH = math.sqrt(K / 1e-5)


def bench_track(noise=True):
    per_leg = 400
    pts = []
    for leg in range(25):
        y = 26_000.0 + 2_000.0 * leg
        for i in range(per_leg):
            s = 25_000.0 + 50_000.0 * i / (per_leg - 1)
            x = s if leg % 2 == 0 else 100_000.0 - s
            k = leg * per_leg + i
            nx, ny = (5.0 * math.sin(1.7 * k), 5.0 * math.cos(2.3 * k)) if noise else (0.0, 0.0)
            pts.append((x + nx, y + ny))
    return np.array(pts)


def segment_exposure(ax, ay, bx, by, px, py):
    """(k/2) * integral over the segment of ds / r^3, vectorised over points (px, py)."""
    length = math.hypot(bx - ax, by - ay)
    if length == 0.0:
        return np.zeros_like(px)
    tx, ty = (bx - ax) / length, (by - ay) / length
    rx, ry = px - ax, py - ay
    s = rx * tx + ry * ty
    x2 = (rx * ty - ry * tx) ** 2
    a = -s
    b = length - s
    ra = np.sqrt(x2 + a * a)
    rb = np.sqrt(x2 + b * b)
    with np.errstate(divide="ignore", invalid="ignore"):
        same_pos = a > 0
        same_neg = b < 0
        straddle = ~(same_pos | same_neg)
        out = np.empty_like(px)
        # a > 0: (b² - a²) / ((b ra + a rb) ra rb)
        out[same_pos] = ((b - a) * (b + a) / ((b * ra + a * rb) * ra * rb))[same_pos]
        aa, bb = -b, -a
        out[same_neg] = ((bb - aa) * (bb + aa) / ((bb * rb + aa * ra) * rb * ra))[same_neg]
        out[straddle] = ((b / rb - a / ra) / x2)[straddle]
    return 0.5 * K * out


def main():
    segments = int(sys.argv[1]) if len(sys.argv) > 1 else 50
    track = bench_track(True)
    xs = (np.arange(N) + 0.5) * CELL
    ys = 100_000.0 - (np.arange(N) + 0.5) * CELL
    exposure = np.zeros((N, N))
    t0 = time.perf_counter()
    for i in range(segments):
        (ax, ay), (bx, by) = track[i], track[i + 1]
        c0 = max(0, int((min(ax, bx) - REACH) // CELL))
        c1 = min(N, int((max(ax, bx) + REACH) // CELL) + 1)
        r0 = max(0, int((100_000.0 - max(ay, by) - REACH) // CELL))
        r1 = min(N, int((100_000.0 - min(ay, by) + REACH) // CELL) + 1)
        px, py = np.meshgrid(xs[c0:c1], ys[r0:r1])
        exposure[r0:r1, c0:c1] += segment_exposure(ax, ay, bx, by, px, py)
    dt = time.perf_counter() - t0
    pod = -np.expm1(-exposure)
    total = len(track) - 1
    print(f"numpy {np.__version__}: {segments} segments in {dt:.3f} s "
          f"({dt / segments * 1e3:.1f} ms per segment); "
          f"extrapolated to {total} segments: {dt / segments * total:.0f} s "
          f"(mean POD of the partial result {pod.mean():.3e})")


if __name__ == "__main__":
    main()
