#!/usr/bin/env bash
# Lens distortion from the floor markers alone (issue 13), on an invented
# scene rendered by `wakeline synth`: barrel distortion k1 = -0.08 (the
# renderer's OpenCV model), a near-nadir camera 1.6 m over a 2.0 m x 1.2 m
# tank, eight floor markers with their size (40 points), no lens board,
# --camera-height-m.  Checks: a distortion model is chosen by leave-out
# residual and reported; the tank's four corners, projected through the true
# camera by python3-opencv (cv2.projectPoints) and mapped back through
# CAL.json (cv2.undistortPoints and the pose, independent of wakeline), land
# within 2 mm of where they are; without the distortion (--no-distortion)
# they are far off, so the scene does test it.
source "$WL_SOURCE_DIR/tests/e2e/lib/track.bash"
need_synth
cat > scene.json <<'JSON'
{ "description": "invented test scene: barrel lens k1 = -0.08 over a 2.0 m x 1.2 m tank, eight floor markers",
  "seed": 21,
  "tank": { "size_m": [2.0, 1.2] },
  "markers": [
    { "id": 0, "center_m": [0.10, 0.10], "size_m": 0.10 },
    { "id": 1, "center_m": [1.00, 0.12], "size_m": 0.10 },
    { "id": 2, "center_m": [1.90, 0.10], "size_m": 0.10 },
    { "id": 3, "center_m": [1.90, 1.10], "size_m": 0.10, "yaw_deg": 90 },
    { "id": 4, "center_m": [1.00, 1.08], "size_m": 0.10 },
    { "id": 5, "center_m": [0.10, 1.10], "size_m": 0.10 },
    { "id": 6, "center_m": [0.55, 0.60], "size_m": 0.10 },
    { "id": 7, "center_m": [1.45, 0.60], "size_m": 0.10, "yaw_deg": 180 } ],
  "camera": { "width_px": 1280, "height_px": 720, "hfov_deg": 76, "k1": -0.08,
              "position_m": [1.0, 0.6, 1.6], "tilt_deg": 2, "tilt_dir_deg": 60 },
  "timing": { "fps": 10, "duration_s": 0.1 },
  "effects": { "supersample": 2, "noise_sigma": 1.0 } }
JSON
"$WAKELINE" synth scene.json --image frame.png > /dev/null || fail "synth exited $?"
"$WAKELINE" synth scene.json -o clip.mp4 > /dev/null || fail "synth exited $?"
cat > layout.csv <<'CSV'
marker_id,x_m,y_m,z_m,size_m,yaw_rad
0,0.10,0.10,0,0.10,0
1,1.00,0.12,0,0.10,0
2,1.90,0.10,0,0.10,0
3,1.90,1.10,0,0.10,1.5707963267948966
4,1.00,1.08,0,0.10,0
5,0.10,1.10,0,0.10,0
6,0.55,0.60,0,0.10,0
7,1.45,0.60,0,0.10,3.141592653589793
CSV
"$WAKELINE" calibrate frame.png --layout layout.csv --camera-height-m 1.6 -o cal.json > cal.txt || fail "calibrate exited $?"
cat cal.txt
check_grep "every floor marker is found" "markers: 8 of 8" cal.txt
check_grep "k1 is chosen by leave-one-marker-out residual" "distortion: k1," cal.txt
"$WAKELINE" calibrate frame.png --layout layout.csv --camera-height-m 1.6 --no-distortion -o nodist.json -q > /dev/null ||
	fail "calibrate --no-distortion exited $?"
corners() { # CAL.json -> worst corner error in mm
$PY - "$1" clip.scene.json <<'PY'
import json, sys
import cv2, numpy as np
c, s = json.load(open(sys.argv[1])), json.load(open(sys.argv[2]))
cm = s["camera_model"]
K, d = np.array(cm["K"], float).reshape(3, 3), np.array(cm["dist"], float)
R, t = np.array(cm["R"], float).reshape(3, 3), np.array(cm["t_m"], float)
L, W = s["tank"]["size_m"]
X = np.array([[0, 0, 0], [L, 0, 0], [L, W, 0], [0, W, 0]], float)
uv, _ = cv2.projectPoints(X.reshape(-1, 1, 3), cv2.Rodrigues(R)[0], t, K, d)
Kc, dc = np.array(c["camera_matrix"], float), np.array(c["distortion"], float)
Rc, tc = np.array(c["camera_rotation"], float), np.array(c["camera_translation_m"], float)
n = cv2.undistortPoints(uv, Kc, dc).reshape(-1, 2)
C = -Rc.T @ tc
worst = 0
for (x, y), Xt in zip(n, X):
    ray = Rc.T @ np.array([x, y, 1.0])
    P = C + ray * (0 - C[2]) / ray[2]
    worst = max(worst, 1000 * np.hypot(*(P[:2] - Xt[:2])))
print("%.3f" % worst)
PY
}
with=$(corners cal.json); without=$(corners nodist.json)
note "tank corners: worst ${with} mm with the distortion from the markers, ${without} mm without"
check_num "tank corners within 2 mm with the distortion from the markers" "$with" "<=" 2.0
check_num "without it the corners are off by more than 10 times that (the scene tests distortion)" "$without" ">" "$(awk -v w="$with" 'BEGIN { print 10 * w }')"
done_testing
