#!/usr/bin/env bash
# The camera watch (issue 13) on an invented scene rendered by `wakeline
# synth`: the camera (1.6 m up, 2 deg tilt) is bumped at 5.0 s, tilting by
# 0.3 deg and turning by 0.2 deg (camera_move); a tagged robot circles on a
# 0.25 m plane.  The calibration comes from the first frame (eight floor
# markers, --camera-height-m), so it is right before the move and 7-9 mm off
# after it without the watch.  Checks: the move is reported (raw.json
# camera_moves, contracts.md) within 1 s of 5.0 s with its time, re-registered
# from the markers; positions after the report are within 2 mm of the
# renderer's truth (before the move too); a warning names the move; with
# --no-watch the sidecar says the watch was off and the positions after the
# move are off by more than 5 mm (so the scene does test the watch); with only
# two floor markers known the move cannot be registered and the poses are
# marked suspect (raw.json "suspect", and a warning).  Through clean and
# measure, the moves reach clean.json ("camera") and summary.json (per run
# camera_moves and camera_suspect_s; null without a RAW sidecar) and the
# verdict (docs/measure.md): the registered move is a note that downgrades
# nothing (the outliers inside its bracket are left out of the outlier
# share), the suspect poses make the run reject (over half of it) with the
# seconds and what to do, in summary.json, summary.csv, on the terminal of
# measure and process, and on process's run.html.
source "$WL_SOURCE_DIR/tests/e2e/lib/track.bash"
need_synth
source "$LIB/bumped_camera.bash"
bumped_camera_setup 10
"$WAKELINE" track clip.mp4 --cal cal.json --ids 20 -o raw.csv 2> watch.err > watch.out || fail "track exited $?"
cat watch.out watch.err
check_grep "a warning names the move" "warning: the camera moved between" watch.err
"$WAKELINE" track clip.mp4 --cal cal.json --ids 20 -o nowatch.csv --no-watch -q || fail "track --no-watch exited $?"
check_py "the move is reported within 1 s, registered again; positions within 2 mm before and after it" raw.json raw.csv nowatch.json nowatch.csv clip.truth.csv <<'PY'
import csv, json, math, sys
side, raw, side0, raw0, truth = sys.argv[1:]
s = json.load(open(side))
assert s["camera_watch"]["enabled"] is True
mv = s["camera_moves"]
assert len(mv) == 1, mv
m = mv[0]
print("move reported at %.3f s (frame %d), last still %.3f s, shift %.2f px, turn %.3f deg, %d markers, RMS %.2f px"
      % (m["t_s"], m["frame"], m["last_still_t_s"], m["shift_px"], m["turn_deg"], m["markers"], m["rms_px"]))
assert m["reregistered"] is True and m["markers"] >= 6
assert 5.0 <= m["t_s"] <= 6.0, m["t_s"]             # within 1 s of the move (scene: 5.0 s)
assert m["last_still_t_s"] < 5.0                      # the bracket holds the move
assert abs(m["turn_deg"] - math.hypot(0.3, 0.2)) < 0.1  # the scene's turn, about 0.36 deg
assert json.load(open(side0))["camera_watch"]["enabled"] is False
tr = {int(r["frame"]): r for r in csv.DictReader(open(truth))}
def errs(path):
    out = []
    for r in csv.DictReader(open(path)):
        if r["status"] != "ok":
            continue
        t = tr[int(r["frame"])]
        out.append((float(r["t_s"]), 1e3 * math.hypot(float(r["x_m"]) - float(t["x_m"]), float(r["y_m"]) - float(t["y_m"]))))
    return out
e = errs(raw)
before = max(x for t, x in e if t < 5.0)
after = [x for t, x in e if t >= m["t_s"]]
e0 = [x for t, x in errs(raw0) if t >= m["t_s"]]
print("positions: before the move max %.2f mm; after the report max %.2f mm (%d rows); without the watch %.2f mm"
      % (before, max(after), len(after), sum(e0) / len(e0)))
assert before <= 2 and max(after) <= 2 and len(after) > 60
assert sum(e0) / len(e0) > 5
PY

# too few markers to register the pose again: a calibration that names only
# two of the markers in this clip (the others renamed to ids not shown)
# still sees the move, cannot register it, and marks the poses suspect
$PY - cal.json fewcal.json <<'PY'
import json, sys
c = json.load(open(sys.argv[1]))
for p in c["points"]:
    if p["id"].split(".")[0] not in ("0", "2"):
        p["id"] = "4" + p["id"]
