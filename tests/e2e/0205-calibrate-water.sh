#!/usr/bin/env bash
# calibrate --water-depth-m: floor points under 0.30 m of still water, seen
# by a camera 2 m above the floor (tilt 20 deg).  The refracted projections
# are made by lib/calib_scene.py with Snell's law solved by scipy's brentq
# and cv2.projectPoints (independent of wakeline's water model).  The camera
# height comes out within 1 % only with the water depth given.
source "$WL_SOURCE_DIR/tests/e2e/lib/harness.sh"
"$PY" "$WL_SOURCE_DIR/tests/e2e/lib/calib_scene.py" points water.csv blank.png --tilt 20 \
	--noise 0.2 --seed 9 --grid 6x4 --water 0.30
check_exit "calibrate --water-depth-m 0.30 succeeds" 0 \
	"$WAKELINE" calibrate blank.png --points water.csv --water-depth-m 0.30 -o wet.json
cp last.out wet.txt
check_grep "the report gives the water depth and index" "water: floor under 0.300 m, index 1.3330" wet.txt
"$WAKELINE" calibrate blank.png --points water.csv -o dry.json > dry.txt 2>&1 || true
note "without --water-depth-m: $(grep -m1 -i 'height\|error' dry.txt || true)"
check_py "height within 1 % with the water model, off by more without it" <<'PY'
import json, os
wet = json.load(open("wet.json"))
hw = wet["camera_position_m"][2]
print("with the water model: height %.4f m, rms %.3f px" % (hw, wet["rms_px"]))
assert abs(hw - 2.0) < 0.02, hw
assert wet["water"]["depth_m"] == 0.30 and wet["water"]["index"] == 1.333
assert wet["rms_px"] < 0.5
if os.path.exists("dry.json"):
    hd = json.load(open("dry.json"))["camera_position_m"][2]
    print("without: height %.4f m" % hd)
    assert abs(hd - 2.0) > 0.02, hd
else:
    print("without: refused (no dry.json)")
PY
done_testing
