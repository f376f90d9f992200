#!/usr/bin/env bash
# track: a robot hidden for 1 s (invented scene) is `lost` on exactly the
# hidden frames, found again within 3 frames of reappearing, and the
# timeline stays whole (a row on every frame).
source "$WL_SOURCE_DIR/tests/e2e/lib/track.bash"
need_synth
cat > scene.json <<'JSON'
{ "description": "invented test scene: a robot hidden under a cover for 1 s",
  "seed": 13,
  "tank": { "size_m": [2.4, 1.4] },
  "camera": { "width_px": 1280, "height_px": 720, "hfov_deg": 64, "position_m": [1.2, 0.7, 2.0] },
  "timing": { "fps": 30, "duration_s": 4 },
  "encoding": { "bit_rate_bps": 6000000 },
  "robots": [ { "id": 2, "diameter_m": 0.12, "height_m": 0.25,
                "marker": { "type": "tag", "tag_id": 2, "size_m": 0.06 },
                "path": { "start_m": [0.6, 0.5], "heading_deg": 10, "speed_mps": 0.3, "curvature_1pm": 0.5 },
                "occlusions": [ [1.5, 2.5] ] } ] }
JSON
synth scene.json clip.mp4
make_cal clip.scene.json cal.json 0.25
check_exit "track succeeds" 0 "$WAKELINE" track clip.mp4 --cal cal.json -o raw.csv --quiet
n_truth=$(($(wc -l < clip.truth.csv) - 1))
n_raw=$(($(wc -l < raw.csv) - 1))
check_eq "raw.csv has a row on every frame of the clip" "$n_raw rows" "$n_truth rows"
# (frames between reappearing and being found count as not ok: hence 0.97)
compare raw.csv clip.truth.csv --pos-mm 2 --ok 0.97 --hidden 2:1.5:2.5 --found-within 3
done_testing
