#!/usr/bin/env bash
# track, tag mode, on a synthetic 1080p clip (invented scene: a 2.4 m tank,
# camera 2 m up, one tagged robot circling counter-clockwise with its marker
# 0.25 m above the floor, H.264 at 10 Mbit/s like a phone): position RMSE
# <= 2 mm, heading RMSE <= 1 degree, >= 99 % of frames ok against the
# renderer's truth; the path stays counter-clockwise; numbers keep '.'
# decimals under a decimal-comma locale; the trail picture is a PNG.
source "$WL_SOURCE_DIR/tests/e2e/lib/track.bash"
need_synth
cat > scene.json <<'JSON'
{ "description": "invented test scene: one tagged robot circling in a 2.4 m tank",
  "seed": 3,
  "tank": { "size_m": [2.4, 1.4] },
  "camera": { "width_px": 1920, "height_px": 1080, "hfov_deg": 64, "position_m": [1.2, 0.7, 2.0] },
  "timing": { "fps": 30, "duration_s": 5 },
  "encoding": { "bit_rate_bps": 10000000 },
  "effects": { "noise_sigma": 1.5 },
  "robots": [ { "id": 3, "diameter_m": 0.12, "height_m": 0.25,
                "marker": { "type": "tag", "tag_id": 3, "size_m": 0.05 },
                "path": { "start_m": [1.2, 0.3], "heading_deg": 0, "speed_mps": 0.3, "curvature_1pm": 2.5 } } ] }
JSON
synth scene.json clip.mp4
make_cal clip.scene.json cal.json 0.25
check_exit "track succeeds under LC_ALL=de_DE.UTF-8" 0 \
	env LC_ALL=de_DE.UTF-8 "$WAKELINE" track clip.mp4 --cal cal.json -o raw.csv --trail trail.png --quiet
compare raw.csv clip.truth.csv --pos-mm 2 --head-deg 1 --ok 0.99 --ccw 3
check_grep "raw.csv has rows" '[0-9],[0-9][0-9]*,[0-9]' raw.csv
check_no_grep "raw.csv has no decimal commas" -E '[0-9],[0-9]{6}[^0-9,]' raw.csv
check "every row of raw.csv has 12 cells" awk -F, 'NR > 1 && NF != 12 { print "line " NR ": " $0; bad = 1 } END { exit bad }' raw.csv
check_eq "trail.png starts with the PNG signature" "$(head -c 8 trail.png | od -An -tx1 | tr -s ' ')" " 89 50 4e 47 0d 0a 1a 0a"
done_testing
