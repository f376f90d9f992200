#!/usr/bin/env bash
# batch on real clips: an invented scene (one tagged robot circling
# counter-clockwise on r = 0.4 m, curvature 2.5 /m, in a 2.4 m tank) rendered
# by `wakeline synth`, copied under three names with a manifest, plus a file
# that is not a video and a manifest row naming a missing clip.  Checks: the
# two good clips give curvature 2.5 /m within 1 % (the renderer's path) and
# a counter-clockwise (positive) radius, the bad clip is listed failed with
# the decoder's message, the exit status is 1; a rerun skips the done clips;
# `process` on one clip gives the same summary.json runs as the batch.
set -euo pipefail
: "${WAKELINE:?}" "${WL_TEST_TMP:?}" "${WL_SOURCE_DIR:?}"
PY=/usr/bin/python3
rm -rf "$WL_TEST_TMP"; mkdir -p "$WL_TEST_TMP"; cd "$WL_TEST_TMP"
fail() { echo "FAIL: $*" >&2; exit 1; }
CAL_PY=$WL_SOURCE_DIR/tests/e2e/lib/track_cal.py
[ -f "$CAL_PY" ] || fail "tests/e2e/lib/track_cal.py (the track tests' calibration helper) is missing"

cat > scene.json <<'JSON'
{ "description": "invented test scene: one tagged robot circling in a 2.4 m tank",
  "seed": 5,
  "tank": { "size_m": [2.4, 1.4] },
  "camera": { "width_px": 960, "height_px": 540, "hfov_deg": 64, "position_m": [1.2, 0.7, 2.0] },
  "timing": { "fps": 30, "duration_s": 5 },
  "robots": [ { "id": 3, "diameter_m": 0.12, "height_m": 0.25,
                "marker": { "type": "tag", "tag_id": 3, "size_m": 0.07 },
                "path": { "start_m": [1.2, 0.3], "heading_deg": 0, "speed_mps": 0.25, "curvature_1pm": 2.5 } } ] }
JSON
"$WAKELINE" synth scene.json -o clip.mp4 -q || fail "synth exited $?"
$PY "$CAL_PY" clip.scene.json cal.json 0.25 || fail "cannot build cal.json"
mkdir -p clips/day2
cp clip.mp4 clips/g1.mp4
cp clip.mp4 clips/day2/g2.MOV
echo "this is not a video" > clips/broken.mp4
printf 'clip,gain,fin\ng1.mp4,0.5,round\nday2/g2.MOV,1.0,swept\nbroken.mp4,2,round\ngone.mp4,3,round\n' > manifest.csv

# usage and manifest errors stop before anything runs
set +e
"$WAKELINE" batch clips --cal cal.json -o out --shard 2/2 2> usage.err; rc=$?
[ "$rc" -eq 2 ] || fail "--shard 2/2 exited $rc, wants 2 (usage)"
printf 'clip,gain\ng1.mp4,1\ng1.mp4,2\n' > dup.csv
"$WAKELINE" batch clips --cal cal.json --manifest dup.csv -o out 2> dup.err; rc=$?
[ "$rc" -eq 1 ] || fail "a manifest listing a clip twice exited $rc, wants 1"
grep -q "dup.csv:3: clip 'g1.mp4' is listed again (first on line 2)" dup.err || fail "manifest error said: $(cat dup.err)"
[ ! -e out/clips/g1_mp4 ] || fail "a clip ran although the manifest was bad"

"$WAKELINE" batch clips --cal cal.json --manifest manifest.csv -o out -j 2 --x gain --group fin > batch1.txt 2> batch1.err
rc=$?
set -e
[ "$rc" -eq 1 ] || fail "batch with a bad clip exited $rc, wants 1: $(cat batch1.err)"
grep -q "3 clips: 2 done, 0 already complete, 1 failed; 1 manifest rows name missing" batch1.txt ||
	fail "batch said: $(cat batch1.txt)"

$PY - <<'PYEOF' || fail "summary.csv"
import csv
rows = {r["clip"]: r for r in csv.DictReader(open("out/summary.csv"))}
assert set(rows) == {"g1.mp4", "day2/g2.MOV", "broken.mp4", "gone.mp4"}, rows.keys()
for c in ("g1.mp4", "day2/g2.MOV"):
    r = rows[c]
    assert r["status"] == "ok" and r["headline"] == "true", r
    k = float(r["curvature_per_m"])
    # the renderer's path: curvature_1pm 2.5 in scene.json
    assert abs(k - 2.5) / 2.5 < 0.01, (c, k)
    assert float(r["radius_m"]) > 0, "counter-clockwise must be positive"
    lo, hi = float(r["curvature_ci95_per_m_lo"]), float(r["curvature_ci95_per_m_hi"])
    assert lo <= k <= hi, (lo, k, hi)
    print("%s: curvature %.4f /m (95%% %.4f..%.4f), radius %.4f m" % (c, k, lo, hi, float(r["radius_m"])))
assert rows["g1.mp4"]["gain"] == "0.5" and rows["day2/g2.MOV"]["fin"] == "swept"
assert rows["broken.mp4"]["status"] == "failed" and "broken.mp4" in rows["broken.mp4"]["error"], rows["broken.mp4"]
assert rows["gone.mp4"]["status"] == "missing" and "manifest.csv:5" in rows["gone.mp4"]["error"]
PYEOF
for f in raw.csv clean.csv clean.json summary.json path_m.svg path_m.png heading.svg heading.png process.log clip.json; do
	[ -s "out/clips/day2__g2_MOV/$f" ] || fail "out/clips/day2__g2_MOV/$f missing"
done
[ -s out/report.html ] && [ -s out/sweep_curvature.svg ] || fail "no report or sweep plot"

# rerun: done clips are skipped, the bad one is tried again
set +e
"$WAKELINE" batch clips --cal cal.json --manifest manifest.csv -o out -j 2 --x gain --group fin > batch2.txt 2> batch2.err
set -e
grep -q "3 clips: 0 done, 2 already complete, 1 failed" batch2.txt || fail "rerun said: $(cat batch2.txt)"
[ "$(grep -c $'\tskip\t' out/journal.log)" -eq 2 ] || fail "journal has not 2 skip lines"

# process alone gives the same runs
"$WAKELINE" process clips/g1.mp4 --cal cal.json -o single -q || fail "process exited $?"
$PY - <<'PYEOF' || fail "process and batch differ"
import json
a = json.load(open("single/summary.json"))["runs"]
b = json.load(open("out/clips/g1_mp4/summary.json"))["runs"]
assert [r["curvature_per_m"] for r in a] == [r["curvature_per_m"] for r in b], (a, b)
PYEOF
echo "ok"
