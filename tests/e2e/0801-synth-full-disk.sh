#!/usr/bin/env bash
# Nothing lost on a full disk.  A 64 kB tmpfs is mounted (root only; the test
# is skipped, exit 77, where mount is not permitted) and filled to leave
# 0, 4, 12 or 40 kB free; then synth (clip + truth + scene, 31 kB), measure
# (SUMMARY.json + --csv table), calibrate (CAL.json, 4.5 kB), probe
# --frames, track (RAW.csv, 22 kB) and clean (CLEAN.csv + sidecar) write
# into it.  Each run must either succeed with every output
# complete (it parses) or exit 1 with one message naming a file it could not
# write and "No space left on device", leaving nothing behind (no output, no
# temporary file).  Standard output on /dev/full is an error too (exit 1).
# a tmpfs left mounted by an earlier run goes before the harness empties the folder
if mountpoint -q "${WL_TEST_TMP:?}/disk" 2> /dev/null; then umount "$WL_TEST_TMP/disk"; fi
source "$WL_SOURCE_DIR/tests/e2e/lib/harness.sh"
mkdir disk

# inputs, on the normal disk
"$WAKELINE" synth "$WL_SOURCE_DIR/tests/data/tiny-scene.json" -o in.mp4 -q || fail "synth exited $?"
"$PY" "$WL_SOURCE_DIR/tests/e2e/lib/calib_scene.py" points pts.csv blank.png --tilt 20 --noise 0.3 --seed 3
"$PY" - <<'EOF'
# an invented run: one robot on a 0.5 m counter-clockwise circle at 0.1 m/s, 30 fps, 10 s
import math
with open("CLEAN.csv", "w") as f:
    f.write("t_s,frame,id,x_m,y_m,heading_rad,speed_mps,yaw_rate_radps,vx_mps,vy_mps,segment,status,cut\n")
    for k in range(300):
        t = k / 30; th = 0.1 * t / 0.5
        f.write("%.6f,%d,1,%.6f,%.6f,%.6f,0.1,0.2,%.6f,%.6f,0,measured,\n" % (
            t, k, 1 + 0.5 * math.cos(th), 1 + 0.5 * math.sin(th),
            math.atan2(math.cos(th), -math.sin(th)), -0.1 * math.sin(th), 0.1 * math.cos(th)))
EOF

"$PY" "$WL_SOURCE_DIR/tests/e2e/lib/track_cal.py" in.scene.json cal.json 0.25 || fail "cannot build cal.json"
"$WAKELINE" track in.mp4 --cal cal.json -o RAW.csv -q || fail "track exited $?"

if ! mount -t tmpfs -o size=64k tmpfs disk 2> mount.err; then
	skip_all "cannot mount a tmpfs here ($(cat mount.err)); run as root to test full disks"
fi
at_exit umount "$WL_TEST_TMP/disk"

# parses FILE: the output is complete
parses() {
	[ -s "$1" ] || { echo "$1: missing or empty"; return 1; }
	case $1 in
	*.json) $PY -c "import json,sys; json.load(open(sys.argv[1]))" "$1" ;;
	*.csv) $PY -c "import csv,sys; r=list(csv.reader(open(sys.argv[1]))); assert len(r)>1 and all(len(x)==len(r[0]) for x in r)" "$1" ;;
	*.mp4) ffprobe -v error -count_frames -select_streams v:0 -show_entries stream=nb_read_frames \
		-of default=nw=1:nk=1 "$1" | grep -qx 45 ;;
	esac
}

# on_disk FREE_KB NAME OUTPUTS -- CMD...: runs CMD on a disk with FREE_KB
# free and checks the outcome: success with every output complete, or
# exit 1 naming a file and the full disk with nothing left behind.
nfail=0 nok=0
on_disk() {
	local free=$1 name=$2 rc=0 outs=() f left
	shift 2
	while [ "$1" != "--" ]; do outs+=("$1"); shift; done
	shift
	rm -rf disk/* disk/.[!.]* 2> /dev/null || true
	[ "$free" -ge 64 ] || head -c $(((64 - free) * 1024)) /dev/zero > disk/filler 2> /dev/null || true
	"$@" > $name.out 2> $name.err || rc=$?
	left=$(ls -A disk | grep -v '^filler$' || true)
	if [ $rc -eq 0 ]; then
		for f in "${outs[@]}"; do
			check "$name ($free kB free): exit 0 and disk/$f complete" parses "disk/$f"
		done
		check_eq "$name ($free kB free): no other file on the disk" "$(echo $left)" \
			"$(printf '%s\n' "${outs[@]}" | sort | xargs)"
		nok=$((nok + 1))
	else
		check_eq "$name ($free kB free): a failure exits 1" "$rc" 1
		check_grep "$name ($free kB free): the message names the file and the full disk" \
			"disk/[^ ]*: No space left on device\|disk/[^ ]*': .*No space left on device" $name.err
		check_grep "$name ($free kB free): the message says to free some space" 'free some space' $name.err
		check_eq "$name ($free kB free): nothing is left behind" "$left" ""
		nfail=$((nfail + 1))
	fi
}

for free in 0 4 12 40; do
	on_disk $free synth c.mp4 c.truth.csv c.scene.json -- \
		"$WAKELINE" synth "$WL_SOURCE_DIR/tests/data/tiny-scene.json" -o disk/c.mp4 -q
	on_disk $free measure S.json S.csv -- "$WAKELINE" measure CLEAN.csv -o disk/S.json --csv disk/S.csv -q
	on_disk $free calibrate CAL.json -- "$WAKELINE" calibrate blank.png --points pts.csv -o disk/CAL.json
	on_disk $free probe f.csv -- "$WAKELINE" probe -q --frames disk/f.csv in.mp4
	on_disk $free track RAW.csv -- "$WAKELINE" track in.mp4 --cal cal.json -o disk/RAW.csv -q
	on_disk $free clean C.csv C.json -- "$WAKELINE" clean RAW.csv -o disk/C.csv
done
note "$nfail runs refused cleanly, $nok completed"
# with 0 kB free every command must have failed; with 40 kB everything fits
check_num "at least 4 runs were refused (the disk was full for them)" $nfail ">=" 4
check_num "at least 3 runs completed (the disk had room for them)" $nok ">=" 3

# standard output on a full device
for cmd in "probe in.mp4" "probe --json in.mp4" "version" "measure CLEAN.csv -o S.json"; do
	rc=0
	# shellcheck disable=SC2086
	"$WAKELINE" $cmd > /dev/full 2> full.err || rc=$?
	check_eq "$cmd > /dev/full: exits 1" "$rc" 1
	check_grep "$cmd > /dev/full: says it cannot write standard output" \
		'cannot write standard output: No space left on device' full.err
done
done_testing
