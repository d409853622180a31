#!/usr/bin/env python3
"""Writes seekgrid's open-ocean benchmark incident: a large, hard, INVENTED case.

Everything written here is invented for the benchmark: the vessel, its route, the analysts and
their scenarios, the wind and current series, the leeway coefficients, the sweep widths, the
searches and their GPS tracks. The case lies in open ocean in the South Atlantic, far from any
real coast, and has no coastline. No value is a recommendation for any real search.

The case (defaults): 10 analysts with 20 scenarios each (point, route, area and drift kinds;
5 drift scenarios per analyst of 20,000 particles, 1 M particles in all), 50 completed searches
over the 48 hours after the reference time (25 logged as GPS tracks with timestamped fixes,
25 as patterns: parallel sweep, creeping line, expanding square, sector search), 4 search
units for `seekgrid plan`, and a cell size that makes the automatic grid about 4 M cells.

    python3 benches/ocean/make_ocean_case.py [DIR] [--seed N] [--particles-total N] [--cell-m M]

DIR defaults to target/ocean-case under the repository. The same seed and options give the
same bytes. An existing non-empty DIR is refused unless --force is given (then the generator's
own files are replaced; nothing else in DIR is touched).
"""
import argparse
import datetime
import json
import math
import os
import sys

import numpy as np

REPO = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
# Origin of the local frame: open South Atlantic, about 1,000 km from the nearest island and
# further from any mainland. The case is invented; the place only needs to be open ocean.
LAT0, LON0 = -31.0, -21.0
KM_PER_DEG_LAT = 110.95
KM_PER_DEG_LON = 111.32 * math.cos(math.radians(LAT0))
KN_KMH = 1.852
T0 = datetime.datetime(2026, 3, 10, 6, 0, tzinfo=datetime.timezone.utc)  # reference time
SERIES_FROM_H, SERIES_TO_H = -16, 66   # wind and current series cover T0-16 h .. T0+66 h
ANALYSTS = 10
SCENARIOS_PER_ANALYST = 20
DRIFTS_PER_ANALYST = 5
POINTS_PER_ANALYST = 6
ROUTES_PER_ANALYST = 5
AREAS_PER_ANALYST = 4
SEARCHES = 50
TRACK_SEARCHES = 25
SEARCH_HOURS = 48
LEEWAY_SOURCE = ("invented for the benchmark; use coefficients for your object from a "
                 "published leeway study")
CAUTION = ("Invented for seekgrid's open-ocean benchmark: no value here is a recommendation "
           "for any real search.")


def lonlat(e_km, n_km):
    return (LON0 + e_km / KM_PER_DEG_LON, LAT0 + n_km / KM_PER_DEG_LAT)


def pos(e_km, n_km):
    lon, lat = lonlat(e_km, n_km)
    return f"[{lon:.5f}, {lat:.5f}]"


def stamp(t):
    return t.strftime("%Y-%m-%dT%H:%M:%SZ")


def at_h(hours):
    return T0 + datetime.timedelta(seconds=round(hours * 3600.0))


def r(x, d=2):
    """A fixed-format number (deterministic text)."""
    return f"{x:.{d}f}"


# --- the invented vessel and its planned route (local km) -------------------------------------
# A small cargo vessel bound north-east; last position report at T0 - 8 h at the origin.
ROUTE = [(-60.0, -45.0), (0.0, 0.0), (55.0, 40.0), (110.0, 75.0)]


def route_point(s):
    """Point at fraction s (0..1) of the route's length."""
    legs = [math.dist(a, b) for a, b in zip(ROUTE, ROUTE[1:])]
    d = s * sum(legs)
    for (a, b), length in zip(zip(ROUTE, ROUTE[1:]), legs):
        if d <= length:
            f = d / length
            return (a[0] + f * (b[0] - a[0]), a[1] + f * (b[1] - a[1]))
        d -= length
    return ROUTE[-1]


# --- environment series ------------------------------------------------------------------------

