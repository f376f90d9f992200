#!/usr/bin/env bash
# Lens calibration on a second set of real photographs: the right camera of
# OpenCV's stereo pair, 13 chessboard photos (Debian opencv-doc 4.6.0,
# tests/data/opencv-right, see tests/data/README.md), against the calibration
# OpenCV ships with them (examples/data/intrinsics.yml, M2: fx = fy =
# 534.80327, written by its stereo_calib sample; tests/data/references.md,
# "Lens calibration on real photographs").  That file is a joint fit of both
# cameras with one focal length and a fixed aspect ratio, so only the focal
# length is compared with it (within 0.5 %); its principal point and
# distortion are not comparable with a single camera's fit (7 px apart).
# The boards fill only the left two thirds of these photos (61 % coverage):
# the simpler model is chosen (k1 k2, no k3, no tangential terms).  Then the
# whole calibration against Debian's python3-opencv calibrating the same
# photos alone with the model wakeline chose: focal lengths within 0.05 %,
# principal point within 0.5 px.
source "$WL_SOURCE_DIR/tests/e2e/lib/harness.sh"
photos=$WL_SOURCE_DIR/tests/data/opencv-right
check_exit "lens on the 13 right-camera photos succeeds" 0 \
	"$WAKELINE" lens "$photos" --board 9x6 --square-mm 25 --subpix-win 5 -q -o LENS.json
cp last.out report.txt
cat report.txt
check_grep "all 13 views are used" "views used 13 of 13" report.txt

check_py "focal length within 0.5 % of OpenCV's shipped calibration; the simpler model" LENS.json <<'PY'
import json, sys
lens = json.load(open(sys.argv[1]))
K = lens["camera_matrix"]
# tests/data/references.md: opencv-doc examples/data/intrinsics.yml, M2
ref = 534.80326845051309
fx, fy = K[0][0], K[1][1]
cov, model = lens["views"]["coverage"], lens["distortion_model"]
print("fx %.3f (%+.3f %%), fy %.3f (%+.3f %%) against %.3f; coverage %.0f %%, model %s"
      % (fx, 100 * (fx - ref) / ref, fy, 100 * (fy - ref) / ref, ref, 100 * cov, model))
assert abs(fx - ref) / ref < 0.005, fx
assert abs(fy - ref) / ref < 0.005, fy
assert cov < 0.7, cov
assert model == "k1k2", model                # no k3, no tangential terms
assert lens["distortion"][2:] == [0, 0, 0], lens["distortion"]
assert lens["image_size_px"] == [640, 480]
PY

if ! "$PY" -c "import cv2, numpy" 2> /dev/null; then
	skip_check "the whole calibration agrees with python3-opencv's" \
		"python3-opencv is not installed (scripts/setup installs it)"
else
	check_py "the whole calibration agrees with python3-opencv's (fx, fy 0.05 %, cx, cy 0.5 px)" \
		LENS.json "$photos" <<'PY'
import glob, json, sys
import cv2, numpy as np
lens = json.load(open(sys.argv[1]))
K = np.array(lens["camera_matrix"], float)
objp = np.zeros((54, 3), np.float32); objp[:, :2] = np.mgrid[0:9, 0:6].T.reshape(-1, 2) * 0.025
op, ip = [], []
for f in sorted(glob.glob(sys.argv[2] + "/*.jpg")):
    g = cv2.imread(f, 0)
    ok, c = cv2.findChessboardCorners(g, (9, 6))
    assert ok, f
    c = cv2.cornerSubPix(g, c, (5, 5), (-1, -1), (cv2.TERM_CRITERIA_EPS + cv2.TERM_CRITERIA_COUNT, 30, 0.1))
    op.append(objp); ip.append(c)
assert len(op) == 13, len(op)
# the model wakeline chose: k1 k2 (no tangential terms, k3 fixed at 0)
r2, K2, d2, _, _ = cv2.calibrateCamera(op, ip, (640, 480), None, None,
                                       flags=cv2.CALIB_ZERO_TANGENT_DIST | cv2.CALIB_FIX_K3)
print("python3-opencv: rms %.4f fx %.3f fy %.3f cx %.3f cy %.3f k1 %.4f k2 %.4f"
      % (r2, K2[0, 0], K2[1, 1], K2[0, 2], K2[1, 2], d2.ravel()[0], d2.ravel()[1]))
print("wakeline:       rms %.4f fx %.3f fy %.3f cx %.3f cy %.3f k1 %.4f k2 %.4f"
      % (lens["rms_px"], K[0, 0], K[1, 1], K[0, 2], K[1, 2], lens["distortion"][0], lens["distortion"][1]))
for a, b in ((K[0, 0], K2[0, 0]), (K[1, 1], K2[1, 1])):
    assert abs(a - b) / b < 0.0005, (a, b)
for a, b in ((K[0, 2], K2[0, 2]), (K[1, 2], K2[1, 2])):
    assert abs(a - b) < 0.5, (a, b)
assert abs(lens["rms_px"] - r2) < 0.01
PY
fi
done_testing
