#!/usr/bin/env bash
# probe --json: valid JSON with the expected values, byte-identical under
# LC_ALL=C and a decimal-comma locale (PITFALLS.md, "Locale").
source "$WL_SOURCE_DIR/tests/e2e/lib/decode.bash"
ff -f lavfi -i "testsrc2=size=320x240:rate=25" -frames:v 50 \
	-vf "settb=1/1000,setpts='if(lt(N,25),N*40,1000+(N-25)*100)'" -fps_mode vfr -enc_time_base 1/1000 \
	-c:v libx264 -pix_fmt yuv420p -bf 0 -video_track_timescale 1000 vfr.mp4

if ! locale -a 2>/dev/null | grep -qi '^de_DE\.utf-\?8$'; then
	skip_all "the de_DE.UTF-8 locale is not generated (scripts/setup makes it)"
fi
check_exit "probe --json under LC_ALL=C succeeds" 0 env LC_ALL=C "$WAKELINE" probe -q --json vfr.mp4
cp last.out c.json
check_exit "probe --json under LC_ALL=de_DE.UTF-8 succeeds" 0 env LC_ALL=de_DE.UTF-8 "$WAKELINE" probe -q --json vfr.mp4
cp last.out de.json
LC_ALL=C "$WAKELINE" probe -q vfr.mp4 > c.txt
LC_ALL=de_DE.UTF-8 "$WAKELINE" probe -q vfr.mp4 > de.txt
check "the JSON is byte-identical under LC_ALL=C and LC_ALL=de_DE.UTF-8" cmp c.json de.json
check "the text report is byte-identical under both locales" cmp c.txt de.txt
# the locale really writes decimal commas (else this test proves nothing)
check_eq "de_DE.UTF-8 writes a decimal comma here (printf)" "$(LC_ALL=de_DE.UTF-8 /usr/bin/printf '%.1f' 0.5)" "0,5"

check_py "the JSON holds the values of the variable-rate recipe" <<'PYEOF'
import json, sys
j = json.load(open("c.json"))
# VFR recipe of tests/data/references.md: 25 frames 40 ms apart, then 25 frames 100 ms apart
want = {"codec": "h264", "width_px": 320, "height_px": 240, "rotation_deg": 0, "pix_fmt": "yuv420p",
        "bit_depth": 8, "full_range": False, "frames": 50, "first_pts_s": 0, "last_t_s": 3.4,
        "interval_min_s": 0.04, "interval_max_s": 0.1, "variable_frame_rate": True,
        "corrupt_frames": 0, "damage_count": 0, "damage": []}
bad = {k: (j.get(k), v) for k, v in want.items() if j.get(k) != v}
if abs(j["interval_mean_s"] - 3.4 / 49) > 1e-6:
    bad["interval_mean_s"] = (j["interval_mean_s"], 3.4 / 49)
if bad:
    sys.exit("wrong values (got, want): %s" % bad)
PYEOF
check_grep "numbers are written with '.'" '"interval_min_s":	0.04,' c.json
done_testing
