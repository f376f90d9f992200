#!/usr/bin/env python3
"""live_watchdog.py: the safety pattern for a robot driven from the poses of
`wakeline live`: drive only on fresh poses, and stop as soon as they stop.
Python standard library only.  An invented example: the control law is a
placeholder and the commands are printed; replace send_command() and
stop_robot() with your robot's link.

    python3 examples/live_watchdog.py --port 9000 --id 3

Every control period (--period-ms) the watchdog decides from what it has
received, by its own clock:
  - no packet for the robot for --timeout-ms (default 200: six frames at
    30 fps)                                     -> STOP "no pose for ..."
  - the robot not found (status lost) in --lost-frames frames in a row
                                                -> STOP "robot not seen ..."
  - the frame is older than --max-age-ms when it arrives, by its capture
    time arrival_unix_s (only meaningful when this machine's clock and
    wakeline's agree: the same machine, or both kept by NTP/PTP)
                                                -> STOP "poses too old ..."
  - sequence numbers: a new session (wakeline restarted) or packets lost
    are reported; driving waits for --resume fresh packets in a row.
After a STOP the robot is driven again only after --resume fresh "ok"
packets in a row.

This is one layer.  The robot itself must stop when its command link goes
quiet (an on-board watchdog that needs no PC), and your lab's safety rules
come first: see docs/live.md, "Safety".
"""
import argparse
import math
import select
import sys
import time

from live_receive import decode, open_socket


def send_command(v_mps, w_radps):
    print("DRIVE v=%.3f w=%.3f" % (v_mps, w_radps), flush=True)


def stop_robot(reason):
    print("STOP %s" % reason, flush=True)


class Watchdog:
    def __init__(self, a):
        self.a = a
        self.last_rx = None      # local time of the last packet for our robot
        self.last = None         # that packet
        self.session = None
        self.seq = None
        self.lost_run = 0
        self.fresh_run = 0
        self.stopped = True      # a robot starts stopped
        self.reason = "no pose yet"

    def packet(self, p, now):
        if self.session != p["session"]:
            if self.session is not None:
                print("NOTE wakeline restarted (session %d -> %d)" % (self.session, p["session"]), flush=True)
            self.session, self.seq, self.fresh_run = p["session"], None, 0
        if self.seq is not None and p["seq"] != (self.seq + 1) % 2**32 and p["seq"] > self.seq:
            print("NOTE %d packets lost" % (p["seq"] - self.seq - 1), flush=True)
        self.seq = p["seq"]
        if p["id"] != self.a.id:
            return
        self.last_rx, self.last = now, p
        age_ms = (time.time() - p["arrival_unix_s"]) * 1e3
        ok = p["status"] == "ok" and (self.a.max_age_ms <= 0 or age_ms <= self.a.max_age_ms)
        self.lost_run = 0 if p["status"] == "ok" else self.lost_run + 1
        self.fresh_run = self.fresh_run + 1 if ok else 0

    def verdict(self, now):
        """None when driving is allowed, else why not."""
        if self.last_rx is None:
            return "no pose yet"
        if (now - self.last_rx) * 1e3 > self.a.timeout_ms:
            return "no pose for %.0f ms" % ((now - self.last_rx) * 1e3)
        if self.lost_run >= self.a.lost_frames:
            return "robot not seen in %d frames" % self.lost_run
        age_ms = (time.time() - self.last["arrival_unix_s"]) * 1e3
        if self.a.max_age_ms > 0 and age_ms > self.a.max_age_ms:
            return "poses too old (%.0f ms)" % age_ms
        if self.stopped and self.fresh_run < self.a.resume:
            return self.reason  # not yet fresh long enough to resume
        return None

    def tick(self, now):
        why = self.verdict(now)
        if why is not None:
            if not self.stopped:  # the moment it stops, once
                stop_robot(why)
                self.reason = why
            self.stopped = True
            return False
        self.stopped = False
        # placeholder control law: slow forward, turn toward heading 0
        h = self.last["heading_rad"]
        send_command(0.05, -0.5 * math.atan2(math.sin(h), math.cos(h)) if not math.isnan(h) else 0.0)
        return True


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--port", type=int, required=True)
    ap.add_argument("--host", default="0.0.0.0")
    ap.add_argument("--group", help="multicast group to join")
    ap.add_argument("--id", type=int, required=True, help="the robot to drive")
    ap.add_argument("--period-ms", type=float, default=20)
    ap.add_argument("--timeout-ms", type=float, default=200)
    ap.add_argument("--lost-frames", type=int, default=5)
    ap.add_argument("--max-age-ms", type=float, default=0, help="0: do not compare clocks")
    ap.add_argument("--resume", type=int, default=3)
    ap.add_argument("--stop-after", type=float, default=0,
                    help="exit this many seconds after a stop that followed driving (0: never)")
    a = ap.parse_args()
    s = open_socket(a.port, a.group, a.host)
    wd = Watchdog(a)
    drove = False
    stop_since = None
    next_tick = time.monotonic()
    while True:
        now = time.monotonic()
        r, _, _ = select.select([s], [], [], max(0.0, next_tick - now))
        now = time.monotonic()
        if r:
            p = decode(s.recv(65536))
            if p is not None:
                wd.packet(p, now)
        if now >= next_tick:
            next_tick += a.period_ms / 1e3
            if wd.tick(now):
                drove, stop_since = True, None
            elif drove and stop_since is None:
                stop_since = now
            if a.stop_after > 0 and stop_since is not None and now - stop_since >= a.stop_after:
                return 0


if __name__ == "__main__":
    sys.exit(main())