json.dump(c, open(sys.argv[2], "w"))
PY
"$WAKELINE" track clip.mp4 --cal fewcal.json --ids 20 -o few.csv -q 2> few.err || fail "track (few markers) exited $?"
cat few.err
check_grep "two markers: a warning says the poses are suspect" "positions from .* on are suspect" few.err
check "two markers: the sidecar records the move unregistered and the suspect interval" "$PY" -c "
import json; s = json.load(open('few.json'))
mv = s['camera_moves']; su = s['suspect']
print('two markers in view:', mv, su)
assert s['camera_watch']['markers_in_view'] == 2
assert len(mv) == 1 and mv[0]['reregistered'] is False and 5.0 <= mv[0]['t_s'] <= 6.0
assert len(su) == 1 and su[0]['from_t_s'] < 5.0 and su[0]['to_t_s'] is None"
# the moves reach clean.json and summary.json: per run, the moves in its
# span (camera_moves) and the seconds of suspect poses (camera_suspect_s);
# a RAW.csv without its sidecar gives null (unknown)
for r in raw few; do
	"$WAKELINE" clean $r.csv -o ${r}_clean.csv -q --cal cal.json || fail "clean $r exited $?"
	"$WAKELINE" measure ${r}_clean.csv -o ${r}_summary.json --csv ${r}_summary.csv > ${r}_measure.out ||
		fail "measure $r exited $?"
	cat ${r}_measure.out
done
cp raw.csv bare.csv
"$WAKELINE" clean bare.csv -o bare_clean.csv -q --cal cal.json || fail "clean bare exited $?"
"$WAKELINE" measure bare_clean.csv -o bare_summary.json -q || fail "measure bare exited $?"
check_py "the moves reach clean.json and each run of summary.json (null without a sidecar)" <<'PY'
import json
c = json.load(open("raw_clean.json"))["camera"]
assert c["watched"] is True and len(c["moves"]) == 1 and c["moves"][0]["reregistered"] is True, c
assert json.load(open("bare_clean.json"))["camera"] is None
def runs(f):
    return [(r["camera_moves"], r["camera_suspect_s"], r["t_start_s"], r["duration_s"]) for r in json.load(open(f))["runs"]]
ok, few, bare = runs("raw_summary.json"), runs("few_summary.json"), runs("bare_summary.json")
print("summary camera columns: registered %s; two markers %s; no sidecar %s" % (ok, few, bare))
for m, s, t0, d in ok:       # a run over 5.0 s holds the move, registered: nothing suspect
    assert s == 0 and m == (1 if t0 < 5.5 and t0 + d > 4.8 else 0), (m, s, t0, d)
assert any(m == 1 for m, s, t0, d in ok)
for m, s, t0, d in few:      # not registered: suspect from the last still check (4.8 s) to the end
    end = t0 + d
    assert abs(s - max(0.0, end - max(t0, 4.8))) < 0.1, (s, t0, d)
assert any(s > 1 for m, s, t0, d in few)
assert all(m is None and s is None for m, s, t0, d in bare)
PY

# the moves in the verdict (docs/measure.md, "Verdict"): a move registered
# again that held (its new pose fits the markers to under 2 x the 0.5 px
# threshold) is a note and leaves the run ok; poses marked suspect make the
# run check (under half its span) or reject (half or more), with the
# seconds and what to do; in summary.json, summary.csv and on the terminal
check_py "the verdict: a registered move is a note, suspect poses are check or reject, in summary.json and .csv" <<'PY'
import csv, json
def runs(stem):
    js = json.load(open(stem + "_summary.json"))["runs"]
    rows = {(r["id"], r["segment"]): r for r in csv.DictReader(open(stem + "_summary.csv"))}
    for r in js:
        c = rows[(str(r["id"]), str(r["segment"]))]
        assert c["verdict"] == r["verdict"] and c["verdict_reasons"] == "; ".join(r["verdict_reasons"]), (c, r)
    return js
n_note = n_sus = 0
# rows the clean stage rejected, inside the move's bracket (4.80, 5.33] s
# (tracked with the old pose) and outside it
out_in = out_all = rows = 0
for c in csv.DictReader(open("raw_clean.csv")):
    if int(c["segment"]) < 0:
        continue
    rows += 1
    if c["status"] == "outlier":
        out_all += 1
        out_in += 4.8 < float(c["t_s"]) <= 5.3334
