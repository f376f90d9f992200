#!/usr/bin/python3
"""Figures for the calibration-route tests (tests/e2e/0206-calibrate-routes.sh):
compares RAW.csv positions with the renderer's truth and a CAL.json with the
scene's true camera (CLIP.scene.json, camera_model).

  calib_routes.py offset RAW.csv TRUTH.csv ID      mean offset and RMS error (mm)
  calib_routes.py radius RAW.csv ID                radius of the least-squares circle (m)
  calib_routes.py camera CAL.json SCENE.json       height, focal length, principal point errors

The circle is the geometric (orthogonal distance) fit by scipy.optimize.least_squares
from the Kasa start (Gander, Golub & Strebel 1994), a reference independent of wakeline.
"""
import csv, json, math, sys

import numpy as np


def rows(path, i):
    return {int(r["frame"]): r for r in csv.DictReader(open(path)) if r["id"] == str(i) and r["status"] == "ok"}


def offset(raw, truth, i):
    r, t = rows(raw, i), {int(x["frame"]): x for x in csv.DictReader(open(truth)) if x["id"] == str(i)}
    d = np.array([[float(r[f]["x_m"]) - float(t[f]["x_m"]), float(r[f]["y_m"]) - float(t[f]["y_m"])] for f in r])
    m = d.mean(0)
    print("offset %.3f %.3f mm |%.3f| mm rms %.3f mm n %d" % (m[0] * 1e3, m[1] * 1e3, np.hypot(*m) * 1e3,
                                                           np.sqrt((d ** 2).sum(1).mean()) * 1e3, len(d)))


def radius(raw, i):
    from scipy.optimize import least_squares
    r = rows(raw, i)
    p = np.array([[float(x["x_m"]), float(x["y_m"])] for x in r.values()])
    A = np.c_[2 * p, np.ones(len(p))]
    c = np.linalg.lstsq(A, (p ** 2).sum(1), rcond=None)[0]
    x0 = [c[0], c[1], math.sqrt(c[2] + c[0] ** 2 + c[1] ** 2)]
    f = least_squares(lambda q: np.hypot(p[:, 0] - q[0], p[:, 1] - q[1]) - q[2], x0, xtol=1e-14, ftol=1e-14)
    print("radius %.6f m" % f.x[2])


def camera(cal, scene):
    c, s = json.load(open(cal)), json.load(open(scene))
    K, Kt = np.array(c["camera_matrix"]), np.array(s["camera_model"]["K"]).reshape(3, 3)
    h, ht = c["camera_position_m"][2], s["camera_model"]["position_m"][2]
    print("height %.5f m (true %.5f, %.3f%%) f %.2f px (true %.2f) principal point error %.3f %.3f px "
          "offset_mm_per_m %s" % (h, ht, 100 * (h - ht) / ht, K[0, 0], Kt[0, 0], K[0, 2] - Kt[0, 2],
                                  K[1, 2] - Kt[1, 2], c.get("principal_offset_mm_per_m")))


if __name__ == "__main__":
    m = sys.argv[1]
    if m == "offset":
        offset(sys.argv[2], sys.argv[3], sys.argv[4])
    elif m == "radius":
        radius(sys.argv[2], sys.argv[3])
    elif m == "camera":
        camera(sys.argv[2], sys.argv[3])
