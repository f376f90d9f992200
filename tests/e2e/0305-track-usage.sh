#!/usr/bin/env bash
# track / colours: usage errors exit 2, failures exit 1 with a message that
# names the file, and no output is left behind on failure.
source "$WL_SOURCE_DIR/tests/e2e/lib/track.bash"
# expect CODE CMD...: the check that CMD exits with CODE (output in last.out, last.err)
expect() {
	local want=$1
	shift
	check_exit "'${*#"$WAKELINE" }' exits $want" "$want" "$@"
}
expect 0 "$WAKELINE" track --help
check_grep "track --help lists --cal" -- '--cal' last.out
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
check_grep "the error names missing.json" 'missing.json' last.err
check_no_file "no raw.csv is left behind" raw.csv
# a bad ROBOTS.csv names its line
printf 'id,front_hsv_lo,front_hsv_hi\n1,"200,0,0","8,255,255"\n' > robots.csv
expect 1 "$WAKELINE" track clip.mp4 --cal missing.json -o raw.csv --robots robots.csv
check_grep "the error names robots.csv line 2" 'robots.csv:2' last.err
expect 1 "$WAKELINE" colours nothere.mp4 --at 0 --px 3,3
check_grep "the error names nothere.mp4" 'nothere.mp4' last.err
expect 1 "$WAKELINE" colours clip.mp4 --at 50 --px 3,3
check_grep "the error says the clip ends" 'ends' last.err
expect 0 "$WAKELINE" colours clip.mp4 --at 0.5 --px 10,10 --radius 3
check_grep "colours prints a hue line" '^hue,' last.out
done_testing
