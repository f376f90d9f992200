#!/bin/bash
# 0900-synth-clip: `wakeline synth` writes an H.264 clip whose frame times,
# size, frame count and rotation, as read back by Debian's ffprobe (FFmpeg
# 5.1, the reference), are those of the truth table; constant and jittered
# (variable) frame rates; bad scenes fail cleanly and write nothing.
source "$WL_SOURCE_DIR/tests/e2e/lib/harness.sh"
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
	local n=$1 frames=$2 rot=$3 f
	for f in "$n.mp4" "$n.truth.csv" "$n.scene.json"; do check_file "$n: synth writes $f" "$f"; done
	check_eq "$n: the codec is h264 (ffprobe)" \
		"$(ffprobe -v error -select_streams v:0 -show_entries stream=codec_name -of default=nw=1:nk=1 "$n.mp4" | head -1)" h264
	check_eq "$n: the size is 320x240 (ffprobe)" \
		"$(ffprobe -v error -select_streams v:0 -show_entries stream=width,height -of default=nw=1:nk=1 "$n.mp4" | head -2 | paste -sd,)" "320,240"
	check_eq "$n: ffprobe decodes $frames frames" \
		"$(ffprobe -v error -count_frames -select_streams v:0 -show_entries stream=nb_read_frames -of default=nw=1:nk=1 "$n.mp4" | head -1)" "$frames"
	check_eq "$n: the truth has a row per frame" "$(($(wc -l < "$n.truth.csv") - 1))" "$frames"
	check_eq "$n: the truth header" "$(head -1 "$n.truth.csv")" "t_s,frame,id,x_m,y_m,heading_rad,visible"
	# tests/data/references.md "Video timestamps": ffprobe's frame pts_time list
	ffprobe -v error -select_streams v:0 -show_entries frame=pts_time -of default=nw=1:nk=1 "$n.mp4" > "$n.pts"
	tail -n +2 "$n.truth.csv" | cut -d, -f1 > "$n.truth_t"
	paste -d, "$n.pts" "$n.truth_t" > "$n.times"
	check "$n: frame times (ffprobe) within 1 ms of the truth and increasing" awk -F, -v name="$n" '
		{ d = $1 - $2; if (d < 0) d = -d; if (d > m) m = d; if (NR > 1 && $1 <= p) bad = 1; p = $1; n++ }
		END { printf "%s: %d frames, max |pts_time - t_s| = %.6f s\n", name, n, m;
		      exit (m < 0.001 && !bad) ? 0 : 1 }' "$n.times"
	check_eq "$n: the rotation ffprobe reads" \
		"$(ffprobe -v error -select_streams v:0 -show_entries stream_side_data=rotation -of default=nw=1:nk=1 "$n.mp4" | tr -d '\n')" "$rot"
}

# constant 25 fps with B-frames: 50 frames
write_scene cfr 25 0 2 0
check_exit "synth cfr succeeds" 0 "$WAKELINE" synth -q cfr.json -o cfr.mp4
check_clip cfr 50 ""
check_eq "cfr: the second frame is at 0.04 s" "$(awk -F, 'NR == 3 { print $1 }' cfr.truth.csv)" "0.040000"

# jittered (variable) 30 fps, B-frames, rotation 90 counter-clockwise: 60 frames
write_scene vfr 30 0.6 3 90
check_exit "synth vfr under LC_ALL=de_DE.UTF-8 succeeds" 0 env LC_ALL=de_DE.UTF-8 "$WAKELINE" synth -q vfr.json -o vfr.mp4
check_clip vfr 60 "90"
# the intervals really vary (more than 10 distinct values in ms)
check_num "vfr: more than 10 distinct frame intervals (ms)" \
	"$(awk -F, 'NR > 2 { printf "%d\n", ($1 - p) * 1000 + 0.5 } { p = $1 }' vfr.truth.csv | sort -u | wc -l)" ">" 10
