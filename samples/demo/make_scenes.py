#!/usr/bin/env python3
"""Writes the demo sweep's scene files (samples/demo/*.json) and manifest.

INVENTED SCENARIO, not a real experiment: a small floating test craft (a
0.14 m disc carrying AprilTag 10 on a mast-top plate 0.08 m above the tank
floor's marker plane) is driven at constant thrust while a ballast mass is
moved sideways from clip to clip.  The offset ballast makes the craft turn:
in this made-up craft the curvature is proportional to the offset, with a
gain that differs between two hull variants.  The drive makes the hull yaw
at 1 Hz.  One further clip films the floor markers alone, for calibration.

Run it again after changing a parameter: python3 samples/demo/make_scenes.py
"""
import json
import math
import os

HERE = os.path.dirname(os.path.abspath(__file__))
TANK = [2.4, 1.6]
MARKERS = [  # floor markers, tag36h11 ids 0-7, 0.12 m
    (0, 0.25, 0.25), (1, 1.20, 0.20), (2, 2.15, 0.25), (3, 2.20, 0.80),
    (4, 2.15, 1.35), (5, 1.20, 1.40), (6, 0.25, 1.35), (7, 0.20, 0.80),
]
CAMERA = {"width_px": 1280, "height_px": 720, "hfov_deg": 80,
          "position_m": [1.2, 0.2, 2.0], "tilt_deg": 15, "tilt_dir_deg": 90}
GAIN_PER_M_PER_MM = {"A": 0.08, "B": 0.05}  # curvature per mm of ballast offset
RUNS = [("A", -20), ("A", 0), ("A", 20), ("B", -15), ("B", 15)]
SPEED = 0.09
DURATION = 16.0


def scene(description, seed, robots, duration):
    return {
        "description": description,
        "seed": seed,
        "tank": {"size_m": TANK, "wall_m": 0.04},
        "markers": [{"id": i, "center_m": [x, y], "size_m": 0.12} for i, x, y in MARKERS],
        "camera": CAMERA,
        "timing": {"fps": 30, "duration_s": duration, "jitter": 0.2},
        "encoding": {"crf": 20, "b_frames": 2},
        "effects": {"supersample": 2, "noise_sigma": 2.0},
        "robots": robots,
    }


def start_for(curvature):
    """Start so that the circle (or line) stays inside the tank."""
    if curvature == 0:
        return [0.45, 0.80], 0.0
    # heading 0 (+x): a counter-clockwise run starts low and curls up, a
    # clockwise one starts high and curls down; at this speed and duration
    # every arc here stays at least 0.3 m from the walls
    return ([0.6, 0.35], 0.0) if curvature > 0 else ([0.6, 1.25], 0.0)


def main():
    rows = ["clip,variant,ballast_mm,drive_period_s,true_curvature_per_m"]
    cal = scene("Invented demo scenario: the floor markers alone, for calibration.", 100, [], 3.0)
    with open(os.path.join(HERE, "calibration.json"), "w") as f:
        json.dump(cal, f, indent=2)
        f.write("\n")
    for k, (variant, ballast) in enumerate(RUNS, 1):
        kappa = round(GAIN_PER_M_PER_MM[variant] * ballast, 6)
        start, heading = start_for(kappa)
        robot = {
            "id": 10, "diameter_m": 0.14, "height_m": 0.08,
            "marker": {"type": "tag", "tag_id": 10, "size_m": 0.08},
            "path": {"start_m": start, "heading_deg": heading, "speed_mps": SPEED,
                     "curvature_1pm": kappa, "rest_s": 1.0, "accel_s": 1.5,
                     "yaw_osc_deg": 12, "yaw_osc_hz": 1.0},
        }
        desc = ("Invented demo scenario: floating test craft, hull variant %s, ballast offset %+d mm "
                "(made-up curvature %.3f 1/m)." % (variant, ballast, kappa))
        name = "run-%02d" % k
        with open(os.path.join(HERE, name + ".json"), "w") as f:
            json.dump(scene(desc, k, [robot], DURATION), f, indent=2)
            f.write("\n")
        rows.append("%s.mp4,%s,%d,1.0,%s" % (name, variant, ballast, repr(kappa)))
    with open(os.path.join(HERE, "manifest.csv"), "w") as f:
        f.write("\n".join(rows) + "\n")
    with open(os.path.join(HERE, "layout.csv"), "w") as f:
        f.write("marker_id,x_m,y_m,size_m,yaw_rad\n")
        for i, x, y in MARKERS:
            f.write("%d,%.2f,%.2f,0.12,0\n" % (i, x, y))


if __name__ == "__main__":
    main()
