"""Checks what a live run sent and recorded against offline `wakeline track`
on the same clip, prints the figures and exits 1 when a bound fails.

usage: live_check.py OFFLINE_RAW.csv POSES.csv [--live-raw LIVE_RAW.csv]
       [--truth TRUTH.csv] [--pos-mm 0.1] [--speed-mps B]
       live_check.py OFFLINE_RAW.csv - --raw-only LIVE_RAW.csv [--min-rows N]

POSES.csv comes from live_client.py.  Checked:
  - each kind (json, binary): one session; seq 0, 1, 2, ... in arrival
    order (every packet arrived, in order); frames never go back;
  - every (frame, id) row of OFFLINE_RAW.csv has its JSON packet with the
    same status and t_s, and positions within --pos-mm of offline;
  - binary packets say what the JSON ones say (float32: 1 um, 1e-5 rad);
  - LIVE_RAW.csv has offline's rows, positions within --pos-mm;
  - with --truth: the filter's speed, after each robot's first 0.5 s,
    against the renderer's true speed (central differences of the truth),
    RMS error <= --speed-mps.
With --raw-only only LIVE_RAW.csv is checked: at least --min-rows rows,
each equal to offline's row of the same frame and id (status, t_s, and
positions within --pos-mm).
"""
import argparse
import csv
import math
import sys
from collections import defaultdict

ap = argparse.ArgumentParser()
ap.add_argument("offline")
ap.add_argument("poses")
ap.add_argument("--live-raw")
ap.add_argument("--truth")
ap.add_argument("--pos-mm", type=float, default=0.1)
ap.add_argument("--speed-mps", type=float, default=0.01)
ap.add_argument("--raw-only")
ap.add_argument("--min-rows", type=int, default=0)
a = ap.parse_args()
bad = []


def f(v):
    return float(v) if v not in ("", None) else float("nan")


off = {(int(r["frame"]), int(r["id"])): r for r in csv.DictReader(open(a.offline))}
if a.raw_only:
    rows = list(csv.DictReader(open(a.raw_only)))
    worst = 0.0
    for r in rows:
        o = off.get((int(r["frame"]), int(r["id"])))
        if o is None or o["status"] != r["status"] or abs(f(o["t_s"]) - f(r["t_s"])) > 2e-6:
            bad.append(f"{a.raw_only}: frame {r['frame']} id {r['id']}: not offline's row")
            break
        if r["status"] == "ok":
            worst = max(worst, math.hypot(f(r["x_m"]) - f(o["x_m"]), f(r["y_m"]) - f(o["y_m"])) * 1e3)
    if len(rows) < a.min_rows:
        bad.append(f"{a.raw_only}: {len(rows)} rows, fewer than {a.min_rows}")
    if worst > a.pos_mm:
        bad.append(f"{a.raw_only}: largest position difference {worst:.4f} mm > {a.pos_mm} mm")
    print(f"{a.raw_only}: {len(rows)} rows, largest position difference from offline {worst:.4f} mm")
    for b in bad:
        print("FAIL:", b, file=sys.stderr)
    sys.exit(1 if bad else 0)
pk = list(csv.DictReader(open(a.poses)))
kinds = {k: [r for r in pk if r["kind"] == k] for k in ("json", "binary")}

for k, rows in kinds.items():
    if not rows:
        bad.append(f"no {k} packets")
        continue
    if len({r["session"] for r in rows}) != 1:
        bad.append(f"{k}: more than one session")
    seqs = [int(r["seq"]) for r in rows]
    if seqs != list(range(len(seqs))):
        first = next(i for i, s in enumerate(seqs) if s != i)
        bad.append(f"{k}: seq not 0,1,2,... in arrival order (at packet {first}: {seqs[first]})")
    frames = [int(r["frame"]) for r in rows]
    if any(b < a_ for a_, b in zip(frames, frames[1:])):
        bad.append(f"{k}: frames go back")

js = {(int(r["frame"]), int(r["id"])): r for r in kinds["json"]}
worst = 0.0
for key, o in off.items():
    p = js.get(key)
    if p is None:
        bad.append(f"frame {key[0]} id {key[1]}: no JSON packet")
        continue
    if p["status"] != o["status"]:
        bad.append(f"frame {key[0]} id {key[1]}: status {p['status']} != offline {o['status']}")
        continue
    if abs(f(p["t_s"]) - f(o["t_s"])) > 2e-6:
        bad.append(f"frame {key[0]}: t_s {p['t_s']} != offline {o['t_s']}")
    if o["status"] == "ok":
        d = math.hypot(f(p["x_m"]) - f(o["x_m"]), f(p["y_m"]) - f(o["y_m"])) * 1e3
        worst = max(worst, d)
