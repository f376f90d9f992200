# tests/e2e/lib/harness.sh: the shared harness of the end-to-end tests
# (sourced, not a test itself), in the manner of git's t/test-lib.sh.
#
#   source "$WL_SOURCE_DIR/tests/e2e/lib/harness.sh"
#   "$WAKELINE" synth scene.json -o clip.mp4 -q || fail "synth exited $?"   # a setup step
#   check_exit "track succeeds" 0 "$WAKELINE" track clip.mp4 --cal cal.json -o raw.csv
#   check_grep "raw.csv has the header" '^t_s,frame,id,' raw.csv
#   check_py "positions within 2 mm of the truth" raw.csv truth.csv <<'PYEOF'
#   ...python that exits non-zero (or raises) when the check fails...
#   PYEOF
#   done_testing
#
# It runs in `set -euEo pipefail`, makes a scratch folder of its own
# ($WL_TEST_TMP, emptied first) and changes into it.  Each check prints one
# line, "ok N - NAME" or "not ok N - NAME", the name saying what is expected;
# a failing check then shows, indented with "#", what was expected and what
# came instead (the command, its exit status and its output).  A check that
# fails does not stop the test: the rest still run, and the test exits 1 at
# done_testing.  Anything outside a check that fails (a setup step, `fail`)
# stops the test at once with the line and command.
#
# Exit status: 0 when every check passed; 1 when a check failed or the test
# stopped early (also when it ends without reaching done_testing, so a stray
# `exit 0` cannot pass); 77 when the test, or one of its checks, was skipped
# (skip_all, skip_check), which CTest reports as "Skipped" (SKIP_RETURN_CODE
# in CMakeLists.txt).  A skip says why, on stdout and in
# $WL_TEST_TMP.skip, which scripts/test lists after the run.
#
# Environment (set by CTest, see CMakeLists.txt): WAKELINE (the program),
# WL_SOURCE_DIR, WL_BUILD_DIR, WL_TEST_TMP.

set -euEo pipefail
: "${WAKELINE:?the program to test (set by CTest)}" "${WL_SOURCE_DIR:?}" "${WL_TEST_TMP:?}"
PY=/usr/bin/python3 # Debian's python3 with numpy, scipy and opencv
WL_TEST_NAME=$(basename "$0" .sh)
_h_n=0 _h_failed=0 _h_skipped=0 _h_done=0
_h_failed_names=() _h_skip_reasons=() _h_cleanup=()

rm -f "$WL_TEST_TMP.skip"
rm -rf "$WL_TEST_TMP"
mkdir -p "$WL_TEST_TMP"
cd "$WL_TEST_TMP"

# _h_show FILE: the file's lines indented under a check (at most 40).
_h_show() {
	local n
	[ -s "$1" ] || return 0
	n=$(wc -l < "$1")
	sed -n '1,40s/^/#     /p' "$1"
	[ "$n" -le 40 ] || echo "#     ... ($((n - 40)) more lines in $1)"
}

_h_ok() { echo "ok $_h_n - $1"; }

# _h_notok NAME LINE...: a failed check with the lines that explain it.
_h_notok() {
	local name=$1
	shift
	_h_failed=$((_h_failed + 1))
	_h_failed_names+=("$name")
	echo "not ok $_h_n - $name"
	local l
	for l in "$@"; do echo "#   $l"; done
}

# check NAME CMD [ARGS...]: passes when CMD exits 0.  CMD runs in a subshell
# under `set -e` (a function's first failing command fails the check), with
# the caller's standard input (a here-document works).  Its output is shown
# under the line: figures when it passes, the evidence when it fails.
check() {
	local name=$1 rc=0 log
	shift
	_h_n=$((_h_n + 1))
	log=$WL_TEST_TMP/.check-$_h_n.log
	set +e
	(
		set -eE
		# shellcheck disable=SC2016
		trap '_h_rc=$?; [ "$BASH_COMMAND" = "\"\$@\"" ] || echo "(line $LINENO: \"$BASH_COMMAND\" exited $_h_rc)"' ERR
		"$@"
	) > "$log" 2>&1
	rc=$?
	set -e
	if [ $rc -eq 0 ]; then
		_h_ok "$name"
		_h_show "$log"
	else
		_h_notok "$name" "expected: '$*' to succeed" "got: exit status $rc, output:"
		_h_show "$log"
	fi
}

