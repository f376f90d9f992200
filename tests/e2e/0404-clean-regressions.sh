#!/usr/bin/env bash
# 0404-clean-regressions.sh: cleaning that follows manoeuvres and trims
# robustly (issue 12).
#  - tests/data/regressions/late-start-circle.raw.csv (wakeline's own RAW.csv of
#    an invented scene; the scene's truth: settles at 2.9 s, clockwise circle of
#    radius 0.45 m, yaw oscillation period 1.25 s): at most 1 % of rows flagged,
#    trim within one oscillation period of the settling, measure's radius
#    -0.45 m within 1 %;
#  - a noise level given 10x too small: the model is widened, said on stderr
#    and in the sidecar, and at most 3 % of the detections are rejected;
#  - trims on invented synthetic runs (tests/clean/synth_raw.py) with
#    occlusions after the settling (1 s, split; 0.3-0.4 s, bridged), a late start
#    (5 s of rest) and two robots in one file: each within one oscillation period
#    (0.5 s) of its true 98 % settling time, and an occlusion moves the trim by at
#    most one period; an occlusion that hides the settling puts the trim within
#    one period after its end.
set -euo pipefail
PY=/usr/bin/python3
T="$WL_TEST_TMP"; mkdir -p "$T"
G="$WL_SOURCE_DIR/tests/clean/synth_raw.py"
fail() { echo "FAIL: $*" >&2; exit 1; }

echo "== late-start circle (regression input)"
"$WAKELINE" clean "$WL_SOURCE_DIR/tests/data/regressions/late-start-circle.raw.csv" -o "$T/ls.csv" \
	2> "$T/ls.err" | tee "$T/ls.out"
"$WAKELINE" measure "$T/ls.csv" -o "$T/ls.summary.json" | tee -a "$T/ls.out"
$PY - "$T/ls.csv" "$T/ls.json" "$T/ls.summary.json" <<'PYEOF'
import csv, json, sys
rows = list(csv.DictReader(open(sys.argv[1])))
flagged = sum(r["status"] == "outlier" for r in rows)
rb = json.load(open(sys.argv[2]))["robots"][0]
run = [r for r in json.load(open(sys.argv[3]))["runs"] if r["headline"]][0]
trim, settle, period = rb["trim"]["t_s"], 2.9, 1.25
print("late-start circle: %d of %d rows flagged (%.2f %%), trim %.3f s (settles at %.1f s, period %.2f s), "
      "radius %.4f m (truth -0.45)" % (flagged, len(rows), 100.0 * flagged / len(rows), trim, settle, period,
                                      run["radius_m"]))
assert flagged <= 0.01 * len(rows), "more than 1 % of rows flagged"
assert abs(trim - settle) <= period, "trim not within one oscillation period of the settling"
assert run["radius_m"] is not None and abs(run["radius_m"] / -0.45 - 1) <= 0.01, "radius not -0.45 m within 1 %"
PYEOF

echo "== a noise level given 10x too small is widened, and said"
$PY "$G" --seed 21 --out "$T/w.raw.csv" --truth "$T/w.truth.csv" > /dev/null
"$WAKELINE" clean -q "$T/w.raw.csv" -o "$T/w.csv" --sigma-pos-m 0.0002 2> "$T/w.err"
cat "$T/w.err"
grep -q "the model was widened" "$T/w.err" || fail "no widening warning"
$PY - "$T/w.json" <<'PYEOF'
import json, sys
rb = json.load(open(sys.argv[1]))["robots"][0]
n = rb["measured"] + rb["outliers"]["total"]
print("widened %d step(s): sigma %.2f mm (given 0.20), %d of %d rejected" % (
    rb["noise"]["widened_position"], 1e3 * rb["noise"]["sigma_pos_m"], rb["outliers"]["total"], n))
assert rb["noise"]["widened_position"] >= 1 and rb["outliers"]["total"] <= 0.03 * n
PYEOF

