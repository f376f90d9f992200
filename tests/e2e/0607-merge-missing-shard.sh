#!/usr/bin/env bash
# merge never hides a missing clip.  Six copies of a small invented clip
# (tests/data/tiny-scene.json) split into 3 shards (clip i -> shard i % 3);
# shards 0 and 2 run, shard 1 never does.  `merge` must exit 1, name both
# clips of shard 1 (and the shard to run again) in its output, list them
# with status `missing` in summary.csv and in report.html; `--partial`
# exits 0 with the same table.  Once shard 1 has run, merge exits 0 and
# summary.csv equals a plain unsharded batch of the same clips.
set -euo pipefail
: "${WAKELINE:?}" "${WL_TEST_TMP:?}" "${WL_SOURCE_DIR:?}"
PY=/usr/bin/python3
rm -rf "$WL_TEST_TMP"; mkdir -p "$WL_TEST_TMP"; cd "$WL_TEST_TMP"
fail() { echo "FAIL: $*" >&2; exit 1; }
"$WAKELINE" synth "$WL_SOURCE_DIR/tests/data/tiny-scene.json" -o clip.mp4 -q
$PY "$WL_SOURCE_DIR/tests/e2e/lib/track_cal.py" clip.scene.json cal.json 0.25
mkdir -p clips
for n in 0 1 2 3 4 5; do cp clip.mp4 clips/c$n.mp4; done
printf 'clip,gain\n' > m.csv
for n in 0 1 2 3 4 5; do echo "c$n.mp4,0.$n" >> m.csv; done

for k in 0 2; do
	"$WAKELINE" batch clips --cal cal.json --manifest m.csv -o out --shard $k/3 -j 1 -q > s$k.txt 2> s$k.err ||
		fail "shard $k/3 exited $?: $(cat s$k.err)"
done
set +e
"$WAKELINE" merge out > merge1.txt 2> merge1.err; rc=$?
set -e
[ "$rc" -eq 1 ] || fail "merge with shard 1 missing exited $rc, wants 1: $(cat merge1.txt merge1.err)"
for c in c1.mp4 c4.mp4; do
	grep -q "missing $c: .*shard 1/3" merge1.txt || fail "merge output does not name $c with shard 1/3: $(cat merge1.txt)"
done
grep -q "1 missing\|2 missing" merge1.txt || fail "merge's count: $(cat merge1.txt)"
grep -q "give --partial" merge1.err || fail "merge's error does not say what to do: $(cat merge1.err)"
$PY - <<'PYEOF' || fail "summary.csv or report.html hides the missing clips"
import csv, html
rows = list(csv.DictReader(open("out/summary.csv")))
missing = {r["clip"]: r for r in rows if r["status"] == "missing"}
assert set(missing) == {"c1.mp4", "c4.mp4"}, sorted(missing)
for c, r in missing.items():
    assert "shard 1/3" in r["error"], r
ok = {r["clip"] for r in rows if r["status"] == "ok"}
assert ok == {"c0.mp4", "c2.mp4", "c3.mp4", "c5.mp4"}, ok
page = html.unescape(open("out/report.html").read())
for c in ("c1.mp4", "c4.mp4"):
    assert c in page and "shard 1/3" in page, c
print("missing rows:", sorted(missing))
PYEOF
"$WAKELINE" merge out --partial > merge2.txt 2> merge2.err || fail "merge --partial exited $?: $(cat merge2.err)"

"$WAKELINE" batch clips --cal cal.json --manifest m.csv -o out --shard 1/3 -j 1 -q > s1.txt 2> s1.err || fail "shard 1: $(cat s1.err)"
"$WAKELINE" merge out > merge3.txt 2> merge3.err || fail "merge after every shard ran exited $?: $(cat merge3.txt merge3.err)"
grep -q ", 0 failed, 0 missing" merge3.txt || fail "merge said: $(cat merge3.txt)"
"$WAKELINE" batch clips --cal cal.json --manifest m.csv -o plain -j 2 -q > plain.txt 2> plain.err || fail "plain batch: $(cat plain.err)"
cmp out/summary.csv plain/summary.csv || fail "the merged shards' summary.csv differs from a plain batch's"
echo "0607-merge-missing-shard: ok"
