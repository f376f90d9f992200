# lib/live.bash: helpers shared by the live end-to-end tests (sourced, not a
# test itself).  On top of track.bash (synthetic clips, their true camera as
# CAL.json): a clip streamed over loopback by the ffmpeg CLI, `wakeline
# live` started on a free port, and the test client (live_client.py).
#
# Ports: the suite runs tests in parallel, so nothing uses a fixed port.
# The client binds port 0 (the kernel picks) and says which; wakeline's
# input port is one the kernel just gave out, and start_live checks that
# wakeline itself holds it (ss) and starts again on another if it could not
# bind it.
source "$WL_SOURCE_DIR/tests/e2e/lib/track.bash"

# a UDP port free at this moment
free_udp_port() {
	$PY -c 'import socket; s = socket.socket(socket.AF_INET, socket.SOCK_DGRAM); s.bind(("127.0.0.1", 0)); print(s.getsockname()[1])'
}

# bound_by PID PORT: true when process PID has a UDP socket on PORT
bound_by() {
	ss -Hlunp "sport = :$2" 2>/dev/null | grep -q "pid=$1,"
}

# wait_bound PID PORT: waits (up to 20 s) until PID holds PORT; fails if it exits
wait_bound() {
	local k
	for k in $(seq 200); do
		bound_by "$1" "$2" && return 0
		kill -0 "$1" 2>/dev/null || return 1
		sleep 0.1
	done
	return 1
}

# start_live LOG ARGS...: `wakeline live udp://127.0.0.1:PORT ARGS...` in the
# background (stdout to LOG.out, stderr to LOG.err) on a free port; sets
# LIVE_PID and IN_PORT once it listens.
start_live() {
	local log=$1 try
	shift
	for try in 1 2 3 4 5; do
		IN_PORT=$(free_udp_port)
		"$WAKELINE" live "udp://127.0.0.1:$IN_PORT" "$@" >"$log.out" 2>"$log.err" &
		LIVE_PID=$!
		wait_bound "$LIVE_PID" "$IN_PORT" && return 0
		kill "$LIVE_PID" 2>/dev/null || true
		wait "$LIVE_PID" 2>/dev/null || true
		grep -qi "address already in use" "$log.err" || { cat "$log.err" >&2; fail "wakeline live did not start"; }
	done
	fail "no free port for wakeline live after 5 tries"
}

# start_client OUT.csv [client options]: the test client in the background;
# sets CLIENT_PID, JPORT (JSON) and BPORT (binary)
start_client() {
	local out=$1 k
	shift
	rm -f "$out.ports"
	$PY "$LIB/live_client.py" "$out.ports" "$out" "$@" &
	CLIENT_PID=$!
	for k in $(seq 100); do
		[ -s "$out.ports" ] && break
		sleep 0.1
	done
	[ -s "$out.ports" ] || fail "the test client did not start"
	read -r JPORT BPORT < "$out.ports"
}

# send_clip CLIP PORT [ffmpeg output options]: the clip at its own rate
# (ffmpeg -re), stream-copied into MPEG-TS over UDP to 127.0.0.1:PORT
send_clip() {
	local clip=$1 port=$2
	shift 2
	ffmpeg -nostdin -v error -re -i "$clip" -c copy "$@" -f mpegts "udp://127.0.0.1:$port?pkt_size=1316"
}

# wait_rows FILE N: waits (up to 60 s) until FILE has N lines after its header
# (a live run that has tracked that many robot-frames; a loaded machine may
# take seconds to start one)
wait_rows() {
	local k
	for k in $(seq 600); do
		[ -f "$1" ] && [ "$(($(wc -l < "$1") - 1))" -ge "$2" ] && return 0
		sleep 0.1
	done
	return 1
}

# whole_lines FILE NCELLS: the check that FILE is not empty, every line ends
# in a newline and has NCELLS cells
whole_lines() { check "$1: whole lines of $2 cells" _whole_lines "$1" "$2"; }
_whole_lines() {
	[ -s "$1" ] || fail "$1 is empty"
	[ "$(tail -c 1 "$1" | od -An -tx1 | tr -d ' ')" = "0a" ] || fail "$1 ends inside a line"
	awk -F, -v n="$2" 'NF != n { print FILENAME ":" NR ": " NF " cells"; bad = 1 } END { exit bad }' "$1" ||
		fail "$1 has a line that is not whole"
}

# live_scene NAME FPS DURATION_S: an invented scene (two tagged robots in a
# small tank, 640x400) rendered to NAME.mp4, with NAME.cal.json from its
# true camera
live_scene() {
	cat > "$1.scene.in.json" <<JSON
{ "description": "invented test scene: two tagged robots in a 1.2 m tank, for the live tests",
  "seed": 5,
  "tank": { "size_m": [1.2, 0.8] },
  "camera": { "width_px": 640, "height_px": 400, "hfov_deg": 50, "position_m": [0.6, 0.4, 1.5] },
  "timing": { "fps": $2, "duration_s": $3 },
  "effects": { "noise_sigma": 1.0 },
  "robots": [ { "id": 3, "diameter_m": 0.12, "height_m": 0.05,
                "marker": { "type": "tag", "tag_id": 3, "size_m": 0.07 },
                "path": { "start_m": [0.6, 0.2], "heading_deg": 0, "speed_mps": 0.15, "curvature_1pm": 4 } },
              { "id": 7, "diameter_m": 0.12, "height_m": 0.05,
                "marker": { "type": "tag", "tag_id": 7, "size_m": 0.07 },
                "path": { "start_m": [0.25, 0.35], "heading_deg": 90, "speed_mps": 0.08, "curvature_1pm": 0 } } ] }
JSON
	synth "$1.scene.in.json" "$1.mp4"
	make_cal "$1.scene.json" "$1.cal.json" 0.05
}
