"""Identities in a swarm: every ok or held row of RAW.csv must lie nearer to
its own robot's truth than to any other robot's, within --max-mm of it.

usage: swarm_check.py RAW.csv TRUTH.csv [--max-mm 5] [--rmse-mm 1.2] [--min-frac 0.99]

Counts identity swaps (a row nearer another robot's truth), the worst and
RMS position error over all rows, per docked pair too, and the fraction of
(robot, frame) pairs with at least half the tag in view that are ok or held.
Prints the figures; exits 1 when a bound fails.
"""
import argparse
import csv
import math
import sys

ap = argparse.ArgumentParser()
ap.add_argument("raw"); ap.add_argument("truth")
ap.add_argument("--max-mm", type=float, default=5.0)
ap.add_argument("--rmse-mm", type=float, default=1.2)
ap.add_argument("--min-frac", type=float, default=0.99)
a = ap.parse_args()
truth = {}
for r in csv.DictReader(open(a.truth)):
    truth.setdefault(int(r["frame"]), {})[int(r["id"])] = r
swaps, worst, se, n, n_half, n_pose = [], 0.0, 0.0, 0, 0, 0
per = {}
raw = {(int(r["frame"]), int(r["id"])): r for r in csv.DictReader(open(a.raw))}
for f, robots in sorted(truth.items()):
    for i, t in robots.items():
        r = raw.get((f, i))
        vis = float(t["visible_frac"])
        if vis >= 0.5:
            n_half += 1
        if r is None or r["status"] == "lost":
            continue
        if vis >= 0.5:
            n_pose += 1
        x, y = float(r["x_m"]), float(r["y_m"])
        d = {j: math.hypot(x - float(u["x_m"]), y - float(u["y_m"])) for j, u in robots.items()}
        near = min(d, key=d.get)
        if near != i:
            swaps.append((f, i, near))
        e = d[i]
        worst = max(worst, e)
        se += e * e
        n += 1
        p = per.setdefault(i, [0.0, 0, 0.0])
        p[0] += e * e; p[1] += 1; p[2] = max(p[2], e)
rmse = 1000 * math.sqrt(se / n) if n else float("nan")
frac = n_pose / n_half if n_half else 0
print(f"{len(per)} robots, {n} rows posed: {len(swaps)} identity swaps, position RMSE {rmse:.3f} mm, "
      f"worst {1000 * worst:.3f} mm; {100 * frac:.2f}% of {n_half} robot-frames with half a tag in view posed")
w = max(per, key=lambda i: per[i][2])
print(f"worst robot {w}: RMSE {1000 * math.sqrt(per[w][0] / per[w][1]):.3f} mm, worst {1000 * per[w][2]:.3f} mm")
bad = []
if swaps:
    bad.append(f"identity swaps (frame, id, nearer to): {swaps[:10]}")
if 1000 * worst > a.max_mm:
    bad.append(f"a row {1000 * worst:.3f} mm from its robot > {a.max_mm}")
if not rmse <= a.rmse_mm:
    bad.append(f"RMSE {rmse:.3f} mm > {a.rmse_mm}")
if frac < a.min_frac:
    bad.append(f"posed fraction {frac:.4f} < {a.min_frac}")
for b in bad:
    print("FAIL:", b, file=sys.stderr)
sys.exit(1 if bad else 0)
