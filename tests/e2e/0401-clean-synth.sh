#!/usr/bin/env bash
# 0401-clean-synth.sh: `wakeline clean` on invented synthetic runs
# (tests/clean/synth_raw.py, fixed seeds) against their truth:
#  - 2 mm / 2 deg noise: position RMSE at least 2x below the raw noise, mean
#    speed in steady motion within 2 % of truth, yaw-rate RMSE printed;
#  - variable frame rate gives the same track as constant rate (stated
#    tolerances below);
#  - 5 % outliers of 10 cm and one 180-degree flip: all flagged, none in the
#    output pose;
#  - auto trim within one oscillation period of the true settling time (98 %
#    of the final speed after a 1 s rest and an exponential speed-up);
#  - a still run reported as still; gaps bridged / split; wall cut; resampling;
#  - the sidecar's SHA-256 equals sha256sum's (GNU coreutils).
source "$WL_SOURCE_DIR/tests/e2e/lib/harness.sh"
T="$WL_TEST_TMP"
G="$WL_SOURCE_DIR/tests/clean/synth_raw.py"
E="$WL_SOURCE_DIR/tests/clean/eval_clean.py"

# run NAME GENERATOR-ARGS... [-- CLEAN-ARGS...]: makes the invented run and
# checks that clean succeeds on it (its report in NAME.out)
run() {
	local name=$1
	shift
	local gen=() cl=()
	while [ $# -gt 0 ] && [ "$1" != "--" ]; do
		gen+=("$1")
		shift
	done
	[ $# -eq 0 ] || shift
	cl=("$@")
	"$PY" "$G" "${gen[@]}" --out "$T/$name.raw.csv" --truth "$T/$name.truth.csv" > "$T/$name.meta" ||
		fail "synth_raw.py ${gen[*]} exited $?"
	check_exit "clean on the '$name' run succeeds" 0 "$WAKELINE" clean "$T/$name.raw.csv" -o "$T/$name.csv" "${cl[@]}"
	cp "$T/last.out" "$T/$name.out"
}
settle() { awk '/settle_s/{print $2}' "$T/$1.meta"; }
# evaluate NAME CLEAN.csv TRUTH RAW [eval_clean.py options]: the check that
# the figures of eval_clean.py hold (its --check options; it prints them)
evaluate() {
	local name=$1
	shift
	local what=("${@:4}")
	check "$name: ${what[*]//--check /}" "$PY" "$E" "$@"
}

note "constant frame rate, 30 fps, 0.1 m/s on a 0.6 m circle, 10 deg / 2 Hz heading oscillation"
run cfr --seed 1
evaluate "constant rate" "$T/cfr.csv" "$T/cfr.truth.csv" "$T/cfr.raw.csv" --settle "$(settle cfr)" \
	--check "pos_rmse_ratio>=2" --check "speed_mean_rel_err<=0.02" --check "trim_err_s<=0.5" \
	--check "rmse_heading_deg<=2.0"

note "variable frame rate (steps uniform in 17-50 ms), same motion"
run vfr --seed 2 --vfr
evaluate "variable rate" "$T/vfr.csv" "$T/vfr.truth.csv" "$T/vfr.raw.csv" --settle "$(settle vfr)" \
	--check "pos_rmse_ratio>=2" --check "speed_mean_rel_err<=0.02" --check "trim_err_s<=0.5" \
	--check "rmse_heading_deg<=2.0"
# same result as constant rate: the two smoothed tracks (independent noise)
# agree to 1.5 mm RMS in position (each is ~0.6 mm from truth), their mean
# steady speeds to 1 %, their trim times to one period (0.5 s)
check_py "variable rate agrees with constant rate: 1.5 mm RMS, speed 1 %, trim 0.5 s" \
	"$T/cfr.csv" "$T/vfr.csv" "$T/cfr.json" "$T/vfr.json" <<'PYEOF'
import csv, json, sys, numpy as np
def load(p):
    r = list(csv.DictReader(open(p)))
    g = lambda k: np.array([float(x[k]) for x in r])
    return g("t_s"), g("x_m"), g("y_m"), g("speed_mps"), g("segment")
t1, x1, y1, s1, g1 = load(sys.argv[1]); t2, x2, y2, s2, g2 = load(sys.argv[2])
m = (g2 >= 0) & (t2 >= t1[0]) & (t2 <= t1[-1])
d = np.hypot(np.interp(t2[m], t1, x1) - x2[m], np.interp(t2[m], t1, y1) - y2[m])
rms = 1e3 * np.sqrt(np.mean(d ** 2))
steady = m & (t2 > 3.5)
sp = abs(np.mean(s2[steady]) / np.mean(np.interp(t2[steady], t1, s1)) - 1)
tr1 = json.load(open(sys.argv[3]))["robots"][0]["trim"]["t_s"]
tr2 = json.load(open(sys.argv[4]))["robots"][0]["trim"]["t_s"]
print("vfr_vs_cfr: position RMS difference %.3f mm, mean speed difference %.4f, trim %.3f vs %.3f s" % (rms, sp, tr1, tr2))
assert rms <= 1.5 and sp <= 0.01 and abs(tr1 - tr2) <= 0.5, "variable frame rate differs from constant rate"
PYEOF

note "outliers: 5 % of frames moved by 10 cm, one heading flipped by 180 deg"
for v in "" "--vfr"; do
	run outl --seed 3 --outliers 0.05 --flip-frame 150 $v
	evaluate "outliers${v:+ ($v)}" "$T/outl.csv" "$T/outl.truth.csv" "$T/outl.raw.csv" --settle "$(settle outl)" \
		--check "outliers_missed<=0" --check "outlier_max_pos_err_mm<=5" \
		--check "outlier_max_heading_err_deg<=6" --check "pos_rmse_ratio>=2" \
		--check "outliers_flagged<=25"
done
note "Savitzky-Golay option (7 points, quadratic, local fits in t) on the outlier run"
check_exit "clean --smoother sg succeeds" 0 \
	"$WAKELINE" clean -q "$T/outl.raw.csv" -o "$T/outl_sg.csv" --smoother sg --sg-window 7 --sg-order 2
evaluate "Savitzky-Golay on the outlier run" "$T/outl_sg.csv" "$T/outl.truth.csv" "$T/outl.raw.csv" --settle "$(settle outl)" \
	--check "outliers_missed<=0" --check "outlier_max_pos_err_mm<=5" --check "pos_rmse_ratio>=1.5" \
	--check "trim_err_s<=0.5"

note "heading through +-pi (path direction from 2.6 rad up past pi) with a 180-degree flip at frame 200"
run pi --seed 12 --psi0 2.6 --flip-frame 200
evaluate "heading through +-pi" "$T/pi.csv" "$T/pi.truth.csv" "$T/pi.raw.csv" --settle "$(settle pi)" \
	--check "rmse_heading_deg<=1.5" --check "outliers_missed<=0" --check "outlier_max_heading_err_deg<=6"
check "the track passes +-pi (headings beyond 3.1 rad)" awk -F, 'NR > 1 && ($6 > 3.1 || $6 < -3.1) { n++ } END { print n + 0 " rows"; exit !n }' "$T/pi.csv"
check "headings are wrapped to (-pi, pi]" \
	awk -F, 'NR > 1 && ($6 > 3.14159266 || $6 <= -3.14159265) { print "line " NR ": " $6; bad = 1 } END { exit bad }' "$T/pi.csv"

note "constant-acceleration model on the first run"
check_exit "clean --model ca succeeds" 0 "$WAKELINE" clean -q "$T/cfr.raw.csv" -o "$T/ca.csv" --model ca
evaluate "constant-acceleration model" "$T/ca.csv" "$T/cfr.truth.csv" "$T/cfr.raw.csv" --settle "$(settle cfr)" \
	--check "pos_rmse_ratio>=2" --check "speed_mean_rel_err<=0.02" --check "trim_err_s<=0.5"

note "--trim 3 and --trim none"
check_exit "clean --trim 3 succeeds" 0 "$WAKELINE" clean -q "$T/cfr.raw.csv" -o "$T/t3.csv" --trim 3
check_eq "--trim 3: the first analysed row is at 3 s" \
	"$(awk -F, 'NR > 1 && $11 >= 0 { print $1; exit }' "$T/t3.csv")" "3.000000"
check "--trim 3: every row before 3 s is cut as 'start'" \
	awk -F, 'NR > 1 && $1 < 3 && $13 != "start" { print "line " NR ": " $0; bad = 1 } END { exit bad }' "$T/t3.csv"
check_exit "clean --trim none succeeds" 0 "$WAKELINE" clean -q "$T/cfr.raw.csv" -o "$T/tn.csv" --trim none
check "--trim none: no row is cut" \
	awk -F, 'NR > 1 && $11 < 0 { print "line " NR ": " $0; bad = 1 } END { exit bad }' "$T/tn.csv"

note "auto trim on other runs (slower speed-up, straight path, faster robot at 1 Hz)"
run tau --seed 4 --tau 0.8
evaluate "slower speed-up" "$T/tau.csv" "$T/tau.truth.csv" "$T/tau.raw.csv" --settle "$(settle tau)" --check "trim_err_s<=0.5"
run straight --seed 5 --radius 0 --amp-deg 15
evaluate "straight path" "$T/straight.csv" "$T/straight.truth.csv" "$T/straight.raw.csv" --settle "$(settle straight)" \
	--check "trim_err_s<=0.5"
run fast --seed 6 --speed 0.2 --freq 1
evaluate "faster robot" "$T/fast.csv" "$T/fast.truth.csv" "$T/fast.raw.csv" --settle "$(settle fast)" --check "trim_err_s<=1.0" \
	--check "speed_win_max_rel_err<=0.02"

note "a run that never moves"
run still --seed 7 --still
check_grep "the report says robot 7 is still" "robot 7: still" "$T/still.out"
check_py "a still run: every row cut as still, the sidecar says still, no segments" "$T/still.csv" "$T/still.json" <<'PYEOF'
import csv, json, sys
rows = list(csv.DictReader(open(sys.argv[1])))
assert rows and all(r["segment"] == "-1" and r["cut"] == "still" for r in rows), "still rows not cut"
rb = json.load(open(sys.argv[2]))["robots"][0]
assert rb["still"] is True and rb["trim"]["reason"] == "still" and rb["segments"] == []
PYEOF

note "gaps: 0.3 s bridged, 0.8 s split into two segments"
run gap1 --seed 8 --gap 6,0.3
check_grep "a 0.3 s gap is bridged" "1 gaps (1 filled, 0 split)" "$T/gap1.out"
check_eq "the bridged gap has 9 filled rows" "$(grep -c ',filled,' "$T/gap1.csv")" 9
evaluate "bridged gap" "$T/gap1.csv" "$T/gap1.truth.csv" "$T/gap1.raw.csv" --settle "$(settle gap1)" --check "rmse_pos_mm<=1.5"
run gap2 --seed 8 --gap 6,0.8
check_grep "a 0.8 s gap splits the run into 2 segments" "1 gaps (0 filled, 1 split); .*2 segments" "$T/gap2.out"
check_no_grep "CLEAN.csv has no lost rows" ',lost,' "$T/gap2.csv"

note "wall cut: tank 0..1 m x 0..1.2 m, body 0.1 m"
run wall --seed 9 -- --tank 0,0,1.0,1.2
check_py "the wall cut: no analysed row within the margin, every row after it cut as wall" \
	"$T/wall.csv" "$T/wall.json" <<'PYEOF'
import csv, json, sys
rows = list(csv.DictReader(open(sys.argv[1])))
rb = json.load(open(sys.argv[2]))["robots"][0]
tw = rb["end"]["t_s"]
assert rb["end"]["reason"] == "wall" and tw is not None
for r in rows:
    x, y, t = float(r["x_m"]), float(r["y_m"]), float(r["t_s"])
    d = min(x, 1.0 - x, y, 1.2 - y)
    if r["segment"] != "-1":
        assert d >= 0.05 - 1e-9 and t < tw, "analysed row within the wall margin"
    if t >= tw:
        assert r["cut"] == "wall"
print("wall cut at %.3f s, distance %.4f m" % (tw, rb["end"]["distance_to_outline_m"]))
PYEOF

note "resampling at 50 Hz"
check_exit "clean --rate 50 succeeds" 0 "$WAKELINE" clean -q "$T/cfr.raw.csv" -o "$T/rs.csv" --rate 50
evaluate "resampled at 50 Hz" "$T/rs.csv" "$T/cfr.truth.csv" "$T/cfr.raw.csv" --settle "$(settle cfr)" --interp \
	--check "rmse_pos_mm<=1.0" --check "speed_mean_rel_err<=0.02"
check_py "resampled rows are 20 ms apart" "$T/rs.csv" <<'PYEOF'
import csv, sys, numpy as np
t = np.array([float(r["t_s"]) for r in csv.DictReader(open(sys.argv[1]))])
assert np.allclose(np.diff(t), 0.02, atol=2e-6), "not evenly spaced"
PYEOF

note "the measure stage reads CLEAN.csv: radius and speed of the first run"
check_exit "measure on CLEAN.csv succeeds" 0 "$WAKELINE" measure "$T/cfr.csv" -o "$T/cfr.summary.json"
check_py "measure on CLEAN.csv: radius and mean speed within 1 % of the truth" "$T/cfr.summary.json" <<'PYEOF'
import json, sys
r = [x for x in json.load(open(sys.argv[1]))["runs"] if x["headline"]][0]
print("measure on CLEAN.csv: radius %.4f m (truth 0.6), mean speed %.4f m/s (truth 0.1)" % (r["radius_m"], r["mean_speed_mps"]))
assert abs(r["radius_m"] / 0.6 - 1) < 0.01 and abs(r["mean_speed_mps"] / 0.1 - 1) < 0.01
PYEOF

want=$(sha256sum "$T/cfr.raw.csv" | cut -d' ' -f1)
check_grep "the sidecar's sha256 equals sha256sum's" "\"sha256\":[[:space:]]*\"$want\"" "$T/cfr.json"
done_testing
