#!/usr/bin/env bash
# A colour-mode sweep through `batch`, and the same clips through `process`.
# Four small clips of an invented scene (one robot with two coloured caps on a
# circular arc; start, heading and curvature drawn from a fixed seed) are
# rendered by `wakeline synth` with the same camera:
#   c1, c2  red front / blue back caps: the batch's --mode colour --robots
#   c3      green front / blue back caps: its manifest row sets `robots`
#   c4      a tag robot: its manifest row sets `mode` tag and `robots`
# Checks against the renderer's truth (CLIP.truth.csv), for every run of every
# clip: position RMSE <= 5 mm and heading RMSE <= 3 degrees over the rows of
# the run (clean.csv, segment >= 0), and the curvature within 5 % of the
# scene's (docs/synth.md: the path is an arc of constant curvature).  Then
# each clip through `process` with the options its row gives: raw.csv and
# clean.csv byte for byte the batch's, summary.json's runs equal.  Colour
# ranges without --mode colour are refused with what to add, in process (exit
# 2) and in a manifest row (that clip fails, the others do not).
source "$WL_SOURCE_DIR/tests/e2e/lib/track.bash"
need_synth

$PY - <<'PYEOF'
import json, math, random
random.seed(602)
caps = {"rb": ([220, 40, 40], [40, 80, 220]), "gb": ([40, 200, 60], [40, 80, 220])}
clips = {"c1": "rb", "c2": "rb", "c3": "gb", "c4": "tag"}
for name, kind in clips.items():
    k = random.choice([-1, 1]) * random.uniform(1.2, 2.5)       # curvature, 1/m
    marker = ({"type": "tag", "tag_id": 5, "size_m": 0.07} if kind == "tag" else
              {"type": "caps", "front_rgb": caps[kind][0], "back_rgb": caps[kind][1],
               "cap_diameter_m": 0.035, "offset_m": 0.03})
    scene = {"description": "invented test scene for the colour sweep: one robot on an arc",
             "seed": random.randrange(1, 10**6),
             "tank": {"size_m": [2.4, 1.4]},
             "camera": {"width_px": 960, "height_px": 540, "hfov_deg": 64, "position_m": [1.2, 0.7, 2.0]},
             "timing": {"fps": 30, "duration_s": 3},
             "encoding": {"bit_rate_bps": 6000000},
             "robots": [{"id": 5 if kind == "tag" else 1, "diameter_m": 0.12, "height_m": 0.25,
                         "disc_rgb": [235, 235, 235], "marker": marker,
                         "path": {"start_m": [random.uniform(1.0, 1.4), random.uniform(0.6, 0.8)],
                                  "heading_deg": random.uniform(0, 360), "speed_mps": 0.2,
                                  "curvature_1pm": k}}]}
    json.dump(scene, open(name + ".json", "w"), indent=1)
PYEOF
mkdir -p clips
for c in c1 c2 c3 c4; do synth $c.json clips/$c.mp4; done
make_cal clips/c1.scene.json cal.json 0.25
cat > caps_rb.csv <<'CSV'
id,body_diameter_m,front_hsv_lo,front_hsv_hi,back_hsv_lo,back_hsv_hi
1,0.12,"170,120,80","8,255,255","105,120,80","125,255,255"
CSV
cat > caps_gb.csv <<'CSV'
id,body_diameter_m,front_hsv_lo,front_hsv_hi,back_hsv_lo,back_hsv_hi
1,0.12,"45,120,80","75,255,255","105,120,80","125,255,255"
CSV
printf 'id,body_diameter_m\n5,0.12\n' > tags.csv
printf 'clip,gain,robots,mode\nc1.mp4,1,,\nc2.mp4,2,,\nc3.mp4,3,caps_gb.csv,\nc4.mp4,4,tags.csv,tag\n' > manifest.csv

# colour ranges without --mode colour: refused with what to add
rc=0; "$WAKELINE" process clips/c1.mp4 --cal cal.json --robots caps_rb.csv -o bad 2> bad.err || rc=$?
[ "$rc" -eq 2 ] || fail "process with colour robots in tag mode exited $rc, wants 2"
grep -q "caps_rb.csv: robot 1 has colour ranges .* but the mode is tag: add --mode colour" bad.err ||
	fail "message: $(cat bad.err)"
[ ! -e bad/raw.csv ] || fail "process ran although the options contradict"

t0=$(date +%s.%N)
"$WAKELINE" batch clips --cal cal.json --manifest manifest.csv --mode colour --robots caps_rb.csv \
	--body-diameter-m 0.12 -o out -j 2 -q > batch.txt 2> batch.err || fail "batch exited $?: $(cat batch.err)"
t1=$(date +%s.%N)
cat batch.txt
grep -q "4 clips: 4 done, 0 already complete, 0 failed" batch.txt || fail "batch said: $(cat batch.txt)"

