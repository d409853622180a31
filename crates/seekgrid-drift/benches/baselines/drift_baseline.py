#!/usr/bin/env python3
"""Vectorised NumPy version of the drift benchmark in benches/drift.rs, timing itself.

Same model and the same run: 1 M particles, 48 hourly steps of the explicit midpoint method,
records every hour, current and wind as hourly series of 49 samples with per-particle
persistent speed/direction errors, linear leeway (downwind + crosswind on a random side, with
coefficient errors), an adrift window that shortens each particle's first step, and a random
walk. Without land and jibes, as in the Rust benchmark. The working-frame map at the LKP
(convergence rotation and point scale) is a constant 2 x 2 matrix here, as in the Rust code;
its values do not change the work done. Random numbers come from NumPy's PCG64, so positions
differ from the Rust run sample by sample but not in distribution.

Run: python3 crates/seekgrid-drift/benches/baselines/drift_baseline.py [particles] [repeats]
"""
import math
import sys
import time

import numpy as np

KNOT = 1852.0 / 3600.0
STEPS = 48


def series():
    h = np.arange(STEPS + 1, dtype=float)
    tide = h / 12.4 * 2.0 * math.pi
    cur = (0.5 + 0.3 * np.sin(tide), 90.0 + 60.0 * np.cos(tide), 0.15, 20.0)
    wind = (12.0 + 0.2 * h, 200.0 + 2.5 * h, 3.0, 20.0)
    return h * 3600.0, cur, wind


def toward_components(speed, direction_deg, frm):
    b = np.radians(direction_deg + (180.0 if frm else 0.0))
    return speed * np.sin(b), speed * np.cos(b)


class Env:
    """A series prepared as toward components; sigmas constant over the samples here."""

    def __init__(self, t_s, est, frm):
        speed, direction, ss, sd = est
        self.t = t_s
        self.u, self.v = toward_components(speed, direction, frm)
        self.calm_e, self.calm_n = toward_components(1.0, direction, frm)
        self.ss = np.full_like(t_s, ss)
        self.sd = np.full_like(t_s, sd)
        self.constant_sd = bool(np.all(self.sd == self.sd[0]))

    def draws(self, rng, n):
        z_s = rng.standard_normal(n)
        z_d = rng.standard_normal(n)
        calm = 2.0 * math.pi * rng.random(n)
        turn = np.radians(z_d * self.sd[0])
        return dict(z_s=z_s, z_d=z_d, ce=np.sin(calm), cn=np.cos(calm),
                    ts=np.sin(turn), tc=np.cos(turn))

    def perturbed(self, t, d):
        """Signed new speed f and turned unit vector (te, tn): the velocity is f (te, tn).
        t is a scalar when every particle shares the step's midpoint, so the nominal sample,
        its speed and inverse speed are worked out once (as the Rust code tabulates them)."""
        u = np.interp(t, self.t, self.u)
        v = np.interp(t, self.t, self.v)
        ss = np.interp(t, self.t, self.ss)
        speed = np.sqrt(u * u + v * v)
        calm = speed == 0.0
        inv = np.where(calm, 0.0, 1.0 / np.where(calm, 1.0, speed))
        ue = np.where(calm, d["ce"], u * inv)
        un = np.where(calm, d["cn"], v * inv)
        if self.constant_sd:
            sn, cs = d["ts"], d["tc"]
        else:
            turn = np.radians(d["z_d"] * np.interp(t, self.t, self.sd))
            sn, cs = np.sin(turn), np.cos(turn)
        te = ue * cs + un * sn
        tn = un * cs - ue * sn
        return speed + d["z_s"] * ss, te, tn


