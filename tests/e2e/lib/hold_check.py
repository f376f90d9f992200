"""Checks RAW.csv against a synthetic clip's truth on the frames where the
tag is partly in view (issue 17: glare and occluders over the tag).

usage: hold_check.py RAW.csv TRUTH.csv --id ID [--min-frac 0.995] [--rmse-mm 2]
       [--held-max-mm 5] [--min-held N] [--min-hidden N]

Frames with visible_frac >= 0.5 (at least half the tag seen): the fraction
that are ok or held and the position RMSE over them; over all held rows the
worst error.
Frames with visible_frac == 0 (the tag fully hidden): every one must be
lost, not held.  Prints the figures; exits 1 when a bound fails.
"""
import argparse
import csv
import math
import sys

ap = argparse.ArgumentParser()
ap.add_argument("raw"); ap.add_argument("truth")
ap.add_argument("--id", type=int, required=True)
ap.add_argument("--min-frac", type=float, default=0.995)
ap.add_argument("--rmse-mm", type=float, default=2.0)
ap.add_argument("--held-max-mm", type=float, default=5.0)
ap.add_argument("--min-held", type=int, default=0)
ap.add_argument("--min-hidden", type=int, default=0)
a = ap.parse_args()

truth = {int(r["frame"]): r for r in csv.DictReader(open(a.truth)) if int(r["id"]) == a.id}
rows = {int(r["frame"]): r for r in csv.DictReader(open(a.raw)) if int(r["id"]) == a.id}
bad = []
n_half = n_pose = n_held = n_hidden = n_hidden_lost = 0
se = 0.0
held_worst = 0.0
partial = [0, 0]  # frames with 0 < visible < 0.5: posed, total (reported only)
missed = []
for f, t in sorted(truth.items()):
    r = rows.get(f)
    if r is None:
        bad.append(f"no row for frame {f}")
        continue
    vis = float(t["visible_frac"])
    st = r["status"]
    if vis == 0:
        n_hidden += 1
        if st == "lost":
            n_hidden_lost += 1
        else:
            bad.append(f"frame {f}: the tag is fully hidden but the row is '{st}'")
        continue
    if st == "held":  # every held pose counts here, however little was in view
        e = math.hypot(float(r["x_m"]) - float(t["x_m"]), float(r["y_m"]) - float(t["y_m"]))
        held_worst = max(held_worst, e)
    if vis < 0.5:
        partial[1] += 1
        partial[0] += st != "lost"
        continue
    n_half += 1
    if st == "lost":
        missed.append(f)
        continue
    n_pose += 1
    e = math.hypot(float(r["x_m"]) - float(t["x_m"]), float(r["y_m"]) - float(t["y_m"]))
    se += e * e
    if st == "held":
        n_held += 1
frac = n_pose / n_half if n_half else 0
rmse = 1000 * math.sqrt(se / n_pose) if n_pose else float("nan")
print(f"id {a.id}: {n_half} frames with at least half the tag in view: {n_pose} ok or held "
      f"({100 * frac:.2f}%), {n_held} of them held; position RMSE {rmse:.3f} mm; worst held pose "
      f"{1000 * held_worst:.3f} mm")
print(f"id {a.id}: {n_hidden} frames fully hidden, {n_hidden_lost} lost; {partial[1]} frames less than half "
      f"in view, {partial[0]} of them posed")
if missed:
    print(f"id {a.id}: lost with at least half in view at frames {missed[:20]}")
if frac < a.min_frac:
    bad.append(f"ok or held {frac:.4f} < {a.min_frac}")
if not rmse <= a.rmse_mm:
    bad.append(f"position RMSE {rmse:.3f} mm > {a.rmse_mm}")
if 1000 * held_worst > a.held_max_mm:
    bad.append(f"a held pose {1000 * held_worst:.3f} mm off > {a.held_max_mm}")
if n_held < a.min_held:
    bad.append(f"{n_held} held frames < {a.min_held}: the scene does not exercise holding")
if n_hidden < a.min_hidden:
    bad.append(f"{n_hidden} fully hidden frames < {a.min_hidden}")
for b in bad:
    print("FAIL:", b, file=sys.stderr)
sys.exit(1 if bad else 0)
