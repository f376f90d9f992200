#!/usr/bin/env bash
# Nothing lost when a batch is killed.  Three copies of a small invented clip
# (tests/data/tiny-scene.json) are processed by `wakeline batch`; 20 trials
# each start the batch on the same OUTDIR and SIGKILL its process group at a
# random point (bash RANDOM seeded with 1, uniform over the length of an
# uninterrupted run).  After every kill each file in OUTDIR that is not a
# temporary file parses (JSON, CSV with equal-length rows, PNG/SVG/HTML
# headers).  A last run must finish with exit 0 and every clip done, and the
# summary must equal an uninterrupted run's (same clips, same curvature).
source "$WL_SOURCE_DIR/tests/e2e/lib/harness.sh"
"$WAKELINE" synth "$WL_SOURCE_DIR/tests/data/tiny-scene.json" -o clip.mp4 -q || fail "synth exited $?"
"$PY" "$WL_SOURCE_DIR/tests/e2e/lib/track_cal.py" clip.scene.json cal.json 0.25
mkdir -p clips
for n in a b c; do cp clip.mp4 clips/$n.mp4; done

t0=$(date +%s%N)
"$WAKELINE" batch clips --cal cal.json -o ref -j 1 -q > ref.out 2> ref.err || fail "reference batch: exit $?: $(cat ref.err)"
run_ms=$((($(date +%s%N) - t0) / 1000000))
note "uninterrupted run: $run_ms ms"

# parses_all DIR: every non-temporary file in DIR parses
parses_all() {
	$PY - "$1" <<'PYEOF'
import csv, json, os, sys
bad = []
for root, dirs, files in os.walk(sys.argv[1]):
    for f in files:
        p = os.path.join(root, f)
        if f.startswith(".") and (".tmp" in f or f.startswith(".lock")):  # temporaries, the lock
            continue
        try:
            if f.startswith("journal") and f.endswith(".log"):
                # append-only, one write() per line: empty (killed before the
                # first event) or whole lines of five tab-separated fields
                data = open(p).read()
                assert data == "" or data.endswith("\n"), "last line cut"
                assert all(l.count("\t") == 4 for l in data.splitlines()), "a line is not whole"
            elif f.endswith(".json"):
                json.load(open(p))
            elif f.endswith(".csv"):
                rows = list(csv.reader(open(p)))
                assert rows and all(len(r) == len(rows[0]) for r in rows), "ragged"
            elif f.endswith(".png"):
                assert open(p, "rb").read(8) == b"\x89PNG\r\n\x1a\n", "not PNG"
            elif f.endswith(".svg"):
                import xml.dom.minidom; xml.dom.minidom.parse(p)
            elif f.endswith(".html"):
                assert open(p).read().rstrip().endswith("</html>"), "cut"
            elif os.path.getsize(p) == 0:
                raise AssertionError("empty")
        except Exception as e:
            bad.append("%s: %s" % (p, e))
if bad:
    print("\n".join(bad)); sys.exit(1)
PYEOF
}

RANDOM=1
for trial in $(seq 1 20); do
	delay_ms=$((RANDOM % (run_ms + 1)))
	setsid "$WAKELINE" batch clips --cal cal.json -o out -j 2 -q > /dev/null 2>&1 &
	pid=$!
	sleep "$(printf '%d.%03d' $((delay_ms / 1000)) $((delay_ms % 1000)))"
	kill -KILL -- -$pid 2> /dev/null || true
	wait $pid 2> /dev/null || true
	check "trial $trial (killed after $delay_ms ms): every file in OUTDIR parses" parses_all out
done
check_exit "the last run completes (exit 0)" 0 "$WAKELINE" batch clips --cal cal.json -o out -j 2 -q
check "after the last run every file in OUTDIR parses" parses_all out
check_py "the summary equals the uninterrupted run's" <<'PYEOF'
import csv
def rows(p):
    return sorted((r["clip"], r.get("status", ""), r.get("curvature_per_m", "")) for r in csv.DictReader(open(p)))
a, b = rows("ref/summary.csv"), rows("out/summary.csv")
print(len(a), "rows;", a[:1])
assert a == b, (a, b)
PYEOF
left=$(find out -name '.*tmp*' | wc -l)
note "temporary files left by the kills after the last run: $left"
done_testing
