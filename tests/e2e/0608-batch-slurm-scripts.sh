#!/usr/bin/env bash
# `batch --slurm` without a cluster: a stand-in `sbatch` on PATH records how
# it is called and prints job ids.  Checks: the job array script carries the
# options given (partition, time, cpus-per-task, mem, account, extra lines),
# the array 0..2 and the shard count 3 written into it (never read from
# SLURM_ARRAY_TASK_COUNT); the merge is submitted after the array with
# --dependency=afterany:<its id>; --dry-run calls no sbatch; a value that
# would break the script and a file line that is not #SBATCH are refused.
# Then the scripts are run by hand as Slurm would (SLURM_ARRAY_TASK_ID=K,
# with SLURM_ARRAY_TASK_COUNT=1 as after a re-submission of one task), and
# the merge's summary.csv equals a plain batch's.  Clips: six copies of
# tests/data/tiny-scene.json (invented), one of them not a video.
set -euo pipefail
: "${WAKELINE:?}" "${WL_TEST_TMP:?}" "${WL_SOURCE_DIR:?}"
PY=/usr/bin/python3
rm -rf "$WL_TEST_TMP"; mkdir -p "$WL_TEST_TMP"; cd "$WL_TEST_TMP"
fail() { echo "FAIL: $*" >&2; exit 1; }
"$WAKELINE" synth "$WL_SOURCE_DIR/tests/data/tiny-scene.json" -o clip.mp4 -q
$PY "$WL_SOURCE_DIR/tests/e2e/lib/track_cal.py" clip.scene.json cal.json 0.25
mkdir -p clips bin
for n in 0 1 2 3 4; do cp clip.mp4 clips/c$n.mp4; done
echo "not a video" > clips/c5.mp4
cat > bin/sbatch <<'SH'
#!/bin/bash
# stand-in for Slurm's sbatch: records its arguments, prints an id
n=$(( $(cat "$(dirname "$0")/next" 2>/dev/null || echo 40) + 1 ))
echo $n > "$(dirname "$0")/next"
echo "$*" >> "$(dirname "$0")/calls"
echo "$n"
SH
chmod +x bin/sbatch
printf '#SBATCH --qos=short\n# a comment\n\n#SBATCH --nice=10\n' > extra.txt

# refused: a value that would end the #SBATCH line, a file line that is not #SBATCH
set +e
PATH=$PWD/bin:$PATH "$WAKELINE" batch clips --cal cal.json -o bad --slurm --partition 'a b' 2> bad1.err; rc1=$?
printf '#SBATCH --qos=x\nrm -rf /\n' > evil.txt
PATH=$PWD/bin:$PATH "$WAKELINE" batch clips --cal cal.json -o bad --slurm --sbatch-lines evil.txt 2> bad2.err; rc2=$?
"$WAKELINE" batch clips --cal cal.json -o bad --partition x 2> bad3.err; rc3=$?
set -e
[ "$rc1" -eq 1 ] && grep -q "cannot go into an #SBATCH line" bad1.err || fail "partition 'a b': exit $rc1: $(cat bad1.err)"
[ "$rc2" -eq 1 ] && grep -q "'rm -rf /' is not an '#SBATCH" bad2.err || fail "evil lines: exit $rc2: $(cat bad2.err)"
[ "$rc3" -eq 2 ] || fail "--partition without --slurm exited $rc3, wants 2"
[ ! -e bin/calls ] || fail "sbatch was called for a refused submission"

PATH=$PWD/bin:$PATH "$WAKELINE" batch clips --cal cal.json -o dry --slurm --shards 3 --dry-run > dry.txt 2> dry.err ||
	fail "--dry-run exited $?: $(cat dry.err)"
[ ! -e bin/calls ] || fail "--dry-run called sbatch"
[ -x dry/slurm/shards.sbatch ] && [ -x dry/slurm/merge.sbatch ] || fail "--dry-run wrote no scripts"

PATH=$PWD/bin:$PATH "$WAKELINE" batch clips --cal cal.json -o out --slurm --shards 3 --partition debug \
	--time 0:10:00 --cpus-per-task 2 --mem 1G --account lab --sbatch-lines extra.txt -j 1 > sub.txt 2> sub.err ||
	fail "--slurm exited $?: $(cat sub.err)"
cat sub.txt
S=out/slurm/shards.sbatch M=out/slurm/merge.sbatch
for l in '#SBATCH --array=0-2' '#SBATCH --partition=debug' '#SBATCH --time=0:10:00' '#SBATCH --cpus-per-task=2' \
	'#SBATCH --mem=1G' '#SBATCH --account=lab' '#SBATCH --qos=short' '#SBATCH --nice=10' '^SHARDS=3$'; do
	grep -q -- "$l" $S || fail "$S has no '$l'"
done
grep -q 'SLURM_ARRAY_TASK_COUNT' $S && ! grep -v '^#' $S | grep -q 'SLURM_ARRAY_TASK_COUNT' ||
	fail "the shard count must not come from SLURM_ARRAY_TASK_COUNT"
grep -q '#SBATCH --partition=debug' $M && ! grep -q -- '--array' $M || fail "merge script: $(cat $M)"
[ "$(sed -n 1p bin/calls)" = "--parsable $PWD/out/slurm/shards.sbatch" ] || fail "first sbatch call: $(sed -n 1p bin/calls)"
[ "$(sed -n 2p bin/calls)" = "--parsable --dependency=afterany:41 $PWD/out/slurm/merge.sbatch" ] ||
	fail "second sbatch call: $(sed -n 2p bin/calls)"
grep -q "submitted job array 41 (3 tasks) and merge job 42" sub.txt || fail "ids not printed: $(cat sub.txt)"
grep -q "batch --status" sub.txt || fail "no next step printed"

# run the tasks as Slurm would, one of them as a re-submitted single task
for k in 2 0 1; do
	SLURM_ARRAY_TASK_ID=$k SLURM_ARRAY_TASK_COUNT=1 SLURM_CPUS_PER_TASK=2 bash $S > task$k.txt 2>&1 ||
		[ $k -eq 2 ] || fail "task $k exited $?: $(cat task$k.txt)"   # task 2 holds the bad clip
done
set +e
SLURM_ARRAY_TASK_ID=3 bash $S > task3.txt 2>&1; rc=$?
bash $M > merge.txt 2>&1; mrc=$?
set -e
[ "$rc" -eq 2 ] && grep -q "this sweep has 3 shards" task3.txt || fail "task 3 of 3: exit $rc: $(cat task3.txt)"
[ "$mrc" -eq 1 ] && grep -q "failed  c5.mp4" merge.txt || fail "merge with a failed clip: exit $mrc: $(cat merge.txt)"
set +e
"$WAKELINE" batch clips --cal cal.json -o plain -j 2 -q > plain.txt 2> plain.err; prc=$?
set -e
[ "$prc" -eq 1 ] || fail "plain batch exited $prc: $(cat plain.err)"
cmp out/summary.csv plain/summary.csv || fail "summary.csv of the Slurm scripts differs from a plain batch's"
$PY - <<'PYEOF' || fail "summary.csv"
import csv
rows = list(csv.DictReader(open("out/summary.csv")))
bad = [r for r in rows if r["status"] != "ok"]
assert [r["clip"] for r in bad] == ["c5.mp4"] and bad[0]["status"] == "failed", bad
assert {r["clip"] for r in rows if r["status"] == "ok"} == {"c%d.mp4" % i for i in range(5)}
print("%d rows, the corrupt clip failed with: %s" % (len(rows), bad[0]["error"][:80]))
PYEOF
echo "0608-batch-slurm-scripts: ok"