def simulate(n, seed=1):
    rng = np.random.default_rng(seed)
    t_s, cur_est, wind_est = series()
    cur = Env(t_s, cur_est, False)
    wind = Env(t_s, wind_est, True)
    # Leeway: downwind 0.03 U + 0.05 (sigma 0.05), crosswind 0.01 U (sigma 0.03).
    a_d, b_d, s_d, a_c, b_c, s_c = 0.03, 0.05, 0.05, 0.01, 0.0, 0.03
    k_diff = 1.0
    window_s = 3.0 * 3600.0
    # The LKP map of seekgrid-core's UTM zone 25 frame at (-30.5, 20.2): convergence and
    # point scale as seekgrid-drift computes them (printed from the Rust code once).
    gamma, scale = math.radians(0.863736952564), 1.000443599172
    lkp_x, lkp_y = lkp_xy
    m = scale * KNOT * np.array([[math.cos(gamma), -math.sin(gamma)],
                                 [math.sin(gamma), math.cos(gamma)]])
    sigma = 1852.0 * scale
    x = lkp_x + sigma * rng.standard_normal(n)
    y = lkp_y + sigma * rng.standard_normal(n)
    adrift = window_s * rng.random(n)
    dc = cur.draws(rng, n)
    dw = wind.draws(rng, n)
    z_down = rng.standard_normal(n)
    z_cross = rng.standard_normal(n)
    side = np.where(rng.random(n) < 0.5, 1.0, -1.0)
    records = np.empty((STEPS + 1, 2, n))
    records[0, 0], records[0, 1] = x, y
    walk = math.sqrt(2.0 * k_diff) * scale
    for k in range(STEPS):
        a, b = k * 3600.0, (k + 1) * 3600.0
        s = np.maximum(a, adrift)
        dt = np.maximum(b - s, 0.0)
        mid = s + 0.5 * dt
        # Once every particle is adrift, all share the midpoint: evaluate the series once.
        t_mid = mid if np.any(adrift > a) else a + 0.5 * (b - a)
        fc, cte, ctn = cur.perturbed(t_mid, dc)
        fw, wte, wtn = wind.perturbed(t_mid, dw)
        sign = np.where(fw < 0.0, -1.0, 1.0)
        u10 = np.abs(fw)
        de = sign * wte
        dn = sign * wtn
        down = a_d * u10 + b_d + z_down * s_d
        cross = side * (a_c * u10 + b_c + z_cross * s_c)
        e = fc * cte + down * de + cross * dn
        nn = fc * ctn + down * dn - cross * de
        x = x + (m[0, 0] * e + m[0, 1] * nn) * dt
        y = y + (m[1, 0] * e + m[1, 1] * nn) * dt
        step = walk * np.sqrt(dt)
        x = x + step * rng.standard_normal(n)
        y = y + step * rng.standard_normal(n)
        records[k + 1, 0], records[k + 1, 1] = x, y
    return records


lkp_xy = (761_244.7581880213, 2_235_582.4523492507)


def main():
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 1_000_000
    repeats = int(sys.argv[2]) if len(sys.argv) > 2 else 3
    times = []
    for r in range(repeats):
        t = time.perf_counter()
        rec = simulate(n, seed=r + 1)
        times.append(time.perf_counter() - t)
        if r == 0:
            # The cloud at the end, to compare with the Rust run (same model, other random
            # numbers: equal within sampling error).
            dx, dy = rec[-1, 0] - lkp_xy[0], rec[-1, 1] - lkp_xy[1]
            c = np.cov(dx, dy, bias=True)
            print(f"end: mean displacement ({dx.mean():.1f}, {dy.mean():.1f}) m; "
                  f"cov ({c[0, 0]:.4e}, {c[0, 1]:.4e}, {c[1, 1]:.4e}) m^2")
    times.sort()
    med = times[len(times) // 2]
    print(f"numpy {np.__version__}: {n} particles x {STEPS} steps; "
          f"best {times[0]:.3f} s, median {med:.3f} s over {repeats}; "
          f"{n * STEPS / med / 1e6:.2f} M particle-steps/s (median)")


if __name__ == "__main__":
    main()
