#!/usr/bin/env bash
# The three routes to a camera without a field-of-view guess (issue 13), on
# an invented scene rendered by `wakeline synth`: a near-nadir camera (3 deg)
# 1.6 m over a 2.0 m x 1.2 m tank whose principal point lies 1% of the width
# off the image centre (12.8 px, as a phone's may), eight floor markers, one
# more on a 0.12 m block, a tagged robot circling (radius 0.4 m) with its tag
# (0.06 m) 0.25 m above the floor.  Truth: the renderer's camera and paths.
#  (a) --camera-height-m 1.604 (a tape reading 4 mm off) +- 0.01: camera
#      height within 0.5 %, the circle's radius within 0.1 % (geometric circle
#      fit by scipy, lib/calib_routes.py); the principal point is assumed, and
#      the offset the report states for the 0.25 m plane must cover the true
#      offset of the tracked positions.
#  (b) --refine-with the 10 s run and the tag's printed size: camera height
#      within 0.5 %.
#  (c) the raised marker in the layout: principal point within 2 px, tracked
#      positions on the 0.25 m plane within 0.5 mm RMS of the truth.
#  No route at all: refused, naming the routes that would do.
#  The scene's lens has no distortion: every route must choose the model
#  "none" (seed 13 once made route (b) take k1k2k3 on a 3% leave-out gain
#  where k1 and k1k2 predicted worse than none).
source "$WL_SOURCE_DIR/tests/e2e/lib/track.bash"
need_synth
cat > scene.json <<'JSON'
{ "description": "invented test scene: near-nadir camera, principal point 1% off centre, a marker on a block, one tagged robot circling",
  "seed": 13,
  "tank": { "size_m": [2.0, 1.2] },
  "markers": [
    { "id": 0, "center_m": [0.12, 0.12], "size_m": 0.10 },
    { "id": 1, "center_m": [1.00, 0.16], "size_m": 0.10 },
    { "id": 2, "center_m": [1.88, 0.12], "size_m": 0.10 },
    { "id": 3, "center_m": [1.88, 1.08], "size_m": 0.10, "yaw_deg": 90 },
    { "id": 4, "center_m": [1.00, 1.04], "size_m": 0.10 },
    { "id": 5, "center_m": [0.12, 1.08], "size_m": 0.10 },
    { "id": 6, "center_m": [0.55, 0.60], "size_m": 0.10 },
    { "id": 7, "center_m": [1.45, 0.60], "size_m": 0.10, "yaw_deg": 180 },
    { "id": 8, "center_m": [1.70, 0.32], "size_m": 0.10, "z_m": 0.12 } ],
  "camera": { "width_px": 1280, "height_px": 720, "hfov_deg": 70, "principal_px": [652.3, 359.5],
              "position_m": [1.0, 0.6, 1.6], "tilt_deg": 3, "tilt_dir_deg": 60 },
  "timing": { "fps": 15, "duration_s": 10 },
  "encoding": { "crf": 16 },
  "effects": { "supersample": 2, "noise_sigma": 1.0 },
  "robots": [ { "id": 20, "diameter_m": 0.10, "height_m": 0.25,
                "marker": { "type": "tag", "tag_id": 20, "size_m": 0.06 },
                "path": { "start_m": [1.0, 0.36], "heading_deg": 0, "speed_mps": 0.2, "curvature_1pm": 2.5 } } ] }
JSON
synth scene.json clip.mp4
floor="marker_id,x_m,y_m,z_m,size_m,yaw_rad
0,0.12,0.12,0,0.10,0
1,1.00,0.16,0,0.10,0
2,1.88,0.12,0,0.10,0
3,1.88,1.08,0,0.10,1.5707963267948966
4,1.00,1.04,0,0.10,0
5,0.12,1.08,0,0.10,0
6,0.55,0.60,0,0.10,0
7,1.45,0.60,0,0.10,3.141592653589793"
echo "$floor" > floor.csv
{ echo "$floor"; echo "8,1.70,0.32,0.12,0.10,0"; } > raised.csv
R="$PY $LIB/calib_routes.py"
num() { sed -n "s/.*$1 \([-0-9.e]*\).*/\1/p" "$2" | head -1; }

# no route: refused, naming the routes
check_exit "a near-nadir view without a route is refused (exit 1)" 1 \
	"$WAKELINE" calibrate clip.mp4 --layout floor.csv --plane-height-m 0.25 -o none.json
