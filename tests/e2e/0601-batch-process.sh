#!/usr/bin/env bash
# batch on real clips: an invented scene (one tagged robot circling
# counter-clockwise on r = 0.4 m, curvature 2.5 /m, in a 2.4 m tank) rendered
# by `wakeline synth`, copied under five names, plus a file that is not a
# video: six clips, one of them without a manifest row, and a manifest row
# naming a missing clip.  Checks: the five good clips give curvature 2.5 /m
# within 1 % (the renderer's path) and a counter-clockwise (positive)
# radius, the one without a row has empty parameter cells and a warning, the
# bad clip is listed failed with the decoder's message, the exit status is 1;
# a rerun skips the done clips; a batch killed with SIGKILL in the middle
# finishes on the rerun without redoing completed clips, and every file
# parses; `process` on one clip gives the same summary.json runs as the batch.
source "$WL_SOURCE_DIR/tests/e2e/lib/harness.sh"
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
for n in 3 4 5; do cp clip.mp4 clips/g$n.mp4; done
echo "this is not a video" > clips/broken.mp4
# g5.mp4 has no row
printf 'clip,gain,fin\ng1.mp4,0.5,round\nday2/g2.MOV,1.0,swept\nbroken.mp4,2,round\ngone.mp4,3,round\ng3.mp4,1.5,round\ng4.mp4,2.0,swept\n' > manifest.csv

# usage and manifest errors stop before anything runs
check_exit "--shard 2/2 is a usage error (exit 2)" 2 "$WAKELINE" batch clips --cal cal.json -o out --shard 2/2
printf 'clip,gain\ng1.mp4,1\ng1.mp4,2\n' > dup.csv
check_exit "a manifest listing a clip twice fails (exit 1)" 1 \
	"$WAKELINE" batch clips --cal cal.json --manifest dup.csv -o out
check_grep "the manifest error names dup.csv line 3" "dup.csv:3: clip 'g1.mp4' is listed again (first on line 2)" last.err
check_no_file "no clip runs when the manifest is bad" out/clips/g1_mp4

check_exit "batch with a bad clip exits 1" 1 \
	"$WAKELINE" batch clips --cal cal.json --manifest manifest.csv -o out -j 2 --x gain --group fin
cp last.out batch1.txt
cp last.err batch1.err
check_grep "batch: 5 done, 1 failed, 1 missing, 1 without a manifest row" \
	"6 clips: 5 done, 0 already complete, 1 failed; 1 manifest rows name missing clips; 1 without a manifest row" batch1.txt
check_grep "a warning names the clip without a manifest row" "g5.mp4" batch1.err

check_py "summary.csv: curvature 2.5 /m within 1 %, positive radius, failed and missing rows" <<'PYEOF'
import csv
rows = {r["clip"]: r for r in csv.DictReader(open("out/summary.csv"))}
good = ("g1.mp4", "day2/g2.MOV", "g3.mp4", "g4.mp4", "g5.mp4")
assert set(rows) == set(good) | {"broken.mp4", "gone.mp4"}, rows.keys()
assert rows["g5.mp4"]["gain"] == "" and rows["g5.mp4"]["fin"] == "", rows["g5.mp4"]
for c in good:
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
	check_file "the clip folder has $f" "out/clips/day2__g2_MOV/$f"
done
check_file "the sweep has report.html" out/report.html
check_file "the sweep has sweep_curvature.svg" out/sweep_curvature.svg

# rerun: done clips are skipped, the bad one is tried again
check_exit "the rerun exits 1 (the bad clip fails again)" 1 \
	"$WAKELINE" batch clips --cal cal.json --manifest manifest.csv -o out -j 2 --x gain --group fin
cp last.out batch2.txt
check_grep "the rerun: 0 done, 5 already complete, 1 failed" "6 clips: 0 done, 5 already complete, 1 failed" batch2.txt
check_eq "the journal has 5 skip lines" "$(grep -c $'\tskip\t' out/journal.log)" 5

# SIGKILL in the middle: one worker at a time, killed once two clips are done
rm -f clips/broken.mp4
"$WAKELINE" batch clips --cal cal.json --manifest manifest.csv -o killed -j 1 -q > /dev/null 2>&1 &
bpid=$!
for _ in $(seq 1 600); do
	[ "$(ls killed/clips/*/clip.json 2>/dev/null | wc -l)" -ge 2 ] && break
	sleep 0.1
done
kill -9 "$bpid" 2>/dev/null || fail "the batch ended before it could be killed"
wait "$bpid" 2>/dev/null || true
done_before=$(ls killed/clips/*/clip.json | wc -l)
check_num "at least 2 clips were done at the kill" "$done_before" ">=" 2
check_num "fewer than 5 clips were done at the kill" "$done_before" "<" 5
"$WAKELINE" batch clips --cal cal.json --manifest manifest.csv -o killed -j 2 > batch3.txt 2> batch3.err || true
check_grep "the rerun after SIGKILL does only the clips left" \
	"5 clips: $((5 - done_before)) done, $done_before already complete, 0 failed" batch3.txt
check_py "after SIGKILL and the rerun every file in killed/ parses, 5 clips ok" <<'PYEOF'
import csv, glob, json, os, xml.etree.ElementTree as ET
n = 0
for f in glob.glob("killed/**/*", recursive=True):
    if os.path.isdir(f):
        continue
    assert ".tmp-" not in os.path.basename(f), "temporary file left: " + f
    if f.endswith(".json"):
        json.load(open(f))
    elif f.endswith(".csv"):
        rows = list(csv.reader(open(f)))
        assert rows and all(len(r) == len(rows[0]) for r in rows), f
    elif f.endswith(".svg"):
        ET.parse(f)
    elif f.endswith(".png"):
        assert open(f, "rb").read(8) == b"\x89PNG\r\n\x1a\n", f
    n += 1
rows = list(csv.DictReader(open("killed/summary.csv")))
assert len(rows) == 7 and sum(r["status"] == "ok" for r in rows) == 5, [(r["clip"], r["status"]) for r in rows]
print("after SIGKILL and rerun: %d files parse, 5 clips ok" % n)
PYEOF

# process alone gives the same runs
check_exit "process on one clip succeeds" 0 "$WAKELINE" process clips/g1.mp4 --cal cal.json -o single -q
check_py "process gives the same curvatures as the batch" <<'PYEOF'
import json
a = json.load(open("single/summary.json"))["runs"]
b = json.load(open("out/clips/g1_mp4/summary.json"))["runs"]
assert a and [r["curvature_per_m"] for r in a] == [r["curvature_per_m"] for r in b], (a, b)
PYEOF
done_testing
