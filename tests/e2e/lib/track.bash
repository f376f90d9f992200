# lib/track.bash: helpers shared by the track end-to-end tests (sourced, not
# a test itself).  Clips come from `wakeline synth` (an invented scene per
# test); the calibration is built from the scene's true camera
# (CLIP.scene.json, key camera_model), so the figures measure the tracker,
# not the calibration.
set -euo pipefail
: "${WAKELINE:?}" "${WL_TEST_TMP:?}" "${WL_SOURCE_DIR:?}"
PY=/usr/bin/python3
LIB=$WL_SOURCE_DIR/tests/e2e/lib
rm -rf "$WL_TEST_TMP"
mkdir -p "$WL_TEST_TMP"
cd "$WL_TEST_TMP"

fail() { echo "FAIL: $*" >&2; exit 1; }

need_synth() {
	"$WAKELINE" synth --help >/dev/null 2>&1 || fail "this build has no 'wakeline synth' (the renderer these tests use)"
}

# synth SCENE.json CLIP.mp4: renders the clip, CLIP.truth.csv and CLIP.scene.json
synth() { "$WAKELINE" synth "$1" -o "$2" >/dev/null || fail "synth $1 exited $?"; }

# make_cal CLIP.scene.json CAL.json PLANE_M [displayed_rotation_deg]
make_cal() { $PY "$LIB/track_cal.py" "$@" || fail "cannot build $2 from $1"; }

# compare RAW.csv TRUTH.csv [options of track_compare.py]: checks and prints figures
compare() { $PY "$LIB/track_compare.py" "$@" || fail "$1 does not match $2"; }