$PY - <<'PYEOF' || fail "the sweep does not match the renderer's truth"
import csv, json, math
for c in ("c1", "c2", "c3", "c4"):
    truth = {int(r["frame"]): r for r in csv.DictReader(open("clips/%s.truth.csv" % c))}
    k_true = json.load(open("%s.json" % c))["robots"][0]["path"]["curvature_1pm"]
    rows = list(csv.DictReader(open("out/clips/%s_mp4/clean.csv" % c)))
    runs = json.load(open("out/clips/%s_mp4/summary.json" % c))["runs"]
    assert runs, c + ": no runs"
    for run in runs:
        seg = [r for r in rows if int(r["id"]) == run["id"] and int(r["segment"]) == run["segment"]]
        assert len(seg) > 30, (c, len(seg))
        se = sh = 0.0
        for r in seg:
            t = truth[int(r["frame"])]
            se += (float(r["x_m"]) - float(t["x_m"])) ** 2 + (float(r["y_m"]) - float(t["y_m"])) ** 2
            d = float(r["heading_rad"]) - float(t["heading_rad"])
            sh += math.atan2(math.sin(d), math.cos(d)) ** 2
        pos_mm = 1000 * math.sqrt(se / len(seg)); head_deg = math.degrees(math.sqrt(sh / len(seg)))
        k = run["curvature_per_m"]
        print("%s id %d segment %d: %d rows, position RMSE %.2f mm, heading RMSE %.2f deg, "
              "curvature %.4f /m (scene %.4f)" % (c, run["id"], run["segment"], len(seg), pos_mm, head_deg, k, k_true))
        assert pos_mm <= 5, (c, pos_mm)
        assert head_deg <= 3, (c, head_deg)
        assert abs(k - k_true) <= 0.05 * abs(k_true), (c, k, k_true)
# the clip whose row set robots tracked its green caps, the one whose row set mode tracked a tag
assert open("out/clips/c3_mp4/raw.csv").read().count(",caps\n") > 60
assert open("out/clips/c4_mp4/raw.csv").read().count(",tag\n") > 60
PYEOF

# the same clips through process, one by one, with the options their rows give
t2=$(date +%s.%N)
"$WAKELINE" process clips/c1.mp4 --cal cal.json --mode colour --robots caps_rb.csv --body-diameter-m 0.12 -o p/c1 -q
"$WAKELINE" process clips/c2.mp4 --cal cal.json --mode colour --robots caps_rb.csv --body-diameter-m 0.12 -o p/c2 -q
"$WAKELINE" process clips/c3.mp4 --cal cal.json --mode colour --robots caps_gb.csv --body-diameter-m 0.12 -o p/c3 -q
"$WAKELINE" process clips/c4.mp4 --cal cal.json --mode tag --robots tags.csv --body-diameter-m 0.12 -o p/c4 -q
t3=$(date +%s.%N)
for c in c1 c2 c3 c4; do
	cmp out/clips/${c}_mp4/raw.csv p/$c/raw.csv || fail "$c: raw.csv of process and batch differ"
	cmp out/clips/${c}_mp4/clean.csv p/$c/clean.csv || fail "$c: clean.csv of process and batch differ"
done
check_py "process and batch give the same runs for the 4 clips" <<'PYEOF'
import json
for c in ("c1", "c2", "c3", "c4"):
    a = json.load(open("p/%s/summary.json" % c))["runs"]
    b = json.load(open("out/clips/%s_mp4/summary.json" % c))["runs"]
    assert a == b, (c, a, b)
print("process and batch: identical raw.csv, clean.csv and runs for the 4 clips")
PYEOF

# a manifest row whose robots have colours but whose mode is tag: that clip fails, saying what to add
printf 'clip,robots,mode\nc1.mp4,,\nc3.mp4,caps_gb.csv,tag\n' > contradict.csv
mkdir -p two && cp clips/c1.mp4 clips/c3.mp4 two/
rc=0; "$WAKELINE" batch two --cal cal.json --manifest contradict.csv --mode colour --robots caps_rb.csv -o out2 -q \
	> two.txt 2> two.err || rc=$?
check_eq "a contradicting manifest row: batch exits 1" "$rc" 1
check_grep "one clip done, the contradicting one failed" "2 clips: 1 done, 0 already complete, 1 failed" two.txt
check_grep "summary.csv says what to add for the contradicting row" \
	"c3.mp4: .*caps_gb.csv: robot 1 has colour ranges .* but the mode is tag: add --mode colour" out2/summary.csv
awk -v a="$t0" -v b="$t1" -v c="$t2" -v d="$t3" \
	'BEGIN { printf "times: batch of 4 clips %.1f s (-j 2), process one by one %.1f s\n", b - a, d - c }'
done_testing