def wind_series(rng, k):
    """Hourly wind at 10 m, from direction, for one invented model run."""
    base_speed = 13.0 + 2.0 * k
    base_from = 215.0 + 12.0 * k
    phase = rng.uniform(0, 2 * math.pi)
    rows = []
    for h in range(SERIES_FROM_H, SERIES_TO_H + 1):
        speed = base_speed + 4.0 * math.sin(h / 18.0 + phase) + rng.normal(0, 0.8)
        frm = (base_from + 25.0 * math.sin(h / 30.0 + phase) + rng.normal(0, 4.0)) % 360.0
        rows.append((at_h(h), max(speed, 0.5), frm))
    return rows


def current_series(rng, k):
    """Hourly total water current, toward direction, for one invented model run (with an
    inertial oscillation of about 24 h at this latitude)."""
    base_speed = 0.45 + 0.1 * k
    base_to = 60.0 + 20.0 * k
    phase = rng.uniform(0, 2 * math.pi)
    rows = []
    for h in range(SERIES_FROM_H, SERIES_TO_H + 1):
        speed = base_speed + 0.15 * math.sin(2 * math.pi * h / 23.3 + phase) + rng.normal(0, 0.03)
        to = (base_to + 30.0 * math.cos(2 * math.pi * h / 23.3 + phase) + rng.normal(0, 3.0)) % 360.0
        rows.append((at_h(h), max(speed, 0.02), to))
    return rows


def write_series(path, rows, what):
    lines = [f"# {CAUTION}",
             f"# {what}",
             "time,speed_kn,direction_deg"]
    lines += [f"{stamp(t)},{s:.2f},{d:.1f}" for t, s, d in rows]
    write_text(path, "\n".join(lines) + "\n")


def interp_rows(rows, t):
    """(speed, direction) of a series at time t, linear in east/north components."""
    hs = [(x[0] - T0).total_seconds() / 3600.0 for x in rows]
    h = (t - T0).total_seconds() / 3600.0
    h = min(max(h, hs[0]), hs[-1])
    i = min(int(h - hs[0]), len(rows) - 2)
    f = h - hs[i]
    comps = []
    for row in (rows[i], rows[i + 1]):
        b = math.radians(row[2])
        comps.append((row[1] * math.sin(b), row[1] * math.cos(b)))
    e = comps[0][0] * (1 - f) + comps[1][0] * f
    n = comps[0][1] * (1 - f) + comps[1][1] * f
    return math.hypot(e, n), math.degrees(math.atan2(e, n)) % 360.0


# --- files -------------------------------------------------------------------------------------

OUT = None


def write_text(rel, text):
    full = os.path.join(OUT, rel)
    os.makedirs(os.path.dirname(full), exist_ok=True)
    with open(full, "w", encoding="utf-8", newline="\n") as f:
        f.write(text)


def polygon_file(rel, name, ring_km):
    ring = [[round(c, 6) for c in lonlat(e, n)] for e, n in ring_km]
    ring.append(ring[0])
    fc = {"type": "FeatureCollection", "name": name, "note": CAUTION,
          "features": [{"type": "Feature", "properties": {"name": name},
                        "geometry": {"type": "Polygon", "coordinates": [ring]}}]}
    write_text(rel, json.dumps(fc, indent=1) + "\n")


def blob(rng, ce, cn, radius_km):
    """A convex-ish invented area: a wobbly ellipse, counter-clockwise."""
    a = radius_km * rng.uniform(0.8, 1.3)
    b = radius_km * rng.uniform(0.5, 0.9)
    rot = rng.uniform(0, math.pi)
    pts = []
    for k in range(12):
        t = 2 * math.pi * k / 12
        w = 1.0 + 0.08 * math.sin(3 * t + rot)
        x, y = a * w * math.cos(t), b * w * math.sin(t)
        pts.append((ce + x * math.cos(rot) - y * math.sin(rot),
                    cn + x * math.sin(rot) + y * math.cos(rot)))
    return pts


def gpx_file(rel, name, fixes):
    body = "\n".join(
        f'   <trkpt lat="{lat:.6f}" lon="{lon:.6f}"><time>{stamp(t)}</time></trkpt>'
        for lon, lat, t in fixes)
    text = f"""<?xml version="1.0" encoding="UTF-8"?>
<gpx version="1.1" creator="seekgrid ocean benchmark generator (invented track)" xmlns="http://www.topografix.com/GPX/1/1">
 <metadata><name>{name}</name><desc>{CAUTION}</desc></metadata>
 <trk><name>{name}</name><trkseg>
{body}
 </trkseg></trk>
</gpx>
"""
    write_text(rel, text)


