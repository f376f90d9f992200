#!/usr/bin/env bash
# wakeline live sends held poses as held (issue 17) and takes the tracker's
# rolling-shutter option.  Invented scene: one tagged robot circling at
# 0.15 m/s in a 1.2 m tank (640x400, 30 fps, 3 s) with two glare spots
# sweeping across its tag again and again, filmed with a 10 ms rolling-
# shutter readout.  Offline `wakeline track --readout-ms 10` holds the tag
# through the glare passes; the clip played into `wakeline live
# --readout-ms 10` with --realtime must give (live_check.py):
#  - a packet per offline row with the same status: `held` where offline
#    has `held` (at least 20 of them here), positions within 0.1 mm of
#    offline for ok and held rows, the binary packets saying the same;
#  - a recorded RAW.csv equal to offline's (the same t_detect_s);
#  - the causal filter's speed (held poses with 9x the variance, poses at
#    their rows' times) within 0.01 m/s RMS of the renderer's true speed.
source "$WL_SOURCE_DIR/tests/e2e/lib/live.bash"
need_synth
cat > glare.json <<'JSON'
{ "description": "invented test scene: one tagged robot circling under drifting glare, 10 ms rolling shutter, for the live tests",
  "seed": 6,
  "tank": { "size_m": [1.2, 0.8] },
  "camera": { "width_px": 640, "height_px": 400, "hfov_deg": 50, "position_m": [0.6, 0.4, 1.5] },
  "timing": { "fps": 30, "duration_s": 3, "readout_ms": 10 },
  "effects": { "noise_sigma": 1.0 },
  "robots": [ { "id": 3, "diameter_m": 0.12, "height_m": 0.05,
                "marker": { "type": "tag", "tag_id": 3, "size_m": 0.07 },
                "path": { "start_m": [0.6, 0.2], "heading_deg": 0, "speed_mps": 0.15, "curvature_1pm": 4 } } ],
  "glare_spots": [ { "robot": 3, "start_px": [-45, -4], "velocity_pxps": [60, 0], "repeat_s": 1.4, "radius_px": 13, "gain": 190 },
                   { "robot": 3, "start_px": [3, -45], "velocity_pxps": [0, 55], "t0_s": 0.6, "repeat_s": 1.6,
                     "radius_px": 11, "gain": 170 } ] }
JSON
synth glare.json glare.mp4
make_cal glare.scene.json cal.json 0.05
"$WAKELINE" track glare.mp4 --cal cal.json -o offline.csv --readout-ms 10 --quiet || fail "track exited $?"
held=$(grep -c ',held,' offline.csv || true)
check_num "offline track holds at least 20 rows (the scene tests holding)" "$held" ">=" 20
start_client poses.csv --idle 2
check_exit "wakeline live --readout-ms 10 succeeds" 0 \
	"$WAKELINE" live glare.mp4 --realtime --max-delay-ms 1000 --max-lag-ms 5000 --cal cal.json --readout-ms 10 \
	--raw live.csv --publish "udp://127.0.0.1:$JPORT" --publish "udp://127.0.0.1:$BPORT?format=binary" -q
wait "$CLIENT_PID" || fail "the test client failed"
check "packets and live RAW.csv equal offline's (status held too, positions 0.1 mm, t_detect_s), filter speed 0.01 m/s" \
	"$PY" "$LIB/live_check.py" offline.csv poses.csv --live-raw live.csv --truth glare.truth.csv --pos-mm 0.1 \
	--speed-mps 0.01
n=$(awk -F, '$1 == "json" && $6 == "held" && $9 != ""' poses.csv | wc -l)
note "offline: $held held rows; live: $n held JSON packets with a position"
check_eq "a held packet with a position for every held row offline" "$n" "$held"
done_testing
