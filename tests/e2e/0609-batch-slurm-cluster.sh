#!/usr/bin/env bash
# batch --slurm on a real one-node Slurm, started by hand on this machine
# (no systemd): munged, slurmctld and slurmd of Debian's packages with a
# slurm.conf for one node of 2 CPUs written into a scratch folder
# (proctrack/linuxproc and task/none: no cgroups; MailProg=/bin/true: no
# mail program; DependencyParameters=kill_invalid_depend: a merge whose
# dependency can never be met is cancelled instead of pending forever).
# Needs root (the daemons, and apt-get when the packages are missing);
# otherwise it is skipped (exit 77).
#
# 1. Twelve copies of a small invented clip (tests/data/tiny-scene.json),
#    one of them corrupt, as a sweep of 3 shards plus a merge (afterany):
#    summary.csv equals a plain `batch` of the same clips byte for byte,
#    the corrupt clip's failure row included.
# 2. A second sweep; shard 1 is cancelled (scancel) while a clip runs,
#    the merge then lists its unfinished clips as missing and exits 1; the
#    shard is re-submitted alone (sbatch --array=1, where Slurm says the
#    array has 1 task) and only its unfinished clips are redone: its
#    finished ones are skipped and no other shard's clip is touched.
# The daemons are stopped by pid at the end, however the test ends.
set -euo pipefail
: "${WAKELINE:?}" "${WL_TEST_TMP:?}" "${WL_SOURCE_DIR:?}"
PY=/usr/bin/python3
rm -rf "$WL_TEST_TMP"; mkdir -p "$WL_TEST_TMP"; cd "$WL_TEST_TMP"
fail() { echo "FAIL: $*" >&2; exit 1; }
skip() { echo "SKIP: $*"; exit 77; }
t_start=$(date +%s)

[ "$(id -u)" -eq 0 ] || skip "needs root to start munged, slurmctld and slurmd (run the tests as root, as CI does)"
need=()
for c in munged:munge slurmctld:slurmctld slurmd:slurmd sbatch:slurm-client; do
	command -v "${c%%:*}" > /dev/null || [ -x "/usr/sbin/${c%%:*}" ] || need+=("${c#*:}")
