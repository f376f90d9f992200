"""Compares RAW.csv (wakeline track) with a synthetic clip's truth CSV, frame
by frame and id by id, prints the figures and exits 1 when a bound fails.

usage: track_compare.py RAW.csv TRUTH.csv [--pos-mm B] [--head-deg B] [--ok F]
       [--ids 3,7] [--hidden ID:T0:T1] [--found-within N] [--ccw ID]
"""
import argparse
import csv
import math
import sys

ap = argparse.ArgumentParser()
ap.add_argument("raw"); ap.add_argument("truth")
ap.add_argument("--pos-mm", type=float); ap.add_argument("--head-deg", type=float)
ap.add_argument("--ok", type=float); ap.add_argument("--ids")
ap.add_argument("--hidden", action="append", default=[])
ap.add_argument("--found-within", type=int, default=3)
ap.add_argument("--ccw", type=int, action="append", default=[])
a = ap.parse_args()

raw = list(csv.DictReader(open(a.raw)))
want = ["t_s", "frame", "id", "u_px", "v_px", "x_m", "y_m", "heading_rad", "status", "margin", "size_px",
        "heading_source", "hold_score", "t_detect_s"]
hdr = open(a.raw).readline().strip().split(",")
bad = []
if hdr != want:
    bad.append(f"header {hdr} != {want}")
truth = {}
for r in csv.DictReader(open(a.truth)):
    truth[(int(r["frame"]), int(r["id"]))] = r
frames = sorted({k[0] for k in truth})
ids = sorted({k[1] for k in truth}) if not a.ids else [int(x) for x in a.ids.split(",")]
rows = {(int(r["frame"]), int(r["id"])): r for r in raw}
hidden = {}
for h in a.hidden:
    i, t0, t1 = h.split(":")
    hidden.setdefault(int(i), []).append((float(t0), float(t1)))

def is_hidden(i, t):
    return any(t0 <= t <= t1 for t0, t1 in hidden.get(i, []))

for i in ids:
    se = sh = 0.0; n_ok = n_vis = 0; lost_vis = []; found_hidden = []
    xs = []; hs = []
    for f in frames:
        tr = truth.get((f, i)); r = rows.get((f, i))
        if tr is None:
            continue
        if r is None:
            bad.append(f"id {i}: no row for frame {f}")
            break
        if abs(float(r["t_s"]) - float(tr["t_s"])) > 1e-3:
            bad.append(f"id {i} frame {f}: t_s {r['t_s']} != truth {tr['t_s']}")
            break
        hid = is_hidden(i, float(tr["t_s"]))
        if hid:
            if r["status"] == "ok":
                found_hidden.append(f)
            continue
        n_vis += 1
        if r["status"] != "ok":
            lost_vis.append(f)
            continue
        n_ok += 1
        dx = float(r["x_m"]) - float(tr["x_m"]); dy = float(r["y_m"]) - float(tr["y_m"])
        se += dx * dx + dy * dy
        xs.append((float(r["x_m"]), float(r["y_m"])))
        if r["heading_rad"] != "":
            d = float(r["heading_rad"]) - float(tr["heading_rad"])
            sh += math.atan2(math.sin(d), math.cos(d)) ** 2
            hs.append(float(r["heading_rad"]))
    if n_ok == 0:
        bad.append(f"id {i}: never found")
        continue
    pos = 1000 * math.sqrt(se / n_ok); head = math.degrees(math.sqrt(sh / max(1, len(hs))))
    frac = n_ok / n_vis
    print(f"id {i}: {n_ok}/{n_vis} visible frames ok ({100 * frac:.2f}%), position RMSE {pos:.3f} mm, "
          f"heading RMSE {head:.3f} deg")
    if a.pos_mm is not None and pos > a.pos_mm:
        bad.append(f"id {i}: position RMSE {pos:.3f} mm > {a.pos_mm}")
    if a.head_deg is not None and head > a.head_deg:
        bad.append(f"id {i}: heading RMSE {head:.3f} deg > {a.head_deg}")
    if a.ok is not None and frac < a.ok:
        bad.append(f"id {i}: ok fraction {frac:.4f} < {a.ok}")
    if found_hidden:
        bad.append(f"id {i}: 'ok' while hidden at frames {found_hidden[:5]}")
    if i in hidden:
        # after each hidden interval: lost frames before it is found again
        for t0, t1 in hidden[i]:
            after = [f for f in frames if float(truth[(f, i)]["t_s"]) > t1]
            k = 0
            while k < len(after) and rows[(after[k], i)]["status"] != "ok":
                k += 1
            print(f"id {i}: hidden {t0}-{t1} s, found again {k} frame(s) after it reappeared")
            if k > a.found_within:
                bad.append(f"id {i}: found {k} frames after reappearing (> {a.found_within})")
    if i in a.ccw:
        # counter-clockwise: positive signed area (shoelace) and heading increasing
        # the polygon closed by its chord (the path may be an open arc)
        area = sum(xs[k][0] * xs[(k + 1) % len(xs)][1] - xs[(k + 1) % len(xs)][0] * xs[k][1]
                   for k in range(len(xs))) / 2
        turn = sum(math.atan2(math.sin(hs[k + 1] - hs[k]), math.cos(hs[k + 1] - hs[k])) for k in range(len(hs) - 1))
        print(f"id {i}: swept area {area:+.4f} m^2, heading turned {math.degrees(turn):+.1f} deg")
        if not (area > 0 and turn > 0):
            bad.append(f"id {i}: not counter-clockwise (area {area}, turn {turn})")
for b in bad:
    print("FAIL:", b, file=sys.stderr)
sys.exit(1 if bad else 0)
