#!/usr/bin/python3
"""gen_scene.py SEED OUTDIR: one invented test scene (not a real experiment)
for the randomized robustness suite, drawn from numpy's default_rng(SEED)
over the space labs meet (issue 12):

  start delays 0-5 s; tag mounting angle 0-360 deg; 1-5 robots, whose paths
  may pass close to each other; clockwise and counter-clockwise arcs of
  radius 0.15-5 m (log-uniform) and straight runs; yaw oscillation 0-30 deg
  at 0.3-3 Hz; speeds 0.05-0.5 m/s; occlusions up to 2.5 s; 720p-1080p;
  marker plane heights 0-0.35 m; the principal point up to 1% of the width
  off centre; the field of view the lab gives 2% wrong; camera tilt 0-5 deg.

Writes OUTDIR/scene.json (for `wakeline synth`), layout.csv (the floor
markers for `wakeline calibrate`), robots.csv (each robot's plane height as a
lab would measure it, off by up to a few mm, with its tolerance), args.txt
(the field of view given to calibrate) and truth.json (what each robot did).
Each robot's path is drawn again until it stays inside the tank with a
margin for its whole motion, so that no run is cut at the wall.
"""
import json
import math
import os
import sys

import numpy as np

TANK = (3.0, 1.8)      # metres
FPS = 15               # frames per second: keeps clips small; 3 Hz is well under 0.8 Nyquist
BODY_M = 0.16          # disc diameter
TAG_M = 0.12           # tag side: about 36 px at 720p from 2.8 m
PLANE_SD_M = 0.002     # how well the lab measured the plane heights (ROBOTS.csv tolerance)


def path_points(p, t):
    """The path model of docs/synth.md: positions of the path point at times t."""
    V, A, rest, k = p["speed_mps"], p["accel_s"], p["rest_s"], p["curvature_1pm"]
    tau = np.clip(t - rest, 0, None)
    s = np.where(tau <= A, V * tau ** 2 / (2 * A), V * A / 2 + V * (tau - A))
    psi0 = math.radians(p["heading_deg"])
    x0, y0 = p["start_m"]
    if k == 0:
        return x0 + s * math.cos(psi0), y0 + s * math.sin(psi0)
    psi = psi0 + k * s
    return x0 + (np.sin(psi) - math.sin(psi0)) / k, y0 - (np.cos(psi) - math.cos(psi0)) / k


def draw_path(rng, duration):
    """A path that stays inside the tank (margin: a body diameter) until duration."""
    margin = BODY_M
    for _ in range(2000):
        speed = float(rng.uniform(0.05, 0.5))
        if rng.uniform() < 0.2:
            k = 0.0
        else:
            k = float(rng.choice([-1, 1]) / math.exp(rng.uniform(math.log(0.15), math.log(5.0))))
        p = {
            "start_m": [float(rng.uniform(margin, TANK[0] - margin)), float(rng.uniform(margin, TANK[1] - margin))],
            "heading_deg": float(rng.uniform(0, 360)),
            "speed_mps": speed,
            "curvature_1pm": k,
            "rest_s": float(rng.uniform(0, 5)),
            "accel_s": float(rng.uniform(0.3, 1.5)),
            "yaw_osc_deg": float(rng.uniform(0, 30)),
            "yaw_osc_hz": float(rng.uniform(0.3, 3.0)),
            "yaw_osc_phase_deg": float(rng.uniform(0, 360)),
        }
        # at least 4 s of motion after the speed-up, at most what the clip holds
        t = np.arange(0, duration, 1.0 / FPS)
        x, y = path_points(p, t)
        inside = (x >= margin) & (x <= TANK[0] - margin) & (y >= margin) & (y <= TANK[1] - margin)
        if inside.all():
            return p
    return None


