#!/usr/bin/env bash
# wakeline live in colour mode (RGB frames from the decoder, caps found in
# HSV): an invented synthetic clip of one robot with a red front cap and a
# blue back cap (640x400, 30 fps, 2 s), played with --realtime, gives
# offline `wakeline track`'s rows (status, times, positions within
# 0.1 mm), and its packets carry the heading from the caps.
source "$WL_SOURCE_DIR/tests/e2e/lib/live.bash"
need_synth
cat > caps.json <<'JSON'
{ "description": "invented test scene: one robot with two colour caps, for the live tests",
  "seed": 4,
  "tank": { "size_m": [1.2, 0.8] },
  "camera": { "width_px": 640, "height_px": 400, "hfov_deg": 50, "position_m": [0.6, 0.4, 1.5] },
  "timing": { "fps": 30, "duration_s": 2 },
  "robots": [ { "id": 1, "diameter_m": 0.12, "height_m": 0.05,
                "marker": { "type": "caps" },
                "path": { "start_m": [0.4, 0.4], "heading_deg": 20, "speed_mps": 0.1, "curvature_1pm": 0 } } ] }
JSON
synth caps.json caps.mp4
make_cal caps.scene.json cal.json 0.05
cat > robots.csv <<'CSV'
id,body_diameter_m,front_hsv_lo,front_hsv_hi,back_hsv_lo,back_hsv_hi
1,0.12,"170,120,80","8,255,255","105,120,80","125,255,255"
CSV
"$WAKELINE" track caps.mp4 --cal cal.json -o offline.csv --mode colour --robots robots.csv --quiet ||
	fail "track exited $?"
start_client poses.csv --idle 2
check_exit "live --mode colour succeeds" 0 \
	"$WAKELINE" live caps.mp4 --realtime --max-delay-ms 1000 --max-lag-ms 5000 --cal cal.json --raw live.csv \
	--mode colour --robots robots.csv --publish "udp://127.0.0.1:$JPORT" -q
wait "$CLIENT_PID" || fail "the test client failed"
check "colour mode live gives offline's rows (0.1 mm)" "$PY" "$LIB/live_check.py" offline.csv - --raw-only live.csv --min-rows 60
check_py "the packets carry the caps' heading (within 3 degrees of 20)" <<'PY'
import csv, math
p = [r for r in csv.DictReader(open("poses.csv")) if r["status"] == "ok"]
assert len(p) >= 58, len(p)
err = max(abs(math.remainder(float(r["heading_rad"]) - math.radians(20), 2 * math.pi)) for r in p)
assert err < math.radians(3), math.degrees(err)  # heading from back cap to front cap: 20 degrees
print("colour: %d packets, heading within %.2f degrees of the scene's 20" % (len(p), math.degrees(err)))
PY
done_testing