# check_py NAME [ARGS...] <<'PYEOF' ... PYEOF: a python3 check read from
# standard input; it fails by exiting non-zero, raising, or a failed assert.
check_py() {
	local name=$1
	shift
	check "$name" "$PY" - "$@"
}

# check_eq NAME GOT WANT: the two strings are equal.
check_eq() {
	_h_n=$((_h_n + 1))
	if [ "$2" = "$3" ]; then _h_ok "$1"; else _h_notok "$1" "expected: '$3'" "got:      '$2'"; fi
}

# check_num NAME A OP B: a numeric comparison, OP one of < <= > >= == !=.
check_num() {
	_h_n=$((_h_n + 1))
	if awk -v a="$2" -v b="$4" -v op="$3" 'BEGIN {
		num = "^[-+]?([0-9]+[.]?[0-9]*|[.][0-9]+)([eE][-+]?[0-9]+)?$"
		if (a !~ num || b !~ num) exit 1
		a += 0; b += 0
		if (op == "<") ok = a < b; else if (op == "<=") ok = a <= b
		else if (op == ">") ok = a > b; else if (op == ">=") ok = a >= b
		else if (op == "==") ok = a == b; else if (op == "!=") ok = a != b
		else ok = 0
		exit !ok }'; then
		_h_ok "$1"
	else
		_h_notok "$1" "expected: $2 $3 $4 (as numbers)" "got:      '$2' vs '$4'"
	fi
}

