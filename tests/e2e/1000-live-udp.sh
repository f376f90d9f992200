#!/usr/bin/env bash
# live over loopback, in real time: a synthetic clip (invented scene, two
# tagged robots, 640x400 at 30 fps, 4 s) is streamed by the ffmpeg CLI as
# MPEG-TS over UDP at its own rate (-re, stream copy) into `wakeline live`,
# which publishes JSON to one socket and the binary layout to another of
# the test client (live_client.py, Python standard library; it decodes the
# binary layout with struct from the table in docs/live.md, not with
# wakeline's decoder).  Checked (live_check.py):
#  - every frame's pose arrives, once, in order (seq 0, 1, 2, ... as
#    received), for both formats, and the binary packets say what the
#    JSON ones say;
#  - positions equal offline `wakeline track` on the same clip within
#    0.1 mm, times within 2 us, the same ok/lost status;
#  - RAW.csv recorded live has offline's rows (within 0.1 mm), and `wakeline
#    clean` and `wakeline measure` take it;
#  - the causal filter's speed against the renderer's true speed: RMS error
#    <= 0.01 m/s after each robot's first 0.5 s;
#  - the stream copy (--record rec.ts) holds every frame (ffprobe);
#  - the run ends by itself when the stream stops (no data for 1 s) with a
#    message, exit 0, and reports its latency.
source "$WL_SOURCE_DIR/tests/e2e/lib/live.bash"
need_synth
live_scene clip 30 4
"$WAKELINE" track clip.mp4 --cal clip.cal.json -o offline.csv --quiet || fail "track exited $?"

start_client poses.csv --idle 2.5
# generous --max-delay-ms and --max-lag-ms: the machine running the suite is
# shared, and this test is about delivery, not about dropping or skipping
# (scripts/bench-live shows those)
start_live live --cal clip.cal.json --timeout-s 1 --max-delay-ms 1000 --max-lag-ms 5000 --raw live.csv \
	--record rec.ts \
	--publish "udp://127.0.0.1:$JPORT" --publish "udp://127.0.0.1:$BPORT?format=binary" --status-s 1
send_clip clip.mp4 "$IN_PORT" || fail "ffmpeg could not send the clip"
rc=0
wait "$LIVE_PID" || rc=$?
wait "$CLIENT_PID" || fail "the test client failed"
cat live.err live.out
[ "$rc" -eq 0 ] || fail "wakeline live exited $rc"
grep -q "the stream stopped: no data for 1.0 s" live.err || fail "no end-of-stream message"
grep -q "^live: 120 frames in, 120 tracked, 0 dropped" live.out || fail "not every frame was tracked"
grep -Eq "latency median [0-9.]+ ms, p99 [0-9.]+ ms" live.out || fail "no latency figures"

$PY "$LIB/live_check.py" offline.csv poses.csv --live-raw live.csv --truth clip.truth.csv \
	--pos-mm 0.1 --speed-mps 0.01 || fail "the poses do not match offline tracking"
whole_lines live.csv 12

# the recorded RAW.csv goes through the normal pipeline
"$WAKELINE" clean live.csv -o clean.csv --quiet || fail "clean of the live RAW.csv exited $?"
"$WAKELINE" measure clean.csv -o summary.json --quiet || fail "measure exited $?"
$PY - <<'PY' || fail "summary.json lacks the two robots"
import json
runs = json.load(open("summary.json"))["runs"]
ids = sorted({r["id"] for r in runs})
assert ids == [3, 7], ids
PY

ffprobe -v error -count_frames -select_streams v:0 -show_entries stream=nb_read_frames -of csv=p=0 rec.ts \
	>rec.count || fail "ffprobe cannot read rec.ts"
n=$(grep -m1 '[0-9]' rec.count)
[ "$n" -eq 120 ] || fail "rec.ts holds $n frames, not 120"
echo "ok"
