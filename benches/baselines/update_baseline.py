#!/usr/bin/env python3
"""NumPy baseline for seekgrid-search's update benchmark: Bayesian update of 1 M cells.

p' = p (1 - d) / (1 - sum p d) on a 1000 x 1000 grid with a dense POD layer (5 % rest of
world), against a plain copy of the same two arrays, as in benches/search.rs.

Run from the repository root:  python3 benches/baselines/update_baseline.py
"""
import time

import numpy as np

N = 1000


def best(f, repeat=30):
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        f()
        times.append(time.perf_counter() - t0)
    return min(times), float(np.median(times))


def main():
    r, c = np.meshgrid(np.arange(N), np.arange(N), indexing="ij")
    p = np.random.default_rng(1).random((N, N))
    p *= 0.95 / p.sum()
    row = 0.05
    d = 0.5 * ((r * 7 + c * 13) % 100) / 100.0
    out = np.empty_like(p)
    dst_p = np.empty_like(p)
    dst_d = np.empty_like(d)

    def update():
        np.multiply(p, 1.0 - d, out=out)
        remaining = out.sum() + row
        np.divide(out, remaining, out=out)

    def copy():
        np.copyto(dst_p, p)
        np.copyto(dst_d, d)

    nbytes = p.nbytes + d.nbytes
    for name, f in [("update", update), ("copy", copy)]:
        t_best, t_med = best(f)
        print(f"numpy {np.__version__} {name}: median {t_med * 1e3:.2f} ms, "
              f"{nbytes / t_med / 2**30:.2f} GiB/s (bytes of mass + POD)")


if __name__ == "__main__":
    main()