def main():
    seed, out = int(sys.argv[1]), sys.argv[2]
    rng = np.random.default_rng(seed)
    os.makedirs(out, exist_ok=True)
    w, h = [(1280, 720), (1600, 900), (1920, 1080)][int(rng.integers(3))]
    hfov = float(rng.uniform(72, 80))
    off = float(rng.uniform(0, 0.01)) * w
    ang = float(rng.uniform(0, 2 * math.pi))
    principal = [(w - 1) / 2 + off * math.cos(ang), (h - 1) / 2 + off * math.sin(ang)]
    # an overhead camera, levelled by eye: tilts of 10 deg and more let the
    # calibration take the focal length from the markers' perspective, which
    # this suite does not cover (see docs/measure.md)
    tilt = float(rng.uniform(0, 5))
    cam_h = 2.8
    n_robots = int(rng.integers(1, 6))
    noise = float(rng.uniform(0, 0.8))  # sensor noise, grey levels (costly to encode: kept low)
    robots, truth = [], []
    # motion of at least 4 s after the longest start delay, about 12 s of clip
    duration = 13.0
    for i in range(n_robots):
        p = None
        while p is None:
            p = draw_path(rng, duration)
        height = float(rng.uniform(0, 0.35))
        occl = []
        if rng.uniform() < 0.4:
            t0 = float(rng.uniform(p["rest_s"] + p["accel_s"], duration - 1))
            occl.append([t0, min(duration, t0 + float(rng.uniform(0.2, 2.5)))])
        robots.append({
            "id": 20 + i,
            "diameter_m": BODY_M,
            "height_m": height,
            "marker": {"type": "tag", "tag_id": 20 + i, "size_m": TAG_M,
                       "offset_deg": float(rng.uniform(0, 360))},
            "path": p,
            "occlusions": occl,
        })
        truth.append({"id": 20 + i, "curvature_1pm": p["curvature_1pm"], "speed_mps": p["speed_mps"],
                      "yaw_osc_deg": p["yaw_osc_deg"], "yaw_osc_hz": p["yaw_osc_hz"],
                      "height_m": height, "rest_s": p["rest_s"], "accel_s": p["accel_s"],
                      "occlusions": occl})
    # floor markers near the corners and the middle of the long sides
    mk = [(0.12, 0.12), (TANK[0] / 2, 0.12), (TANK[0] - 0.12, 0.12),
          (TANK[0] - 0.12, TANK[1] - 0.12), (TANK[0] / 2, TANK[1] - 0.12), (0.12, TANK[1] - 0.12)]
    scene = {
        "description": "Invented test scenario (not a real experiment): robustness suite seed %d." % seed,
        "seed": seed,
        "tank": {"size_m": list(TANK), "wall_m": 0.04},
        "markers": [{"id": i, "center_m": list(c), "size_m": 0.15} for i, c in enumerate(mk)],
        "camera": {"width_px": w, "height_px": h, "hfov_deg": hfov, "principal_px": principal,
                   "position_m": [TANK[0] / 2, TANK[1] / 2 - cam_h * math.tan(math.radians(tilt)), cam_h],
                   "tilt_deg": tilt, "tilt_dir_deg": 90},
        "timing": {"fps": FPS, "duration_s": duration},
        "encoding": {"crf": 25},
        "effects": {"supersample": 2, "noise_sigma": noise},
        "robots": robots,
    }
    json.dump(scene, open(os.path.join(out, "scene.json"), "w"), indent=1)
    with open(os.path.join(out, "layout.csv"), "w") as f:
        f.write("marker_id,x_m,y_m,size_m\n")
        for i, c in enumerate(mk):
            f.write("%d,%.4f,%.4f,0.15\n" % (i, c[0], c[1]))
    with open(os.path.join(out, "robots.csv"), "w") as f:
        f.write("id,plane_height_m,plane_height_tol_m\n")
        for r in robots:
            # the lab's ruler: off by about its tolerance
            f.write("%d,%.4f,%.4f\n" % (r["id"], r["height_m"] + rng.normal(0, PLANE_SD_M), PLANE_SD_M))
    given = hfov * (1 + float(rng.choice([-0.02, 0.02])))
    open(os.path.join(out, "args.txt"), "w").write("--hfov-deg %.4f\n" % given)
    json.dump({"seed": seed, "width_px": w, "height_px": h, "hfov_deg": hfov, "hfov_given_deg": given,
               "principal_px": principal, "tilt_deg": tilt, "robots": truth},
              open(os.path.join(out, "truth.json"), "w"), indent=1)


if __name__ == "__main__":
    main()
