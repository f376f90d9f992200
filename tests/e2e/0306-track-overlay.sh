#!/usr/bin/env bash
# track --overlay / --trail: the QC clip has every frame of the input at the
# same times (ffprobe, Debian's ffmpeg) and its rotation metadata; the pose
# circle is drawn where RAW.csv puts the robot (its pixels change there and
# not far away); the trail PNG has the clip's coded size.
source "$WL_SOURCE_DIR/tests/e2e/lib/track.bash"
need_synth
cat > scene.json <<'JSON'
{ "description": "invented test scene: one tagged robot, small clip for the overlay",
  "seed": 17,
  "tank": { "size_m": [2.4, 1.4] },
  "camera": { "width_px": 960, "height_px": 540, "hfov_deg": 64, "position_m": [1.2, 0.7, 2.0] },
  "timing": { "fps": 30, "duration_s": 1 },
  "encoding": { "bit_rate_bps": 4000000, "rotation_deg": 90 },
  "robots": [ { "id": 6, "diameter_m": 0.14, "height_m": 0.25,
                "marker": { "type": "tag", "tag_id": 6, "size_m": 0.08 },
                "path": { "start_m": [1.0, 0.6], "heading_deg": 45, "speed_mps": 0.3 } } ] }
JSON
synth scene.json clip.mp4
make_cal clip.scene.json cal.json 0.25
check_exit "track --overlay --trail succeeds" 0 \
	"$WAKELINE" track clip.mp4 --cal cal.json -o raw.csv --overlay qc.mp4 --trail trail.png --quiet
times() { ffprobe -v error -select_streams v:0 -show_entries frame=pts_time -of default=nw=1:nk=1 "$1"; }
times clip.mp4 > t_clip.txt
times qc.mp4 > t_qc.txt
check_py "the overlay has the clip's 30 frames at the same times (within 1 ms)" <<'PYEOF'
a = [float(x) for x in open("t_clip.txt")]; b = [float(x) for x in open("t_qc.txt")]
assert len(a) == len(b) == 30, (len(a), len(b))
assert max(abs((x - a[0]) - (y - b[0])) for x, y in zip(a, b)) < 1e-3
PYEOF
rot=$(ffprobe -v error -select_streams v:0 -show_entries stream_side_data=rotation -of default=nw=1:nk=1 qc.mp4 | head -1)
rot0=$(ffprobe -v error -select_streams v:0 -show_entries stream_side_data=rotation -of default=nw=1:nk=1 clip.mp4 | head -1)
check_eq "the overlay has the clip's rotation" "$rot" "$rot0"
check_eq "the clip has the rotation the scene asks for (ffprobe)" "$rot0" "90"
# first frames of both, coded pixels (no autorotate), compared around the pose
ffmpeg -v error -nostdin -y -noautorotate -i clip.mp4 -frames:v 1 -f rawvideo -pix_fmt rgb24 f_clip.rgb
ffmpeg -v error -nostdin -y -noautorotate -i qc.mp4 -frames:v 1 -f rawvideo -pix_fmt rgb24 f_qc.rgb
check_py "the overlay is drawn at the tracked pose and nowhere far from it" <<'PYEOF'
import csv
import numpy as np
w, h = 960, 540
a = np.fromfile("f_clip.rgb", np.uint8).reshape(h, w, 3).astype(int)
b = np.fromfile("f_qc.rgb", np.uint8).reshape(h, w, 3).astype(int)
r = next(csv.DictReader(open("raw.csv")))
assert r["status"] == "ok", r
u, v, s = float(r["u_px"]), float(r["v_px"]), float(r["size_px"])
yy, xx = np.mgrid[0:h, 0:w]
d = np.hypot(xx - u, yy - v)
diff = np.abs(a - b).sum(axis=2)
ring = diff[(d > 0.75 * s - 2) & (d < 0.75 * s + 2)].mean()
far = diff[(d > 6 * s)].mean()
print(f"mean change on the pose circle {ring:.1f}, far away {far:.1f}")
assert ring > 60 and far < 15, (ring, far)
PYEOF
check "trail.png is a PNG of the clip's coded size (960 x 540)" "$PY" -c "
import struct, sys
d = open('trail.png', 'rb').read(32)
assert d[:8] == b'\x89PNG\r\n\x1a\n'
w, h = struct.unpack('>II', d[16:24]); print('trail', w, h); sys.exit(0 if (w, h) == (960, 540) else 1)"
done_testing
