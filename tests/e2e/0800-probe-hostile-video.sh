#!/usr/bin/env bash
# Hostile and damaged clips made from a synthetic clip (tests/data/tiny-scene.json,
# 480x360, 15 fps, 45 frames) with the ffmpeg CLI and byte surgery.  Every
# case states its expected outcome; every run is under `timeout 60`, under
# `ulimit -v` 4 GB (not in the sanitizer build, whose shadow memory needs
# more address space) and its peak memory (GNU time's maximum RSS) must stay
# under 600 MB (1500 MB under ASan).  A crash (signal), a hang or a runaway
# allocation fails the test whatever the expected outcome.
# Reference frame counts come from Debian's ffprobe 5.1 (-count_frames).
source "$WL_SOURCE_DIR/tests/e2e/lib/decode.bash"
asan=0
# the build's own setting (a `nm | grep -q` pipeline can fail on SIGPIPE under pipefail)
if grep -q "^WL_SANITIZE:BOOL=ON" "${WL_BUILD_DIR:?}/CMakeCache.txt"; then asan=1; fi
rss_max_kb=$((asan ? 1500000 : 600000))

"$WAKELINE" synth "$WL_SOURCE_DIR/tests/data/tiny-scene.json" -o end.mp4 -q || fail "synth exited $?" # index (moov) at the end
ff -i end.mp4 -c copy -movflags +faststart fast.mp4                          # index first
ff -i end.mp4 -c copy -movflags frag_keyframe+empty_moov frag.mp4            # fragmented
nframes=45

# run NAME CMD...: runs CMD bounded in time and memory; sets $rc, keeps
# NAME.out and NAME.err.  Checks that it ends by itself without a signal (a
# timeout exits 124, a signal 128 + n) and that its peak memory stays low.
run() {
	local name=$1 rss
	shift
	rc=0
	(
		[ $asan -eq 1 ] || ulimit -v 4000000
		exec /usr/bin/time -f '%M' -o "$name.rss" timeout 60 "$@"
	) > "$name.out" 2> "$name.err" || rc=$?
	check_num "$name: ends within 60 s without a signal (exit status $rc)" "$rc" "<" 124
	rss=$(tail -1 "$name.rss")
	check_num "$name: peak memory below $rss_max_kb KB" "$rss" "<" "$rss_max_kb"
	note "$(printf '%-14s exit %d, %6d KB: %s' "$name" $rc "$rss" "$(grep -v '^Command exited' "$name.err" | head -1)")"
}

# expect_error NAME FILE PATTERN: exit 1, one error line that names FILE and matches PATTERN.
expect_error() {
	check_eq "$1: exits 1" "$rc" 1
	check_grep "$1: the message names $2" "error: $2: " "$1.err"
	check_grep "$1: the message says '$3'" "$3" "$1.err"
}

# expect_partial NAME FILE MIN MAX: exit 1, MIN..MAX frames decoded (and as
# many as ffprobe reads), damage listed with frames and times on stdout and
# the first one named on stderr.
expect_partial() {
	local name=$1 f=$2 got want
	check_eq "$name: exits 1 (damage)" "$rc" 1
	got=$(sed -n 's/^frames *\([0-9]*\) decoded.*/\1/p' "$name.out")
	want=$(ffprobe -v error -count_frames -select_streams v:0 -show_entries stream=nb_read_frames \
		-of default=nw=1:nk=1 "$f" 2> /dev/null)
	note "    $got frames decoded (ffprobe reads $want), $(grep -c '^  frame' "$name.out") damage lines"
	check_num "$name: at least $3 frames decoded" "$got" ">=" "$3"
	check_num "$name: at most $4 frames decoded" "$got" "<=" "$4"
	check_num "$name: within one frame of ffprobe's $want" "$(((got - want) * (got - want)))" "<=" 1
	check_grep "$name: the damage is counted" -E '^damage +[1-9][0-9]* problem' "$name.out"
	check_grep "$name: damage listed with frame and time" -E '^  frame [0-9]+ at [0-9]+\.[0-9]+ s: ' "$name.out"
	check_grep "$name: stderr names the file, frame and time" -E "error: $f: frame [0-9]+ at [0-9.]+ s: " "$name.err"
}

size_of() { stat -c %s "$1"; }

# 1. truncated at 10, 50 and 90 % of the file
for pc in 10 50 90; do
	for base in end fast frag; do
		head -c $(($(size_of $base.mp4) * pc / 100)) $base.mp4 > $base-cut$pc.mp4
		run $base-cut$pc "$WAKELINE" probe -q $base-cut$pc.mp4
	done
	# index at the end: the index is gone or cut, nothing can be read
	expect_error end-cut$pc end-cut$pc.mp4 'cannot read as video\|index is cut short'
