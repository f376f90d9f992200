#!/usr/bin/env bash
# calibrate --layout on a rendered scene: eight tag36h11 markers (drawn by
# `wakeline markers`, placed on the floor of an invented 2.4 m x 1.2 m tank
# by lib/calib_scene.py with python3-opencv's warpPerspective, some turned
# by 90 and 180 deg), camera 2 m up, tilted 20 deg.  Checks camera height
# within 1 %, tilt within 0.5 deg and RMS below 1 px from a photo and from a
# short H.264 clip (through the decoder), and the marker sheet's scale.
set -euo pipefail
: "${WAKELINE:?}" "${WL_SOURCE_DIR:?}" "${WL_TEST_TMP:?}"
rm -rf "$WL_TEST_TMP"; mkdir -p "$WL_TEST_TMP/tags"; cd "$WL_TEST_TMP"
layout="$WL_SOURCE_DIR/calib/example-layout.csv"
for i in 0 1 2 3 4 5 6 7; do
  "$WAKELINE" markers --ids $i --size-mm 100 --dpi 127 -o tags/tag$i.png > /dev/null
done
# the sheet is at scale: at 127 dpi (5 px/mm) the black square is 500 px
/usr/bin/python3 - <<'PY'
import cv2, numpy as np
im = cv2.imread("tags/tag3.png", cv2.IMREAD_GRAYSCALE)
n, lab, st, _ = cv2.connectedComponentsWithStats((im < 128).astype(np.uint8), connectivity=4)
k = 1 + int(np.argmax(st[1:, cv2.CC_STAT_AREA]))
w, h = st[k, cv2.CC_STAT_WIDTH], st[k, cv2.CC_STAT_HEIGHT]
print("black square %d x %d px at 5 px/mm" % (w, h))
assert abs(w - 500) <= 1 and abs(h - 500) <= 1, (w, h)
PY
/usr/bin/python3 "$WL_SOURCE_DIR/tests/e2e/lib/calib_scene.py" tags "$layout" scene.png --tagdir tags --tilt 20

check() { # CAL.json report
  cat "$2"
  grep -q "markers: 8 of 8 found" "$2"
  /usr/bin/python3 - "$1" <<'PY'
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
"$WAKELINE" calibrate scene.png --layout "$layout" -o photo.json > photo.txt
check photo.json photo.txt
ffmpeg -v error -y -loop 1 -i scene.png -t 1 -r 10 -pix_fmt yuv420p -c:v libx264 -crf 12 clip.mp4
"$WAKELINE" calibrate clip.mp4 --layout "$layout" --span 1 -o clip.json > clip.txt
check clip.json clip.txt
grep -q "in 10 frames" clip.txt

# a camera that moves (stabilisation, a bumped tripod): half the clip shifted by 4 px
/usr/bin/python3 -c "
import cv2, numpy as np
im = cv2.imread('scene.png', cv2.IMREAD_GRAYSCALE)
cv2.imwrite('shifted.png', np.roll(im, 4, axis=1))"
ffmpeg -v error -y -loop 1 -t 0.5 -r 10 -i scene.png -loop 1 -t 0.5 -r 10 -i shifted.png \
  -filter_complex "[0:v][1:v]concat=n=2:v=1[v]" -map "[v]" -pix_fmt yuv420p -c:v libx264 -crf 12 moving.mp4
"$WAKELINE" calibrate moving.mp4 --layout "$layout" --span 1 -o moving.json > moving.txt 2> moving.err
grep "moves by up to" moving.err | head -2
# warnings go to standard error, the quality report to standard output
grep -q "wakeline calibrate: warning: marker [0-9]* moves by up to [2-5]\.[0-9] px between frames" moving.err
if grep -q "warning" moving.txt; then echo "a warning went to standard output"; exit 1; fi
echo "0204-calibrate-markers: ok"
