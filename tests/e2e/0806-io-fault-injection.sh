#!/usr/bin/env bash
# Nothing lost when a write fails, without root: the shim
# tests/fault/inject.c (build/libwl_fault.so, LD_PRELOAD) makes the N-th
# file operation of a run fail with ENOSPC (EIO for a few), counting every
# file-creating open, write, fsync, close and rename.  For calibrate,
# track (with --trail and --overlay), clean, measure, process and batch, on
# small inputs (an invented scene rendered by `wakeline synth`), N goes
# 1, 2, ... until a run hits no fault, and at every N (lib/fault.py verify):
#  - no fault hit: exit 0 and every output complete;
#  - fault hit: exit 1 with a message naming the file, no temporary file
#    (.NAME.tmp-*) anywhere in the output folder, every file there complete
#    (the same bytes as a fault-free run where that run is reproducible,
#    else it parses whole), and the outputs of a previous run, put there
#    first, untouched or replaced by complete files.
# The failing operation is each time the N-th of the fault-free run's
# trace (the runs are reproducible, so every N hits a different operation).
# batch (two clips, -j 1, a fresh output folder per N) is run a second time
# after each fault, without it: that run must complete with the fault-free
# outputs.  Its workers are forked: the shim's counters are shared across
# fork(), and N counts either the parent's operations (WL_FAULT_IN=root)
# or the workers' (child), in two loops.  These step over what repeats
# (fault.py select --files): every operation of the first file written,
# then one write fault in every other file; the second clip's files fold
# onto the first's.  Every file a batch writes is hit; what each kind of
# operation does on each of them is tried in process's every-N loop, the
# same pipeline code in one process.  The sanitizer build runs the single
# commands one N per kind of operation and file, and no second batch (see
# below).  Under AddressSanitizer the shim is preloaded with
# ASAN_OPTIONS=verify_asan_link_order=0 (it is built without sanitizers).
source "$WL_SOURCE_DIR/tests/e2e/lib/harness.sh"
[ -f "${WL_FAULT_LIB:-}" ] || fail "WL_FAULT_LIB (build/libwl_fault.so, built by CMake) is missing"
FAULT_PY=$WL_SOURCE_DIR/tests/e2e/lib/fault.py
asan=0
if grep -q "^WL_SANITIZE:BOOL=ON" "${WL_BUILD_DIR:?}/CMakeCache.txt"; then
	asan=1
	export ASAN_OPTIONS=${ASAN_OPTIONS:+$ASAN_OPTIONS:}verify_asan_link_order=0
fi
t_start=$(date +%s)

# ---- inputs: an invented scene, small so that every run is short
cat > scene.json <<'JSON'
{ "description": "invented test scene: one tagged robot circling, small clip for the fault test",
  "seed": 21,
  "tank": { "size_m": [1.6, 1.0] },
  "camera": { "width_px": 320, "height_px": 240, "hfov_deg": 64, "position_m": [0.8, 0.5, 1.4] },
  "timing": { "fps": 10, "duration_s": 2 },
  "effects": { "supersample": 1 },
  "robots": [ { "id": 3, "diameter_m": 0.12, "height_m": 0.1,
                "marker": { "type": "tag", "tag_id": 3, "size_m": 0.1 },
                "path": { "start_m": [0.8, 0.25], "heading_deg": 0, "speed_mps": 0.2, "curvature_1pm": 3 } } ] }
JSON
"$WAKELINE" synth scene.json -o clip.mp4 -q || fail "synth exited $?"
"$PY" "$WL_SOURCE_DIR/tests/e2e/lib/track_cal.py" clip.scene.json cal.json 0.1 || fail "cannot build cal.json"
"$PY" "$WL_SOURCE_DIR/tests/e2e/lib/calib_scene.py" points pts.csv blank.png --tilt 20 --noise 0.3 --seed 3 ||
	fail "calib_scene.py exited $?"
mkdir clips
cp clip.mp4 clips/a.mp4
cp clip.mp4 clips/b.mp4

# run_CMD OUT: the command under test, writing into the folder OUT
run_calibrate() { "$WAKELINE" calibrate blank.png --points pts.csv -o "$1/CAL.json"; }
run_track() { "$WAKELINE" track clip.mp4 --cal cal.json -o "$1/raw.csv" --trail "$1/trail.png" --overlay "$1/qc.mp4" -q; }
run_clean() { "$WAKELINE" clean gold/track/raw.csv -o "$1/clean.csv" -q; }
run_measure() { "$WAKELINE" measure gold/clean/clean.csv -o "$1/summary.json" --csv "$1/runs.csv" -q; }
run_process() { "$WAKELINE" process clip.mp4 --cal cal.json -o "$1" -q; }
run_batch() { "$WAKELINE" batch clips --cal cal.json -o "$1" -j 1 -q; }