echo "== trims with occlusions, a late start, two robots"
trim_of() { $PY -c "import json,sys; r=[r for r in json.load(open(sys.argv[1]))['robots'] if r['id']==int(sys.argv[2])][0]; print(r['trim']['t_s'])" "$1" "$2"; }
settle_of() { awk '/settle_s/{print $2}' "$1"; }
check_trim() { # name, id, settle, [reference trim]
	local got; got=$(trim_of "$T/$1.json" "$2")
	$PY - "$1" "$got" "$3" "${4:-}" <<'PYEOF'
import sys
name, got, settle, ref = sys.argv[1], float(sys.argv[2]), float(sys.argv[3]), sys.argv[4]
msg = "%s: trim %.3f s, settling %.3f s (error %+.3f s)" % (name, got, settle, got - settle)
if ref:
    msg += ", without the occlusion %.3f s" % float(ref)
print(msg)
assert abs(got - settle) <= 0.5, "trim not within one period (0.5 s) of the settling"
assert not ref or abs(got - float(ref)) <= 0.5, "the occlusion moved the trim by more than one period"
PYEOF
}
$PY "$G" --seed 4 --out "$T/g0.raw.csv" --truth "$T/g0.truth.csv" > "$T/g0.meta"
"$WAKELINE" clean -q "$T/g0.raw.csv" -o "$T/g0.csv"
ref=$(trim_of "$T/g0.json" 7)
check_trim g0 7 "$(settle_of "$T/g0.meta")"
for gap in 4.0,1.0 6.0,1.0 4.0,0.4 6.0,0.3; do # after the settling: split (1 s) or bridged
	$PY "$G" --seed 4 --gap "$gap" --out "$T/g$gap.raw.csv" --truth "$T/g$gap.truth.csv" > "$T/g$gap.meta"
	"$WAKELINE" clean -q "$T/g$gap.raw.csv" -o "$T/g$gap.csv"
	check_trim "g$gap" 7 "$(settle_of "$T/g$gap.meta")" "$ref"
done
# an occlusion from 2 s to 3 s hides the settling (2.56 s): the rows before it were
# never shown steady, so the trim is where the data confirm it, after the
# occlusion, within one period of its end
$PY "$G" --seed 4 --gap 2.0,1.0 --out "$T/gh.raw.csv" --truth "$T/gh.truth.csv" > "$T/gh.meta"
"$WAKELINE" clean -q "$T/gh.raw.csv" -o "$T/gh.csv"
$PY - "$(trim_of "$T/gh.json" 7)" "$(settle_of "$T/gh.meta")" <<'PYEOF'
import sys
got, settle = float(sys.argv[1]), float(sys.argv[2])
print("occlusion over the settling: trim %.3f s, settling %.3f s, occlusion 2.0-3.0 s" % (got, settle))
assert settle - 0.5 <= got <= 3.0 + 0.5, "trim not between the settling and one period after the occlusion"
PYEOF
$PY "$G" --seed 5 --rest 5 --duration 14 --out "$T/late.raw.csv" --truth "$T/late.truth.csv" > "$T/late.meta"
"$WAKELINE" clean -q "$T/late.raw.csv" -o "$T/late.csv"
check_trim late 7 "$(settle_of "$T/late.meta")"
# two robots in one file: robot 3 starts at 0.5 s, robot 8 at 3 s with a 1 s occlusion at 7 s
$PY "$G" --seed 6 --id 3 --rest 0.5 --out "$T/a.raw.csv" --truth "$T/a.truth.csv" > "$T/a.meta"
$PY "$G" --seed 7 --id 8 --rest 3 --gap 7,1.0 --speed 0.15 --freq 1.5 --out "$T/b.raw.csv" --truth "$T/b.truth.csv" > "$T/b.meta"
$PY - "$T/a.raw.csv" "$T/b.raw.csv" "$T/two.raw.csv" <<'PYEOF'
import csv, sys
rows = []
for p in sys.argv[1:3]:
    rd = csv.reader(open(p)); head = next(rd); rows += list(rd)
rows.sort(key=lambda r: (int(r[1]), int(r[2])))
w = csv.writer(open(sys.argv[3], "w"), lineterminator="\n"); w.writerow(head); w.writerows(rows)
PYEOF
"$WAKELINE" clean -q "$T/two.raw.csv" -o "$T/two.csv"
check_trim two 3 "$(settle_of "$T/a.meta")"
check_trim two 8 "$(settle_of "$T/b.meta")"
echo "0404-clean-regressions: ok"
