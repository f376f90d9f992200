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
check_eq "wakeline live exits 0" "$rc" 0
check_grep "the end of the stream is said" "the stream stopped: no data for 1.0 s" live.err
check_grep "every frame is tracked (120 in, 120 tracked, 0 dropped)" "^live: 120 frames in, 120 tracked, 0 dropped" live.out
check_grep "the latency figures are given" -E "latency median [0-9.]+ ms, p99 [0-9.]+ ms" live.out

check "the poses match offline tracking (0.1 mm) and the speed the truth (0.01 m/s)" \
	"$PY" "$LIB/live_check.py" offline.csv poses.csv --live-raw live.csv --truth clip.truth.csv \
	--pos-mm 0.1 --speed-mps 0.01
whole_lines live.csv 12

# the recorded RAW.csv goes through the normal pipeline
check_exit "clean takes the live RAW.csv" 0 "$WAKELINE" clean live.csv -o clean.csv --quiet
check_exit "measure takes its CLEAN.csv" 0 "$WAKELINE" measure clean.csv -o summary.json --quiet
check_py "summary.json has the two robots" <<'PY'
import json
runs = json.load(open("summary.json"))["runs"]
ids = sorted({r["id"] for r in runs})
assert ids == [3, 7], ids
PY

ffprobe -v error -count_frames -select_streams v:0 -show_entries stream=nb_read_frames -of csv=p=0 rec.ts \
	>rec.count 2>&1 || true
check_eq "the stream copy rec.ts holds the 120 frames (ffprobe)" "$(grep -m1 '[0-9]' rec.count || cat rec.count)" 120
done_testing
