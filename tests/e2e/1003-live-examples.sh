#!/usr/bin/env bash
# The client examples of wakeline live (examples/) against a live run of an
# invented synthetic clip (two tagged robots, 30 fps, 4 s, played with
# --realtime), one publish target each:
#  - examples/live_receive.py (binary packets): a line per packet, 240 in
#    all, positions equal to offline track within float32 precision;
#  - examples/live_watchdog.py (JSON) for robot 3: drives while poses come,
#    then "STOP no pose for ... ms" after the stream ends;
#  - examples/live_receive.c (built as live_receive_example; binary): robot
#    7's 120 poses, then a STOP.
source "$WL_SOURCE_DIR/tests/e2e/lib/live.bash"
need_synth
EX=$WL_SOURCE_DIR/examples
CEX=$WL_BUILD_DIR/live_receive_example
[ -x "$CEX" ] || fail "$CEX is not built"
live_scene clip 30 4
"$WAKELINE" track clip.mp4 --cal clip.cal.json -o offline.csv --quiet || fail "track exited $?"

p1=$(free_udp_port); p2=$(free_udp_port); p3=$(free_udp_port)
$PY "$EX/live_receive.py" --host 127.0.0.1 --port "$p1" --timeout 5 > recv.csv 2> recv.err &
R1=$!
$PY "$EX/live_watchdog.py" --host 127.0.0.1 --port "$p2" --id 3 --stop-after 0.5 > wd.txt 2> wd.err &
R2=$!
"$CEX" "$p3" 7 200 > c.txt 2> c.err &
R3=$!
for p in "$p1" "$p2" "$p3"; do
	for k in $(seq 100); do ss -Hlun "sport = :$p" | grep -q . && break; sleep 0.1; done
done
check_exit "live with three publish targets succeeds" 0 \
	"$WAKELINE" live clip.mp4 --realtime --cal clip.cal.json --max-delay-ms 1000 --max-lag-ms 5000 -q \
	--publish "udp://127.0.0.1:$p1?format=binary" --publish "udp://127.0.0.1:$p2" \
	--publish "udp://127.0.0.1:$p3?format=binary"
rc=0; wait "$R1" || rc=$?
check_eq "live_receive.py exits 0 ($(head -c 200 recv.err))" "$rc" 0
rc=0; wait "$R2" || rc=$?
check_eq "live_watchdog.py exits 0 ($(head -c 200 wd.err))" "$rc" 0
rc=0; wait "$R3" || rc=$?
check_eq "live_receive.c exits 0 ($(head -c 200 c.err))" "$rc" 0

check_py "live_receive.py: 240 poses equal to offline within float32 precision" <<'PY'
import csv
off = {(int(r["frame"]), int(r["id"])): r for r in csv.DictReader(open("offline.csv"))}
got = list(csv.DictReader(open("recv.csv")))
assert len(got) == len(off) == 240, (len(got), len(off))
worst = 0
for r in got:
    o = off[(int(r["frame"]), int(r["id"]))]
    assert r["status"] == o["status"], r
    if o["status"] == "ok":
        worst = max(worst, abs(float(r["x_m"]) - float(o["x_m"])), abs(float(r["y_m"]) - float(o["y_m"])))
assert worst < 2e-6, worst   # float32 and 6 decimals
print("live_receive.py: %d poses, largest difference %.2e m" % (len(got), worst))
PY
check_grep "the watchdog drives while poses come" "^DRIVE " wd.txt
check_grep "the watchdog stops when the poses stop" -E "^STOP no pose for [0-9]+ ms" wd.txt
check_eq "the watchdog stops once" "$(grep -c '^STOP' wd.txt)" 1
check "the watchdog does not drive after stopping" awk '/^STOP/ { s = 1 } /^DRIVE/ && s { exit 1 }' wd.txt
note "watchdog: $(grep -c '^DRIVE' wd.txt) drive commands, then: $(grep '^STOP' wd.txt)"
check_eq "live_receive.c prints robot 7's 120 poses" "$(grep -c '^POSE ' c.txt)" 120
check_eq "live_receive.c ends with a STOP" "$(tail -1 c.txt | cut -c1-4)" STOP
done_testing