done
if [ ${#need[@]} -gt 0 ]; then
	echo "installing ${need[*]} (scripts/setup installs them too)"
	{ apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq --no-install-recommends "${need[@]}"; } \
		> apt.log 2>&1 || skip "cannot install ${need[*]} with apt-get: $(tail -3 apt.log)"
fi
export PATH=/usr/sbin:$PATH

# scratch for the daemons: a short path (the munge socket is a Unix socket)
S=$(mktemp -d /tmp/wl-slurm.XXXXXX)
pids=()
cleanup() {
	local p
	if [ -n "${SLURM_CONF:-}" ] && [ -f "$SLURM_CONF" ]; then
		scancel --full --quiet $(squeue -h -o %A 2> /dev/null) 2> /dev/null || true
	fi
	for p in "${pids[@]}"; do kill "$p" 2> /dev/null || true; done
	for p in "${pids[@]}"; do
		for _ in $(seq 1 50); do kill -0 "$p" 2> /dev/null || break; sleep 0.1; done
		kill -KILL "$p" 2> /dev/null || true
	done
	rm -rf "$S"
}
trap cleanup EXIT

# two free TCP ports on the loopback for slurmctld and slurmd
read -r PCTL PD < <($PY -c '
import socket
s = [socket.socket() for _ in range(2)]
for x in s: x.bind(("127.0.0.1", 0))
print(*[x.getsockname()[1] for x in s])')
H=$(hostname -s)
mkdir -p "$S/munge" "$S/state" "$S/spool"
chmod 700 "$S/munge"
dd if=/dev/urandom of="$S/munge/munge.key" bs=1024 count=1 status=none
chmod 400 "$S/munge/munge.key"
munged --force --key-file="$S/munge/munge.key" --socket="$S/munge/sock" --pid-file="$S/munge/pid" \
	--log-file="$S/munge/log" --seed-file="$S/munge/seed" || fail "munged did not start: $(cat "$S/munge/log" 2>/dev/null)"
for _ in $(seq 1 50); do [ -s "$S/munge/pid" ] && break; sleep 0.1; done
pids+=("$(cat "$S/munge/pid")")
cat > "$S/slurm.conf" <<CONF
ClusterName=wltest
SlurmctldHost=$H(127.0.0.1)
SlurmctldPort=$PCTL
SlurmdPort=$PD
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
AuthInfo=socket=$S/munge/sock
CredType=cred/munge
StateSaveLocation=$S/state
SlurmdSpoolDir=$S/spool
SlurmctldPidFile=$S/slurmctld.pid
SlurmdPidFile=$S/slurmd.pid
SlurmctldLogFile=$S/slurmctld.log
SlurmdLogFile=$S/slurmd.log
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
SchedulerType=sched/backfill
SelectType=select/cons_tres
SelectTypeParameters=CR_CPU
SlurmdParameters=config_overrides
MailProg=/bin/true
DependencyParameters=kill_invalid_depend
ReturnToService=2
MpiDefault=none
NodeName=$H NodeAddr=127.0.0.1 CPUs=2 RealMemory=1000 State=UNKNOWN
PartitionName=wl Nodes=ALL Default=YES MaxTime=INFINITE State=UP
CONF
export SLURM_CONF=$S/slurm.conf
slurmctld -D -i -f "$SLURM_CONF" > "$S/slurmctld.out" 2>&1 &
pids+=($!)
slurmd -D -f "$SLURM_CONF" -N "$H" > "$S/slurmd.out" 2>&1 &
pids+=($!)
for _ in $(seq 1 200); do
	sinfo -h -o %t 2> /dev/null | grep -q '^idle' && break
	sleep 0.1
done
sinfo -h -o %t 2> /dev/null | grep -q '^idle' ||
	fail "the node did not come up: $(sinfo 2>&1; tail -5 "$S/slurmctld.log" "$S/slurmd.log" 2>&1)"
echo "one-node Slurm up after $(( $(date +%s) - t_start )) s: $(sinfo -h -o '%P %D %c %t')"

# wait_jobs ID...: until none of the jobs is queued or running (at most 90 s)
wait_jobs() {
	local ids; ids=$(IFS=,; echo "$*")
	for _ in $(seq 1 900); do
		[ -z "$(squeue -h -j "$ids" 2> /dev/null)" ] && return 0
		sleep 0.1
	done
	fail "jobs $ids still queued or running after 90 s: $(squeue 2>&1)"
}

"$WAKELINE" synth "$WL_SOURCE_DIR/tests/data/tiny-scene.json" -o clip.mp4 -q
$PY "$WL_SOURCE_DIR/tests/e2e/lib/track_cal.py" clip.scene.json cal.json 0.25
mkdir -p clips
for n in 00 01 02 03 04 05 06 07 08 09 10; do cp clip.mp4 clips/c$n.mp4; done
head -c 20000 clip.mp4 > clips/bad.mp4   # cut short: corrupt; sorts first, so shard 0
printf 'clip,gain\n' > m.csv
for n in 00 01 02 03 04 05 06 07 08 09 10; do echo "c$n.mp4,0.$n" >> m.csv; done
echo "bad.mp4,9" >> m.csv

# --- 1. a sweep of 3 shards and its merge
"$WAKELINE" batch clips --cal cal.json --manifest m.csv -o out --slurm --shards 3 --cpus-per-task 1 \
	--time 0:05:00 --x gain > sub1.txt 2> sub1.err || fail "batch --slurm exited $?: $(cat sub1.err)"
cat sub1.txt
A=$(awk '$1 == "array" {print $2}' out/slurm/jobs.txt) M=$(awk '$1 == "merge" {print $2}' out/slurm/jobs.txt)
[ -n "$A" ] && [ -n "$M" ] || fail "no job ids in out/slurm/jobs.txt"
set +e
"$WAKELINE" batch clips --cal cal.json --manifest m.csv -o plain -j 2 -q --x gain > plain.txt 2> plain.err; prc=$?
set -e
[ "$prc" -eq 1 ] || fail "plain batch exited $prc (wants 1: one corrupt clip): $(cat plain.err)"
wait_jobs "$A" "$M"
echo "sweep 1 (3 shards and the merge) done after $(( $(date +%s) - t_start )) s"
[ -s "out/slurm/logs/merge-$M.out" ] || fail "the merge job left no log: $(ls out/slurm/logs)"
grep -q "failed  bad.mp4" "out/slurm/logs/merge-$M.out" || fail "merge log: $(cat "out/slurm/logs/merge-$M.out")"
cmp out/summary.csv plain/summary.csv || { diff out/summary.csv plain/summary.csv | head; fail "summary.csv of the Slurm sweep differs from a plain batch's"; }
$PY - <<'PYEOF' || fail "summary.csv"
import csv
rows = list(csv.DictReader(open("out/summary.csv")))
bad = [r for r in rows if r["status"] != "ok"]
assert [(r["clip"], r["status"]) for r in bad] == [("bad.mp4", "failed")], bad
assert len({r["clip"] for r in rows if r["status"] == "ok"}) == 11
print("summary.csv: %d rows, identical to the plain batch; bad.mp4: %s" % (len(rows), bad[0]["error"][:70]))
PYEOF
[ -s out/report.html ] || fail "no report.html"

# --- 2. cancel shard 1 in the middle of a clip, then re-submit it alone.
# A clip of the small scene takes a fraction of a second, less than scancel
# takes to act: shard 1's clips are made long (the clip looped 80 times,
# 240 s, a few seconds of work), so that the cancel lands inside one.
mkdir -p clips2
cp clips/* clips2/
ffmpeg -v error -y -stream_loop 79 -i clip.mp4 -c copy long.mp4 || fail "ffmpeg could not loop the clip"
for n in 03 06 09; do cp long.mp4 clips2/c$n.mp4; done
"$WAKELINE" batch clips2 --cal cal.json --manifest m.csv -o out2 --slurm --shards 3 --cpus-per-task 1 \
	--time 0:05:00 > sub2.txt 2> sub2.err || fail "second batch --slurm exited $?: $(cat sub2.err)"
A2=$(awk '$1 == "array" {print $2}' out2/slurm/jobs.txt) M2=$(awk '$1 == "merge" {print $2}' out2/slurm/jobs.txt)
# shard 1 holds c00 c03 c06 c09 (clip i goes to shard i % 3; bad.mp4 is clip 0)
started_not_done() { # a clip of shard 1 started and not finished, and one finished
	[ -f out2/journal-1.log ] || return 1
	$PY - <<'PYEOF'
import sys
last = {}
for l in open("out2/journal-1.log"):
    f = l.rstrip("\n").split("\t")
    # a clip's state: its last start, done or failed (warn lines, e.g. the
    # looped clips' restarts at every loop join, say nothing of the state)
    if len(f) == 5 and f[1] in ("start", "done", "failed"):
        last[f[2]] = f[1]
ev = list(last.values())
sys.exit(0 if ev.count("done") >= 1 and "start" in ev else 1)
PYEOF
}
# a clip takes a second or two here: polling can miss the moment, so
# follow the journal as it is written and cancel at the first start after a
# done.  bash's read takes a line as soon as it is written (awk, Debian's
# mawk, reads a pipe in blocks and would wait for the 60 s timeout, by which
# time the shard has finished)
seen_done=0
while IFS=$'\t' read -r _ ev _; do
	[ "$ev" = done ] && seen_done=1
	[ "$seen_done" = 1 ] && [ "$ev" = start ] && break
done < <(timeout 60 tail -n +1 -F out2/journal-1.log 2> /dev/null)
scancel "${A2}_1"
started_not_done || fail "shard 1 never had a clip running after a finished one: $(cat out2/journal-1.log 2>&1)"
done_before=$(grep -c $'\tdone\t' out2/journal-1.log || true)
echo "shard 1 cancelled with $done_before of its 4 clips finished"
wait_jobs "$A2" "$M2"
set +e
"$WAKELINE" batch --status out2 > status.txt; src=$?
set -e
cat status.txt
[ "$src" -eq 1 ] || fail "batch --status after the cancel exited $src, wants 1"
grep -Eq "^(interrupted|not started) +c0[369]\.mp4 \(shard 1/3\)" status.txt || fail "status does not show shard 1's clips"
grep -q "missing c0" "out2/slurm/logs/merge-$M2.out" || fail "the merge after the cancel did not list missing clips: $(cat "out2/slurm/logs/merge-$M2.out")"
$PY - <<'PYEOF' > before.json
import glob, json
print(json.dumps({f: open(f).read() for f in sorted(glob.glob("out2/clips/*/clip.json"))}))
PYEOF
R=$(sbatch --parsable --array=1 out2/slurm/shards.sbatch) || fail "re-submitting task 1 failed"
R=${R%%;*}
wait_jobs "$R"
log=$(ls out2/slurm/logs/shard-"${R}"_1.out)
cat "$log"
grep -q "4 clips: $((4 - done_before)) done, $done_before already complete, 0 failed" "$log" ||
	fail "the re-submitted shard 1 did not redo exactly its $((4 - done_before)) unfinished clips: $(cat "$log")"
set +e
"$WAKELINE" merge out2 > merge2.txt 2> merge2.err; mrc=$?
set -e
# bad.mp4 (shard 0) still fails; nothing is missing any more
[ "$mrc" -eq 1 ] && grep -q ", 1 failed, 0 missing" merge2.txt || fail "merge after the resume: exit $mrc: $(cat merge2.txt merge2.err)"
$PY - <<'PYEOF' || fail "a clip outside shard 1's unfinished ones was redone"
import glob, json
before = json.load(open("before.json"))
after = {f: open(f).read() for f in sorted(glob.glob("out2/clips/*/clip.json"))}
shard1 = {"c00", "c03", "c06", "c09"}
for f, text in before.items():
    assert after.get(f) == text, "changed: " + f  # finished clips, every shard, untouched
redone = sorted(set(after) - set(before))
assert all(f.split("/")[2].split("_")[0] in shard1 for f in redone), redone
print("redone:", [f.split("/")[2] for f in redone], "untouched:", len(before))
PYEOF
echo "merge after the resume: $(cat merge2.txt | tail -1)"
echo "0609-batch-slurm-cluster: ok in $(( $(date +%s) - t_start )) s"