for r in runs("raw"):
    notes = [x for x in r["verdict_reasons"] if "the camera moved" in x]
    print("registered: %.1f-%.1f s %s %s" % (r["t_start_s"], r["t_start_s"] + r["duration_s"], r["verdict"], r["verdict_reasons"]))
    if r["camera_moves"]:
        assert len(notes) == 1 and notes[0].startswith("note: the camera moved between 4.80 s and 5.33 s"), notes
        assert "registered again from 8 markers" in notes[0]
        n_note += 1
    else:
        assert not notes
    # the note downgrades nothing: any other reason is not the camera's
    assert r["verdict"] == "ok" or any("camera" not in x for x in r["verdict_reasons"]), r
    # outliers inside the bracket are the move's, left out of the share
    print("outliers: %d of %d rows, %d inside the move's bracket" % (out_all, rows, out_in))
    assert out_in >= 2
    share = [x for x in r["verdict_reasons"] if "rejected as outliers" in x]
    if out_all - out_in > 0.01 * rows:
        assert share and share[0].startswith("%.1f%%" % (100.0 * (out_all - out_in) / rows)), share
    else:
        assert not share, share
for r in runs("few"):
    sus = [x for x in r["verdict_reasons"] if "are suspect" in x]
    t0, d, s = r["t_start_s"], r["duration_s"], r["camera_suspect_s"]
    print("suspect: %.1f-%.1f s, %.1f s suspect: %s %s" % (t0, t0 + d, s, r["verdict"], sus))
    if s > 0.05:
        assert len(sus) == 1 and ("%.1f s of the run from" % s) in sus[0], sus
        assert "keep them in view" in sus[0] and "calibrate --at 5.4" in sus[0]
        assert r["verdict"] == ("reject" if s >= 0.5 * d else "check") or r["verdict"] == "reject", r
        n_sus += 1
    else:
        assert not sus
assert n_note >= 1 and n_sus >= 1
PY
check_grep "the terminal: the registered move as a note" "note: the camera moved between 4.80 s and 5.33 s" raw_measure.out
# an ok run with the note on the terminal: the same CLEAN.csv with the
# clean stage's outliers outside the move's bracket marked measured
$PY - <<'PY'
import csv
rows = list(csv.DictReader(open("raw_clean.csv")))
for r in rows:
    if r["status"] == "outlier" and not 4.8 < float(r["t_s"]) <= 5.3334:
        r["status"] = "measured"
w = csv.DictWriter(open("okrun.csv", "w", newline=""), fieldnames=list(rows[0].keys()), lineterminator="\n")
w.writeheader(); w.writerows(rows)
PY
cp raw_clean.json okrun.json
"$WAKELINE" measure okrun.csv -o okrun_summary.json > okrun.out || fail "measure okrun exited $?"
cat okrun.out
check_grep "the terminal: an ok run shows the registered move as a note" "; ok: note: the camera moved between 4.80 s and 5.33 s" okrun.out
check_grep "the terminal: the suspect seconds" "s of the run from .* are suspect" few_measure.out

# process (the pipeline in one process) with too few markers: the same
# verdict on the terminal, in summary.json and on the clip's page
"$WAKELINE" process clip.mp4 --cal fewcal.json --ids 20 -o proc > proc.out 2> proc.err || fail "process exited $?"
cat proc.out
check_grep "process: the terminal names the suspect seconds" "are suspect: the camera moved" proc.out
check "process: run.html carries the verdict's reasons" grep -q "are suspect: the camera moved" proc/run.html
check "process: summary.json as measure wrote it" "$PY" -c "
import json
a = [(r['verdict'], r['verdict_reasons']) for r in json.load(open('proc/summary.json'))['runs']]
b = [(r['verdict'], r['verdict_reasons']) for r in json.load(open('few_summary.json'))['runs']]
print(a); assert a == b"

# the sidecar never overwrites another file: a RAW.csv named like the
# calibration (cal.csv -> cal.json) is refused before the run
cp cal.json cal.keep
set +e
"$WAKELINE" track clip.mp4 --cal cal.json --ids 20 -o cal.csv -q 2> clobber.err
rc=$?; set -e
cat clobber.err
[ "$rc" -eq 1 ] && grep -q "is not a RAW sidecar" clobber.err || fail "a sidecar over CAL.json was not refused"
cmp -s cal.json cal.keep || fail "CAL.json was overwritten"
[ ! -e cal.csv ] || fail "RAW.csv written although the run was refused"
done_testing