# shim [VAR=VALUE...] -- CMD...: CMD (a function above) with the shim
# preloaded into the programs it starts and VAR=VALUE in their environment
shim() {
	(
		while [ "$1" != -- ]; do
			export "${1?}"
			shift
		done
		shift
		export LD_PRELOAD=$WL_FAULT_LIB
		"$@"
	)
}

# the fault-free runs: gold/CMD (the reference) and a second, traced run
# over a copy of it (trace/CMD.txt; its outputs tell which files are
# reproducible)
mkdir gold again trace
for c in calibrate track clean measure process batch; do
	mkdir -p gold/$c
	run_$c gold/$c > /dev/null 2> gold-$c.err || fail "$c without faults exited $?: $(cat gold-$c.err)"
	if [ $c = batch ]; then mkdir -p again/$c; else cp -a gold/$c again/; fi
	shim WL_FAULT_TRACE="$PWD/trace/$c.txt" -- run_$c "$PWD/again/$c" > /dev/null 2>&1 ||
		fail "$c under the shim (no fault) exited $?"
	note "$c: $(wc -l < trace/$c.txt) counted operations without faults ($(awk '{ print $4 }' trace/$c.txt | sort | uniq -c | xargs))"
done

# loop CMD COUNTER MODE: N over the list `fault.py select ... MODE` gives,
# then past the last operation, where no fault may be hit; each N is one
# check.  Single commands run over a copy of gold/CMD (the previous
# outputs), batch into a fresh folder and then (normal build) once more
# without the fault.
declare -A faults
loop() {
	local c=$1 counter=$2 mode=$3 n want total list=() i=0 hits=0 errno out=$PWD/run/$1 rc args
	total=$("$PY" "$FAULT_PY" select trace/$c.txt "$counter" "$PWD/again/$c" | wc -l)
	mapfile -t list < <("$PY" "$FAULT_PY" select trace/$c.txt "$counter" "$PWD/again/$c" "$mode")
	list+=("$((total + 1)) none (past the last operation)")
	for want in "${list[@]}"; do
		n=${want%% *}
		want=${want#* }
		i=$((i + 1))
		errno=ENOSPC
		[ $((n % 7)) -ne 3 ] || errno=EIO # a few as I/O errors
		rm -rf run
		mkdir run
		args=(--out "$out" --gold gold/$c --gold2 again/$c --stderr "$out.err" --report "$out.rep")
		if [ $c = batch ]; then
			mkdir "$out"
		else
			cp -a gold/$c run/
			(cd "$out" && find . -type f -printf '%P\t%i\n') > "$out.prev"
			args+=(--prev "$out.prev")
		fi
		[ "$want" = "none (past the last operation)" ] || args+=(--want "$want")
		rc=0
		shim WL_FAULT_AT=$n WL_FAULT_IN=$counter WL_FAULT_ERRNO=$errno WL_FAULT_REPORT="$out.rep" -- \
			run_$c "$out" > "$out.out" 2> "$out.err" || rc=$?
		check "$c $counter N=$n ($want, $errno): the rule holds" "$PY" "$FAULT_PY" verify "${args[@]}" --rc $rc
		! grep -q '^hit ' "$out.rep" 2> /dev/null || hits=$((hits + 1))
		if [ $c = batch ] && [ $asan -eq 0 ]; then
			rc=0
			run_batch "$out" > "$out.again.out" 2> "$out.again.err" || rc=$?
			check "$c $counter N=$n: the same batch without the fault completes with the fault-free outputs" \
				"$PY" "$FAULT_PY" verify --out "$out" --gold gold/$c --gold2 again/$c --rc $rc \
				--stderr "$out.again.err" --report none
		fi
	done
	faults[$c $counter]="$hits faults in $i runs ($mode, of $total operations)"
}

# The normal build tries every N of the single commands.  In the sanitizer
# build (three times slower a run) they try one N per kind of operation and
# file (--kinds), and batch is not run again after each fault: there the
# test is after memory errors and leaks on the failure paths, which the
# normal build's runs have already shown to be handled.
single=--all
[ $asan -eq 0 ] || single=--kinds
# WL_FAULT_ONLY="CMD..." runs the loops of those commands only (while
# working on one); the test then reports itself skipped, not passed.
for spec in "calibrate any $single" "track any $single" "clean any $single" "measure any $single" \
	"process any $single" "batch root --files" "batch child --files"; do
	c=${spec%% *}
	if [ -n "${WL_FAULT_ONLY:-}" ] && [[ " $WL_FAULT_ONLY " != *" $c "* ]]; then
		skip_check "$spec" "WL_FAULT_ONLY=$WL_FAULT_ONLY"
		continue
	fi
	# shellcheck disable=SC2086
	loop $spec
done

for k in "${!faults[@]}"; do note "$k: ${faults[$k]}"; done
note "run time $(($(date +%s) - t_start)) s"
done_testing
