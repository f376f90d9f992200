#!/usr/bin/env python3
"""live_led_latency.py: a camera's end-to-end latency, measured with a
blinking LED in view and wakeline live.  Python standard library only; an
invented example set-up.

The LED hangs on the RTS line of a USB-serial adapter (RTS to a series
resistor, e.g. 1 kOhm, to the LED's anode; its cathode to GND), so that
this script can switch it and note the time at once.  Only low-voltage
parts: no mains, and keep it away from the water.  wakeline tracks the lit
LED as a robot with one colour cap, e.g. ROBOTS.csv

    id,front_hsv_lo,front_hsv_hi
    99,"0,0,230","179,90,255"

(a lit LED looks nearly white to a camera: high value, low saturation;
check the numbers on a still with `wakeline colours`), then:

    wakeline live CAMERA --cal cal.json --mode colour --robots led.csv \\
        --publish udp://127.0.0.1:9000
    python3 examples/live_led_latency.py --port 9000 --id 99 --serial /dev/ttyUSB0

For each of --blinks blinks the LED goes on; the time from switching it on
to the first packet in which robot 99 is "ok" is one sample; then it goes
off until the robot is "lost".  The median and the spread are printed.

What the figure holds: the wait for the next exposure (0 to 1 frame
interval, half of one on average), the exposure, the camera's processing
and encoding, the network, and wakeline's decoding, tracking and sending
(the packet's latency_ms is wakeline's part from the frame's arrival; its
status line's input lag is time spent in buffers before that).  Subtract
half a frame interval for the mean exposure wait when you compare cameras.
Many adapters drive RTS low when it is "on": use --invert if the LED is lit
when it should be dark.
"""
import argparse
import fcntl
import os
import select
import statistics
import struct
import sys
import termios
import time

from live_receive import decode, open_socket


def set_rts(fd, on):
    req = termios.TIOCMBIS if on else termios.TIOCMBIC
    fcntl.ioctl(fd, req, struct.pack("I", termios.TIOCM_RTS))


def wait_status(sock, rid, status, timeout_s):
    """The local time of the first packet of robot rid with this status, or None."""
    end = time.monotonic() + timeout_s
    while True:
        left = end - time.monotonic()
        if left <= 0:
            return None
        r, _, _ = select.select([sock], [], [], left)
        if not r:
            return None
        p = decode(sock.recv(65536))
        if p is not None and p["id"] == rid and p["status"] == status:
            return time.monotonic()


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--port", type=int, required=True)
    ap.add_argument("--id", type=int, required=True, help="the LED's robot id in ROBOTS.csv")
    ap.add_argument("--serial", required=True, help="the USB-serial adapter, e.g. /dev/ttyUSB0")
    ap.add_argument("--blinks", type=int, default=30)
    ap.add_argument("--invert", action="store_true", help="the LED is lit with RTS off")
    ap.add_argument("--timeout-s", type=float, default=2.0)
    a = ap.parse_args()
    fd = os.open(a.serial, os.O_RDWR | os.O_NOCTTY)
    sock = open_socket(a.port)
    led = lambda on: set_rts(fd, on != a.invert)
    samples = []
    try:
        led(False)
        wait_status(sock, a.id, "lost", a.timeout_s)
        for k in range(a.blinks):
            time.sleep(0.2 + 0.1 * (k % 3))  # not in step with the frames
            t_on = time.monotonic()
            led(True)
            t_seen = wait_status(sock, a.id, "ok", a.timeout_s)
            led(False)
            if t_seen is None:
                print("blink %d: LED not seen within %.1f s: check its colour range and that it is in view"
                      % (k, a.timeout_s), file=sys.stderr)
                continue
            samples.append((t_seen - t_on) * 1e3)
            print("blink %d: %.1f ms" % (k, samples[-1]), flush=True)
            wait_status(sock, a.id, "lost", a.timeout_s)
    finally:
        led(False)
        os.close(fd)
    if samples:
        s = sorted(samples)
        print("end-to-end latency over %d blinks: median %.1f ms, min %.1f ms, max %.1f ms, sd %.1f ms"
              % (len(s), statistics.median(s), s[0], s[-1], statistics.pstdev(s)))
    return 0 if samples else 1


if __name__ == "__main__":
    sys.exit(main())
