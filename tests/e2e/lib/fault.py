#!/usr/bin/python3
"""fault.py: the checks of tests/e2e/0806-io-fault-injection.sh (a helper, not
a test).  The shim (tests/fault/inject.c) makes the N-th counted file
operation of a run fail; this script picks the N to try from a trace of a
run without faults, and checks the outcome of each run.

  fault.py select TRACE COUNTER BASE [--all|--files|--kinds]
      prints "N OP FILE" for each N to try.  COUNTER is any, root or child
      (the shim's WL_FAULT_IN); BASE the output folder (FILE is relative to
      it, with temporary names and clip folders folded: clips/*/raw.csv).
        --all    every N (the default);
        --files  every N up to the first rename (the first file written
                 from open to commit), then the first write of every other
                 file: every file is still hit by a write fault, once (its
                 later writes go through the same stdio flush, and a later
                 clip's files repeat the first clip's in another folder);
        --kinds  the first op of each kind on each file.

  fault.py verify --out DIR --gold DIR --gold2 DIR --rc RC --stderr FILE
                  --report FILE|none [--prev LIST] [--want "OP FILE"]
      the rule at every N.  The shim's report says whether the fault was hit
      (and that the program ended normally: a crash writes no "total").
      Not hit: exit 0 and every output of the fault-free run present and
      complete.  Hit: exit 1, standard error names the file whose operation
      failed, and what the program left is sound.  Either way: no
      temporary file (.NAME.tmp-*) anywhere under DIR; every file is
      complete (byte-identical to the fault-free run's where that run is
      reproducible, else it parses whole: JSON with the same keys, CSV with
      the same header and row count, PNG chunks with their CRCs up to IEND,
      SVG as XML, HTML to </html>, MP4 boxes filling the file, the journal in
      whole lines); with --prev (lines "PATH<tab>INODE": the previous
      outputs, a copy of --gold made before the run), every one is still there and
      either untouched (same inode, same bytes) or replaced by a complete
      file, and nothing else appeared.  With --want, the operation that
      failed is the one the trace has at N (the run is reproducible).
"""
import csv
import hashlib
import io
import json
import os
import re
import struct
import sys
import xml.etree.ElementTree as ET
import zlib

# core/afile.c: ".NAME.tmp-PID-N", or ".NAME.tmp-OWNER-PID-N" under an owner tag (batch shards)
TMP = re.compile(r"^\.(.+)\.tmp-(?:[A-Za-z][A-Za-z0-9_]*-)?\d+-\d+$")
CLIPDIR = re.compile(r"(^|/)clips/[^/]+/")
# a batch's journal is history: every run appends to it, so a rerun's
# holds more lines than a fault-free run's (it is checked to be whole)
JOURNAL = re.compile(r"^journal(-\d+)?\.log$")


def fold(path, base):
    """a traced path relative to base, temporary name and clip folder folded"""
    rel = os.path.relpath(path, base) if path.startswith("/") else path
    d, f = os.path.split(rel)
    m = TMP.match(f)
    if m:
        f = m.group(1)
    return CLIPDIR.sub(r"\1clips/*/", os.path.join(d, f))


def target_name(path):
    f = os.path.basename(path)
    m = TMP.match(f)
    return m.group(1) if m else f


def read_trace(trace, counter):
    col = {"any": 0, "root": 1, "child": 2}[counter]
    ops = []
    for line in open(trace):
        p = line.split()
        n = int(p[col])
        if n > 0:
            ops.append((n, p[3], p[4]))
    return ops


def cmd_select(args):
    trace, counter, base = args[:3]
    mode = args[3] if len(args) > 3 else "--all"
    ops = read_trace(trace, counter)
    first_rename = next((i for i, o in enumerate(ops) if o[1] == "rename"), len(ops) - 1)
    chosen, seen = [], set()
    for i, (n, op, path) in enumerate(ops):
        f = fold(path, base)  # a later clip's files fold onto the first's
        if mode == "--all":
            take = True
        elif mode == "--files":
            take = i <= first_rename or (op == "write" and f not in seen)
            if op == "write":
                seen.add(f)
        elif mode == "--kinds":
            take = (op, f) not in seen
            seen.add((op, f))
        else:
            sys.exit("fault.py select: unknown mode " + mode)
        if take:
            chosen.append((n, op, f))
    for n, op, f in chosen:
        print(n, op, f)