# _h_grep_args: splits "[GREP OPTIONS...] [--] PATTERN FILE..." into
# _h_opts, _h_pat and _h_files ("--" ends the options: a pattern that starts
# with "-").
_h_grep_args() {
	_h_opts=()
	while [ $# -gt 0 ] && [[ $1 == -* ]]; do
		if [ "$1" = -- ]; then
			shift
			break
		fi
		_h_opts+=("$1")
		shift
	done
	_h_pat=$1
	shift
	_h_files=("$@")
}

# check_grep NAME [GREP OPTIONS] PATTERN FILE...: a line of the files
# matches PATTERN (grep's basic regular expression unless an option says
# otherwise).  A failure shows the files.
check_grep() {
	local name=$1 f
	shift
	_h_grep_args "$@"
	_h_n=$((_h_n + 1))
	if grep -q "${_h_opts[@]}" -e "$_h_pat" -- "${_h_files[@]}" 2> /dev/null; then
		_h_ok "$name"
	else
		_h_notok "$name" "expected: a line matching '$_h_pat' (grep ${_h_opts[*]}) in ${_h_files[*]}"
		for f in "${_h_files[@]}"; do
			if [ -f "$f" ]; then
				echo "#   got: $f holds:"
				_h_show "$f"
			else
				echo "#   got: no file $f"
			fi
		done
	fi
}

# check_no_grep NAME [GREP OPTIONS] PATTERN FILE...: no line matches.
check_no_grep() {
	local name=$1 f
	shift
	_h_grep_args "$@"
	_h_n=$((_h_n + 1))
	for f in "${_h_files[@]}"; do
		if [ ! -f "$f" ]; then
			_h_notok "$name" "expected: no line matching '$_h_pat' in $f" "got: no file $f"
			return 0
		fi
	done
	if ! grep -q "${_h_opts[@]}" -e "$_h_pat" -- "${_h_files[@]}"; then
		_h_ok "$name"
	else
		_h_notok "$name" "expected: no line matching '$_h_pat' (grep ${_h_opts[*]}) in ${_h_files[*]}" \
			"got these lines:"
		grep "${_h_opts[@]}" -e "$_h_pat" -- "${_h_files[@]}" | head -20 | sed 's/^/#     /'
	fi
}

# check_exit NAME STATUS CMD [ARGS...]: CMD exits with STATUS.  Its standard
# output and error are kept in last.out and last.err (in the scratch folder)
# for the checks that follow; a failure shows the error output.
check_exit() {
	local name=$1 want=$2 rc=0
	shift 2
	_h_n=$((_h_n + 1))
	"$@" > "$WL_TEST_TMP/last.out" 2> "$WL_TEST_TMP/last.err" || rc=$?
	if [ "$rc" -eq "$want" ]; then
		_h_ok "$name"
	else
		_h_notok "$name" "expected: exit status $want from '$*'" "got: $rc; standard error:"
		_h_show "$WL_TEST_TMP/last.err"
	fi
}

# check_file NAME FILE: FILE exists and is not empty.
check_file() {
	_h_n=$((_h_n + 1))
	if [ -s "$2" ]; then
		_h_ok "$1"
	elif [ -e "$2" ]; then
		_h_notok "$1" "expected: a non-empty file $2" "got: an empty one"
	else
		_h_notok "$1" "expected: a non-empty file $2" "got: no such file"
	fi
}

# check_no_file NAME PATH: nothing exists at PATH.
check_no_file() {
	_h_n=$((_h_n + 1))
	if [ ! -e "$2" ]; then
		_h_ok "$1"
	else
		_h_notok "$1" "expected: no file $2" "got: $(ls -ld "$2")"
	fi
}

# at_exit CMD...: runs CMD when the test ends, however it ends (unmounting a
# scratch file system, stopping a process).  Use it instead of `trap EXIT`,
# which the harness owns.
at_exit() { _h_cleanup+=("$(printf '%q ' "$@")"); }

# note TEXT: a line of figures or context in the output ("# TEXT").
note() { echo "# $*"; }

# fail TEXT: stops the test at once (a setup step that could not be done).
# Inside a check's command it fails that check with TEXT.
fail() {
	echo "FAIL: $*" >&2
	exit 1
}

_h_skip_note() { echo "$WL_TEST_NAME: $*" >> "$WL_TEST_TMP.skip"; }

# skip_all REASON: the whole test cannot run here (say what would make it
# run); exits 77, which CTest counts as skipped.  Call it before any check.
skip_all() {
	echo "SKIP: $*"
	_h_skip_note "$*"
	_h_done=1
	exit 77
}

# skip_check NAME REASON: one check cannot run here; the others still run,
# and the test exits 77 (skipped) at done_testing unless a check failed.
skip_check() {
	_h_n=$((_h_n + 1))
	_h_skipped=$((_h_skipped + 1))
	_h_skip_reasons+=("$1: $2")
	echo "ok $_h_n - $1 # SKIP $2"
}

# done_testing: the summary line and the exit status (0, 1 or 77).
done_testing() {
	_h_done=1
	if [ $_h_failed -gt 0 ]; then
		echo "# $WL_TEST_NAME: $_h_failed of $_h_n checks FAILED:"
		printf '#   %s\n' "${_h_failed_names[@]}"
		exit 1
	fi
	if [ $_h_skipped -gt 0 ]; then
		echo "SKIP: $_h_skipped of $_h_n checks skipped, the other $((_h_n - _h_skipped)) passed:"
		printf '#   %s\n' "${_h_skip_reasons[@]}"
		local r
		for r in "${_h_skip_reasons[@]}"; do _h_skip_note "$r"; done
		exit 77
	fi
	echo "# $WL_TEST_NAME: all $_h_n checks passed"
	exit 0
}

_h_on_err() {
	local rc=$1
	# only where errexit is on: a failure the test does not handle
	case $- in *e*) ;; *) return 0 ;; esac
	echo "FAIL: $WL_TEST_NAME line $2: '$3' exited $rc (a step outside any check)" >&2
}
trap '_h_on_err $? $LINENO "$BASH_COMMAND"' ERR

_h_on_exit() {
	local rc=$? c
	trap - EXIT
	set +e
	for c in "${_h_cleanup[@]}"; do eval "$c"; done
	if [ $_h_done -eq 0 ]; then
		[ $rc -ne 0 ] || echo "FAIL: $WL_TEST_NAME ended without done_testing (an early 'exit 0'?)" >&2
		echo "# $WL_TEST_NAME stopped early (status $rc) after $_h_n checks ($_h_failed failed)" >&2
		rc=1
	fi
	exit $rc
}
trap _h_on_exit EXIT
