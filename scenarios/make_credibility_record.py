#!/usr/bin/env python3
"""Write scenarios/credibility-record.csv: an INVENTED track record for seekgrid's demo.

Every incident, time, score and bias in it is made up; none describes a real search. The
analysts are those of the invented demo incidents (scenarios/marine: harbour-desk, ops-desk,
duty-officer; scenarios/land: team-lead, local-ranger, dog-handler). The numbers are kept
consistent with how `seekgrid review --record` fills a record: the pool's density at the
truth is the weighted mix of the analysts' densities (linear pool), and each implied weight
is Bayes' rule, weight x density / pool density.

Run: python3 scenarios/make_credibility_record.py  (standard library only; seeded)
"""
import csv
import math
import os
import random

HERE = os.path.dirname(os.path.abspath(__file__))
COLUMNS = ["incident_id", "incident_title", "outcome_time", "role", "analyst", "log_score",
           "truth_mass_above", "bias_distance_m", "bias_bearing_deg", "weight_used",
           "weight_implied"]


def fnv1a(text):
    h = 0xcbf29ce484222325
    for b in text.encode():
        h = ((h ^ b) * 0x100000001b3) & 0xFFFFFFFFFFFFFFFF
    return f"{h:016x}"


rng = random.Random(20260614)
MARINE = {"harbour-desk": 2.0, "ops-desk": 1.5, "duty-officer": 1.0}
LAND = {"team-lead": 1.0, "local-ranger": 1.0, "dog-handler": 1.0}
# Typical density at the truth per km² (geometric mean) and bias: marine analysts tend to
# place the object short of where it drifted (truth to the north-east of their maps); land
# analysts err in any direction.
SKILL = {
    "harbour-desk": (0.040, 2500.0), "ops-desk": (0.070, 1600.0), "duty-officer": (0.012, 4200.0),
    "team-lead": (0.35, 700.0), "local-ranger": (0.60, 450.0), "dog-handler": (0.20, 900.0),
}
INCIDENTS = [
    # (file, title, outcome time, analysts present, kind)
    ("marine/2025-02-dinghy.toml", "INVENTED: dinghy overdue off Wrenhold harbour", "2025-02-11T16:40:00Z", MARINE, "marine"),
    ("land/2025-03-walker.toml", "INVENTED: walker missing on the ridge trail", "2025-03-29T09:15:00Z", LAND, "land"),
    ("marine/2025-05-kayak.toml", "INVENTED: kayaker missing in Kestrel Bay", "2025-05-18T19:05:00Z", MARINE, "marine"),
    ("land/2025-06-child.toml", "INVENTED: child lost near the campsite", "2025-06-21T14:30:00Z", {"team-lead": 1.0, "local-ranger": 1.0}, "land"),
    ("marine/2025-07-swimmer.toml", "INVENTED: swimmer carried off the north beach", "2025-07-30T12:50:00Z", {"harbour-desk": 2.0, "ops-desk": 1.5}, "marine"),
    ("land/2025-09-forager.toml", "INVENTED: mushroom forager overdue in the east woods", "2025-09-14T18:20:00Z", LAND, "land"),
    ("marine/2025-10-fishing-boat.toml", "INVENTED: fishing boat adrift after engine failure", "2025-10-03T07:45:00Z", MARINE, "marine"),
    ("land/2025-12-runner.toml", "INVENTED: trail runner missing at dusk", "2025-12-06T21:10:00Z", LAND, "land"),
    ("marine/2026-01-paddleboard.toml", "INVENTED: paddleboarder blown offshore", "2026-01-24T15:25:00Z", MARINE, "marine"),
]

rows = []
for path, title, when, present, kind in INCIDENTS:
    iid = fnv1a(f"{path}\n{title}")
    total_w = sum(present.values())
    dens = {}
    for a in present:
        typical, bias = SKILL[a]
        dens[a] = typical * math.exp(rng.gauss(0.0, 0.8))
    pool = sum(present[a] / total_w * dens[a] for a in present)
    mass_above = round(rng.uniform(0.05, 0.6), 3)
    for a in present:
        typical, bias = SKILL[a]
        w = present[a] / total_w
        if kind == "marine":
            bearing = (55.0 + rng.gauss(0.0, 35.0)) % 360.0
        else:
            bearing = rng.uniform(0.0, 360.0)
        rows.append([iid, title, when, "analyst", a, f"{math.log(dens[a]):.4f}", mass_above,
                     round(bias * math.exp(rng.gauss(0.0, 0.4))), f"{bearing:.1f}",
                     f"{w:.4f}", f"{w * dens[a] / pool:.4f}"])
    rows.append([iid, title, when, "pool", "pool", f"{math.log(pool):.4f}", mass_above,
                 "", "", "", ""])

with open(os.path.join(HERE, "credibility-record.csv"), "w", newline="") as f:
    f.write("# INVENTED track record for seekgrid's demo: every incident, score and bias below is\n"
            "# made up (scenarios/make_credibility_record.py); none describes a real search.\n")
    w = csv.writer(f, lineterminator="\n")
    w.writerow(COLUMNS)
    w.writerows(rows)