done
# 10 % of the index-first clips ends inside the first key frame
expect_error fast-cut10 fast-cut10.mp4 'no frame could be decoded'
expect_error frag-cut10 frag-cut10.mp4 'no frame could be decoded'
# cut 200 bytes into the index (moov) at the end: the demuxer sees a stream it cannot describe
moov_at=$($PY -c "
import struct, sys
d = open('end.mp4', 'rb').read(); i = 0
while i < len(d):
    n, kind = struct.unpack('>I4s', d[i:i + 8])
    if kind == b'moov': print(i + 200); break
    i += n")
head -c "$moov_at" end.mp4 > end-cutmoov.mp4
run end-cutmoov "$WAKELINE" probe -q end-cutmoov.mp4
expect_error end-cutmoov end-cutmoov.mp4 "no readable video stream: the file's index is cut short or damaged"
# 50 %, 90 %: the frames before the cut, and the damage where it is
expect_partial fast-cut50 fast-cut50.mp4 15 30
expect_partial fast-cut90 fast-cut90.mp4 30 $((nframes - 1))
check_grep "fast-cut50: the early end is reported" 'stream ends early: [0-9]* of the 45 frames listed' fast-cut50.out
expect_partial frag-cut50 frag-cut50.mp4 15 30
expect_partial frag-cut90 frag-cut90.mp4 30 $((nframes - 1))
# frames before the cut stay usable
run still-cut50 "$WAKELINE" still fast-cut50.mp4 --at 0.5 -o before-cut.png
check_eq "still before the cut exits 0" "$rc" 0
check_file "still before the cut writes the PNG" before-cut.png

# 2. 200 bytes inverted in the middle of the index-first clip: decoding goes
# on past the damage; the frames it touches are reported with their times
$PY - fast.mp4 flip.mp4 <<'EOF'
import sys
d = bytearray(open(sys.argv[1], "rb").read())
m = len(d) // 2
for i in range(m, m + 200):
    d[i] ^= 0xFF
open(sys.argv[2], "wb").write(d)
EOF
# (one decoder thread: with frame threads FFmpeg 5.1 sometimes hands the
# concealed frame out without its error flag, and the damage goes unseen)
run flip "$WAKELINE" probe -q --threads 1 --frames flip.csv flip.mp4
expect_partial flip flip.mp4 35 $nframes
check_grep "flip: frames flagged corrupt" -E '^corrupt frames +[1-9]' flip.out
check_py "flip: decoding reaches the end past the damage, times increase" <<'EOF'
import csv
rows = list(csv.DictReader(open("flip.csv")))
t = [float(r["t_s"]) for r in rows]
assert t[-1] > 2.5, t[-1]                       # decoding reached the end of the 3 s clip
assert all(b > a for a, b in zip(t, t[1:]))      # times still increase
EOF

# 3. the index missing: the index-at-end clip with its moov box removed
$PY - end.mp4 nomoov.mp4 <<'EOF'
import struct, sys
d = open(sys.argv[1], "rb").read()
out, i = b"", 0
while i < len(d):
    n, kind = struct.unpack(">I4s", d[i:i + 8])
    if kind != b"moov":
        out += d[i:i + n]
    i += n
assert len(out) < len(d)
open(sys.argv[2], "wb").write(out)
EOF
run nomoov "$WAKELINE" probe -q nomoov.mp4
expect_error nomoov nomoov.mp4 'cannot read as video\|index is cut short'

# 4. zero-length file
: > empty.mp4
run empty "$WAKELINE" probe -q empty.mp4
expect_error empty empty.mp4 'the file is empty'

# 5. a PNG renamed .mp4: libavformat recognises the content, not the name;
# it is read as what it is, a one-frame clip of codec png (documented)
ff -f lavfi -i testsrc=size=64x48 -frames:v 1 pic.png
cp pic.png pic.mp4
run pic "$WAKELINE" probe -q pic.mp4
check_eq "pic.mp4 exits 0" "$rc" 0
check_grep "pic.mp4 is read as codec png" '^codec *png' pic.out
check_grep "pic.mp4 has one frame" '^frames *1 decoded' pic.out

# 6. an audio stream only (MP4 made with -vn)
ff -f lavfi -i sine=frequency=440:duration=1 -vn -c:a aac tone.mp4
run tone "$WAKELINE" probe -q tone.mp4
expect_error tone tone.mp4 'has no video stream'

# 7. absurd frame sizes in the header: refused at open, before any frame
# buffer is allocated (WL_DECODE_MAX_SIDE_PX 16384, WL_DECODE_MAX_PIXELS 100 M)
ff -f lavfi -i testsrc=size=320x256:rate=10 -frames:v 3 -pix_fmt yuv420p small.y4m
sed '1s/W320 H256/W20000 H10000/' small.y4m > huge.y4m
run huge-y4m "$WAKELINE" probe -q huge.y4m
expect_error huge-y4m huge.y4m 'announces frames of 20000x10000 pixels, more than the 16384x16384'
sed '1s/W320 H256/W60000 H60000/' small.y4m > huge2.y4m
run huge2-y4m "$WAKELINE" probe -q huge2.y4m
expect_error huge2-y4m huge2.y4m 'cannot read as video\|announces frames of 60000x60000'
sed '1s/W320 H256/W16000 H16000/' small.y4m > area.y4m # each side within bounds, 256 Mpixel in all
run area-y4m "$WAKELINE" probe -q area.y4m
expect_error area-y4m area.y4m 'announces frames of 16000x16000 pixels'
# Matroska raw video: the size comes from the PixelWidth/PixelHeight elements
ff -f lavfi -i testsrc=size=320x256:rate=10 -frames:v 3 -c:v rawvideo -pix_fmt gray small.mkv
$PY - small.mkv huge.mkv <<'EOF'
import sys
d = open(sys.argv[1], "rb").read()
w, h = bytes([0xB0, 0x82, 0x01, 0x40]), bytes([0xBA, 0x82, 0x01, 0x00])  # EBML: 320, 256
assert d.count(w) == 1 and d.count(h) == 1
d = d.replace(w, bytes([0xB0, 0x82, 0x4E, 0x20])).replace(h, bytes([0xBA, 0x82, 0x27, 0x10]))
open(sys.argv[2], "wb").write(d)  # 20000 x 10000
EOF
run huge-mkv "$WAKELINE" probe -q huge.mkv
expect_error huge-mkv huge.mkv 'announces frames of 20000x10000 pixels'
# the untouched small files still read (the bound does not refuse them)
run small-y4m "$WAKELINE" probe -q small.y4m
check_eq "small.y4m still reads (exit 0)" "$rc" 0
run small-mkv "$WAKELINE" probe -q small.mkv
check_eq "small.mkv still reads (exit 0)" "$rc" 0

# 8. track on the same files: frames before the damage are tracked, the
# damage is named in a warning (exit 0: RAW.csv is usable); unreadable
# files give one error naming the file and leave no RAW.csv.
"$PY" "$WL_SOURCE_DIR/tests/e2e/lib/track_cal.py" end.scene.json cal.json 0.25 || fail "cannot build cal.json"
run track-whole "$WAKELINE" track end.mp4 --cal cal.json -o whole.csv -q
check_eq "track end.mp4 exits 0" "$rc" 0
check_eq "track end.mp4: no warning on a whole clip" "$(cat track-whole.err)" ""
frames_in() { cut -d, -f2 "$1" | tail -n +2 | sort -u | wc -l; }
check_eq "track end.mp4: every frame in RAW.csv" "$(frames_in whole.csv)" $nframes
for f in fast-cut50 fast-cut90 frag-cut50 flip; do
	run track-$f "$WAKELINE" track $f.mp4 --threads 1 --cal cal.json -o $f.raw.csv -q
	check_eq "track $f.mp4 exits 0 (RAW.csv is usable)" "$rc" 0
	check_grep "track $f.mp4: a warning names the damage" \
		-E "warning: $f.mp4: damaged clip: [0-9]+ problems?, the first at frame -?[0-9]+, [0-9.?]+ s: " track-$f.err
	want=$(sed -n 's/^frames *\([0-9]*\) decoded.*/\1/p' $f.out)
	got=$(frames_in $f.raw.csv)
	check_num "track $f.mp4: at most the $want frames probe decodes" "$got" "<=" "$want"
	check_num "track $f.mp4: at least $((want - 2)) frames" "$got" ">=" $((want - 2))
done
for f in end-cut50.mp4 nomoov.mp4 empty.mp4 tone.mp4 huge.y4m huge.mkv; do
	n=track-${f%.*}-${f##*.}
	run $n "$WAKELINE" track $f --cal cal.json -o $n.csv -q
	expect_error $n $f .
	check_no_file "track $f writes no RAW.csv" $n.csv
done
run track-pic "$WAKELINE" track pic.mp4 --cal cal.json -o pic.raw.csv -q
expect_error track-pic cal.json 'calibrated for 480x360 coded pixels but the clip gives 64x48'
done_testing
