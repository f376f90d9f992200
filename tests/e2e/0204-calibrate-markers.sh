#!/usr/bin/env bash
# calibrate --layout on a rendered scene: eight tag36h11 markers (drawn by
# `wakeline markers`, placed on the floor of an invented 2.4 m x 1.2 m tank
# by lib/calib_scene.py with python3-opencv's warpPerspective, some turned
# by 90 and 180 deg), camera 2 m up, tilted 20 deg.  Checks camera height
# within 1 %, tilt within 0.5 deg and RMS below 1 px from a photo and from a
# short H.264 clip (through the decoder), and the marker sheet's scale.
source "$WL_SOURCE_DIR/tests/e2e/lib/harness.sh"
mkdir tags
layout="$WL_SOURCE_DIR/calib/example-layout.csv"
for i in 0 1 2 3 4 5 6 7; do
	"$WAKELINE" markers --ids $i --size-mm 100 --dpi 127 -o tags/tag$i.png > /dev/null || fail "markers $i exited $?"
done
# the sheet is at scale: at 127 dpi (5 px/mm) the black square is 500 px
check_py "the marker sheet is at scale: a 500 px black square at 5 px/mm" <<'PY'
import cv2, numpy as np
im = cv2.imread("tags/tag3.png", cv2.IMREAD_GRAYSCALE)
n, lab, st, _ = cv2.connectedComponentsWithStats((im < 128).astype(np.uint8), connectivity=4)
k = 1 + int(np.argmax(st[1:, cv2.CC_STAT_AREA]))
w, h = st[k, cv2.CC_STAT_WIDTH], st[k, cv2.CC_STAT_HEIGHT]
print("black square %d x %d px at 5 px/mm" % (w, h))
assert abs(w - 500) <= 1 and abs(h - 500) <= 1, (w, h)
PY
"$PY" "$WL_SOURCE_DIR/tests/e2e/lib/calib_scene.py" tags "$layout" scene.png --tagdir tags --tilt 20

# check_cal WHAT CAL.json REPORT: all markers found, height, tilt, RMS
check_cal() {
	check_grep "$1: markers: 8 of 8 found" "markers: 8 of 8 found" "$3"
	check_py "$1: height within 1 %, tilt within 0.5 deg, RMS below 1 px, 40 points" "$2" <<'PY'
import json, math, sys
import numpy as np
c = json.load(open(sys.argv[1]))
h = c["camera_position_m"][2]
tilt = math.degrees(math.acos(-np.array(c["camera_rotation"])[2, 2]))
print("height %.4f m tilt %.3f deg rms %.3f px %.2f mm" % (h, tilt, c["rms_px"], c["rms_mm"]))
assert abs(h - 2.0) < 0.02 and abs(tilt - 20) < 0.5 and c["rms_px"] < 1.0
assert len(c["points"]) == 40  # centre + 4 corners per marker
PY
}
check_exit "calibrate --layout on the photo succeeds" 0 "$WAKELINE" calibrate scene.png --layout "$layout" -o photo.json
cp last.out photo.txt
check_cal photo photo.json photo.txt
ffmpeg -v error -y -loop 1 -i scene.png -t 1 -r 10 -pix_fmt yuv420p -c:v libx264 -crf 12 clip.mp4
check_exit "calibrate --layout on a 1 s clip succeeds" 0 \
	"$WAKELINE" calibrate clip.mp4 --layout "$layout" --span 1 -o clip.json
cp last.out clip.txt
check_cal clip clip.json clip.txt
check_grep "clip: the markers are taken from 10 frames" "in 10 frames" clip.txt

# a camera that moves (stabilisation, a bumped tripod): half the clip shifted by 4 px
"$PY" -c "
import cv2, numpy as np
im = cv2.imread('scene.png', cv2.IMREAD_GRAYSCALE)
cv2.imwrite('shifted.png', np.roll(im, 4, axis=1))"
ffmpeg -v error -y -loop 1 -t 0.5 -r 10 -i scene.png -loop 1 -t 0.5 -r 10 -i shifted.png \
  -filter_complex "[0:v][1:v]concat=n=2:v=1[v]" -map "[v]" -pix_fmt yuv420p -c:v libx264 -crf 12 moving.mp4
check_exit "calibrate on a clip whose camera moves succeeds" 0 \
	"$WAKELINE" calibrate moving.mp4 --layout "$layout" --span 1 -o moving.json
cp last.out moving.txt
# warnings go to standard error, the quality report to standard output
check_grep "a warning (on standard error) says a marker moves by 2 to 5 px between frames" \
	"wakeline calibrate: warning: marker [0-9]* moves by up to [2-5]\.[0-9] px between frames" last.err
check_no_grep "no warning on standard output" "warning" moving.txt

# a robot wearing a floor marker's tag id (3) crosses the view: the
# warning says so, not only "the camera moves"
"$PY" - <<'PY'
import cv2, numpy as np
im = cv2.imread('scene.png', cv2.IMREAD_GRAYSCALE)
tag = cv2.resize(cv2.imread('tags/tag3.png', cv2.IMREAD_GRAYSCALE), (90, 90), interpolation=cv2.INTER_AREA)
h, w = im.shape
for k in range(10):
    f = im.copy()
    x, y = 200 + 60 * k, h // 2 - 45
    f[y:y + 90, x:x + 90] = tag
    cv2.imwrite('robot%02d.png' % k, f)
PY
ffmpeg -v error -y -framerate 10 -i robot%02d.png -pix_fmt yuv420p -c:v libx264 -crf 12 robot.mp4
"$WAKELINE" calibrate robot.mp4 --layout "$layout" --span 1 -o robot.json > robot.txt 2> robot.err || true
check_grep "a robot wearing marker 3's tag id is named as a likely cause" \
	"marker 3 is seen up to .* px from its usual place: a robot may wear the same tag id" robot.err
done_testing
