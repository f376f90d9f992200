#!/usr/bin/env bash
# track keeps 20 identities in a swarm (issue 17).  Invented scene (made by
# tests/e2e/lib/swarm_scene.py, seed 1): 20 tagged robots on random arcs in a
# 2.4 m tank, no two bodies overlapping, three pairs docking side by side in
# contact for a third of the clip and separating, other pairs passing
# within 1.5 diameters.  Every ok or held row lies nearest its own robot's
# truth (zero identity swaps), within 2 mm of it, RMSE <= 1.2 mm, and
# >= 99 % of the robot-frames with half a tag in view have a pose.
source "$WL_SOURCE_DIR/tests/e2e/lib/track.bash"
need_synth
$PY "$LIB/swarm_scene.py" scene.json --robots 20 --seed 1 --duration 3 --docks 3 || fail "swarm_scene.py"
synth scene.json clip.mp4
make_cal clip.scene.json cal.json 0.25
"$WAKELINE" track clip.mp4 --cal cal.json -o raw.csv || fail "track exited $?"
check_eq "raw.csv has 20 ids" "$(tail -n +2 raw.csv | cut -d, -f3 | sort -u | wc -l)" 20
check "zero identity swaps, every pose within 2 mm, RMSE <= 1.2 mm, >= 99 % posed" \
	"$PY" "$LIB/swarm_check.py" raw.csv clip.truth.csv --max-mm 2 --rmse-mm 1.2 --min-frac 0.99
done_testing
