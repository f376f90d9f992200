#!/usr/bin/env bash
# Threads follow the CPUs the process may use, not the machine's core count:
# by default one worker per CPU with one decoder thread each;
# `batch -j 1` under `taskset -c 0,1` gives each clip two decoder threads,
# under `taskset -c 0` one, with SLURM_CPUS_PER_TASK=1 (Slurm without task
# binding leaves the mask whole) one, and `--threads 3` three.  The batch
# records the count it chose in each clip.json (`threads`) and says it.
# Clip: tests/data/tiny-scene.json (invented, 3 s at 480x360).
set -euo pipefail
: "${WAKELINE:?}" "${WL_TEST_TMP:?}" "${WL_SOURCE_DIR:?}"
PY=/usr/bin/python3
rm -rf "$WL_TEST_TMP"; mkdir -p "$WL_TEST_TMP"; cd "$WL_TEST_TMP"
fail() { echo "FAIL: $*" >&2; exit 1; }
command -v taskset > /dev/null || { echo "SKIP: taskset (util-linux) is not installed"; exit 77; }
[ "$(nproc --all)" -ge 2 ] || { echo "SKIP: needs a machine with 2 CPUs or more"; exit 77; }
"$WAKELINE" synth "$WL_SOURCE_DIR/tests/data/tiny-scene.json" -o clip.mp4 -q
$PY "$WL_SOURCE_DIR/tests/e2e/lib/track_cal.py" clip.scene.json cal.json 0.25
mkdir -p clips && cp clip.mp4 clips/a.mp4

threads_of() { $PY -c 'import json,sys; print(json.load(open(sys.argv[1]))["threads"])' "$1/clips/a_mp4/clip.json"; }
run() { # run OUT [env/taskset prefix...] -- batch options
	local out=$1; shift
	"$@" "$WAKELINE" batch clips --cal cal.json -o "$out" -q > "$out.txt" 2> "$out.err" ||
		fail "batch into $out exited $?: $(cat "$out.err")"
}
run two taskset -c 0,1 env -u SLURM_CPUS_PER_TASK
# default -j: one worker per CPU, each with one decoder thread
[ "$(threads_of two)" = 1 ] || fail "default -j on 2 CPUs: $(threads_of two) threads, wants 1"
grep -q "2 workers at once, 1 decoder thread each (2 CPUs this process may use)" two.txt || fail "two said: $(cat two.txt)"
taskset -c 0,1 env -u SLURM_CPUS_PER_TASK "$WAKELINE" batch clips --cal cal.json -o j1 -j 1 -q > j1.txt 2> j1.err || fail "j1: $(cat j1.err)"
[ "$(threads_of j1)" = 2 ] || fail "-j 1 on a 2-CPU mask: $(threads_of j1) decoder threads, wants 2"
grep -q "1 worker at once, 2 decoder threads each (2 CPUs this process may use)" j1.txt || fail "j1 said: $(cat j1.txt)"
taskset -c 0 env -u SLURM_CPUS_PER_TASK "$WAKELINE" batch clips --cal cal.json -o one -j 1 -q > one.txt 2> one.err || fail "one: $(cat one.err)"
[ "$(threads_of one)" = 1 ] || fail "-j 1 on a 1-CPU mask: $(threads_of one) threads, wants 1"
taskset -c 0,1 env SLURM_CPUS_PER_TASK=1 "$WAKELINE" batch clips --cal cal.json -o slurm1 -j 1 -q > s1.txt 2> s1.err || fail "s1: $(cat s1.err)"
[ "$(threads_of slurm1)" = 1 ] || fail "SLURM_CPUS_PER_TASK=1: $(threads_of slurm1) threads, wants 1"
taskset -c 0 "$WAKELINE" batch clips --cal cal.json -o three -j 1 --threads 3 -q > t3.txt 2> t3.err || fail "t3: $(cat t3.err)"
[ "$(threads_of three)" = 3 ] || fail "--threads 3: $(threads_of three) threads, wants 3"
set +e
"$WAKELINE" batch clips --cal cal.json -o bad --threads 0 2> bad.err; rc=$?
set -e
[ "$rc" -eq 2 ] && grep -q -- "--threads" bad.err || fail "--threads 0 exited $rc: $(cat bad.err)"
# the same clip gives the same curvature whatever the threads
$PY - <<'PYEOF' || fail "results differ with the thread count"
import csv
k = [next(csv.DictReader(open(d + "/summary.csv")))["curvature_per_m"] for d in ("j1", "one", "three")]
print("curvature with 2, 1 and 3 decoder threads:", k)
assert len(set(k)) == 1, k
PYEOF
echo "0606-batch-threads: ok"
