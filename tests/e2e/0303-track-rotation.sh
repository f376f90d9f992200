#!/usr/bin/env bash
# track: a clip with rotation metadata (90 degrees) tracked with a
# calibration in displayed pixels gives the same tank positions as the same
# clip without metadata tracked with a calibration in coded pixels.
source "$WL_SOURCE_DIR/tests/e2e/lib/track.bash"
need_synth
for rot in 0 90; do
	cat > scene$rot.json <<JSON
{ "description": "invented test scene: one tagged robot, display rotation $rot",
  "seed": 11,
  "tank": { "size_m": [2.4, 1.4] },
  "camera": { "width_px": 1280, "height_px": 720, "hfov_deg": 64, "position_m": [1.2, 0.7, 2.0] },
  "timing": { "fps": 30, "duration_s": 2 },
  "encoding": { "bit_rate_bps": 6000000, "rotation_deg": $rot },
  "robots": [ { "id": 4, "diameter_m": 0.12, "height_m": 0.2,
                "marker": { "type": "tag", "tag_id": 4, "size_m": 0.06 },
                "path": { "start_m": [1.0, 0.5], "heading_deg": 30, "speed_mps": 0.3, "curvature_1pm": 2 } } ] }
JSON
	synth scene$rot.json clip$rot.mp4
done
make_cal clip0.scene.json cal0.json 0.2
make_cal clip90.scene.json cal90.json 0.2 90
check_exit "track (no rotation) succeeds" 0 "$WAKELINE" track clip0.mp4 --cal cal0.json -o raw0.csv --quiet
check_exit "track (rotation 90) succeeds" 0 "$WAKELINE" track clip90.mp4 --cal cal90.json -o raw90.csv --quiet
# a displayed calibration of the turned clip does not fit the unturned one
check_exit "a displayed calibration of a turned clip is refused for an unturned one (exit 1)" 1 \
	"$WAKELINE" track clip0.mp4 --cal cal90.json -o bad.csv --quiet
check_grep "the error names the calibration" 'cal90.json' last.err
check_no_file "no bad.csv is left behind" bad.csv
compare raw90.csv clip90.truth.csv --pos-mm 2 --ok 0.99
check_py "positions are the same with and without rotation metadata (within 1e-6 m)" <<'PYEOF'
import csv
a = list(csv.DictReader(open("raw0.csv"))); b = list(csv.DictReader(open("raw90.csv")))
assert len(a) == len(b) and len(a) > 30, (len(a), len(b))
worst = 0.0
for r, s in zip(a, b):
    assert r["frame"] == s["frame"] and r["status"] == s["status"], (r, s)
    if r["status"] == "ok":
        worst = max(worst, abs(float(r["x_m"]) - float(s["x_m"])), abs(float(r["y_m"]) - float(s["y_m"])))
        # coded pixels are the same in both clips
        assert abs(float(r["u_px"]) - float(s["u_px"])) < 1e-6, (r, s)
print(f"largest position difference with/without rotation metadata: {worst * 1000:.6f} mm")
assert worst < 1e-6
PYEOF
done_testing
