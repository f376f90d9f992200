#!/usr/bin/env bash
# track: two tagged robots passing each other within one body diameter
# (invented scene: opposite straight paths 0.1 m apart, bodies 0.1 m) keep
# their ids: each id's positions match its own robot's truth.
source "$WL_SOURCE_DIR/tests/e2e/lib/track.bash"
need_synth
cat > scene.json <<'JSON'
{ "description": "invented test scene: two robots passing close",
  "seed": 7,
  "tank": { "size_m": [2.4, 1.4] },
  "camera": { "width_px": 1280, "height_px": 720, "hfov_deg": 64, "position_m": [1.2, 0.7, 2.0] },
  "timing": { "fps": 30, "duration_s": 3 },
  "encoding": { "bit_rate_bps": 6000000 },
  "robots": [
    { "id": 3, "diameter_m": 0.1, "height_m": 0.25, "marker": { "type": "tag", "tag_id": 3, "size_m": 0.06 },
      "path": { "start_m": [0.75, 0.75], "heading_deg": 0, "speed_mps": 0.3 } },
    { "id": 7, "diameter_m": 0.1, "height_m": 0.25, "marker": { "type": "tag", "tag_id": 7, "size_m": 0.06 },
      "path": { "start_m": [1.65, 0.65], "heading_deg": 180, "speed_mps": 0.3 } } ] }
JSON
synth scene.json clip.mp4
make_cal clip.scene.json cal.json 0.25
check_exit "track succeeds" 0 "$WAKELINE" track clip.mp4 --cal cal.json -o raw.csv --quiet
compare raw.csv clip.truth.csv --pos-mm 2 --ok 0.99
done_testing
