#!/usr/bin/python3
"""ref_kf.py: reference values for the causal filter of src/live/filter.c
from general-purpose libraries in Debian's archive.

  ref_kf.py filter FILE   Kalman filter (forward pass only) from
      python3-statsmodels (statsmodels.tsa.statespace.kalman_filter.
      KalmanFilter with initialize_known) for the constant-velocity model of
      src/clean/kin.c.  FILE: a line "q r P0_0 P0_1", then "t z" per sample
      (z "nan" when missing).  Output per sample: the filtered state p v.
  ref_kf.py steady DT Q R  the steady-state prior covariance of the same
      model sampled every DT s, from python3-scipy's discrete algebraic
      Riccati solver (scipy.linalg.solve_discrete_are, the filtering DARE in
      its dual form).  Output: P00 P01 P11, then the Kalman gains K0 K1.
"""
import sys
import numpy as np


def F_Q(dt, q):
    F = np.array([[1.0, dt], [0.0, 1.0]])
    Q = q * np.array([[dt**3 / 3, dt**2 / 2], [dt**2 / 2, dt]])
    return F, Q


if sys.argv[1] == "steady":
    from scipy.linalg import solve_discrete_are
    dt, q, r = (float(v) for v in sys.argv[2:5])
    F, Q = F_Q(dt, q)
    H = np.array([[1.0, 0.0]])
    # prior covariance P = F P F' - F P H'(H P H' + R)^-1 H P F' + Q
    P = solve_discrete_are(F.T, H.T, Q, np.array([[r]]))
    K = P @ H.T / (P[0, 0] + r)
    print("%.17g %.17g %.17g %.17g %.17g" % (P[0, 0], P[0, 1], P[1, 1], K[0, 0], K[1, 0]))
    sys.exit(0)

from statsmodels.tsa.statespace.kalman_filter import KalmanFilter

lines = open(sys.argv[2]).read().split("\n")
q, r, p00, p11 = (float(v) for v in lines[0].split())
data = np.array([[float(v) for v in ln.split()] for ln in lines[1:] if ln.strip()])
t, z = data[:, 0], data[:, 1]
n = len(t)
T = np.zeros((2, 2, n))
Qs = np.zeros((2, 2, n))
for i in range(n):
    # statsmodels' transition at i takes the state from sample i to i + 1
    dt = t[i + 1] - t[i] if i + 1 < n else 0.0
    T[:, :, i], Qs[:, :, i] = F_Q(dt, q)
kf = KalmanFilter(k_endog=1, k_states=2, k_posdef=2)
kf.bind(np.asfortranarray(z.reshape(n, 1)))
kf["design"] = np.eye(1, 2)
kf["obs_cov"] = np.array([[r]])
kf["transition"] = T
kf["selection"] = np.eye(2)
kf["state_cov"] = Qs
kf.initialize_known(np.array([z[np.isfinite(z)][0], 0.0]), np.diag([p00, p11]))
res = kf.filter()
for i in range(n):
    print("%.17g %.17g" % tuple(res.filtered_state[:, i]))
