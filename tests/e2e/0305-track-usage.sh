#!/usr/bin/env bash
# track / colours: usage errors exit 2, failures exit 1 with a message that
# names the file, and no output is left behind on failure.
source "$WL_SOURCE_DIR/tests/e2e/lib/track.bash"
expect() { # CODE CMD...
	local want=$1; shift
	set +e; "$@" >out.txt 2>err.txt; local got=$?; set -e
	[ "$got" -eq "$want" ] || fail "'$*' exited $got, expected $want: $(cat err.txt)"
}
expect 0 "$WAKELINE" track --help
grep -q -- '--cal' out.txt || fail "track --help does not list --cal"
expect 0 "$WAKELINE" colours --help
expect 2 "$WAKELINE" track
expect 2 "$WAKELINE" track clip.mp4 -o raw.csv
expect 2 "$WAKELINE" track clip.mp4 --cal cal.json
expect 2 "$WAKELINE" track clip.mp4 --cal cal.json -o raw.csv --mode sonar
expect 2 "$WAKELINE" track clip.mp4 --cal cal.json -o raw.csv --ids 3,x
expect 2 "$WAKELINE" track clip.mp4 --cal cal.json -o raw.csv --max-hamming 3
expect 2 "$WAKELINE" colours clip.mp4 --at 1
expect 2 "$WAKELINE" colours clip.mp4 --at 1 --px 3,4 --box 1,2,3,4
# a clip made with the ffmpeg CLI (testsrc2) and a calibration that does not exist
ffmpeg -v error -nostdin -y -f lavfi -i testsrc2=size=320x240:rate=10 -t 1 -pix_fmt yuv420p clip.mp4
expect 1 "$WAKELINE" track clip.mp4 --cal missing.json -o raw.csv
grep -q 'missing.json' err.txt || fail "no file named: $(cat err.txt)"
[ ! -e raw.csv ] || fail "raw.csv left behind"
# a bad ROBOTS.csv names its line
printf 'id,front_hsv_lo,front_hsv_hi\n1,"200,0,0","8,255,255"\n' > robots.csv
expect 1 "$WAKELINE" track clip.mp4 --cal missing.json -o raw.csv --robots robots.csv
grep -q 'robots.csv:2' err.txt || fail "no line named: $(cat err.txt)"
expect 1 "$WAKELINE" colours nothere.mp4 --at 0 --px 3,3
grep -q 'nothere.mp4' err.txt || fail "no file named: $(cat err.txt)"
expect 1 "$WAKELINE" colours clip.mp4 --at 50 --px 3,3
grep -q 'ends' err.txt || fail "no end-of-clip message: $(cat err.txt)"
expect 0 "$WAKELINE" colours clip.mp4 --at 0.5 --px 10,10 --radius 3
grep -q '^hue,' out.txt || fail "no hue line"
echo "ok"
