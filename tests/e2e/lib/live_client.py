"""A test client of `wakeline live` (Python standard library only): receives
pose datagrams on two UDP sockets of its own on 127.0.0.1 (one for JSON, one
for the binary layout), decodes them without wakeline's code and writes one
CSV row per packet in arrival order.

The binary layout is read with struct from the table in docs/live.md
("Binary packet"), independently of src/formats/pose_packet.c:

    offset  type     field            offset  type  field
    0       char[4]  magic "WLPS"     40      f32   x_m
    4       u16      version (1)      44      f32   y_m
    6       u16      size (72)        48      f32   heading_rad
    8       u32      session          52      f32   vx_mps
    12      u32      seq              56      f32   vy_mps
    16      u32      frame            60      f32   yaw_rate_radps
    20      i32      id               64      f32   latency_ms
    24      f64      t_s              68      u8    status (0 ok, 1 lost, 2 held)
    32      f64      arrival_unix_s   69      3 bytes zero
little-endian throughout.

usage: live_client.py PORTFILE OUT.csv [--idle S] [--max-s S]
PORTFILE receives "JSON_PORT BINARY_PORT" once both sockets are bound (the
kernel picks free ports, so parallel tests never collide).  Receiving ends
--idle seconds after the last packet (default 3) once one has come (0.5 s
once --stop-file exists), or after --max-s seconds in all (default 120).
"""
import argparse
import csv
import json
import math
import os
import select
import socket
import struct
import time

BIN = struct.Struct("<4sHHIIIidd7fB3s")
assert BIN.size == 72
STATUS = {0: "ok", 1: "lost", 2: "held"}
COLS = ["kind", "session", "seq", "frame", "id", "status", "t_s", "arrival_unix_s", "x_m", "y_m",
        "heading_rad", "vx_mps", "vy_mps", "yaw_rate_radps", "latency_ms", "recv_unix_s"]

ap = argparse.ArgumentParser()
ap.add_argument("portfile")
ap.add_argument("out")
ap.add_argument("--idle", type=float, default=3.0)
ap.add_argument("--max-s", type=float, default=120.0)
ap.add_argument("--stop-file", help="once this file exists, stop 0.5 s after the last packet")
a = ap.parse_args()


def sock():
    s = socket.socket(socket.AF_INET, socket.SOCK_DGRAM)
    s.setsockopt(socket.SOL_SOCKET, socket.SO_RCVBUF, 4 << 20)
    s.bind(("127.0.0.1", 0))
    return s


sj, sb = sock(), sock()
tmp = a.portfile + ".tmp"
with open(tmp, "w") as f:
    f.write("%d %d\n" % (sj.getsockname()[1], sb.getsockname()[1]))
os.rename(tmp, a.portfile)


def num(v):
    return "" if v is None or (isinstance(v, float) and math.isnan(v)) else repr(float(v))


def from_json(d, now):
    p = json.loads(d.decode("utf-8"))
    assert p["type"] == "wakeline.pose" and p["version"] == 1, p
    return ["json", p["session"], p["seq"], p["frame"], p["id"], p["status"]] + \
        [num(p[k]) for k in COLS[6:15]] + [repr(now)]


def from_binary(d, now):
    assert len(d) >= 72, len(d)
    (magic, version, size, session, seq, frame, rid, t, arrival, x, y, h, vx, vy, yr, lat, status,
     pad) = BIN.unpack_from(d)
    assert magic == b"WLPS" and version == 1 and size == 72 == len(d) and pad == b"\0\0\0", (magic, version, size)
    return ["binary", session, seq, frame, rid, STATUS[status]] + \
        [num(v) for v in (t, arrival, x, y, h, vx, vy, yr, lat)] + [repr(now)]


rows = []
t_end = time.time() + a.max_s
last = None
while True:
    now = time.time()
    idle = 0.5 if a.stop_file and os.path.exists(a.stop_file) else a.idle
    wait = t_end - now if last is None else min(t_end, last + idle) - now
    if wait <= 0:
        break
    wait = min(wait, 0.25)  # look at the stop file now and then
    ready, _, _ = select.select([sj, sb], [], [], wait)
    for s in ready:
        d = s.recv(65536)
        now = time.time()
        rows.append(from_json(d, now) if s is sj else from_binary(d, now))
        last = now
with open(a.out, "w", newline="") as f:
    w = csv.writer(f)
    w.writerow(COLS)
    w.writerows(rows)
print("live_client: %d JSON and %d binary packets" % (sum(r[0] == "json" for r in rows),
                                                    sum(r[0] == "binary" for r in rows)))
