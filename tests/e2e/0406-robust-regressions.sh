#!/usr/bin/env bash
# 0406-robust-regressions.sh: the seeds of the robustness suite (0405) that
# once failed, each named in tests/robust/regressions.txt with what went
# wrong; they run the same scene again with the per-scene checks.
# Skipped (exit 77) while the list holds no seed.
set -euo pipefail
: "${WAKELINE:?}" "${WL_TEST_TMP:?}" "${WL_SOURCE_DIR:?}"
T="$WL_TEST_TMP"; rm -rf "$T"; mkdir -p "$T"
R="$WL_SOURCE_DIR/tests/robust"
seeds=$(awk '!/^#/ && NF {print $1}' "$R/regressions.txt")
[ -n "$seeds" ] || { echo "SKIP: no seed in tests/robust/regressions.txt"; exit 77; }
for s in $seeds; do
	echo "== seed $s: $(awk -v s="$s" '$1 == s {$1 = ""; print}' "$R/regressions.txt")"
	"$R/run_scene.sh" "$s" "$T/$s" || true
done
/usr/bin/python3 "$R/evaluate.py" "$T"/* --no-suite-checks
