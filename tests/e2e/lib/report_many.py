#!/usr/bin/env python3
"""report_many.py: a large invented sweep for the report's scale checks, as
the clip folders of a batch with summary.json and clip.json only (no video,
no tracks: the report reads nothing else for its table).  Seeded, so the
same N gives the same folders.

  report_many.py OUT N

Parameters: gain (10 values) x variant (v1..v4) x replicate; curvature
0.6 x gain x a variant factor with seeded scatter and a seeded interval;
about one run in twenty straight; verdicts ok / check / reject.
"""
import json, math, os, random, sys

out, n = sys.argv[1], int(sys.argv[2])
rng = random.Random(2000)
os.makedirs(os.path.join(out, "clips"), exist_ok=True)
gains = ["%.1f" % (0.2 * i) for i in range(1, 11)]
variants = [("v1", 1.0), ("v2", -1.3), ("v3", 0.7), ("v4", -0.5)]
per = len(gains) * len(variants)
for i in range(n):
    g, (v, f), rep = gains[i % len(gains)], variants[(i // len(gains)) % len(variants)], i // per + 1
    k = 0.6 * float(g) * f * (1 + rng.gauss(0, 0.05))
    se = abs(k) * 0.01 + 0.002
    straight = rng.random() < 0.05
    if straight:
        k = rng.gauss(0, 0.001)
    run = {"id": 1, "segment": 0, "headline": True, "straight": straight,
           "curvature_per_m": k, "curvature_se_per_m": se, "curvature_ci95_per_m": [k - 1.96 * se, k + 1.96 * se],
           "radius_m": None if straight else 1 / k, "arc_deg": rng.uniform(60, 900),
           "straightness": rng.uniform(0.05, 0.99), "mean_speed_mps": rng.uniform(0.08, 0.2),
           "yaw_osc_freq_hz": rng.uniform(0.8, 1.4), "yaw_osc_amp_deg": rng.uniform(2, 15),
           "tracked_fraction": rng.uniform(0.8, 1.0), "fit_rms_m": rng.uniform(0.0005, 0.004),
           "duration_s": 30.0, "trim_start_s": 1.0,
           "verdict": rng.choice(["ok"] * 8 + ["check", "reject"])}
    run["verdict_reasons"] = [] if run["verdict"] == "ok" else ["tracked %d%% of the segment" % rng.randint(40, 80)]
    name = "c%05d_mp4" % i
    d = os.path.join(out, "clips", name)
    os.makedirs(d, exist_ok=True)
    json.dump({"format": "wakeline summary", "format_version": 1, "runs": [run]}, open(os.path.join(d, "summary.json"), "w"))
    json.dump({"clip": "c%05d.mp4" % i, "status": "ok", "error": "",
               "params": {"gain": g, "variant": v, "replicate": str(rep)}}, open(os.path.join(d, "clip.json"), "w"))
json.dump({"x_col": "gain", "group_col": "variant", "body_diameter_m": 0.12, "missing": []},
          open(os.path.join(out, "batch.json"), "w"))
