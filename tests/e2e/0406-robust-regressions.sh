#!/usr/bin/env bash
# 0406-robust-regressions.sh: the seeds of the robustness suite (0405) that
# once failed, each named in tests/robust/regressions.txt with what went
# wrong; they run the same scene again with the per-scene checks.
# Skipped (exit 77) while the list holds no seed.
source "$WL_SOURCE_DIR/tests/e2e/lib/harness.sh"
R="$WL_SOURCE_DIR/tests/robust"
seeds=$(awk '!/^#/ && NF {print $1}' "$R/regressions.txt")
if [ -z "$seeds" ]; then
	skip_all "no seed in tests/robust/regressions.txt"
fi
for s in $seeds; do
	note "seed $s: $(awk -v s="$s" '$1 == s {$1 = ""; print}' "$R/regressions.txt")"
	"$R/run_scene.sh" "$s" "$WL_TEST_TMP/scene-$s" || true
	check "seed $s passes the per-scene checks" /usr/bin/python3 "$R/evaluate.py" "$WL_TEST_TMP/scene-$s" \
		--no-suite-checks
done
done_testing
