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

# expect_fail CMD...: exit status 1 and one "error:" line naming the file
# (the last argument); the message is kept in last.err.
expect_fail() {
	local f=${*: -1} rc=0
	"$@" > last.out 2> last.err || rc=$?
	[ $rc -eq 1 ] || fail "$*: exit $rc, want 1 ($(cat last.err))"
	grep -q "error: .*$f" last.err || fail "$*: message does not name $f: $(cat last.err)"
	echo "$*: $(head -1 last.err)"
}

for f in half-full.mp4 half-full.mkv; do
	expect_fail "$WAKELINE" probe -q --frames $f.csv $f
	grep -q 'cut short\|corrupt' last.err || fail "$f: the error does not say what is wrong"
	want=$(ffprobe -v error -count_frames -select_streams v:0 -show_entries stream=nb_read_frames \
		-of default=nw=1:nk=1 $f 2> /dev/null)
	got=$(($(wc -l < $f.csv) - 1))
	echo "$f: $got frames decoded, ffprobe reads $want"
	[ "$got" = "$want" ] && [ "$got" -ge 40 ] || fail "$f: $got frames decoded, ffprobe reads $want"
	grep -q '^frames         [0-9]* decoded' last.out || fail "$f: no report on stdout"
	grep -q '^damage         [1-9][0-9]* problem' last.out || fail "$f: damage not listed"
	grep -q 'stream ends early' last.out || fail "$f: the early end is not reported"
	# the damage has a time, near the cut (2 s)
	grep -Eq '^  frame [0-9]+ at (1\.9|2\.0)[0-9]* s' last.out || fail "$f: damage times: $(grep '^  frame' last.out)"
	# JSON lists the same damage
	"$WAKELINE" probe -q --json $f > $f.json 2> /dev/null || true
	$PY -c "
import json, sys; j = json.load(open('$f.json'))
sys.exit(0 if j['damage_count'] >= 1 and j['frames'] == $want and len(j['damage']) == j['damage_count'] else j)" ||
		fail "$f: JSON damage"
done
# frames before the cut are still usable
"$WAKELINE" still half-full.mp4 --at 1.0 -o before-cut.png > /dev/null || fail "still before the cut"
[ -s before-cut.png ] || fail "no still written"

# an MP4 cut before its index cannot be read at all
expect_fail "$WAKELINE" probe half-full-moov-at-end.mp4
grep -q 'cannot read as video' last.err || fail "moov-less clip: $(cat last.err)"
# empty, text, missing, directory, audio only
: > empty.mp4
expect_fail "$WAKELINE" probe empty.mp4
grep -q 'empty' last.err || fail "empty file: $(cat last.err)"
printf 'time,x\n0,1\n' > notes.txt
expect_fail "$WAKELINE" probe notes.txt
grep -q 'check that it is a video' last.err || fail "text file: $(cat last.err)"
expect_fail "$WAKELINE" probe missing.mp4
grep -q 'No such file' last.err || fail "missing file: $(cat last.err)"
mkdir -p adir
expect_fail "$WAKELINE" probe adir
ff -f lavfi -i sine=frequency=440:duration=1 -c:a aac tone.m4a
expect_fail "$WAKELINE" probe tone.m4a
grep -q 'no video stream' last.err || fail "audio file: $(cat last.err)"
expect_fail "$WAKELINE" still --at 0 -o x.png notes.txt
[ ! -e x.png ] || fail "still wrote a file on failure"

# a whole clip is not damaged; the library prints nothing of FFmpeg's logs
"$WAKELINE" probe -q full.mp4 > ok.out 2> ok.err || fail "full.mp4 reported damaged: $(cat ok.err)"
[ ! -s ok.err ] || fail "stderr not empty on a good clip: $(cat ok.err)"
grep -q '^damage         none' ok.out || fail "full.mp4: $(grep damage ok.out)"
"$WAKELINE" probe -q half-full.mp4 > /dev/null 2> h.err || true
[ "$(wc -l < h.err)" -eq 1 ] || fail "FFmpeg's log leaks to stderr: $(cat h.err)"
# usage
rc=0; "$WAKELINE" probe 2> /dev/null || rc=$?; [ $rc -eq 2 ] || fail "probe without CLIP: exit $rc"
rc=0; "$WAKELINE" probe --bogus full.mp4 2> /dev/null || rc=$?; [ $rc -eq 2 ] || fail "bad option: exit $rc"
"$WAKELINE" probe --help | grep -q -- '--json' || fail "--help"
echo "0104-probe-damage: ok"
