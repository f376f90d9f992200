#!/usr/bin/env bash
# wakeline live's usage and its refusals: --help; usage errors (exit 2)
# that name what to give; failures (exit 1) that name the file, device or
# URL: a V4L2 device that does not exist, an input format FFmpeg does not
# know, a malformed --publish URL, an existing RAW.csv without --overwrite
# (left as it was), a calibration that does not exist; a source that never
# opened leaves no RAW.csv; a file without --realtime is warned about.
source "$WL_SOURCE_DIR/tests/e2e/lib/live.bash"
need_synth
live_scene clip 30 1

check_exit "live --help exits 0" 0 "$WAKELINE" live --help
cp last.out help.txt
for o in --publish --packet --lcm --raw --record --realtime --reconnect --timeout-s --max-delay-ms \
	--video-size --pixel-format --q-pos --ids; do
	check_grep "--help mentions $o" -- "$o" help.txt
done

# expect STATUS TEXT ARGS...: wakeline live ARGS exits STATUS with TEXT on stderr
expect() {
	local want=$1 text=$2
	shift 2
	check_exit "live $*: exit $want" "$want" "$WAKELINE" live "$@"
	check_grep "live $*: the message says '$text'" -- "$text" last.err
}
expect 2 "give the SOURCE" --cal clip.cal.json --raw r.csv
expect 2 "give the calibration" clip.mp4 --raw r.csv
expect 2 "nothing to do" clip.mp4 --cal clip.cal.json
expect 2 "give json or binary" clip.mp4 --cal clip.cal.json --packet xml --raw r.csv
expect 2 "give KEY=VALUE" clip.mp4 --cal clip.cal.json --source-option novalue --raw r.csv
expect 2 "--max-delay-ms" clip.mp4 --cal clip.cal.json --max-delay-ms -5 --raw r.csv
expect 1 "/dev/video93" /dev/video93 --cal clip.cal.json --raw r.csv --wait-s 1
expect 1 "nosuchformat" clip.mp4 --source-format nosuchformat --cal clip.cal.json --raw r.csv
check_grep "the unknown format's message names 'ffmpeg -devices'" -- "ffmpeg -devices" last.err
# FFmpeg's device inputs come from libavdevice, which wakeline loads on the
# first --source-format: a device format is known (the message is about the
# source, not "not known")
expect 1 "cannot open the source" "testsrc=size=nosuch" --source-format lavfi --cal clip.cal.json --raw r.csv
expect 1 "udp://127.0.0.1:99999" clip.mp4 --cal clip.cal.json --publish udp://127.0.0.1:99999
expect 1 "nosuch.json" clip.mp4 --cal nosuch.json --raw r.csv
check_no_file "a run that never opened its source leaves no r.csv" r.csv
# a file without --realtime is read as fast as it decodes: said so
check_exit "live on a file without --realtime succeeds" 0 "$WAKELINE" live clip.mp4 --cal clip.cal.json --raw fast.csv -q
check_grep "a file without --realtime is warned about" "warning: clip.mp4 is a file: .*--realtime" last.err
echo "keep me" > exists.csv
expect 1 "overwrite" clip.mp4 --cal clip.cal.json --raw exists.csv
check_eq "an existing RAW.csv is left as it was without --overwrite" "$(cat exists.csv)" "keep me"
check_exit "--overwrite succeeds" 0 \
	"$WAKELINE" live clip.mp4 --realtime --max-delay-ms 1000 --cal clip.cal.json --raw exists.csv --overwrite -q
whole_lines exists.csv 14
check_eq "exists.csv holds the clip's 30 frames of 2 robots" "$(($(wc -l < exists.csv) - 1))" 60
done_testing
