#!/usr/bin/env bash
# Nothing lost when the disk fills during a batch.  OUTDIR is a small tmpfs
# (root only: skipped otherwise, exit 77) that holds the outputs of
# about one of three clips (and room to redraw its run page).  The batch must fail with exit 1 and say that
# there is no space left, naming a file; every file then in OUTDIR parses and
# no temporary file is left.  After the tmpfs is made larger, the same batch
# command completes every clip, skipping the ones that were complete, and its
# summary matches a batch on an ordinary disk.
# a tmpfs left mounted by an earlier run goes before the harness empties the folder
if mountpoint -q "${WL_TEST_TMP:?}/disk" 2> /dev/null; then umount "$WL_TEST_TMP/disk"; fi
source "$WL_SOURCE_DIR/tests/e2e/lib/harness.sh"
mnt=
cleanup() { if [ -n "$mnt" ]; then umount "$mnt" 2> /dev/null || true; fi; }
at_exit cleanup
[ "$(id -u)" -eq 0 ] || skip_all "mounting a tmpfs needs root (tests/e2e/0806-io-fault-injection.sh covers write failures without root)"
mkdir -p disk
mount -t tmpfs -o size=64k tmpfs disk 2> /dev/null || skip_all "mount is not permitted here"
mnt=$PWD/disk
"$WAKELINE" synth "$WL_SOURCE_DIR/tests/data/tiny-scene.json" -o clip.mp4 -q || fail "synth exited $?"
"$PY" "$WL_SOURCE_DIR/tests/e2e/lib/track_cal.py" clip.scene.json cal.json 0.25
mkdir -p clips
for n in a b c; do cp clip.mp4 clips/$n.mp4; done
"$WAKELINE" batch clips --cal cal.json -o ref -j 1 -q > /dev/null 2> ref.err || fail "reference batch: $(cat ref.err)"
need_k=$(du -sk ref | cut -f1)
# room for about half of the outputs: the first clip with the second
# drawing of its run page (a new run.html is written beside the old one),
# not the second clip
umount disk; mnt=
mount -t tmpfs -o size=$(( need_k / 2 + 8 ))k tmpfs disk; mnt=$PWD/disk

check_exit "batch on a full disk exits 1" 1 "$WAKELINE" batch clips --cal cal.json -o disk/out -j 1 -q
cp last.err full.err
check "a message says 'no space left on device'" \
	grep -qi "no space left on device" full.err disk/out/summary.csv disk/out/clips/*/process.log
check_py "every file on the full disk is whole, no temporary is left" disk/out <<'PYEOF'
import csv, json, os, sys
n = 0
for root, dirs, files in os.walk(sys.argv[1]):
    for f in files:
        p = os.path.join(root, f)
        assert ".tmp-" not in f, "temporary file left: " + p
        if f.startswith(".lock"):
            continue
        if f.endswith(".json"):
            json.load(open(p))
        elif f.endswith(".csv"):
            rows = list(csv.reader(open(p)))
            assert rows and all(len(r) == len(rows[0]) for r in rows), p
        elif f.endswith(".png"):
            assert open(p, "rb").read(8) == b"\x89PNG\r\n\x1a\n", p
        elif f.endswith(".svg"):
            import xml.dom.minidom; xml.dom.minidom.parse(p)
        n += 1
print("full disk: %d files left, all whole" % n)
PYEOF
# grep -l exits 1 when no marker says ok (xargs then 123): counted, not a failure
done_before=$( (ls disk/out/clips/*/clip.json 2>/dev/null | xargs -r grep -l '"status":[[:space:]]*"ok"') | wc -l || true)

mount -o remount,size=$(( need_k * 2 + 256 ))k disk
check_exit "the rerun with more space succeeds" 0 "$WAKELINE" batch clips --cal cal.json -o disk/out -j 1
check_grep "the rerun does only the clips left" \
	"3 clips: $((3 - done_before)) done, $done_before already complete, 0 failed" last.out
check_py "the summary equals the ordinary-disk run's" ref/summary.csv disk/out/summary.csv <<'PYEOF'
import csv, sys
a, b = (sorted((r["clip"], r["status"], r["curvature_per_m"]) for r in csv.DictReader(open(f))) for f in sys.argv[1:])
assert a == b, (a, b)
print("after more space: %d summary rows, the same as on an ordinary disk" % len(b))
PYEOF
note "$done_before of 3 clips were complete when the disk was full"
done_testing
