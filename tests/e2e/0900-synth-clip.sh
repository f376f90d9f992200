#!/bin/bash
# 0900-synth-clip: `wakeline synth` writes an H.264 clip whose frame times,
# size, frame count and rotation, as read back by Debian's ffprobe (FFmpeg
# 5.1, the reference), are those of the truth table; constant and jittered
# (variable) frame rates; bad scenes fail cleanly and write nothing.
set -euo pipefail
: "${WAKELINE:?}" "${WL_TEST_TMP:?}"
rm -rf "$WL_TEST_TMP"; mkdir -p "$WL_TEST_TMP"; cd "$WL_TEST_TMP"
fail() { echo "FAIL: $*" >&2; exit 1; }
command -v ffprobe >/dev/null || fail "ffprobe (Debian ffmpeg) is needed"

write_scene() { # name fps jitter b_frames rotation
	cat > "$1.json" <<JSON
{
  "description": "Invented test scene for the e2e test (not real data).",
  "seed": 11,
  "tank": { "size_m": [1.2, 0.8] },
  "markers": [ { "id": 0, "center_m": [0.1, 0.1], "size_m": 0.1 },
               { "id": 1, "center_m": [1.1, 0.7], "size_m": 0.1 } ],
  "camera": { "width_px": 320, "height_px": 240, "hfov_deg": 60, "position_m": [0.6, 0.4, 1.2] },
  "timing": { "fps": $2, "duration_s": 2, "jitter": $3 },
  "encoding": { "b_frames": $4, "rotation_deg": $5 },
  "effects": { "supersample": 2, "noise_sigma": 1.5 },
  "robots": [ { "id": 4, "marker": { "type": "tag", "tag_id": 4, "size_m": 0.06 },
                "path": { "start_m": [0.6, 0.3], "speed_mps": 0.1, "curvature_1pm": 3, "yaw_osc_deg": 15 } } ]
}
JSON
}

# check_clip name expected_frames expected_rotation(empty = none)
check_clip() {
	local n=$1 frames=$2 rot=$3
	[ -s "$n.mp4" ] && [ -s "$n.truth.csv" ] && [ -s "$n.scene.json" ] || fail "$n: outputs missing"
	[ "$(ffprobe -v error -select_streams v:0 -show_entries stream=codec_name -of default=nw=1:nk=1 "$n.mp4" | head -1)" = h264 ] ||
		fail "$n: not h264"
	[ "$(ffprobe -v error -select_streams v:0 -show_entries stream=width,height -of default=nw=1:nk=1 "$n.mp4" | head -2 | paste -sd,)" = "320,240" ] ||
		fail "$n: wrong size"
	local counted
	counted=$(ffprobe -v error -count_frames -select_streams v:0 -show_entries stream=nb_read_frames -of default=nw=1:nk=1 "$n.mp4" | head -1)
	[ "$counted" = "$frames" ] || fail "$n: ffprobe decoded $counted frames, expected $frames"
	[ "$(($(wc -l < "$n.truth.csv") - 1))" = "$frames" ] || fail "$n: truth rows != frames"
	[ "$(head -1 "$n.truth.csv")" = "t_s,frame,id,x_m,y_m,heading_rad,visible,visible_frac,t_centre_s" ] || fail "$n: truth header"
	# REFERENCES.md "Video timestamps": ffprobe's frame pts_time list
	ffprobe -v error -select_streams v:0 -show_entries frame=pts_time -of default=nw=1:nk=1 "$n.mp4" > "$n.pts"
	tail -n +2 "$n.truth.csv" | cut -d, -f1 > "$n.truth_t"
	paste -d, "$n.pts" "$n.truth_t" | awk -F, -v name="$n" '
		{ d = $1 - $2; if (d < 0) d = -d; if (d > m) m = d; if (NR > 1 && $1 <= p) bad = 1; p = $1; n++ }
		END { printf "%s: %d frames, max |pts_time - t_s| = %.6f s\n", name, n, m;
		      exit (m < 0.001 && !bad) ? 0 : 1 }' || fail "$n: frame times differ from the truth by 1 ms or more"
	local r
	r=$(ffprobe -v error -select_streams v:0 -show_entries stream_side_data=rotation -of default=nw=1:nk=1 "$n.mp4" | tr -d '\n')
	[ "$r" = "$rot" ] || fail "$n: ffprobe rotation '$r', expected '$rot'"
}

# constant 25 fps with B-frames: 50 frames
write_scene cfr 25 0 2 0
"$WAKELINE" synth -q cfr.json -o cfr.mp4
check_clip cfr 50 ""
awk -F, 'NR == 3 && $1 != "0.040000" { exit 1 }' cfr.truth.csv || fail "cfr: second frame not at 0.04 s"

