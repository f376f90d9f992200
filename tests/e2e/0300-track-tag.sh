#!/usr/bin/env bash
# track, tag mode, on a synthetic 1080p clip (invented scene: a 2.4 m tank,
# camera 2 m up, one tagged robot circling counter-clockwise with its marker
# 0.25 m above the floor, H.264 at 10 Mbit/s like a phone): position RMSE
# <= 2 mm, heading RMSE <= 1 degree, >= 99 % of frames ok against the
# renderer's truth; the path stays counter-clockwise; numbers keep '.'
# decimals under a decimal-comma locale; the trail picture is a PNG; the
# readout estimated from the tag's shear is within 3 ms of 0 (a global
# shutter).
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
LC_ALL=de_DE.UTF-8 "$WAKELINE" track clip.mp4 --cal cal.json -o raw.csv --trail trail.png > out.txt ||
	fail "track exited $?"
# a global shutter: the readout estimated from the tag's shear is near 0
read -r est se < <(sed -n 's/.*gives a readout of \([-0-9.]*\) +- \([0-9.]*\) ms.*/\1 \2/p' out.txt)
echo "readout from the tag's shear: $est +- $se ms (global shutter)"
[ -n "$est" ] && awk -v e="$est" 'BEGIN { exit !(e > -3 && e < 3) }' || fail "readout estimate '$est' ms: $(cat out.txt)"
compare raw.csv clip.truth.csv --pos-mm 2 --head-deg 1 --ok 0.99 --ccw 3
grep -q '[0-9],[0-9][0-9]*,[0-9]' raw.csv || fail "no rows"
if grep -Eq '[0-9],[0-9]{6}[^0-9,]' raw.csv; then fail "decimal commas in raw.csv"; fi
awk -F, 'NR > 1 && NF != 14 { exit 1 }' raw.csv || fail "a row of raw.csv has not 14 cells"
head -c 8 trail.png | od -An -tx1 | grep -q '89 50 4e 47 0d 0a 1a 0a' || fail "trail.png is not a PNG"
echo "ok"
