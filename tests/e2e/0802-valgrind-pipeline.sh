#!/usr/bin/env bash
# One short end-to-end run under valgrind memcheck: probe (a whole clip and
# one cut in half, the damage path), calibrate (points; and a layout that
# fails), track (tags, on the whole clip and on the damaged one), clean (its
# RAW.csv) and measure.  Each must report no invalid access
# and no definite or indirect leak (--error-exitcode=99).  No suppressions are
# needed.  Debian's libhwy dies of SIGILL under valgrind 3.19 (RDTSCP in a
# constructor); tests/valgrind/hwy-timer-shim.c, preloaded, replaces that one
# function.  Skipped with a message when valgrind is missing and in the
# sanitizer build (ASan and valgrind cannot run together).
set -euo pipefail
: "${WAKELINE:?}" "${WL_SOURCE_DIR:?}" "${WL_TEST_TMP:?}"
PY=/usr/bin/python3
fail() { echo "FAIL: $*" >&2; exit 1; }
rm -rf "$WL_TEST_TMP"; mkdir -p "$WL_TEST_TMP"; cd "$WL_TEST_TMP"
if ! command -v valgrind > /dev/null; then echo "SKIP: valgrind is not installed (apt-get install valgrind)"; exit 0; fi
if grep -q "^WL_SANITIZE:BOOL=ON" "${WL_BUILD_DIR:?}/CMakeCache.txt"; then echo "SKIP: sanitizer build (valgrind cannot run it)"; exit 0; fi
cc -shared -fPIC -O1 -o hwyshim.so "$WL_SOURCE_DIR/tests/valgrind/hwy-timer-shim.c"

"$WAKELINE" synth "$WL_SOURCE_DIR/tests/data/tiny-scene.json" -o clip.mp4 -q
ffmpeg -v error -nostdin -y -i clip.mp4 -c copy -movflags +faststart fast.mp4
head -c $(($(stat -c %s fast.mp4) / 2)) fast.mp4 > fasthalf.mp4 # frames, then damage
$PY "$WL_SOURCE_DIR/tests/e2e/lib/calib_scene.py" points pts.csv blank.png --tilt 20 --noise 0.3 --seed 3
printf 'marker_id,x_m,y_m\n0,0,0\n1,1,0\n1,1,1\n3,0,1\n' > dup-layout.csv
$PY - <<'PYEOF'
# an invented run: one robot on a 0.5 m counter-clockwise circle at 0.1 m/s
import math
with open("CLEAN.csv", "w") as f:
    f.write("t_s,frame,id,x_m,y_m,heading_rad,speed_mps,yaw_rate_radps,vx_mps,vy_mps,segment,status,cut\n")
    for k in range(300):
        t = k / 30; th = 0.1 * t / 0.5
        f.write("%.6f,%d,1,%.6f,%.6f,%.6f,0.1,0.2,%.6f,%.6f,0,measured,\n" % (
            t, k, 1 + 0.5 * math.cos(th), 1 + 0.5 * math.sin(th),
            math.atan2(math.cos(th), -math.sin(th)), -0.1 * math.sin(th), 0.1 * math.cos(th)))
PYEOF

# vg WANT_RC NAME ARGS...: wakeline ARGS under memcheck, exit WANT_RC, no errors.
vg() {
	local want=$1 name=$2 rc=0
	shift 2
	LD_PRELOAD=$PWD/hwyshim.so valgrind -q --leak-check=full --errors-for-leak-kinds=definite,indirect \
		--error-exitcode=99 --num-callers=30 --log-file=$name.vg "$WAKELINE" "$@" > $name.out 2> $name.err || rc=$?
	[ $rc -ne 99 ] || fail "$name: memcheck errors:$(echo; head -40 $name.vg)"
	[ $rc -eq "$want" ] || fail "$name: exit $rc, want $want: $(cat $name.err) $(head -20 $name.vg)"
	! grep -q 'definitely lost\|Invalid \(read\|write\)\|uninitialised' $name.vg || fail "$name: $(head -40 $name.vg)"
	echo "$name: exit $rc, memcheck clean"
}
vg 0 probe probe --threads 1 -q --frames frames.csv clip.mp4
vg 1 probe-damaged probe --threads 1 -q --json fasthalf.mp4
vg 0 calibrate calibrate blank.png --points pts.csv -o CAL.json
vg 1 calibrate-bad calibrate blank.png --layout dup-layout.csv -o BAD.json
$PY "$WL_SOURCE_DIR/tests/e2e/lib/track_cal.py" clip.scene.json trackcal.json 0.25
vg 0 track track --threads 1 -q clip.mp4 --cal trackcal.json -o RAW.csv
vg 0 track-damaged track --threads 1 -q fasthalf.mp4 --cal trackcal.json -o RAWhalf.csv
grep -q 'damaged clip' track-damaged.err || fail "track: damage not reported: $(cat track-damaged.err)"
vg 0 clean clean RAW.csv -o CLEANED.csv
[ "$(grep -c ',ok,' RAW.csv)" -ge 200 ] && [ -s CLEANED.csv ] || fail "track/clean outputs"
vg 0 measure measure CLEAN.csv -o SUMMARY.json --csv runs.csv -q
[ -s CAL.json ] && [ -s SUMMARY.json ] && [ ! -e BAD.json ] || fail "outputs"
[ "$(($(wc -l < frames.csv) - 1))" -eq 45 ] || fail "probe under valgrind: $(wc -l < frames.csv) lines"
echo "0802-valgrind-pipeline: ok"
