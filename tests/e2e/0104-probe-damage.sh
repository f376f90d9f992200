#!/usr/bin/env bash
# probe on damaged and wrong inputs.  A clip cut at half its size decodes the
# frames before the cut (as many as ffprobe -count_frames reads, Debian
# ffmpeg 5.1), lists the damage with times and exits 1; files that are not
# video give one clear error naming the file, and exit 1.
source "$WL_SOURCE_DIR/tests/e2e/lib/decode.bash"
src=(-f lavfi -i testsrc2=size=320x240:rate=25 -frames:v 100 -c:v libx264 -pix_fmt yuv420p -g 25)
ff "${src[@]}" -movflags +faststart full.mp4
ff "${src[@]}" full.mkv
ff "${src[@]}" full-moov-at-end.mp4
for f in full.mp4 full.mkv full-moov-at-end.mp4; do
	sz=$(stat -c %s $f)
	head -c $((sz / 2)) $f > half-$f
done

# expect_fail CMD...: checks exit status 1 and one "error:" line naming the
# file (the last argument); the output is kept in last.out and last.err.
expect_fail() {
	local f=${*: -1}
	check_exit "'${*#"$WAKELINE" }' fails (exit 1)" 1 "$@"
	check_grep "'${*#"$WAKELINE" }': the error names $f" "error: .*$f" last.err
}

for f in half-full.mp4 half-full.mkv; do
	expect_fail "$WAKELINE" probe -q --frames $f.csv $f
	check_grep "$f: the error says the clip is cut short or corrupt" 'cut short\|corrupt' last.err
	want=$(ffprobe -v error -count_frames -select_streams v:0 -show_entries stream=nb_read_frames \
		-of default=nw=1:nk=1 $f 2> /dev/null)
	got=$(($(wc -l < $f.csv) - 1))
	check_eq "$f: as many frames decoded as ffprobe reads" "$got" "$want"
	check_num "$f: at least 40 frames before the cut" "$got" ">=" 40
	check_grep "$f: the report is on stdout" '^frames         [0-9]* decoded' last.out
	check_grep "$f: the damage is listed" '^damage         [1-9][0-9]* problem' last.out
	check_grep "$f: the early end is reported" 'stream ends early' last.out
	# the damage has a time, near the cut (2 s)
	check_grep "$f: the damage has a time near the cut (2 s)" -E '^  frame [0-9]+ at (1\.9|2\.0)[0-9]* s' last.out
	# JSON lists the same damage
	"$WAKELINE" probe -q --json $f > $f.json 2> /dev/null || true
	check "$f: the JSON lists the same damage and $want frames" "$PY" -c "
import json, sys; j = json.load(open('$f.json'))
sys.exit(0 if j['damage_count'] >= 1 and j['frames'] == $want and len(j['damage']) == j['damage_count'] else j)"
done
# frames before the cut are still usable
check_exit "still before the cut succeeds" 0 "$WAKELINE" still half-full.mp4 --at 1.0 -o before-cut.png
check_file "the still before the cut is written" before-cut.png

# an MP4 cut before its index cannot be read at all
expect_fail "$WAKELINE" probe half-full-moov-at-end.mp4
check_grep "moov-less clip: 'cannot read as video'" 'cannot read as video' last.err
# empty, text, missing, directory, audio only
: > empty.mp4
expect_fail "$WAKELINE" probe empty.mp4
check_grep "empty file: says empty" 'empty' last.err
printf 'time,x\n0,1\n' > notes.txt
expect_fail "$WAKELINE" probe notes.txt
check_grep "text file: says to check that it is a video" 'check that it is a video' last.err
expect_fail "$WAKELINE" probe missing.mp4
check_grep "missing file: No such file" 'No such file' last.err
mkdir -p adir
expect_fail "$WAKELINE" probe adir
ff -f lavfi -i sine=frequency=440:duration=1 -c:a aac tone.m4a
expect_fail "$WAKELINE" probe tone.m4a
check_grep "audio file: no video stream" 'no video stream' last.err
expect_fail "$WAKELINE" still --at 0 -o x.png notes.txt
check_no_file "still writes no file on failure" x.png

# a whole clip is not damaged; the library prints nothing of FFmpeg's logs
check_exit "full.mp4 is not reported damaged (exit 0)" 0 "$WAKELINE" probe -q full.mp4
check_eq "full.mp4: nothing on stderr" "$(cat last.err)" ""
check_grep "full.mp4: damage none" '^damage         none' last.out
"$WAKELINE" probe -q half-full.mp4 > /dev/null 2> h.err || true
check_eq "FFmpeg's log does not leak to stderr (one line)" "$(wc -l < h.err) line(s): $(cat h.err)" "1 line(s): $(head -1 h.err)"
# usage
check_exit "probe without CLIP is a usage error (exit 2)" 2 "$WAKELINE" probe
check_exit "a bad option is a usage error (exit 2)" 2 "$WAKELINE" probe --bogus full.mp4
check_exit "probe --help exits 0" 0 "$WAKELINE" probe --help
check_grep "probe --help lists --json" -- '--json' last.out
done_testing
