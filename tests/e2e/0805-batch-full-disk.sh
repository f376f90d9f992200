#!/usr/bin/env bash
# Nothing lost when the disk fills during a batch.  OUTDIR is a small tmpfs
# (root only: skipped with a message otherwise) that holds the outputs of
# about one of three clips.  The batch must fail with exit 1 and say that
# there is no space left, naming a file; every file then in OUTDIR parses and
# no temporary file is left.  After the tmpfs is made larger, the same batch
# command completes every clip, skipping the ones that were complete, and its
# summary matches a batch on an ordinary disk.
set -euo pipefail
: "${WAKELINE:?}" "${WL_TEST_TMP:?}" "${WL_SOURCE_DIR:?}"
PY=/usr/bin/python3
mnt=
cleanup() { [ -n "$mnt" ] && umount "$mnt" 2>/dev/null || true; }
trap cleanup EXIT
rm -rf "$WL_TEST_TMP"; mkdir -p "$WL_TEST_TMP"; cd "$WL_TEST_TMP"
fail() { echo "FAIL: $*" >&2; exit 1; }
if [ "$(id -u)" -ne 0 ]; then echo "skipped: mounting a tmpfs needs root"; exit 0; fi
mkdir -p disk
if ! mount -t tmpfs -o size=64k tmpfs disk 2>/dev/null; then echo "skipped: mount is not permitted here"; exit 0; fi
mnt=$PWD/disk
"$WAKELINE" synth "$WL_SOURCE_DIR/tests/data/tiny-scene.json" -o clip.mp4 -q
$PY "$WL_SOURCE_DIR/tests/e2e/lib/track_cal.py" clip.scene.json cal.json 0.25
mkdir -p clips
for n in a b c; do cp clip.mp4 clips/$n.mp4; done
"$WAKELINE" batch clips --cal cal.json -o ref -j 1 -q > /dev/null 2> ref.err || fail "reference batch: $(cat ref.err)"
need_k=$(du -sk ref | cut -f1)
# room for about a third of the outputs
umount disk; mnt=
mount -t tmpfs -o size=$(( need_k / 3 + 8 ))k tmpfs disk; mnt=$PWD/disk

set +e
"$WAKELINE" batch clips --cal cal.json -o disk/out -j 1 -q > full.out 2> full.err; rc=$?
set -e
[ "$rc" -eq 1 ] || fail "batch on a full disk exited $rc, wants 1: $(cat full.err)"
grep -qi "no space left on device" full.err disk/out/summary.csv disk/out/clips/*/process.log 2>/dev/null ||
	fail "no 'no space left' message: $(cat full.err)"
$PY - disk/out <<'PYEOF' || fail "a file on the full disk is cut or a temporary is left"
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
done_before=$(ls disk/out/clips/*/clip.json 2>/dev/null | xargs -r grep -l '"status":[[:space:]]*"ok"' | wc -l)

mount -o remount,size=$(( need_k * 2 + 256 ))k disk
"$WAKELINE" batch clips --cal cal.json -o disk/out -j 1 > again.out 2> again.err || fail "rerun exited $?: $(cat again.err)"
grep -q "3 clips: $((3 - done_before)) done, $done_before already complete, 0 failed" again.out ||
	fail "rerun said: $(cat again.out)"
$PY - ref/summary.csv disk/out/summary.csv <<'PYEOF' || fail "summary differs from the ordinary-disk run"
import csv, sys
a, b = (sorted((r["clip"], r["status"], r["curvature_per_m"]) for r in csv.DictReader(open(f))) for f in sys.argv[1:])
assert a == b, (a, b)
print("after more space: %d summary rows, the same as on an ordinary disk" % len(b))
PYEOF
echo "ok ($done_before of 3 clips were complete when the disk was full)"
