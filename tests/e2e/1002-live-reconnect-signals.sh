#!/usr/bin/env bash
# wakeline live across a sender's restart and under signals (invented
# synthetic clip, two tagged robots, 30 fps, 4 s, MPEG-TS over UDP):
#  - --reconnect: the clip is sent, the stream stops, wakeline connects
#    again and the clip is sent once more; then SIGINT.  One session of
#    packets with seq 0, 1, 2, ... across the gap; RAW.csv holds both
#    passes with frame numbers going on and times increasing, and clean
#    takes it; exit 0 with "stopped" and "1 reconnects";
#  - SIGINT in mid-stream: exit 0, RAW.csv whole lines that clean takes;
#  - SIGKILL at two points in mid-stream (after 20 and 150 rows): RAW.csv
#    still whole lines (one write per frame) that clean takes.
source "$WL_SOURCE_DIR/tests/e2e/lib/live.bash"
need_synth
live_scene clip 30 4

# wait_for FILE TEXT: up to 20 s for TEXT to appear in FILE
wait_for() {
	local k
	for k in $(seq 200); do
		grep -q "$2" "$1" 2>/dev/null && return 0
		sleep 0.1
	done
	return 1
}

# --- reconnect
start_client poses.csv --idle 30 --stop-file live-ended
start_live rc --cal clip.cal.json --timeout-s 1 --reconnect --max-delay-ms 1000 --max-lag-ms 5000 --raw rc.csv \
	--publish "udp://127.0.0.1:$JPORT"
send_clip clip.mp4 "$IN_PORT" || fail "ffmpeg could not send the clip"
wait_for rc.err "connecting again" || { cat rc.err; fail "no reconnection after the stream stopped"; }
# the old socket is closed before that message; wait for the new one
wait_bound "$LIVE_PID" "$IN_PORT" || fail "wakeline does not listen again"
send_clip clip.mp4 "$IN_PORT" || fail "ffmpeg could not send the clip again"
wait_for rc.err "connected again" || { cat rc.err; fail "no 'connected again'"; }
wait_rows rc.csv 470 || fail "the second pass did not come through"
sleep 0.5
kill -INT "$LIVE_PID"
rc=0
wait "$LIVE_PID" || rc=$?
touch live-ended
wait "$CLIENT_PID" || fail "the test client failed"
check_eq "live --reconnect exits 0 on SIGINT" "$rc" 0
check_grep "reconnect: 'stopped' is said" "wakeline live: stopped" rc.err
check_grep "the summary counts the reconnection" "1 reconnects" rc.out
whole_lines rc.csv 12
check_py "RAW.csv across the reconnection is one run: frames and times increasing" <<'PY'
import csv
rows = list(csv.DictReader(open("rc.csv")))
for i in ("3", "7"):
    r = [x for x in rows if x["id"] == i]
    fr = [int(x["frame"]) for x in r]
    ts = [float(x["t_s"]) for x in r]
    assert len(r) >= 230, (i, len(r))          # both passes (a frame or two may fall in the gap)
    assert all(b > a for a, b in zip(fr, fr[1:])), "frames go back"
    assert all(b > a for a, b in zip(ts, ts[1:])), "times go back"
    assert max(fr) >= 230, max(fr)
print("reconnect: %d rows, frames and times increasing across the gap" % len(rows))
PY
check_py "the packets across the reconnection are one session, seq without a gap" <<'PY'
import csv
p = [r for r in csv.DictReader(open("poses.csv")) if r["kind"] == "json"]
assert len({r["session"] for r in p}) == 1, "more than one session"
assert [int(r["seq"]) for r in p] == list(range(len(p))), "seq not 0, 1, 2, ..."
assert len(p) >= 460, len(p)
print("reconnect: %d packets, one session, seq without a gap" % len(p))
PY
check_exit "clean takes the RAW.csv across a reconnection" 0 "$WAKELINE" clean rc.csv -o rc.clean.csv --quiet

# --- SIGINT in mid-stream
start_live int --cal clip.cal.json --timeout-s 5 --raw int.csv
send_clip clip.mp4 "$IN_PORT" &
FF=$!
wait_rows int.csv 60 || fail "no poses before SIGINT"
kill -INT "$LIVE_PID"
rc=0
wait "$LIVE_PID" || rc=$?
kill "$FF" 2>/dev/null || true
wait "$FF" 2>/dev/null || true
check_eq "SIGINT in mid-stream: live exits 0" "$rc" 0
check_grep "SIGINT: 'stopped' is said" "wakeline live: stopped" int.err
whole_lines int.csv 12
check_exit "clean takes the RAW.csv of an interrupted run" 0 "$WAKELINE" clean int.csv -o int.clean.csv --quiet

# --- SIGKILL at two points
for at in 20 150; do
	start_live kill --cal clip.cal.json --timeout-s 5 --raw "kill$at.csv"
	send_clip clip.mp4 "$IN_PORT" &
	FF=$!
	wait_rows "kill$at.csv" "$at" || fail "no poses before SIGKILL"
	kill -KILL "$LIVE_PID"
	wait "$LIVE_PID" 2>/dev/null || true
	kill "$FF" 2>/dev/null || true
	wait "$FF" 2>/dev/null || true
	whole_lines "kill$at.csv" 12
	note "SIGKILL after $at rows or more: $(($(wc -l < "kill$at.csv") - 1)) whole rows"
	check_exit "clean takes the RAW.csv of a run killed after $at rows" 0 \
		"$WAKELINE" clean "kill$at.csv" -o "kill$at.clean.csv" --quiet
done
done_testing