# --- the case ----------------------------------------------------------------------------------

def main():
    global OUT
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("dir", nargs="?", default=os.path.join(REPO, "target", "ocean-case"))
    ap.add_argument("--seed", type=int, default=16)
    ap.add_argument("--particles-total", type=int, default=1_000_000,
                    help="particles over all drift scenarios (default 1,000,000)")
    ap.add_argument("--cell-m", type=float, default=150.0,
                    help="[grid] cell_m (default 150: an automatic grid of about 4 M cells)")
    ap.add_argument("--force", action="store_true", help="replace the files of an earlier run")
    args = ap.parse_args()
    OUT = args.dir
    if os.path.isdir(OUT) and os.listdir(OUT) and not args.force:
        sys.exit(f"{OUT} exists and is not empty; give --force to replace the generated files")
    rng = np.random.default_rng(args.seed)
    drifts = ANALYSTS * DRIFTS_PER_ANALYST
    per_drift = max(1, args.particles_total // drifts)

    winds = [wind_series(rng, k) for k in range(3)]
    currents = [current_series(rng, k) for k in range(2)]
    for k, rows in enumerate(winds):
        write_series(f"env/wind-{k + 1}.csv", rows,
                     "Invented hourly wind at 10 m; direction_deg is where it blows FROM, true.")
    for k, rows in enumerate(currents):
        write_series(f"env/current-{k + 1}.csv", rows,
                     "Invented hourly total water current; direction_deg is where it flows TOWARD, true.")

    out = []
    w = out.append
    w(f"# {CAUTION}")
    w("# The vessel, its route, the analysts, scenarios, wind and current series, leeway")
    w("# coefficients, sweep widths, searches, tracks and units are all made up. The case lies in")
    w("# open ocean in the South Atlantic, far from any real coast; it has no coastline.")
    w(f"# Written by benches/ocean/make_ocean_case.py --seed {args.seed} "
      f"--particles-total {args.particles_total} --cell-m {args.cell_m:g}")
    w("")
    w("[incident]")
    w('title = "Overdue cargo vessel in the open South Atlantic (invented benchmark case)"')
    w(f'reference_time = "{stamp(T0)}"')
    w('notes = "Invented benchmark incident. The small cargo vessel Tern Harbour (invented) last '
      'reported 8 hours before the reference time on her route north-east; nothing since. '
      'No value in this file is a recommendation."')
    w("")
    w("[grid]")
    w(f"cell_m = {args.cell_m:g}")
    # `check` sizes the grid before any drift from the drift's possible reach (about 740 km
    # square here), far wider than the automatic grid `map` settles on (about 2000 x 2000
    # cells): the default limit would refuse the case.
    w("max_cells = 36000000")
    w("")

    # Analysts.
    for a in range(ANALYSTS):
        w("[[analyst]]")
        w(f'id = "analyst-{a + 1:02d}"')
        w(f"weight = {r(rng.uniform(0.5, 2.0))}")
        w('note = "invented"')
        w("")

    # Scenarios. Drift parameters are kept for the search placement below.
    drift_params = []
    for a in range(ANALYSTS):
        aid = f"analyst-{a + 1:02d}"
        kinds = (["drift"] * DRIFTS_PER_ANALYST + ["point"] * POINTS_PER_ANALYST
                 + ["route"] * ROUTES_PER_ANALYST + ["area"] * AREAS_PER_ANALYST)
        assert len(kinds) == SCENARIOS_PER_ANALYST
        for s, kind in enumerate(kinds):
            sid = f"a{a + 1:02d}-{kind}-{s + 1:02d}"
            w("[[scenario]]")
            w(f'id = "{sid}"')
            w(f'analyst = "{aid}"')
            w(f"weight = {r(rng.uniform(0.2, 3.0))}")
            w(f'kind = "{kind}"')
            if kind == "point":
                # A position the vessel might have reached by the reference time on her route.
                e, n = route_point(rng.uniform(0.3, 0.75))
                e += rng.normal(0, 6.0)
                n += rng.normal(0, 6.0)
                w(f"position = {pos(e, n)}")
                if rng.random() < 0.5:
                    w(f"sigma_m = {rng.uniform(2000, 9000):.0f}")
                else:
                    major = rng.uniform(4000, 14000)
                    w(f"sigma_major_m = {major:.0f}")
                    w(f"sigma_minor_m = {major * rng.uniform(0.3, 0.8):.0f}")
                    w(f"major_bearing_deg = {rng.uniform(0, 180):.0f}")
            elif kind == "route":
                k = int(rng.integers(3, 6))
                s0 = rng.uniform(0.2, 0.4)
                s1 = rng.uniform(0.6, 0.85)
                pts = [route_point(s0 + (s1 - s0) * i / (k - 1)) for i in range(k)]
                pts = [(e + rng.normal(0, 3.0), n + rng.normal(0, 3.0)) for e, n in pts]
                w("waypoints = [" + ", ".join(pos(e, n) for e, n in pts) + "]")
                w(f"cross_track_sigma_m = {rng.uniform(1500, 6000):.0f}")
            elif kind == "area":
                e, n = route_point(rng.uniform(0.3, 0.75))
                e += rng.normal(0, 12.0)
                n += rng.normal(0, 12.0)
                rel = f"areas/{sid}.geojson"
                polygon_file(rel, f"{sid} (invented)", blob(rng, e, n, rng.uniform(5.0, 15.0)))
                w(f'polygon = "{rel}"')
            else:
                e, n = rng.normal(0, 3.0), rng.normal(0, 3.0)
                earliest = round(rng.uniform(-8.0, -5.0) * 12) / 12      # whole 5 minutes
                latest = earliest + round(rng.uniform(0.0, 4.0) * 12) / 12
                w(f"position = {pos(e, n)}")
                w(f"position_sigma_m = {rng.uniform(1000, 5000):.0f}")
                w(f'adrift = {{ earliest = "{stamp(at_h(earliest))}", latest = "{stamp(at_h(latest))}" }}')
                ci = int(rng.integers(0, 3))       # 2 of 3: a series; 1 of 3: a constant
                cur_sd = (r(rng.uniform(0.1, 0.25)), r(rng.uniform(10, 30), 0))
                if ci < len(currents):
                    w(f'current = {{ series = "env/current-{ci + 1}.csv", speed_sigma_kn = {cur_sd[0]}, '
                      f"direction_sigma_deg = {cur_sd[1]} }}")
                    cur = ("series", ci)
                else:
                    cs, ct = rng.uniform(0.3, 0.7), rng.uniform(50, 100)
                    w(f"current = {{ speed_kn = {r(cs)}, toward_deg = {r(ct, 0)}, "
                      f"speed_sigma_kn = {cur_sd[0]}, direction_sigma_deg = {cur_sd[1]} }}")
                    cur = ("const", float(r(cs)), float(r(ct, 0)))
                wi = int(rng.integers(0, 4))        # 3 of 4: a series; 1 of 4: a constant
                wind_sd = (r(rng.uniform(2, 4), 1), r(rng.uniform(10, 25), 0))
                if wi < len(winds):
                    w(f'wind = {{ series = "env/wind-{wi + 1}.csv", speed_sigma_kn = {wind_sd[0]}, '
                      f"direction_sigma_deg = {wind_sd[1]} }}")
                    wind = ("series", wi)
                else:
                    ws, wf = rng.uniform(12, 20), rng.uniform(210, 250)
                    w(f"wind = {{ speed_kn = {r(ws, 1)}, from_deg = {r(wf, 0)}, "
                      f"speed_sigma_kn = {wind_sd[0]}, direction_sigma_deg = {wind_sd[1]} }}")
                    wind = ("const", float(r(ws, 1)), float(r(wf, 0)))
                slope = float(r(rng.uniform(0.02, 0.05), 3))
                offset = float(r(rng.uniform(0.0, 0.1), 2))
                w(f"leeway = {{ downwind_slope = {slope}, downwind_offset_kn = {offset}, "
                  f"downwind_sigma_kn = {r(rng.uniform(0.03, 0.08))}, "
                  f"crosswind_slope = {r(rng.uniform(0.005, 0.02), 3)}, crosswind_offset_kn = 0.0, "
                  f"crosswind_sigma_kn = {r(rng.uniform(0.02, 0.05))}, "
                  f"jibe_per_h = {r(rng.uniform(0.0, 0.1))}, "
                  f'source = "{LEEWAY_SOURCE}" }}')
                w(f"diffusivity_m2_s = {r(rng.uniform(0.0, 5.0), 1)}")
                w(f"particles = {per_drift}")
                w(f"seed = {a * 100 + s + 1}")
                drift_params.append(dict(e=e, n=n, t=(earliest + latest) / 2, cur=cur, wind=wind,
                                         slope=slope, offset=offset))
            w("")

    def drift_centre(h):
        """Mean nominal position (km) of the drift scenarios at T0 + h hours: current plus
        downwind leeway, hourly Euler steps. Only used to put the searches where the drift is."""
        es, ns = [], []
        for p in drift_params:
            e, n, t = p["e"], p["n"], p["t"]
            while t < h:
                dt = min(1.0, h - t)
                tt = at_h(t + dt / 2)
                cs, ct = (interp_rows(currents[p["cur"][1]], tt) if p["cur"][0] == "series"
                          else p["cur"][1:])
                ws, wf = (interp_rows(winds[p["wind"][1]], tt) if p["wind"][0] == "series"
                          else p["wind"][1:])
                lw = p["slope"] * ws + p["offset"]
                ve = cs * math.sin(math.radians(ct)) + lw * math.sin(math.radians(wf + 180))
                vn = cs * math.cos(math.radians(ct)) + lw * math.cos(math.radians(wf + 180))
                e += ve * KN_KMH * dt
                n += vn * KN_KMH * dt
                t += dt
            es.append(e)
            ns.append(n)
        return float(np.mean(es)), float(np.mean(ns))

    # Searches: 50 over the 48 hours after T0, alternating a GPS track and a pattern, each
    # placed near where the drift would be at its middle.
    craft = [  # unit, speed kn, fix interval s, sweep width range m
        ("aircraft-1", 150.0, 30, (1500, 3000)), ("aircraft-2", 140.0, 30, (1500, 3000)),
        ("helicopter-1", 90.0, 20, (1000, 2500)), ("helicopter-2", 95.0, 20, (1000, 2500)),
        ("vessel-1", 12.0, 60, (600, 1500)), ("vessel-2", 14.0, 60, (600, 1500)),
        ("vessel-3", 10.0, 60, (500, 1200)),
    ]
    patterns = ["parallel-sweep", "creeping-line", "expanding-square", "sector-search"]
    tracks = 0
    for k in range(SEARCHES):
        unit, speed_kn, fix_s, sw_range = craft[k % len(craft)]
        start_h = 0.75 + k * (SEARCH_HOURS - 4.0) / (SEARCHES - 1)
        dur_h = rng.uniform(2.0, 3.5) if speed_kn < 50 else rng.uniform(1.5, 3.0)
        end_h = min(start_h + dur_h, SEARCH_HOURS)
        dur_h = end_h - start_h
        ce, cn = drift_centre((start_h + end_h) / 2)
        ce += rng.normal(0, 8.0)
        cn += rng.normal(0, 8.0)
        sweep = rng.uniform(*sw_range)
        sid = f"s{k + 1:02d}-{unit}"
        w("[[search]]")
        w(f'id = "{sid}"')
        w(f'unit = "{unit}"')
        w(f'start = "{stamp(at_h(start_h))}"')
        w(f'end = "{stamp(at_h(end_h))}"')
        w(f"sweep_width_m = {sweep:.0f}          # invented for the benchmark")
        w(f'detection = "{["inverse-cube", "exponential", "inverse-cube", "definite-range"][k % 4]}"')
        if k % 2 == 0 and tracks < TRACK_SEARCHES:
            tracks += 1
            # A ladder of legs flown at the unit's speed (with a little jitter), fixes every
            # fix_s seconds with a few metres of GPS noise.
            length_km = speed_kn * KN_KMH * dur_h
            legs = int(rng.integers(4, 11))
            spacing_km = sweep / 1000.0 * rng.uniform(0.8, 1.5)
            leg_km = max((length_km - (legs - 1) * spacing_km) / legs, 1.0)
            bearing = math.radians(rng.uniform(0, 180))
            ue, un = math.sin(bearing), math.cos(bearing)     # along the legs
            pe, pn = un, -ue                                   # across
            verts = []
            for j in range(legs):
                off = (j - (legs - 1) / 2) * spacing_km
                a = (-leg_km / 2, leg_km / 2) if j % 2 == 0 else (leg_km / 2, -leg_km / 2)
                for along in a:
                    verts.append((ce + along * ue + off * pe, cn + along * un + off * pn))
            seg = [math.dist(p, q) for p, q in zip(verts, verts[1:])]
            total = sum(seg)
            fixes = []
            n_fix = int(dur_h * 3600 / fix_s)
            for i in range(n_fix + 1):
                d = total * i / n_fix
                j = 0
                while j < len(seg) - 1 and d > seg[j]:
                    d -= seg[j]
                    j += 1
                f = min(d / seg[j], 1.0)
                e = verts[j][0] + f * (verts[j + 1][0] - verts[j][0]) + rng.normal(0, 0.008)
                n = verts[j][1] + f * (verts[j + 1][1] - verts[j][1]) + rng.normal(0, 0.008)
                lon, lat = lonlat(e, n)
                fixes.append((lon, lat, at_h(start_h) + datetime.timedelta(seconds=i * fix_s)))
            rel = f"tracks/{sid}.gpx"
            gpx_file(rel, f"{sid} (invented)", fixes)
            w(f'track = "{rel}"')
        else:
            kind = patterns[(k // 2) % 4]
            spacing = sweep * rng.uniform(0.8, 1.5)
            if kind in ("parallel-sweep", "creeping-line"):
                # Sized so the unit could fly it in the window: area ~ speed x time x spacing.
                area_km2 = speed_kn * KN_KMH * dur_h * spacing / 1000.0
                ratio = rng.uniform(1.2, 2.5)
                length = math.sqrt(area_km2 * ratio) * 1000.0
                width = length / ratio
                w(f'pattern = {{ kind = "{kind}", center = {pos(ce, cn)}, length_m = {length:.0f}, '
                  f"width_m = {width:.0f}, major_bearing_deg = {rng.uniform(0, 180):.0f}, "
                  f"track_spacing_m = {spacing:.0f} }}")
            elif kind == "expanding-square":
                legs = int(rng.integers(12, 30))
                w(f'pattern = {{ kind = "expanding-square", center = {pos(ce, cn)}, '
                  f"track_spacing_m = {spacing:.0f}, legs = {legs}, "
                  f"first_leg_bearing_deg = {rng.uniform(0, 360):.0f} }}")
            else:
                w(f'pattern = {{ kind = "sector-search", center = {pos(ce, cn)}, '
                  f"radius_m = {rng.uniform(4000, 12000):.0f}, "
                  f"first_leg_bearing_deg = {rng.uniform(0, 360):.0f}, sectors = 3 }}")
            if rng.random() < 0.2:
                w(f"done_fraction = {r(rng.uniform(0.5, 0.95))}")
        w("")

    # Units for the next period.
    for uid, speed, hours, sweep, spacing_min in (
            ("aircraft-1", 150, 5, 2500, 1500), ("helicopter-1", 90, 3, 1800, 800),
            ("vessel-1", 12, 10, 1200, 500), ("vessel-2", 14, 10, 1000, 500)):
        w("[[unit]]")
        w(f'id = "{uid}"')
        w(f"speed_kn = {speed}")
        w(f"hours_on_scene = {hours}")
        w(f"sweep_width_m = {sweep}          # invented for the benchmark")
        w(f"track_spacing_min_m = {spacing_min}")
        w('detection = "inverse-cube"')
        w("")

    write_text("incident.toml", "\n".join(out).rstrip("\n") + "\n")
    print(f"wrote {OUT}/incident.toml: {ANALYSTS} analysts, {ANALYSTS * SCENARIOS_PER_ANALYST} "
          f"scenarios ({drifts} drift of {per_drift} particles = {drifts * per_drift} particles), "
          f"{SEARCHES} searches ({tracks} GPS tracks), cell_m {args.cell_m:g}")


if __name__ == "__main__":
    main()
