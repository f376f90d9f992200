#!/usr/bin/env python3
"""live_receive.py: receives the poses `wakeline live` publishes and prints
them, one line per robot per frame.  Python standard library only.

This is an invented example for the packet formats of docs/live.md; copy
what you need into your own controller.

    wakeline live udp://@:5000 --cal cal.json --publish udp://127.0.0.1:9000
    python3 examples/live_receive.py --port 9000

Both packet formats are read (JSON starts with '{', the binary one with the
magic "WLPS"), so one receiver serves --packet json and --packet binary.
With --group 239.255.0.1 the socket joins a multicast group (wakeline's
--publish udp://239.255.0.1:9000).
"""
import argparse
import json
import math
import socket
import struct
import sys
import time

# The binary layout of docs/live.md: little-endian, 72 bytes (version 1).
BINARY = struct.Struct("<4sHHIIIidd7fB3x")
STATUS = {0: "ok", 1: "lost", 2: "held"}


def decode(data):
    """One datagram -> a dict with the JSON packet's keys, or None if it is
    not a wakeline pose packet of version 1."""
    if data[:1] == b"{":
        p = json.loads(data.decode("utf-8"))
        if p.get("type") != "wakeline.pose" or p.get("version") != 1:
            return None
        for k, v in p.items():  # JSON null -> NaN, as in the binary form
            if v is None:
                p[k] = math.nan
        return p
    if len(data) >= BINARY.size and data[:4] == b"WLPS":
        (_, version, size, session, seq, frame, rid, t_s, arrival, x, y, h, vx, vy, yr, lat,
         status) = BINARY.unpack_from(data)
        if version != 1 or size < BINARY.size:
            return None
        return {"type": "wakeline.pose", "version": 1, "session": session, "seq": seq, "frame": frame,
                "id": rid, "status": STATUS.get(status, "?"), "t_s": t_s, "arrival_unix_s": arrival,
                "x_m": x, "y_m": y, "heading_rad": h, "vx_mps": vx, "vy_mps": vy,
                "speed_mps": math.hypot(vx, vy), "yaw_rate_radps": yr, "latency_ms": lat}
    return None


def open_socket(port, group=None, host="0.0.0.0"):
    s = socket.socket(socket.AF_INET, socket.SOCK_DGRAM)
    s.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
    s.bind((group if group else host, port))
    if group:
        mreq = struct.pack("=4s4s", socket.inet_aton(group), socket.inet_aton("0.0.0.0"))
        s.setsockopt(socket.IPPROTO_IP, socket.IP_ADD_MEMBERSHIP, mreq)
    return s


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--port", type=int, required=True)
    ap.add_argument("--host", default="0.0.0.0", help="local address to listen on")
    ap.add_argument("--group", help="multicast group to join")
    ap.add_argument("--count", type=int, default=0, help="stop after this many packets (0: never)")
    ap.add_argument("--timeout", type=float, default=0,
                    help="once packets have come, stop after this many seconds without one")
    a = ap.parse_args()
    s = open_socket(a.port, a.group, a.host)
    n = 0
    print("session,seq,frame,id,status,t_s,x_m,y_m,heading_rad,speed_mps,yaw_rate_radps,latency_ms,age_ms")
    while not a.count or n < a.count:
        try:
            data = s.recv(65536)
        except socket.timeout:
            break
        if a.timeout > 0:
            s.settimeout(a.timeout)  # from the first packet on
        p = decode(data)
        if p is None:
            print("not a wakeline pose packet (%d bytes)" % len(data), file=sys.stderr)
            continue
        n += 1
        # age: how old the frame is now (same clock as the sender's only if
        # both machines keep time with NTP/PTP; on one machine it is exact)
        age_ms = (time.time() - p["arrival_unix_s"]) * 1e3
        print("%d,%d,%d,%d,%s,%.6f,%.6f,%.6f,%.6f,%.6f,%.6f,%.3f,%.1f" % (
            p["session"], p["seq"], p["frame"], p["id"], p["status"], p["t_s"], p["x_m"], p["y_m"],
            p["heading_rad"], p["speed_mps"], p["yaw_rate_radps"], p["latency_ms"], age_ms), flush=True)


if __name__ == "__main__":
    main()
