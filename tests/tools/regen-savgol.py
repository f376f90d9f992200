#!/usr/bin/python3
"""regen-savgol.py: regenerates tests/data/ref-savgol-scipy.txt, the
Savitzky-Golay weights of Debian's python3-scipy that tests/unit/test_clean.c
compares wl_sg_coeffs() with.

    /usr/bin/python3 tests/tools/regen-savgol.py > tests/data/ref-savgol-scipy.txt

The unit tests do not run this script: they read the committed file.  Run it
only when a case is added or the reference library changes, and review the
diff (a changed value means the reference moved, not that the test should).
Needs Debian's python3-scipy (/usr/bin/python3; another python3 earlier on
PATH may lack it).

Output: '#' comment lines (provenance), then one line per case:
"window order deriv w_0 ... w_{window-1}", weights in data order
(scipy.signal.savgol_coeffs(window, order, deriv, use='dot')), %.17g.
"""
import subprocess

import scipy
from scipy.signal import savgol_coeffs

CASES = [(5, 2, 0), (7, 3, 1), (11, 2, 0), (11, 4, 2), (21, 3, 1), (15, 5, 3)]


def debian_version(pkg):
    try:
        return subprocess.run(["dpkg-query", "-W", "-f=${Version}", pkg], capture_output=True,
                              text=True, check=True).stdout
    except (OSError, subprocess.CalledProcessError):
        return "unknown"


print("# Savitzky-Golay weights from Debian's python3-scipy %s (scipy %s):" %
      (debian_version("python3-scipy"), scipy.__version__))
print("# scipy.signal.savgol_coeffs(window, order, deriv, use='dot'), data order.")
print("# Written by tests/tools/regen-savgol.py; read by tests/unit/test_clean.c.")
print("# window order deriv weights...")
for w, p, d in CASES:
    print("%d %d %d %s" % (w, p, d, " ".join("%.17g" % c for c in savgol_coeffs(w, p, deriv=d, use="dot"))))
