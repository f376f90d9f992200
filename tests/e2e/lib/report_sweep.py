#!/usr/bin/env python3
"""report_sweep.py: an invented sweep for the report tests, as the clip
folders of a batch (OUT/clips/<name>/), without video: for every clip a
clean.csv of a robot circling (the invented kinematic model below), its
summary.json made by the real `wakeline measure`, and clip.json with the
manifest's parameters.  Then `wakeline merge OUT` builds summary.csv and
report.html.

  report_sweep.py WAKELINE OUT [--replicates 3] [--verdicts] [--seconds 10]

Sweep: gain 0, 0.5, 1, 2 x variant round / fin x replicates.  Curvature
1.2 gain /m for round (counter-clockwise), -1.6 gain /m for fin
(clockwise), each replicate off by a seeded few per cent; gain 0 runs
straight.  Speed 0.15 m/s, heading oscillating 8 deg at 1.1 Hz about the
path, 0.6 mm white position noise, 30 frames/s, the first second trimmed
as the start.  --verdicts writes verdict / verdict_reasons into every run
and an uncertainty budget into the first clip (the names contracts.md
fixes for the measure stage's later version), so that the report's display
of them is tested before that stage exists.
"""
import argparse, json, math, os, random, subprocess, sys

ap = argparse.ArgumentParser()
ap.add_argument("wakeline")
ap.add_argument("out")
ap.add_argument("--replicates", type=int, default=3)
ap.add_argument("--verdicts", action="store_true")
ap.add_argument("--seconds", type=float, default=10)
a = ap.parse_args()

rng = random.Random(16)
os.makedirs(os.path.join(a.out, "clips"), exist_ok=True)
GAINS = ["0", "0.5", "1", "2"]
VARIANTS = [("round", 1.2), ("fin", -1.6)]


def track(path, k, seed, fps=30.0, v=0.15, amp=math.radians(8), f=1.1):
    r = random.Random(seed)
    n = int(a.seconds * fps)
    x, y, h0 = 1.2, 0.7, r.uniform(-math.pi, math.pi)
    rows = []
    for i in range(n):
        t = i / fps
        s = v * t
        th = h0 + k * s  # heading of the mean path
        if abs(k) > 1e-12:
            px = x + (math.sin(th) - math.sin(h0)) / k
            py = y - (math.cos(th) - math.cos(h0)) / k
        else:
            px, py = x + s * math.cos(h0), y + s * math.sin(h0)
        wob = amp * math.sin(2 * math.pi * f * t)
        # lateral sway of a body whose heading oscillates about the path
        sway = -v * amp / (2 * math.pi * f) * math.cos(2 * math.pi * f * t)
        px += -math.sin(th) * sway + r.gauss(0, 0.0006)
        py += math.cos(th) * sway + r.gauss(0, 0.0006)
        hd = th + wob
        yr = v * k + amp * 2 * math.pi * f * math.cos(2 * math.pi * f * t)
        seg, cut = (-1, "start") if t < 1.0 else (0, "")
        st = "filled" if r.random() < 0.03 else "measured"
        rows.append("%.4f,%d,1,%.6f,%.6f,%.6f,%.5f,%.6f,%.5f,%.5f,%d,%s,%s" % (
            t, i, px, py, math.atan2(math.sin(hd), math.cos(hd)), v, yr,
            v * math.cos(th), v * math.sin(th), seg, st, cut))
    with open(path, "w") as fp:
        fp.write("t_s,frame,id,x_m,y_m,heading_rad,speed_mps,yaw_rate_radps,vx_mps,vy_mps,segment,status,cut\n")
        fp.write("\n".join(rows) + "\n")


n = 0
for g in GAINS:
    for vname, kg in VARIANTS:
        for rep in range(1, a.replicates + 1):
            name = "g%s_%s_r%d" % (g.replace(".", "p"), vname, rep)
            d = os.path.join(a.out, "clips", name + "_mp4")
            os.makedirs(d, exist_ok=True)
            k = kg * float(g) * (1 + rng.uniform(-0.04, 0.04))
            track(os.path.join(d, "clean.csv"), k, 1000 + n)
            subprocess.run([a.wakeline, "measure", os.path.join(d, "clean.csv"), "-o",
                            os.path.join(d, "summary.json"), "-q", "--body-diameter-m", "0.12"], check=True)
            if a.verdicts:
                s = json.load(open(os.path.join(d, "summary.json")))
                for run in s["runs"]:
                    if n % 7 == 3:
                        run["verdict"], run["verdict_reasons"] = "check", ["22% of rows rejected as outliers", "camera moved at 4.2 s"]
                    elif n % 11 == 5:
                        run["verdict"], run["verdict_reasons"] = "reject", ["tracked 41% of the segment"]
                    else:
                        run["verdict"], run["verdict_reasons"] = "ok", []
                    if n == 0:
                        se = run["curvature_se_per_m"]
                        run["budget"] = {"curvature_per_m": {"total_se": se * 1.5, "sources": [
                            {"source": "fit", "se": se, "share": 0.44},
                            {"source": "calibration", "se": se * 1.0, "share": 0.44},
                            {"source": "plane_height", "se": se * 0.52, "share": 0.12}]},
                            "mean_speed_mps": {"total_se": 0.0021, "sources": [
                                {"source": "fit", "se": 0.0005, "share": 0.06},
                                {"source": "calibration", "se": 0.002, "share": 0.94}]}}
                json.dump(s, open(os.path.join(d, "summary.json"), "w"), indent=1)
            json.dump({"clip": name + ".mp4", "status": "ok", "error": "",
                       "params": {"gain": g, "variant": vname, "replicate": str(rep)}},
                      open(os.path.join(d, "clip.json"), "w"))
            n += 1
json.dump({"x_col": "gain", "group_col": "variant", "body_diameter_m": 0.12, "missing": []},
          open(os.path.join(a.out, "batch.json"), "w"))
print("report_sweep: %d clip folders in %s" % (n, a.out))
