#!/bin/bash
# 0501-measure-scipy: the geometric circle fit of `wakeline measure` against
# Debian's python3-scipy (scipy.optimize.least_squares on the orthogonal
# distances, started from numpy's Kasa fit) on a random noisy arc.  The
# heading cells are left empty: the yaw measures must then be null.
source "$WL_SOURCE_DIR/tests/e2e/lib/harness.sh"
T="$WL_TEST_TMP"
# three random arcs, generated and checked each in one Python run (seeds 11, 12, 13)
$PY - "$T" <<'PYEOF'
import sys
import numpy as np
for seed in (11, 12, 13):
  rng = np.random.default_rng(seed)
  R = rng.uniform(0.3, 3.0)
  arc = np.radians(rng.uniform(60, 200))
  sign = rng.choice([-1, 1])
  n = 400
  t = np.arange(n) / 30.0
  th = rng.uniform(0, 2 * np.pi) + sign * arc * t / t[-1]
  x = 2.0 + R * np.cos(th) + rng.normal(0, 0.003, n)
  y = 1.0 + R * np.sin(th) + rng.normal(0, 0.003, n)
  with open(f"{sys.argv[1]}/CLEAN{seed}.csv", "w") as fp:
      fp.write("t_s,frame,id,x_m,y_m,heading_rad,speed_mps,yaw_rate_radps,vx_mps,vy_mps,segment,status,cut\n")
      for i in range(n):
          fp.write(f"{t[i]:.6f},{i},3,{x[i]:.9f},{y[i]:.9f},,,,,,0,measured,\n")
PYEOF
for seed in 11 12 13; do
	check_exit "measure on arc $seed succeeds" 0 "$WAKELINE" measure "$T/CLEAN$seed.csv" -o "$T/SUMMARY$seed.json" -q
done
check_py "centre and radius within 1e-6 of scipy's geometric fit, yaw measures null (3 arcs)" "$T" <<'PYEOF'
import csv, json, sys
import numpy as np
from scipy.optimize import least_squares
for seed in (11, 12, 13):
  rows = list(csv.DictReader(open(f"{sys.argv[1]}/CLEAN{seed}.csv")))
  x = np.array([float(r["x_m"]) for r in rows])
  y = np.array([float(r["y_m"]) for r in rows])
  A = np.c_[x, y, np.ones_like(x)]
  D, E, F = np.linalg.lstsq(A, -(x * x + y * y), rcond=None)[0]
  c0 = [-D / 2, -E / 2, np.sqrt(D * D / 4 + E * E / 4 - F)]
  fit = least_squares(lambda p: np.hypot(x - p[0], y - p[1]) - p[2], c0, method="lm",
                      xtol=1e-15, ftol=1e-15, gtol=1e-15)
  cx, cy, r = fit.x
  run = json.load(open(f"{sys.argv[1]}/SUMMARY{seed}.json"))["runs"][0]
  # orientation from the data: sign of the swept angle about the centre
  a = np.unwrap(np.arctan2(y - cy, x - cx))
  sign = 1 if a[-1] > a[0] else -1
  print(f"scipy: centre ({cx:.9f}, {cy:.9f}) r {r:.9f}; wakeline: ({run['centre_x_m']}, {run['centre_y_m']}) "
        f"r {run['radius_m']}; rms {np.sqrt(np.mean(fit.fun ** 2)):.9f} vs {run['fit_rms_m']}")
  assert abs(run["centre_x_m"] - cx) < 1e-6 and abs(run["centre_y_m"] - cy) < 1e-6
  assert abs(run["radius_m"] - sign * r) < 1e-6 * r
  assert abs(run["fit_rms_m"] - np.sqrt(np.mean(fit.fun ** 2))) < 1e-9
  assert run["yaw_osc_freq_hz"] is None and run["yaw_osc_amp_deg"] is None
  assert run["mean_speed_mps"] > 0
PYEOF
done_testing
