#!/usr/bin/env bash
# track, colour mode with a single cap (invented scene): the heading comes
# from the direction of motion (heading_source motion): position RMSE
# <= 5 mm, heading RMSE <= 3 degrees on a gently curving path; an unmoving
# start gives no heading (empty cell) rather than an invented one.
source "$WL_SOURCE_DIR/tests/e2e/lib/track.bash"
need_synth
cat > scene.json <<'JSON'
{ "description": "invented test scene: one robot with a single green cap",
  "seed": 19,
  "tank": { "size_m": [2.4, 1.4] },
  "camera": { "width_px": 1280, "height_px": 720, "hfov_deg": 64, "position_m": [1.2, 0.7, 2.0] },
  "timing": { "fps": 30, "duration_s": 3 },
  "encoding": { "bit_rate_bps": 6000000 },
  "robots": [ { "id": 2, "diameter_m": 0.12, "height_m": 0.2, "disc_rgb": [235, 235, 235],
                "marker": { "type": "cap", "rgb": [40, 190, 70], "cap_diameter_m": 0.035 },
                "path": { "start_m": [0.7, 0.5], "heading_deg": 15, "speed_mps": 0.3, "curvature_1pm": 1.0,
                          "rest_s": 0.5 } } ] }
JSON
synth scene.json clip.mp4
make_cal clip.scene.json cal.json 0.2
cat > robots.csv <<'CSV'
id,front_hsv_lo,front_hsv_hi
2,"50,120,80","80,255,255"
CSV
check_exit "track --mode colour (one cap) succeeds" 0 \
	"$WAKELINE" track clip.mp4 --cal cal.json -o raw.csv --mode colour --robots robots.csv --quiet
# frame 0: at rest, no heading yet
check "frame 0 (at rest) is ok with an empty heading" \
	awk -F, 'NR == 2 { print; if ($9 != "ok" || $8 != "") exit 1 }' raw.csv
check_grep "headings come from motion" ',motion$' raw.csv
compare raw.csv clip.truth.csv --pos-mm 5 --head-deg 3 --ok 0.99
done_testing