# jittered (variable) 30 fps, B-frames, rotation 90 counter-clockwise: 60 frames
write_scene vfr 30 0.6 3 90
LC_ALL=de_DE.UTF-8 "$WAKELINE" synth -q vfr.json -o vfr.mp4
check_clip vfr 60 "90"
# the intervals really vary (more than 10 distinct values in ms)
[ "$(awk -F, 'NR > 2 { printf "%d\n", ($1 - p) * 1000 + 0.5 } { p = $1 }' vfr.truth.csv | sort -u | wc -l)" -gt 10 ] ||
	fail "vfr: frame intervals do not vary"
# written under a decimal-comma locale: still '.' decimals, 9 cells a row
awk -F, 'NF != 9 || (NR > 1 && $1 !~ /^[0-9]+\.[0-9][0-9][0-9][0-9][0-9][0-9]$/) { exit 1 }' vfr.truth.csv ||
	fail "vfr: truth numbers not in '.' decimals under LC_ALL=de_DE.UTF-8"

# our own decoder (wakeline probe) reads the same times and rotation
"$WAKELINE" probe -q --frames vfr.frames.csv vfr.mp4 > vfr.probe.txt
grep -q "rotation *90 deg counter-clockwise" vfr.probe.txt || fail "probe: rotation: $(grep rotation vfr.probe.txt)"
paste -d, <(tail -n +2 vfr.frames.csv | cut -d, -f2) vfr.truth_t | awk -F, '
	{ d = $1 - $2; if (d < 0) d = -d; if (d > m) m = d; n++ } END { exit (n == 60 && m < 1e-6) ? 0 : 1 }' ||
	fail "probe: frame times differ from the truth"

# rotation 270 is reported as -90 (the phone-portrait case), and our display
# matrix equals the one ffmpeg writes for -metadata rotate=270 (REFERENCES.md)
write_scene r270 25 0 0 270
"$WAKELINE" synth -q r270.json -o r270.mp4
check_clip r270 50 "-90"
ffmpeg -v error -y -i cfr.mp4 -c copy -metadata:s:v:0 rotate=270 ref270.mp4
m_ours=$(ffprobe -v error -select_streams v:0 -show_entries stream_side_data=displaymatrix -of default=nw=1 r270.mp4)
m_ref=$(ffprobe -v error -select_streams v:0 -show_entries stream_side_data=displaymatrix -of default=nw=1 ref270.mp4)
[ -n "$m_ours" ] && [ "$m_ours" = "$m_ref" ] || fail "display matrix differs from ffmpeg's for rotate=270"

# the scene written back parses again and renders the same truth
"$WAKELINE" synth -q vfr.scene.json -o again.mp4
cmp -s vfr.truth.csv again.truth.csv || fail "scene.json does not reproduce the clip's truth"

# bad scenes: exit 1, the message names file and key, nothing written
mkdir bad && cd bad
sed 's/"speed_mps"/"sped_mps"/' ../cfr.json > typo.json
set +e
"$WAKELINE" synth typo.json -o typo.mp4 2> typo.err; rc=$?
set -e
[ $rc = 1 ] || fail "typo scene: exit $rc, expected 1"
grep -q "typo.json" typo.err && grep -q "robots\[0\].path: key 'sped_mps'" typo.err || fail "typo: message: $(cat typo.err)"
printf '{ "tank": { "size_m": [1, 1] },\n  "camera": { "width_px": 320,, } }\n' > syntax.json
set +e
"$WAKELINE" synth syntax.json -o syntax.mp4 2> syntax.err; rc=$?
set -e
[ $rc = 1 ] || fail "syntax error scene: exit $rc"
grep -q "syntax.json:2:" syntax.err || fail "syntax: message lacks file:line: $(cat syntax.err)"
[ "$(ls -A | grep -v '\.json$' | grep -v '\.err$' | wc -l)" = 0 ] || fail "bad scenes left files: $(ls -A)"
cd ..

# an output folder that does not exist: exit 1, the path named
set +e
"$WAKELINE" synth -q cfr.json -o no-such-dir/x.mp4 2> nodir.err; rc=$?
set -e
[ $rc = 1 ] && grep -q "no-such-dir/x" nodir.err || fail "missing folder: exit $rc: $(cat nodir.err)"

# usage
"$WAKELINE" synth --help | grep -q "usage: wakeline synth" || fail "--help"
set +e
"$WAKELINE" synth > /dev/null 2>&1; rc=$?
set -e
[ $rc = 2 ] || fail "no arguments: exit $rc, expected 2"
echo "ok"