def sha(p):
    return hashlib.sha256(open(p, "rb").read()).hexdigest()


def _no_clock(v):
    """v without the keys that hold the wall clock (created_utc, ...)"""
    if isinstance(v, dict):
        return {k: _no_clock(x) for k, x in v.items() if not k.endswith("_utc")}
    if isinstance(v, list):
        return [_no_clock(x) for x in v]
    return v


def content(p):
    """what a run must reproduce: the bytes, or for JSON the document without
    its time stamps (two runs a second apart differ only there)"""
    if p.endswith(".json"):
        try:
            return json.dumps(_no_clock(json.load(open(p))), sort_keys=True)
        except ValueError:
            pass
    return sha(p)


def walk(d):
    for root, dirs, files in os.walk(d):
        for f in files:
            p = os.path.join(root, f)
            yield os.path.relpath(p, d), p


def check_png(data):
    assert data[:8] == b"\x89PNG\r\n\x1a\n", "no PNG signature"
    i = 8
    while True:
        assert i + 12 <= len(data), "cut inside a chunk"
        n, kind = struct.unpack(">I4s", data[i:i + 8])
        body = data[i + 4:i + 8 + n]
        assert i + 12 + n <= len(data), "cut inside chunk %r" % kind
        (crc,) = struct.unpack(">I", data[i + 8 + n:i + 12 + n])
        assert zlib.crc32(body) & 0xFFFFFFFF == crc, "bad CRC in chunk %r" % kind
        i += 12 + n
        if kind == b"IEND":
            assert i == len(data), "bytes after IEND"
            return


def check_mp4(data):
    i, kinds = 0, set()
    while i < len(data):
        assert i + 8 <= len(data), "cut inside a box header"
        n, kind = struct.unpack(">I4s", data[i:i + 8])
        if n == 1:
            (n,) = struct.unpack(">Q", data[i + 8:i + 16])
        assert n >= 8 and i + n <= len(data), "box %r runs past the end" % kind
        kinds.add(kind)
        i += n
    assert b"moov" in kinds and b"mdat" in kinds, "no moov or mdat box"


def complete(rel, p, gold, strict):
    """raises AssertionError when the file at p is not whole; strict: it must
    also hold as many rows as the fault-free run's (a run that failed part
    way may list fewer, whole)"""
    data = open(p, "rb").read()
    g = os.path.join(gold, rel)
    name = os.path.basename(rel)
    if name.startswith(".lock"):
        return
    if name.endswith(".json"):
        j = json.loads(data)
        if os.path.exists(g) and isinstance(j, dict):
            assert set(j) == set(json.load(open(g))), "keys differ from the fault-free run's"
    elif name.endswith(".csv"):
        assert data.endswith(b"\n"), "the last line is cut"
        rows = list(csv.reader(io.StringIO(data.decode())))
        assert rows and all(len(r) == len(rows[0]) for r in rows), "ragged rows"
        if os.path.exists(g):
            grows = list(csv.reader(open(g)))
            assert rows[0] == grows[0], "the header differs from the fault-free run's"
            assert not strict or len(rows) == len(grows), \
                "%d rows, the fault-free run has %d" % (len(rows), len(grows))
    elif name.endswith(".png"):
        check_png(data)
    elif name.endswith(".svg"):
        ET.fromstring(data)
    elif name.endswith(".html"):
        assert data.rstrip().endswith(b"</html>"), "cut before </html>"
    elif name.endswith(".mp4"):
        check_mp4(data)
    elif name == "journal.log":
        t = data.decode()
        assert t == "" or t.endswith("\n"), "last line cut"
        assert all(l.count("\t") == 4 for l in t.splitlines()), "a line is not whole"
    elif name.endswith(".log"):
        assert data == b"" or data.endswith(b"\n"), "last line cut"
    else:
        assert data, "empty"


