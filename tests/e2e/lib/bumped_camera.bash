# lib/bumped_camera.bash: the scene of the camera-watch tests (track 0308,
# live 1007), sourced after lib/track.bash.  bumped_camera_setup DURATION_S
# writes, in the current folder: scene.json (an invented scene: eight floor
# markers, one tagged robot circling, the camera bumped at 5 s by a 0.3 deg
# tilt and a 0.2 deg turn), clip.mp4 with its truth, frame.png (frame 30,
# before the move), layout.csv and cal.json (calibrated from frame.png with
# the camera height, robots' plane 0.25 m).
bumped_camera_setup() {
	cat > scene.json <<JSON
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
  "timing": { "fps": 15, "duration_s": $1 },
  "encoding": { "crf": 16 },
  "effects": { "supersample": 2, "noise_sigma": 1.0 },
  "robots": [ { "id": 20, "diameter_m": 0.10, "height_m": 0.25,
                "marker": { "type": "tag", "tag_id": 20, "size_m": 0.06 },
                "path": { "start_m": [1.0, 0.25], "heading_deg": 0, "speed_mps": 0.2, "curvature_1pm": 2.5 } } ] }
JSON
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
}
