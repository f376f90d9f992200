#!/usr/bin/python3
"""regen-plot-scales.py: prints the reference values of Debian's
python3-matplotlib that tests/unit/test_report.c holds the plotting layer to:
the symmetric-log transform (test_symlog_transform) and the viridis colour
map (test_viridis).

    /usr/bin/python3 tests/tools/regen-plot-scales.py

The unit tests do not run this script: the values are committed in
test_report.c and listed in tests/data/references.md.  Run it only to add a
point or to check the values after the reference library changes.  Needs
Debian's python3-matplotlib (not installed by scripts/setup:
apt-get install python3-matplotlib).
"""
import subprocess

import matplotlib
from matplotlib import cm
from matplotlib.scale import SymmetricalLogTransform


def debian_version(pkg):
    try:
        return subprocess.run(["dpkg-query", "-W", "-f=${Version}", pkg], capture_output=True,
                              text=True, check=True).stdout
    except (OSError, subprocess.CalledProcessError):
        return "unknown"


print("# Debian python3-matplotlib %s (matplotlib %s)" % (debian_version("python3-matplotlib"),
                                                         matplotlib.__version__))
x = [0.1, 0.5, 1, 5, -50]
y = SymmetricalLogTransform(base=10, linthresh=0.5, linscale=1).transform(x)
print("SymmetricalLogTransform(base=10, linthresh=0.5, linscale=1).transform(%s):" % x)
print("  " + ", ".join("%.8f" % v for v in y))
cmap = cm.get_cmap("viridis")
print("cm.get_cmap('viridis'), the 256-entry table (nearest entry):")
for t in [0, 0.37, 0.5, 0.8, 1.0]:
    r, g, b, _ = cmap(t)
    print("  t = %-4s -> {%.6f, %.6f, %.6f}" % (t, r, g, b))
