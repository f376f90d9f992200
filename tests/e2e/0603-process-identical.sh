#!/usr/bin/env bash
# `process` gives byte for byte what `track`, `clean` and `measure` give when
# run one after the other with the same options and the same paths (measure
# with the calibration, which process always has, for the uncertainty budget): raw.csv,
# clean.csv, clean.json and summary.json, every byte (the provenance fields
# too: same paths, same calibration hash, same version).  Checked twice on a
# small invented scene (one tagged robot on an arc that ends at the tank wall,
# so the wall cut is exercised): with the default options, and with options of
# every stage changed (smoother, trim, robot size, decimation, commanded
# period, minimum arc, the plane height's tolerance).
source "$WL_SOURCE_DIR/tests/e2e/lib/track.bash"
need_synth
cat > scene.json <<'JSON'
{ "description": "invented test scene: one tagged robot turning towards the tank wall",
  "seed": 603,
  "tank": { "size_m": [2.4, 1.4] },
  "camera": { "width_px": 960, "height_px": 540, "hfov_deg": 80, "position_m": [1.2, 0.7, 2.0] },
  "timing": { "fps": 30, "duration_s": 4 },
  "robots": [ { "id": 3, "diameter_m": 0.14, "height_m": 0.25,
                "marker": { "type": "tag", "tag_id": 3, "size_m": 0.09 },
                "path": { "start_m": [1.4, 0.5], "heading_deg": 0, "speed_mps": 0.35, "curvature_1pm": 0.5 } } ] }
JSON
synth scene.json clip.mp4
make_cal clip.scene.json cal.json 0.25

# by_hand NAME [track options] -- [clean options] -- [measure options]: the three commands into res/, kept as NAME/
by_hand() {
	local name=$1; shift
	local t=() c=() m=()
	while [ $# -gt 0 ] && [ "$1" != -- ]; do t+=("$1"); shift; done; shift || true
	while [ $# -gt 0 ] && [ "$1" != -- ]; do c+=("$1"); shift; done; shift || true
	m=("$@")
	rm -rf res; mkdir res
	"$WAKELINE" track clip.mp4 --cal cal.json -o res/raw.csv -q "${t[@]}" || fail "track exited $?"
	"$WAKELINE" clean res/raw.csv -o res/clean.csv --sidecar res/clean.json --cal cal.json -q "${c[@]}" ||
		fail "clean exited $?"
	"$WAKELINE" measure res/clean.csv -o res/summary.json --cal cal.json -q "${m[@]}" || fail "measure exited $?"
	mv res "$name"
}
same() { # NAME: res/ (from process) against NAME/ (by hand)
	for f in raw.csv clean.csv clean.json summary.json; do
		check "$1: $f of process is byte for byte the commands' one" cmp "res/$f" "$1/$f"
	done
	note "$1: $(wc -l < res/clean.csv) clean rows"
}

by_hand plain
rm -rf res
"$WAKELINE" process clip.mp4 --cal cal.json -o res -q || fail "process exited $?"
same plain
check_grep "the scene reaches the wall (the wall cut is exercised)" '"reason":[[:space:]]*"wall"' res/clean.json

by_hand changed --decimate 1 --min-margin 30 -- --smoother sg --sg-window 9 --trim 0.4 --body-diameter-m 0.14 -- \
	--body-diameter-m 0.14 --commanded-period-s 0.8 --min-arc-deg 3 --plane-height-tol-m 0.005
rm -rf res
"$WAKELINE" process clip.mp4 --cal cal.json -o res -q --decimate 1 --min-margin 30 --smoother sg --sg-window 9 \
	--trim 0.4 --body-diameter-m 0.14 --commanded-period-s 0.8 --min-arc-deg 3 --plane-height-tol-m 0.005 ||
	fail "process exited $?"
same changed
check_grep "the smoother option reached clean" '"smoother":[[:space:]]*"sg"' res/clean.json
check_grep "the commanded period reached measure" '"commanded_period_s":[[:space:]]*0.8' res/summary.json
check_grep "the calibration reached measure's budget" '"source":[[:space:]]*"plane_height"' res/summary.json
# the old spelling of the robot size is still accepted
rm -rf res
"$WAKELINE" process clip.mp4 --cal cal.json -o res -q --decimate 1 --min-margin 30 --smoother sg --sg-window 9 \
	--trim 0.4 --body-m 0.14 --commanded-period-s 0.8 --min-arc-deg 3 --plane-height-tol-m 0.005 ||
	fail "--body-m: process exited $?"
same changed
done_testing
