#!/usr/bin/env bash
# probe: decoded frame count and every frame's time agree with ffprobe
# (Debian ffmpeg 5.1, tests/data/references.md "Video timestamps") to within 1 ms on a
# constant-rate clip, the variable-frame-rate recipe, clips with B-frames and
# clips whose first timestamp is not zero.
source "$WL_SOURCE_DIR/tests/e2e/lib/decode.bash"
src=(-f lavfi -i testsrc2=size=320x240:rate=25 -frames:v 50)
vfr=(-f lavfi -i testsrc2=size=320x240:rate=25 -frames:v 50
	-vf "settb=1/1000,setpts='if(lt(N,25),N*40,1000+(N-25)*100)'" -fps_mode vfr -enc_time_base 1/1000
	-c:v libx264 -pix_fmt yuv420p -video_track_timescale 1000)

ff "${src[@]}" -c:v libx264 -pix_fmt yuv420p -bf 0 cfr.mp4
ff "${vfr[@]}" -bf 0 vfr.mp4
ff "${vfr[@]}" -bf 3 vfr-bf3.mp4
ff -f lavfi -i testsrc2=size=320x240:rate=30000/1001 -frames:v 60 -c:v libx264 -pix_fmt yuv420p -bf 3 bf3.mp4
ff "${src[@]}" -c:v libx264 -pix_fmt yuv420p -bf 2 -output_ts_offset 10 offset.mp4
ff "${src[@]}" -c:v libx264 -pix_fmt yuv420p -bf 2 -output_ts_offset 10 offset.mkv
ff "${src[@]}" -vf "setpts=PTS+7/TB" -c:v libx264 -pix_fmt yuv420p -bf 2 setpts.mp4
ff "${src[@]}" -c:v libx264 -pix_fmt yuv420p -bf 2 clip.ts

# The B-frame clips must really hold B-frames, or the check proves nothing.
for c in bf3.mp4 vfr-bf3.mp4; do
	types=$(ffprobe -v error -select_streams v:0 -show_entries frame=pict_type -of default=nw=1:nk=1 $c)
	grep -q B <<<"$types" || fail "$c has no B-frames"
done

for c in cfr.mp4 vfr.mp4 vfr-bf3.mp4 bf3.mp4 offset.mp4 offset.mkv setpts.mp4 clip.ts; do
	check_times "$c"
done

# The summary: constant vs variable rate and the intervals of the recipe
# (25 frames 40 ms apart, then 25 frames 100 ms apart; the step between is 40 ms).
grep -q '^frame rate     constant' cfr.mp4.probe.txt || fail "cfr.mp4 not reported constant"
grep -q '^frame rate     variable' vfr.mp4.probe.txt || fail "vfr.mp4 not reported variable"
grep -q '^interval       mean 0.040000 s, min 0.040000 s, max 0.040000 s' cfr.mp4.probe.txt ||
	fail "cfr.mp4 intervals: $(grep interval cfr.mp4.probe.txt)"
# mean = (1000 + 24*100 ms) / 49 = 69.387755 ms
grep -q '^interval       mean 0.069388 s, min 0.040000 s, max 0.100000 s' vfr.mp4.probe.txt ||
	fail "vfr.mp4 intervals: $(grep interval vfr.mp4.probe.txt)"
grep -q '^frames         50 decoded' vfr.mp4.probe.txt || fail "vfr.mp4 frame count"
# The container time of the first frame is reported (ffprobe's first time).
grep -q '"first_pts_s":	10,' <<<"$("$WAKELINE" probe -q --json offset.mp4)" || fail "offset.mp4 first_pts_s is not 10"
first_ts=$(ffprobe_times clip.ts | sed -n 1p)
"$WAKELINE" probe -q --json clip.ts | $PY -c "
import json, sys
j = json.load(sys.stdin)
sys.exit(0 if abs(j['first_pts_s'] - float('$first_ts')) < 1e-6 and j['frames'] == 50 else 'clip.ts: %s' % j)"
# A raw H.264 stream has no timestamps (ffprobe prints N/A): the times are
# extrapolated at the stream's nominal rate and every frame says so.
ff "${src[@]}" -c:v libx264 -pix_fmt yuv420p -bf 2 raw.h264
[ "$(ffprobe_times raw.h264 | sort -u)" = "N/A" ] || fail "raw.h264 has timestamps after all"
"$WAKELINE" probe -q --frames raw.csv raw.h264 > raw.txt || fail "probe raw.h264"
grep -q '^timestamps     50 frames had none' raw.txt || fail "raw.h264: guessed times not reported"
$PY - <<'PYEOF' || fail "raw.h264 guessed times"
import csv, sys
rows = list(csv.DictReader(open("raw.csv")))
ok = len(rows) == 50 and all(r["time_guessed"] == "1" and abs(float(r["t_s"]) - 0.04 * i) < 1e-6
                             for i, r in enumerate(rows))
sys.exit(0 if ok else "raw.h264: %d rows, first %s" % (len(rows), rows[:2]))
PYEOF
echo "0100-probe-times: ok"
