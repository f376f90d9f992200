#!/usr/bin/env bash
# calibrate --points on synthetic views of an invented 2.4 m x 1.2 m tank.
# The camera (2 m up, tilted 20 deg, f 1400 px, 1920x1080) and the
# projections come from Debian's python3-opencv (cv2.projectPoints) in
# lib/calib_scene.py, independent of wakeline's camera model.  Checks:
# camera height within 1 %, tilt within 0.5 deg, CAL.json keys, the
# homography maps the points within 2 mm, and a six-point file with one
# point 40 px off has that point named and left out.  Numbers are written
# with '.' decimals under a decimal-comma locale.
source "$WL_SOURCE_DIR/tests/e2e/lib/harness.sh"
scene() { "$PY" "$WL_SOURCE_DIR/tests/e2e/lib/calib_scene.py" "$@" || fail "calib_scene.py $1 exited $?"; }

scene points pts.csv blank.png --tilt 20 --noise 0.3 --seed 3
check_exit "calibrate --points under LC_ALL=de_DE.UTF-8 succeeds" 0 \
	env LC_ALL=de_DE.UTF-8 "$WAKELINE" calibrate blank.png --points pts.csv --plane-height-m 0.25 -o CAL.json
cp last.out report.txt
check_grep "the view is oblique enough for the focal length" "oblique enough: focal length from the homography" report.txt
check_grep "the report gives the RMS" "RMS 0\.[0-9]* px" report.txt

check_py "CAL.json: keys, height within 1 %, tilt within 0.5 deg, homography within 2 mm" <<'PY'
import json, math
import numpy as np
cal = json.load(open("CAL.json"))
for k in ("image_size_px", "pixels", "homography_px_to_m", "camera_matrix", "distortion",
          "camera_position_m", "plane_height_m", "rms_px", "rms_mm", "intrinsics_source",
          "camera_rotation", "camera_translation_m", "water", "tank_outline_m", "points", "provenance"):
    assert k in cal, k
assert cal["image_size_px"] == [1920, 1080] and cal["pixels"] == "coded"
assert cal["intrinsics_source"] == "homography"
assert cal["plane_height_m"] == 0.25
h = cal["camera_position_m"][2]
R = np.array(cal["camera_rotation"])
tilt = math.degrees(math.acos(-R[2, 2]))
print("height %.4f m, tilt %.3f deg, rms %.3f px" % (h, tilt, cal["rms_px"]))
assert abs(h - 2.0) < 0.02, h          # within 1 %
assert abs(tilt - 20.0) < 0.5, tilt
assert cal["rms_px"] < 0.6
# homography pixels -> metres on the hand-picked points
Hm = np.array(cal["homography_px_to_m"])
worst = 0
for p in cal["points"]:
    q = Hm @ [p["u_px"], p["v_px"], 1]
    worst = max(worst, math.hypot(q[0] / q[2] - p["x_m"], q[1] / q[2] - p["y_m"]))
print("homography: worst %.2f mm" % (1000 * worst))
assert worst < 0.002
# outline: the points' bounding rectangle, counter-clockwise
o = cal["tank_outline_m"]
area = sum(o[i][0] * o[(i + 1) % len(o)][1] - o[(i + 1) % len(o)][0] * o[i][1] for i in range(len(o)))
assert len(o) == 4 and area > 0
assert cal["provenance"]["tool"] == "wakeline" and cal["provenance"]["created_utc"].endswith("Z")
PY
# no decimal commas anywhere in the file
check_no_grep "no decimal commas in CAL.json" -E '[0-9],[0-9]{6}' CAL.json

# six points, one 40 px off: named in the warning and left out
scene points six.csv --grid six --bad 4:40 --noise 0.3 --seed 5
check_exit "calibrate with one bad point of six succeeds" 0 "$WAKELINE" calibrate blank.png --points six.csv -o six.json
cp last.out six.txt
# warnings go to standard error, the quality report to standard output
check_grep "the warning (on standard error) names p4, about 40 px off, left out" \
	"wakeline calibrate: warning: point 'p4' is 4[0-9]\.[0-9] px off the fit of the others: left out" last.err
check_no_grep "no warning on standard output" "warning" six.txt
check "p4 is marked unused, the other five used, height within 1 %" "$PY" -c "
import json; c = json.load(open('six.json'))
used = {p['id']: p['used'] for p in c['points']}
assert used['p4'] is False and sum(used.values()) == 5, used
assert abs(c['camera_position_m'][2] - 2.0) < 0.02
"

# a nadir view does not give the focal length: clear message, no file
scene points nadir.csv --tilt 1
check_exit "a nadir view without intrinsics fails (exit 1)" 1 \
	"$WAKELINE" calibrate blank.png --points nadir.csv -o nadir.json
check_grep "the message suggests --lens LENS.json" -- "--lens LENS.json" last.err
check_grep "the message suggests --hfov-deg" -- "--hfov-deg" last.err
check_no_file "no CAL.json is written for the nadir view" nadir.json
check_exit "the nadir view with --hfov-deg succeeds" 0 \
	"$WAKELINE" calibrate blank.png --points nadir.csv --hfov-deg 68.9 -o nadir.json
check_grep "the report says the focal length is from --hfov-deg" "from --hfov-deg" last.out
done_testing
