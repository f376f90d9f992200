#!/usr/bin/python3
"""regen-rts.py: regenerates tests/data/ref-rts-statsmodels.txt, the
Rauch-Tung-Striebel smoother of Debian's python3-statsmodels
(statsmodels.tsa.statespace.kalman_smoother.KalmanSmoother with
initialize_known) on the kinematic model of src/clean/kin.c, that
tests/unit/test_clean.c compares wl_kin_smooth() with.

    /usr/bin/python3 tests/tools/regen-rts.py > tests/data/ref-rts-statsmodels.txt

The unit tests do not run this script: they read the committed file, inputs
included.  Run it only when a case is added or the reference library changes,
and review the diff.  Needs Debian's python3-statsmodels and python3-numpy
(/usr/bin/python3).

The input series is the invented one test_clean.c used to make in C: uneven
steps t[i] = t[i-1] + 0.02 + 0.03 u (t[0] = 0.1), z = 0.3 + 0.12 t +
0.05 sin(3 t) + 0.002 n, with a 64-bit LCG (Knuth's MMIX constants, seed 42)
for u and Box-Muller for n, and samples 7, 8 and 30 missing.  The file holds
the inputs as used, so the C test needs no generator of its own.

Output: '#' comment lines, then per case a line
"case DIM Q R P0_0 P0_1 P0_2 N", N lines "t z x_0..x_{DIM-1} P_00..P_{DIM-1,DIM-1}"
(z "nan" when missing; smoothed state and covariance), then "llf VALUE".
"""
import math
import subprocess

import numpy as np
import statsmodels
from statsmodels.tsa.statespace.kalman_smoother import KalmanSmoother

N = 60
R = 0.002 * 0.002
P0 = [1.0, 1.0, 10.0]
CASES = [(2, 0.05), (2, 1e-4), (3, 0.5)]
M64 = (1 << 64) - 1


def series():
    state = 42

    def urand():
        nonlocal state
        state = (state * 6364136223846793005 + 1442695040888963407) & M64
        return ((state >> 11) + 0.5) / 9007199254740992.0

    t = [0.1]
    for _ in range(1, N):
        t.append(t[-1] + 0.02 + 0.03 * urand())
    z = []
    for ti in t:
        n = math.sqrt(-2 * math.log(urand())) * math.cos(2 * math.pi * urand())
        z.append(0.3 + 0.12 * ti + 0.05 * math.sin(3 * ti) + 0.002 * n)
    for k in (7, 8, 30):
        z[k] = float("nan")
    return np.array(t), np.array(z)


def smooth(t, z, dim, q):
    n = len(t)
    T = np.zeros((dim, dim, n))
    Q = np.zeros((dim, dim, n))
    for i in range(n):
        dt = t[i + 1] - t[i] if i + 1 < n else 0.0
        F = np.eye(dim)
        F[0, 1] = dt
        if dim == 3:
            F[0, 2] = dt * dt / 2
            F[1, 2] = dt
            Qi = q * np.array([[dt**5 / 20, dt**4 / 8, dt**3 / 6], [dt**4 / 8, dt**3 / 3, dt**2 / 2],
                               [dt**3 / 6, dt**2 / 2, dt]])
        else:
            Qi = q * np.array([[dt**3 / 3, dt**2 / 2], [dt**2 / 2, dt]])
        T[:, :, i] = F
        Q[:, :, i] = Qi
    ks = KalmanSmoother(k_endog=1, k_states=dim, k_posdef=dim)
    ks.bind(np.asfortranarray(z.reshape(n, 1)))
    ks["design"] = np.eye(1, dim)
    ks["obs_cov"] = np.array([[R]])
    ks["transition"] = T
    ks["selection"] = np.eye(dim)
    ks["state_cov"] = Q
    a0 = np.zeros(dim)
    a0[0] = z[np.isfinite(z)][0]
    ks.initialize_known(a0, np.diag(P0[:dim]))
    return ks.smooth()


def debian_version(pkg):
    try:
        return subprocess.run(["dpkg-query", "-W", "-f=${Version}", pkg], capture_output=True,
                              text=True, check=True).stdout
    except (OSError, subprocess.CalledProcessError):
        return "unknown"


t, z = series()
print("# Rauch-Tung-Striebel smoother from Debian's python3-statsmodels %s (statsmodels %s),"
      % (debian_version("python3-statsmodels"), statsmodels.__version__))
print("# python3-numpy %s: KalmanSmoother(k_endog=1, k_states=DIM, k_posdef=DIM), initialize_known"
      % debian_version("python3-numpy"))
print("# (a0 = [first z, 0, ...], P0 = diag(P0)), .smooth(): smoothed_state, smoothed_state_cov, llf.")
print("# Written by tests/tools/regen-rts.py; read by tests/unit/test_clean.c.")
for dim, q in CASES:
    res = smooth(t, z, dim, q)
    print("case %d %.17g %.17g %.17g %.17g %.17g %d" % (dim, q, R, P0[0], P0[1], P0[2], N))
    for i in range(N):
        vals = [t[i], z[i]] + list(res.smoothed_state[:, i]) + list(res.smoothed_state_cov[:, :, i].ravel())
        print(" ".join("nan" if math.isnan(v) else "%.17g" % v for v in vals))
    print("llf %.17g" % res.llf)
