"""Writes an invented swarm scene for wakeline synth: N tagged robots on
seeded random arcs in a 2.4 m x 1.4 m tank.  Some pairs dock: the follower
runs three body diameters beside its leader, closes in until the bodies
touch, rides along in contact and separates again (robots[].docks).  The
others are drawn again until no two bodies overlap at any time (real robots
do not pass through each other); pairs that come within 1.5 diameters are
counted as close passes and printed.

usage: swarm_scene.py OUT.json --robots N [--seed S] [--duration S] [--docks K]
       [--width W --height H]
"""
import argparse
import json
import math
import random

ap = argparse.ArgumentParser()
ap.add_argument("out")
ap.add_argument("--robots", type=int, default=20)
ap.add_argument("--seed", type=int, default=1)
ap.add_argument("--duration", type=float, default=3.0)
ap.add_argument("--width", type=int, default=1280)
ap.add_argument("--height", type=int, default=720)
ap.add_argument("--docks", type=int, default=3)
a = ap.parse_args()
rng = random.Random(a.seed)
D = 0.10  # body diameter
T = [k * 0.05 for k in range(int(a.duration / 0.05) + 1)]


def own(p, t):
    """the path model of docs/synth.md (no rest, ramp or oscillation)"""
    x0, y0 = p["start_m"]; h0 = math.radians(p["heading_deg"]); k = p["curvature_1pm"]
    s = p["speed_mps"] * t
    if abs(k) < 1e-12:
        return x0 + s * math.cos(h0), y0 + s * math.sin(h0), h0
    h = h0 + k * s
    return x0 + (math.sin(h) - math.sin(h0)) / k, y0 - (math.cos(h) - math.cos(h0)) / k, h


def pose(r, t, robots):
    x, y, h = own(r["path"], t)
    for d in r.get("docks", []):
        lead = next(q for q in robots if q["id"] == d["with"])
        lx, ly, lh = own(lead["path"], t)
        lx -= d["offset_m"][1] * math.sin(lh)
        ly += d["offset_m"][1] * math.cos(lh)
        if d["t0_s"] <= t <= d["t1_s"]:
            w = 1.0
        else:
            q = 1 - ((d["t0_s"] - t) if t < d["t0_s"] else (t - d["t1_s"])) / d["blend_s"]
            w = 0.0 if q <= 0 else q * q * (3 - 2 * q)
        x += w * (lx - x); y += w * (ly - y); h += w * math.atan2(math.sin(lh - h), math.cos(lh - h))
    return x, y, h


def inside(x, y):
    return 0.25 < x < 2.15 and 0.2 < y < 1.2


def clear(r, robots, mind):
    """no overlap with the robots placed so far, all the time in the tank"""
    for t in T:
        x, y, _ = pose(r, t, robots + [r])
        if not inside(x, y):
            return False
        for q in robots:
            if q is r or any(d["with"] == q["id"] for d in r.get("docks", [])) or \
               any(d["with"] == r["id"] for d in q.get("docks", [])):
                continue
            qx, qy, _ = pose(q, t, robots)
            if math.hypot(x - qx, y - qy) < mind:
                return False
    return True


def random_path():
    return {"start_m": [round(rng.uniform(0.35, 2.05), 4), round(rng.uniform(0.3, 1.1), 4)],
            "heading_deg": round(rng.uniform(-180, 180), 1),
            "speed_mps": round(rng.uniform(0.05, 0.15), 3),
            "curvature_1pm": round(rng.uniform(-2, 2), 2)}


def make(rid, path):
    return {"id": rid, "diameter_m": D, "height_m": 0.25,
            "marker": {"type": "tag", "tag_id": rid, "size_m": 0.05}, "path": path}


def follower(rid, lead, side):
    """three diameters to the side of its leader, turning about the same
    centre (a parallel arc), docking for a third of the clip"""
    lp = lead["path"]; kk = lp["curvature_1pm"]; off = 3 * D * side; h0 = math.radians(lp["heading_deg"])
    r = make(rid, {"start_m": [round(lp["start_m"][0] - off * math.sin(h0), 4),
                               round(lp["start_m"][1] + off * math.cos(h0), 4)],
                   "heading_deg": lp["heading_deg"], "speed_mps": round(lp["speed_mps"] * (1 - kk * off), 4),
                   "curvature_1pm": round(kk / (1 - kk * off), 4)})
    t0 = round(rng.uniform(0.25, 0.35) * a.duration, 2)
    r["docks"] = [{"with": lead["id"], "offset_m": [0.0, round(D * side, 4)], "t0_s": t0,
                   "t1_s": round(t0 + 0.35 * a.duration, 2), "blend_s": round(0.15 * a.duration, 2)}]
    return r


robots = []
ndock = min(a.docks, a.robots // 2)
while len(robots) < a.robots:
    rid = 10 + len(robots)
    pair = len(robots) < 2 * ndock
    for attempt in range(5000):
        lead = make(rid, random_path())
        if not clear(lead, robots, 1.05 * D):
            continue
        if not pair:
            robots.append(lead)
            break
        fol = follower(rid + 1, lead, 1 if (len(robots) // 2) % 2 else -1)
        if clear(fol, robots + [lead], 1.05 * D):
            robots += [lead, fol]
            break
    else:
        raise SystemExit("swarm_scene.py: no room for another robot: fewer robots or a longer clip")
close = 0
for i in range(len(robots)):
    for j in range(i + 1, len(robots)):
        if any(d["with"] == robots[i]["id"] for d in robots[j].get("docks", [])):
            continue
        dmin = min(math.hypot(pose(robots[i], t, robots)[0] - pose(robots[j], t, robots)[0],
                              pose(robots[i], t, robots)[1] - pose(robots[j], t, robots)[1]) for t in T)
        close += dmin < 1.5 * D
print(f"swarm_scene.py: {len(robots)} robots, {ndock} docking pairs, {close} close passes (< 1.5 diameters)")
scene = {"description": f"invented test scene: a swarm of {a.robots} tagged robots, {ndock} pairs docking side by "
                        "side and separating",
         "seed": a.seed,
         "tank": {"size_m": [2.4, 1.4]},
         "camera": {"width_px": a.width, "height_px": a.height, "hfov_deg": 64, "position_m": [1.2, 0.7, 2.0]},
         "timing": {"fps": 30, "duration_s": a.duration},
         "encoding": {"bit_rate_bps": 8000000},
         "effects": {"noise_sigma": 1.0},
         "robots": robots}
json.dump(scene, open(a.out, "w"), indent=1)