def cmd_verify(argv):
    a = dict(zip(argv[0::2], argv[1::2]))
    out, gold, gold2 = a["--out"], a["--gold"], a["--gold2"]
    rc = int(a["--rc"])
    err = open(a["--stderr"], errors="replace").read()
    shim = a["--report"] != "none"  # none: a run without the shim
    rep = open(a["--report"]).read().splitlines() if shim and os.path.exists(a["--report"]) else []
    hits = [l.split() for l in rep if l.startswith("hit ")]
    bad = []
    if shim and not any(l.startswith("total ") for l in rep):
        bad.append("the program did not end normally (no 'total' in the shim's report): exit %d" % rc)
    if len(hits) > 1:
        bad.append("the fault was hit %d times" % len(hits))
    say = ""
    if hits:
        _, n, op, path, eno = hits[0][:5]
        name = target_name(path)
        say = "%s of %s failed (%s)" % (op, fold(path, out), eno)
        if "--want" in a and a["--want"] != "%s %s" % (op, fold(path, out)):
            bad.append("the failed op is '%s %s', the trace has '%s' at N=%s" % (op, fold(path, out), a["--want"], n))
        if rc != 1:
            bad.append("%s, but the exit status is %d, not 1" % (say, rc))
        if name not in err:
            bad.append("%s, but standard error does not name %s: %r" % (say, name, err.strip()[-300:]))
    else:
        say = "no fault hit"
        if rc != 0:
            bad.append("no fault was hit, but the exit status is %d: %r" % (rc, err.strip()[-300:]))
    files = dict(walk(out))
    for rel in files:
        if TMP.match(os.path.basename(rel)):
            bad.append("temporary file left: " + rel)
    if not hits:
        for rel, _ in walk(gold):
            if rel not in files:
                bad.append("no fault, but %s is missing" % rel)
    snap = {}  # the previous outputs: a copy of the fault-free run's
    if "--prev" in a:
        for line in open(a["--prev"]):
            rel, ino = line.rstrip("\n").split("\t")
            snap[rel] = (int(ino), sha(os.path.join(gold, rel)))
        for rel in snap:
            if rel not in files:
                bad.append("the previous %s is gone" % rel)
    untouched = replaced = 0
    for rel, p in files.items():
        if TMP.match(os.path.basename(rel)):
            continue
        g, g2 = os.path.join(gold, rel), os.path.join(gold2, rel)
        if rel in snap and os.stat(p).st_ino == snap[rel][0]:
            if sha(p) != snap[rel][1]:
                bad.append("%s was changed in place (same inode, other bytes)" % rel)
            untouched += 1
            continue
        if snap and rel not in snap:
            bad.append("a file that no run writes appeared: " + rel)
            continue
        replaced += rel in snap
        # written whole by a run that did not fail, or by a command that
        # replaces its previous outputs: the fault-free bytes where they are
        # reproducible (a batch whose clip failed writes another summary)
        strict = (not hits or rel in snap) and not JOURNAL.match(os.path.basename(rel))
        if strict and os.path.exists(g) and os.path.exists(g2) and content(g) == content(g2):
            if content(p) != content(g):
                bad.append("%s differs from the fault-free run's (which is reproducible)" % rel)
            continue
        try:
            complete(rel, p, gold, strict)
        except Exception as e:  # noqa: BLE001 - any parse error means a cut file
            bad.append("%s is not whole: %s" % (rel, e))
    first_err = next((l for l in err.splitlines() if "error" in l), err.strip().split("\n")[0] if err.strip() else "")
    print("%s; exit %d; %d files whole (%d previous untouched, %d replaced whole); %s" %
          (say, rc, len(files), untouched, replaced, first_err[:160]))
    if bad:
        print("\n".join("  " + b for b in bad))
        sys.exit(1)


if __name__ == "__main__":
    cmd, args = sys.argv[1], sys.argv[2:]
    {"select": cmd_select, "verify": cmd_verify}[cmd](args)
