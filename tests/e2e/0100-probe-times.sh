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
	ffprobe -v error -select_streams v:0 -show_entries frame=pict_type -of default=nw=1:nk=1 $c > $c.types
	check_grep "$c holds B-frames (ffprobe)" B $c.types
done

for c in cfr.mp4 vfr.mp4 vfr-bf3.mp4 bf3.mp4 offset.mp4 offset.mkv setpts.mp4 clip.ts; do
	check_times "$c"
done

# The summary: constant vs variable rate and the intervals of the recipe
# (25 frames 40 ms apart, then 25 frames 100 ms apart; the step between is 40 ms).
check_grep "cfr.mp4 is reported constant rate" '^frame rate     constant' cfr.mp4.probe.txt
check_grep "vfr.mp4 is reported variable rate" '^frame rate     variable' vfr.mp4.probe.txt
check_grep "cfr.mp4 intervals: all 40 ms" \
	'^interval       mean 0.040000 s, min 0.040000 s, max 0.040000 s' cfr.mp4.probe.txt
# mean = (1000 + 24*100 ms) / 49 = 69.387755 ms
check_grep "vfr.mp4 intervals: mean 69.388 ms, 40 to 100 ms" \
	'^interval       mean 0.069388 s, min 0.040000 s, max 0.100000 s' vfr.mp4.probe.txt
check_grep "vfr.mp4: 50 frames decoded" '^frames         50 decoded' vfr.mp4.probe.txt
# The container time of the first frame is reported (ffprobe's first time).
"$WAKELINE" probe -q --json offset.mp4 > offset.json || fail "probe --json offset.mp4 exited $?"
check_grep "offset.mp4: first_pts_s is 10" '"first_pts_s":	10,' offset.json
first_ts=$(ffprobe_times clip.ts | sed -n 1p)
"$WAKELINE" probe -q --json clip.ts > clip.ts.json || fail "probe --json clip.ts exited $?"
check "clip.ts: first_pts_s is ffprobe's first time ($first_ts s) and 50 frames" "$PY" -c "
import json, sys
j = json.load(open('clip.ts.json'))
sys.exit(0 if abs(j['first_pts_s'] - float('$first_ts')) < 1e-6 and j['frames'] == 50 else 'clip.ts: %s' % j)"
# A raw H.264 stream has no timestamps (ffprobe prints N/A): the times are
# extrapolated at the stream's nominal rate and every frame says so.
ff "${src[@]}" -c:v libx264 -pix_fmt yuv420p -bf 2 raw.h264
check_eq "raw.h264 has no timestamps (ffprobe: N/A)" "$(ffprobe_times raw.h264 | sort -u)" "N/A"
check_exit "probe --frames raw.h264 succeeds" 0 "$WAKELINE" probe -q --frames raw.csv raw.h264
cp last.out raw.txt
check_grep "raw.h264: the 50 guessed times are reported" '^timestamps     50 frames had none' raw.txt
check_py "raw.h264: 50 rows at 40 ms steps, each marked time_guessed" <<'PYEOF'
import csv, sys
rows = list(csv.DictReader(open("raw.csv")))
ok = len(rows) == 50 and all(r["time_guessed"] == "1" and abs(float(r["t_s"]) - 0.04 * i) < 1e-6
                             for i, r in enumerate(rows))
sys.exit(0 if ok else "raw.h264: %d rows, first %s" % (len(rows), rows[:2]))
PYEOF
done_testing
