#!/usr/bin/env bash
# The tracker's robot bound (WL_TRACK_MAX_ROBOTS, 64).  An invented scene
# with 64 floor tags (ids 0-63) and one tagged robot (id 100): without a
# list, the floor tags fill the table and the robot is left out, which must
# be said in a warning naming the clip, the bound and the first id left out
# (it was silent before); with --ids 100 the robot is tracked and nothing is
# said; a list of 65 ids is refused as a usage error (exit 2) naming the bound.
source "$WL_SOURCE_DIR/tests/e2e/lib/decode.bash"
$PY - "$WL_SOURCE_DIR/tests/data/tiny-scene.json" <<'PYEOF'
import json, sys
s = json.load(open(sys.argv[1]))
s["description"] = "Invented test scenario: 64 floor tags and one tagged robot, more ids than the tracker keeps."
s["camera"].update({"width_px": 1280, "height_px": 720})
s["timing"] = {"fps": 10, "duration_s": 0.5}
s["markers"] = [{"id": i * 8 + j, "center_m": [0.25 + i * 0.27, 0.15 + j * 0.19], "size_m": 0.09}
                for i in range(8) for j in range(8)]
s["robots"][0].update({"diameter_m": 0.12, "marker": {"type": "tag", "tag_id": 100, "size_m": 0.09}})
json.dump(s, open("many.json", "w"), indent=1)
PYEOF
"$WAKELINE" synth many.json -o many.mp4 -q || fail "synth exited $?"
"$PY" "$WL_SOURCE_DIR/tests/e2e/lib/track_cal.py" many.scene.json cal.json 0.25 || fail "cannot build cal.json"

check_exit "track with more ids than the bound succeeds" 0 "$WAKELINE" track many.mp4 --cal cal.json -o all.csv -q
check_grep "a warning names the clip, the bound and the first id left out" \
	'warning: many.mp4: more than 64 tag ids seen: [1-9][0-9]* detections of new ids (the first id 100) were left out' last.err
check_eq "all.csv holds 64 ids" "$(tail -n +2 all.csv | cut -d, -f3 | sort -u | wc -l)" 64
cut -d, -f3 all.csv > all.ids
check_no_grep "id 100 is not tracked beyond the bound" -x 100 all.ids

check_exit "track --ids 100 succeeds" 0 "$WAKELINE" track many.mp4 --cal cal.json --ids 100 -o one.csv -q
check_eq "track --ids 100 says nothing" "$(cat last.err)" ""
check_eq "robot 100 is tracked in all 5 frames" "$(grep -c '^[0-9.]*,[0-9]*,100,.*,ok,' one.csv)" 5

check_exit "65 ids are a usage error (exit 2)" 2 "$WAKELINE" track many.mp4 --cal cal.json --ids "$(seq -s, 0 64)" -o x.csv -q
check_grep "the message names the bound" "more than 64 robots" last.err
check_no_file "no RAW.csv for 65 ids" x.csv
done_testing
