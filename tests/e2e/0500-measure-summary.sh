#!/bin/bash
# 0500-measure-summary: `wakeline measure` on a CLEAN.csv written here by a
# script (an invented scenario: robot 1 circles counter-clockwise at 0.5 m
# radius in two segments, robot 7 swims straight), checking SUMMARY.json's
# keys and values, the --csv table, the headline marks, the decimal point
# under a decimal-comma locale, and line-numbered errors.
source "$WL_SOURCE_DIR/tests/e2e/lib/harness.sh"
T="$WL_TEST_TMP"

$PY - "$T/CLEAN.csv" <<'PYEOF'
import math, random, sys
random.seed(5)
fps, v, A, f = 30.0, 0.1, math.radians(20), 1.2
w = 2 * math.pi * f
rows = []
def circle(rid, t0, t1, seg, R, cut=""):
    # kinematic model of tests/unit/test_measure.c: heading oscillates by A
    # about the tangent, the body sways left by -(v A / w) cos(w t)
    k = int(round(t0 * fps))
    while k / fps <= t1 + 1e-9:
        t = k / fps
        th = v * t / R
        s = -(v * A / w) * math.cos(w * t)
        x = 1.5 + (R - s) * math.cos(th) + random.gauss(0, 0.002)
        y = 1.0 + (R - s) * math.sin(th) + random.gauss(0, 0.002)
        h = th + math.pi / 2 + A * math.sin(w * t)
        h = math.atan2(math.sin(h), math.cos(h))
        status = "filled" if k % 20 == 0 else "measured"
        rows.append((t, k, rid, x, y, h, v, v / R + A * w * math.cos(w * t), seg, status, cut if seg < 0 else ""))
        k += 1
def line(rid, t0, t1, seg):
    k = int(round(t0 * fps))
    while k / fps <= t1 + 1e-9:
        t = k / fps
        s = -(v * A / w) * math.cos(w * t)
        x = 0.2 + v * t + random.gauss(0, 0.002)
        y = 2.0 + s + random.gauss(0, 0.002)
        rows.append((t, k, rid, x, y, A * math.sin(w * t), v, A * w * math.cos(w * t), seg, "measured", ""))
        k += 1
circle(1, 0.0, 1.99, -1, 0.5, "start")
circle(1, 2.0, 22.0, 0, 0.5)
circle(1, 22.03, 23.0, -1, 0.5, "wall")
circle(1, 23.03, 53.0, 1, 0.5)
line(7, 0.0, 25.0, 0)
rows.sort(key=lambda r: (r[0], r[2]))
with open(sys.argv[1], "w") as fp:
    fp.write("t_s,frame,id,x_m,y_m,heading_rad,speed_mps,yaw_rate_radps,vx_mps,vy_mps,segment,status,cut\n")
    for (t, k, rid, x, y, h, sp, yr, seg, st, cut) in rows:
        fp.write(f"{t:.6f},{k},{rid},{x:.6f},{y:.6f},{h:.6f},{sp:.6f},{yr:.6f},,,{seg},{st},{cut}\n")
PYEOF

check_exit "measure under LC_ALL=de_DE.UTF-8 succeeds" 0 env LC_ALL=de_DE.UTF-8 \
	"$WAKELINE" measure "$T/CLEAN.csv" -o "$T/SUMMARY.json" --csv "$T/runs.csv" \
	--body-diameter-m 0.1 --commanded-period-s 0.8
cp "$T/last.out" "$T/stdout"
check_grep "the report: id 1 segment 1 (30.0 s), radius 0.5" "^id 1 segment 1 (30.0 s): radius 0.5" "$T/stdout"
check_grep "the report: id 7 segment 0 (25.0 s), straight" "^id 7 segment 0 (25.0 s): straight" "$T/stdout"
check_eq "the report has two lines (the headline runs)" "$(wc -l < "$T/stdout")" 2
check_no_grep "no decimal commas in SUMMARY.json" "[0-9],[0-9]" "$T/SUMMARY.json"

check_py "SUMMARY.json and the --csv table: keys, values, headline marks" "$T/SUMMARY.json" "$T/runs.csv" <<'PYEOF'
import csv, json, math, sys
d = json.load(open(sys.argv[1]))
runs = d["runs"]
assert d["provenance"]["input"].endswith("CLEAN.csv"), d["provenance"]
assert d["provenance"]["tool_version"], d["provenance"]
assert [(r["id"], r["segment"], r["headline"]) for r in runs] == [(1, 0, False), (1, 1, True), (7, 0, True)], runs
keys = ["radius_m", "curvature_per_m", "curvature_ci95_per_m", "arc_deg", "straight", "path_length_m",
        "net_displacement_m", "straightness", "mean_speed_mps", "speed_sd_mps", "mean_yaw_rate_degps",
        "heading_drift_degps", "yaw_osc_freq_hz", "yaw_osc_amp_deg", "sway_amp_m", "fit_rms_m", "trim_start_s",
        "duration_s", "tracked_fraction", "radius_body_diameters", "commanded_period_s", "period_ratio"]
for r in runs:
    missing = [k for k in keys if k not in r]
    assert not missing, missing
