#!/usr/bin/env bash
# The e2e harness itself (lib/harness.sh): small scripts written here run on
# it, and their output and exit status are checked.  A passing check prints
# "ok N - NAME"; a failing one "not ok N - NAME" with what was expected and
# what came, and the test goes on to exit 1; a step outside a check that
# fails stops the test with its line; ending without done_testing (a stray
# `exit 0`) fails; skip_all and skip_check exit 77 (CTest's skip code) with
# the reason, also in $WL_TEST_TMP.skip.
source "$WL_SOURCE_DIR/tests/e2e/lib/harness.sh"

# sub NAME: runs sub/NAME.sh on the harness in a scratch folder of its own;
# output in NAME.txt, exit status in NAME.rc
sub() {
	local rc=0
	WL_TEST_TMP=$WL_TEST_TMP/run/$1 bash "sub/$1.sh" > "$1.txt" 2>&1 || rc=$?
	echo "$rc" > "$1.rc"
}
mkdir sub
h="source \"$WL_SOURCE_DIR/tests/e2e/lib/harness.sh\""

cat > sub/pass.sh <<EOF2
$h
echo hello > f.txt
check_grep "f.txt says hello" hello f.txt
check_eq "two equal strings" abc abc
check_num "a number below another" 1.5e-3 "<" 0.01
check_exit "false exits 1" 1 false
check_py "python can assert" <<'PY'
print("figure 42")
assert 6 * 7 == 42
PY
done_testing
EOF2
sub pass
check_eq "a passing test exits 0" "$(cat pass.rc)" 0
check_grep "each check prints one 'ok' line" -x "ok 5 - python can assert" pass.txt
check_grep "a check's output is shown under it" "^#     figure 42" pass.txt
check_grep "the summary counts the checks" "all 5 checks passed" pass.txt

cat > sub/fails.sh <<EOF2
$h
echo hello > f.txt
check_grep "f.txt says goodbye" goodbye f.txt
check_eq "the answer" 41 42
check_num "a large number is small" 7 "<" 2
helper() { true; false; echo "not reached"; }
check "a helper whose second command fails" helper
check_eq "a later check still runs" x x
done_testing
EOF2
sub fails
check_eq "a failing check makes the test exit 1" "$(cat fails.rc)" 1
check_grep "a failure names its check" -x "not ok 1 - f.txt says goodbye" fails.txt
check_grep "a failure shows what was expected" -F "expected: a line matching 'goodbye'" fails.txt
check_grep "a failure shows what came instead" -F "#     hello" fails.txt
check_grep "check_eq shows both strings" -F "expected: '42'" fails.txt
check_grep "check_num shows the comparison" -F "expected: 7 < 2" fails.txt
check_grep "a function's first failing command fails the check, with its line" -F '(line 6: "false" exited 1)' fails.txt
check_no_grep "the function stops at that command" "not reached" fails.txt
check_grep "the checks after a failure still run" -x "ok 5 - a later check still runs" fails.txt
check_grep "the summary lists the failed checks" "4 of 5 checks FAILED" fails.txt

cat > sub/stops.sh <<EOF2
$h
check_eq "first" a a
ls /nonexistent-wakeline-path
check_eq "never reached" a a
done_testing
EOF2
sub stops
check_eq "a failing step outside a check stops the test (exit 1)" "$(cat stops.rc)" 1
check_grep "the stop names the line and the command" -F "line 3: 'ls /nonexistent-wakeline-path' exited 2" stops.txt
check_no_grep "nothing after the stop runs" "never reached" stops.txt

cat > sub/early.sh <<EOF2
$h
check_eq "first" a a
exit 0
EOF2
sub early
check_eq "ending without done_testing fails (exit 1)" "$(cat early.rc)" 1
check_grep "it says done_testing was not reached" "without done_testing" early.txt

cat > sub/skipall.sh <<EOF2
$h
skip_all "no frobnicator here (apt-get install frobnicator)"
EOF2
sub skipall
check_eq "skip_all exits 77 (CTest: skipped)" "$(cat skipall.rc)" 77
check_grep "skip_all says why" -x "SKIP: no frobnicator here (apt-get install frobnicator)" skipall.txt
check_grep "the reason is kept for scripts/test" -F "skipall: no frobnicator here" run/skipall.skip

cat > sub/skipone.sh <<EOF2
$h
check_eq "runs" a a
skip_check "needs a browser" "chromium is not installed"
done_testing
EOF2
sub skipone
check_eq "a skipped check makes the test exit 77" "$(cat skipone.rc)" 77
check_grep "the skipped check is listed with its reason" -x "ok 2 - needs a browser # SKIP chromium is not installed" skipone.txt

cat > sub/skipfail.sh <<EOF2
$h
check_eq "fails" a b
skip_check "needs a browser" "chromium is not installed"
done_testing
EOF2
sub skipfail
check_eq "a failure wins over a skip (exit 1)" "$(cat skipfail.rc)" 1

cat > sub/cleanup.sh <<EOF2
$h
at_exit touch "$WL_TEST_TMP/cleaned up"
false
EOF2
sub cleanup
check "at_exit commands run however the test ends" test -e "cleaned up"
done_testing
