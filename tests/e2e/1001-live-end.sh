#!/usr/bin/env bash
# How a live run ends (invented synthetic clip, two tagged robots, 30 fps):
#  - a clip played at its own rate (--realtime) ends with "the stream
#    ended", exit 0, every frame recorded and equal to offline track
#    (0.1 mm), and takes about its duration (paced, not as fast as it can);
#  - a TCP sender killed in mid-stream (the connection closes): the run ends
#    cleanly with a message, exit 0, RAW.csv whole lines of the frames seen;
#  - a TCP sender that hangs (SIGSTOP: the connection stays open, nothing
#    comes, as when a cable is pulled): the run ends after --timeout-s with
#    "the stream stopped: no data for 1.0 s", exit 0.
source "$WL_SOURCE_DIR/tests/e2e/lib/live.bash"
need_synth
live_scene clip 30 4
"$WAKELINE" track clip.mp4 --cal clip.cal.json -o offline.csv --quiet || fail "track exited $?"

# --- a file at its own rate
start_client poses.csv --idle 2
t0=$(date +%s.%N)
"$WAKELINE" live clip.mp4 --realtime --cal clip.cal.json --raw file.csv --max-delay-ms 1000 --max-lag-ms 5000 \
	--publish "udp://127.0.0.1:$JPORT" --publish "udp://127.0.0.1:$BPORT?format=binary" \
	>file.out 2>file.err || { cat file.err; fail "live on a file exited $?"; }
t1=$(date +%s.%N)
wait "$CLIENT_PID" || fail "the test client failed"
cat file.err file.out
grep -q "the stream ended: end of stream" file.err || fail "no end-of-stream message"
$PY "$LIB/live_check.py" offline.csv poses.csv --live-raw file.csv || fail "the file's poses differ from offline"
awk -v a="$t0" -v b="$t1" 'BEGIN { d = b - a; printf "realtime run took %.2f s for a 4 s clip\n", d; exit !(d >= 3.8) }' ||
	fail "--realtime did not pace the clip"

# tcp_sender: ffmpeg serving the clip (MPEG-TS, at its own rate) on a TCP
# port the kernel just gave out, once it listens there (another port if it
# could not bind); sets FF and TCP_PORT
tcp_sender() {
	local try k
	for try in 1 2 3 4 5; do
		TCP_PORT=$($PY -c 'import socket; s = socket.socket(); s.bind(("127.0.0.1", 0)); print(s.getsockname()[1])')
		ffmpeg -nostdin -v error -re -i clip.mp4 -c copy -f mpegts "tcp://127.0.0.1:$TCP_PORT?listen=1" &
		FF=$!
		for k in $(seq 100); do
			ss -Hltnp "sport = :$TCP_PORT" | grep -q "pid=$FF," && return 0
			kill -0 "$FF" 2>/dev/null || break
			sleep 0.1
		done
		kill "$FF" 2>/dev/null || true
		wait "$FF" 2>/dev/null || true
	done
	fail "ffmpeg could not listen on a TCP port"
}

# --- TCP: the sender dies in mid-stream
tcp_sender
"$WAKELINE" live "tcp://127.0.0.1:$TCP_PORT" --cal clip.cal.json --raw tcp.csv --timeout-s 5 >tcp.out 2>tcp.err &
LP=$!
wait_rows tcp.csv 60 || fail "no poses from the TCP stream"
kill -9 "$FF"
wait "$FF" 2>/dev/null || true
rc=0
wait "$LP" || rc=$?
cat tcp.err tcp.out
[ "$rc" -eq 0 ] || fail "live exited $rc when the TCP sender died"
grep -Eq "wakeline live: (the stream ended|the connection dropped)" tcp.err || fail "no message for the lost connection"
whole_lines tcp.csv 12
rows=$(($(wc -l < tcp.csv) - 1))
[ "$rows" -ge 40 ] && [ "$rows" -lt 240 ] || fail "tcp.csv has $rows rows: expected part of the clip"
"$WAKELINE" clean tcp.csv -o tcp.clean.csv --quiet || fail "clean does not take the RAW.csv of a dropped connection"

# --- TCP: the sender hangs with the connection open
tcp_sender
"$WAKELINE" live "tcp://127.0.0.1:$TCP_PORT" --cal clip.cal.json --raw hang.csv --timeout-s 1 >hang.out 2>hang.err &
LP=$!
wait_rows hang.csv 20 || fail "no poses from the TCP stream"
kill -STOP "$FF"
rc=0
wait "$LP" || rc=$?
kill -9 "$FF" 2>/dev/null || true
wait "$FF" 2>/dev/null || true
cat hang.err hang.out
[ "$rc" -eq 0 ] || fail "live exited $rc when the sender hung"
grep -q "wakeline live: the stream stopped: no data for 1.0 s" hang.err || fail "no message for the silent connection"
whole_lines hang.csv 12
echo "ok"
