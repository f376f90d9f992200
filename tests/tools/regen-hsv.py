#!/usr/bin/python3
"""regen-hsv.py: prints the RGB -> HSV reference values of Debian's
python3-opencv (cv2.cvtColor(px, cv2.COLOR_RGB2HSV) on uint8 pixels: H in
0..179, S and V in 0..255) that tests/unit/test_hsv_matches_opencv in
tests/unit/test_track.c holds wl_rgb_to_hsv() to, as the two C tables it
carries (rgb[][3] and hsv[][3]).

    /usr/bin/python3 tests/tools/regen-hsv.py

The unit tests do not run this script: the values are committed in
test_track.c and listed in tests/data/references.md.  Run it only to add a
pixel or to check the values after the reference library changes, and paste
the tables back.  Needs Debian's python3-opencv and python3-numpy.
"""
import subprocess

import cv2
import numpy as np

PIXELS = [(255, 0, 0), (0, 255, 0), (0, 0, 255), (255, 255, 0), (200, 30, 40), (250, 10, 200),
          (10, 20, 30), (128, 128, 128), (255, 128, 0), (30, 200, 180), (0, 0, 0), (90, 60, 200)]


def debian_version(pkg):
    try:
        return subprocess.run(["dpkg-query", "-W", "-f=${Version}", pkg], capture_output=True,
                              text=True, check=True).stdout
    except (OSError, subprocess.CalledProcessError):
        return "unknown"


hsv = cv2.cvtColor(np.array([PIXELS], np.uint8), cv2.COLOR_RGB2HSV)[0]
print("/* Debian python3-opencv %s (OpenCV %s), cv2.cvtColor(px, cv2.COLOR_RGB2HSV) */"
      % (debian_version("python3-opencv"), cv2.__version__))
print("static const int rgb[][3] = {%s};" % ", ".join("{%d, %d, %d}" % p for p in PIXELS))
print("static const int hsv[][3] = {%s};" % ", ".join("{%d, %d, %d}" % tuple(int(v) for v in h) for h in hsv))
