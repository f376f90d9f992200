#!/usr/bin/env bash
# Lens calibration on real photographs: OpenCV's own 13 chessboard photos
# (Debian opencv-doc 4.6.0, tests/data/opencv-left, see tests/data/README.md).
# Checks: RMS within 0.01 px of 0.196334638 and fx, fy, cx, cy within 1 px of
# the values OpenCV's modules/python/test/test_calibration.py expects
# (tests/data/references.md, "Lens calibration on real photographs");
# distortion compared through undistorted point positions against Debian's
# python3-opencv calibrating the same photos.
source "$WL_SOURCE_DIR/tests/e2e/lib/harness.sh"
photos=$WL_SOURCE_DIR/tests/data/opencv-left
check_exit "lens on the 13 photos succeeds" 0 \
	"$WAKELINE" lens "$photos" --board 9x6 --square-mm 25 --subpix-win 5 -q -o LENS.json
cp last.out report.txt
check_grep "all 13 views are used" "views used 13 of 13" report.txt

check_py "RMS, fx, fy, cx, cy agree with OpenCV's test_calibration.py" LENS.json <<'PY'
import json, sys
lens = json.load(open(sys.argv[1]))
K = lens["camera_matrix"]
rms = lens["rms_px"]
# OpenCV's test_calibration.py (tests/data/references.md): RMS 0.196334638,
# fx, fy = 532.80992, 532.93346, cx, cy = 342.49522, 233.88793
ref = dict(rms=0.196334638, fx=532.80992, fy=532.93346, cx=342.49522, cy=233.88793)
got = dict(rms=rms, fx=K[0][0], fy=K[1][1], cx=K[0][2], cy=K[1][2])
print("wakeline:", got)
assert abs(got["rms"] - ref["rms"]) < 0.01, got["rms"]
for k in ("fx", "fy", "cx", "cy"):
    assert abs(got[k] - ref[k]) < 1.0, (k, got[k], ref[k])
assert lens["image_size_px"] == [640, 480]
PY
if ! "$PY" -c "import cv2, numpy" 2> /dev/null; then
	skip_check "undistorted positions agree with python3-opencv's calibration" \
		"python3-opencv is not installed (scripts/setup installs it)"
else
	check_py "undistorted positions agree with python3-opencv's calibration (within 0.05 px)" \
		LENS.json "$photos" <<'PY'
import glob, json, sys
import cv2, numpy as np
lens = json.load(open(sys.argv[1]))
K = lens["camera_matrix"]
# the same calibration in Debian's python3-opencv (same settings)
objp = np.zeros((54, 3), np.float32); objp[:, :2] = np.mgrid[0:9, 0:6].T.reshape(-1, 2) * 0.025
op, ip = [], []
for f in sorted(glob.glob(sys.argv[2] + "/*.jpg")):
    g = cv2.imread(f, 0)
    ok, c = cv2.findChessboardCorners(g, (9, 6))
    assert ok, f
    c = cv2.cornerSubPix(g, c, (5, 5), (-1, -1), (cv2.TERM_CRITERIA_EPS + cv2.TERM_CRITERIA_COUNT, 30, 0.1))
    op.append(objp); ip.append(c)
assert len(op) == 13, len(op)
r2, K2, d2, _, _ = cv2.calibrateCamera(op, ip, (640, 480), None, None, flags=0)
print("python3-opencv: rms %.6f" % r2)
Km = np.array(K, float); dm = np.array(lens["distortion"], float)
# undistorted positions of a grid over the central 80% of the image
u, v = np.meshgrid(np.linspace(64, 576, 9), np.linspace(48, 432, 7))
pts = np.stack([u.ravel(), v.ravel()], 1).reshape(-1, 1, 2).astype(np.float64)
a = cv2.undistortPoints(pts, Km, dm, P=Km).reshape(-1, 2)
b = cv2.undistortPoints(pts, K2, d2, P=K2).reshape(-1, 2)
err = np.hypot(*(a - b).T)
print("undistorted positions: max difference %.4f px" % err.max())
assert err.max() < 0.05, err.max()
PY
fi

# the same photos as a 2 fps H.264 clip, through the decoder
ffmpeg -v error -y -framerate 2 -pattern_type glob -i "$photos/*.jpg" \
	-pix_fmt yuv420p -c:v libx264 -crf 10 left.mp4
check_exit "lens on the photos as an H.264 clip succeeds" 0 \
	"$WAKELINE" lens left.mp4 --board 9x6 --square-mm 25 -q -o clip.json
cp last.out clip.txt
check_grep "clip: all 13 views are used" "views used 13 of 13" clip.txt
check_py "clip: fx, fy, cx, cy within 1 px of OpenCV's values" clip.json <<'PY'
import json, sys
K = json.load(open(sys.argv[1]))["camera_matrix"]
# tests/data/references.md values again; compression moves corners slightly, 1 px still holds
for got, ref in ((K[0][0], 532.80992), (K[1][1], 532.93346), (K[0][2], 342.49522), (K[1][2], 233.88793)):
    print("%.5f vs %.5f" % (got, ref))
    assert abs(got - ref) < 1.0, (got, ref)
PY

# the wrong board size finds no board: a clear error, no file
check_exit "the wrong board size fails (exit 1)" 1 \
	"$WAKELINE" lens "$photos" --board 8x5 --square-mm 25 -q -o bad.json
check_grep "the error says no view has the 8x5 board" -F \
	"0 usable views of the 8x5 board (13 without the board" last.err
check_no_file "no LENS.json is written on failure" bad.json
done_testing
