# lib/decode.bash: helpers shared by the probe/still end-to-end tests
# (sourced, not a test itself).  Clips are made with the ffmpeg CLI from its
# testsrc2 pattern; references come from Debian's ffmpeg/ffprobe 5.1 and
# python3-opencv/numpy.  Sources the harness (lib/harness.sh).
source "$WL_SOURCE_DIR/tests/e2e/lib/harness.sh"

# ff ARGS...: the ffmpeg CLI, quiet.
ff() { ffmpeg -v error -nostdin -y "$@"; }

# ffprobe_times CLIP: presentation time of every frame (tests/data/references.md, "Video timestamps").
ffprobe_times() {
	ffprobe -v error -select_streams v:0 -show_entries frame=pts_time -of default=nw=1:nk=1 "$1"
}

# check_times CLIP: the check that `wakeline probe --frames` agrees with
# ffprobe on the number of frames and on every frame's time (ffprobe's minus
# its first) to within 1 ms.  Prints the largest difference.
check_times() {
	check "$1: probe's frame count and times equal ffprobe's within 1 ms" _times_match "$1"
}
_times_match() {
	local clip=$1
	"$WAKELINE" probe -q --frames "$clip.frames.csv" "$clip" > "$clip.probe.txt" ||
		fail "probe $clip exited $?"
	ffprobe_times "$clip" > "$clip.ffprobe.txt"
	$PY - "$clip" <<'PYEOF' || fail "times of $clip differ from ffprobe"
import csv, sys
clip = sys.argv[1]
ref = [float(x) for x in open(clip + ".ffprobe.txt") if x.strip() and x.strip() != "N/A"]
rows = list(csv.DictReader(open(clip + ".frames.csv")))
got = [float(r["t_s"]) for r in rows]
if len(ref) != len(got):
    sys.exit("%s: %d frames decoded, ffprobe lists %d" % (clip, len(got), len(ref)))
worst = max(abs((r - ref[0]) - g) for r, g in zip(ref, got))
idx = [int(r["frame"]) for r in rows]
if idx != list(range(len(idx))):
    sys.exit("%s: frame indices are not 0..n-1" % clip)
print("%s: %d frames, largest |t - t_ffprobe| = %.3g s" % (clip, len(got), worst))
if worst > 1e-3:
    sys.exit(1)
PYEOF
}

# mad A.png B.png: mean absolute difference of two same-sized images in
# 8-bit levels (read with python3-opencv); fails if the sizes differ.
mad() {
	$PY - "$1" "$2" <<'PYEOF'
import sys, cv2, numpy as np
a = cv2.imread(sys.argv[1], cv2.IMREAD_UNCHANGED)
b = cv2.imread(sys.argv[2], cv2.IMREAD_UNCHANGED)
if a is None or b is None or a.shape != b.shape:
    sys.exit("images differ in size: %s vs %s" % (None if a is None else a.shape, None if b is None else b.shape))
print("%.4f" % np.abs(a.astype(float) - b.astype(float)).mean())
PYEOF
}

# want_mad A.png B.png lt|gt LIMIT LABEL: queues the comparison "mean
# absolute difference of A and B is below (lt) / above (gt) LIMIT levels";
# run_mad_checks is one check that runs all queued comparisons in one python
# (python3-opencv) and fails if any does not hold (it prints each one).
# Sizes must match for every comparison.
: > mad-checks.txt
want_mad() { printf '%s\t%s\t%s\t%s\t%s\n' "$@" >> mad-checks.txt; }
run_mad_checks() {
	check_py "every queued pixel comparison holds ($(wc -l < mad-checks.txt) of them)" <<'PYEOF'
import sys, cv2, numpy as np
bad = n = 0
for line in open("mad-checks.txt"):
    n += 1
    a, b, op, lim, label = line.rstrip("\n").split("\t")
    x = cv2.imread(a, cv2.IMREAD_UNCHANGED); y = cv2.imread(b, cv2.IMREAD_UNCHANGED)
    if x is None or y is None or x.shape != y.shape:
        print("FAIL %s: sizes differ (%s vs %s)" % (label, None if x is None else x.shape, None if y is None else y.shape))
        bad += 1; continue
    d = np.abs(x.astype(float) - y.astype(float)).mean()
    ok = d < float(lim) if op == "lt" else d > float(lim)
    print("%s %s: mean |diff| = %.4f levels (want %s %s)" % ("ok  " if ok else "FAIL", label, d, "<" if op == "lt" else ">", lim))
    bad += not ok
sys.exit(bad if n else "no comparison was queued")
PYEOF
}
