#!/usr/bin/env bash
# bench_clean.sh [MINUTES]: prints the run time and peak memory of
# `wakeline clean` on an invented synthetic track of MINUTES (default 10) at
# 30 fps.  A benchmark, not a test: it prints figures and asserts nothing.
set -euo pipefail
min=${1:-10}
here=$(cd "$(dirname "$0")" && pwd)
wl=${WAKELINE:-$here/../../build/wakeline}
tmp=$(mktemp -d); trap 'rm -rf "$tmp"' EXIT
/usr/bin/python3 "$here/synth_raw.py" --seed 1 --duration $((min * 60)) --radius 0 \
	--out "$tmp/raw.csv" --truth "$tmp/truth.csv" > /dev/null
rows=$(($(wc -l < "$tmp/raw.csv") - 1))
for s in rts sg; do
	/usr/bin/time -f "%e %M" -o "$tmp/time" "$wl" clean -q "$tmp/raw.csv" -o "$tmp/clean.csv" --smoother $s
	read -r sec kb < "$tmp/time"
	echo "smoother $s: $rows rows in $sec s, peak memory $((kb / 1024)) MiB"
done
