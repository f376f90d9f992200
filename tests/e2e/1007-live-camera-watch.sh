#!/usr/bin/env bash
# The camera watch in `wakeline live` (issue 13), on the invented scene of
# 0308 (7 s here): the camera is bumped at 5.0 s (0.3 deg tilt, 0.2 deg
# turn), a tagged robot circles on a 0.25 m plane; the calibration comes
# from the first frame.  The clip is played through `wakeline live` (a file
# source, no frame dropped).  Checks: a warning names the move as it
# happens, the summary counts it, the RAW sidecar beside the live RAW.csv
# lists it within 1 s of 5.0 s as registered again, and the live positions
# after it are within 2 mm of the renderer's truth; with --no-watch the
# sidecar says the watch was off and positions after the move are off by
# more than 5 mm (so the scene does test the watch).
source "$WL_SOURCE_DIR/tests/e2e/lib/track.bash"
need_synth
scene() { # $1: extra top-level keys
cat <<JSON
{ "description": "invented test scene: a camera bumped at 5 s (0.3 deg tilt, 0.2 deg turn), one tagged robot circling",
  "seed": 17,
  "tank": { "size_m": [2.0, 1.2] },
  "markers": [
    { "id": 0, "center_m": [0.12, 0.12], "size_m": 0.10 },
    { "id": 1, "center_m": [1.00, 0.16], "size_m": 0.10 },
    { "id": 2, "center_m": [1.88, 0.12], "size_m": 0.10 },
    { "id": 3, "center_m": [1.88, 1.08], "size_m": 0.10, "yaw_deg": 90 },
    { "id": 4, "center_m": [1.00, 1.04], "size_m": 0.10 },
    { "id": 5, "center_m": [0.12, 1.08], "size_m": 0.10 },
    { "id": 6, "center_m": [0.55, 0.60], "size_m": 0.10 },
    { "id": 7, "center_m": [1.45, 0.60], "size_m": 0.10, "yaw_deg": 180 } ],
  "camera": { "width_px": 1280, "height_px": 720, "hfov_deg": 70, "position_m": [1.0, 0.6, 1.6], "tilt_deg": 2, "tilt_dir_deg": 60 },
  "camera_move": { "t_s": 5.0, "tilt_deg": 0.3, "yaw_deg": 0.2 },
  "timing": { "fps": 15, "duration_s": 7 },
  "encoding": { "crf": 16 },
  "effects": { "supersample": 2, "noise_sigma": 1.0 },
  "robots": [ { "id": 20, "diameter_m": 0.10, "height_m": 0.25,
                "marker": { "type": "tag", "tag_id": 20, "size_m": 0.06 },
                "path": { "start_m": [1.0, 0.25], "heading_deg": 0, "speed_mps": 0.2, "curvature_1pm": 2.5 } } ] }
JSON
}
scene > scene.json
synth scene.json clip.mp4
"$WAKELINE" synth scene.json --image frame.png --frame 30 > /dev/null || fail "synth --image"
cat > layout.csv <<'CSV'
marker_id,x_m,y_m,z_m,size_m,yaw_rad
0,0.12,0.12,0,0.10,0
1,1.00,0.16,0,0.10,0
2,1.88,0.12,0,0.10,0
3,1.88,1.08,0,0.10,1.5707963267948966
4,1.00,1.04,0,0.10,0
5,0.12,1.08,0,0.10,0
6,0.55,0.60,0,0.10,0
7,1.45,0.60,0,0.10,3.141592653589793
CSV
"$WAKELINE" calibrate frame.png --layout layout.csv --camera-height-m 1.6 --plane-height-m 0.25 -o cal.json -q > /dev/null ||
	fail "calibrate exited $?"
live() { # $1: RAW.csv, then options
	local out=$1; shift
	"$WAKELINE" live clip.mp4 --cal cal.json --ids 20 --raw "$out" --max-delay-ms 60000 --max-lag-ms 600000 \
		--status-s 100 "$@"
}
live live.csv > live.out 2> live.err || { cat live.err; fail "live exited $?"; }
cat live.out live.err
check_grep "live: a warning names the move" "warning: the camera moved between" live.err
check_grep "live: the summary counts one move" "camera watch: [0-9]* checks, 1 move$" live.out
live nowatch.csv --no-watch > nowatch.out 2> nowatch.err || { cat nowatch.err; fail "live --no-watch exited $?"; }
check_py "live: the move is in the sidecar within 1 s, registered again; positions after it within 2 mm" live.json live.csv nowatch.json nowatch.csv clip.truth.csv <<'PY'
import csv, json, math, sys
side, raw, side0, raw0, truth = sys.argv[1:]
s = json.load(open(side))
assert s["camera_watch"]["enabled"] is True
mv = s["camera_moves"]
assert len(mv) == 1, mv
m = mv[0]
print("live: move reported at %.3f s (frame %d), shift %.2f px, turn %.3f deg, %d markers"
      % (m["t_s"], m["frame"], m["shift_px"], m["turn_deg"], m["markers"]))
assert m["reregistered"] is True and m["markers"] >= 6
assert 5.0 <= m["t_s"] <= 6.0, m["t_s"]          # within 1 s of the move (scene: 5.0 s)
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
after = [x for t, x in e if t >= m["t_s"]]
e0 = [x for t, x in errs(raw0) if t >= m["t_s"]]
print("live positions: all frames %d rows, after the report max %.2f mm (%d rows); without the watch mean %.2f mm"
      % (len(e), max(after), len(after), sum(e0) / len(e0)))
assert len(e) >= 100                              # 105 frames: none dropped (a few may miss the tag)
assert max(after) <= 2 and len(after) > 15
assert sum(e0) / len(e0) > 5
PY
done_testing