# written under a decimal-comma locale: still '.' decimals, 7 cells a row
check "vfr: truth numbers in '.' decimals, 7 cells a row, under LC_ALL=de_DE.UTF-8" \
	awk -F, 'NF != 7 || (NR > 1 && $1 !~ /^[0-9]+\.[0-9][0-9][0-9][0-9][0-9][0-9]$/) { print "line " NR ": " $0; exit 1 }' vfr.truth.csv

# our own decoder (wakeline probe) reads the same times and rotation
check_exit "probe --frames vfr.mp4 succeeds" 0 "$WAKELINE" probe -q --frames vfr.frames.csv vfr.mp4
cp last.out vfr.probe.txt
check_grep "probe reads rotation 90 deg counter-clockwise" "rotation *90 deg counter-clockwise" vfr.probe.txt
paste -d, <(tail -n +2 vfr.frames.csv | cut -d, -f2) vfr.truth_t > vfr.probe_times
check "probe reads the 60 frame times of the truth (within 1e-6 s)" awk -F, '
	{ d = $1 - $2; if (d < 0) d = -d; if (d > m) m = d; n++ } END { print n " frames, max diff " m; exit (n == 60 && m < 1e-6) ? 0 : 1 }' vfr.probe_times

# rotation 270 is reported as -90 (the phone-portrait case), and our display
# matrix equals the one ffmpeg writes for -metadata rotate=270 (tests/data/references.md)
write_scene r270 25 0 0 270
check_exit "synth r270 succeeds" 0 "$WAKELINE" synth -q r270.json -o r270.mp4
check_clip r270 50 "-90"
ffmpeg -v error -y -i cfr.mp4 -c copy -metadata:s:v:0 rotate=270 ref270.mp4
m_ours=$(ffprobe -v error -select_streams v:0 -show_entries stream_side_data=displaymatrix -of default=nw=1 r270.mp4)
m_ref=$(ffprobe -v error -select_streams v:0 -show_entries stream_side_data=displaymatrix -of default=nw=1 ref270.mp4)
check_eq "the display matrix for rotation 270 is there" "$([ -n "$m_ours" ] && echo present)" present
check_eq "the display matrix equals ffmpeg's for rotate=270" "$m_ours" "$m_ref"

# the scene written back parses again and renders the same truth
check_exit "synth on the written-back scene succeeds" 0 "$WAKELINE" synth -q vfr.scene.json -o again.mp4
check "the written-back scene reproduces the clip's truth" cmp vfr.truth.csv again.truth.csv

# bad scenes: exit 1, the message names file and key, nothing written
mkdir bad
sed 's/"speed_mps"/"sped_mps"/' cfr.json > bad/typo.json
check_exit "a scene with a misspelt key fails (exit 1)" 1 "$WAKELINE" synth bad/typo.json -o bad/typo.mp4
check_grep "the message names typo.json" "typo.json" last.err
check_grep "the message names the key robots[0].path.sped_mps" "robots\[0\].path: key 'sped_mps'" last.err
printf '{ "tank": { "size_m": [1, 1] },\n  "camera": { "width_px": 320,, } }\n' > bad/syntax.json
check_exit "a scene with a syntax error fails (exit 1)" 1 "$WAKELINE" synth bad/syntax.json -o bad/syntax.mp4
check_grep "the message names syntax.json line 2" "syntax.json:2:" last.err
check_eq "bad scenes leave no file" "$(ls -A bad | grep -v '\.json$' || true)" ""

# an output folder that does not exist: exit 1, the path named
check_exit "an output in a missing folder fails (exit 1)" 1 "$WAKELINE" synth -q cfr.json -o no-such-dir/x.mp4
check_grep "the message names the output" "no-such-dir/x" last.err

# usage
check_exit "synth --help exits 0" 0 "$WAKELINE" synth --help
check_grep "synth --help shows the usage" "usage: wakeline synth" last.out
check_exit "synth without arguments is a usage error (exit 2)" 2 "$WAKELINE" synth
done_testing
