#!/usr/bin/env bash
# track, colour mode (two caps, red front / blue back), on a synthetic
# 1080p clip (invented scene): position RMSE <= 5 mm, heading RMSE <= 2
# degrees, >= 99 % frames ok; `wakeline colours` reads the caps' hue back.
source "$WL_SOURCE_DIR/tests/e2e/lib/track.bash"
need_synth
cat > scene.json <<'JSON'
{ "description": "invented test scene: one robot with two coloured caps",
  "seed": 5,
  "tank": { "size_m": [2.4, 1.4] },
  "camera": { "width_px": 1920, "height_px": 1080, "hfov_deg": 64, "position_m": [1.2, 0.7, 2.0] },
  "timing": { "fps": 30, "duration_s": 4 },
  "encoding": { "bit_rate_bps": 10000000 },
  "robots": [ { "id": 1, "diameter_m": 0.12, "height_m": 0.25, "disc_rgb": [235, 235, 235],
                "marker": { "type": "caps", "front_rgb": [220, 40, 40], "back_rgb": [40, 80, 220],
                            "cap_diameter_m": 0.03, "offset_m": 0.03 },
                "path": { "start_m": [0.8, 0.4], "heading_deg": 20, "speed_mps": 0.25, "curvature_1pm": 1.5 } } ] }
JSON
synth scene.json clip.mp4
make_cal clip.scene.json cal.json 0.25
cat > robots.csv <<'CSV'
id,body_diameter_m,front_hsv_lo,front_hsv_hi,back_hsv_lo,back_hsv_hi
1,0.12,"170,120,80","8,255,255","105,120,80","125,255,255"
CSV
check_exit "track --mode colour succeeds" 0 \
	"$WAKELINE" track clip.mp4 --cal cal.json -o raw.csv --mode colour --robots robots.csv --quiet
compare raw.csv clip.truth.csv --pos-mm 5 --head-deg 2 --ok 0.99
check_grep "heading_source is caps" ',caps$' raw.csv
# the front cap's hue, read back at its first-frame pixel position
read -r u v < <(awk -F, 'NR == 2 { print $4, $5 }' raw.csv)
check_exit "colours at the front cap's pixel succeeds" 0 \
	"$WAKELINE" colours clip.mp4 --at 0 --box "$(printf '%.0f,%.0f,3,3' "$u" "$v")"
cp last.out colours.txt
check_grep "colours prints a hue line" '^hue,' colours.txt
done_testing
