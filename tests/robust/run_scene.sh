#!/usr/bin/env bash
# run_scene.sh SEED DIR: one scene of the robustness suite, end to end:
# gen_scene.py -> wakeline synth -> calibrate (from the clip, with the field of
# view given 2% wrong) -> track (ROBOTS.csv with the measured plane heights)
# -> clean -> measure (with the calibration and the planes: the uncertainty
# budget and the verdict).  Needs WAKELINE.  Leaves DIR/summary.json and
# DIR/truth.json for evaluate.py, DIR/log.txt, and DIR/cpu.txt (CPU seconds per
# stage); the clip is removed when done (set WL_ROBUST_KEEP=1 to keep it).
set -uo pipefail
seed=$1 dir=$2
here=$(cd "$(dirname "$0")" && pwd)
W=${WAKELINE:?}
mkdir -p "$dir" && cd "$dir" || exit 1
: > cpu.txt
step() { # name, command...
	local name=$1; shift
	/usr/bin/time -f "$name %U %S %e" -a -o cpu.txt "$@" >> log.txt 2>&1 || { echo "$name failed (exit $?)" >> log.txt; return 1; }
}
step gen /usr/bin/python3 "$here/gen_scene.py" "$seed" . &&
	step synth "$W" synth scene.json -o clip.mp4 -q &&
	step calibrate "$W" calibrate clip.mp4 --span 0.2 --layout layout.csv $(cat args.txt) -o cal.json -q &&
	step track "$W" track clip.mp4 --cal cal.json --robots robots.csv -o raw.csv -q --threads 1 &&
	step clean "$W" clean raw.csv -o clean.csv --cal cal.json -q &&
	step measure "$W" measure clean.csv -o summary.json --cal cal.json --robots robots.csv -q
rc=$?
[ "${WL_ROBUST_KEEP:-0}" = 1 ] || rm -f clip.mp4 clip.truth.csv
exit $rc