cp last.err none.err
for w in --camera-height-m z_m --refine-with --lens --hfov-deg; do
	check_grep "the refusal names $w" -F -- "$w" none.err
done
check_no_file "no CAL.json is written on error" none.json

# (a) the measured camera height
"$WAKELINE" calibrate clip.mp4 --layout floor.csv --camera-height-m 1.604 --camera-height-tol-m 0.01 \
	--plane-height-m 0.25 -o a.json > a.txt || fail "calibrate (a) exited $?"
cat a.txt
check_grep "(a): the report names the route" "route: measured camera height" a.txt
"$WAKELINE" track clip.mp4 --cal a.json --ids 20 -o raw_a.csv -q || fail "track (a) exited $?"
$R camera a.json clip.scene.json | tee a.cam
$R offset raw_a.csv clip.truth.csv 20 | tee a.off
$R radius raw_a.csv 20 | tee a.rad
check_py "(a): height within 0.5 %, radius within 0.1 %, the stated offset bound covers the true offset" "$(num height a.cam)" "$(num radius a.rad)" "$(sed -n 's/.*|\([0-9.]*\)|.*/\1/p' a.off)" "$(num offset_mm_per_m a.cam)" <<'PY'
import sys
h, r, off, per_m = map(float, sys.argv[1:])
print("(a) height %.4f m, radius %.5f m, true offset %.2f mm, stated bound %.2f mm" % (h, r, off, per_m * 0.25))
assert abs(h - 1.6) / 1.6 < 0.005, h          # scene truth: 1.6 m
assert abs(r - 0.4) / 0.4 < 0.001, r          # scene truth: curvature 2.5 /m
assert off <= per_m * 0.25, (off, per_m)      # the stated bound covers the true offset
assert off > 0.5                               # and there is an offset to cover (12.8 px x 0.25 / 914)
PY

# (b) the robots' tags over the run
printf 'id,tag_size_m,plane_height_m\n20,0.06,0.25\n' > robots.csv
"$WAKELINE" calibrate clip.mp4 --layout floor.csv --refine-with clip.mp4 --robots robots.csv -q \
	--plane-height-m 0.25 -o b.json > b.txt || fail "calibrate (b) exited $?"
cat b.txt
check_grep "(b): the report gives the camera height from the tags" "camera height from the tags" b.txt
$R camera b.json clip.scene.json | tee b.cam
check "(b): camera height within 0.5 %" "$PY" -c "import sys; h=float(sys.argv[1]); print('(b) height %.4f m' % h); assert abs(h - 1.6) / 1.6 < 0.005" \
	"$(num height b.cam)"

# (c) one marker raised on a block
"$WAKELINE" calibrate clip.mp4 --layout raised.csv --plane-height-m 0.25 -o c.json > c.txt || fail "calibrate (c) exited $?"
cat c.txt
check_grep "(c): the report names the route" "route: raised markers" c.txt
"$WAKELINE" track clip.mp4 --cal c.json --ids 20 -o raw_c.csv -q || fail "track (c) exited $?"
$R camera c.json clip.scene.json | tee c.cam
$R offset raw_c.csv clip.truth.csv 20 | tee c.off
check_py "(c): principal point within 2 px, positions on the 0.25 m plane within 0.5 mm RMS" "$(sed -n 's/.*principal point error \([-0-9.]*\) \([-0-9.]*\).*/\1 \2/p' c.cam)" "$(num rms c.off)" <<'PY'
import sys
ex, ey = map(float, sys.argv[1].split()); rms = float(sys.argv[2])
print("(c) principal point error %.2f, %.2f px; position RMS %.3f mm" % (ex, ey, rms))
assert abs(ex) <= 2 and abs(ey) <= 2
assert rms <= 0.5
PY
check_py "every route chooses no distortion for the distortion-free lens" a.json b.json c.json <<'PY'
import json, sys
for f in sys.argv[1:]:
    m = json.load(open(f))["distortion_model"]
    print("%s: distortion model %s" % (f, m))
    assert m == "none", (f, m)     # the scene's truth: no distortion
PY
check_py "CAL.json carries route, covariance and tolerances" c.json <<'PY'
import json, sys
c = json.load(open(sys.argv[1]))
assert c["route"] == "raised_markers" and c["principal_point_assumed"] is False
p = c["covariance"]["parameters"]; m = c["covariance"]["matrix"]
assert "cx_px" in p and "f_px" in p and len(m) == len(p)
for k in ("plane_height_m", "water_depth_m", "camera_height_m"):
    assert k in c["tolerances"], k
PY
done_testing
