#!/usr/bin/env python3
"""Writes the geometry of seekgrid's invented demo incidents.

Everything here is invented: Wrenhold Island does not exist (it is placed in open ocean in the
mid-Atlantic, far from any real coast), nor do its bays, trails, analysts or searches. The files
are committed; rerun this script only to change the demo.

    python3 scenarios/make_demo_geometry.py
"""
import datetime
import json
import math
import os

HERE = os.path.dirname(os.path.abspath(__file__))
LAT0, LON0 = 31.50, -41.00                      # island centre (invented place in open ocean)
KM_PER_DEG_LAT = 110.86
KM_PER_DEG_LON = 111.32 * math.cos(math.radians(LAT0))


def lonlat(east_km, north_km):
    return [round(LON0 + east_km / KM_PER_DEG_LON, 6), round(LAT0 + north_km / KM_PER_DEG_LAT, 6)]


def write(path, obj):
    full = os.path.join(HERE, path)
    os.makedirs(os.path.dirname(full), exist_ok=True)
    with open(full, "w") as f:
        json.dump(obj, f, indent=1)
        f.write("\n")


def fc(features, name):
    return {"type": "FeatureCollection", "name": name,
            "note": "invented demo data for seekgrid; not a real place", "features": features}


# Island: a lumpy ellipse 12.6 km x 8 km, counter-clockwise (RFC 7946 right-hand rule).
coast = []
for k in range(48):
    a = 2 * math.pi * k / 48
    wobble = 1 + 0.07 * math.sin(3 * a) + 0.04 * math.cos(5 * a)
    coast.append(lonlat(6.3 * wobble * math.cos(a), 4.0 * wobble * math.sin(a)))
coast.append(coast[0])
island = {"type": "Feature", "properties": {"name": "Wrenhold Island (invented)"},
          "geometry": {"type": "Polygon", "coordinates": [coast]}}
for demo in ("marine", "land"):
    write(f"{demo}/coast.geojson", fc([island], "coast"))

# Marine: a sheltered bay off the north coast where one analyst thinks the boat anchored.
bay = [lonlat(-2.2, 4.6), lonlat(0.4, 4.6), lonlat(0.8, 6.2), lonlat(-2.6, 6.2)]
bay.append(bay[0])
write("marine/areas/kestrel-bay.geojson", fc([{"type": "Feature", "properties": {"name": "Kestrel Bay approaches (invented)"},
                                               "geometry": {"type": "Polygon", "coordinates": [bay]}}], "kestrel-bay"))

# Land: eight segments, a 4 x 2 tiling of the island's interior, 2 km x 2.5 km each.
features = []
for row, north0 in enumerate((0.0, -2.5)):
    for col, east0 in enumerate((-4.0, -2.0, 0.0, 2.0)):
        sid = f"S{row * 4 + col + 1}"
        ring = [lonlat(east0, north0), lonlat(east0 + 2.0, north0), lonlat(east0 + 2.0, north0 + 2.5),
                lonlat(east0, north0 + 2.5)]
        ring.append(ring[0])
        features.append({"type": "Feature", "properties": {"id": sid},
                         "geometry": {"type": "Polygon", "coordinates": [ring]}})
write("land/segments.geojson", fc(features, "segments"))


def gpx_track(path, name, legs, start, speed_kmh):
    """A recorded track (trk) along the given (east_km, north_km) vertices, timed at speed_kmh."""
    t = 0.0
    pts = []
    for i, (e, n) in enumerate(legs):
        if i > 0:
            pe, pn = legs[i - 1]
            t += math.hypot(e - pe, n - pn) / speed_kmh * 3600.0
        lon, lat = lonlat(e, n)
        stamp = (start + datetime.timedelta(seconds=round(t))).strftime("%Y-%m-%dT%H:%M:%SZ")
        pts.append(f'   <trkpt lat="{lat:.6f}" lon="{lon:.6f}"><time>{stamp}</time></trkpt>')
    body = "\n".join(pts)
    text = f"""<?xml version="1.0" encoding="UTF-8"?>
<gpx version="1.1" creator="seekgrid demo generator (invented track)" xmlns="http://www.topografix.com/GPX/1/1">
 <metadata><name>{name}</name><desc>Invented demo track for seekgrid; not a real search.</desc></metadata>
 <trk><name>{name}</name><trkseg>
{body}
 </trkseg></trk>
</gpx>
"""
    full = os.path.join(HERE, path)
    os.makedirs(os.path.dirname(full), exist_ok=True)
    with open(full, "w") as f:
        f.write(text)


def utc(*args):
    return datetime.datetime(*args, tzinfo=datetime.timezone.utc)


def lawnmower(e0, n0, leg_km, spacing_km, legs, along="north", densify=0.5):
    pts = []
    for k in range(legs):
        a = (e0 + k * spacing_km, n0) if along == "north" else (e0, n0 + k * spacing_km)
        b = (a[0], a[1] + leg_km) if along == "north" else (a[0] + leg_km, a[1])
        if k % 2:
            a, b = b, a
        steps = max(1, int(leg_km / densify))
        for s in range(steps + 1):
            pts.append((a[0] + (b[0] - a[0]) * s / steps, a[1] + (b[1] - a[1]) * s / steps))
    return pts


# Marine: a helicopter's recorded track over the drift area east-north-east of the island.
gpx_track("marine/tracks/helicopter-1.gpx", "helicopter-1 first sortie",
          lawnmower(13.0, 1.0, 10.0, 1.5, 7, along="north"), utc(2026, 6, 14, 21), 160.0)
# Land: two ground teams' recorded tracks through segments S2 and S6 (team leaders' GPS).
gpx_track("land/tracks/team-alpha.gpx", "team-alpha", lawnmower(-1.8, 0.15, 2.2, 0.4, 5, along="north", densify=0.25),
          utc(2026, 6, 15, 6), 2.5)
gpx_track("land/tracks/team-bravo.gpx", "team-bravo", lawnmower(-1.8, -2.35, 2.2, 0.4, 5, along="north", densify=0.25),
          utc(2026, 6, 15, 6), 2.5)
print("wrote demo geometry under", HERE)
