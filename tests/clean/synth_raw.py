#!/usr/bin/python3
"""synth_raw.py: invented test scenario for the clean stage (not real data).

A robot rests for --rest seconds, then speeds up towards --speed with time
constant --tau while following a circle of radius --radius (straight when 0);
its body heading oscillates about the path direction (--amp-deg at --freq Hz,
growing with the speed).  Writes RAW.csv in the tracker's format with white
noise, optional outliers, one 180-degree heading flip, a gap, and a truth CSV
with the speed and yaw rate.  Everything is drawn from numpy's default_rng(seed).
"""
import argparse
import math
import numpy as np

ap = argparse.ArgumentParser()
ap.add_argument("--seed", type=int, default=1)
ap.add_argument("--duration", type=float, default=12.0)
ap.add_argument("--fps", type=float, default=30.0)
ap.add_argument("--vfr", action="store_true", help="frame steps uniform in [0.5, 1.5]/fps")
ap.add_argument("--rest", type=float, default=1.0)
ap.add_argument("--tau", type=float, default=0.4)
ap.add_argument("--speed", type=float, default=0.10)
ap.add_argument("--radius", type=float, default=0.6)
ap.add_argument("--amp-deg", type=float, default=10.0)
ap.add_argument("--freq", type=float, default=2.0)
ap.add_argument("--x0", type=float, default=0.2)
ap.add_argument("--y0", type=float, default=0.8)
ap.add_argument("--psi0", type=float, default=0.3)
ap.add_argument("--noise-mm", type=float, default=2.0)
ap.add_argument("--noise-deg", type=float, default=2.0)
ap.add_argument("--outliers", type=float, default=0.0, help="fraction of frames moved by --outlier-m")
ap.add_argument("--outlier-m", type=float, default=0.10)
ap.add_argument("--flip-frame", type=int, default=-1, help="frame whose heading is turned by 180 degrees")
ap.add_argument("--gap", default="", help="T0,LEN: frames lost from T0 for LEN seconds")
ap.add_argument("--still", action="store_true")
ap.add_argument("--id", type=int, default=7)
ap.add_argument("--out", required=True)
ap.add_argument("--truth", required=True)
a = ap.parse_args()
rng = np.random.default_rng(a.seed)

# frame times
if a.vfr:
    steps = rng.uniform(0.5, 1.5, size=int(a.duration * a.fps * 1.2) + 10) / a.fps
    t = np.concatenate([[0.0], np.cumsum(steps)])
else:
    t = np.arange(0, int(a.duration * a.fps) + 1) / a.fps
t = t[t <= a.duration]

# truth on a fine grid, integrated with the trapezoid rule
fine = np.arange(0, a.duration + 1e-3, 1e-4)
def speed_of(tt):
    if a.still:
        return np.zeros_like(tt)
    s = np.clip(tt - a.rest, 0, None)
    return a.speed * (1 - np.exp(-s / a.tau))
def ramp(tt):
    return speed_of(tt) / a.speed if a.speed > 0 else 0 * tt
U = speed_of(fine)
path_rate = U / a.radius if a.radius > 0 else 0 * U
psi = a.psi0 + np.concatenate([[0], np.cumsum(0.5 * (path_rate[1:] + path_rate[:-1]) * np.diff(fine))])
vx, vy = U * np.cos(psi), U * np.sin(psi)
x = a.x0 + np.concatenate([[0], np.cumsum(0.5 * (vx[1:] + vx[:-1]) * np.diff(fine))])
y = a.y0 + np.concatenate([[0], np.cumsum(0.5 * (vy[1:] + vy[:-1]) * np.diff(fine))])
A = math.radians(a.amp_deg)
w = 2 * math.pi * a.freq
osc_t = np.clip(fine - a.rest, 0, None)
heading = psi + A * ramp(fine) * np.sin(w * osc_t)
yaw = np.gradient(heading, fine)

def at(arr):
    return np.interp(t, fine, arr)
tx, ty, th, tv, tyaw = at(x), at(y), at(heading), at(U), at(yaw)
tvx, tvy = at(vx), at(vy)

n = len(t)
mx = tx + rng.normal(0, a.noise_mm * 1e-3, n)
my = ty + rng.normal(0, a.noise_mm * 1e-3, n)
mh = th + rng.normal(0, math.radians(a.noise_deg), n)
status = np.array(["ok"] * n, dtype=object)
outl = np.zeros(n, dtype=bool)
if a.outliers > 0:
    k = int(round(a.outliers * n))
    idx = rng.choice(np.arange(2, n - 2), size=k, replace=False)
    ang = rng.uniform(0, 2 * math.pi, k)
    mx[idx] += a.outlier_m * np.cos(ang)
    my[idx] += a.outlier_m * np.sin(ang)
    outl[idx] = True
if a.flip_frame >= 0:
    mh[a.flip_frame] += math.pi
    outl[a.flip_frame] = True
if a.gap:
    g0, gl = map(float, a.gap.split(","))
    status[(t >= g0) & (t < g0 + gl)] = "lost"
mh = (mh + math.pi) % (2 * math.pi) - math.pi

def f(v):
    return "%.6f" % v
with open(a.out, "w") as fo:
    fo.write("t_s,frame,id,u_px,v_px,x_m,y_m,heading_rad,status,margin,size_px,heading_source\n")
    for i in range(n):
        if status[i] == "lost":
            fo.write("%s,%d,%d,,,,,,lost,,,\n" % (f(t[i]), i, a.id))
        else:
            fo.write("%s,%d,%d,%s,%s,%s,%s,%s,ok,80.0,40.0,tag\n" % (
                f(t[i]), i, a.id, f(mx[i] * 1000), f(my[i] * 1000), f(mx[i]), f(my[i]), f(mh[i])))
with open(a.truth, "w") as fo:
    fo.write("t_s,frame,id,x_m,y_m,heading_rad,speed_mps,yaw_rate_radps,vx_mps,vy_mps,outlier\n")
    for i in range(n):
        hw = (th[i] + math.pi) % (2 * math.pi) - math.pi
        fo.write("%s,%d,%d,%s,%s,%s,%s,%s,%s,%s,%d\n" % (f(t[i]), i, a.id, f(tx[i]), f(ty[i]), f(hw),
                 f(tv[i]), f(tyaw[i]), f(tvx[i]), f(tvy[i]), int(outl[i])))
if not a.still:
    print("settle_s %.6f" % (a.rest + a.tau * math.log(50)))
    print("period_s %.6f" % (1 / a.freq))
