"""Writes a CAL.json (the keys src/calib/calfile.c loads, docs/calibrate.md)
from the true camera of a synthetic scene (CLIP.scene.json, camera_model:
K, dist, R, t_m, position_m), so that tracking is measured without
calibration error.  With a rotation, the calibration is expressed in
DISPLAYED pixels of a clip turned by that many degrees counter-clockwise:
the camera is turned about its optical axis so that its pixels are
wl_orient_to_displayed(coded) (src/decode/decode.c).

usage: track_cal.py SCENE.json CAL.json PLANE_HEIGHT_M [ROTATION_DEG]
"""
import json
import sys

import numpy as np

scene = json.load(open(sys.argv[1]))
out, plane = sys.argv[2], float(sys.argv[3])
rot = int(sys.argv[4]) if len(sys.argv) > 4 else 0
cm = scene["camera_model"]
K = np.array(cm["K"], float).reshape(3, 3)
R = np.array(cm["R"], float).reshape(3, 3)
t = np.array(cm["t_m"], float)
dist = list(cm["dist"])
w, h = scene["camera"]["width_px"], scene["camera"]["height_px"]
fx, fy, cx, cy = K[0, 0], K[1, 1], K[0, 2], K[1, 2]
# coded (u, v) -> displayed (ud, vd), as wl_orient_to_displayed:
#  90: ud = v, vd = (w-1) - u;  180: ud = (w-1) - u, vd = (h-1) - v;  270: ud = (h-1) - v, vd = u
if rot == 0:
    Rz, Kd, size = np.eye(3), K, [w, h]
elif rot == 90:
    Rz = np.array([[0, 1, 0], [-1, 0, 0], [0, 0, 1.0]])
    Kd, size = np.array([[fy, 0, cy], [0, fx, (w - 1) - cx], [0, 0, 1]]), [h, w]
elif rot == 180:
    Rz = np.array([[-1, 0, 0], [0, -1, 0], [0, 0, 1.0]])
    Kd, size = np.array([[fx, 0, (w - 1) - cx], [0, fy, (h - 1) - cy], [0, 0, 1]]), [w, h]
elif rot == 270:
    Rz = np.array([[0, -1, 0], [1, 0, 0], [0, 0, 1.0]])
    Kd, size = np.array([[fy, 0, (h - 1) - cy], [0, fx, cx], [0, 0, 1]]), [h, w]
else:
    sys.exit("rotation must be 0, 90, 180 or 270")
if rot and (dist[2] or dist[3]):
    sys.exit("tangential distortion does not survive a turn of the image in this helper")
Rd, td = Rz @ R, Rz @ t
C = -Rd.T @ td
# floor homography pixels -> metres (z = 0): H = (K [r1 r2 t])^-1
Hm = np.linalg.inv(Kd @ np.column_stack([Rd[:, 0], Rd[:, 1], td]))
Hm /= Hm[2, 2]
tank = scene.get("tank", {}).get("size_m", [0, 0])
cal = {
    "format": "wakeline-calibration", "format_version": 1,
    "image_size_px": size, "pixels": "displayed" if rot else "coded", "rotation_deg": rot,
    "homography_px_to_m": Hm.tolist(), "camera_matrix": Kd.tolist(), "distortion": dist,
    "intrinsics_source": "lens", "camera_position_m": C.tolist(), "camera_rotation": Rd.tolist(),
    "camera_translation_m": td.tolist(), "plane_height_m": plane,
    "water": {"depth_m": scene.get("water_depth_m", 0), "index": scene.get("water_index", 1.333)},
    "tank_outline_m": [[0, 0], [tank[0], 0], [tank[0], tank[1]], [0, tank[1]]],
    "provenance": {"source": sys.argv[1]},
}
json.dump(cal, open(out, "w"), indent=1)
