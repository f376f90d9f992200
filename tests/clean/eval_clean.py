#!/usr/bin/python3
"""eval_clean.py: compares CLEAN.csv (and its sidecar) with the truth CSV of
synth_raw.py and prints figures; with --check, fails when a figure is out of
its bound.  Times are matched exactly (rows at the same t_s), or by
interpolating the truth when CLEAN.csv was resampled (--interp)."""
import argparse, csv, json, math, sys
import numpy as np

ap = argparse.ArgumentParser()
ap.add_argument("clean"); ap.add_argument("truth"); ap.add_argument("raw")
ap.add_argument("--settle", type=float, default=float("nan"))
ap.add_argument("--interp", action="store_true")
ap.add_argument("--check", action="append", default=[], help="NAME<=VALUE or NAME>=VALUE")
a = ap.parse_args()

def load(p):
    with open(p) as f:
        return list(csv.DictReader(f))
C, T, R = load(a.clean), load(a.truth), load(a.raw)
side = json.load(open(a.clean[:-4] + ".json"))
tt = np.array([float(r["t_s"]) for r in T])
def col(rows, k):
    return np.array([float(r[k]) if r[k] != "" else np.nan for r in rows])
tc = col(C, "t_s")
if a.interp:
    idx = None
    tr = {k: np.interp(tc, tt, col(T, k)) for k in ("x_m", "y_m", "speed_mps", "yaw_rate_radps")}
    th = np.interp(tc, tt, np.unwrap(col(T, "heading_rad")))
else:
    pos = {round(v, 6): i for i, v in enumerate(tt)}
    idx = np.array([pos[round(v, 6)] for v in tc])
    tr = {k: col(T, k)[idx] for k in ("x_m", "y_m", "speed_mps", "yaw_rate_radps")}
    th = col(T, "heading_rad")[idx]
out = {}
ex, ey = col(C, "x_m") - tr["x_m"], col(C, "y_m") - tr["y_m"]
seg = col(C, "segment")
m = seg >= 0
out["rmse_pos_mm"] = 1e3 * math.sqrt(np.nanmean(ex[m] ** 2 + ey[m] ** 2) / 2)
eh = (col(C, "heading_rad") - th + math.pi) % (2 * math.pi) - math.pi
out["rmse_heading_deg"] = math.degrees(math.sqrt(np.nanmean(eh[m] ** 2)))
# the raw noise over the same rows (ok rows that are not injected outliers)
if idx is not None:
    ok = np.array([r["status"] == "ok" for r in R])[idx] & (col(T, "outlier")[idx] == 0) & m
    rx = np.array([float(r["x_m"]) if r["x_m"] else np.nan for r in R])[idx] - tr["x_m"]
    ry = np.array([float(r["y_m"]) if r["y_m"] else np.nan for r in R])[idx] - tr["y_m"]
    out["raw_rmse_pos_mm"] = 1e3 * math.sqrt(np.nanmean(rx[ok] ** 2 + ry[ok] ** 2) / 2)
    rh = (np.array([float(r["heading_rad"]) if r["heading_rad"] else np.nan for r in R])[idx] - th + math.pi) % (2 * math.pi) - math.pi
    out["raw_rmse_heading_deg"] = math.degrees(math.sqrt(np.nanmean(rh[ok] ** 2)))
    out["pos_rmse_ratio"] = out["raw_rmse_pos_mm"] / out["rmse_pos_mm"]
    tout = col(T, "outlier")[idx] == 1
    st = np.array([r["status"] for r in C])
    out["outliers_injected"] = int(tout.sum())
    out["outliers_missed"] = int((tout & (st != "outlier")).sum())
    out["outliers_flagged"] = int((st == "outlier").sum())
    # an injected outlier's output pose must be the smoothed one (close to truth)
    if tout.any():
        out["outlier_max_pos_err_mm"] = 1e3 * float(np.nanmax(np.hypot(ex, ey)[tout]))
        out["outlier_max_heading_err_deg"] = math.degrees(float(np.nanmax(np.abs(eh)[tout])))
steady = m & (tc > a.settle + 0.5) if not math.isnan(a.settle) else m
sp = col(C, "speed_mps")
if steady.any() and np.nanmean(tr["speed_mps"][steady]) > 0:
    rel = (sp[steady] - tr["speed_mps"][steady]) / tr["speed_mps"][steady]
    out["speed_mean_rel_err"] = float(abs(np.nanmean(sp[steady]) / np.nanmean(tr["speed_mps"][steady]) - 1))
    out["speed_rms_rel_err"] = float(math.sqrt(np.nanmean(rel ** 2)))
    out["speed_p95_rel_err"] = float(np.nanpercentile(np.abs(rel), 95))
    # speed averaged over one oscillation period (the way the measure stage uses it)
    per = 1.0 / max(1e-9, float(side["robots"][0]["oscillation_period_s"] or 1.0))
    W = 1.0 / per
    ts, s_est, s_tru = tc[steady], sp[steady], tr["speed_mps"][steady]
    errs = []
    for i in range(len(ts)):
        j = (ts >= ts[i]) & (ts < ts[i] + W)
        if ts[i] + W <= ts[-1]:
            errs.append(abs(np.nanmean(s_est[j]) / np.nanmean(s_tru[j]) - 1))
    out["speed_win_max_rel_err"] = float(max(errs)) if errs else float("nan")
    yr = col(C, "yaw_rate_radps")
    out["yaw_rate_rmse_radps"] = float(math.sqrt(np.nanmean((yr[steady] - tr["yaw_rate_radps"][steady]) ** 2)))
    out["yaw_rate_truth_rms_radps"] = float(math.sqrt(np.nanmean(tr["yaw_rate_radps"][steady] ** 2)))
rb = side["robots"][0]
out["trim_s"] = rb["trim"]["t_s"] if rb["trim"]["t_s"] is not None else float("nan")
out["trim_err_s"] = abs(out["trim_s"] - a.settle) if not math.isnan(a.settle) else float("nan")
out["period_s"] = rb["oscillation_period_s"] if rb["oscillation_period_s"] is not None else float("nan")
out["sigma_pos_mm"] = 1e3 * rb["noise"]["sigma_pos_m"]
out["sigma_heading_deg"] = math.degrees(rb["noise"]["sigma_heading_rad"])
for k, v in out.items():
    print("%s %s" % (k, ("%.6g" % v) if isinstance(v, float) else v))
bad = 0
for c in a.check:
    op = "<=" if "<=" in c else ">="
    k, v = c.split(op)
    val = out[k]
    good = (val <= float(v)) if op == "<=" else (val >= float(v))
    if not good or (isinstance(val, float) and math.isnan(val)):
        print("FAIL: %s = %s, want %s %s" % (k, val, op, v))
        bad = 1
sys.exit(bad)
