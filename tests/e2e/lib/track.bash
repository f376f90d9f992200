# lib/track.bash: helpers shared by the track end-to-end tests (sourced, not
# a test itself).  Clips come from `wakeline synth` (an invented scene per
# test); the calibration is built from the scene's true camera
# (CLIP.scene.json, key camera_model), so the figures measure the tracker,
# not the calibration.  Sources the harness (lib/harness.sh).
source "$WL_SOURCE_DIR/tests/e2e/lib/harness.sh"
LIB=$WL_SOURCE_DIR/tests/e2e/lib

need_synth() {
	"$WAKELINE" synth --help >/dev/null 2>&1 || fail "this build has no 'wakeline synth' (the renderer these tests use)"
}

# synth SCENE.json CLIP.mp4: renders the clip, CLIP.truth.csv and CLIP.scene.json
synth() { "$WAKELINE" synth "$1" -o "$2" >/dev/null || fail "synth $1 exited $?"; }

# make_cal CLIP.scene.json CAL.json PLANE_M [displayed_rotation_deg]
make_cal() { $PY "$LIB/track_cal.py" "$@" || fail "cannot build $2 from $1"; }

# compare RAW.csv TRUTH.csv [options of track_compare.py]: the check that the
# track matches the truth within the limits given (it prints the figures)
compare() { check "$1 matches $2 (${*:3})" "$PY" "$LIB/track_compare.py" "$@"; }
