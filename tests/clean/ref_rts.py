#!/usr/bin/python3
"""ref_rts.py: reference Rauch-Tung-Striebel smoother from Debian's
python3-statsmodels (statsmodels.tsa.statespace.kalman_smoother.KalmanSmoother
with initialize_known) for the kinematic model of src/clean/kin.c.

Input (argv[1]): lines "dim q r angular P0_0 P0_1 P0_2" then "t z" per sample
(z "nan" when missing).  Output: per sample the smoothed state (dim values),
then the smoothed covariance (dim*dim values); last line "llf <value>"."""
import sys
import numpy as np
from statsmodels.tsa.statespace.kalman_smoother import KalmanSmoother

lines = open(sys.argv[1]).read().split("\n")
hdr = lines[0].split()
dim, q, r = int(hdr[0]), float(hdr[1]), float(hdr[2])
P0 = np.diag([float(v) for v in hdr[4:4 + dim]])
data = np.array([[float(v) for v in ln.split()] for ln in lines[1:] if ln.strip()])
t, z = data[:, 0], data[:, 1]
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
ks["obs_cov"] = np.array([[r]])
ks["transition"] = T
ks["selection"] = np.eye(dim)
ks["state_cov"] = Q
a0 = np.zeros(dim)
a0[0] = z[np.isfinite(z)][0]
ks.initialize_known(a0, P0)
res = ks.smooth()
for i in range(n):
    vals = list(res.smoothed_state[:, i]) + list(res.smoothed_state_cov[:, :, i].ravel())
    print(" ".join("%.17g" % v for v in vals))
print("llf %.17g" % res.llf)
