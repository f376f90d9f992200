#!/usr/bin/env bash
# One short end-to-end run under valgrind memcheck: probe (a whole clip and
# one cut in half, the damage path), calibrate (points; and a layout that
# fails), track (tags, on the whole clip and on the damaged one), clean (its
# RAW.csv) and measure.  Each must report no invalid access
# and no definite or indirect leak (--error-exitcode=99).  No suppressions are
# needed.  Debian's libhwy dies of SIGILL under valgrind 3.19 (RDTSCP in a
# constructor); tests/valgrind/hwy-timer-shim.c, preloaded, replaces that one
# function.  Skipped (exit 77, reported as skipped) when valgrind is missing
# and in the sanitizer build (ASan and valgrind cannot run together).
source "$WL_SOURCE_DIR/tests/e2e/lib/harness.sh"
command -v valgrind > /dev/null || skip_all "valgrind is not installed (apt-get install valgrind)"
if grep -q "^WL_SANITIZE:BOOL=ON" "${WL_BUILD_DIR:?}/CMakeCache.txt"; then
	skip_all "sanitizer build (valgrind cannot run it; the normal build runs this test)"
fi
cc -shared -fPIC -O1 -o hwyshim.so "$WL_SOURCE_DIR/tests/valgrind/hwy-timer-shim.c"

"$WAKELINE" synth "$WL_SOURCE_DIR/tests/data/tiny-scene.json" -o clip.mp4 -q || fail "synth exited $?"
ffmpeg -v error -nostdin -y -i clip.mp4 -c copy -movflags +faststart fast.mp4
head -c $(($(stat -c %s fast.mp4) / 2)) fast.mp4 > fasthalf.mp4 # frames, then damage
"$PY" "$WL_SOURCE_DIR/tests/e2e/lib/calib_scene.py" points pts.csv blank.png --tilt 20 --noise 0.3 --seed 3
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
	check_eq "$name: exit $want under memcheck (99: memcheck found errors, see $name.vg)" "$rc" "$want"
	check_no_grep "$name: no leak, invalid access or uninitialised value in the memcheck log" \
		'definitely lost\|Invalid \(read\|write\)\|uninitialised' $name.vg
}
vg 0 probe probe --threads 1 -q --frames frames.csv clip.mp4
vg 1 probe-damaged probe --threads 1 -q --json fasthalf.mp4
vg 0 calibrate calibrate blank.png --points pts.csv -o CAL.json
vg 1 calibrate-bad calibrate blank.png --layout dup-layout.csv -o BAD.json
$PY "$WL_SOURCE_DIR/tests/e2e/lib/track_cal.py" clip.scene.json trackcal.json 0.25
vg 0 track track --threads 1 -q clip.mp4 --cal trackcal.json -o RAW.csv
vg 0 track-damaged track --threads 1 -q fasthalf.mp4 --cal trackcal.json -o RAWhalf.csv
check_grep "track on the damaged clip reports the damage" 'damaged clip' track-damaged.err
vg 0 clean clean RAW.csv -o CLEANED.csv
check_num "track under memcheck: at least 200 ok rows" "$(grep -c ',ok,' RAW.csv)" ">=" 200
check_file "clean under memcheck writes CLEAN.csv" CLEANED.csv
vg 0 measure measure CLEAN.csv -o SUMMARY.json --csv runs.csv -q
check_file "calibrate under memcheck writes CAL.json" CAL.json
check_file "measure under memcheck writes SUMMARY.json" SUMMARY.json
check_no_file "the failed calibrate writes no BAD.json" BAD.json
check_eq "probe under memcheck lists 45 frames" "$(($(wc -l < frames.csv) - 1))" 45
done_testing
