#!/usr/bin/env bash
# wakeline live over LCM (builds with liblcm-dev; skipped otherwise, exit 77):
# a live run of an invented synthetic clip (two tagged robots, 30 fps, 4 s,
# --realtime) publishes wakeline.pose_t on a UDP multicast provider with
# TTL 0 (this machine only) and a port of its own; LCM's lcm-logger
# (Debian's liblcm-bin) records the bus, and the messages are decoded with
# the Python coder that LCM's lcm-gen makes from
# src/formats/lcm/wakeline_pose.lcm (LCM's reference coder, not ours).
# Every frame's message arrives, seq 0, 1, 2, ..., positions equal offline
# track within 0.1 mm.
source "$WL_SOURCE_DIR/tests/e2e/lib/live.bash"
if "$WAKELINE" live x --cal x --lcm 2>&1 | grep -q "no LCM"; then skip_all "this build has no LCM (liblcm-dev)"; fi
command -v lcm-logger >/dev/null || skip_all "lcm-logger (liblcm-bin) is not installed"
command -v lcm-gen >/dev/null || skip_all "lcm-gen (liblcm-bin) is not installed"
need_synth
live_scene clip 30 4
"$WAKELINE" track clip.mp4 --cal clip.cal.json -o offline.csv --quiet || fail "track exited $?"
mkdir py
lcm-gen -p --ppath py "$WL_SOURCE_DIR/src/formats/lcm/wakeline_pose.lcm" || fail "lcm-gen failed"

port=$(free_udp_port)
url="udpm://239.255.76.67:$port?ttl=0"
lcm-logger --lcm-url="$url" -f bus.lcm >logger.out 2>&1 &
LG=$!
wait_bound "$LG" "$port" || skip_all "lcm-logger cannot listen on $url (no multicast here?): $(head -c 200 logger.out)"
check_exit "live publishing on LCM succeeds" 0 \
	"$WAKELINE" live clip.mp4 --realtime --cal clip.cal.json --max-delay-ms 1000 --max-lag-ms 5000 -q \
	--lcm-url "$url" --lcm-channel WL_TEST_POSE
sleep 0.5
kill -INT "$LG"
wait "$LG" || true

check_py "every frame's LCM message arrives in order, equal to offline within 0.1 mm" <<'PY'
import csv, math, struct, sys
sys.path.insert(0, "py")
from wakeline import pose_t
# LCM's event log: per event a big-endian header (sync word 0xEDA1DA01,
# event number, timestamp, channel and data lengths), the channel, the data
d = open("bus.lcm", "rb").read()
msgs, i = [], 0
while i + 28 <= len(d):
    sync, _, _, cl, dl = struct.unpack_from(">IqqII", d, i)
    assert sync == 0xEDA1DA01, "not an LCM log"
    ch = d[i + 28:i + 28 + cl].decode()
    if ch == "WL_TEST_POSE":
        msgs.append(pose_t.decode(d[i + 28 + cl:i + 28 + cl + dl]))
    i += 28 + cl + dl
off = {(int(r["frame"]), int(r["id"])): r for r in csv.DictReader(open("offline.csv"))}
assert [m.seq for m in msgs] == list(range(len(msgs))), "seq not 0, 1, 2, ..."
assert len(msgs) == len(off), (len(msgs), len(off))
worst = 0.0
for m in msgs:
    o = off[(m.frame, m.id)]
    assert m.version == 1 and ["ok", "lost", "held"][m.status] == o["status"], (m.frame, m.id)
    if o["status"] == "ok":
        worst = max(worst, math.hypot(m.x_m - float(o["x_m"]), m.y_m - float(o["y_m"])) * 1e3)
assert worst <= 0.1, worst
print("LCM: %d messages, largest position difference from offline %.4f mm" % (len(msgs), worst))
PY
done_testing