if worst > a.pos_mm:
    bad.append(f"packets: largest position difference {worst:.4f} mm > {a.pos_mm} mm")
extra = set(js) - set(off)
if extra:
    bad.append(f"{len(extra)} packets for frames offline has not, e.g. {sorted(extra)[0]}")
print(f"packets: {len(kinds['json'])} JSON, {len(kinds['binary'])} binary for {len(off)} offline rows; "
      f"largest position difference from offline {worst:.4f} mm")

bs = {(int(r["frame"]), int(r["id"])): r for r in kinds["binary"]}
for key, p in js.items():
    b = bs.get(key)
    if b is None:
        bad.append(f"frame {key[0]} id {key[1]}: no binary packet")
        break
    if (b["status"], b["session"]) != (p["status"], p["session"]) or int(b["seq"]) != int(p["seq"]) % 2**32:
        bad.append(f"frame {key[0]} id {key[1]}: binary header differs from JSON")
        break
    for c, tol in (("x_m", 1e-6), ("y_m", 1e-6), ("heading_rad", 1e-5), ("vx_mps", 1e-5), ("t_s", 1e-6),
                   ("arrival_unix_s", 1e-6)):
        x, y = f(b[c]), f(p[c])
        if (math.isnan(x) != math.isnan(y)) or (not math.isnan(x) and abs(x - y) > tol):
            bad.append(f"frame {key[0]} id {key[1]}: binary {c} {b[c]} != JSON {p[c]}")
            break

if a.live_raw:
    lr = {(int(r["frame"]), int(r["id"])): r for r in csv.DictReader(open(a.live_raw))}
    hdr = open(a.live_raw).readline().strip()
    if hdr != open(a.offline).readline().strip():
        bad.append(f"live RAW.csv header {hdr!r} differs from offline")
    w2 = 0.0
    for key, o in off.items():
        r = lr.get(key)
        if r is None or r["status"] != o["status"]:
            bad.append(f"live RAW.csv: frame {key[0]} id {key[1]} missing or of another status")
            break
        if o["status"] == "ok":
            w2 = max(w2, math.hypot(f(r["x_m"]) - f(o["x_m"]), f(r["y_m"]) - f(o["y_m"])) * 1e3)
    if w2 > a.pos_mm:
        bad.append(f"live RAW.csv: largest position difference {w2:.4f} mm > {a.pos_mm} mm")
    if len(lr) != len(off):
        bad.append(f"live RAW.csv has {len(lr)} rows, offline {len(off)}")
    print(f"live RAW.csv: {len(lr)} rows, largest position difference from offline {w2:.4f} mm")

if a.truth:
    tr = defaultdict(list)
    for r in csv.DictReader(open(a.truth)):
        tr[int(r["id"])].append((int(r["frame"]), f(r["t_s"]), f(r["x_m"]), f(r["y_m"])))
    speed = {}
    for i, rs in tr.items():
        for k in range(1, len(rs) - 1):
            (_, t0, x0, y0), (fr, _, _, _), (_, t1, x1, y1) = rs[k - 1], rs[k], rs[k + 1]
            speed[(fr, i)] = math.hypot(x1 - x0, y1 - y0) / (t1 - t0)
    t_first = {}
    se, n = 0.0, 0
    for r in kinds["json"]:
        key = (int(r["frame"]), int(r["id"]))
        if r["status"] != "ok":
            continue
        t_first.setdefault(key[1], f(r["t_s"]))
        if f(r["t_s"]) - t_first[key[1]] < 0.5 or key not in speed:
            continue
        v = math.hypot(f(r["vx_mps"]), f(r["vy_mps"]))
        se += (v - speed[key]) ** 2
        n += 1
    rms = math.sqrt(se / n) if n else float("nan")
    print(f"filter speed against the truth: RMS error {rms:.4f} m/s over {n} packets")
    if not n or not rms <= a.speed_mps:
        bad.append(f"filter speed RMS error {rms:.4f} m/s > {a.speed_mps}")

for b in bad[:20]:
    print("FAIL:", b, file=sys.stderr)
sys.exit(1 if bad else 0)