def near(a, b, tol, what):
    assert abs(a - b) <= tol, f"{what}: {a} vs {b} (tolerance {tol})"
c0, c1, s = runs
# truth: radius 0.5 m counter-clockwise (positive); tolerance 2% as in the unit tests
for r, dur, trim in ((c0, 20.0, 2.0), (c1, 53.0 - 691 / 30, 691 / 30)):
    assert r["straight"] is False
    near(r["radius_m"], 0.5, 0.01, "radius")
    lo, hi = r["curvature_ci95_per_m"]
    assert lo < r["curvature_per_m"] < hi and lo > 0
    near(r["duration_s"], dur, 1e-6, "duration")
    near(r["trim_start_s"], trim, 1e-6, "trim_start_s")
    near(r["radius_body_diameters"], 5.0, 0.1, "radius in body diameters")
    near(r["arc_deg"], math.degrees(0.1 * dur / 0.5), 3.0, "arc")
    near(r["yaw_osc_freq_hz"], 1.2, 0.02, "yaw frequency")
    near(r["yaw_osc_amp_deg"], 20.0, 2.0, "yaw amplitude")
    near(r["sway_amp_m"], 0.1 * math.radians(20) / (2 * math.pi * 1.2), 0.1 * 0.00463, "sway amplitude")
    near(r["mean_speed_mps"], 0.1, 1e-9, "speed")
    near(r["mean_yaw_rate_degps"], math.degrees(0.2), 0.3, "yaw rate")
    near(r["heading_drift_degps"], math.degrees(0.2), 0.1, "heading drift")
    near(r["period_ratio"], (1 / 1.2) / 0.8, 0.02, "period ratio")
    # every 20th frame is 'filled'
    near(r["tracked_fraction"], 0.95, 0.002, "tracked fraction")
assert s["straight"] is True and s["radius_m"] is None and s["radius_body_diameters"] is None
lo, hi = s["curvature_ci95_per_m"]
assert lo <= 0 <= hi, (lo, hi)
near(s["net_displacement_m"], 2.5, 0.01, "net displacement")
near(s["trim_start_s"], 0.0, 1e-9, "straight trim")
near(s["yaw_osc_freq_hz"], 1.2, 0.02, "straight yaw frequency")
near(s["tracked_fraction"], 1.0, 1e-12, "straight tracked")
rows = list(csv.DictReader(open(sys.argv[2])))
assert len(rows) == 3 and rows[1]["headline"] == "true" and rows[2]["straight"] == "true", rows
near(float(rows[1]["radius_m"]), c1["radius_m"], 1e-8, "csv radius")
assert rows[2]["radius_m"] == ""
print("summary ok")
PYEOF

# errors: file and line named, exit status 1
head -3 "$T/CLEAN.csv" > "$T/bad1.csv"
sed -n '4p' "$T/CLEAN.csv" | sed 's/^[0-9.]*,/abc,/' >> "$T/bad1.csv"
check_exit "a bad number fails (exit 1)" 1 "$WAKELINE" measure "$T/bad1.csv" -o "$T/x.json"
check_grep "a bad number: the message names bad1.csv line 4, t_s and abc" "bad1.csv:4:.*t_s.*abc" "$T/last.err"
printf 't_s,id,x_m,y_m,status\n0,1,0,0,measured\n' > "$T/bad2.csv"
check_exit "a missing column fails (exit 1)" 1 "$WAKELINE" measure "$T/bad2.csv" -o "$T/x.json"
check_grep "a missing column: the message names bad2.csv line 1 and segment" "bad2.csv:1:.*segment" "$T/last.err"
{ head -1 "$T/CLEAN.csv"; sed -n '2,60p' "$T/CLEAN.csv" | grep ',1,[0-9.-]*,[0-9.-]*,' | tac; } > "$T/bad3.csv"
check_exit "times going backwards fail (exit 1)" 1 "$WAKELINE" measure "$T/bad3.csv" -o "$T/x.json"
check_grep "times going backwards: the message names bad3.csv line 3" "bad3.csv:3:.*not after" "$T/last.err"
check_no_file "no output is written on error" "$T/x.json"
check_exit "no -o is a usage error (exit 2)" 2 "$WAKELINE" measure "$T/CLEAN.csv"
check_exit "measure --help exits 0" 0 "$WAKELINE" measure --help
check_grep "measure --help shows the usage" "^usage: wakeline measure CLEAN.csv -o SUMMARY.json" "$T/last.out"
check_exit "a negative body diameter is a usage error (exit 2)" 2 \
	"$WAKELINE" measure "$T/CLEAN.csv" -o "$T/y.json" --body-diameter-m -1
# an output that cannot be written: exit 1, the path named, no SUMMARY.json left behind
check_exit "an unwritable --csv fails (exit 1)" 1 \
	"$WAKELINE" measure "$T/CLEAN.csv" -o "$T/y.json" --csv "$T/no/such/dir/runs.csv"
check_grep "the message names the unwritable table" "no/such/dir/runs.csv" "$T/last.err"
check_no_file "SUMMARY.json is not written when --csv fails" "$T/y.json"
check_eq "no temporary file is left behind" "$(ls -A "$T" | grep '\.tmp-' || true)" ""
done_testing
